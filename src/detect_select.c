/* detect_select.c - exact order statistics of a long channel's second
 * differences and time steps without a copy of the channel: detect stage
 * (the noise and sampling-step medians of detect.c). */
#include "detect_impl.h"

#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#ifdef __SSE2__
#include <emmintrin.h>
#endif

#include <gsl/gsl_statistics_double.h>

#define SEL_BITS 16
#define SEL_RADIX DD_SEL_RADIX


static uint64_t key_of(double v)
{
  uint64_t k;

  memcpy(&k, &v, sizeof k);
  return k;
}

static double val_of(uint64_t k)
{
  double v;

  memcpy(&v, &k, sizeof v);
  return v;
}

/*
 * The value of rank r among the values of [i0, i1), by radix selection on
 * the bit patterns, 16 bits a pass, only among keys with the top bits
 * given by (prefix, mask) (mask 0: all). The values are +0, positive or
 * +inf, and such doubles order as their bit patterns do, so the value is
 * exactly the one a sort would put at r.
 */
static double radix_rank(const double *t, const double *y, int which,
                         size_t i0, size_t i1, size_t r, size_t *cnt,
                         uint64_t prefix, uint64_t mask, int shift)
{
  for (; shift >= 0; shift -= SEL_BITS) {
    size_t d = 0;
    memset(cnt, 0, SEL_RADIX * sizeof *cnt);
    for (size_t i = i0; i < i1; i++) {
      uint64_t key = key_of(dd_sel_value(t, y, which, i));
      if ((key & mask) == prefix)
        cnt[(key >> shift) & (SEL_RADIX - 1)]++;
    }
    while (r >= cnt[d])
      r -= cnt[d++];
    prefix |= (uint64_t)d << shift;
    mask |= (uint64_t)(SEL_RADIX - 1) << shift;
  }
  return val_of(prefix);
}

/* Values of the channel drawn to bracket the ranks: runs of SEL_RUN
 * neighbours at even spacing (one cache miss a run, not a value). */
#define SEL_SAMPLE 65536
#define SEL_RUN 256
/* Readings a chunk of the one-pass medians (two arrays of it stay in the
 * cache between its loops). */
#define SEL_CHUNK 8192

/*
 * The count of one pass that settles ranks r0 <= r1 when the values
 * bracketed by keys [klo, klo + span] hold them: the values below klo,
 * equal to klo and to the top key, and those strictly between gathered (at
 * most cap) to select among them.
 */
struct bracket {
  uint64_t klo, span;
  size_t nlt, nlo, nhi, g, cap, r0, r1;
  double *buf;
};

static inline void br_add(struct bracket *b, double x)
{
  uint64_t k = key_of(x);

  b->nlt += k < b->klo;
  if (k - b->klo <= b->span) { /* klo <= k <= khi, one test */
    if (k == b->klo)
      b->nlo++;
    else if (k == b->klo + b->span)
      b->nhi++;
    else if (b->g++ < b->cap)
      b->buf[b->g - 1] = x;
  }
}

/* br_add of the values of [i0, i1), the counts kept in registers. */
static void br_range(struct bracket *b, const double *t, const double *y,
                     int which, size_t i0, size_t i1)
{
  struct bracket l = *b;

  if (which == 0)
    for (size_t i = i0; i < i1; i++)
      br_add(&l, dd_sel_value(t, y, 0, i));
  else
    for (size_t i = i0; i < i1; i++)
      br_add(&l, dd_sel_value(t, y, 1, i));
  *b = l;
}

/* After the pass: 1 with v filled, 0 when a rank lies outside the bracket
 * or the gathered values overflowed cap. Frees the buffer. */
static int br_finish(struct bracket *b, double v[2])
{
  int ok = !(b->g > b->cap || b->r0 < b->nlt
             || b->r1 >= b->nlt + b->nlo + b->g + b->nhi);

  for (int j = 0; ok && j < 2; j++) {
    size_t q = (j == 0 ? b->r0 : b->r1) - b->nlt;
    if (q < b->nlo)
      v[j] = val_of(b->klo);
    else if (q - b->nlo < b->g)
      v[j] = gsl_stats_select(b->buf, 1, b->g, q - b->nlo);
    else
      v[j] = val_of(b->klo + b->span);
  }
  free(b->buf);
  b->buf = NULL;
  return ok;
}

