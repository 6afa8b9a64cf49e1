/* formula.c - atomic-weight table and formula parser; feeds molar masses to thermo. */
#include "frostfit/formula.h"

#include <ctype.h>
#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <csv.h>

#define MAX_COUNT 1e6      /* larger subscripts or coefficients are typos */
#define MAX_DEPTH 32       /* bracket nesting */
#define MAX_FIELDS 16

/* ---- atomic-weight table ------------------------------------------------ */

struct row {               /* fields of one CSV line, libcsv callbacks */
  size_t n;
  char f[MAX_FIELDS][128];
  int too_long;
};

static void on_field(void *s, size_t len, void *data)
{
  struct row *r = data;

  if (r->n >= MAX_FIELDS) {
    r->n++;
    return;
  }
  if (len >= sizeof r->f[0]) {
    r->too_long = 1;
    len = sizeof r->f[0] - 1;
  }
  memcpy(r->f[r->n], s, len);
  r->f[r->n][len] = '\0';
  r->n++;
}

static void on_record(int c, void *data)
{
  (void)c;
  (void)data;
}

/* Splits one physical line into r; -1 on a CSV syntax error. */
static int split_line(const char *line, size_t len, struct row *r)
{
  struct csv_parser p;
  int rc = 0;

  memset(r, 0, sizeof *r);
  if (csv_init(&p, CSV_STRICT | CSV_STRICT_FINI | CSV_APPEND_NULL) != 0)
    return -1;
  if (csv_parse(&p, line, len, on_field, on_record, r) != len)
    rc = -1;
  if (rc == 0 && csv_fini(&p, on_field, on_record, r) != 0)
    rc = -1;
  csv_free(&p);
  return rc;
}

static int find_col(const struct row *r, const char *name)
{
  for (size_t i = 0; i < r->n && i < MAX_FIELDS; i++)
    if (strcmp(r->f[i], name) == 0)
      return (int)i;
  return -1;
}

static int is_symbol(const char *s)
{
  size_t n = strlen(s);

  if (n < 1 || n > 3 || !isupper((unsigned char)s[0]))
    return 0;
  for (size_t i = 1; i < n; i++)
    if (!islower((unsigned char)s[i]))
      return 0;
  return 1;
}

static int append(struct ff_atomic_table *t, const struct ff_element *e)
{
  for (size_t i = 0; i < t->n; i++)
    if (strcmp(t->v[i].sym, e->sym) == 0) {
      t->v[i] = *e;
      return 0;
    }
  if (t->n == t->cap) {
    size_t cap = t->cap ? 2 * t->cap : 128;
    struct ff_element *v = realloc(t->v, cap * sizeof *v);
    if (v == NULL)
      return -1;
    t->v = v;
    t->cap = cap;
  }
  t->v[t->n++] = *e;
  return 0;
}

/* Parses the table into tmp; the caller merges it only on success. */
static int load_rows(FILE *f, const char *path, struct ff_atomic_table *tmp,
                     struct ff_diag *d)
{
  char *line = NULL;
  size_t cap = 0;
  ssize_t len;
  unsigned long lineno = 0;
  int c_sym = -1, c_z = -1, c_w = -1, have_header = 0, rc = FF_OK;
  struct row r;
  struct ff_loc loc = { path, 0, 0 };

