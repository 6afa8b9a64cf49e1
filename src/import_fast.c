/* import_fast.c - the importer's fast path for the plain dialects: the data
 * region of a regular file is cut into chunks at line starts and parsed in
 * parallel by hand-written code; anything unusual makes it step aside so
 * that the general (libcsv) reader in import.c produces the result and the
 * exact diagnostic. Both give the same dataset, bit for bit.
 *
 * Pass 1 counts each chunk's lines (SSE2), so the arrays are allocated
 * exactly, one slot a line; pass 2 parses each chunk into its slots, 1 MiB
 * preads at a time; then compact() drops the slots that are no kept row
 * (blank and comment lines, missing, repeated or backwards times, rows
 * without a temperature) in file order, as the general reader does.
 *
 * Rows of plain numbers (no clock or ISO time) take parse_plain(), which
 * turns each cell into its value as it is read. The number shortcut loads
 * runs of digits 8 bytes at a time, so every block buffer carries FAST_PAD
 * zero bytes after its text. */

/* madvise(MADV_POPULATE_WRITE) is a Linux extension; this file asks for
 * it (without it, the pages fault in one by one as before). */
#define _DEFAULT_SOURCE 1

#include "import_impl.h"
#include "frostfit/parallel.h"

#include <errno.h>
#include <float.h>
#include <math.h>
#include <stdatomic.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include <sys/mman.h>
#include <sys/types.h>
#include <unistd.h>
#if defined(__SSE2__)
#include <emmintrin.h>
#endif

/* Bytes read per step in each chunk (a line must fit in one). */
#define FAST_BLOCK ((size_t)1 << 20)
/* Chunk sizes: about 8 per thread, within these bounds. */
#define FAST_MIN_CHUNK ((size_t)1 << 20)
#define FAST_MAX_CHUNK ((size_t)16 << 20)
#define FAST_CHUNKS_PER_THREAD 8

/* As in import_number.c: the exact one-operation case needs double
 * arithmetic done in double; elsewhere every number goes the long way. */
#if defined(FLT_EVAL_METHOD) && FLT_EVAL_METHOD == 0
#define FAST_NUMBERS 1
#else
#define FAST_NUMBERS 0
#endif

/* Eight digits per load needs a little-endian machine and the GCC/Clang
 * bit scan; elsewhere the digits are read one at a time. */
#if defined(__GNUC__) && defined(__BYTE_ORDER__) \
    && __BYTE_ORDER__ == __ORDER_LITTLE_ENDIAN__
#define FAST_SWAR 1
#else
#define FAST_SWAR 0
#endif

/* The per-cell helpers belong inside the row loop. */
#if defined(__GNUC__)
#define FAST_INLINE inline __attribute__((always_inline))
#else
#define FAST_INLINE inline
#endif

/* Test hooks: chunk and block sizes (0 = the defaults), fast imports. */
static size_t tune_chunk, tune_block;
static atomic_ulong fast_done;

void ff_import_fast_tune(size_t chunk_bytes, size_t block_bytes)
{
  tune_chunk = chunk_bytes;
  tune_block = block_bytes;
}

unsigned long ff_import_fast_count(void)
{
  return atomic_load(&fast_done);
}

static size_t block_size(void)
{
  return tune_block > 0 ? tune_block : FAST_BLOCK;
}

static const double pow10_exact[] = {
  1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11,
  1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22
};

/* One chunk of the data region and what parsing it found. */
struct chunk {
  size_t lo, hi;               /* nominal byte range: owns line starts here */
  size_t start, end;           /* text of the owned lines */
  size_t lines, base;          /* line starts owned; first slot */
  int has_start;
  /* results of the parse */
  size_t rows_read, rows_no_time, comments, holes, all_missing;
  int increasing;              /* rows with a time strictly increase */
  int have_t;
  double first_t, last_t;
};

struct fast {
  const struct ff_fast_in *in;
  size_t size;                 /* file size */
  size_t n_chunks;
  struct chunk *ck;
  size_t nch;                  /* channels */
  int *cell_of;                /* per column: 0 time, 1 + channel, -1 */
  double *t;                   /* slots: times, NaN = no row */
  double **v;                  /* per channel slots */
  /* per chunk and channel: n_missing, min, max (chunk-major) */
  size_t *c_missing;
  double *c_lo, *c_hi;
  atomic_int abandon;
  /* for the time shift after compaction */
  size_t n;
  double t0;
  size_t first_slot;           /* slot of the first kept row */
  unsigned char *parts;        /* clock times: 2 mm:ss, 3 time of day */
};

/* Reads n bytes at off from the file (or the in-memory sample). */
static int read_at(const struct fast *fs, char *dst, size_t n, size_t off)
{
  const struct ff_fast_in *in = fs->in;
  size_t got = 0;

  if (in->fd < 0) {
    if (off > in->len || n > in->len - off)
      return -1;
    memcpy(dst, in->buf + off, n);
    return 0;
  }
  while (got < n) {
    ssize_t k = pread(in->fd, dst + got, n - got, (off_t)(off + got));
    if (k < 0 && errno == EINTR)
      continue;
    if (k <= 0)
      return -1;
    got += (size_t)k;
  }
  return 0;
}

/* '\n' bytes in s[0..n): sixteen at a time with SSE2 (every x86-64),
 * else eight at a time in a 64-bit word. */
