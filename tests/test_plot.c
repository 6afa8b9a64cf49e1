/* test_plot.c - the figure back end: escaping, script text, atomic writes, rendering. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>
#include <fcntl.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <criterion/criterion.h>
#include "frostfit/plot.h"

/* The built-in style (src/plot_style.c), compared with plots/style.gp. */
extern const char ff_plot_style_builtin[];

/* ------------------------------------------------------------ helpers */

static void make_tmpdir(char *dir, size_t n)
{
  snprintf(dir, n, "/tmp/ff-plot-test.XXXXXX");
  cr_assert_not_null(mkdtemp(dir), "mkdtemp");
}

static void rm_tree(const char *dir)
{
  char cmd[600];

  /* Test cleanup only: the folder name came from mkdtemp. */
  snprintf(cmd, sizeof cmd, "rm -rf '%s'", dir);
  cr_expect_eq(system(cmd), 0);
}

static char *slurp(const char *dir, const char *name, size_t *len)
{
  char path[1024];
  FILE *f;
  char *buf;
  long n;

  snprintf(path, sizeof path, "%s/%s", dir, name);
  f = fopen(path, "rb");
  if (f == NULL)
    return NULL;
  fseek(f, 0, SEEK_END);
  n = ftell(f);
  fseek(f, 0, SEEK_SET);
  buf = malloc((size_t)n + 1);
  cr_assert_not_null(buf);
  cr_assert_eq(fread(buf, 1, (size_t)n, f), (size_t)n);
  buf[n] = '\0';
  fclose(f);
  if (len != NULL)
    *len = (size_t)n;
  return buf;
}

static int exists(const char *dir, const char *name)
{
  char path[1024];
  struct stat st;

  snprintf(path, sizeof path, "%s/%s", dir, name);
  return stat(path, &st) == 0;
}

static int have_gnuplot(void)
{
  char path[4096];

  return ff_plot_find_gnuplot(NULL, path, sizeof path);
}

/*
 * Checks that in gnuplot text every backquote and '@' is inside a
 * single-quoted string or a comment (where gnuplot expands neither), and
 * that no line starts a command with system or a pipe in set output.
 */
static void expect_no_live_specials(const char *text, const char *what)
{
  const char *p = text;
  int in_sq = 0, in_dq = 0, in_comment = 0;
  int line = 1;

  for (; *p != '\0'; p++) {
    if (*p == '\n') {
      cr_expect(!in_sq && !in_dq, "%s:%d: string left open at end of line",
                what, line);
      in_sq = in_dq = in_comment = 0;
      line++;
      continue;
    }
    if (in_comment)
      continue;
    if (in_sq) {
      if (*p == '\'' && p[1] == '\'')
        p++;
      else if (*p == '\'')
        in_sq = 0;
      continue;
    }
    if (in_dq) {
      if (*p == '\\' && p[1] != '\0' && p[1] != '\n')
        p++;
      else if (*p == '"')
        in_dq = 0;
      else
        cr_expect(*p != '`', "%s:%d: backquote inside a double-quoted string",
                  what, line);
      continue;
    }
    if (*p == '#')
      in_comment = 1;
    else if (*p == '\'')
      in_sq = 1;
    else if (*p == '"')
      in_dq = 1;
    else
      cr_expect(*p != '`' && *p != '@', "%s:%d: live '%c'", what, line, *p);
  }
  cr_expect(strstr(text, "\nsystem") == NULL, "%s: a line starts with system",
            what);
  cr_expect(strstr(text, "set output '|") == NULL, "%s: output to a pipe",
            what);
}

/* ------------------------------------------------------ escaping, names */

Test(plot, quote_makes_hostile_text_inert)
{
  char out[256];

  cr_assert_str_eq(ff_plot_quote("`touch /tmp/pwned`", out, sizeof out),
                   "'`touch /tmp/pwned`'");
  cr_assert_str_eq(ff_plot_quote("a'b", out, sizeof out), "'a''b'");
  cr_assert_str_eq(ff_plot_quote("x\nsystem('id')", out, sizeof out),
                   "'x system(''id'')'");
  cr_assert_str_eq(ff_plot_quote("|cat", out, sizeof out), "'|cat'");
  cr_assert_str_eq(ff_plot_quote("@macro", out, sizeof out), "'(at)macro'");
  cr_assert_str_eq(ff_plot_quote("tab\there\r\x7f", out, sizeof out),
                   "'tab here  '");
  cr_assert_str_eq(ff_plot_quote("back\\slash", out, sizeof out),
                   "'back\\slash'");
  cr_assert_str_eq(ff_plot_quote(NULL, out, sizeof out), "''");
}

Test(plot, quote_keeps_utf8_and_replaces_bad_bytes)
{
  char out[64];

  cr_assert_str_eq(ff_plot_quote("25 \xc2\xb0""C \xce\x94T", out, sizeof out),
                   "'25 \xc2\xb0""C \xce\x94T'");
  /* lone continuation byte, overlong '/', truncated sequence */
  cr_assert_str_eq(ff_plot_quote("a\x80" "b\xc0\xaf" "c\xe2\x82", out,
                                 sizeof out), "'a?b?" "?c?" "?'");
}

Test(plot, quote_truncates_at_character_boundary)
{
  char out[8];

  /* room for 5 bytes of text: "ab" + "''" fits, the next 2-byte char not */
  cr_assert_str_eq(ff_plot_quote("ab'\xc3\xa9xyz", out, sizeof out),
                   "'ab'''");
  cr_assert_str_eq(ff_plot_quote("abc'", out, 7), "'abc'");
}

