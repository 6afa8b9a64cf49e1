/* test_regress.c - regression stage: linear core against NIST StRD, infinite-
 * dilution models against Pitzer-model i values and data built from the
 * models themselves, molar-mass extrapolation, Monte Carlo, failures. */
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <criterion/criterion.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>
#include <gsl/gsl_sort.h>
#include <gsl/gsl_statistics_double.h>

#include "frostfit/regress.h"
#include "../src/regress_impl.h"

static void setup(void)
{
  gsl_set_error_handler_off();
}

/* ---- reference CSV loader ------------------------------------------- */

#define MAXROWS 64
struct ref_rows {
  size_t n;
  char key[MAXROWS][16];           /* first column when it is text */
  double v[MAXROWS][8];            /* numeric columns, in order */
  size_t nv;
};

/* Reads a CSV with '#' comment lines and one header line; column 0 is kept
 * as text when key_col is set, the following numeric columns go to v. */
static void load_ref(const char *path, int key_col, size_t nnum,
                     struct ref_rows *r)
{
  FILE *f = fopen(path, "r");
  char line[512];
  int header = 1;

  cr_assert_not_null(f, "cannot open %s (run the tests from the repo root)",
                     path);
  memset(r, 0, sizeof *r);
  r->nv = nnum;
  while (fgets(line, sizeof line, f)) {
    if (line[0] == '#' || line[0] == '\n')
      continue;
    if (header) {
      header = 0;
      continue;
    }
    cr_assert_lt(r->n, (size_t)MAXROWS);
    char *p = line;
    if (key_col) {
      char *c = strchr(p, ',');
      cr_assert_not_null(c);
      snprintf(r->key[r->n], sizeof r->key[r->n], "%.*s", (int)(c - p), p);
      p = c + 1;
    }
    for (size_t j = 0; j < nnum; j++) {
      char *end;
      errno = 0;
      r->v[r->n][j] = strtod(p, &end);
      cr_assert(end != p && errno != ERANGE && (*end == ',' || *end == '\n'),
                "%s: bad number near '%.20s'", path, p);
      p = end + (*end == ',');
    }
    r->n++;
  }
  fclose(f);
}

/* Pitzer-model i values of one salt from datasets/reference (see file). */
struct salt {
  struct ff_particles p;
  size_t n;
  double m[8], i[8], u[8];
};

static void load_salt(const char *name, struct salt *s)
{
  struct ref_rows r;
  load_ref("datasets/reference/pitzer_i_freezing.csv", 1, 7, &r);
  memset(s, 0, sizeof *s);
  for (size_t k = 0; k < r.n; k++) {
    if (strcmp(r.key[k], name) != 0)
      continue;
    s->p.nu = (unsigned)r.v[k][0];
    s->p.nu_plus = (unsigned)r.v[k][1];
    s->p.nu_minus = (unsigned)r.v[k][2];
    s->p.z_plus = (int)r.v[k][3];
    s->p.z_minus = (int)r.v[k][4];
    s->m[s->n] = r.v[k][5];
    s->i[s->n] = r.v[k][6];
    /* i printed to 3 decimals: rectangular rounding error, u = 0.0005/sqrt 3
     * (GUM 4.3.7; common practice) */
    s->u[s->n] = 0.0005 / sqrt(3.0);
    s->n++;
  }
  cr_assert_eq(s->n, 5, "%s: expected 5 rows", name);
}

/* A_phi of water at 0 C: 0.3764 kg^1/2 mol^-1/2, REFERENCES.md sec. 4.2
 * ([C] IAPWS-95 + IAPWS R8-97; Archer & Wang 1990 via CRP94 [F19]). */
#define A_PHI_0C 0.3764

static struct ff_regress_input salt_input(const struct salt *s, size_t from)
{
  struct ff_regress_input in = { s->n - from, s->m + from, s->i + from,
                                 s->u + from, NULL, s->p, A_PHI_0C };
  return in;
}

/* ---- linear core ----------------------------------------------------- */

/* NIST StRD "Norris", certified values (datasets/reference/nist_norris.csv
 * header); 15 certified digits, 1e-9 relative allows summation order. */
Test(regress, line_matches_nist_norris, .init = setup)
{
  struct ref_rows r;
  double x[MAXROWS], y[MAXROWS];
  struct ff_line L;
  struct ff_diag d = FF_DIAG_INIT;

  load_ref("datasets/reference/nist_norris.csv", 0, 2, &r);
  cr_assert_eq(r.n, 36);
  for (size_t k = 0; k < r.n; k++) {
    x[k] = r.v[k][0];
    y[k] = r.v[k][1];
  }
  cr_assert_eq(ff_regress_line(x, y, NULL, r.n, 0.95, FF_COV_AUTO, &L, &d),
               FF_OK, "%s", d.msg);
  cr_expect_float_eq(L.c0, -0.262323073774029, 1e-9 * 0.262323073774029,
                     "intercept %.15g", L.c0);
  cr_expect_float_eq(L.c1, 1.00211681802045, 1e-9, "slope %.15g", L.c1);
  cr_expect_float_eq(L.se0, 0.232818234301152, 1e-9 * 0.2328,
                     "se(intercept) %.15g", L.se0);
  cr_expect_float_eq(L.se1, 0.429796848199937E-03, 1e-9 * 4.3e-4,
                     "se(slope) %.15g", L.se1);
  cr_expect_float_eq(L.chi2, 26.6173985294224, 1e-9 * 26.6, "RSS %.15g",
                     L.chi2);
  cr_expect_eq(L.dof, 34);
}

Test(regress, line_refuses_one_abscissa_and_two_points, .init = setup)
{
  double x[4] = { 0.02, 0.02, 0.02, 0.02 }, y[4] = { 1.9, 1.91, 1.89, 1.9 };
  struct ff_line L;
  struct ff_diag d = FF_DIAG_INIT;

  cr_expect_eq(ff_regress_line(x, y, NULL, 4, 0.95, FF_COV_AUTO, &L, &d),
               FF_EUNTRUSTED);
  cr_expect(strstr(d.msg, "one abscissa") != NULL, "%s", d.msg);
  ff_diag_clear(&d);
  cr_expect_eq(ff_regress_line(x, y, NULL, 2, 0.95, FF_COV_AUTO, &L, &d),
               FF_EUNTRUSTED);
  cr_expect(isfinite(L.c0) && isfinite(L.se0));
}

Test(regress, singular_design_is_reported, .init = setup)
{
  /* two identical columns: rank 1 for 2 parameters */
  double X[8] = { 1, 1, 2, 2, 3, 3, 4, 4 }, y[4] = { 1.1, 2.3, 2.9, 4.2 };
  double par[2], cov[FF_REGRESS_MAXPAR][FF_REGRESS_MAXPAR], chi2;
  char why[200];

  cr_expect_eq(ff_rg_wlinear(X, y, NULL, 4, 2, par, cov, &chi2, why,
                             sizeof why), -1);
  cr_expect(strstr(why, "singular") != NULL, "%s", why);
}

/* ---- Debye-Huckel anchored fit on Pitzer-model i values -------------- */

/* Pitzer-model i at the freezing point, REFERENCES.md sec. 3.1 [C] (HMW84
 * parameters [F18]); the fit must recover nu. REFERENCES sec. 6.3 asks for
 * +-0.01; achieved: NaCl 2.0006, KCl 2.0006, CaCl2 3.0064, K2SO4 3.0025
 * (B and C both kept by the F-test). The tolerance is +-0.01 because the
 * Pitzer beta1 exp(-2 sqrt I) term is only approximated by B m + C m^2.
 * Each run gets u(i) = 0.002 (a careful run, chosen; equal weights, so the
 * estimates do not depend on it). With only the 0.0003 rounding of the
 * table as u, the 0.0006 model-form bias of NaCl would lie outside the
 * purely statistical interval: intervals do not cover model error. */
