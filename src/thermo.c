/* thermo.c - from freezing points to i, phi, osmolality, activity and molar mass, with GUM. */
#include "frostfit/thermo.h"

#include <math.h>
#include <stdlib.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_interp.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>
#include <gsl/gsl_sort.h>
#include <gsl/gsl_statistics_double.h>

#include "frostfit/solvent.h"

/* Equations and their sources: docs/methods/thermodynamics.md. */

static int pos(double x)
{
  return isfinite(x) && x > 0.0;
}

static int nonneg(double x)
{
  return isfinite(x) && x >= 0.0;
}

static double hypot4(double a, double b, double c, double e)
{
  return sqrt(a * a + b * b + c * c + e * e);
}

/* ---- solvent constants ---------------------------------------------------- */

int ff_fusion_from_solvent(const struct ff_solvent *s, struct ff_fusion *out,
                           struct ff_diag *d)
{
  out->t0_k = s->tf_c + FF_ZERO_C;
  out->dh_j_mol = s->dh_fus_j_mol;
  out->m_g_mol = s->m_g_mol;
  out->dcp_j_mol_k = 0.0;
  if (!pos(out->t0_k) || !pos(out->dh_j_mol) || !pos(out->m_g_mol))
    return ff_diag_set(d, FF_EINPUT, NULL, "solvent '%s' lacks a freezing "
                       "point, enthalpy of fusion or molar mass", s->name);
  /* Specific heats per gram times M give J/(mol K). */
  if (isfinite(s->cp_liq_j_g_k) && isfinite(s->cp_sol_j_g_k) &&
      s->cp_liq_j_g_k > 0.0 && s->cp_sol_j_g_k > 0.0)
    out->dcp_j_mol_k = s->m_g_mol * (s->cp_liq_j_g_k - s->cp_sol_j_g_k);
  return FF_OK;
}

double ff_thermo_kf(const struct ff_fusion *f)
{
  if (!pos(f->t0_k) || !pos(f->dh_j_mol) || !pos(f->m_g_mol))
    return NAN;
  return FF_GAS_R * f->t0_k * f->t0_k * (f->m_g_mol / 1000.0) / f->dh_j_mol;
}

double ff_thermo_molality(double solute_g, double m_g_mol, double solvent_g)
{
  if (!pos(solute_g) || !pos(m_g_mol) || !pos(solvent_g))
    return NAN;
  return (solute_g / m_g_mol) / (solvent_g / 1000.0);
}

double ff_thermo_molality_hydrate(double solute_g, double m_hydrate_g_mol,
                                  double waters, double m_water_g_mol,
                                  double solvent_g, int solvent_is_water,
                                  double *solvent_eff_g)
{
  double mol, w1 = solvent_g;

  if (solvent_eff_g != NULL)
    *solvent_eff_g = NAN;
  if (!pos(solute_g) || !pos(m_hydrate_g_mol) || !pos(solvent_g) ||
      !nonneg(waters))
    return NAN;
  mol = solute_g / m_hydrate_g_mol;
  if (solvent_is_water && waters > 0.0) {
    if (!pos(m_water_g_mol) || waters * m_water_g_mol >= m_hydrate_g_mol)
      return NAN;
    /* The crystal water dissolves into the solvent (DESIGN.md section 4). */
    w1 += mol * waters * m_water_g_mol;
  }
  if (solvent_eff_g != NULL)
    *solvent_eff_g = w1;
  return mol / (w1 / 1000.0);
}

/* ---- exact freezing-temperature relation ----------------------------------- */

double ff_thermo_neg_ln_activity(const struct ff_fusion *f, double theta_k)
{
  double t0 = f->t0_k, t = t0 - theta_k;

  if (!pos(t0) || !pos(f->dh_j_mol) || !isfinite(f->dcp_j_mol_k) ||
      !nonneg(theta_k) || !(t > 0.5 * t0))
    return NAN;
  /* Constant-dCp integration of the Gibbs-Helmholtz relation between the
   * pure solid and the solvent in solution (REFERENCES section 6.1). */
  return (f->dh_j_mol / FF_GAS_R) * (1.0 / t - 1.0 / t0) +
         (f->dcp_j_mol_k / FF_GAS_R) * (1.0 - t0 / t + log(t0 / t));
}

