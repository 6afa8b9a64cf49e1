/* cli/cmd_simulate.c - 'frostfit simulate': a synthetic cooling curve from
 * the physical model, and the true freezing point behind it. */
#include <errno.h>
#include <limits.h>
#include <math.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#include <sys/stat.h>

#include "cli.h"
#include "frostfit/json.h"
#include "frostfit/simulate.h"
#include "frostfit/solvent.h"

#define CMD "simulate"

static void usage(FILE *f)
{
  fprintf(f,
"usage: frostfit simulate [OPTIONS]\n\n"
"Writes a synthetic cooling curve (CSV: time_s,T (C)) from a physical model\n"
"of a stirred sample tube in a cold bath, read by a lagging, noisy probe,\n"
"and prints the true freezing point behind it. The data are synthetic.\n"
"Model and equations: docs/methods/simulator.md.\n\n"
"sample:\n"
"  --solvent NAME     solvent from the table (default water)\n"
"  --solvents-file F  extra solvent table; its rows override by name\n"
"  --solvent-g G      solvent mass, g (20)\n"
"  --molality M       solute molality, mol/kg (0)\n"
"  --i I              van 't Hoff factor actually reached (1)\n"
"bath and heat transfer:\n"
"  --start C          start temperature, C (solvent Tf + 5)\n"
"  --bath C           cold bath, C (solvent Tf - 6)\n"
"  --tau S            heat-transfer time constant of the liquid, s (120)\n"
"  --stir-w W         stirring heat, W (0)\n"
"  --supercool K      nucleation this far below Tf, K; negative: random\n"
"                     0.3..2.5 K per cycle (1.5)\n"
"  --growth G         ice growth constant, 1/(K s) (0.05)\n"
"  --growth-area X    ice fraction scale of the surface speed-up, 0 = off\n"
"                     (0.0005)\n"
"  --cycles N         freeze-thaw cycles, 1..%d (1)\n"
"  --freeze-s S       how long each freeze is followed, s (900)\n"
"  --thaw-k K         thaw bath this far above the start temperature (3)\n"
"  --bath-drift K/S   the cold bath drifts this much per second (0)\n"
"  --bath-channel     also record a bath probe column, 'bath (C)'\n"
"  --latent-dcp       latent heat varies with temperature by cp_liq - cp_sol\n"
"                     (default: constant, as the cp/L rule assumes)\n"
"thermometer:\n"
"  --lag S            probe time constant, s (2)\n"
"  --noise K          Gaussian noise, standard deviation, K (0.002)\n"
"  --resolution K     reading step, K; 0 = none (0.001)\n"
"  --offset K         calibration offset of the probe, K (0)\n"
"  --dt S             sampling interval, s (1)\n"
"  --dropout F        fraction of samples lost (empty cells), 0..1 (0)\n"
"  --seed N           random seed; same seed, same curve (1)\n"
"output:\n"
"  --out FILE         write the CSV there, replaced atomically, never over a\n"
"                     solvent table (default, or '-': standard output, and\n"
"                     the summary then goes to standard error)\n"
"  --json             summary as JSON (key true_freezing_point_c)\n"
"  --help             this text\n\n"
"exit codes: 0 ok, 1 usage error, 2 unknown solvent or bad solvent table,\n"
"3 simulation failed, 4 i/o error\n", FF_SIM_MAX_CYCLES);
}

/* Options that take a number, and where it goes. */
struct numopt {
  const char *name;
  double *dst;
  int given;
};

static int parse_count(const char *opt, const char *s, double lo, double hi,
                       double *out)
{
  double x;

  if (ff_cli_number(CMD, opt, s, &x) != 0)
    return -1;
  if (x < lo || x > hi || fabs(x - round(x)) > 0.0) {
    ff_cli_usage(CMD, "%s expects a whole number from %.0f to %.0f, found "
                 "'%s'", opt, lo, hi, s);
    return -1;
  }
  *out = x;
  return 0;
}

static void list_solvents(const struct ff_solvent_table *t)
{
  fputs("frostfit: known solvents:", stderr);
  for (size_t i = 0; i < t->n; i++)
    fprintf(stderr, "%s %s", i ? "," : "", t->v[i].name);
  fputc('\n', stderr);
}

