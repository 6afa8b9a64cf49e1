/* detect.c - cooling curve to freeze events: segmentation, the choice of
 * method and the event record; detect stage, after import. The readings
 * themselves are in detect_methods.c; docs/methods/detection.md explains. */
#include "frostfit/detect.h"
#include "detect_impl.h"

#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#ifdef __SSE2__
#include <emmintrin.h>
#endif

/* Fewest points a channel must have to be analysed at all. */
#define MIN_POINTS 20
/* Liquid cooling looked at before a candidate nucleation, s: it must fall. */
#define PRE_WINDOW_S 30.0
/* After a recalescence the branch falls slower than the liquid did: at
 * most this fraction of its rate over the window (a concentrated solution
 * in a large-Kf solvent comes nearest, about half); a spike falls back at
 * the liquid's rate or faster. */
#define SPIKE_RATIO 0.8
#define SPIKE_WINDOW_S 30.0
/* Window of the slope-break search (no supercooling), s. */
#define BREAK_WINDOW_S 30.0
/* A sample about to freeze cools by far more than this over the window
 * (a few kelvin to the bath, tau of minutes); a bath probe's flicker never
 * does. */
#define BREAK_MIN_DROP_K 0.1
/* Slope before a break must exceed the slope after by this factor: an
 * exponential approach to the bath with tau > 15 s never does over 30 s. */
#define BREAK_RATIO 8.0
/* Start of the liquid branch skipped for the Newton fit, s: without a
 * measure of the probe lag (a 5 s lag leaves 0.25 % of the initial offset
 * after 30 s), and at least, with one. */
#define LIQUID_SKIP_S 30.0
#define LIQUID_SKIP_MIN_S 10.0
/* Largest credible distance between the model's pure-solvent freezing
 * point and the table's, K: calibration offsets of lab probes stay well
 * below it (common practice, no source). */
#define SOLVENT_MISMATCH_K 1.0
/* After a slope break the probe lag rounds the corner; settle this long. */
#define BREAK_SETTLE_S 30.0
/* A thaw is a rise of this much above the lowest point of the branch, K. */
#define THAW_RISE_K 0.1
/* Melted again: this far above the freezing plateau, K. */
#define MELT_MARGIN_K 0.2

/* Water, for the model when no solvent is given: IAPWS-95/06 values at
 * 273.15 K (REFERENCES.md section 1.1, "IAPWS-95/06 via python3-iapws,
 * computed"); the same numbers as the water row of datasets/solvents.csv. */
#define WATER_CP_LIQ 4.2194
#define WATER_CP_SOL 2.0967
#define WATER_DH_FUS 6006.77
#define WATER_M 18.015268

static const char *const method_names[FF_METHOD_COUNT] = {
  "auto", "plateau", "peak", "extrapolate", "intersect", "break", "model"
};

const char *ff_method_name(enum ff_method m)
{
  return (unsigned)m < FF_METHOD_COUNT ? method_names[m] : "?";
}

int ff_method_parse(const char *s, enum ff_method *out)
{
  for (int m = 0; m < FF_METHOD_COUNT; m++)
    if (strcasecmp(s, method_names[m]) == 0) {
      *out = (enum ff_method)m;
      return 0;
    }
  return -1;
}

static const struct {
  unsigned bit;
  const char *name, *text;
} flag_info[FF_FLAG_COUNT] = {
  { FF_FLAG_NO_NUCLEATION, "no_nucleation",
    "no supercooling seen: the freezing point is the slope break" },
  { FF_FLAG_BRANCH_SHORT, "branch_short",
    "freezing branch too short to fit" },
  { FF_FLAG_NOISY, "noisy", "noisy readings (above 20 mK)" },
  { FF_FLAG_BATH_DRIFT, "bath_drift",
    "liquid cooling does not follow Newton's law: the bath drifts or the "
    "stirring changed" },
  { FF_FLAG_LAG_UNSETTLED, "lag_unsettled",
    "the probe was still settling over much of the freezing branch" },
  { FF_FLAG_AT_END, "at_end", "the file ends during the freeze" },
  { FF_FLAG_LIQUID_SHORT, "liquid_short",
    "too little liquid cooling before nucleation for the Newton fit" },
  { FF_FLAG_FIT_FAILED, "fit_failed", "the chosen fit failed" },
  { FF_FLAG_METHODS_DISAGREE, "methods_disagree",
    "the methods disagree beyond their uncertainties" },
  { FF_FLAG_PEAK_ONLY, "peak_only",
    "only the maximum after recalescence could be read; it sits low" },
  { FF_FLAG_COARSE, "coarse",
    "thermometer resolution coarse (50 mK or more)" },
  { FF_FLAG_SOLVENT_MISMATCH, "solvent_mismatch",
    "the freezing branch implies a pure-solvent freezing point far from "
    "the solvent's: wrong solvent, or a badly calibrated probe" },
};

const char *ff_flag_name(unsigned flag)
{
  for (int i = 0; i < FF_FLAG_COUNT; i++)
    if (flag_info[i].bit == flag)
      return flag_info[i].name;
  return NULL;
}

const char *ff_flag_text(unsigned flag)
{
  for (int i = 0; i < FF_FLAG_COUNT; i++)
    if (flag_info[i].bit == flag)
      return flag_info[i].text;
  return NULL;
}

void ff_event_list_release(struct ff_event_list *l)
{
  if (l == NULL)
    return;
  free(l->v);
  memset(l, 0, sizeof *l);
}

double ff_event_eval_liquid(const struct ff_event *e, double t)
{
  const struct ff_liquid_fit *l = &e->liquid;

  if (l->kind == 1)
    return l->bath_c + (l->t0_c - l->bath_c) * exp(-(t - l->t_ref_s)
                                                    / l->tau_s);
  return ff_event_eval_liquid_line(e, t);
}

double ff_event_eval_liquid_line(const struct ff_event *e, double t)
{
  const struct ff_liquid_fit *l = &e->liquid_line;

  if (l->kind != 2)
    return NAN;
  return l->t0_c + l->slope_k_s * (t - l->t_ref_s);
}

double ff_event_eval_branch(const struct ff_event *e, double t)
{
  const struct ff_branch_fit *b = &e->branch;
  double s = t - b->t_ref_s;

  if (!b->ok)
    return NAN;
  return b->c[0] + b->c[1] * s + (b->order > 1 ? b->c[2] * s * s : 0.0);
}

/* ---- the channel ------------------------------------------------------ */

size_t dd_index_at(const struct dctx *c, double t_s)
{
  size_t lo = 0, hi = c->n;

  while (lo < hi) {            /* first index with t >= t_s */
    size_t mid = lo + (hi - lo) / 2;
    if (c->t[mid] < t_s)
      lo = mid + 1;
    else
      hi = mid;
  }
  return lo < c->n ? lo : c->n - 1;
}

/* What the pass over the input learns for the noise estimate: the largest
 * |reading|, the smallest change (between neighbours; +inf when none)
 * and how many changes are 0 (for quantum()). */
struct input_scan {
  double ymax, step;
  size_t zeros;
};

static int check_input(const double *t, const double *y, size_t n,
                       struct input_scan *sc, struct ff_diag *d)
{
  /* One pass without a branch that asks whether all is well (a double is
   * infinite or NaN when its exponent bits are all set); the loop below
   * finds the first bad reading only when it is not. The same pass takes
   * what the noise estimate needs, meaningful once all is well. */
  const uint64_t e = 0x7ff0000000000000u;
  uint64_t bad, a0, b0;
  int ok = 1;
  double ymax = fabs(y[0]), step = INFINITY;
  size_t zeros = 0;

  size_t i = 1;

