/* fuzz/fuzz_sheet.c - libFuzzer harness: any bytes as a run sheet through ff_sheet_read. */

/* memfd_create is a Linux/glibc extension */
#define _GNU_SOURCE 1

#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <sys/mman.h>
#include <unistd.h>
#include "frostfit/sheet.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

static int fd = -1;
static char path[64];

static void load(const uint8_t *data, size_t size)
{
  if (fd < 0) {
    fd = memfd_create("fuzz_sheet", 0);
    if (fd < 0)
      abort();
    snprintf(path, sizeof path, "/proc/self/fd/%d", fd);
  }
  if (ftruncate(fd, 0) != 0)
    abort();
  for (size_t done = 0; done < size;) {
    ssize_t n = pwrite(fd, data + done, size - done, (off_t)done);
    if (n <= 0)
      abort();
    done += (size_t)n;
  }
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
  struct ff_sheet s = FF_SHEET_INIT;
  struct ff_diag d = FF_DIAG_INIT;
  int st;

  load(data, size);
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
