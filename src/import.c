/* import.c - logger CSV to time series, the first pipeline stage: streams
 * the file through libcsv after import_sniff.c has planned the columns. */
#include "frostfit/import.h"
#include "import_impl.h"

#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <strings.h>

#include <csv.h>
#include <gsl/gsl_statistics_double.h>

#define ROW_NOT_BEGUN 0        /* libcsv's parser state between records */
#define FIRST_CAP 1024

struct reader {
  const char *path;
  const struct ff_import_opts *o;
  struct ff_diag *d;
  struct ff_dataset *ds;
  struct csv_parser csv;
  size_t n_columns, time_col;
  size_t min_fields;           /* trailing empty columns may be left out */
  long *chan;                  /* per column: channel index, or -1 */
  enum ff_time_format tf;
  double time_scale;           /* numeric time to seconds */
  char decimal;
  int ws;                      /* blank-aligned columns: empty fields drop */
  /* the record being read */
  size_t field;
  int time_missing;
  double row_t;
  double *row_v;               /* per channel, NaN = missing */
  unsigned long extra_col;     /* first surplus non-empty field, 0 */
  char t_text[40];
  /* clock times of day that pass midnight */
  double day_off, prev_clock;
  int have_prev_clock;
  /* kept rows */
  size_t cap;
  double last_t;
  /* position */
  unsigned long line;
  size_t line_bytes, rec_bytes;
  int in_comment, prev_cr, at_eof, failed;
};

static struct ff_loc here(const struct reader *r, unsigned long col)
{
  struct ff_loc loc = { r->path, r->line, col };
  return loc;
}

static void fail_cell(struct reader *r, size_t c, const char *what,
                      const char *s, size_t n)
{
  char q[64];
  struct ff_loc loc = here(r, (unsigned long)c + 1);

  ff_diag_set(r->d, FF_EINPUT, &loc, "expected %s in column '%s', found '%s'",
              what, r->ds->col[c].name, ff_import_quote(q, sizeof q, s, n));
  r->failed = 1;
}

static void read_time(struct reader *r, size_t c, const char *s, size_t n)
{
  double v;
  int date_only = 0, parts;

  if (r->tf != FF_TIME_CLOCK && r->tf != FF_TIME_ISO8601
      && ff_import_parse_number(s, n, r->decimal, &v) == 0 && isfinite(v)) {
    r->row_t = v * r->time_scale;      /* the common case, first */
    return;
  }
  if (ff_import_is_missing_text(s, n)) {
    r->time_missing = 1;
    return;
  }
  switch (r->tf) {
  case FF_TIME_CLOCK:
    parts = ff_import_parse_clock(s, n, r->decimal, &v);
    if (parts < 0) {
      fail_cell(r, c, "a clock time (mm:ss or hh:mm:ss)", s, n);
      return;
    }
    if (parts == 3) {
      /* a time of day far below the previous one is the next day */
      v += r->day_off;
      if (r->have_prev_clock && v < r->prev_clock - 43200.0) {
        r->day_off += 86400.0;
        v += 86400.0;
        r->ds->stats.midnight_wraps++;
      }
      r->prev_clock = v;
      r->have_prev_clock = 1;
    }
    break;
  case FF_TIME_ISO8601:
    if (ff_import_parse_iso(s, n, r->decimal, &v, &date_only) != 0
        || date_only) {
      fail_cell(r, c, "a date and time (ISO 8601)", s, n);
      return;
    }
    if (r->ds->n == 0) {
      size_t k = n < sizeof r->t_text - 1 ? n : sizeof r->t_text - 1;
      memcpy(r->t_text, s, k);
      r->t_text[k] = '\0';
    }
    break;
  default:
    if (ff_import_parse_number(s, n, r->decimal, &v) != 0 || !isfinite(v)) {
      fail_cell(r, c, "a number (time)", s, n);
      return;
    }
    v *= r->time_scale;
    break;
  }
  r->row_t = v;
}

static double to_celsius(double x, enum ff_temp_unit u)
{
  switch (u) {
  case FF_UNIT_K: return x - 273.15;
  case FF_UNIT_F: return (x - 32.0) * 5.0 / 9.0;
  default: return x;
  }
}

