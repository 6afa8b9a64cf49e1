/* plot_figures.c - plot stage: the four figure kinds as gnuplot scripts plus data files. */
#include <math.h>
#include <stdarg.h>
#include <stdlib.h>
#include <string.h>
#include "frostfit/plot.h"
#include "plot_impl.h"

#define QMAX 600               /* a quoted label: 256 characters of text */
#define KEY_MAX 256

/* ---------------------------------------------------------------- data */

/* The data file: gnuplot "index" blocks separated by two blank lines. */
struct dat {
  FILE *f;
  int next;                    /* index the next block gets */
};

/*
 * Writes one block of n rows from ncol columns; a row is written when its
 * first nreq values are finite (later ones may be NaN, which gnuplot skips
 * per plot). With gaps, a skipped row breaks the line (one
 * blank line, never two: two would start a new block). Returns the block
 * index, or -1 when no row is valid (then nothing is written, so the
 * script never plots an empty block, which gnuplot warns about).
 */
static int dat_block_req(struct dat *b, const char *what,
                         const char *columns, size_t n, int ncol, int nreq,
                         const double *const *col, int gaps)
{
  size_t r, valid = 0;
  int c, pending = 0, printed = 0;

  for (r = 0; r < n; r++) {
    for (c = 0; c < nreq && isfinite(col[c][r]); c++)
      ;
    valid += c == nreq;
  }
  if (valid == 0)
    return -1;
  if (b->next > 0)
    fputs("\n\n", b->f);
  fprintf(b->f, "# index %d: %s\n# %s\n", b->next, what, columns);
  for (r = 0; r < n; r++) {
    for (c = 0; c < nreq && isfinite(col[c][r]); c++)
      ;
    if (c < nreq) {
      pending = gaps;
      continue;
    }
    if (pending && printed)
      fputc('\n', b->f);
    pending = 0;
    printed = 1;
    for (c = 0; c < ncol; c++) {
      if (c > 0)
        fputc(' ', b->f);
      if (isfinite(col[c][r]))
        fprintf(b->f, "%.10g", col[c][r]);
      else
        fputs("NaN", b->f);   /* style.gp: set datafile missing 'NaN' */
    }
    fputc('\n', b->f);
  }
  return b->next++;
}

/* A block whose rows need every column finite. */
static int dat_block(struct dat *b, const char *what, const char *columns,
                     size_t n, int ncol, const double *const *col, int gaps)
{
  return dat_block_req(b, what, columns, n, ncol, ncol, col, gaps);
}

/* A sampled curve: x y, or x y lo hi when it has a band. */
static int dat_curve(struct dat *b, const char *what,
                     const struct ff_plot_curve *cv, const char *xname,
                     const char *yname, int *has_band)
{
  const double *col[4] = { cv->x, cv->y, cv->lo, cv->hi };
  char columns[200];

  *has_band = cv->lo != NULL && cv->hi != NULL;
  if (cv->n == 0 || cv->x == NULL || cv->y == NULL)
    return -1;
  snprintf(columns, sizeof columns, "%s  %s%s", xname, yname,
           *has_band ? "  lower  upper (95 % band)" : "");
  return dat_block(b, what, columns, cv->n, *has_band ? 4 : 2, col, 1);
}

/* ------------------------------------------------------------- scripts */

static const char *q(const char *s, char *buf)
{
  return ff_plot_quote(s, buf, QMAX);
}

/* Opening lines shared by every figure script. */
static void script_begin(FILE *f, const struct ff_plot_set *s,
                         const char *stem, const char *what,
                         const char *title, double w_cm, double h_cm)
{
  char buf[QMAX], words[32];

  fprintf(f,
          "# %s.gp - %s\n"
          "# %s\n"
          "# Written by frostfit; edit freely. Re-render from this folder with\n"
          "#   gnuplot %s.gp\n"
          "# or choose formats: gnuplot -e \"formats = 'png svg pdf'\" %s.gp\n"
          "# Data: %s.dat (its comment lines name every block and column).\n"
          "reset\n"
          "# ---- style (a copy of plots/style.gp) ----\n",
          stem, what, q(title, buf), stem, stem, stem);
  fputs(s->style, f);
  if (s->style[0] != '\0' && s->style[strlen(s->style) - 1] != '\n')
    fputc('\n', f);
  fprintf(f, "# ---- end of style ----\n"
             "if (!exists(\"formats\")) formats = '%s'\n"
             "# frostfit renders to hidden names first, then renames them\n"
             "if (!exists(\"outprefix\")) outprefix = ''\n"
             "fig_w_cm = %g\nfig_h_cm = %g\n",
          ff_plot_formats_words(s->formats, words, sizeof words), w_cm, h_cm);
}

static void loop_begin(FILE *f, const char *stem)
{
  fprintf(f, "\ndo for [fmt in formats] {\n"
             "  eval term_for(fmt, fig_w_cm, fig_h_cm)\n"
             "  set output outprefix.'%s.'.fmt\n"
             "  set autoscale xy\n"
             "  set format xy '%%g'\n", stem);
}

static void loop_end(FILE *f)
{
  fputs("  unset multiplot\n  set output\n}\n", f);
}

/* Writes "name = value  # comment"; a non-finite value is written as NaN. */
static void var(FILE *f, const char *name, double v, const char *comment)
{
  if (isfinite(v))
    fprintf(f, "%s = %.10g", name, v);
  else
    fprintf(f, "%s = NaN", name);
  fprintf(f, "%s%s\n", comment != NULL ? "    # " : "",
          comment != NULL ? comment : "");
}

/* Plot clauses joined with ", \" continuation lines. */
struct clauses {
  FILE *f;
  int n;
};

static void clause(struct clauses *c, const char *fmt, ...)
  __attribute__((format(printf, 2, 3)));

static void clause(struct clauses *c, const char *fmt, ...)
{
  va_list ap;

  fputs(c->n == 0 ? "  plot " : ", \\\n       ", c->f);
  va_start(ap, fmt);
  vfprintf(c->f, fmt, ap);
  va_end(ap);
  c->n++;
}

static void clauses_end(struct clauses *c)
{
  if (c->n > 0)
    fputc('\n', c->f);
  c->n = 0;
}

static int finish(struct ff_plot_set *s, const char *stem,
                  struct ff_plot_buf *gp, struct ff_plot_buf *dat,
                  struct ff_diag *d)
{
  char name[FF_PLOT_STEM_MAX + 8];
  int st;

  snprintf(name, sizeof name, "%s.dat", stem);
  st = ff_plot_buf_commit(dat, s->dir, name, d);
  if (st != FF_OK) {
    ff_plot_buf_discard(gp);
    return st;
  }
  snprintf(name, sizeof name, "%s.gp", stem);
  return ff_plot_buf_commit(gp, s->dir, name, d);
}

static int open_both(struct ff_plot_buf *gp, struct ff_plot_buf *dat,
                     struct ff_diag *d)
{
  if (ff_plot_buf_open(gp, d) != FF_OK)
    return FF_EIO;
  if (ff_plot_buf_open(dat, d) != FF_OK) {
    ff_plot_buf_discard(gp);
    return FF_EIO;
  }
  return FF_OK;
}