static int pick_solvent(const char *name, const char *user_file,
                        struct ff_solvent *out)
{
  struct ff_solvent_table t = FF_SOLVENT_TABLE_INIT;
  struct ff_diag d = FF_DIAG_INIT;
  char path[4096];
  const struct ff_solvent *s;

  snprintf(path, sizeof path, "%s/solvents.csv", ff_cli_datadir());
  if (ff_solvent_table_load(&t, path, &d) != FF_OK ||
      (user_file != NULL &&
       ff_solvent_table_load(&t, user_file, &d) != FF_OK)) {
    ff_solvent_table_release(&t);
    return ff_cli_fail(&d);
  }
  s = ff_solvent_find(&t, name);
  if (s == NULL) {
    ff_cli_msg("unknown solvent '%s'", name);
    list_solvents(&t);
    ff_solvent_table_release(&t);
    return FF_EINPUT;
  }
  if (!isfinite(s->dh_fus_j_mol) || !isfinite(s->m_g_mol) ||
      !isfinite(s->cp_liq_j_g_k) || !isfinite(s->cp_sol_j_g_k)) {
    ff_cli_msg("solvent '%s' lacks the enthalpy of fusion, molar mass or "
               "heat capacities the model needs", s->name);
    ff_solvent_table_release(&t);
    return FF_EINPUT;
  }
  *out = *s;
  ff_solvent_table_release(&t);
  return FF_OK;
}

static json_t *summary_json(const struct ff_sim_params *p,
                            const struct ff_sim_result *r, const char *out)
{
  json_t *root = json_object(), *par = json_object(), *sol = json_object();
  json_t *cyc = json_array();

  if (root == NULL || par == NULL || sol == NULL || cyc == NULL) {
    json_decref(root);
    json_decref(par);
    json_decref(sol);
    json_decref(cyc);
    return NULL;
  }
  json_object_set_new(root, "synthetic", json_true());
  ff_json_set_str(root, "file", out);
  ff_json_set_num(root, "true_freezing_point_c", r->true_fp_c);
  ff_json_set_num(root, "true_reading_c", r->true_fp_c + p->offset_k);
  ff_json_set_num(root, "depression_k", p->solvent.tf_c - r->true_fp_c);
  json_object_set_new(root, "samples", json_integer((json_int_t)r->n));
  ff_json_set_str(sol, "name", p->solvent.name);
  ff_json_set_num(sol, "tf_c", p->solvent.tf_c);
  ff_json_set_num(sol, "kf_k_kg_mol", p->solvent.kf_k_kg_mol);
  ff_json_set_num(sol, "dh_fus_j_mol", p->solvent.dh_fus_j_mol);
  ff_json_set_num(sol, "m_g_mol", p->solvent.m_g_mol);
  ff_json_set_num(sol, "cp_liq_j_g_k", p->solvent.cp_liq_j_g_k);
  ff_json_set_num(sol, "cp_sol_j_g_k", p->solvent.cp_sol_j_g_k);
  ff_json_set_num(sol, "frozen_fraction_per_k",
                  ff_solvent_frozen_per_k(&p->solvent));
  json_object_set_new(root, "solvent", sol);
  ff_json_set_num(par, "solvent_g", p->solvent_g);
  ff_json_set_num(par, "molality_mol_kg", p->molality_mol_kg);
  ff_json_set_num(par, "vant_hoff_i", p->vant_hoff_i);
  ff_json_set_num(par, "start_c", p->start_c);
  ff_json_set_num(par, "bath_c", p->bath_c);
  ff_json_set_num(par, "tau_s", p->tau_s);
  ff_json_set_num(par, "stir_w", p->stir_w);
  ff_json_set_num(par, "supercool_k", p->supercool_k);
  ff_json_set_num(par, "growth_rate_per_k_s", p->growth_rate);
  ff_json_set_num(par, "growth_area_frac", p->growth_area_frac);
  ff_json_set_num(par, "probe_lag_s", p->probe_lag_s);
  ff_json_set_num(par, "noise_k", p->noise_k);
  ff_json_set_num(par, "resolution_k", p->resolution_k);
  ff_json_set_num(par, "offset_k", p->offset_k);
  ff_json_set_num(par, "dt_s", p->dt_s);
  ff_json_set_num(par, "dropout", p->dropout);
  ff_json_set_num(par, "freeze_s", p->freeze_s);
  ff_json_set_num(par, "thaw_k", p->thaw_k);
  ff_json_set_num(par, "bath_drift_k_s", p->bath_drift_k_s);
  json_object_set_new(par, "bath_channel", json_boolean(p->bath_channel));
  json_object_set_new(par, "latent_dcp", json_boolean(p->latent_dcp));
  json_object_set_new(par, "cycles", json_integer((json_int_t)p->cycles));
  json_object_set_new(par, "seed", json_integer((json_int_t)p->seed));
  json_object_set_new(root, "parameters", par);
  for (size_t c = 0; c < r->n_cycles; c++) {
    json_t *o = json_object();
    if (o == NULL)
      break;
    json_object_set_new(o, "cycle", json_integer((json_int_t)c + 1));
    ff_json_set_num(o, "cold_bath_on_s", r->cycle_start_t_s[c]);
    ff_json_set_num(o, "nucleation_time_s", r->nucleation_t_s[c]);
    ff_json_set_num(o, "supercooling_k", r->supercool_k[c]);
    ff_json_set_num(o, "peak_c", r->peak_c[c]);
    ff_json_set_num(o, "thaw_bath_on_s", r->freeze_end_t_s[c]);
    json_array_append_new(cyc, o);
  }
  json_object_set_new(root, "cycles", cyc);
  return root;
}