static void read_temp(struct reader *r, size_t c, const char *s, size_t n)
{
  double v;
  long k = r->chan[c];

  /* numbers first: the common case must not pay for the marker list */
  if (ff_import_parse_number(s, n, r->decimal, &v) != 0) {
    if (!ff_import_is_missing_text(s, n))
      fail_cell(r, c, "a number", s, n);
    return;                            /* missing: stays NaN */
  }
  if (ff_import_is_sentinel(v, r->o->sentinels, r->o->n_sentinels))
    return;
  r->row_v[k] = to_celsius(v, r->ds->ch[k].unit_in);
}

static int all_blank(const char *s, size_t n)
{
  for (size_t i = 0; i < n; i++)
    if (s[i] != ' ' && s[i] != '\t')
      return 0;
  return 1;
}

static void on_field(void *field, size_t n, void *data)
{
  struct reader *r = data;
  const char *s = field;
  size_t c;

  if (r->failed || (r->ws && n == 0))
    return;
  c = r->field++;
  if (c >= r->n_columns) {
    if (r->extra_col == 0 && !all_blank(s, n))
      r->extra_col = (unsigned long)c + 1;
    return;
  }
  if (c == r->time_col)
    read_time(r, c, s, n);
  else if (r->chan[c] >= 0)
    read_temp(r, c, s, n);
}

static int grow(struct reader *r)
{
  struct ff_dataset *ds = r->ds;
  size_t cap = r->cap ? 2 * r->cap : FIRST_CAP;
  double *t = realloc(ds->t_s, cap * sizeof *t);

  if (t == NULL)
    return -1;
  ds->t_s = t;
  for (size_t k = 0; k < ds->n_channels; k++) {
    double *y = realloc(ds->ch[k].temp_c, cap * sizeof *y);
    if (y == NULL)
      return -1;
    ds->ch[k].temp_c = y;
  }
  r->cap = cap;
  return 0;
}

static void keep_row(struct reader *r)
{
  struct ff_dataset *ds = r->ds;
  struct ff_import_stats *st = &ds->stats;
  size_t present = 0;

  if (r->time_missing) {
    st->rows_no_time++;
    return;
  }
  if (ds->n > 0) {
    if (!(r->row_t > r->last_t)) {
      if (r->row_t < r->last_t) {
        st->rows_time_backwards++;
        if (st->first_backwards_line == 0)
          st->first_backwards_line = r->line;
      } else {
        st->rows_time_duplicate++;
        if (st->first_duplicate_line == 0)
          st->first_duplicate_line = r->line;
      }
      return;
    }
  }
  for (size_t k = 0; k < ds->n_channels; k++)
    present += !isnan(r->row_v[k]);
  if (present == 0) {
    st->rows_all_missing++;
    return;
  }
  if (ds->n == r->cap && grow(r) != 0) {
    ff_diag_set(r->d, FF_EIO, NULL, "out of memory after %zu rows", ds->n);
    r->failed = 1;
    return;
  }
  ds->t_s[ds->n] = r->row_t;
  for (size_t k = 0; k < ds->n_channels; k++) {
    ds->ch[k].temp_c[ds->n] = r->row_v[k];
    ds->ch[k].n_missing += isnan(r->row_v[k]);
  }
  if (ds->n == 0 && r->tf == FF_TIME_ISO8601)
    snprintf(ds->t0_iso, sizeof ds->t0_iso, "%s", r->t_text);
  ds->n++;
  r->last_t = r->row_t;
}

static void on_record(int term, void *data)
{
  struct reader *r = data;
  size_t nf = r->field;

  r->field = 0;
  r->rec_bytes = 0;
  if (!r->failed && !(r->ws && nf == 0)) {
    struct ff_loc loc;
    r->ds->stats.rows_read++;
    if (nf < r->min_fields) {
      loc = here(r, (unsigned long)nf + 1);
      if (term == -1 && r->at_eof)
        ff_diag_set(r->d, FF_EINPUT, &loc,
                    "expected %zu fields, found %zu: the last row is cut "
                    "short (no line end)", r->n_columns, nf);
      else
        ff_diag_set(r->d, FF_EINPUT, &loc,
                    "expected %zu fields as in the rows above, found %zu",
                    r->n_columns, nf);
      r->failed = 1;
    } else if (r->extra_col != 0) {
      loc = here(r, r->extra_col);
      ff_diag_set(r->d, FF_EINPUT, &loc,
                  "expected %zu fields as in the rows above, found %zu",
                  r->n_columns, nf);
      r->failed = 1;
    } else {
      keep_row(r);
    }
  }
  r->time_missing = 0;
  r->extra_col = 0;
  for (size_t k = 0; k < r->ds->n_channels; k++)
    r->row_v[k] = NAN;
}

