/* detect_methods.c - the freezing-point readings of one freeze event (plateau,
 * extrapolation, intersection, slope break, energy-balance model): detect
 * stage. The equations are in docs/methods/detection.md. */
#include "detect_impl.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_fit.h>
#include <gsl/gsl_multifit.h>
#include <gsl/gsl_multifit_nlinear.h>
#include <gsl/gsl_statistics_double.h>

/* Fewest points a fit is tried on. */
#define MIN_FIT_POINTS 5
/* Fewest points of a Newton fit: three parameters and three to spare
 * (coarse sampling, 10 s, leaves few on a short liquid branch). */
#define NEWTON_MIN_POINTS 6
/* Longer liquid branches are fitted as block means, at most this many
 * (see newton_blocks): a 10 Hz logger gives 6,000 readings in ten minutes
 * of cooling, and each iteration of the fit costs a few passes over them. */
#define NEWTON_MAX_POINTS 1024
/* A quadratic term is kept only when this many standard errors from 0. */
#define QUAD_SIGNIFICANCE 3.0
/* Frozen fractions above this are not used by the model: the 1/(1 - x) law
 * of a dilute solution and the constant heat-transfer coefficient both get
 * worse as the sample turns to ice. */
#define MODEL_X_MAX 0.5

static void est_fail(struct ff_estimate *e, const char *why)
{
  e->ok = 0;
  e->value_c = NAN;
  e->u_k = NAN;
  snprintf(e->why, sizeof e->why, "%s", why);
}

static void est_set(struct ff_estimate *e, double v, double u)
{
  if (!isfinite(v) || !isfinite(u)) {
    est_fail(e, "the fit gave no finite value");
    return;
  }
  e->ok = 1;
  e->value_c = v;
  e->u_k = u;
  e->why[0] = '\0';
}

double dd_median(double *v, size_t n)
{
  /* Quickselect (GSL >= 2.5): O(n) instead of a full sort, and the same
   * value bit for bit (the middle element, or the mean of the two). */
  return gsl_stats_median(v, 1, n);
}

int dd_line(const double *t, const double *y, size_t i0, size_t i1,
            double t_ref, double *c0, double *c1, double cov[3], double *rms)
{
  size_t n = i1 > i0 ? i1 - i0 : 0;
  double *x, sumsq;
  int st;

  if (n < 3)
    return -1;
  x = malloc(n * sizeof *x);
  if (x == NULL)
    return -1;
  for (size_t i = 0; i < n; i++)
    x[i] = t[i0 + i] - t_ref;
  st = gsl_fit_linear(x, 1, y + i0, 1, n, c0, c1, &cov[0], &cov[1], &cov[2],
                      &sumsq);
  free(x);
  if (st != GSL_SUCCESS || !isfinite(*c0) || !isfinite(*c1))
    return -1;
  if (rms != NULL)
    *rms = sqrt(sumsq / (double)n);
  return 0;
}

/* ---- Newton cooling: T = Tb + A exp(-k (t - t_ref)) ---------------- */

/* The exponentials of the last residual evaluation are kept: the solver
 * asks for the Jacobian at the point it last evaluated (an accepted step),
 * where they are the same numbers, so each is computed once. */
struct nl_data {
  const double *t, *y;
  size_t n;
  double t_ref;
  const double *sw;            /* sqrt of each point's weight; NULL: 1 */
  double *e;                   /* exp(-k (t - t_ref)) at k = e_k */
  double e_k;
  int e_ok;
};

static int newton_f(const gsl_vector *x, void *data, gsl_vector *f)
{
  struct nl_data *d = data;
  double tb = gsl_vector_get(x, 0), a = gsl_vector_get(x, 1),
         k = gsl_vector_get(x, 2);
  double *fv = f->data;        /* n values, stride f->stride */

  for (size_t i = 0; i < d->n; i++) {
    double e = exp(-k * (d->t[i] - d->t_ref));
    d->e[i] = e;
    fv[i * f->stride] = tb + a * e - d->y[i];
    if (d->sw != NULL)
      fv[i * f->stride] *= d->sw[i];
  }
  d->e_k = k;
  d->e_ok = 1;
  return GSL_SUCCESS;
}

static int newton_df(const gsl_vector *x, void *data, gsl_matrix *J)
{
  const struct nl_data *d = data;
  double a = gsl_vector_get(x, 1), k = gsl_vector_get(x, 2);
  int same = d->e_ok && memcmp(&k, &d->e_k, sizeof k) == 0;

  for (size_t i = 0; i < d->n; i++) {
    double s = d->t[i] - d->t_ref, e = same ? d->e[i] : exp(-k * s);
    double *row = J->data + i * J->tda;   /* n x 3, row-major */
    row[0] = 1.0;
    row[1] = e;
    row[2] = -a * s * e;
    if (d->sw != NULL) {
      row[0] = d->sw[i];
      row[1] *= d->sw[i];
      row[2] *= d->sw[i];
    }
  }
  return GSL_SUCCESS;
}

/* Mean of c->ys over about m points centred on i. */
static double local_mean(const struct dctx *c, size_t i, size_t m, size_t lo,
                         size_t hi)
{
  size_t a = i > lo + m / 2 ? i - m / 2 : lo, b = a + m;
  double s = 0.0;

  if (b > hi)
    b = hi;
  if (a >= b)
    return c->y[i];
  for (size_t j = a; j < b; j++)
    s += c->y[j];
  return s / (double)(b - a);
}

