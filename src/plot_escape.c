/* plot_escape.c - plot stage: safe gnuplot strings, safe file names, format sets. */
#include <string.h>
#include "frostfit/plot.h"
#include "plot_impl.h"

/*
 * Length of the valid UTF-8 sequence starting at p (1..4), or 0 when the
 * bytes are not valid UTF-8 (overlong forms, surrogates and values above
 * U+10FFFF are rejected: cairo warns about them on stderr).
 */
static size_t utf8_len(const unsigned char *p)
{
  unsigned c = p[0];
  size_t len, k;
  unsigned long cp;

  if (c < 0x80)
    return 1;
  if (c >= 0xC2 && c <= 0xDF) {
    len = 2; cp = c & 0x1F;
  } else if (c >= 0xE0 && c <= 0xEF) {
    len = 3; cp = c & 0x0F;
  } else if (c >= 0xF0 && c <= 0xF4) {
    len = 4; cp = c & 0x07;
  } else {
    return 0;
  }
  for (k = 1; k < len; k++) {
    if ((p[k] & 0xC0) != 0x80)
      return 0;
    cp = (cp << 6) | (p[k] & 0x3F);
  }
  if ((len == 3 && cp < 0x800) || (len == 4 && cp < 0x10000) ||
      (cp >= 0xD800 && cp <= 0xDFFF) || cp > 0x10FFFF)
    return 0;
  return len;
}

/*
 * Inside a gnuplot single-quoted string only '' is special: backquotes,
 * backslashes and '@' macros are not expanded there. We still replace '@'
 * (a later edit of the script could move the text into double quotes or
 * outside quotes) and every control character: a newline would end the
 * string and the command, letting the rest run as a new command.
 */
char *ff_plot_quote(const char *s, char *out, size_t n)
{
  const unsigned char *p = (const unsigned char *)(s != NULL ? s : "");
  size_t o = 0;

  if (n < 3) {
    if (n > 0)
      out[0] = '\0';
    return out;
  }
  out[o++] = '\'';
  while (*p != '\0') {
    const char *rep = NULL;
    char one[5] = { 0 };
    size_t len = utf8_len(p);

    if (len == 0) {
      one[0] = '?';
      len = 1;
    } else if (len == 1 && (*p < 0x20 || *p == 0x7F)) {
      one[0] = ' ';
    } else if (*p == '\'') {
      rep = "''";
    } else if (*p == '@') {
      rep = "(at)";
    } else {
      memcpy(one, p, len);
    }
    if (rep == NULL)
      rep = one;
    if (o + strlen(rep) + 2 > n)       /* room for the closing quote + NUL */
      break;
    memcpy(out + o, rep, strlen(rep));
    o += strlen(rep);
    p += len;
  }
  out[o++] = '\'';
  out[o] = '\0';
  return out;
}

static int safe_char(unsigned char c)
{
  return (c >= 'A' && c <= 'Z') || (c >= 'a' && c <= 'z') ||
         (c >= '0' && c <= '9') || c == '.' || c == '_' || c == '-';
}

char *ff_plot_safe_name(const char *s, char *out, size_t n)
{
  const unsigned char *p = (const unsigned char *)(s != NULL ? s : "");
  size_t o = 0;

  if (n == 0)
    return out;
  for (; *p != '\0' && o + 1 < n; p++) {
    char c = safe_char(*p) ? (char)*p : '_';

    if (o == 0 && (c == '-' || c == '.'))
      c = '_';
    if (c == '_' && o > 0 && out[o - 1] == '_')
      continue;
    out[o++] = c;
  }
  out[o] = '\0';
  if (o == 0 || strcmp(out, "_") == 0) {
    strncpy(out, "figure", n - 1);
    out[n - 1] = '\0';
  }
  return out;
}

static const struct {
  const char *word;
  unsigned bit;
} formats[] = {
  { "png", FF_PLOT_PNG }, { "svg", FF_PLOT_SVG }, { "pdf", FF_PLOT_PDF }
};

int ff_plot_parse_formats(const char *s, unsigned *out, struct ff_diag *d)
{
  unsigned bits = 0;
  const char *p = s != NULL ? s : "";

  while (1) {
    size_t len = strcspn(p, ",");
    size_t k;
    unsigned bit = 0;

    if (len == 3 && strncmp(p, "all", 3) == 0)
      bit = FF_PLOT_FORMATS_ALL;
    for (k = 0; k < sizeof formats / sizeof formats[0]; k++)
      if (len == 3 && strncmp(p, formats[k].word, 3) == 0)
        bit = formats[k].bit;
    if (bit == 0)
      return ff_diag_set(d, FF_EUSAGE, NULL,
                         "unknown figure format '%.*s' in '%s' "
                         "(use png, svg, pdf or all)", (int)len, p,
                         s != NULL ? s : "");
    bits |= bit;
    if (p[len] == '\0')
      break;
    p += len + 1;
  }
  *out = bits;
  return FF_OK;
}

const char *ff_plot_formats_words(unsigned bits, char *out, size_t n)
{
  size_t k, o = 0;

  if (n == 0)
    return out;
  out[0] = '\0';
  for (k = 0; k < sizeof formats / sizeof formats[0]; k++) {
    if ((bits & formats[k].bit) == 0 || o + 5 > n)
      continue;
    if (o > 0)
      out[o++] = ' ';
    memcpy(out + o, formats[k].word, 4);    /* with the NUL */
    o += 3;
  }
  return out;
}
