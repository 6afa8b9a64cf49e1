/* cli/cmd_series.c - 'frostfit series SHEET': a whole experiment from a run
 * sheet; options, the readable table, --json, --csv and --figures. */
#include <errno.h>
#include <limits.h>
#include <math.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <sys/stat.h>
#include <unistd.h>

#include <jansson.h>

#include "cli.h"
#include "frostfit/json.h"
#include "frostfit/plot.h"
#include "frostfit/series.h"

#define CMD "series"
#define CAUTION_OSM "caution: osmolality values are not a validated clinical " \
  "or pharmaceutical measurement;\n  defer to the applicable pharmacopoeia, " \
  "local codes and licensed practice."

static void help(void)
{
  printf(
"usage: frostfit series SHEET [--json] [--csv FILE] [--figures DIR]\n"
"                             [--format png,svg,pdf] [--solvents FILE]\n"
"                             [--mc N] [--seed N] [--quiet]\n"
"\n"
"Runs a whole experiment from a run sheet (a CSV, one row per run; format in\n"
"docs/formats/run-sheet.md): imports each cooling curve, reads the freezing\n"
"point of the chosen cycle, takes the depression against the run's blank,\n"
"and gives per run the molality, van 't Hoff factor i, osmotic coefficient,\n"
"osmolality and water activity with uncertainties (GUM, Monte Carlo check);\n"
"per solute the extrapolation of i to infinite dilution with several\n"
"models; per unknown the molar mass extrapolated to zero concentration.\n"
"\n"
"options:\n"
"  --json            machine-readable result on stdout\n"
"  --csv FILE        also write the results as CSV for spreadsheets\n"
"                    (replaced atomically; never an input file)\n"
"  --figures DIR     gnuplot scripts, data and figures into DIR\n"
"  --format LIST     figure formats: png, svg, pdf or all (default png)\n"
"  --solvents FILE   your own solvent CSV; its rows override by name\n"
"                    (also --solvents-file)\n"
"  --mc N            Monte Carlo draws per run (default 4000; 0 = none)\n"
"  --seed N          random seed of the Monte Carlo checks\n"
"  --quiet           no notes on stderr (problems are still reported)\n"
"  --help            this text\n"
"\n"
"A run that cannot be analysed is reported on stderr (sheet:line:column and\n"
"the reason) and the others are still analysed and printed.\n"
"\n"
"exit codes: 0 ok, 1 usage, 2 a run or the sheet has bad input,\n"
"3 a run or fit gave no trustworthy result, 4 i/o error\n");
}

struct opts {
  const char *sheet, *csv, *figures, *formats, *solvents;
  double mc, seed;
  int json, quiet;
};

static int parse(int argc, char **argv, struct opts *o)
{
  for (int i = 1; i < argc; i++) {
    const char *a = argv[i];
    const char **slot = NULL;
    double *num = NULL;

    if (strcmp(a, "--help") == 0 || strcmp(a, "-h") == 0)
      return help(), 1;
    if (strcmp(a, "--json") == 0) {
      o->json = 1;
      continue;
    }
    if (strcmp(a, "--quiet") == 0 || strcmp(a, "-q") == 0) {
      o->quiet = 1;
      continue;
    }
    if (strcmp(a, "--csv") == 0)
      slot = &o->csv;
    else if (strcmp(a, "--figures") == 0)
      slot = &o->figures;
    else if (strcmp(a, "--format") == 0)
      slot = &o->formats;
    else if (strcmp(a, "--solvents") == 0
             || strcmp(a, "--solvents-file") == 0)
      slot = &o->solvents;
    else if (strcmp(a, "--mc") == 0)
      num = &o->mc;
    else if (strcmp(a, "--seed") == 0)
      num = &o->seed;
    else if (a[0] == '-' && a[1] != '\0')
      return ff_cli_usage(CMD, "unknown option '%s'", a), -1;
    else if (o->sheet == NULL) {
      o->sheet = a;
      continue;
    } else {
      return ff_cli_usage(CMD, "one run sheet at a time; '%s' is extra", a),
             -1;
    }
    if (i + 1 >= argc)
      return ff_cli_usage(CMD, "%s needs a value", a), -1;
    if (slot != NULL)
      *slot = argv[++i];
    else if (ff_cli_number(CMD, a, argv[++i], num) != 0)
      return -1;
  }
  if (o->sheet == NULL)
    return ff_cli_usage(CMD, "give a run sheet"), -1;
  if (o->mc < 0 || (o->mc > 0 && o->mc < 1000) || o->mc > 1e7)
    return ff_cli_usage(CMD, "--mc must be 0 or from 1000 to 10000000"), -1;
  if (o->seed < 0 || o->seed > 4294967295.0)
    return ff_cli_usage(CMD, "--seed must be from 0 to 4294967295"), -1;
  return 0;
}

/* ---- formatting ---- */

/* Decimals that show u with two significant digits (at most 8). */
static int decimals_for(double u)
{
  int d;

  if (!isfinite(u) || u <= 0)
    return 4;
  d = 1 - (int)floor(log10(u));
  return d < 0 ? 0 : d > 8 ? 8 : d;
}

/* "x +/- u" with u to two significant digits; "-" when x is not finite. */
static const char *pm(char *buf, size_t n, double x, double u)
{
  if (!isfinite(x))
    snprintf(buf, n, "-");
  else if (!isfinite(u))
    snprintf(buf, n, "%.4g", x);
  else {
    int d = decimals_for(u);
    snprintf(buf, n, "%.*f +/- %.*f", d, x, d, u);
  }
  return buf;
}

/* x with dec decimals (dec < 0: two significant digits); "-" if absent. */
static const char *num(char *buf, size_t n, int dec, double x)
{
  if (!isfinite(x))
    snprintf(buf, n, "-");
  else if (dec < 0)
    snprintf(buf, n, "%#.2g", x);
  else
    snprintf(buf, n, "%.*f", dec, x);
  return buf;
}