  while ((len = getline(&line, &cap, f)) >= 0) {
    lineno++;
    loc.line = lineno;
    while (len > 0 && (line[len - 1] == '\n' || line[len - 1] == '\r'))
      line[--len] = '\0';
    if (len == 0 || line[0] == '#')
      continue;
    if (split_line(line, (size_t)len, &r) != 0 || r.n > MAX_FIELDS ||
        r.too_long) {
      loc.col = 0;
      rc = ff_diag_set(d, FF_EINPUT, &loc, "cannot read this line as CSV "
                       "(bad quoting, more than %d fields or a field over "
                       "127 characters)", MAX_FIELDS);
      break;
    }
    if (!have_header) {
      c_sym = find_col(&r, "symbol");
      c_z = find_col(&r, "z");
      c_w = find_col(&r, "weight_g_mol");
      if (c_sym < 0 || c_z < 0 || c_w < 0) {
        loc.col = 0;
        rc = ff_diag_set(d, FF_EINPUT, &loc, "header must name the columns "
                         "'symbol', 'z' and 'weight_g_mol'");
        break;
      }
      have_header = 1;
      continue;
    }
    struct ff_element e = { .z = 0 };
    int need = c_sym > c_z ? c_sym : c_z;
    need = need > c_w ? need : c_w;
    if ((int)r.n <= need) {
      loc.col = r.n + 1;
      rc = ff_diag_set(d, FF_EINPUT, &loc, "row has %zu fields, the header "
                       "needs %d", r.n, need + 1);
      break;
    }
    if (!is_symbol(r.f[c_sym])) {
      loc.col = (unsigned long)c_sym + 1;
      rc = ff_diag_set(d, FF_EINPUT, &loc, "expected an element symbol in "
                       "column 'symbol', found '%s'", r.f[c_sym]);
      break;
    }
    snprintf(e.sym, sizeof e.sym, "%s", r.f[c_sym]);
    char *end;
    errno = 0;
    long z = strtol(r.f[c_z], &end, 10);
    if (errno != 0 || end == r.f[c_z] || *end != '\0' || z < 1 || z > 118) {
      loc.col = (unsigned long)c_z + 1;
      rc = ff_diag_set(d, FF_EINPUT, &loc, "expected an atomic number 1..118 "
                       "in column 'z', found '%s'", r.f[c_z]);
      break;
    }
    e.z = (int)z;
    errno = 0;
    e.w_g_mol = strtod(r.f[c_w], &end);
    if (errno != 0 || end == r.f[c_w] || *end != '\0' ||
        !isfinite(e.w_g_mol) || e.w_g_mol <= 0.5 || e.w_g_mol > 300.0) {
      loc.col = (unsigned long)c_w + 1;
      rc = ff_diag_set(d, FF_EINPUT, &loc, "expected an atomic weight "
                       "(0.5..300 g/mol) in column 'weight_g_mol', found '%s'",
                       r.f[c_w]);
      break;
    }
    if (append(tmp, &e) != 0) {
      rc = ff_diag_set(d, FF_EIO, NULL, "out of memory");
      break;
    }
  }
  if (rc == FF_OK && ferror(f))
    rc = ff_diag_set(d, FF_EIO, &(struct ff_loc){ path, 0, 0 },
                     "read error: %s", strerror(errno));
  if (rc == FF_OK && !have_header)
    rc = ff_diag_set(d, FF_EINPUT, &(struct ff_loc){ path, 0, 0 },
                     "no header line (symbol,z,weight_g_mol)");
  free(line);
  return rc;
}

int ff_atomic_table_load(struct ff_atomic_table *t, const char *path,
                         struct ff_diag *d)
{
  struct ff_atomic_table tmp = FF_ATOMIC_TABLE_INIT;
  FILE *f = fopen(path, "r");
  int rc;

  if (f == NULL)
    return ff_diag_set(d, FF_EIO, &(struct ff_loc){ path, 0, 0 },
                       "cannot open: %s", strerror(errno));
  rc = load_rows(f, path, &tmp, d);
  fclose(f);
  for (size_t i = 0; rc == FF_OK && i < tmp.n; i++)
    if (append(t, &tmp.v[i]) != 0)
      rc = ff_diag_set(d, FF_EIO, NULL, "out of memory");
  ff_atomic_table_release(&tmp);
  return rc;
}

void ff_atomic_table_release(struct ff_atomic_table *t)
{
  if (t == NULL)
    return;
  free(t->v);
  t->v = NULL;
  t->n = t->cap = 0;
}

const struct ff_element *ff_atomic_find(const struct ff_atomic_table *t,
                                        const char *sym, size_t len)
{
  for (size_t i = 0; i < t->n; i++)
    if (strlen(t->v[i].sym) == len && memcmp(t->v[i].sym, sym, len) == 0)
      return &t->v[i];
  return NULL;
}

/* ---- formula parser ------------------------------------------------------ */

struct parser {
  const struct ff_atomic_table *t;
  const char *s;           /* whole text */
  size_t i;                /* byte offset */
  int utf8;                /* text is valid UTF-8: columns count code points */
  unsigned char seen[128]; /* by atomic number */
  const char *path;
  unsigned long line;
  struct ff_diag *d;
};

static int valid_utf8(const unsigned char *s)
{
  while (*s) {
    int n = *s < 0x80 ? 0 : (*s & 0xE0) == 0xC0 ? 1 : (*s & 0xF0) == 0xE0 ? 2
            : (*s & 0xF8) == 0xF0 ? 3 : -1;
    if (n < 0)
      return 0;
    s++;
    for (int k = 0; k < n; k++, s++)
      if ((*s & 0xC0) != 0x80)
        return 0;
  }
  return 1;
}

/* 1-based character position of byte offset off. */
static unsigned long col_of(const struct parser *p, size_t off)
{
  unsigned long col = 1;

  for (size_t k = 0; k < off; k++)
    if (!p->utf8 || ((unsigned char)p->s[k] & 0xC0) != 0x80)
      col++;
  return col;
}

static int fail(struct parser *p, size_t off, const char *fmt, ...)
  __attribute__((format(printf, 3, 4)));