/* A round tic step giving at most max_tics intervals over span. */
static double nice_step(double span, int max_tics)
{
  static const double m[] = { 1.0, 2.0, 2.5, 5.0, 10.0 };
  double raw = span / max_tics, mag;
  size_t k;

  if (!(raw > 0.0) || !isfinite(raw))
    return 1.0;
  mag = pow(10.0, floor(log10(raw)));
  for (k = 0; k < sizeof m / sizeof m[0]; k++)
    if (m[k] * mag >= raw * (1.0 - 1e-9))
      return m[k] * mag;
  return 10.0 * mag;
}

static double finite_or(double v, double fallback)
{
  return isfinite(v) ? v : fallback;
}

/* ---------------------------------------------------------------- event */

struct range {
  double lo, hi;
};

static void range_add(struct range *r, double v)
{
  if (!isfinite(v))
    return;
  if (v < r->lo)
    r->lo = v;
  if (v > r->hi)
    r->hi = v;
}

/*
 * The zoom panel: from a little before nucleation to the end of the fitted
 * freezing branch; in temperature, around the result, tall enough for the
 * band and the fitted branch near it but never so tall that millikelvin
 * steps vanish (0.25 K at most unless the band itself is larger).
 */
static void event_zoom(const struct ff_plot_event_fig *e, double U,
                       double z[4])
{
  struct range rec = { HUGE_VAL, -HUGE_VAL }, br = { HUGE_VAL, -HUGE_VAL };
  double t_mark = finite_or(e->t_read_s, e->t_nucleation_s);
  double w, half = 0.0, Tf = e->freezing_point_c;
  size_t k;

  for (k = 0; k < e->n; k++)
    range_add(&rec, e->t_s[k]);
  for (k = 0; k < e->freezing.n; k++)
    if (e->freezing.x != NULL)
      range_add(&br, e->freezing.x[k]);
  range_add(&br, e->t_nucleation_s);
  range_add(&br, t_mark);
  if (!(br.hi > br.lo)) {
    double c = isfinite(br.lo) ? br.lo : 0.5 * (rec.lo + rec.hi);

    w = 0.1 * (rec.hi - rec.lo);
    br.lo = c - 0.5 * w;
    br.hi = c + 0.5 * w;
  }
  w = br.hi - br.lo;
  z[0] = isfinite(e->zoom_t0_s) ? e->zoom_t0_s : fmax(rec.lo, br.lo - 0.3 * w);
  z[1] = isfinite(e->zoom_t1_s) ? e->zoom_t1_s : fmin(rec.hi, br.hi + 0.1 * w);
  if (!(z[1] > z[0])) {
    z[0] = rec.lo;
    z[1] = rec.hi;
  }
  if (isfinite(e->zoom_half_k) && e->zoom_half_k > 0.0) {
    half = e->zoom_half_k;
  } else {
    for (k = 0; k < e->freezing.n; k++)
      if (e->freezing.x != NULL && e->freezing.y != NULL &&
          e->freezing.x[k] >= z[0] && e->freezing.x[k] <= z[1] &&
          isfinite(e->freezing.y[k]))
        half = fmax(half, 1.15 * fabs(e->freezing.y[k] - Tf));
    half = fmin(half, 0.25);
    half = fmax(half, fmax(4.0 * finite_or(U, 0.0), 0.01));
  }
  z[2] = Tf - half;
  z[3] = Tf + fmax(0.4 * half, 1.5 * finite_or(U, 0.0));
}

int ff_plot_add_event(struct ff_plot_set *s, const struct ff_plot_event_fig *e,
                      struct ff_diag *d)
{
  struct ff_plot_buf gp, db;
  struct dat dat;
  struct clauses c;
  char stem[FF_PLOT_STEM_MAX], buf[QMAX], key[KEY_MAX];
  double kcov = e->coverage_k > 0.0 ? e->coverage_k : 2.0;
  double U = kcov * e->u_freezing_point_k;
  double t_mark = finite_or(e->t_read_s, e->t_nucleation_s);
  double z[4];
  int i_meas, i_liq, i_frz, i_ext, i_res = -1, band_unused, panel;
  const char *ycol;
  double t_lo = HUGE_VAL, t_hi = -HUGE_VAL;
  size_t k;

  if (e->n < 2 || e->t_s == NULL || e->temp_c == NULL)
    return ff_diag_set(d, FF_EUSAGE, NULL, "event figure '%s': no curve",
                       e->name != NULL ? e->name : "");
  if (!isfinite(e->freezing_point_c))
    return ff_diag_set(d, FF_EUSAGE, NULL,
                       "event figure '%s': no freezing point to draw",
                       e->name != NULL ? e->name : "");
  if (ff_plot_set_claim(s, e->name, stem, d) != FF_OK ||
      open_both(&gp, &db, d) != FF_OK)
    return FF_EIO;
  dat.f = db.f;
  dat.next = 0;
  event_zoom(e, U, z);
  for (k = 0; k < e->n; k++)
    if (isfinite(e->t_s[k]) && isfinite(e->temp_c[k])) {
      t_lo = fmin(t_lo, e->t_s[k]);
      t_hi = fmax(t_hi, e->t_s[k]);
    }

  fprintf(db.f, "# %s.dat - data of %s.gp: %s\n", stem, stem,
          q(e->title, buf));
  {
    const double *col[2] = { e->t_s, e->temp_c };

    i_meas = dat_block(&dat, "measured curve", "time_s  temp_C", e->n, 2,
                       col, 1);
  }
  i_liq = dat_curve(&dat, "fitted liquid-cooling curve", &e->liquid,
                    "time_s", "temp_C", &band_unused);
  i_frz = dat_curve(&dat, "fitted freezing branch", &e->freezing, "time_s",
                    "temp_C", &band_unused);
  i_ext = dat_curve(&dat, "extrapolation to the reading instant",
                    &e->extrap, "time_s", "temp_C", &band_unused);
  if (isfinite(t_mark)) {
    double one_t = t_mark, one_T = e->freezing_point_c;
    double one_U = finite_or(U, 0.0);
    const double *col[3] = { &one_t, &one_T, &one_U };

    i_res = dat_block(&dat, "freezing point where it is read",
                      "time_s  temp_C  half_width_K (coverage factor k times u)",
                      1, 3, col, 0);
  }
  if (i_meas < 0) {
    ff_plot_buf_discard(&gp);
    ff_plot_buf_discard(&db);
    return ff_diag_set(d, FF_EUSAGE, NULL,
                       "event figure '%s': no finite sample", stem);
  }

