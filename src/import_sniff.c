/* import_sniff.c - recognises a logger CSV's dialect, header and columns
 * from its first bytes, before the importer streams the rest. */
#include "import_impl.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

#define MAX_LINES 2000          /* lines of the sample looked at */
#define MAX_FIELDS 256          /* fields per line looked at */
#define SAMPLE_ROWS 200         /* data rows used to judge a column */
#define WS_WIDE 1               /* split a header on runs of 2+ blanks */

struct line {
  size_t off, len;              /* text without its line end */
  unsigned long no;             /* 1-based physical line */
  int skip;                     /* blank or '#' comment */
  unsigned has;                 /* HAS_* bits: candidate delimiters seen */
};

/* Which candidate delimiters a line holds (tab counts as a blank too). */
#define HAS_SEMICOLON 1u
#define HAS_TAB 2u
#define HAS_COMMA 4u
#define HAS_SPACE 8u
static const unsigned char has_bit[256] = {
  [';'] = HAS_SEMICOLON, ['\t'] = HAS_TAB, [','] = HAS_COMMA,
  [' '] = HAS_SPACE
};

struct span {
  const char *s;
  size_t n;
  int quoted;
};

enum kind { K_MISSING, K_NUM, K_CLOCK, K_DAYTIME, K_ISO, K_DATE, K_TEXT,
            K_COUNT };

struct shape {                  /* one line split with one delimiter */
  size_t nf;
  size_t n_num;                 /* numbers, clock and ISO times */
  size_t n_text;                /* neither those nor missing markers */
};

static int blank(char c)
{
  return c == ' ' || c == '\t';
}

/*
 * Splits one line on delim (' ': runs of blanks, WS_WIDE: runs of two or
 * more blanks). Quotes as in RFC 4180; the span of a quoted field is its
 * inside with "" left undecoded. Returns the field count (may exceed max).
 */
static size_t split(const char *s, size_t n, char delim, struct span *f,
                    size_t max)
{
  size_t i = 0, nf = 0;
  int ws = delim == ' ' || delim == WS_WIDE;

  if (ws) {
    while (i < n && blank(s[i]))
      i++;
    if (i == n)
      return 0;
  }
  for (;;) {
    struct span sp = { s + i, 0, 0 };
    if (!ws)
      while (i < n && blank(s[i]) && s[i] != delim)
        i++;
    if (i < n && s[i] == '"') {
      size_t a = ++i;
      while (i < n) {
        if (s[i] == '"') {
          if (i + 1 < n && s[i + 1] == '"') {
            i += 2;
            continue;
          }
          break;
        }
        i++;
      }
      sp.s = s + a;
      sp.n = i - a;
      sp.quoted = 1;
      if (i < n)
        i++;
      /* text after the closing quote up to the delimiter is dropped */
    } else {
      sp.s = s + i;
    }
    if (ws) {
      size_t a = i;
      for (;;) {
        while (i < n && !blank(s[i]))
          i++;
        if (delim == WS_WIDE && i + 1 < n && s[i] == ' ' && !blank(s[i + 1])) {
          i++;                        /* a single space inside a name */
          continue;
        }
        break;
      }
      if (!sp.quoted)
        sp.n = i - a;
      if (nf < max)
        f[nf] = sp;
      nf++;
      while (i < n && blank(s[i]))
        i++;
      if (i >= n)
        return nf;
      continue;
    }
    {
      size_t a = i;
      while (i < n && s[i] != delim)
        i++;
      if (!sp.quoted) {
        size_t e = i;
        while (e > a && blank(s[e - 1]) && s[e - 1] != delim)
          e--;
        sp.n = e - a;
      }
    }
    if (nf < max)
      f[nf] = sp;
    nf++;
    if (i >= n)
      return nf;
    i++;                              /* past the delimiter */
  }
}

/* Classifies one cell; *dec gets '.' or ',' when it holds a decimal mark. */
static enum kind classify(const char *s, size_t n, char *dec)
{
  double x;
  int date_only;

