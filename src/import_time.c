/* import_time.c - time cells and header units for the importer. */
#include "import_impl.h"

#include <string.h>

static int digit(char c)
{
  return c >= '0' && c <= '9';
}

/* Reads 1..maxd digits at *p; returns the value or -1. */
static long read_int(const char **p, const char *e, int mind, int maxd)
{
  long v = 0;
  int k = 0;

  while (*p < e && digit(**p) && k < maxd) {
    v = v * 10 + (**p - '0');
    (*p)++;
    k++;
  }
  return k >= mind ? v : -1;
}

/* Seconds with an optional fraction ("07", "07.250", "7,5"). */
static int read_seconds(const char **p, const char *e, char decimal,
                        double *sec)
{
  long s = read_int(p, e, 1, 2);
  double frac = 0.0, scale = 0.1;

  if (s < 0)
    return -1;
  if (*p < e && (**p == '.' || **p == decimal)) {
    (*p)++;
    if (*p >= e || !digit(**p))
      return -1;
    while (*p < e && digit(**p)) {
      frac += scale * (**p - '0');
      scale *= 0.1;
      (*p)++;
    }
  }
  *sec = (double)s + frac;
  return 0;
}

static void trim(const char **s, size_t *n)
{
  while (*n > 0 && (**s == ' ' || **s == '\t'))
    (*s)++, (*n)--;
  while (*n > 0 && ((*s)[*n - 1] == ' ' || (*s)[*n - 1] == '\t'))
    (*n)--;
}

int ff_import_parse_clock(const char *s, size_t n, char decimal, double *sec)
{
  const char *p, *e;
  long a, b;
  double c = 0.0;
  int parts = 2, ampm = 0;

  trim(&s, &n);
  e = s + n;
  /* 12-hour clocks: "1:05:07 PM" */
  if (n > 2 && (e[-1] == 'M' || e[-1] == 'm')) {
    char x = e[-2];
    if (x == 'A' || x == 'a')
      ampm = 1;
    else if (x == 'P' || x == 'p')
      ampm = 2;
    if (ampm) {
      e -= 2;
      while (e > s && e[-1] == ' ')
        e--;
    }
  }
  p = s;
  a = read_int(&p, e, 1, 3);
  if (a < 0 || p >= e || *p != ':')
    return -1;
  p++;
  {
    const char *q = p;
    b = read_int(&q, e, 2, 2);
    if (b < 0)
      return -1;
    if (q < e && *q == ':') {
      p = q + 1;
      parts = 3;
      if (read_seconds(&p, e, decimal, &c) != 0 || c >= 61.0 || b > 59)
        return -1;
    } else if (ampm) {
      p = q;                           /* "h:mm PM" */
      parts = 3;
      if (b > 59)
        return -1;
    } else {
      /* mm:ss(.fff): b is the seconds */
      if (read_seconds(&p, e, decimal, &c) != 0 || c >= 60.0)
        return -1;
      b = 0;
    }
  }
  if (p != e)
    return -1;
  if (ampm) {
    if (a < 1 || a > 12)
      return -1;
    a %= 12;
    if (ampm == 2)
      a += 12;
  }
  if (parts == 3) {
    if (a > 47)
      return -1;
    *sec = (double)a * 3600.0 + (double)b * 60.0 + c;
  } else {
    *sec = (double)a * 60.0 + c;
  }
  return parts;
}

/* Days since 1970-01-01 of a proleptic Gregorian date (H. Hinnant's
 * days_from_civil algorithm, public domain). */
static long days_from_civil(long y, long m, long d)
{
  long era, yoe, doy, doe;

  y -= m <= 2;
  era = (y >= 0 ? y : y - 399) / 400;
  yoe = y - era * 400;
  doy = (153 * (m + (m > 2 ? -3 : 9)) + 2) / 5 + d - 1;
  doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
  return era * 146097 + doe - 719468;
}