  script_begin(gp.f, s, stem, "cooling curve and freezing-point construction",
               e->title, 17.0, 9.5);
  fprintf(gp.f, "# ---- this result ----\n");
  fprintf(gp.f, "title_text = %s\n", q(e->title, buf));
  fprintf(gp.f, "method_text = %s\n", q(e->method != NULL ? e->method : "",
                                         buf));
  var(gp.f, "Tf", e->freezing_point_c, "freezing point (°C)");
  var(gp.f, "u_Tf", e->u_freezing_point_k, "standard uncertainty (K)");
  var(gp.f, "k_cov", kcov, "coverage factor of the band");
  fprintf(gp.f, "U = k_cov * u_Tf    # band half-width (K)\n");
  var(gp.f, "t_nuc", e->t_nucleation_s, "nucleation instant (s)");
  var(gp.f, "zoom_t0", z[0], "zoom panel: time range (s)");
  var(gp.f, "zoom_t1", z[1], NULL);
  if (!(t_hi > t_lo))
    t_hi = t_lo + 1.0;
  var(gp.f, "rec_t0", t_lo, "whole record: time range (s)");
  var(gp.f, "rec_t1", t_hi, NULL);
  var(gp.f, "tic_s", nice_step(t_hi - t_lo, 4), "time tic steps (s), "
      "wide enough for the labels");
  var(gp.f, "zoom_tic_s", nice_step(z[1] - z[0], 4), NULL);
  var(gp.f, "zoom_mK0", 1000.0 * (z[2] - e->freezing_point_c),
      "zoom panel: range of T - Tf (mK)");
  var(gp.f, "zoom_mK1", 1000.0 * (z[3] - e->freezing_point_c), NULL);
  if (isfinite(U))
    fputs("result_text = sprintf(\"freezing point %.4f °C ± %.4f K "
          "(k = %g)\", Tf, U, k_cov)\n", gp.f);
  else
    fputs("result_text = sprintf(\"freezing point %.4f °C\", Tf)\n", gp.f);
  fputs("if (strlen(method_text) > 0) result_text = result_text . ', ' . "
        "method_text\n", gp.f);

  loop_begin(gp.f, stem);
  /* Fixed margins keep both panels the same size; the key has its own
   * column on the right, so it never covers the curve. The zoom panel
   * shows T - Tf in mK: short tick labels, millikelvin steps readable. */
  fputs("  set multiplot title title_text . \"\\n\" . result_text noenhanced\n"
        "  set tmargin at screen 0.76\n"
        "  set bmargin at screen 0.16\n"
        "  set xlabel 'time (s)'\n", gp.f);
  if (isfinite(U))
    fputs("  set object 1 rectangle from graph 0, first (Tf - U) to graph 1, "
          "first (Tf + U) behind fc rgb col_purple fs transparent solid 0.3 "
          "noborder\n", gp.f);
  if (isfinite(e->t_nucleation_s))
    fputs("  set arrow 1 from t_nuc, graph 0 to t_nuc, graph 1 nohead dt 3 "
          "lc rgb col_grey\n", gp.f);
  for (panel = 0; panel < 2; panel++) {
    if (panel == 0)
      fputs("  set title '(a) whole record'\n"
            "  set xrange [rec_t0:rec_t1]\n"
            "  set xtics tic_s\n"
            "  set lmargin at screen 0.09\n"
            "  set rmargin at screen 0.375\n"
            "  set ylabel 'temperature (°C)'\n"
            "  set key at screen 0.765, screen 0.5 left center vertical "
            "Left reverse\n", gp.f);
    else {
      fputs("  set title '(b) freezing region'\n"
            "  set xtics zoom_tic_s\n"
            "  set lmargin at screen 0.475\n"
            "  set rmargin at screen 0.75\n"
            "  set ylabel 'T − T_f (mK)'\n"
            "  unset key\n"
            "  set xrange [zoom_t0:zoom_t1]\n"
            "  set yrange [zoom_mK0:zoom_mK1]\n", gp.f);
      if (isfinite(U))
        fputs("  set object 1 rectangle from graph 0, first (-1000 * U) to "
              "graph 1, first (1000 * U)\n", gp.f);
    }
    /* Panel (b) draws T - Tf in mK. */
    ycol = panel == 0 ? "2" : "(1000 * ($2 - Tf))";
    c.f = gp.f;
    c.n = 0;
    if (panel == 0)
      clause(&c, "'%s.dat' index %d using 1:2 with lines lc rgb col_grey "
                 "lw 1 title 'measured'", stem, i_meas);
    else
      clause(&c, "'%s.dat' index %d using 1:%s with linespoints lc rgb "
                 "col_grey lw 1 pt 7 ps 0.35 title 'measured'", stem, i_meas,
             ycol);
    if (i_liq >= 0)
      clause(&c, "'' index %d using 1:%s with lines lc rgb col_blue lw 2 "
                 "title 'liquid fit'", i_liq, ycol);
    if (i_frz >= 0)
      clause(&c, "'' index %d using 1:%s with lines lc rgb col_red lw 2 "
                 "title 'freezing fit'", i_frz, ycol);
    if (i_ext >= 0)
      clause(&c, "'' index %d using 1:%s with lines lc rgb col_red lw 1.5 "
                 "dt 2 title 'extrapolation'", i_ext, ycol);
    if (isfinite(e->t_nucleation_s) && panel == 0)
      clause(&c, "keyentry with lines lc rgb col_grey dt 3 "
                 "title 'nucleation'");
    if (isfinite(U) && panel == 0) {
      snprintf(key, sizeof key, "±%gu band", kcov);
      clause(&c, "keyentry with boxes fc rgb col_purple fs transparent "
                 "solid 0.3 title %s", q(key, buf));
    }
    if (i_res >= 0)
      clause(&c, "'' index %d using 1:%s:%s with yerrorbars lc rgb "
                 "col_purple pt 7 ps 1.0 lw 1.5 title 'freezing point'",
             i_res, ycol, panel == 0 ? "3" : "(1000 * $3)");
    clauses_end(&c);
  }
  loop_end(gp.f);
  return finish(s, stem, &gp, &db, d);
}

/* --------------------------------------------------------------- helpers */

/* Points x y [u]: u NULL gives two columns. Returns the block index or -1. */
static int dat_points(struct dat *b, const char *what, const char *columns,
                      size_t n, const double *x, const double *y,
                      const double *u)
{
  const double *col[3] = { x, y, u };

  if (x == NULL || y == NULL || n == 0)
    return -1;
  return dat_block(b, what, columns, n, u != NULL ? 3 : 2, col, 0);
}

/* Lower and upper limits of what a panel shows, for its y range. */
static void range_points(struct range *r, size_t n, const double *y,
                         const double *u)
{
  size_t k;

  for (k = 0; y != NULL && k < n; k++) {
    double du = u != NULL && isfinite(u[k]) ? fabs(u[k]) : 0.0;

    if (!isfinite(y[k]))
      continue;
    range_add(r, y[k] - du);
    range_add(r, y[k] + du);
  }
}

static void range_curve(struct range *r, const struct ff_plot_curve *cv)
{
  range_points(r, cv->n, cv->y, NULL);
  if (cv->lo != NULL && cv->hi != NULL) {
    range_points(r, cv->n, cv->lo, NULL);
    range_points(r, cv->n, cv->hi, NULL);
  }
}

/*
 * Writes "set yrange [lo:hi]" with head room at the top for the key
 * (top_room as a fraction of the data span), so the key never sits on data.
 */
static void yrange_with_room(FILE *f, const char *axis, struct range r,
                             double top_room)
{
  double span;

  if (!(r.hi >= r.lo)) {
    fprintf(f, "  set %srange [*:*]\n", axis);
    return;
  }
  span = r.hi - r.lo;
  if (!(span > 0.0))
    span = fmax(fabs(r.hi) * 0.1, 1e-3);
  fprintf(f, "  set %srange [%.8g:%.8g]\n", axis, r.lo - 0.06 * span,
          r.hi + top_room * span);
}

