/* solvent.c - the solvent table (constants, hazards, sources) read from CSV;
 * used by thermo, the simulator and 'frostfit solvents'. */
#include "frostfit/solvent.h"

#include <ctype.h>
#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

#include <csv.h>

/* Columns of the table; see docs/formats/solvents.md. */
enum col {
  C_NAME, C_ALIASES, C_TF, C_KF, C_DH, C_M, C_CPL, C_CPS, C_HAZARD, C_SOURCE,
  N_COLS
};
static const struct {
  const char *name;
  int required;      /* the column must be in the header */
  int numeric;
  int need_value;    /* the cell must not be empty */
} cols[N_COLS] = {
  [C_NAME] = { "name", 1, 0, 1 },
  [C_ALIASES] = { "aliases", 0, 0, 0 },
  [C_TF] = { "tf_c", 1, 1, 1 },
  [C_KF] = { "kf_k_kg_mol", 1, 1, 1 },
  [C_DH] = { "dh_fus_j_mol", 1, 1, 0 },
  [C_M] = { "m_g_mol", 1, 1, 0 },
  [C_CPL] = { "cp_liq_j_g_k", 0, 1, 0 },
  [C_CPS] = { "cp_sol_j_g_k", 0, 1, 0 },
  [C_HAZARD] = { "hazard", 0, 0, 0 },
  [C_SOURCE] = { "source", 0, 0, 0 },
};

#define MAX_FIELDS 64

struct loader {
  const char *path;
  struct ff_diag *d;
  struct ff_solvent_table *t;      /* rows of this file only */
  int header_done;
  int map[MAX_FIELDS];             /* field index -> enum col, -1 = ignored */
  size_t n_header;
  size_t field;                    /* fields seen in the current record */
  unsigned long line;              /* physical line being parsed */
  unsigned long rec_line;          /* line where the record's first field
                                      ended */
  int skip;                        /* comment record */
  struct ff_solvent cur;
  int have[N_COLS];
  int failed;
  int decimal_comma;               /* ';'-separated file: 6,54 means 6.54 */
};

void ff_solvent_table_release(struct ff_solvent_table *t)
{
  if (t == NULL)
    return;
  free(t->v);
  t->v = NULL;
  t->n = t->cap = 0;
}

static int table_push(struct ff_solvent_table *t, const struct ff_solvent *s)
{
  if (t->n == t->cap) {
    size_t cap = t->cap ? 2 * t->cap : 16;
    struct ff_solvent *v = realloc(t->v, cap * sizeof *v);
    if (v == NULL)
      return -1;
    t->v = v;
    t->cap = cap;
  }
  t->v[t->n++] = *s;
  return 0;
}

static long index_of_name(const struct ff_solvent_table *t, const char *name)
{
  for (size_t i = 0; i < t->n; i++)
    if (strcasecmp(t->v[i].name, name) == 0)
      return (long)i;
  return -1;
}

/* Copies a cell with surrounding blanks removed. */
static void trimmed(const char *s, size_t n, char *out, size_t cap)
{
  while (n > 0 && isspace((unsigned char)*s)) {
    s++;
    n--;
  }
  while (n > 0 && isspace((unsigned char)s[n - 1]))
    n--;
  if (n >= cap)
    n = cap - 1;
  memcpy(out, s, n);
  out[n] = '\0';
}

static int bad(struct loader *L, unsigned long col, const char *fmt, ...)
  __attribute__((format(printf, 3, 4)));
static int bad(struct loader *L, unsigned long col, const char *fmt, ...)
{
  struct ff_loc at = { L->path, L->line, col };
  char msg[600];
  va_list ap;

  va_start(ap, fmt);
  vsnprintf(msg, sizeof msg, fmt, ap);
  va_end(ap);
  L->failed = 1;
  return ff_diag_set(L->d, FF_EINPUT, &at, "%s", msg);
}

static void header_field(struct loader *L, const char *cell)
{
  size_t k = L->field;

  if (k >= MAX_FIELDS) {
    bad(L, k + 1, "too many columns in the header");
    return;
  }
  L->map[k] = -1;
  for (int c = 0; c < N_COLS; c++) {
    if (strcasecmp(cell, cols[c].name) == 0) {
      for (size_t j = 0; j < k; j++)
        if (L->map[j] == c) {
          bad(L, k + 1, "column '%s' appears twice in the header", cell);
          return;
        }
      L->map[k] = c;
    }
  }
}