  *dec = 0;
  /* numbers first: no missing-value marker reads as a number, so the
   * order of these two tests does not matter, and numbers are common */
  if (ff_import_is_number(s, n, '.')) {
    if (memchr(s, '.', n) != NULL)
      *dec = '.';
    return K_NUM;
  }
  if (ff_import_is_missing_text(s, n))
    return K_MISSING;
  if (ff_import_is_number(s, n, ',')) {
    *dec = ',';
    return K_NUM;
  }
  switch (ff_import_parse_clock(s, n, '.', &x)) {
  case 2: return K_CLOCK;
  case 3: return K_DAYTIME;
  default: break;
  }
  if (ff_import_parse_iso(s, n, '.', &x, &date_only) == 0)
    return date_only ? K_DATE : K_ISO;
  return K_TEXT;
}

static struct shape shape_of(const char *s, size_t n, char delim,
                             struct span *f)
{
  struct shape sh = { 0, 0, 0 };
  char dec;

  sh.nf = split(s, n, delim, f, MAX_FIELDS);
  for (size_t k = 0; k < sh.nf && k < MAX_FIELDS; k++) {
    enum kind kd = classify(f[k].s, f[k].n, &dec);
    if (kd == K_NUM || kd == K_CLOCK || kd == K_DAYTIME || kd == K_ISO)
      sh.n_num++;
    else if (kd != K_MISSING)
      sh.n_text++;
  }
  return sh;
}

static int strong(struct shape sh)
{
  return sh.nf >= 2 && sh.n_num >= 2;
}

static int weak(struct shape sh)
{
  return sh.nf >= 2 && sh.n_num >= 1;
}

static int cmp_size(const void *a, const void *b)
{
  size_t x = *(const size_t *)a, y = *(const size_t *)b;
  return (x > y) - (x < y);
}

/* Splits the sample into lines; returns how many (complete ones only). */
static size_t find_lines(const char *buf, size_t start, size_t len, int eof,
                         struct line *ln, size_t max, size_t ends[3])
{
  size_t i = start, n = 0;
  unsigned long no = 1;

  ends[0] = ends[1] = ends[2] = 0;
  while (i < len && n < max) {
    size_t a = i;
    unsigned has = 0;
    while (i < len && buf[i] != '\n' && buf[i] != '\r')
      has |= has_bit[(unsigned char)buf[i++]];
    if (i >= len && !eof)
      break;                          /* cut by the sample's end */
    ln[n].has = has;
    ln[n].off = a;
    ln[n].len = i - a;
    ln[n].no = no++;
    {
      size_t b = a;
      while (b < i && blank(buf[b]))
        b++;
      ln[n].skip = b == i || buf[b] == '#';
    }
    n++;
    if (i < len) {
      if (buf[i] == '\r' && i + 1 < len && buf[i + 1] == '\n') {
        ends[1]++;
        i += 2;
      } else if (buf[i] == '\r') {
        if (i + 1 >= len && !eof)
          break;                      /* may be half of a CRLF */
        ends[2]++;
        i++;
      } else {
        ends[0]++;
        i++;
      }
    }
  }
  return n;
}

static int valid_utf8(const unsigned char *s, size_t n)
{
  for (size_t i = 0; i < n;) {
    size_t k;
    if (s[i] < 0x80) {
      i++;
      continue;
    }
    k = (s[i] & 0xE0) == 0xC0 ? 1 : (s[i] & 0xF0) == 0xE0 ? 2
        : (s[i] & 0xF8) == 0xF0 ? 3 : 0;
    if (k == 0 || i + k >= n)
      return 0;
    for (size_t j = 1; j <= k; j++)
      if ((s[i + j] & 0xC0) != 0x80)
        return 0;
    i += k + 1;
  }
  return 1;
}

/*
 * Copies a header cell, decoding "" and trimming; an empty cell gives
 * "column N". Names are kept as UTF-8: text that is not valid UTF-8 is
 * taken as Latin-1 (a degree sign written as byte 0xB0) and transcoded.
 */
