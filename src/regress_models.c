/* regress_models.c - regression stage: the i(m) models (sqrt line,
 * Debye-Huckel anchored, ion pairing, monomer-dimer association), their
 * fits, the model comparison and the Monte Carlo check. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_math.h>
#include <gsl/gsl_multifit_nlinear.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>
#include <gsl/gsl_roots.h>
#include <gsl/gsl_sort.h>
#include <gsl/gsl_statistics_double.h>

#include "frostfit/parallel.h"
#include "regress_impl.h"

/* |ln K| beyond this means the constant is not determined by the data. */
#define LNK_MAX 25.0

const char *ff_regress_model_name(enum ff_regress_model m)
{
  switch (m) {
  case FF_REGRESS_SQRT_LINEAR: return "sqrt_linear";
  case FF_REGRESS_DEBYE_HUCKEL: return "debye_huckel";
  case FF_REGRESS_DH_FIXED_NU: return "debye_huckel_fixed_nu";
  case FF_REGRESS_ION_PAIRING: return "ion_pairing";
  case FF_REGRESS_ASSOCIATION: return "association";
  case FF_REGRESS_NMODELS: break;
  }
  return "?";
}

void ff_fit_release(struct ff_fit *f)
{
  if (!f)
    return;
  free(f->resid);
  memset(f, 0, sizeof *f);
}

void ff_regress_result_release(struct ff_regress_result *r)
{
  if (!r)
    return;
  for (int k = 0; k < FF_REGRESS_NMODELS; k++)
    ff_fit_release(&r->fit[k]);
  memset(r, 0, sizeof *r);
}

/* ---- physics --------------------------------------------------------- */

static double zz_of(const struct ff_particles *p)
{
  return p->nu > 1 ? fabs((double)p->z_plus * (double)p->z_minus) : 0.0;
}

/* I/m = (nu+ z+^2 + nu- z-^2)/2 */
static double omega_of(const struct ff_particles *p)
{
  if (p->nu < 2)
    return 0.0;
  double zp = (double)p->z_plus, zm = (double)p->z_minus;
  return 0.5 * ((double)p->nu_plus * zp * zp + (double)p->nu_minus * zm * zm);
}

/* Pitzer's Debye-Huckel osmotic term: phi_DH = 1 - |z+z-| A sqrt(I)/(1 +
 * b sqrt(I)) (Pitzer 1991, ch. 3; REFERENCES.md sec. 4.1). */
static double phi_dh(double zz, double a_phi, double b, double ionic)
{
  double s = sqrt(ionic);
  return 1.0 - zz * a_phi * s / (1.0 + b * s);
}

/* The matching activity term, ln gamma+- = |z+z-| f^gamma with f^gamma =
 * -A [sqrt I/(1 + b sqrt I) + (2/b) ln(1 + b sqrt I)] (Pitzer 1991, ch. 3);
 * it is the Gibbs-Duhem partner of phi_dh. b = 0 gives the limiting law
 * ln gamma = -3 A |z+z-| sqrt I. */
static double ln_gamma_dh(double zz, double a_phi, double b, double ionic)
{
  double s = sqrt(ionic);
  double tail = b > 0.0 ? (2.0 / b) * log1p(b * s) : 2.0 * s;
  return -zz * a_phi * (s / (1.0 + b * s) + tail);
}

struct pair_ctx { double k, m, zz, omega, a_phi, b; };

static double pair_eq(double alpha, void *vp)
{
  const struct pair_ctx *c = vp;
  double free_frac = 1.0 - alpha;
  double lg = ln_gamma_dh(c->zz, c->a_phi, c->b, c->omega * c->m * free_frac);
  return alpha - c->k * c->m * free_frac * free_frac * exp(2.0 * lg);
}

/* Degree of pairing alpha from K_A = alpha/((1-alpha)^2 m gamma^2), gamma
 * of the free ions at I = omega m (1 - alpha). pair_eq rises from -K m
 * gamma0^2 < 0 at alpha = 0 to 1 at alpha = 1, so Brent brackets it. */
static int pair_alpha(const struct pair_ctx *c, double *alpha)
{
  if (!(c->k * c->m > 0.0) || !isfinite(c->k)) {
    *alpha = 0.0;
    return isfinite(c->k) ? 0 : -1;
  }
  gsl_function F = { pair_eq, (void *)c };
  gsl_root_fsolver *s = gsl_root_fsolver_alloc(gsl_root_fsolver_brent);
  if (!s)
    return -1;
  int st = gsl_root_fsolver_set(s, &F, 0.0, 1.0);
  int it = 0;
  double lo = 0.0, hi = 1.0;
  while (st == GSL_SUCCESS && it++ < 200) {
    st = gsl_root_fsolver_iterate(s);
    lo = gsl_root_fsolver_x_lower(s);
    hi = gsl_root_fsolver_x_upper(s);
    if (st == GSL_SUCCESS && gsl_root_test_interval(lo, hi, 1e-15, 1e-13) ==
                               GSL_SUCCESS)
      break;
  }
  int ok = st == GSL_SUCCESS && it <= 200;
  *alpha = gsl_root_fsolver_root(s);
  gsl_root_fsolver_free(s);
  return ok && isfinite(*alpha) ? 0 : -1;
}