static void flags_text(const struct ff_series_run *r, char *buf, size_t n)
{
  size_t used = 0;

  buf[0] = '\0';
  if (r->has_event)
    for (unsigned b = 0; b < FF_FLAG_COUNT; b++)
      if (r->event.flags & (1u << b)) {
        int w = snprintf(buf + used, n - used, "%s%s", used ? "," : "",
                         ff_flag_name(1u << b));
        if (w < 0 || (size_t)w >= n - used)
          return;
        used += (size_t)w;
      }
  if (r->correction_applied && used + 20 < n)
    used += (size_t)snprintf(buf + used, n - used, "%sfrozen %.1f%%",
                             used ? "," : "", 100 * r->frozen_fraction);
  if ((r->kf_source == FF_KF_STANDARD || r->kf_source == FF_KF_SHEET)
      && used + 20 < n)
    used += (size_t)snprintf(buf + used, n - used, "%skf:%s",
                             used ? "," : "",
                             ff_kf_source_name(r->kf_source));
  for (unsigned b = 0; b < FF_SERIES_RUN_FLAG_COUNT; b++)
    if (r->flags & (1u << b)) {
      const char *name = ff_series_run_flag_name(1u << b);
      if (used + strlen(name) + 2 >= n)
        return;
      used += (size_t)snprintf(buf + used, n - used, "%s%s",
                               used ? "," : "", name);
    }
}

/* The sentences behind the runs' own warnings (series.h), below the runs
 * table. Nothing when no run has one (always so without probe ids). */
static void print_warnings(const struct ff_series *s)
{
  char note[512];
  int any = 0;

  for (size_t k = 0; k < s->n_runs; k++)
    for (unsigned b = 0; b < FF_SERIES_RUN_FLAG_COUNT; b++) {
      if (!ff_series_run_note(s, &s->runs[k], 1u << b, note,
                              sizeof note)[0])
        continue;
      if (!any)
        printf("\nwarnings (the numbers above are computed all the same)\n");
      any = 1;
      printf("  %s: %s: %s\n", s->sheet->row[s->runs[k].row].run,
             ff_series_run_flag_name(1u << b), note);
    }
}

static void print_runs(const struct ff_series *s)
{
  char a[64], b[64], c[64], e[64], f[64], g[64], h[64], fl[256];

  printf("runs\n");
  printf("%-10s %-8s %-11s %-11s %-24s %-11s %-22s %-7s %-9s %-8s %s\n",
         "run", "role", "solvent", "Tf (C)", "depression (K)", "m (mol/kg)",
         "i", "phi", "mOsmol/kg", "a_w", "flags");
  for (size_t k = 0; k < s->n_runs; k++) {
    const struct ff_series_run *r = &s->runs[k];
    const struct ff_sheet_row *row = &s->sheet->row[r->row];
    int blank = row->role == FF_SHEET_BLANK;
    double osm = isfinite(r->th.osmolality_osmol_kg)
                 ? r->th.osmolality_osmol_kg : r->osmolality_osmol_kg;

    if (r->status != FF_OK) {
      printf("%-10s %-8s %-11s no result: see the message on stderr (%s)\n",
             row->run, ff_sheet_role_name(row->role), row->solvent,
             ff_status_name(r->status));
      continue;
    }
    flags_text(r, fl, sizeof fl);
    printf("%-10s %-8s %-11s %-11s %-24s %-11s %-22s %-7s %-9s %-8s %s\n",
           row->run, ff_sheet_role_name(row->role), row->solvent,
           num(a, sizeof a, 5, r->tf_c),
           blank ? (isfinite(r->depression_obs_k)
                    ? (snprintf(b, sizeof b, "drift %+.5f",
                                r->tf_c - r->tf_blank_c), b)
                    : "-")
                 : pm(b, sizeof b, r->depression_k, r->u_depression_k),
           num(c, sizeof c, 6, r->molality_mol_kg),
           pm(e, sizeof e, r->th.vant_hoff_i, r->th.u_vant_hoff_i),
           num(f, sizeof f, 4, r->th.osmotic_coefficient),
           num(g, sizeof g, 2, 1000.0 * osm),
           num(h, sizeof h, 5, r->is_water ? r->th.activity : NAN),
           fl[0] ? fl : "-");
  }
}

/* Replicate groups (series.h's rule), one line each, the scatter note
 * below a flagged one. Nothing when there are none. */
static void print_replicates(const struct ff_series *s)
{
  char m[64], a[64], b[64], r[32], p[32], note[256];

  if (s->n_repl == 0)
    return;
  printf("\nreplicates (same solution measured again)\n");
  printf("%-22s %-20s %-3s %-24s %-24s %-6s %-8s %s\n", "solute", "amount",
         "n", "mean dT +/- s (K)", "weighted dT +/- u (K)", "R", "p",
         "flag");
  for (size_t k = 0; k < s->n_repl; k++) {
    const struct ff_series_repl *g = &s->repl[k];
    if (isfinite(g->molality_mol_kg))
      snprintf(m, sizeof m, "%.6f mol/kg", g->molality_mol_kg);
    else if (isfinite(g->conc_g_kg))
      snprintf(m, sizeof m, "%.3f g/kg", g->conc_g_kg);
    else
      snprintf(m, sizeof m, "-");
    printf("%-22s %-20s %-3zu %-24s %-24s %-6s %-8s %s\n", g->solute, m, g->n,
           pm(a, sizeof a, g->depression_mean_k, g->depression_sd_k),
           pm(b, sizeof b, g->depression_weighted_k,
              g->u_depression_weighted_k),
           num(r, sizeof r, 2, g->birge_ratio),
           num(p, sizeof p, -1, g->p_value),
           g->flags & FF_SERIES_REPL_SCATTER ? "scatter" : "-");
    printf("  runs:");
    for (size_t j = 0; j < g->n; j++)
      printf(" %s", s->sheet->row[s->runs[g->runs[j]].row].run);
    if (isfinite(g->vant_hoff_i_mean))
      printf("; i %s (mean +/- s)", pm(a, sizeof a, g->vant_hoff_i_mean,
                                       g->vant_hoff_i_sd));
    printf("\n");
    if (ff_series_repl_note(g, note, sizeof note)[0])
      printf("  %s\n", note);
  }
}