/*
 * Block means of a long liquid branch [i0, i1): k = ceil(n / max) readings
 * a block, in order; each block's mean time (from t[i0]) and mean reading
 * into bt and by, the square root of its count into sw. Returns the number
 * of blocks. The mean of an exponential over a block differs from its
 * value at the mean time by (k dt / tau)^2 / 24 of the curve's offset at
 * most, 1e-7 of it when tau is a twentieth of the window: far below the
 * noise; the noise of a block mean is sigma / sqrt(count), so weighting by
 * the count keeps the least-squares problem the readings pose.
 */
static size_t newton_blocks(const struct dctx *c, size_t i0, size_t i1,
                            double *bt, double *by, double *sw)
{
  size_t n = i1 - i0, k = (n + NEWTON_MAX_POINTS - 1) / NEWTON_MAX_POINTS,
         nb = 0;

  for (size_t a = i0; a < i1; a += k) {
    size_t b = a + k < i1 ? a + k : i1;
    double st = 0.0, sy = 0.0;
    for (size_t i = a; i < b; i++) {
      st += c->t[i] - c->t[i0];
      sy += c->y[i];
    }
    bt[nb] = st / (double)(b - a);
    by[nb] = sy / (double)(b - a);
    sw[nb] = sqrt((double)(b - a));
    nb++;
  }
  return nb;
}

int dd_newton(const struct dctx *c, size_t i0, size_t i1,
              struct ff_liquid_fit *f)
{
  size_t n = i1 > i0 ? i1 - i0 : 0, mid, m, nb;
  struct nl_data nd;
  double y1, y2, y3, h, r, k, a, tb, x0[3], span;
  gsl_multifit_nlinear_parameters fp;
  gsl_multifit_nlinear_workspace *w;
  gsl_multifit_nlinear_fdf fdf;
  gsl_vector_view xv;
  int info, st, ret = -1;

  if (n < NEWTON_MIN_POINTS)
    return -1;
  /* Starting values from three averaged points at equal spacing: for an
   * exponential, (y1 - y2) / (y2 - y3) = exp(k h). */
  mid = i0 + n / 2;
  m = n / 10 > 1 ? n / 10 : 1;
  y1 = local_mean(c, i0 + m / 2, m, i0, i1);
  y2 = local_mean(c, mid, m, i0, i1);
  y3 = local_mean(c, i1 - 1 - m / 2, m, i0, i1);
  h = 0.5 * (c->t[i1 - 1 - m / 2] - c->t[i0 + m / 2]);
  span = c->t[i1 - 1] - c->t[i0];
  if (!(h > 0.0) || !(y2 - y3 > 0.0) || !(y1 - y2 > 0.0))
    return -1;
  r = (y1 - y2) / (y2 - y3);
  if (!(r > 1.0 + 1e-6))
    k = 0.05 / span;           /* nearly straight: start from a long tau */
  else
    k = log(r) / h;
  a = (y1 - y2) / (1.0 - exp(-k * h));
  tb = y1 - a;
  a *= exp(k * (c->t[i0 + m / 2] - c->t[i0]));   /* to t_ref = t[i0] */

  nd = (struct nl_data){ c->t + i0, c->y + i0, n, c->t[i0], NULL, NULL,
                         0.0, 0 };
  nb = n;
  if (n > NEWTON_MAX_POINTS) {
    nd.e = malloc(4 * n * sizeof *nd.e);   /* e, block t, y, sqrt(w) */
    if (nd.e == NULL)
      return -1;
    nb = newton_blocks(c, i0, i1, nd.e + n, nd.e + 2 * n, nd.e + 3 * n);
    nd.t = nd.e + n;
    nd.y = nd.e + 2 * n;
    nd.sw = nd.e + 3 * n;
    nd.t_ref = 0.0;            /* block times are from t[i0] already */
    nd.n = nb;
  } else {
    nd.e = malloc(n * sizeof *nd.e);
    if (nd.e == NULL)
      return -1;
  }
  fdf.f = newton_f;
  fdf.df = newton_df;
  fdf.fvv = NULL;
  fdf.n = nb;
  fdf.p = 3;
  fdf.params = &nd;
  fp = gsl_multifit_nlinear_default_parameters();
  w = gsl_multifit_nlinear_alloc(gsl_multifit_nlinear_trust, &fp, nb, 3);
  if (w == NULL) {
    free(nd.e);
    return -1;
  }
  x0[0] = tb;
  x0[1] = a;
  x0[2] = k;
  xv = gsl_vector_view_array(x0, 3);
  st = gsl_multifit_nlinear_init(&xv.vector, &fdf, w);
  if (st == GSL_SUCCESS)
    st = gsl_multifit_nlinear_driver(200, 1e-12, 1e-12, 1e-12, NULL, NULL,
                                     &info, w);
  if (st == GSL_SUCCESS) {
    const gsl_vector *x = gsl_multifit_nlinear_position(w);
    const gsl_vector *res = gsl_multifit_nlinear_residual(w);
    double kk = gsl_vector_get(x, 2), ss = 0.0;
    if (nb == n) {
      for (size_t i = 0; i < n; i++)
        ss += gsl_vector_get(res, i) * gsl_vector_get(res, i);
    } else {
      /* The residuals of the readings themselves: rms and the variance
       * that scales the covariance keep their meaning. */
      double tb1 = gsl_vector_get(x, 0), a1 = gsl_vector_get(x, 1);
      for (size_t i = i0; i < i1; i++) {
        double r1 = tb1 + a1 * exp(-kk * (c->t[i] - c->t[i0])) - c->y[i];
        ss += r1 * r1;
      }
    }
    /* A time constant far beyond the window is not measured by it. */
    if (kk > 0.0 && 1.0 / kk < 30.0 * span && isfinite(gsl_vector_get(x, 0))) {
      f->kind = 1;
      f->t_ref_s = c->t[i0];
      f->bath_c = gsl_vector_get(x, 0);
      f->t0_c = f->bath_c + gsl_vector_get(x, 1);
      f->tau_s = 1.0 / kk;
      f->slope_k_s = -(f->t0_c - f->bath_c) * kk;
      f->start_s = c->t[i0];
      f->end_s = c->t[i1 - 1];
      f->rms_k = sqrt(ss / (double)n);
      f->u_bath_c = f->u_tau_s = NAN;
      {
        gsl_matrix *cv = gsl_matrix_alloc(3, 3);
        if (cv != NULL && gsl_multifit_nlinear_covar(
                gsl_multifit_nlinear_jac(w), 0.0, cv) == GSL_SUCCESS) {
          double s2 = ss / (double)(n - 3);
          f->u_bath_c = sqrt(gsl_matrix_get(cv, 0, 0) * s2);
          f->u_tau_s = sqrt(gsl_matrix_get(cv, 2, 2) * s2) / (kk * kk);
        }
        gsl_matrix_free(cv);
      }
      ret = 0;
    }
  }
  gsl_multifit_nlinear_free(w);
  free(nd.e);
  return ret;
}

