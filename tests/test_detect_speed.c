/* test_detect_speed.c - the shortcuts that make detection fast on long
 * channels give the answers of the plain computations: exact order
 * statistics without a copy, the Newton fit on long liquid branches (large
 * time offsets, warm holds, decimation) against built exponentials with
 * known parameters. Correctness only: no test here times anything. */
#include <criterion/criterion.h>
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_fit.h>
#include <gsl/gsl_multifit_nlinear.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>
#include <gsl/gsl_statistics_double.h>

#include "frostfit/detect.h"
#include "frostfit/simulate.h"
#include "../src/detect_impl.h"

static void setup(void)
{
  gsl_set_error_handler_off();
}

/* The reference: a copy of the values, sorted by selection. */
static double ref_rank(const double *t, const double *y, int which,
                       size_t i0, size_t i1, size_t r)
{
  size_t m = i1 - i0;
  double *v = malloc(m * sizeof *v), x;

  cr_assert(v != NULL);
  for (size_t i = i0; i < i1; i++)
    v[i - i0] = dd_sel_value(t, y, which, i);
  x = gsl_stats_select(v, 1, m, r);
  free(v);
  return x;
}

static int same_bits(double a, double b)
{
  return memcmp(&a, &b, sizeof a) == 0;
}

/* Checks the median ranks and a few others of one channel. */
static void check_channel(const double *t, const double *y, size_t n)
{
  size_t *cnt = malloc(DD_SEL_RADIX * sizeof *cnt);

  cr_assert(cnt != NULL);
  for (int which = 0; which < 2; which++) {
    size_t i0 = 1, i1 = which == 0 ? n - 1 : n, m = i1 - i0;
    size_t ranks[][2] = { { (m - 1) / 2, m / 2 }, { 0, 0 }, { m - 1, m - 1 },
                          { m / 10, m / 10 + 1 }, { m / 3, m / 3 } };
    for (size_t k = 0; k < sizeof ranks / sizeof ranks[0]; k++) {
      double v[2], r0, r1;
      cr_assert_eq(dd_select_pair(t, y, which, i0, i1, ranks[k][0],
                                  ranks[k][1], cnt, v), 0);
      r0 = ref_rank(t, y, which, i0, i1, ranks[k][0]);
      r1 = ref_rank(t, y, which, i0, i1, ranks[k][1]);
      cr_assert(same_bits(v[0], r0) && same_bits(v[1], r1),
                "which %d ranks %zu,%zu of %zu: %.17g %.17g, sorted %.17g "
                "%.17g", which, ranks[k][0], ranks[k][1], m, v[0], v[1],
                r0, r1);
    }
  }
  /* Both medians in one pass, with and without the count of changes off
   * a whole number of the smallest step, against the sorted copies and a
   * plain count. */
  for (int with = 0; with < 2; with++) {
    size_t r[2][2] = { { (n - 3) / 2, (n - 2) / 2 },
                       { (n - 2) / 2, (n - 1) / 2 } }, off = 12345, bad = 0;
    double v[2][2], step = INFINITY, inv = 0.0;
    for (size_t i = 1; i < n; i++) {
      double s = fabs(y[i] - y[i - 1]);
      if (s > 0.0 && s < step)
        step = s;
    }
    if (with && isfinite(step)) {
      inv = 1.0 / step;
      for (size_t i = 1; i < n; i++) {
        double q = fabs(y[i] - y[i - 1]) * inv;
        bad += fabs(q - round(q)) > 0.01;
      }
    }
    cr_assert_eq(dd_select_medians(t, y, n, (const size_t (*)[2])r, inv,
                                   &off, cnt, v), 0);
    for (int which = 0; which < 2; which++) {
      size_t i1 = which == 0 ? n - 1 : n;
      for (int k = 0; k < 2; k++) {
        double ref = ref_rank(t, y, which, 1, i1, r[which][k]);
        cr_assert(same_bits(v[which][k], ref), "medians: which %d rank %zu "
                  "of %zu: %.17g, sorted %.17g", which, r[which][k], i1 - 1,
                  v[which][k], ref);
      }
    }
    if (inv > 0.0)
      cr_assert_eq(off, bad, "changes off the step: %zu, counted %zu", off,
                   bad);
    else
      cr_assert_eq(off, 0);
  }
  free(cnt);
}

/* Noisy, quantised readings with logger-rounded times: many ties. */
Test(detect_speed, select_matches_sort_on_quantised_channels,
     .init = setup)
{
  gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
  size_t sizes[] = { 20, 1001, 70000, 300001 };

  cr_assert(r != NULL);
  for (size_t s = 0; s < sizeof sizes / sizeof sizes[0]; s++) {
    size_t n = sizes[s];
    double *t = malloc(n * sizeof *t), *y = malloc(n * sizeof *y);
    cr_assert(t && y);
    for (size_t i = 0; i < n; i++) {
      /* times printed to 0.1 s, like a 10 Hz export */
      t[i] = round((double)i * 1.0 + 12345.0) / 10.0;
      y[i] = round((5.0 * exp(-(double)i / 3e4)
                    + gsl_ran_gaussian(r, 0.003)) * 1e4) / 1e4;
    }
    check_channel(t, y, n);
    free(t);
    free(y);
  }
  gsl_rng_free(r);
}