/* i for a symmetric salt with pairing: 2(1 - alpha) phi_DH(I_free) + alpha
 * (+ nu B m): free ions carry the DH osmotic coefficient, the neutral pair
 * counts as one ideal particle. */
static int pairing_i(const struct ff_particles *p, double a_phi, double b,
                     double k, double bterm, double m, double *i_out)
{
  struct pair_ctx c = { k, m, zz_of(p), omega_of(p), a_phi, b };
  double alpha;
  if (pair_alpha(&c, &alpha) != 0)
    return -1;
  double nu = (double)p->nu;
  double ionic = c.omega * m * (1.0 - alpha);
  *i_out = nu * (1.0 - alpha) * phi_dh(c.zz, a_phi, b, ionic) + alpha +
           nu * bterm * m;
  return isfinite(*i_out) ? 0 : -1;
}

/* Monomer-dimer 2A = A2, K2 = m_d/m_1^2, m = m_1 + 2 m_d: m_1 =
 * 2m/(1 + sqrt(1 + 8 K2 m)) (the cancellation-free root), i = (m_1 +
 * m_d)/m. */
static double assoc_i(double k2, double m)
{
  double m1 = 2.0 * m / (1.0 + sqrt(1.0 + 8.0 * k2 * m));
  return (m1 + k2 * m1 * m1) / m;
}

int ff_regress_eval(const struct ff_fit *f, double m, double *i_out)
{
  if (!f || f->status != FF_OK || !f->attempted || !(m > 0.0) ||
      !isfinite(m))
    return FF_EUNTRUSTED;
  const struct ff_particles *p = &f->p;
  double zz = zz_of(p), om = omega_of(p), g, nu = (double)p->nu;

  switch (f->model) {
  case FF_REGRESS_SQRT_LINEAR:
    *i_out = f->par[0] + f->par[1] * sqrt(m);
    break;
  case FF_REGRESS_DEBYE_HUCKEL:
    g = phi_dh(zz, f->a_phi, f->b_kg_mol, om * m);
    *i_out = f->par[0] * g + f->par[1] * m +
             (f->virial_terms > 1 ? f->par[2] * m * m : 0.0);
    break;
  case FF_REGRESS_DH_FIXED_NU:
    g = phi_dh(zz, f->a_phi, f->b_kg_mol, om * m);
    *i_out = nu * (g + f->par[0] * m +
                   (f->virial_terms > 1 ? f->par[1] * m * m : 0.0));
    break;
  case FF_REGRESS_ION_PAIRING:
    if (pairing_i(p, f->a_phi, f->b_kg_mol, exp(f->par[0]),
                  f->npar > 1 ? f->par[1] : 0.0, m, i_out) != 0)
      return FF_EUNTRUSTED;
    break;
  case FF_REGRESS_ASSOCIATION:
    *i_out = assoc_i(exp(f->par[0]), m);
    break;
  default:
    return FF_EUNTRUSTED;
  }
  return isfinite(*i_out) ? FF_OK : FF_EUNTRUSTED;
}

int ff_regress_eval_u(const struct ff_fit *f, double m, double *i_out,
                      double *u_out)
{
  double g[FF_REGRESS_MAXPAR] = { 0 }, var = 0.0;
  struct ff_fit w;
  int st = ff_regress_eval(f, m, i_out);

  if (st != FF_OK)
    return st;
  w = *f;   /* shallow copy: only par[] is changed, nothing is freed */
  for (size_t j = 0; j < f->npar; j++) {
    double h = 1e-6 * fmax(1.0, fabs(f->par[j])), ip, im;
    w.par[j] = f->par[j] + h;
    int a = ff_regress_eval(&w, m, &ip);
    w.par[j] = f->par[j] - h;
    int b = ff_regress_eval(&w, m, &im);
    w.par[j] = f->par[j];
    if (a != FF_OK || b != FF_OK)
      return FF_EUNTRUSTED;
    g[j] = (ip - im) / (2.0 * h);
  }
  for (size_t j = 0; j < f->npar; j++)
    for (size_t k = 0; k < f->npar; k++)
      var += g[j] * f->cov[j][k] * g[k];
  *u_out = var > 0.0 ? sqrt(var) : 0.0;
  return isfinite(*u_out) ? FF_OK : FF_EUNTRUSTED;
}

/* ---- shared fit plumbing --------------------------------------------- */

static void fit_begin(struct ff_fit *f, const struct ff_regress_input *in,
                      enum ff_regress_model model,
                      const struct ff_regress_opts *o)
{
  ff_fit_release(f);
  f->model = model;
  f->attempted = 1;
  f->p = in->p;
  f->a_phi = in->a_phi;
  f->b_kg_mol = o->b_kg_mol;
  f->n = in->n;
}

static void set_names(struct ff_fit *f, size_t np, const char *const *names)
{
  f->npar = np;
  for (size_t j = 0; j < np; j++)
    snprintf(f->par_name[j], sizeof f->par_name[j], "%s", names[j]);
}