double ff_thermo_osmolality_exact(const struct ff_fusion *f, double theta_k)
{
  double nl = ff_thermo_neg_ln_activity(f, theta_k);

  if (!isfinite(nl) || !pos(f->m_g_mol))
    return NAN;
  return nl / (f->m_g_mol / 1000.0);
}

double ff_thermo_supercool_correct(double dt_obs_k, double supercool_k,
                                   double frozen_per_k, double *fraction)
{
  double f = frozen_per_k * supercool_k;

  if (fraction != NULL)
    *fraction = NAN;
  if (!isfinite(dt_obs_k) || !nonneg(supercool_k) || !nonneg(frozen_per_k) ||
      !(f < 0.5))
    return NAN;
  if (fraction != NULL)
    *fraction = f;
  /* Solvent frozen during recalescence concentrates the liquid by 1/(1-f)
   * (REFERENCES section 7.1, after the classic u/80 rule). */
  return dt_obs_k * (1.0 - f);
}

/* ---- Debye-Huckel slope ---------------------------------------------------- */

/*
 * A_phi = (1/3) (2 pi N_A rho_w)^1/2 (e^2 / (4 pi eps0 eps_r k_B T))^3/2,
 * evaluated at 101325 Pa with rho_w from IAPWS-95 and eps_r from IAPWS
 * R8-97, both through Debian's python3-iapws (1.5.2), computed (CODATA
 * 2018 constants; values below 0 C use the supercooled-liquid
 * extrapolation the package warns about). Matches REFERENCES section 4.2
 * (0, 5, 10, 20, 25, 37 C) to all printed digits. 15 and 35 C are kept
 * out of the table on purpose: the tests check the spline there.
 */
static const double aphi_t_c[] = { -10, -5, 0, 5, 10, 20, 25, 30, 37, 40 };
static const double aphi_v[] = {
  0.371195, /* -10 C, IAPWS via python3-iapws, computed (extrapolated) */
  0.373793, /*  -5 C, same, extrapolated */
  0.376416, /*   0 C, same; Archer-Wang via CRP94 0.37642 [F19] */
  0.379122, /*   5 C, same; 0.3792 quoted in [F19] */
  0.381946, /*  10 C */
  0.388010, /*  20 C */
  0.391267, /*  25 C; Pitzer (1991) 0.3915, Archer-Wang 0.39148 [F19] */
  0.394682, /*  30 C */
  0.399730, /*  37 C */
  0.401990, /*  40 C */
};
#define N_APHI (sizeof aphi_v / sizeof aphi_v[0])

double ff_thermo_aphi_water(double t_c)
{
  gsl_interp *it;
  double v;

  if (!isfinite(t_c) || t_c < FF_APHI_T_MIN_C || t_c > FF_APHI_T_MAX_C)
    return NAN;
  it = gsl_interp_alloc(gsl_interp_cspline, N_APHI);
  if (it == NULL)
    return NAN;
  if (gsl_interp_init(it, aphi_t_c, aphi_v, N_APHI) != GSL_SUCCESS ||
      gsl_interp_eval_e(it, aphi_t_c, aphi_v, t_c, NULL, &v) != GSL_SUCCESS)
    v = NAN;
  gsl_interp_free(it);
  return v;
}

double ff_thermo_ionic_strength_ratio(double nu_plus, double z_plus,
                                      double nu_minus, double z_minus)
{
  if (!pos(nu_plus) || !pos(nu_minus) || !isfinite(z_plus) ||
      !isfinite(z_minus) || !(fabs(z_plus) > 0.0) || !(fabs(z_minus) > 0.0))
    return NAN;
  return 0.5 * (nu_plus * z_plus * z_plus + nu_minus * z_minus * z_minus);
}

/* ---- GUM helpers ------------------------------------------------------------ */

double ff_gum_u_resolution(double res)
{
  if (!nonneg(res))
    return NAN;
  /* GUM 4.3.7 / F.2.2.1: rectangular of half-width res/2 [F31]. */
  return res / (2.0 * sqrt(3.0));
}

