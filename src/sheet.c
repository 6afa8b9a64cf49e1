/* sheet.c - run sheet reader: one CSV row per run, checked cell by cell and
 * row against row, before the series pipeline uses it. */
#include "frostfit/sheet.h"

#include <ctype.h>
#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <unistd.h>

#include <csv.h>

#define MAX_SHEET_BYTES (16u << 20)   /* a sheet is typed by hand: 16 MB */
#define MAX_FIELDS 256

/* Bounds that catch typing slips (a mass in mg typed as g, 1e300) while
 * leaving room for any real bench experiment: common practice, no source. */
#define SOLVENT_G_MAX 1e5
#define SOLUTE_G_MAX 1e4
#define MOLALITY_MAX 30.0
#define MOLAR_MASS_MIN 1.0
#define MOLAR_MASS_MAX 1e7
#define KF_MAX 1000.0
#define PARTICLES_MAX 50
#define HYDRATE_MAX 50.0
#define CYCLE_MAX 10000
#define CHARGE_MAX 4
/* IAPWS molar mass of H2O (REFERENCES.md section 0, [C] constants). */
#define FF_SHEET_M_WATER_G_MOL 18.015268

static const char *const col_names[FF_SHEET_NCOLS] = {
  "run", "file", "channel", "cycle", "role", "solvent", "solvent_g",
  "solute", "solute_g", "molality", "molar_mass", "formula", "particles",
  "hydrate_waters", "kf", "blank", "note", "z_plus", "z_minus",
  "balance_res_g", "thermo_res_k", "u_kf", "method", "probe"
};

/* Other spellings accepted in a header (units written out). */
static const struct { const char *alias; enum ff_sheet_col c; } aliases[] = {
  { "id", FF_SC_RUN },
  { "run_id", FF_SC_RUN },
  { "molality_mol_kg", FF_SC_MOLALITY },
  { "molar_mass_g_mol", FF_SC_MOLAR_MASS },
  { "kf_k_kg_mol", FF_SC_KF },
  { "u_kf_k_kg_mol", FF_SC_U_KF },
  { "comment", FF_SC_NOTE },
  { "notes", FF_SC_NOTE },
  { "probe_id", FF_SC_PROBE },
};

static const char *const role_names[] = { "blank", "sample", "unknown",
                                          "standard" };

const char *ff_sheet_col_name(enum ff_sheet_col c)
{
  return (unsigned)c < FF_SHEET_NCOLS ? col_names[c] : "?";
}

const char *ff_sheet_role_name(enum ff_sheet_role r)
{
  return (unsigned)r < 4 ? role_names[r] : "?";
}

static int row_vfail(struct ff_sheet *s, struct ff_sheet_row *r,
                     enum ff_sheet_col c, struct ff_diag *d, const char *fmt,
                     va_list ap)
{
  char text[400];
  struct ff_loc at = { s->path, r->line, s->col[c] };

  vsnprintf(text, sizeof text, fmt, ap);
  if (r->diag.status == FF_OK)
    s->n_bad++;
  ff_diag_set(&r->diag, FF_EINPUT, &at, "column '%s': %s", col_names[c], text);
  ff_diag_set(d, FF_EINPUT, &at, "column '%s': %s", col_names[c], text);
  return FF_EINPUT;
}

int ff_sheet_row_fail(struct ff_sheet *s, struct ff_sheet_row *r,
                      enum ff_sheet_col c, struct ff_diag *d,
                      const char *fmt, ...)
{
  va_list ap;

  va_start(ap, fmt);
  row_vfail(s, r, c, d, fmt, ap);
  va_end(ap);
  return FF_EINPUT;
}

static int row_fail(struct ff_sheet *s, struct ff_sheet_row *r,
                    enum ff_sheet_col c, struct ff_diag *d, const char *fmt,
                    ...) __attribute__((format(printf, 5, 6)));
static int row_fail(struct ff_sheet *s, struct ff_sheet_row *r,
                    enum ff_sheet_col c, struct ff_diag *d, const char *fmt,
                    ...)
{
  va_list ap;

  va_start(ap, fmt);
  row_vfail(s, r, c, d, fmt, ap);
  va_end(ap);
  return FF_EINPUT;
}

/* ---- one logical record split into fields by libcsv ---- */

struct record {
  size_t n;
  char *f[MAX_FIELDS];
  int overflow;
  int nomem;
};

static void on_field(void *data, size_t len, void *ctx)
{
  struct record *rec = ctx;
  char *copy;

  if (rec->n >= MAX_FIELDS) {
    rec->overflow = 1;
    return;
  }
  copy = malloc(len + 1);
  if (copy == NULL) {
    rec->nomem = 1;
    return;
  }
  if (len > 0)
    memcpy(copy, data, len);
  copy[len] = '\0';
  rec->f[rec->n++] = copy;
}