/* Residuals, chi2 and sumsq from the fitted curve. */
static int fit_residuals(struct ff_fit *f, const struct ff_regress_input *in)
{
  f->status = FF_OK; /* ff_regress_eval needs it; reset by a failure */
  f->resid = malloc(in->n * sizeof *f->resid);
  if (!f->resid)
    return -1;
  f->chi2 = f->sumsq = 0.0;
  for (size_t i = 0; i < in->n; i++) {
    double yi;
    if (ff_regress_eval(f, in->m_mol_kg[i], &yi) != FF_OK)
      return -1;
    double r = in->i_obs[i] - yi;
    double u = in->u_i ? in->u_i[i] : 1.0;
    f->resid[i] = r;
    f->sumsq += r * r;
    f->chi2 += (r / u) * (r / u);
  }
  return 0;
}

static int need_points(struct ff_fit *f, const struct ff_regress_input *in,
                       size_t np, size_t distinct_needed, struct ff_diag *d)
{
  if (in->n <= np)
    return ff_rg_fail(f, d, "%zu points for %zu parameters: need at least "
                      "%zu for one degree of freedom", in->n, np, np + 1);
  size_t k = ff_rg_distinct_upto(in->m_mol_kg, in->n, distinct_needed);
  if (k < distinct_needed)
    return ff_rg_fail(f, d, "runs at only %zu distinct molalit%s, need %zu",
                      k, k == 1 ? "y" : "ies", distinct_needed);
  return FF_OK;
}

/* Finish a fit whose par and unscaled cov are set. */
static int fit_end(struct ff_fit *f, const struct ff_regress_input *in,
                   const struct ff_regress_opts *o, struct ff_diag *d)
{
  if (fit_residuals(f, in) != 0)
    return ff_rg_fail(f, d, "model could not be evaluated at the data");
  if (ff_rg_finish(f, in->u_i != NULL, o) != 0)
    return ff_rg_fail(f, d, "fit produced non-finite statistics");
  return FF_OK;
}

/* ---- linear models --------------------------------------------------- */

/* Fits the linear model with design columns built by the model kind.
 * terms: DH virial terms (1 or 2). */
static int fit_linear(const struct ff_regress_input *in,
                      enum ff_regress_model model, int terms,
                      const struct ff_regress_opts *o, struct ff_fit *f,
                      struct ff_diag *d)
{
  static const char *const sqrt_names[] = { "a", "c" };
  static const char *const dh_names[] = { "nu", "nuB", "nuC" };
  static const char *const fix_names[] = { "B", "C" };
  size_t n = in->n, np;
  double zz = zz_of(&in->p), om = omega_of(&in->p), nu = (double)in->p.nu;
  char why[FF_REGRESS_REASON];

  fit_begin(f, in, model, o);
  if (model == FF_REGRESS_SQRT_LINEAR)
    set_names(f, np = 2, sqrt_names);
  else if (model == FF_REGRESS_DEBYE_HUCKEL)
    set_names(f, np = 1 + (size_t)terms, dh_names);
  else
    set_names(f, np = (size_t)terms, fix_names);
  f->virial_terms = model == FF_REGRESS_SQRT_LINEAR ? 0 : terms;
  /* distinct molalities: one per column for full rank, and at least two
   * for any trend to extrapolate (one molality says nothing about m -> 0) */
  if (need_points(f, in, np, np > 2 ? np : 2, d) != FF_OK)
    return FF_EUNTRUSTED;

  double *X = malloc(n * (np + 1) * sizeof *X);
  if (!X)
    return ff_rg_fail(f, d, "out of memory");
  double *y = X + n * np;
  for (size_t i = 0; i < n; i++) {
    double m = in->m_mol_kg[i], *row = X + i * np;
    double g = phi_dh(zz, in->a_phi, o->b_kg_mol, om * m);
    y[i] = in->i_obs[i];
    if (model == FF_REGRESS_SQRT_LINEAR) {
      row[0] = 1.0;
      row[1] = sqrt(m);
    } else if (model == FF_REGRESS_DEBYE_HUCKEL) {
      row[0] = g;
      row[1] = m;
      if (terms > 1)
        row[2] = m * m;
    } else { /* i - nu g = nu B m + nu C m^2 */
      y[i] -= nu * g;
      row[0] = nu * m;
      if (terms > 1)
        row[1] = nu * m * m;
    }
  }
  int rc = ff_rg_wlinear(X, y, in->u_i, n, np, f->par, f->cov, &f->chi2, why,
                         sizeof why);
  free(X);
  if (rc != 0)
    return ff_rg_fail(f, d, "%s", why);
  if (fit_end(f, in, o, d) != FF_OK)
    return FF_EUNTRUSTED;

  if (model == FF_REGRESS_DH_FIXED_NU) {
    f->i_limit = nu;
    f->ci_limit[0] = f->ci_limit[1] = nu;
    f->limit_fixed = 1;
  } else {
    f->i_limit = f->par[0];
    f->u_i_limit = f->se[0];
    f->ci_limit[0] = f->ci_lo[0];
    f->ci_limit[1] = f->ci_hi[0];
  }
  if (model == FF_REGRESS_SQRT_LINEAR && in->p.nu > 1)
    snprintf(f->note, sizeof f->note, "empirical reference only: a straight "
             "line in sqrt(m) misses the Debye-Huckel curvature and biases "
             "the limit low");
  return FF_OK;
}

