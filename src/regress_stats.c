/* regress_stats.c - regression stage: linear least-squares core, interval
 * and information-criterion statistics, F-tests, molar-mass extrapolation. */
#include <float.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_fit.h>
#include <gsl/gsl_matrix.h>
#include <gsl/gsl_multifit.h>
#include <gsl/gsl_vector.h>

#include "regress_impl.h"

double ff_rg_t_quantile(double conf, size_t dof)
{
  return gsl_cdf_tdist_Pinv(0.5 + 0.5 * conf, (double)dof);
}

double ff_rg_coverage_factor(double conf, size_t dof, int estimated)
{
  return estimated ? ff_rg_t_quantile(conf, dof)
                   : gsl_cdf_ugaussian_Pinv(0.5 + 0.5 * conf);
}

/* Two values are the same molality when |a - b| <= FF_RG_DISTINCT_REL *
 * max(|a|, |b|) (regress_impl.h). */
static int same_value(double a, double b)
{
  return fabs(a - b) <= FF_RG_DISTINCT_REL * fmax(fabs(a), fabs(b));
}

/* The definition itself, pair by pair: O(n^2). Used for non-finite input
 * (where the rule is not monotone in the distance) and when the sort
 * below cannot get memory. */
static size_t distinct_pairwise(const double *x, size_t n)
{
  size_t k = 0;

  for (size_t i = 0; i < n; i++) {
    int seen = 0;
    for (size_t j = 0; j < i && !seen; j++)
      seen = same_value(x[i], x[j]);
    k += !seen;
  }
  return k;
}

/* A value and where it stood, sorted by value, ties by position (no
 * shared state, so fits may run on several threads). */
struct keyed {
  double v;
  size_t i;
};

static int cmp_keyed(const void *pa, const void *pb)
{
  const struct keyed *a = pa, *b = pb;

  if (a->v < b->v)
    return -1;
  if (a->v > b->v)
    return 1;
  return (a->i > b->i) - (a->i < b->i);
}

/*
 * The same count in O(n log n). The rule "same" is not transitive (a chain
 * of values each within the tolerance of the next), so the order of x
 * matters and is kept: x[i] counts when no earlier x[j] is the same. For
 * fixed a, moving b away from a by d adds d to |a - b| but at most
 * FF_RG_DISTINCT_REL d to the bound, so if any earlier value on one side of
 * x[i] is the same, the nearest earlier one on that side is too. The
 * values are sorted once into a linked list; walking i from the last down,
 * x[i]'s neighbours in the list are then exactly its nearest earlier
 * values below and above, and it is unlinked after the check.
 */
size_t ff_rg_distinct(const double *x, size_t n)
{
  struct keyed *ord;
  size_t *pos, *prv, *nxt, k = 0;
  const size_t none = (size_t)-1;

  if (n < 32)
    return distinct_pairwise(x, n);
  for (size_t i = 0; i < n; i++)
    if (!isfinite(x[i]))
      return distinct_pairwise(x, n);
  ord = malloc(n * sizeof *ord);
  pos = malloc(3 * n * sizeof *pos);
  if (ord == NULL || pos == NULL) {
    free(ord);
    free(pos);
    return distinct_pairwise(x, n);
  }
  prv = pos + n;
  nxt = prv + n;
  for (size_t i = 0; i < n; i++)
    ord[i] = (struct keyed){ x[i], i };
  qsort(ord, n, sizeof *ord, cmp_keyed);
  for (size_t p = 0; p < n; p++) {
    pos[ord[p].i] = p;
    prv[p] = p > 0 ? p - 1 : none;
    nxt[p] = p + 1 < n ? p + 1 : none;
  }
  for (size_t i = n; i-- > 0;) {
    size_t p = pos[i], a = prv[p], b = nxt[p];
    int seen = (a != none && same_value(x[i], ord[a].v))
               || (b != none && same_value(x[i], ord[b].v));
    k += !seen;
    if (a != none)
      nxt[a] = b;
    if (b != none)
      prv[b] = a;
  }
  free(pos);
  free(ord);
  return k;
}