/* One line on the Monte Carlo cross-check of u(i) over all runs. */
static void print_mc(const struct ff_series *s)
{
  double worst = 0;
  size_t n = 0;

  for (size_t k = 0; k < s->n_runs; k++) {
    const struct ff_series_run *r = &s->runs[k];
    if (r->status != FF_OK || !isfinite(r->mc_u_vant_hoff_i)
        || !(r->th.u_vant_hoff_i > 0))
      continue;
    double dev = fabs(r->mc_u_vant_hoff_i / r->th.u_vant_hoff_i - 1);
    if (dev > worst)
      worst = dev;
    n++;
  }
  if (n > 0)
    printf("\nMonte Carlo check of u(i): within %.1f %% of the GUM value "
           "for all %zu run%s\n", 100 * worst, n, n == 1 ? "" : "s");
}

/* Kf per run, grouped: runs sharing a value and an origin on one line. */

/* Ends a calibration line: standards that scatter beyond their u say so. */
static void scatter_note(const struct ff_series_kfcal *c)
{
  if (c->birge_ratio > 1.0)
    printf("; the standards scatter beyond their u: u scaled by the Birge "
           "ratio %.2f", c->birge_ratio);
  printf("\n");
}

static void print_kf(const struct ff_series *s)
{
  char a[64];
  int any = 0;
  unsigned char *done = calloc(s->n_runs + 1, 1);

  if (done == NULL)
    return;
  for (size_t k = 0; k < s->n_runs; k++) {
    const struct ff_series_run *r = &s->runs[k];
    if (done[k] || r->status != FF_OK
        || s->sheet->row[r->row].role == FF_SHEET_BLANK)
      continue;
    if (!any)
      printf("\nKf used\n");
    any = 1;
    printf("  %s K kg/mol from %s (%s):",
           pm(a, sizeof a, r->kf_k_kg_mol,
              r->u_kf_k_kg_mol > 0 ? r->u_kf_k_kg_mol : NAN),
           ff_kf_source_name(r->kf_source), r->kf_from);
    for (size_t j = k; j < s->n_runs; j++) {
      const struct ff_series_run *q = &s->runs[j];
      if (done[j] || q->status != FF_OK
          || s->sheet->row[q->row].role == FF_SHEET_BLANK
          || q->kf_source != r->kf_source
          || strcmp(q->kf_from, r->kf_from) != 0
          || fabs(q->kf_k_kg_mol - r->kf_k_kg_mol) > 0)
        continue;
      done[j] = 1;
      printf(" %s", s->sheet->row[q->row].run);
    }
    printf("\n");
  }
  free(done);
  for (size_t k = 0; k < s->n_kfcal; k++) {
    printf("  calibration: %s Kf = %s K kg/mol from %zu standard%s (%s)",
           s->kfcal[k].solvent,
           pm(a, sizeof a, s->kfcal[k].kf_k_kg_mol,
              s->kfcal[k].u_kf_k_kg_mol), s->kfcal[k].n,
           s->kfcal[k].n == 1 ? "" : "s", s->kfcal[k].runs);
    scatter_note(&s->kfcal[k]);
  }
  for (size_t k = 0; k < s->n_kfcal_probe; k++) {
    printf("  calibration: %s on probe %s Kf = %s K kg/mol from %zu "
           "standard%s (%s)", s->kfcal_probe[k].solvent,
           s->kfcal_probe[k].probe,
           pm(a, sizeof a, s->kfcal_probe[k].kf_k_kg_mol,
              s->kfcal_probe[k].u_kf_k_kg_mol), s->kfcal_probe[k].n,
           s->kfcal_probe[k].n == 1 ? "" : "s", s->kfcal_probe[k].runs);
    scatter_note(&s->kfcal_probe[k]);
  }
}

static void print_solute(const struct ff_series_solute *g)
{
  char a[64], b[96];

  printf("\n%s in %s: %zu run%s; particles %s (%s)", g->solute, g->solvent,
         g->n, g->n == 1 ? "" : "s",
         g->particles_known ? (snprintf(a, sizeof a, "%u", g->particles.nu),
                               a) : "unknown", g->particles_how);
  if (g->a_phi > 0 && g->particles_known && g->particles.nu >= 2)
    printf("; A_phi %.4f at %.3f C", g->a_phi, g->mean_tf_c);
  printf("\n");
  if (g->status != FF_OK) {
    printf("  no fit: %s\n", g->diag.msg);
    return;
  }
  printf("  %-22s %-22s %-20s %s\n", "model", "i at m -> 0", "95 % interval",
         "note");
  for (unsigned m = 0; m < FF_REGRESS_NMODELS; m++) {
    const struct ff_fit *f = &g->reg.fit[m];
    if (!f->attempted)
      continue;
    if (f->status != FF_OK) {
      printf("  %-22s not fitted: %s\n", ff_regress_model_name(f->model),
             f->reason);
      continue;
    }
    if (f->limit_fixed)
      snprintf(a, sizeof a, "%.4g (fixed)", f->i_limit);
    else
      pm(a, sizeof a, f->i_limit, f->u_i_limit);
    if (f->limit_fixed)
      snprintf(b, sizeof b, "-");
    else {
      int d = decimals_for(f->u_i_limit);
      snprintf(b, sizeof b, "[%.*f, %.*f]", d, f->ci_limit[0], d,
               f->ci_limit[1]);
    }
    int pref = g->reg.has_preferred && g->reg.preferred == f->model;
    printf("  %-22s %-22s %-20s %s%s%s\n", ff_regress_model_name(f->model),
           a, b, pref ? "preferred" : "", pref && f->note[0] ? "; " : "",
           f->note);
  }
  if (g->reg.has_preferred)
    printf("  preferred model: %s (smallest %s)\n",
           ff_regress_model_name(g->reg.preferred), g->reg.criterion);
  if (g->reg.has_particles && g->reg.particles_by_ftest)
    printf("  particles: nearest integer %ld to the %s limit, outside its "
           "interval, but fixing nu = %ld does not worsen the fit (F-test "
           "p = %.2g) -> inferred\n", g->reg.particles_nearest,
           ff_regress_model_name(g->reg.particles_model),
           g->reg.particles_nearest, g->reg.nu_test.p);
  else if (g->reg.has_particles)
    printf("  particles: nearest integer %ld to the %s limit, %s its "
           "interval%s\n", g->reg.particles_nearest,
           ff_regress_model_name(g->reg.particles_model),
           g->reg.particles_in_ci ? "inside" : "outside",
           g->reg.particles_in_ci ? " -> inferred" : " -> not inferred");
  /* alpha speaks of partial dissociation: shown when the limit is not
   * the full particle count. */
  if (g->reg.has_alpha && g->reg.has_particles && !g->reg.particles_inferred)
    printf("  degree of dissociation alpha = %s\n",
           pm(a, sizeof a, g->reg.alpha, g->reg.u_alpha));
  if (g->has_mc)
    printf("  Monte Carlo u(i at m -> 0): %#.2g (propagated %#.2g; %zu of %zu "
           "refits)\n", g->mc.sd, g->mc.u_propagated, g->mc.n_ok,
           g->mc.n_draws);
}

