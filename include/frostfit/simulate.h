/* frostfit/simulate.h - physical cooling-curve model: the ground truth. */
#ifndef FF_SIMULATE_H
#define FF_SIMULATE_H

#include <stdio.h>
#include <stddef.h>
#include "frostfit/diag.h"
#include "frostfit/solvent.h"

/* Most freeze-thaw cycles in one simulated record. */
#define FF_SIM_MAX_CYCLES 16

/*
 * Parameters of a stirred sample tube in a cold bath, and its thermometer.
 * The equations are in docs/methods/simulator.md. Units are in the names;
 * temperatures in degrees C, differences in K, masses in g, times in s.
 */
struct ff_sim_params {
  struct ff_solvent solvent;   /* copied constants; kf_k_kg_mol is the law */
  double solvent_g;            /* solvent mass */
  double molality_mol_kg;      /* solute, as weighed */
  double vant_hoff_i;          /* particles actually formed per formula unit */
  double start_c;              /* sample temperature at t = 0 (> true Tf) */
  double bath_c;               /* bath temperature */
  double tau_s;                /* heat-transfer time constant of the liquid */
  double stir_w;               /* stirring heat input, W */
  double supercool_k;          /* nucleation this far below Tf; < 0: random
                                  per cycle, uniform 0.3..2.5 K */
  double growth_rate;          /* G: ice growth constant, 1/(K s) */
  double probe_lag_s;          /* first-order thermometer time constant */
  double noise_k;              /* Gaussian noise, standard deviation */
  double resolution_k;         /* quantisation step, 0 = none */
  double offset_k;             /* calibration offset of the probe */
  double dt_s;                 /* sampling interval */
  double dropout;              /* fraction of samples lost, 0..1 */
  double freeze_s;             /* how long each freeze is followed */
  unsigned cycles;             /* freeze-thaw cycles, 1..FF_SIM_MAX_CYCLES */
  unsigned long seed;          /* RNG seed: same seed, same curve */
  /* Added after the first contract (defaults from ff_sim_params_default): */
  double growth_area_frac;     /* x_a: growth speeds up by (1 + x/x_a) as the
                                  ice fraction x (its surface) grows; 0 = off,
                                  the plain law dm/dt = G m_s (T_eq - T) */
  double thaw_k;               /* thaw bath sits this far above start_c */
  double bath_drift_k_s;       /* cold bath drifts by this much per second
                                  from the moment it is switched on, K/s */
  int bath_channel;            /* 1: also record a bath probe (a channel
                                  that never freezes) */
  int latent_dcp;              /* 1: latent heat varies with temperature,
                                  L(T) = L + (cp_liq - cp_sol)(T - Tf0);
                                  0: constant L (the cp/L rule's model) */
};
/*
 * Defaults: 20 g water (constants as in datasets/solvents.csv), pure, i = 1,
 * start 5 C, bath -6 C, tau 120 s, no stirring heat, supercooling 1.5 K,
 * probe lag 2 s, noise 2 mK, resolution 1 mK, dt 1 s, 1 cycle, freeze 900 s,
 * seed 1, G 0.05 /(K s), x_a 0.0005, thaw bath start + 3 K, no bath
 * drift, no bath channel, constant latent heat.
 */
void ff_sim_params_default(struct ff_sim_params *p);

/* Water as the defaults use it (same values as datasets/solvents.csv). */
void ff_sim_water(struct ff_solvent *s);

/* Copies solvent s into p and moves the start and bath temperatures to
 * s->tf_c + 5 and s->tf_c - 6 (the water defaults, relative to Tf0). */
void ff_sim_params_solvent(struct ff_sim_params *p, const struct ff_solvent *s);

/* Freezing point of the initial solution under the model's own law:
 * Tf0 - i Kf b0 [C]. */
double ff_sim_true_fp_c(const struct ff_sim_params *p);

/* One simulated record. Owned by the caller: _INIT, then _release. */
struct ff_sim_result {
  size_t n;
  double *t_s;                 /* sample times, k * dt_s */
  double *temp_c;              /* what the thermometer reports; NaN = dropout */
  double true_fp_c;            /* freezing point of the initial solution
                                  (physical, without the probe offset) */
  size_t n_cycles;
  double nucleation_t_s[FF_SIM_MAX_CYCLES];   /* per cycle; NaN = none */
  double supercool_k[FF_SIM_MAX_CYCLES];      /* per cycle, actual; NaN */
  /* Added: the hidden truth behind each sample, for tests and benchmarks. */
  double *sample_c;            /* true sample temperature (no probe effects) */
  double *ice_frac;            /* frozen fraction of the solvent, 0..1 */
  double freeze_end_t_s[FF_SIM_MAX_CYCLES];   /* thaw bath switched on */
  double cycle_start_t_s[FF_SIM_MAX_CYCLES];  /* cold bath switched on */
  double peak_c[FF_SIM_MAX_CYCLES];  /* highest true sample temperature
                                        after nucleation, before the thaw */
  double *bath_temp_c;         /* bath probe readings (NaN = dropout), only
                                  with bath_channel; else NULL */
};
#define FF_SIM_RESULT_INIT { 0 }
void ff_sim_result_release(struct ff_sim_result *r);

/*
 * Runs the model. FF_EUSAGE in d for impossible parameters (named);
 * FF_EIO when memory runs out; FF_EUNTRUSTED if the integrator fails.
 * On failure r is left empty (released).
 */
int ff_simulate_run(const struct ff_sim_params *p, struct ff_sim_result *r,
                    struct ff_diag *d);

/* Writes r as a CSV the importer reads: header "time_s,T (C)" (plus
 * ",bath (C)" when r has a bath channel), a dropout is an empty cell.
 * FF_EIO in d when the write fails. */
int ff_simulate_write_csv(const struct ff_sim_result *r, FILE *f,
                          struct ff_diag *d);

#endif /* FF_SIMULATE_H */
