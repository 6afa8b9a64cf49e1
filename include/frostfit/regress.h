/* frostfit/regress.h - infinite-dilution extrapolation of van 't Hoff factors,
 * molar-mass extrapolation and fit statistics; the stage after thermo. */
#ifndef FF_REGRESS_H
#define FF_REGRESS_H

#include <stddef.h>
#include "frostfit/diag.h"

/*
 * Pure library: inputs are borrowed and never kept; results are plain data
 * the caller holds. A model that cannot be fitted (too few points, singular
 * design, no convergence, non-finite result) gets status FF_EUNTRUSTED and a
 * reason; its numbers are then meaningless and must not be shown (they are
 * set to 0, never NaN). Equations and sources: docs/methods/regression.md.
 */

/* The models of i(m). Also the index into ff_regress_result.fit[]. */
enum ff_regress_model {
  FF_REGRESS_SQRT_LINEAR = 0,  /* i = a + c sqrt(m): empirical reference */
  FF_REGRESS_DEBYE_HUCKEL,     /* i = nu_fit (1 - |z+z-| A sqrt(I)/(1+b sqrt I))
                                  + nu_fit B m [+ nu_fit C m^2]; nu_fit free */
  FF_REGRESS_DH_FIXED_NU,      /* the same with nu fixed to the integer */
  FF_REGRESS_ION_PAIRING,      /* K_A mass action + DH, symmetric salts */
  FF_REGRESS_ASSOCIATION,      /* monomer-dimer K2, non-electrolyte, limit 1 */
  FF_REGRESS_NMODELS
};
#define FF_REGRESS_BIT(m) (1u << (unsigned)(m))
#define FF_REGRESS_ALL ((1u << FF_REGRESS_NMODELS) - 1u)

/* "sqrt_linear", "debye_huckel", "debye_huckel_fixed_nu", "ion_pairing",
 * "association"; "?" for an out-of-range value. Static string. */
const char *ff_regress_model_name(enum ff_regress_model m);

/* Particles of one formula unit when fully dissociated. A non-electrolyte
 * is nu = 1, nu_plus = nu_minus = 0, z_plus = z_minus = 0. Charges may be
 * given with or without sign; only |z| is used. */
struct ff_particles {
  unsigned nu;                 /* nu_plus + nu_minus, or 1 */
  unsigned nu_plus, nu_minus;
  int z_plus, z_minus;
};

/* One solute's runs. All arrays have n entries and are borrowed. */
struct ff_regress_input {
  size_t n;
  const double *m_mol_kg;      /* molality, > 0 */
  const double *i_obs;         /* observed van 't Hoff factor */
  const double *u_i;           /* standard uncertainty of i_obs, > 0;
                                  NULL: equal weights, scale from scatter */
  const double *u_m_mol_kg;    /* standard uncertainty of m; NULL = exact.
                                  Used (and checked) by the Monte Carlo
                                  check only; the propagated u(i_limit)
                                  does not include it */
  struct ff_particles p;
  double a_phi;                /* Debye-Huckel osmotic slope A_phi at the
                                  working temperature, kg^1/2 mol^-1/2
                                  (0.3764 for water at 0 C) */
};

/* How parameter covariances are scaled. */
enum ff_regress_cov {
  FF_COV_AUTO = 0,     /* (J'WJ)^-1 times max(1, chi2/dof): the stated u
                          are trusted unless the scatter is larger */
  FF_COV_ABSOLUTE,     /* (J'WJ)^-1: the stated u alone */
  FF_COV_SCALED        /* (J'WJ)^-1 times chi2/dof */
};

