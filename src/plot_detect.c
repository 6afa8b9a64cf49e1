/* plot_detect.c - plot stage: maps a detected freeze event onto an event figure. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "frostfit/detect.h"
#include "frostfit/plot.h"

#define NSAMPLE 120            /* samples per fitted curve: smooth at report size */

/* Samples f(e, t) at NSAMPLE times over [a, b]; 0 points when the range or
 * every value is unusable. */
static size_t sample(const struct ff_event *e,
                     double (*f)(const struct ff_event *, double), double a,
                     double b, double *t, double *y)
{
  size_t k, good = 0;

  if (!isfinite(a) || !isfinite(b) || !(b > a))
    return 0;
  for (k = 0; k < NSAMPLE; k++) {
    t[k] = a + (b - a) * (double)k / (NSAMPLE - 1);
    y[k] = f(e, t[k]);
    good += isfinite(y[k]) != 0;
  }
  return good > 1 ? NSAMPLE : 0;
}

/*
 * Where the intersection method read its value: the point of the straight
 * liquid line at the freezing point (the line is monotonic, so bisection
 * between its start and the end of the branch finds it). NaN when the
 * line never reaches the freezing point there.
 */
static double reading_time(const struct ff_event *e)
{
  double a = e->liquid_line.start_s, b = e->branch.end_s;
  double fa, fb;
  int k;

  if (!isfinite(a) || !isfinite(b) || !(b > a))
    return NAN;
  fa = ff_event_eval_liquid_line(e, a) - e->freezing_point_c;
  fb = ff_event_eval_liquid_line(e, b) - e->freezing_point_c;
  if (!isfinite(fa) || !isfinite(fb) || fa * fb > 0.0)
    return NAN;
  for (k = 0; k < 60; k++) {
    double m = 0.5 * (a + b);
    double fm = ff_event_eval_liquid_line(e, m) - e->freezing_point_c;

    if (fa * fm <= 0.0) {
      b = m;
    } else {
      a = m;
      fa = fm;
    }
  }
  return 0.5 * (a + b);
}

static const char *base_name(const char *path)
{
  const char *slash = path != NULL ? strrchr(path, '/') : NULL;

  return slash != NULL ? slash + 1 : (path != NULL ? path : "");
}

int ff_plot_add_detected(struct ff_plot_set *s, const char *file,
                         const char *channel, const double *t_s,
                         const double *temp_c, size_t n,
                         const struct ff_event *e, struct ff_diag *d)
{
  double *buf;
  double *lt, *ly, *bt, *by, *xt, *xy;
  struct ff_plot_event_fig f;
  char name[160], title[400], stem[120];
  const char *dot;
  size_t lo = 0, hi = n;
  double t_read = NAN;
  int st;

  if (!e->trusted || !isfinite(e->freezing_point_c))
    return ff_diag_set(d, FF_EUNTRUSTED, NULL,
                       "event %u of '%s' has no trustworthy freezing point: "
                       "%s", e->cycle, channel != NULL ? channel : "",
                       e->status_reason);
  /* The event's share of the record (several cycles per file). */
  if (isfinite(e->start_s) && isfinite(e->end_s) && e->end_s > e->start_s) {
    while (lo < n && t_s[lo] < e->start_s)
      lo++;
    while (hi > lo && t_s[hi - 1] > e->end_s)
      hi--;
    if (hi - lo < 2) {
      lo = 0;
      hi = n;
    }
  }
  buf = malloc(6 * NSAMPLE * sizeof *buf);
  if (buf == NULL)
    return ff_diag_set(d, FF_EIO, NULL, "out of memory");
  lt = buf;
  ly = lt + NSAMPLE;
  bt = ly + NSAMPLE;
  by = bt + NSAMPLE;
  xt = by + NSAMPLE;
  xy = xt + NSAMPLE;

  memset(&f, 0, sizeof f);
  f.t_s = t_s + lo;
  f.temp_c = temp_c + lo;
  f.n = hi - lo;
  if (e->method == FF_METHOD_INTERSECT) {
    t_read = reading_time(e);
    f.liquid.n = sample(e, ff_event_eval_liquid_line, e->liquid_line.start_s,
                        isfinite(t_read) ? t_read : e->nucleation_time_s,
                        lt, ly);
  } else {
    f.liquid.n = sample(e, ff_event_eval_liquid, e->liquid.start_s,
                        e->nucleation_time_s, lt, ly);
  }
  f.liquid.x = lt;
  f.liquid.y = ly;
  if (e->branch.ok) {
    f.freezing.n = sample(e, ff_event_eval_branch, e->branch.start_s,
                          e->branch.end_s, bt, by);
    f.freezing.x = bt;
    f.freezing.y = by;
  }
  switch (e->method) {
  case FF_METHOD_PEAK:
    t_read = e->peak_time_s;
    break;
  case FF_METHOD_BREAK:
    t_read = e->break_time_s;
    break;
  case FF_METHOD_PLATEAU:
    t_read = 0.5 * (e->branch_start_s + e->branch_end_s);
    break;
  case FF_METHOD_INTERSECT:
    break;
  default:
    t_read = e->nucleation_time_s;
    break;
  }
  /* The dashed extrapolation: the branch fit taken back to the reading;
   * for the intersection, the projected straight freezing line from the
   * branch start to the intersection with the liquid line. */
  if (e->method == FF_METHOD_INTERSECT && e->branch.ok && isfinite(t_read) &&
      t_read < e->branch.start_s) {
    xt[0] = t_read;
    xy[0] = e->freezing_point_c;
    xt[1] = e->branch.start_s;
    xy[1] = ff_event_eval_branch(e, e->branch.start_s);
    f.extrap.n = 2;
    f.extrap.x = xt;
    f.extrap.y = xy;
  } else if (e->branch.ok && isfinite(t_read) && t_read < e->branch.start_s &&
      e->method != FF_METHOD_PEAK && e->method != FF_METHOD_PLATEAU) {
    f.extrap.n = sample(e, ff_event_eval_branch, t_read, e->branch.start_s,
                        xt, xy);
    f.extrap.x = xt;
    f.extrap.y = xy;
  }
  f.t_nucleation_s = (e->flags & FF_FLAG_NO_NUCLEATION) != 0
                       ? NAN : e->nucleation_time_s;
  f.t_read_s = t_read;
  f.freezing_point_c = e->freezing_point_c;
  f.u_freezing_point_k = e->u_freezing_point_k;
  f.coverage_k = 2.0;
  f.method = ff_method_name(e->method);
  f.zoom_t0_s = f.zoom_t1_s = f.zoom_half_k = NAN;

  snprintf(stem, sizeof stem, "%s", base_name(file));
  dot = strrchr(stem, '.');
  if (dot != NULL && dot != stem)
    stem[dot - stem] = '\0';
  snprintf(name, sizeof name, "%s_%s_c%u", stem,
           channel != NULL ? channel : "T", e->cycle);
  snprintf(title, sizeof title, "%s, %s, freeze %u", base_name(file),
           channel != NULL ? channel : "", e->cycle);
  f.name = name;
  f.title = title;
  st = ff_plot_add_event(s, &f, d);
  free(buf);
  return st;
}

char *ff_plot_dir_beside(const char *datadir, char *out, size_t n)
{
  snprintf(out, n, "%s/../plots", datadir != NULL ? datadir : ".");
  return out;
}