static int read_date(const char **p, const char *e, long *y, long *m, long *d)
{
  const char *q = *p;
  long a = read_int(&q, e, 1, 4);
  char sep;

  if (a < 0 || q >= e)
    return -1;
  sep = *q;
  if ((q - *p) == 4 && (sep == '-' || sep == '/')) {
    q++;
    *y = a;
    *m = read_int(&q, e, 1, 2);
    if (*m < 0 || q >= e || *q != sep)
      return -1;
    q++;
    *d = read_int(&q, e, 1, 2);
  } else if ((q - *p) <= 2 && sep == '.') {    /* DD.MM.YYYY */
    q++;
    *d = a;
    *m = read_int(&q, e, 1, 2);
    if (*m < 0 || q >= e || *q != '.')
      return -1;
    q++;
    *y = read_int(&q, e, 4, 4);
  } else {
    return -1;
  }
  if (*y < 0 || *m < 1 || *m > 12 || *d < 1 || *d > 31)
    return -1;
  *p = q;
  return 0;
}

int ff_import_parse_iso(const char *s, size_t n, char decimal, double *sec,
                        int *date_only)
{
  const char *p, *e;
  long y, mo, d, h, mi, off = 0;
  double sc = 0.0;

  trim(&s, &n);
  p = s;
  e = s + n;
  if (read_date(&p, e, &y, &mo, &d) != 0)
    return -1;
  *date_only = 0;
  if (p == e) {
    *date_only = 1;
    *sec = (double)days_from_civil(y, mo, d) * 86400.0;
    return 0;
  }
  if (*p != 'T' && *p != 't' && *p != ' ')
    return -1;
  while (p < e && (*p == ' ' || *p == 'T' || *p == 't'))
    p++;
  h = read_int(&p, e, 1, 2);
  if (h < 0 || h > 24 || p >= e || *p != ':')
    return -1;
  p++;
  mi = read_int(&p, e, 2, 2);
  if (mi < 0 || mi > 59)
    return -1;
  if (p < e && *p == ':') {
    p++;
    if (read_seconds(&p, e, decimal, &sc) != 0 || sc >= 61.0)
      return -1;
  }
  if (p < e && *p == ' ')
    p++;
  if (p < e && (*p == 'Z' || *p == 'z')) {
    p++;
  } else if (p < e && (*p == '+' || *p == '-')) {
    int neg = *p == '-';
    long oh, om = 0;
    p++;
    oh = read_int(&p, e, 2, 2);
    if (oh < 0 || oh > 18)
      return -1;
    if (p < e && *p == ':')
      p++;
    if (p < e) {
      om = read_int(&p, e, 2, 2);
      if (om < 0 || om > 59)
        return -1;
    }
    off = (oh * 3600 + om * 60) * (neg ? -1 : 1);
  }
  if (p != e)
    return -1;
  *sec = (double)days_from_civil(y, mo, d) * 86400.0 + (double)h * 3600.0
         + (double)mi * 60.0 + sc - (double)off;
  return 0;
}

/*
 * Header text lower-cased into ASCII words; degree signs (UTF-8 U+00B0 and
 * U+00BA, Latin-1 0xB0 and 0xBA) become "deg", U+2103/U+2109 become "degc"
 * / "degf", U+03A9 (ohm sign) becomes "ohm". '%' is its own word.
 */
#define MAX_WORDS 16
struct words {
  char w[MAX_WORDS][24];
  int upper_t[MAX_WORDS];   /* the word was a lone upper-case 'T' */
  int in_unit[MAX_WORDS];   /* inside (...) / [...] or after '/' */
  size_t n;
};

static void add_word(struct words *ws, const char *s, size_t n, int unit,
                     int upper_t)
{
  if (ws->n >= MAX_WORDS || n == 0)
    return;
  if (n >= sizeof ws->w[0])
    n = sizeof ws->w[0] - 1;
  memcpy(ws->w[ws->n], s, n);
  ws->w[ws->n][n] = '\0';
  ws->in_unit[ws->n] = unit;
  ws->upper_t[ws->n] = upper_t;
  ws->n++;
}

