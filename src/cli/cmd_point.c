/* cli/cmd_point.c - 'frostfit point': the freezing point of every freeze
 * event of every channel of a logger CSV (import, then detect). */
#include <limits.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "cli.h"
#include "frostfit/detect.h"
#include "frostfit/parallel.h"
#include "frostfit/import.h"
#include "frostfit/json.h"
#include "frostfit/plot.h"
#include "frostfit/solvent.h"

static const char *const CMD = "point";

static void help(void)
{
  printf("usage: frostfit point FILE [OPTIONS]\n\n"
         "Finds the freeze events in every temperature channel of a logger\n"
         "CSV (several freeze-thaw cycles per file) and reads a freezing\n"
         "point, corrected for supercooling, from each, with its standard\n"
         "uncertainty and quality flags. Channels that never freeze (a bath\n"
         "or room probe) are listed with no event. FILE '-' is standard\n"
         "input.\n\n"
         "options:\n"
         "  --channel NAME|N   only this channel (header name or 1-based\n"
         "                     number over the temperature columns)\n"
         "  --method M         auto (default), model, extrapolate, intersect,\n"
         "                     plateau, peak or break\n"
         "  --solvent NAME     solvent of the sample (default water): its heat\n"
         "                     capacity and latent heat drive the model\n"
         "  --resolution K     thermometer resolution in kelvin (default:\n"
         "                     guessed from repeated readings)\n"
         "  --unit C|K|F       temperature unit of every channel\n"
         "  --all-methods      also show every method's reading side by side\n"
         "  --json             machine-readable output\n"
         "  --figures DIR      a figure of every trusted event (gnuplot script,\n"
         "                     data and rendering) into DIR\n"
         "  --format LIST      figure formats: png, svg, pdf or all (png)\n"
         "  --quiet            no progress bar (it shows only on a terminal)\n"
         "  --help             this text\n\n"
         "methods:\n"
         "  model        energy balance: Newton fit of the liquid branch gives\n"
         "               the bath and time constant, the heat released gives the\n"
         "               frozen fraction x, the branch T = Tf0 - delta/(1 - x)\n"
         "               is taken to x = 0 (auto's first choice)\n"
         "  extrapolate  freezing branch fitted and taken back to nucleation\n"
         "  intersect    meeting point of the straight liquid and freezing\n"
         "               lines (ASTM D1177 'intersection of projections')\n"
         "  plateau      median of the flat part after recalescence (pure\n"
         "               solvents)\n"
         "  peak         maximum after recalescence (reads low for solutions)\n"
         "  break        two straight segments with a fitted breakpoint (no\n"
         "               supercooling)\n\n"
         "exit codes: 0 ok, 1 usage error, 2 bad input (file:line:column),\n"
         "3 no trustworthy freezing point in any channel (said why), 4 i/o\n"
         "error\n");
}

/* Per channel: its events, or why there are none. */
struct chan {
  size_t index;                    /* into ds->ch */
  struct ff_event_list ev;
  int status;                      /* ff_detect_run's return */
  char note[600];                  /* "" when events were found */
};

/* The channels shared by the detection workers; the dataset is only
 * read. */
struct detect_job {
  const struct ff_dataset *ds;
  const struct ff_detect_params *dp;
  struct chan *ch;
};

/* Detection of channel i. A channel with no missing value is analysed in
 * the dataset's own arrays; otherwise it is compacted into a copy of its
 * present values, freed when done. */
static void detect_channel(void *ctx, size_t i)
{
  const struct detect_job *job = ctx;
  const struct ff_dataset *ds = job->ds;
  struct chan *c = &job->ch[i];
  const struct ff_channel *fc = &ds->ch[c->index];
  struct ff_diag dd = FF_DIAG_INIT;
  const double *tx = ds->t_s, *yx = fc->temp_c;
  double *t = NULL, *y = NULL;
  size_t m = ds->n;

  if (fc->n_missing > 0) {
    t = malloc((ds->n ? ds->n : 1) * sizeof *t);
    y = malloc((ds->n ? ds->n : 1) * sizeof *y);
    if (t == NULL || y == NULL) {
      free(t);
      free(y);
      c->status = FF_EIO;
      snprintf(c->note, sizeof c->note, "out of memory");
      return;
    }
    m = ff_dataset_channel_xy(ds, c->index, t, y);
    tx = t;
    yx = y;
  }
  c->status = ff_detect_run(tx, yx, m, job->dp, &c->ev, &dd);
  if (c->status != FF_OK)
    snprintf(c->note, sizeof c->note, "%s", dd.msg);
  free(t);
  free(y);
}