static int parse_number(struct loader *L, const char *cell, int c, double *out)
{
  char *end, fixed[64];
  double x;

  if (cell[0] == '\0') {
    if (cols[c].need_value)
      return bad(L, L->field + 1, "column '%s' needs a value",
                 cols[c].name);
    *out = NAN;
    return 0;
  }
  if (L->decimal_comma && strchr(cell, ',') != NULL &&
      strchr(cell, '.') == NULL && strlen(cell) < sizeof fixed) {
    char *comma;
    memcpy(fixed, cell, strlen(cell) + 1);
    comma = strchr(fixed, ',');
    *comma = '.';
    if (strchr(comma + 1, ',') == NULL)
      cell = fixed;
  }
  errno = 0;
  x = strtod(cell, &end);
  if (end == cell || *end != '\0' || errno == ERANGE || !isfinite(x))
    return bad(L, L->field + 1, "expected a number in column '%s', found "
               "'%s'", cols[c].name, cell);
  /* Physical ranges: a freezing point above absolute zero, every other
   * constant positive. */
  if ((c == C_TF && x <= -FF_ZERO_C) || (c != C_TF && x <= 0.0))
    return bad(L, L->field + 1, "value out of range in column '%s': '%s'",
               cols[c].name, cell);
  *out = x;
  return 0;
}

static void data_field(struct loader *L, const char *cell)
{
  int c;
  struct ff_solvent *s = &L->cur;

  if (L->field >= L->n_header) {
    if (cell[0] != '\0')
      bad(L, L->field + 1, "more fields than the header has columns, "
          "found '%s'", cell);
    return;
  }
  c = L->map[L->field];
  if (c < 0)
    return;
  L->have[c] = 1;
  if (cols[c].numeric) {
    double *dst[N_COLS] = { [C_TF] = &s->tf_c, [C_KF] = &s->kf_k_kg_mol,
                            [C_DH] = &s->dh_fus_j_mol, [C_M] = &s->m_g_mol,
                            [C_CPL] = &s->cp_liq_j_g_k,
                            [C_CPS] = &s->cp_sol_j_g_k };
    parse_number(L, cell, c, dst[c]);
    return;
  }
  {
    char *dst = c == C_NAME ? s->name : c == C_ALIASES ? s->aliases
              : c == C_HAZARD ? s->hazard : s->source;
    size_t cap = c == C_NAME ? sizeof s->name : c == C_ALIASES
               ? sizeof s->aliases : c == C_HAZARD ? sizeof s->hazard
               : sizeof s->source;
    if (strlen(cell) >= cap) {
      bad(L, L->field + 1, "text in column '%s' longer than %zu characters",
          cols[c].name, cap - 1);
      return;
    }
    if (c == C_NAME) {
      for (size_t i = 0; cell[i]; i++)
        dst[i] = (char)tolower((unsigned char)cell[i]);
      dst[strlen(cell)] = '\0';
    } else {
      memcpy(dst, cell, strlen(cell) + 1);
    }
  }
}

static void on_field(void *data, size_t n, void *ctx)
{
  struct loader *L = ctx;
  char cell[1024];

  if (L->failed)
    return;
  trimmed(data ? data : "", data ? n : 0, cell, sizeof cell);
  if (L->field == 0)
    L->rec_line = L->line;
  if (L->field == 0 && cell[0] == '#')
    L->skip = 1;                    /* a comment line */
  if (!L->skip) {
    if (!L->header_done)
      header_field(L, cell);
    else
      data_field(L, cell);
  }
  L->field++;
}

static void new_row(struct loader *L)
{
  memset(&L->cur, 0, sizeof L->cur);
  L->cur.dh_fus_j_mol = L->cur.m_g_mol = NAN;
  L->cur.cp_liq_j_g_k = L->cur.cp_sol_j_g_k = NAN;
  memset(L->have, 0, sizeof L->have);
  L->skip = 0;
  L->field = 0;
}

static void end_header(struct loader *L)
{
  L->n_header = L->field < MAX_FIELDS ? L->field : MAX_FIELDS;
  for (int c = 0; c < N_COLS; c++) {
    int found = 0;
    for (size_t j = 0; j < L->n_header; j++)
      found |= L->map[j] == c;
    if (cols[c].required && !found) {
      struct ff_loc at = { L->path, L->rec_line, 0 };
      L->failed = 1;
      ff_diag_set(L->d, FF_EINPUT, &at, "the header lacks the column '%s'",
                  cols[c].name);
      return;
    }
  }
  L->header_done = 1;
}