#define U_I_RUN 0.002
static void expect_nu(const char *salt_name, double nu)
{
  struct salt s;
  struct ff_regress_result r = FF_REGRESS_RESULT_INIT;
  struct ff_diag d = FF_DIAG_INIT;

  load_salt(salt_name, &s);
  for (size_t k = 0; k < s.n; k++)
    s.u[k] = U_I_RUN;
  struct ff_regress_input in = salt_input(&s, 0);
  cr_assert_eq(ff_regress_solute(&in, NULL, &r, &d), FF_OK, "%s", d.msg);
  const struct ff_fit *f = &r.fit[FF_REGRESS_DEBYE_HUCKEL];
  cr_assert_eq(f->status, FF_OK, "%s: %s", salt_name, f->reason);
  cr_expect_float_eq(f->i_limit, nu, 0.01, "%s: nu fitted %.5f", salt_name,
                     f->i_limit);
  cr_expect(f->ci_limit[0] <= nu && nu <= f->ci_limit[1],
            "%s: CI [%.5f, %.5f] misses %g", salt_name, f->ci_limit[0],
            f->ci_limit[1], nu);
  cr_expect(r.has_particles && r.particles_in_ci);
  cr_expect_eq(r.particles_inferred, lround(nu));
  cr_expect(r.has_preferred);
  cr_expect_neq(r.preferred, FF_REGRESS_SQRT_LINEAR,
                "%s: the sqrt line must not be preferred", salt_name);
  cr_expect(r.has_alpha);
  cr_expect_float_eq(r.alpha, 1.0, 0.01 / (nu - 1.0));
  ff_regress_result_release(&r);
}

/* A solute whose limit is not an integer (2.4, chosen: e.g. a partly
 * dissociated 1:1 electrolyte mixture), built from the DH form with B =
 * 0.11: the tool must say that no integer fits rather than round. */
Test(regress, non_integer_limit_is_not_rounded, .init = setup)
{
  double m[6] = { 0.003, 0.008, 0.017, 0.035, 0.066, 0.12 }, i[6], u[6];
  struct ff_particles p = { 2, 1, 1, 1, -1 };
  struct ff_regress_result r = FF_REGRESS_RESULT_INIT;
  struct ff_diag d = FF_DIAG_INIT;

  for (int k = 0; k < 6; k++) {
    double sI = sqrt(m[k]);
    i[k] = 2.4 * (1.0 - A_PHI_0C * sI / (1.0 + 1.2 * sI) + 0.11 * m[k]);
    u[k] = 0.003;
  }
  struct ff_regress_input in = { 6, m, i, u, NULL, p, A_PHI_0C };
  cr_assert_eq(ff_regress_solute(&in, NULL, &r, &d), FF_OK, "%s", d.msg);
  cr_expect_float_eq(r.fit[FF_REGRESS_DEBYE_HUCKEL].i_limit, 2.4, 1e-9);
  cr_expect(r.has_particles);
  cr_expect_eq(r.particles_nearest, 2);
  cr_expect(!r.particles_in_ci);
  cr_expect_eq(r.particles_inferred, 0);
  cr_expect(r.nu_test.done && r.nu_test.reject_restricted,
            "F-test p = %g", r.nu_test.p);
  cr_expect(r.has_alpha);
  cr_expect_float_eq(r.alpha, 1.4, 1e-9);   /* (2.4 - 1)/(2 - 1) */
  ff_regress_result_release(&r);
}

/* Coverage of the intervals: DH data (nu = 2, B = 0.093, chosen) with
 * Gaussian noise u = 0.006, 2000 seeded repeats. Known-u intervals (normal
 * quantile) and residual-scaled intervals (Student t) must cover nu in
 * 95 % +- 1.5 % of repeats (3 binomial sd); AUTO may only over-cover.
 * Measured: 0.944, 0.950 and 0.969. */
Test(regress, intervals_have_nominal_coverage, .init = setup)
{
  double m[6] = { 0.004, 0.009, 0.02, 0.04, 0.07, 0.12 }, it[6], i[6], u[6];
  struct ff_particles p = { 2, 1, 1, 1, -1 };
  gsl_rng *rng = gsl_rng_alloc(gsl_rng_mt19937);
  const int reps = 2000;

  cr_assert_not_null(rng);
  for (int k = 0; k < 6; k++) {
    double sI = sqrt(m[k]);
    it[k] = 2.0 * (1.0 - A_PHI_0C * sI / (1.0 + 1.2 * sI) + 0.093 * m[k]);
    u[k] = 0.006;
  }
  enum ff_regress_cov modes[3] = { FF_COV_ABSOLUTE, FF_COV_SCALED,
                                   FF_COV_AUTO };
  for (int md = 0; md < 3; md++) {
    int cover = 0, fitted = 0;
    gsl_rng_set(rng, 4242UL);
    for (int rep = 0; rep < reps; rep++) {
      for (int k = 0; k < 6; k++)
        i[k] = it[k] + gsl_ran_gaussian(rng, u[k]);
      struct ff_regress_input in = { 6, m, i, u, NULL, p, A_PHI_0C };
      struct ff_regress_opts o = FF_REGRESS_OPTS_DEFAULT;
      struct ff_fit f = FF_FIT_INIT;
      struct ff_diag d = FF_DIAG_INIT;
      o.virial_terms = 1;
      o.cov = modes[md];
      if (ff_regress_fit_model(&in, FF_REGRESS_DEBYE_HUCKEL, &o, &f, &d) ==
          FF_OK) {
        fitted++;
        cover += f.ci_limit[0] <= 2.0 && 2.0 <= f.ci_limit[1];
      }
      ff_fit_release(&f);
    }
    double c = (double)cover / (double)fitted;
    cr_expect_eq(fitted, reps);
    if (modes[md] == FF_COV_AUTO)
      cr_expect(c >= 0.935, "AUTO coverage %.3f", c);
    else
      cr_expect(fabs(c - 0.95) <= 0.015, "mode %d coverage %.3f", md, c);
  }
  gsl_rng_free(rng);
}

Test(regress, dh_recovers_nu_nacl, .init = setup) { expect_nu("NaCl", 2.0); }
Test(regress, dh_recovers_nu_kcl, .init = setup) { expect_nu("KCl", 2.0); }
Test(regress, dh_recovers_nu_cacl2, .init = setup) { expect_nu("CaCl2", 3.0); }
Test(regress, dh_recovers_nu_k2so4, .init = setup) { expect_nu("K2SO4", 3.0); }

/* The issue: a straight line in sqrt(m) extrapolates exact i wrongly
 * (intercept ~1.96 for 1:1, ~2.74 for 2:1 over 0.005-0.3). Over the
 * 0.005-0.1 rows we measured: line NaCl 1.976, CaCl2 2.824; DH NaCl 2.0008,
 * CaCl2 3.027 (4 points: the F-test keeps only B for CaCl2). Assert the line
 * misses nu by more than 0.02, low, by at least 5 times the DH model's
 * miss, and has the worse AIC. */