/* Values with no ties, zeros, an overflow to +inf, a spike every fourth
 * reading and jittered times; the extreme ranks lie outside the sample's
 * bracket, where the radix selection must give the value. */
Test(detect_speed, select_exact_when_the_sample_misleads, .init = setup)
{
  size_t n = 300000;
  double *t = malloc(n * sizeof *t), *y = malloc(n * sizeof *y);
  gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);

  cr_assert(t && y && r);
  for (int pattern = 0; pattern < 3; pattern++) {
    for (size_t i = 0; i < n; i++) {
      t[i] = (double)i + (pattern == 2 ? gsl_rng_uniform(r) * 0.5 : 0.0);
      if (pattern == 0)
        y[i] = gsl_ran_gaussian(r, 1.0);
      else
        /* constant except every 4th reading: second differences of
         * 0, a spike and twice a spike */
        y[i] = i % 4 == 0 ? 1.0 + 1e-3 * gsl_rng_uniform(r) : 0.0;
    }
    if (pattern == 0) {
      y[n / 2] = 1e308;        /* second differences overflow to +inf */
      y[n / 2 + 1] = -1e308;
    }
    check_channel(t, y, n);
  }
  free(t);
  free(y);
  gsl_rng_free(r);
}

/* ---- the Newton liquid fit on long branches ------------------------ */

#define NW_BATH (-8.0)
#define NW_A 13.0
#define NW_TAU 1500.0
#define NW_SIGMA 0.003

/* A built Newton cooling T = bath + A exp(-(t - t0) / tau) at 10 Hz from a
 * large clock offset, with normal noise, quantised to 0.1 mK like a
 * logger's export. */
static void newton_curve(double *t, double *y, size_t n, double t0,
                         unsigned long seed)
{
  gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);

  cr_assert(r != NULL);
  gsl_rng_set(r, seed);
  for (size_t i = 0; i < n; i++) {
    t[i] = t0 + (double)i * 0.1;
    y[i] = round((NW_BATH + NW_A * exp(-(t[i] - t0) / NW_TAU)
                  + gsl_ran_gaussian(r, NW_SIGMA)) * 1e4) / 1e4;
  }
  gsl_rng_free(r);
}

struct ref_data {
  const double *t, *y;
  size_t n;
};

static int ref_f(const gsl_vector *x, void *p, gsl_vector *f)
{
  const struct ref_data *d = p;

  for (size_t i = 0; i < d->n; i++)
    gsl_vector_set(f, i, gsl_vector_get(x, 0) + gsl_vector_get(x, 1)
                   * exp(-gsl_vector_get(x, 2) * (d->t[i] - d->t[0]))
                   - d->y[i]);
  return GSL_SUCCESS;
}

static int ref_df(const gsl_vector *x, void *p, gsl_matrix *J)
{
  const struct ref_data *d = p;

  for (size_t i = 0; i < d->n; i++) {
    double s = d->t[i] - d->t[0], e = exp(-gsl_vector_get(x, 2) * s);
    gsl_matrix_set(J, i, 0, 1.0);
    gsl_matrix_set(J, i, 1, e);
    gsl_matrix_set(J, i, 2, -gsl_vector_get(x, 1) * s * e);
  }
  return GSL_SUCCESS;
}

/* The plain fit of every reading, started from the truth: the reference
 * for the block-mean fit. bath and tau out. */
static void reference_fit(const double *t, const double *y, size_t n,
                          double *bath, double *tau)
{
  struct ref_data d = { t, y, n };
  gsl_multifit_nlinear_parameters fp = gsl_multifit_nlinear_default_parameters();
  gsl_multifit_nlinear_workspace *w =
    gsl_multifit_nlinear_alloc(gsl_multifit_nlinear_trust, &fp, n, 3);
  gsl_multifit_nlinear_fdf fdf = { ref_f, ref_df, NULL, n, 3, &d, 0, 0, 0 };
  double x0[3] = { NW_BATH, NW_A, 1.0 / NW_TAU };
  gsl_vector_view xv = gsl_vector_view_array(x0, 3);
  int info;

  cr_assert(w != NULL);
  cr_assert_eq(gsl_multifit_nlinear_init(&xv.vector, &fdf, w), GSL_SUCCESS);
  cr_assert_eq(gsl_multifit_nlinear_driver(200, 1e-12, 1e-12, 1e-12, NULL,
                                           NULL, &info, w), GSL_SUCCESS);
  *bath = gsl_vector_get(gsl_multifit_nlinear_position(w), 0);
  *tau = 1.0 / gsl_vector_get(gsl_multifit_nlinear_position(w), 2);
  gsl_multifit_nlinear_free(w);
}

/* 60,000 readings (100 min at 10 Hz) from a clock at 1e6 s: the block-mean
 * fit converges, finds the built bath and time constant within 4 of its
 * standard uncertainties, and agrees with the fit of every reading to a
 * twentieth of them. */