/*
 * min(count, cap) without the sort in the usual case: scanning in order, a
 * value beyond the range of the earlier ones and not the same as its
 * nearest end is the same as none of them (the monotony above), so it
 * counts; cap such values (the first always counts) settle the answer.
 * Otherwise the full count decides.
 */
size_t ff_rg_distinct_upto(const double *x, size_t n, size_t cap)
{
  size_t proven = 0;
  double lo = 0.0, hi = 0.0;

  if (cap == 0)
    return 0;
  for (size_t i = 0; i < n; i++) {
    if (!isfinite(x[i]))
      break;
    if (i == 0) {
      lo = hi = x[0];
      proven = 1;
    } else if (x[i] > hi) {
      proven += !same_value(x[i], hi);
      hi = x[i];
    } else if (x[i] < lo) {
      proven += !same_value(x[i], lo);
      lo = x[i];
    }
    if (proven >= cap)
      return cap;
  }
  size_t k = ff_rg_distinct(x, n);
  return k < cap ? k : cap;
}

int ff_rg_wlinear(const double *X, const double *y, const double *u, size_t n,
                  size_t p, double *par,
                  double cov[FF_REGRESS_MAXPAR][FF_REGRESS_MAXPAR],
                  double *chi2, char *why, size_t nwhy)
{
  gsl_matrix_const_view Xv = gsl_matrix_const_view_array(X, n, p);
  gsl_vector_const_view yv = gsl_vector_const_view_array(y, n);
  gsl_vector *w = gsl_vector_alloc(n);
  gsl_vector *c = gsl_vector_alloc(p);
  gsl_matrix *cv = gsl_matrix_alloc(p, p);
  gsl_multifit_linear_workspace *ws = gsl_multifit_linear_alloc(n, p);
  int rc = -1;
  size_t rank = 0;

  if (!w || !c || !cv || !ws) {
    snprintf(why, nwhy, "out of memory");
    goto out;
  }
  for (size_t i = 0; i < n; i++)
    gsl_vector_set(w, i, u ? 1.0 / (u[i] * u[i]) : 1.0);
  /* Truncated SVD with GSL's column balancing: a rank below p means the
   * columns are dependent (e.g. all runs at one molality). */
  int st = gsl_multifit_wlinear_tsvd(&Xv.matrix, w, &yv.vector, 1e-13, c, cv,
                                     chi2, &rank, ws);
  if (st != GSL_SUCCESS) {
    snprintf(why, nwhy, "linear least squares failed: %s", gsl_strerror(st));
    goto out;
  }
  if (rank < p) {
    snprintf(why, nwhy, "singular design: %zu independent columns for %zu "
             "parameters", rank, p);
    goto out;
  }
  double rcond = gsl_multifit_linear_rcond(ws);
  if (!(rcond >= FF_RG_RCOND_MIN)) {
    snprintf(why, nwhy, "ill-conditioned design (reciprocal condition "
             "number %.3g)", rcond);
    goto out;
  }
  for (size_t j = 0; j < p; j++) {
    par[j] = gsl_vector_get(c, j);
    for (size_t k = 0; k < p; k++)
      cov[j][k] = gsl_matrix_get(cv, j, k);
  }
  rc = 0;
out:
  gsl_multifit_linear_free(ws);
  gsl_matrix_free(cv);
  gsl_vector_free(c);
  gsl_vector_free(w);
  return rc;
}