static void expect_sqrt_worse(const char *salt_name, double nu)
{
  struct salt s;
  struct ff_fit fl = FF_FIT_INIT, fd = FF_FIT_INIT;
  struct ff_diag d = FF_DIAG_INIT;

  load_salt(salt_name, &s);
  struct ff_regress_input in = salt_input(&s, 1);   /* 0.005 .. 0.1 */
  cr_assert_eq(ff_regress_fit_model(&in, FF_REGRESS_SQRT_LINEAR, NULL, &fl,
                                    &d), FF_OK, "%s", d.msg);
  cr_assert_eq(ff_regress_fit_model(&in, FF_REGRESS_DEBYE_HUCKEL, NULL, &fd,
                                    &d), FF_OK, "%s", d.msg);
  double miss_line = fabs(fl.i_limit - nu), miss_dh = fabs(fd.i_limit - nu);
  cr_expect_gt(miss_line, 0.02, "%s: sqrt line limit %.4f", salt_name,
               fl.i_limit);
  cr_expect_lt(fl.i_limit, nu, "%s: the line should land low", salt_name);
  cr_expect_gt(miss_line, 5.0 * miss_dh, "%s: line %.4f vs DH %.4f",
               salt_name, fl.i_limit, fd.i_limit);
  cr_expect_gt(fl.aic, fd.aic, "%s: AIC line %.4g vs DH %.4g", salt_name,
               fl.aic, fd.aic);
  cr_expect_str_neq(fl.note, "");
  ff_fit_release(&fl);
  ff_fit_release(&fd);
}

Test(regress, sqrt_line_misses_nacl, .init = setup)
{
  expect_sqrt_worse("NaCl", 2.0);
}
Test(regress, sqrt_line_misses_cacl2, .init = setup)
{
  expect_sqrt_worse("CaCl2", 3.0);
}

/* Without u the fit is unweighted and its scale comes from the residuals:
 * same estimates as equal weights, covariance scaled, Student t used. */
Test(regress, unweighted_fit_scales_by_residuals, .init = setup)
{
  struct salt s;
  struct ff_fit fw = FF_FIT_INIT, fu = FF_FIT_INIT;
  struct ff_diag d = FF_DIAG_INIT;
  struct ff_regress_opts o = FF_REGRESS_OPTS_DEFAULT;

  load_salt("K2SO4", &s);
  o.virial_terms = 2;
  o.cov = FF_COV_SCALED;
  struct ff_regress_input in = salt_input(&s, 0);
  cr_assert_eq(ff_regress_fit_model(&in, FF_REGRESS_DEBYE_HUCKEL, &o, &fw, &d),
               FF_OK, "%s", d.msg);
  in.u_i = NULL;
  o.cov = FF_COV_ABSOLUTE;   /* ignored without u */
  cr_assert_eq(ff_regress_fit_model(&in, FF_REGRESS_DEBYE_HUCKEL, &o, &fu, &d),
               FF_OK, "%s", d.msg);
  for (size_t j = 0; j < fu.npar; j++) {
    cr_expect_float_eq(fu.par[j], fw.par[j], 1e-9 * fabs(fw.par[j]));
    cr_expect_float_eq(fu.se[j], fw.se[j], 1e-7 * fw.se[j]);
  }
  cr_expect_float_eq(fu.chi2, fu.sumsq, 1e-18);
  cr_expect_float_eq(fu.t_crit, ff_rg_t_quantile(0.95, 2), 1e-12);
  ff_fit_release(&fw);
  ff_fit_release(&fu);
}

Test(regress, fixed_nu_model_and_tests_are_reported, .init = setup)
{
  struct salt s;
  struct ff_regress_result r = FF_REGRESS_RESULT_INIT;
  struct ff_diag d = FF_DIAG_INIT;

  load_salt("NaCl", &s);
  struct ff_regress_input in = salt_input(&s, 0);
  cr_assert_eq(ff_regress_solute(&in, NULL, &r, &d), FF_OK, "%s", d.msg);
  const struct ff_fit *fx = &r.fit[FF_REGRESS_DH_FIXED_NU];
  cr_expect_eq(fx->status, FF_OK, "%s", fx->reason);
  cr_expect(fx->limit_fixed);
  cr_expect_float_eq(fx->i_limit, 2.0, 1e-12);
  cr_expect(r.nu_test.done);
  cr_expect(r.nu_test.p > 0.0 && r.nu_test.p < 1.0);
  cr_expect(r.virial_test.done);
  cr_expect_str_eq(r.criterion, "AICc");
  /* ion pairing does not describe NaCl: K_A runs to zero, reported */
  const struct ff_fit *fp = &r.fit[FF_REGRESS_ION_PAIRING];
  cr_expect(fp->attempted);
  cr_expect_eq(fp->status, FF_EUNTRUSTED);
  cr_expect(strstr(fp->reason, "not determined") != NULL, "%s", fp->reason);
  cr_expect(!r.fit[FF_REGRESS_ASSOCIATION].attempted);
  /* residuals and the model curve agree */
  const struct ff_fit *f = &r.fit[FF_REGRESS_DEBYE_HUCKEL];
  for (size_t k = 0; k < s.n; k++) {
    double ik;
    cr_assert_eq(ff_regress_eval(f, s.m[k], &ik), FF_OK);
    cr_expect_float_eq(ik + f->resid[k], s.i[k], 1e-12);
  }
  ff_regress_result_release(&r);
}

/* ---- ion pairing ----------------------------------------------------- */

/* Independent implementation of the pairing model (bisection), so the test
 * does not reuse the library's solver: K_A = alpha/((1-alpha)^2 m g^2),
 * ln g = -zz A [sI/(1+b sI) + (2/b) ln(1 + b sI)], I = z^2 m (1-alpha),
 * i = 2(1-alpha)(1 - zz A sI/(1+b sI)) + alpha + 2 B m. */
static double pairing_i_ref(double ka, double bb, double z, double m)
{
  double zz = z * z, a = A_PHI_0C, b = 1.2, lo = 0.0, hi = 1.0, al = 0.5;
  for (int it = 0; it < 200; it++) {
    al = 0.5 * (lo + hi);
    double sI = sqrt(zz * m * (1.0 - al));
    double lg = -zz * a * (sI / (1.0 + b * sI) + (2.0 / b) * log(1.0 + b * sI));
    double g = al - ka * m * (1.0 - al) * (1.0 - al) * exp(2.0 * lg);
    if (g > 0.0)
      hi = al;
    else
      lo = al;
  }
  double sI = sqrt(zz * m * (1.0 - al));
  return 2.0 * (1.0 - al) * (1.0 - zz * a * sI / (1.0 + b * sI)) + al +
         2.0 * bb * m;
}

Test(regress, ion_pairing_recovers_k_a_by_construction, .init = setup)
{
  double m[6] = { 0.0007, 0.002, 0.0045, 0.011, 0.032, 0.085 }, i[6], u[6];
  const double ka = 143.7, bb = 0.213;   /* chosen, untidy */
  struct ff_particles p = { 2, 1, 1, 2, -2 };
  struct ff_fit f = FF_FIT_INIT;
  struct ff_diag d = FF_DIAG_INIT;

  for (int k = 0; k < 6; k++) {
    i[k] = pairing_i_ref(ka, bb, 2.0, m[k]);
    u[k] = 0.002;
  }
  struct ff_regress_input in = { 6, m, i, u, NULL, p, A_PHI_0C };
  cr_assert_eq(ff_regress_fit_model(&in, FF_REGRESS_ION_PAIRING, NULL, &f, &d),
               FF_OK, "%s", d.msg);
  cr_expect_float_eq(f.k_kg_mol, ka, 1e-6 * ka, "K_A %.9g", f.k_kg_mol);
  cr_expect_float_eq(f.par[1], bb, 1e-6, "B %.9g", f.par[1]);
  cr_expect_lt(f.chi2, 1e-12);
  cr_expect(f.limit_fixed);
  cr_expect_float_eq(f.i_limit, 2.0, 1e-12);
  cr_expect(f.ci_k[0] < ka && ka < f.ci_k[1]);
  ff_fit_release(&f);
}