static int parse_bytes(struct reader *r, const char *p, size_t n)
{
  if (n == 0)
    return 0;
  if (csv_parse(&r->csv, p, n, on_field, on_record, r) != n && !r->failed) {
    struct ff_loc loc = here(r, (unsigned long)r->field + 1);
    ff_diag_set(r->d, FF_EIO, &loc, "csv reader: %s",
                csv_strerror(csv_error(&r->csv)));
    r->failed = 1;
  }
  return r->failed ? -1 : 0;
}

static int too_long(struct reader *r)
{
  struct ff_loc loc = here(r, (unsigned long)r->field + 1);

  ff_diag_set(r->d, FF_EINPUT, &loc,
              "expected lines (and rows) shorter than %zu bytes, found a "
              "longer one", FF_IMPORT_MAX_LINE);
  r->failed = 1;
  return -1;
}

/*
 * Feeds p[0..n) to libcsv one physical line at a time so that every
 * callback knows its line: libcsv reports fields and records, not
 * positions. CR, LF and CRLF each end a line; '#' lines are skipped.
 */
static int feed(struct reader *r, const char *p, size_t n)
{
  size_t i = 0;

  if (r->prev_cr && n > 0 && p[0] == '\n') {
    /* the LF of a CRLF split between two reads */
    if (!r->in_comment && r->csv.pstate != ROW_NOT_BEGUN
        && parse_bytes(r, p, 1) != 0)
      return -1;
    i = 1;
  }
  r->prev_cr = 0;
  while (i < n && !r->failed) {
    size_t j = i, end;
    int line_start = r->line_bytes == 0, eol;

    while (j < n && p[j] != '\n' && p[j] != '\r' && p[j] != '\0')
      j++;
    if (j < n && p[j] == '\0') {
      struct ff_loc loc = here(r, (unsigned long)r->field + 1);
      ff_diag_set(r->d, FF_EINPUT, &loc,
                  "expected text, found a NUL byte (binary data?)");
      r->failed = 1;
      return -1;
    }
    eol = j < n;
    end = eol ? j + 1 : n;
    if (eol && p[j] == '\r' && j + 1 < n && p[j + 1] == '\n')
      end = j + 2;
    if (line_start && i < n && p[i] == '#'
        && r->csv.pstate == ROW_NOT_BEGUN) {
      r->in_comment = 1;
      r->ds->dialect.comment_lines++;
    }
    r->line_bytes += end - i;
    r->rec_bytes += end - i;
    if (r->line_bytes > FF_IMPORT_MAX_LINE || r->rec_bytes > FF_IMPORT_MAX_LINE)
      return too_long(r);
    if (!r->in_comment && parse_bytes(r, p + i, end - i) != 0)
      return -1;
    if (r->csv.pstate == ROW_NOT_BEGUN)
      r->rec_bytes = 0;
    if (eol) {
      if (p[j] == '\r' && end == n)
        r->prev_cr = 1;
      r->line++;
      r->line_bytes = 0;
      r->in_comment = 0;
    }
    i = end;
  }
  return r->failed ? -1 : 0;
}

static struct ff_dataset *new_dataset(const char *path, struct ff_sniff *sn)
{
  struct ff_dataset *ds = calloc(1, sizeof *ds);

  if (ds == NULL)
    return NULL;
  snprintf(ds->path, sizeof ds->path, "%s", path);
  ds->dialect = sn->dialect;
  ds->n_columns = sn->n_columns;
  ds->col = sn->col;
  sn->col = NULL;
  ds->n_channels = sn->n_channels;
  ds->ch = calloc(sn->n_channels, sizeof *ds->ch);
  if (ds->ch == NULL) {
    ff_dataset_free(ds);
    return NULL;
  }
  for (size_t c = 0; c < ds->n_columns; c++) {
    const struct ff_column *col = &ds->col[c];
    if (col->role == FF_ROLE_TEMP) {
      struct ff_channel *ch = &ds->ch[col->channel - 1];
      snprintf(ch->name, sizeof ch->name, "%s", col->name);
      ch->column = (unsigned)c + 1;
      ch->unit_in = col->unit;
      ch->min_c = ch->max_c = NAN;
    }
  }
  return ds;
}

