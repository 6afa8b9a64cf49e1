/* series.c - the series pipeline: sheet rows -> data files -> freeze events
 * -> per-run thermodynamics; fits per solute in series_fit.c. */
#include "frostfit/series.h"
#include "frostfit/parallel.h"

#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

#include <gsl/gsl_math.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>

#include "series_impl.h"

const char *ff_kf_source_name(enum ff_kf_source s)
{
  switch (s) {
  case FF_KF_SHEET: return "sheet";
  case FF_KF_STANDARD: return "standard";
  case FF_KF_TABLE: return "table";
  case FF_KF_NONE: break;
  }
  return "none";
}

/* Records why run r has no result: sheet:line (column c when >= 0), the
 * message prefixed with the run id. The first reason wins. */
void series_fail(const struct ff_sheet *sh, struct ff_series_run *r, int col,
                 enum ff_status st, const char *fmt, ...)
{
  const struct ff_sheet_row *row = &sh->row[r->row];
  struct ff_loc at = { sh->path, row->line,
                       col >= 0 ? sh->col[col] : 0 };
  char text[600];
  va_list ap;

  if (r->status != FF_OK)
    return;
  va_start(ap, fmt);
  vsnprintf(text, sizeof text, fmt, ap);
  va_end(ap);
  r->status = st;
  ff_diag_set(&r->diag, st, &at, "run '%s': %s", row->run, text);
}

/* ---- data files and freeze events, each read once ---- */

struct channel_cache {
  size_t ds;
  long ch;
  enum ff_method method;
  struct ff_detect_params p;  /* from the first run that asked */
  int pending;                /* registered, not detected yet */
  int status;
  struct ff_diag diag;
  struct ff_event_list ev;
};

struct file_cache {
  char path[1600];
  long ds;                    /* index into out->ds, -1 when it failed */
  struct ff_dataset *read;    /* imported ahead, not yet in out->ds */
  int pending;                /* registered, not imported yet */
  struct ff_diag diag;
};

struct caches {
  struct file_cache *f;
  size_t nf, capf;
  struct channel_cache *c;
  size_t nc, capc;
};

static void caches_release(struct caches *k)
{
  for (size_t i = 0; i < k->nf; i++)
    ff_dataset_free(k->f[i].read);
  for (size_t i = 0; i < k->nc; i++)
    ff_event_list_release(&k->c[i].ev);
  free(k->c);
  free(k->f);
}

/* The dataset of path, reading it the first time. -1 with *why set when
 * the file cannot be used; -2 when out of memory. */
/* The cache entry of path, new (pending, not read) the first time; NULL
 * when out of memory. */
static struct file_cache *file_entry(struct caches *k, const char *path)
{
  struct file_cache *fc;

  for (size_t i = 0; i < k->nf; i++)
    if (strcmp(k->f[i].path, path) == 0)
      return &k->f[i];
  if (k->nf == k->capf) {
    size_t cap = k->capf ? 2 * k->capf : 8;
    struct file_cache *v = realloc(k->f, cap * sizeof *v);
    if (v == NULL)
      return NULL;
    k->f = v;
    k->capf = cap;
  }
  fc = &k->f[k->nf++];
  memset(fc, 0, sizeof *fc);
  snprintf(fc->path, sizeof fc->path, "%s", path);
  fc->ds = -1;
  fc->pending = 1;
  return fc;
}

/* Imports a pending entry (a worker may do it: it touches only fc). */
static void file_read(struct file_cache *fc)
{
  struct ff_import_opts io = FF_IMPORT_OPTS_DEFAULT;

  fc->read = ff_import_file(fc->path, &io, &fc->diag);
  fc->pending = 0;
}

/* The dataset of path, reading it the first time. -1 with *why set when
 * the file cannot be used; -2 when out of memory. Datasets join out->ds
 * in the order the runs first ask for them, whenever they were read. */
static long dataset_of(struct ff_series *out, struct caches *k,
                       const char *path, const struct ff_diag **why)
{
  struct file_cache *fc = file_entry(k, path);
  struct ff_dataset **v;

  if (fc == NULL)
    return -2;
  *why = &fc->diag;
  if (fc->pending)
    file_read(fc);
  if (fc->read == NULL)
    return fc->ds;            /* -1: the runs of this file fail with its
                                 reason; or its index, already joined */
  v = realloc(out->ds, (out->n_ds + 1) * sizeof *v);
  if (v == NULL)
    return -2;                /* fc->read is freed with the caches */
  out->ds = v;
  out->ds[out->n_ds] = fc->read;
  fc->read = NULL;
  fc->ds = (long)out->n_ds++;
  return fc->ds;
}

/* The cache entry of one channel, new (pending, with the asking run's
 * detection parameters) the first time; NULL when out of memory. */
static struct channel_cache *channel_entry(struct caches *k, size_t ds,
                                           long ch,
                                           const struct ff_solvent *solvent,
                                           double res_k, enum ff_method method)
{
  struct ff_detect_params p = FF_DETECT_PARAMS_DEFAULT;
  struct channel_cache *cc;

  for (size_t i = 0; i < k->nc; i++)
    if (k->c[i].ds == ds && k->c[i].ch == ch && k->c[i].method == method)
      return &k->c[i];
  if (k->nc == k->capc) {
    size_t cap = k->capc ? 2 * k->capc : 8;
    struct channel_cache *v = realloc(k->c, cap * sizeof *v);
    if (v == NULL)
      return NULL;
    k->c = v;
    k->capc = cap;
  }
  cc = &k->c[k->nc++];
  memset(cc, 0, sizeof *cc);
  cc->ds = ds;
  cc->ch = ch;
  cc->method = method;
  p.solvent = solvent;
  p.method = method;
  if (isfinite(res_k) && res_k > 0)
    p.resolution_k = res_k;
  cc->p = p;
  cc->pending = 1;
  return cc;
}