/* MgSO4 Pitzer-model rows (REFERENCES.md sec. 3.1 [C]). The literature K_A
 * at 0 C is only known to ~116-190 kg/mol (REFERENCES sec. 5.1: USGS
 * phreeqc.dat log_k 2.37 + van 't Hoff [F20]; alternative enthalpy [M]),
 * and a K_A fitted to data that were themselves generated by a Pitzer model
 * (pairing folded into beta2) depends on the activity model: we get 58 with
 * a B term and 177 without. Assert only "order 10^2": 30 < K_A < 300. */
Test(regress, ion_pairing_mgso4_order_of_magnitude, .init = setup)
{
  struct salt s;
  struct ff_regress_opts o = FF_REGRESS_OPTS_DEFAULT;

  load_salt("MgSO4", &s);
  struct ff_regress_input in = salt_input(&s, 0);
  for (int with_b = 0; with_b <= 1; with_b++) {
    struct ff_fit f = FF_FIT_INIT;
    struct ff_diag d = FF_DIAG_INIT;
    o.pairing_b = with_b;
    cr_assert_eq(ff_regress_fit_model(&in, FF_REGRESS_ION_PAIRING, &o, &f,
                                      &d), FF_OK, "%s", d.msg);
    cr_expect(f.k_kg_mol > 30.0 && f.k_kg_mol < 300.0,
              "B term %d: K_A = %.4g", with_b, f.k_kg_mol);
    cr_expect(f.ci_k[0] < f.k_kg_mol && f.k_kg_mol < f.ci_k[1]);
    ff_fit_release(&f);
  }
}

Test(regress, ion_pairing_needs_a_symmetric_salt, .init = setup)
{
  struct salt s;
  struct ff_fit f = FF_FIT_INIT;
  struct ff_diag d = FF_DIAG_INIT;

  load_salt("CaCl2", &s);
  struct ff_regress_input in = salt_input(&s, 0);
  cr_expect_eq(ff_regress_fit_model(&in, FF_REGRESS_ION_PAIRING, NULL, &f, &d),
               FF_EUNTRUSTED);
  cr_expect(strstr(f.reason, "symmetric") != NULL, "%s", f.reason);
  cr_expect_eq(d.status, FF_EUNTRUSTED);
  ff_fit_release(&f);
}

/* ---- association ----------------------------------------------------- */

/* Monomer-dimer data by construction (K2 = 7.3 kg/mol, chosen): m1 from the
 * quadratic 2 K2 m1^2 + m1 - m = 0, written here as the textbook root
 * (-1 + sqrt(1 + 8 K2 m))/(4 K2) (the library uses the other form). */
Test(regress, association_recovers_k2_and_limit_one, .init = setup)
{
  double m[6] = { 0.012, 0.025, 0.047, 0.093, 0.18, 0.36 }, i[6], u[6];
  const double k2 = 7.3;
  struct ff_particles p = { 1, 0, 0, 0, 0 };
  struct ff_regress_result r = FF_REGRESS_RESULT_INIT;
  struct ff_diag d = FF_DIAG_INIT;

  for (int k = 0; k < 6; k++) {
    double m1 = (-1.0 + sqrt(1.0 + 8.0 * k2 * m[k])) / (4.0 * k2);
    i[k] = (m1 + k2 * m1 * m1) / m[k];
    u[k] = 0.003;
  }
  struct ff_regress_input in = { 6, m, i, u, NULL, p, A_PHI_0C };
  cr_assert_eq(ff_regress_solute(&in, NULL, &r, &d), FF_OK, "%s", d.msg);
  const struct ff_fit *f = &r.fit[FF_REGRESS_ASSOCIATION];
  cr_assert_eq(f->status, FF_OK, "%s", f->reason);
  cr_expect_float_eq(f->k_kg_mol, k2, 1e-6 * k2, "K2 %.9g", f->k_kg_mol);
  cr_expect(f->limit_fixed);
  cr_expect_float_eq(f->i_limit, 1.0, 1e-15);
  cr_expect(r.has_preferred);
  cr_expect_eq(r.preferred, FF_REGRESS_ASSOCIATION, "preferred %s",
               ff_regress_model_name(r.preferred));
  cr_expect(!r.fit[FF_REGRESS_ION_PAIRING].attempted);
  cr_expect(!r.has_alpha);
  ff_regress_result_release(&r);
}

/* A non-electrolyte whose i is flat within its uncertainty (values of the
 * synthetic demo lab's urea runs, rounded): association must be refused as
 * "not detected" whatever the sign of the tiny slope, and a change of 1e-12
 * in one value must not move the association model in or out of the
 * preferred slot (it did when the test was a limit on ln K2 alone). */
Test(regress, association_not_detected_on_flat_data, .init = setup)
{
  const double m[4] = { 0.1, 0.2, 0.4, 0.8 };
  const double base[4] = { 1.0006, 1.0001, 0.99978, 1.0001 };
  const double u[4] = { 0.0024, 0.0012, 0.00059, 0.00030 };
  const double nudge[5] = { 0.0, 1e-12, -1e-12, 3e-5, -3e-5 };
  struct ff_particles p = { 1, 0, 0, 0, 0 };
  enum ff_regress_model first = FF_REGRESS_NMODELS;

  for (int v = 0; v < 5; v++) {
    double i[4];
    struct ff_regress_result r = FF_REGRESS_RESULT_INIT;
    struct ff_diag d = FF_DIAG_INIT;

    for (int k = 0; k < 4; k++)
      i[k] = base[k] + (k == 3 ? nudge[v] : 0.0);
    struct ff_regress_input in = { 4, m, i, u, NULL, p, A_PHI_0C };
    cr_assert_eq(ff_regress_solute(&in, NULL, &r, &d), FF_OK, "%s", d.msg);
    const struct ff_fit *f = &r.fit[FF_REGRESS_ASSOCIATION];
    cr_expect(f->attempted);
    cr_expect_eq(f->status, FF_EUNTRUSTED, "variant %d: K2 %.3g fitted", v,
                 f->k_kg_mol);
    cr_expect(strstr(f->reason, "not detected") != NULL, "%s", f->reason);
    cr_assert(r.has_preferred);
    cr_expect_neq(r.preferred, FF_REGRESS_ASSOCIATION);
    if (v == 0)
      first = r.preferred;
    else if (v < 3)
      cr_expect_eq(r.preferred, first, "variant %d prefers %s", v,
                   ff_regress_model_name(r.preferred));
    ff_regress_result_release(&r);
  }
}

/* Real dimerisation under noise is still found: K2 = 7.3 kg/mol (chosen)
 * with a fixed +-0.002 pattern on i (u 0.003). */