static void summary_text(FILE *f, const struct ff_sim_params *p,
                         const struct ff_sim_result *r, const char *out)
{
  fprintf(f, "synthetic cooling curve: %s, %g g, %g mol/kg, i = %g; "
          "%zu samples every %g s%s%s\n", p->solvent.name, p->solvent_g,
          p->molality_mol_kg, p->vant_hoff_i, r->n, p->dt_s,
          out ? " -> " : "", out ? out : "");
  fprintf(f, "true freezing point:   %.6f C (Tf0 - i Kf m = %g - %g*%g*%g)\n",
          r->true_fp_c, p->solvent.tf_c, p->vant_hoff_i,
          p->solvent.kf_k_kg_mol, p->molality_mol_kg);
  fprintf(f, "probe reads it as:     %.6f C (calibration offset %+g K)\n",
          r->true_fp_c + p->offset_k, p->offset_k);
  for (size_t c = 0; c < r->n_cycles; c++) {
    if (isfinite(r->nucleation_t_s[c]))
      fprintf(f, "cycle %zu: nucleation at %.1f s, supercooling %.3f K, "
              "highest sample temperature after it %.6f C\n", c + 1,
              r->nucleation_t_s[c], r->supercool_k[c], r->peak_c[c]);
    else
      fprintf(f, "cycle %zu: no nucleation (the bath cannot cool the sample "
              "far enough)\n", c + 1);
  }
}

/* ---- the CSV file: atomic, never over an input ---- */

static int same_file(const char *a, const char *b)
{
  struct stat sa, sb;

  return stat(a, &sa) == 0 && stat(b, &sb) == 0 && sa.st_dev == sb.st_dev
         && sa.st_ino == sb.st_ino;
}

/* The tables a run may read: the user's and the bundled solvent table. */
static int is_input(const char *out, const char *user_file)
{
  char path[4096];

  snprintf(path, sizeof path, "%s/solvents.csv", ff_cli_datadir());
  return same_file(out, path)
         || (user_file != NULL && same_file(out, user_file));
}

/*
 * Keeps Ctrl-C, kill, hangup and quit waiting while a temporary file
 * exists, so that none is left behind: such a signal takes effect (with
 * its default action) as soon as the file is renamed or removed.
 */
static void hold_signals(sigset_t *old)
{
  sigset_t s;

  sigemptyset(&s);
  sigaddset(&s, SIGINT);
  sigaddset(&s, SIGTERM);
  sigaddset(&s, SIGHUP);
  sigaddset(&s, SIGQUIT);
  sigprocmask(SIG_BLOCK, &s, old);
}