static double max_of(size_t n, const double *v)
{
  double m = -HUGE_VAL;
  size_t k;

  for (k = 0; v != NULL && k < n; k++)
    if (isfinite(v[k]) && v[k] > m)
      m = v[k];
  return m;
}

/* -------------------------------------------------------------- solute */

/* The limit of a model as the key shows it; "" when it has none. */
static void limit_text(const struct ff_plot_model *md, char *key, size_t n)
{
  if (isfinite(md->i_limit) && isfinite(md->u_i_limit))
    snprintf(key, n, "i(0) = %.3f ± %.3f", md->i_limit, md->u_i_limit);
  else if (isfinite(md->i_limit))
    snprintf(key, n, "i(0) = %.3f", md->i_limit);
  else
    key[0] = '\0';
}

/* Short names share the key line with the limit; a long one gets a
 * second line (see ff_plot_add_solute). */
static int model_key_lines(const struct ff_plot_model *md)
{
  char key[KEY_MAX];

  limit_text(md, key, sizeof key);
  return key[0] != '\0' &&
         strlen(md->name != NULL ? md->name : "model") + strlen(key) > 28
           ? 2 : 1;
}

int ff_plot_add_solute(struct ff_plot_set *s,
                       const struct ff_plot_solute_fig *f, struct ff_diag *d)
{
  struct ff_plot_buf gp, db;
  struct dat dat;
  struct clauses c;
  char stem[FF_PLOT_STEM_MAX], buf[QMAX], key[KEY_MAX];
  struct range ri = { HUGE_VAL, -HUGE_VAL }, rr = { HUGE_VAL, -HUGE_VAL };
  struct range rd = { HUGE_VAL, -HUGE_VAL };
  int i_pts, i_res = -1, i_dep = -1, any_band = 0;
  int *i_curve = NULL, *i_lim = NULL, *band = NULL;
  int has_dep = f->m_mol_kg != NULL && f->dt_k != NULL;
  int has_res = f->resid_i != NULL;
  double xmax, mmax;
  size_t m;
  const char *xlab = f->x_is_sqrt
    ? "√{/:Italic m} ((mol/kg)^{1/2})" : "molality {/:Italic m} (mol/kg)";

  if (f->n == 0 || f->x == NULL || f->i == NULL)
    return ff_diag_set(d, FF_EUSAGE, NULL, "solute figure '%s': no points",
                       f->name != NULL ? f->name : "");
  if (ff_plot_set_claim(s, f->name, stem, d) != FF_OK ||
      open_both(&gp, &db, d) != FF_OK)
    return FF_EIO;
  i_curve = calloc(f->n_models + 1, sizeof *i_curve);
  i_lim = calloc(f->n_models + 1, sizeof *i_lim);
  band = calloc(f->n_models + 1, sizeof *band);
  if (i_curve == NULL || i_lim == NULL || band == NULL) {
    free(i_curve);
    free(i_lim);
    free(band);
    ff_plot_buf_discard(&gp);
    ff_plot_buf_discard(&db);
    return ff_diag_set(d, FF_EIO, NULL, "out of memory");
  }
  dat.f = db.f;
  dat.next = 0;
  fprintf(db.f, "# %s.dat - data of %s.gp: %s\n", stem, stem,
          q(f->title, buf));
  i_pts = dat_points(&dat, "measured van 't Hoff factor",
                     f->u_i != NULL ? (f->x_is_sqrt ? "sqrt_m  i  u_i"
                                                    : "m_mol_kg  i  u_i")
                                    : (f->x_is_sqrt ? "sqrt_m  i"
                                                    : "m_mol_kg  i"),
                     f->n, f->x, f->i, f->u_i);
  if (i_pts < 0) {
    free(i_curve);
    free(i_lim);
    free(band);
    ff_plot_buf_discard(&gp);
    ff_plot_buf_discard(&db);
    return ff_diag_set(d, FF_EUSAGE, NULL,
                       "solute figure '%s': no finite point", stem);
  }
  range_points(&ri, f->n, f->i, f->u_i);
  xmax = max_of(f->n, f->x);
  for (m = 0; m < f->n_models; m++) {
    const struct ff_plot_model *md = &f->models[m];
    char what[200];

    snprintf(what, sizeof what, "model %zu: %s", m + 1,
             q(md->name, buf));
    i_curve[m] = dat_curve(&dat, what, &md->curve,
                           f->x_is_sqrt ? "sqrt_m" : "m_mol_kg", "i",
                           &band[m]);
    any_band |= i_curve[m] >= 0 && band[m];
    range_curve(&ri, &md->curve);
    xmax = fmax(xmax, max_of(md->curve.n, md->curve.x));
    i_lim[m] = -1;
    if (isfinite(md->i_limit)) {
      double zero = 0.0, u = finite_or(md->u_i_limit, 0.0);
      const double *col[3] = { &zero, &md->i_limit, &u };

      snprintf(what, sizeof what, "model %zu: limiting value at m = 0",
               m + 1);
      i_lim[m] = dat_block(&dat, what, "x  i_limit  u_i_limit", 1, 3, col,
                           0);
      range_add(&ri, md->i_limit - u);
      range_add(&ri, md->i_limit + u);
    }
  }
  if (has_res) {
    i_res = dat_points(&dat, "residuals of the preferred model",
                       f->u_i != NULL ? "x  i_minus_model  u_i"
                                      : "x  i_minus_model",
                       f->n, f->x, f->resid_i, f->u_i);
    range_points(&rr, f->n, f->resid_i, f->u_i);
    range_add(&rr, 0.0);
    has_res = i_res >= 0;
  }
  if (has_dep) {
    i_dep = dat_points(&dat, "depression against molality",
                       f->u_dt_k != NULL ? "m_mol_kg  dT_K  u_dT_K"
                                         : "m_mol_kg  dT_K",
                       f->n, f->m_mol_kg, f->dt_k, f->u_dt_k);
    range_points(&rd, f->n, f->dt_k, f->u_dt_k);
    range_add(&rd, 0.0);
    has_dep = i_dep >= 0;
  }
  mmax = max_of(f->n, f->m_mol_kg);
  if (has_dep && isfinite(f->ideal_slope_k_kg_mol))
    range_add(&rd, f->ideal_slope_k_kg_mol * mmax * 1.05);

  /* The key of panel (a) sits below panel (c), in about 0.31 of the
   * height at 0.5 cm a line: a taller figure when many models need it. */
  {
    double lines = 1.0 + (any_band ? 1.0 : 0.0), h;

    for (m = 0; m < f->n_models; m++)
      if (i_curve[m] >= 0)
        lines += model_key_lines(&f->models[m]);
    h = has_res ? 10.5 : 9.0;
    if (has_dep && lines * 0.5 / 0.31 > h)
      h = ceil(lines * 0.5 / 0.31);
    script_begin(gp.f, s, stem, "van 't Hoff factor against concentration",
                 f->title, 17.0, h);
  }
  fprintf(gp.f, "# ---- this solute ----\ntitle_text = %s\n",
          q(f->title, buf));
  var(gp.f, "x_max", isfinite(xmax) ? 1.05 * xmax : NAN,
      f->x_is_sqrt ? "x axis: sqrt of molality" : "x axis: molality (mol/kg)");
  var(gp.f, "x_tic", nice_step(1.05 * xmax, 5), NULL);
  if (has_dep) {
    var(gp.f, "Kf_nu", f->ideal_slope_k_kg_mol,
        "ideal line: depression = Kf * nu * m (K kg/mol)");
    var(gp.f, "m_max", 1.05 * mmax, "molality axis (mol/kg)");
    var(gp.f, "m_tic", nice_step(1.05 * mmax, 5), NULL);
  }
  loop_begin(gp.f, stem);
  /* The key of panel (a) holds long model names and limits: it gets its
   * own place (bottom right, or right), never on top of the data. */
  fprintf(gp.f, "  set multiplot title title_text noenhanced\n"
                "  set lmargin at screen 0.12\n"
                "  set rmargin at screen %s\n"
                "  set tmargin at screen 0.84\n"
                "  set bmargin at screen %s\n"
                "  set xrange [-0.03 * x_max:x_max]\n"
                "  set xtics x_tic\n",
          has_dep ? "0.50" : "0.58", has_res ? "0.48" : "0.14");
  if (has_res)
    fputs("  set format x ''\n  unset xlabel\n", gp.f);
  else
    fprintf(gp.f, "  set xlabel \"%s\"\n", xlab);
  fprintf(gp.f, "  set ylabel \"van 't Hoff factor {/:Italic i}\"\n"
          "  set title \"(a) van 't Hoff factor\"\n"
          "  set key at screen %s left top vertical Left reverse "
          "noenhanced maxrows 40\n", has_dep ? "0.56, screen 0.33" : "0.62, screen 0.84");
  yrange_with_room(gp.f, "y", ri, 0.08);
  c.f = gp.f;
  c.n = 0;
  for (m = 0; m < f->n_models; m++)
    if (i_curve[m] >= 0 && band[m])
      clause(&c, "'%s.dat' index %d using 1:3:4 with filledcurves lt %zu "
                 "notitle", stem, i_curve[m], m % 6 + 1);
  if (any_band)
    clause(&c, "keyentry with boxes lc rgb col_grey fs transparent solid "
               "0.3 title '95 %% confidence bands'");
  for (m = 0; m < f->n_models; m++) {
    const struct ff_plot_model *md = &f->models[m];

    limit_text(md, key, sizeof key);
    if (i_curve[m] >= 0) {
      const char *mname = md->name != NULL ? md->name : "model";
      /* Short names share the line with the limit; a long one gets a
       * second line without a sample (gnuplot overlaps two-line entries). */
      int one_line = key[0] != '\0' && model_key_lines(md) == 1;
      char line[KEY_MAX + 8];

      if (one_line) {
        snprintf(line, sizeof line, "%s, %s", mname, key);
        key[0] = '\0';
      } else {
        snprintf(line, sizeof line, "%s", mname);
      }
      clause(&c, "'%s.dat' index %d using 1:2 with lines lt %zu lw %s "
                 "dt %s title %s", stem, i_curve[m], m % 6 + 1,
             m == f->preferred ? "2.5" : "1.5",
             m == f->preferred ? "1" : "2", q(line, buf));
      if (key[0] != '\0') {
        snprintf(line, sizeof line, "    %s", key);
        clause(&c, "keyentry with lines lt nodraw title %s", q(line, buf));
      }
    }
    if (i_lim[m] >= 0)
      clause(&c, "'%s.dat' index %d using 1:2:3 with yerrorbars lt %zu "
                 "pt 4 ps 1.2 %s", stem, i_lim[m], m % 6 + 1,
             i_curve[m] >= 0 ? "notitle" : "title 'limit'");
  }
  if (i_pts >= 0)
    clause(&c, "'%s.dat' index %d using 1:2%s with %s lc rgb col_black pt 7 "
               "ps 0.7 title 'measured%s'", stem, i_pts,
           f->u_i != NULL ? ":3" : "",
           f->u_i != NULL ? "yerrorbars" : "points",
           f->u_i != NULL ? " (± u)" : "");
  clauses_end(&c);

  if (has_res) {
    fputs("  set format x '%g'\n"
          "  set tmargin at screen 0.37\n"
          "  set bmargin at screen 0.15\n", gp.f);
    fprintf(gp.f, "  set xlabel \"%s\"\n", xlab);
    fputs("  set ylabel 'residual'\n  unset key\n", gp.f);
    snprintf(key, sizeof key, "(b) residuals of %s",
             f->preferred < f->n_models && f->models[f->preferred].name != NULL
               ? f->models[f->preferred].name : "the preferred model");
    fprintf(gp.f, "  set title %s noenhanced\n", q(key, buf));
    yrange_with_room(gp.f, "y", rr, 0.08);
    c.n = 0;
    clause(&c, "0 with lines lc rgb col_grey dt 2 notitle");
    clause(&c, "'%s.dat' index %d using 1:2%s with %s lc rgb col_black pt 7 "
               "ps 0.7 notitle", stem, i_res, f->u_i != NULL ? ":3" : "",
           f->u_i != NULL ? "yerrorbars" : "points");
    clauses_end(&c);
  }

  if (has_dep) {
    fprintf(gp.f, "  set format x '%%g'\n"
          "  set lmargin at screen 0.64\n"
          "  set rmargin at screen 0.97\n"
          "  set tmargin at screen 0.84\n"
          "  set bmargin at screen %s\n"
          "  set xrange [0:m_max]\n"
          "  set xtics m_tic\n"
          "  set xlabel 'molality {/:Italic m} (mol/kg)'\n"
          "  set ylabel 'depression Δ{/:Italic T} (K)'\n"
          "  set key inside top left Left reverse enhanced\n",
          has_res ? "0.48" : "0.45");
    fprintf(gp.f, "  set title '(%c) depression'\n", has_res ? 'c' : 'b');
    yrange_with_room(gp.f, "y", rd, 0.25);
    c.n = 0;
    if (isfinite(f->ideal_slope_k_kg_mol))
      clause(&c, "Kf_nu * x with lines lc rgb col_grey dt 2 lw 1.5 "
                 "title 'ideal {/:Italic K}_f ν {/:Italic m}'");
    clause(&c, "'%s.dat' index %d using 1:2%s with %s lc rgb col_black pt 7 "
               "ps 0.7 title 'measured%s'", stem, i_dep,
           f->u_dt_k != NULL ? ":3" : "",
           f->u_dt_k != NULL ? "yerrorbars" : "points",
           f->u_dt_k != NULL ? " (± u)" : "");
    clauses_end(&c);
  }
  loop_end(gp.f);
  free(i_curve);
  free(i_lim);
  free(band);
  return finish(s, stem, &gp, &db, d);
}

