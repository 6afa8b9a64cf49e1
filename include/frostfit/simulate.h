/* frostfit/simulate.h - physical cooling-curve model: the ground truth. */
#ifndef FF_SIMULATE_H
#define FF_SIMULATE_H

#include <stdio.h>
#include <stddef.h>
#include "frostfit/diag.h"
#include "frostfit/solvent.h"

/* Parameters of a stirred sample tube in a cold bath, and its thermometer. */
struct ff_sim_params {
  struct ff_solvent solvent;   /* copied constants */
  double solvent_g;            /* solvent mass */
  double molality_mol_kg;      /* solute, as weighed */
  double vant_hoff_i;          /* particles actually formed per formula unit */
  double start_c;              /* sample temperature at t = 0 */
  double bath_c;               /* bath temperature */
  double tau_s;                /* heat-transfer time constant of the liquid */
  double stir_w;               /* stirring heat input */
  double supercool_k;          /* nucleation this far below Tf; < 0: random */
  double growth_rate;          /* kinetic ice growth constant (see docs) */
  double probe_lag_s;          /* first-order thermometer time constant */
  double noise_k;              /* Gaussian noise, standard deviation */
  double resolution_k;         /* quantisation step, 0 = none */
  double offset_k;             /* calibration offset of the probe */
  double dt_s;                 /* sampling interval */
  double dropout;              /* fraction of samples lost, 0..1 */
  double freeze_s;             /* how long each freeze is followed */
  unsigned cycles;             /* freeze-thaw cycles in one file */
  unsigned long seed;          /* RNG seed: same seed, same curve */
};
/* Defaults: 20 g water, pure, i = 1, 5 C start, -6 C bath, see simulate.c */
void ff_sim_params_default(struct ff_sim_params *p);

/* One simulated record. Owned by the caller: _INIT, then _release. */
struct ff_sim_result {
  size_t n;
  double *t_s;                 /* sample times */
  double *temp_c;              /* what the thermometer reports; NaN = dropout */
  double true_fp_c;            /* freezing point of the initial solution */
  size_t n_cycles;
  double nucleation_t_s[16];   /* per cycle */
  double supercool_k[16];      /* per cycle, actual */
};
#define FF_SIM_RESULT_INIT { 0 }
void ff_sim_result_release(struct ff_sim_result *r);

/* Runs the model. FF_EUSAGE in d for impossible parameters. */
int ff_simulate_run(const struct ff_sim_params *p, struct ff_sim_result *r,
                    struct ff_diag *d);

/* Writes r as a CSV the importer reads ("time_s,T (C)" by default). */
int ff_simulate_write_csv(const struct ff_sim_result *r, FILE *f,
                          struct ff_diag *d);

#endif /* FF_SIMULATE_H */