/* Every channel's detection on the worker pool; the results land in ch[]
 * in channel order whatever finishes first. */
static void channel_done(void *ctx, size_t done, size_t total)
{
  ff_cli_progress_items(ctx, "analysing channels", done, total);
}

static void detect_all(const struct ff_dataset *ds,
                       const struct ff_detect_params *dp, struct chan *ch,
                       size_t nch, struct ff_cli_progress *prog)
{
  struct detect_job job = { ds, dp, ch };

  ff_parallel_for_progress(nch, detect_channel, &job, channel_done, prog);
  ff_cli_progress_end(prog);
}

/* x with prec decimals ('e': exponent form), "-" when absent. */
static const char *fmt_num(char *buf, size_t n, double x, int prec, char f)
{
  if (!isfinite(x))
    snprintf(buf, n, "-");
  else if (f == 'e')
    snprintf(buf, n, "%.*e", prec, x);
  else
    snprintf(buf, n, "%.*f", prec, x);
  return buf;
}

static void flag_list(unsigned flags, char *buf, size_t n)
{
  size_t k = 0;

  buf[0] = '\0';
  for (unsigned b = 0; b < FF_FLAG_COUNT; b++) {
    const char *name = ff_flag_name(1u << b);
    if ((flags & (1u << b)) && name != NULL && k + strlen(name) + 2 < n) {
      k += (size_t)snprintf(buf + k, n - k, "%s%s", k ? "," : "", name);
    }
  }
  if (k == 0)
    snprintf(buf, n, "-");
}

static void print_table(const struct ff_dataset *ds, const struct chan *ch,
                        size_t nch, int all, const char *solvent)
{
  printf("file: %s\nsolvent: %s\n", ds->path, solvent);
  for (size_t c = 0; c < nch; c++) {
    const struct chan *h = &ch[c];
    const char *name = ds->ch[h->index].name;
    printf("\nchannel %zu '%s': ", h->index + 1, name);
    if (h->ev.n == 0) {
      printf("no freeze event (%s)\n", h->note);
      continue;
    }
    printf("%zu freeze event%s\n", h->ev.n, h->ev.n == 1 ? "" : "s");
    printf("  %5s %10s %8s %-11s %8s %9s %7s %10s %7s  %s\n", "cycle",
           "Tf_C", "u_K", "method", "superc_K", "nucl_s", "rise_K",
           "slope_K/s", "frozen", "flags");
    for (size_t i = 0; i < h->ev.n; i++) {
      const struct ff_event *e = &h->ev.v[i];
      char a[32], b[32], s1[32], s2[32], s3[32], s4[32], s5[32], fl[256];
      flag_list(e->flags, fl, sizeof fl);
      if (!e->trusted) {
        printf("  %5u %10s %8s %-11s %8s %9s %7s %10s %7s  %s\n", e->cycle,
               "-", "-", ff_method_name(e->method), "-",
               fmt_num(s2, sizeof s2, e->nucleation_time_s, 1, 'f'), "-", "-",
               "-", fl);
        printf("        not trusted: %s\n", e->status_reason);
        continue;
      }
      printf("  %5u %10s %8s %-11s %8s %9s %7s %10s %7s  %s\n", e->cycle,
             fmt_num(a, sizeof a, e->freezing_point_c, 4, 'f'),
             fmt_num(b, sizeof b, e->u_freezing_point_k, 4, 'f'),
             ff_method_name(e->method),
             fmt_num(s1, sizeof s1, e->supercooling_k, 3, 'f'),
             fmt_num(s2, sizeof s2, e->nucleation_time_s, 1, 'f'),
             fmt_num(s3, sizeof s3, e->recalescence_rise_k, 3, 'f'),
             fmt_num(s4, sizeof s4, e->freezing_branch_slope_k_s, 2, 'e'),
             fmt_num(s5, sizeof s5, e->frozen_fraction, 4, 'f'), fl);
      printf("        why %s: %s\n", ff_method_name(e->method),
             e->method_reason);
      for (unsigned q = 0; q < FF_FLAG_COUNT; q++)
        if (e->flags & (1u << q))
          printf("        flag %s: %s\n", ff_flag_name(1u << q),
                 ff_flag_text(1u << q));
      if (all) {
        printf("        %-11s %10s %8s %10s  %s\n", "method", "Tf_C", "u_K",
               "minus_auto", "note");
        for (int m = 1; m < FF_METHOD_COUNT; m++) {
          const struct ff_estimate *es = &e->est[m];
          if (es->ok)
            printf("        %-11s %10.4f %8.4f %+10.4f\n", ff_method_name(m),
                   es->value_c, es->u_k, es->value_c - e->freezing_point_c);
          else
            printf("        %-11s %10s %8s %10s  %s\n", ff_method_name(m),
                   "-", "-", "-", es->why);
        }
      }
    }
  }
}