  memcpy(&a0, &t[0], sizeof a0);
  memcpy(&b0, &y[0], sizeof b0);
  bad = ((a0 & e) == e) | ((b0 & e) == e);
#ifdef __SSE2__
  /* Two readings a register: x * 0 is NaN only when x is not finite; the
   * smallest change and the largest reading are exact whatever the order,
   * the counts are counts, so the same results as the loop below. */
  {
    const __m128d sign = _mm_set1_pd(-0.0), zero = _mm_setzero_pd(),
                  inf = _mm_set1_pd(INFINITY);
    __m128d vbad = zero, vok = _mm_cmpeq_pd(zero, zero), vstep = inf,
            vmax = _mm_set1_pd(ymax);
    double l[2];
    for (; i + 2 <= n; i += 2) {
      __m128d tc = _mm_loadu_pd(t + i), tp = _mm_loadu_pd(t + i - 1),
              yc = _mm_loadu_pd(y + i), yp = _mm_loadu_pd(y + i - 1);
      __m128d s = _mm_andnot_pd(sign, _mm_sub_pd(yc, yp));
      __m128d pos = _mm_cmpgt_pd(s, zero);
      int m = _mm_movemask_pd(pos);
      vbad = _mm_or_pd(vbad, _mm_cmpunord_pd(_mm_mul_pd(tc, zero),
                                             _mm_mul_pd(yc, zero)));
      vok = _mm_and_pd(vok, _mm_cmpgt_pd(tc, tp));
      zeros += 2 - (size_t)(m & 1) - (size_t)(m >> 1);
      vstep = _mm_min_pd(vstep, _mm_or_pd(_mm_and_pd(pos, s),
                                          _mm_andnot_pd(pos, inf)));
      vmax = _mm_max_pd(_mm_andnot_pd(sign, yc), vmax);
    }
    bad |= _mm_movemask_pd(vbad) != 0;
    ok &= _mm_movemask_pd(vok) == 3;
    _mm_storeu_pd(l, vstep);
    step = l[0] < l[1] ? l[0] : l[1];
    _mm_storeu_pd(l, vmax);
    ymax = l[0] > l[1] ? l[0] : l[1];
  }
#endif
  for (; i < n; i++) {
    uint64_t a, b;
    double s = fabs(y[i] - y[i - 1]), ay = fabs(y[i]);
    memcpy(&a, &t[i], sizeof a);
    memcpy(&b, &y[i], sizeof b);
    bad |= ((a & e) == e) | ((b & e) == e);
    ok &= t[i] > t[i - 1];
    zeros += !(s > 0.0);
    step = s > 0.0 && s < step ? s : step;
    ymax = ay > ymax ? ay : ymax;   /* finite: fmax without a call */
  }
  sc->ymax = ymax;
  sc->step = step;
  sc->zeros = zeros;
  if (ok && !bad)
    return FF_OK;
  for (i = 0; i < n; i++) {
    if (!isfinite(t[i]) || !isfinite(y[i]))
      return ff_diag_set(d, FF_EINPUT, NULL, "reading %zu is not a finite "
                         "number (compact missing values first)", i + 1);
    if (i > 0 && !(t[i] > t[i - 1]))
      return ff_diag_set(d, FF_EINPUT, NULL, "time does not increase at "
                         "reading %zu (%.6g s after %.6g s)", i + 1, t[i],
                         t[i - 1]);
  }
  return FF_OK;
}

/*
 * The reading step when the data are quantised: the smallest change seen,
 * if (nearly) every change is a whole multiple of it, or if many successive
 * readings repeat exactly. 0 when the readings look continuous.
 */
static double quantum(const struct dctx *c, double step, size_t zeros)
{
  size_t bad = 0;

  if (!isfinite(step) || !(step > 0.0))
    return 0.0;
  if (zeros > c->n / 5)
    return step;
  /* Times the reciprocal rather than divided by step: a rounding of q
   * apart, which moves a change only across the 0.01 limit, never by it. */
  double inv = 1.0 / step;
  for (size_t i = 1; i < c->n; i++) {
    double q = fabs(c->y[i] - c->y[i - 1]) * inv;
    bad += fabs(q - dd_near_int(q)) > 0.01;
  }
  return bad <= c->n / 100 ? step : 0.0;
}

/*
 * Noise of one reading from second differences (robust to the signal's
 * slow curvature and to the few jumps of recalescence): for white noise
 * var(y[i+1] - 2 y[i] + y[i-1]) = 6 sigma^2; MAD * 1.4826 estimates sd.
 * Resolution: see quantum().
 */
/* The values whose medians estimate_noise takes: which 0, the absolute
 * second difference at i (1 <= i < n - 1); 1, the time step at i
 * (1 <= i < n). */
static double est_value(const struct dctx *c, int which, size_t i)
{
  return dd_sel_value(c->t, c->y, which, i);
}

/* Channels longer than this take their medians without a copy. */
#define MEDIAN_COPY_MAX 65536

/* Median of est_value over [i0, i1) into *out through a copy (short
 * channels, or a NaN among the values): the middle value, or the mean of
 * the two middle values, as gsl_stats_median gives it. -1 when out of
 * memory. */
static int est_median(const struct dctx *c, int which, size_t i0,
                      size_t i1, double *out)
{
  size_t m = i1 - i0;
  double *v = malloc(m * sizeof *v);

  if (v == NULL)
    return -1;
  for (size_t i = i0; i < i1; i++)
    v[i - i0] = est_value(c, which, i);
  *out = dd_median(v, m);
  free(v);
  return 0;
}

static int estimate_noise(struct dctx *c, const struct input_scan *sc)
{
  size_t n = c->n, zeros = sc->zeros, *cnt = NULL;
  double step = sc->step, med;
  int plain = 1, st;

  /* Second differences of finite readings may overflow to +inf but are
   * never NaN; a NaN would take the copy. check_input found the smallest
   * change and counted the repeats (for quantum()). */
  c->ymax = sc->ymax;
  /* Only a reading beyond a quarter of the largest double can make one
   * overflow (4 max|y| bounds it); look for NaN then only. */
  if (!(c->ymax < 0.25 * DBL_MAX))
    for (size_t i = 1; i + 1 < n; i++)
      plain &= !isnan(est_value(c, 0, i));
  if (n > MEDIAN_COPY_MAX && plain) {
    /* Long channels: both medians, and the count of quantum()'s test when
     * it is needed, in one pass. */
    size_t r[2][2] = { { (n - 3) / 2, (n - 2) / 2 },
                       { (n - 2) / 2, (n - 1) / 2 } }, off = 0;
    double v[2][2], inv = 0.0;
    int count = c->p->resolution_k <= 0.0 && isfinite(step) && step > 0.0
                && zeros <= n / 5;
    if (count)   /* as quantum() forms it */
      inv = 1.0 / step;
    cnt = malloc(DD_SEL_RADIX * sizeof *cnt);
    if (cnt == NULL)
      return -1;
    st = dd_select_medians(c->t, c->y, n, (const size_t (*)[2])r, inv, &off,
                           cnt, v);
    free(cnt);
    if (st != 0)
      return -1;
    med = r[0][0] != r[0][1] ? (v[0][0] + v[0][1]) / 2.0 : v[0][0];
    c->sigma = 1.4826 * med / sqrt(6.0);
    c->dt = r[1][0] != r[1][1] ? (v[1][0] + v[1][1]) / 2.0 : v[1][0];
    if (c->p->resolution_k > 0.0)
      c->res = c->p->resolution_k;
    else if (count)
      c->res = off <= n / 100 ? step : 0.0;
    else
      c->res = quantum(c, step, zeros);   /* decided without the loop */
  } else {
    if (est_median(c, 0, 1, n - 1, &med) != 0
        || est_median(c, 1, 1, n, &c->dt) != 0)
      return -1;
    c->sigma = 1.4826 * med / sqrt(6.0);
    if (c->p->resolution_k > 0.0)
      c->res = c->p->resolution_k;
    else
      c->res = quantum(c, step, zeros);
  }
  /* Quantisation alone leaves a rectangular error of sd res/sqrt(12). */
  if (c->sigma < c->res / sqrt(12.0))
    c->sigma = c->res / sqrt(12.0);
  if (!(c->sigma > 0.0))
    c->sigma = 1e-6;           /* a perfect curve: keep ratios finite */
  return 0;
}

static size_t half_width(const struct dctx *c)
{
  double h = 2.0 / c->dt;     /* about +-2 s */

  if (h < 1.0)
    return 1;
  return h > 10.0 ? 10 : (size_t)(h + 0.5);
}

/* Centred moving average at i: no phase shift, so times are not moved. */
static double smooth_at(const struct dctx *c, size_t i)
{
  size_t h = c->h;
  size_t a = i > h ? i - h : 0, b = i + h + 1 < c->n ? i + h + 1 : c->n;
  double s = 0.0;

  for (size_t j = a; j < b; j++)
    s += c->y[j];
  return s / (double)(b - a);
}

/* Readings summed side by side: independent sums keep the adder busy
 * where one sum waits for its previous addition. */
#define SMOOTH_LANES 8

/*
 * smooth_at for every j of [i0, i1) into out. Where the window is whole,
 * SMOOTH_LANES neighbouring sums are formed together, each the same
 * additions in the same order as smooth_at's (from 0.0, left to right), so
 * each value is the same number; the edges of the channel go through
 * smooth_at itself.
 */
#if defined(__SSE2__) && defined(__x86_64__) && defined(__GNUC__)
#include <immintrin.h>
#define SMOOTH_AVX2 32         /* sums formed together by smooth_avx2 */
/*
 * The whole windows of [a, b) that fill SMOOTH_AVX2 sums together, on a
 * processor with AVX2 (four sums a register, eight registers): lane l of
 * register r at step q adds reading j - h + q + 4 r + l, the q-th term of
 * sum 4 r + l, from 0.0, left to right, as smooth_at does; IEEE addition
 * and division lane by lane, so the same numbers. Returns where it
 * stopped.
 */