static void copy_name(char *dst, size_t cap, const struct span *sp, size_t k)
{
  char raw[128];
  size_t j = 0;

  for (size_t i = 0; i < sp->n && j + 1 < sizeof raw; i++) {
    if (sp->quoted && sp->s[i] == '"' && i + 1 < sp->n && sp->s[i + 1] == '"')
      i++;
    raw[j++] = sp->s[i];
  }
  while (j > 0 && blank(raw[j - 1]))
    j--;
  raw[j] = '\0';
  if (j == 0) {
    snprintf(dst, cap, "column %zu", k + 1);
  } else if (valid_utf8((const unsigned char *)raw, j)) {
    snprintf(dst, cap, "%s", raw);
  } else {
    size_t o = 0;
    for (size_t i = 0; i < j && o + 3 < cap; i++) {
      unsigned char c = (unsigned char)raw[i];
      if (c < 0x80) {
        dst[o++] = (char)c;
      } else {
        dst[o++] = (char)(0xC0 | (c >> 6));
        dst[o++] = (char)(0x80 | (c & 0x3F));
      }
    }
    dst[o] = '\0';
  }
}

/* Lines up to the first NUL byte, for the report. */
static unsigned long line_of(const char *buf, size_t start, size_t pos)
{
  unsigned long no = 1;

  for (size_t i = start; i < pos; i++)
    if (buf[i] == '\n' || (buf[i] == '\r' && (i + 1 >= pos || buf[i + 1] != '\n')))
      no++;
  return no;
}

static int check_encoding(const char *buf, size_t len, size_t start,
                          const char *path, struct ff_diag *d)
{
  const unsigned char *u = (const unsigned char *)buf;
  struct ff_loc loc = { path, 1, 1 };
  const char *nul;

  if (len >= 2 && ((u[0] == 0xFF && u[1] == 0xFE) || (u[0] == 0xFE && u[1] == 0xFF)))
    return ff_diag_set(d, FF_EINPUT, &loc,
                       "expected UTF-8 or Latin-1 text, found UTF-16 (byte-order "
                       "mark %02X %02X); save the file as UTF-8 CSV", u[0], u[1]);
  nul = memchr(buf + start, '\0', len - start);
  if (nul != NULL) {
    size_t n = len < 1024 ? len : 1024, even = 0, odd = 0;
    for (size_t i = 0; i < n; i++)
      if (u[i] == 0)
        *(i % 2 ? &odd : &even) += 1;
    if (n >= 4 && (odd * 10 >= n * 4 || even * 10 >= n * 4))
      return ff_diag_set(d, FF_EINPUT, &loc,
                         "expected UTF-8 or Latin-1 text, found UTF-16 (every "
                         "other byte is NUL); save the file as UTF-8 CSV");
    loc.line = line_of(buf, start, (size_t)(nul - buf));
    return ff_diag_set(d, FF_EINPUT, &loc,
                       "expected text, found a NUL byte (binary data?)");
  }
  return FF_OK;
}

/* Column statistics over the first data rows of the sample. */
struct colstat {
  size_t k[K_COUNT];
  size_t dot, comma;            /* cells with '.' / ',' decimal marks */
};

/*
 * The field count of a line split with delim when strong() holds for it
 * (two fields or more, two of them numbers or times), else 0. The same
 * answer as strong(shape_of(...)), sooner: a line without the delimiter
 * (without any blank for ' ') is one field, and counting stops at two.
 */
static size_t strong_nf(const struct line *ln, const char *s, size_t n,
                        char delim, struct span *f)
{
  size_t nf, num = 0;
  char dec;
  unsigned need = delim == ';' ? HAS_SEMICOLON : delim == '\t' ? HAS_TAB
                  : delim == ',' ? HAS_COMMA
                  : delim == ' ' ? HAS_SPACE | HAS_TAB : 0;

  if (need != 0 ? (ln->has & need) == 0 : memchr(s, delim, n) == NULL)
    return 0;
  nf = split(s, n, delim, f, MAX_FIELDS);
  if (nf < 2)
    return 0;
  for (size_t k = 0; k < nf && k < MAX_FIELDS; k++) {
    enum kind kd = classify(f[k].s, f[k].n, &dec);
    if ((kd == K_NUM || kd == K_CLOCK || kd == K_DAYTIME || kd == K_ISO)
        && ++num >= 2)
      return nf;
  }
  return 0;
}