static void on_record(int c, void *ctx)
{
  (void)c;
  (void)ctx;
}

static void record_clear(struct record *rec)
{
  for (size_t i = 0; i < rec->n; i++)
    free(rec->f[i]);
  memset(rec, 0, sizeof *rec);
}

/* Splits text (one logical record, no final newline needed). */
static int split(const char *text, size_t len, char delim, struct record *rec)
{
  struct csv_parser p;

  if (csv_init(&p, CSV_APPEND_NULL) != 0)
    return -1;
  csv_set_delim(&p, (unsigned char)delim);
  if (csv_parse(&p, text, len, on_field, on_record, rec) != len) {
    csv_free(&p);
    return -1;
  }
  csv_fini(&p, on_field, on_record, rec);
  csv_free(&p);
  return rec->nomem ? -1 : 0;
}

/* Trims spaces in place; returns the start. */
static char *trim(char *s)
{
  char *e;

  while (*s != '\0' && isspace((unsigned char)*s))
    s++;
  e = s + strlen(s);
  while (e > s && isspace((unsigned char)e[-1]))
    *--e = '\0';
  return s;
}

static const char *cell(const struct ff_sheet *s, const struct record *rec,
                        enum ff_sheet_col c)
{
  unsigned k = s->col[c];

  if (k == 0 || k > rec->n)
    return "";
  return rec->f[k - 1];
}

/* ---- numbers ---- */

/* Reads a whole cell as a finite number; a decimal comma is taken when the
 * sheet uses ';' between cells (as spreadsheets in such locales write). */
static int read_number(const struct ff_sheet *s, const char *text, double *out)
{
  char buf[64], *end;
  double x;

  if (strlen(text) >= sizeof buf)
    return -1;
  snprintf(buf, sizeof buf, "%s", text);
  if (s->delimiter == ';') {
    char *comma = strchr(buf, ',');
    if (comma != NULL && strchr(buf, '.') == NULL
        && strchr(comma + 1, ',') == NULL)
      *comma = '.';
  }
  errno = 0;
  x = strtod(buf, &end);
  if (end == buf || *end != '\0' || errno == ERANGE || !isfinite(x))
    return -1;
  *out = x;
  return 0;
}

/* Optional number in (lo, hi] (or [lo, hi] when lo_incl); NaN when blank. */
static int get_number(struct ff_sheet *s, struct ff_sheet_row *r,
                      const struct record *rec, enum ff_sheet_col c,
                      double lo, int lo_incl, double hi, const char *unit,
                      double *out, struct ff_diag *d)
{
  const char *t = cell(s, rec, c);
  double x;

  *out = NAN;
  if (t[0] == '\0')
    return 0;
  if (read_number(s, t, &x) != 0)
    return row_fail(s, r, c, d, "expected a number, found '%s'", t);
  if ((lo_incl ? x < lo : x <= lo) || x > hi)
    return row_fail(s, r, c, d, "%s out of range: must be %s %g and at most "
                    "%g%s%s, found '%s'",
                    c == FF_SC_SOLVENT_G || c == FF_SC_SOLUTE_G ? "mass"
                    : "value", lo_incl ? "at least" : "above", lo, hi,
                    unit[0] ? " " : "", unit, t);
  *out = x;
  return 0;
}

/* Optional whole number in [lo, hi]; 0 when blank. */
static int get_int(struct ff_sheet *s, struct ff_sheet_row *r,
                   const struct record *rec, enum ff_sheet_col c, long lo,
                   long hi, int allow_sign, int *out, struct ff_diag *d)
{
  const char *t = cell(s, rec, c);
  char *end;
  long v;

  *out = 0;
  if (t[0] == '\0')
    return 0;
  errno = 0;
  v = strtol(t, &end, 10);
  if (end == t || *end != '\0' || errno == ERANGE)
    return row_fail(s, r, c, d, "expected a whole number, found '%s'", t);
  if (allow_sign && v < 0)
    v = -v;
  if (v < lo || v > hi)
    return row_fail(s, r, c, d, "must be a whole number from %ld to %ld, "
                    "found '%s'", lo, hi, t);
  *out = (int)v;
  return 0;
}

static int copy_text(struct ff_sheet *s, struct ff_sheet_row *r,
                     const struct record *rec, enum ff_sheet_col c, char *dst,
                     size_t n, struct ff_diag *d)
{
  const char *t = cell(s, rec, c);

  if (strlen(t) >= n)
    return row_fail(s, r, c, d, "text longer than %zu characters", n - 1);
  for (const char *p = t; *p; p++)
    if (iscntrl((unsigned char)*p)
        && !(c == FF_SC_NOTE && (*p == '\n' || *p == '\r' || *p == '\t')))
      return row_fail(s, r, c, d, "control character in '%s'", t);
  snprintf(dst, n, "%s", t);
  return 0;
}