double ff_gum_u_depression(double res_k, double u_tf_blank_k,
                           double u_tf_sample_k)
{
  double ur = ff_gum_u_resolution(res_k);

  if (!isfinite(ur) || !nonneg(u_tf_blank_k) || !nonneg(u_tf_sample_k))
    return NAN;
  /* Two readings, one thermometer: the offset cancels in the difference,
   * the reading resolution enters twice (REFERENCES section 8). */
  return sqrt(2.0 * ur * ur + u_tf_blank_k * u_tf_blank_k +
              u_tf_sample_k * u_tf_sample_k);
}

double ff_gum_u_mass(double res_g, unsigned n_readings, double u_cal_g)
{
  double ur = ff_gum_u_resolution(res_g);

  if (!isfinite(ur) || !nonneg(u_cal_g))
    return NAN;
  return sqrt((double)n_readings * ur * ur + u_cal_g * u_cal_g);
}

double ff_gum_u_molality(double molality, double solute_g, double u_solute_g,
                         double solvent_g, double u_solvent_g,
                         double m_g_mol, double u_m_g_mol)
{
  if (!pos(molality) || !pos(solute_g) || !pos(solvent_g) || !pos(m_g_mol) ||
      !nonneg(u_solute_g) || !nonneg(u_solvent_g) || !nonneg(u_m_g_mol))
    return NAN;
  return molality * sqrt(pow(u_solute_g / solute_g, 2) +
                         pow(u_solvent_g / solvent_g, 2) +
                         pow(u_m_g_mol / m_g_mol, 2));
}

double ff_gum_u_vant_hoff(double i, double dt_k, double u_dt_k,
                          double molality, double u_molality,
                          double kf, double u_kf)
{
  if (!isfinite(i) || !pos(dt_k) || !pos(molality) || !pos(kf) ||
      !nonneg(u_dt_k) || !nonneg(u_molality) || !nonneg(u_kf))
    return NAN;
  return fabs(i) * sqrt(pow(u_dt_k / dt_k, 2) + pow(u_molality / molality, 2) +
                        pow(u_kf / kf, 2));
}

/* ---- one run ------------------------------------------------------------------ */

static void run_out_nan(struct ff_run_out *o)
{
  o->depression_obs_k = o->frozen_fraction = o->depression_k = NAN;
  o->u_depression_k = o->ideal_depression_k = o->vant_hoff_i = NAN;
  o->u_vant_hoff_i = o->osmotic_coefficient = o->u_osmotic_coefficient = NAN;
  o->osmolality_osmol_kg = o->u_osmolality_osmol_kg = o->activity = NAN;
  o->osmolality_exact_osmol_kg = o->osmotic_coefficient_exact = NAN;
}

int ff_thermo_run(const struct ff_run_in *in, struct ff_run_out *out,
                  struct ff_diag *d)
{
  struct ff_run_out o;
  double f = 0.0, u_dt, dt;

  run_out_nan(out);
  run_out_nan(&o);
  if (!isfinite(in->tf_blank_c) || !isfinite(in->tf_sample_c))
    return ff_diag_set(d, FF_EINPUT, NULL, "freezing point of the blank or "
                       "the sample is missing");
  if (!nonneg(in->u_tf_blank_k) || !nonneg(in->u_tf_sample_k) ||
      !nonneg(in->thermo_res_k) || !nonneg(in->u_molality_mol_kg) ||
      !nonneg(in->u_kf_k_kg_mol))
    return ff_diag_set(d, FF_EINPUT, NULL, "uncertainties and the "
                       "thermometer resolution must be zero or positive");
  if (!pos(in->molality_mol_kg))
    return ff_diag_set(d, FF_EINPUT, NULL, "molality must be positive, "
                       "got %g mol/kg", in->molality_mol_kg);
  if (!pos(in->kf_k_kg_mol))
    return ff_diag_set(d, FF_EINPUT, NULL, "Kf must be positive, got %g "
                       "K kg/mol", in->kf_k_kg_mol);
  if (!isnan(in->nu) && !pos(in->nu))
    return ff_diag_set(d, FF_EINPUT, NULL, "particles per formula unit must "
                       "be positive, got %g", in->nu);

