/* frostfit/plot.h - lab-report figures: editable gnuplot scripts + data, rendered by gnuplot. */
#ifndef FF_PLOT_H
#define FF_PLOT_H

/*
 * The last stage. Callers (point, series) map their results onto the plain
 * figure descriptions below; this module depends on no other stage.
 *
 * For each figure the set writes into its output folder
 *   NAME.gp   a self-contained gnuplot script (style inlined, all numbers
 *             and labels in it, data and output names relative to the
 *             folder), re-runnable with `cd DIR && gnuplot NAME.gp`;
 *   NAME.dat  its data, whitespace-separated, a '#' comment header naming
 *             every block and column (blocks are gnuplot "index" blocks);
 * and ff_plot_render() writes render.gp (loads every figure script) and,
 * when gnuplot is on PATH, runs gnuplot (a few processes, not one per
 * figure):
 * NAME.png (pngcairo), NAME.svg, NAME.pdf (pdfcairo) as the format set asks.
 *
 * Every text that may come from user files (titles, run ids, solute and
 * model names) goes into the scripts through ff_plot_quote(): single-quoted,
 * control characters and '@' replaced, rendered noenhanced; every file name
 * goes through ff_plot_safe_name(). Files are replaced atomically
 * (temporary file in the same folder, then rename).
 *
 * Numbers are written with printf, so LC_NUMERIC must stay "C" (the
 * project's rule) or gnuplot would read decimal commas as separators.
 *
 * All arrays in the figure structs are borrowed for the duration of the
 * ff_plot_add_* call only; nothing is kept. Non-finite values are skipped
 * (in a sampled curve they break the line). Optional arrays may be NULL;
 * an optional curve has n = 0.
 */

#include <stddef.h>
#include "frostfit/diag.h"

/* Output formats, a bit set. */
enum ff_plot_format {
  FF_PLOT_PNG = 1u << 0,       /* pngcairo */
  FF_PLOT_SVG = 1u << 1,       /* svg */
  FF_PLOT_PDF = 1u << 2        /* pdfcairo */
};
#define FF_PLOT_FORMATS_ALL (FF_PLOT_PNG | FF_PLOT_SVG | FF_PLOT_PDF)

/*
 * Parses a comma-separated format list such as "png,svg,pdf" (also "all")
 * into *out. FF_EUSAGE in d for an unknown or empty name.
 */
int ff_plot_parse_formats(const char *s, unsigned *out, struct ff_diag *d);

/* Options of a figure set. */
struct ff_plot_opts {
  unsigned formats;            /* FF_PLOT_* bits; 0 means FF_PLOT_PNG */
  const char *plots_dir;       /* folder holding style.gp (the repo's plots/,
                                  sibling of ff_cli_datadir()); NULL or
                                  missing file: the built-in copy is used */
  const char *gnuplot;         /* program to run; NULL: "gnuplot" on PATH */
  int no_render;               /* 1: write scripts only, never run gnuplot */
  /* Called from ff_plot_render() (the calling thread) as figures finish,
   * stage "rendering figures", at most about ten times a second and once
   * at the end; NULL: none. */
  void (*progress)(void *ctx, const char *stage, size_t done, size_t total);
  void *progress_ctx;
};
#define FF_PLOT_OPTS_DEFAULT { FF_PLOT_PNG, NULL, NULL, 0, NULL, NULL }

/* A sampled curve, optionally with a band lo..hi (e.g. 95 % confidence). */
struct ff_plot_curve {
  const double *x, *y;         /* n samples, x increasing */
  const double *lo, *hi;       /* band limits at x, or NULL: no band */
  size_t n;                    /* 0: no curve */
};

/* One freeze event: the construction behind a freezing point. */
struct ff_plot_event_fig {
  const char *name;            /* file stem, e.g. "run3_T1_c1"; sanitised */
  const char *title;           /* free text, e.g. run id and channel */
  const double *t_s, *temp_c;  /* measured curve, n samples [s], [°C] */
  size_t n;
  struct ff_plot_curve liquid;     /* fitted liquid-cooling curve [s, °C] */
  struct ff_plot_curve freezing;   /* fitted freezing branch [s, °C] */
  struct ff_plot_curve extrap;     /* extrapolation back to the instant
                                      the freezing point is read at */
  double t_nucleation_s;       /* nucleation instant; NaN: not drawn */
  double t_read_s;             /* where the freezing point is read (marker);
                                  NaN: at t_nucleation_s */
  double freezing_point_c;     /* result [°C]; must be finite */
  double u_freezing_point_k;   /* standard uncertainty [K]; NaN: no band */
  double coverage_k;           /* band = ± coverage_k * u; <= 0 means 2 */
  const char *method;          /* e.g. "back-extrapolation"; may be NULL */
  double zoom_t0_s, zoom_t1_s; /* zoom panel time range; NaN: automatic */
  double zoom_half_k;          /* zoom panel half-height around the result
                                  [K]; NaN or <= 0: automatic */
};