/* Detects a pending entry (a worker may do it: it reads the dataset and
 * writes only cc). A channel with no missing value is analysed in the
 * dataset's arrays, otherwise in a compacted copy. */
static void channel_detect(const struct ff_dataset *set,
                           struct channel_cache *cc)
{
  const double *tx = set->t_s, *yx = set->ch[cc->ch].temp_c;
  double *t = NULL, *y = NULL;
  size_t n = set->n;

  cc->pending = 0;
  if (set->ch[cc->ch].n_missing > 0) {
    t = malloc((set->n + 1) * sizeof *t);
    y = malloc((set->n + 1) * sizeof *y);
    if (t == NULL || y == NULL) {
      free(t);
      free(y);
      cc->status = ff_diag_set(&cc->diag, FF_EIO, NULL, "out of memory");
      return;
    }
    n = ff_dataset_channel_xy(set, (size_t)cc->ch, t, y);
    tx = t;
    yx = y;
  }
  cc->status = ff_detect_run(tx, yx, n, &cc->p, &cc->ev, &cc->diag);
  free(t);
  free(y);
}

/* The freeze events of one channel, detected the first time. NULL when
 * out of memory. */
static struct channel_cache *events_of(struct ff_series *out, struct caches *k,
                                       size_t ds, long ch,
                                       const struct ff_solvent *solvent,
                                       double res_k, enum ff_method method)
{
  struct channel_cache *cc = channel_entry(k, ds, ch, solvent, res_k,
                                           method);

  if (cc != NULL && cc->pending)
    channel_detect(out->ds[ds], cc);
  return cc;
}

/* Import, channel, detection, cycle: the freezing point of one run. */
static int freezing_point(struct ff_series *out, struct caches *k,
                          const struct ff_sheet *sh, struct ff_series_run *r)
{
  const struct ff_sheet_row *row = &sh->row[r->row];
  const struct ff_diag *why = NULL;
  struct ff_diag cd = FF_DIAG_INIT;
  char buf[1200];
  long ds, ch;
  size_t pick;

  ds = dataset_of(out, k, row->path, &why);
  if (ds == -2)
    return FF_EIO;
  if (ds < 0) {
    series_fail(sh, r, FF_SC_FILE, why->status, "%s",
                ff_diag_format(why, buf, sizeof buf));
    return FF_OK;
  }
  ch = ff_dataset_find_channel(out->ds[ds], row->channel, &cd);
  if (ch < 0) {
    series_fail(sh, r, FF_SC_CHANNEL, FF_EINPUT, "channel '%s' of '%s': %s",
                row->channel, row->path, cd.msg);
    return FF_OK;
  }
  struct channel_cache *cc = events_of(out, k, (size_t)ds, ch, r->solvent,
                                       row->thermo_res_k, row->method);
  if (cc == NULL)
    return FF_EIO;
  r->dataset = (size_t)ds;
  r->channel = (size_t)ch;
  if (cc->status == FF_EIO)
    return FF_EIO;
  if (cc->status != FF_OK) {
    series_fail(sh, r, FF_SC_CHANNEL, cc->status, "channel '%s' of '%s': %s",
                out->ds[ds]->ch[ch].name, row->path, cc->diag.msg);
    return FF_OK;
  }
  if (cc->ev.n == 0) {
    series_fail(sh, r, FF_SC_CHANNEL, FF_EUNTRUSTED, "no freeze event in "
                "channel '%s' of '%s'", out->ds[ds]->ch[ch].name, row->path);
    return FF_OK;
  }
  if (row->cycle == FF_SHEET_CYCLE_LAST) {
    pick = cc->ev.n - 1;
  } else if (row->cycle > cc->ev.n) {
    series_fail(sh, r, FF_SC_CYCLE, FF_EINPUT, "cycle %u asked for, but "
                "channel '%s' of '%s' has %zu freeze event%s", row->cycle,
                out->ds[ds]->ch[ch].name, row->path, cc->ev.n,
                cc->ev.n == 1 ? "" : "s");
    return FF_OK;
  } else {
    pick = row->cycle - 1;
  }
  r->event = cc->ev.v[pick];
  r->has_event = 1;
  if (!r->event.trusted || !isfinite(r->event.freezing_point_c)) {
    series_fail(sh, r, FF_SC_CYCLE, FF_EUNTRUSTED, "freezing point of cycle "
                "%u in channel '%s' not trusted: %s", r->event.cycle,
                out->ds[ds]->ch[ch].name,
                r->event.status_reason[0] ? r->event.status_reason
                : "no method gave a value");
    return FF_OK;
  }
  r->tf_c = r->event.freezing_point_c;
  r->u_tf_k = r->event.u_freezing_point_k;
  if (!isfinite(r->u_tf_k) || r->u_tf_k < 0)
    r->u_tf_k = 0;
  return FF_OK;
}