/* ---- weighted polynomial branch ------------------------------------ */

int dd_branch(const struct dctx *c, size_t i0, size_t i1, int order,
              double t_ref, struct ff_branch_fit *b, double cov9[9])
{
  size_t n = i1 > i0 ? i1 - i0 : 0, np = (size_t)order + 1;
  gsl_matrix *X, *cov;
  gsl_vector *w, *yv, *cf;
  gsl_multifit_linear_workspace *ws;
  double chisq;
  int st, ret = -1;

  if (n < MIN_FIT_POINTS + np)
    return -1;
  X = gsl_matrix_alloc(n, np);
  cov = gsl_matrix_alloc(np, np);
  w = gsl_vector_alloc(n);
  yv = gsl_vector_alloc(n);
  cf = gsl_vector_alloc(np);
  ws = gsl_multifit_linear_alloc(n, np);
  if (X && cov && w && yv && cf && ws) {
    for (size_t i = 0; i < n; i++) {
      double s = c->t[i0 + i] - t_ref;
      gsl_matrix_set(X, i, 0, 1.0);
      gsl_matrix_set(X, i, 1, s);
      if (np > 2)
        gsl_matrix_set(X, i, 2, s * s);
      gsl_vector_set(w, i, 1.0);   /* equal readings: one noise level */
      gsl_vector_set(yv, i, c->y[i0 + i]);
    }
    st = gsl_multifit_wlinear(X, w, yv, cf, cov, &chisq, ws);
    if (st == GSL_SUCCESS) {
      /* Unit weights: scale the covariance by the residual variance. */
      double s2 = chisq / (double)(n - np);
      memset(b, 0, sizeof *b);
      b->ok = 1;
      b->order = order;
      b->t_ref_s = t_ref;
      for (size_t j = 0; j < np; j++)
        b->c[j] = gsl_vector_get(cf, j);
      b->start_s = c->t[i0];
      b->end_s = c->t[i1 - 1];
      b->rms_k = sqrt(chisq / (double)n);
      for (size_t r = 0; r < 3; r++)
        for (size_t q = 0; q < 3; q++)
          cov9[r * 3 + q] = (r < np && q < np)
                            ? gsl_matrix_get(cov, r, q) * s2 : 0.0;
      ret = 0;
    }
  }
  gsl_matrix_free(X);
  gsl_matrix_free(cov);
  gsl_vector_free(w);
  gsl_vector_free(yv);
  gsl_vector_free(cf);
  if (ws)
    gsl_multifit_linear_free(ws);
  return ret;
}

static double poly_var(const double cov[9], double s)
{
  double j[3] = { 1.0, s, s * s }, v = 0.0;

  for (int r = 0; r < 3; r++)
    for (int q = 0; q < 3; q++)
      v += j[r] * cov[r * 3 + q] * j[q];
  return v > 0.0 ? v : 0.0;
}

/* ---- plateau --------------------------------------------------------- */

/*
 * The longest window from the start of the settled branch whose fitted
 * drift (slope times length) is within the noise: insignificant at three
 * standard errors, or below half a resolution step. Its median is the level.
 */
/*
 * Sums of 1, x, x^2, y, x y, y^2 (x = t - t[i0], y less y[i0]) over the
 * first m readings from i0, for each m = n - k step the plateau tries
 * (6 a window, k = 0, 1, ...); NULL when out of memory.
 */
static double *plateau_sums(const struct dctx *c, size_t i0, size_t n,
                            size_t step)
{
  size_t nk = (n - 1) / step + 1;
  double *ps = malloc(6 * nk * sizeof *ps), s[6] = { 0 };

  if (ps == NULL)
    return NULL;
  for (size_t i = 0; i < n; i++) {
    double x = c->t[i0 + i] - c->t[i0], y = c->y[i0 + i] - c->y[i0];
    s[0] += 1.0;
    s[1] += x;
    s[2] += x * x;
    s[3] += y;
    s[4] += x * y;
    s[5] += y * y;
    if ((n - (i + 1)) % step == 0)
      memcpy(ps + 6 * ((n - (i + 1)) / step), s, sizeof s);
  }
  return ps;
}

/*
 * Whether the window of the first m readings fails the plateau test by a
 * clear margin, from its sums: the slope, its standard error and the test
 * as dd_line and dd_plateau form them, to rounding. Only a clear failure
 * (a millionth beyond the limit) skips the exact fit; a window near the
 * limit, or any doubt, is fitted, so the plateau found is the one the fits
 * alone would find, with one least-squares fit instead of up to forty.
 */
