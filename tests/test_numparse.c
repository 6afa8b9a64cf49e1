/* test_numparse.c - the cell parser agrees bit for bit with strtod (C locale). */
#include <errno.h>
#include <float.h>
#include <locale.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <criterion/criterion.h>
#include <gsl/gsl_rng.h>
#include "frostfit/numparse.h"

/*
 * The reference is the C library's own strtod: nothing in the test program
 * calls setlocale, so LC_NUMERIC is "C" (checked below). Agreement is on
 * the bit pattern, so -0.0 and 0.0 differ and every rounding counts.
 */
#define N_RANDOM 2000000UL   /* large enough to hit every branch many times */

static uint64_t bits(double x)
{
  uint64_t u;
  memcpy(&u, &x, sizeof u);
  return u;
}

/* strtod on a '.'-text; expected status the way numparse.h documents it. */
static int reference(const char *s, double *v)
{
  char *end;
  errno = 0;
  *v = strtod(s, &end);
  cr_assert_eq(*end, '\0', "reference strtod stopped early on '%s'", s);
  return (errno == ERANGE && fabs(*v) > 1.0) ? FF_NUM_RANGE : FF_NUM_OK;
}

/* Parses s both ways (decimal mark mark in s) and demands identical bits. */
static void agree(const char *s, char mark)
{
  char ref_text[1024];
  double want, got = 12345.678;
  int want_st, got_st;
  size_t n = strlen(s);

  cr_assert_lt(n, sizeof ref_text);
  memcpy(ref_text, s, n + 1);
  if (mark == ',') {
    char *c = strchr(ref_text, ',');
    if (c != NULL)
      *c = '.';
  }
  want_st = reference(ref_text, &want);
  got_st = ff_parse_double(s, n, mark, &got);
  cr_assert_eq(got_st, want_st, "'%s': status %s, expected %s", s,
               ff_num_status_name(got_st), ff_num_status_name(want_st));
  cr_assert_eq(bits(got), bits(want),
               "'%s': got %.17g (%016llx), strtod gives %.17g (%016llx)", s,
               got, (unsigned long long)bits(got), want,
               (unsigned long long)bits(want));
}

static void expect_reject(const char *s, char mark, int want_st)
{
  double v = 42.5;
  int st = ff_parse_double(s, strlen(s), mark, &v);
  cr_expect_eq(st, want_st, "'%s' (mark '%c'): status %s, expected %s", s,
               mark, ff_num_status_name(st), ff_num_status_name(want_st));
  cr_expect_eq(bits(v), bits(42.5), "'%s': output written on failure", s);
}

/* Appends n random digits; the first is nonzero when lead is set. */
static char *put_digits(char *p, gsl_rng *r, unsigned n, int lead)
{
  for (unsigned i = 0; i < n; i++)
    *p++ = (char)('0' + ((i == 0 && lead) ? 1 + gsl_rng_uniform_int(r, 9)
                                           : gsl_rng_uniform_int(r, 10)));
  *p = '\0';
  return p;
}

/* A logger's number: -12.3456 and the like. */
static void gen_logger(char *s, gsl_rng *r, char mark)
{
  char *p = s;
  if (gsl_rng_uniform_int(r, 2))
    *p++ = '-';
  p = put_digits(p, r, 1 + (unsigned)gsl_rng_uniform_int(r, 4), 0);
  *p++ = mark;
  put_digits(p, r, 1 + (unsigned)gsl_rng_uniform_int(r, 6), 0);
}

/* Any mix: leading zeros, up to 25 digits, mark anywhere, exponents. */
static void gen_mixed(char *s, gsl_rng *r, char mark, int wide_exp)
{
  char *p = s;
  unsigned n_zero = (unsigned)gsl_rng_uniform_int(r, 4);
  unsigned n_dig = 1 + (unsigned)gsl_rng_uniform_int(r, 25);
  unsigned at = (unsigned)gsl_rng_uniform_int(r, n_dig + 2);
  unsigned k = (unsigned)gsl_rng_uniform_int(r, 3);

  if (k == 1)
    *p++ = '-';
  else if (k == 2)
    *p++ = '+';
  for (unsigned i = 0; i < n_zero; i++)
    *p++ = '0';
  for (unsigned i = 0; i < n_dig; i++) {
    if (i == at)
      *p++ = mark;
    *p++ = (char)('0' + gsl_rng_uniform_int(r, 10));
  }
  if (at == n_dig)
    *p++ = mark;               /* "123." */
  if (gsl_rng_uniform_int(r, 2)) {
    long e = wide_exp ? (long)gsl_rng_uniform_int(r, 700) - 350
                      : (long)gsl_rng_uniform_int(r, 61) - 30;
    sprintf(p, "%s%ld", gsl_rng_uniform_int(r, 2) ? "e" : "E", e);
  } else {
    *p = '\0';
  }
}