Test(plot, safe_name_keeps_a_safe_character_set)
{
  char out[64];

  cr_assert_str_eq(ff_plot_safe_name("`touch /tmp/pwned`", out, sizeof out),
                   "_touch_tmp_pwned_");
  cr_assert_str_eq(ff_plot_safe_name("|cat", out, sizeof out), "_cat");
  cr_assert_str_eq(ff_plot_safe_name("-rf", out, sizeof out), "_rf");
  cr_assert_str_eq(ff_plot_safe_name("..", out, sizeof out), "_.");
  cr_assert_str_eq(ff_plot_safe_name("run 3/T1", out, sizeof out), "run_3_T1");
  cr_assert_str_eq(ff_plot_safe_name("", out, sizeof out), "figure");
  cr_assert_str_eq(ff_plot_safe_name("\xc3\xa9", out, sizeof out), "figure");
  cr_assert_str_eq(ff_plot_safe_name("abcdefgh", out, 5), "abcd");
}

Test(plot, parses_format_lists)
{
  struct ff_diag d = FF_DIAG_INIT;
  unsigned f = 0;

  cr_assert_eq(ff_plot_parse_formats("png,svg,pdf", &f, &d), FF_OK);
  cr_assert_eq(f, FF_PLOT_FORMATS_ALL);
  cr_assert_eq(ff_plot_parse_formats("pdf", &f, &d), FF_OK);
  cr_assert_eq(f, FF_PLOT_PDF);
  cr_assert_eq(ff_plot_parse_formats("all", &f, &d), FF_OK);
  cr_assert_eq(f, FF_PLOT_FORMATS_ALL);
  cr_assert_eq(ff_plot_parse_formats("png,jpg", &f, &d), FF_EUSAGE);
  cr_assert(strstr(d.msg, "'jpg'") != NULL, "%s", d.msg);
  ff_diag_clear(&d);
  cr_assert_eq(ff_plot_parse_formats("png,,svg", &f, &d), FF_EUSAGE);
  ff_diag_clear(&d);
  cr_assert_eq(ff_plot_parse_formats("", &f, &d), FF_EUSAGE);
}

Test(plot, builtin_style_matches_plots_style_gp)
{
  char *text = slurp("plots", "style.gp", NULL);

  cr_assert_not_null(text, "plots/style.gp missing (run from the repo root)");
  cr_expect_str_eq(ff_plot_style_builtin, text,
                   "src/plot_style.c is stale: run plots/embed-style.sh");
  free(text);
}

/* -------------------------------------------------------- atomic writes */

Test(plot, write_atomic_replaces_and_leaves_no_temporary)
{
  char dir[64];
  struct ff_diag d = FF_DIAG_INIT;
  char *text;
  size_t len;

  make_tmpdir(dir, sizeof dir);
  cr_assert_eq(ff_plot_write_atomic(dir, "a.gp", "first\n", 6, &d), FF_OK);
  cr_assert_eq(ff_plot_write_atomic(dir, "a.gp", "second\n", 7, &d), FF_OK);
  text = slurp(dir, "a.gp", &len);
  cr_assert_str_eq(text, "second\n");
  free(text);
  {
    char cmd[200];

    snprintf(cmd, sizeof cmd, "ls -A '%s' | grep -q ff-tmp", dir);
    cr_expect_neq(system(cmd), 0, "a temporary file was left behind");
  }
  rm_tree(dir);
  cr_assert_eq(ff_plot_write_atomic("/nonexistent-ff-dir", "a.gp", "x", 1, &d),
               FF_EIO);
  cr_assert(strstr(d.msg, "/nonexistent-ff-dir") != NULL, "%s", d.msg);
}

/* ------------------------------------------------------- figure inputs */

#define NS 400
#define NB 100

/* A synthetic freeze event (invented for the test, not a measurement). */
struct event_data {
  double t[NS], T[NS], lt[NB], lT[NB], ft[NB], fT[NB], et[2], eT[2];
};

static struct ff_plot_event_fig make_event(struct event_data *e,
                                           const char *name,
                                           const char *title)
{
  const double tf = -0.4713, tn = 200.0;
  struct ff_plot_event_fig f;
  int k;

  for (k = 0; k < NS; k++) {
    e->t[k] = 0.5 * k + 0.25;
    e->T[k] = e->t[k] < tn ? -5.7 + 9.9 * exp(-e->t[k] / 85.0)
                           : tf - 0.00035 * (e->t[k] - tn)
                             - 0.04 * exp(-(e->t[k] - tn) / 4.0);
  }
  e->T[17] = NAN;              /* a dropout, as loggers produce */
  for (k = 0; k < NB; k++) {
    e->lt[k] = 100.0 + k;
    e->lT[k] = -5.7 + 9.9 * exp(-e->lt[k] / 85.0);
    e->ft[k] = 210.0 + 0.9 * k;
    e->fT[k] = tf - 0.00035 * (e->ft[k] - tn);
  }
  e->et[0] = tn;
  e->eT[0] = tf;
  e->et[1] = 210.0;
  e->eT[1] = tf - 0.00035 * 10.0;
  memset(&f, 0, sizeof f);
  f.name = name;
  f.title = title;
  f.t_s = e->t;
  f.temp_c = e->T;
  f.n = NS;
  f.liquid = (struct ff_plot_curve){ e->lt, e->lT, NULL, NULL, NB };
  f.freezing = (struct ff_plot_curve){ e->ft, e->fT, NULL, NULL, NB };
  f.extrap = (struct ff_plot_curve){ e->et, e->eT, NULL, NULL, 2 };
  f.t_nucleation_s = tn;
  f.t_read_s = NAN;
  f.freezing_point_c = tf;
  f.u_freezing_point_k = 0.0017;
  f.coverage_k = 2.0;
  f.method = "back-extrapolation";
  f.zoom_t0_s = f.zoom_t1_s = f.zoom_half_k = NAN;
  return f;
}