static void split_words(const char *name, struct words *ws)
{
  char cur[24];
  size_t k = 0;
  int unit = 0, cur_upper_t = 0;
  const unsigned char *p = (const unsigned char *)name;

  ws->n = 0;
  for (;; p++) {
    unsigned char c = *p;
    const char *emit = NULL;

    if (c == 0xC2 && (p[1] == 0xB0 || p[1] == 0xBA)) {
      emit = "deg";
      p++;
    } else if (c == 0xB0 || c == 0xBA) {
      emit = "deg";
    } else if (c == 0xE2 && p[1] == 0x84 && (p[2] == 0x83 || p[2] == 0x89)) {
      emit = p[2] == 0x83 ? "degc" : "degf";
      p += 2;
    } else if (c == 0xCE && p[1] == 0xA9) {
      emit = "ohm";
      p++;
    }
    if (emit != NULL) {
      /* "°C": the degree sign glues to the letter after it */
      if (k > 0)
        add_word(ws, cur, k, unit, cur_upper_t);
      k = strlen(emit);
      memcpy(cur, emit, k);
      cur_upper_t = 0;
      continue;
    }
    if ((c >= 'a' && c <= 'z') || (c >= '0' && c <= '9')
        || (c >= 'A' && c <= 'Z')) {
      if (k == 0)
        cur_upper_t = c == 'T';
      else
        cur_upper_t = 0;
      if (k < sizeof cur - 1)
        cur[k++] = (char)((c >= 'A' && c <= 'Z') ? c - 'A' + 'a' : c);
      continue;
    }
    add_word(ws, cur, k, unit, cur_upper_t && k == 1);
    k = 0;
    cur_upper_t = 0;
    if (c == '%')
      add_word(ws, "%", 1, 1, 0);
    if (c == '(' || c == '[' || c == '/')
      unit = 1;
    else if (c == ')' || c == ']')
      unit = 0;
    if (c == '\0')
      break;
  }
}

static int is_any(const char *w, const char *const *list, size_t n)
{
  for (size_t i = 0; i < n; i++)
    if (strcmp(w, list[i]) == 0)
      return 1;
  return 0;
}
#define IS_ANY(w, list) is_any((w), (list), sizeof (list) / sizeof (list)[0])

static enum ff_temp_unit unit_word(const char *w, const char *next, int alone)
{
  if (strcmp(w, "degc") == 0 || strcmp(w, "celsius") == 0
      || strcmp(w, "centigrade") == 0)
    return FF_UNIT_C;
  if (strcmp(w, "degf") == 0 || strcmp(w, "fahrenheit") == 0)
    return FF_UNIT_F;
  if (strcmp(w, "degk") == 0 || strcmp(w, "kelvin") == 0)
    return FF_UNIT_K;
  if ((strcmp(w, "deg") == 0 || strcmp(w, "degree") == 0
       || strcmp(w, "degrees") == 0) && next != NULL) {
    if (strcmp(next, "c") == 0)
      return FF_UNIT_C;
    if (strcmp(next, "f") == 0)
      return FF_UNIT_F;
    if (strcmp(next, "k") == 0)
      return FF_UNIT_K;
  }
  if (alone) {
    if (strcmp(w, "c") == 0)
      return FF_UNIT_C;
    if (strcmp(w, "k") == 0)
      return FF_UNIT_K;
    if (strcmp(w, "f") == 0)
      return FF_UNIT_F;
  }
  return FF_UNIT_UNKNOWN;
}

static enum ff_time_format time_unit_word(const char *w)
{
  static const char *const s[] = { "s", "sec", "secs", "second", "seconds" };
  static const char *const m[] = { "min", "mins", "minute", "minutes", "m" };
  static const char *const h[] = { "h", "hr", "hrs", "hour", "hours" };

  if (IS_ANY(w, s))
    return FF_TIME_SECONDS;
  if (IS_ANY(w, m))
    return FF_TIME_MINUTES;
  if (IS_ANY(w, h))
    return FF_TIME_HOURS;
  return FF_TIME_NONE;
}