Test(detect_speed, newton_long_branch_matches_full_fit, .init = setup)
{
  size_t n = 60000;
  double *t = malloc(n * sizeof *t), *y = malloc(n * sizeof *y), rb, rt;
  struct ff_detect_params p = FF_DETECT_PARAMS_DEFAULT;
  struct dctx c;
  struct ff_liquid_fit f;

  cr_assert(t && y);
  newton_curve(t, y, n, 1e6, 11);
  memset(&c, 0, sizeof c);
  memset(&f, 0, sizeof f);
  c.t = t;
  c.y = y;
  c.n = n;
  c.p = &p;
  cr_assert_eq(dd_newton(&c, 0, n, &f), 0, "the fit failed");
  cr_assert_eq(f.kind, 1);
  cr_assert(isfinite(f.u_bath_c) && f.u_bath_c > 0.0 && f.u_bath_c < 0.01);
  cr_assert(isfinite(f.u_tau_s) && f.u_tau_s > 0.0 && f.u_tau_s < 5.0);
  cr_assert(fabs(f.bath_c - NW_BATH) < 4.0 * f.u_bath_c,
            "bath %.6f u %.2g", f.bath_c, f.u_bath_c);
  cr_assert(fabs(f.tau_s - NW_TAU) < 4.0 * f.u_tau_s, "tau %.4f u %.2g",
            f.tau_s, f.u_tau_s);
  /* residual rms of the readings: the noise (and the quantisation) */
  cr_assert(fabs(f.rms_k - NW_SIGMA) < 0.1 * NW_SIGMA, "rms %.5f", f.rms_k);
  reference_fit(t, y, n, &rb, &rt);
  cr_assert(fabs(f.bath_c - rb) < 0.05 * f.u_bath_c,
            "bath %.8f, every reading %.8f (u %.2g)", f.bath_c, rb,
            f.u_bath_c);
  cr_assert(fabs(f.tau_s - rt) < 0.05 * f.u_tau_s,
            "tau %.6f, every reading %.6f (u %.2g)", f.tau_s, rt, f.u_tau_s);
  free(t);
  free(y);
}

/* A sample held warm for two hours before it is cooled, on a clock at
 * 2e6 s: the liquid fit must start where the cooling does. From the
 * warmest point of the hold it took a flat stretch for part of an
 * exponential and failed at its iteration cap (liquid_short). */
Test(detect_speed, newton_after_a_long_warm_hold, .init = setup)
{
  const double t0 = 2e6, hold = 7200.0, tau = 500.0, bath = -8.0,
               warm = 5.0, fp = -0.186, nucl = -1.5;
  double tn = hold + tau * log((warm - bath) / (nucl - bath));
  size_t n = (size_t)((tn + 1500.0) * 10.0);
  double *t = malloc(n * sizeof *t), *y = malloc(n * sizeof *y);
  gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
  struct ff_event_list l = FF_EVENT_LIST_INIT;
  struct ff_diag d = FF_DIAG_INIT;
  const struct ff_event *e;

  cr_assert(t && y && r);
  gsl_rng_set(r, 5);
  for (size_t i = 0; i < n; i++) {
    double s = (double)i * 0.1, v;
    t[i] = t0 + s;
    if (s < hold)
      v = warm;
    else if (s < tn)
      v = bath + (warm - bath) * exp(-(s - hold) / tau);
    else   /* recalescence with a 2 s probe lag, then a slow branch */
      v = fp - 2e-5 * (s - tn) + (nucl - fp) * exp(-(s - tn) / 2.0);
    y[i] = round((v + gsl_ran_gaussian(r, NW_SIGMA)) * 1e4) / 1e4;
  }
  cr_assert_eq(ff_detect_run(t, y, n, NULL, &l, &d), FF_OK, "%s", d.msg);
  cr_assert_eq(l.n, 1, "%zu events", l.n);
  e = &l.v[0];
  cr_assert_eq(e->liquid.kind, 1, "flags %#x", e->flags);
  cr_assert(!(e->flags & FF_FLAG_LIQUID_SHORT));
  cr_assert(fabs(e->liquid.tau_s - tau) < 0.01 * tau, "tau %.3f",
            e->liquid.tau_s);
  cr_assert(fabs(e->liquid.bath_c - bath) < 0.05, "bath %.4f",
            e->liquid.bath_c);
  ff_event_list_release(&l);
  gsl_rng_free(r);
  free(t);
  free(y);
}

/* ---- the plateau search ------------------------------------------- */

/* The plateau search as plain fits: the longest window from i0, in steps
 * of n/40, whose drift is within the noise; its median, or NaN. */
static double plain_plateau(const struct dctx *c, size_t i0, size_t i1)
{
  size_t n = i1 - i0, step = n / 40 > 1 ? n / 40 : 1, best = 0;
  double *x = malloc(n * sizeof *x), v;

  cr_assert(x != NULL);
  for (size_t m = n; m >= 10; m = m > step ? m - step : 0) {
    double c0, c1, c00, c01, c11, ss, span = c->t[i0 + m - 1] - c->t[i0];
    for (size_t i = 0; i < m; i++)
      x[i] = c->t[i0 + i] - c->t[i0];
    if (gsl_fit_linear(x, 1, c->y + i0, 1, m, &c0, &c1, &c00, &c01, &c11,
                       &ss) != GSL_SUCCESS)
      continue;
    if (fabs(c1) * span <= fmax(3.0 * sqrt(c11) * span,
                                fmax(0.5 * c->res, 0.5 * c->sigma))) {
      best = m;
      break;
    }
  }
  if (best == 0 || c->t[i0 + best - 1] - c->t[i0] < 0.5 * c->p->min_branch_s) {
    free(x);
    return NAN;
  }
  memcpy(x, c->y + i0, best * sizeof *x);
  v = gsl_stats_median(x, 1, best);
  free(x);
  return v;
}