/* The files and channels of the runs that reach freezing_point (status
 * still OK), read and detected ahead on every core: each file once, each
 * channel once with the parameters of the first run that asks, as
 * freezing_point would, which then finds them all in the caches. */
struct ahead {
  struct ff_series *out;
  struct caches *k;
};

static void read_one(void *ctx, size_t i)
{
  struct ahead *a = ctx;

  if (a->k->f[i].pending)
    file_read(&a->k->f[i]);
}

static void detect_one(void *ctx, size_t i)
{
  struct ahead *a = ctx;
  struct channel_cache *cc = &a->k->c[i];

  if (cc->pending)
    channel_detect(a->out->ds[cc->ds], cc);
}

/* The series' progress callback under the pool's one-at-a-time calls. */
struct stage_progress {
  const struct ff_series_opts *o;
  const char *stage;
};

static void stage_tick(void *ctx, size_t done, size_t total)
{
  const struct stage_progress *sp = ctx;

  sp->o->progress(sp->o->progress_ctx, sp->stage, done, total);
}

static int read_ahead(struct ff_series *out, struct caches *k,
                      const struct ff_sheet *sh,
                      const struct ff_series_opts *o)
{
  struct ahead a = { out, k };
  struct stage_progress rd = { o, "reading" }, an = { o, "analysing" };
  void (*tick)(void *, size_t, size_t) = o->progress ? stage_tick : NULL;

  for (size_t i = 0; i < out->n_runs; i++)
    if (out->runs[i].status == FF_OK
        && file_entry(k, sh->row[i].path) == NULL)
      return FF_EIO;
  ff_parallel_for_progress(k->nf, read_one, &a, tick, &rd);
  for (size_t i = 0; i < out->n_runs; i++) {
    const struct ff_sheet_row *row = &sh->row[i];
    const struct ff_diag *why = NULL;
    struct ff_diag cd = FF_DIAG_INIT;
    long ds, ch;

    if (out->runs[i].status != FF_OK)
      continue;
    ds = dataset_of(out, k, row->path, &why);
    if (ds == -2)
      return FF_EIO;
    if (ds < 0)
      continue;
    ch = ff_dataset_find_channel(out->ds[ds], row->channel, &cd);
    if (ch < 0)
      continue;
    if (channel_entry(k, (size_t)ds, ch, out->runs[i].solvent,
                      row->thermo_res_k, row->method) == NULL)
      return FF_EIO;
  }
  ff_parallel_for_progress(k->nc, detect_one, &a, tick, &an);
  return FF_OK;
}

/* ---- per-run numbers ---- */

/* The frozen-fraction correction belongs to readings taken after
 * recalescence (plateau, peak): ice formed during recalescence has already
 * concentrated the liquid. Readings taken back at the nucleation instant
 * (extrapolate, intersect, model) or without supercooling (break) are not
 * corrected again (REFERENCES.md 7.2, step 6: common practice, no source). */
static int needs_correction(const struct ff_event *e)
{
  return (e->method == FF_METHOD_PLATEAU || e->method == FF_METHOD_PEAK)
         && isfinite(e->supercooling_k) && e->supercooling_k > 0;
}

static void run_init(struct ff_series_run *r, size_t row)
{
  memset(r, 0, sizeof *r);
  r->row = row;
  r->tf_c = r->u_tf_k = r->tf_blank_c = r->u_tf_blank_k = NAN;
  r->depression_obs_k = r->depression_k = r->u_depression_k = NAN;
  r->frozen_fraction = NAN;
  r->molality_mol_kg = r->u_molality_mol_kg = r->solvent_eff_g = NAN;
  r->u_solute_g = r->u_solvent_g = NAN;
  r->kf_k_kg_mol = r->u_kf_k_kg_mol = NAN;
  r->kf_cal_k_kg_mol = r->u_kf_cal_k_kg_mol = NAN;
  r->mc_u_vant_hoff_i = NAN;
  r->conc_g_kg = NAN;
  r->osmolality_osmol_kg = NAN;
  r->th.depression_obs_k = r->th.frozen_fraction = r->th.depression_k = NAN;
  r->th.u_depression_k = r->th.ideal_depression_k = NAN;
  r->th.vant_hoff_i = r->th.u_vant_hoff_i = NAN;
  r->th.osmotic_coefficient = r->th.u_osmotic_coefficient = NAN;
  r->th.osmolality_osmol_kg = r->th.u_osmolality_osmol_kg = NAN;
  r->th.activity = r->th.osmolality_exact_osmol_kg = NAN;
  r->th.osmotic_coefficient_exact = NAN;
  r->mass.m_g_mol = r->mass.u_m_g_mol = r->mass.expanded_m_g_mol = NAN;
  r->mass.mc_mean_g_mol = r->mass.mc_u_g_mol = NAN;
  r->mass.mc_lo95_g_mol = r->mass.mc_hi95_g_mol = NAN;
}

/* Depression against the blank, with the frozen-fraction correction where
 * it applies. Used for every role (thermo's ff_thermo_run repeats the same
 * arithmetic for samples and standards, from the same inputs). */