static void print_unknowns(const struct ff_series *s)
{
  char a[64], b[64];

  if (s->n_unknowns == 0)
    return;
  printf("\nunknowns\n");
  for (size_t k = 0; k < s->n_unknowns; k++) {
    const struct ff_series_unknown *g = &s->unknowns[k];
    printf("%s in %s:", g->solute, g->solvent);
    if (g->status != FF_OK) {
      printf(" no molar mass: %s\n", g->diag.msg);
      continue;
    }
    int d = decimals_for(g->mm.u_m0_g_mol);
    printf(" M = %s g/mol, 95 %% interval [%.*f, %.*f] (%s)\n",
           pm(a, sizeof a, g->mm.m0_g_mol, g->mm.u_m0_g_mol), d, g->mm.ci[0],
           d, g->mm.ci[1], g->mm.preferred == FF_MM_LINEAR ? "linear in "
           "concentration" : g->mm.preferred == FF_MM_RECIPROCAL
           ? "1/M linear in concentration" : "one run");
    if (g->mm.note[0])
      printf("  %s\n", g->mm.note);
    for (size_t j = 0; j < g->n; j++) {
      const struct ff_series_run *r = &s->runs[g->runs[j]];
      printf("  %-10s %s g/mol at %.3f g/kg (Monte Carlo u %s)\n",
             s->sheet->row[r->row].run,
             pm(a, sizeof a, r->mass.m_g_mol, r->mass.u_m_g_mol),
             r->conc_g_kg, num(b, sizeof b, -1, r->mass.mc_u_g_mol));
    }
  }
}

static void print_cautions(const struct ff_series *s)
{
  const struct ff_solvent *seen[32];
  size_t n = 0;

  printf("\n%s\n", CAUTION_OSM);
  for (size_t k = 0; k < s->n_runs && n < 32; k++) {
    const struct ff_solvent *v = s->runs[k].solvent;
    int dup = 0;
    if (v == NULL || v->hazard[0] == '\0' || s->runs[k].is_water)
      continue;
    for (size_t j = 0; j < n; j++)
      dup |= seen[j] == v;
    if (dup)
      continue;
    seen[n++] = v;
    printf("caution (%s): %s\n", v->name, v->hazard);
  }
}

static void print_table(const struct ff_series *s)
{
  printf("series %s: %zu run%s, %zu without a result\n\n", s->sheet->path,
         s->n_runs, s->n_runs == 1 ? "" : "s", s->n_failed);
  print_runs(s);
  print_warnings(s);
  print_replicates(s);
  print_mc(s);
  print_kf(s);
  if (s->n_solutes > 0)
    printf("\nsolutes (i extrapolated to infinite dilution)");
  for (size_t k = 0; k < s->n_solutes; k++)
    print_solute(&s->solutes[k]);
  print_unknowns(s);
  print_cautions(s);
}

/* ---- CSV file: atomic, never over an input ---- */

static int same_file(const char *a, const char *b)
{
  struct stat sa, sb;

  return stat(a, &sa) == 0 && stat(b, &sb) == 0 && sa.st_dev == sb.st_dev
         && sa.st_ino == sb.st_ino;
}

static int is_input(const struct opts *o, const struct ff_sheet *sh,
                    const char *target)
{
  char path[4096];

  if (same_file(target, o->sheet)
      || (o->solvents != NULL && same_file(target, o->solvents)))
    return 1;
  /* The bundled tables (load_tables() reads both). */
  snprintf(path, sizeof path, "%s/solvents.csv", ff_cli_datadir());
  if (same_file(target, path))
    return 1;
  snprintf(path, sizeof path, "%s/atomic_weights.csv", ff_cli_datadir());
  if (same_file(target, path))
    return 1;
  for (size_t k = 0; k < sh->n; k++)
    if (same_file(target, sh->row[k].path))
      return 1;
  return 0;
}

/*
 * Keeps Ctrl-C, kill, hangup and quit waiting while a temporary file
 * exists, so that none is left behind: such a signal takes effect (with
 * its default action) as soon as the file is renamed or removed.
 */
static void hold_signals(sigset_t *old)
{
  sigset_t set;

  sigemptyset(&set);
  sigaddset(&set, SIGINT);
  sigaddset(&set, SIGTERM);
  sigaddset(&set, SIGHUP);
  sigaddset(&set, SIGQUIT);
  sigprocmask(SIG_BLOCK, &set, old);
}