static int need(struct ff_sheet *s, struct ff_sheet_row *r,
                const struct record *rec, enum ff_sheet_col c,
                struct ff_diag *d)
{
  if (cell(s, rec, c)[0] != '\0')
    return 0;
  if (s->col[c] == 0)
    return row_fail(s, r, c, d, "not in the header, but a %s run needs it",
                    ff_sheet_role_name(r->role));
  return row_fail(s, r, c, d, "missing; a %s run needs it",
                  ff_sheet_role_name(r->role));
}

/* ---- one row ---- */

static void row_defaults(struct ff_sheet_row *r, unsigned long line)
{
  memset(r, 0, sizeof *r);
  r->line = line;
  r->cycle = 1;
  r->solvent_g = r->solute_g = r->molality_mol_kg = NAN;
  r->molar_mass_g_mol = r->hydrate_waters = NAN;
  r->kf_k_kg_mol = r->u_kf_k_kg_mol = NAN;
  r->balance_res_g = r->thermo_res_k = NAN;
  r->blank_row = -1;
  r->m_anhydrous_g_mol = r->m_weighed_g_mol = NAN;
  snprintf(r->channel, sizeof r->channel, "1");
}

static int parse_role(struct ff_sheet *s, struct ff_sheet_row *r,
                      const struct record *rec, struct ff_diag *d)
{
  const char *t = cell(s, rec, FF_SC_ROLE);

  /* Until read, a row is no role at all: a bad role cell must never make
   * it a blank that other runs are measured against. */
  r->role = FF_SHEET_ROLE_NONE;
  if (t[0] == '\0')
    return row_fail(s, r, FF_SC_ROLE, d, "missing; use blank, sample, "
                    "unknown or standard");
  for (unsigned k = 0; k < 4; k++)
    if (strcasecmp(t, role_names[k]) == 0) {
      r->role = (enum ff_sheet_role)k;
      return 0;
    }
  return row_fail(s, r, FF_SC_ROLE, d, "unknown role '%s'; use blank, "
                  "sample, unknown or standard", t);
}

static int parse_cycle(struct ff_sheet *s, struct ff_sheet_row *r,
                       const struct record *rec, struct ff_diag *d)
{
  const char *t = cell(s, rec, FF_SC_CYCLE);
  char *end;
  long v;

  if (t[0] == '\0')
    return 0;
  if (strcasecmp(t, "last") == 0) {
    r->cycle = FF_SHEET_CYCLE_LAST;
    return 0;
  }
  errno = 0;
  v = strtol(t, &end, 10);
  if (end == t || *end != '\0' || errno == ERANGE || v < 1 || v > CYCLE_MAX)
    return row_fail(s, r, FF_SC_CYCLE, d, "expected 'last' or a cycle "
                    "number from 1, found '%s'", t);
  r->cycle = (unsigned)v;
  return 0;
}

static void resolve_path(const struct ff_sheet *s, struct ff_sheet_row *r)
{
  if (r->file[0] == '/' || strcmp(s->dir, ".") == 0)
    snprintf(r->path, sizeof r->path, "%s", r->file);
  else
    snprintf(r->path, sizeof r->path, "%s/%s", s->dir, r->file);
}