static int plateau_clearly_slopes(const struct dctx *c, const double *s,
                                  size_t m, double span)
{
  double sxx = s[2] - s[1] * s[1] / s[0], sxy = s[4] - s[1] * s[3] / s[0],
         syy = s[5] - s[3] * s[3] / s[0], c1, sse, se, lhs, rhs;

  if (m < 3 || !(sxx > 0.0))
    return 0;
  c1 = sxy / sxx;
  sse = syy - sxy * c1;
  se = sqrt(fmax(sse, 0.0) / (double)(m - 2) / sxx);
  lhs = fabs(c1) * span;
  rhs = fmax(3.0 * se * span, fmax(0.5 * c->res, 0.5 * c->sigma));
  return lhs > rhs * (1.0 + 1e-6) + 1e-12 && isfinite(lhs) && isfinite(rhs);
}

void dd_plateau(const struct dctx *c, struct ff_event *e, size_t i0,
                size_t i1)
{
  struct ff_estimate *es = &e->est[FF_METHOD_PLATEAU];
  size_t best = 0, n = i1 > i0 ? i1 - i0 : 0, step;
  double *v, *ps = NULL;

  if (n < 2 * MIN_FIT_POINTS) {
    est_fail(es, "freezing branch too short for a plateau");
    return;
  }
  step = n / 40 > 1 ? n / 40 : 1;
  ps = plateau_sums(c, i0, n, step);
  for (size_t m = n; m >= 2 * MIN_FIT_POINTS; m = m > step ? m - step : 0) {
    double c0, c1, cov[3], rms, span = c->t[i0 + m - 1] - c->t[i0];
    if (ps != NULL && plateau_clearly_slopes(c, ps + 6 * ((n - m) / step), m,
                                             span))
      continue;
    if (dd_line(c->t, c->y, i0, i0 + m, c->t[i0], &c0, &c1, cov, &rms) != 0)
      continue;
    if (fabs(c1) * span <= fmax(3.0 * sqrt(cov[2]) * span,
                                fmax(0.5 * c->res, 0.5 * c->sigma))) {
      best = m;
      break;
    }
  }
  free(ps);
  if (best == 0 || c->t[i0 + best - 1] - c->t[i0] < 0.5 * c->p->min_branch_s) {
    est_fail(es, "no flat part after recalescence: the branch slopes, as a "
             "solution's does");
    return;
  }
  v = malloc(best * sizeof *v);
  if (v == NULL) {
    est_fail(es, "out of memory");
    return;
  }
  memcpy(v, c->y + i0, best * sizeof *v);
  /* Median of n normal readings: sd = 1.2533 sigma / sqrt(n). */
  est_set(es, dd_median(v, best), 1.2533 * c->sigma / sqrt((double)best));
  free(v);
}

/* ---- back-extrapolation to the nucleation instant ------------------- */

void dd_extrapolate(const struct dctx *c, struct ff_event *e, size_t i0,
                    size_t i1, struct dd_fit1 *f1)
{
  struct ff_estimate *es = &e->est[FF_METHOD_EXTRAPOLATE];
  struct ff_branch_fit b1, b2;
  double cov1[9], cov2[9], s;
  int st = dd_branch(c, i0, i1, 1, e->nucleation_time_s, &b1, cov1);

  if (f1 != NULL) {            /* the straight line, for dd_intersect */
    f1->ok = st == 0;
    if (st == 0) {
      f1->b = b1;
      memcpy(f1->cov, cov1, sizeof cov1);
    }
  }
  if (st != 0) {
    est_fail(es, "freezing branch too short to fit");
    return;
  }
  e->branch = b1;
  s = 0.0;   /* t_ref is the nucleation instant */
  if (dd_branch(c, i0, i1, 2, e->nucleation_time_s, &b2, cov2) == 0
      && fabs(b2.c[2]) > QUAD_SIGNIFICANCE * sqrt(cov2[8])) {
    e->branch = b2;
    est_set(es, b2.c[0], sqrt(poly_var(cov2, s)));
  } else {
    est_set(es, b1.c[0], sqrt(poly_var(cov1, s)));
  }
  e->freezing_branch_slope_k_s = b1.c[1];
}

/* ---- intersection of the straight liquid and freezing lines --------- */

void dd_intersect(const struct dctx *c, struct ff_event *e, size_t i0,
                  size_t i1, const struct dd_fit1 *f1)
{
  struct ff_estimate *es = &e->est[FF_METHOD_INTERSECT];
  const struct ff_liquid_fit *l = &e->liquid_line;
  struct ff_branch_fit b;
  double cov[9], ts, v, den, ub, ul, sl;

  if (l->kind != 2) {
    est_fail(es, "no liquid cooling line before nucleation");
    return;
  }
  if (f1 != NULL ? !f1->ok
      : dd_branch(c, i0, i1, 1, e->nucleation_time_s, &b, cov) != 0) {
    est_fail(es, "freezing branch too short to fit");
    return;
  }
  if (f1 != NULL) {
    b = f1->b;
    memcpy(cov, f1->cov, sizeof cov);
  }
  den = l->slope_k_s - b.c[1];
  if (!(den < 0.0)) {
    est_fail(es, "the liquid line does not fall faster than the freezing "
             "branch");
    return;
  }
  /* l0 + l1 (t - tl) = b0 + b1 (t - tn) */
  ts = e->nucleation_time_s
       + (b.c[0] - (l->t0_c + l->slope_k_s
                    * (e->nucleation_time_s - l->t_ref_s))) / den;
  v = b.c[0] + b.c[1] * (ts - e->nucleation_time_s);
  if (ts > e->nucleation_time_s + 1e-9 || ts < l->start_s
      - 10.0 * (l->end_s - l->start_s + 1.0)) {
    est_fail(es, "the projected lines meet far from the nucleation");
    return;
  }
  /* Shifting the branch by d moves the meeting point by l1/(l1-b1) d,
   * shifting the liquid line by d moves it by -b1/(l1-b1) d. */
  ub = sqrt(poly_var(cov, ts - e->nucleation_time_s));
  sl = ts - l->t_ref_s;
  ul = l->rms_k;
  {
    size_t l0 = dd_index_at(c, l->start_s), l1 = dd_index_at(c, l->end_s) + 1;
    double c0, c1, lc[3], rms;
    if (dd_line(c->t, c->y, l0, l1, l->t_ref_s, &c0, &c1, lc, &rms) == 0)
      ul = sqrt(fmax(0.0, lc[0] + 2.0 * lc[1] * sl + lc[2] * sl * sl));
  }
  est_set(es, v, hypot(l->slope_k_s / den * ub, b.c[1] / den * ul));
}