__attribute__((target("avx2")))
static size_t smooth_avx2(const struct dctx *c, size_t i0, size_t a,
                          size_t b, double *out)
{
  size_t h = c->h, wn = 2 * h + 1, j;
  __m256d w4 = _mm256_set1_pd((double)wn);

  for (j = a; j + SMOOTH_AVX2 <= b; j += SMOOTH_AVX2) {
    const double *y = c->y + (j - h);
    double *o = out + (j - i0);
    __m256d s0 = _mm256_setzero_pd(), s1 = s0, s2 = s0, s3 = s0, s4 = s0,
            s5 = s0, s6 = s0, s7 = s0;
    for (size_t q = 0; q < wn; q++) {
      const double *yq = y + q;
      s0 = _mm256_add_pd(s0, _mm256_loadu_pd(yq));
      s1 = _mm256_add_pd(s1, _mm256_loadu_pd(yq + 4));
      s2 = _mm256_add_pd(s2, _mm256_loadu_pd(yq + 8));
      s3 = _mm256_add_pd(s3, _mm256_loadu_pd(yq + 12));
      s4 = _mm256_add_pd(s4, _mm256_loadu_pd(yq + 16));
      s5 = _mm256_add_pd(s5, _mm256_loadu_pd(yq + 20));
      s6 = _mm256_add_pd(s6, _mm256_loadu_pd(yq + 24));
      s7 = _mm256_add_pd(s7, _mm256_loadu_pd(yq + 28));
    }
    _mm256_storeu_pd(o, _mm256_div_pd(s0, w4));
    _mm256_storeu_pd(o + 4, _mm256_div_pd(s1, w4));
    _mm256_storeu_pd(o + 8, _mm256_div_pd(s2, w4));
    _mm256_storeu_pd(o + 12, _mm256_div_pd(s3, w4));
    _mm256_storeu_pd(o + 16, _mm256_div_pd(s4, w4));
    _mm256_storeu_pd(o + 20, _mm256_div_pd(s5, w4));
    _mm256_storeu_pd(o + 24, _mm256_div_pd(s6, w4));
    _mm256_storeu_pd(o + 28, _mm256_div_pd(s7, w4));
  }
  return j;
}

#endif

static void smooth_block(const struct dctx *c, size_t i0, size_t i1,
                         double *out)
{
  size_t h = c->h, wn = 2 * h + 1, a, b, j;
  double wd = (double)wn;

  a = i0 > h ? i0 : h;                       /* j - h >= 0 */
  b = c->n >= h && i1 > c->n - h ? c->n - h : i1;   /* j + h < n */
  if (a > i1)
    a = i1;
  if (b < a)
    b = a;
  for (j = i0; j < a; j++)
    out[j - i0] = smooth_at(c, j);
#ifdef SMOOTH_AVX2
  if (__builtin_cpu_supports("avx2"))   /* reads a word set at start-up */
    a = smooth_avx2(c, i0, a, b, out);
#endif
  for (j = a; j + SMOOTH_LANES <= b; j += SMOOTH_LANES) {
    const double *y = c->y + (j - h);
    double *o = out + (j - i0);
#ifdef __SSE2__
    /* Two neighbouring sums a register: lane l of y + q is reading
     * j - h + q + l, the q-th term of sum l. IEEE addition lane by lane,
     * so the same numbers as the scalar code below. */
    __m128d s01 = _mm_setzero_pd(), s23 = _mm_setzero_pd(),
            s45 = _mm_setzero_pd(), s67 = _mm_setzero_pd(),
            w2 = _mm_set1_pd(wd);
    for (size_t q = 0; q < wn; q++) {
      s01 = _mm_add_pd(s01, _mm_loadu_pd(y + q));
      s23 = _mm_add_pd(s23, _mm_loadu_pd(y + q + 2));
      s45 = _mm_add_pd(s45, _mm_loadu_pd(y + q + 4));
      s67 = _mm_add_pd(s67, _mm_loadu_pd(y + q + 6));
    }
    _mm_storeu_pd(o, _mm_div_pd(s01, w2));
    _mm_storeu_pd(o + 2, _mm_div_pd(s23, w2));
    _mm_storeu_pd(o + 4, _mm_div_pd(s45, w2));
    _mm_storeu_pd(o + 6, _mm_div_pd(s67, w2));
#else
    double s0 = 0.0, s1 = 0.0, s2 = 0.0, s3 = 0.0, s4 = 0.0, s5 = 0.0,
           s6 = 0.0, s7 = 0.0;
    for (size_t q = 0; q < wn; q++) {
      s0 += y[q];
      s1 += y[q + 1];
      s2 += y[q + 2];
      s3 += y[q + 3];
      s4 += y[q + 4];
      s5 += y[q + 5];
      s6 += y[q + 6];
      s7 += y[q + 7];
    }
    o[0] = s0 / wd;
    o[1] = s1 / wd;
    o[2] = s2 / wd;
    o[3] = s3 / wd;
    o[4] = s4 / wd;
    o[5] = s5 / wd;
    o[6] = s6 / wd;
    o[7] = s7 / wd;
#endif
  }
  for (; j < i1; j++)
    out[j - i0] = smooth_at(c, j);
}

/*
 * The largest and smallest of v[0, len) (len >= 1) and the first index of
 * each, as a loop with strict comparisons finds them when no value is NaN
 * (the callers use them only then; with a NaN they are some value and
 * index of the block). The extremes are exact in any order, so they are
 * taken four at a time; the first index is then the first value not
 * below (not above) it.
 */
static void block_extremes(const double *v, size_t len, double *tv,
                           size_t *at, double *bv, size_t *bt)
{
  double hi = v[0], lo = v[0];
  size_t j = 1, k;

#ifdef __SSE2__
  {
    __m128d a0 = _mm_set1_pd(v[0]), a1 = a0, b0 = a0, b1 = a0;
    double l[4];
    for (; j + 4 <= len; j += 4) {
      __m128d x0 = _mm_loadu_pd(v + j), x1 = _mm_loadu_pd(v + j + 2);
      a0 = _mm_max_pd(x0, a0);
      a1 = _mm_max_pd(x1, a1);
      b0 = _mm_min_pd(x0, b0);
      b1 = _mm_min_pd(x1, b1);
    }
    _mm_storeu_pd(l, _mm_max_pd(a0, a1));
    _mm_storeu_pd(l + 2, _mm_min_pd(b0, b1));
    hi = l[0] > l[1] ? l[0] : l[1];
    lo = l[2] < l[3] ? l[2] : l[3];
  }
#endif
  for (; j < len; j++) {
    hi = v[j] > hi ? v[j] : hi;
    lo = v[j] < lo ? v[j] : lo;
  }
  for (k = 0; k + 1 < len && v[k] < hi; k++)
    ;
  *tv = v[k];
  *at = k;
  for (k = 0; k + 1 < len && v[k] > lo; k++)
    ;
  *bv = v[k];
  *bt = k;
}

double dd_ys_fill(const struct dctx *c, size_t i)
{
  struct ys_cache *k = c->ysc;
  size_t tag = i / YS_BLOCK + 1, i0, i1;
  unsigned w = 0;

  for (unsigned q = 0; q < k->ways; q++)
    if (k->tag[q] == tag) {
      k->last = q;
      return k->v[(size_t)q * YS_BLOCK + i % YS_BLOCK];
    }
  for (unsigned q = 0; q < k->ways; q++) {  /* empty, or filled first */
    if (k->tag[q] == 0) {
      w = q;
      break;
    }
    if (k->filled[q] < k->filled[w])
      w = q;
  }
  i0 = (tag - 1) * YS_BLOCK;
  i1 = i0 + YS_BLOCK < c->n ? i0 + YS_BLOCK : c->n;
  smooth_block(c, i0, i1, k->v + (size_t)w * YS_BLOCK);
  {
    const double *v = k->v + (size_t)w * YS_BLOCK;
    size_t at, bt;
    double tv, bv;
    block_extremes(v, i1 - i0, &tv, &at, &bv, &bt);
    k->top_v[tag - 1] = tv;
    k->top_i[tag - 1] = i0 + at;
    k->bot_v[tag - 1] = bv;
    k->bot_i[tag - 1] = i0 + bt;
  }
  k->tag[w] = tag;
  k->filled[w] = ++k->clock;
  k->last = w;
  return k->v[(size_t)w * YS_BLOCK + i % YS_BLOCK];
}