  o.depression_obs_k = in->tf_blank_c - in->tf_sample_c;
  if (!(o.depression_obs_k > 0.0))
    return ff_diag_set(d, FF_EUNTRUSTED, NULL, "the sample froze at or above "
                       "its blank (depression %.4f K): no depression to "
                       "analyse", o.depression_obs_k);
  u_dt = ff_gum_u_depression(in->thermo_res_k, in->u_tf_blank_k,
                             in->u_tf_sample_k);
  dt = o.depression_obs_k;
  if (!isnan(in->supercool_k)) {
    if (!pos(in->frozen_per_k))
      return ff_diag_set(d, FF_EINPUT, NULL, "supercooling correction asked "
                         "for, but the solvent's frozen fraction per kelvin "
                         "(c_p / L_fus) is unknown");
    dt = ff_thermo_supercool_correct(o.depression_obs_k, in->supercool_k,
                                     in->frozen_per_k, &f);
    if (!isfinite(dt))
      return ff_diag_set(d, FF_EUNTRUSTED, NULL, "supercooling correction "
                         "out of range (supercooling %g K, %g per K)",
                         in->supercool_k, in->frozen_per_k);
    u_dt *= 1.0 - f;
  }
  o.frozen_fraction = f;
  o.depression_k = dt;
  o.u_depression_k = u_dt;
  o.ideal_depression_k = in->kf_k_kg_mol * in->molality_mol_kg;
  o.vant_hoff_i = dt / o.ideal_depression_k;
  o.u_vant_hoff_i = ff_gum_u_vant_hoff(o.vant_hoff_i, dt, u_dt,
                                       in->molality_mol_kg,
                                       in->u_molality_mol_kg,
                                       in->kf_k_kg_mol, in->u_kf_k_kg_mol);
  if (pos(in->nu)) {
    o.osmotic_coefficient = o.vant_hoff_i / in->nu;
    o.u_osmotic_coefficient = o.u_vant_hoff_i / in->nu;
  }
  o.osmolality_osmol_kg = dt / in->kf_k_kg_mol;
  o.u_osmolality_osmol_kg = o.osmolality_osmol_kg *
    sqrt(pow(u_dt / dt, 2) + pow(in->u_kf_k_kg_mol / in->kf_k_kg_mol, 2));
  if (in->fusion != NULL) {
    double nl = ff_thermo_neg_ln_activity(in->fusion, dt);
    if (isfinite(nl)) {
      o.activity = exp(-nl);
      o.osmolality_exact_osmol_kg = ff_thermo_osmolality_exact(in->fusion, dt);
      if (pos(in->nu))
        o.osmotic_coefficient_exact = o.osmolality_exact_osmol_kg /
                                      (in->nu * in->molality_mol_kg);
    }
  }
  *out = o;
  return FF_OK;
}

/* ---- molar mass of an unknown -------------------------------------------- */

double ff_quantity_u(const struct ff_quantity *q)
{
  if (!nonneg(q->u_normal) || !nonneg(q->rect_half_width))
    return NAN;
  return sqrt(q->u_normal * q->u_normal +
              (double)q->n_rect * q->rect_half_width * q->rect_half_width /
              3.0);
}

static double molar_mass(double kf, double w2, double w1, double dt)
{
  /* M2 = Kf w2 / (dT w1), w1 in kg. */
  return kf * w2 / (dt * (w1 / 1000.0));
}

static int check_q(const struct ff_quantity *q, const char *what,
                   const char *unit, struct ff_diag *d)
{
  if (!pos(q->value))
    return ff_diag_set(d, FF_EINPUT, NULL, "%s must be positive, got %g %s",
                       what, q->value, unit);
  if (!isfinite(ff_quantity_u(q)))
    return ff_diag_set(d, FF_EINPUT, NULL, "uncertainty of %s must be zero "
                       "or positive", what);
  return FF_OK;
}

static void mass_out_nan(struct ff_mass_out *o)
{
  o->m_g_mol = o->u_m_g_mol = o->expanded_m_g_mol = NAN;
  o->rel_kf = o->rel_solute = o->rel_solvent = o->rel_depression = NAN;
  o->mc_n = 0;
  o->mc_mean_g_mol = o->mc_u_g_mol = o->mc_lo95_g_mol = o->mc_hi95_g_mol = NAN;
}

int ff_thermo_molar_mass(const struct ff_mass_in *in, struct ff_mass_out *out,
                         struct ff_diag *d)
{
  struct ff_mass_out o;
  int rc;