/* ------------------------------------------------------------- unknown */

int ff_plot_add_unknown(struct ff_plot_set *s,
                        const struct ff_plot_unknown_fig *f,
                        struct ff_diag *d)
{
  struct ff_plot_buf gp, db;
  struct dat dat;
  struct clauses c;
  char stem[FF_PLOT_STEM_MAX], buf[QMAX], key[KEY_MAX];
  struct range ry = { HUGE_VAL, -HUGE_VAL };
  int i_pts, i_fit, i_m0 = -1, band = 0;
  double xmax;

  if (f->n == 0 || f->x == NULL || f->m_g_mol == NULL)
    return ff_diag_set(d, FF_EUSAGE, NULL, "unknown figure '%s': no points",
                       f->name != NULL ? f->name : "");
  if (ff_plot_set_claim(s, f->name, stem, d) != FF_OK ||
      open_both(&gp, &db, d) != FF_OK)
    return FF_EIO;
  dat.f = db.f;
  dat.next = 0;
  fprintf(db.f, "# %s.dat - data of %s.gp: %s\n# x axis: %s\n", stem, stem,
          q(f->title, buf), q(f->x_label != NULL ? f->x_label
                                                 : "solute / solvent (g/kg)",
                              key));
  i_pts = dat_points(&dat, "apparent molar mass",
                     f->u_m_g_mol != NULL ? "x  M_g_mol  u_M_g_mol"
                                          : "x  M_g_mol",
                     f->n, f->x, f->m_g_mol, f->u_m_g_mol);
  i_fit = dat_curve(&dat, "extrapolation to zero concentration", &f->fit,
                    "x", "M_g_mol", &band);
  if (isfinite(f->m0_g_mol)) {
    double zero = 0.0, u = finite_or(f->u_m0_g_mol, 0.0);
    const double *col[3] = { &zero, &f->m0_g_mol, &u };

    i_m0 = dat_block(&dat, "value at zero concentration", "x  M_g_mol  u",
                     1, 3, col, 0);
    range_add(&ry, f->m0_g_mol - u);
    range_add(&ry, f->m0_g_mol + u);
  }
  if (i_pts < 0) {
    ff_plot_buf_discard(&gp);
    ff_plot_buf_discard(&db);
    return ff_diag_set(d, FF_EUSAGE, NULL,
                       "unknown figure '%s': no finite point", stem);
  }
  range_points(&ry, f->n, f->m_g_mol, f->u_m_g_mol);
  range_curve(&ry, &f->fit);
  xmax = fmax(max_of(f->n, f->x), max_of(f->fit.n, f->fit.x));

