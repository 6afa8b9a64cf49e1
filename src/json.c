/* json.c - jansson helpers for the machine-readable outputs. */
#include "frostfit/json.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

json_t *ff_json_num(double x)
{
  return isfinite(x) ? json_real(x) : json_null();
}

int ff_json_set_num(json_t *obj, const char *key, double x)
{
  return json_object_set_new(obj, key, ff_json_num(x));
}

/* Text from user files may be Latin-1; JSON must be UTF-8, so a string that
 * is not valid UTF-8 is taken as Latin-1 and transcoded. */
static json_t *string_any(const char *s)
{
  json_t *j = json_string(s);
  size_t n = strlen(s), k = 0;
  char *u;

  if (j != NULL)
    return j;
  u = malloc(2 * n + 1);
  if (u == NULL)
    return NULL;
  for (const unsigned char *p = (const unsigned char *)s; *p; p++) {
    if (*p < 0x80) {
      u[k++] = (char)*p;
    } else {
      u[k++] = (char)(0xC0 | (*p >> 6));
      u[k++] = (char)(0x80 | (*p & 0x3F));
    }
  }
  u[k] = '\0';
  j = json_string(u);
  free(u);
  return j;
}

json_t *ff_json_str(const char *s)
{
  return s ? string_any(s) : json_null();
}

int ff_json_set_str(json_t *obj, const char *key, const char *s)
{
  return json_object_set_new(obj, key, ff_json_str(s));
}

int ff_json_write(const json_t *root, FILE *f)
{
  if (json_dumpf(root, f, JSON_INDENT(2) | JSON_REAL_PRECISION(10)) != 0)
    return -1;
  return fputc('\n', f) == EOF ? -1 : 0;
}