/* Cell-by-cell checks of one data row. Stops at the row's first problem. */
static int parse_row(struct ff_sheet *s, struct ff_sheet_row *r,
                     const struct record *rec, struct ff_diag *d)
{
  int st = 0;
  int part = 0;

  if (copy_text(s, r, rec, FF_SC_RUN, r->run, sizeof r->run, d)
      || copy_text(s, r, rec, FF_SC_FILE, r->file, sizeof r->file, d))
    return FF_EINPUT;
  if (r->run[0] == '\0')
    return row_fail(s, r, FF_SC_RUN, d, "missing run id");
  if (parse_role(s, r, rec, d) || parse_cycle(s, r, rec, d))
    return FF_EINPUT;
  const char *m = cell(s, rec, FF_SC_METHOD);
  if (m[0] != '\0' && ff_method_parse(m, &r->method) != 0)
    return row_fail(s, r, FF_SC_METHOD, d, "unknown method '%s'; use auto, "
                    "plateau, peak, extrapolate, intersect, break or model",
                    m);
  if (need(s, r, rec, FF_SC_FILE, d))
    return FF_EINPUT;
  resolve_path(s, r);
  if (cell(s, rec, FF_SC_CHANNEL)[0] != '\0'
      && copy_text(s, r, rec, FF_SC_CHANNEL, r->channel, sizeof r->channel,
                   d))
    return FF_EINPUT;
  if (need(s, r, rec, FF_SC_SOLVENT, d)
      || copy_text(s, r, rec, FF_SC_SOLVENT, r->solvent, sizeof r->solvent, d)
      || copy_text(s, r, rec, FF_SC_SOLUTE, r->solute, sizeof r->solute, d)
      || copy_text(s, r, rec, FF_SC_FORMULA, r->formula, sizeof r->formula, d)
      || copy_text(s, r, rec, FF_SC_BLANK, r->blank, sizeof r->blank, d)
      || copy_text(s, r, rec, FF_SC_NOTE, r->note, sizeof r->note, d)
      || copy_text(s, r, rec, FF_SC_PROBE, r->probe, sizeof r->probe, d))
    return FF_EINPUT;

  st = get_number(s, r, rec, FF_SC_SOLVENT_G, 0, 0, SOLVENT_G_MAX, "g",
                  &r->solvent_g, d)
    || get_number(s, r, rec, FF_SC_SOLUTE_G, 0, 0, SOLUTE_G_MAX, "g",
                  &r->solute_g, d)
    || get_number(s, r, rec, FF_SC_MOLALITY, 0, 0, MOLALITY_MAX, "mol/kg",
                  &r->molality_mol_kg, d)
    || get_number(s, r, rec, FF_SC_MOLAR_MASS, MOLAR_MASS_MIN, 1,
                  MOLAR_MASS_MAX, "g/mol", &r->molar_mass_g_mol, d)
    || get_int(s, r, rec, FF_SC_PARTICLES, 1, PARTICLES_MAX, 0, &part, d)
    || get_number(s, r, rec, FF_SC_HYDRATE_WATERS, 0, 1, HYDRATE_MAX, "",
                  &r->hydrate_waters, d)
    || get_number(s, r, rec, FF_SC_KF, 0, 0, KF_MAX, "K kg/mol",
                  &r->kf_k_kg_mol, d)
    || get_number(s, r, rec, FF_SC_U_KF, 0, 1, KF_MAX, "K kg/mol",
                  &r->u_kf_k_kg_mol, d)
    || get_int(s, r, rec, FF_SC_Z_PLUS, 1, CHARGE_MAX, 0, &r->z_plus, d)
    || get_int(s, r, rec, FF_SC_Z_MINUS, 1, CHARGE_MAX, 1, &r->z_minus, d)
    || get_number(s, r, rec, FF_SC_BALANCE_RES_G, 0, 0, 10.0, "g",
                  &r->balance_res_g, d)
    || get_number(s, r, rec, FF_SC_THERMO_RES_K, 0, 0, 1.0, "K",
                  &r->thermo_res_k, d);
  if (st)
    return FF_EINPUT;
  r->particles = (unsigned)part;
  if ((r->z_plus == 0) != (r->z_minus == 0))
    return row_fail(s, r, r->z_plus == 0 ? FF_SC_Z_PLUS : FF_SC_Z_MINUS, d,
                    "give both z_plus and z_minus, or neither");
  if (r->role == FF_SHEET_BLANK)
    return 0;

  /* Everything but a blank has a solute and an amount of it. */
  if (need(s, r, rec, FF_SC_SOLUTE, d))
    return FF_EINPUT;
  if (r->role == FF_SHEET_UNKNOWN) {
    if (need(s, r, rec, FF_SC_SOLUTE_G, d) || need(s, r, rec, FF_SC_SOLVENT_G,
                                                   d))
      return FF_EINPUT;
    if (!isnan(r->molality_mol_kg))
      return row_fail(s, r, FF_SC_MOLALITY, d, "an unknown has no known "
                      "molality; give solute_g and solvent_g");
    return 0;
  }
  if (!isnan(r->molality_mol_kg)) {
    if (!isnan(r->solute_g))
      return row_fail(s, r, FF_SC_MOLALITY, d, "give solute_g or molality, "
                      "not both");
    return 0;
  }
  if (isnan(r->solute_g))
    return row_fail(s, r, FF_SC_SOLUTE_G, d, "%s; a %s run needs solute_g "
                    "(or molality)", s->col[FF_SC_SOLUTE_G] ? "missing"
                    : "not in the header", ff_sheet_role_name(r->role));
  if (need(s, r, rec, FF_SC_SOLVENT_G, d))
    return FF_EINPUT;
  if (isnan(r->molar_mass_g_mol) && r->formula[0] == '\0')
    return row_fail(s, r, FF_SC_MOLAR_MASS, d, "%s; give molar_mass or "
                    "formula to turn solute_g into moles",
                    s->col[FF_SC_MOLAR_MASS] ? "missing" : "not in the header");
  return 0;
}

/* ---- rows against each other ---- */

