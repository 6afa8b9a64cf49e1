/* numparse.c - locale-independent decimal parser for CSV cells (importer helper). */

/* strtod_l and newlocale are glibc extensions (POSIX 2008 for newlocale);
 * this is the one file that asks for them. */
#define _GNU_SOURCE 1

#include "frostfit/numparse.h"

#include <assert.h>
#include <errno.h>
#include <float.h>
#include <locale.h>
#include <math.h>
#include <pthread.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

/*
 * Fast path (Clinger 1990, "How to read floating point numbers accurately",
 * the easy case): when the decimal significand w is an integer with
 * w <= 2^53 it is exact as a double, and so is 10^k for k <= 22
 * (5^22 < 2^53). One IEEE multiply or divide of two exact operands is
 * correctly rounded, which is what strtod returns. This needs arithmetic
 * done in double precision itself (FLT_EVAL_METHOD 0: SSE2 on x86-64,
 * every 64-bit ARM); with x87 extended precision the product would be
 * rounded twice, so such builds use the library for everything.
 */
#if defined(FLT_EVAL_METHOD) && FLT_EVAL_METHOD == 0
#define FAST_PATH 1
#else
#define FAST_PATH 0
#endif

#define MAX_EXACT_INT (UINT64_C(1) << 53)
#define MAX_SIG_DIGITS 19u   /* 10^19 - 1 < 2^64: no overflow in uint64 */
#define EXP_SATURATE 100000  /* far beyond any double; keeps int arithmetic safe */
#define STACK_BUF 256

static const double pow10_exact[23] = {
  1e0,  1e1,  1e2,  1e3,  1e4,  1e5,  1e6,  1e7,  1e8,  1e9,  1e10, 1e11,
  1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22
};

/* One "C" numeric locale for the process, made on first need. */
static pthread_once_t c_locale_once = PTHREAD_ONCE_INIT;
static locale_t c_locale = (locale_t)0;

static void make_c_locale(void)
{
  c_locale = newlocale(LC_NUMERIC_MASK, "C", (locale_t)0);
}

static int is_blank(char c)
{
  return c == ' ' || c == '\t';
}

/* What the scanner learnt about a syntactically valid number. */
struct scan {
  const char *start, *end;  /* trimmed text, sign included */
  int neg;
  uint64_t w;               /* the mantissa digits as an integer ... */
  size_t n_digits;          /* ... valid only when these are <= 19 */
  long e10;                 /* value = w * 10^e10 */
};

/* Reads the digits of an exponent; saturates so huge ones stay huge. */
static const char *scan_exponent(const char *p, const char *end, long *e)
{
  int neg = 0;
  long v = 0;

  if (p < end && (*p == '+' || *p == '-'))
    neg = (*p++ == '-');
  if (p == end || (unsigned)((unsigned char)*p - '0') > 9)
    return NULL;
  while (p < end) {
    unsigned d = (unsigned)((unsigned char)*p - '0');
    if (d > 9)
      break;
    if (v < EXP_SATURATE)
      v = v * 10 + (long)d;
    p++;
  }
  *e = neg ? -v : v;
  return p;
}

/* Accumulates a run of digits into *w (wrapping harmlessly past 19 digits:
 * the caller then ignores w). Returns the first non-digit. */
static const char *scan_digits(const char *p, const char *end, uint64_t *w)
{
  uint64_t v = *w;
  for (; p < end; p++) {
    unsigned d = (unsigned)((unsigned char)*p - '0');
    if (d > 9)
      break;
    v = v * 10 + d;
  }
  *w = v;
  return p;
}

/* Checks the grammar and collects the significand. Returns FF_NUM_*.
 * Leading zeros count as digits here: numbers with more than 19 digits in
 * all simply take the library path, which is exact for any length. */
static int scan_number(const char *p, const char *end, char decimal,
                       struct scan *sc)
{
  const char *q;
  size_t n_frac = 0;

  sc->start = p;
  sc->end = end;
  sc->neg = 0;
  sc->w = 0;
  sc->e10 = 0;