/* ---- nonlinear models ------------------------------------------------ */

struct nl_ctx {
  const struct ff_regress_input *in;
  enum ff_regress_model model;
  double b;
  int bad;
};

static int nl_model(const struct nl_ctx *c, const double *x, double m,
                    double *i_out)
{
  if (!isfinite(x[0]) || !isfinite(x[1]))
    return -1;
  /* A trial step may wander far; clamping keeps exp() finite and leaves a
   * flat valley, which the LNK_MAX check after convergence reports. */
  double k = exp(fmin(fmax(x[0], -300.0), 300.0));
  if (c->model == FF_REGRESS_ASSOCIATION) {
    *i_out = assoc_i(k, m);
    return isfinite(*i_out) ? 0 : -1;
  }
  return pairing_i(&c->in->p, c->in->a_phi, c->b, k,
                   x[1], m, i_out);
}

struct nl_user { struct nl_ctx c; size_t p; };

static int nl_f(const gsl_vector *x, void *params, gsl_vector *f)
{
  struct nl_user *u = params;
  double xv[2] = { gsl_vector_get(x, 0),
                   u->p > 1 ? gsl_vector_get(x, 1) : 0.0 };
  for (size_t i = 0; i < u->c.in->n; i++) {
    double yi;
    if (nl_model(&u->c, xv, u->c.in->m_mol_kg[i], &yi) != 0) {
      u->c.bad = 1;
      return GSL_EBADFUNC;
    }
    gsl_vector_set(f, i, yi - u->c.in->i_obs[i]);
  }
  return GSL_SUCCESS;
}

static double chi2_at(struct nl_user *u, const double *x)
{
  double s = 0.0;
  for (size_t i = 0; i < u->c.in->n; i++) {
    double yi, w = u->c.in->u_i ? u->c.in->u_i[i] : 1.0;
    if (nl_model(&u->c, x, u->c.in->m_mol_kg[i], &yi) != 0)
      return HUGE_VAL;
    s += gsl_pow_2((yi - u->c.in->i_obs[i]) / w);
  }
  return s;
}

/*
 * Association only: K2 -> 0 is the solution without dimers (i = 1). When
 * fitting K2 does not improve on K2 = 0 significantly (F-test at
 * o->f_alpha), association is not detected and the fit is refused with
 * the statistic, so a flat i(m) is never reported as a dimerising solute.
 * A test on the size of ln K2 alone was a knife edge: on the demo's urea
 * (i flat within 6e-4) a change of 1e-15 K in one freezing point moved
 * the solver's stopping point across the limit and the model in and out
 * of the preferred slot. Ion pairing keeps the ln K limit: a pairing
 * constant that does not pass this test can still be a fair estimate
 * (MgSO4 on Pitzer-model values: K_A 177 kg/mol, F = 2.5 against full
 * dissociation with a B term), and its model is compared by AICc.
 */
static int constant_not_detected(struct nl_user *u, struct ff_fit *f,
                                 const struct ff_regress_opts *o,
                                 struct ff_diag *d)
{
  double x[2] = { f->par[0], 0.0 };
  double c2 = chi2_at(u, x), c2_zero, dof = (double)(u->c.in->n - u->p);
  double F, p;

  x[0] = -300.0;               /* nl_model's clamp: K = 5e-131 */
  c2_zero = chi2_at(u, x);
  if (!isfinite(c2) || !isfinite(c2_zero) || !(dof > 0.0) || !(c2 > 0.0))
    return FF_OK;              /* no test possible: the other checks judge */
  F = fmax(c2_zero - c2, 0.0) / (c2 / dof);
  p = gsl_cdf_fdist_Q(F, 1.0, dof);
  if (p < o->f_alpha)
    return FF_OK;
  if (fabs(f->par[0]) <= LNK_MAX)
    return ff_rg_fail(f, d, "K2 not detected: the data do not tell it from "
                      "0 (best fit %.3g kg/mol; F = %.2f, p = %.2f against "
                      "no association)", exp(f->par[0]), F, p);
  return ff_rg_fail(f, d, "K2 not detected: the data do not tell it from 0 "
                    "(F = %.2f, p = %.2f against no association)", F, p);
}

static int fit_nonlinear(const struct ff_regress_input *in,
                         enum ff_regress_model model,
                         const struct ff_regress_opts *o, struct ff_fit *f,
                         struct ff_diag *d)
{
  static const char *const pair_names[] = { "lnK_A", "B" };
  static const char *const assoc_names[] = { "lnK2" };
  size_t n = in->n, np;
  struct nl_user u = { { in, model, o->b_kg_mol, 0 }, 0 };

