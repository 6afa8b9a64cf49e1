/* detect_select.c - exact order statistics of a long channel's second
 * differences and time steps without a copy of the channel: detect stage
 * (the noise and sampling-step medians of detect.c). */
#include "detect_impl.h"

#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

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

/*
 * One pass that settles ranks r0 <= r1 when the values bracketed by keys
 * [klo, khi] hold them: counts the values below klo, equal to klo and to
 * khi, and gathers those strictly between (at most cap) to select among
 * them. Returns 1 with v filled, 0 when a rank lies outside the bracket or
 * the gathered values overflow cap, -1 when out of memory.
 */
static int bracket_pass(const double *t, const double *y, int which,
                        size_t i0, size_t i1, size_t r0, size_t r1,
                        uint64_t klo, uint64_t khi, size_t cap, double v[2])
{
  size_t nlt = 0, nlo = 0, nhi = 0, g = 0;
  uint64_t span = khi - klo;
  double *buf = malloc((cap > 0 ? cap : 1) * sizeof *buf);

  if (buf == NULL)
    return -1;
  for (size_t i = i0; i < i1; i++) {
    double x = dd_sel_value(t, y, which, i);
    uint64_t k = key_of(x);
    nlt += k < klo;
    if (k - klo <= span) {     /* klo <= k <= khi, one test */
      if (k == klo)
        nlo++;
      else if (k == khi)
        nhi++;
      else if (g++ < cap)
        buf[g - 1] = x;
    }
  }
  if (g > cap || r0 < nlt || r1 >= nlt + nlo + g + nhi) {
    free(buf);
    return 0;
  }
  for (int j = 0; j < 2; j++) {
    size_t q = (j == 0 ? r0 : r1) - nlt;
    if (q < nlo)
      v[j] = val_of(klo);
    else if (q - nlo < g)
      v[j] = gsl_stats_select(buf, 1, g, q - nlo);
    else
      v[j] = val_of(khi);
  }
  free(buf);
  return 1;
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
  size_t m = i1 > i0 ? i1 - i0 : 0, s, gap, klo, khi, cap;
  double *smp, p0, p1, d, flo, fhi;
  uint64_t blo, bhi;
  int st;

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
  st = bracket_pass(t, y, which, i0, i1, r0, r1, blo, bhi, cap, v);
  if (st != 0)
    return st < 0 ? -1 : 0;
  v[0] = radix_rank(t, y, which, i0, i1, r0, cnt, 0, 0, 64 - SEL_BITS);
  v[1] = r1 == r0 ? v[0] : radix_rank(t, y, which, i0, i1, r1, cnt, 0, 0,
                                      64 - SEL_BITS);
  return 0;
}