/* One fitted model of i against concentration, for the solute figure. */
struct ff_plot_model {
  const char *name;            /* e.g. "Debye-Huckel + ion pairing" */
  struct ff_plot_curve curve;  /* i at x (same x as the points), 95 % band */
  double i_limit;              /* value at m = 0; NaN: not marked */
  double u_i_limit;            /* its standard uncertainty; NaN: none */
};

/* One solute: i against sqrt(m) (or m), depression against m, residuals. */
struct ff_plot_solute_fig {
  const char *name;            /* file stem; sanitised */
  const char *title;           /* free text, e.g. "NaCl in water" */
  int x_is_sqrt;               /* 1: x = sqrt(m / (mol/kg)); 0: x = m */
  const double *x;             /* n points: concentration as x_is_sqrt says */
  const double *i, *u_i;       /* van 't Hoff factor and its standard
                                  uncertainty (u_i may be NULL) */
  size_t n;
  const struct ff_plot_model *models;
  size_t n_models;
  size_t preferred;            /* index of the preferred model (bold) */
  const double *resid_i;       /* n residuals i - preferred model, or NULL:
                                  no residual panel */
  /* Depression panel, drawn when m_mol_kg and dt_k are not NULL. */
  const double *m_mol_kg;      /* n molalities [mol/kg] */
  const double *dt_k, *u_dt_k; /* depression and its standard uncertainty [K] */
  double ideal_slope_k_kg_mol; /* Kf * nu: the ideal line; NaN: not drawn */
};

/* One unknown: apparent molar mass against concentration, extrapolated. */
struct ff_plot_unknown_fig {
  const char *name;            /* file stem; sanitised */
  const char *title;
  const char *x_label;         /* axis label with unit; NULL:
                                  "solute / solvent (g/kg)" */
  const double *x;             /* n concentrations, in x_label's unit */
  const double *m_g_mol, *u_m_g_mol;   /* apparent molar mass [g/mol] */
  size_t n;
  struct ff_plot_curve fit;    /* extrapolation line to x = 0, with band */
  double m0_g_mol, u_m0_g_mol; /* value at x = 0; NaN: not marked */
};

/* One run of a series, for the overview. */
struct ff_plot_run {
  const char *run;             /* run id (free text) */
  const char *solute;          /* group name; NULL or "": blank/solvent */
  double freezing_point_c, u_freezing_point_k;
  double molality_mol_kg;      /* NaN: not a sample with known molality */
  double depression_k, u_depression_k;
  double vant_hoff_i, u_vant_hoff_i;
};

/* One solute's limiting value, for the overview. */
struct ff_plot_limit {
  const char *solute;
  double particles;            /* nu (full dissociation); NaN: unknown */
  double i_limit, ci_lo, ci_hi;        /* preferred model, 95 % interval */
  double ideal_slope_k_kg_mol; /* Kf * nu for the depression panel; NaN */
  const char *label;           /* short tick label for the limits panel
                                  (e.g. the formula); NULL: solute */
};

/* A whole series on one page (2 x 2 panels). */
struct ff_plot_overview_fig {
  const char *name;            /* file stem; sanitised */
  const char *title;
  const struct ff_plot_run *runs;
  size_t n_runs;
  const struct ff_plot_limit *limits;
  size_t n_limits;
};

/* What ff_plot_render() did. */
struct ff_plot_report {
  int rendered;                /* 1: gnuplot ran; 0: scripts only */
  size_t n_figures;            /* figure scripts in the set */
  size_t n_failed;             /* figures gnuplot failed on */
  double seconds;              /* wall time gnuplot took */
  unsigned processes;          /* gnuplot processes run side by side */
  char command[1200];          /* shell line that renders the set, e.g.
                                  cd '/out' && gnuplot render.gp */
  char errors[4096];           /* gnuplot's stderr, "NAME.gp: message"
                                  lines; "" when clean (may be truncated) */
};

struct ff_plot_set;            /* opaque: output folder + scripts written */

