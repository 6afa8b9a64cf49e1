/* test_import_fast.c - the importer's parallel fast path gives the same
 * dataset as the general (libcsv) reader, bit for bit, on every fixture and
 * on randomised files; its number shortcut gives strtod's double.
 * All data here is synthetic (generated below or in the fixtures). */
#include <criterion/criterion.h>
#include <errno.h>
#include <glob.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "frostfit/import.h"
#include "../src/import_impl.h"

/* ---------------------------------------------------------------- compare */

static int same_bits(const double *a, const double *b, size_t n)
{
  return n == 0 || memcmp(a, b, n * sizeof *a) == 0;
}

static void expect_same_dataset(const char *what, const struct ff_dataset *a,
                                const struct ff_dataset *b)
{
  const struct ff_import_stats *x = &a->stats, *y = &b->stats;

  cr_assert_str_eq(a->path, b->path, "%s", what);
  cr_assert_eq(a->n, b->n, "%s: n %zu vs %zu", what, a->n, b->n);
  cr_expect(same_bits(a->t_s, b->t_s, a->n), "%s: times differ", what);
  cr_expect(same_bits(&a->t0_s, &b->t0_s, 1), "%s: t0 differs", what);
  cr_expect_str_eq(a->t0_iso, b->t0_iso, "%s", what);
  cr_assert_eq(a->n_channels, b->n_channels, "%s", what);
  for (size_t k = 0; k < a->n_channels; k++) {
    const struct ff_channel *p = &a->ch[k], *q = &b->ch[k];
    cr_expect_str_eq(p->name, q->name, "%s", what);
    cr_expect_eq(p->column, q->column, "%s", what);
    cr_expect_eq(p->unit_in, q->unit_in, "%s", what);
    cr_expect_eq(p->n_missing, q->n_missing, "%s: channel %zu missing %zu "
                 "vs %zu", what, k + 1, p->n_missing, q->n_missing);
    cr_expect(same_bits(&p->min_c, &q->min_c, 1), "%s: min %zu", what, k + 1);
    cr_expect(same_bits(&p->max_c, &q->max_c, 1), "%s: max %zu", what, k + 1);
    cr_expect(same_bits(p->temp_c, q->temp_c, a->n),
              "%s: channel %zu values differ", what, k + 1);
  }
  cr_assert_eq(a->n_columns, b->n_columns, "%s", what);
  for (size_t c = 0; c < a->n_columns; c++) {
    const struct ff_column *p = &a->col[c], *q = &b->col[c];
    cr_expect_str_eq(p->name, q->name, "%s", what);
    cr_expect_str_eq(p->why, q->why, "%s", what);
    cr_expect(p->role == q->role && p->unit == q->unit
              && p->time_format == q->time_format && p->channel == q->channel
              && p->unit_assumed == q->unit_assumed, "%s: column %zu", what,
              c + 1);
  }
  cr_expect(a->dialect.delimiter == b->dialect.delimiter
            && a->dialect.decimal == b->dialect.decimal
            && strcmp(a->dialect.line_end, b->dialect.line_end) == 0
            && a->dialect.bom == b->dialect.bom
            && a->dialect.header_line == b->dialect.header_line
            && a->dialect.first_data_line == b->dialect.first_data_line
            && a->dialect.metadata_lines == b->dialect.metadata_lines
            && a->dialect.whitespace == b->dialect.whitespace
            && a->dialect.comment_lines == b->dialect.comment_lines,
            "%s: dialect (comment lines %lu vs %lu)", what,
            a->dialect.comment_lines, b->dialect.comment_lines);
  cr_expect(x->rows_read == y->rows_read && x->rows_kept == y->rows_kept
            && x->rows_no_time == y->rows_no_time
            && x->rows_time_backwards == y->rows_time_backwards
            && x->rows_time_duplicate == y->rows_time_duplicate
            && x->rows_all_missing == y->rows_all_missing
            && x->first_backwards_line == y->first_backwards_line
            && x->first_duplicate_line == y->first_duplicate_line
            && x->midnight_wraps == y->midnight_wraps,
            "%s: stats read %zu/%zu no-time %zu/%zu back %zu/%zu (line "
            "%lu/%lu) dup %zu/%zu (line %lu/%lu) all-missing %zu/%zu", what,
            x->rows_read, y->rows_read, x->rows_no_time, y->rows_no_time,
            x->rows_time_backwards, y->rows_time_backwards,
            x->first_backwards_line, y->first_backwards_line,
            x->rows_time_duplicate, y->rows_time_duplicate,
            x->first_duplicate_line, y->first_duplicate_line,
            x->rows_all_missing, y->rows_all_missing);
}