  if (*p == '+' || *p == '-')
    sc->neg = (*p++ == '-');
  q = p;
  p = scan_digits(p, end, &sc->w);
  sc->n_digits = (size_t)(p - q);
  if (p < end && *p == decimal) {
    q = ++p;
    p = scan_digits(p, end, &sc->w);
    n_frac = (size_t)(p - q);
    sc->n_digits += n_frac;
  }
  if (sc->n_digits == 0)
    return FF_NUM_SYNTAX;      /* "", "-", ".", "e5", "inf", "nan" */
  if (n_frac <= MAX_SIG_DIGITS)
    sc->e10 = -(long)n_frac;   /* else the fast path is off anyway */
  if (p < end && (*p == 'e' || *p == 'E')) {
    long e = 0;
    p = scan_exponent(p + 1, end, &e);
    if (p == NULL)
      return FF_NUM_SYNTAX;    /* "1e", "1e+" */
    sc->e10 += e;
  }
  return p == end ? FF_NUM_OK : FF_NUM_SYNTAX;
}

/* Clinger's fast path; returns 1 with *v set when it applies. */
static int fast_value(const struct scan *sc, double *v)
{
  uint64_t w = sc->w;
  long e = sc->e10;

  if (!FAST_PATH || sc->n_digits > MAX_SIG_DIGITS || w > MAX_EXACT_INT)
    return 0;
  if (e >= 0 && e <= 22) {
    *v = (double)w * pow10_exact[e];
  } else if (e < 0 && e >= -22) {
    *v = (double)w / pow10_exact[-e];
  } else if (e > 22 && e <= 22 + 15) {
    /* "12e30": move the surplus power into w while w stays exact. */
    for (; e > 22; e--) {
      w *= 10;
      if (w > MAX_EXACT_INT)
        return 0;
    }
    *v = (double)w * pow10_exact[22];
  } else {
    return 0;
  }
  if (sc->neg)
    *v = -*v;
  return 1;
}

/* Everything else: the C library under a "C" numeric locale. */
static int slow_value(const struct scan *sc, char decimal, double *out)
{
  size_t n = (size_t)(sc->end - sc->start);
  char stack[STACK_BUF], *buf = stack, *endp = NULL;
  int saved_errno = errno, st = FF_NUM_OK;
  double v;

  if (n >= sizeof stack) {
    buf = malloc(n + 1);
    if (buf == NULL)
      return FF_NUM_NOMEM;
  }
  memcpy(buf, sc->start, n);
  buf[n] = '\0';
  if (decimal != '.') {
    char *mark = memchr(buf, decimal, n);
    if (mark != NULL)
      *mark = '.';
  }
  pthread_once(&c_locale_once, make_c_locale);
  errno = 0;
  /* Without a locale object (out of memory at first use) plain strtod is
   * still right: the program keeps LC_NUMERIC at "C". */
  v = c_locale != (locale_t)0 ? strtod_l(buf, &endp, c_locale)
                              : strtod(buf, &endp);
  /* The grammar checked above is a subset of strtod's. */
  assert(endp == buf + n);
  if (errno == ERANGE && fabs(v) > 1.0)
    st = FF_NUM_RANGE;         /* overflow: +-HUGE_VAL; underflow is kept */
  errno = saved_errno;
  if (buf != stack)
    free(buf);
  *out = v;
  return st;
}

int ff_parse_double(const char *s, size_t len, char decimal, double *out)
{
  const char *p, *end;
  struct scan sc;
  int st;

  if (len == 0)
    return FF_NUM_EMPTY;
  if (decimal != ',')
    decimal = '.';
  p = s;
  end = s + len;
  while (p < end && is_blank(*p))
    p++;
  while (end > p && is_blank(end[-1]))
    end--;
  if (p == end)
    return FF_NUM_EMPTY;
  st = scan_number(p, end, decimal, &sc);
  if (st != FF_NUM_OK)
    return st;
  if (sc.w == 0 && sc.n_digits <= MAX_SIG_DIGITS) {
    *out = sc.neg ? -0.0 : 0.0; /* "0", "-0.000", "0e999999" */
    return FF_NUM_OK;
  }
  if (fast_value(&sc, out))
    return FF_NUM_OK;
  return slow_value(&sc, decimal, out);
}

const char *ff_num_status_name(int st)
{
  switch (st) {
  case FF_NUM_OK: return "ok";
  case FF_NUM_EMPTY: return "empty";
  case FF_NUM_SYNTAX: return "not a number";
  case FF_NUM_RANGE: return "out of range";
  case FF_NUM_NOMEM: return "out of memory";
  default: return "unknown status";
  }
}