  script_begin(gp.f, s, stem, "apparent molar mass, extrapolated to zero "
               "concentration", f->title, 12.0, 9.0);
  fprintf(gp.f, "# ---- this unknown ----\ntitle_text = %s\n",
          q(f->title, buf));
  fprintf(gp.f, "x_label = %s\n",
          q(f->x_label != NULL ? f->x_label : "solute / solvent (g/kg)",
            buf));
  var(gp.f, "x_max", 1.05 * xmax, NULL);
  var(gp.f, "M0", f->m0_g_mol, "molar mass at zero concentration (g/mol)");
  var(gp.f, "u_M0", f->u_m0_g_mol, "its standard uncertainty (g/mol)");
  loop_begin(gp.f, stem);
  fputs("  set title title_text noenhanced\n"
        "  set xlabel x_label noenhanced\n"
        "  set ylabel 'apparent molar mass (g/mol)'\n"
        "  set xrange [-0.03 * x_max:x_max]\n"
        "  set key outside below center horizontal maxrows 2 Left reverse\n", gp.f);
  yrange_with_room(gp.f, "y", ry, 0.08);
  c.f = gp.f;
  c.n = 0;
  if (i_fit >= 0 && band)
    clause(&c, "'%s.dat' index %d using 1:3:4 with filledcurves lc rgb "
               "col_blue title '95 %% confidence band'", stem, i_fit);
  if (i_fit >= 0)
    clause(&c, "'%s.dat' index %d using 1:2 with lines lc rgb col_blue lw 2 "
               "title 'extrapolation'", stem, i_fit);
  if (i_m0 >= 0) {
    if (isfinite(f->u_m0_g_mol) && f->u_m0_g_mol > 0.0) {
      /* two significant digits of u, the value to the same decimal */
      int dec = 1 - (int)floor(log10(f->u_m0_g_mol));

      if (dec < 0)
        dec = 0;
      snprintf(key, sizeof key, "at zero: %.*f ± %.*f g/mol", dec,
               f->m0_g_mol, dec, f->u_m0_g_mol);
    } else {
      snprintf(key, sizeof key, "at zero: %.4g g/mol", f->m0_g_mol);
    }
    clause(&c, "'%s.dat' index %d using 1:2:3 with yerrorbars lc rgb "
               "col_red pt 5 ps 1.0 title %s", stem, i_m0, q(key, buf));
  }
  clause(&c, "'%s.dat' index %d using 1:2%s with %s lc rgb col_black pt 7 "
             "ps 0.7 title 'measured%s'", stem, i_pts,
         f->u_m_g_mol != NULL ? ":3" : "",
         f->u_m_g_mol != NULL ? "yerrorbars" : "points",
         f->u_m_g_mol != NULL ? " (± u)" : "");
  clauses_end(&c);
  loop_end(gp.f);
  return finish(s, stem, &gp, &db, d);
}

/* ------------------------------------------------------------ overview */

static int blank_solute(const char *s)
{
  return s == NULL || s[0] == '\0';
}

static int same_group(const char *a, const char *b)
{
  return blank_solute(a) ? blank_solute(b)
                         : (!blank_solute(b) && strcmp(a, b) == 0);
}

/* What the overview keeps per group of runs (one solute, or the blanks). */
struct group {
  const char *solute;          /* NULL: blank runs */
  int blk;                     /* data block, -1: none */
  int lt;                      /* line type (colour) */
  int has_dep, has_i, has_tf;  /* anything to draw in panels a, b, c */
  double slope;                /* ideal Kf*nu from the limits, or NaN */
};

/* Writes the runs of group g as one block with all nine columns. */
static int overview_block(struct dat *b, const struct ff_plot_overview_fig *f,
                          struct group *gr, double *col[9], char *buf)
{
  size_t r, m = 0;
  char what[QMAX + 16];

  for (r = 0; r < f->n_runs; r++) {
    const struct ff_plot_run *p = &f->runs[r];

    if (!same_group(p->solute, gr->solute))
      continue;
    col[0][m] = (double)(r + 1);
    col[1][m] = p->freezing_point_c;
    col[2][m] = finite_or(p->u_freezing_point_k, 0.0);
    col[3][m] = p->molality_mol_kg;
    col[4][m] = p->depression_k;
    col[5][m] = finite_or(p->u_depression_k, 0.0);
    col[6][m] = p->molality_mol_kg >= 0.0 ? sqrt(p->molality_mol_kg) : NAN;
    col[7][m] = p->vant_hoff_i;
    col[8][m] = finite_or(p->u_vant_hoff_i, 0.0);
    gr->has_tf |= isfinite(col[1][m]);
    gr->has_dep |= isfinite(col[3][m]) && isfinite(col[4][m]);
    gr->has_i |= isfinite(col[6][m]) && isfinite(col[7][m]);
    m++;
  }
  snprintf(what, sizeof what, "%s", gr->solute == NULL ? "blank runs"
           : ff_plot_quote(gr->solute, buf, QMAX));
  gr->blk = dat_block_req(b, what, "run_no  Tf_C  u_Tf_K  m_mol_kg  dT_K  "
                          "u_dT_K  sqrt_m  i  u_i", m, 9, 1,
                          (const double *const *)col, 0);
  return gr->blk;
}