int ff_rg_finish(struct ff_fit *f, int weighted,
                 const struct ff_regress_opts *o)
{
  size_t p = f->npar, n = f->n;
  double k = (double)p + (weighted ? 0.0 : 1.0); /* + sigma when estimated */

  f->dof = n - p;
  f->chi2_red = f->chi2 / (double)f->dof;
  if (!weighted || o->cov == FF_COV_SCALED)
    f->cov_scale = f->chi2_red;
  else if (o->cov == FF_COV_ABSOLUTE)
    f->cov_scale = 1.0;
  else
    f->cov_scale = fmax(1.0, f->chi2_red);
  /* Student t when the scale comes from the residuals; with the stated u
   * alone the variance is known and the normal quantile applies (the t
   * quantile would over-cover: 99.5 % instead of 95 % at 4 dof). */
  int estimated = f->cov_scale > 1.0 || !weighted || o->cov == FF_COV_SCALED;
  f->t_crit = ff_rg_coverage_factor(o->confidence, f->dof, estimated);
  for (size_t j = 0; j < p; j++) {
    for (size_t l = 0; l < p; l++)
      f->cov[j][l] *= f->cov_scale;
    f->se[j] = sqrt(fmax(0.0, f->cov[j][j]));
    f->ci_lo[j] = f->par[j] - f->t_crit * f->se[j];
    f->ci_hi[j] = f->par[j] + f->t_crit * f->se[j];
  }
  /* -2 ln L up to a constant: chi2 with known u; n ln(RSS/n) otherwise
   * (Burnham & Anderson 2002, sec. 2.2). Clamped so an exact fit stays
   * finite. */
  if (weighted)
    f->aic = f->chi2 + 2.0 * k;
  else
    f->aic = (double)n * log(fmax(f->sumsq / (double)n, 1e-300)) + 2.0 * k;
  f->has_aicc = (double)n - k - 1.0 > 0.5;
  f->aicc = f->has_aicc ? f->aic + 2.0 * k * (k + 1.0) / ((double)n - k - 1.0)
                        : 0.0;

  int ok = isfinite(f->chi2) && isfinite(f->t_crit) && isfinite(f->aic);
  for (size_t j = 0; j < p; j++)
    ok = ok && isfinite(f->par[j]) && isfinite(f->se[j]);
  return ok ? 0 : -1;
}

int ff_rg_fail(struct ff_fit *f, struct ff_diag *d, const char *fmt, ...)
{
  va_list ap;
  enum ff_regress_model m = f->model;
  struct ff_particles p = f->p;
  double a_phi = f->a_phi, b = f->b_kg_mol;

  ff_fit_release(f);
  f->model = m;
  f->p = p;
  f->a_phi = a_phi;
  f->b_kg_mol = b;
  f->attempted = 1;
  f->status = FF_EUNTRUSTED;
  va_start(ap, fmt);
  vsnprintf(f->reason, sizeof f->reason, fmt, ap);
  va_end(ap);
  if (d)
    ff_diag_set(d, FF_EUNTRUSTED, NULL, "%s: %s", ff_regress_model_name(m),
                f->reason);
  return FF_EUNTRUSTED;
}

void ff_rg_ftest(const struct ff_fit *r, const struct ff_fit *full,
                 double f_alpha, struct ff_ftest *out)
{
  memset(out, 0, sizeof *out);
  if (r->status != FF_OK || full->status != FF_OK || full->npar <= r->npar ||
      full->dof == 0 || full->n != r->n || !(full->chi2 > 0.0))
    return;
  out->df1 = (double)(full->npar - r->npar);
  out->df2 = (double)full->dof;
  out->f = ((r->chi2 - full->chi2) / out->df1) / (full->chi2 / out->df2);
  if (!isfinite(out->f))
    return;
  if (out->f < 0.0)
    out->f = 0.0; /* rounding: the fuller model cannot fit worse */
  out->p = gsl_cdf_fdist_Q(out->f, out->df1, out->df2);
  out->reject_restricted = out->p < f_alpha;
  out->done = 1;
}

static int all_finite(const double *v, size_t n)
{
  for (size_t i = 0; i < n; i++)
    if (!isfinite(v[i]))
      return 0;
  return 1;
}