static void depression(const struct ff_sheet *sh, struct ff_series_run *r,
                       const struct ff_series_run *b)
{
  const struct ff_sheet_row *row = &sh->row[r->row];
  double f = 0;

  if (b->status != FF_OK) {
    series_fail(sh, r, FF_SC_BLANK, b->status, "its blank '%s' has no "
                "freezing point", sh->row[b->row].run);
    return;
  }
  r->tf_blank_c = b->tf_c;
  r->u_tf_blank_k = b->u_tf_k;
  r->depression_obs_k = b->tf_c - r->tf_c;
  r->u_depression_k = ff_gum_u_depression(0.0, b->u_tf_k, r->u_tf_k);
  r->depression_k = r->depression_obs_k;
  r->frozen_fraction = 0;
  if (row->role == FF_SHEET_BLANK)
    return;             /* a blank against a blank: drift, not depression */
  if (!(r->depression_obs_k > 0)) {
    series_fail(sh, r, -1, FF_EUNTRUSTED, "froze at or above its blank "
                "(depression %.4f K): no depression to analyse",
                r->depression_obs_k);
    return;
  }
  if (needs_correction(&r->event) && r->solvent != NULL) {
    double dt = ff_thermo_supercool_correct(r->depression_obs_k,
                                            r->event.supercooling_k,
                                            ff_solvent_frozen_per_k(r->solvent),
                                            &f);
    if (!isfinite(dt)) {
      series_fail(sh, r, -1, FF_EUNTRUSTED, "supercooling of %.3f K is too "
                  "large for the frozen-fraction correction",
                  r->event.supercooling_k);
      return;
    }
    r->depression_k = dt;
    r->u_depression_k *= 1.0 - f;
    r->frozen_fraction = f;
    r->correction_applied = 1;
  }
}

static double balance_u(const struct ff_sheet_row *row,
                        const struct ff_series_opts *o)
{
  double res = isfinite(row->balance_res_g) ? row->balance_res_g
                                            : o->balance_res_g;
  /* Tare and gross reading, each rectangular (GUM 4.3.7). */
  return ff_gum_u_mass(res, 2, 0.0);
}

static void molality(const struct ff_sheet *sh, struct ff_series_run *r,
                     const struct ff_series_opts *o)
{
  const struct ff_sheet_row *row = &sh->row[r->row];

  r->u_solute_g = r->u_solvent_g = balance_u(row, o);
  if (isfinite(row->molality_mol_kg)) {
    r->molality_mol_kg = row->molality_mol_kg;
    r->u_molality_mol_kg = 0;   /* typed as exact; no mass budget */
    return;
  }
  r->molality_mol_kg = ff_thermo_molality_hydrate(
    row->solute_g, row->m_weighed_g_mol, row->waters, FF_M_WATER_G_MOL,
    row->solvent_g, r->is_water, &r->solvent_eff_g);
  if (!isfinite(r->molality_mol_kg)) {
    series_fail(sh, r, FF_SC_SOLUTE_G, FF_EINPUT, "no molality from "
                "solute_g %g, solvent_g %g and %g g/mol", row->solute_g,
                row->solvent_g, row->m_weighed_g_mol);
    return;
  }
  r->u_molality_mol_kg = ff_gum_u_molality(
    r->molality_mol_kg, row->solute_g, r->u_solute_g, r->solvent_eff_g,
    r->u_solvent_g, row->m_weighed_g_mol, 0.0);
}

/* One normal draw around x with standard uncertainty u; an input taken as
 * exact (u = 0: a table Kf, a typed molality) takes no draw, as in
 * thermo.c. GSL's ziggurat generator: the same normal distribution as
 * gsl_ran_gaussian's polar method, about three times cheaper (no log for
 * most draws). */
static double normal_draw(gsl_rng *g, double x, double u)
{
  return u > 0.0 ? x + gsl_ran_gaussian_ziggurat(g, u) : x;
}

/* Monte Carlo of i = dT/(Kf m) with Gaussian inputs: the cross-check of
 * the GUM first-order value (JCGM 101 idea; GSL's mt19937). */
static double mc_u_i(const struct ff_series_run *r, size_t draws,
                     unsigned long seed)
{
  gsl_rng *g;
  double mean = 0, m2 = 0;

  if (draws < 1000)
    return NAN;
  g = gsl_rng_alloc(gsl_rng_mt19937);
  if (g == NULL)
    return NAN;
  gsl_rng_set(g, seed);
  for (size_t k = 0; k < draws; k++) {
    double dt = normal_draw(g, r->depression_k, r->u_depression_k);
    double m = normal_draw(g, r->molality_mol_kg, r->u_molality_mol_kg);
    double kf = normal_draw(g, r->kf_k_kg_mol, r->u_kf_k_kg_mol);
    double i = dt / (kf * m);
    double delta = i - mean;
    mean += delta / (double)(k + 1);
    m2 += delta * (i - mean);
  }
  gsl_rng_free(g);
  return sqrt(m2 / (double)(draws - 1));
}

/* i, phi, osmolality, activity (thermo.h) of a sample or standard; its
 * Monte Carlo check runs later, beside the fits (fits_and_checks). */