/* The most common of nfs[0..m) (sorts them; ties: the larger count of
 * fields); *run: how often it occurs. */
static size_t mode_of(size_t *nfs, size_t m, size_t *run_out)
{
  size_t mode = 0, run = 0, best_run = 0, small = 1;
  unsigned short count[MAX_FIELDS + 1];

  /* the usual widths: count them (the same answer as sorting) */
  for (size_t i = 0; i < m && small; i++)
    small = nfs[i] <= MAX_FIELDS;
  if (small && m < 65536) {
    memset(count, 0, sizeof count);
    for (size_t i = 0; i < m; i++)
      count[nfs[i]]++;
    for (size_t w = 0; w <= MAX_FIELDS; w++)
      if (count[w] > 0 && count[w] >= best_run) {
        best_run = count[w];
        mode = w;
      }
    *run_out = best_run;
    return mode;
  }
  qsort(nfs, m, sizeof *nfs, cmp_size);
  for (size_t i = 0; i < m; i++) {
    run = (i > 0 && nfs[i] == nfs[i - 1]) ? run + 1 : 1;
    if (run > best_run || (run == best_run && nfs[i] > mode)) {
      best_run = run;
      mode = nfs[i];
    }
  }
  *run_out = best_run;
  return mode;
}

/* Strong lines' field counts with delim into nfs; returns how many. */
static size_t strong_counts(const char *buf, const struct line *ln,
                            size_t nl, char delim, struct span *f,
                            size_t *nfs)
{
  size_t m = 0;

  for (size_t i = 0; i < nl; i++) {
    size_t nf;
    if (ln[i].skip)
      continue;
    nf = strong_nf(&ln[i], buf + ln[i].off, ln[i].len, delim, f);
    if (nf > 0)
      nfs[m++] = nf;
  }
  return m;
}

/* The delimiter whose strong lines most often agree on a width, and that
 * width (the mode of fields, as mode_fields() gives it). */
static int pick_delimiter(const char *buf, const struct line *ln, size_t nl,
                          struct span *f, size_t *nfs, char *best,
                          size_t *best_mode)
{
  static const char cand[] = { ';', '\t', ',', ' ' };
  size_t best_score = 0;

  *best = 0;
  *best_mode = 0;
  for (size_t c = 0; c < sizeof cand; c++) {
    size_t m = strong_counts(buf, ln, nl, cand[c], f, nfs), score, mode;
    if (m == 0)
      continue;
    mode = mode_of(nfs, m, &score);
    if (score > best_score) {
      best_score = score;
      *best = cand[c];
      *best_mode = mode;
    }
  }
  return best_score > 0;
}

static size_t mode_fields(const char *buf, const struct line *ln, size_t nl,
                          char delim, struct span *f, size_t *nfs)
{
  size_t run;

  return mode_of(nfs, strong_counts(buf, ln, nl, delim, f, nfs), &run);
}

static int odd_quotes(const char *s, size_t n)
{
  size_t q = 0;

  for (size_t i = 0; i < n; i++)
    q += s[i] == '"';
  return (int)(q % 2);
}

/* Index of the first data line: at least two numbers, the table's width,
 * and followed by a row with a number (a metadata line rarely is). */
static size_t first_data(const char *buf, const struct line *ln, size_t nl,
                         char delim, size_t mode, struct span *f)
{
  for (size_t i = 0; i < nl; i++) {
    struct shape sh;
    int ok = 1;
    if (ln[i].skip)
      continue;
    sh = shape_of(buf + ln[i].off, ln[i].len, delim, f);
    if (!strong(sh) || sh.nf != mode)
      continue;
    if (odd_quotes(buf + ln[i].off, ln[i].len))
      return i;                     /* a quoted field goes on below */
    for (size_t j = i + 1; j < nl; j++) {
      if (ln[j].skip)
        continue;
      ok = weak(shape_of(buf + ln[j].off, ln[j].len, delim, f));
      break;
    }
    if (ok)
      return i;
  }
  return nl;
}

/*
 * A header line that only holds units ("s", "°C", "%") under a line of
 * names: the loggers that write the unit on a line of its own.
 */