int ff_rg_check_input(const struct ff_regress_input *in, struct ff_diag *d)
{
  const struct ff_particles *p = &in->p;

  if (in->n == 0 || !in->m_mol_kg || !in->i_obs)
    return ff_diag_set(d, FF_EINPUT, NULL, "regression: no data points");
  for (size_t i = 0; i < in->n; i++) {
    if (!isfinite(in->m_mol_kg[i]) || !(in->m_mol_kg[i] > 0.0))
      return ff_diag_set(d, FF_EINPUT, NULL, "regression: point %zu: "
                         "molality must be positive and finite", i + 1);
    if (!isfinite(in->i_obs[i]))
      return ff_diag_set(d, FF_EINPUT, NULL, "regression: point %zu: "
                         "van 't Hoff factor is not a number", i + 1);
    if (in->u_i && !(isfinite(in->u_i[i]) && in->u_i[i] > 0.0))
      return ff_diag_set(d, FF_EINPUT, NULL, "regression: point %zu: "
                         "uncertainty of i must be positive", i + 1);
  }
  if (!(isfinite(in->a_phi) && in->a_phi >= 0.0))
    return ff_diag_set(d, FF_EINPUT, NULL, "regression: A_phi must be >= 0");
  if (p->nu == 0)
    return ff_diag_set(d, FF_EINPUT, NULL, "regression: particle count "
                       "nu must be at least 1");
  if (p->nu > 1) {
    long zp = labs((long)p->z_plus), zm = labs((long)p->z_minus);
    if (p->nu_plus + p->nu_minus != p->nu || p->nu_plus == 0 ||
        p->nu_minus == 0)
      return ff_diag_set(d, FF_EINPUT, NULL, "regression: nu = %u but "
                         "nu+ = %u, nu- = %u", p->nu, p->nu_plus,
                         p->nu_minus);
    if (zp == 0 || zm == 0 || (long)p->nu_plus * zp != (long)p->nu_minus * zm)
      return ff_diag_set(d, FF_EINPUT, NULL, "regression: charges z+ = %d, "
                         "z- = %d do not balance nu+ = %u, nu- = %u",
                         p->z_plus, p->z_minus, p->nu_plus, p->nu_minus);
  }
  return FF_OK;
}

int ff_rg_check_opts(const struct ff_regress_opts *o, struct ff_diag *d)
{
  if (!(o->confidence > 0.0 && o->confidence < 1.0))
    return ff_diag_set(d, FF_EUSAGE, NULL, "regression: confidence level "
                       "must lie in (0, 1), got %g", o->confidence);
  if (!(o->b_kg_mol >= 0.0 && isfinite(o->b_kg_mol)))
    return ff_diag_set(d, FF_EUSAGE, NULL, "regression: DH b must be >= 0");
  if (o->virial_terms < 0 || o->virial_terms > 2)
    return ff_diag_set(d, FF_EUSAGE, NULL, "regression: virial terms must "
                       "be 0 (auto), 1 or 2");
  if (!(o->f_alpha > 0.0 && o->f_alpha < 1.0))
    return ff_diag_set(d, FF_EUSAGE, NULL, "regression: F-test level must "
                       "lie in (0, 1)");
  if (!(o->k_a_start_kg_mol > 0.0) || !(o->k2_start_kg_mol > 0.0) ||
      o->max_iter == 0 || !(o->xtol > 0.0))
    return ff_diag_set(d, FF_EUSAGE, NULL, "regression: nonlinear fit "
                       "settings must be positive");
  return FF_OK;
}

/* ---- straight line --------------------------------------------------- */

int ff_regress_line(const double *x, const double *y, const double *u_y,
                    size_t n, double confidence, enum ff_regress_cov cov,
                    struct ff_line *out, struct ff_diag *d)
{
  memset(out, 0, sizeof *out);
  if (!x || !y || !all_finite(x, n) || !all_finite(y, n) ||
      (u_y && !all_finite(u_y, n)))
    return ff_diag_set(d, FF_EINPUT, NULL, "line fit: missing or non-finite "
                       "values");
  if (u_y)
    for (size_t i = 0; i < n; i++)
      if (!(u_y[i] > 0.0))
        return ff_diag_set(d, FF_EINPUT, NULL, "line fit: point %zu: "
                           "uncertainty must be positive", i + 1);
  if (!(confidence > 0.0 && confidence < 1.0))
    return ff_diag_set(d, FF_EUSAGE, NULL, "line fit: confidence level must "
                       "lie in (0, 1)");
  if (n < 3)
    return ff_diag_set(d, FF_EUNTRUSTED, NULL, "line fit: %zu points, need "
                       "at least 3 (two parameters and one degree of "
                       "freedom)", n);
  if (ff_rg_distinct_upto(x, n, 2) < 2)
    return ff_diag_set(d, FF_EUNTRUSTED, NULL, "line fit: all points at one "
                       "abscissa, the slope is undetermined");

