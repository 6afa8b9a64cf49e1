/* regress_impl.h - private helpers shared by regress_models.c and
 * regress_stats.c (regression stage). Not part of the public API. */
#ifndef FF_REGRESS_IMPL_H
#define FF_REGRESS_IMPL_H

#include <stddef.h>
#include "frostfit/regress.h"

/* Smallest reciprocal condition number accepted for a linear design. */
#define FF_RG_RCOND_MIN 1e-12
/* Two molalities closer than this relative gap count as one. */
#define FF_RG_DISTINCT_REL 1e-9

/* Student t quantile for a two-sided interval at level conf. */
double ff_rg_t_quantile(double conf, size_t dof);

/* Coverage factor for an interval at level conf: Student t with dof when
 * the variance was estimated from the residuals, else the normal quantile. */
double ff_rg_coverage_factor(double conf, size_t dof, int estimated);

/*
 * Number of distinct values in x[0..n). Two values a, b are the same when
 * |a - b| <= FF_RG_DISTINCT_REL * max(|a|, |b|) (so 0 is only the same as
 * 0); that is not transitive, so the count is defined in the order given:
 * x[i] counts when it is the same as no earlier x[j]. A chain of values
 * each within the tolerance of the next can thus count more than once (a,
 * a + 1.8e-9 a, then a + 0.9e-9 a counts 2), unlike the gaps of the sorted
 * values. O(n log n) for finite values (the pair-by-pair definition below
 * 32 values or with a non-finite one); the same count as the definition
 * for any input.
 */
size_t ff_rg_distinct(const double *x, size_t n);

/* min(ff_rg_distinct(x, n), cap), usually in one pass that stops early:
 * for "at least cap distinct values" checks. */
size_t ff_rg_distinct_upto(const double *x, size_t n, size_t cap);

/*
 * Weighted linear least squares y = X par, X row-major n x p (p <=
 * FF_REGRESS_MAXPAR), weights 1/u^2 (u NULL: 1). On success fills par, the
 * unscaled covariance (X'WX)^-1 into cov, chi2 and returns 0; on a singular
 * or ill-conditioned design returns -1 with the reason in why.
 */
int ff_rg_wlinear(const double *X, const double *y, const double *u, size_t n,
                  size_t p, double *par,
                  double cov[FF_REGRESS_MAXPAR][FF_REGRESS_MAXPAR],
                  double *chi2, char *why, size_t nwhy);

/*
 * From f->par, the unscaled f->cov, f->chi2, f->sumsq, f->n, f->npar:
 * dof, chi2_red, cov scaling per o->cov (always scaled when !weighted),
 * se, t, CIs, AIC and AICc. Returns 0, or -1 when a result is not finite.
 */
int ff_rg_finish(struct ff_fit *f, int weighted,
                 const struct ff_regress_opts *o);

/* Marks f failed (FF_EUNTRUSTED) with a formatted reason, copies it to d,
 * zeroes the numbers and frees residuals. Returns FF_EUNTRUSTED. */
int ff_rg_fail(struct ff_fit *f, struct ff_diag *d, const char *fmt, ...)
  __attribute__((format(printf, 3, 4)));

/* F-test of restricted r nested in full f (both FF_OK, same data). */
void ff_rg_ftest(const struct ff_fit *r, const struct ff_fit *full,
                 double f_alpha, struct ff_ftest *out);

/* Checks the solute input; FF_OK or FF_EINPUT with the reason in d. */
int ff_rg_check_input(const struct ff_regress_input *in, struct ff_diag *d);

/* Checks options; FF_OK or FF_EUSAGE. */
int ff_rg_check_opts(const struct ff_regress_opts *o, struct ff_diag *d);

#endif /* FF_REGRESS_IMPL_H */