/* Integers and decimals around 2^53, where the fast path must stop. */
static void gen_near_2p53(char *s, gsl_rng *r)
{
  long long k = (long long)gsl_rng_uniform_int(r, 201) - 100;
  unsigned long long w = (1ULL << 53) + (unsigned long long)k;
  switch (gsl_rng_uniform_int(r, 4)) {
  case 0: sprintf(s, "%llu", w); break;
  case 1: sprintf(s, "-%llu.%lu", w, gsl_rng_uniform_int(r, 10)); break;
  case 2: sprintf(s, "%llue%ld", w, (long)gsl_rng_uniform_int(r, 45) - 22);
          break;
  default: sprintf(s, "0.%llu", w); break;
  }
}

/* Small significands with exponents just inside and outside 10^22..10^37. */
static void gen_fast_edges(char *s, gsl_rng *r)
{
  unsigned long w = gsl_rng_uniform_int(r, 100000);
  long e = (long)gsl_rng_uniform_int(r, 30) + 15;
  if (gsl_rng_uniform_int(r, 2))
    e = -e;
  sprintf(s, "%lue%ld", w, e);
}

/* The shortest-ish text of any double, from its bit pattern. */
static void gen_any_double(char *s, gsl_rng *r)
{
  int prec[] = { 17, 16, 15, 6 };
  uint64_t u = ((uint64_t)gsl_rng_get(r) << 32) ^ (uint64_t)gsl_rng_get(r);
  double x;
  memcpy(&x, &u, sizeof x);
  if (!isfinite(x))
    x = 1.5;
  sprintf(s, "%.*g", prec[gsl_rng_uniform_int(r, 4)], x);
}

/* Decimal text of (nearly) the midpoint between two doubles: the hard
 * rounding cases, all left to the library fallback. */
static void gen_halfway(char *s, gsl_rng *r)
{
  double x = ldexp(1.0 + gsl_rng_uniform(r), (int)gsl_rng_uniform_int(r, 200) - 100);
  long double mid = ((long double)x + (long double)nextafter(x, INFINITY)) / 2;
  sprintf(s, "%.*Le", 18 + (int)gsl_rng_uniform_int(r, 20), mid);
}

Test(numparse, agrees_with_strtod_on_random_text)
{
  char s[512];
  gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);

  cr_assert_not_null(r);
  cr_assert_str_eq(localeconv()->decimal_point, ".",
                   "the reference needs the C locale");
  gsl_rng_set(r, 20261201UL);
  for (unsigned long i = 0; i < N_RANDOM; i++) {
    switch (i % 8) {
    case 0: case 1: gen_logger(s, r, '.'); break;
    case 2: gen_mixed(s, r, '.', 0); break;
    case 3: gen_mixed(s, r, '.', 1); break;
    case 4: gen_near_2p53(s, r); break;
    case 5: gen_fast_edges(s, r); break;
    case 6: gen_any_double(s, r); break;
    default: gen_halfway(s, r); break;
    }
    agree(s, '.');
  }
  gsl_rng_free(r);
}

Test(numparse, decimal_comma_matches_decimal_point)
{
  char s[512];
  gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);

  cr_assert_not_null(r);
  gsl_rng_set(r, 7UL);
  for (unsigned long i = 0; i < 200000UL; i++) {
    if (i % 2)
      gen_logger(s, r, ',');
    else
      gen_mixed(s, r, ',', (int)(i % 4 == 0));
    agree(s, ',');
  }
  gsl_rng_free(r);
}

Test(numparse, edge_values_match_strtod)
{
  static const char *const cases[] = {
    "0", "-0", "-0.0", "+0", "0.", ".0", "-.5", "5.", "000000000000000000000001.5",
    "0e999999999999999999", "-0e-99999",
    "9007199254740992", "9007199254740993", "9007199254740993.0000001",
    "1e22", "1e23", "9007199254740992e22", "9007199254740993e22",
    "1e-22", "1e-23", "123456789012345678e-5", "1234567890123456789",
    "12345678901234567890", "0.1", "0.3", "2.2250738585072011e-308",
    "2.2250738585072014e-308", "4.9e-324", "2.4703282292062327e-324",
    "2.4703282292062328e-324", "1e-400", "-1e-400",
    "1.7976931348623157e308", "1.7976931348623158e308",
    "1.7976931348623159e308", "1e309", "-1e309", "1e99999999999999999999",
    "1.00000000000000011102230246251565404236316680908203125",
    "1.00000000000000011102230246251565404236316680908203124",
    "1.00000000000000011102230246251565404236316680908203126",
    "-273.15", "23.4567", "-1.2345", "1234.5", "1E5", "1e+05", "1e-05",
  };
  for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++)
    agree(cases[i], '.');
}