static int units_row(const struct ff_column *col, size_t n,
                     const struct span *hf)
{
  size_t units = 0;

  for (size_t c = 0; c < n; c++) {
    char b[160];
    struct ff_header_info h;
    if (hf[c].n == 0)
      continue;
    if (hf[c].n > 12)
      return 0;
    snprintf(b, sizeof b, "(%s)", col[c].name);
    ff_import_header_info(b, &h);
    if (h.unit == FF_UNIT_UNKNOWN && h.time_unit == FF_TIME_NONE
        && h.not_temp == NULL)
      return 0;
    units += h.unit != FF_UNIT_UNKNOWN || h.time_unit != FF_TIME_NONE;
  }
  return units > 0;
}

/* The line of names above a units line hdr, split into f; -1 if none. */
static long names_above(const char *buf, const struct line *ln, long hdr,
                        char delim, size_t nh, struct span *f)
{
  for (long k = hdr - 1; k >= 0; k--) {
    struct shape sh;
    if (ln[k].skip)
      continue;
    sh = shape_of(buf + ln[k].off, ln[k].len, delim, f);
    if (delim == ' ' && sh.nf != nh)
      sh = shape_of(buf + ln[k].off, ln[k].len, WS_WIDE, f);
    return sh.nf == nh && sh.n_num == 0 ? k : -1;
  }
  return -1;
}

/* col[c].name holds the unit; makes it "name (unit)". */
static void merge_names(struct ff_column *col, size_t n, const struct span *f)
{
  for (size_t c = 0; c < n; c++) {
    char unit[128], name[128];
    snprintf(unit, sizeof unit, "%s", col[c].name);
    copy_name(name, sizeof name, &f[c], c);
    if (strncmp(unit, "column ", 7) == 0)
      snprintf(col[c].name, sizeof col[c].name, "%s", name);
    else
      snprintf(col[c].name, sizeof col[c].name, "%.60s (%.60s)", name, unit);
  }
}

static long find_named(const struct ff_column *col, size_t n, const char *spec)
{
  char *end;
  unsigned long k;

  for (size_t i = 0; i < n; i++)
    if (strcmp(col[i].name, spec) == 0)
      return (long)i;
  for (size_t i = 0; i < n; i++)
    if (strcasecmp(col[i].name, spec) == 0)
      return (long)i;
  if (spec[0] >= '0' && spec[0] <= '9') {
    k = strtoul(spec, &end, 10);
    if (*end == '\0' && k >= 1 && k <= n)
      return (long)(k - 1);
  }
  return -1;
}

static enum ff_time_format time_format_of(const struct colstat *cs,
                                          const struct ff_header_info *h)
{
  size_t iso = cs->k[K_ISO], clk = cs->k[K_CLOCK] + cs->k[K_DAYTIME];
  size_t num = cs->k[K_NUM];

  if (iso > 0 && iso >= clk && iso >= num)
    return FF_TIME_ISO8601;
  if (clk > 0 && clk >= num)
    return FF_TIME_CLOCK;
  if (h->time_unit != FF_TIME_NONE)
    return h->time_unit;
  return FF_TIME_SECONDS;
}

/* Cells that can hold a time (numbers, clock, date-time), not date-only. */
static int timeish(const struct colstat *cs)
{
  size_t ok = cs->k[K_NUM] + cs->k[K_CLOCK] + cs->k[K_DAYTIME] + cs->k[K_ISO];
  return ok > 0 && ok >= cs->k[K_TEXT] + cs->k[K_DATE];
}