/*
 * Starts a figure set writing into out_dir (created if missing, parents
 * too). o may be NULL for the defaults. Returns NULL with FF_EIO (cannot
 * create, read style) or FF_EUSAGE (bad options) in d.
 */
struct ff_plot_set *ff_plot_set_new(const char *out_dir,
                                    const struct ff_plot_opts *o,
                                    struct ff_diag *d);
void ff_plot_set_free(struct ff_plot_set *s);

/* The output folder as given; borrowed from the set. */
const char *ff_plot_set_dir(const struct ff_plot_set *s);

/*
 * Each writes NAME.gp and NAME.dat (NAME sanitised, made unique within the
 * set by a numeric suffix). Returns FF_OK; FF_EUSAGE in d for an unusable
 * description (no points, non-finite result); FF_EIO when a write fails.
 */
int ff_plot_add_event(struct ff_plot_set *s, const struct ff_plot_event_fig *f,
                      struct ff_diag *d);
int ff_plot_add_solute(struct ff_plot_set *s,
                       const struct ff_plot_solute_fig *f, struct ff_diag *d);
int ff_plot_add_unknown(struct ff_plot_set *s,
                        const struct ff_plot_unknown_fig *f,
                        struct ff_diag *d);
int ff_plot_add_overview(struct ff_plot_set *s,
                         const struct ff_plot_overview_fig *f,
                         struct ff_diag *d);

/*
 * Writes render.gp and, unless opts.no_render or gnuplot is not found,
 * runs gnuplot over all figures (fork/exec, no shell, stderr captured):
 * one process per CPU (at most 4, at least 4 figures each), each loading
 * a contiguous share of the scripts; an error in one figure does not stop
 * the others. A missing gnuplot is not an error: FF_OK with
 * r->rendered = 0 and r->command telling how to render. FF_EIO when
 * gnuplot failed on a figure (r->errors names each script) or could not
 * be run. r may not be NULL.
 */
int ff_plot_render(struct ff_plot_set *s, struct ff_plot_report *r,
                   struct ff_diag *d);

/* ---- adapters for the CLI ---- */

struct ff_event;               /* frostfit/detect.h */

/*
 * Adds the figure of one detected freeze event: the channel's curve t_s,
 * temp_c (n samples, borrowed; the part inside the event's share of the
 * record is drawn) with the event's fits evaluated by the detector.
 * file and channel name the figure ("<file stem>_<channel>_c<cycle>") and
 * its title. Only trusted events are drawn: FF_EUNTRUSTED in d for an
 * event without a trustworthy freezing point; otherwise as
 * ff_plot_add_event.
 */
int ff_plot_add_detected(struct ff_plot_set *s, const char *file,
                         const char *channel, const double *t_s,
                         const double *temp_c, size_t n,
                         const struct ff_event *e, struct ff_diag *d);

/*
 * The plots/ folder beside a data folder (ff_cli_datadir() gives
 * ".../datasets"; plots/ is its sibling) into out (size n). Returns out.
 */
char *ff_plot_dir_beside(const char *datadir, char *out, size_t n);

/* ---- building blocks, public for tests and other writers ---- */

/*
 * Writes s as a gnuplot single-quoted string literal, quotes included, into
 * out (size n, always terminated): '' for ', control characters (newline,
 * tab, ...) as a space, '@' as "(at)", invalid UTF-8 bytes as '?'; cut at a
 * character boundary to fit. NULL s gives ''. Returns out.
 */
char *ff_plot_quote(const char *s, char *out, size_t n);

/*
 * Makes a safe file stem from s into out (size n): characters outside
 * [A-Za-z0-9._-] become '_', a leading '-' or '.' becomes '_', runs of '_'
 * collapse, empty gives "figure". Returns out.
 */
char *ff_plot_safe_name(const char *s, char *out, size_t n);

/*
 * Replaces dir/name with len bytes of data atomically: writes a temporary
 * file in dir, then rename(). FF_EIO in d on failure (temporary removed).
 */
int ff_plot_write_atomic(const char *dir, const char *name, const void *data,
                         size_t len, struct ff_diag *d);

/*
 * Finds prog (NULL: "gnuplot") as execvp would: a name with '/' is checked
 * directly, else each PATH entry. Writes the absolute path into out
 * (size n). Returns 1 when found and executable, 0 otherwise.
 */
int ff_plot_find_gnuplot(const char *prog, char *out, size_t n);

#endif /* FF_PLOT_H */