static size_t count_lf(const char *s, size_t n)
{
  size_t i = 0, c = 0;
#if defined(__SSE2__)
  const __m128i lf = _mm_set1_epi8('\n'), zero = _mm_setzero_si128();

  while (i + 16 <= n) {
    /* per byte lane: minus the matches, at most 255 rounds */
    __m128i acc = _mm_setzero_si128();
    size_t stop = n - i >= 255 * 16 ? i + 255 * 16
                  : i + ((n - i) & ~(size_t)15);
    for (; i < stop; i += 16) {
      __m128i v = _mm_loadu_si128((const __m128i *)(const void *)(s + i));
      acc = _mm_sub_epi8(acc, _mm_cmpeq_epi8(v, lf));
    }
    acc = _mm_sad_epu8(acc, zero);
    c += (size_t)_mm_cvtsi128_si32(acc)
         + (size_t)_mm_cvtsi128_si32(_mm_unpackhi_epi64(acc, acc));
  }
#else
  const uint64_t ones = 0x0101010101010101u, high = 0x8080808080808080u;
  const uint64_t low7 = 0x7f7f7f7f7f7f7f7fu, lf = ones * '\n';

  for (; i + 8 <= n; i += 8) {
    uint64_t w, x, m;
    memcpy(&w, s + i, 8);
    x = w ^ lf;
    m = ~(((x & low7) + low7) | x) & high;   /* 0x80 where a byte was '\n' */
    c += (size_t)(((m >> 7) * ones) >> 56);
  }
#endif
  for (; i < n; i++)
    c += s[i] == '\n';
  return c;
}

/*
 * Pass 1 for chunk i: counts the line starts it owns (a line starts at the
 * data offset and after every '\n' that is not the file's last byte) and
 * finds where its first one is.
 */
static void count_chunk(void *ctx, size_t i)
{
  struct fast *fs = ctx;
  struct chunk *c = &fs->ck[i];
  size_t d0 = fs->in->data_offset;
  size_t lo = i == 0 ? d0 : c->lo - 1, hi = c->hi - 1;
  size_t cap = block_size(), lines = 0;
  char *buf;

  if (i == 0) {
    c->has_start = 1;
    c->start = d0;
    lines = 1;
  }
  if (hi > fs->size - 1)
    hi = fs->size - 1;               /* a final '\n' starts no line */
  if (lo >= hi) {
    c->lines = lines;
    return;
  }
  if (cap > hi - lo)
    cap = hi - lo;
  buf = malloc(cap);
  if (buf == NULL) {
    atomic_store(&fs->abandon, 1);
    return;
  }
  for (size_t off = lo; off < hi && !atomic_load(&fs->abandon);) {
    size_t n = hi - off < cap ? hi - off : cap;
    if (read_at(fs, buf, n, off) != 0) {
      atomic_store(&fs->abandon, 1);
      break;
    }
    if (!c->has_start) {
      const char *nl = memchr(buf, '\n', n);
      if (nl != NULL) {
        c->has_start = 1;
        c->start = off + (size_t)(nl - buf) + 1;
      }
    }
    lines += count_lf(buf, n);
    off += n;
  }
  free(buf);
  c->lines = lines;
}

static FAST_INLINE double to_celsius(double x, enum ff_temp_unit u)
{
  switch (u) {
  case FF_UNIT_K: return x - 273.15;
  case FF_UNIT_F: return (x - 32.0) * 5.0 / 9.0;
  default: return x;
  }
}

/* A number's digits as an integer: value = (neg ? -1 : 1) * m / 10^nfrac. */
struct digits {
  uint64_t m;
  unsigned nfrac;
  int neg;
};

/* Bytes a block buffer holds beyond its text (zeros), so that the
 * digit scan below may load 8 bytes at any byte of a line. */
#define FAST_PAD 16

static const uint64_t pow10_int[] = {
  1u, 10u, 100u, 1000u, 10000u, 100000u, 1000000u, 10000000u, 100000000u
};

/* The digits at s: how many lead s (x[i] - '0' < 10), and their value
 * when there are fewer than 8. Loads the 8 bytes s[0..8) at once, so they
 * must all be readable (the fast path's buffers have FAST_PAD zeros). */
static FAST_INLINE unsigned digit_run(const char *s, uint64_t *val)
{
  const uint64_t zeros = 0x3030303030303030u, low7 = 0x7f7f7f7f7f7f7f7fu;
  const uint64_t high = 0x8080808080808080u, add = 0x7676767676767676u;
  uint64_t w, x, nd, v;
  unsigned n;

  memcpy(&w, s, 8);
  x = w ^ zeros;                     /* a digit's byte is now 0..9 */
  nd = (((x & low7) + add) | x) & high;   /* 0x80 where not a digit */
  if (nd == 0)
    return 8;                        /* 8 or more: the caller loops */
  n = (unsigned)__builtin_ctzll(nd) >> 3;
  if (n == 0) {
    *val = 0;
    return 0;
  }
  /* little-endian only (checked by the caller): the first digit in the
   * lowest byte; the run moved up so zeros lead */
  v = x << (64 - 8 * n);
  v = ((v & 0x0f0f0f0f0f0f0f0fu) * 2561) >> 8;
  v = ((v & 0x00ff00ff00ff00ffu) * 6553601) >> 16;
  *val = ((v & 0x0000ffff0000ffffu) * 42949672960001u) >> 32;
  return n;
}

/* Scans the shortcut's numbers (see ff_import_quick_number); NULL when the
 * text at p is not one. Runs of digits are read 8 bytes at a time (a
 * lone integer digit on its own), so 8 bytes past the number's end must be
 * readable (see digit_run). */