/* check_both(): the fast path made the dataset; the file was imported. */
#define TOOK_FAST 1
#define IMPORTED 2

/*
 * Imports path both ways and checks the results are identical (datasets,
 * or status and diagnostic). Returns TOOK_FAST | IMPORTED as they apply.
 */
static int check_both(const char *path, const struct ff_import_opts *base)
{
  struct ff_import_opts fast = FF_IMPORT_OPTS_DEFAULT, slow;
  struct ff_diag df = FF_DIAG_INIT, dsl = FF_DIAG_INIT;
  struct ff_dataset *a, *b;
  unsigned long before = ff_import_fast_count();
  int took;

  if (base != NULL)
    fast = *base;
  fast.no_fast_path = 0;
  slow = fast;
  slow.no_fast_path = 1;
  a = ff_import_file(path, &fast, &df);
  took = ff_import_fast_count() > before;
  b = ff_import_file(path, &slow, &dsl);
  cr_assert_eq(ff_import_fast_count(), before + (unsigned long)took,
               "%s: the slow path went fast", path);
  cr_assert_eq(a == NULL, b == NULL, "%s: fast %s, slow %s (%s / %s)", path,
               a ? "ok" : "failed", b ? "ok" : "failed", df.msg, dsl.msg);
  if (a == NULL) {
    cr_expect_eq(df.status, dsl.status, "%s", path);
    cr_expect_str_eq(df.path, dsl.path, "%s", path);
    cr_expect(df.line == dsl.line && df.col == dsl.col,
              "%s: at %lu:%lu vs %lu:%lu", path, df.line, df.col, dsl.line,
              dsl.col);
    cr_expect_str_eq(df.msg, dsl.msg, "%s", path);
  } else {
    expect_same_dataset(path, a, b);
  }
  ff_dataset_free(a);
  ff_dataset_free(b);
  return (took ? TOOK_FAST : 0) | (b != NULL ? IMPORTED : 0);
}

static size_t check_glob(const char *pattern, size_t *n_files)
{
  glob_t g;
  size_t fast = 0;

  if (glob(pattern, 0, NULL, &g) != 0)
    return 0;
  for (size_t i = 0; i < g.gl_pathc; i++) {
    fast += (check_both(g.gl_pathv[i], NULL) & TOOK_FAST) != 0;
    (*n_files)++;
  }
  globfree(&g);
  return fast;
}

/* -------------------------------------------------------------- fixtures */

static void check_all_fixtures(void)
{
  static const char *const pat[] = {
    "tests/data/import/*.csv", "tests/data/import/*.tsv",
    "tests/data/import/*.txt", "tests/data/*/*.csv", "datasets/demo/*.csv",
    "datasets/demo/*/*.csv"
  };
  size_t files = 0, fast = 0;

  for (size_t i = 0; i < sizeof pat / sizeof pat[0]; i++)
    fast += check_glob(pat[i], &files);
  cr_assert_gt(files, 40, "found only %zu fixtures", files);
  /* most fixtures are plain numeric tables: the fast path must take them */
  cr_expect_gt(fast, 10, "the fast path took only %zu of %zu files", fast,
               files);
}

Test(import_fast, fixtures_same_as_general_reader)
{
  check_all_fixtures();
}

Test(import_fast, fixtures_same_with_tiny_chunks_and_blocks)
{
  /* chunk and block seams land inside lines, fields and CRLF pairs */
  ff_import_fast_tune(7, 300);
  check_all_fixtures();
  ff_import_fast_tune(64, 1024);
  check_all_fixtures();
  ff_import_fast_tune(0, 0);
}