  mass_out_nan(out);
  mass_out_nan(&o);
  if ((rc = check_q(&in->kf, "Kf", "K kg/mol", d)) != FF_OK ||
      (rc = check_q(&in->solute_g, "the solute mass", "g", d)) != FF_OK ||
      (rc = check_q(&in->solvent_g, "the solvent mass", "g", d)) != FF_OK ||
      (rc = check_q(&in->depression_k, "the depression", "K", d)) != FF_OK)
    return rc;
  double u_dt = ff_quantity_u(&in->depression_k);
  if (in->depression_k.value < 3.0 * u_dt)
    return ff_diag_set(d, FF_EUNTRUSTED, NULL, "depression %g K is less than "
                       "3 times its uncertainty %.3g K: no useful molar mass",
                       in->depression_k.value, u_dt);
  o.m_g_mol = molar_mass(in->kf.value, in->solute_g.value,
                         in->solvent_g.value, in->depression_k.value);
  o.rel_kf = ff_quantity_u(&in->kf) / in->kf.value;
  o.rel_solute = ff_quantity_u(&in->solute_g) / in->solute_g.value;
  o.rel_solvent = ff_quantity_u(&in->solvent_g) / in->solvent_g.value;
  o.rel_depression = u_dt / in->depression_k.value;
  /* GUM 5.1.6: for a pure product/quotient the relative uncertainties add
   * in quadrature (REFERENCES section 8). */
  o.u_m_g_mol = o.m_g_mol * hypot4(o.rel_kf, o.rel_solute, o.rel_solvent,
                                   o.rel_depression);
  o.expanded_m_g_mol = 2.0 * o.u_m_g_mol;
  if (!isfinite(o.m_g_mol) || !isfinite(o.u_m_g_mol))
    return ff_diag_set(d, FF_EUNTRUSTED, NULL, "molar mass is not a finite "
                       "number");
  *out = o;
  return FF_OK;
}

static double draw(const gsl_rng *r, const struct ff_quantity *q)
{
  double v = q->value;

  if (q->u_normal > 0.0)
    v += gsl_ran_gaussian(r, q->u_normal);
  for (unsigned k = 0; k < q->n_rect; k++)
    if (q->rect_half_width > 0.0)
      v += gsl_ran_flat(r, -q->rect_half_width, q->rect_half_width);
  return v;
}

int ff_thermo_molar_mass_mc(const struct ff_mass_in *in, size_t n,
                            unsigned long seed, struct ff_mass_out *out,
                            struct ff_diag *d)
{
  int rc = ff_thermo_molar_mass(in, out, d);
  size_t kept = 0;

  if (rc != FF_OK)
    return rc;
  if (n < 1000)
    return ff_diag_set(d, FF_EINPUT, NULL, "Monte Carlo needs at least 1000 "
                       "draws, got %zu", n);
  double *m = malloc(n * sizeof *m);
  gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
  if (m == NULL || r == NULL) {
    free(m);
    gsl_rng_free(r);
    return ff_diag_set(d, FF_EIO, NULL, "out of memory");
  }
  gsl_rng_set(r, seed);
  for (size_t k = 0; k < n; k++) {
    double kf = draw(r, &in->kf), w2 = draw(r, &in->solute_g);
    double w1 = draw(r, &in->solvent_g), dt = draw(r, &in->depression_k);
    /* A draw with a non-positive mass or depression has no molar mass;
     * with dT >= 3 u(dT) such draws are rare, and counted below. */
    if (kf > 0.0 && w2 > 0.0 && w1 > 0.0 && dt > 0.0)
      m[kept++] = molar_mass(kf, w2, w1, dt);
  }
  gsl_rng_free(r);
  if (kept < n - n / 100) {
    free(m);
    return ff_diag_set(d, FF_EUNTRUSTED, NULL, "Monte Carlo: %zu of %zu "
                       "draws gave no molar mass (non-positive depression)",
                       n - kept, n);
  }
  gsl_sort(m, 1, kept);
  out->mc_n = kept;
  out->mc_mean_g_mol = gsl_stats_mean(m, 1, kept);
  out->mc_u_g_mol = gsl_stats_sd_m(m, 1, kept, out->mc_mean_g_mol);
  out->mc_lo95_g_mol = gsl_stats_quantile_from_sorted_data(m, 1, kept, 0.025);
  out->mc_hi95_g_mol = gsl_stats_quantile_from_sorted_data(m, 1, kept, 0.975);
  free(m);
  return FF_OK;
}