/*
 * Writes the curve to a temporary file beside out and renames it over out
 * only when complete: a failed or interrupted run leaves out as it was.
 */
static int write_out(const struct ff_sim_result *r, const char *out,
                     struct ff_diag *d)
{
  char tmp[PATH_MAX + 32];
  const char *slash = strrchr(out, '/');
  sigset_t old;
  FILE *f;
  int fd, st, n;

  if (slash != NULL)
    n = snprintf(tmp, sizeof tmp, "%.*s/.frostfit-sim-XXXXXX",
                 (int)(slash - out), out);
  else
    n = snprintf(tmp, sizeof tmp, ".frostfit-sim-XXXXXX");
  if (n < 0 || (size_t)n >= sizeof tmp)
    return ff_diag_set(d, FF_EIO, NULL, "cannot write '%s': %s", out,
                       strerror(ENAMETOOLONG));
  hold_signals(&old);
  fd = mkstemp(tmp);
  if (fd < 0 || (f = fdopen(fd, "w")) == NULL) {
    st = ff_diag_set(d, FF_EIO, NULL, "cannot write '%s': %s", out,
                     strerror(errno));
    if (fd >= 0) {
      close(fd);
      unlink(tmp);
    }
    sigprocmask(SIG_SETMASK, &old, NULL);
    return st;
  }
  /* mkstemp makes 0600; a data file is an ordinary document. */
  if (fchmod(fd, 0644) != 0)
    st = ff_diag_set(d, FF_EIO, NULL, "cannot write '%s': %s", out,
                     strerror(errno));
  else
    st = ff_simulate_write_csv(r, f, d);
  if (fclose(f) != 0 && st == FF_OK)
    st = ff_diag_set(d, FF_EIO, NULL, "cannot write '%s': %s", out,
                     strerror(errno));
  if (st == FF_OK && rename(tmp, out) != 0)
    st = ff_diag_set(d, FF_EIO, NULL, "cannot write '%s': %s", out,
                     strerror(errno));
  if (st != FF_OK)
    unlink(tmp);
  sigprocmask(SIG_SETMASK, &old, NULL);
  return st;
}