static int fail(struct parser *p, size_t off, const char *fmt, ...)
{
  char msg[400];
  va_list ap;
  struct ff_loc loc = { p->path, p->line, col_of(p, off) };

  va_start(ap, fmt);
  vsnprintf(msg, sizeof msg, fmt, ap);
  va_end(ap);
  return ff_diag_set(p->d, FF_EINPUT, &loc, "formula '%s': %s", p->s, msg);
}

/* Length in bytes of a hydrate dot at s[0], 0 when none. */
static size_t dot_len(const char *s)
{
  const unsigned char *u = (const unsigned char *)s;

  if (u[0] == '*' || u[0] == '.')
    return 1;
  if (u[0] == 0xC2 && u[1] == 0xB7)
    return 2;
  if (u[0] == 0xB7)
    return 1;
  return 0;
}

static void skip_spaces(struct parser *p)
{
  while (p->s[p->i] == ' ' || p->s[p->i] == '\t')
    p->i++;
}

/* Integer subscript after an element or group; 1 when absent. */
static int subscript(struct parser *p, double *n)
{
  size_t start = p->i;
  double v = 0.0;

  if (!isdigit((unsigned char)p->s[p->i])) {
    *n = 1.0;
    return FF_OK;
  }
  while (isdigit((unsigned char)p->s[p->i])) {
    v = 10.0 * v + (p->s[p->i] - '0');
    p->i++;
    if (v > MAX_COUNT)
      break;
  }
  if (v < 0.5 || v > MAX_COUNT) {
    while (isdigit((unsigned char)p->s[p->i]))
      p->i++;
    return fail(p, start, "count '%.*s' must be 1 to %.0f", (int)(p->i - start),
                p->s + start, MAX_COUNT);
  }
  *n = v;
  return FF_OK;
}

static int closing_of(char c)
{
  return c == '(' ? ')' : c == '[' ? ']' : c == '{' ? '}' : 0;
}

/* A sequence of groups up to `close` (0: up to a dot, '^' or the end). */
static int sequence(struct parser *p, char close, int depth, double *mass)
{
  size_t start = p->i;
  double sum = 0.0;
  int rc;

  *mass = 0.0;
  for (;;) {
    char c = p->s[p->i];
    double n, m;

    if (isupper((unsigned char)c)) {
      size_t s0 = p->i++;
      while (islower((unsigned char)p->s[p->i]))
        p->i++;
      const struct ff_element *e = ff_atomic_find(p->t, p->s + s0, p->i - s0);
      if (e == NULL)
        return fail(p, s0, "unknown element '%.*s' (symbols are case-"
                    "sensitive; elements without a standard atomic weight "
                    "are not in the table)", (int)(p->i - s0), p->s + s0);
      if ((rc = subscript(p, &n)) != FF_OK)
        return rc;
      if (e->z > 0 && e->z < 128)
        p->seen[e->z] = 1;
      sum += n * e->w_g_mol;
    } else if (closing_of(c)) {
      size_t open = p->i++;
      if (depth >= MAX_DEPTH)
        return fail(p, open, "brackets nested deeper than %d", MAX_DEPTH);
      if ((rc = sequence(p, (char)closing_of(c), depth + 1, &m)) != FF_OK)
        return rc;
      if (p->s[p->i] != closing_of(c))
        return fail(p, open, "unbalanced '%c': no matching '%c'", c,
                    closing_of(c));
      p->i++;
      if ((rc = subscript(p, &n)) != FF_OK)
        return rc;
      sum += n * m;
    } else if (c == ')' || c == ']' || c == '}') {
      if (c != close)
        return fail(p, p->i, "unbalanced '%c'%s", c,
                    close ? " (does not match the open bracket)" : "");
      break;
    } else if (c == '\0' || c == '^' || c == ' ' || c == '\t' ||
               dot_len(p->s + p->i) > 0) {
      break;
    } else if (islower((unsigned char)c)) {
      return fail(p, p->i, "stray '%c' (element symbols start with a capital "
                  "letter)", c);
    } else if (c == '+' || c == '-') {
      return fail(p, p->i, "stray '%c' (write a charge as a suffix, e.g. "
                  "SO4^2-)", c);
    } else if (isdigit((unsigned char)c)) {
      return fail(p, p->i, "stray number (a coefficient goes at the start "
                  "of a part, e.g. CuSO4*5H2O)");
    } else {
      return fail(p, p->i, "stray character '%c'", c);
    }
  }
  if (p->i == start)
    return fail(p, start, "%s", close ? "empty brackets" : "empty formula");
  *mass = sum;
  return FF_OK;
}