Test(regress, association_detected_under_noise, .init = setup)
{
  double m[6] = { 0.012, 0.025, 0.047, 0.093, 0.18, 0.36 }, i[6], u[6];
  const double k2 = 7.3, noise[6] = { 0.002, -0.002, 0.001, -0.001, 0.002,
                                      -0.002 };
  struct ff_particles p = { 1, 0, 0, 0, 0 };
  struct ff_regress_result r = FF_REGRESS_RESULT_INIT;
  struct ff_diag d = FF_DIAG_INIT;

  for (int k = 0; k < 6; k++) {
    double m1 = (-1.0 + sqrt(1.0 + 8.0 * k2 * m[k])) / (4.0 * k2);
    i[k] = (m1 + k2 * m1 * m1) / m[k] + noise[k];
    u[k] = 0.003;
  }
  struct ff_regress_input in = { 6, m, i, u, NULL, p, A_PHI_0C };
  cr_assert_eq(ff_regress_solute(&in, NULL, &r, &d), FF_OK, "%s", d.msg);
  const struct ff_fit *f = &r.fit[FF_REGRESS_ASSOCIATION];
  cr_assert_eq(f->status, FF_OK, "%s", f->reason);
  cr_expect(f->k_kg_mol > 5.0 && f->k_kg_mol < 10.0, "K2 %.4g", f->k_kg_mol);
  ff_regress_result_release(&r);
}

/* ---- degenerate input ------------------------------------------------ */

static void expect_no_nan(const struct ff_fit *f)
{
  cr_expect(isfinite(f->i_limit) && isfinite(f->u_i_limit) &&
            isfinite(f->ci_limit[0]) && isfinite(f->ci_limit[1]) &&
            isfinite(f->chi2) && isfinite(f->k_kg_mol));
  for (size_t j = 0; j < FF_REGRESS_MAXPAR; j++)
    cr_expect(isfinite(f->par[j]) && isfinite(f->se[j]));
  cr_expect_null(f->resid);
}

Test(regress, all_runs_at_one_molality_is_untrusted, .init = setup)
{
  double m[4] = { 0.05, 0.05, 0.05, 0.05 }, i[4] = { 1.89, 1.885, 1.893,
                                                     1.888 };
  double u[4] = { 0.004, 0.004, 0.004, 0.004 };
  struct ff_particles p = { 2, 1, 1, 1, -1 };
  struct ff_regress_input in = { 4, m, i, u, NULL, p, A_PHI_0C };
  struct ff_regress_result r = FF_REGRESS_RESULT_INIT;
  struct ff_diag d = FF_DIAG_INIT;

  cr_expect_eq(ff_regress_solute(&in, NULL, &r, &d), FF_EUNTRUSTED);
  cr_expect(strstr(d.msg, "distinct") != NULL, "%s", d.msg);
  for (int k = 0; k < FF_REGRESS_NMODELS; k++) {
    if (!r.fit[k].attempted)
      continue;
    cr_expect_eq(r.fit[k].status, FF_EUNTRUSTED, "%s",
                 ff_regress_model_name((enum ff_regress_model)k));
    cr_expect_str_neq(r.fit[k].reason, "");
    expect_no_nan(&r.fit[k]);
  }
  cr_expect(!r.has_preferred && !r.has_particles);
  ff_regress_result_release(&r);
}

Test(regress, fewer_points_than_parameters_is_untrusted, .init = setup)
{
  double m[2] = { 0.01, 0.05 }, i[2] = { 1.938, 1.889 }, u[2] = { 0.002,
                                                                   0.002 };
  struct ff_particles p = { 2, 1, 1, 1, -1 };
  struct ff_regress_input in = { 2, m, i, u, NULL, p, A_PHI_0C };
  struct ff_regress_opts o = FF_REGRESS_OPTS_DEFAULT;
  struct ff_fit f = FF_FIT_INIT;
  struct ff_diag d = FF_DIAG_INIT;

  o.virial_terms = 2;
  cr_expect_eq(ff_regress_fit_model(&in, FF_REGRESS_DEBYE_HUCKEL, &o, &f, &d),
               FF_EUNTRUSTED);
  cr_expect(strstr(f.reason, "2 points for 3 parameters") != NULL, "%s",
            f.reason);
  expect_no_nan(&f);
  cr_expect_neq(ff_regress_eval(&f, 0.01, &(double){ 0 }), FF_OK);
  ff_fit_release(&f);
  /* two points and two parameters: no degree of freedom either */
  ff_diag_clear(&d);
  cr_expect_eq(ff_regress_fit_model(&in, FF_REGRESS_SQRT_LINEAR, NULL, &f, &d),
               FF_EUNTRUSTED);
  ff_fit_release(&f);
}

Test(regress, bad_input_is_einput, .init = setup)
{
  double m[3] = { 0.01, -0.02, 0.05 }, i[3] = { 1.9, 1.9, 1.9 },
         u[3] = { 0.01, 0.01, 0.01 };
  struct ff_particles p = { 2, 1, 1, 1, -1 };
  struct ff_regress_input in = { 3, m, i, u, NULL, p, A_PHI_0C };
  struct ff_regress_result r = FF_REGRESS_RESULT_INIT;
  struct ff_diag d = FF_DIAG_INIT;

  cr_expect_eq(ff_regress_solute(&in, NULL, &r, &d), FF_EINPUT);
  cr_expect(strstr(d.msg, "point 2") != NULL, "%s", d.msg);
  m[1] = 0.02;
  u[2] = 0.0;
  ff_diag_clear(&d);
  cr_expect_eq(ff_regress_solute(&in, NULL, &r, &d), FF_EINPUT);
  u[2] = 0.01;
  in.p.z_minus = -2;   /* 1 x (+1) against 1 x (-2): does not balance */
  ff_diag_clear(&d);
  cr_expect_eq(ff_regress_solute(&in, NULL, &r, &d), FF_EINPUT);
  ff_regress_result_release(&r);
}

Test(regress, alpha_from_i, .init = setup)
{
  double a, ua;
  struct ff_diag d = FF_DIAG_INIT;

  /* (i - 1)/(nu - 1): definition (DESIGN.md sec. 4) */
  cr_assert_eq(ff_regress_alpha(1.437, 0.012, 2, &a, &ua, &d), FF_OK);
  cr_expect_float_eq(a, 0.437, 1e-12);
  cr_expect_float_eq(ua, 0.012, 1e-12);
  cr_assert_eq(ff_regress_alpha(2.3, 0.03, 3, &a, &ua, &d), FF_OK);
  cr_expect_float_eq(a, 0.65, 1e-12);
  cr_expect_float_eq(ua, 0.015, 1e-12);
  cr_expect_eq(ff_regress_alpha(1.1, 0.01, 1, &a, &ua, &d), FF_EINPUT);
}

/* ---- molar mass ------------------------------------------------------ */

Test(regress, molar_mass_linear_by_construction, .init = setup)
{
  /* M_app = 186.37 - 0.413 c (chosen), c in g/kg */
  double c[4] = { 5.2, 11.7, 19.1, 30.4 }, M[4], u[4] = { 0.9, 1.1, 0.8, 1.3 };
  struct ff_mm_result r;
  struct ff_diag d = FF_DIAG_INIT;

  for (int k = 0; k < 4; k++)
    M[k] = 186.37 - 0.413 * c[k];
  cr_assert_eq(ff_regress_molar_mass(c, M, u, 4, 0.95, &r, &d), FF_OK, "%s",
               d.msg);
  cr_expect_eq(r.linear.status, FF_OK, "%s", r.linear.reason);
  cr_expect_float_eq(r.linear.m0_g_mol, 186.37, 1e-9);
  cr_expect_float_eq(r.linear.slope, -0.413, 1e-11);
  cr_expect_eq(r.preferred, FF_MM_LINEAR);
  cr_expect_float_eq(r.m0_g_mol, 186.37, 1e-9);
  cr_expect_gt(r.u_m0_g_mol, 0.0);
  cr_expect(r.ci[0] < 186.37 && 186.37 < r.ci[1]);
}