struct ff_regress_opts {
  unsigned models;         /* FF_REGRESS_BIT() mask of models to fit */
  double b_kg_mol;         /* DH b in sqrt(I)/(1 + b sqrt(I)), kg^1/2 mol^-1/2 */
  double confidence;       /* level of the Student-t intervals, (0, 1) */
  int virial_terms;        /* DH models: 1 = B m, 2 = B m + C m^2,
                              0 = choose by F-test (C kept when p < f_alpha) */
  int pairing_b;           /* ion pairing: also fit a B m term (0/1);
                              default 1 (K_A alone rarely fits real data) */
  enum ff_regress_cov cov;
  double f_alpha;          /* significance level of the F-tests */
  double k_a_start_kg_mol; /* starting value of K_A */
  double k2_start_kg_mol;  /* starting value of K2 */
  size_t max_iter;         /* nonlinear fits: iteration cap */
  double xtol;             /* nonlinear fits: step tolerance */
};
#define FF_REGRESS_OPTS_DEFAULT                                          \
  { .models = FF_REGRESS_ALL, .b_kg_mol = 1.2, .confidence = 0.95,       \
    .virial_terms = 0, .pairing_b = 1, .cov = FF_COV_AUTO,               \
    .f_alpha = 0.05, .k_a_start_kg_mol = 50.0, .k2_start_kg_mol = 1.0,   \
    .max_iter = 200, .xtol = 1e-10 }

#define FF_REGRESS_MAXPAR 4
#define FF_REGRESS_REASON 200

/* One fitted model. _INIT, fill by a fit, then ff_fit_release(). */
struct ff_fit {
  enum ff_regress_model model;
  int attempted;                /* 0: not requested */
  enum ff_status status;        /* FF_OK, or FF_EUNTRUSTED and reason */
  char reason[FF_REGRESS_REASON];
  char note[FF_REGRESS_REASON]; /* caveat on an FF_OK fit, "" if none */

  size_t npar;
  char par_name[FF_REGRESS_MAXPAR][16]; /* "a", "c", "nu", "nuB", "nuC",
                                           "B", "C", "lnK_A", "lnK2" */
  double par[FF_REGRESS_MAXPAR];
  double se[FF_REGRESS_MAXPAR];        /* standard errors */
  double ci_lo[FF_REGRESS_MAXPAR], ci_hi[FF_REGRESS_MAXPAR];
  double cov[FF_REGRESS_MAXPAR][FF_REGRESS_MAXPAR];

  size_t n, dof;
  double chi2;            /* sum ((i_obs - i_fit)/u)^2 (u = 1 unweighted) */
  double sumsq;           /* sum (i_obs - i_fit)^2, unweighted */
  double chi2_red;        /* chi2 / dof */
  double cov_scale;       /* factor applied to (J'WJ)^-1 */
  double t_crit;          /* coverage factor of the intervals: Student t
                             (dof) when the covariance was scaled by the
                             residuals, normal quantile when the stated u
                             alone set it */
  double aic;             /* chi2 + 2k (weighted) or n ln(sumsq/n) + 2k */
  double aicc;            /* aic + 2k(k+1)/(n-k-1); valid if has_aicc */
  int has_aicc;

  double i_limit, u_i_limit, ci_limit[2]; /* i at m -> 0 */
  int limit_fixed;        /* 1: the limit is set by the model (nu or 1),
                             u = 0; it is not evidence about nu */

  double k_kg_mol, u_k_kg_mol, ci_k[2]; /* K_A or K2 (nonlinear models) */
  int virial_terms;       /* DH models: terms used (1 or 2) */

  double *resid;          /* n residuals i_obs - i_fit, owned; NULL when
                             the fit failed */

  /* What ff_regress_eval needs; copied from the input. */
  struct ff_particles p;
  double a_phi, b_kg_mol;
};
#define FF_FIT_INIT { 0 }
void ff_fit_release(struct ff_fit *f);

/* F-test of a restricted model nested in a fuller one. */
struct ff_ftest {
  int done;                /* 0: not possible (a fit failed, dof 0) */
  double f, p;             /* statistic and its upper-tail probability */
  double df1, df2;
  int reject_restricted;   /* p < f_alpha: the extra parameters matter */
};

/* Everything for one solute. _INIT, ff_regress_solute, then _release. */
struct ff_regress_result {
  struct ff_fit fit[FF_REGRESS_NMODELS];