static int event_json(json_t *arr, const char *chname, const struct ff_event *e)
{
  json_t *o = json_object(), *fl = json_array(), *ft = json_array(),
         *est = json_object(), *liq = json_object(), *mod = json_object(),
         *unc = json_object();
  int bad = 0;

  if (!o || !fl || !ft || !est || !liq || !mod || !unc) {
    json_decref(o); json_decref(fl); json_decref(ft); json_decref(est);
    json_decref(liq); json_decref(mod); json_decref(unc);
    return -1;
  }
  bad |= ff_json_set_str(o, "channel", chname);
  bad |= json_object_set_new(o, "cycle", json_integer(e->cycle));
  bad |= json_object_set_new(o, "trusted", json_boolean(e->trusted));
  bad |= ff_json_set_str(o, "status_reason", e->status_reason);
  bad |= ff_json_set_num(o, "freezing_point_c",
                         e->trusted ? e->freezing_point_c : NAN);
  bad |= ff_json_set_num(o, "u_freezing_point_k",
                         e->trusted ? e->u_freezing_point_k : NAN);
  bad |= ff_json_set_str(o, "method", ff_method_name(e->method));
  bad |= ff_json_set_str(o, "method_reason", e->method_reason);
  bad |= ff_json_set_num(o, "supercooling_k",
                         e->trusted ? e->supercooling_k : NAN);
  bad |= ff_json_set_num(o, "nucleation_time_s", e->nucleation_time_s);
  bad |= ff_json_set_num(o, "t_min_c", e->t_min_c);
  bad |= ff_json_set_num(o, "recalescence_rise_k", e->recalescence_rise_k);
  bad |= ff_json_set_num(o, "peak_c", e->peak_c);
  bad |= ff_json_set_num(o, "peak_time_s", e->peak_time_s);
  bad |= ff_json_set_num(o, "freezing_branch_slope_k_s",
                         e->freezing_branch_slope_k_s);
  bad |= ff_json_set_num(o, "frozen_fraction", e->frozen_fraction);
  bad |= ff_json_set_num(o, "branch_start_s", e->branch_start_s);
  bad |= ff_json_set_num(o, "branch_end_s", e->branch_end_s);
  bad |= ff_json_set_num(o, "noise_k", e->noise_k);
  bad |= ff_json_set_num(o, "resolution_k", e->resolution_k);
  bad |= ff_json_set_num(unc, "fit_k", e->trusted ? e->u_fit_k : NAN);
  bad |= ff_json_set_num(unc, "noise_k", e->trusted ? e->u_noise_k : NAN);
  bad |= ff_json_set_num(unc, "resolution_k",
                         e->trusted ? e->u_resolution_k : NAN);
  bad |= ff_json_set_num(unc, "method_k", e->trusted ? e->u_method_k : NAN);
  bad |= json_object_set_new(o, "uncertainty_parts_k", unc);
  if (e->liquid.kind == 1) {
    bad |= ff_json_set_num(liq, "bath_c", e->liquid.bath_c);
    bad |= ff_json_set_num(liq, "tau_s", e->liquid.tau_s);
    bad |= ff_json_set_num(liq, "rms_k", e->liquid.rms_k);
  }
  bad |= json_object_set_new(o, "liquid_newton_fit", liq);
  bad |= ff_json_set_num(mod, "tf0_c", e->model_tf0_c);
  bad |= ff_json_set_num(mod, "delta_k", e->model_delta_k);
  bad |= ff_json_set_num(mod, "u_delta_k", e->model_u_delta_k);
  bad |= json_object_set_new(o, "model", mod);
  for (unsigned q = 0; q < FF_FLAG_COUNT; q++)
    if (e->flags & (1u << q)) {
      bad |= json_array_append_new(fl, json_string(ff_flag_name(1u << q)));
      bad |= json_array_append_new(ft, json_string(ff_flag_text(1u << q)));
    }
  bad |= json_object_set_new(o, "flags", fl);
  bad |= json_object_set_new(o, "flag_reasons", ft);
  /* Every method's reading, for comparison; none for an untrusted event. */
  for (int m = 1; m < FF_METHOD_COUNT; m++) {
    const struct ff_estimate *es = &e->est[m];
    json_t *x = json_object();
    if (x == NULL)
      return json_decref(o), json_decref(est), -1;
    bad |= ff_json_set_num(x, "freezing_point_c",
                           e->trusted && es->ok ? es->value_c : NAN);
    bad |= ff_json_set_num(x, "u_freezing_point_k",
                           e->trusted && es->ok ? es->u_k : NAN);
    bad |= ff_json_set_str(x, "note", es->ok ? (e->trusted ? "" :
                           "event not trusted") : es->why);
    bad |= json_object_set_new(est, ff_method_name(m), x);
  }
  bad |= json_object_set_new(o, "estimates", est);
  bad |= json_array_append_new(arr, o);
  return bad ? -1 : 0;
}