/* The smoothed readings' cache; whether any of them is NaN (only sums
 * that overflow give one: none when (2h+1) max|y| is finite). */
static int smooth(struct dctx *c)
{
  size_t nb = (c->n + YS_BLOCK - 1) / YS_BLOCK;
  double big = c->ymax;        /* from estimate_noise */

  c->h = half_width(c);
  c->ysc = calloc(1, sizeof *c->ysc);
  if (c->ysc == NULL)
    return -1;
  c->ysc->ways = nb < YS_WAYS ? (unsigned)nb : YS_WAYS;
  c->ysc->v = malloc((size_t)c->ysc->ways * YS_BLOCK * sizeof *c->ysc->v);
  c->ysc->top_v = malloc(nb * sizeof *c->ysc->top_v);
  c->ysc->top_i = malloc(nb * sizeof *c->ysc->top_i);
  c->ysc->bot_v = malloc(nb * sizeof *c->ysc->bot_v);
  c->ysc->bot_i = malloc(nb * sizeof *c->ysc->bot_i);
  if (c->ysc->v == NULL || c->ysc->top_v == NULL || c->ysc->top_i == NULL
      || c->ysc->bot_v == NULL || c->ysc->bot_i == NULL)
    return -1;
  for (size_t b = 0; b < nb; b++)
    c->ysc->top_i[b] = SIZE_MAX;
  if (!isfinite(big * (double)(2 * c->h + 2)))
    for (size_t i = 0; i < c->n && !c->ys_nan; i++)
      if (isnan(smooth_at(c, i)))
        c->ys_nan = 1;
  return 0;
}

static void smooth_free(struct dctx *c)
{
  if (c->ysc != NULL) {
    free(c->ysc->v);
    free(c->ysc->top_v);
    free(c->ysc->top_i);
    free(c->ysc->bot_v);
    free(c->ysc->bot_i);
  }
  free(c->ysc);
  c->ysc = NULL;
}

static int push(struct ff_event_list *l, const struct ff_event *e)
{
  if (l->n == l->cap) {
    size_t cap = l->cap ? 2 * l->cap : 4;
    struct ff_event *v = realloc(l->v, cap * sizeof *v);
    if (v == NULL)
      return -1;
    l->v = v;
    l->cap = cap;
  }
  l->v[l->n++] = *e;
  return 0;
}

/* A candidate nucleation: the smallest rise counted. */
static double rise_threshold(const struct dctx *c)
{
  double s = c->p->min_rise_sigma * c->sigma
             / sqrt(2.0 * (double)half_width(c) + 1.0);

  return fmax(c->p->min_supercool_k, fmax(s, 3.0 * c->res));
}

/*
 * End (exclusive) of the freezing branch that starts at i: where the thaw
 * rise leaves the lowest level of the branch, or the end of the file
 * (*thaw = 0). A thaw is a rise of THAW_RISE_K (at least the rise
 * threshold) above the running minimum; the branch ends at the last point
 * still within the noise of that minimum, so a flat plateau is kept whole
 * wherever its noise happened to dip lowest.
 */
static size_t branch_end(const struct dctx *c, size_t i, double rise,
                         int *thaw)
{
  size_t rm = i;
  double lim = fmax(rise, THAW_RISE_K);
  double tol = fmax(4.0 * c->sigma / sqrt(2.0 * (double)half_width(c) + 1.0),
                    2.0 * c->res);

  *thaw = 0;
  double ym = dd_ys(c, rm);     /* the value at rm, kept */

  for (size_t k = i; k < c->n; k++) {
    /* A whole block whose largest value stays within lim of the lowest
     * so far (its own smallest included) holds no thaw: its smallest
     * value and first index are where the running minimum would go. */
    if (k % YS_BLOCK == 0 && k + YS_BLOCK <= c->n && !c->ys_nan) {
      const struct ys_cache *yc = c->ysc;
      size_t blk = k / YS_BLOCK;
      if (yc->top_i[blk] == SIZE_MAX)
        (void)dd_ys_fill(c, k);  /* fills the block, its extremes */
      double lo = yc->bot_v[blk] < ym ? yc->bot_v[blk] : ym;
      if (!(yc->top_v[blk] > lo + lim)) {
        if (yc->bot_v[blk] < ym) {
          ym = yc->bot_v[blk];
          rm = yc->bot_i[blk];
        }
        k += YS_BLOCK - 1;
        continue;
      }
    }
    double yk = dd_ys(c, k);
    if (yk < ym) {
      rm = k;
      ym = yk;
    }
    if (yk > ym + lim) {
      size_t j = k;
      while (j > rm && dd_ys(c, j) > ym + tol)
        j--;
      *thaw = 1;
      return j + 1;
    }
  }
  return c->n;
}

/* First index at or after i where the sample has melted again. */
static size_t melted(const struct dctx *c, size_t i, double level)
{
  for (size_t k = i; k < c->n; k++)
    if (dd_ys(c, k) > level)
      return k;
  return c->n;
}

/*
 * The last point of [w, i1) still within the noise of the warmest point w:
 * where the cooling starts. A sample held warm before it is cooled (a
 * logger running through a warm-up of hours) sits at that level, noise up
 * and down, until the cooling starts, and its warmest point is anywhere in
 * the hold; a Newton fit from there takes a flat stretch for part of an
 * exponential (on such a file every one ran to its iteration cap and
 * failed). When the cooling starts at the warmest point, this is that
 * point or the next.
 */
static size_t cooling_start(const struct dctx *c, size_t w, size_t i1)
{
  double tol = fmax(4.0 * c->sigma / sqrt(2.0 * (double)half_width(c) + 1.0),
                    2.0 * c->res), top = dd_ys(c, w) - tol;

  for (size_t k = i1; k > w + 1; k--)
    if (dd_ys(c, k - 1) >= top)
      return k - 1;
  return w;
}

/*
 * The first index of the largest smoothed value in [a, b) (a when b <= a):
 * whole blocks already filled once answer from their kept maximum, so a
 * warm hold of hours is not smoothed again. The same index as the plain
 * scan (the first of equal maxima, strict comparisons), which it falls
 * back to when a smoothed value is NaN.
 */
static size_t warmest(const struct dctx *c, size_t a, size_t b)
{
  const struct ys_cache *k = c->ysc;
  size_t best = a, i = a;
  double yb;

  if (b <= a)
    return a;
  yb = dd_ys(c, a);
  while (i < b) {
    size_t blk = i / YS_BLOCK, end = (blk + 1) * YS_BLOCK;
    if (!c->ys_nan && i == blk * YS_BLOCK && end <= b) {
      if (k->top_i[blk] == SIZE_MAX)
        (void)dd_ys_fill(c, i);  /* fills the block and its maximum */
      if (k->top_v[blk] > yb) {
        yb = k->top_v[blk];
        best = k->top_i[blk];
      }
      i = end;
      continue;
    }
    for (; i < b && i < end; i++)
      if (dd_ys(c, i) > yb) {
        best = i;
        yb = dd_ys(c, i);
      }
  }
  return best;
}

/* Liquid fits over [lw0, lw1): Newton (kind 1) and the textbook line over
 * its last minute (kind 2). */
static void fit_liquid(const struct dctx *c, struct ff_event *e, size_t lw0,
                       size_t lw1, double skip_s)
{
  double span, c0, c1, cov[3], rms, skip;
  size_t a;

  if (lw1 <= lw0 + 3) {
    e->flags |= FF_FLAG_LIQUID_SHORT;
    return;
  }
  span = c->t[lw1 - 1] - c->t[lw0];
  /* The start of cooling carries the probe's and the tube's transients
   * (and the rounded turn from warming): skip_s of it (the caller's
   * measure of the probe lag), at most a third, at least a tenth. */
  skip = fmax(fmin(skip_s, span / 3.0), 0.1 * span);
  /* A warm hold longer than that start: the window starts where the
   * cooling does (lw0 is the warmest point; see cooling_start). */
  {
    size_t on = cooling_start(c, lw0, lw1);
    if (c->t[on] - c->t[lw0] > skip) {
      lw0 = on;
      span = c->t[lw1 - 1] - c->t[lw0];
      skip = fmax(fmin(skip_s, span / 3.0), 0.1 * span);
    }
  }
  a = dd_index_at(c, c->t[lw0] + skip);
  if (span < c->p->min_liquid_s || a + 3 >= lw1)
    e->flags |= FF_FLAG_LIQUID_SHORT;
  else if (dd_newton(c, a, lw1, &e->liquid) != 0)
    e->flags |= FF_FLAG_LIQUID_SHORT;
  else if (e->liquid.rms_k > 3.0 * c->sigma + c->res)
    e->flags |= FF_FLAG_BATH_DRIFT;
  a = dd_index_at(c, c->t[lw1 - 1] - 60.0);
  if (a < lw0)
    a = lw0;
  if (lw1 >= a + 3 && dd_line(c->t, c->y, a, lw1, c->t[lw1 - 1], &c0, &c1,
                              cov, &rms) == 0) {
    e->liquid_line.kind = 2;
    e->liquid_line.t_ref_s = c->t[lw1 - 1];
    e->liquid_line.t0_c = c0;
    e->liquid_line.slope_k_s = c1;
    e->liquid_line.start_s = c->t[a];
    e->liquid_line.end_s = c->t[lw1 - 1];
    e->liquid_line.rms_k = rms;
  }
}

