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

/* Same bits (NaN equal to NaN), so a fast path that differs is caught. */
static int same_values(const double *a, const double *b, size_t n)
{
  return n == 0 || memcmp(a, b, n * sizeof *a) == 0;
}

/*
 * The fast path for plain tables (import_fast.c) must give exactly the
 * dataset, or exactly the diagnostic, of the general libcsv reader.
 */
static void compare(const struct ff_dataset *a, const struct ff_diag *da,
                    const struct ff_dataset *b, const struct ff_diag *db)
{
  if ((a == NULL) != (b == NULL))
    abort();
  if (a == NULL) {
    if (da->status != db->status || strcmp(da->msg, db->msg) != 0 ||
        da->line != db->line || da->col != db->col)
      abort();
    return;
  }
  if (a->n != b->n || a->n_channels != b->n_channels ||
      a->n_columns != b->n_columns ||
      memcmp(&a->stats, &b->stats, sizeof a->stats) != 0 ||
      !same_values(a->t_s, b->t_s, a->n) ||
      strcmp(a->t0_iso, b->t0_iso) != 0 ||
      memcmp(&a->t0_s, &b->t0_s, sizeof a->t0_s) != 0)
    abort();
  for (size_t k = 0; k < a->n_channels; k++)
    if (!same_values(a->ch[k].temp_c, b->ch[k].temp_c, a->n) ||
        a->ch[k].n_missing != b->ch[k].n_missing ||
        strcmp(a->ch[k].name, b->ch[k].name) != 0)
      abort();
}

static void run(const struct ff_import_opts *o)
{
  struct ff_diag d = FF_DIAG_INIT, d2 = FF_DIAG_INIT;
  struct ff_import_opts slow = *o;
  struct ff_dataset *ds = ff_import_file(path, o, &d), *ds2;

  if (ds != NULL) {
    if (d.status != FF_OK)
      abort();
    check(ds);
  } else if (d.status == FF_OK) {
    abort();                   /* failure without a reason */
  }
  slow.no_fast_path = 1;
  ds2 = ff_import_file(path, &slow, &d2);
  compare(ds, &d, ds2, &d2);
  ff_dataset_free(ds);
  ff_dataset_free(ds2);
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
