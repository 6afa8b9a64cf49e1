/* series_impl.h - what the series pipeline's files share (private). */
#ifndef FF_SERIES_IMPL_H
#define FF_SERIES_IMPL_H

#include "frostfit/series.h"

/* Marks run r failed with st (first reason wins); col is an ff_sheet_col or
 * -1 for the row alone. */
void series_fail(const struct ff_sheet *sh, struct ff_series_run *r, int col,
                 enum ff_status st, const char *fmt, ...)
  __attribute__((format(printf, 5, 6)));

/* Groups the good runs and fits each solute and unknown (series_fit.c).
 * FF_OK, or FF_EIO when out of memory. */
int series_fit(struct ff_series *s, const struct ff_sheet *sh,
               const struct ff_series_opts *o);

/* Frees the replicate groups (series_repl.c); for ff_series_release. */
void series_repl_release(struct ff_series *s);

#endif /* FF_SERIES_IMPL_H */