  int has_preferred;
  enum ff_regress_model preferred;  /* smallest AICc (AIC when AICc is
                                       undefined) among FF_OK fits */
  char criterion[64];               /* "AICc" or "AIC" */

  struct ff_ftest nu_test;     /* DH nu fixed (restricted) vs nu free */
  struct ff_ftest virial_test; /* DH free nu: B only vs B and C */

  /* Particle count from the free-limit model (DH free nu, else the sqrt
   * line, named in particles_model). */
  int has_particles;
  enum ff_regress_model particles_model;
  long particles_nearest;      /* nearest integer to i_limit */
  int particles_in_ci;         /* 1 when the CI contains it */
  /* 1 when the CI misses it but nu fixed at it (the given particle count)
   * is not rejected by the F-test against nu free: the interval is purely
   * statistical, and B m + C m^2 only approximates the higher terms, so a
   * precise data set can exclude the true integer by model bias alone. */
  int particles_by_ftest;
  long particles_inferred;     /* = particles_nearest when in CI or
                                  supported by the F-test, else 0 */

  /* Degree of dissociation (i_limit - 1)/(nu - 1), when nu > 1. */
  int has_alpha;
  double alpha, u_alpha;
};
#define FF_REGRESS_RESULT_INIT { 0 }
void ff_regress_result_release(struct ff_regress_result *r);

/*
 * Fits the models selected in o->models (NULL o: defaults) to one solute.
 * Returns FF_OK when at least one model fitted (others carry their own
 * status and reason); FF_EINPUT for invalid input (n = 0, NULL arrays,
 * m <= 0, u <= 0, non-finite values, a_phi < 0, nu = 0, nu+/nu-/charges
 * that do not add up or balance); FF_EUSAGE for invalid options;
 * FF_EUNTRUSTED when no model could be fitted (d says why). Ion pairing is
 * skipped for non-electrolytes and association for electrolytes (fit left
 * with attempted = 0). out must be _INIT or released.
 */
int ff_regress_solute(const struct ff_regress_input *in,
                      const struct ff_regress_opts *o,
                      struct ff_regress_result *out, struct ff_diag *d);

/*
 * Fits one model. Returns out->status (FF_OK or FF_EUNTRUSTED, reason in
 * out->reason and in d) or FF_EINPUT/FF_EUSAGE as above. out must be
 * _INIT/released.
 */
int ff_regress_fit_model(const struct ff_regress_input *in,
                         enum ff_regress_model model,
                         const struct ff_regress_opts *o, struct ff_fit *out,
                         struct ff_diag *d);

/* The fitted curve i(m) at molality m > 0 (for figures and residuals).
 * FF_EUNTRUSTED when f did not fit or m is out of range. */
int ff_regress_eval(const struct ff_fit *f, double m_mol_kg, double *i_out);

/* The fitted curve at m > 0 with its standard uncertainty, propagated
 * from the parameter covariance through a central-difference gradient
 * (u^2 = g' C g). The half-width of the confidence band is t_crit * u.
 * FF_EUNTRUSTED as for ff_regress_eval. */
int ff_regress_eval_u(const struct ff_fit *f, double m_mol_kg, double *i_out,
                      double *u_out);

/* Degree of dissociation alpha = (i - 1)/(nu - 1) and u(alpha) =
 * u_i/(nu - 1). FF_EINPUT when nu < 2 or values are not finite. */
int ff_regress_alpha(double i, double u_i, unsigned nu, double *alpha,
                     double *u_alpha, struct ff_diag *d);

/* Weighted straight line y = c0 + c1 x (the linear core, also public). */
struct ff_line {
  size_t n, dof;
  double c0, c1;                 /* intercept [y], slope [y/x] */
  double cov00, cov01, cov11;    /* after scaling per the cov mode */
  double se0, se1;
  double ci0[2], ci1[2];         /* intervals (t_crit as in ff_fit) */
  double chi2, sumsq, cov_scale, t_crit;
};
/*
 * u_y NULL: ordinary least squares, covariance scaled by the residual
 * variance (cov mode ignored). Needs n >= 3 and two distinct x, else
 * FF_EUNTRUSTED; FF_EINPUT for NULL arrays or non-finite values.
 */