static void choose(const struct dctx *c, struct ff_event *e)
{
  const struct ff_detect_params *p = c->p;
  enum ff_method m = p->method;
  const struct ff_estimate *es;
  const char *mwhy = e->est[FF_METHOD_MODEL].why;

  if (m == FF_METHOD_AUTO) {
    if (e->est[FF_METHOD_MODEL].ok && e->est[FF_METHOD_PLATEAU].ok
               && fabs(e->model_delta_k) < 3.0 * e->model_u_delta_k
               && e->est[FF_METHOD_PLATEAU].u_k
                  < e->est[FF_METHOD_MODEL].u_k) {
      /* The model finds no depression (a pure solvent): the flat branch
       * says the same with less extrapolation. */
      m = FF_METHOD_PLATEAU;
      snprintf(e->method_reason, sizeof e->method_reason, "flat branch and "
               "the energy balance finds no solute (delta %.1f +- %.1f mK): "
               "plateau level", 1e3 * e->model_delta_k,
               1e3 * e->model_u_delta_k);
    } else if (e->est[FF_METHOD_MODEL].ok) {
      m = FF_METHOD_MODEL;
      snprintf(e->method_reason, sizeof e->method_reason, "liquid branch "
               "fits Newton cooling (bath %.2f C, tau %.0f s): the energy "
               "balance gives the frozen fraction, branch taken to zero ice",
               e->liquid.bath_c, e->liquid.tau_s);
    } else if (e->est[FF_METHOD_PLATEAU].ok) {
      m = FF_METHOD_PLATEAU;
      snprintf(e->method_reason, sizeof e->method_reason, "flat freezing "
               "branch, no model reading (%s): plateau level", mwhy);
    } else if (e->flags & FF_FLAG_NO_NUCLEATION) {
      m = FF_METHOD_BREAK;
      snprintf(e->method_reason, sizeof e->method_reason, "no supercooling "
               "seen and no model reading (%s): two straight segments with a "
               "fitted breakpoint", mwhy);
    } else if (e->est[FF_METHOD_EXTRAPOLATE].ok) {
      m = FF_METHOD_EXTRAPOLATE;
      snprintf(e->method_reason, sizeof e->method_reason, "no model reading "
               "(%s): freezing branch taken back to the nucleation instant",
               mwhy);
    } else {
      m = FF_METHOD_PEAK;
      e->flags |= FF_FLAG_PEAK_ONLY;
      snprintf(e->method_reason, sizeof e->method_reason, "nothing better "
               "possible: maximum after recalescence (reads low)");
    }
  } else {
    snprintf(e->method_reason, sizeof e->method_reason, "requested");
  }
  e->method = m;
  es = &e->est[m];
  e->trusted = 1;
  e->status_reason[0] = '\0';
  if (!es->ok) {
    e->trusted = 0;
    e->flags |= FF_FLAG_FIT_FAILED;
    snprintf(e->status_reason, sizeof e->status_reason, "%s: %s",
             ff_method_name(m), es->why);
    e->freezing_point_c = NAN;
    e->u_freezing_point_k = NAN;
    return;
  }
  e->freezing_point_c = es->value_c;
  e->u_resolution_k = c->res / (2.0 * sqrt(3.0));
  if (m == FF_METHOD_PEAK || m == FF_METHOD_PLATEAU) {
    e->u_noise_k = es->u_k;
    e->u_fit_k = 0.0;
  } else {
    e->u_fit_k = es->u_k;   /* noise enters through the fit's residuals */
    e->u_noise_k = 0.0;
  }
  e->u_method_k = 0.0;
  e->u_freezing_point_k = sqrt(e->u_fit_k * e->u_fit_k
                               + e->u_noise_k * e->u_noise_k
                               + e->u_resolution_k * e->u_resolution_k
                               + e->u_method_k * e->u_method_k);
  /* Every reading's u then carries the resolution too, as the chosen one
   * does, so a side-by-side table compares like with like. */
  for (int k = 1; k < FF_METHOD_COUNT; k++)
    if (e->est[k].ok)
      e->est[k].u_k = hypot(e->est[k].u_k, e->u_resolution_k);
  if (e->flags & FF_FLAG_SOLVENT_MISMATCH) {
    e->trusted = 0;
    snprintf(e->status_reason, sizeof e->status_reason, "%s", mwhy);
  } else if (e->flags & FF_FLAG_BRANCH_SHORT) {
    e->trusted = 0;
    snprintf(e->status_reason, sizeof e->status_reason, "%s",
             (e->flags & FF_FLAG_AT_END)
               ? "the file ends before the freezing branch can be fitted"
               : "freezing branch too short to fit");
  } else if (e->flags & FF_FLAG_PEAK_ONLY) {
    e->trusted = 0;
    snprintf(e->status_reason, sizeof e->status_reason, "only the maximum "
             "after recalescence is available, and it reads low");
  }
  if (e->flags & FF_FLAG_NO_NUCLEATION)
    e->supercooling_k = 0.0;
  else
    e->supercooling_k = e->freezing_point_c - e->t_min_c;
}

/*
 * The model's pure-solvent freezing point Tf0 = a - b must match the
 * solvent's table value within a calibration offset: the heat capacity and
 * latent heat it used are then the right ones. Otherwise its reading is not
 * used (a wrong --solvent would give a confident, wrong number).
 */
static void solvent_check(const struct dctx *c, struct ff_event *e)
{
  struct ff_estimate *es = &e->est[FF_METHOD_MODEL];

  if (!es->ok || !isfinite(e->model_tf0_c))
    return;
  if (fabs(e->model_tf0_c - c->tf0)
      > SOLVENT_MISMATCH_K + 3.0 * e->model_u_delta_k) {
    e->flags |= FF_FLAG_SOLVENT_MISMATCH;
    es->ok = 0;
    snprintf(es->why, sizeof es->why, "the branch implies a pure solvent "
             "freezing at %.2f C, the solvent's is %.2f C: wrong --solvent?",
             e->model_tf0_c, c->tf0);
  }
}

/* Marks disagreement when two sound readings differ beyond 3 combined u
 * plus a resolution step (plateau vs model for a pure solvent). */
static void cross_check(const struct dctx *c, struct ff_event *e)
{
  const struct ff_estimate *a = &e->est[FF_METHOD_MODEL],
                           *b = &e->est[FF_METHOD_PLATEAU];

  /* Only where both should agree: a pure solvent, no depression seen. */
  if (a->ok && b->ok && fabs(e->model_delta_k) < 3.0 * e->model_u_delta_k
      && fabs(a->value_c - b->value_c) > 3.0 * hypot(a->u_k, b->u_k) + c->res)
    e->flags |= FF_FLAG_METHODS_DISAGREE;
}

/* The straight-line readings of one event whose settled branch is
 * [b0, b_end): they use at most max_branch_s of it. */
static void read_lines(const struct dctx *c, struct ff_event *e, size_t b0,
                       size_t b_end)
{
  size_t pe = dd_index_at(c, c->t[b0] + c->p->max_branch_s);
  struct dd_fit1 f1;

  if (pe + 1 < b_end)
    b_end = pe + 1;
  dd_plateau(c, e, b0, b_end);
  dd_extrapolate(c, e, b0, b_end, &f1);
  dd_intersect(c, e, b0, b_end, &f1);
}

static void init_event(struct ff_event *e, unsigned cycle, double res)
{
  memset(e, 0, sizeof *e);
  e->cycle = cycle;
  e->freezing_point_c = e->u_freezing_point_k = NAN;
  e->frozen_fraction = NAN;
  e->break_time_s = NAN;
  e->model_tf0_c = e->model_delta_k = e->model_u_delta_k = NAN;
  e->freezing_branch_slope_k_s = NAN;
  e->resolution_k = res;
  for (int m = 0; m < FF_METHOD_COUNT; m++) {
    e->est[m].value_c = e->est[m].u_k = NAN;
    snprintf(e->est[m].why, sizeof e->est[m].why, "not computed");
  }
}