static int print_json(const struct ff_dataset *ds, const struct chan *ch,
                      size_t nch, const char *solvent)
{
  json_t *root = json_object(), *ev = json_array(), *chs = json_array();
  int bad = 0;

  if (!root || !ev || !chs) {
    json_decref(root); json_decref(ev); json_decref(chs);
    return FF_EIO;
  }
  bad |= ff_json_set_str(root, "file", ds->path);
  bad |= ff_json_set_str(root, "solvent", solvent);
  for (size_t c = 0; c < nch; c++) {
    const char *name = ds->ch[ch[c].index].name;
    json_t *co = json_object();
    if (co == NULL)
      bad = 1;
    else {
      bad |= ff_json_set_str(co, "channel", name);
      bad |= json_object_set_new(co, "number",
                                 json_integer((json_int_t)ch[c].index + 1));
      bad |= json_object_set_new(co, "events",
                                 json_integer((json_int_t)ch[c].ev.n));
      bad |= ff_json_set_str(co, "note", ch[c].note);
      bad |= json_array_append_new(chs, co);
    }
    for (size_t i = 0; i < ch[c].ev.n; i++)
      bad |= event_json(ev, name, &ch[c].ev.v[i]);
  }
  bad |= json_object_set_new(root, "events", ev);
  bad |= json_object_set_new(root, "channels", chs);
  if (bad) {
    json_decref(root);
    ff_cli_msg("out of memory");
    return FF_EIO;
  }
  bad = ff_json_write(root, stdout);
  json_decref(root);
  return bad ? FF_EIO : FF_OK;
}

/* Runs gnuplot over the event figures; a missing gnuplot is not an error
 * (the scripts stay, and the user is told how to render them). */
static int render(struct ff_plot_set *ps, const char *dir,
                  struct ff_cli_progress *prog)
{
  struct ff_plot_report rep;
  struct ff_diag d = FF_DIAG_INIT;
  int st;

  memset(&rep, 0, sizeof rep);
  st = ff_plot_render(ps, &rep, &d);
  ff_cli_progress_end(prog);
  if (rep.errors[0] != '\0')
    ff_cli_msg("gnuplot reported:\n%s", rep.errors);
  if (st != FF_OK)
    return ff_cli_fail(&d);
  if (rep.rendered)
    ff_cli_msg("%zu figures in %s", rep.n_figures, dir);
  else
    ff_cli_msg("gnuplot not found: %zu figure scripts in %s; render with: %s",
               rep.n_figures, dir, rep.command);
  return FF_OK;
}

/* Says on stderr why nothing could be trusted. */
static void explain(const struct ff_dataset *ds, const struct chan *ch,
                    size_t nch)
{
  ff_cli_msg("%s: no trustworthy freezing point:", ds->path);
  for (size_t c = 0; c < nch; c++) {
    const char *name = ds->ch[ch[c].index].name;
    if (ch[c].ev.n == 0)
      fprintf(stderr, "  channel '%s': %s\n", name, ch[c].note);
    for (size_t i = 0; i < ch[c].ev.n; i++)
      fprintf(stderr, "  channel '%s' cycle %u: %s\n", name,
              ch[c].ev.v[i].cycle, ch[c].ev.v[i].status_reason);
  }
}