struct solute_data {
  double x[5], i[5], ui[5], res[5], m[5], dt[5], udt[5];
  double cx[30], cy[30], lo[30], hi[30];
  struct ff_plot_model model;
};

static struct ff_plot_solute_fig make_solute(struct solute_data *s,
                                             const char *name)
{
  struct ff_plot_solute_fig f;
  int k;

  for (k = 0; k < 5; k++) {
    s->m[k] = 0.037 + 0.113 * k;
    s->x[k] = sqrt(s->m[k]);
    s->i[k] = 1.93 - 0.31 * s->x[k] + 0.004 * (k % 2 ? 1 : -1);
    s->ui[k] = 0.021;
    s->res[k] = 0.004 * (k % 2 ? 1 : -1);
    s->dt[k] = 1.853 * s->i[k] * s->m[k];
    s->udt[k] = 0.0031;
  }
  for (k = 0; k < 30; k++) {
    s->cx[k] = 0.75 * k / 29.0;
    s->cy[k] = 1.93 - 0.31 * s->cx[k];
    s->lo[k] = s->cy[k] - 0.03;
    s->hi[k] = s->cy[k] + 0.03;
  }
  s->model = (struct ff_plot_model){ "line in sqrt m 'a@b'",
                                     { s->cx, s->cy, s->lo, s->hi, 30 },
                                     1.93, 0.015 };
  memset(&f, 0, sizeof f);
  f.name = name;
  f.title = "salt X in water (synthetic)";
  f.x_is_sqrt = 1;
  f.x = s->x;
  f.i = s->i;
  f.u_i = s->ui;
  f.n = 5;
  f.models = &s->model;
  f.n_models = 1;
  f.resid_i = s->res;
  f.m_mol_kg = s->m;
  f.dt_k = s->dt;
  f.u_dt_k = s->udt;
  f.ideal_slope_k_kg_mol = 2 * 1.853;
  return f;
}

struct unknown_data {
  double x[4], M[4], uM[4], fx[2], fy[2], flo[2], fhi[2];
};

static struct ff_plot_unknown_fig make_unknown(struct unknown_data *u,
                                               const char *name)
{
  struct ff_plot_unknown_fig f;
  int k;

  for (k = 0; k < 4; k++) {
    u->x[k] = 12.5 * (k + 1);
    u->M[k] = 118.0 + 0.93 * u->x[k];
    u->uM[k] = 2.7;
  }
  u->fx[0] = 0.0;
  u->fx[1] = 52.0;
  u->fy[0] = 118.0;
  u->fy[1] = 118.0 + 0.93 * 52.0;
  u->flo[0] = 114.0;
  u->flo[1] = u->fy[1] - 5.0;
  u->fhi[0] = 122.0;
  u->fhi[1] = u->fy[1] + 5.0;
  memset(&f, 0, sizeof f);
  f.name = name;
  f.title = "unknown in a high-Kf solvent (synthetic)";
  f.x = u->x;
  f.m_g_mol = u->M;
  f.u_m_g_mol = u->uM;
  f.n = 4;
  f.fit = (struct ff_plot_curve){ u->fx, u->fy, u->flo, u->fhi, 2 };
  f.m0_g_mol = 118.0;
  f.u_m0_g_mol = 2.0;
  return f;
}

struct overview_data {
  struct ff_plot_run runs[6];
  struct ff_plot_limit lim[1];
};

static struct ff_plot_overview_fig make_overview(struct overview_data *o,
                                                 const char *hostile)
{
  struct ff_plot_overview_fig f;
  int k;

  for (k = 0; k < 6; k++) {
    double m = k == 0 ? NAN : 0.05 * k;

    o->runs[k] = (struct ff_plot_run){
      k == 0 ? "blank" : k == 3 ? hostile : "run",
      k == 0 ? NULL : k < 4 ? "salt X" : "sugar",
      k == 0 ? 0.011 : -1.853 * 1.8 * m, 0.0015, m,
      k == 0 ? NAN : 1.853 * 1.8 * m, 0.002, k == 0 ? NAN : 1.8, 0.03 };
  }
  /* the short label reaches a tick label: hostile too */
  o->lim[0] = (struct ff_plot_limit){ "salt X", 2.0, 1.93, 1.90, 1.96,
                                      2 * 1.853, hostile };
  memset(&f, 0, sizeof f);
  f.name = "overview";
  f.title = hostile;
  f.runs = o->runs;
  f.n_runs = 6;
  f.limits = o->lim;
  f.n_limits = 1;
  return f;
}

/* ------------------------------------------------------- script text */