/* Optional leading coefficient of a part, decimal allowed (0.5H2O). */
static int coefficient(struct parser *p, double *k)
{
  size_t start = p->i;
  char *end;

  *k = 1.0;
  if (!isdigit((unsigned char)p->s[p->i]))
    return FF_OK;
  while (isdigit((unsigned char)p->s[p->i]) ||
         (p->s[p->i] == '.' && isdigit((unsigned char)p->s[p->i + 1])))
    p->i++;
  char buf[32];
  size_t n = p->i - start;
  if (n >= sizeof buf)
    return fail(p, start, "coefficient '%.*s' too long", (int)n, p->s + start);
  memcpy(buf, p->s + start, n);
  buf[n] = '\0';
  errno = 0;
  *k = strtod(buf, &end);
  if (errno != 0 || *end != '\0' || !(*k > 0.0) || *k > MAX_COUNT)
    return fail(p, start, "coefficient '%s' must be above 0 and at most %.0f",
                buf, MAX_COUNT);
  skip_spaces(p);                           /* "5 H2O" */
  if (p->s[p->i] == '\0' || dot_len(p->s + p->i) > 0)
    return fail(p, start, "coefficient '%s' without a formula after it", buf);
  return FF_OK;
}

static int charge_suffix(struct parser *p, int *charge)
{
  size_t start = p->i;
  long n = 1;

  p->i++;                                   /* '^' */
  if (isdigit((unsigned char)p->s[p->i])) {
    n = 0;
    while (isdigit((unsigned char)p->s[p->i]) && n < 100)
      n = 10 * n + (p->s[p->i++] - '0');
  }
  if ((p->s[p->i] != '+' && p->s[p->i] != '-') || n < 1 || n > 9)
    return fail(p, start, "charge '%s' must look like ^+, ^2- (1 to 9)",
                p->s + start);
  *charge = p->s[p->i] == '+' ? (int)n : -(int)n;
  p->i++;
  skip_spaces(p);
  if (p->s[p->i] != '\0')
    return fail(p, p->i, "text after the charge");
  return FF_OK;
}

/* Is s[a..b) exactly "H2O" (spaces trimmed)? */
static int is_water(const char *s, size_t a, size_t b)
{
  while (b > a && (s[b - 1] == ' ' || s[b - 1] == '\t'))
    b--;
  return b - a == 3 && memcmp(s + a, "H2O", 3) == 0;
}

int ff_formula_parse(const struct ff_atomic_table *t, const char *text,
                     struct ff_formula *out, const char *loc_path,
                     unsigned long loc_line, struct ff_diag *d)
{
  struct parser p = { .t = t, .s = text ? text : "", .path = loc_path,
                      .line = loc_line, .d = d };
  double total = 0.0, waters = 0.0;
  int charge = 0, rc, parts = 0;

  memset(out, 0, sizeof *out);
  out->m_g_mol = out->m_anhydrous_g_mol = NAN;
  p.utf8 = valid_utf8((const unsigned char *)p.s);
  const struct ff_element *h = ff_atomic_find(t, "H", 1);
  const struct ff_element *o = ff_atomic_find(t, "O", 1);

  skip_spaces(&p);
  if (p.s[p.i] == '\0')
    return fail(&p, p.i, "empty formula");
  for (;;) {
    double k, m;
    skip_spaces(&p);
    if ((rc = coefficient(&p, &k)) != FF_OK)
      return rc;
    size_t body = p.i;
    if ((rc = sequence(&p, 0, 0, &m)) != FF_OK)
      return rc;
    if (parts > 0 && is_water(p.s, body, p.i))
      waters += k;
    total += k * m;
    parts++;
    skip_spaces(&p);
    size_t dl = dot_len(p.s + p.i);
    if (dl > 0) {
      p.i += dl;
      skip_spaces(&p);
      if (p.s[p.i] == '\0')
        return fail(&p, p.i - dl, "nothing after the hydrate dot");
      continue;
    }
    if (p.s[p.i] == '^') {
      if ((rc = charge_suffix(&p, &charge)) != FF_OK)
        return rc;
      break;
    }
    if (p.s[p.i] == '\0')
      break;
    return fail(&p, p.i, "stray character '%c'", p.s[p.i]);
  }
  if (!isfinite(total) || total <= 0.0)
    return fail(&p, 0, "molar mass is not a usable number");
  out->m_water_g_mol = (h && o) ? 2.0 * h->w_g_mol + o->w_g_mol : NAN;
  out->hydrate_waters = waters;
  out->m_g_mol = total;
  out->m_anhydrous_g_mol = total - waters * (waters > 0.0 ? out->m_water_g_mol
                                                         : 0.0);
  out->charge = charge;
  for (size_t z = 0; z < sizeof p.seen; z++)
    out->n_elements += p.seen[z];
  return FF_OK;
}
