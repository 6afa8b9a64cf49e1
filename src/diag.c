/* diag.c - the error record every stage fills; see frostfit/diag.h. */
#include "frostfit/diag.h"

#include <stdarg.h>
#include <stdio.h>
#include <string.h>

int ff_diag_set(struct ff_diag *d, enum ff_status st, const struct ff_loc *loc,
                const char *fmt, ...)
{
  va_list ap;

  if (d == NULL || d->status != FF_OK)
    return st;
  d->status = st;
  d->path[0] = '\0';
  d->line = d->col = 0;
  if (loc != NULL) {
    if (loc->path != NULL)
      snprintf(d->path, sizeof d->path, "%s", loc->path);
    d->line = loc->line;
    d->col = loc->col;
  }
  va_start(ap, fmt);
  vsnprintf(d->msg, sizeof d->msg, fmt, ap);
  va_end(ap);
  return st;
}

void ff_diag_clear(struct ff_diag *d)
{
  memset(d, 0, sizeof *d);
}

const char *ff_diag_format(const struct ff_diag *d, char *buf, size_t n)
{
  if (d->path[0] != '\0' && d->line > 0 && d->col > 0)
    snprintf(buf, n, "%s:%lu:%lu: %s", d->path, d->line, d->col, d->msg);
  else if (d->path[0] != '\0' && d->line > 0)
    snprintf(buf, n, "%s:%lu: %s", d->path, d->line, d->msg);
  else if (d->path[0] != '\0')
    snprintf(buf, n, "%s: %s", d->path, d->msg);
  else
    snprintf(buf, n, "%s", d->msg);
  return buf;
}

const char *ff_status_name(enum ff_status st)
{
  switch (st) {
  case FF_OK: return "ok";
  case FF_EUSAGE: return "usage error";
  case FF_EINPUT: return "bad input";
  case FF_EUNTRUSTED: return "no trustworthy result";
  case FF_EIO: return "i/o error";
  }
  return "unknown status";
}