Test(plot, event_script_is_escaped_and_names_its_data)
{
  char dir[64];
  struct ff_diag d = FF_DIAG_INIT;
  struct ff_plot_opts o = FF_PLOT_OPTS_DEFAULT;
  struct ff_plot_report r;
  struct event_data ev;
  struct ff_plot_event_fig f;
  struct ff_plot_set *s;
  char *gp, *dat, *drv;

  make_tmpdir(dir, sizeof dir);
  o.no_render = 1;
  o.formats = FF_PLOT_SVG | FF_PLOT_PDF;
  s = ff_plot_set_new(dir, &o, &d);
  cr_assert_not_null(s, "%s", d.msg);
  f = make_event(&ev, "`touch /tmp/pwned`", "run 'a@b'\nsystem('id') `id`");
  cr_assert_eq(ff_plot_add_event(s, &f, &d), FF_OK, "%s", d.msg);
  f.name = "`touch /tmp/pwned`";           /* same name: gets a suffix */
  cr_assert_eq(ff_plot_add_event(s, &f, &d), FF_OK, "%s", d.msg);
  cr_assert_eq(ff_plot_render(s, &r, &d), FF_OK, "%s", d.msg);
  cr_expect_eq(r.rendered, 0);
  cr_expect_eq(r.n_figures, 2);
  cr_expect(strstr(r.command, "gnuplot render.gp") != NULL, "%s", r.command);
  cr_expect(strncmp(r.command, "cd '/tmp/ff-plot-test.", 22) == 0, "%s",
            r.command);

  gp = slurp(dir, "_touch_tmp_pwned_.gp", NULL);
  dat = slurp(dir, "_touch_tmp_pwned_.dat", NULL);
  drv = slurp(dir, "render.gp", NULL);
  cr_assert_not_null(gp);
  cr_assert_not_null(dat);
  cr_assert_not_null(drv);
  cr_expect(exists(dir, "_touch_tmp_pwned__2.gp"));
  cr_expect(strstr(gp, "'_touch_tmp_pwned_.dat' index 0") != NULL);
  cr_expect(strstr(gp, "set output outprefix.'_touch_tmp_pwned_.'.fmt")
            != NULL);
  cr_expect(strstr(gp, "title_text = 'run ''a(at)b'' system(''id'') `id`'\n")
            != NULL);
  cr_expect(strstr(gp, "formats = 'svg pdf'") != NULL);
  cr_expect(strstr(gp, "Tf = -0.4713") != NULL);
  cr_expect(strstr(gp, "# ---- end of style ----") != NULL);
  expect_no_live_specials(gp, "event script");
  expect_no_live_specials(drv, "render.gp");
  cr_expect(strstr(drv, "load '_touch_tmp_pwned_.gp'\n"
                        "load '_touch_tmp_pwned__2.gp'\n") != NULL, "%s", drv);
  /* data: a header naming the blocks; the dropout sample is left out */
  cr_expect(strncmp(dat, "# _touch_tmp_pwned_.dat - data of", 33) == 0);
  cr_expect(strstr(dat, "# index 0: measured curve\n") != NULL);
  cr_expect(strstr(dat, "# index 1: fitted liquid-cooling curve\n") != NULL);
  cr_expect(strstr(dat, "NaN") == NULL, "a NaN reached the event data");
  cr_expect(strstr(dat, "\n8.75 ") == NULL, "the dropout at t = 8.75 s "
            "was written");
  cr_expect(strstr(dat, "\n8.25 ") != NULL);
  free(gp);
  free(dat);
  free(drv);
  ff_plot_set_free(s);
  rm_tree(dir);
}

Test(plot, solute_unknown_overview_scripts_are_escaped)
{
  char dir[64];
  struct ff_diag d = FF_DIAG_INIT;
  struct ff_plot_opts o = FF_PLOT_OPTS_DEFAULT;
  struct ff_plot_report r;
  struct solute_data sd;
  struct unknown_data ud;
  struct overview_data od;
  struct ff_plot_solute_fig sf = make_solute(&sd, "solute `x`");
  struct ff_plot_unknown_fig uf = make_unknown(&ud, "|cat");
  struct ff_plot_overview_fig of = make_overview(&od, "x\nsystem('id') @m");
  struct ff_plot_set *s;
  char *text;

  make_tmpdir(dir, sizeof dir);
  o.no_render = 1;
  s = ff_plot_set_new(dir, &o, &d);
  cr_assert_not_null(s, "%s", d.msg);
  cr_assert_eq(ff_plot_add_solute(s, &sf, &d), FF_OK, "%s", d.msg);
  cr_assert_eq(ff_plot_add_unknown(s, &uf, &d), FF_OK, "%s", d.msg);
  cr_assert_eq(ff_plot_add_overview(s, &of, &d), FF_OK, "%s", d.msg);
  cr_assert_eq(ff_plot_render(s, &r, &d), FF_OK, "%s", d.msg);

  text = slurp(dir, "solute_x_.gp", NULL);
  cr_assert_not_null(text);
  expect_no_live_specials(text, "solute script");
  cr_expect(strstr(text, "title 'line in sqrt m ''a(at)b'''") != NULL);
  cr_expect(strstr(text, "i(0) = 1.930 ± 0.015") != NULL);
  cr_expect(strstr(text, "Kf_nu = 3.706") != NULL);
  free(text);
  text = slurp(dir, "_cat.gp", NULL);
  cr_assert_not_null(text);
  expect_no_live_specials(text, "unknown script");
  cr_expect(strstr(text, "'_cat.dat' index 0") != NULL);
  free(text);
  text = slurp(dir, "overview.gp", NULL);
  cr_assert_not_null(text);
  expect_no_live_specials(text, "overview script");
  cr_expect(strstr(text, "title_text = 'x system(''id'') (at)m'") != NULL);
  cr_expect(strstr(text, "'x system(''id…' 4") != NULL,
            "run id cut to 12 characters and an ellipsis in the tick labels");
  free(text);
  text = slurp(dir, "overview.dat", NULL);
  cr_assert_not_null(text);
  cr_expect(strstr(text, "# index 0: blank runs\n") != NULL);
  cr_expect(strstr(text, "# index 1: 'salt X'\n") != NULL);
  free(text);
  ff_plot_set_free(s);
  rm_tree(dir);
}