static int plan_columns(struct ff_sniff *out, const struct colstat *cs,
                        int has_header, const struct ff_import_opts *o,
                        const char *path, struct ff_diag *d)
{
  struct ff_loc loc = { path, 0, 1 };
  size_t nc = out->n_columns;
  long tc = -1;
  unsigned ch = 0;
  struct ff_header_info *hi = calloc(nc, sizeof *hi);

  if (hi == NULL)
    return ff_diag_set(d, FF_EIO, NULL, "out of memory");
  loc.line = has_header ? out->dialect.header_line
                        : out->dialect.first_data_line;
  for (size_t c = 0; c < nc; c++)
    if (has_header)
      ff_import_header_info(out->col[c].name, &hi[c]);
  if (o->time_column != NULL && o->time_column[0] != '\0') {
    tc = find_named(out->col, nc, o->time_column);
    if (tc < 0) {
      free(hi);
      return ff_diag_set(d, FF_EINPUT, &loc,
                         "expected a time column named or numbered '%s', "
                         "found columns 1 to %zu without it", o->time_column, nc);
    }
  }
  for (size_t c = 0; tc < 0 && has_header && c < nc; c++)
    if ((hi[c].time_word || hi[c].time_unit != FF_TIME_NONE)
        && hi[c].unit == FF_UNIT_UNKNOWN && hi[c].not_temp == NULL
        && timeish(&cs[c]))
      tc = (long)c;
  for (size_t c = 0; tc < 0 && c < nc; c++)
    if (cs[c].k[K_ISO] + cs[c].k[K_CLOCK] + cs[c].k[K_DAYTIME] > 0
        && cs[c].k[K_ISO] + cs[c].k[K_CLOCK] + cs[c].k[K_DAYTIME]
             >= cs[c].k[K_NUM] + cs[c].k[K_TEXT]
        && (!has_header || hi[c].unit == FF_UNIT_UNKNOWN))
      tc = (long)c;
  if (tc < 0 && !has_header && timeish(&cs[0]))
    tc = 0;
  if (tc < 0) {
    free(hi);
    return ff_diag_set(d, FF_EINPUT, &loc,
                       "expected a time column (a header such as 'time (s)', "
                       "or clock or date-time cells), found none");
  }
  out->time_col = (size_t)tc;
  out->col[tc].role = FF_ROLE_TIME;
  out->col[tc].time_format = time_format_of(&cs[tc], &hi[tc]);

  for (size_t c = 0; c < nc; c++) {
    struct ff_column *col = &out->col[c];
    const struct colstat *s = &cs[c];
    size_t num = s->k[K_NUM], text = s->k[K_TEXT] + s->k[K_DATE]
                 + s->k[K_ISO] + s->k[K_CLOCK] + s->k[K_DAYTIME];
    if ((long)c == tc)
      continue;
    col->role = FF_ROLE_IGNORE;
    if (has_header && hi[c].unit != FF_UNIT_UNKNOWN) {
      if (num == 0 && text > 0) {
        snprintf(col->why, sizeof col->why, "text, not numbers");
        continue;
      }
      col->role = FF_ROLE_TEMP;
      col->unit = o->unit != FF_UNIT_UNKNOWN ? o->unit : hi[c].unit;
    } else if (has_header && hi[c].not_temp != NULL) {
      snprintf(col->why, sizeof col->why, "header suggests %s",
               hi[c].not_temp);
      continue;
    } else if (has_header && (hi[c].time_word
                              || hi[c].time_unit != FF_TIME_NONE)) {
      snprintf(col->why, sizeof col->why, "another time column");
      continue;
    } else if (num > 0 && num >= text) {
      col->role = FF_ROLE_TEMP;
      col->unit = o->unit != FF_UNIT_UNKNOWN ? o->unit : FF_UNIT_C;
      col->unit_assumed = o->unit == FF_UNIT_UNKNOWN;
    } else if (text > 0) {
      snprintf(col->why, sizeof col->why, "text, not numbers");
      continue;
    } else {
      snprintf(col->why, sizeof col->why, "%s", FF_IMPORT_WHY_EMPTY);
      continue;
    }
    col->channel = ++ch;
  }
  free(hi);
  out->n_channels = ch;
  if (ch == 0) {
    loc.col = tc == 0 && nc > 1 ? 2 : 1;
    return ff_diag_set(d, FF_EINPUT, &loc,
                       "expected at least one temperature column (numbers, or "
                       "a header such as 'T (C)'), found none");
  }
  return FF_OK;
}

static int no_table(const char *buf, const struct line *ln, size_t nl,
                    int eof, unsigned long long_tail, const char *path,
                    struct ff_diag *d)
{
  struct ff_loc loc = { path, 1, 1 };
  long last = -1;