int ff_regress_line(const double *x, const double *y, const double *u_y,
                    size_t n, double confidence, enum ff_regress_cov cov,
                    struct ff_line *out, struct ff_diag *d);

/* Molar mass of an unknown extrapolated to zero concentration. */
enum ff_mm_method { FF_MM_LINEAR = 0, FF_MM_RECIPROCAL, FF_MM_SINGLE };
struct ff_mm_fit {
  enum ff_mm_method method;
  enum ff_status status;        /* FF_OK or FF_EUNTRUSTED */
  char reason[FF_REGRESS_REASON];
  size_t n, dof;
  double m0_g_mol, u_m0_g_mol, ci[2];   /* value at zero concentration */
  double slope, u_slope;        /* of M (or of 1/M) against concentration */
  /* The fitted line y = c0 + slope x (y = M, or 1/M): u(c0), cov(c0,
   * slope) and the coverage factor of its intervals, for a band
   * y +- k_band sqrt(u_line0^2 + 2 x cov01 + x^2 u_slope^2). */
  double u_line0, cov01, k_band;
  double chi2, aicc;
  int has_aicc;
};
struct ff_mm_result {
  struct ff_mm_fit linear;      /* M_app = M0 + s c */
  struct ff_mm_fit reciprocal;  /* 1/M_app = 1/M0 + s c (monomer-dimer) */
  enum ff_mm_method preferred;  /* FF_MM_SINGLE for one point */
  double m0_g_mol, u_m0_g_mol, ci[2];
  char note[FF_REGRESS_REASON];
};
/*
 * conc: any concentration measure that vanishes with the solute (e.g. g
 * solute per kg solvent, or mol/kg); m_app: apparent molar mass of each run;
 * u_m: its standard uncertainty (> 0). One run: that value with its own u and
 * a note. Several runs at one concentration: FF_EUNTRUSTED. FF_EINPUT for
 * invalid values. conf: confidence level (0, 1).
 */
int ff_regress_molar_mass(const double *conc, const double *m_app_g_mol,
                          const double *u_m_g_mol, size_t n, double conf,
                          struct ff_mm_result *out, struct ff_diag *d);

/* Monte Carlo check of the propagated u(i_limit). */
struct ff_mc_summary {
  size_t n_draws, n_ok;          /* refits that succeeded */
  double mean, sd, median;       /* of i_limit over the draws */
  double q_lo, q_hi;             /* central interval at o->confidence */
  double u_propagated;           /* u(i_limit) from (J'WJ)^-1, unscaled */
  double ratio;                  /* sd / u_propagated */
};
/*
 * Perturbs i_obs (and m when u_m_mol_kg is given) by normal draws with their
 * standard uncertainties, n_draws times (seeded gsl_rng mt19937), refits the
 * model, and summarises i_limit. Needs in->u_i; FF_EINPUT when a u(m) is
 * negative or not a number. Pass u_m_mol_kg = NULL to compare like with
 * like against u_propagated. FF_EUNTRUSTED when the
 * unperturbed fit fails, the model's limit is fixed, or fewer than 90 % of
 * the refits succeed; FF_EIO when out of memory. The draws come from the
 * one generator in a fixed order and the refits run on every core
 * (ff_parallel_for): the summary is the same whatever the number of
 * threads, and the same as refitting draw by draw.
 */
int ff_regress_monte_carlo(const struct ff_regress_input *in,
                           enum ff_regress_model model,
                           const struct ff_regress_opts *o, size_t n_draws,
                           unsigned long seed, struct ff_mc_summary *out,
                           struct ff_diag *d);

#endif /* FF_REGRESS_H */