Test(plot, rejects_unusable_descriptions)
{
  char dir[64];
  struct ff_diag d = FF_DIAG_INIT;
  struct ff_plot_opts o = FF_PLOT_OPTS_DEFAULT;
  struct event_data ev;
  struct ff_plot_event_fig f = make_event(&ev, "e", "t");
  struct ff_plot_solute_fig sf;
  struct ff_plot_set *s;

  make_tmpdir(dir, sizeof dir);
  o.no_render = 1;
  s = ff_plot_set_new(dir, &o, &d);
  cr_assert_not_null(s);
  f.freezing_point_c = NAN;
  cr_expect_eq(ff_plot_add_event(s, &f, &d), FF_EUSAGE);
  cr_expect(strstr(d.msg, "no freezing point") != NULL, "%s", d.msg);
  ff_diag_clear(&d);
  memset(&sf, 0, sizeof sf);
  cr_expect_eq(ff_plot_add_solute(s, &sf, &d), FF_EUSAGE);
  ff_plot_set_free(s);
  rm_tree(dir);
  ff_diag_clear(&d);
  o.formats = 1u << 7;
  cr_expect_null(ff_plot_set_new("/tmp", &o, &d));
  cr_expect_eq(d.status, FF_EUSAGE);
}

Test(plot, missing_gnuplot_is_not_an_error)
{
  char dir[64];
  struct ff_diag d = FF_DIAG_INIT;
  struct ff_plot_opts o = FF_PLOT_OPTS_DEFAULT;
  struct ff_plot_report r;
  struct event_data ev;
  struct ff_plot_event_fig f = make_event(&ev, "e1", "t");
  struct ff_plot_set *s;
  char path[256];

  cr_expect_eq(ff_plot_find_gnuplot("frostfit-no-such-gnuplot", path,
                                    sizeof path), 0);
  cr_expect_eq(ff_plot_find_gnuplot("/nonexistent/gnuplot", path,
                                    sizeof path), 0);
  make_tmpdir(dir, sizeof dir);
  o.gnuplot = "frostfit-no-such-gnuplot";
  s = ff_plot_set_new(dir, &o, &d);
  cr_assert_not_null(s);
  cr_assert_eq(ff_plot_add_event(s, &f, &d), FF_OK, "%s", d.msg);
  cr_assert_eq(ff_plot_render(s, &r, &d), FF_OK, "%s", d.msg);
  cr_expect_eq(r.rendered, 0);
  cr_expect(exists(dir, "render.gp") && exists(dir, "e1.gp"));
  cr_expect(!exists(dir, "e1.png"));
  ff_plot_set_free(s);
  rm_tree(dir);
}

/* ---------------------------------------------------------- rendering */

static void expect_png(const char *dir, const char *name)
{
  size_t len = 0;
  char *b = slurp(dir, name, &len);

  cr_assert_not_null(b, "%s missing", name);
  cr_expect(len > 5000 && memcmp(b, "\x89PNG\r\n\x1a\n", 8) == 0,
            "%s: not a PNG of plausible size (%zu bytes)", name, len);
  free(b);
}

static void expect_svg(const char *dir, const char *name)
{
  size_t len = 0;
  char *b = slurp(dir, name, &len);

  cr_assert_not_null(b, "%s missing", name);
  cr_expect(strncmp(b, "<?xml", 5) == 0 || strncmp(b, "<svg", 4) == 0,
            "%s: no XML header", name);
  cr_expect(strstr(b, "</svg>") != NULL, "%s: no closing </svg>", name);
  free(b);
}

static void expect_pdf(const char *dir, const char *name)
{
  size_t len = 0;
  char *b = slurp(dir, name, &len);

  cr_assert_not_null(b, "%s missing", name);
  cr_expect(len > 1000 && strncmp(b, "%PDF-", 5) == 0, "%s: not a PDF", name);
  free(b);
}

/* Runs `gnuplot NAME.gp` in dir as a user would; returns its exit status
 * and its stderr in err. */
static int rerun_alone(const char *dir, const char *script, char *err,
                       size_t n)
{
  char errpath[600];
  int status = -1, fd;
  pid_t pid;
  FILE *f;
  size_t got;

  snprintf(errpath, sizeof errpath, "%s/stderr.txt", dir);
  pid = fork();
  cr_assert_geq(pid, 0);
  if (pid == 0) {
    fd = open(errpath, O_WRONLY | O_CREAT | O_TRUNC, 0600);
    if (fd < 0 || chdir(dir) != 0 || dup2(fd, 2) < 0)
      _exit(126);
    execlp("gnuplot", "gnuplot", script, (char *)NULL);
    _exit(127);
  }
  waitpid(pid, &status, 0);
  f = fopen(errpath, "r");
  got = f != NULL ? fread(err, 1, n - 1, f) : 0;
  err[got] = '\0';
  if (f != NULL)
    fclose(f);
  unlink(errpath);
  return WIFEXITED(status) ? WEXITSTATUS(status) : -1;
}