Test(import_fast, environment_switch_forces_general_reader)
{
  unsigned long before;
  struct ff_diag d = FF_DIAG_INIT;
  struct ff_dataset *ds;

  cr_assert_eq(setenv("FF_IMPORT_NO_FAST", "1", 1), 0);
  before = ff_import_fast_count();
  ds = ff_import_file("tests/data/import/missing.csv", NULL, &d);
  cr_assert_not_null(ds, "%s", d.msg);
  cr_expect_eq(ff_import_fast_count(), before);
  ff_dataset_free(ds);
  cr_assert_eq(unsetenv("FF_IMPORT_NO_FAST"), 0);
  ds = ff_import_file("tests/data/import/missing.csv", NULL, &d);
  cr_assert_not_null(ds, "%s", d.msg);
  cr_expect_eq(ff_import_fast_count(), before + 1);
  ff_dataset_free(ds);
}

/* ------------------------------------------------------- random files */

static uint64_t rng_state;

static uint64_t rnd(void)
{
  /* xorshift64*: deterministic, good enough to pick cases */
  rng_state ^= rng_state >> 12;
  rng_state ^= rng_state << 25;
  rng_state ^= rng_state >> 27;
  return rng_state * 0x2545F4914F6CDD1DULL;
}

static unsigned pick(unsigned n)
{
  return (unsigned)(rnd() % n);
}

/* 1 in n */
static int chance(unsigned n)
{
  return pick(n) == 0;
}

struct gen {
  char delim, dec;
  const char *eol;
  int unit;              /* 0 C, 1 K, 2 F */
  int time_unit;         /* 0 s, 1 min, 2 h, 3 ISO 8601 date-time,
                            4 clock time of day, 5 clock mm:ss */
  unsigned n_temp;
  unsigned rows;
  unsigned iso_shape;    /* ' ' or 'T', fraction, offset: bits 0..2 */
  int quirks;            /* 0: clean rows only */
  int bad;               /* 1: maybe one bad cell somewhere */
};

/* A number as a logger writes it, with decimal mark dec. */
static void put_number(FILE *f, double x, int digits, char dec)
{
  char b[64];

  snprintf(b, sizeof b, "%.*f", digits, x);
  for (char *p = b; *p; p++)
    if (*p == '.')
      *p = dec;
  fputs(b, f);
}

static void put_temp_cell(FILE *f, const struct gen *g, double x)
{
  static const char *const miss[] = { "", "NaN", "---", "n/a", "OL", "ERR",
                                      " ", "-inf", "#N/A" };

  if (g->quirks && chance(40)) {
    fputs(miss[pick(sizeof miss / sizeof miss[0])], f);
    return;
  }
  if (g->quirks && chance(80)) {
    fputs(chance(2) ? "-9999" : "99999", f);
    return;
  }
  if (g->quirks && chance(60)) {
    /* forms the shortcut leaves to the general parser */
    switch (pick(5)) {
    case 0: fprintf(f, " %d", (int)x); return;
    case 1: put_number(f, x, 3, g->dec); fputs("e0", f); return;
    case 2: put_number(f, x, 17, g->dec); return;
    case 3: fputs("+", f); put_number(f, fabs(x), 2, g->dec); return;
    default: put_number(f, x, 2, g->dec); fputs("  ", f); return;
    }
  }
  if (g->unit == 1)
    x += 273.15;
  else if (g->unit == 2)
    x = x * 1.8 + 32.0;
  put_number(f, x, 1 + (int)pick(5), g->dec);
}

/* t seconds after 2026-01-15 00:00 as an ISO 8601 stamp, in one of the
 * shapes loggers write. */
static void put_iso(FILE *f, double t, unsigned shape)
{
  long s = (long)floor(t);
  double frac = t - (double)s;

  fprintf(f, "2026-01-%02ld%c%02ld:%02ld:%02ld", 15 + s / 86400,
          shape & 1 ? ' ' : 'T', s % 86400 / 3600, s % 3600 / 60, s % 60);
  if (shape & 2)
    fprintf(f, ".%03d", (int)(frac * 1000.0));
  if (shape & 4)
    fputs("+01:00", f);
}