Test(regress, molar_mass_reciprocal_by_construction, .init = setup)
{
  /* 1/M_app = 1/150.3 + 2.1e-4 c exactly (chosen): M_app is curved */
  double c[4] = { 3.1, 8.4, 15.9, 27.2 }, M[4], u[4];
  struct ff_mm_result r;
  struct ff_diag d = FF_DIAG_INIT;

  for (int k = 0; k < 4; k++) {
    M[k] = 1.0 / (1.0 / 150.3 + 2.1e-4 * c[k]);
    u[k] = 0.004 * M[k];
  }
  cr_assert_eq(ff_regress_molar_mass(c, M, u, 4, 0.95, &r, &d), FF_OK, "%s",
               d.msg);
  cr_expect_eq(r.preferred, FF_MM_RECIPROCAL, "%s", r.note);
  cr_expect_float_eq(r.m0_g_mol, 150.3, 1e-9 * 150.3, "M0 %.12g",
                     r.m0_g_mol);
  cr_expect(r.ci[0] < 150.3 && 150.3 < r.ci[1]);
}

/* Apparent molar mass of a dimerising acid (K2 = 2.4 kg/mol, M1 = 122.12,
 * chosen) at K2 m <= 0.1: M_app runs up to 10 % high; the extrapolation
 * must bring it back to M1 within TOL_DIMER and at least halve the miss of
 * the lowest run. Both forms are only linear to first order (see
 * regress_stats.c); measured: linear 122.555 (+0.36 %, preferred),
 * reciprocal 122.693 (+0.47 %), lowest run 123.260 (+0.93 %). */
#define TOL_DIMER 0.01
Test(regress, molar_mass_dimerising_solute_extrapolates, .init = setup)
{
  double mm[5] = { 0.004, 0.011, 0.019, 0.028, 0.04 }, M[5], u[5];
  const double k2 = 2.4, m1true = 122.12;
  struct ff_mm_result r;
  struct ff_diag d = FF_DIAG_INIT;

  for (int k = 0; k < 5; k++) {
    double m1 = (-1.0 + sqrt(1.0 + 8.0 * k2 * mm[k])) / (4.0 * k2);
    double i = (m1 + k2 * m1 * m1) / mm[k];
    M[k] = m1true / i;
    u[k] = 0.002 * M[k];
  }
  cr_assert_eq(ff_regress_molar_mass(mm, M, u, 5, 0.95, &r, &d), FF_OK, "%s",
               d.msg);
  cr_expect_float_eq(r.m0_g_mol, m1true, TOL_DIMER * m1true, "M0 %.3f (%s)",
                     r.m0_g_mol, r.note);
  cr_expect_lt(fabs(r.m0_g_mol - m1true), 0.5 * fabs(M[0] - m1true),
               "extrapolation %.3f (%s; linear %.3f, reciprocal %.3f) not "
               "clearly better than the lowest run %.3f", r.m0_g_mol, r.note,
               r.linear.m0_g_mol, r.reciprocal.m0_g_mol, M[0]);
}

Test(regress, molar_mass_one_run_and_one_concentration, .init = setup)
{
  double c[3] = { 12.0, 12.0, 12.0 }, M[3] = { 128.4, 127.9, 128.8 },
         u[3] = { 0.83, 0.83, 0.83 };
  struct ff_mm_result r;
  struct ff_diag d = FF_DIAG_INIT;

  cr_assert_eq(ff_regress_molar_mass(c, M, u, 1, 0.95, &r, &d), FF_OK);
  cr_expect_eq(r.preferred, FF_MM_SINGLE);
  cr_expect_float_eq(r.m0_g_mol, 128.4, 1e-12);
  cr_expect_float_eq(r.u_m0_g_mol, 0.83, 1e-12);
  cr_expect_str_neq(r.note, "");
  cr_expect_eq(ff_regress_molar_mass(c, M, u, 3, 0.95, &r, &d),
               FF_EUNTRUSTED);
  cr_expect(strstr(d.msg, "one concentration") != NULL, "%s", d.msg);
}

/* ---- Monte Carlo ----------------------------------------------------- */

/* The issue asks that MC and propagated u agree within 10 %. For these
 * linear fits they should agree to MC noise (~1.6 % for 2000 draws). */
static void expect_mc(enum ff_regress_model model)
{
  struct salt s;
  struct ff_mc_summary mc;
  struct ff_diag d = FF_DIAG_INIT;

  load_salt("CaCl2", &s);
  for (size_t k = 0; k < s.n; k++)
    s.u[k] = 0.004;   /* typical run uncertainty, chosen */
  struct ff_regress_input in = salt_input(&s, 0);
  cr_assert_eq(ff_regress_monte_carlo(&in, model, NULL, 2000, 20261201UL, &mc,
                                      &d), FF_OK, "%s", d.msg);
  cr_expect_eq(mc.n_ok, 2000);
  cr_expect(mc.ratio > 0.9 && mc.ratio < 1.1, "%s: MC sd %.5f vs propagated "
            "%.5f", ff_regress_model_name(model), mc.sd, mc.u_propagated);
  cr_expect(mc.q_lo < mc.median && mc.median < mc.q_hi);
}

Test(regress, monte_carlo_matches_propagation_dh, .init = setup)
{
  expect_mc(FF_REGRESS_DEBYE_HUCKEL);
}
Test(regress, monte_carlo_matches_propagation_sqrt, .init = setup)
{
  expect_mc(FF_REGRESS_SQRT_LINEAR);
}

Test(regress, bad_u_m_stops_only_the_monte_carlo, .init = setup)
{
  struct salt s;
  double um[5] = { 1e-5, 1e-5, NAN, 1e-5, 1e-5 };
  struct ff_regress_result r = FF_REGRESS_RESULT_INIT;
  struct ff_mc_summary mc;
  struct ff_diag d = FF_DIAG_INIT;

  load_salt("KCl", &s);
  struct ff_regress_input in = salt_input(&s, 0);
  in.u_m_mol_kg = um;
  cr_expect_eq(ff_regress_solute(&in, NULL, &r, &d), FF_OK, "%s", d.msg);
  cr_expect_eq(ff_regress_monte_carlo(&in, FF_REGRESS_DEBYE_HUCKEL, NULL, 50,
                                      7UL, &mc, &d), FF_EINPUT);
  cr_expect(strstr(d.msg, "point 3") != NULL, "%s", d.msg);
  ff_regress_result_release(&r);
}

Test(regress, monte_carlo_refuses_fixed_limit, .init = setup)
{
  struct salt s;
  struct ff_mc_summary mc;
  struct ff_diag d = FF_DIAG_INIT;

  load_salt("NaCl", &s);
  struct ff_regress_input in = salt_input(&s, 0);
  cr_expect_eq(ff_regress_monte_carlo(&in, FF_REGRESS_DH_FIXED_NU, NULL, 100,
                                      1UL, &mc, &d), FF_EUNTRUSTED);
  cr_expect(strstr(d.msg, "fixed") != NULL, "%s", d.msg);
}

/* Model bias against a purely statistical interval: CaCl2 from 0.005 mol/kg
 * (Pitzer-model values, REFERENCES.md sec. 3.1 [C]) with a precise run
 * uncertainty. The free-nu DH limit lands near 3.027 and its interval can
 * exclude 3; the F-test of nu fixed at the given particle count then
 * decides. Whatever the interval says, the integer must be inferred only
 * when the interval holds it or the F-test does not reject it. */