static FAST_INLINE const char *scan_digits(const char *p, char decimal,
                                           struct digits *dg)
{
  const char *s = p, *d0;
  uint64_t m = 0;
  size_t nint, nfrac = 0;
  int neg = 0;

  /* the sign without a branch: it changes from cell to cell */
  neg = *s == '-';
  s += neg | (*s == '+');
  d0 = s;
#if FAST_SWAR
  if ((unsigned)((unsigned char)s[0] - '0') < 10
      && (unsigned)((unsigned char)s[1] - '0') >= 10) {
    m = (uint64_t)(s[0] - '0');      /* one digit, as in most temperatures */
    s++;
  } else {
    uint64_t part;
    unsigned r = digit_run(s, &part);
    if (r < 8) {
      m = part;
      s += r;
    } else {
      while ((unsigned)((unsigned char)*s - '0') < 10)
        m = m * 10 + (uint64_t)(*s++ - '0');
    }
  }
#else
  while ((unsigned)((unsigned char)*s - '0') < 10)
    m = m * 10 + (uint64_t)(*s++ - '0');
#endif
  nint = (size_t)(s - d0);
  if (*s == decimal) {
    const char *f0 = ++s;
#if FAST_SWAR
    uint64_t part;
    unsigned r = digit_run(s, &part);
    if (r < 8) {
      m = m * pow10_int[r] + part;
      s += r;
    } else
#endif
    {
      while ((unsigned)((unsigned char)*s - '0') < 10)
        m = m * 10 + (uint64_t)(*s++ - '0');
    }
    nfrac = (size_t)(s - f0);
  }
  if (!FAST_NUMBERS || nint + nfrac == 0 || nint + nfrac > 19
      || m > ((uint64_t)1 << 53) || nfrac > 22)
    return NULL;
  dg->m = m;
  dg->nfrac = (unsigned)nfrac;
  dg->neg = neg;
  return s;
}

/* The same one correctly rounded operation as ff_import_parse_number. */
static FAST_INLINE double digits_value(const struct digits *dg)
{
  double x = (double)dg->m;

  uint64_t bits;

  x = dg->nfrac > 0 ? x / pow10_exact[dg->nfrac] : x * pow10_exact[0];
  /* the sign bit set without a branch: the same bits as -x */
  memcpy(&bits, &x, sizeof bits);
  bits ^= (uint64_t)(dg->neg != 0) << 63;
  memcpy(&x, &bits, sizeof x);
  return x;
}

const char *ff_import_quick_number(const char *p, char decimal, double *out)
{
  /* the number's own bytes (sign, digits, mark) into a padded copy, the
   * end marked by a byte that is none of them */
  char tmp[64 + FAST_PAD];
  struct digits dg;
  const char *e;
  size_t n = 0;

  while (n < 64 && (p[n] == '-' || p[n] == '+' || p[n] == decimal
                    || (unsigned)((unsigned char)p[n] - '0') < 10)) {
    tmp[n] = p[n];
    n++;
  }
  if (n == 64)
    return NULL;                     /* more than 19 digits anyway */
  memset(tmp + n, 0, FAST_PAD);
  e = scan_digits(tmp, decimal, &dg);
  if (e == NULL)
    return NULL;
  *out = digits_value(&dg);
  return p + (e - tmp);
}

/* The end of the field at p: the delimiter or the line end. NULL for what
 * the general reader must judge: quotes, NUL bytes, a CR not before LF. */
static const char *field_end(const char *p, char delim)
{
  for (;; p++) {
    char c = *p;
    if (c == delim || c == '\n')
      return p;
    if (c == '"' || c == '\0')
      return NULL;
    if (c == '\r')
      return p[1] == '\n' ? p : NULL;
  }
}

static int all_blank(const char *s, const char *e)
{
  for (; s < e; s++)
    if (*s != ' ' && *s != '\t')
      return 0;
  return 1;
}

/* How a time or temperature cell was read. */
enum { CELL_MISSING = 0, CELL_VALUE, CELL_DIGITS };

/* What one worker keeps while it parses a chunk. Cells are indexed 0 for
 * the time, 1 + k for channel k. */
struct worker {
  struct fast *fs;
  struct chunk *c;
  size_t slot, last_slot;      /* next slot to fill; one past the chunk's */
  struct digits *dg;           /* per cell: the shortcut's digits */
  double *val;                 /* per cell: the number read otherwise */
  int *how;                    /* per cell: CELL_* */
  size_t *missing;
  double *lo, *hi;
};

/* A cell the shortcut left: the general reader's number parser and
 * missing-value markers, exactly as read_time()/read_temp() use them. */
static int cell_value(const struct ff_fast_in *in, const char *s, size_t n,
                      int is_time, double *v, int *how)
{
  if (ff_import_parse_number(s, n, in->decimal, v) == 0
      && (!is_time || isfinite(*v))) {
    *how = CELL_VALUE;
    return 0;
  }
  if (ff_import_is_missing_text(s, n)) {
    *how = CELL_MISSING;
    return 0;
  }
  return -1;
}

/* A date-time cell, as read_time() reads one: a marker, or ISO 8601 with
 * a time of day. */
static int iso_cell(const struct ff_fast_in *in, const char *s, size_t n,
                    double *v, int *how)
{
  int date_only = 0;

  if (ff_import_is_missing_text(s, n)) {
    *how = CELL_MISSING;
    return 0;
  }
  if (ff_import_parse_iso(s, n, in->decimal, v, &date_only) != 0
      || date_only)
    return -1;
  *how = CELL_VALUE;
  return 0;
}