static int write_csv(const struct ff_series *s, const char *path)
{
  char tmp[PATH_MAX + 32];
  const char *slash = strrchr(path, '/');
  sigset_t old;
  int fd, n;
  FILE *f;

  if (slash != NULL)
    n = snprintf(tmp, sizeof tmp, "%.*s/.frostfit-csv-XXXXXX",
                 (int)(slash - path), path);
  else
    n = snprintf(tmp, sizeof tmp, ".frostfit-csv-XXXXXX");
  if (n < 0 || (size_t)n >= sizeof tmp) {
    ff_cli_msg("cannot write '%s': %s", path, strerror(ENAMETOOLONG));
    return FF_EIO;
  }
  hold_signals(&old);
  fd = mkstemp(tmp);
  if (fd < 0) {
    ff_cli_msg("cannot write '%s': %s", path, strerror(errno));
    sigprocmask(SIG_SETMASK, &old, NULL);
    return FF_EIO;
  }
  f = fdopen(fd, "w");
  if (f == NULL) {
    ff_cli_msg("cannot write '%s': %s", path, strerror(errno));
    close(fd);
    unlink(tmp);
    sigprocmask(SIG_SETMASK, &old, NULL);
    return FF_EIO;
  }
  errno = EIO;                 /* what a failed write leaves unexplained */
  int bad = ff_series_write_csv(s, f) != 0;
  bad |= fclose(f) != 0;
  if (!bad)
    chmod(tmp, 0644);
  if (bad || rename(tmp, path) != 0) {
    ff_cli_msg("cannot write '%s': %s", path, strerror(errno));
    unlink(tmp);
    sigprocmask(SIG_SETMASK, &old, NULL);
    return FF_EIO;
  }
  sigprocmask(SIG_SETMASK, &old, NULL);
  return FF_OK;
}

/*
 * An input inside the figure folder named like a figure file would be
 * replaced by it: stems are run_*, solute_*, unknown_*, overview (chosen
 * below) and render (the plot stage's driver), with .gp, .dat, .png, .svg
 * or .pdf. Returns that input's path, or NULL.
 */
static const char *figure_clash(const struct opts *o, const struct ff_sheet *sh)
{
  for (size_t k = 0; k < sh->n + 2; k++) {
    const char *p = k < sh->n ? sh->row[k].path
                    : k == sh->n ? o->sheet : o->solvents;
    if (ff_cli_figure_would_replace(o->figures, p, 1))
      return p;
  }
  return NULL;
}

/* ---- figures (plot.h) ---- */

#define CURVE_N 60

static void sample(double a, double b, double *x, size_t n)
{
  for (size_t k = 0; k < n; k++)
    x[k] = a + (b - a) * (double)k / (double)(n - 1);
}

static int fig_event(struct ff_plot_set *ps, const struct ff_series *s,
                     const struct ff_series_run *r, struct ff_diag *d)
{
  const struct ff_dataset *ds = s->ds[r->dataset];
  const struct ff_event *e = &r->event;
  struct ff_plot_event_fig f = { 0 };
  double *t = malloc(ds->n * sizeof *t), *y = malloc(ds->n * sizeof *y);
  double lt[CURVE_N], ly[CURVE_N], bt[CURVE_N], by[CURVE_N];
  double xt[CURVE_N], xy[CURVE_N];
  char name[160], title[1200];
  size_t n, lo = 0, hi;
  int st;

  if (t == NULL || y == NULL) {
    free(t);
    free(y);
    return ff_diag_set(d, FF_EIO, NULL, "out of memory");
  }
  n = ff_dataset_channel_xy(ds, r->channel, t, y);
  while (lo < n && t[lo] < e->start_s)
    lo++;
  hi = lo;
  while (hi < n && t[hi] <= e->end_s)
    hi++;
  if (hi <= lo) {
    lo = 0;
    hi = n;
  }
  snprintf(name, sizeof name, "run_%s", s->sheet->row[r->row].run);
  snprintf(title, sizeof title, "run %s: %s, channel %s, cycle %u",
           s->sheet->row[r->row].run, s->sheet->row[r->row].file,
           ds->ch[r->channel].name, e->cycle);
  f.name = name;
  f.title = title;
  f.t_s = t + lo;
  f.temp_c = y + lo;
  f.n = hi - lo;
  if (e->liquid.kind != 0 && e->liquid.end_s > e->liquid.start_s) {
    sample(e->liquid.start_s, isfinite(e->nucleation_time_s)
           ? e->nucleation_time_s : e->liquid.end_s, lt, CURVE_N);
    for (size_t k = 0; k < CURVE_N; k++)
      ly[k] = ff_event_eval_liquid(e, lt[k]);
    f.liquid = (struct ff_plot_curve){ lt, ly, NULL, NULL, CURVE_N };
  }
  if (e->branch.ok && e->branch.end_s > e->branch.start_s) {
    sample(e->branch.start_s, e->branch.end_s, bt, CURVE_N);
    for (size_t k = 0; k < CURVE_N; k++)
      by[k] = ff_event_eval_branch(e, bt[k]);
    f.freezing = (struct ff_plot_curve){ bt, by, NULL, NULL, CURVE_N };
    if (isfinite(e->nucleation_time_s)
        && e->nucleation_time_s < e->branch.start_s) {
      sample(e->nucleation_time_s, e->branch.start_s, xt, CURVE_N);
      for (size_t k = 0; k < CURVE_N; k++)
        xy[k] = ff_event_eval_branch(e, xt[k]);
      f.extrap = (struct ff_plot_curve){ xt, xy, NULL, NULL, CURVE_N };
    }
  }
  f.t_nucleation_s = e->nucleation_time_s;
  f.t_read_s = NAN;
  f.freezing_point_c = r->tf_c;
  f.u_freezing_point_k = r->u_tf_k;
  f.coverage_k = 2;
  f.method = ff_method_name(e->method);
  f.zoom_t0_s = f.zoom_t1_s = f.zoom_half_k = NAN;
  st = ff_plot_add_event(ps, &f, d);
  free(t);
  free(y);
  return st;
}