/* Branches from flat to clearly sloping, the drift near the limit among
 * them, some quantised: the plateau found with the running-sum shortcut
 * is the one the plain fits find, value for value. */
Test(detect_speed, plateau_shortcut_finds_the_plain_plateau, .init = setup)
{
  gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
  struct ff_detect_params p = FF_DETECT_PARAMS_DEFAULT;
  size_t nmax = 4000, found = 0, refused = 0;
  double *t = malloc(nmax * sizeof *t), *y = malloc(nmax * sizeof *y);

  cr_assert(r && t && y);
  for (int k = 0; k < 300; k++) {
    size_t n = 100 + gsl_rng_uniform_int(r, nmax - 100);
    double dt = k % 3 == 0 ? 0.1 : 1.0, sigma = 0.0005 + 0.005
                * gsl_rng_uniform(r), res = k % 2 ? 1e-4 : 0.0;
    /* slopes from none to a few times what the noise hides, with a bend */
    double slope = -sigma / (dt * (double)n) * 20.0 * gsl_rng_uniform(r)
                   * gsl_rng_uniform(r);
    struct dctx c;
    struct ff_event e;
    double want;
    for (size_t i = 0; i < n; i++) {
      double s = (double)i * dt;
      t[i] = 5e5 + s;
      y[i] = -0.2 + slope * s - 0.5 * slope / ((double)n * dt) * s * s
             + gsl_ran_gaussian(r, sigma);
      if (res > 0.0)
        y[i] = round(y[i] / res) * res;
    }
    memset(&c, 0, sizeof c);
    memset(&e, 0, sizeof e);
    c.t = t;
    c.y = y;
    c.n = n;
    c.p = &p;
    c.sigma = sigma;
    c.res = res;
    dd_plateau(&c, &e, 0, n);
    want = plain_plateau(&c, 0, n);
    if (isnan(want)) {
      cr_assert(!e.est[FF_METHOD_PLATEAU].ok, "case %d: a plateau of %.6f "
                "where the plain search finds none", k,
                e.est[FF_METHOD_PLATEAU].value_c);
      refused++;
    } else {
      cr_assert(e.est[FF_METHOD_PLATEAU].ok, "case %d: no plateau, the "
                "plain search finds %.6f", k, want);
      cr_assert(same_bits(e.est[FF_METHOD_PLATEAU].value_c, want),
                "case %d: %.17g, plain %.17g", k,
                e.est[FF_METHOD_PLATEAU].value_c, want);
      found++;
    }
  }
  /* both outcomes were exercised */
  cr_assert(found > 30 && refused > 30, "found %zu refused %zu", found,
            refused);
  gsl_rng_free(r);
  free(t);
  free(y);
}

/* ---- the model's straight line on long branches -------------------- */

/* 30,000 points of T = -0.2 - 0.19 (1/(1 - x) - 1) with x rising to a half
 * and 3 mK noise: the block-mean fit gives the fit of every point
 * (gsl_fit_linear) to a five-hundredth of its standard uncertainty (the
 * spread of 1/(1 - x) within a block of 8 points, largest where x starts)
 * and the same uncertainties to a thousandth. */
Test(detect_speed, model_block_fit_matches_every_point, .init = setup)
{
  size_t m = 30000;
  double *fx = malloc(m * sizeof *fx), *fy = malloc(m * sizeof *fy);
  double *gx = malloc(m * sizeof *gx), *gy = malloc(m * sizeof *gy);
  double a0, a1, a00, a01, a11, ss, b0, b1, b00, b11;
  gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);

  cr_assert(fx && fy && gx && gy && r);
  for (size_t i = 0; i < m; i++) {
    double x = 0.5 * sqrt((double)(i + 1) / (double)m);
    fx[i] = gx[i] = 1.0 / (1.0 - x) - 1.0;
    fy[i] = gy[i] = -0.2 - 0.19 * fx[i] + gsl_ran_gaussian(r, 0.003);
  }
  cr_assert_eq(gsl_fit_linear(gx, 1, gy, 1, m, &a0, &a1, &a00, &a01, &a11,
                              &ss), GSL_SUCCESS);
  cr_assert_eq(dd_model_fit_blocks(fx, fy, m, &b0, &b1, &b00, &b11),
               GSL_SUCCESS);
  cr_assert(fabs(b0 - a0) < 2e-3 * sqrt(a00), "c0 %.12f, every point %.12f "
            "(u %.3g)", b0, a0, sqrt(a00));
  cr_assert(fabs(b1 - a1) < 2e-3 * sqrt(a11), "c1 %.12f, every point %.12f "
            "(u %.3g)", b1, a1, sqrt(a11));
  cr_assert(fabs(sqrt(b00) / sqrt(a00) - 1.0) < 1e-3, "u(c0) %.4g vs %.4g",
            sqrt(b00), sqrt(a00));
  cr_assert(fabs(sqrt(b11) / sqrt(a11) - 1.0) < 1e-3, "u(c1) %.4g vs %.4g",
            sqrt(b11), sqrt(a11));
  gsl_rng_free(r);
  free(fx);
  free(fy);
  free(gx);
  free(gy);
}

/* ---- the energy-balance model's side-by-side integrations ---------- */

