/* frostfit/diag.h - status codes and error reports shared by every stage. */
#ifndef FF_DIAG_H
#define FF_DIAG_H

#include <stddef.h>

/* Also the process exit codes; never renumber. */
enum ff_status {
  FF_OK = 0,
  FF_EUSAGE = 1,       /* bad command line */
  FF_EINPUT = 2,       /* bad input data; loc says where */
  FF_EUNTRUSTED = 3,   /* no trustworthy result; msg says why */
  FF_EIO = 4           /* cannot open/read/write, out of memory */
};

/* Where a problem is. line and col are 1-based, 0 = unknown. */
struct ff_loc {
  const char *path;        /* borrowed; copied into ff_diag by ff_diag_set */
  unsigned long line;      /* physical line as an editor shows it */
  unsigned long col;       /* CSV field as a spreadsheet counts it */
};

/* The first error of an operation (the root cause). Zero-initialise. */
struct ff_diag {
  enum ff_status status;   /* FF_OK until the first error */
  char path[512];          /* copy of loc->path, "" when none */
  unsigned long line, col;
  char msg[512];
};
#define FF_DIAG_INIT { 0 }

/*
 * Records an error unless one is already recorded (the first one is the
 * root cause). loc may be NULL. Returns st, so `return ff_diag_set(...)`.
 */
int ff_diag_set(struct ff_diag *d, enum ff_status st, const struct ff_loc *loc,
                const char *fmt, ...) __attribute__((format(printf, 4, 5)));

/* Clears d back to FF_OK. */
void ff_diag_clear(struct ff_diag *d);

/*
 * Formats d as "path:line:col: msg" (parts that are unknown are left out)
 * into buf. Returns buf.
 */
const char *ff_diag_format(const struct ff_diag *d, char *buf, size_t n);

/* Short name of a status, e.g. "bad input". */
const char *ff_status_name(enum ff_status st);

#endif /* FF_DIAG_H */
