/* frostfit/thermo.h - thermodynamics of one run: molality, i, phi, osmolality, a_w, molar mass, GUM. */
#ifndef FF_THERMO_H
#define FF_THERMO_H

#include <math.h>
#include <stddef.h>
#include "frostfit/diag.h"

/*
 * Pure functions, units in the names. Temperatures in degrees C only where
 * the name says _c; differences in K; masses in g; molality in mol/kg;
 * osmolality in osmol/kg (the CLI multiplies by 1000 for mOsmol/kg).
 * Functions returning double give NaN for inputs that cannot support a
 * value (non-positive masses, non-finite inputs); callers must check with
 * isfinite() before printing. Equations and sources:
 * docs/methods/thermodynamics.md.
 */

/* Water constants (IAPWS-95/06 via python3-iapws, computed; see
 * shared/REFERENCES.md section 1.1). */
#define FF_M_WATER_G_MOL 18.015268      /* IAPWS molar mass of H2O */
#define FF_WATER_T0_K 273.15            /* ice point used by the linear law */
#define FF_WATER_DH_FUS_J_MOL 6006.77   /* h_liq - h_ice at the melting point */
#define FF_WATER_DCP_FUS_J_MOL_K 38.24  /* cp_liq - cp_ice at 273.15 K */
#define FF_WATER_FROZEN_PER_K (4.2194 / 333.4265) /* cp_liq/L_fus = 0.012655 [1/K] */

/* What the exact freezing-temperature relation needs of a solvent. */
struct ff_fusion {
  double t0_k;                 /* melting point of the pure solvent */
  double dh_j_mol;             /* enthalpy of fusion at t0 */
  double dcp_j_mol_k;          /* cp(liquid) - cp(solid); 0 when unknown */
  double m_g_mol;              /* molar mass of the solvent */
};
#define FF_FUSION_WATER { FF_WATER_T0_K, FF_WATER_DH_FUS_J_MOL, \
                          FF_WATER_DCP_FUS_J_MOL_K, FF_M_WATER_G_MOL }

/* Fusion constants from a solvent-table row (frostfit/solvent.h): t0 from
 * tf_c, dcp = M (cp_liq - cp_sol) when both are finite, else 0.
 * FF_EINPUT when tf, dH or M is missing or non-positive. */
struct ff_solvent;
int ff_fusion_from_solvent(const struct ff_solvent *s, struct ff_fusion *out,
                           struct ff_diag *d);

/* Kf = R T0^2 M / dH_fus [K kg/mol] (M converted to kg/mol). */
double ff_thermo_kf(const struct ff_fusion *f);

/* m = (solute_g / M) / (solvent_g / 1000) [mol/kg]. */
double ff_thermo_molality(double solute_g, double m_g_mol, double solvent_g);

/*
 * Molality of a hydrate weighed as such: solute_g of the hydrate whose
 * formula unit weighs m_hydrate_g_mol and carries `waters` H2O. The moles
 * of solute are solute_g / m_hydrate_g_mol; when solvent_is_water, the
 * water of crystallisation (moles * waters * m_water_g_mol) joins the
 * solvent mass. *solvent_eff_g (may be NULL) gets the solvent mass used.
 */
double ff_thermo_molality_hydrate(double solute_g, double m_hydrate_g_mol,
                                  double waters, double m_water_g_mol,
                                  double solvent_g, int solvent_is_water,
                                  double *solvent_eff_g);

/* -ln a of the solvent at depression theta_k below t0, from
 * -ln a = (dH/R)(1/T - 1/T0) + (dCp/R)(1 - T0/T + ln(T0/T)), T = T0 - theta. */
double ff_thermo_neg_ln_activity(const struct ff_fusion *f, double theta_k);

/* "Thermodynamic" osmolality -ln a / M_solvent [osmol/kg]. */
double ff_thermo_osmolality_exact(const struct ff_fusion *f, double theta_k);

/*
 * Frozen-fraction correction for supercooling u_k: f = frozen_per_k * u_k
 * (frozen_per_k = cp_liq / L_fus, 1/K), dT_true = dT_obs (1 - f). Returns
 * dT_true; *fraction (may be NULL) gets f. NaN when f is not in [0, 0.5).
 */
double ff_thermo_supercool_correct(double dt_obs_k, double supercool_k,
                                   double frozen_per_k, double *fraction);

/*
 * Debye-Huckel osmotic slope A_phi of water [kg^1/2 mol^-1/2] at t_c,
 * cubic spline (gsl_interp_cspline) through values computed from IAPWS-95
 * density and the IAPWS R8-97 dielectric constant (table and sources in
 * src/thermo.c). Valid FF_APHI_T_MIN_C..FF_APHI_T_MAX_C; NaN outside.
 */
#define FF_APHI_T_MIN_C (-10.0)
#define FF_APHI_T_MAX_C 40.0
double ff_thermo_aphi_water(double t_c);

/* Ionic strength per molality of salt, I/m = (nu+ z+^2 + nu- z-^2) / 2. */
double ff_thermo_ionic_strength_ratio(double nu_plus, double z_plus,
                                      double nu_minus, double z_minus);

/* ---- one run ---------------------------------------------------------- */