/* A clock cell, as read_time() reads one: a marker, mm:ss or a time of
 * day (*parts 2 or 3; the midnight wraps are counted afterwards). */
static int clock_cell(const struct ff_fast_in *in, const char *s, size_t n,
                      double *v, int *how, int *parts)
{
  if (ff_import_is_missing_text(s, n)) {
    *how = CELL_MISSING;
    return 0;
  }
  *parts = ff_import_parse_clock(s, n, in->decimal, v);
  if (*parts < 0)
    return -1;
  *how = CELL_VALUE;
  return 0;
}

static FAST_INLINE double temp_value(const struct ff_fast_in *in, double v,
                         enum ff_temp_unit u)
{
  if ((in->n_sentinels > 0 || fabs(v) > 998.0)
      && ff_import_is_sentinel(v, in->sentinels, in->n_sentinels))
    return NAN;
  return to_celsius(v, u);
}

/*
 * Stores a parsed row in its slot: its time t in seconds (t_missing: no
 * time, the row is a hole) and its temperatures y in Celsius (NaN where
 * missing), with the chunk's and the worker's counters. Both row loops
 * end here, so they count alike.
 */
static FAST_INLINE void store_row(struct worker *w, size_t slot,
                                  int t_missing, double t, const double *y)
{
  struct fast *fs = w->fs;
  struct chunk *c = w->c;
  size_t present = 0;

  if (t_missing) {
    c->rows_no_time++;
    c->holes++;
    fs->t[slot] = NAN;
    return;
  }
  fs->t[slot] = t;
  if (c->have_t && !(t > c->last_t))
    c->increasing = 0;
  if (!c->have_t) {
    c->have_t = 1;
    c->first_t = t;
  }
  c->last_t = t;
  for (size_t k = 0; k < fs->nch; k++) {
    double v = y[k];
    fs->v[k][slot] = v;
    if (isnan(v)) {
      w->missing[k]++;
      continue;
    }
    present++;
    w->lo[k] = v < w->lo[k] ? v : w->lo[k];
    w->hi[k] = v > w->hi[k] ? v : w->hi[k];
  }
  if (present == 0)
    c->all_missing++;
}

/*
 * The rest of parse_line() for a row of plain numbers (no clock or ISO
 * times), the common case, at q (the line's start): each cell becomes its
 * value as soon as it is read, the temperatures in Celsius with NaN for a
 * missing one, exactly as the general loop below computes them. A row
 * that is not taken (NULL) ends the fast path, so nothing here need be
 * undone.
 */
static FAST_INLINE const char *parse_plain(struct worker *w, const char *q,
                                           size_t slot)
{
  struct fast *fs = w->fs;
  const struct ff_fast_in *in = fs->in;
  const char delim = in->delimiter, dec = in->decimal;
  const size_t ncol = in->n_columns;
  const int *cell_of = fs->cell_of;
  const enum ff_temp_unit *units = in->units;
  double *y = w->val + 1;          /* per channel: Celsius or NaN */
  size_t f = 0;
  double t = 0.0;
  int t_missing = 0;

  for (;; f++) {
    const char *e;
    int k = f < ncol ? cell_of[f] : -1;
    if (k >= 0) {
      struct digits dg;
      double x;
      int how = CELL_VALUE;
      e = scan_digits(q, dec, &dg);
      if (e != NULL && (*e == delim || *e == '\n'
                        || (*e == '\r' && e[1] == '\n'))) {
        x = digits_value(&dg);
      } else {
        e = field_end(q, delim);
        if (e == NULL || cell_value(in, q, (size_t)(e - q), k == 0, &x,
                                    &how) != 0)
          return NULL;
      }
      if (k == 0) {
        t_missing = how == CELL_MISSING;
        t = x;
      } else {
        y[k - 1] = how == CELL_MISSING ? NAN
                   : temp_value(in, x, units[k - 1]);
      }
    } else {
      e = field_end(q, delim);
      if (e == NULL || (f >= ncol && !all_blank(q, e)))
        return NULL;
    }
    q = e;
    if (*q != delim)
      break;
    q++;
  }
  if (f + 1 < in->min_fields)
    return NULL;                   /* short: the general reader says so */
  q += *q == '\r' ? 2 : 1;
  w->slot++;
  store_row(w, slot, t_missing, t * in->time_scale, y);
  return q;
}

/*
 * One line at p (a '\n' follows somewhere): fills its slot. Returns the
 * start of the next line, or NULL to hand the file to the general reader.
 */
