/* frostfit/series.h - a whole experiment from a run sheet: import, detect,
 * thermodynamics per run, regression per solute, molar mass of unknowns.
 * The pipeline behind `frostfit series`; the last stage before output. */
#ifndef FF_SERIES_H
#define FF_SERIES_H

#include <stdio.h>
#include <stddef.h>
#include <jansson.h>

#include "frostfit/diag.h"
#include "frostfit/sheet.h"
#include "frostfit/solvent.h"
#include "frostfit/formula.h"
#include "frostfit/import.h"
#include "frostfit/detect.h"
#include "frostfit/thermo.h"
#include "frostfit/regress.h"

struct ff_series_opts {
  const struct ff_solvent_table *solvents; /* required, borrowed */
  const struct ff_atomic_table *atoms;     /* for formulas; NULL: none */
  size_t mc_draws;             /* Monte Carlo draws per run (>= 1000; 0 =
                                  no per-run check) */
  size_t mc_fit_draws;         /* refits for u(i_limit) per solute (0 = no) */
  unsigned long seed;          /* same seed, same Monte Carlo numbers */
  double confidence;           /* of the regression intervals */
  double balance_res_g;        /* balance resolution when the sheet has
                                  none: 0.001 g (common practice, no source) */
  /* Called as work finishes (stage "reading" or "analysing", items done of
   * total), never two calls at once; NULL: nothing. For a progress bar. */
  void (*progress)(void *ctx, const char *stage, size_t done, size_t total);
  void *progress_ctx;
};
#define FF_SERIES_OPTS_DEFAULT                                              \
  { .solvents = NULL, .atoms = NULL, .mc_draws = 4000, .mc_fit_draws = 300, \
    .seed = 20261201ul, .confidence = 0.95, .balance_res_g = 0.001 }

/* Where the Kf of a run came from. */
enum ff_kf_source {
  FF_KF_NONE = 0,
  FF_KF_SHEET,                 /* the run's own kf cell */
  FF_KF_STANDARD,              /* calibrated by the standards of its solvent */
  FF_KF_TABLE                  /* the solvent table */
};
/* "sheet", "standard", "table", "none" */
const char *ff_kf_source_name(enum ff_kf_source s);

/* One run: one row of the sheet, in sheet order. Plain data. */
struct ff_series_run {
  size_t row;                  /* index into the sheet's rows */
  enum ff_status status;       /* FF_OK, or why it has no result */
  struct ff_diag diag;         /* the reason, sheet:line:col or file:... */
  const struct ff_solvent *solvent; /* borrowed from opts.solvents; NULL */

  /* Freezing point (every role). */
  int has_event;
  struct ff_event event;       /* the freeze event used */
  size_t dataset;              /* index into ff_series.ds */
  size_t channel;              /* index into that dataset's ch[] */
  double tf_c, u_tf_k;

  /* Against the blank (everything but a blank without a blank). */
  double tf_blank_c, u_tf_blank_k;
  double depression_obs_k;     /* blank Tf - run Tf, as read */
  double frozen_fraction;      /* applied correction f (0: none) */
  int correction_applied;      /* 1 when f came from this run's supercooling */
  double depression_k, u_depression_k; /* after the correction */

  /* Amount of solute (samples, standards; masses for unknowns). */
  double molality_mol_kg, u_molality_mol_kg;
  double solvent_eff_g;        /* solvent incl. hydrate water when water */
  double u_solute_g, u_solvent_g;

  /* Kf used. */
  double kf_k_kg_mol, u_kf_k_kg_mol;
  enum ff_kf_source kf_source;
  char kf_from[256];           /* standard run ids or solvent name; with a
                                  probe id: "S1 on probe P1", or "S1+S2,
                                  pooled: no standard on probe P3" */
  char kf_probe[64];           /* probe whose own standards gave Kf; "" */
  unsigned flags;              /* FF_SERIES_RUN_* warnings (numbers kept) */
  double kf_cal_k_kg_mol;      /* standards: Kf this run gives, dT/(nu m) */
  double u_kf_cal_k_kg_mol;

  /* Particles (samples, standards). */
  struct ff_particles particles;
  int particles_known;
  char particles_how[128];     /* "sheet", "formula NaCl: 1:1", ... */

  /* Thermodynamics (samples, standards): thermo.h's results. */
  struct ff_run_out th;
  double mc_u_vant_hoff_i;     /* Monte Carlo u(i), NaN when not run */
  int is_water;

