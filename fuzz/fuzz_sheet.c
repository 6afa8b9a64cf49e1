/* fuzz/fuzz_sheet.c - libFuzzer harness: any bytes as a run sheet through ff_sheet_read. */

/* memfd_create is a Linux/glibc extension */
#define _GNU_SOURCE 1

#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <unistd.h>
#include "frostfit/sheet.h"

#include "memfile.h"

static const char *path;   /* the current input, see memfile.h */

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
  struct ff_sheet s = FF_SHEET_INIT;
  struct ff_diag d = FF_DIAG_INIT;
  int st;

  path = memfile_load("fuzz_sheet", data, size);
  st = ff_sheet_read(path, &s, &d);
  if (st == FF_OK && s.n_bad != 0)
    abort();                   /* header: OK only when every row is good */
  if (st != FF_OK && d.status == FF_OK)
    abort();                   /* failure without a reason */
  for (size_t i = 0; i < s.n; i++)
    if (s.row[i].blank_row >= (long)s.n)
      abort();                 /* a blank index must point into the sheet */
  ff_sheet_release(&s);
  return 0;
}