static FAST_INLINE const char *parse_line(struct worker *w, const char *p)
{
  struct fast *fs = w->fs;
  const struct ff_fast_in *in = fs->in;
  const char delim = in->delimiter, dec = in->decimal;
  const size_t ncol = in->n_columns, nch = fs->nch;
  struct chunk *c = w->c;
  const char *q = p;
  size_t slot = w->slot, f = 0;
  double t = NAN;
  int t_missing = 0, parts = 0;

  if (slot >= w->last_slot)
    return NULL;
  if (*p == '#') {                 /* a comment line */
    const char *e = p;
    for (;; e++) {
      if (*e == '\n')
        break;
      if (*e == '\0' || (*e == '\r' && e[1] != '\n'))
        return NULL;
    }
    c->comments++;
    c->holes++;
    fs->t[slot] = NAN;
    w->slot++;
    return e + 1;
  }
  while ((*q == ' ' || *q == '\t') && *q != delim)
    q++;
  if (*q == '\n' || (*q == '\r' && q[1] == '\n')) {   /* a blank line */
    c->holes++;
    fs->t[slot] = NAN;
    w->slot++;
    return q + (*q == '\r' ? 2 : 1);
  }
  q = p;
  c->rows_read++;
  if (!in->clock && !in->iso)
    return parse_plain(w, q, slot);
  /* every cell's how[] is set below: the time and temperature columns
   * come before min_fields, and a shorter row is refused */
  /* first the fields' text; the shortcut's numbers stay integers here so
   * that their divisions run back to back below */
  for (;; f++) {
    const char *e;
    int slot_k = f < ncol ? fs->cell_of[f] : -1;
    if (slot_k == 0 && in->clock) {
      e = field_end(q, delim);
      if (e == NULL || clock_cell(in, q, (size_t)(e - q), &w->val[0],
                                  &w->how[0], &parts) != 0)
        return NULL;
    } else if (slot_k == 0 && in->iso) {
      e = field_end(q, delim);
      if (e == NULL || iso_cell(in, q, (size_t)(e - q), &w->val[0],
                                &w->how[0]) != 0)
        return NULL;
    } else if (slot_k >= 0) {
      e = scan_digits(q, dec, &w->dg[slot_k]);
      if (e != NULL && (*e == delim || *e == '\n'
                        || (*e == '\r' && e[1] == '\n'))) {
        w->how[slot_k] = CELL_DIGITS;
      } else {
        e = field_end(q, delim);
        if (e == NULL || cell_value(in, q, (size_t)(e - q), slot_k == 0,
                                    &w->val[slot_k], &w->how[slot_k]) != 0)
          return NULL;
      }
    } else {
      e = field_end(q, delim);
      if (e == NULL || (f >= ncol && !all_blank(q, e)))
        return NULL;
    }
    q = e;
    if (*q != delim)
      break;
    q++;
  }
  if (f + 1 < in->min_fields)
    return NULL;                   /* short: the general reader says so */
  q += *q == '\r' ? 2 : 1;
  w->slot++;
  for (size_t j = 0; j <= nch; j++)
    if (w->how[j] == CELL_DIGITS)
      w->val[j] = digits_value(&w->dg[j]);
  if (w->how[0] == CELL_MISSING)
    t_missing = 1;
  else
    t = w->val[0] * in->time_scale;
  if (!t_missing && fs->parts != NULL)
    fs->parts[slot] = (unsigned char)parts;
  for (size_t k = 0; k < nch; k++)  /* to Celsius in place, NaN missing */
    w->val[k + 1] = w->how[k + 1] == CELL_MISSING ? NAN
                    : temp_value(in, w->val[k + 1], in->units[k]);
  store_row(w, slot, t_missing, t, w->val + 1);
  return q;
}

/* Parses the complete lines in s[0..n) (s[n-1] is '\n'). */
static int parse_lines(struct worker *w, const char *s, size_t n)
{
  const char *p = s, *e = s + n;

  while (p < e) {
    p = parse_line(w, p);
    if (p == NULL)
      return -1;
  }
  return p == e ? 0 : -1;
}

/* Maps a[0..n) in one call rather than a page fault per page (Linux 5.14
 * and later; elsewhere nothing happens and the pages fault in as used). */
static void prefault(double *a, size_t n)
{
#if defined(MADV_POPULATE_WRITE)
  const uintptr_t page = 4096;
  uintptr_t lo = (uintptr_t)a & ~(page - 1);
  uintptr_t hi = ((uintptr_t)(a + n) + page - 1) & ~(page - 1);

  if (n * sizeof *a >= 16 * page)
    (void)madvise((void *)lo, hi - lo, MADV_POPULATE_WRITE);
#else
  (void)a;
  (void)n;
#endif
}