/* ---- two straight segments with a free breakpoint -------------------- */

/* A corner missed by more than this many noise sigmas is rounded. */
#define BREAK_MISS_SIGMAS 6.0
/* ... and never less than this, for noise-free data (rounding only). */
#define BREAK_MISS_FLOOR_K 1e-4

/* Mean residual, within 2 samples of the corner time tc, of the readings
 * from the two lines (a0 + a1 (t - tb) before tc, b0 + b1 (t - tb) after):
 * how far the measured curve passes from the corner. Zero for a sharp
 * corner, whatever the sampling. */
static double corner_miss(const struct dctx *c, size_t l0, size_t i1,
                          double tc, double tb, double a0, double a1,
                          double b0, double b1)
{
  size_t k = l0, lo, hi;
  double sum = 0.0;

  while (k + 1 < i1 && c->t[k + 1] <= tc)
    k++;
  lo = k >= l0 + 2 ? k - 2 : l0;
  hi = k + 3 <= i1 ? k + 3 : i1;
  for (size_t j = lo; j < hi; j++) {
    double x = c->t[j] - tb;
    sum += c->y[j] - (c->t[j] < tc ? a0 + a1 * x : b0 + b1 * x);
  }
  return sum / (double)(hi - lo);
}

void dd_break(const struct dctx *c, struct ff_event *e, size_t l0, size_t i1)
{
  struct ff_estimate *es = &e->est[FF_METHOD_BREAK];
  size_t n = i1 > l0 ? i1 - l0 : 0, best = 0;
  double *S, t0, bsse = INFINITY;
  double a0, a1, ac[3], ar, b0, b1, bc[3], br, tb, v, den;

  if (n < 4 * MIN_FIT_POINTS) {
    est_fail(es, "too few points around the slope break");
    return;
  }
  /* Prefix sums of 1, t, t^2, y, t y, y^2 give each side's least-squares
   * error in O(1), so every breakpoint is scanned. */
  S = calloc(6 * (n + 1), sizeof *S);
  if (S == NULL) {
    est_fail(es, "out of memory");
    return;
  }
  t0 = c->t[l0];
  for (size_t i = 0; i < n; i++) {
    double x = c->t[l0 + i] - t0, y = c->y[l0 + i];
    double add[6] = { 1.0, x, x * x, y, x * y, y * y };
    for (int k = 0; k < 6; k++)
      S[6 * (i + 1) + k] = S[6 * i + k] + add[k];
  }
  for (size_t k = MIN_FIT_POINTS; k + MIN_FIT_POINTS <= n; k++) {
    double sse = 0.0;
    for (int side = 0; side < 2; side++) {
      size_t a = side ? k : 0, bnd = side ? n : k;
      double m[6];
      for (int q = 0; q < 6; q++)
        m[q] = S[6 * bnd + q] - S[6 * a + q];
      double sxx = m[2] - m[1] * m[1] / m[0], sxy = m[4] - m[1] * m[3] / m[0],
             syy = m[5] - m[3] * m[3] / m[0];
      sse += sxx > 0.0 ? syy - sxy * sxy / sxx : syy;
    }
    if (sse < bsse) {
      bsse = sse;
      best = k;
    }
  }
  free(S);
  if (best == 0) {
    est_fail(es, "no breakpoint found");
    return;
  }
  tb = c->t[l0 + best];
  if (dd_line(c->t, c->y, l0, l0 + best, tb, &a0, &a1, ac, &ar) != 0
      || dd_line(c->t, c->y, l0 + best, i1, tb, &b0, &b1, bc, &br) != 0) {
    est_fail(es, "a segment could not be fitted");
    return;
  }
  den = a1 - b1;
  e->break_time_s = tb;
  if (den < 0.0) {
    double ts = (b0 - a0) / den;     /* relative to tb */
    if (fabs(ts) < 0.25 * (c->t[i1 - 1] - c->t[l0])) {
      double ub = sqrt(fmax(0.0, bc[0] + 2 * bc[1] * ts + bc[2] * ts * ts)),
             ua = sqrt(fmax(0.0, ac[0] + 2 * ac[1] * ts + ac[2] * ts * ts));
      v = b0 + b1 * ts;
      e->break_time_s = tb + ts;
      /* A probe that lags (or a sample stirred too slowly) rounds the
       * corner: the curve then passes the intersection at a distance, and
       * the intersection is an extrapolation across a bend whose shape
       * the lines do not know (a 45 s lag moved it 65 mK in a simulated
       * run). A corner missed by more than the noise allows is refused. */
      double miss = corner_miss(c, l0, i1, e->break_time_s, tb, a0, a1, b0,
                                b1);
      double lim = fmax(fmax(BREAK_MISS_SIGMAS * c->sigma, 2.0 * c->res),
                        BREAK_MISS_FLOOR_K);
      if (!(fabs(miss) <= lim)) {
        char why[sizeof es->why];
        snprintf(why, sizeof why, "the slope break is rounded: the curve "
                 "passes %.1f mK from the corner (noise %.1f mK); probe lag "
                 "or poor stirring", 1e3 * fabs(miss), 1e3 * c->sigma);
        est_fail(es, why);
        return;
      }
      est_set(es, v, hypot(a1 / den * ub, b1 / den * ua));
      return;
    }
  }
  est_set(es, b0, sqrt(bc[0]));
}