static int setup(struct reader *r, const struct ff_sniff *sn)
{
  struct ff_dataset *ds = r->ds;
  unsigned char opts = CSV_APPEND_NULL;

  r->n_columns = sn->n_columns;
  r->time_col = sn->time_col;
  r->tf = ds->col[sn->time_col].time_format;
  r->time_scale = r->tf == FF_TIME_MINUTES ? 60.0
                  : r->tf == FF_TIME_HOURS ? 3600.0 : 1.0;
  r->decimal = ds->dialect.decimal;
  r->ws = ds->dialect.whitespace;
  r->line = ds->dialect.first_data_line;
  r->chan = malloc(r->n_columns * sizeof *r->chan);
  r->row_v = malloc(ds->n_channels * sizeof *r->row_v);
  if (r->chan == NULL || r->row_v == NULL)
    return -1;
  for (size_t c = 0; c < r->n_columns; c++)
    r->chan[c] = ds->col[c].role == FF_ROLE_TEMP
                 ? (long)ds->col[c].channel - 1 : -1;
  for (size_t k = 0; k < ds->n_channels; k++)
    r->row_v[k] = NAN;
  r->min_fields = r->n_columns;
  while (r->min_fields > 1 && ds->col[r->min_fields - 1].role == FF_ROLE_IGNORE
         && strcmp(ds->col[r->min_fields - 1].why, FF_IMPORT_WHY_EMPTY) == 0)
    r->min_fields--;
  if (csv_init(&r->csv, opts) != 0)
    return -1;
  csv_set_delim(&r->csv, (unsigned char)ds->dialect.delimiter);
  csv_set_blk_size(&r->csv, 4096);
  return 0;
}

/* Reads as much as fits, looping over short reads (pipes). */
static size_t read_full(FILE *f, char *buf, size_t cap)
{
  size_t n = 0;

  while (n < cap) {
    size_t k = fread(buf + n, 1, cap - n, f);
    if (k == 0)
      break;
    n += k;
  }
  return n;
}

/*
 * The fast path (import_fast.c) for plain numeric tables in regular files;
 * FF_FAST_DECLINED leaves r->ds as it was and the file where it was.
 */
static int try_fast(struct reader *r, FILE *f, const char *buf, size_t len,
                    int eof, const struct ff_sniff *sn)
{
  struct ff_dataset *ds = r->ds;
  struct ff_fast_in in;
  struct stat st;
  enum ff_temp_unit *units;
  int res;

  if (f == stdin || r->ws || (r->tf != FF_TIME_SECONDS
                              && r->tf != FF_TIME_MINUTES
                              && r->tf != FF_TIME_HOURS
                              && r->tf != FF_TIME_ISO8601
                              && r->tf != FF_TIME_CLOCK))
    return FF_FAST_DECLINED;
  memset(&in, 0, sizeof in);
  if (eof) {
    in.fd = -1;                      /* all of it is in the sample */
    in.size = len;
  } else {
    if (fstat(fileno(f), &st) != 0 || !S_ISREG(st.st_mode)
        || st.st_size <= 0)
      return FF_FAST_DECLINED;
    in.fd = fileno(f);
    in.size = (size_t)st.st_size;
  }
  units = malloc((ds->n_channels ? ds->n_channels : 1) * sizeof *units);
  if (units == NULL)
    return FF_FAST_DECLINED;
  for (size_t k = 0; k < ds->n_channels; k++)
    units[k] = ds->ch[k].unit_in;
  in.buf = buf;
  in.len = len;
  in.data_offset = sn->data_offset;
  in.n_columns = r->n_columns;
  in.time_col = r->time_col;
  in.min_fields = r->min_fields;
  in.chan = r->chan;
  in.units = units;
  in.time_scale = r->time_scale;
  in.iso = r->tf == FF_TIME_ISO8601;
  in.clock = r->tf == FF_TIME_CLOCK;
  in.delimiter = ds->dialect.delimiter;
  in.decimal = r->decimal;
  in.sentinels = r->o->sentinels;
  in.n_sentinels = r->o->n_sentinels;
  in.progress = r->o->progress;
  in.progress_ctx = r->o->progress_ctx;
  in.no_fast = r->o->no_fast_path;
  res = ff_import_fast(&in, ds);
  free(units);
  return res;
}