/* Pass 2 for chunk i: parses its lines into its slots. */
static void parse_chunk(void *ctx, size_t i)
{
  struct fast *fs = ctx;
  /* counters on this thread's stack, the chunk's neighbours in fs->ck
   * being written by other threads: no cache line shared per row */
  struct chunk local = fs->ck[i], *c = &local;
  struct worker w;
  size_t len = c->end - c->start, cap, carry = 0, off = c->start;
  size_t nch = fs->nch;
  char *buf;
  int ok = 1;

  fs->ck[i].increasing = c->increasing = 1;
  if (c->lines == 0 || atomic_load(&fs->abandon))
    return;
  prefault(fs->t + c->base, c->lines);
  for (size_t k = 0; k < nch; k++)
    prefault(fs->v[k] + c->base, c->lines);
  cap = len < block_size() ? len : block_size();
  /* room for a final '\n' and the digit scan's padding (zeroed after
   * each read) */
  buf = malloc(cap + 1 + FAST_PAD);
  w.fs = fs;
  w.c = c;
  w.slot = c->base;
  w.last_slot = c->base + c->lines;
  w.dg = malloc((nch + 1) * sizeof *w.dg);
  w.val = malloc((nch + 1) * sizeof *w.val);
  w.how = malloc((nch + 1) * sizeof *w.how);
  w.missing = malloc((nch ? nch : 1) * sizeof *w.missing);
  w.lo = malloc((nch ? nch : 1) * sizeof *w.lo);
  w.hi = malloc((nch ? nch : 1) * sizeof *w.hi);
  if (w.missing == NULL || w.lo == NULL || w.hi == NULL)
    nch = 0, ok = 0;
  for (size_t k = 0; k < nch; k++) {
    w.missing[k] = 0;
    w.lo[k] = INFINITY;
    w.hi[k] = -INFINITY;
  }
  if (buf == NULL || w.dg == NULL || w.val == NULL
      || w.how == NULL)
    ok = 0;
  while (ok && !atomic_load(&fs->abandon)) {
    size_t want = c->end - off < cap - carry ? c->end - off : cap - carry;
    size_t have;
    if (read_at(fs, buf + carry, want, off) != 0) {
      ok = 0;
      break;
    }
    off += want;
    have = carry + want;
    memset(buf + have, 0, FAST_PAD);
    if (off == c->end) {             /* the chunk's last lines */
      if (have > 0 && buf[have - 1] != '\n') {
        /* only the file's last line may lack its line end; a lone CR
         * there is the general reader's business */
        if (c->end != fs->size || buf[have - 1] == '\r')
          ok = 0;
        else
          buf[have++] = '\n';
      }
      if (ok && have > 0 && parse_lines(&w, buf, have) != 0)
        ok = 0;
      break;
    } else {
      size_t used = have;            /* up to the block's last '\n' */
      while (used > 0 && buf[used - 1] != '\n')
        used--;
      if (used == 0) {
        ok = 0;                      /* a line longer than a block */
        break;
      }
      if (parse_lines(&w, buf, used) != 0) {
        ok = 0;
        break;
      }
      carry = have - used;
      memmove(buf, buf + used, carry);
      if (carry == cap) {
        ok = 0;
        break;
      }
    }
  }
  if (ok && w.slot != w.last_slot)
    ok = 0;                          /* the file changed under us */
  if (!ok) {
    atomic_store(&fs->abandon, 1);
  } else {
    fs->ck[i] = local;
    memcpy(fs->c_missing + i * nch, w.missing, nch * sizeof *w.missing);
    memcpy(fs->c_lo + i * nch, w.lo, nch * sizeof *w.lo);
    memcpy(fs->c_hi + i * nch, w.hi, nch * sizeof *w.hi);
  }
  free(w.missing);
  free(w.lo);
  free(w.hi);
  free(w.dg);
  free(w.val);
  free(w.how);
  free(buf);
}

static void shift_part(void *ctx, size_t i)
{
  struct fast *fs = ctx;
  size_t per = (fs->n + fs->n_chunks - 1) / fs->n_chunks;
  size_t a = i * per, b = a + per < fs->n ? a + per : fs->n;

  for (size_t j = a; j < b; j++)
    fs->t[j] -= fs->t0;
}

struct progress_map {
  const struct ff_fast_in *in;
  size_t size;
};

static void chunk_done(void *ctx, size_t done, size_t total)
{
  const struct progress_map *pm = ctx;
  unsigned long long d = (unsigned long long)pm->size;

  if (done < total)
    d = (unsigned long long)((double)pm->size * (double)done / (double)total);
  pm->in->progress(pm->in->progress_ctx, d, (unsigned long long)pm->size);
}

/*
 * Clock times of day that pass midnight, in file order as read_time()
 * counts them (every row with a time, kept or not): the next day's times
 * get 86400 s more. The chunks' own order checks no longer hold after
 * this, so compact() looks at every row.
 */
static void midnight(struct fast *fs, size_t slots, struct ff_dataset *ds)
{
  double day_off = 0.0, prev = 0.0;
  int have_prev = 0;

  for (size_t s = 0; s < slots; s++) {
    double v = fs->t[s];
    if (isnan(v) || fs->parts[s] != 3)
      continue;
    v += day_off;
    if (have_prev && v < prev - 43200.0) {
      day_off += 86400.0;
      v += 86400.0;
      ds->stats.midnight_wraps++;
    }
    prev = v;
    have_prev = 1;
    fs->t[s] = v;
  }
  for (size_t i = 0; i < fs->n_chunks; i++)
    fs->ck[i].increasing = 0;
}

/* Moves slot s to row n. */
static void move_row(struct fast *fs, size_t s, size_t n)
{
  fs->t[n] = fs->t[s];
  for (size_t k = 0; k < fs->nch; k++)
    fs->v[k][n] = fs->v[k][s];
}

/*
 * Keeps the rows the general reader keeps, in order: skips holes, repeated
 * and backwards times and rows without any temperature, with its counters
 * and line numbers; folds the channels' missing counts and ranges.
 */