static void thermo(const struct ff_sheet *sh, struct ff_series_run *r)
{
  struct ff_run_in in = FF_RUN_IN_INIT;
  struct ff_fusion water = FF_FUSION_WATER, other;
  struct ff_diag td = FF_DIAG_INIT;

  in.tf_blank_c = r->tf_blank_c;
  in.tf_sample_c = r->tf_c;
  in.u_tf_blank_k = r->u_tf_blank_k;
  in.u_tf_sample_k = r->u_tf_k;
  in.thermo_res_k = 0;        /* already in each event's u (detector) */
  in.molality_mol_kg = r->molality_mol_kg;
  in.u_molality_mol_kg = r->u_molality_mol_kg;
  in.kf_k_kg_mol = r->kf_k_kg_mol;
  in.u_kf_k_kg_mol = r->u_kf_k_kg_mol;
  in.nu = r->particles_known ? (double)r->particles.nu : NAN;
  if (r->correction_applied) {
    in.supercool_k = r->event.supercooling_k;
    in.frozen_per_k = ff_solvent_frozen_per_k(r->solvent);
  }
  if (r->is_water)
    in.fusion = &water;
  else if (ff_fusion_from_solvent(r->solvent, &other, &td) == FF_OK)
    in.fusion = &other;
  ff_diag_clear(&td);
  if (ff_thermo_run(&in, &r->th, &td) != FF_OK)
    series_fail(sh, r, -1, td.status, "%s", td.msg);
}

static void unknown_mass(const struct ff_sheet *sh, struct ff_series_run *r,
                         const struct ff_series_opts *o)
{
  const struct ff_sheet_row *row = &sh->row[r->row];
  struct ff_mass_in in;
  struct ff_diag md = FF_DIAG_INIT;
  double res = isfinite(row->balance_res_g) ? row->balance_res_g
                                            : o->balance_res_g;
  int st;

  r->u_solute_g = r->u_solvent_g = balance_u(row, o);
  r->conc_g_kg = 1000.0 * row->solute_g / row->solvent_g;
  in.kf = (struct ff_quantity){ r->kf_k_kg_mol, r->u_kf_k_kg_mol, 0, 0 };
  in.solute_g = (struct ff_quantity){ row->solute_g, 0, res / 2, 2 };
  in.solvent_g = (struct ff_quantity){ row->solvent_g, 0, res / 2, 2 };
  in.depression_k = (struct ff_quantity){ r->depression_k,
                                          r->u_depression_k, 0, 0 };
  if (o->mc_draws >= 1000)
    st = ff_thermo_molar_mass_mc(&in, o->mc_draws, o->seed + r->row,
                                 &r->mass, &md);
  else
    st = ff_thermo_molar_mass(&in, &r->mass, &md);
  if (st != FF_OK)
    series_fail(sh, r, -1, md.status, "%s", md.msg);
}

/* ---- probes ---- */

/* Probe ids are labels typed by hand: "p1" and "P1" are one probe. */
static int same_probe(const char *a, const char *b)
{
  return strcasecmp(a, b) == 0;
}

const char *ff_series_run_flag_name(unsigned flag)
{
  switch (flag) {
  case FF_SERIES_RUN_BLANK_OTHER_PROBE: return "blank_other_probe";
  case FF_SERIES_RUN_KF_OTHER_PROBES: return "kf_other_probes";
  default: break;
  }
  return "?";
}

static const struct ff_series_kfcal *find_cal(const struct ff_series_kfcal *v,
                                              size_t n, const char *solvent,
                                              const char *probe)
{
  for (size_t k = 0; k < n; k++)
    if (strcasecmp(v[k].solvent, solvent) == 0
        && same_probe(v[k].probe, probe))
      return &v[k];
  return NULL;
}

/* The pooled calibration of a solvent (every standard, probe or not). */
static const struct ff_series_kfcal *kfcal_of(const struct ff_series *s,
                                              const char *solvent)
{
  return find_cal(s->kfcal, s->n_kfcal, solvent, "");
}

const char *ff_series_run_note(const struct ff_series *s,
                               const struct ff_series_run *r, unsigned flag,
                               char *buf, size_t n)
{
  const struct ff_sheet_row *row = &s->sheet->row[r->row];
  const struct ff_series_kfcal *cal;

  if (n == 0)
    return buf;
  buf[0] = '\0';
  if (!(r->flags & flag))
    return buf;
  if (flag == FF_SERIES_RUN_BLANK_OTHER_PROBE && row->blank_row >= 0) {
    const struct ff_sheet_row *b = &s->sheet->row[row->blank_row];
    snprintf(buf, n, "the blank '%s' was measured on probe %s, this run on "
             "probe %s: their calibration offsets do not cancel", b->run,
             b->probe, row->probe);
  } else if (flag == FF_SERIES_RUN_KF_OTHER_PROBES && r->solvent != NULL
             && (cal = kfcal_of(s, r->solvent->name)) != NULL) {
    snprintf(buf, n, "no standard of %s on probe %s: Kf pooled from %s, "
             "none of them on probe %s, so the gain error of probe %s is "
             "not calibrated", cal->solvent, row->probe, cal->runs,
             row->probe, row->probe);
  }
  return buf;
}

/* A run and its blank on different probes: each probe's offset shifts its
 * own readings, so the depression keeps their difference. Sheet facts
 * only: set before anything is computed, kept whatever happens later. */
static void check_blank_probe(const struct ff_sheet *sh,
                              struct ff_series_run *r)
{
  const struct ff_sheet_row *row = &sh->row[r->row];
  const struct ff_sheet_row *b;

  if (row->role == FF_SHEET_BLANK || row->role == FF_SHEET_ROLE_NONE
      || row->blank_row < 0 || row->probe[0] == '\0')
    return;
  b = &sh->row[row->blank_row];
  if (b->probe[0] != '\0' && !same_probe(b->probe, row->probe))
    r->flags |= FF_SERIES_RUN_BLANK_OTHER_PROBE;
}