static long find_run(const struct ff_sheet *s, const char *id, size_t before)
{
  for (size_t k = 0; k < before; k++)
    if (strcmp(s->row[k].run, id) == 0)
      return (long)k;
  return -1;
}

static void check_duplicates(struct ff_sheet *s, struct ff_diag *d)
{
  for (size_t k = 0; k < s->n; k++) {
    long j = find_run(s, s->row[k].run, k);
    if (j >= 0 && s->row[k].run[0] != '\0')
      row_fail(s, &s->row[k], FF_SC_RUN, d, "run id '%s' already used on "
               "line %lu", s->row[k].run, s->row[j].line);
  }
}

/* The only blank row of this solvent, -1 when none, -2 when several. */
static long only_blank(const struct ff_sheet *s, const char *solvent)
{
  long found = -1;

  for (size_t k = 0; k < s->n; k++) {
    const struct ff_sheet_row *b = &s->row[k];
    if (b->role == FF_SHEET_BLANK && strcasecmp(b->solvent, solvent) == 0) {
      if (found >= 0)
        return -2;
      found = (long)k;
    }
  }
  return found;
}

/* Fails every good run whose blank has failed: it cannot be used either. */
static void fail_with_bad_blanks(struct ff_sheet *s, struct ff_diag *d)
{
  for (size_t k = 0; k < s->n; k++) {
    struct ff_sheet_row *r = &s->row[k];
    if (r->diag.status == FF_OK && r->blank_row >= 0
        && s->row[r->blank_row].diag.status != FF_OK)
      row_fail(s, r, FF_SC_BLANK, d, "blank '%s' (line %lu) has a problem "
               "of its own", s->row[r->blank_row].run,
               s->row[r->blank_row].line);
  }
}

static void link_blanks(struct ff_sheet *s, struct ff_diag *d)
{
  for (size_t k = 0; k < s->n; k++) {
    struct ff_sheet_row *r = &s->row[k];
    long j;

    if (r->diag.status != FF_OK && r->run[0] == '\0')
      continue;
    if (r->blank[0] == '\0') {
      if (r->role == FF_SHEET_BLANK)
        continue;
      j = only_blank(s, r->solvent);
      if (j >= 0) {
        r->blank_row = j;
        r->blank_auto = 1;
      } else if (r->diag.status == FF_OK) {
        row_fail(s, r, FF_SC_BLANK, d, j == -1
                 ? "missing, and the sheet has no blank run in solvent '%s'"
                 : "missing, and the sheet has several blank runs in solvent "
                   "'%s': name one", r->solvent);
      }
      continue;
    }
    j = -1;
    for (size_t m = 0; m < s->n; m++)
      if (strcmp(s->row[m].run, r->blank) == 0) {
        j = (long)m;
        break;
      }
    if (j < 0) {
      row_fail(s, r, FF_SC_BLANK, d, "no run with id '%s' in the sheet",
               r->blank);
      continue;
    }
    if (s->row[j].role != FF_SHEET_BLANK) {
      row_fail(s, r, FF_SC_BLANK, d, "run '%s' (line %lu) has role '%s', "
               "not blank", r->blank, s->row[j].line,
               ff_sheet_role_name(s->row[j].role));
      continue;
    }
    r->blank_row = j;
  }
}

/* A blank may itself name a reference blank (a drift check); the chain must
 * end. Floyd's idea is overkill for a sheet: walk at most n steps. */
static void check_loops(struct ff_sheet *s, struct ff_diag *d)
{
  for (size_t k = 0; k < s->n; k++) {
    long j = s->row[k].blank_row;
    size_t steps = 0;

    while (j >= 0 && steps <= s->n) {
      if ((size_t)j == k) {
        row_fail(s, &s->row[k], FF_SC_BLANK, d, "blank '%s' leads back to "
                 "run '%s': the blanks form a loop", s->row[k].blank,
                 s->row[k].run);
        break;
      }
      j = s->row[j].blank_row;
      steps++;
    }
  }
  /* A run whose blank is bad cannot be used either; say so once. */
  fail_with_bad_blanks(s, d);
}

/* ---- header ---- */