  fit_begin(f, in, model, o);
  if (model == FF_REGRESS_ION_PAIRING) {
    set_names(f, np = o->pairing_b ? 2 : 1, pair_names);
    if (in->p.nu < 2)
      return ff_rg_fail(f, d, "ion pairing needs an electrolyte (nu >= 2)");
    if (in->p.nu_plus != 1 || in->p.nu_minus != 1)
      return ff_rg_fail(f, d, "ion pairing is implemented for symmetric "
                        "salts (one cation, one anion) only");
  } else {
    set_names(f, np = 1, assoc_names);
    if (in->p.nu != 1)
      return ff_rg_fail(f, d, "monomer-dimer association is for a "
                        "non-electrolyte (nu = 1)");
  }
  u.p = np;
  if (need_points(f, in, np, np + 1, d) != FF_OK)
    return FF_EUNTRUSTED;

  /* Start from the best of a coarse ln K scan, so the local trust-region
   * solver does not settle in a far-off valley. */
  double x0[2] = { log(model == FF_REGRESS_ION_PAIRING ? o->k_a_start_kg_mol
                                                       : o->k2_start_kg_mol),
                   0.0 };
  double best = chi2_at(&u, x0);
  for (double lk = -6.0; lk <= 12.0; lk += 1.0) {
    double xt[2] = { lk, 0.0 }, c2 = chi2_at(&u, xt);
    if (c2 < best) {
      best = c2;
      x0[0] = lk;
    }
  }
  if (!isfinite(best))
    return ff_rg_fail(f, d, "model cannot be evaluated at the start values");

  gsl_vector_view xv = gsl_vector_view_array(x0, np);
  gsl_vector *wts = gsl_vector_alloc(n);
  gsl_matrix *covar = gsl_matrix_alloc(np, np);
  gsl_multifit_nlinear_parameters fp = gsl_multifit_nlinear_default_parameters();
  gsl_multifit_nlinear_workspace *w =
    gsl_multifit_nlinear_alloc(gsl_multifit_nlinear_trust, &fp, n, np);
  gsl_multifit_nlinear_fdf fdf = { 0 };
  int info = 0, st;

  if (!wts || !covar || !w) {
    st = ff_rg_fail(f, d, "out of memory");
    goto out;
  }
  fdf.f = nl_f;
  fdf.df = NULL;   /* forward-difference Jacobian */
  fdf.fvv = NULL;
  fdf.n = n;
  fdf.p = np;
  fdf.params = &u;
  for (size_t i = 0; i < n; i++)
    gsl_vector_set(wts, i, in->u_i ? 1.0 / gsl_pow_2(in->u_i[i]) : 1.0);
  st = gsl_multifit_nlinear_winit(&xv.vector, wts, &fdf, w);
  if (st == GSL_SUCCESS)
    st = gsl_multifit_nlinear_driver(o->max_iter, o->xtol, 1e-12, 0.0, NULL,
                                     NULL, &info, w);
  if (st != GSL_SUCCESS || u.c.bad) {
    st = ff_rg_fail(f, d, "nonlinear fit did not converge (%s)",
                    u.c.bad ? "model failed at a trial value"
                            : gsl_strerror(st));
    goto out;
  }
  const gsl_vector *xs = gsl_multifit_nlinear_position(w);
  for (size_t j = 0; j < np; j++)
    f->par[j] = gsl_vector_get(xs, j);
  if (model == FF_REGRESS_ASSOCIATION &&
      constant_not_detected(&u, f, o, d) != FF_OK) {
    st = FF_EUNTRUSTED;
    goto out;
  }
  if (fabs(f->par[0]) > LNK_MAX) {
    st = ff_rg_fail(f, d, "%s not determined by the data (ln K -> %s)",
                    model == FF_REGRESS_ION_PAIRING ? "K_A" : "K2",
                    f->par[0] > 0 ? "+infinity" : "-infinity");
    goto out;
  }
  st = gsl_multifit_nlinear_covar(gsl_multifit_nlinear_jac(w), 0.0, covar);
  if (st != GSL_SUCCESS) {
    st = ff_rg_fail(f, d, "covariance failed: %s", gsl_strerror(st));
    goto out;
  }
  for (size_t j = 0; j < np; j++)
    for (size_t k = 0; k < np; k++)
      f->cov[j][k] = gsl_matrix_get(covar, j, k);
  st = fit_end(f, in, o, d);
  if (st != FF_OK)
    goto out;
  /* ln K has near-symmetric errors; K = exp(ln K) with the interval mapped
   * through exp and u(K) = K u(ln K) to first order. */
  f->k_kg_mol = exp(f->par[0]);
  f->u_k_kg_mol = f->k_kg_mol * f->se[0];
  f->ci_k[0] = exp(f->ci_lo[0]);
  f->ci_k[1] = exp(f->ci_hi[0]);
  f->i_limit = model == FF_REGRESS_ION_PAIRING ? (double)in->p.nu : 1.0;
  f->ci_limit[0] = f->ci_limit[1] = f->i_limit;
  f->limit_fixed = 1;
  if (!isfinite(f->u_k_kg_mol) || !isfinite(f->ci_k[1]))
    st = ff_rg_fail(f, d, "association constant interval not finite");
out:
  gsl_multifit_nlinear_free(w);
  gsl_matrix_free(covar);
  gsl_vector_free(wts);
  return st;
}