static void end_data_row(struct loader *L)
{
  struct ff_solvent *s = &L->cur;
  long k;

  if (L->field == 1 && s->name[0] == '\0' && !L->have[C_TF])
    return;                         /* a blank line with spaces */
  if (s->name[0] == '\0') {
    unsigned long col = 0;
    for (size_t j = 0; j < L->n_header; j++)
      if (L->map[j] == C_NAME)
        col = j + 1;
    struct ff_loc at = { L->path, L->rec_line, col };
    L->failed = 1;
    ff_diag_set(L->d, FF_EINPUT, &at, "column 'name' needs a value");
    return;
  }
  for (int c = 0; c < N_COLS; c++) {
    if (cols[c].need_value && !L->have[c]) {
      struct ff_loc at = { L->path, L->rec_line, L->field + 1 };
      L->failed = 1;
      ff_diag_set(L->d, FF_EINPUT, &at, "row has %zu fields, the header %zu: "
                  "no '%s'", L->field, L->n_header, cols[c].name);
      return;
    }
  }
  k = index_of_name(L->t, s->name);
  if (k >= 0) {
    struct ff_loc at = { L->path, L->rec_line, 1 };
    L->failed = 1;
    ff_diag_set(L->d, FF_EINPUT, &at, "solvent '%s' appears twice in this "
                "file", s->name);
    return;
  }
  if (table_push(L->t, s) != 0) {
    L->failed = 1;
    ff_diag_set(L->d, FF_EIO, NULL, "out of memory");
  }
}

static void on_record(int term, void *ctx)
{
  struct loader *L = ctx;

  (void)term;
  if (!L->failed && !L->skip) {
    if (!L->header_done)
      end_header(L);
    else
      end_data_row(L);
  }
  new_row(L);
}

/*
 * Looks at the start of the file: skips a UTF-8 byte-order mark (returns its
 * length) and picks the delimiter from the first line that is not a
 * comment: ';' when it has semicolons and no commas (a spreadsheet in a
 * decimal-comma locale), else ','.
 */
static size_t sniff(const unsigned char *b, size_t n, unsigned char *delim)
{
  size_t i = 0, skip = 0;

  if (n >= 3 && b[0] == 0xEF && b[1] == 0xBB && b[2] == 0xBF)
    i = skip = 3;
  *delim = ',';
  while (i < n) {
    size_t e = i, commas = 0, semis = 0;
    while (e < n && b[e] != '\n') {
      commas += b[e] == ',';
      semis += b[e] == ';';
      e++;
    }
    if (b[i] != '#' && e > i + 1) {
      if (semis > 0 && commas == 0)
        *delim = ';';
      break;
    }
    i = e + 1;
  }
  return skip;
}

/* Merges the rows of one file into t: same name replaces, else appends. */
static int merge(struct ff_solvent_table *t, const struct ff_solvent_table *add)
{
  for (size_t i = 0; i < add->n; i++) {
    long k = index_of_name(t, add->v[i].name);
    if (k < 0) {
      if (table_push(t, &add->v[i]) != 0)
        return -1;
    } else {
      t->v[k] = add->v[i];
    }
  }
  return 0;
}

int ff_solvent_table_load(struct ff_solvent_table *t, const char *path,
                          struct ff_diag *d)
{
  struct ff_solvent_table rows = FF_SOLVENT_TABLE_INIT;
  struct loader L = { 0 };
  struct csv_parser p;
  FILE *f;
  unsigned char buf[4096], delim;
  size_t n, from;
  int st = FF_OK, first = 1;