int ff_cmd_simulate(int argc, char **argv)
{
  struct ff_sim_params p;
  struct ff_sim_result r = FF_SIM_RESULT_INIT;
  struct ff_diag d = FF_DIAG_INIT;
  const char *solvent = NULL, *user_file = NULL, *out = NULL;
  double cycles = 1, seed = 1;
  int json = 0, st;
  FILE *sum = stdout;

  ff_sim_params_default(&p);
  struct numopt opts[] = {
    { "--solvent-g", &p.solvent_g, 0 },
    { "--molality", &p.molality_mol_kg, 0 },
    { "--i", &p.vant_hoff_i, 0 },
    { "--start", &p.start_c, 0 },
    { "--bath", &p.bath_c, 0 },
    { "--tau", &p.tau_s, 0 },
    { "--stir-w", &p.stir_w, 0 },
    { "--supercool", &p.supercool_k, 0 },
    { "--growth", &p.growth_rate, 0 },
    { "--growth-area", &p.growth_area_frac, 0 },
    { "--lag", &p.probe_lag_s, 0 },
    { "--noise", &p.noise_k, 0 },
    { "--resolution", &p.resolution_k, 0 },
    { "--offset", &p.offset_k, 0 },
    { "--dt", &p.dt_s, 0 },
    { "--dropout", &p.dropout, 0 },
    { "--freeze-s", &p.freeze_s, 0 },
    { "--thaw-k", &p.thaw_k, 0 },
    { "--bath-drift", &p.bath_drift_k_s, 0 },
  };
  const size_t n_opts = sizeof opts / sizeof opts[0];

  for (int a = 1; a < argc; a++) {
    const char *arg = argv[a], *val = NULL;
    char name[64];
    const char *eq = strchr(arg, '=');
    size_t k;

    if (strcmp(arg, "--help") == 0 || strcmp(arg, "-h") == 0) {
      usage(stdout);
      return ff_cli_finish(FF_OK);
    }
    if (strcmp(arg, "--json") == 0) {
      json = 1;
      continue;
    }
    if (strcmp(arg, "--bath-channel") == 0) {
      p.bath_channel = 1;
      continue;
    }
    if (strcmp(arg, "--latent-dcp") == 0) {
      p.latent_dcp = 1;
      continue;
    }
    if (strncmp(arg, "--", 2) != 0)
      return ff_cli_usage(CMD, "unexpected argument '%s'", arg);
    if (eq != NULL && (size_t)(eq - arg) < sizeof name) {
      memcpy(name, arg, (size_t)(eq - arg));
      name[eq - arg] = '\0';
      val = eq + 1;
    } else {
      snprintf(name, sizeof name, "%s", arg);
    }
    if (val == NULL) {
      if (a + 1 >= argc)
        return ff_cli_usage(CMD, "%s needs a value", name);
      val = argv[++a];
    }
    if (strcmp(name, "--solvent") == 0) {
      solvent = val;
      continue;
    }
    if (strcmp(name, "--solvents-file") == 0) {
      user_file = val;
      continue;
    }
    if (strcmp(name, "--out") == 0) {
      out = strcmp(val, "-") == 0 ? NULL : val;
      continue;
    }
    if (strcmp(name, "--cycles") == 0) {
      if (parse_count(name, val, 1, FF_SIM_MAX_CYCLES, &cycles) != 0)
        return FF_EUSAGE;
      continue;
    }
    if (strcmp(name, "--seed") == 0) {
      if (parse_count(name, val, 0, 9007199254740992.0, &seed) != 0)
        return FF_EUSAGE;
      continue;
    }
    for (k = 0; k < n_opts; k++)
      if (strcmp(name, opts[k].name) == 0)
        break;
    if (k == n_opts)
      return ff_cli_usage(CMD, "unknown option '%s'", name);
    if (ff_cli_number(CMD, name, val, opts[k].dst) != 0)
      return FF_EUSAGE;
    opts[k].given = 1;
  }
  p.cycles = (unsigned)cycles;
  p.seed = (unsigned long)seed;
  if (solvent != NULL || user_file != NULL) {
    struct ff_solvent sv;
    double start = p.start_c, bath = p.bath_c;
    if ((st = pick_solvent(solvent ? solvent : "water", user_file, &sv))
        != FF_OK)
      return st;
    /* Start and bath default to the solvent's own Tf0 + 5 / - 6 K (the
     * water defaults), so every solvent works without extra options. */
    ff_sim_params_solvent(&p, &sv);
    for (size_t k = 0; k < n_opts; k++) {
      if (opts[k].dst == &p.start_c && opts[k].given)
        p.start_c = start;
      if (opts[k].dst == &p.bath_c && opts[k].given)
        p.bath_c = bath;
    }
  }

  if (out != NULL && is_input(out, user_file))
    return ff_cli_usage(CMD, "--out '%s' is a solvent table frostfit "
                        "reads; refusing to overwrite it", out);

  if ((st = ff_simulate_run(&p, &r, &d)) != FF_OK) {
    ff_cli_fail(&d);
    return st;
  }
  if (out != NULL)
    st = write_out(&r, out, &d);
  else {
    sum = stderr;
    st = ff_simulate_write_csv(&r, stdout, &d);
  }
  if (st != FF_OK) {
    ff_sim_result_release(&r);
    return ff_cli_fail(&d);
  }
  for (size_t c = 0; c < r.n_cycles; c++)
    if (!isfinite(r.nucleation_t_s[c]))
      ff_cli_msg("warning: cycle %zu never nucleates: the bath (%g C) is "
                 "too warm for the supercooling asked for below %g C", c + 1,
                 p.bath_c, r.true_fp_c);
  if (json) {
    json_t *root = summary_json(&p, &r, out);
    if (root == NULL || ff_json_write(root, sum) != 0) {
      json_decref(root);
      ff_sim_result_release(&r);
      ff_cli_msg("cannot write the summary");
      return FF_EIO;
    }
    json_decref(root);
  } else {
    summary_text(sum, &p, &r, out);
  }
  ff_sim_result_release(&r);
  return ff_cli_finish(FF_OK);
}