void ff_import_header_info(const char *name, struct ff_header_info *h)
{
  static const char *const time_words[] = {
    "time", "zeit", "elapsed", "timestamp", "datetime", "date", "clock",
    "uhrzeit", "datum", "temps", "tiempo", "tempo"
  };
  /* Quantities that are not temperatures, with the reason shown. */
  static const struct { const char *w, *what; int unit_only; } other[] = {
    { "%", "a percentage", 0 }, { "rh", "humidity", 0 },
    { "humidity", "humidity", 0 }, { "hum", "humidity", 0 },
    { "feuchte", "humidity", 0 }, { "pressure", "pressure", 0 },
    { "druck", "pressure", 0 }, { "hpa", "pressure", 0 },
    { "kpa", "pressure", 0 }, { "mbar", "pressure", 0 },
    { "psi", "pressure", 0 }, { "pa", "pressure", 1 }, { "bar", "pressure", 1 },
    { "voltage", "a voltage", 0 }, { "volt", "a voltage", 0 },
    { "volts", "a voltage", 0 }, { "mv", "a voltage", 0 },
    { "v", "a voltage", 1 }, { "ohm", "a resistance", 0 },
    { "ohms", "a resistance", 0 }, { "kohm", "a resistance", 0 },
    { "resistance", "a resistance", 0 }, { "current", "a current", 0 },
    { "ma", "a current", 1 }, { "a", "a current", 1 },
    { "battery", "a battery level", 0 }, { "batt", "a battery level", 0 },
    { "lux", "light", 0 }, { "ppm", "a concentration", 0 },
    { "co2", "a concentration", 0 }, { "status", "a status", 0 },
    { "flag", "a flag", 0 }, { "flags", "a flag", 0 },
    { "alarm", "an alarm", 0 }, { "event", "an event", 0 },
    { "note", "a note", 0 }, { "notes", "a note", 0 },
    { "comment", "a comment", 0 }, { "remark", "a comment", 0 },
    { "id", "an id", 0 }, { "index", "a row number", 0 },
    { "idx", "a row number", 0 }, { "nr", "a row number", 0 },
    { "no", "a row number", 0 }, { "record", "a row number", 0 },
    { "rec", "a row number", 0 }, { "row", "a row number", 0 },
    { "seq", "a row number", 0 }, { "count", "a count", 0 }
  };
  struct words ws;

  memset(h, 0, sizeof *h);
  split_words(name, &ws);
  for (size_t i = 0; i < ws.n; i++) {
    const char *w = ws.w[i], *next = i + 1 < ws.n ? ws.w[i + 1] : NULL;
    /* a lone letter is a unit only in brackets, after '/', or last */
    int alone = ws.in_unit[i] || i + 1 == ws.n;
    enum ff_temp_unit u = unit_word(w, next, alone);
    enum ff_time_format tu = alone ? time_unit_word(w) : FF_TIME_NONE;

    if (u != FF_UNIT_UNKNOWN && h->unit == FF_UNIT_UNKNOWN)
      h->unit = u;
    /* "m" is a time unit only in brackets ("t (m)" is rare but clear) */
    if (tu != FF_TIME_NONE && h->time_unit == FF_TIME_NONE
        && (strcmp(w, "m") != 0 || ws.in_unit[i]))
      h->time_unit = tu;
    if (IS_ANY(w, time_words))
      h->time_word = 1;
    /* a header that is just "t" is time; "T" is a temperature */
    if (ws.n == 1 && strcmp(w, "t") == 0 && !ws.upper_t[i])
      h->time_word = 1;
    for (size_t k = 0; k < sizeof other / sizeof other[0]; k++)
      if (h->not_temp == NULL && strcmp(w, other[k].w) == 0
          && (!other[k].unit_only || ws.in_unit[i]))
        h->not_temp = other[k].what;
  }
  /* "T (C)" names a unit, so a "no" or "%" elsewhere in it loses */
  if (h->unit != FF_UNIT_UNKNOWN)
    h->not_temp = NULL;
}