/* A channel's smoothed readings cache, as detect.c sets it up. */
static void ys_setup(struct dctx *c)
{
  size_t nb = (c->n + YS_BLOCK - 1) / YS_BLOCK;
  double h = 2.0 / c->dt;

  c->h = h < 1.0 ? 1 : h > 10.0 ? 10 : (size_t)(h + 0.5);
  c->ysc = calloc(1, sizeof *c->ysc);
  cr_assert(c->ysc != NULL);
  c->ysc->ways = nb < YS_WAYS ? (unsigned)nb : YS_WAYS;
  c->ysc->v = malloc((size_t)c->ysc->ways * YS_BLOCK * sizeof *c->ysc->v);
  c->ysc->top_v = malloc(nb * sizeof *c->ysc->top_v);
  c->ysc->top_i = malloc(nb * sizeof *c->ysc->top_i);
  c->ysc->bot_v = malloc(nb * sizeof *c->ysc->bot_v);
  c->ysc->bot_i = malloc(nb * sizeof *c->ysc->bot_i);
  cr_assert(c->ysc->v && c->ysc->top_v && c->ysc->top_i && c->ysc->bot_v
            && c->ysc->bot_i);
  for (size_t b = 0; b < nb; b++)
    c->ysc->top_i[b] = SIZE_MAX;
}

static void ys_free(struct dctx *c)
{
  free(c->ysc->v);
  free(c->ysc->top_v);
  free(c->ysc->top_i);
  free(c->ysc->bot_v);
  free(c->ysc->bot_i);
  free(c->ysc);
}

/* The model of one event with the liquid fit l: value, u, delta. */
static void model_with(const struct dctx *c, const struct ff_event *ev,
                       const struct ff_liquid_fit *l, size_t s0, size_t i0,
                       size_t i1, double out[3])
{
  struct ff_event e = *ev;

  e.liquid = *l;
  e.est[FF_METHOD_MODEL].ok = 0;
  dd_model(c, &e, s0, i0, i1);
  cr_assert(e.est[FF_METHOD_MODEL].ok, "model: %s",
            e.est[FF_METHOD_MODEL].why);
  out[0] = e.est[FF_METHOD_MODEL].value_c;
  out[1] = e.est[FF_METHOD_MODEL].u_k;
  out[2] = e.model_delta_k;
}

/* The model integrates the fit and, for its uncertainty, the fits with
 * the bath and the time constant each moved by its u, side by side: the
 * fit's value and delta must be those of the fit integrated alone (bit for
 * bit), and the uncertainty the root sum of squares of the moved fits'
 * changes, each integrated alone. A simulated 0.2 mol/kg NaCl-like
 * solution at 10 Hz, one cycle. */
Test(detect_speed, model_side_by_side_runs_match_each_alone, .init = setup)
{
  struct ff_sim_params sp;
  struct ff_sim_result sr = FF_SIM_RESULT_INIT;
  struct ff_diag d = FF_DIAG_INIT;
  struct ff_event_list l = FF_EVENT_LIST_INIT;
  struct ff_detect_params p = FF_DETECT_PARAMS_DEFAULT;
  struct ff_liquid_fit lq, lb, lt;
  struct dctx c;
  const struct ff_event *e;
  double all[3], alone[3], vb[3], vt[3], u2;
  size_t s0, i0, i1;

  ff_sim_params_default(&sp);
  sp.molality_mol_kg = 0.2;
  sp.vant_hoff_i = 1.9;
  sp.dt_s = 0.1;
  sp.cycles = 1;
  sp.seed = 8;
  cr_assert_eq(ff_simulate_run(&sp, &sr, &d), FF_OK, "%s", d.msg);
  cr_assert_eq(ff_detect_run(sr.t_s, sr.temp_c, sr.n, &p, &l, &d), FF_OK,
               "%s", d.msg);
  cr_assert(l.n >= 1);
  e = &l.v[0];
  cr_assert(e->est[FF_METHOD_MODEL].ok, "%s", e->est[FF_METHOD_MODEL].why);
  cr_assert(isfinite(e->liquid.u_bath_c) && e->liquid.u_bath_c > 0.0);
  cr_assert(isfinite(e->liquid.u_tau_s) && e->liquid.u_tau_s > 0.0);

  memset(&c, 0, sizeof c);
  c.t = sr.t_s;
  c.y = sr.temp_c;
  c.n = sr.n;
  c.p = &p;
  c.dt = sp.dt_s;
  c.sigma = e->noise_k;
  c.res = e->resolution_k;
  c.cpl = 4.2194;              /* water, as detect.c takes it */
  c.cps = 2.0967;
  c.lat = 6006.77 / 18.015268;
  ys_setup(&c);
  s0 = dd_index_at(&c, e->nucleation_time_s - 10.0);
  i0 = dd_index_at(&c, e->branch_start_s);
  i1 = dd_index_at(&c, e->branch_end_s) + 1;

  model_with(&c, e, &e->liquid, s0, i0, i1, all);
  lq = e->liquid;
  lq.u_bath_c = lq.u_tau_s = NAN;      /* the fit alone */
  model_with(&c, e, &lq, s0, i0, i1, alone);
  lb = lq;
  lb.bath_c += e->liquid.u_bath_c;
  model_with(&c, e, &lb, s0, i0, i1, vb);
  lt = lq;
  lt.tau_s += e->liquid.u_tau_s;
  model_with(&c, e, &lt, s0, i0, i1, vt);

  cr_assert(same_bits(all[0], alone[0]), "value %.17g, alone %.17g",
            all[0], alone[0]);
  cr_assert(same_bits(all[2], alone[2]), "delta %.17g, alone %.17g",
            all[2], alone[2]);
  cr_assert(!same_bits(vb[0], alone[0]) && !same_bits(vt[0], alone[0]),
            "the moved fits must move the value");
  u2 = alone[1] * alone[1] + (vb[0] - alone[0]) * (vb[0] - alone[0])
       + (vt[0] - alone[0]) * (vt[0] - alone[0]);
  cr_assert(fabs(all[1] - sqrt(u2)) <= 1e-12 * sqrt(u2),
            "u %.17g, from the runs alone %.17g", all[1], sqrt(u2));
  ys_free(&c);
  ff_event_list_release(&l);
  ff_sim_result_release(&sr);
}