Test(plot, renders_all_figure_kinds_and_scripts_rerun_alone)
{
  char dir[64], pwned[128], title[400], err[2048];
  struct ff_diag d = FF_DIAG_INIT;
  struct ff_plot_opts o = FF_PLOT_OPTS_DEFAULT;
  struct ff_plot_report r;
  struct event_data ev;
  struct solute_data sd;
  struct unknown_data ud;
  struct overview_data od;
  struct ff_plot_event_fig ef;
  struct ff_plot_solute_fig sf = make_solute(&sd, "solute");
  struct ff_plot_unknown_fig uf = make_unknown(&ud, "unknown");
  struct ff_plot_overview_fig of;
  struct ff_plot_set *s;
  static const char *const stems[] = { "event", "solute", "unknown",
                                       "overview" };
  size_t k;

  if (!have_gnuplot())
    cr_skip_test("gnuplot is not installed");
  make_tmpdir(dir, sizeof dir);
  /* Hostile text that would create this file if anything executed it. */
  snprintf(pwned, sizeof pwned, "%s/pwned", dir);
  snprintf(title, sizeof title, "`touch %s` x\nsystem('touch %s') '@x",
           pwned, pwned);
  ef = make_event(&ev, "event", title);
  of = make_overview(&od, title);
  o.formats = FF_PLOT_FORMATS_ALL;
  o.plots_dir = "plots";
  s = ff_plot_set_new(dir, &o, &d);
  cr_assert_not_null(s, "%s", d.msg);
  cr_assert_eq(ff_plot_add_event(s, &ef, &d), FF_OK, "%s", d.msg);
  cr_assert_eq(ff_plot_add_solute(s, &sf, &d), FF_OK, "%s", d.msg);
  cr_assert_eq(ff_plot_add_unknown(s, &uf, &d), FF_OK, "%s", d.msg);
  cr_assert_eq(ff_plot_add_overview(s, &of, &d), FF_OK, "%s", d.msg);
  cr_assert_eq(ff_plot_render(s, &r, &d), FF_OK, "%s\n%s", d.msg, r.errors);
  cr_expect_eq(r.rendered, 1);
  cr_expect_eq(r.n_failed, 0);
  cr_expect_str_eq(r.errors, "", "gnuplot said: %s", r.errors);
  for (k = 0; k < 4; k++) {
    char name[64];

    snprintf(name, sizeof name, "%s.png", stems[k]);
    expect_png(dir, name);
    snprintf(name, sizeof name, "%s.svg", stems[k]);
    expect_svg(dir, name);
    snprintf(name, sizeof name, "%s.pdf", stems[k]);
    expect_pdf(dir, name);
  }
  /* Each script alone, as a user re-runs it after an edit. */
  for (k = 0; k < 4; k++) {
    char script[64];

    snprintf(script, sizeof script, "%s.gp", stems[k]);
    cr_expect_eq(rerun_alone(dir, script, err, sizeof err), 0, "%s: %s",
                 script, err);
    cr_expect_str_eq(err, "", "%s wrote on stderr: %s", script, err);
  }
  cr_expect_eq(rerun_alone(dir, "render.gp", err, sizeof err), 0, "%s", err);
  cr_expect_str_eq(err, "");
  cr_expect(!exists(dir, "pwned"), "hostile text executed a command");
  ff_plot_set_free(s);
  rm_tree(dir);
}

Test(plot, gnuplot_errors_name_the_script_and_others_still_render)
{
  char dir[64];
  struct ff_diag d = FF_DIAG_INIT;
  struct ff_plot_opts o = FF_PLOT_OPTS_DEFAULT;
  struct ff_plot_report r;
  struct event_data ev;
  struct ff_plot_event_fig f = make_event(&ev, "good1", "t");
  struct ff_plot_set *s;
  char path[600], name[16];
  FILE *fp;
  int k;

  if (!have_gnuplot())
    cr_skip_test("gnuplot is not installed");
  make_tmpdir(dir, sizeof dir);
  s = ff_plot_set_new(dir, &o, &d);
  cr_assert_not_null(s);
  cr_assert_eq(ff_plot_add_event(s, &f, &d), FF_OK);
  f.name = "broken";
  cr_assert_eq(ff_plot_add_event(s, &f, &d), FF_OK);
  /* Enough figures for two gnuplot processes on a 2-CPU machine. */
  for (k = 2; k <= 8; k++) {
    snprintf(name, sizeof name, "good%d", k);
    f.name = name;
    cr_assert_eq(ff_plot_add_event(s, &f, &d), FF_OK);
  }
  /* A user's bad edit: the script now calls an undefined function. */
  snprintf(path, sizeof path, "%s/broken.gp", dir);
  fp = fopen(path, "a");
  cr_assert_not_null(fp);
  fputs("plot frostfit_undefined(x)\n", fp);
  fclose(fp);
  cr_expect_eq(ff_plot_render(s, &r, &d), FF_EIO);
  cr_expect_eq(r.n_failed, 1);
  cr_expect(strstr(r.errors, "broken.gp: ") != NULL, "%s", r.errors);
  cr_expect(strstr(r.errors, "good1.gp") == NULL, "%s", r.errors);
  cr_expect(strstr(d.msg, "'broken.gp'") != NULL, "%s", d.msg);
  cr_expect(exists(dir, "good1.png") && exists(dir, "good2.png") &&
            exists(dir, "good8.png"));
  ff_plot_set_free(s);
  rm_tree(dir);
}

/* What a progress callback saw while figures rendered. */
struct progress_log {
  size_t calls, last_done, last_total, backwards;
  int bad_stage;
};

static void log_progress(void *ctx, const char *stage, size_t done,
                         size_t total)
{
  struct progress_log *p = ctx;

  if (p->calls > 0 && done < p->last_done)
    p->backwards++;
  if (strcmp(stage, "rendering figures") != 0)
    p->bad_stage = 1;
  p->calls++;
  p->last_done = done;
  p->last_total = total;
}

/* Twenty event figures in three formats: every output appears, and the
 * progress callback counts up to 20 of 20 without going back. The time is
 * only logged (for docs/performance.md); tests never assert times. */