static void compact(struct fast *fs, struct ff_dataset *ds,
                    unsigned long first_line)
{
  struct ff_import_stats *st = &ds->stats;
  size_t nch = fs->nch, n = 0;
  double last = 0.0;

  for (size_t k = 0; k < nch; k++) {
    ds->ch[k].n_missing = 0;
    ds->ch[k].min_c = INFINITY;
    ds->ch[k].max_c = -INFINITY;
  }
  for (size_t i = 0; i < fs->n_chunks; i++) {
    struct chunk *c = &fs->ck[i];
    if (c->lines == 0)
      continue;
    st->rows_read += c->rows_read;
    st->rows_no_time += c->rows_no_time;
    ds->dialect.comment_lines += c->comments;
    if (!c->have_t)
      continue;
    if (c->holes == 0 && c->all_missing == 0 && c->increasing
        && (n == 0 || c->first_t > last)) {
      /* the common case: every line a kept row */
      if (n == 0)
        fs->first_slot = c->base;
      if (c->base != n) {
        memmove(fs->t + n, fs->t + c->base, c->lines * sizeof *fs->t);
        for (size_t k = 0; k < nch; k++)
          memmove(fs->v[k] + n, fs->v[k] + c->base,
                  c->lines * sizeof *fs->v[k]);
      }
      for (size_t k = 0; k < nch; k++) {
        struct ff_channel *ch = &ds->ch[k];
        double lo = fs->c_lo[i * nch + k], hi = fs->c_hi[i * nch + k];
        ch->n_missing += fs->c_missing[i * nch + k];
        ch->min_c = lo < ch->min_c ? lo : ch->min_c;
        ch->max_c = hi > ch->max_c ? hi : ch->max_c;
      }
      n += c->lines;
      last = c->last_t;
      continue;
    }
    for (size_t s = c->base; s < c->base + c->lines; s++) {
      double t = fs->t[s];
      size_t present = 0;
      if (isnan(t))
        continue;
      if (n > 0 && !(t > last)) {
        if (t < last) {
          st->rows_time_backwards++;
          if (st->first_backwards_line == 0)
            st->first_backwards_line = first_line + (unsigned long)s;
        } else {
          st->rows_time_duplicate++;
          if (st->first_duplicate_line == 0)
            st->first_duplicate_line = first_line + (unsigned long)s;
        }
        continue;
      }
      for (size_t k = 0; k < nch; k++)
        present += !isnan(fs->v[k][s]);
      if (present == 0) {
        st->rows_all_missing++;
        continue;
      }
      if (n == 0)
        fs->first_slot = s;
      if (s != n)
        move_row(fs, s, n);
      for (size_t k = 0; k < nch; k++) {
        struct ff_channel *ch = &ds->ch[k];
        double y = fs->v[k][n];
        if (isnan(y)) {
          ch->n_missing++;
          continue;
        }
        ch->min_c = y < ch->min_c ? y : ch->min_c;
        ch->max_c = y > ch->max_c ? y : ch->max_c;
      }
      n++;
      last = t;
    }
  }
  fs->n = n;
}

/*
 * The time cell of the line in slot s as libcsv hands it over (blanks
 * around dropped), at most cap - 1 bytes: the first kept row's date-time
 * for t0_iso. Returns 0, or -1 when it cannot be read again.
 */
static int time_text(const struct fast *fs, size_t s, char *dst, size_t cap)
{
  const struct ff_fast_in *in = fs->in;
  const struct chunk *c = NULL;
  size_t bs = block_size(), off, skip;
  char *buf;
  int res = -1;

  for (size_t i = 0; i < fs->n_chunks && c == NULL; i++)
    if (fs->ck[i].lines > 0 && s >= fs->ck[i].base
        && s < fs->ck[i].base + fs->ck[i].lines)
      c = &fs->ck[i];
  if (c == NULL || (buf = malloc(bs)) == NULL)
    return -1;
  off = c->start;
  skip = s - c->base;
  while (off < c->end) {
    size_t n = c->end - off < bs ? c->end - off : bs;
    const char *p, *e, *nl;
    if (read_at(fs, buf, n, off) != 0)
      break;
    p = buf;
    e = buf + n;
    while (skip > 0 && (nl = memchr(p, '\n', (size_t)(e - p))) != NULL) {
      p = nl + 1;
      skip--;
    }
    if (skip > 0) {
      off += n;
      continue;
    }
    if (memchr(p, '\n', (size_t)(e - p)) == NULL && off + n < c->end) {
      if (p == buf)
        break;                       /* cannot happen: lines fit a block */
      off += (size_t)(p - buf);      /* read the line again from its start */
      continue;
    }
    for (size_t f = 0; f < in->time_col; f++) {
      while (p < e && *p != in->delimiter && *p != '\n')
        p++;
      if (p < e && *p == in->delimiter)
        p++;
    }
    {
      const char *a = p, *b = p;
      size_t k;
      while (b < e && *b != in->delimiter && *b != '\n' && *b != '\r')
        b++;
      while (a < b && (*a == ' ' || *a == '\t'))
        a++;
      while (b > a && (b[-1] == ' ' || b[-1] == '\t'))
        b--;
      k = (size_t)(b - a) < cap - 1 ? (size_t)(b - a) : cap - 1;
      memcpy(dst, a, k);
      dst[k] = '\0';
      res = 0;
    }
    break;
  }
  free(buf);
  return res;
}

static void free_slots(struct fast *fs)
{
  free(fs->parts);
  fs->parts = NULL;
  free(fs->t);
  fs->t = NULL;
  for (size_t k = 0; fs->v != NULL && k < fs->nch; k++)
    free(fs->v[k]);
  free(fs->v);
  fs->v = NULL;
}

/* Puts ds back as it came (for the general reader) and says "declined". */
static int decline(struct fast *fs, struct ff_dataset *ds)
{
  free_slots(fs);
  free(fs->ck);
  free(fs->cell_of);
  free(fs->c_missing);
  free(fs->c_lo);
  free(fs->c_hi);
  memset(&ds->stats, 0, sizeof ds->stats);
  ds->dialect.comment_lines = 0;
  ds->t0_iso[0] = '\0';
  ds->n = 0;
  for (size_t k = 0; k < ds->n_channels; k++) {
    ds->ch[k].n_missing = 0;
    ds->ch[k].min_c = ds->ch[k].max_c = NAN;
  }
  return FF_FAST_DECLINED;
}

static size_t online_cpus(void)
{
  long n = sysconf(_SC_NPROCESSORS_ONLN);
  return n > 1 ? (size_t)n : 1;
}