int ff_cmd_point(int argc, char **argv)
{
  struct ff_import_opts io = FF_IMPORT_OPTS_DEFAULT;
  struct ff_detect_params dp = FF_DETECT_PARAMS_DEFAULT;
  struct ff_solvent_table tab = FF_SOLVENT_TABLE_INIT;
  struct ff_diag d = FF_DIAG_INIT;
  const char *path = NULL, *chan_spec = NULL, *solvent = NULL;
  const char *fig_dir = NULL;
  struct ff_plot_opts po = FF_PLOT_OPTS_DEFAULT;
  struct ff_plot_set *ps = NULL;
  int formats_given = 0;
  char plots[PATH_MAX];
  const struct ff_solvent *sv = NULL;
  struct ff_dataset *ds = NULL;
  struct chan *ch = NULL;
  double *t = NULL, *y = NULL;
  size_t nch = 0, trusted = 0;
  int json = 0, all = 0, quiet = 0, st = FF_OK;
  char tabpath[4200];
  struct ff_cli_progress prog;

  for (int i = 1; i < argc; i++) {
    const char *a = argv[i];
    if (strcmp(a, "--help") == 0 || strcmp(a, "-h") == 0) {
      help();
      return FF_OK;
    } else if (strcmp(a, "--json") == 0) {
      json = 1;
    } else if (strcmp(a, "--all-methods") == 0) {
      all = 1;
    } else if (strcmp(a, "--quiet") == 0) {
      quiet = 1;
    } else if (strcmp(a, "--channel") == 0 || strcmp(a, "--method") == 0
               || strcmp(a, "--solvent") == 0
               || strcmp(a, "--resolution") == 0
               || strcmp(a, "--unit") == 0 || strcmp(a, "--figures") == 0
               || strcmp(a, "--format") == 0) {
      if (i + 1 >= argc)
        return ff_cli_usage(CMD, "%s needs a value", a);
      const char *v = argv[++i];
      if (strcmp(a, "--channel") == 0) {
        chan_spec = v;
      } else if (strcmp(a, "--figures") == 0) {
        fig_dir = v;
      } else if (strcmp(a, "--format") == 0) {
        struct ff_diag fd = FF_DIAG_INIT;
        if (ff_plot_parse_formats(v, &po.formats, &fd) != FF_OK)
          return ff_cli_usage(CMD, "--format: %s", fd.msg);
        formats_given = 1;
      } else if (strcmp(a, "--method") == 0) {
        if (ff_method_parse(v, &dp.method) != 0)
          return ff_cli_usage(CMD, "unknown method '%s' (auto, model, "
                              "extrapolate, intersect, plateau, peak, "
                              "break)", v);
      } else if (strcmp(a, "--solvent") == 0) {
        solvent = v;
      } else if (strcmp(a, "--unit") == 0) {
        if (strcmp(v, "C") == 0 || strcmp(v, "c") == 0)
          io.unit = FF_UNIT_C;
        else if (strcmp(v, "K") == 0 || strcmp(v, "k") == 0)
          io.unit = FF_UNIT_K;
        else if (strcmp(v, "F") == 0 || strcmp(v, "f") == 0)
          io.unit = FF_UNIT_F;
        else
          return ff_cli_usage(CMD, "--unit expects C, K or F, found '%s'", v);
      } else {
        if (ff_cli_number(CMD, a, v, &dp.resolution_k) != 0)
          return FF_EUSAGE;
        if (!(dp.resolution_k >= 0.0) || dp.resolution_k > 5.0)
          return ff_cli_usage(CMD, "--resolution must be 0 to 5 K, found "
                              "'%s'", v);
      }
    } else if (a[0] == '-' && a[1] != '\0') {
      return ff_cli_usage(CMD, "unknown option '%s'", a);
    } else if (path == NULL) {
      path = a;
    } else {
      return ff_cli_usage(CMD, "one FILE only (found '%s' too)", a);
    }
  }
  if (path == NULL)
    return ff_cli_usage(CMD, "no FILE given");
  if (formats_given && fig_dir == NULL)
    return ff_cli_usage(CMD, "--format needs --figures DIR");
  if (fig_dir != NULL && ff_cli_figure_would_replace(fig_dir, path, 0))
    return ff_cli_usage(CMD, "--figures '%s' holds the input '%s', which a "
                        "figure file could replace; choose another folder",
                        fig_dir, path);

  /* Solvent constants: the bundled table; without it (and without
   * --solvent) the detector's built-in water constants serve. */
  snprintf(tabpath, sizeof tabpath, "%s/solvents.csv", ff_cli_datadir());
  if (ff_solvent_table_load(&tab, tabpath, &d) == FF_OK) {
    sv = ff_solvent_find(&tab, solvent ? solvent : "water");
    if (sv == NULL && solvent != NULL) {
      ff_solvent_table_release(&tab);
      return ff_cli_usage(CMD, "unknown solvent '%s' (see 'frostfit "
                          "solvents')", solvent);
    }
  } else if (solvent != NULL) {
    st = ff_cli_fail(&d);
    ff_solvent_table_release(&tab);
    return st;
  }
  ff_diag_clear(&d);
  dp.solvent = sv;

  ff_cli_progress_init(&prog, path, quiet);
  io.progress = ff_cli_progress_bytes;
  io.progress_ctx = &prog;
  ds = ff_import_file(path, &io, &d);
  ff_cli_progress_end(&prog);
  if (ds == NULL) {
    ff_solvent_table_release(&tab);
    return ff_cli_fail(&d);
  }
  ch = calloc(ds->n_channels ? ds->n_channels : 1, sizeof *ch);
  if (ch == NULL) {
    ff_cli_msg("out of memory");
    st = FF_EIO;
    goto out;
  }
  if (chan_spec != NULL) {
    long k = ff_dataset_find_channel(ds, chan_spec, &d);
    if (k < 0) {
      st = ff_cli_fail(&d);
      goto out;
    }
    ch[0].index = (size_t)k;
    nch = 1;
  } else {
    for (size_t k = 0; k < ds->n_channels; k++)
      ch[k].index = k;
    nch = ds->n_channels;
  }
  detect_all(ds, &dp, ch, nch, &prog);
  for (size_t c = 0; c < nch; c++) {
    size_t m = 0;
    if (ch[c].status == FF_EIO) {
      struct ff_diag dd = FF_DIAG_INIT;
      ff_diag_set(&dd, FF_EIO, NULL, "%s", ch[c].note);
      st = ff_cli_fail(&dd);
      goto out;
    }
    if (ch[c].status == FF_OK && ch[c].ev.n == 0)
      snprintf(ch[c].note, sizeof ch[c].note, "no freeze found: no "
               "recalescence and no slope break (a bath or room probe?)");
    for (size_t i = 0; i < ch[c].ev.n; i++) {
      const struct ff_event *e = &ch[c].ev.v[i];
      if (!e->trusted)
        continue;
      trusted++;
      if (fig_dir == NULL)
        continue;
      if (t == NULL) {
        t = malloc((ds->n ? ds->n : 1) * sizeof *t);
        y = malloc((ds->n ? ds->n : 1) * sizeof *y);
        if (t == NULL || y == NULL) {
          ff_cli_msg("out of memory");
          st = FF_EIO;
          goto out;
        }
      }
      if (m == 0)
        m = ff_dataset_channel_xy(ds, ch[c].index, t, y);
      if (ps == NULL) {
        struct ff_diag pd = FF_DIAG_INIT;
        po.progress = ff_cli_progress_items;
        po.progress_ctx = &prog;
        po.plots_dir = ff_plot_dir_beside(ff_cli_datadir(), plots,
                                          sizeof plots);
        ps = ff_plot_set_new(fig_dir, &po, &pd);
        if (ps == NULL) {
          st = ff_cli_fail(&pd);
          goto out;
        }
      }
      {
        struct ff_diag pd = FF_DIAG_INIT;
        if (ff_plot_add_detected(ps, path, ds->ch[ch[c].index].name, t, y,
                                 m, e, &pd) != FF_OK) {
          st = ff_cli_fail(&pd);
          goto out;
        }
      }
    }
  }
  if (trusted == 0) {
    explain(ds, ch, nch);
    st = FF_EUNTRUSTED;
    goto out;
  }
  if (json)
    st = print_json(ds, ch, nch, sv ? sv->name : "water (built-in)");
  else
    print_table(ds, ch, nch, all, sv ? sv->name : "water (built-in)");
  if (st == FF_OK && ps != NULL)
    st = render(ps, fig_dir, &prog);
out:
  ff_plot_set_free(ps);
  for (size_t c = 0; ch != NULL && c < nch; c++)
    ff_event_list_release(&ch[c].ev);
  free(ch);
  free(t);
  free(y);
  ff_dataset_free(ds);
  ff_solvent_table_release(&tab);
  return st;
}