static int fig_solute(struct ff_plot_set *ps, const struct ff_series *s,
                      const struct ff_series_solute *g, struct ff_diag *d)
{
  size_t n = g->n, nm = 0, pref = 0;
  double *buf = malloc((6 * n + 4 * FF_REGRESS_NMODELS * CURVE_N)
                       * sizeof *buf);
  struct ff_plot_model models[FF_REGRESS_NMODELS];
  struct ff_plot_solute_fig f = { 0 };
  char name[300], title[300];
  double mmax = 0;
  int st;

  if (buf == NULL)
    return ff_diag_set(d, FF_EIO, NULL, "out of memory");
  double *x = buf, *i = buf + n, *u = buf + 2 * n, *m = buf + 3 * n;
  double *dt = buf + 4 * n, *udt = buf + 5 * n, *cv = buf + 6 * n;
  for (size_t k = 0; k < n; k++) {
    const struct ff_series_run *r = &s->runs[g->runs[k]];
    m[k] = r->molality_mol_kg;
    x[k] = sqrt(m[k]);
    i[k] = r->th.vant_hoff_i;
    u[k] = r->th.u_vant_hoff_i;
    dt[k] = r->depression_k;
    udt[k] = r->u_depression_k;
    if (m[k] > mmax)
      mmax = m[k];
  }
  const double *resid = NULL;
  for (unsigned j = 0; j < FF_REGRESS_NMODELS; j++) {
    const struct ff_fit *fit = &g->reg.fit[j];
    if (!fit->attempted || fit->status != FF_OK)
      continue;
    double *cx = cv + 4 * nm * CURVE_N, *cy = cx + CURVE_N;
    double *lo = cy + CURVE_N, *hi = lo + CURVE_N;
    size_t c = 0;
    int band = !fit->limit_fixed;
    /* From m = 0 (the limit and its interval) out past the last point,
     * evenly in sqrt(m) as the axis is drawn; the band is t * u from the
     * parameter covariance. */
    cx[c] = 0.0;
    cy[c] = fit->i_limit;
    lo[c] = band ? fit->ci_limit[0] : fit->i_limit;
    hi[c++] = band ? fit->ci_limit[1] : fit->i_limit;
    for (size_t k = 1; k < CURVE_N; k++) {
      double sx = sqrt(mmax * 1.05) * (double)k / (CURVE_N - 1), iv, uv;
      if (ff_regress_eval_u(fit, sx * sx, &iv, &uv) == FF_OK) {
        cx[c] = sx;
        cy[c] = iv;
        lo[c] = iv - fit->t_crit * uv;
        hi[c++] = iv + fit->t_crit * uv;
      }
    }
    if (g->reg.has_preferred && g->reg.preferred == fit->model) {
      pref = nm;
      resid = fit->resid;
    }
    models[nm++] = (struct ff_plot_model){
      ff_regress_model_name(fit->model),
      { cx, cy, lo, hi, c }, fit->i_limit,
      fit->limit_fixed ? NAN : fit->u_i_limit };
  }
  snprintf(name, sizeof name, "solute_%s_%s", g->solute, g->solvent);
  snprintf(title, sizeof title, "%s in %s", g->solute, g->solvent);
  f.name = name;
  f.title = title;
  f.x_is_sqrt = 1;
  f.x = x;
  f.i = i;
  f.u_i = u;
  f.n = n;
  f.models = models;
  f.n_models = nm;
  f.preferred = pref;
  f.resid_i = resid;
  f.m_mol_kg = m;
  f.dt_k = dt;
  f.u_dt_k = udt;
  f.ideal_slope_k_kg_mol = g->particles_known
                           ? g->kf_k_kg_mol * g->particles.nu : NAN;
  st = ff_plot_add_solute(ps, &f, d);
  free(buf);
  return st;
}

static int fig_unknown(struct ff_plot_set *ps, const struct ff_series *s,
                       const struct ff_series_unknown *g, struct ff_diag *d)
{
  size_t n = g->n;
  double *buf = malloc(3 * n * sizeof *buf), fx[CURVE_N], fy[CURVE_N];
  double flo[CURVE_N], fhi[CURVE_N];
  struct ff_plot_unknown_fig f = { 0 };
  char name[300], title[300];
  double xmax = 0;
  int st;

  if (buf == NULL)
    return ff_diag_set(d, FF_EIO, NULL, "out of memory");
  for (size_t k = 0; k < n; k++) {
    const struct ff_series_run *r = &s->runs[g->runs[k]];
    buf[k] = r->conc_g_kg;
    buf[n + k] = r->mass.m_g_mol;
    buf[2 * n + k] = r->mass.u_m_g_mol;
    if (buf[k] > xmax)
      xmax = buf[k];
  }
  const struct ff_mm_fit *fit = g->mm.preferred == FF_MM_LINEAR
                                ? &g->mm.linear : &g->mm.reciprocal;
  if (g->mm.preferred != FF_MM_SINGLE && fit->status == FF_OK) {
    sample(0, 1.05 * xmax, fx, CURVE_N);
    int lin = g->mm.preferred == FF_MM_LINEAR, band = 1;
    double c0 = lin ? fit->m0_g_mol : 1.0 / fit->m0_g_mol;
    for (size_t k = 0; k < CURVE_N; k++) {
      double x = fx[k], yl = c0 + fit->slope * x;
      double h = fit->k_band
                 * sqrt(fmax(0.0, fit->u_line0 * fit->u_line0
                                  + 2.0 * x * fit->cov01
                                  + x * x * fit->u_slope * fit->u_slope));
      /* 1/M is fitted for the reciprocal form: its band maps back through
       * M = 1/y, monotone while y - h stays positive. */
      fy[k] = lin ? yl : 1.0 / yl;
      flo[k] = lin ? yl - h : 1.0 / (yl + h);
      fhi[k] = lin ? yl + h : (yl - h > 0.0 ? 1.0 / (yl - h) : NAN);
      band = band && isfinite(flo[k]) && isfinite(fhi[k]);
    }
    f.fit = (struct ff_plot_curve){ fx, fy, band ? flo : NULL,
                                    band ? fhi : NULL, CURVE_N };
  }
  snprintf(name, sizeof name, "unknown_%s_%s", g->solute, g->solvent);
  snprintf(title, sizeof title, "%s in %s", g->solute, g->solvent);
  f.name = name;
  f.title = title;
  f.x_label = NULL;
  f.x = buf;
  f.m_g_mol = buf + n;
  f.u_m_g_mol = buf + 2 * n;
  f.n = n;
  f.m0_g_mol = g->mm.m0_g_mol;
  f.u_m0_g_mol = g->mm.u_m0_g_mol;
  st = ff_plot_add_unknown(ps, &f, d);
  free(buf);
  return st;
}

/* The overview's short label of a solute: the formula of its first run
 * without the hydrate water ("CaCl2*2H2O" -> "CaCl2"), when the sheet gives
 * one and it is shorter than the name; "" otherwise (the name is used). */