Test(plot, renders_twenty_events_and_reports_progress)
{
  char dir[64], name[32], file[40];
  struct ff_diag d = FF_DIAG_INIT;
  struct ff_plot_opts o = FF_PLOT_OPTS_DEFAULT;
  struct ff_plot_report r;
  struct event_data ev;
  struct ff_plot_event_fig f = make_event(&ev, "e", "timing");
  struct ff_plot_set *s;
  struct progress_log pl = { 0, 0, 0, 0, 0 };
  int k;

  if (!have_gnuplot())
    cr_skip_test("gnuplot is not installed");
  make_tmpdir(dir, sizeof dir);
  o.formats = FF_PLOT_FORMATS_ALL;
  o.progress = log_progress;
  o.progress_ctx = &pl;
  s = ff_plot_set_new(dir, &o, &d);
  cr_assert_not_null(s);
  for (k = 0; k < 20; k++) {
    snprintf(name, sizeof name, "run%02d", k + 1);
    f.name = name;
    cr_assert_eq(ff_plot_add_event(s, &f, &d), FF_OK);
  }
  cr_assert_eq(ff_plot_render(s, &r, &d), FF_OK, "%s", r.errors);
  cr_log_info("20 event figures x png,svg,pdf: %.2f s with %u gnuplot "
              "process(es), %zu progress calls", r.seconds, r.processes,
              pl.calls);
  for (k = 0; k < 20; k++) {
    snprintf(file, sizeof file, "run%02d.png", k + 1);
    cr_expect(exists(dir, file), "%s missing", file);
    snprintf(file, sizeof file, "run%02d.pdf", k + 1);
    cr_expect(exists(dir, file), "%s missing", file);
  }
  cr_expect_geq(pl.calls, 1);
  cr_expect_eq(pl.last_done, 20);
  cr_expect_eq(pl.last_total, 20);
  cr_expect_eq(pl.backwards, 0, "progress went backwards");
  cr_expect_eq(pl.bad_stage, 0);
  ff_plot_set_free(s);
  rm_tree(dir);
}

/* ------------------------------------------------ detected events (CLI) */

#include <gsl/gsl_errno.h>
#include "frostfit/detect.h"
#include "frostfit/simulate.h"

Test(plot, detected_event_maps_fits_and_result)
{
  char dir[64], want[64];
  struct ff_sim_params p;
  struct ff_sim_result r = FF_SIM_RESULT_INIT;
  struct ff_event_list ev = FF_EVENT_LIST_INIT;
  struct ff_detect_params dp = FF_DETECT_PARAMS_DEFAULT;
  struct ff_diag d = FF_DIAG_INIT;
  struct ff_plot_opts o = FF_PLOT_OPTS_DEFAULT;
  struct ff_plot_set *s;
  struct ff_event bad;
  double *t, *y;
  size_t n = 0, k;
  char *gp, *dat;

  gsl_set_error_handler_off();
  ff_sim_params_default(&p);
  p.molality_mol_kg = 0.137;   /* synthetic curve, a salt-like solution */
  p.vant_hoff_i = 1.87;
  p.seed = 11;
  cr_assert_eq(ff_simulate_run(&p, &r, &d), FF_OK, "%s", d.msg);
  t = malloc(r.n * sizeof *t);
  y = malloc(r.n * sizeof *y);
  cr_assert(t != NULL && y != NULL);
  for (k = 0; k < r.n; k++)
    if (isfinite(r.temp_c[k])) {
      t[n] = r.t_s[k];
      y[n++] = r.temp_c[k];
    }
  dp.method = FF_METHOD_EXTRAPOLATE;
  cr_assert_eq(ff_detect_run(t, y, n, &dp, &ev, &d), FF_OK, "%s", d.msg);
  cr_assert_geq(ev.n, 1);
  cr_assert(ev.v[0].trusted, "%s", ev.v[0].status_reason);

  make_tmpdir(dir, sizeof dir);
  o.no_render = 1;
  s = ff_plot_set_new(dir, &o, &d);
  cr_assert_not_null(s);
  cr_assert_eq(ff_plot_add_detected(s, "lab/run 7.csv", "T1", t, y, n,
                                    &ev.v[0], &d), FF_OK, "%s", d.msg);
  gp = slurp(dir, "run_7_T1_c1.gp", NULL);
  dat = slurp(dir, "run_7_T1_c1.dat", NULL);
  cr_assert_not_null(gp);
  cr_assert_not_null(dat);
  snprintf(want, sizeof want, "Tf = %.10g ", ev.v[0].freezing_point_c);
  cr_expect(strstr(gp, want) != NULL, "no '%s' in the script", want);
  cr_expect(strstr(gp, "method_text = 'extrapolate'") != NULL);
  cr_expect(strstr(gp, "title_text = 'run 7.csv, T1, freeze 1'") != NULL);
  cr_expect(strstr(dat, "fitted freezing branch") != NULL);
  cr_expect(strstr(dat, "extrapolation to the reading instant") != NULL);
  free(gp);
  free(dat);

  /* An untrusted event is never drawn with a number. */
  bad = ev.v[0];
  bad.trusted = 0;
  snprintf(bad.status_reason, sizeof bad.status_reason, "branch too short");
  cr_expect_eq(ff_plot_add_detected(s, "x.csv", "T1", t, y, n, &bad, &d),
               FF_EUNTRUSTED);
  cr_expect(strstr(d.msg, "branch too short") != NULL, "%s", d.msg);
  ff_plot_set_free(s);
  rm_tree(dir);
  ff_event_list_release(&ev);
  ff_sim_result_release(&r);
  free(t);
  free(y);
}

/* Optional parts left out: every script must still run without a word on
 * stderr (gnuplot warns about empty plots, missing ranges, ...). */