/* ---- energy-balance model -------------------------------------------- */

/* The integration stops once x passes this: the fit uses x up to
 * MODEL_X_MAX only, and to come back below it the sample would have to melt
 * a tenth of its mass again, a thaw, where the branch has already ended
 * (branch_end). A sample left on the logger for hours of solid cooling
 * would otherwise be integrated reading by reading, three times over. */
#define MODEL_X_STOP (MODEL_X_MAX + 0.1)

/* Longer freezing branches are fitted as block means of at most this many
 * (dd_model_fit_blocks); the branch of a 10 Hz logger over 40 minutes has
 * 24,000 points, fitted three times. */
#define MODEL_FIT_MAX 4096

/*
 * The model's straight line through the m points (fx, fy) as block means
 * of k = ceil(m / MODEL_FIT_MAX) consecutive points weighted by their
 * count (fx and fy are overwritten). It differs from the fit of every
 * point only by the spread of 1/(1 - x) within a block (a part in 1e7 of
 * the slope at 10 Hz); the residual variance that scales the covariance
 * comes from every point, as gsl_fit_linear's does. GSL status.
 */
/* The model's straight line through every one of the m points: a
 * two-column design matrix, unit weights. GSL status. */
static int model_fit_all(const double *fx, const double *fy, size_t m,
                         double *c0, double *c1, double *c00, double *c11)
{
  gsl_matrix *X = gsl_matrix_alloc(m, 2), *cov = gsl_matrix_alloc(2, 2);
  gsl_vector *w = gsl_vector_alloc(m), *yv = gsl_vector_alloc(m),
             *cf = gsl_vector_alloc(2);
  gsl_multifit_linear_workspace *ws = gsl_multifit_linear_alloc(m, 2);
  double chisq;
  int st = GSL_ENOMEM;

  if (X && cov && w && yv && cf && ws) {
    for (size_t k = 0; k < m; k++) {
      gsl_matrix_set(X, k, 0, 1.0);
      gsl_matrix_set(X, k, 1, fx[k]);
      gsl_vector_set(w, k, 1.0);
      gsl_vector_set(yv, k, fy[k]);
    }
    st = gsl_multifit_wlinear(X, w, yv, cf, cov, &chisq, ws);
    if (st == GSL_SUCCESS) {
      double s2 = chisq / (double)(m - 2);
      *c0 = gsl_vector_get(cf, 0);
      *c1 = gsl_vector_get(cf, 1);
      *c00 = gsl_matrix_get(cov, 0, 0) * s2;
      *c11 = gsl_matrix_get(cov, 1, 1) * s2;
    }
  }
  gsl_matrix_free(X);
  gsl_matrix_free(cov);
  gsl_vector_free(w);
  gsl_vector_free(yv);
  gsl_vector_free(cf);
  if (ws)
    gsl_multifit_linear_free(ws);
  return st;
}

int dd_model_fit_blocks(double *fx, double *fy, size_t m, double *c0,
                        double *c1, double *c00, double *c11)
{
  size_t k = (m + MODEL_FIT_MAX - 1) / MODEL_FIT_MAX, nb = (m + k - 1) / k;
  double *bx = malloc(3 * nb * sizeof *bx), *by, *bw, c01, chisq, ss = 0.0;
  int st;

  if (bx == NULL)
    return GSL_ENOMEM;
  by = bx + nb;
  bw = by + nb;
  for (size_t j = 0; j < nb; j++) {
    size_t a = j * k, b = a + k < m ? a + k : m;
    double sx = 0.0, sy = 0.0;
    for (size_t i = a; i < b; i++) {
      sx += fx[i];
      sy += fy[i];
    }
    bx[j] = sx / (double)(b - a);
    by[j] = sy / (double)(b - a);
    bw[j] = (double)(b - a);
  }
  st = gsl_fit_wlinear(bx, 1, bw, 1, by, 1, nb, c0, c1, c00, &c01, c11,
                       &chisq);
  if (st == GSL_SUCCESS) {
    for (size_t i = 0; i < m; i++) {
      double r = fy[i] - (*c0 + *c1 * fx[i]);
      ss += r * r;
    }
    *c00 *= ss / (double)(m - 2);
    *c11 *= ss / (double)(m - 2);
  }
  free(bx);
  return st;
}

/* The smoothed readings of [s0, i1) the model reads, fetched once on first
 * use and shared by its passes. */
struct model_ys {
  double *v;
  size_t s0, n, got;
};

static double model_ys_at(const struct dctx *c, struct model_ys *m, size_t j)
{
  while (m->got <= j) {
    m->v[m->got] = dd_ys(c, m->s0 + m->got);
    m->got++;
  }
  return m->v[j];
}

/* One integration of the energy balance: the liquid curve of a liquid fit
 * (bath + amp exp(-(t - tref) / tau), as ff_event_eval_liquid gives it for
 * kind 1), its frozen fractions x and how many were computed. */
struct model_run {
  double bath, amp, tref, tau, lnext;
  double *x;
  size_t nx;
  int on, share;               /* still integrating; exponentials of run 0 */
};

static void model_run_init(struct model_run *r, const struct ff_liquid_fit *l,
                           double *x)
{
  r->bath = l->bath_c;
  r->amp = l->t0_c - l->bath_c;
  r->tref = l->t_ref_s;
  r->tau = l->tau_s;
  r->x = x;
  r->on = 1;
}