static void short_label(const struct ff_series *s,
                        const struct ff_series_solute *g, char *out, size_t n)
{
  const char *f;
  size_t len;

  out[0] = '\0';
  if (g->n == 0)
    return;
  f = s->sheet->row[s->runs[g->runs[0]].row].formula;
  len = strcspn(f, "*.");
  if (strstr(f, "\xc2\xb7") != NULL && (size_t)(strstr(f, "\xc2\xb7") - f) < len)
    len = (size_t)(strstr(f, "\xc2\xb7") - f);   /* the middle dot */
  if (len == 0 || len >= strlen(g->solute) || len >= n)
    return;
  memcpy(out, f, len);
  out[len] = '\0';
}

static int fig_overview(struct ff_plot_set *ps, const struct ff_series *s,
                        struct ff_diag *d)
{
  struct ff_plot_run *runs = calloc(s->n_runs + 1, sizeof *runs);
  struct ff_plot_limit *lim = calloc(s->n_solutes + 1, sizeof *lim);
  char (*labels)[32] = calloc(s->n_solutes + 1, sizeof *labels);
  struct ff_plot_overview_fig f = { 0 };
  size_t nr = 0, nl = 0;
  int st;

  if (runs == NULL || lim == NULL || labels == NULL) {
    free(runs);
    free(lim);
    free(labels);
    return ff_diag_set(d, FF_EIO, NULL, "out of memory");
  }
  for (size_t k = 0; k < s->n_runs; k++) {
    const struct ff_series_run *r = &s->runs[k];
    const struct ff_sheet_row *row = &s->sheet->row[r->row];
    if (r->status != FF_OK)
      continue;
    int blank = row->role == FF_SHEET_BLANK;
    runs[nr++] = (struct ff_plot_run){
      row->run, blank ? NULL : row->solute, r->tf_c, r->u_tf_k,
      r->molality_mol_kg, blank ? NAN : r->depression_k,
      blank ? NAN : r->u_depression_k, r->th.vant_hoff_i,
      r->th.u_vant_hoff_i };
  }
  for (size_t k = 0; k < s->n_solutes; k++) {
    const struct ff_series_solute *g = &s->solutes[k];
    if (g->status != FF_OK || !g->reg.has_preferred)
      continue;
    /* A fixed-limit model (nu fixed, association) says nothing about the
     * limit: show the free-limit fit the particle count was read from. */
    const struct ff_fit *fit = &g->reg.fit[g->reg.preferred];
    if (fit->limit_fixed && g->reg.has_particles)
      fit = &g->reg.fit[g->reg.particles_model];
    lim[nl] = (struct ff_plot_limit){
      g->solute, g->particles_known ? (double)g->particles.nu : NAN,
      fit->i_limit, fit->ci_limit[0], fit->ci_limit[1],
      g->particles_known ? g->kf_k_kg_mol * g->particles.nu : NAN, NULL };
    short_label(s, g, labels[nl], sizeof labels[nl]);
    lim[nl].label = labels[nl];
    nl++;
  }
  f.name = "overview";
  f.title = "series overview";
  f.runs = runs;
  f.n_runs = nr;
  f.limits = lim;
  f.n_limits = nl;
  st = nr > 0 ? ff_plot_add_overview(ps, &f, d) : FF_OK;
  free(runs);
  free(lim);
  free(labels);
  return st;
}

static int figures(const struct opts *o, const struct ff_series *s)
{
  struct ff_plot_opts po = FF_PLOT_OPTS_DEFAULT;
  struct ff_plot_report rep;
  struct ff_diag d = FF_DIAG_INIT;
  struct ff_cli_progress prog;
  char plots[PATH_MAX];
  struct ff_plot_set *ps;
  int st = FF_OK;

  ff_cli_progress_init(&prog, o->sheet, o->quiet);
  po.progress = ff_cli_progress_items;
  po.progress_ctx = &prog;

  if (o->formats != NULL
      && ff_plot_parse_formats(o->formats, &po.formats, &d) != FF_OK)
    return ff_cli_usage(CMD, "--format: %s", d.msg);
  snprintf(plots, sizeof plots, "%s/../plots", ff_cli_datadir());
  po.plots_dir = plots;
  ps = ff_plot_set_new(o->figures, &po, &d);
  if (ps == NULL)
    return ff_cli_fail(&d);
  for (size_t k = 0; k < s->n_runs && st == FF_OK; k++)
    if (s->runs[k].has_event && s->runs[k].status == FF_OK)
      st = fig_event(ps, s, &s->runs[k], &d);
  for (size_t k = 0; k < s->n_solutes && st == FF_OK; k++)
    if (s->solutes[k].status == FF_OK)
      st = fig_solute(ps, s, &s->solutes[k], &d);
  for (size_t k = 0; k < s->n_unknowns && st == FF_OK; k++)
    if (s->unknowns[k].status == FF_OK)
      st = fig_unknown(ps, s, &s->unknowns[k], &d);
  if (st == FF_OK)
    st = fig_overview(ps, s, &d);
  if (st == FF_OK) {
    memset(&rep, 0, sizeof rep);
    st = ff_plot_render(ps, &rep, &d);
    ff_cli_progress_end(&prog);
    if (rep.errors[0] != '\0')
      ff_cli_msg("gnuplot reported:\n%s", rep.errors);
    if (st == FF_OK && !o->quiet) {
      if (rep.rendered)
        ff_cli_msg("%zu figures in %s", rep.n_figures, o->figures);
      else
        ff_cli_msg("gnuplot not found: %zu figure scripts in %s; render "
                   "with: %s", rep.n_figures, o->figures, rep.command);
    }
  }
  ff_plot_set_free(ps);
  return st == FF_OK ? FF_OK : ff_cli_fail(&d);
}

/* ---- the command ---- */

static int load_tables(const struct opts *o, struct ff_solvent_table *t,
                       struct ff_atomic_table *at)
{
  struct ff_diag d = FF_DIAG_INIT;
  char path[PATH_MAX + 32];