/* ---- Kf: sheet, standards of the solvent (same probe first), table ---- */

static void use_cal(struct ff_series_run *r,
                    const struct ff_series_kfcal *cal)
{
  r->kf_k_kg_mol = cal->kf_k_kg_mol;
  r->u_kf_k_kg_mol = cal->u_kf_k_kg_mol;
  r->kf_source = FF_KF_STANDARD;
}

static void choose_kf(const struct ff_series *s, const struct ff_sheet *sh,
                      struct ff_series_run *r)
{
  const struct ff_sheet_row *row = &sh->row[r->row];
  const struct ff_series_kfcal *cal, *own;

  if (isfinite(row->kf_k_kg_mol)) {
    r->kf_k_kg_mol = row->kf_k_kg_mol;
    r->u_kf_k_kg_mol = isfinite(row->u_kf_k_kg_mol) ? row->u_kf_k_kg_mol : 0;
    r->kf_source = FF_KF_SHEET;
    snprintf(r->kf_from, sizeof r->kf_from, "run %s", row->run);
  } else if (row->role != FF_SHEET_STANDARD
             && (cal = kfcal_of(s, r->solvent->name)) != NULL) {
    /* A probe's gain error scales every depression it reads: its own
     * standards calibrate it; the pool of other probes only on average. */
    own = row->probe[0] == '\0' ? NULL
          : find_cal(s->kfcal_probe, s->n_kfcal_probe, r->solvent->name,
                     row->probe);
    if (own != NULL) {
      use_cal(r, own);
      snprintf(r->kf_probe, sizeof r->kf_probe, "%s", own->probe);
      snprintf(r->kf_from, sizeof r->kf_from, "%s on probe %s", own->runs,
               own->probe);
    } else if (row->probe[0] != '\0') {
      use_cal(r, cal);
      r->flags |= FF_SERIES_RUN_KF_OTHER_PROBES;
      snprintf(r->kf_from, sizeof r->kf_from, "%s, pooled: no standard on "
               "probe %s", cal->runs, row->probe);
    } else {
      use_cal(r, cal);
      snprintf(r->kf_from, sizeof r->kf_from, "%s", cal->runs);
    }
  } else {
    r->kf_k_kg_mol = r->solvent->kf_k_kg_mol;
    r->u_kf_k_kg_mol = 0;     /* the table's value taken as exact */
    r->kf_source = FF_KF_TABLE;
    snprintf(r->kf_from, sizeof r->kf_from, "%s", r->solvent->name);
  }
}

/* Kf from one standard: Kf = dT / (nu m), nu = its particles (1 for the
 * non-electrolyte a standard should be). Relative parts in quadrature. */
static void calibrate(const struct ff_sheet *sh, struct ff_series_run *r)
{
  double nu = r->particles_known ? (double)r->particles.nu : 1.0;
  double kf = r->depression_k / (nu * r->molality_mol_kg);
  double rel = hypot(r->u_depression_k / r->depression_k,
                     r->u_molality_mol_kg / r->molality_mol_kg);

  if (!isfinite(kf) || !(kf > 0) || !isfinite(rel)) {
    series_fail(sh, r, -1, FF_EUNTRUSTED, "no Kf from this standard");
    return;
  }
  r->kf_cal_k_kg_mol = kf;
  r->u_kf_cal_k_kg_mol = kf * rel;
}

/* Adds standard r to the calibration of (solvent, probe) in *v, made the
 * first time: sums of w Kf and of w until finish_kfcal. */
static int add_standard(struct ff_series_kfcal **v, size_t *n,
                        const struct ff_sheet *sh,
                        const struct ff_series_run *r, const char *probe)
{
  struct ff_series_kfcal *c;

  c = (struct ff_series_kfcal *)find_cal(*v, *n, r->solvent->name, probe);
  if (c == NULL) {
    struct ff_series_kfcal *bigger = realloc(*v, (*n + 1) * sizeof *bigger);
    if (bigger == NULL)
      return FF_EIO;
    *v = bigger;
    c = &bigger[(*n)++];
    memset(c, 0, sizeof *c);
    snprintf(c->solvent, sizeof c->solvent, "%s", r->solvent->name);
    snprintf(c->probe, sizeof c->probe, "%s", probe);
    c->kf_k_kg_mol = 0;       /* running sum of w Kf until the end */
    c->u_kf_k_kg_mol = 0;     /* running sum of w */
  }
  /* Inverse-variance weights; u = 0 cannot happen (u(dT) > 0) but a
   * zero weight sum would be caught below. */
  double w = 1.0 / (r->u_kf_cal_k_kg_mol * r->u_kf_cal_k_kg_mol);
  if (!isfinite(w))
    w = 1e12;
  c->kf_k_kg_mol += w * r->kf_cal_k_kg_mol;
  c->u_kf_k_kg_mol += w;
  size_t used = strlen(c->runs);
  snprintf(c->runs + used, sizeof c->runs - used, "%s%s", used ? "+" : "",
           sh->row[r->row].run);
  c->n++;
  return FF_OK;
}

static void finish_kfcal(struct ff_series_kfcal *v, size_t n)
{
  for (size_t k = 0; k < n; k++) {
    double sw = v[k].u_kf_k_kg_mol;
    v[k].kf_k_kg_mol /= sw;
    v[k].u_kf_k_kg_mol = 1.0 / sqrt(sw);
    v[k].birge_ratio = NAN;
  }
}