/* After the last row: times from the first kept row, ranges, checks. */
static int finish(struct reader *r)
{
  struct ff_dataset *ds = r->ds;
  struct ff_loc loc = { r->path, ds->dialect.first_data_line,
                        (unsigned long)r->time_col + 1 };
  size_t with_values = 0;

  if (ds->n == 0) {
    const struct ff_import_stats *st = &ds->stats;
    return ff_diag_set(r->d, FF_EINPUT, &loc,
                       "expected rows with a time and a temperature, found "
                       "none (%zu rows: %zu without time, %zu with no "
                       "temperature, %zu duplicate or backwards times)",
                       st->rows_read, st->rows_no_time, st->rows_all_missing,
                       st->rows_time_duplicate + st->rows_time_backwards);
  }
  ds->stats.rows_kept = ds->n;
  ds->t0_s = ds->t_s[0];
  for (size_t i = 0; i < ds->n; i++)
    ds->t_s[i] -= ds->t0_s;
  for (size_t k = 0; k < ds->n_channels; k++) {
    struct ff_channel *ch = &ds->ch[k];
    double lo = INFINITY, hi = -INFINITY;
    for (size_t i = 0; i < ds->n; i++) {
      double y = ch->temp_c[i];
      if (isnan(y))
        continue;
      lo = y < lo ? y : lo;
      hi = y > hi ? y : hi;
    }
    if (ch->n_missing < ds->n) {
      ch->min_c = lo;
      ch->max_c = hi;
      with_values++;
    }
  }
  if (with_values == 0) {
    loc.col = ds->ch[0].column;
    return ff_diag_set(r->d, FF_EINPUT, &loc,
                       "expected numbers in at least one temperature column, "
                       "found only missing values");
  }
  /* give back the unused part of the geometric growth */
  if (r->cap > ds->n) {
    double *t = realloc(ds->t_s, ds->n * sizeof *t);
    if (t != NULL)
      ds->t_s = t;
    for (size_t k = 0; k < ds->n_channels; k++) {
      double *y = realloc(ds->ch[k].temp_c, ds->n * sizeof *y);
      if (y != NULL)
        ds->ch[k].temp_c = y;
    }
  }
  return FF_OK;
}

struct ff_dataset *ff_import_file(const char *path,
                                  const struct ff_import_opts *o,
                                  struct ff_diag *d)
{
  static const struct ff_import_opts defaults = FF_IMPORT_OPTS_DEFAULT;
  struct ff_loc loc = { path, 0, 0 };
  struct reader r;
  struct ff_sniff sn;
  FILE *f;
  char *buf;
  size_t len;
  unsigned long long done = 0, total = 0;
  int eof, st, csv_ready = 0;

  if (o == NULL)
    o = &defaults;
  memset(&r, 0, sizeof r);
  r.path = path;
  r.o = o;
  r.d = d;
  f = strcmp(path, "-") == 0 ? stdin : fopen(path, "rb");
  if (f == NULL) {
    ff_diag_set(d, FF_EIO, &loc, "cannot open: %s", strerror(errno));
    return NULL;
  }
  buf = malloc(FF_IMPORT_SNIFF_BYTES);
  if (buf == NULL) {
    ff_diag_set(d, FF_EIO, &loc, "out of memory");
    goto fail_file;
  }
  len = read_full(f, buf, FF_IMPORT_SNIFF_BYTES);
  if (ferror(f)) {
    ff_diag_set(d, FF_EIO, &loc, "cannot read: %s", strerror(errno));
    goto fail_buf;
  }
  eof = len < FF_IMPORT_SNIFF_BYTES;
  if (ff_import_sniff(buf, len, eof, path, o, &sn, d) != FF_OK)
    goto fail_buf;
  r.ds = new_dataset(path, &sn);
  free(sn.col);
  if (r.ds == NULL) {
    ff_diag_set(d, FF_EIO, &loc, "out of memory");
    goto fail_buf;
  }
  if (setup(&r, &sn) != 0) {
    ff_diag_set(d, FF_EIO, &loc, "out of memory");
    goto fail;
  }
  csv_ready = 1;
  if (try_fast(&r, f, buf, len, eof, &sn) == FF_OK)
    goto done;                       /* the parallel reader took the file */
  if (feed(&r, buf + sn.data_offset, len - sn.data_offset) != 0)
    goto fail;
  {
    struct stat fst;
    if (o->progress != NULL && fstat(fileno(f), &fst) == 0
        && S_ISREG(fst.st_mode))
      total = (unsigned long long)fst.st_size;
  }
  done = len;
  while (!eof) {
    if (o->progress != NULL)
      o->progress(o->progress_ctx, done, total);
    len = read_full(f, buf, FF_IMPORT_CHUNK);
    done += len;
    if (ferror(f)) {
      loc.line = r.line;
      ff_diag_set(d, FF_EIO, &loc, "cannot read: %s", strerror(errno));
      goto fail;
    }
    eof = len < FF_IMPORT_CHUNK;
    if (feed(&r, buf, len) != 0)
      goto fail;
  }
  r.at_eof = 1;
  if (r.line_bytes == 0 && r.line > 1 && r.csv.pstate != ROW_NOT_BEGUN)
    r.line--;                        /* an open quote ran to the end */
  if (!r.in_comment)
    csv_fini(&r.csv, on_field, on_record, &r);
  if (r.failed)
    goto fail;
  st = finish(&r);
  if (st != FF_OK)
    goto fail;
done:
  csv_free(&r.csv);
  free(r.chan);
  free(r.row_v);
  free(buf);
  if (f != stdin)
    fclose(f);
  return r.ds;

fail:
  if (csv_ready)
    csv_free(&r.csv);
  free(r.chan);
  free(r.row_v);
  ff_dataset_free(r.ds);
fail_buf:
  free(buf);
fail_file:
  if (f != stdin)
    fclose(f);
  return NULL;
}