static int map_header(struct ff_sheet *s, struct record *rec,
                      unsigned long line, struct ff_diag *d)
{
  struct ff_loc at = { s->path, line, 0 };
  size_t used = 0;

  for (size_t k = 0; k < rec->n; k++) {
    char *name = trim(rec->f[k]);
    int found = -1;

    for (char *p = name; *p; p++)
      *p = (char)tolower((unsigned char)*p);
    for (unsigned c = 0; c < FF_SHEET_NCOLS && found < 0; c++)
      if (strcmp(name, col_names[c]) == 0)
        found = (int)c;
    for (size_t a = 0; a < sizeof aliases / sizeof aliases[0] && found < 0;
         a++)
      if (strcmp(name, aliases[a].alias) == 0)
        found = (int)aliases[a].c;
    if (found < 0) {
      if (name[0] != '\0' && used + strlen(name) + 3 < sizeof s->ignored) {
        used += (size_t)snprintf(s->ignored + used, sizeof s->ignored - used,
                                 "%s%s", used ? ", " : "", name);
      }
      continue;
    }
    at.col = k + 1;
    if (s->col[found] != 0)
      return ff_diag_set(d, FF_EINPUT, &at, "column '%s' appears twice in "
                         "the header (columns %u and %zu)", col_names[found],
                         s->col[found], k + 1);
    s->col[found] = (unsigned)(k + 1);
  }
  s->width = rec->n;
  at.col = 0;
  if (s->col[FF_SC_RUN] == 0 || s->col[FF_SC_FILE] == 0
      || s->col[FF_SC_ROLE] == 0)
    return ff_diag_set(d, FF_EINPUT, &at, "the header needs the columns "
                       "'run', 'file' and 'role' (and usually 'solvent', "
                       "'solvent_g', 'solute', 'solute_g', 'blank'); found "
                       "'%s'", rec->n ? "something else" : "nothing");
  return FF_OK;
}

/* ---- the file ---- */

static char *slurp(const char *path, size_t *len, struct ff_diag *d)
{
  FILE *f = fopen(path, "rb");
  char *buf;
  size_t n = 0, cap = 4096;

  if (f == NULL) {
    struct ff_loc at = { path, 0, 0 };
    ff_diag_set(d, FF_EIO, &at, "cannot open the run sheet: %s",
                strerror(errno));
    return NULL;
  }
  buf = malloc(cap + 1);
  while (buf != NULL) {
    size_t got = fread(buf + n, 1, cap - n, f);
    n += got;
    if (n < cap)
      break;
    if (cap >= MAX_SHEET_BYTES) {
      struct ff_loc at = { path, 0, 0 };
      free(buf);
      fclose(f);
      ff_diag_set(d, FF_EINPUT, &at, "run sheet larger than %u MB: not a "
                  "run sheet?", MAX_SHEET_BYTES >> 20);
      return NULL;
    }
    char *bigger = realloc(buf, 2 * cap + 1);
    if (bigger == NULL) {
      free(buf);
      buf = NULL;
      break;
    }
    buf = bigger;
    cap *= 2;
  }
  if (buf == NULL || ferror(f)) {
    struct ff_loc at = { path, 0, 0 };
    free(buf);
    fclose(f);
    ff_diag_set(d, FF_EIO, &at, "cannot read the run sheet");
    return NULL;
  }
  fclose(f);
  buf[n] = '\0';
  *len = n;
  return buf;
}

static char sniff_delimiter(const char *line, size_t len)
{
  size_t commas = 0, semis = 0;
  int quoted = 0;

  for (size_t k = 0; k < len; k++) {
    if (line[k] == '"')
      quoted = !quoted;
    else if (!quoted && line[k] == ',')
      commas++;
    else if (!quoted && line[k] == ';')
      semis++;
  }
  return semis > commas ? ';' : ',';
}

/* A record with nothing but spaces and delimiters (an empty spreadsheet
 * row) or a '#' comment. */
static int skip_record(const char *text, size_t len, char delim)
{
  size_t k = 0;

  while (k < len && (text[k] == ' ' || text[k] == '\t'))
    k++;
  if (k < len && text[k] == '#')
    return 1;
  for (; k < len; k++)
    if (!isspace((unsigned char)text[k]) && text[k] != delim)
      return 0;
  return 1;
}

static int grow(struct ff_sheet *s)
{
  if (s->n < s->cap)
    return 0;
  size_t cap = s->cap ? 2 * s->cap : 16;
  struct ff_sheet_row *v = realloc(s->row, cap * sizeof *v);
  if (v == NULL)
    return -1;
  s->row = v;
  s->cap = cap;
  return 0;
}

static void set_dir(struct ff_sheet *s, const char *path)
{
  const char *slash = strrchr(path, '/');

  if (slash == NULL)
    snprintf(s->dir, sizeof s->dir, ".");
  else if (slash == path)
    snprintf(s->dir, sizeof s->dir, "/");
  else
    snprintf(s->dir, sizeof s->dir, "%.*s", (int)(slash - path), path);
}