/*
 * Standards that disagree beyond their stated u (two probes with different
 * gain errors pooled, a wrong mass) must not leave the pooled Kf with the
 * small u of the weighted mean: chi2 of their Kf about it gives the Birge
 * ratio R = sqrt(chi2 / (n - 1)), and u is multiplied by R when R > 1, as
 * the solute fits scale their covariance (common practice; R. T. Birge,
 * Phys. Rev. 40 (1932) 207, from memory).
 */
static void scatter_kfcal(struct ff_series_kfcal *v, size_t n,
                          const struct ff_series *s, const struct ff_sheet *sh,
                          int by_probe)
{
  for (size_t k = 0; k < n; k++) {
    double chi2 = 0.0;

    if (v[k].n < 2)
      continue;
    for (size_t j = 0; j < s->n_runs; j++) {
      const struct ff_series_run *r = &s->runs[j];
      const struct ff_sheet_row *row = &sh->row[r->row];

      if (row->role != FF_SHEET_STANDARD || r->status != FF_OK
          || strcasecmp(r->solvent->name, v[k].solvent) != 0
          || (by_probe && !same_probe(v[k].probe, row->probe)))
        continue;
      chi2 += gsl_pow_2((r->kf_cal_k_kg_mol - v[k].kf_k_kg_mol)
                        / r->u_kf_cal_k_kg_mol);
    }
    v[k].birge_ratio = sqrt(chi2 / (double)(v[k].n - 1));
    if (v[k].birge_ratio > 1.0)
      v[k].u_kf_k_kg_mol *= v[k].birge_ratio;
  }
}

/* Every good standard joins its solvent's pool (as without probes) and,
 * when it gives a probe id, the calibration of that probe as well. */
static int collect_kfcal(struct ff_series *s, const struct ff_sheet *sh)
{
  for (size_t k = 0; k < s->n_runs; k++) {
    const struct ff_series_run *r = &s->runs[k];
    const struct ff_sheet_row *row = &sh->row[r->row];

    if (row->role != FF_SHEET_STANDARD || r->status != FF_OK)
      continue;
    if (add_standard(&s->kfcal, &s->n_kfcal, sh, r, "") != FF_OK)
      return FF_EIO;
    if (row->probe[0] != '\0'
        && add_standard(&s->kfcal_probe, &s->n_kfcal_probe, sh, r,
                        row->probe) != FF_OK)
      return FF_EIO;
  }
  finish_kfcal(s->kfcal, s->n_kfcal);
  finish_kfcal(s->kfcal_probe, s->n_kfcal_probe);
  scatter_kfcal(s->kfcal, s->n_kfcal, s, sh, 0);
  scatter_kfcal(s->kfcal_probe, s->n_kfcal_probe, s, sh, 1);
  return FF_OK;
}

/* ---- the whole pipeline ---- */

struct per_run {
  const struct ff_series *out;
  const struct ff_sheet *sheet;
  const struct ff_series_opts *o;
};

/* Step 3 for run i: reads the shared Kf calibrations, writes only run i
 * (an unknown's Monte Carlo draws have their own generator and seed). */
static void numbers_one(void *ctx, size_t i)
{
  const struct per_run *pr = ctx;
  struct ff_series_run *r = &pr->out->runs[i];
  const struct ff_sheet_row *row = &pr->sheet->row[i];

  if (r->status != FF_OK || row->role == FF_SHEET_BLANK)
    return;
  choose_kf(pr->out, pr->sheet, r);
  r->osmolality_osmol_kg = r->depression_k / r->kf_k_kg_mol;
  if (row->role == FF_SHEET_UNKNOWN) {
    unknown_mass(pr->sheet, r, pr->o);
    return;
  }
  if (row->role == FF_SHEET_SAMPLE)
    molality(pr->sheet, r, pr->o);
  if (r->status == FF_OK)
    thermo(pr->sheet, r);
}

/* Step 4: item 0 fits the groups (series_fit, which runs its own pools
 * and reads the runs' i, u(i), molality and unknowns' masses); item i + 1
 * is run i's Monte Carlo check of u(i), written only to that run. A run
 * has its i exactly when it is a sample or standard still FF_OK here. */
struct after_runs {
  struct ff_series *out;
  const struct ff_sheet *sheet;
  const struct ff_series_opts *o;
  int fit_status;             /* series_fit's return, by item 0 */
};

static void fits_and_checks(void *ctx, size_t k)
{
  struct after_runs *ar = ctx;
  struct ff_series_run *r;
  enum ff_sheet_role role;

  if (k == 0) {
    ar->fit_status = series_fit(ar->out, ar->sheet, ar->o);
    return;
  }
  r = &ar->out->runs[k - 1];
  role = ar->sheet->row[r->row].role;
  if (r->status == FF_OK
      && (role == FF_SHEET_SAMPLE || role == FF_SHEET_STANDARD))
    r->mc_u_vant_hoff_i = mc_u_i(r, ar->o->mc_draws, ar->o->seed + r->row);
}

/* Out of memory: nothing of the result is usable. */
static int no_memory(struct ff_series *out, struct ff_diag *d)
{
  ff_series_release(out);
  return ff_diag_set(d, FF_EIO, NULL, "out of memory");
}

int ff_series_run(const struct ff_sheet *sheet, const struct ff_series_opts *o,
                  struct ff_series *out, struct ff_diag *d)
{
  struct caches k = { 0 };
  int st = FF_OK;