Test(plot, sparse_descriptions_render_cleanly)
{
  char dir[64], err[2048];
  struct ff_diag d = FF_DIAG_INIT;
  struct ff_plot_opts o = FF_PLOT_OPTS_DEFAULT;
  struct ff_plot_report r;
  struct event_data ev;
  struct solute_data sd;
  struct unknown_data ud;
  struct ff_plot_event_fig ef = make_event(&ev, "bare_event", "no fits");
  struct ff_plot_solute_fig sf = make_solute(&sd, "bare_solute");
  struct ff_plot_unknown_fig uf = make_unknown(&ud, "bare_unknown");
  struct ff_plot_run runs[2] = {
    { "b1", NULL, 0.004, 0.001, NAN, NAN, NAN, NAN, NAN },
    { "b2", "", -0.002, NAN, NAN, NAN, NAN, NAN, NAN } };
  struct ff_plot_overview_fig of = { "bare_overview", "blanks only", runs, 2,
                                     NULL, 0 };
  struct ff_plot_set *s;
  static const char *const stems[] = { "bare_event", "bare_solute",
                                       "bare_unknown", "bare_overview" };
  size_t k;

  if (!have_gnuplot())
    cr_skip_test("gnuplot is not installed");
  ef.liquid.n = ef.freezing.n = ef.extrap.n = 0;
  ef.t_nucleation_s = NAN;
  ef.u_freezing_point_k = NAN;
  ef.t_read_s = 120.0;
  ef.method = NULL;
  sf.n_models = 0;
  sf.u_i = NULL;
  sf.resid_i = NULL;
  sf.m_mol_kg = NULL;
  uf.fit.n = 0;
  uf.u_m_g_mol = NULL;
  uf.m0_g_mol = NAN;
  make_tmpdir(dir, sizeof dir);
  o.formats = FF_PLOT_SVG;
  s = ff_plot_set_new(dir, &o, &d);
  cr_assert_not_null(s);
  cr_assert_eq(ff_plot_add_event(s, &ef, &d), FF_OK, "%s", d.msg);
  cr_assert_eq(ff_plot_add_solute(s, &sf, &d), FF_OK, "%s", d.msg);
  cr_assert_eq(ff_plot_add_unknown(s, &uf, &d), FF_OK, "%s", d.msg);
  cr_assert_eq(ff_plot_add_overview(s, &of, &d), FF_OK, "%s", d.msg);
  cr_expect_eq(ff_plot_render(s, &r, &d), FF_OK, "%s\n%s", d.msg, r.errors);
  cr_expect_str_eq(r.errors, "", "gnuplot said: %s", r.errors);
  for (k = 0; k < 4; k++) {
    char name[64];

    snprintf(name, sizeof name, "%s.svg", stems[k]);
    expect_svg(dir, name);
    snprintf(name, sizeof name, "%s.gp", stems[k]);
    cr_expect_eq(rerun_alone(dir, name, err, sizeof err), 0, "%s", err);
    cr_expect_str_eq(err, "", "%s: %s", name, err);
  }
  ff_plot_set_free(s);
  rm_tree(dir);
}

/* gnuplot is started after a chdir into the output folder: a program
 * given by a relative path must still be found. */
Test(plot, relative_gnuplot_path_still_runs)
{
  char dir[64], out[128], real[4096], link[128];
  struct ff_diag d = FF_DIAG_INIT;
  struct ff_plot_opts o = FF_PLOT_OPTS_DEFAULT;
  struct ff_plot_report r;
  struct event_data ev;
  struct ff_plot_event_fig f = make_event(&ev, "rel", "t");
  struct ff_plot_set *s;

  if (!have_gnuplot())
    cr_skip_test("gnuplot is not installed");
  cr_assert(ff_plot_find_gnuplot(NULL, real, sizeof real));
  cr_assert_eq(real[0], '/');
  make_tmpdir(dir, sizeof dir);
  snprintf(link, sizeof link, "%s/bin", dir);
  cr_assert_eq(mkdir(link, 0700), 0);
  snprintf(link, sizeof link, "%s/bin/gnuplot", dir);
  cr_assert_eq(symlink(real, link), 0);
  cr_assert_eq(chdir(dir), 0);  /* each Criterion test runs in its own process */
  snprintf(out, sizeof out, "%s/out", dir);
  o.gnuplot = "bin/gnuplot";
  s = ff_plot_set_new(out, &o, &d);
  cr_assert_not_null(s);
  cr_assert_eq(ff_plot_add_event(s, &f, &d), FF_OK);
  cr_expect_eq(ff_plot_render(s, &r, &d), FF_OK, "%s\n%s", d.msg, r.errors);
  cr_expect(exists(out, "rel.png"));
  ff_plot_set_free(s);
  rm_tree(dir);
}

Test(plot, render_command_quotes_the_folder_for_the_shell)
{
  char dir[64], sub[128], want[300], file[160];
  struct ff_diag d = FF_DIAG_INIT;
  struct ff_plot_opts o = FF_PLOT_OPTS_DEFAULT;
  struct ff_plot_report r;
  struct ff_plot_set *s;
  FILE *f;

  make_tmpdir(dir, sizeof dir);
  snprintf(sub, sizeof sub, "%s/it's $(id)/figs", dir);
  o.no_render = 1;
  s = ff_plot_set_new(sub, &o, &d);          /* parents are created too */
  cr_assert_not_null(s, "%s", d.msg);
  cr_assert_eq(ff_plot_render(s, &r, &d), FF_OK);
  snprintf(want, sizeof want, "cd '%s/it'\\''s $(id)/figs' && gnuplot "
           "render.gp", dir);
  cr_expect_str_eq(r.command, want);
  cr_expect_eq(r.n_figures, 0);
  ff_plot_set_free(s);

  /* a file where the folder should be */
  snprintf(file, sizeof file, "%s/plain", dir);
  f = fopen(file, "w");
  cr_assert_not_null(f);
  fclose(f);
  cr_expect_null(ff_plot_set_new(file, &o, &d));
  cr_expect_eq(d.status, FF_EIO);
  cr_expect(strstr(d.msg, "not a folder") != NULL, "%s", d.msg);
  rm_tree(dir);
}