/* s cut to max_chars UTF-8 characters plus "…" when longer, into out. */
static void shorten(const char *s, size_t max_chars, char *out, size_t n)
{
  size_t bytes = 0, chars = 0;

  if (s == NULL)
    s = "";
  while (s[bytes] != '\0') {
    if (((unsigned char)s[bytes] & 0xC0) != 0x80) {
      if (chars == max_chars)
        break;
      chars++;
    }
    bytes++;
  }
  if (s[bytes] == '\0')
    snprintf(out, n, "%s", s);
  else
    snprintf(out, n, "%.*s…", (int)bytes, s);
}

/* Tick labels "('name' 1, 'name2' 2, ...)" for run or solute names. */
static void tic_labels(FILE *f, const char *axis, size_t n,
                       const char *(*name_of)(const void *, size_t),
                       const void *ctx, size_t every, char *buf)
{
  size_t k;
  int first = 1;
  char shortened[64];

  fprintf(f, "  set %stics (", axis);
  for (k = 0; k < n; k++) {
    if (k % every != 0)
      continue;
    /* Long ids would run off the figure: 12 characters and an ellipsis. */
    shorten(name_of(ctx, k), 12, shortened, sizeof shortened);
    ff_plot_quote(shortened, buf, QMAX);
    fprintf(f, "%s%s %zu", first ? "" : ", ", buf, k + 1);
    first = 0;
  }
  fputs(")\n", f);
}

static const char *run_name(const void *ctx, size_t k)
{
  return ((const struct ff_plot_overview_fig *)ctx)->runs[k].run;
}

/* Panel (d) labels a solute by its short label (a formula) when given:
 * long names would be cut to a few letters under the rotated ticks. */
static const char *limit_name(const void *ctx, size_t k)
{
  const struct ff_plot_limit *l =
    &((const struct ff_plot_overview_fig *)ctx)->limits[k];

  return l->label != NULL && l->label[0] != '\0' ? l->label : l->solute;
}

/*
 * A panel with nothing to draw says so instead: fixed ranges, no tick
 * labels, a centred note (gnuplot refuses to autoscale an empty plot).
 */
static void empty_panel(struct clauses *c, const char *note, char *buf)
{
  fprintf(c->f, "  set xrange [0:1]\n  set yrange [0:1]\n"
                "  set format xy ''\n"
                "  set label 1 %s at graph 0.5, graph 0.5 center\n",
          ff_plot_quote(note, buf, QMAX));
  clause(c, "NaN notitle");
  clauses_end(c);
  fputs("  unset label 1\n  set format xy '%g'\n", c->f);
}

static void overview_script(FILE *gp, const struct ff_plot_overview_fig *f,
                            const char *stem, const struct group *gr,
                            size_t ng, int i_lim, char *buf)
{
  struct range ra = { 0.0, -HUGE_VAL }, rb = { HUGE_VAL, -HUGE_VAL };
  struct range rc = { HUGE_VAL, -HUGE_VAL }, rd = { HUGE_VAL, -HUGE_VAL };
  struct clauses c = { gp, 0 };
  size_t g, r, k, n_dep = 0;
  double mmax = 0.0, smax = 0.0;

  for (r = 0; r < f->n_runs; r++) {
    const struct ff_plot_run *p = &f->runs[r];
    double u;

    u = finite_or(p->u_depression_k, 0.0);
    if (isfinite(p->molality_mol_kg) && isfinite(p->depression_k)) {
      range_add(&ra, p->depression_k + u);
      mmax = fmax(mmax, p->molality_mol_kg);
    }
    u = finite_or(p->u_vant_hoff_i, 0.0);
    if (p->molality_mol_kg >= 0.0 && isfinite(p->vant_hoff_i)) {
      range_add(&rb, p->vant_hoff_i - u);
      range_add(&rb, p->vant_hoff_i + u);
      smax = fmax(smax, sqrt(p->molality_mol_kg));
    }
    u = finite_or(p->u_freezing_point_k, 0.0);
    range_add(&rc, p->freezing_point_c - u);
    range_add(&rc, p->freezing_point_c + u);
  }
  for (k = 0; k < f->n_limits && f->limits != NULL; k++) {
    const struct ff_plot_limit *l = &f->limits[k];

    range_add(&rd, l->i_limit);
    range_add(&rd, l->ci_lo);
    range_add(&rd, l->ci_hi);
    range_add(&rd, l->particles);
    range_add(&rb, l->i_limit);
  }
  for (g = 0; g < ng; g++) {
    n_dep += gr[g].has_dep;
    if (gr[g].has_dep && isfinite(gr[g].slope))
      range_add(&ra, gr[g].slope * mmax);
  }

  fprintf(gp, "# ---- this series ----\ntitle_text = %s\n",
          ff_plot_quote(f->title, buf, QMAX));
  var(gp, "m_max", mmax > 0.0 ? 1.05 * mmax : 1.0, "molality axis (mol/kg)");
  var(gp, "sqrt_m_max", smax > 0.0 ? 1.05 * smax : 1.0, NULL);
  var(gp, "m_tic", nice_step(mmax > 0.0 ? 1.05 * mmax : 1.0, 5), NULL);
  var(gp, "sqrt_m_tic", nice_step(smax > 0.0 ? 1.05 * smax : 1.0, 5), NULL);
  loop_begin(gp, stem);
  fputs("  set multiplot layout 2,2 title title_text noenhanced "
        "margins 0.12, 0.97, 0.21, 0.89 spacing 0.12, 0.16\n", gp);

  /* (a) depression against molality, ideal lines dashed. */
  fputs("  set title '(a) depression against molality'\n"
        "  set xlabel 'molality {/:Italic m} (mol/kg)'\n"
        "  set ylabel 'Δ{/:Italic T} (K)'\n"
        "  set xrange [0:m_max]\n"
        "  set xtics m_tic\n"
        "  set key inside top left Left reverse noenhanced\n", gp);
  /* the key (one line per solute plus the ideal line) sits over the
   * data's top: about 0.12 of the span per key line clears it */
  yrange_with_room(gp, "y", ra, 0.15 + 0.12 * (double)(n_dep + 1));
  for (g = 0; g < ng; g++) {
    if (!gr[g].has_dep)
      continue;
    if (isfinite(gr[g].slope))
      clause(&c, "%.8g * x with lines lt %d dt 2 lw 1 notitle", gr[g].slope,
             gr[g].lt);
    clause(&c, "'%s.dat' index %d using 4:5:6 with yerrorbars lt %d "
               "title %s", stem, gr[g].blk, gr[g].lt,
           ff_plot_quote(gr[g].solute, buf, QMAX));
  }
  if (n_dep > 0 && c.n > 0)
    clause(&c, "keyentry with lines lc rgb col_grey dt 2 title "
               "'ideal (Kf ν m)'");
  if (c.n == 0)
    empty_panel(&c, "no data for this panel", buf);
  else
    clauses_end(&c);

  /* (b) i against sqrt(m); limits at m = 0 from panel (d). */
  fputs("  set title \"(b) van 't Hoff factor\"\n"
        "  set xlabel '√{/:Italic m} ((mol/kg)^{1/2})'\n"
        "  set ylabel \"van 't Hoff factor {/:Italic i}\"\n"
        "  set xrange [-0.03 * sqrt_m_max:sqrt_m_max]\n"
        "  set xtics sqrt_m_tic\n"
        "  unset key\n", gp);
  yrange_with_room(gp, "y", rb, 0.08);
  for (g = 0; g < ng; g++)
    if (gr[g].has_i)
      clause(&c, "'%s.dat' index %d using 7:8:9 with yerrorbars lt %d "
                 "notitle", stem, gr[g].blk, gr[g].lt);
  for (k = 0; k < f->n_limits && f->limits != NULL; k++)
    for (g = 0; g < ng; g++)
      if (gr[g].solute != NULL && f->limits[k].solute != NULL &&
          strcmp(gr[g].solute, f->limits[k].solute) == 0 &&
          isfinite(f->limits[k].i_limit) && i_lim >= 0)
        clause(&c, "'%s.dat' index %d every ::%zu::%zu using (0):2:3:4 "
                   "with yerrorbars lt %d pt 4 ps 1.2 notitle", stem, i_lim,
               k, k, gr[g].lt);
  if (c.n == 0)
    empty_panel(&c, "no data for this panel", buf);
  else
    clauses_end(&c);

  /* (c) freezing point of every run. */
  fprintf(gp, "  set title '(c) freezing point per run (black: blank)'\n"
              "  unset xlabel\n"
              "  set ylabel 'freezing point (°C)'\n"
              "  set xrange [0.5:%zu.5]\n", f->n_runs);
  yrange_with_room(gp, "y", rc, 0.08);
  /* Run ids upright would overlap: rotated, and at most 24 labelled. */
  fputs("  set xtics rotate by 90 right noenhanced\n", gp);
  tic_labels(gp, "x", f->n_runs, run_name, f,
             f->n_runs > 24 ? (f->n_runs + 23) / 24 : 1, buf);
  for (g = 0; g < ng; g++)
    if (gr[g].has_tf)
      clause(&c, "'%s.dat' index %d using 1:2:3 with yerrorbars lt %d "
                 "notitle", stem, gr[g].blk, gr[g].lt);
  if (c.n == 0)
    empty_panel(&c, "no data for this panel", buf);
  else
    clauses_end(&c);
  fputs("  set xtics norotate enhanced autofreq\n", gp);

  /* (d) limiting i per solute with its 95 % interval, nu for reference. */
  fputs("  set title '(d) limit at infinite dilution'\n"
        "  unset xlabel\n"
        "  set ylabel '{/:Italic i} at {/:Italic m} → 0'\n"
        "  set key inside top right Left reverse enhanced\n", gp);
  if (i_lim >= 0) {
    fprintf(gp, "  set xrange [0.5:%zu.5]\n", f->n_limits);
    fputs("  set xtics rotate by 90 right noenhanced\n", gp);
    tic_labels(gp, "x", f->n_limits, limit_name, f, 1, buf);
    yrange_with_room(gp, "y", rd, 0.45);
    clause(&c, "'%s.dat' index %d using 1:2:3:4 with yerrorbars lc rgb "
               "col_black pt 7 title 'fit, 95 %%'", stem, i_lim);
    clause(&c, "'' index %d using 1:5 with points lc rgb col_grey pt 6 "
               "ps 1.3 title 'ν'", i_lim);
    clauses_end(&c);
  } else {
    empty_panel(&c, "no fitted solute", buf);
  }
  fputs("  set xtics norotate enhanced autofreq\n", gp);
  loop_end(gp);
}