  memset(out, 0, sizeof *out);
  out->sheet = sheet;
  if (o == NULL || o->solvents == NULL)
    return ff_diag_set(d, FF_EUSAGE, NULL, "the series needs a solvent "
                       "table");
  out->runs = calloc(sheet->n ? sheet->n : 1, sizeof *out->runs);
  if (out->runs == NULL)
    return no_memory(out, d);
  out->n_runs = sheet->n;

  /* 1. Every good row: solvent, particles, freezing point. */
  for (size_t i = 0; i < sheet->n; i++) {
    struct ff_series_run *r = &out->runs[i];
    const struct ff_sheet_row *row = &sheet->row[i];

    run_init(r, i);
    if (row->diag.status != FF_OK) {
      r->status = row->diag.status;
      r->diag = row->diag;
      continue;
    }
    r->solvent = ff_solvent_find(o->solvents, row->solvent);
    if (r->solvent == NULL) {
      series_fail(sheet, r, FF_SC_SOLVENT, FF_EINPUT, "unknown solvent '%s'",
                  row->solvent);
      continue;
    }
    r->is_water = strcmp(r->solvent->name, "water") == 0;
    check_blank_probe(sheet, r);
    r->particles_known = ff_series_particles(row, &r->particles,
                                             r->particles_how,
                                             sizeof r->particles_how);
  }
  st = read_ahead(out, &k, sheet, o);
  for (size_t i = 0; i < sheet->n && st == FF_OK; i++)
    if (out->runs[i].status == FF_OK)
      st = freezing_point(out, &k, sheet, &out->runs[i]);
  caches_release(&k);
  if (st != FF_OK)
    return no_memory(out, d);

  /* 2. Blanks of blanks (drift checks), then standards, then Kf. */
  for (size_t i = 0; i < out->n_runs; i++) {
    struct ff_series_run *r = &out->runs[i];
    const struct ff_sheet_row *row = &sheet->row[i];

    if (r->status != FF_OK || row->blank_row < 0)
      continue;
    depression(sheet, r, &out->runs[row->blank_row]);
    if (r->status != FF_OK || row->role != FF_SHEET_STANDARD)
      continue;
    molality(sheet, r, o);
    if (r->status == FF_OK)
      calibrate(sheet, r);
  }
  if (collect_kfcal(out, sheet) != FF_OK)
    return no_memory(out, d);

  /* 3. Samples, standards (i against the table), unknowns. */
  {
    struct per_run pr = { out, sheet, o };
    ff_parallel_for(out->n_runs, numbers_one, &pr);
  }

  /* 4. Fits per solute and per unknown (series_fit.c), and beside them
   * the Monte Carlo checks of u(i), which the fits do not read. */
  {
    struct after_runs ar = { out, sheet, o, FF_OK };
    ff_parallel_for(out->n_runs + 1, fits_and_checks, &ar);
    st = ar.fit_status;
  }
  if (st == FF_EIO)
    return no_memory(out, d);

  /* 5. Replicates of one solution (series_repl.c): read the runs only, so
   * no status changes; the fits above already use every run. */
  if (ff_series_replicates(out) != FF_OK)
    return no_memory(out, d);

  /* Overall status: bad input first, then untrusted. */
  int any_input = 0, any_untrusted = 0, any_io = 0;
  const struct ff_diag *first = NULL;
  for (size_t i = 0; i < out->n_runs; i++) {
    const struct ff_series_run *r = &out->runs[i];
    if (r->status == FF_OK)
      continue;
    out->n_failed++;
    any_input |= r->status == FF_EINPUT || r->status == FF_EUSAGE;
    any_untrusted |= r->status == FF_EUNTRUSTED;
    any_io |= r->status == FF_EIO;
    if (first == NULL)
      first = &r->diag;
  }
  /* A solute with fewer than three runs cannot be fitted; that is not a
   * failure of the series (its runs stand on their own). */
  for (size_t i = 0; i < out->n_solutes; i++)
    if (out->solutes[i].status != FF_OK && out->solutes[i].n >= 3) {
      any_untrusted = 1;
      if (first == NULL)
        first = &out->solutes[i].diag;
    }
  for (size_t i = 0; i < out->n_unknowns; i++)
    if (out->unknowns[i].status != FF_OK) {
      any_untrusted = 1;
      if (first == NULL)
        first = &out->unknowns[i].diag;
    }
  int st_all = any_io ? FF_EIO : any_input ? FF_EINPUT
               : any_untrusted ? FF_EUNTRUSTED : FF_OK;
  if (first != NULL && d != NULL && d->status == FF_OK) {
    *d = *first;
    d->status = (enum ff_status)st_all;
  }
  return st_all;
}

void ff_series_release(struct ff_series *s)
{
  if (s == NULL)
    return;
  for (size_t i = 0; i < s->n_solutes; i++) {
    free(s->solutes[i].runs);
    ff_regress_result_release(&s->solutes[i].reg);
  }
  for (size_t i = 0; i < s->n_unknowns; i++)
    free(s->unknowns[i].runs);
  for (size_t i = 0; i < s->n_ds; i++)
    ff_dataset_free(s->ds[i]);
  series_repl_release(s);
  free(s->solutes);
  free(s->unknowns);
  free(s->kfcal);
  free(s->kfcal_probe);
  free(s->ds);
  free(s->runs);
  memset(s, 0, sizeof *s);
}
