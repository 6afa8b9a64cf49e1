/* import_number.c - locale-independent cell parsing for the importer. */
#include "import_impl.h"

#include <errno.h>
#include <float.h>
#include <locale.h>
#include <math.h>
#include <pthread.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

/* Powers of ten that are exact in binary64 (10^22 is the last). */
static const double pow10_exact[] = {
  1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11,
  1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22
};

static locale_t c_locale;
static pthread_once_t c_locale_once = PTHREAD_ONCE_INIT;

static void make_c_locale(void)
{
  c_locale = newlocale(LC_ALL_MASK, "C", (locale_t)0);
}

static int is_blank(char c)
{
  return c == ' ' || c == '\t';
}

/*
 * Rare path (more than 19 significant digits, large exponents): strtod in
 * an explicit "C" locale for this thread, whatever the process uses.
 */
static int slow_number(const char *p, size_t n, char decimal, double *out)
{
  char buf[128];
  char *end;
  double x;
  locale_t old = (locale_t)0;

  if (n >= sizeof buf)
    return -1;
  for (size_t i = 0; i < n; i++)
    buf[i] = p[i] == decimal ? '.' : p[i];
  buf[n] = '\0';
  pthread_once(&c_locale_once, make_c_locale);
  if (c_locale != (locale_t)0)
    old = uselocale(c_locale);
  errno = 0;
  x = strtod(buf, &end);
  if (c_locale != (locale_t)0)
    uselocale(old);
  if (end != buf + n || !isfinite(x))
    return -1;
  if (errno == ERANGE && fabs(x) > 1.0)
    return -1;
  *out = x;
  return 0;
}

/*
 * Up to 19 significant digits go into an integer; when it is at most 2^53
 * and the power of ten is exact, one correctly rounded multiply or divide
 * gives the same double as strtod (Clinger's fast path). That needs double
 * arithmetic done in double (FLT_EVAL_METHOD 0, as on x86-64 and ARM64);
 * elsewhere every number takes the strtod path.
 */
#if defined(FLT_EVAL_METHOD) && FLT_EVAL_METHOD == 0
#define FAST_PATH 1
#else
#define FAST_PATH 0
#endif

/* What the scan of a number cell found. */
struct numscan {
  const char *start, *end;     /* trimmed text, sign included */
  uint64_t mant;
  long exp10;
  int exact, neg;
};

/* The grammar: 0 when s[0..n) is a number as ff_import_parse_number
 * reads one (its value still to be made), -1 otherwise. */
static int scan_number(const char *s, size_t n, char decimal,
                       struct numscan *sc)
{
  const char *p = s, *e = s + n;
  uint64_t mant = 0;
  int ndig = 0, any = 0, exact = 1, neg = 0;
  long exp10 = 0;

  while (p < e && is_blank(*p))
    p++;
  while (e > p && is_blank(e[-1]))
    e--;
  sc->start = p;
  if (p < e && (*p == '+' || *p == '-')) {
    neg = *p == '-';
    p++;
  }
  for (; p < e && *p >= '0' && *p <= '9'; p++) {
    any = 1;
    if (ndig < 19) {
      mant = mant * 10 + (uint64_t)(*p - '0');
      if (mant != 0)
        ndig++;
    } else {
      exp10++;
      exact = 0;
    }
  }
  if (p < e && *p == decimal) {
    for (p++; p < e && *p >= '0' && *p <= '9'; p++) {
      any = 1;
      if (ndig < 19) {
        mant = mant * 10 + (uint64_t)(*p - '0');
        if (mant != 0)
          ndig++;
        exp10--;
      } else {
        exact = 0;
      }
    }
  }
  if (!any)
    return -1;
  if (p < e && (*p == 'e' || *p == 'E')) {
    int eneg = 0, edig = 0;
    long ex = 0;
    p++;
    if (p < e && (*p == '+' || *p == '-')) {
      eneg = *p == '-';
      p++;
    }
    for (; p < e && *p >= '0' && *p <= '9'; p++, edig++)
      if (ex < 100000)
        ex = ex * 10 + (*p - '0');
    if (edig == 0)
      return -1;
    exp10 += eneg ? -ex : ex;
  }
  if (p != e)
    return -1;
  sc->end = e;
  sc->mant = mant;
  sc->exp10 = exp10;
  sc->exact = exact;
  sc->neg = neg;
  return 0;
}

/* The one exact multiply or divide applies. */
static int fast_case(const struct numscan *sc)
{
  return FAST_PATH && sc->exact && sc->mant <= ((uint64_t)1 << 53)
         && sc->exp10 >= -22 && sc->exp10 <= 22;
}