  snprintf(path, sizeof path, "%s/solvents.csv", ff_cli_datadir());
  if (ff_solvent_table_load(t, path, &d) != FF_OK)
    return ff_cli_fail(&d);
  if (o->solvents != NULL && ff_solvent_table_load(t, o->solvents, &d)
                             != FF_OK)
    return ff_cli_fail(&d);
  snprintf(path, sizeof path, "%s/atomic_weights.csv", ff_cli_datadir());
  if (ff_atomic_table_load(at, path, &d) != FF_OK)
    return ff_cli_fail(&d);
  return FF_OK;
}

/* A blank on another probe is a problem with the measurement itself:
 * always on stderr. Kf pooled over other probes is a note (--quiet). */
static void warn_runs(const struct opts *o, const struct ff_series *s)
{
  char note[512];

  for (size_t k = 0; k < s->n_runs; k++) {
    const struct ff_sheet_row *row = &s->sheet->row[s->runs[k].row];
    for (unsigned b = 0; b < FF_SERIES_RUN_FLAG_COUNT; b++) {
      unsigned flag = 1u << b;
      if (o->quiet && flag != FF_SERIES_RUN_BLANK_OTHER_PROBE)
        continue;
      if (ff_series_run_note(s, &s->runs[k], flag, note, sizeof note)[0])
        ff_cli_msg("%s:%lu: run '%s': warning: %s", s->sheet->path,
                   row->line, row->run, note);
    }
  }
}

static void report_rows(const struct ff_sheet *sh)
{
  char buf[1200];

  for (size_t k = 0; k < sh->n; k++)
    if (sh->row[k].diag.status != FF_OK)
      ff_cli_msg("%s", ff_diag_format(&sh->row[k].diag, buf, sizeof buf));
}

int ff_cmd_series(int argc, char **argv)
{
  struct opts o = { .mc = 4000, .seed = 20261201.0 };
  struct ff_solvent_table t = FF_SOLVENT_TABLE_INIT;
  struct ff_atomic_table at = FF_ATOMIC_TABLE_INIT;
  struct ff_sheet sh = FF_SHEET_INIT;
  struct ff_series s = FF_SERIES_INIT;
  struct ff_series_opts so = FF_SERIES_OPTS_DEFAULT;
  struct ff_cli_progress prog;
  struct ff_diag d = FF_DIAG_INIT;
  char buf[1200];
  const char *clash;
  int st, sheet_st, out_st = FF_OK;

  st = parse(argc, argv, &o);
  if (st != 0)
    return st > 0 ? FF_OK : FF_EUSAGE;
  st = load_tables(&o, &t, &at);
  if (st != FF_OK)
    goto done;

  sheet_st = ff_sheet_read(o.sheet, &sh, &d);
  if (sheet_st == FF_EIO || sh.n == 0) {
    st = ff_cli_fail(&d);
    goto done;
  }
  if (sh.ignored[0] != '\0' && !o.quiet)
    ff_cli_msg("%s: columns not used: %s", o.sheet, sh.ignored);
  if (ff_sheet_check(&sh, &t, &at, &d) != FF_OK)
    sheet_st = FF_EINPUT;
  report_rows(&sh);
  if (o.csv != NULL && is_input(&o, &sh, o.csv)) {
    st = ff_cli_usage(CMD, "--csv '%s' is one of the inputs; refusing to "
                      "overwrite it", o.csv);
    goto done;
  }
  if (o.figures != NULL && (clash = figure_clash(&o, &sh)) != NULL) {
    st = ff_cli_usage(CMD, "--figures '%s' holds the input '%s', which a "
                      "figure file could replace; choose another folder",
                      o.figures, clash);
    goto done;
  }

  so.solvents = &t;
  so.atoms = &at;
  so.mc_draws = (size_t)o.mc;
  so.seed = (unsigned long)o.seed;
  ff_diag_clear(&d);
  ff_cli_progress_init(&prog, o.sheet, o.quiet);
  so.progress = ff_cli_progress_items;
  so.progress_ctx = &prog;
  st = ff_series_run(&sh, &so, &s, &d);
  ff_cli_progress_end(&prog);
  if (st == FF_EIO && s.n_runs == 0) {
    st = ff_cli_fail(&d);
    goto done;
  }
  /* Runs the sheet reader rejected were reported above. */
  for (size_t k = 0; k < s.n_runs; k++)
    if (s.runs[k].status != FF_OK && sh.row[k].diag.status == FF_OK)
      ff_cli_msg("%s", ff_diag_format(&s.runs[k].diag, buf, sizeof buf));
  warn_runs(&o, &s);
  for (size_t k = 0; k < s.n_solutes; k++) {
    const struct ff_series_solute *g = &s.solutes[k];
    if (g->status == FF_OK)
      continue;
    if (g->n >= 3)
      ff_cli_msg("%s: solute '%s' in %s: no fit: %s", o.sheet, g->solute,
                 g->solvent, g->diag.msg);
    else if (!o.quiet)
      ff_cli_msg("%s: solute '%s' in %s: %zu run%s, too few to extrapolate "
                 "(3 needed)", o.sheet, g->solute, g->solvent, g->n,
                 g->n == 1 ? "" : "s");
  }
  for (size_t k = 0; k < s.n_unknowns; k++)
    if (s.unknowns[k].status != FF_OK)
      ff_cli_msg("%s: unknown '%s' in %s: no molar mass: %s", o.sheet,
                 s.unknowns[k].solute, s.unknowns[k].solvent,
                 s.unknowns[k].diag.msg);
  if (sheet_st == FF_EINPUT && st != FF_EINPUT)
    st = FF_EINPUT;

  if (o.json) {
    json_t *j = ff_series_to_json(&s);
    if (j == NULL || ff_json_write(j, stdout) != 0) {
      ff_cli_msg("cannot write the JSON output");
      out_st = FF_EIO;
    }
    json_decref(j);
  } else {
    print_table(&s);
  }
  if (out_st == FF_OK && o.csv != NULL)
    out_st = write_csv(&s, o.csv);
  if (out_st == FF_OK && o.figures != NULL)
    out_st = figures(&o, &s);
  if (out_st != FF_OK)
    st = out_st;
done:
  ff_series_release(&s);
  ff_sheet_release(&sh);
  ff_solvent_table_release(&t);
  ff_atomic_table_release(&at);
  return st;
}