  double c0, c1, c00, c01, c11, ss;
  int st;
  if (u_y) {
    double *w = malloc(n * sizeof *w);
    if (!w)
      return ff_diag_set(d, FF_EIO, NULL, "line fit: out of memory");
    for (size_t i = 0; i < n; i++)
      w[i] = 1.0 / (u_y[i] * u_y[i]);
    st = gsl_fit_wlinear(x, 1, w, 1, y, 1, n, &c0, &c1, &c00, &c01, &c11, &ss);
    free(w);
  } else {
    st = gsl_fit_linear(x, 1, y, 1, n, &c0, &c1, &c00, &c01, &c11, &ss);
  }
  if (st != GSL_SUCCESS)
    return ff_diag_set(d, FF_EUNTRUSTED, NULL, "line fit failed: %s",
                       gsl_strerror(st));

  out->n = n;
  out->dof = n - 2;
  out->c0 = c0;
  out->c1 = c1;
  out->chi2 = ss;
  out->sumsq = 0.0;
  for (size_t i = 0; i < n; i++) {
    double r = y[i] - (c0 + c1 * x[i]);
    out->sumsq += r * r;
  }
  double red = ss / (double)out->dof;
  /* gsl_fit_linear already scales by the residual variance; the weighted
   * version returns (X'WX)^-1 unscaled. */
  if (!u_y || cov == FF_COV_ABSOLUTE)
    out->cov_scale = 1.0;
  else if (cov == FF_COV_SCALED)
    out->cov_scale = red;
  else
    out->cov_scale = fmax(1.0, red);
  out->cov00 = c00 * out->cov_scale;
  out->cov01 = c01 * out->cov_scale;
  out->cov11 = c11 * out->cov_scale;
  out->se0 = sqrt(out->cov00);
  out->se1 = sqrt(out->cov11);
  out->t_crit = ff_rg_coverage_factor(confidence, out->dof,
                                      !u_y || out->cov_scale > 1.0 ||
                                        cov == FF_COV_SCALED);
  out->ci0[0] = c0 - out->t_crit * out->se0;
  out->ci0[1] = c0 + out->t_crit * out->se0;
  out->ci1[0] = c1 - out->t_crit * out->se1;
  out->ci1[1] = c1 + out->t_crit * out->se1;
  if (!isfinite(out->se0) || !isfinite(out->se1) || !isfinite(out->t_crit)) {
    memset(out, 0, sizeof *out);
    return ff_diag_set(d, FF_EUNTRUSTED, NULL, "line fit: non-finite result");
  }
  return FF_OK;
}

/* ---- degree of dissociation ------------------------------------------ */

int ff_regress_alpha(double i, double u_i, unsigned nu, double *alpha,
                     double *u_alpha, struct ff_diag *d)
{
  if (nu < 2)
    return ff_diag_set(d, FF_EINPUT, NULL, "degree of dissociation needs "
                       "nu >= 2, got %u", nu);
  if (!isfinite(i) || !isfinite(u_i) || u_i < 0.0)
    return ff_diag_set(d, FF_EINPUT, NULL, "degree of dissociation: i or "
                       "u(i) not a valid number");
  *alpha = (i - 1.0) / (double)(nu - 1);
  *u_alpha = u_i / (double)(nu - 1);
  return FF_OK;
}

/* ---- molar mass ------------------------------------------------------ */

static void mm_fail(struct ff_mm_fit *f, enum ff_mm_method m, size_t n,
                    const char *why)
{
  memset(f, 0, sizeof *f);
  f->method = m;
  f->n = n;
  f->status = FF_EUNTRUSTED;
  snprintf(f->reason, sizeof f->reason, "%s", why);
}

/* Line through y(c) with u_y; fills slope, intercept statistics. n == 2 is
 * allowed: the line through both points, intervals from the stated u with
 * the normal quantile (no scatter left to estimate). */