/* ---- the straight line shared by extrapolation and intersection ---- */

/* The extrapolation hands its straight-line fit to the intersection of the
 * same branch: both readings as when each fits the line itself, bit for
 * bit, on branches that slope, bend and are too short to fit. */
Test(detect_speed, shared_branch_line_gives_the_same_readings, .init = setup)
{
  size_t n = 3000;
  double *t = malloc(n * sizeof *t), *y = malloc(n * sizeof *y);
  gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
  struct ff_detect_params p = FF_DETECT_PARAMS_DEFAULT;
  struct dctx c;

  cr_assert(t && y && r);
  for (int k = 0; k < 3; k++) {
    size_t nl = 600, i0 = nl + 100, i1 = k == 2 ? i0 + 6 : n;
    struct ff_event e1, e2;
    struct dd_fit1 f1;
    for (size_t i = 0; i < n; i++) {
      double s = (double)i * 0.1;
      t[i] = 4e5 + s;
      y[i] = i < nl ? 2.0 - 0.04 * s
             : -0.3 - 1e-4 * (s - 60.0) - (k == 1 ? 2e-6 * (s - 60.0)
                                               * (s - 60.0) : 0.0);
      y[i] += gsl_ran_gaussian(r, 0.002);
    }
    memset(&c, 0, sizeof c);
    c.t = t;
    c.y = y;
    c.n = n;
    c.p = &p;
    c.sigma = 0.002;
    memset(&e1, 0, sizeof e1);
    e1.nucleation_time_s = t[nl];
    e1.liquid_line.kind = 2;
    e1.liquid_line.t_ref_s = t[nl - 1];
    e1.liquid_line.t0_c = y[nl - 1];
    e1.liquid_line.slope_k_s = -0.04;
    e1.liquid_line.start_s = t[0];
    e1.liquid_line.end_s = t[nl - 1];
    e1.liquid_line.rms_k = 0.002;
    e2 = e1;
    dd_extrapolate(&c, &e1, i0, i1, NULL);
    dd_intersect(&c, &e1, i0, i1, NULL);
    dd_extrapolate(&c, &e2, i0, i1, &f1);
    dd_intersect(&c, &e2, i0, i1, &f1);
    for (int m = FF_METHOD_EXTRAPOLATE; m <= FF_METHOD_INTERSECT; m++) {
      const struct ff_estimate *a = &e1.est[m], *b = &e2.est[m];
      cr_assert_eq(a->ok, b->ok, "case %d method %d", k, m);
      cr_assert(same_bits(a->value_c, b->value_c)
                && same_bits(a->u_k, b->u_k), "case %d method %d: %.17g "
                "+- %.3g vs %.17g +- %.3g", k, m, a->value_c, a->u_k,
                b->value_c, b->u_k);
      cr_assert_str_eq(a->why, b->why);
    }
    cr_assert_eq(e1.est[FF_METHOD_INTERSECT].ok, k != 2, "case %d: %s", k,
                 e1.est[FF_METHOD_INTERSECT].why);
  }
  gsl_rng_free(r);
  free(t);
  free(y);
}

/* ---- the slope-break scan over long flat stretches ------------------ */

/* The slope-break scan settles the readings of a flat stretch without its
 * exact slopes (their drop is bounded from the window's sums); the corner
 * after a two-hour noisy warm hold, at a clock of 3e6 s and 10 Hz, must
 * still be the one built: liquid 5.0 - 0.02 s C down to -0.4 C, then the
 * branch -0.4 - 0.0005 s C (the construction of the slope_break test in
 * test_detect.c, common practice, no source), with 1 mK of noise. */