  if (long_tail > 0) {
    loc.line = long_tail;
    return ff_diag_set(d, FF_EINPUT, &loc,
                       "expected a table of numbers with lines shorter than "
                       "%zu bytes, found a longer line", FF_IMPORT_SNIFF_BYTES / 2);
  }

  for (size_t i = 0; i < nl; i++)
    if (!ln[i].skip)
      last = (long)i;
  if (last < 0) {
    loc.line = nl > 0 ? ln[nl - 1].no : 1;
    return ff_diag_set(d, FF_EINPUT, &loc,
                       "expected a table of numbers, found %s",
                       nl == 0 ? "an empty file" : "only blank or '#' lines");
  }
  if (eof) {
    const char *s = buf + ln[last].off;
    size_t n = ln[last].len;
    if (memchr(s, ',', n) || memchr(s, ';', n) || memchr(s, '\t', n)) {
      loc.line = ln[last].no + 1;
      return ff_diag_set(d, FF_EINPUT, &loc,
                         "expected data rows below the header on line %lu, "
                         "found the end of the file", ln[last].no);
    }
  }
  loc.line = ln[last].no;
  return ff_diag_set(d, FF_EINPUT, &loc,
                     "expected rows of numbers (a time and temperatures), "
                     "found none in the first %lu lines", ln[last].no);
}

int ff_import_sniff(const char *buf, size_t len, int eof, const char *path,
                    const struct ff_import_opts *o, struct ff_sniff *out,
                    struct ff_diag *d)
{
  struct line *ln = NULL;
  struct span *f = NULL, *hf = NULL;
  size_t *nfs = NULL;
  size_t start = 0, nl, ends[3], mode, fd, nh = 0;
  unsigned long long_tail = 0;
  long hdr = -1;
  struct colstat *cs = NULL;
  char delim;
  int st = FF_OK;
  struct ff_loc loc = { path, 1, 1 };