static void write_random(const char *path, const struct gen *g)
{
  static const char *const tu[] = { "time (s)", "time (min)", "time (h)",
                                    "timestamp", "Time", "Time" };
  static const char *const uu[] = { "C", "K", "F" };
  FILE *f = fopen(path, "wb");
  double t = (double)pick(1000) / 10.0, step;

  cr_assert_not_null(f, "%s: %s", path, strerror(errno));
  step = g->time_unit == 0 ? 0.5 : g->time_unit == 1 ? 0.01
         : g->time_unit == 2 ? 0.001 : g->time_unit == 3 ? 0.25 : 1.0;
  if (g->time_unit == 4)
    t = 86400.0 - (double)pick(400);    /* passes midnight */
  if (chance(3))
    fprintf(f, "# synthetic logger export%s", g->eol);
  fputs(tu[g->time_unit], f);
  for (unsigned k = 0; k < g->n_temp; k++)
    fprintf(f, "%cT%u (%s)", g->delim, k + 1, uu[g->unit]);
  fputs(g->eol, f);
  for (unsigned i = 0; i < g->rows; i++) {
    double y = 5.0 - 0.01 * i + (double)pick(1000) / 1e4;
    if (g->quirks && chance(50)) {
      fputs(g->eol, f);                 /* blank line */
      continue;
    }
    if (g->quirks && chance(70)) {
      fprintf(f, "# note %u%s", i, g->eol);
      continue;
    }
    if (g->quirks && chance(60))
      t -= step * (double)pick(3);      /* duplicate or backwards */
    if (g->quirks && chance(70))
      fputs(chance(2) ? "" : "NaN", f); /* no time */
    else if (g->time_unit == 3)
      put_iso(f, t, g->iso_shape);
    else if (g->time_unit == 4)
      fprintf(f, "%02ld:%02ld:%02ld", (long)t % 86400 / 3600,
              (long)t % 3600 / 60, (long)t % 60);
    else if (g->time_unit == 5)
      fprintf(f, "%02ld:%02ld", (long)t / 60, (long)t % 60);
    else
      put_number(f, t, g->time_unit == 0 ? 1 : 3, g->dec);
    for (unsigned k = 0; k < g->n_temp; k++) {
      fputc(g->delim, f);
      if (g->quirks && chance(90))
        fputs("", f);                   /* whole row may end up empty */
      else
        put_temp_cell(f, g, y + 0.1 * k);
    }
    if (g->quirks && chance(200))
      fputc(g->delim, f);               /* trailing separator: extra field */
    if (g->bad && chance(g->rows))
      fputs("x", f);                    /* a bad cell or a ragged row */
    if (i + 1 < g->rows || !chance(3))
      fputs(g->eol, f);                 /* last line maybe without end */
    t += step;
  }
  cr_assert_eq(fclose(f), 0);
}

static void random_gen(struct gen *g, unsigned rows)
{
  switch (pick(4)) {
  case 0: g->delim = ','; g->dec = '.'; break;
  case 1: g->delim = ';'; g->dec = ','; break;
  case 2: g->delim = '\t'; g->dec = chance(2) ? '.' : ','; break;
  default: g->delim = ';'; g->dec = '.'; break;
  }
  g->eol = chance(3) ? "\r\n" : "\n";
  g->unit = (int)pick(3);
  g->time_unit = (int)pick(6);
  g->iso_shape = pick(8);
  g->n_temp = 1 + pick(4);
  g->rows = rows;
  g->quirks = !chance(3);
  g->bad = chance(8);
}

static char tmpdir[64];

static void make_tmpdir(void)
{
  snprintf(tmpdir, sizeof tmpdir, "/tmp/ff_import_fast_XXXXXX");
  cr_assert_not_null(mkdtemp(tmpdir));
}

static void remove_tmpdir(void)
{
  char cmd[128];
  glob_t g;

  snprintf(cmd, sizeof cmd, "%s/*", tmpdir);
  if (glob(cmd, 0, NULL, &g) == 0) {
    for (size_t i = 0; i < g.gl_pathc; i++)
      unlink(g.gl_pathv[i]);
    globfree(&g);
  }
  rmdir(tmpdir);
}