/*
 * The frozen fraction x of each of the nr runs over the n readings from s0
 * (x = 0 at s0), each stopping once x passes MODEL_X_STOP. The runs differ
 * only in their liquid curve and each step waits on the previous x of its
 * own run (a division deep), so they are stepped side by side: each x is
 * the same arithmetic as a run alone would do. A run whose tau and t_ref
 * are those of run 0 (bit for bit) takes run 0's exponentials, the same
 * numbers.
 */
/* One step of the energy balance: x at b from x at a (xp), the liquid
 * curve at a and b (la, lb), the smoothed readings there (ya, yb) and the
 * step's duration dt. */
static inline double model_step(const struct dctx *c, double xp, double la,
                                double lb, double ya, double yb, double dt,
                                double tau)
{
  /* x is clamped to [0, 1] for the heat capacity; it never exceeds
   * MODEL_X_STOP < 1 here (the run stops first), so only 0 binds. */
  double xc = xp < 0.0 ? 0.0 : xp;
  double da = ya - la, db = yb - lb;
  double cap = (1.0 - xc) * c->cpl + xc * c->cps;

  return xp + (cap * (db - da) + c->cpl * 0.5 * (da + db) * dt / tau
               + (cap - c->cpl) * (lb - la)) / c->lat;
}

static void model_integrate(const struct dctx *c, size_t s0, size_t n,
                            struct model_ys *ys, struct model_run *r, int nr)
{
  int active = 0;
  size_t j = 1;

  for (int k = 0; k < nr; k++) {
    r[k].share = k > 0 && memcmp(&r[k].tau, &r[0].tau, sizeof r[k].tau) == 0
                 && memcmp(&r[k].tref, &r[0].tref, sizeof r[k].tref) == 0;
    r[k].x[0] = 0.0;
    r[k].nx = n;
    /* The liquid curve at t[b] is the next step's value at t[a]. */
    r[k].lnext = n > 1 ? r[k].bath + r[k].amp * exp(-(c->t[s0] - r[k].tref)
                                                    / r[k].tau)
                       : 0.0;
    active += r[k].on;
  }
  /* The usual case, three runs of which the second shares the first's
   * exponentials, while all three go on: the state in registers. */
  if (nr == 3 && r[1].share && !r[2].share) {
    double x0 = 0.0, x1 = 0.0, x2 = 0.0, l0 = r[0].lnext, l1 = r[1].lnext,
           l2 = r[2].lnext, ya = n > 1 ? model_ys_at(c, ys, 0) : 0.0;
    for (; j < n; j++) {
      size_t a = s0 + j - 1, b = a + 1;
      double yb = model_ys_at(c, ys, j), dt = c->t[b] - c->t[a];
      double e0 = exp(-(c->t[b] - r[0].tref) / r[0].tau),
             e2 = exp(-(c->t[b] - r[2].tref) / r[2].tau);
      double m0 = r[0].bath + r[0].amp * e0, m1 = r[1].bath + r[1].amp * e0,
             m2 = r[2].bath + r[2].amp * e2;
      x0 = model_step(c, x0, l0, m0, ya, yb, dt, r[0].tau);
      x1 = model_step(c, x1, l1, m1, ya, yb, dt, r[1].tau);
      x2 = model_step(c, x2, l2, m2, ya, yb, dt, r[2].tau);
      r[0].x[j] = x0;
      r[1].x[j] = x1;
      r[2].x[j] = x2;
      l0 = m0;
      l1 = m1;
      l2 = m2;
      ya = yb;
      if (x0 > MODEL_X_STOP || x1 > MODEL_X_STOP || x2 > MODEL_X_STOP)
        break;                 /* the general loop below takes x[j] */
    }
    r[0].lnext = l0;
    r[1].lnext = l1;
    r[2].lnext = l2;
    if (j < n) {               /* stopped at j: mark the runs that end */
      for (int k = 0; k < nr; k++)
        if (r[k].x[j] > MODEL_X_STOP) {
          r[k].nx = j + 1;     /* x[j] is the last one computed */
          r[k].on = 0;
          active--;
        }
      j++;
    }
  }
  for (; j < n && active > 0; j++) {
    size_t a = s0 + j - 1, b = a + 1;
    double ya = model_ys_at(c, ys, j - 1), yb = model_ys_at(c, ys, j), e0 = 0.0;
    int need0 = r[0].on;
    for (int k = 1; k < nr; k++)
      need0 |= r[k].on && r[k].share;
    if (need0)
      e0 = exp(-(c->t[b] - r[0].tref) / r[0].tau);
    for (int k = 0; k < nr; k++) {
      struct model_run *q = &r[k];
      double *x = q->x, tau = q->tau;
      if (!q->on)
        continue;
      double la = q->lnext,
             lb = q->bath + q->amp * (k == 0 || q->share ? e0
                                      : exp(-(c->t[b] - q->tref) / tau));
      q->lnext = lb;
      x[j] = model_step(c, x[j - 1], la, lb, ya, yb, c->t[b] - c->t[a], tau);
      if (x[j] > MODEL_X_STOP) {
        q->nx = j + 1;         /* x[j] is the last one computed */
        q->on = 0;
        active--;
      }
    }
  }
}

/* The fit of one run's x (nx of them from s0) over the branch [i0, i1):
 * value, its fit u, delta, u(delta), and x at the peak. Returns 0, or -1
 * with why in es. */