/*
 * The bracket of ranks r0 <= r1 among dd_sel_value(t, y, which, i), i in
 * [i0, i1), from a sample of SEL_SAMPLE values at even spacing (runs of
 * SEL_RUN neighbours): its own quantiles, widened by four standard errors
 * of a sample quantile and more. 0, or -1 out of memory or bad ranks.
 */
static int br_setup(const double *t, const double *y, int which, size_t i0,
                    size_t i1, size_t r0, size_t r1, struct bracket *b)
{
  size_t m = i1 > i0 ? i1 - i0 : 0, s, gap, klo, khi, cap;
  double *smp, p0, p1, d, flo, fhi;
  uint64_t blo, bhi;

  memset(b, 0, sizeof *b);
  if (m == 0 || r0 > r1 || r1 >= m)
    return -1;
  s = m < SEL_SAMPLE ? m : SEL_SAMPLE;
  gap = s < m ? m / (s / SEL_RUN) : 0;   /* >= SEL_RUN when s < m */
  p0 = (double)r0 / (double)m;
  p1 = (double)r1 / (double)m;
  d = 4.0 * sqrt(0.25 / (double)s) + 4.0 / (double)s;
  flo = floor((p0 - d) * (double)s);
  fhi = ceil((p1 + d) * (double)s);
  klo = flo > 0.0 ? (size_t)flo : 0;
  khi = fhi < (double)(s - 1) ? (size_t)fhi : s - 1;
  smp = malloc(s * sizeof *smp);
  if (smp == NULL)
    return -1;
  for (size_t k = 0; k < s; k++)
    smp[k] = dd_sel_value(t, y, which, s == m ? i0 + k
                          : i0 + k / SEL_RUN * gap + k % SEL_RUN);
  blo = key_of(gsl_stats_select(smp, 1, s, klo));
  bhi = key_of(gsl_stats_select(smp, 1, s, khi));
  free(smp);
  /* Twice the share of the values the bracket should hold, and some. */
  cap = (size_t)(2.0 * (double)(khi - klo + 1) / (double)s * (double)m)
        + 1024;
  if (cap > m)
    cap = m;
  b->klo = blo;
  b->span = bhi - blo;
  b->cap = cap;
  b->r0 = r0;
  b->r1 = r1;
  b->buf = malloc((cap > 0 ? cap : 1) * sizeof *b->buf);
  return b->buf != NULL ? 0 : -1;
}

/*
 * The values of ranks r0 <= r1 among dd_sel_value(t, y, which, i), i in
 * [i0, i1), into v[0] and v[1], exactly. A sample of SEL_SAMPLE values at
 * even spacing (runs of 256 neighbours) brackets the ranks (its own quantiles, widened by four
 * standard errors of a sample quantile and more); one pass over the
 * channel then counts what lies below the bracket and gathers what lies in
 * it (a few per cent of the values), and the ranks are selected among
 * those. The sample only chooses the bracket: when a rank falls outside it
 * (a chance of about 1e-4), a radix selection on the bit patterns, 16 bits
 * a pass, gives the value. cnt: SEL_RADIX counters. Returns 0, or -1 when
 * out of memory.
 */
int dd_select_pair(const double *t, const double *y, int which, size_t i0,
                   size_t i1, size_t r0, size_t r1, size_t *cnt, double v[2])
{
  struct bracket b;

  if (br_setup(t, y, which, i0, i1, r0, r1, &b) != 0) {
    free(b.buf);
    return -1;
  }
  br_range(&b, t, y, which, i0, i1);
  if (br_finish(&b, v))
    return 0;
  v[0] = radix_rank(t, y, which, i0, i1, r0, cnt, 0, 0, 64 - SEL_BITS);
  v[1] = r1 == r0 ? v[0] : radix_rank(t, y, which, i0, i1, r1, cnt, 0, 0,
                                      64 - SEL_BITS);
  return 0;
}