/* What every event ends with, with or without supercooling: the quality
 * flags of the channel, the checks across readings, the method chosen. */
static void finish_event(const struct dctx *c, struct ff_event *e)
{
  if (c->sigma > 0.02)
    e->flags |= FF_FLAG_NOISY;
  if (c->res >= 0.05)
    e->flags |= FF_FLAG_COARSE;
  solvent_check(c, e);
  cross_check(c, e);
  choose(c, e);
}

/* One recalescence: minimum at m, peak at pk, the segment began at seg0. */
static void recalescence_event(const struct dctx *c, struct ff_event *e,
                               size_t seg0, size_t m, size_t pk,
                               size_t b_end, int thaw)
{
  const struct ff_detect_params *p = c->p;
  size_t h = half_width(c), lw0 = seg0, lw1, b0, s0;
  double settle, t90, tmin = c->y[m];

  e->start_s = c->t[seg0];
  e->end_s = c->t[b_end - 1];
  e->noise_k = c->sigma;
  /* The raw minimum near the smoothed one. */
  for (size_t k = m > h ? m - h : 0; k <= m + h && k < c->n; k++)
    if (c->y[k] < tmin) {
      tmin = c->y[k];
      m = k;
    }
  e->nucleation_time_s = c->t[m];
  e->t_min_c = tmin;
  e->peak_c = dd_ys(c, pk);
  e->peak_time_s = c->t[pk];
  e->recalescence_rise_k = e->peak_c - e->t_min_c;
  e->est[FF_METHOD_PEAK].ok = 1;
  e->est[FF_METHOD_PEAK].value_c = e->peak_c;
  e->est[FF_METHOD_PEAK].u_k = c->sigma / sqrt(2.0 * (double)h + 1.0);
  e->est[FF_METHOD_PEAK].why[0] = '\0';
  snprintf(e->est[FF_METHOD_BREAK].why, sizeof e->est[FF_METHOD_BREAK].why,
           "supercooling seen: a slope break does not apply");

  /* The time to 90 % of the rise is about 2.3 probe time constants plus
   * the ice growth: the measure of the probe lag used below. */
  {
    size_t k90 = m;
    double lvl = e->t_min_c + 0.9 * (e->peak_c - e->t_min_c);
    while (k90 < pk && dd_ys(c, k90) < lvl)
      k90++;
    t90 = c->t[k90] - c->t[m];
  }

  /* Liquid branch: from the warmest point of the segment to just before
   * the minimum (the smoothing and the rounded corner spoil the last
   * samples). Its start carries the probe's transient: a lag leaves
   * exp(-6.9) = 0.1 % of the offset after 3 t90; 30 s when the rise gives
   * no measure. */
  {
    lw0 = warmest(c, seg0, m);
  }
  lw1 = dd_index_at(c, c->t[m] - fmax((double)(h + 1) * c->dt, 0.5 * t90));
  if (lw1 > lw0)
    fit_liquid(c, e, lw0, lw1, t90 > 0.0 ? fmax(LIQUID_SKIP_MIN_S, 3.0 * t90)
                                         : LIQUID_SKIP_S);
  else
    e->flags |= FF_FLAG_LIQUID_SHORT;

  /* Settling of the freezing branch: 3 t90 from the nucleation leaves
   * about 0.1 % of the rise; never before the peak. */
  settle = p->settle_s >= 0.0
           ? p->settle_s
           : fmin(60.0, fmax(3.0 * c->dt, 3.0 * t90 - (c->t[pk] - c->t[m])));
  b0 = dd_index_at(c, c->t[pk] + settle);
  if (b0 >= b_end || c->t[b_end - 1] - c->t[b0] < p->min_branch_s) {
    e->flags |= FF_FLAG_BRANCH_SHORT;
    if (!thaw)
      e->flags |= FF_FLAG_AT_END;
  } else if (settle > 0.5 * (c->t[b_end - 1] - c->t[pk])) {
    e->flags |= FF_FLAG_LAG_UNSETTLED;
  }
  e->branch_start_s = c->t[b0 < b_end ? b0 : b_end - 1];
  e->branch_end_s = c->t[b_end - 1];
  if (b0 + 1 < b_end)
    read_lines(c, e, b0, b_end);
  else
    for (int k = FF_METHOD_PLATEAU; k < FF_METHOD_COUNT; k++)
      if (k != FF_METHOD_PEAK && k != FF_METHOD_BREAK)
        snprintf(e->est[k].why, sizeof e->est[k].why, "no freezing branch");

  /* Model: integrate the energy balance from a liquid point well before
   * the corner; its fit may use a longer branch (up to half frozen). */
  s0 = dd_index_at(c, c->t[m] - fmax(10.0, 3.0 * (double)h * c->dt));
  if (s0 < lw0)
    s0 = lw0;
  if (b0 + 1 < b_end && s0 < b0)
    dd_model(c, e, s0, b0, b_end);
  else
    snprintf(e->est[FF_METHOD_MODEL].why, sizeof e->est[FF_METHOD_MODEL].why,
             "no freezing branch");
  if (!isfinite(e->frozen_fraction))
    e->frozen_fraction = c->cpl / c->lat * e->recalescence_rise_k;
  finish_event(c, e);
}

/*
 * Slope-break events (no supercooling) in [a, b): the point where a clear
 * cooling slope drops by BREAK_RATIO within BREAK_WINDOW_S and stays flat
 * for the minimum branch length. Slopes from prefix sums, O(1) each; only
 * the prefix sums the windows around i reach are kept (a ring of R).
 */
static int find_break(const struct dctx *c, size_t a, size_t b, size_t *at)
{
  size_t n = b > a ? b - a : 0, w, best = 0, wb, ahead, R, filled = 0;
  double *S, bestr = 0.0, t0;
  const double min_drop = fmax(BREAK_MIN_DROP_K,
                               10.0 * c->sigma + 2.0 * c->res);
  double r0 = 0.0, r1 = 0.0, r2 = 0.0, r3 = 0.0, r4 = 0.0;  /* sums so far */

  if (n < 20)
    return 0;
  w = (size_t)(BREAK_WINDOW_S / c->dt + 0.5);
  wb = (size_t)(c->p->min_branch_s / c->dt + 0.5);
  if (w < 5)
    w = 5;
  if (n < 2 * w + wb)
    return 0;
  ahead = wb > w ? wb : w;
  /* A power of two, so the ring index is a mask, not a division. */
  for (R = 1; R < w + ahead + 1; R *= 2)
    ;
  S = calloc(5 * R, sizeof *S);  /* prefix sum k at S[5 (k % R)]; k = 0: 0 */
  if (S == NULL)
    return 0;
  t0 = c->t[a];
#define PS(k) (S + 5 * ((k) & (R - 1)))
#define SLOPE(i0, i1, out)                                                    \
  do {                                                                        \
    double m_[5];                                                             \
    for (int q_ = 0; q_ < 5; q_++)                                            \
      m_[q_] = PS(i1)[q_] - PS(i0)[q_];                                       \
    double sxx_ = m_[2] - m_[1] * m_[1] / m_[0];                              \
    (out) = sxx_ > 0.0 ? (m_[4] - m_[1] * m_[3] / m_[0]) / sxx_ : 0.0;       \
  } while (0)
  for (size_t i = w; i + ahead <= n; i++) {
    double sb, sa, sl, drop;
    /* Prefix sums up to i + ahead, the running ones kept in registers
     * (the same additions in the same order). */
    for (; filled < i + ahead; filled++) {
      double x = c->t[a + filled] - t0, y = c->y[a + filled];
      double *to = PS(filled + 1);
      r0 += 1.0;
      r1 += x;
      r2 += x * x;
      r3 += y;
      r4 += x * y;
      to[0] = r0;
      to[1] = r1;
      to[2] = r2;
      to[3] = r3;
      to[4] = r4;
    }
    /* Most readings stop here, without a division or a branch that goes
     * either way at random on noise: the window's drop is
     * -num / sxx * span, num = m4 - m1 m3 / m0 and sxx = m2 - m1^2 / m0.
     * Times m0^2 (> 0), with bounds that cover the rounding of either
     * form (generously), A >= -num m0 and S <= sxx m0: when
     * A span < min_drop S, the drop the tests below compute is smaller
     * than min_drop too, and they would go on to the next reading. */
    {
      double m0 = PS(i)[0] - PS(i - w)[0], m1 = PS(i)[1] - PS(i - w)[1],
             m2 = PS(i)[2] - PS(i - w)[2], m3 = PS(i)[3] - PS(i - w)[3],
             m4 = PS(i)[4] - PS(i - w)[4];
      double p13 = m1 * m3, p40 = m4 * m0, p20 = m2 * m0, p11 = m1 * m1;
      double A = p13 - p40 + 1e-13 * (fabs(p13) + fabs(p40)),
             Sx = p20 - p11 - 1e-13 * (fabs(p20) + p11),
             span = c->t[a + i - 1] - c->t[a + i - w];
      if (Sx > 0.0 && A * span < min_drop * Sx * (1.0 - 1e-9))
        continue;
    }
    /* The slope before i falls only if its numerator is negative (sxx is
     * positive or the slope is 0). */
    {
      double n1 = PS(i)[1] - PS(i - w)[1], n0 = PS(i)[0] - PS(i - w)[0];
      if (!(PS(i)[4] - PS(i - w)[4] - n1 * (PS(i)[3] - PS(i - w)[3]) / n0
            < 0.0))
        continue;
    }
    SLOPE(i - w, i, sb);
    if (!(sb < 0.0))
      continue;
    drop = -sb * (c->t[a + i - 1] - c->t[a + i - w]);
    if (drop < min_drop)
      continue;
    SLOPE(i, i + w, sa);
    SLOPE(i, i + wb, sl);
    if (fabs(sa) * BREAK_RATIO < -sb && fabs(sl) * 5.0 < -sb
        && -sb / fmax(fabs(sa), 1e-12) > bestr) {
      bestr = -sb / fmax(fabs(sa), 1e-12);
      best = i;
    }
  }
#undef SLOPE
#undef PS
  free(S);
  if (best == 0)
    return 0;
  *at = a + best;
  return 1;
}