void ff_dataset_free(struct ff_dataset *ds)
{
  if (ds == NULL)
    return;
  for (size_t k = 0; k < ds->n_channels && ds->ch != NULL; k++)
    free(ds->ch[k].temp_c);
  free(ds->ch);
  free(ds->col);
  free(ds->t_s);
  free(ds);
}

long ff_dataset_find_channel(const struct ff_dataset *ds, const char *spec,
                             struct ff_diag *d)
{
  struct ff_loc loc = { ds->path, 0, 0 };
  char *end;
  unsigned long k;

  for (size_t i = 0; i < ds->n_channels; i++)
    if (strcmp(ds->ch[i].name, spec) == 0)
      return (long)i;
  if (spec[0] >= '0' && spec[0] <= '9') {
    errno = 0;
    k = strtoul(spec, &end, 10);
    if (*end == '\0' && errno == 0 && k >= 1 && k <= ds->n_channels)
      return (long)(k - 1);
  }
  for (size_t i = 0; i < ds->n_channels; i++)
    if (strcasecmp(ds->ch[i].name, spec) == 0)
      return (long)i;
  ff_diag_set(d, FF_EINPUT, &loc,
              "expected a channel name or a number from 1 to %zu, found '%s'",
              ds->n_channels, spec);
  return -1;
}

size_t ff_dataset_channel_xy(const struct ff_dataset *ds, size_t k,
                             double *t, double *y)
{
  size_t m = 0;

  if (k >= ds->n_channels)
    return 0;
  for (size_t i = 0; i < ds->n; i++) {
    double v = ds->ch[k].temp_c[i];
    if (isnan(v))
      continue;
    t[m] = ds->t_s[i];
    y[m] = v;
    m++;
  }
  return m;
}

double ff_dataset_median_dt(const struct ff_dataset *ds)
{
  double *dt, med;

  if (ds->n < 2)
    return NAN;
  dt = malloc((ds->n - 1) * sizeof *dt);
  if (dt == NULL)
    return NAN;
  for (size_t i = 0; i + 1 < ds->n; i++)
    dt[i] = ds->t_s[i + 1] - ds->t_s[i];
  med = gsl_stats_median(dt, 1, ds->n - 1);
  free(dt);
  return med;
}

const char *ff_time_format_name(enum ff_time_format f)
{
  switch (f) {
  case FF_TIME_SECONDS: return "seconds";
  case FF_TIME_MINUTES: return "minutes";
  case FF_TIME_HOURS: return "hours";
  case FF_TIME_CLOCK: return "clock";
  case FF_TIME_ISO8601: return "iso8601";
  default: return "none";
  }
}

const char *ff_role_name(enum ff_col_role r)
{
  switch (r) {
  case FF_ROLE_TIME: return "time";
  case FF_ROLE_TEMP: return "temperature";
  default: return "ignored";
  }
}

const char *ff_unit_name(enum ff_temp_unit u)
{
  switch (u) {
  case FF_UNIT_C: return "C";
  case FF_UNIT_K: return "K";
  case FF_UNIT_F: return "F";
  default: return "?";
  }
}