struct ff_run_in {
  double tf_blank_c;           /* blank freezing point */
  double tf_sample_c;          /* sample freezing point */
  double u_tf_blank_k;         /* standard uncertainty of each (fit, repl.) */
  double u_tf_sample_k;
  double thermo_res_k;         /* thermometer resolution; 0 if folded above */
  double molality_mol_kg;
  double u_molality_mol_kg;    /* 0 when unknown */
  double kf_k_kg_mol;
  double u_kf_k_kg_mol;        /* 0 when treated as exact */
  double nu;                   /* particles per formula unit; NaN: unknown */
  double supercool_k;          /* supercooling of the sample; NaN: no corr. */
  double frozen_per_k;         /* cp_liq / L_fus [1/K]; used with supercool */
  const struct ff_fusion *fusion; /* borrowed; NULL: no activity output */
};
#define FF_RUN_IN_INIT { .nu = NAN, .supercool_k = NAN }

/* Results of one run; NaN marks what could not be computed. */
struct ff_run_out {
  double depression_obs_k;     /* tf_blank - tf_sample */
  double frozen_fraction;      /* f applied (0 when no correction) */
  double depression_k;         /* after the frozen-fraction correction */
  double u_depression_k;
  double ideal_depression_k;   /* Kf m */
  double vant_hoff_i;          /* depression / (Kf m) */
  double u_vant_hoff_i;
  double osmotic_coefficient;  /* i / nu (linear law) */
  double u_osmotic_coefficient;
  double osmolality_osmol_kg;  /* depression / Kf */
  double u_osmolality_osmol_kg;
  double activity;             /* solvent activity (water activity) */
  double osmolality_exact_osmol_kg; /* -ln a / M */
  double osmotic_coefficient_exact; /* -ln a / (M nu m) */
};

/*
 * Computes one run. FF_EINPUT when an input is non-finite or out of range
 * (Kf or molality <= 0, negative uncertainties); FF_EUNTRUSTED when the
 * depression is not positive (the sample froze at or above its blank) or
 * the supercooling correction is out of range. On error every field of
 * out is NaN.
 */
int ff_thermo_run(const struct ff_run_in *in, struct ff_run_out *out,
                  struct ff_diag *d);

/* ---- GUM helpers ------------------------------------------------------ */

/* Standard uncertainty of one reading on a digital scale of resolution
 * res (rectangular, half-width res/2): res / (2 sqrt 3). */
double ff_gum_u_resolution(double res);

/* u of a depression read as the difference of two readings on one
 * thermometer: offset cancels, resolution does not:
 * sqrt(2 (res/(2 sqrt3))^2 + u_blank^2 + u_sample^2) [K]. */
double ff_gum_u_depression(double res_k, double u_tf_blank_k,
                           double u_tf_sample_k);

/* u of a mass from n_readings balance readings (2 for tare + gross) of
 * resolution res_g, plus a calibration part u_cal_g [g]. */
double ff_gum_u_mass(double res_g, unsigned n_readings, double u_cal_g);

/* u of m = (w2/M)/w1: relative parts in quadrature [mol/kg]. u_m_g_mol
 * is the molar-mass uncertainty (0 for a formula weight). */
double ff_gum_u_molality(double molality, double solute_g, double u_solute_g,
                         double solvent_g, double u_solvent_g,
                         double m_g_mol, double u_m_g_mol);

/* u of i = dT/(Kf m): relative parts in quadrature. */
double ff_gum_u_vant_hoff(double i, double dt_k, double u_dt_k,
                          double molality, double u_molality,
                          double kf, double u_kf);

/* ---- molar mass of an unknown ---------------------------------------- */

/* An input quantity with a Gaussian part and a rectangular part made of
 * n_rect independent readings of half-width rect_half_width each
 * (n_rect = 2 for a difference of two readings). */
struct ff_quantity {
  double value;
  double u_normal;             /* standard uncertainty, Gaussian */
  double rect_half_width;      /* a = resolution / 2 */
  unsigned n_rect;
};
/* sqrt(u_normal^2 + n_rect a^2 / 3). */
double ff_quantity_u(const struct ff_quantity *q);

struct ff_mass_in {
  struct ff_quantity kf;       /* K kg/mol */
  struct ff_quantity solute_g; /* w2 */
  struct ff_quantity solvent_g;/* w1 */
  struct ff_quantity depression_k;
};

struct ff_mass_out {
  double m_g_mol;              /* M2 = Kf w2 / (dT w1/1000) */
  double u_m_g_mol;            /* GUM combined standard uncertainty */
  double expanded_m_g_mol;     /* U = 2 u (k = 2) */
  double rel_kf, rel_solute, rel_solvent, rel_depression; /* u_x/x */
  /* Monte Carlo (filled by ff_thermo_molar_mass_mc, else NaN) */
  size_t mc_n;
  double mc_mean_g_mol, mc_u_g_mol, mc_lo95_g_mol, mc_hi95_g_mol;
};

/*
 * M2 with the GUM budget (ff_mass_out MC fields NaN). FF_EINPUT for
 * non-finite or non-positive values or negative uncertainties;
 * FF_EUNTRUSTED when the depression is smaller than 3 u(dT) (no useful
 * molar mass: the relative uncertainty exceeds 1/3).
 */
int ff_thermo_molar_mass(const struct ff_mass_in *in, struct ff_mass_out *out,
                         struct ff_diag *d);

/*
 * Same, plus a Monte Carlo of n draws (gsl_rng mt19937, seed): Gaussian
 * parts by gsl_ran_gaussian, rectangular parts by gsl_ran_flat. Fills the
 * mc_ fields (mean, standard deviation, 2.5 / 97.5 % quantiles).
 * FF_EIO when out of memory; n must be >= 1000 (FF_EINPUT otherwise).
 */
int ff_thermo_molar_mass_mc(const struct ff_mass_in *in, size_t n,
                            unsigned long seed, struct ff_mass_out *out,
                            struct ff_diag *d);

#endif /* FF_THERMO_H */