static int mm_line(const double *c, const double *y, const double *u,
                   size_t n, double conf, double *c0, double *u0, double *lo,
                   double *hi, double *slope, double *u_slope, double *chi2,
                   size_t *dof, double *cov01, double *k_cov, char *why,
                   size_t nwhy)
{
  if (n >= 3) {
    struct ff_line L;
    struct ff_diag d = FF_DIAG_INIT;
    if (ff_regress_line(c, y, u, n, conf, FF_COV_AUTO, &L, &d) != FF_OK) {
      snprintf(why, nwhy, "%.150s", d.msg);
      return -1;
    }
    *c0 = L.c0; *u0 = L.se0; *lo = L.ci0[0]; *hi = L.ci0[1];
    *slope = L.c1; *u_slope = L.se1; *chi2 = L.chi2; *dof = L.dof;
    *cov01 = L.cov01; *k_cov = L.t_crit;
    return 0;
  }
  double w[2] = { 1.0 / (u[0] * u[0]), 1.0 / (u[1] * u[1]) };
  double a, b, c00, c01, c11, ss;
  if (ff_rg_distinct_upto(c, n, 2) < 2 ||
      gsl_fit_wlinear(c, 1, w, 1, y, 1, 2, &a, &b, &c00, &c01, &c11, &ss) !=
        GSL_SUCCESS || !isfinite(a) || !isfinite(c00)) {
    snprintf(why, nwhy, "two runs at one concentration: no extrapolation");
    return -1;
  }
  double k = gsl_cdf_ugaussian_Pinv(0.5 + 0.5 * conf);
  *c0 = a; *u0 = sqrt(c00); *lo = a - k * *u0; *hi = a + k * *u0;
  *slope = b; *u_slope = sqrt(c11); *chi2 = 0.0; *dof = 0;
  *cov01 = c01; *k_cov = k;
  return 0;
}

static void mm_aicc(struct ff_mm_fit *f)
{
  double k = 2.0, n = (double)f->n;
  f->has_aicc = n - k - 1.0 > 0.5;
  f->aicc = f->has_aicc ? f->chi2 + 2.0 * k + 2.0 * k * (k + 1.0) /
                                                 (n - k - 1.0) : 0.0;
}

int ff_regress_molar_mass(const double *conc, const double *m_app_g_mol,
                          const double *u_m_g_mol, size_t n, double conf,
                          struct ff_mm_result *out, struct ff_diag *d)
{
  char why[FF_REGRESS_REASON];
  memset(out, 0, sizeof *out);

  if (n == 0 || !conc || !m_app_g_mol || !u_m_g_mol)
    return ff_diag_set(d, FF_EINPUT, NULL, "molar mass: no runs");
  for (size_t i = 0; i < n; i++) {
    if (!isfinite(conc[i]) || !(conc[i] > 0.0) ||
        !isfinite(m_app_g_mol[i]) || !(m_app_g_mol[i] > 0.0) ||
        !isfinite(u_m_g_mol[i]) || !(u_m_g_mol[i] > 0.0))
      return ff_diag_set(d, FF_EINPUT, NULL, "molar mass: run %zu: "
                         "concentration, molar mass and its uncertainty must "
                         "be positive numbers", i + 1);
  }
  if (!(conf > 0.0 && conf < 1.0))
    return ff_diag_set(d, FF_EUSAGE, NULL, "molar mass: confidence level "
                       "must lie in (0, 1)");

  if (n == 1) {
    double k = gsl_cdf_ugaussian_Pinv(0.5 + 0.5 * conf);
    out->preferred = FF_MM_SINGLE;
    out->m0_g_mol = m_app_g_mol[0];
    out->u_m0_g_mol = u_m_g_mol[0];
    out->ci[0] = out->m0_g_mol - k * out->u_m0_g_mol;
    out->ci[1] = out->m0_g_mol + k * out->u_m0_g_mol;
    snprintf(out->note, sizeof out->note, "one run: apparent molar mass at "
             "that concentration, not extrapolated; association would go "
             "unnoticed");
    mm_fail(&out->linear, FF_MM_LINEAR, 1, "one run: no extrapolation");
    mm_fail(&out->reciprocal, FF_MM_RECIPROCAL, 1, "one run: no "
            "extrapolation");
    return FF_OK;
  }
  if (ff_rg_distinct_upto(conc, n, 2) < 2)
    return ff_diag_set(d, FF_EUNTRUSTED, NULL, "molar mass: all %zu runs at "
                       "one concentration, cannot extrapolate to zero", n);