/* ---- public fits ----------------------------------------------------- */

static const struct ff_regress_opts default_opts = FF_REGRESS_OPTS_DEFAULT;

/* DH free nu with the virial terms chosen per o; sets *terms_used and the
 * F-test of B vs B + C. */
static int fit_dh_free(const struct ff_regress_input *in,
                       const struct ff_regress_opts *o, struct ff_fit *f,
                       struct ff_ftest *vt, struct ff_diag *d)
{
  memset(vt, 0, sizeof *vt);
  if (o->virial_terms != 0)
    return fit_linear(in, FF_REGRESS_DEBYE_HUCKEL, o->virial_terms, o, f, d);
  int st = fit_linear(in, FF_REGRESS_DEBYE_HUCKEL, 1, o, f, d);
  struct ff_fit f2 = FF_FIT_INIT;
  struct ff_diag d2 = FF_DIAG_INIT;   /* the wider model may fail quietly */
  if (fit_linear(in, FF_REGRESS_DEBYE_HUCKEL, 2, o, &f2, &d2) == FF_OK) {
    ff_rg_ftest(f, &f2, o->f_alpha, vt);
    if (st != FF_OK || (vt->done && vt->reject_restricted)) {
      ff_fit_release(f);
      *f = f2;            /* takes the residual array */
      return FF_OK;
    }
  }
  ff_fit_release(&f2);
  return st;
}

int ff_regress_fit_model(const struct ff_regress_input *in,
                         enum ff_regress_model model,
                         const struct ff_regress_opts *o, struct ff_fit *out,
                         struct ff_diag *d)
{
  struct ff_ftest vt;
  int st;

  if (!o)
    o = &default_opts;
  ff_fit_release(out);
  if ((st = ff_rg_check_input(in, d)) != FF_OK ||
      (st = ff_rg_check_opts(o, d)) != FF_OK)
    return st;
  switch (model) {
  case FF_REGRESS_SQRT_LINEAR:
    return fit_linear(in, model, 0, o, out, d);
  case FF_REGRESS_DEBYE_HUCKEL:
    return fit_dh_free(in, o, out, &vt, d);
  case FF_REGRESS_DH_FIXED_NU: {
    /* terms as the free-nu model would choose, unless fixed by o */
    int terms = o->virial_terms;
    if (terms == 0) {
      struct ff_fit tmp = FF_FIT_INIT;
      struct ff_diag dq = FF_DIAG_INIT;
      terms = fit_dh_free(in, o, &tmp, &vt, &dq) == FF_OK
                ? tmp.virial_terms : 1;
      ff_fit_release(&tmp);
    }
    return fit_linear(in, model, terms, o, out, d);
  }
  case FF_REGRESS_ION_PAIRING:
  case FF_REGRESS_ASSOCIATION:
    return fit_nonlinear(in, model, o, out, d);
  case FF_REGRESS_NMODELS:
    break;
  }
  return ff_diag_set(d, FF_EUSAGE, NULL, "regression: unknown model %d",
                     (int)model);
}

int ff_regress_solute(const struct ff_regress_input *in,
                      const struct ff_regress_opts *o,
                      struct ff_regress_result *out, struct ff_diag *d)
{
  int st;
  struct ff_diag dq = FF_DIAG_INIT;   /* per-model failures stay in fits */

  if (!o)
    o = &default_opts;
  ff_regress_result_release(out);
  if ((st = ff_rg_check_input(in, d)) != FF_OK ||
      (st = ff_rg_check_opts(o, d)) != FF_OK)
    return st;

  for (int k = 0; k < FF_REGRESS_NMODELS; k++)
    out->fit[k].model = (enum ff_regress_model)k;
  unsigned want = o->models;
  /* The fixed-nu model is fitted whenever the free one is, for the test. */
  if (want & FF_REGRESS_BIT(FF_REGRESS_DEBYE_HUCKEL))
    want |= FF_REGRESS_BIT(FF_REGRESS_DH_FIXED_NU);
  /* Models that do not apply to this solute are left unattempted. */
  if (in->p.nu < 2)
    want &= ~FF_REGRESS_BIT(FF_REGRESS_ION_PAIRING);
  else
    want &= ~FF_REGRESS_BIT(FF_REGRESS_ASSOCIATION);