  memset(out, 0, sizeof *out);
  if (len == 0)
    return ff_diag_set(d, FF_EINPUT, &loc,
                       "expected a logger CSV (a time and temperatures), "
                       "found an empty file");
  if (len >= 3 && memcmp(buf, "\xEF\xBB\xBF", 3) == 0) {
    out->dialect.bom = 1;
    start = 3;
  }
  st = check_encoding(buf, len, start, path, d);
  if (st != FF_OK)
    return st;
  ln = malloc(MAX_LINES * sizeof *ln);
  f = malloc(MAX_FIELDS * sizeof *f);
  hf = malloc(MAX_FIELDS * sizeof *hf);
  nfs = malloc(MAX_LINES * sizeof *nfs);
  if (ln == NULL || f == NULL || hf == NULL || nfs == NULL) {
    st = ff_diag_set(d, FF_EIO, NULL, "out of memory");
    goto done;
  }
  nl = find_lines(buf, start, len, eof, ln, MAX_LINES, ends);
  /* the sample stops inside a line longer than half of it */
  if (!eof && nl < MAX_LINES
      && len - (nl ? ln[nl - 1].off + ln[nl - 1].len : start)
           > FF_IMPORT_SNIFF_BYTES / 2)
    long_tail = nl ? ln[nl - 1].no + 1 : 1;
  if (nl == 0 && !eof) {
    loc.line = 1;
    st = ff_diag_set(d, FF_EINPUT, &loc,
                     "expected lines shorter than %zu bytes, found a longer one",
                     FF_IMPORT_SNIFF_BYTES / 2);
    goto done;
  }
  {
    const char *le = "none";
    size_t kinds = (ends[0] > 0) + (ends[1] > 0) + (ends[2] > 0);
    if (kinds > 1)
      le = "mixed";
    else if (ends[1] > 0)
      le = "CRLF";
    else if (ends[0] > 0)
      le = "LF";
    else if (ends[2] > 0)
      le = "CR";
    snprintf(out->dialect.line_end, sizeof out->dialect.line_end, "%s", le);
  }
  if (o->delimiter != 0) {
    delim = o->delimiter;
    mode = mode_fields(buf, ln, nl, delim, f, nfs);
  } else if (!pick_delimiter(buf, ln, nl, f, nfs, &delim, &mode)) {
    st = no_table(buf, ln, nl, eof, long_tail, path, d);
    goto done;
  }
  if (mode == 0) {
    st = no_table(buf, ln, nl, eof, long_tail, path, d);
    goto done;
  }
  fd = first_data(buf, ln, nl, delim, mode, f);
  if (fd >= nl) {
    st = no_table(buf, ln, nl, eof, long_tail, path, d);
    goto done;
  }
  /* rows above it with a time but no temperature yet ("0;---") are data */
  for (long j = (long)fd - 1; j >= 0; j--) {
    struct shape sh;
    if (ln[j].skip)
      continue;
    sh = shape_of(buf + ln[j].off, ln[j].len, delim, f);
    if (!weak(sh) || sh.nf != mode || sh.n_text > 0)
      break;
    fd = (size_t)j;
  }
  /* the header: the line just above the data, text, about as wide */
  for (long j = (long)fd - 1; j >= 0; j--) {
    struct shape sh;
    if (ln[j].skip)
      continue;
    sh = shape_of(buf + ln[j].off, ln[j].len, delim, hf);
    if (delim == ' ' && sh.nf != mode)
      sh = shape_of(buf + ln[j].off, ln[j].len, WS_WIDE, hf);
    if (sh.nf >= 2 && sh.n_num == 0 && sh.nf + 1 >= mode
        && sh.nf <= mode + 1) {
      hdr = j;
      nh = sh.nf;
    }
    break;
  }
  out->dialect.delimiter = delim;
  out->dialect.whitespace = delim == ' ';
  out->dialect.first_data_line = ln[fd].no;
  out->dialect.header_line = hdr >= 0 ? ln[hdr].no : 0;
  out->dialect.metadata_lines = (hdr >= 0 ? ln[hdr].no : ln[fd].no) - 1;
  out->data_offset = ln[fd].off;
  out->n_columns = mode;
  out->col = calloc(mode, sizeof *out->col);
  cs = calloc(mode, sizeof *cs);
  if (out->col == NULL || cs == NULL) {
    st = ff_diag_set(d, FF_EIO, NULL, "out of memory");
    goto done;
  }
  for (size_t c = 0; c < mode; c++) {
    if (hdr >= 0 && c < nh && c < MAX_FIELDS)
      copy_name(out->col[c].name, sizeof out->col[c].name, &hf[c], c);
    else
      snprintf(out->col[c].name, sizeof out->col[c].name, "column %zu", c + 1);
  }
  if (hdr >= 0 && units_row(out->col, mode < nh ? mode : nh, hf)) {
    long k = names_above(buf, ln, hdr, delim, nh, f);
    if (k >= 0) {
      merge_names(out->col, mode < nh ? mode : nh, f);
      out->dialect.header_line = ln[k].no;
      out->dialect.metadata_lines = ln[k].no - 1;
    }
  }
  for (size_t i = fd, rows = 0; i < nl && rows < SAMPLE_ROWS; i++) {
    size_t nf;
    if (ln[i].skip)
      continue;
    rows++;
    nf = split(buf + ln[i].off, ln[i].len, delim, f, MAX_FIELDS);
    if (nf != mode)
      continue;                     /* ragged, or part of a quoted field */
    for (size_t c = 0; c < nf && c < mode && c < MAX_FIELDS; c++) {
      char dec;
      enum kind kd = classify(f[c].s, f[c].n, &dec);
      cs[c].k[kd]++;
      cs[c].dot += dec == '.';
      cs[c].comma += dec == ',';
    }
  }
  if (o->decimal != 0) {
    out->dialect.decimal = o->decimal;
  } else {
    size_t dot = 0, comma = 0;
    for (size_t c = 0; c < mode; c++) {
      dot += cs[c].dot;
      comma += cs[c].comma;
    }
    out->dialect.decimal = comma > dot ? ',' : '.';
  }
  st = plan_columns(out, cs, hdr >= 0, o, path, d);

done:
  if (st != FF_OK) {
    free(out->col);
    out->col = NULL;
  }
  free(cs);
  free(nfs);
  free(hf);
  free(f);
  free(ln);
  return st;
}