Test(detect_speed, slope_break_after_a_long_warm_hold, .init = setup)
{
  const double hold = 7200.0, tc = hold + 270.0;   /* 5.4 K at 0.02 K/s */
  size_t n = (size_t)((tc + 600.0) * 10.0);
  double *t = malloc(n * sizeof *t), *y = malloc(n * sizeof *y);
  gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
  struct ff_event_list l = FF_EVENT_LIST_INIT;
  struct ff_diag d = FF_DIAG_INIT;
  struct ff_detect_params p = FF_DETECT_PARAMS_DEFAULT;
  const struct ff_event *e;

  cr_assert(t && y && r);
  gsl_rng_set(r, 21);
  for (size_t i = 0; i < n; i++) {
    double s = (double)i * 0.1;
    t[i] = 3e6 + s;
    y[i] = s < hold ? 5.0 : s <= tc ? 5.0 - 0.02 * (s - hold)
                                    : -0.40 - 0.0005 * (s - tc);
    y[i] += gsl_ran_gaussian(r, 0.001);
  }
  cr_assert_eq(ff_detect_run(t, y, n, &p, &l, &d), FF_OK, "%s", d.msg);
  cr_assert_eq(l.n, 1, "%zu events", l.n);
  e = &l.v[0];
  cr_assert(e->flags & FF_FLAG_NO_NUCLEATION, "flags %#x", e->flags);
  cr_assert(e->est[FF_METHOD_BREAK].ok, "%s", e->est[FF_METHOD_BREAK].why);
  cr_assert(fabs(e->break_time_s - (3e6 + tc)) < 1.0, "break at %.2f s, "
            "built at %.2f s", e->break_time_s - 3e6, tc);
  cr_assert(fabs(e->est[FF_METHOD_BREAK].value_c + 0.40) < 0.002,
            "break %.5f C", e->est[FF_METHOD_BREAK].value_c);
  ff_event_list_release(&l);
  gsl_rng_free(r);
  free(t);
  free(y);
}

/* ---- recalescence and thaw scans over long holds ------------------- */

/* The recalescence scan passes over whole blocks of a warm hold, and the
 * end-of-branch scan over whole blocks of a frozen hold, from the blocks'
 * extremes: three cycles of a two-hour warm hold, Newton cooling,
 * nucleation 1.3 K below the freezing point, a two-hour freezing branch and
 * a thaw at 0.01 K/s, 10 Hz from a clock at 5e6 s with 3 mK of noise. Each
 * nucleation and each thaw must be found where it was built. */
Test(detect_speed, long_holds_keep_every_event, .init = setup)
{
  const double hold = 7200.0, tau = 500.0, bath = -8.0, warm = 5.0,
               fp = -0.186, nucl = -1.5, frozen = 7200.0, rate = 0.01;
  double tn = hold + tau * log((warm - bath) / (nucl - bath));
  double ycold = fp - 2e-5 * frozen, cyc = tn + frozen + (warm - ycold)
                                                        / rate + 60.0;
  size_t n = (size_t)(3.0 * cyc * 10.0);
  double *t = malloc(n * sizeof *t), *y = malloc(n * sizeof *y);
  gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
  struct ff_event_list l = FF_EVENT_LIST_INIT;
  struct ff_diag d = FF_DIAG_INIT;

  cr_assert(t && y && r);
  gsl_rng_set(r, 9);
  for (size_t i = 0; i < n; i++) {
    double s = fmod((double)i * 0.1, cyc), v;
    t[i] = 5e6 + (double)i * 0.1;
    if (s < hold)
      v = warm;
    else if (s < tn)
      v = bath + (warm - bath) * exp(-(s - hold) / tau);
    else if (s < tn + frozen)
      v = fp - 2e-5 * (s - tn) + (nucl - fp) * exp(-(s - tn) / 2.0);
    else
      v = fmin(warm, ycold + rate * (s - tn - frozen));
    y[i] = round((v + gsl_ran_gaussian(r, 0.003)) * 1e4) / 1e4;
  }
  cr_assert_eq(ff_detect_run(t, y, n, NULL, &l, &d), FF_OK, "%s", d.msg);
  cr_assert_eq(l.n, 3, "%zu events", l.n);
  for (size_t k = 0; k < 3; k++) {
    const struct ff_event *e = &l.v[k];
    double t0 = 5e6 + (double)k * cyc;
    cr_assert(!(e->flags & FF_FLAG_NO_NUCLEATION), "cycle %zu", k);
    cr_assert(fabs(e->nucleation_time_s - (t0 + tn)) < 2.0, "cycle %zu: "
              "nucleation at %.1f s, built at %.1f s", k,
              e->nucleation_time_s - t0, tn);
    cr_assert(fabs(e->t_min_c - nucl) < 0.02, "cycle %zu: minimum %.4f C",
              k, e->t_min_c);
    /* the branch ends where the thaw leaves its level */
    cr_assert(e->branch_end_s > t0 + tn + frozen - 120.0
              && e->branch_end_s < t0 + tn + frozen + 30.0, "cycle %zu: "
              "branch ends at %.1f s, thaw at %.1f s", k,
              e->branch_end_s - t0, tn + frozen);
  }
  ff_event_list_release(&l);
  gsl_rng_free(r);
  free(t);
  free(y);
}

/* ---- the input check, two readings at a time ----------------------- */

/* A long channel's input check names the first reading that is not a
 * finite number, or where time does not increase, wherever it lies (odd
 * or even index, first or last); on sound readings quantised to 1 mK the
 * resolution found is the smallest change, as a plain loop finds it. */