Test(regress, particles_inferred_by_interval_or_ftest, .init = setup)
{
  struct salt s;
  struct ff_regress_result r = FF_REGRESS_RESULT_INIT;
  struct ff_diag d = FF_DIAG_INIT;

  load_salt("CaCl2", &s);
  for (size_t k = 0; k < s.n; k++)
    s.u[k] = 0.002;   /* a careful run, chosen */
  struct ff_regress_input in = salt_input(&s, 1);
  cr_assert_eq(ff_regress_solute(&in, NULL, &r, &d), FF_OK, "%s", d.msg);
  cr_assert(r.has_particles);
  cr_expect_eq(r.particles_nearest, 3);
  cr_assert(r.nu_test.done, "the nu-fixed F-test must run");
  int want = r.particles_in_ci || !r.nu_test.reject_restricted;
  cr_expect_eq(r.particles_inferred, want ? 3 : 0,
               "in_ci %d, F p %.3g, inferred %ld", r.particles_in_ci,
               r.nu_test.p, r.particles_inferred);
  cr_expect_eq(r.particles_by_ftest, !r.particles_in_ci
               && !r.nu_test.reject_restricted);
  cr_log_info("CaCl2 0.005-0.1: DH limit %.4f [%.4f, %.4f], F p %.3g",
              r.fit[FF_REGRESS_DEBYE_HUCKEL].i_limit,
              r.fit[FF_REGRESS_DEBYE_HUCKEL].ci_limit[0],
              r.fit[FF_REGRESS_DEBYE_HUCKEL].ci_limit[1], r.nu_test.p);
  ff_regress_result_release(&r);
}

/* The band of a straight line in sqrt(m): u^2 = C00 + 2 x C01 + x^2 C11
 * with x = sqrt(m) (linear propagation, exact for a linear model; GUM
 * 5.1.2). The numerical gradient must reproduce it. */
Test(regress, band_matches_linear_propagation, .init = setup)
{
  struct salt s;
  struct ff_fit f = FF_FIT_INIT;
  struct ff_diag d = FF_DIAG_INIT;
  double iv, uv, x = sqrt(0.0371);

  load_salt("NaCl", &s);
  struct ff_regress_input in = salt_input(&s, 0);
  cr_assert_eq(ff_regress_fit_model(&in, FF_REGRESS_SQRT_LINEAR, NULL, &f, &d),
               FF_OK, "%s", d.msg);
  cr_assert_eq(ff_regress_eval_u(&f, 0.0371, &iv, &uv), FF_OK);
  double want = sqrt(f.cov[0][0] + 2.0 * x * f.cov[0][1]
                     + x * x * f.cov[1][1]);
  cr_expect_float_eq(uv, want, 1e-6 * want, "u %.9g, want %.9g", uv, want);
  cr_expect_float_eq(iv, f.par[0] + f.par[1] * x, 1e-12);
  cr_expect_eq(ff_regress_eval_u(&f, -1.0, &iv, &uv), FF_EUNTRUSTED);
  ff_fit_release(&f);
}

/* The unknown's band at zero concentration is its interval: k u(c0) is the
 * half-width of the reported CI (same coverage factor, linear form), and
 * the band follows linear propagation elsewhere (GUM 5.1.2). Data by
 * construction: M_app = 150 + 0.2 c with stated u 0.5 g/mol. */
Test(regress, molar_mass_band_matches_interval, .init = setup)
{
  const double c[4] = { 2.5, 5.1, 9.7, 14.2 };
  double m[4], u[4] = { 0.5, 0.5, 0.5, 0.5 };
  struct ff_mm_result r;
  struct ff_diag d = FF_DIAG_INIT;

  for (int k = 0; k < 4; k++)
    m[k] = 150.0 + 0.2 * c[k] + (k % 2 ? 0.1 : -0.1);
  cr_assert_eq(ff_regress_molar_mass(c, m, u, 4, 0.95, &r, &d), FF_OK, "%s",
               d.msg);
  const struct ff_mm_fit *L = &r.linear;
  cr_assert_eq(L->status, FF_OK);
  cr_expect_float_eq(L->k_band * L->u_line0, 0.5 * (L->ci[1] - L->ci[0]),
                     1e-9, "band %.9g, interval half-width %.9g",
                     L->k_band * L->u_line0, 0.5 * (L->ci[1] - L->ci[0]));
  cr_expect(isfinite(L->cov01));
  cr_expect_lt(L->cov01, 0.0, "intercept and slope anticorrelate for x > 0");
}

/* ---- distinct molalities ----------------------------------------------
 * ff_rg_distinct counts in O(n log n); these tests hold it to the
 * definition it replaced, pair by pair in the order given (regress_impl.h;
 * the relation is our own rule, common practice, no source). */

static size_t distinct_by_definition(const double *x, size_t n)
{
  size_t k = 0;

  for (size_t i = 0; i < n; i++) {
    int seen = 0;
    for (size_t j = 0; j < i && !seen; j++) {
      double s = fmax(fabs(x[i]), fabs(x[j]));
      if (fabs(x[i] - x[j]) <= FF_RG_DISTINCT_REL * s)
        seen = 1;
    }
    k += !seen;
  }
  return k;
}

/* Fisher-Yates with the test's generator, so orders are reproducible. */
static void shuffle(double *x, size_t n, gsl_rng *r)
{
  for (size_t i = n; i > 1; i--) {
    size_t j = gsl_rng_uniform_int(r, i);
    double t = x[i - 1];
    x[i - 1] = x[j];
    x[j] = t;
  }
}

/* One batch of random cases: sizes on both sides of the pairwise cutoff
 * (32), every case checked against the definition. near_ties: values
 * drawn from a few molalities, each copy moved by 0 to 3 tolerances, so
 * chains longer than the tolerance are common; otherwise plain random
 * molalities (0.001 to 1 mol/kg, as in a run sheet) with some exact
 * repeats. Returns how many cases had a count below n (a tie was seen). */
static size_t check_random_cases(int near_ties, unsigned long seed)
{
  gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
  static const size_t sizes[] = { 1, 2, 3, 5, 31, 32, 33, 100, 257, 1000 };
  double *x = malloc(2000 * sizeof *x);
  size_t with_ties = 0;

  cr_assert_not_null(r);
  cr_assert_not_null(x);
  gsl_rng_set(r, seed);
  for (int rep = 0; rep < 40; rep++)
    for (size_t s = 0; s < sizeof sizes / sizeof sizes[0]; s++) {
      size_t n = sizes[s];
      size_t levels = 1 + gsl_rng_uniform_int(r, 12);
      double base[12];
      for (size_t l = 0; l < levels; l++)
        base[l] = 0.001 + gsl_rng_uniform(r);
      for (size_t i = 0; i < n; i++) {
        if (near_ties) {
          double b = base[gsl_rng_uniform_int(r, levels)];
          double steps = (double)gsl_rng_uniform_int(r, 7) / 2.0;
          x[i] = b * (1.0 + steps * FF_RG_DISTINCT_REL);
          if (gsl_rng_uniform(r) < 0.1)
            x[i] = -x[i];
        } else {
          x[i] = i > 0 && gsl_rng_uniform(r) < 0.05
                   ? x[gsl_rng_uniform_int(r, i)]
                   : 0.001 + gsl_rng_uniform(r);
        }
      }
      if (rep % 5 == 0 && n > 1)
        x[gsl_rng_uniform_int(r, n)] = 0.0;
      shuffle(x, n, r);
      size_t want = distinct_by_definition(x, n);
      size_t got = ff_rg_distinct(x, n);
      cr_assert_eq(got, want, "%s, n %zu, rep %d: %zu distinct, the "
                   "definition gives %zu", near_ties ? "near ties" : "plain",
                   n, rep, got, want);
      for (size_t cap = 0; cap <= 4; cap++)
        cr_assert_eq(ff_rg_distinct_upto(x, n, cap), want < cap ? want : cap,
                     "upto %zu, n %zu, rep %d: the definition gives %zu",
                     cap, n, rep, want);
      with_ties += want < n;
    }
  free(x);
  gsl_rng_free(r);
  return with_ties;
}