static void break_event(const struct dctx *c, struct ff_event *e, size_t seg0,
                        size_t k, size_t b_end, int thaw)
{
  const struct ff_detect_params *p = c->p;
  size_t lw0 = seg0, lw1, a, pe, pend, b0, s0, kb;
  double settle = p->settle_s >= 0.0 ? p->settle_s : BREAK_SETTLE_S;

  e->flags |= FF_FLAG_NO_NUCLEATION;
  e->start_s = c->t[seg0];
  e->end_s = c->t[b_end - 1];
  e->noise_k = c->sigma;
  {
    lw0 = warmest(c, seg0, k);
  }
  /* The corner is rounded by the probe lag: the liquid fits stop short. */
  lw1 = dd_index_at(c, c->t[k] - 0.5 * BREAK_WINDOW_S);
  if (lw1 > lw0 + 3)
    fit_liquid(c, e, lw0, lw1, LIQUID_SKIP_S);
  else
    e->flags |= FF_FLAG_LIQUID_SHORT;
  a = dd_index_at(c, c->t[k] - 120.0);
  if (a < lw0)
    a = lw0;
  pe = dd_index_at(c, c->t[k] + p->max_branch_s);
  pend = pe + 1 < b_end ? pe + 1 : b_end;
  dd_break(c, e, a, pend);
  e->nucleation_time_s = isfinite(e->break_time_s) ? e->break_time_s
                                                   : c->t[k];
  kb = dd_index_at(c, e->nucleation_time_s);
  e->t_min_c = e->peak_c = dd_ys(c, kb);
  e->peak_time_s = c->t[kb];
  e->recalescence_rise_k = 0.0;
  b0 = dd_index_at(c, e->nucleation_time_s + settle);
  e->branch_start_s = c->t[b0];
  e->branch_end_s = c->t[b_end - 1];
  if (b0 >= b_end || c->t[b_end - 1] - c->t[b0] < p->min_branch_s) {
    e->flags |= FF_FLAG_BRANCH_SHORT;
    if (!thaw)
      e->flags |= FF_FLAG_AT_END;
  }
  if (b0 + 1 < pend) {
    dd_plateau(c, e, b0, pend);
    dd_extrapolate(c, e, b0, pend, NULL);
  }
  s0 = dd_index_at(c, e->nucleation_time_s - BREAK_WINDOW_S);
  if (s0 < lw0)
    s0 = lw0;
  if (b0 + 1 < b_end && s0 < b0)
    dd_model(c, e, s0, b0, b_end);
  if (!isfinite(e->frozen_fraction))
    e->frozen_fraction = 0.0;
  snprintf(e->est[FF_METHOD_PEAK].why, sizeof e->est[FF_METHOD_PEAK].why,
           "no recalescence, so no maximum");
  snprintf(e->est[FF_METHOD_INTERSECT].why,
           sizeof e->est[FF_METHOD_INTERSECT].why,
           "no supercooling: the break method is the intersection");
  finish_event(c, e);
}

/* Scans [from, n) for the next recalescence; returns 1 with m (minimum) and
 * pk (peak), or 0 when there is none. Rejected rises (warm-ups) are skipped
 * from their top. */
/*
 * Minimum of ys over a sliding window [lo, j] in O(1) amortised per step:
 * a deque of indices whose values increase from front to back (Lemire's
 * monotone wedge). Only the value is needed to test a rise; the index is
 * then found by a scan of the window, which a hit makes rare.
 */
struct slide_min {
  size_t *q, head, tail, cap, next;  /* q[head, tail); next index to add */
  double *qv;                        /* the values at q */
};

static int slide_add(struct slide_min *s, const struct dctx *c, size_t j)
{
  for (; s->next <= j; s->next++) {
    double v = dd_ys(c, s->next);
    while (s->tail > s->head && s->qv[s->tail - 1] >= v)
      s->tail--;
    if (s->tail == s->cap) {
      if (s->head > 0) {
        memmove(s->q, s->q + s->head, (s->tail - s->head) * sizeof *s->q);
        memmove(s->qv, s->qv + s->head,
                (s->tail - s->head) * sizeof *s->qv);
        s->tail -= s->head;
        s->head = 0;
      } else {
        size_t cap = s->cap ? 2 * s->cap : 1024;
        size_t *q = realloc(s->q, cap * sizeof *q);
        double *qv;
        if (q == NULL)
          return -1;
        s->q = q;
        qv = realloc(s->qv, cap * sizeof *qv);
        if (qv == NULL)
          return -1;
        s->qv = qv;
        s->cap = cap;
      }
    }
    s->q[s->tail] = s->next;
    s->qv[s->tail++] = v;
  }
  return 0;
}

static double slide_min_at(struct slide_min *s, size_t lo)
{
  while (s->head < s->tail && s->q[s->head] < lo)
    s->head++;
  return s->head < s->tail ? s->qv[s->head] : NAN;  /* NaN: scan */
}

/*
 * A lower bound of the window's minimum, cheap to keep: the minima of
 * blocks of BMIN_BLOCK readings from a start, and of the block being
 * filled. The blocks that meet [lo, j] cover it, so their smallest minimum
 * is at most the window's; when even it leaves the reading at j less than
 * a rise above, so does the window's minimum, and the exact test is
 * skipped. Most readings are settled this way.
 */
#define BMIN_BLOCK 32
struct block_min {
  double *bm;                  /* bm[b - b0]: minimum of block b, filled */
  size_t cap, b0, cur_b;       /* first block; the block being filled */
  double cur;                  /* minimum of block cur_b so far */
  size_t lo_b, upto_b;         /* cached: min of blocks [lo_b, upto_b) */
  double cached;
};

static void bmin_reset(struct block_min *s, size_t start)
{
  s->b0 = s->cur_b = start / BMIN_BLOCK;
  s->cur = INFINITY;
  s->lo_b = s->upto_b = SIZE_MAX;
}

/* Adds reading j (value v): j one past the previous, or the start. */
static int bmin_add(struct block_min *s, size_t j, double v)
{
  size_t b = j / BMIN_BLOCK;

  if (b != s->cur_b) {
    size_t at = s->cur_b - s->b0;
    if (at >= s->cap) {
      size_t cap = s->cap ? 2 * s->cap : 256;
      double *bm = realloc(s->bm, cap * sizeof *bm);
      if (bm == NULL)
        return -1;
      s->bm = bm;
      s->cap = cap;
    }
    s->bm[at] = s->cur;
    s->cur_b = b;
    s->cur = INFINITY;
  }
  if (v < s->cur)
    s->cur = v;
  return 0;
}

/* At most the minimum of the readings [lo, j] added since the start
 * (lo >= start). */
static double bmin_lower(struct block_min *s, size_t lo)
{
  size_t lb = lo / BMIN_BLOCK;

  if (lb != s->lo_b || s->cur_b != s->upto_b) {
    double m = INFINITY;
    for (size_t b = lb; b < s->cur_b; b++)
      if (s->bm[b - s->b0] < m)
        m = s->bm[b - s->b0];
    s->cached = m;
    s->lo_b = lb;
    s->upto_b = s->cur_b;
  }
  return s->cached < s->cur ? s->cached : s->cur;
}

