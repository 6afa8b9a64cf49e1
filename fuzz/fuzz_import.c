/* fuzz/fuzz_import.c - libFuzzer harness: any bytes as a logger CSV through ff_import_file. */

/* memfd_create is a Linux/glibc extension */
#define _GNU_SOURCE 1

#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#include "frostfit/import.h"

#include "memfile.h"

static const char *path;   /* the current input, see memfile.h */

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

/* What import.h promises of every dataset it returns; reading every value
 * also lets AddressSanitizer check the arrays are as long as claimed. */
static void check(const struct ff_dataset *ds)
{
  double sum = 0;
  for (size_t i = 1; i < ds->n; i++)
    if (!(ds->t_s[i] > ds->t_s[i - 1]))
      abort();                 /* t_s strictly increasing */
  for (size_t k = 0; k < ds->n_channels; k++)
    for (size_t i = 0; i < ds->n; i++)
      sum += ds->ch[k].temp_c[i];
  for (size_t c = 0; c < ds->n_columns; c++)
    sum += (double)ds->col[c].role;
  if (sum > 0 && sum < 0)
    abort();                   /* never: keeps the loops */
}

static void run(const struct ff_import_opts *o)
{
  struct ff_diag d = FF_DIAG_INIT;
  struct ff_dataset *ds = ff_import_file(path, o, &d);
  if (ds != NULL) {
    if (d.status != FF_OK)
      abort();
    check(ds);
    ff_dataset_free(ds);
  } else if (d.status == FF_OK) {
    abort();                   /* failure without a reason */
  }
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
  static const char delim[] = { ',', ';', '\t', ' ' };
  static const char dec[] = { '.', ',' };
  struct ff_import_opts o = FF_IMPORT_OPTS_DEFAULT;

  path = memfile_load("fuzz_import", data, size);
  run(&o);                     /* everything sniffed */
  if (size > 0 && size % 4 == 0) {
    /* forced dialects as a user gives them on the command line */
    o.delimiter = delim[data[size - 1] % 4];
    o.decimal = dec[(data[size - 1] >> 2) % 2];
    o.unit = (data[size - 1] >> 3) % 2 ? FF_UNIT_K : FF_UNIT_UNKNOWN;
    run(&o);
  }
  return 0;
}
