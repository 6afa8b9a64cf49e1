/* detect_impl.h - private helpers shared by detect.c and detect_methods.c. */
#ifndef FF_DETECT_IMPL_H
#define FF_DETECT_IMPL_H

#include <math.h>
#include <stddef.h>
#include <stdint.h>
#include "frostfit/detect.h"

/*
 * The lightly smoothed readings (a centred moving average of 2 h + 1),
 * computed a block at a time when first asked for and kept in a few
 * blocks, least recently filled first out: a whole copy of a 10 Hz
 * channel of days would cost as much memory as the channel. Each value is
 * the same sum in the same order whenever it is computed.
 */
#define YS_BLOCK 8192          /* values per block (a power of two) */
#define YS_WAYS 8              /* blocks kept at most */
struct ys_cache {
  double *v;                   /* ways blocks of YS_BLOCK values */
  size_t tag[YS_WAYS];         /* block number + 1 held; 0 = empty */
  unsigned long filled[YS_WAYS]; /* when each was filled */
  unsigned long clock;
  unsigned ways, last;         /* blocks kept; the one last read */
  /* Each block's largest value and its first index, kept once the block
   * has been filled (so a scan for the warmest point of a long stretch
   * need not fill it again); top_i of a block never filled is SIZE_MAX.
   * Likewise its smallest value and first index (bot_v, bot_i), so scans
   * that only ask whether a block could hold a rise settle it whole. */
  double *top_v;
  size_t *top_i;
  double *bot_v;
  size_t *bot_i;
};

/* One channel being analysed. Arrays borrowed from the caller. */
struct dctx {
  const double *t, *y;
  size_t n;
  size_t h;                    /* half width of the smoothing */
  struct ys_cache *ysc;        /* smoothed readings (owned) */
  int ys_nan;                  /* a smoothed value is NaN (overflow) */
  double sigma;                /* noise sd of one reading, K */
  double res;                  /* resolution used, K (0 = none seen) */
  double dt;                   /* median sampling interval, s */
  double ymax;                 /* largest |reading| */
  const struct ff_detect_params *p;
  double cpl, cps, lat;        /* J/(g K), J/(g K), J/g */
  double tf0;                  /* the solvent's tabulated freezing point, C */
};

/* The smoothed reading i (slow path: finds or fills its block). */
double dd_ys_fill(const struct dctx *c, size_t i);
static inline double dd_ys(const struct dctx *c, size_t i)
{
  const struct ys_cache *k = c->ysc;

  if (k->tag[k->last] == i / YS_BLOCK + 1)
    return k->v[(size_t)k->last * YS_BLOCK + i % YS_BLOCK];
  return dd_ys_fill(c, i);
}

/* Index ranges are half-open [i0, i1). */
size_t dd_index_at(const struct dctx *c, double t_s);

/* Straight line by ordinary least squares with covariance scaled by the
 * residual variance; c0 is the value at t_ref. Returns 0 or -1. */
int dd_line(const double *t, const double *y, size_t i0, size_t i1,
            double t_ref, double *c0, double *c1, double cov[3],
            double *rms);

/* Newton cooling fit over [i0, i1); fills f (kind 1) or returns -1. */
int dd_newton(const struct dctx *c, size_t i0, size_t i1,
              struct ff_liquid_fit *f);

/* Polynomial branch fit, order 1 or 2, with covariance (row-major 3x3). */
int dd_branch(const struct dctx *c, size_t i0, size_t i1, int order,
              double t_ref, struct ff_branch_fit *b, double cov[9]);

/* The model's straight line y = c0 + c1 x through m > MODEL_FIT_MAX points
 * as weighted block means (fx, fy overwritten); c00 and c11 are the
 * variances of c0 and c1 scaled by the residual variance of every point.
 * GSL status. */
int dd_model_fit_blocks(double *fx, double *fy, size_t m, double *c0,
                        double *c1, double *c00, double *c11);

/* The methods; each fills est (ok = 0 with why when not computable). */
void dd_plateau(const struct dctx *c, struct ff_event *e, size_t i0,
                size_t i1);
/* The straight line through a branch at the nucleation instant (order 1
 * of dd_branch), fitted once for the extrapolation and the intersection
 * of the same branch. */
struct dd_fit1 {
  int ok;                      /* dd_branch succeeded */
  struct ff_branch_fit b;
  double cov[9];
};
/* f1: NULL, or filled by dd_extrapolate and read by dd_intersect over the
 * same [i0, i1) (NULL: each fits the line itself). */
void dd_extrapolate(const struct dctx *c, struct ff_event *e, size_t i0,
                    size_t i1, struct dd_fit1 *f1);
void dd_intersect(const struct dctx *c, struct ff_event *e, size_t i0,
                  size_t i1, const struct dd_fit1 *f1);
void dd_break(const struct dctx *c, struct ff_event *e, size_t l0,
              size_t i1);
void dd_model(const struct dctx *c, struct ff_event *e, size_t s0,
              size_t i0, size_t i1);

double dd_median(double *v, size_t n);  /* reorders v */

/* detect_select.c: exact order statistics of a channel's derived values
 * without a copy. which 0: |y[i+1] - 2 y[i] + y[i-1]| (1 <= i < n - 1);
 * which 1: t[i] - t[i-1] (1 <= i < n). */
#define DD_SEL_RADIX 65536u    /* counters dd_select_pair needs */
static inline double dd_sel_value(const double *t, const double *y,
                                  int which, size_t i)
{
  return which == 0 ? fabs(y[i + 1] - 2.0 * y[i] + y[i - 1])
                    : t[i] - t[i - 1];
}
/* The values of ranks r0 <= r1 (0-based) among those of [i0, i1) into v,
 * exactly as a sort would place them; cnt: DD_SEL_RADIX counters. The
 * values must be +0, positive or +inf. Returns 0, or -1 out of memory. */
int dd_select_pair(const double *t, const double *y, int which, size_t i0,
                   size_t i1, size_t r0, size_t r1, size_t *cnt, double v[2]);

/* Both medians of a channel of n readings in one pass (which 0 over
 * [1, n - 1), which 1 over [1, n); ranks r[which][0] <= r[which][1],
 * values into v[which], as dd_select_pair gives them); when inv > 0 the
 * same pass counts into *off the changes |y[i] - y[i-1]| * inv more than
 * 0.01 from a whole number (detect.c's quantisation test). cnt:
 * DD_SEL_RADIX counters. Returns 0, or -1 out of memory. */
int dd_select_medians(const double *t, const double *y, size_t n,
                      const size_t r[2][2], double inv, size_t *off,
                      size_t *cnt, double v[2][2]);

/* The whole number nearest q >= 0 (ties to even, where round() takes
 * them away from zero: either way 0.5 away, which is all the quantisation
 * test asks), without a library call per reading. q >= 2^52 is whole
 * already, and +inf stays +inf. */
static inline double dd_near_int(double q)
{
  const double two52 = 4503599627370496.0;

  return q < two52 ? (q + two52) - two52 : q;
}

#endif /* FF_DETECT_IMPL_H */