  /* Unknowns: apparent molar mass. */
  double conc_g_kg;            /* g solute per kg solvent */
  struct ff_mass_out mass;
  double osmolality_osmol_kg;  /* depression / Kf, every role with a blank */
};

/*
 * Run warnings (ff_series_run.flags): the numbers are computed all the
 * same, the flag says why they may be off. Both need probe ids, so a sheet
 * without a 'probe' column never raises them.
 */
#define FF_SERIES_RUN_BLANK_OTHER_PROBE 1u /* run and blank give different
                                              probe ids: offsets differ */
#define FF_SERIES_RUN_KF_OTHER_PROBES 2u   /* Kf from standards pooled over
                                              other probes: none on this */
#define FF_SERIES_RUN_FLAG_COUNT 2

/* Kf calibrated from the standards of one solvent, or of one solvent on one
 * probe (ff_series.kfcal_probe). */
struct ff_series_kfcal {
  char solvent[64];
  char probe[64];              /* "" in ff_series.kfcal (pooled) */
  size_t n;                    /* standards used */
  double kf_k_kg_mol, u_kf_k_kg_mol; /* weighted mean; u scaled by the
                                        Birge ratio when it exceeds 1 */
  double birge_ratio;          /* sqrt(chi2 / (n - 1)) of the standards'
                                  Kf about the mean; NaN when n < 2 */
  char runs[128];              /* their run ids */
};

/* One solute (sample runs grouped by solute and solvent). */
struct ff_series_solute {
  char solute[128], solvent[64];
  size_t n;
  size_t *runs;                /* n indices into ff_series.runs, owned */
  struct ff_particles particles;
  int particles_known;
  char particles_how[128];
  double mean_tf_c;            /* mean freezing temperature of its runs */
  double a_phi;                /* DH slope used (0 outside water) */
  double kf_k_kg_mol;          /* Kf of the first run (for the ideal line) */
  enum ff_status status;       /* FF_OK when at least one model fitted */
  struct ff_diag diag;
  struct ff_regress_result reg;
  int has_mc;                  /* Monte Carlo of the particle model */
  struct ff_mc_summary mc;
};

/* One unknown (unknown runs grouped by solute and solvent). */
struct ff_series_unknown {
  char solute[128], solvent[64];
  size_t n;
  size_t *runs;                /* owned */
  enum ff_status status;
  struct ff_diag diag;
  struct ff_mm_result mm;
};

/*
 * Replicates: good runs (status FF_OK) that measured the same solution.
 * Rule (series_repl.c): same role (sample, unknown or standard; blanks
 * never), same solvent and solute (case-insensitive, as the solute groups)
 * and molality equal within FF_SERIES_REPL_REL_TOL relative (unknowns,
 * whose molality is not known: concentration in g solute per kg solvent).
 * A row reading a freeze already in the group (same data file, channel and
 * cycle, e.g. with another method) is one measurement read twice and is
 * left out. Two runs or more make a group. Plain data but runs (owned).
 */
#define FF_SERIES_REPL_REL_TOL 1e-6
#define FF_SERIES_REPL_P_FLAG 0.01  /* p below this: scatter flagged */
#define FF_SERIES_REPL_SCATTER 1u   /* flag: scatter exceeds the stated u */
struct ff_series_repl {
  enum ff_sheet_role role;
  char solute[128], solvent[64];
  double molality_mol_kg;      /* of the first run; NaN for unknowns */
  double conc_g_kg;            /* unknowns: g per kg solvent; NaN else */
  size_t n;                    /* runs, >= 2 */
  size_t *runs;                /* n indices into ff_series.runs, owned */
  /* Depression: plain mean, sample SD s (n - 1) and s/sqrt(n). */
  double depression_mean_k, depression_sd_k, depression_se_k;
  /* Inverse-variance weighted mean of the depressions with u from the
   * stated u(dT), chi2 about it with dof = n - 1, p = Q(chi2 | dof) and the
   * Birge ratio sqrt(chi2/dof). NaN when any stated u is not positive. */
  double depression_weighted_k, u_depression_weighted_k;
  double chi2;
  size_t dof;
  double p_value, birge_ratio;
  /* van 't Hoff i: plain mean and SD; NaN when a run has no i. */
  double vant_hoff_i_mean, vant_hoff_i_sd;
  unsigned flags;              /* FF_SERIES_REPL_SCATTER */
};