static int next_recalescence(const struct dctx *c, size_t from, size_t *m,
                             size_t *pk)
{
  const struct ff_detect_params *p = c->p;
  double rise = rise_threshold(c);
  size_t lo = from;
  struct slide_min sm = { .next = from };
  struct block_min bmn = { 0 };
  int found = 0, scan = c->ys_nan;

  bmin_reset(&bmn, from);
  for (size_t j = from; j < c->n; j++) {
    size_t mi = j;
    while (c->t[j] - c->t[lo] > p->max_rise_s)
      lo++;
    /* A whole block from j (a long warm hold): every window that ends in
     * it starts at lo or later, so its minimum is at least the smallest
     * of [lo, j) and of the block; when the block's largest value is less
     * than a rise above that, no reading of the block ends a rise and the
     * scan goes on after it, the block minima refilled for the windows
     * that reach back into it. */
    if (!scan && j % YS_BLOCK == 0 && j + YS_BLOCK <= c->n) {
      const struct ys_cache *yc = c->ysc;
      size_t blk = j / YS_BLOCK, jn = j + YS_BLOCK, lo2 = lo;
      double low;
      if (yc->top_i[blk] == SIZE_MAX)
        (void)dd_ys_fill(c, j);  /* fills the block, its extremes */
      low = yc->bot_v[blk];
      for (size_t k = lo; k < j; k++)
        if (dd_ys(c, k) < low)
          low = dd_ys(c, k);
      if (yc->top_v[blk] - low < rise) {
        if (jn < c->n)
          while (c->t[jn] - c->t[lo2] > p->max_rise_s)
            lo2++;
        bmin_reset(&bmn, lo2);
        for (size_t k = lo2; k < jn && !scan; k++)
          if (bmin_add(&bmn, k, dd_ys(c, k)) != 0)
            scan = 1;          /* out of memory: fall back to the scan */
        lo = lo2;
        j = jn - 1;
        continue;
      }
    }
    /* Without NaN (a sum that overflowed in the smoothing) the window's
     * minimum value decides; the scan below picks the same index as
     * always. The block bound settles most readings first; the exact
     * window minimum then needs only the readings from lo. */
    if (!scan) {
      double yj = dd_ys(c, j);
      if (bmin_add(&bmn, j, yj) != 0) {
        scan = 1;              /* out of memory: fall back to the scan */
      } else if (yj - bmin_lower(&bmn, lo) < rise) {
        continue;
      } else {
        if (sm.next < lo) {
          sm.head = sm.tail = 0;
          sm.next = lo;
        }
        if (slide_add(&sm, c, j) != 0)
          scan = 1;
        else if (yj - slide_min_at(&sm, lo) < rise)
          continue;
      }
    }
    {
      double ymi = dd_ys(c, mi);
      for (size_t k = lo; k <= j; k++)
        if (dd_ys(c, k) < ymi) {
          mi = k;
          ymi = dd_ys(c, k);
        }
    }
    if (dd_ys(c, j) - dd_ys(c, mi) < rise)
      continue;
    /* Liquid cooling must lead into it (a warm-up does not). */
    {
      size_t a = dd_index_at(c, c->t[mi] - PRE_WINDOW_S), top, kend, k;
      double best;
      int ok = 1;
      if (a < from)
        a = from;
      if (mi > a && dd_ys(c, a) - dd_ys(c, mi) < 0.5 * rise && c->t[mi]
          - c->t[a] >= 0.5 * PRE_WINDOW_S)
        ok = 0;
      /* The peak: the warmest smoothed point soon after; the first point
       * within the noise of it is taken as its time. */
      kend = dd_index_at(c, c->t[mi] + p->max_rise_s + 30.0);
      top = j;
      best = dd_ys(c, top);
      for (k = j; k <= kend && k < c->n; k++)
        if (dd_ys(c, k) > best) {
          top = k;
          best = dd_ys(c, k);
        }
      /* A freeze holds at or below its peak; a warm-up keeps rising. */
      kend = dd_index_at(c, c->t[top] + 60.0);
      for (k = top; k <= kend && k < c->n; k++)
        if (dd_ys(c, k) > best + 0.5 * rise)
          ok = 0;
      /* ... and the latent heat slows the cooling: a spike (a touched
       * probe, a bubble) falls back at the liquid's rate or faster. */
      kend = dd_index_at(c, c->t[top] + SPIKE_WINDOW_S);
      if (ok && kend > top && mi > a && dd_ys(c, a) > dd_ys(c, mi)) {
        double before = (dd_ys(c, a) - dd_ys(c, mi)) / (c->t[mi] - c->t[a]),
               after = (dd_ys(c, top) - dd_ys(c, kend)) / (c->t[kend] - c->t[top]);
        if (after > SPIKE_RATIO * before)
          ok = 0;
      }
      if (!ok) {
        /* Skip this rise: carry on from its top. */
        j = top;
        lo = top;
        sm.head = sm.tail = 0;
        sm.next = top;
        bmin_reset(&bmn, top);
        if (!scan && bmin_add(&bmn, top, dd_ys(c, top)) != 0)
          scan = 1;
        continue;
      }
      for (k = j; k < top; k++)
        if (dd_ys(c, k) >= best - fmax(2.0 * c->sigma / sqrt(5.0), c->res))
          break;
      *m = mi;
      *pk = k;
      found = 1;
      break;
    }
  }
  free(sm.q);
  free(sm.qv);
  free(bmn.bm);
  return found;
}

int ff_detect_run(const double *t_s, const double *temp_c, size_t n,
                  const struct ff_detect_params *p, struct ff_event_list *out,
                  struct ff_diag *d)
{
  static const struct ff_detect_params defaults = FF_DETECT_PARAMS_DEFAULT;
  struct dctx c = { 0 };
  struct input_scan scan;
  size_t from = 0, seg0 = 0;
  unsigned cycle = 0;
  int st;

  if (p == NULL)
    p = &defaults;
  if (n < MIN_POINTS)
    return ff_diag_set(d, FF_EUNTRUSTED, NULL, "only %zu readings: at least "
                       "%d are needed to find a freeze", n, MIN_POINTS);
  if ((st = check_input(t_s, temp_c, n, &scan, d)) != FF_OK)
    return st;
  c.t = t_s;
  c.y = temp_c;
  c.n = n;
  c.p = p;
  if (p->solvent != NULL && p->solvent->cp_liq_j_g_k > 0.0
      && p->solvent->dh_fus_j_mol > 0.0 && p->solvent->m_g_mol > 0.0) {
    c.cpl = p->solvent->cp_liq_j_g_k;
    c.cps = p->solvent->cp_sol_j_g_k > 0.0 ? p->solvent->cp_sol_j_g_k : c.cpl;
    c.lat = p->solvent->dh_fus_j_mol / p->solvent->m_g_mol;
    c.tf0 = p->solvent->tf_c;
  } else {
    c.cpl = WATER_CP_LIQ;
    c.cps = WATER_CP_SOL;
    c.lat = WATER_DH_FUS / WATER_M;
    c.tf0 = 0.0;               /* ice point */
  }
  if (estimate_noise(&c, &scan) != 0 || smooth(&c) != 0) {
    smooth_free(&c);
    return ff_diag_set(d, FF_EIO, NULL, "out of memory");
  }
  while (from < n) {
    size_t m, pk, b_end, k, nxt;
    int thaw, have = next_recalescence(&c, from, &m, &pk);
    struct ff_event e;
    size_t stop = have ? m : n;

    /* A freeze without supercooling before the next recalescence? */
    if (find_break(&c, from, stop, &k)) {
      b_end = branch_end(&c, k, rise_threshold(&c), &thaw);
      init_event(&e, ++cycle, c.res);
      break_event(&c, &e, seg0, k, b_end, thaw);
      if (push(out, &e) != 0)
        goto oom;
      nxt = melted(&c, b_end, dd_ys(&c, k) + MELT_MARGIN_K);
      seg0 = nxt;
      from = nxt;
      continue;
    }
    if (!have)
      break;
    b_end = branch_end(&c, pk, rise_threshold(&c), &thaw);
    init_event(&e, ++cycle, c.res);
    recalescence_event(&c, &e, seg0, m, pk, b_end, thaw);
    if (push(out, &e) != 0)
      goto oom;
    nxt = melted(&c, b_end, dd_ys(&c, pk) + fmax(MELT_MARGIN_K,
                                            rise_threshold(&c)));
    seg0 = nxt;
    from = nxt;
  }
  smooth_free(&c);
  return FF_OK;
oom:
  smooth_free(&c);
  ff_event_list_release(out);
  return ff_diag_set(d, FF_EIO, NULL, "out of memory");
}