Test(numparse, very_long_cell_uses_heap_copy)
{
  /* 600 digits: beyond the on-stack copy (256 bytes). */
  char s[700];
  memset(s, '3', 600);
  s[0] = '0';
  s[1] = '.';
  s[600] = '\0';
  agree(s, '.');
  s[1] = ',';
  agree(s, ',');
}

Test(numparse, reads_only_len_bytes_and_trims_blanks)
{
  double v = 0;
  cr_assert_eq(ff_parse_double("1.25XYZ", 4, '.', &v), FF_NUM_OK);
  cr_expect_eq(bits(v), bits(1.25));
  cr_assert_eq(ff_parse_double("-7,5;8", 4, ',', &v), FF_NUM_OK);
  cr_expect_eq(bits(v), bits(-7.5));
  cr_assert_eq(ff_parse_double(" \t23.4567\t ", 11, '.', &v), FF_NUM_OK);
  cr_expect_eq(bits(v), bits(23.4567));
  cr_assert_eq(ff_parse_double("1234567890123456789012e3xx", 24, '.', &v),
               FF_NUM_OK);
  cr_expect_eq(bits(v), bits(1234567890123456789012e3));
}

Test(numparse, rejects_what_is_not_a_plain_number)
{
  static const char *const syntax[] = {
    "-", "+", ".", ",", "e5", "-e5", "1e", "1e+", "1e-", "1..2", "1.2.3",
    "inf", "-inf", "INF", "infinity", "nan", "NaN", "-nan", "0x10", "0x1p3",
    "12a", "1 2", "--1", "+-1", "1e5.5", "1d5", "1,5", "1.234,5", "1e5e5",
    "\xef\xbb\xbf" "1", "1\n", "\"1\"", "1%", "n/a", "#N/A", "1_000",
  };
  double v = 42.5;

  for (size_t i = 0; i < sizeof syntax / sizeof syntax[0]; i++)
    expect_reject(syntax[i], '.', FF_NUM_SYNTAX);
  expect_reject("1.5", ',', FF_NUM_SYNTAX);
  expect_reject("1,5,", ',', FF_NUM_SYNTAX);
  expect_reject("", '.', FF_NUM_EMPTY);
  expect_reject("   ", '.', FF_NUM_EMPTY);
  expect_reject("\t", ',', FF_NUM_EMPTY);
  cr_expect_eq(ff_parse_double(NULL, 0, '.', &v), FF_NUM_EMPTY);
  /* A NUL inside the cell is garbage, not an end. */
  cr_expect_eq(ff_parse_double("1\0" "5", 3, '.', &v), FF_NUM_SYNTAX);
}

Test(numparse, overflow_is_a_range_error_with_signed_huge_val)
{
  double v = 0;
  cr_assert_eq(ff_parse_double("-1e400", 6, '.', &v), FF_NUM_RANGE);
  cr_expect(isinf(v) && v < 0, "got %g", v);
  cr_expect_str_eq(ff_num_status_name(FF_NUM_RANGE), "out of range");
}

Test(numparse, ignores_a_decimal_comma_process_locale)
{
  static const char *const names[] = {
    "de_DE.UTF-8", "de_DE.utf8", "fr_FR.UTF-8", "fr_FR.utf8", "nl_NL.UTF-8",
  };
  const char *got_locale = NULL;
  double v = 0;

  for (size_t i = 0; i < sizeof names / sizeof names[0] && !got_locale; i++)
    got_locale = setlocale(LC_NUMERIC, names[i]);
  if (got_locale == NULL || strcmp(localeconv()->decimal_point, ",") != 0)
    cr_skip_test("no decimal-comma locale installed (locale -a)");
  /* fast path and library path both keep reading '.' as the mark */
  cr_expect_eq(ff_parse_double("-12.375", 7, '.', &v), FF_NUM_OK);
  cr_expect_eq(bits(v), bits(-12.375));
  cr_expect_eq(ff_parse_double("1.00000000000000011102230246251565404236316680908203126",
                               55, '.', &v), FF_NUM_OK);
  cr_expect_eq(bits(v), bits(0x1.0000000000001p0));
  setlocale(LC_NUMERIC, "C");
}