Test(regress, distinct_matches_definition_on_random_molalities,
     .init = setup)
{
  size_t ties = check_random_cases(0, 11UL);
  cr_expect_gt(ties, 0, "the repeats must exercise the tie path");
}

Test(regress, distinct_matches_definition_with_near_ties, .init = setup)
{
  size_t ties = check_random_cases(1, 12UL);
  cr_expect_gt(ties, 200, "near ties must be frequent (%zu cases)", ties);
}

/* A chain a, a(1 + 1.8 tol), a(1 + 0.9 tol) repeated past the cutoff: the
 * order decides (2 per triple), where gaps of the sorted values would
 * give 1. Then the same values in rising order (1 per triple). */
Test(regress, distinct_keeps_the_order_of_a_chain, .init = setup)
{
  double x[120];
  const double t = FF_RG_DISTINCT_REL;

  for (size_t k = 0; k < 40; k++) {
    double a = 0.01 * (double)(k + 1);
    x[3 * k] = a;
    x[3 * k + 1] = a * (1.0 + 1.8 * t);
    x[3 * k + 2] = a * (1.0 + 0.9 * t);
  }
  cr_expect_eq(distinct_by_definition(x, 120), 80);
  cr_expect_eq(ff_rg_distinct(x, 120), 80);
  for (size_t k = 0; k < 40; k++) {
    double mid = x[3 * k + 2];
    x[3 * k + 2] = x[3 * k + 1];
    x[3 * k + 1] = mid;
  }
  cr_expect_eq(distinct_by_definition(x, 120), 40);
  cr_expect_eq(ff_rg_distinct(x, 120), 40);
  /* Rising order: every new maximum beyond the tolerance is proven new. */
  cr_expect_eq(ff_rg_distinct_upto(x, 120, 3), 3);
  /* One molality with values 0.9 tolerance either side: the early scan
   * proves nothing beyond the first value and the full count decides (1:
   * each value is the same as an earlier one). Then a third molality
   * inside the range of the first two: it counts without being a new
   * extreme, found by the full count. */
  const double a = 0.05;
  double y[40];
  for (size_t k = 0; k < 40; k++)
    y[k] = k % 2 ? a : a * (1.0 + (k % 4 == 0 ? 0.9 : -0.9) * t);
  cr_expect_eq(distinct_by_definition(y, 40), 1);
  cr_expect_eq(ff_rg_distinct_upto(y, 40, 3), 1);
  for (size_t k = 0; k < 40; k++)
    y[k] = k == 1 ? 0.03 : k == 2 ? 0.02 : 0.01;
  cr_expect_eq(distinct_by_definition(y, 40), 3);
  cr_expect_eq(ff_rg_distinct_upto(y, 40, 3), 3);
  cr_expect_eq(ff_rg_distinct_upto(y, 40, 2), 2);
}

/* Non-finite values take the pair-by-pair path: the same count. */
Test(regress, distinct_with_non_finite_values, .init = setup)
{
  double x[64];

  for (size_t i = 0; i < 64; i++)
    x[i] = 0.01 * (double)(i % 20 + 1);
  x[5] = NAN;
  x[17] = NAN;
  x[30] = INFINITY;
  x[41] = -INFINITY;
  cr_expect_eq(ff_rg_distinct(x, 64), distinct_by_definition(x, 64));
  for (size_t cap = 1; cap <= 4; cap++)
    cr_expect_eq(ff_rg_distinct_upto(x, 64, cap), cap);
  x[0] = NAN;
  x[1] = x[2] = 0.02;
  cr_expect_eq(ff_rg_distinct_upto(x, 3, 3), distinct_by_definition(x, 3));
}

/* The refits run on the worker pool in blocks of draws; the summary must
 * be exactly that of the plain loop, draw by draw with one generator (i
 * then m for each point), which is written out here. 150 draws cross two
 * block boundaries; a large u(m) at the smallest molality makes some draws
 * invalid (m <= 0), so the skipped draws are exercised too. */
Test(regress, monte_carlo_equals_draw_by_draw_loop, .init = setup)
{
  struct salt s;
  struct ff_mc_summary mc;
  struct ff_diag d = FF_DIAG_INIT;
  struct ff_regress_opts o = FF_REGRESS_OPTS_DEFAULT;
  double um[8], mi[8], ii[8], lim[150];
  const size_t draws = 150;
  const unsigned long seed = 424242UL;
  size_t n_ok = 0, invalid = 0;

  load_salt("NaCl", &s);
  for (size_t k = 0; k < s.n; k++) {
    s.u[k] = 0.004;
    um[k] = 1e-4 * s.m[k];
  }
  um[0] = 0.5 * s.m[0];   /* about 2 % of the draws give m <= 0 */
  struct ff_regress_input in = salt_input(&s, 0);
  in.u_m_mol_kg = um;
  cr_assert_eq(ff_regress_monte_carlo(&in, FF_REGRESS_SQRT_LINEAR, NULL,
                                      draws, seed, &mc, &d), FF_OK, "%s",
               d.msg);

  /* The reference loop, options as the Monte Carlo sets them. */
  o.cov = FF_COV_ABSOLUTE;
  gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
  cr_assert_not_null(r);
  gsl_rng_set(r, seed);
  struct ff_regress_input pin = in;
  pin.m_mol_kg = mi;
  pin.i_obs = ii;
  pin.u_m_mol_kg = NULL;
  for (size_t k = 0; k < draws; k++) {
    int valid = 1;
    for (size_t i = 0; i < in.n; i++) {
      ii[i] = in.i_obs[i] + gsl_ran_gaussian(r, in.u_i[i]);
      mi[i] = in.m_mol_kg[i] + gsl_ran_gaussian(r, um[i]);
      valid = valid && mi[i] > 0.0;
    }
    struct ff_fit f = FF_FIT_INIT;
    struct ff_diag dq = FF_DIAG_INIT;
    if (valid && ff_regress_fit_model(&pin, FF_REGRESS_SQRT_LINEAR, &o, &f,
                                      &dq) == FF_OK)
      lim[n_ok++] = f.i_limit;
    invalid += !valid;
    ff_fit_release(&f);
  }
  gsl_rng_free(r);
  cr_expect_gt(invalid, 0, "some draws must be invalid for this check");
  cr_expect_eq(mc.n_draws, draws);
  cr_expect_eq(mc.n_ok, n_ok);
  /* Same draws, same fits, same order of summation: exactly equal. */
  gsl_sort(lim, 1, n_ok);
  double mean = gsl_stats_mean(lim, 1, n_ok);
  cr_expect_float_eq(mc.mean, mean, 0.0, "mean %.17g vs %.17g", mc.mean,
                     mean);
  cr_expect_float_eq(mc.sd, gsl_stats_sd_m(lim, 1, n_ok, mean), 0.0);
  cr_expect_float_eq(mc.median,
                     gsl_stats_median_from_sorted_data(lim, 1, n_ok), 0.0);
  cr_expect_float_eq(mc.q_hi, gsl_stats_quantile_from_sorted_data(
                                lim, 1, n_ok, 0.975), 0.0);
  cr_expect_gt(mc.sd, 0.0);
}