  if (want & FF_REGRESS_BIT(FF_REGRESS_SQRT_LINEAR))
    fit_linear(in, FF_REGRESS_SQRT_LINEAR, 0, o,
               &out->fit[FF_REGRESS_SQRT_LINEAR], &dq);
  if (want & FF_REGRESS_BIT(FF_REGRESS_DEBYE_HUCKEL))
    fit_dh_free(in, o, &out->fit[FF_REGRESS_DEBYE_HUCKEL], &out->virial_test,
                &dq);
  if (want & FF_REGRESS_BIT(FF_REGRESS_DH_FIXED_NU)) {
    const struct ff_fit *fr = &out->fit[FF_REGRESS_DEBYE_HUCKEL];
    int terms = o->virial_terms ? o->virial_terms
                : (fr->status == FF_OK ? fr->virial_terms : 1);
    fit_linear(in, FF_REGRESS_DH_FIXED_NU, terms, o,
               &out->fit[FF_REGRESS_DH_FIXED_NU], &dq);
    ff_rg_ftest(&out->fit[FF_REGRESS_DH_FIXED_NU],
                &out->fit[FF_REGRESS_DEBYE_HUCKEL], o->f_alpha,
                &out->nu_test);
  }
  if (want & FF_REGRESS_BIT(FF_REGRESS_ION_PAIRING))
    fit_nonlinear(in, FF_REGRESS_ION_PAIRING, o,
                  &out->fit[FF_REGRESS_ION_PAIRING], &dq);
  if (want & FF_REGRESS_BIT(FF_REGRESS_ASSOCIATION))
    fit_nonlinear(in, FF_REGRESS_ASSOCIATION, o,
                  &out->fit[FF_REGRESS_ASSOCIATION], &dq);

  /* Preferred model: smallest AICc, or AIC when some fit has no AICc (too
   * few points for the small-sample correction). */
  int all_c = 1, any = 0;
  for (int k = 0; k < FF_REGRESS_NMODELS; k++)
    if (out->fit[k].status == FF_OK && out->fit[k].attempted) {
      any = 1;
      all_c = all_c && out->fit[k].has_aicc;
    }
  if (!any) {
    const char *why = "no model requested";
    for (int k = 0; k < FF_REGRESS_NMODELS; k++)
      if (out->fit[k].attempted) {
        why = out->fit[k].reason;
        break;
      }
    return ff_diag_set(d, FF_EUNTRUSTED, NULL, "no model could be fitted: %s",
                       why);
  }
  snprintf(out->criterion, sizeof out->criterion, "%s", all_c ? "AICc" : "AIC");
  double best = HUGE_VAL;
  for (int k = 0; k < FF_REGRESS_NMODELS; k++) {
    const struct ff_fit *f = &out->fit[k];
    if (f->status != FF_OK || !f->attempted)
      continue;
    double c = all_c ? f->aicc : f->aic;
    if (c < best) {
      best = c;
      out->preferred = (enum ff_regress_model)k;
      out->has_preferred = 1;
    }
  }

  /* Particle count from the free-limit model. */
  const struct ff_fit *pf = &out->fit[FF_REGRESS_DEBYE_HUCKEL];
  if (pf->status != FF_OK || !pf->attempted)
    pf = &out->fit[FF_REGRESS_SQRT_LINEAR];
  if (pf->status == FF_OK && pf->attempted) {
    out->has_particles = 1;
    out->particles_model = pf->model;
    out->particles_nearest = lround(pf->i_limit);
    double nn = (double)out->particles_nearest;
    out->particles_in_ci = out->particles_nearest >= 1 &&
                           pf->ci_limit[0] <= nn && nn <= pf->ci_limit[1];
    out->particles_by_ftest = !out->particles_in_ci
                              && out->particles_nearest >= 1
                              && out->particles_nearest == (long)in->p.nu
                              && out->nu_test.done
                              && !out->nu_test.reject_restricted;
    out->particles_inferred = out->particles_in_ci || out->particles_by_ftest
                              ? out->particles_nearest : 0;
    if (in->p.nu > 1) {
      struct ff_diag da = FF_DIAG_INIT;
      out->has_alpha = ff_regress_alpha(pf->i_limit, pf->u_i_limit,
                                        in->p.nu, &out->alpha,
                                        &out->u_alpha, &da) == FF_OK;
    }
  }
  return FF_OK;
}

/* ---- Monte Carlo ----------------------------------------------------- */

/* Refits per block of draws: bounds the draws kept at once (block x 2n
 * values) while giving the pool enough items to share. */
#define MC_BLOCK 64

/* One block of draws: draws[k] holds m then i for draw k (n each); a
 * worker refits draw k and writes only ok[k] and lim[k]. */
struct mc_refits {
  const struct ff_regress_input *in;
  enum ff_regress_model model;
  const struct ff_regress_opts *o;
  const double *draws;
  unsigned char *ok;     /* in: the draw is valid (every m > 0); out: and
                            its refit succeeded */
  double *lim;           /* i_limit of each refit */
};

static void mc_refit(void *ctx, size_t k)
{
  const struct mc_refits *j = ctx;
  struct ff_regress_input pin = *j->in;
  struct ff_fit f = FF_FIT_INIT;
  struct ff_diag dq = FF_DIAG_INIT;

  if (!j->ok[k])
    return;
  pin.m_mol_kg = j->draws + k * 2 * pin.n;
  pin.i_obs = pin.m_mol_kg + pin.n;
  pin.u_m_mol_kg = NULL;
  if (ff_regress_fit_model(&pin, j->model, j->o, &f, &dq) == FF_OK)
    j->lim[k] = f.i_limit;
  else
    j->ok[k] = 0;
  ff_fit_release(&f);
}

