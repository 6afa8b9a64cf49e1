/* fuzz/fuzz_point.c - libFuzzer harness: any bytes imported, then every channel through ff_detect_run. */

/* memfd_create is a Linux/glibc extension */
#define _GNU_SOURCE 1

#include <math.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <unistd.h>
#include "frostfit/detect.h"
#include "frostfit/import.h"

#include "memfile.h"

static const char *path;   /* the current input, see memfile.h */

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

/* detect.h: a trusted event has a finite freezing point and uncertainty. */
static void check(const struct ff_event_list *l)
{
  for (size_t i = 0; i < l->n; i++) {
    const struct ff_event *e = &l->v[i];
    if (e->trusted && (!isfinite(e->freezing_point_c) ||
                       !isfinite(e->u_freezing_point_k) ||
                       e->u_freezing_point_k < 0))
      abort();
  }
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
  struct ff_import_opts o = FF_IMPORT_OPTS_DEFAULT;
  struct ff_detect_params p = FF_DETECT_PARAMS_DEFAULT;
  struct ff_diag d = FF_DIAG_INIT;
  struct ff_dataset *ds;
  double *t, *y;

  path = memfile_load("fuzz_point", data, size);
  ds = ff_import_file(path, &o, &d);
  if (ds == NULL)
    return 0;
  t = malloc((ds->n + 1) * sizeof *t);
  y = malloc((ds->n + 1) * sizeof *y);
  for (size_t k = 0; t != NULL && y != NULL && k < ds->n_channels; k++) {
    struct ff_event_list ev = FF_EVENT_LIST_INIT;
    struct ff_diag dd = FF_DIAG_INIT;
    size_t n = ff_dataset_channel_xy(ds, k, t, y);
    int st = ff_detect_run(t, y, n, &p, &ev, &dd);
    if (st != FF_OK && (ev.n != 0 || dd.status == FF_OK))
      abort();                 /* failure: empty list and a reason */
    check(&ev);
    ff_event_list_release(&ev);
  }
  free(t);
  free(y);
  ff_dataset_free(ds);
  return 0;
}