/*
 * The statistics of one group from its n depressions dt_k with stated
 * u_dt_k and van 't Hoff factors vh_i (NaN where none); all borrowed.
 * Fills every number and flag of g (not its names or runs). n >= 2.
 */
void ff_series_repl_stats(struct ff_series_repl *g, const double *dt_k,
                          const double *u_dt_k, const double *vh_i, size_t n);

/* The sentence behind FF_SERIES_REPL_SCATTER, with g's Birge ratio, into
 * buf (n bytes); "" when g is not flagged. Returns buf. */
const char *ff_series_repl_note(const struct ff_series_repl *g, char *buf,
                                size_t n);

/* The whole result. _INIT, ff_series_run, then _release. */
struct ff_series {
  const struct ff_sheet *sheet;        /* borrowed */
  size_t n_runs;
  struct ff_series_run *runs;          /* one per sheet row */
  size_t n_solutes;
  struct ff_series_solute *solutes;
  size_t n_unknowns;
  struct ff_series_unknown *unknowns;
  size_t n_kfcal;
  struct ff_series_kfcal *kfcal;       /* per solvent, every probe pooled */
  size_t n_kfcal_probe;
  struct ff_series_kfcal *kfcal_probe; /* per solvent and probe id: the
                                          standards that give a probe id */
  size_t n_ds;
  struct ff_dataset **ds;              /* each data file read once, owned */
  size_t n_failed;                     /* runs without a result */
  size_t n_repl;                       /* replicate groups, sheet order */
  struct ff_series_repl *repl;         /* of their first runs */
};
#define FF_SERIES_INIT { 0 }

/* "blank_other_probe", "kf_other_probes"; "?" for anything else. */
const char *ff_series_run_flag_name(unsigned flag);

/* The sentence behind one flag of r (e.g. "the blank was measured on probe
 * P1, this run on probe P2: their calibration offsets do not cancel") into
 * buf (n bytes); "" when r does not carry flag. Returns buf. */
const char *ff_series_run_note(const struct ff_series *s,
                               const struct ff_series_run *r, unsigned flag,
                               char *buf, size_t n);

/*
 * Runs the pipeline over every row of sheet (rows the reader rejected keep
 * their reason and get no result). Each run stands alone: a bad file or an
 * untrusted freezing point is recorded in that run (and in the runs that
 * need it as their blank or standard), the rest still go through.
 * Returns FF_OK when every run and fit (of three or more runs) gave a
 * result; otherwise FF_EIO when a data file could not be read, else
 * FF_EINPUT when any run failed on bad input, else FF_EUNTRUSTED; d holds
 * the first such problem and out holds every result. Out of memory:
 * FF_EIO with out released (n_runs 0).
 */
int ff_series_run(const struct ff_sheet *sheet, const struct ff_series_opts *o,
                  struct ff_series *out, struct ff_diag *d);

void ff_series_release(struct ff_series *s);

/*
 * Groups s->runs into replicates (the rule above ff_series_repl) and fills
 * s->repl; any earlier groups are freed first. ff_series_run calls it; for
 * a series built by hand, s->sheet and s->runs must be set. Returns FF_OK,
 * or FF_EIO when out of memory (then no groups).
 */
int ff_series_replicates(struct ff_series *s);

/*
 * Particles of one formula unit, from (in this order) the z_plus/z_minus
 * cells, a formula recognised as a simple salt (one cation, one anion of a
 * built-in list: the charges follow from the anion's charge and
 * neutrality), the particles cell alone (1 non-electrolyte, 2 -> 1:1,
 * 3 -> 2:1, 4 -> 3:1, 5 -> 3:2). Returns 1 when known (how says which way),
 * 0 when not.
 */
int ff_series_particles(const struct ff_sheet_row *r, struct ff_particles *p,
                        char *how, size_t n);

/* The --json document (DESIGN.md contract). New reference; NULL: no memory. */
json_t *ff_series_to_json(const struct ff_series *s);

/* The spreadsheet CSV: one row per run, then solute and unknown rows
 * (docs/formats/series-output.md). Returns 0, -1 when a write failed. */
int ff_series_write_csv(const struct ff_series *s, FILE *f);

#endif /* FF_SERIES_H */