/* How many i of [i0, i1) (i0 >= 1) have |y[i] - y[i-1]| * inv more than
 * 0.01 from the whole number dd_near_int gives. */
static size_t off_count(const double *y, size_t i0, size_t i1, double inv)
{
  size_t bad = 0, i = i0;

#ifdef __SSE2__
  /* Two a register, without a branch: the same IEEE operations as
   * dd_near_int and the test below, lane by lane, so the same count. */
  {
    const __m128d sign = _mm_set1_pd(-0.0), two52 = _mm_set1_pd(
                    4503599627370496.0), lim = _mm_set1_pd(0.01),
                  vi = _mm_set1_pd(inv);
    for (; i + 2 <= i1; i += 2) {
      __m128d d = _mm_sub_pd(_mm_loadu_pd(y + i), _mm_loadu_pd(y + i - 1));
      __m128d q = _mm_mul_pd(_mm_andnot_pd(sign, d), vi);
      __m128d r = _mm_sub_pd(_mm_add_pd(q, two52), two52);
      __m128d lt = _mm_cmplt_pd(q, two52);
      __m128d nr = _mm_or_pd(_mm_and_pd(lt, r), _mm_andnot_pd(lt, q));
      __m128d e = _mm_andnot_pd(sign, _mm_sub_pd(q, nr));
      int m = _mm_movemask_pd(_mm_cmpgt_pd(e, lim));
      bad += (size_t)(m & 1) + (size_t)(m >> 1);
    }
  }
#endif
  for (; i < i1; i++) {
    double q = fabs(y[i] - y[i - 1]) * inv;
    bad += fabs(q - dd_near_int(q)) > 0.01;
  }
  return bad;
}

/*
 * Both medians' ranks of a channel of n readings in one pass: which 0 over
 * [1, n - 1) and which 1 over [1, n), ranks r[which][0..1], values into
 * v[which]; the same values as dd_select_pair gives each. When inv > 0 the
 * same pass counts into *off the changes i in [1, n) whose
 * |y[i] - y[i-1]| * inv lies more than 0.01 from a whole number (as the
 * quantisation test of detect.c counts them). 0, or -1 out of memory.
 */
int dd_select_medians(const double *t, const double *y, size_t n,
                      const size_t r[2][2], double inv, size_t *off,
                      size_t *cnt, double v[2][2])
{
  struct bracket b0 = { .buf = NULL }, b1 = { .buf = NULL };
  size_t bad = 0;
  int ok0, ok1;

  if (n < 3)
    return -1;
  if (br_setup(t, y, 0, 1, n - 1, r[0][0], r[0][1], &b0) != 0
      || br_setup(t, y, 1, 1, n, r[1][0], r[1][1], &b1) != 0) {
    free(b0.buf);
    free(b1.buf);
    return -1;
  }
  /* A chunk at a time, each count in its own loop: the chunk is read from
   * memory once and again from the cache, and each loop keeps its counts
   * in registers. */
  for (size_t c0 = 1; c0 < n; c0 += SEL_CHUNK) {
    size_t c1 = c0 + SEL_CHUNK < n ? c0 + SEL_CHUNK : n;
    br_range(&b0, t, y, 0, c0, c1 < n - 1 ? c1 : n - 1);
    br_range(&b1, t, y, 1, c0, c1);
    if (inv > 0.0)
      bad += off_count(y, c0, c1, inv);
  }
  *off = bad;
  ok0 = br_finish(&b0, v[0]);
  ok1 = br_finish(&b1, v[1]);
  /* A rank outside its bracket (a chance of about 1e-4): the exact
   * radix selection for that median alone. */
  for (int w = 0; w < 2; w++) {
    size_t i1 = w == 0 ? n - 1 : n;
    if (w == 0 ? ok0 : ok1)
      continue;
    v[w][0] = radix_rank(t, y, w, 1, i1, r[w][0], cnt, 0, 0, 64 - SEL_BITS);
    v[w][1] = r[w][1] == r[w][0] ? v[w][0]
              : radix_rank(t, y, w, 1, i1, r[w][1], cnt, 0, 0,
                           64 - SEL_BITS);
  }
  return 0;
}