  f = fopen(path, "rb");
  if (f == NULL)
    return ff_diag_set(d, FF_EIO, NULL, "cannot open the solvent table '%s': "
                       "%s", path, strerror(errno));
  if (csv_init(&p, CSV_APPEND_NULL) != 0) {
    fclose(f);
    return ff_diag_set(d, FF_EIO, NULL, "out of memory");
  }
  L.path = path;
  L.d = d;
  L.t = &rows;
  L.line = 1;
  new_row(&L);
  while (!L.failed && (n = fread(buf, 1, sizeof buf, f)) > 0) {
    from = 0;
    if (first) {
      from = sniff(buf, n, &delim);
      csv_set_delim(&p, delim);
      L.decimal_comma = delim == ';';
      first = 0;
    }
    /* One byte at a time, so every callback knows its physical line. */
    for (size_t i = from; i < n && !L.failed; i++) {
      if (buf[i] == '\0') {
        struct ff_loc at = { path, L.line, 0 };
        ff_diag_set(d, FF_EINPUT, &at, "not a text file (a zero byte)");
        L.failed = 1;
        break;
      }
      if (csv_parse(&p, buf + i, 1, on_field, on_record, &L) != 1) {
        struct ff_loc at = { path, L.line, L.field + 1 };
        ff_diag_set(d, FF_EINPUT, &at, "cannot read the CSV: %s",
                    csv_strerror(csv_error(&p)));
        L.failed = 1;
      }
      if (buf[i] == '\n')
        L.line++;
    }
  }
  if (ferror(f) && !L.failed) {
    ff_diag_set(d, FF_EIO, NULL, "cannot read '%s': %s", path,
                strerror(errno));
    L.failed = 1;
  }
  if (!L.failed)
    csv_fini(&p, on_field, on_record, &L);
  csv_free(&p);
  fclose(f);
  if (!L.failed && !L.header_done) {
    struct ff_loc at = { path, 1, 0 };
    ff_diag_set(d, FF_EINPUT, &at, "the solvent table is empty");
    L.failed = 1;
  }
  if (!L.failed && merge(t, &rows) != 0) {
    ff_diag_set(d, FF_EIO, NULL, "out of memory");
    L.failed = 1;
  }
  if (L.failed)
    st = d->status != FF_OK ? (int)d->status : FF_EINPUT;
  ff_solvent_table_release(&rows);
  return st;
}

/* True when name equals one of the '|'-separated aliases. */
static int alias_match(const char *aliases, const char *name)
{
  size_t n = strlen(name);
  const char *p = aliases;

  while (*p) {
    const char *e = strchr(p, '|');
    size_t len = e ? (size_t)(e - p) : strlen(p);
    char a[128];
    trimmed(p, len, a, sizeof a);
    if (strlen(a) == n && strcasecmp(a, name) == 0)
      return 1;
    p += len;
    if (*p == '|')
      p++;
  }
  return 0;
}

const struct ff_solvent *ff_solvent_find(const struct ff_solvent_table *t,
                                         const char *name)
{
  long k;

  if (t == NULL || name == NULL)
    return NULL;
  if ((k = index_of_name(t, name)) >= 0)
    return &t->v[k];
  for (size_t i = 0; i < t->n; i++)
    if (alias_match(t->v[i].aliases, name))
      return &t->v[i];
  return NULL;
}

double ff_solvent_kf_calc(const struct ff_solvent *s)
{
  double tk = s->tf_c + FF_ZERO_C;

  /* Kf = R Tf^2 M / dH_fus (CRC Handbook, "Cryoscopic Constants" table);
   * M in kg/mol for a molality basis. */
  return FF_GAS_R * tk * tk * (s->m_g_mol * 1e-3) / s->dh_fus_j_mol;
}

double ff_solvent_frozen_per_k(const struct ff_solvent *s)
{
  /* Heat to warm the sample back by 1 K equals the latent heat of the ice
   * that forms: f = cp / L per K of supercooling (the classic 1/80 rule for
   * water, Proc. Soc. Exp. Biol. Med. vol. 28,
   * doi 10.3181/00379727-28-5588). */
  return s->cp_liq_j_g_k / (s->dh_fus_j_mol / s->m_g_mol);
}

const char *ff_solvent_caution(void)
{
  return "Cold baths (ice-salt, dry-ice slurries) cause frostbite: wear "
         "insulated gloves and goggles. Dry ice releases CO2: never in a "
         "closed room or sealed container. Flammable solvents and bath "
         "liquids: fume hood, no flames or hot plates near them. High-Kf "
         "solvents such as camphor, naphthalene or lauric acid are used as "
         "hot melts: burn and vapour risk. Avoid carcinogenic solvents "
         "(benzene) and skin-absorbed toxic ones (nitrobenzene, phenol). "
         "The hazard texts here are short reminders, not a risk assessment: "
         "follow the current safety data sheet and your local codes.";
}