int ff_import_fast(const struct ff_fast_in *in, struct ff_dataset *ds)
{
  struct fast fs;
  size_t region, per, slots = 0, with_values = 0;
  const char *env = getenv("FF_IMPORT_NO_FAST");

  if (in->no_fast || (env != NULL && env[0] != '\0' && strcmp(env, "0") != 0))
    return FF_FAST_DECLINED;
  if (in->delimiter == ' ' || in->delimiter == '"' || in->delimiter == '#'
      || in->delimiter == '\n' || in->delimiter == '\r'
      || in->delimiter == '\0' || in->delimiter == in->decimal
      || (in->decimal >= '0' && in->decimal <= '9')
      || in->size <= in->data_offset || ds->n_channels == 0)
    return FF_FAST_DECLINED;
  memset(&fs, 0, sizeof fs);
  atomic_init(&fs.abandon, 0);
  fs.in = in;
  fs.size = in->size;
  fs.nch = ds->n_channels;
  region = in->size - in->data_offset;
  per = region / (online_cpus() * FAST_CHUNKS_PER_THREAD);
  per = per < FAST_MIN_CHUNK ? FAST_MIN_CHUNK
        : per > FAST_MAX_CHUNK ? FAST_MAX_CHUNK : per;
  if (tune_chunk > 0)
    per = tune_chunk;
  fs.n_chunks = (region + per - 1) / per;
  fs.ck = calloc(fs.n_chunks, sizeof *fs.ck);
  fs.c_missing = calloc(fs.n_chunks * fs.nch, sizeof *fs.c_missing);
  fs.c_lo = calloc(fs.n_chunks * fs.nch, sizeof *fs.c_lo);
  fs.c_hi = calloc(fs.n_chunks * fs.nch, sizeof *fs.c_hi);
  fs.cell_of = malloc(in->n_columns * sizeof *fs.cell_of);
  if (fs.ck == NULL || fs.c_missing == NULL || fs.c_lo == NULL
      || fs.c_hi == NULL || fs.cell_of == NULL)
    return decline(&fs, ds);
  for (size_t c = 0; c < in->n_columns; c++)
    fs.cell_of[c] = c == in->time_col ? 0
                    : in->chan[c] >= 0 ? (int)in->chan[c] + 1 : -1;
  for (size_t i = 0; i < fs.n_chunks; i++) {
    fs.ck[i].lo = in->data_offset + i * per;
    fs.ck[i].hi = i + 1 == fs.n_chunks ? in->size
                  : in->data_offset + (i + 1) * per;
  }

  /* pass 1: line starts per chunk, then exact room for them */
  ff_parallel_for(fs.n_chunks, count_chunk, &fs);
  if (atomic_load(&fs.abandon))
    return decline(&fs, ds);
  for (size_t i = 0, next = in->size; i < fs.n_chunks; i++) {
    size_t j = fs.n_chunks - 1 - i;
    struct chunk *c = &fs.ck[j];
    if (!c->has_start) {
      c->lines = 0;
      continue;
    }
    c->end = next;
    next = c->start;
  }
  for (size_t i = 0; i < fs.n_chunks; i++) {
    fs.ck[i].base = slots;
    slots += fs.ck[i].lines;
  }
  fs.t = malloc(slots * sizeof *fs.t);
  fs.v = calloc(fs.nch, sizeof *fs.v);
  if (in->clock)
    fs.parts = malloc(slots);
  if (fs.t == NULL || fs.v == NULL || (in->clock && fs.parts == NULL))
    return decline(&fs, ds);
  for (size_t k = 0; k < fs.nch; k++) {
    fs.v[k] = malloc(slots * sizeof *fs.v[k]);
    if (fs.v[k] == NULL)
      return decline(&fs, ds);
  }

  /* pass 2: parse every chunk into its slots */
  if (in->progress != NULL) {
    struct progress_map pm = { in, in->size };
    ff_parallel_for_progress(fs.n_chunks, parse_chunk, &fs, chunk_done, &pm);
  } else {
    ff_parallel_for(fs.n_chunks, parse_chunk, &fs);
  }
  if (atomic_load(&fs.abandon))
    return decline(&fs, ds);

  if (in->clock)
    midnight(&fs, slots, ds);
  compact(&fs, ds, ds->dialect.first_data_line);
  for (size_t k = 0; k < fs.nch; k++)
    with_values += ds->ch[k].n_missing < fs.n;
  if (fs.n == 0 || with_values == 0)
    return decline(&fs, ds);         /* the general reader explains */
  if (in->iso && time_text(&fs, fs.first_slot, ds->t0_iso,
                           sizeof ds->t0_iso) != 0)
    return decline(&fs, ds);
  fs.t0 = fs.t[0];
  ff_parallel_for(fs.n_chunks, shift_part, &fs);

  /* hand the arrays over, trimmed to the rows kept */
  ds->n = fs.n;
  ds->stats.rows_kept = fs.n;
  ds->t0_s = fs.t0;
  ds->t_s = fs.t;
  if (fs.n < slots) {
    double *t = realloc(ds->t_s, fs.n * sizeof *t);
    if (t != NULL)
      ds->t_s = t;
  }
  for (size_t k = 0; k < fs.nch; k++) {
    struct ff_channel *ch = &ds->ch[k];
    ch->temp_c = fs.v[k];
    if (fs.n < slots) {
      double *y = realloc(ch->temp_c, fs.n * sizeof *y);
      if (y != NULL)
        ch->temp_c = y;
    }
    if (ch->n_missing == fs.n)
      ch->min_c = ch->max_c = NAN;
  }
  free(fs.v);
  free(fs.parts);
  free(fs.ck);
  free(fs.cell_of);
  free(fs.c_missing);
  free(fs.c_lo);
  free(fs.c_hi);
  atomic_fetch_add(&fast_done, 1);
  return FF_OK;
}