int ff_import_parse_number(const char *s, size_t n, char decimal, double *out)
{
  struct numscan sc;

  if (scan_number(s, n, decimal, &sc) != 0)
    return -1;
  if (fast_case(&sc)) {
    double x = (double)sc.mant;
    x = sc.exp10 < 0 ? x / pow10_exact[-sc.exp10] : x * pow10_exact[sc.exp10];
    *out = sc.neg ? -x : x;
    return 0;
  }
  return slow_number(sc.start, (size_t)(sc.end - sc.start), decimal, out);
}

int ff_import_is_number(const char *s, size_t n, char decimal)
{
  struct numscan sc;
  double x;

  if (scan_number(s, n, decimal, &sc) != 0)
    return 0;
  /* the exact case always gives a finite value; only the rest can
   * overflow */
  return fast_case(&sc)
         || slow_number(sc.start, (size_t)(sc.end - sc.start), decimal,
                        &x) == 0;
}

static int same_ci(const char *a, size_t n, const char *word)
{
  size_t i;

  for (i = 0; i < n && word[i] != '\0'; i++) {
    char c = a[i];
    if (c >= 'A' && c <= 'Z')
      c = (char)(c - 'A' + 'a');
    if (c != word[i])
      return 0;
  }
  return i == n && word[i] == '\0';
}

/* All bytes of s[0..n) are c. */
static int run_of(const char *s, size_t n, char c)
{
  for (size_t i = 0; i < n; i++)
    if (s[i] != c)
      return 0;
  return 1;
}

int ff_import_is_missing_text(const char *s, size_t n)
{
  /* Markers loggers and spreadsheets write for "no reading": common
   * practice, no source. Over-range / open-probe markers included. */
  static const char *const words[] = {
    "nan", "-nan", "+nan", "na", "n/a", "n.a.", "null", "none", "nil",
    "missing", "inf", "+inf", "-inf", "infinity", "-infinity", "ol", "+ol",
    "-ol", "o.l.", "o.l", "ovf", "overflow", "over", "under", "udf", "err",
    "err.", "error", "open", "#n/a", "#value!", "#div/0!", "#num!"
  };

  while (n > 0 && is_blank(*s))
    s++, n--;
  while (n > 0 && is_blank(s[n - 1]))
    n--;
  if (n == 0)
    return 1;
  if (s[0] >= '0' && s[0] <= '9')
    return 0;                          /* no marker starts with a digit */
  if (n > 1 && (s[0] == '-' || s[0] == '+' || s[0] == '.')
      && ((s[1] >= '0' && s[1] <= '9') || s[1] == '.'))
    return 0;                          /* nor with "-5", "+.", ".5" */
  {
    /* the first letters of the markers below and of the runs */
    char c0 = s[0] >= 'A' && s[0] <= 'Z' ? (char)(s[0] - 'A' + 'a') : s[0];
    if (strchr("nmioue+-#*?", c0) == NULL)
      return 0;
  }
  if (run_of(s, n, '-') || run_of(s, n, '#') || run_of(s, n, '*')
      || run_of(s, n, '?'))
    return 1;
  for (size_t i = 0; i < sizeof words / sizeof words[0]; i++)
    if (same_ci(s, n, words[i]))
      return 1;
  return 0;
}

int ff_import_is_sentinel(double x, const double *extra, size_t n_extra)
{
  /* Fill values data loggers write for a failed reading: common practice,
   * no source. Compared as written, before any unit conversion. */
  static const double fill[] = { -999.0, -999.9, -9999.0, 9999.0, 99999.0,
                                 -99999.0 };

  for (size_t i = 0; i < sizeof fill / sizeof fill[0]; i++)
    if (fabs(x - fill[i]) < 1e-9)
      return 1;
  for (size_t i = 0; i < n_extra; i++)
    if (fabs(x - extra[i]) <= 1e-9 * fmax(1.0, fabs(extra[i])))
      return 1;
  return 0;
}

const char *ff_import_quote(char *dst, size_t cap, const char *s, size_t n)
{
  size_t k = 0, max = cap > 4 ? cap - 4 : 0;

  if (max > 40)
    max = 40;
  for (size_t i = 0; i < n && k < max; i++) {
    unsigned char c = (unsigned char)s[i];
    dst[k++] = (c < 0x20 || c == 0x7f) ? '?' : (char)c;
  }
  if (n > max && cap >= 4) {
    memcpy(dst + k, "...", 3);
    k += 3;
  }
  dst[k] = '\0';
  return dst;
}