static int model_finish(const struct dctx *c, const struct ff_event *e,
                        size_t s0, size_t i0, size_t i1, const double *x,
                        size_t nx, double out[5], struct ff_estimate *es)
{
  double c0, c1, c00, c11, *fx, *fy;
  size_t m = 0, pk;
  int ret = -1;

  pk = dd_index_at(c, e->peak_time_s);
  out[4] = (pk >= s0 && pk < s0 + nx) ? x[pk - s0] : NAN;
  for (size_t i = i0; i < i1 && i < s0 + nx; i++)
    if (x[i - s0] > 0.0 && x[i - s0] <= MODEL_X_MAX)
      m++;
  if (m < 2 * MIN_FIT_POINTS) {
    est_fail(es, "too few settled points on the freezing branch");
    return -1;
  }
  fx = malloc(2 * m * sizeof *fx);
  if (fx == NULL) {
    est_fail(es, "out of memory");
    return -1;
  }
  fy = fx + m;
  {
    size_t k = 0;
    for (size_t i = i0; i < i1 && i < s0 + nx; i++) {
      double xi = x[i - s0];
      if (!(xi > 0.0 && xi <= MODEL_X_MAX))
        continue;
      fx[k] = 1.0 / (1.0 - xi) - 1.0;  /* 0 at x = 0 */
      fy[k] = c->y[i];
      k++;
    }
  }
  /* Straight line in 1/(1 - x) - 1 by least squares, covariance scaled by
   * the residual variance; long branches as block means. */
  if ((m <= MODEL_FIT_MAX
       ? model_fit_all(fx, fy, m, &c0, &c1, &c00, &c11)
       : dd_model_fit_blocks(fx, fy, m, &c0, &c1, &c00, &c11)) == GSL_SUCCESS
      && isfinite(c0) && isfinite(c1)) {
    out[0] = c0;
    out[1] = sqrt(c00);
    out[2] = -c1;
    out[3] = sqrt(c11);
    ret = 0;
  } else {
    est_fail(es, "the branch fit failed");
  }
  free(fx);
  return ret;
}

/*
 * Frozen fraction x from the energy balance of the tube, integrated from a
 * liquid point s0 before nucleation (x = 0 there):
 *   C(x) dT/dt = -h (T - Tb) + L m dx/dt,  C(x) = m [(1 - x) cp_l + x cp_s],
 *   h = m cp_l / tau  (Newton fit of the liquid branch: Tb, tau).
 * Written with D = T - T_L, the departure from the extrapolated liquid curve
 * T_L (which obeys dT_L = -(T_L - Tb) dt / tau):
 *   L dx = C(x)/m dD + cp_l D dt / tau + (C(x)/m - cp_l) dT_L.
 * D is zero before nucleation, so the start s0 does not matter, and a
 * thermometer with first-order lag sees T and T_L lagged alike: x(t) and T(t)
 * read from it stay paired (to first order in the lag), with no offset.
 * The quasi-equilibrium branch then follows the freezing point of the
 * concentrated solution, T = Tf0 - delta / (1 - x): linear in 1/(1 - x).
 * Its value at x = 0 is the initial solution's. The uncertainty adds, by
 * finite differences (GUM sensitivity coefficients), what the bath
 * temperature and time constant of the Newton fit carry into the result.
 */
void dd_model(const struct dctx *c, struct ff_event *e, size_t s0, size_t i0,
              size_t i1)
{
  struct ff_estimate *es = &e->est[FF_METHOD_MODEL];
  const struct ff_liquid_fit *l = &e->liquid;
  double r0[5], r1[5], u2;
  struct model_ys ys;
  struct ff_liquid_fit lp[3];
  struct model_run run[3];
  int nr = 1, of[3] = { 0, -1, -1 };   /* run of the fit, the bath, tau */

  if (l->kind != 1) {
    est_fail(es, "the liquid branch does not give a bath temperature and "
             "time constant");
    return;
  }
  if (!(i1 > i0 && i0 > s0)) {
    est_fail(es, "freezing branch too short");
    return;
  }
  ys.s0 = s0;
  ys.n = i1 - s0;
  ys.got = 0;
  ys.v = malloc(4 * ys.n * sizeof *ys.v);   /* ys, then x of up to 3 runs */
  if (ys.v == NULL) {
    est_fail(es, "out of memory");
    return;
  }
  /* The fit itself, and the fits with the bath temperature and the time
   * constant each moved by its u (the sensitivities), when known. */
  lp[0] = *l;
  for (int q = 0; q < 2; q++) {
    double du = q == 0 ? l->u_bath_c : l->u_tau_s;
    if (!isfinite(du) || !(du > 0.0))
      continue;
    lp[nr] = *l;
    if (q == 0)
      lp[nr].bath_c += du;
    else
      lp[nr].tau_s += du;
    of[q + 1] = nr++;
  }
  for (int k = 0; k < nr; k++)
    model_run_init(&run[k], &lp[k], ys.v + (size_t)(k + 1) * ys.n);
  model_integrate(c, s0, ys.n, &ys, run, nr);
  if (model_finish(c, e, s0, i0, i1, run[0].x, run[0].nx, r0, es) != 0) {
    free(ys.v);
    return;
  }
  e->model_delta_k = r0[2];
  e->model_u_delta_k = r0[3];
  e->model_tf0_c = r0[0] + r0[2];
  if (isfinite(r0[4]))
    e->frozen_fraction = r0[4];
  u2 = r0[1] * r0[1];
  for (int q = 1; q < 3; q++) {
    struct ff_estimate dummy;
    int k = of[q];
    if (k < 0)
      continue;
    if (model_finish(c, e, s0, i0, i1, run[k].x, run[k].nx, r1, &dummy) == 0)
      u2 += (r1[0] - r0[0]) * (r1[0] - r0[0]);
  }
  free(ys.v);
  est_set(es, r0[0], sqrt(u2));
}