/* Handles one logical record starting at physical line `line`. */
static int take_record(struct ff_sheet *s, const char *text, size_t len,
                       unsigned long line, int *have_header, struct ff_diag *d)
{
  struct record rec = { 0 };
  struct ff_loc at = { s->path, line, 0 };
  int st = FF_OK;

  if (skip_record(text, len, s->delimiter))
    return FF_OK;
  if (split(text, len, s->delimiter, &rec) != 0) {
    record_clear(&rec);
    return ff_diag_set(d, FF_EIO, &at, "out of memory");
  }
  if (rec.overflow) {
    record_clear(&rec);
    return ff_diag_set(d, FF_EINPUT, &at, "more than %d cells on a line",
                       MAX_FIELDS);
  }
  if (!*have_header) {
    st = map_header(s, &rec, line, d);
    record_clear(&rec);
    *have_header = 1;
    return st;
  }
  if (grow(s) != 0) {
    record_clear(&rec);
    return ff_diag_set(d, FF_EIO, &at, "out of memory");
  }
  for (size_t k = 0; k < rec.n; k++) {
    char *t = trim(rec.f[k]);
    memmove(rec.f[k], t, strlen(t) + 1);
  }
  struct ff_sheet_row *r = &s->row[s->n++];
  row_defaults(r, line);
  /* Extra cells beyond the header are an error only when not empty. */
  for (size_t k = s->width; k < rec.n; k++) {
    if (rec.f[k][0] != '\0') {
      struct ff_loc cat = { s->path, line, k + 1 };
      if (r->diag.status == FF_OK)
        s->n_bad++;
      ff_diag_set(&r->diag, FF_EINPUT, &cat, "cell %zu has '%s' but the "
                  "header has only %zu columns", k + 1, rec.f[k], s->width);
      ff_diag_set(d, FF_EINPUT, &cat, "cell %zu has '%s' but the header has "
                  "only %zu columns", k + 1, rec.f[k], s->width);
      break;
    }
  }
  if (r->diag.status == FF_OK)
    parse_row(s, r, &rec, d);
  record_clear(&rec);
  return FF_OK;
}

int ff_sheet_read(const char *path, struct ff_sheet *out, struct ff_diag *d)
{
  enum { FIELD_START, UNQUOTED, QUOTED, QUOTE_IN_QUOTED } state = FIELD_START;
  size_t len = 0, start = 0, pos;
  unsigned long line = 1, rec_line = 1;
  int have_header = 0, comment = 0, st = FF_OK;
  char *text;

  snprintf(out->path, sizeof out->path, "%s", path);
  set_dir(out, path);
  text = slurp(path, &len, d);
  if (text == NULL)
    return d->status;
  if (len >= 3 && memcmp(text, "\xEF\xBB\xBF", 3) == 0)
    start = 3;
  if (memchr(text, '\0', len) != NULL) {
    struct ff_loc at = { path, 0, 0 };
    free(text);
    return ff_diag_set(d, FF_EINPUT, &at, "binary content: not a run sheet");
  }
  /* Walk the text with the CSV quoting rules to find where each record
   * ends (libcsv reports fields, not positions): a quote opens a quoted
   * field only at the start of a field, "" inside one is a quote, and a
   * line end inside one belongs to the field. A '#' line is a comment
   * whatever it holds. A record's line is the one it starts on. */
  pos = start;
  for (size_t k = start; k <= len && st == FF_OK; k++) {
    int eol = k == len || text[k] == '\n' || text[k] == '\r';

    if (k == pos) {                     /* a record starts here */
      size_t q = k;
      while (q < len && (text[q] == ' ' || text[q] == '\t'))
        q++;
      comment = q < len && text[q] == '#';
      if (!have_header && !comment) {
        size_t e = k;
        while (e < len && text[e] != '\n' && text[e] != '\r')
          e++;
        out->delimiter = sniff_delimiter(text + k, e - k);
      }
      state = FIELD_START;
    }
    if (!eol && !comment) {
      char c = text[k];
      switch (state) {
      case FIELD_START:
        if (c == '"')
          state = QUOTED;
        else if (c != out->delimiter && c != ' ' && c != '\t')
          state = UNQUOTED;
        break;
      case UNQUOTED:
        if (c == out->delimiter)
          state = FIELD_START;
        break;
      case QUOTED:
        if (c == '"')
          state = QUOTE_IN_QUOTED;
        break;
      case QUOTE_IN_QUOTED:
        state = c == '"' ? QUOTED : c == out->delimiter ? FIELD_START
                                                        : UNQUOTED;
        break;
      }
    }
    if (!eol)
      continue;
    if (state == QUOTED && !comment && k < len) {
      if (text[k] == '\n' || (text[k] == '\r' && text[k + 1] != '\n'))
        line++;
      continue;
    }
    st = take_record(out, text + pos, k - pos, rec_line, &have_header, d);
    if (k < len && text[k] == '\r' && k + 1 < len && text[k + 1] == '\n')
      k++;
    line++;
    rec_line = line;
    pos = k + 1;
  }
  free(text);
  if (st != FF_OK) {
    out->n = 0;
    out->n_bad = 0;
    return st;
  }
  if (!have_header) {
    struct ff_loc at = { path, 0, 0 };
    return ff_diag_set(d, FF_EINPUT, &at, "empty run sheet: no header row");
  }
  if (out->n == 0) {
    struct ff_loc at = { path, 0, 0 };
    return ff_diag_set(d, FF_EINPUT, &at, "the run sheet has a header but "
                       "no runs");
  }
  check_duplicates(out, d);
  link_blanks(out, d);
  check_loops(out, d);
  return out->n_bad ? FF_EINPUT : FF_OK;
}