  double *y = malloc(2 * n * sizeof *y);
  if (!y)
    return ff_diag_set(d, FF_EIO, NULL, "molar mass: out of memory");
  double *uy = y + n;

  /* M_app = M0 + s c */
  struct ff_mm_fit *L = &out->linear;
  L->method = FF_MM_LINEAR;
  L->n = n;
  if (mm_line(conc, m_app_g_mol, u_m_g_mol, n, conf, &L->m0_g_mol,
              &L->u_m0_g_mol, &L->ci[0], &L->ci[1], &L->slope, &L->u_slope,
              &L->chi2, &L->dof, &L->cov01, &L->k_band, why,
              sizeof why) != 0)
    mm_fail(L, FF_MM_LINEAR, n, why);
  else if ((L->u_line0 = L->u_m0_g_mol), !(L->m0_g_mol > 0.0))
    mm_fail(L, FF_MM_LINEAR, n, "extrapolated molar mass is not positive");
  else
    mm_aicc(L);

  /* 1/M_app = 1/M0 + s c: for monomer-dimer association 1/M_app = i/M1
   * with i = 1 - K2 m + 4 K2^2 m^2 - ..., while M_app/M1 = 1 + K2 m -
   * 3 K2^2 m^2 + ...: both are linear to first order, so chi2 decides. */
  struct ff_mm_fit *R = &out->reciprocal;
  R->method = FF_MM_RECIPROCAL;
  R->n = n;
  for (size_t i = 0; i < n; i++) {
    y[i] = 1.0 / m_app_g_mol[i];
    uy[i] = u_m_g_mol[i] / (m_app_g_mol[i] * m_app_g_mol[i]);
  }
  double a, ua, lo, hi;
  if (mm_line(conc, y, uy, n, conf, &a, &ua, &lo, &hi, &R->slope,
              &R->u_slope, &R->chi2, &R->dof, &R->cov01, &R->k_band, why,
              sizeof why) != 0)
    mm_fail(R, FF_MM_RECIPROCAL, n, why);
  else if (!(a > 0.0) || !(lo > 0.0))
    mm_fail(R, FF_MM_RECIPROCAL, n, "intercept of 1/M not clearly positive");
  else {
    R->m0_g_mol = 1.0 / a;
    R->u_line0 = ua;
    R->u_m0_g_mol = ua / (a * a);     /* first-order propagation */
    R->ci[0] = 1.0 / hi;
    R->ci[1] = 1.0 / lo;
    mm_aicc(R);
  }
  free(y);

  if (L->status != FF_OK && R->status != FF_OK)
    return ff_diag_set(d, FF_EUNTRUSTED, NULL, "molar mass: %s", L->reason);
  /* Same n and parameter count, both chi2 in units of the stated u, so the
   * smaller chi2 is the better description (equal to comparing AICc). */
  const struct ff_mm_fit *best =
    (L->status != FF_OK) ? R :
    (R->status != FF_OK) ? L : (R->chi2 < L->chi2 ? R : L);
  out->preferred = best->method;
  out->m0_g_mol = best->m0_g_mol;
  out->u_m0_g_mol = best->u_m0_g_mol;
  out->ci[0] = best->ci[0];
  out->ci[1] = best->ci[1];
  snprintf(out->note, sizeof out->note, "%s extrapolation to zero "
           "concentration preferred (smaller chi2)%s",
           best->method == FF_MM_LINEAR ? "linear M" : "reciprocal 1/M",
           n == 2 ? "; two runs: interval from the stated uncertainties only"
                  : "");
  return FF_OK;
}