int ff_plot_add_overview(struct ff_plot_set *s,
                         const struct ff_plot_overview_fig *f,
                         struct ff_diag *d)
{
  struct ff_plot_buf gp, db;
  struct dat dat;
  char stem[FF_PLOT_STEM_MAX], buf[QMAX];
  size_t n = f->n_runs, r, g, k, ng = 0, n_colour = 0;
  struct group *gr = NULL;
  double *col[9] = { NULL };
  int i_lim = -1, st = FF_OK;

  if (n == 0 || f->runs == NULL)
    return ff_diag_set(d, FF_EUSAGE, NULL, "overview figure '%s': no runs",
                       f->name != NULL ? f->name : "");
  if (ff_plot_set_claim(s, f->name, stem, d) != FF_OK ||
      open_both(&gp, &db, d) != FF_OK)
    return FF_EIO;
  gr = calloc(n, sizeof *gr);
  for (k = 0; k < 9; k++)
    col[k] = calloc(n > f->n_limits ? n : f->n_limits, sizeof **col);
  for (k = 0; k < 9 && col[k] != NULL; k++)
    ;
  if (gr == NULL || k < 9) {
    st = ff_diag_set(d, FF_EIO, NULL, "out of memory");
    ff_plot_buf_discard(&gp);
    ff_plot_buf_discard(&db);
    goto out;
  }
  /* Groups in order of first appearance; blanks black, solutes in the
   * palette order. */
  for (r = 0; r < n; r++) {
    const char *so = blank_solute(f->runs[r].solute) ? NULL
                                                     : f->runs[r].solute;

    for (g = 0; g < ng && !same_group(gr[g].solute, so); g++)
      ;
    if (g < ng)
      continue;
    gr[ng].solute = so;
    gr[ng].lt = so == NULL ? 7 : (int)(n_colour++ % 6) + 1;
    gr[ng].slope = NAN;
    for (k = 0; so != NULL && k < f->n_limits && f->limits != NULL; k++)
      if (f->limits[k].solute != NULL &&
          strcmp(f->limits[k].solute, so) == 0)
        gr[ng].slope = f->limits[k].ideal_slope_k_kg_mol;
    ng++;
  }
  dat.f = db.f;
  dat.next = 0;
  fprintf(db.f, "# %s.dat - data of %s.gp: %s\n# one block per solute; "
                "blank runs are solvent only\n", stem, stem,
          q(f->title, buf));
  for (g = 0; g < ng; g++)
    overview_block(&dat, f, &gr[g], col, buf);
  if (f->n_limits > 0 && f->limits != NULL) {
    for (k = 0; k < f->n_limits; k++) {
      const struct ff_plot_limit *l = &f->limits[k];

      col[0][k] = (double)(k + 1);
      col[1][k] = l->i_limit;
      col[2][k] = finite_or(l->ci_lo, l->i_limit);
      col[3][k] = finite_or(l->ci_hi, l->i_limit);
      col[4][k] = l->particles;
    }
    i_lim = dat_block_req(&dat, "limiting van 't Hoff factor per solute",
                          "solute_no  i_limit  ci95_lo  ci95_hi  "
                          "particles_nu", f->n_limits, 5, 1,
                          (const double *const *)col, 0);
    /* Only the solute number must be finite, so row k is limit k, as
     * panel (b)'s "every ::k::k" assumes. */
  }
  script_begin(gp.f, s, stem, "overview of a series", f->title, 17.0, 16.5);
  overview_script(gp.f, f, stem, gr, ng, i_lim, buf);
  st = finish(s, stem, &gp, &db, d);
out:
  free(gr);
  for (k = 0; k < 9; k++)
    free(col[k]);
  return st;
}