Test(import_fast, random_small_files_with_random_seams,
     .init = make_tmpdir, .fini = remove_tmpdir)
{
  char path[128];
  size_t fast = 0, total = 300;
  int r;

  rng_state = 0x9E3779B97F4A7C15ULL;
  for (size_t i = 0; i < total; i++) {
    struct gen g;
    random_gen(&g, 1 + pick(i % 10 == 0 ? 3 : 400));
    snprintf(path, sizeof path, "%s/r%zu.csv", tmpdir, i);
    write_random(path, &g);
    /* seams anywhere: chunks of 1 byte up to more than the file */
    ff_import_fast_tune(1 + pick(3000), 200 + pick(4000));
    r = check_both(path, NULL);
    fast += (r & TOOK_FAST) != 0;
    /* a good file (lines under 200 bytes) must go the fast way */
    cr_assert(g.bad || !(r & IMPORTED) || (r & TOOK_FAST),
              "%s: the fast path declined a plain file", path);
  }
  ff_import_fast_tune(0, 0);
  cr_expect_gt(fast, total / 3, "the fast path took %zu of %zu", fast, total);
}

Test(import_fast, random_large_files_read_in_chunks,
     .init = make_tmpdir, .fini = remove_tmpdir)
{
  char path[128];
  size_t fast = 0;
  int r;

  rng_state = 0xD1B54A32D192ED03ULL;
  /* beyond the 256 KiB sample, so the chunks are read with pread */
  for (size_t i = 0; i < 8; i++) {
    struct gen g;
    random_gen(&g, 20000 + pick(60000));
    g.bad = i == 7;
    snprintf(path, sizeof path, "%s/big%zu.csv", tmpdir, i);
    write_random(path, &g);
    ff_import_fast_tune(i % 2 ? 0 : 65536 + pick(200000),
                        i % 2 ? 0 : 4096 + pick(60000));
    r = check_both(path, NULL);
    fast += (r & TOOK_FAST) != 0;
    cr_assert(g.bad || !(r & IMPORTED) || (r & TOOK_FAST),
              "%s: the fast path declined a plain file", path);
  }
  ff_import_fast_tune(0, 0);
  cr_expect_gt(fast, 3, "the fast path took %zu of 8", fast);
}

Test(import_fast, options_sentinels_and_units_same_both_ways,
     .init = make_tmpdir, .fini = remove_tmpdir)
{
  static const double extra[] = { 5.0, -7.25 };
  struct ff_import_opts o = FF_IMPORT_OPTS_DEFAULT;
  char path[128];
  struct gen g;

  rng_state = 42;
  random_gen(&g, 3000);
  g.quirks = 1;
  g.bad = 0;
  snprintf(path, sizeof path, "%s/opts.csv", tmpdir);
  write_random(path, &g);
  o.sentinels = extra;
  o.n_sentinels = 2;
  o.unit = FF_UNIT_K;
  ff_import_fast_tune(500, 2000);
  cr_expect_eq(check_both(path, &o), TOOK_FAST | IMPORTED);
  o.time_column = "1";
  o.unit = FF_UNIT_UNKNOWN;
  cr_expect_eq(check_both(path, &o), TOOK_FAST | IMPORTED);
  ff_import_fast_tune(0, 0);
}

/* ------------------------------------------------- the number shortcut */

Test(import_fast, quick_numbers_are_strtod_bit_for_bit)
{
  char s[64];
  size_t taken = 0, total = 1000000;

  rng_state = 0x123456789ABCDEFULL;
  for (size_t i = 0; i < total; i++) {
    int n = 0, ni = (int)pick(i % 8 == 0 ? 13 : 8);
    int nf = (int)pick(i % 16 == 0 ? 24 : 9);
    double q, want, via;
    const char *end;
    char dec = i % 5 == 0 ? ',' : '.';
    if (chance(3))
      s[n++] = chance(4) ? '+' : '-';
    for (int k = 0; k < ni; k++)
      s[n++] = (char)('0' + (chance(6) && k == 0 ? 0 : pick(10)));
    if (nf > 0 || chance(4)) {
      s[n++] = dec;
      for (int k = 0; k < nf; k++)
        s[n++] = (char)('0' + pick(10));
    }
    s[n] = '\0';
    end = ff_import_quick_number(s, dec, &q);
    if (end == NULL)
      continue;
    taken++;
    cr_assert_eq(end, s + n, "'%s': stopped early", s);
    cr_assert_eq(ff_import_parse_number(s, (size_t)n, dec, &via), 0, "'%s'",
                 s);
    for (char *p = s; *p; p++)
      if (*p == ',')
        *p = '.';
    errno = 0;
    want = strtod(s, NULL);
    cr_assert(memcmp(&q, &want, sizeof q) == 0 && memcmp(&q, &via,
                                                         sizeof q) == 0,
              "'%s': %.17g, strtod %.17g, parser %.17g", s, q, want, via);
  }
  cr_expect_gt(taken, total / 2, "shortcut took only %zu", taken);
}