static void known_solvents(const struct ff_solvent_table *t, char *buf,
                           size_t n)
{
  size_t used = 0;

  buf[0] = '\0';
  for (size_t k = 0; k < t->n && used + 1 < n; k++) {
    int w = snprintf(buf + used, n - used, "%s%s", k ? ", " : "",
                     t->v[k].name);
    if (w < 0 || (size_t)w >= n - used)
      break;
    used += (size_t)w;
  }
}

/* Resolves what was weighed: anhydrous M, hydrate waters, weighed M. */
static int resolve_mass(struct ff_sheet *s, struct ff_sheet_row *r,
                        const struct ff_atomic_table *atoms, struct ff_diag *d)
{
  struct ff_formula f;
  struct ff_diag fd = FF_DIAG_INIT;
  double waters = isnan(r->hydrate_waters) ? 0.0 : r->hydrate_waters;
  double m_anh = r->molar_mass_g_mol;

  if (r->formula[0] != '\0') {
    if (atoms == NULL)
      return row_fail(s, r, FF_SC_FORMULA, d, "no atomic-weight table to "
                      "read '%s' with", r->formula);
    if (ff_formula_parse(atoms, r->formula, &f, NULL, 0, &fd) != FF_OK)
      return row_fail(s, r, FF_SC_FORMULA, d, "%s (character %lu of '%s')",
                      fd.msg, fd.col, r->formula);
    if (f.hydrate_waters > 0 && !isnan(r->hydrate_waters)
        && fabs(f.hydrate_waters - r->hydrate_waters) > 1e-9)
      return row_fail(s, r, FF_SC_HYDRATE_WATERS, d, "%g, but the formula "
                      "'%s' carries %g waters", r->hydrate_waters, r->formula,
                      f.hydrate_waters);
    if (f.hydrate_waters > 0)
      waters = f.hydrate_waters;
    if (!isnan(m_anh)
        && fabs(m_anh - f.m_anhydrous_g_mol) > 0.005 * f.m_anhydrous_g_mol)
      return row_fail(s, r, FF_SC_MOLAR_MASS, d, "%g g/mol disagrees with "
                      "%.4f g/mol of the anhydrous formula '%s' (more than "
                      "0.5 %%); molar_mass is of the anhydrous solute",
                      m_anh, f.m_anhydrous_g_mol, r->formula);
    if (isnan(m_anh))
      m_anh = f.m_anhydrous_g_mol;
  }
  r->waters = waters;
  r->m_anhydrous_g_mol = m_anh;
  r->m_weighed_g_mol = m_anh + waters * FF_SHEET_M_WATER_G_MOL;
  return FF_OK;
}

int ff_sheet_check(struct ff_sheet *s, const struct ff_solvent_table *t,
                   const struct ff_atomic_table *atoms, struct ff_diag *d)
{
  size_t bad_before = s->n_bad;
  char names[300];

  for (size_t k = 0; k < s->n; k++) {
    struct ff_sheet_row *r = &s->row[k];

    if (r->diag.status != FF_OK)
      continue;
    if (t != NULL && ff_solvent_find(t, r->solvent) == NULL) {
      known_solvents(t, names, sizeof names);
      row_fail(s, r, FF_SC_SOLVENT, d, "unknown solvent '%s'; known: %s "
               "(add your own with --solvents FILE)", r->solvent, names);
      continue;
    }
    if (r->role != FF_SHEET_BLANK && resolve_mass(s, r, atoms, d) != FF_OK)
      continue;
    if (access(r->path, R_OK) != 0)
      row_fail(s, r, FF_SC_FILE, d, "cannot open data file '%s': %s",
               r->path, strerror(errno));
  }
  /* Runs measured against a blank that just failed fail with it. */
  fail_with_bad_blanks(s, d);
  return s->n_bad > bad_before ? FF_EINPUT : FF_OK;
}

void ff_sheet_release(struct ff_sheet *s)
{
  if (s == NULL)
    return;
  free(s->row);
  s->row = NULL;
  s->n = s->cap = s->n_bad = 0;
}