Test(detect_speed, input_check_names_the_reading, .init = setup)
{
  size_t sizes[] = { 100000, 100001 };
  gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);

  cr_assert(r != NULL);
  for (size_t z = 0; z < 2; z++) {
    size_t n = sizes[z], at[] = { 0, 1, 2, 777, 778, n - 2, n - 1 };
    double *t = malloc(n * sizeof *t), *y = malloc(n * sizeof *y);
    struct ff_event_list l = FF_EVENT_LIST_INIT;
    struct ff_diag d = FF_DIAG_INIT;
    double step = INFINITY, tn = 500.0 * log(2.0);   /* at -1.5 C */
    cr_assert(t && y);
    for (size_t i = 0; i < n; i++) {
      double s = (double)i * 0.1;
      t[i] = 1e5 + s;
      /* cooling from 5 C, a nucleation at -1.5 C and a slow branch */
      y[i] = s < tn ? -8.0 + 13.0 * exp(-s / 500.0)
             : -0.186 - 2e-5 * (s - tn) - 1.314 * exp(-(s - tn) / 2.0);
      y[i] = round((y[i] + gsl_ran_gaussian(r, 0.003)) * 1e3) / 1e3;
    }
    for (size_t i = 1; i < n; i++) {
      double s = fabs(y[i] - y[i - 1]);
      if (s > 0.0 && s < step)
        step = s;
    }
    cr_assert_eq(ff_detect_run(t, y, n, NULL, &l, &d), FF_OK, "%s", d.msg);
    cr_assert(l.n >= 1);
    cr_assert(same_bits(l.v[0].resolution_k, step), "resolution %.17g, "
              "smallest change %.17g", l.v[0].resolution_k, step);
    ff_event_list_release(&l);
    for (size_t k = 0; k < sizeof at / sizeof at[0]; k++) {
      char want[64];
      for (int what = 0; what < 3; what++) {
        double keep_t = t[at[k]], keep_y = y[at[k]];
        if (what == 0)
          y[at[k]] = NAN;
        else if (what == 1)
          t[at[k]] = -INFINITY;
        else if (at[k] > 0)
          t[at[k]] = t[at[k] - 1];     /* time stands still */
        else
          continue;
        d = (struct ff_diag)FF_DIAG_INIT;
        cr_assert_eq(ff_detect_run(t, y, n, NULL, &l, &d), FF_EINPUT,
                     "n %zu reading %zu case %d", n, at[k], what);
        snprintf(want, sizeof want, "reading %zu ", at[k] + 1);
        cr_assert(strstr(d.msg, want) != NULL, "n %zu case %d: '%s', "
                  "expected %s", n, what, d.msg, want);
        t[at[k]] = keep_t;
        y[at[k]] = keep_y;
      }
    }
    free(t);
    free(y);
  }
  gsl_rng_free(r);
}

/* ---- each smoothed block's extremes ---------------------------------- */

/* Each filled block keeps its largest and smallest smoothed value and the
 * first index of each, as a plain loop with strict comparisons finds them:
 * quantised readings (many ties), a flat channel (all ties), and extremes
 * placed at a block's first, second and last reading, at 10 Hz. */
Test(detect_speed, block_extremes_match_a_plain_scan, .init = setup)
{
  size_t n = 5 * YS_BLOCK + 123;
  double *t = malloc(n * sizeof *t), *y = malloc(n * sizeof *y);
  gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
  struct ff_detect_params p = FF_DETECT_PARAMS_DEFAULT;

  cr_assert(t && y && r);
  for (int pattern = 0; pattern < 4; pattern++) {
    struct dctx c;
    size_t nb = (n + YS_BLOCK - 1) / YS_BLOCK;
    for (size_t i = 0; i < n; i++) {
      t[i] = 2e5 + (double)i * 0.1;
      y[i] = pattern == 1 ? 3.0
             : round((2.0 + gsl_ran_gaussian(r, 0.002)) * 1e3) / 1e3;
    }
    if (pattern >= 2)          /* spikes the smoothing spreads over 21 */
      for (size_t b = 0; b < nb; b++) {
        size_t at = b * YS_BLOCK + (pattern == 2 ? 1 : 0);
        if (at < n)
          y[at] += pattern == 2 ? 1.0 : -1.0;
        at = b * YS_BLOCK + YS_BLOCK - 1;
        if (at < n)
          y[at] += pattern == 2 ? -1.0 : 1.0;
      }
    memset(&c, 0, sizeof c);
    c.t = t;
    c.y = y;
    c.n = n;
    c.p = &p;
    c.dt = 0.1;
    ys_setup(&c);
    for (size_t b = 0; b < nb; b++) {
      size_t i0 = b * YS_BLOCK, i1 = i0 + YS_BLOCK < n ? i0 + YS_BLOCK : n;
      size_t at = i0, bt = i0;
      double tv, bv;
      (void)dd_ys_fill(&c, i0);
      tv = bv = dd_ys(&c, i0);
      for (size_t i = i0 + 1; i < i1; i++) {
        double v = dd_ys(&c, i);
        if (v > tv) {
          tv = v;
          at = i;
        }
        if (v < bv) {
          bv = v;
          bt = i;
        }
      }
      cr_assert(same_bits(c.ysc->top_v[b], tv) && c.ysc->top_i[b] == at,
                "pattern %d block %zu: top %.17g at %zu, plain %.17g at %zu",
                pattern, b, c.ysc->top_v[b], c.ysc->top_i[b], tv, at);
      cr_assert(same_bits(c.ysc->bot_v[b], bv) && c.ysc->bot_i[b] == bt,
                "pattern %d block %zu: bottom %.17g at %zu, plain %.17g at "
                "%zu", pattern, b, c.ysc->bot_v[b], c.ysc->bot_i[b], bv, bt);
    }
    ys_free(&c);
  }
  gsl_rng_free(r);
  free(t);
  free(y);
}