Test(import_fast, quick_number_leaves_the_rest_to_the_parser)
{
  static const char *const no[] = {
    "", "-", "+", ".", "1e5", "12345678901234567890", "9007199254740993",
    "1.00000000000000000000001", "inf", "nan", "0x10", "1,5", "abc"
  };
  static const char *const yes[] = { "9007199254740992", "-0.5", "5.",
                                      ".5", "+12.25" };
  char b[64];
  double x;

  for (size_t i = 0; i < sizeof no / sizeof no[0]; i++) {
    const char *e;
    strcpy(b, no[i]);
    e = ff_import_quick_number(b, '.', &x);
    /* either declined, or it stopped before text that is not its own */
    cr_expect(e == NULL || *e != '\0', "'%s' taken whole", no[i]);
  }
  for (size_t i = 0; i < sizeof yes / sizeof yes[0]; i++) {
    strcpy(b, yes[i]);
    cr_expect_eq(ff_import_quick_number(b, '.', &x), b + strlen(b), "'%s'",
                 yes[i]);
    cr_expect(memcmp(&x, &(double){ strtod(yes[i], NULL) }, sizeof x) == 0,
              "'%s': %.17g", yes[i], x);
  }
}

/* --------------------------------------------- digit runs and block ends */

/* Cells with 0 to 10 digits before and after the mark (the shortcut reads
 * runs of up to 8 digits with one load, longer ones one at a time), signs,
 * and the file's last cell right at its end: same as the general reader,
 * small blocks putting numbers at every distance from a block's end. */
Test(import_fast, digit_runs_of_every_length_at_block_ends,
     .init = make_tmpdir, .fini = remove_tmpdir)
{
  static const char digits[] = "9081726354";
  char path[128];
  FILE *f;
  unsigned rows = 30000;

  snprintf(path, sizeof path, "%s/runs.csv", tmpdir);
  f = fopen(path, "wb");
  cr_assert_not_null(f);
  fputs("time (s),T1 (C),T2 (C)\n", f);
  for (unsigned i = 0; i < rows; i++) {
    unsigned ni = i % 11, nf = (i / 11) % 11;
    fprintf(f, "%u.%u", i, i % 10);
    for (unsigned k = 0; k < 2; k++) {
      fputc(',', f);
      if ((i + k) % 3 == 0)
        fputc('-', f);
      for (unsigned d = 0; d < ni; d++)
        fputc(digits[(d + k + i) % 10], f);
      if (nf > 0 || ni == 0) {
        fputc('.', f);
        for (unsigned d = 0; d < nf; d++)
          fputc(digits[(d + 3 * k + i) % 10], f);
        if (nf == 0)
          fputc('5', f);
      }
    }
    if (i + 1 < rows)
      fputc('\n', f);                 /* the last line without its end */
  }
  cr_assert_eq(fclose(f), 0);
  /* beyond the sniffing sample, so blocks are read with pread */
  for (size_t b = 0; b < 6; b++) {
    ff_import_fast_tune(b == 0 ? 0 : 40000 + 7 * b, b == 0 ? 0 : 200 + 13 * b);
    cr_expect_eq(check_both(path, NULL), TOOK_FAST | IMPORTED,
                 "blocks of %zu bytes", b == 0 ? 0 : 200 + 13 * b);
  }
  ff_import_fast_tune(0, 0);
}