int ff_regress_monte_carlo(const struct ff_regress_input *in,
                           enum ff_regress_model model,
                           const struct ff_regress_opts *o, size_t n_draws,
                           unsigned long seed, struct ff_mc_summary *out,
                           struct ff_diag *d)
{
  struct ff_regress_opts oa;
  struct ff_fit base = FF_FIT_INIT;
  int st;

  memset(out, 0, sizeof *out);
  oa = o ? *o : default_opts;
  oa.cov = FF_COV_ABSOLUTE;   /* what the draws reproduce: u_i alone */
  if (!in || !in->u_i)
    return ff_diag_set(d, FF_EINPUT, NULL, "Monte Carlo needs the "
                       "uncertainties of i");
  /* u(m) is used only here, so it is checked only here: a missing u(m)
   * must not stop the fits themselves. */
  for (size_t i = 0; in->u_m_mol_kg && i < in->n; i++)
    if (!(isfinite(in->u_m_mol_kg[i]) && in->u_m_mol_kg[i] >= 0.0))
      return ff_diag_set(d, FF_EINPUT, NULL, "Monte Carlo: point %zu: "
                         "uncertainty of m must be a number >= 0", i + 1);
  if (n_draws < 10)
    return ff_diag_set(d, FF_EUSAGE, NULL, "Monte Carlo needs at least 10 "
                       "draws, got %zu", n_draws);
  st = ff_regress_fit_model(in, model, &oa, &base, d);
  if (st != FF_OK)
    return st;
  if (base.limit_fixed) {
    ff_fit_release(&base);
    return ff_diag_set(d, FF_EUNTRUSTED, NULL, "Monte Carlo: the limit of "
                       "%s is fixed by the model", ff_regress_model_name(model));
  }
  /* Keep the data-driven virial choice fixed across draws. */
  if (model == FF_REGRESS_DEBYE_HUCKEL || model == FF_REGRESS_DH_FIXED_NU)
    oa.virial_terms = base.virial_terms;
  out->u_propagated = base.u_i_limit;
  ff_fit_release(&base);

  size_t n = in->n;
  size_t block = n_draws < MC_BLOCK ? n_draws : MC_BLOCK;
  double *lim = malloc(n_draws * sizeof *lim);
  double *draws = malloc(block * 2 * n * sizeof *draws);
  unsigned char *ok = malloc(block);
  gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
  if (!lim || !draws || !ok || !r) {
    free(lim);
    free(draws);
    free(ok);
    gsl_rng_free(r);
    return ff_diag_set(d, FF_EIO, NULL, "Monte Carlo: out of memory");
  }
  gsl_rng_set(r, seed);
  struct mc_refits job = { in, model, &oa, draws, ok, lim };

  /* The draws of a block come from the one generator in the order of a
   * draw-by-draw loop (i then m, point by point, draw by draw); their
   * refits then run on every core, and the limits join lim in draw order,
   * so the summary does not depend on the threads. */
  for (size_t k0 = 0; k0 < n_draws; k0 += block) {
    size_t nb = n_draws - k0 < block ? n_draws - k0 : block;
    for (size_t k = 0; k < nb; k++) {
      double *mi = draws + k * 2 * n, *ii = mi + n;
      ok[k] = 1;
      for (size_t i = 0; i < n; i++) {
        ii[i] = in->i_obs[i] + gsl_ran_gaussian(r, in->u_i[i]);
        mi[i] = in->m_mol_kg[i] + (in->u_m_mol_kg
                                     ? gsl_ran_gaussian(r, in->u_m_mol_kg[i])
                                     : 0.0);
        ok[k] = ok[k] && mi[i] > 0.0;
      }
    }
    job.lim = lim + k0;
    ff_parallel_for(nb, mc_refit, &job);
    for (size_t k = 0; k < nb; k++)
      if (ok[k])
        lim[out->n_ok++] = lim[k0 + k];
  }
  gsl_rng_free(r);
  free(draws);
  free(ok);
  out->n_draws = n_draws;
  if (out->n_ok < 2 || (double)out->n_ok < 0.9 * (double)n_draws) {
    size_t n_ok = out->n_ok;
    free(lim);
    memset(out, 0, sizeof *out);
    return ff_diag_set(d, FF_EUNTRUSTED, NULL, "Monte Carlo: only %zu of "
                       "%zu refits succeeded", n_ok, n_draws);
  }
  gsl_sort(lim, 1, out->n_ok);
  double conf = oa.confidence;
  out->mean = gsl_stats_mean(lim, 1, out->n_ok);
  out->sd = gsl_stats_sd_m(lim, 1, out->n_ok, out->mean);
  out->median = gsl_stats_median_from_sorted_data(lim, 1, out->n_ok);
  out->q_lo = gsl_stats_quantile_from_sorted_data(lim, 1, out->n_ok,
                                                  0.5 - 0.5 * conf);
  out->q_hi = gsl_stats_quantile_from_sorted_data(lim, 1, out->n_ok,
                                                  0.5 + 0.5 * conf);
  out->ratio = out->u_propagated > 0.0 ? out->sd / out->u_propagated : 0.0;
  free(lim);
  return FF_OK;
}
