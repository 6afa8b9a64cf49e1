/* test_detect_speed.c - the shortcuts that make detection fast on long
 * channels give the answers of the plain computations: exact order
 * statistics without a copy, the Newton fit on long liquid branches (large
 * time offsets, warm holds, decimation) against built exponentials with
 * known parameters. Correctness only: no test here times anything. */
#include <criterion/criterion.h>
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>
#include <gsl/gsl_statistics_double.h>

#include "frostfit/detect.h"
#include "../src/detect_impl.h"

static void setup(void)
{
  gsl_set_error_handler_off();
}

/* The reference: a copy of the values, sorted by selection. */
static double ref_rank(const double *t, const double *y, int which,
                       size_t i0, size_t i1, size_t r)
{
  size_t m = i1 - i0;
  double *v = malloc(m * sizeof *v), x;

  cr_assert(v != NULL);
  for (size_t i = i0; i < i1; i++)
    v[i - i0] = dd_sel_value(t, y, which, i);
  x = gsl_stats_select(v, 1, m, r);
  free(v);
  return x;
}

static int same_bits(double a, double b)
{
  return memcmp(&a, &b, sizeof a) == 0;
}

/* Checks the median ranks and a few others of one channel. */
static void check_channel(const double *t, const double *y, size_t n)
{
  size_t *cnt = malloc(DD_SEL_RADIX * sizeof *cnt);

  cr_assert(cnt != NULL);
  for (int which = 0; which < 2; which++) {
    size_t i0 = 1, i1 = which == 0 ? n - 1 : n, m = i1 - i0;
    size_t ranks[][2] = { { (m - 1) / 2, m / 2 }, { 0, 0 }, { m - 1, m - 1 },
                          { m / 10, m / 10 + 1 }, { m / 3, m / 3 } };
    for (size_t k = 0; k < sizeof ranks / sizeof ranks[0]; k++) {
      double v[2], r0, r1;
      cr_assert_eq(dd_select_pair(t, y, which, i0, i1, ranks[k][0],
                                  ranks[k][1], cnt, v), 0);
      r0 = ref_rank(t, y, which, i0, i1, ranks[k][0]);
      r1 = ref_rank(t, y, which, i0, i1, ranks[k][1]);
      cr_assert(same_bits(v[0], r0) && same_bits(v[1], r1),
                "which %d ranks %zu,%zu of %zu: %.17g %.17g, sorted %.17g "
                "%.17g", which, ranks[k][0], ranks[k][1], m, v[0], v[1],
                r0, r1);
    }
  }
  free(cnt);
}

/* Noisy, quantised readings with logger-rounded times: many ties. */
Test(detect_speed, select_matches_sort_on_quantised_channels,
     .init = setup)
{
  gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
  size_t sizes[] = { 20, 1001, 70000, 300001 };

  cr_assert(r != NULL);
  for (size_t s = 0; s < sizeof sizes / sizeof sizes[0]; s++) {
    size_t n = sizes[s];
    double *t = malloc(n * sizeof *t), *y = malloc(n * sizeof *y);
    cr_assert(t && y);
    for (size_t i = 0; i < n; i++) {
      /* times printed to 0.1 s, like a 10 Hz export */
      t[i] = round((double)i * 1.0 + 12345.0) / 10.0;
      y[i] = round((5.0 * exp(-(double)i / 3e4)
                    + gsl_ran_gaussian(r, 0.003)) * 1e4) / 1e4;
    }
    check_channel(t, y, n);
    free(t);
    free(y);
  }
  gsl_rng_free(r);
}

/* Values with no ties, zeros, an overflow to +inf and a pattern that repeats
 * with the sampling stride: the sample then sees one phase only, the
 * bracket misses and the radix selection must give the value. */
Test(detect_speed, select_exact_when_the_sample_misleads, .init = setup)
{
  size_t n = 300000;
  double *t = malloc(n * sizeof *t), *y = malloc(n * sizeof *y);
  gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);

  cr_assert(t && y && r);
  for (int pattern = 0; pattern < 3; pattern++) {
    for (size_t i = 0; i < n; i++) {
      t[i] = (double)i + (pattern == 2 ? gsl_rng_uniform(r) * 0.5 : 0.0);
      if (pattern == 0)
        y[i] = gsl_ran_gaussian(r, 1.0);
      else
        /* constant except every 4th reading: every second difference
         * the even-stride sample meets is the spike's */
        y[i] = i % 4 == 0 ? 1.0 + 1e-3 * gsl_rng_uniform(r) : 0.0;
    }
    if (pattern == 0) {
      y[n / 2] = 1e308;        /* second differences overflow to +inf */
      y[n / 2 + 1] = -1e308;
    }
    check_channel(t, y, n);
  }
  free(t);
  free(y);
  gsl_rng_free(r);
}
