/* import_impl.h - private pieces shared by the importer's files (import*.c). */
#ifndef FF_IMPORT_IMPL_H
#define FF_IMPORT_IMPL_H

#include <stddef.h>
#include "frostfit/diag.h"
#include "frostfit/import.h"

/* Longest physical line (and record) accepted; longer is bad input. */
#define FF_IMPORT_MAX_LINE ((size_t)1 << 20)
/* Bytes read at the start of a file to recognise its dialect. */
#define FF_IMPORT_SNIFF_BYTES ((size_t)256 * 1024)
/* The reason given for a column without any value in the sample. */
#define FF_IMPORT_WHY_EMPTY "empty"
/* Bytes read per step while streaming. */
#define FF_IMPORT_CHUNK ((size_t)64 * 1024)

/*
 * The one number parser of the importer (a faster one may replace it):
 * s[0..n) with optional blanks around, sign, digits, decimal mark `decimal`
 * ('.' or ','), exponent. Independent of the process locale. Returns 0 and
 * *out, or -1 when the text is not such a number or is out of range.
 */
int ff_import_parse_number(const char *s, size_t n, char decimal, double *out);

/* 1 when ff_import_parse_number would return 0 for the same text (the
 * value is not made when that is sure without it), else 0. */
int ff_import_is_number(const char *s, size_t n, char decimal);

/* 1 when s[0..n) is a missing-value marker: empty, NaN, n/a, ---, OL, ERR,
 * ####, inf, ... (case-insensitive, blanks around ignored). */
int ff_import_is_missing_text(const char *s, size_t n);

/* 1 when x is a missing-value sentinel (-999, -9999, 9999, 99999 ...) or
 * one of extra[0..n_extra). */
int ff_import_is_sentinel(double x, const double *extra, size_t n_extra);

/*
 * Clock time: "mm:ss", "h:mm:ss" with optional fraction (decimal mark '.'
 * or `decimal`), optional AM/PM. Returns 2 for mm:ss (elapsed), 3 for a time
 * of day (may wrap past midnight), -1 when s is not a clock time.
 */
int ff_import_parse_clock(const char *s, size_t n, char decimal, double *sec);

/*
 * ISO 8601 date-time "YYYY-MM-DD[T| ]hh:mm[:ss[.fff]][Z|+hh:mm|-hhmm]" (also
 * YYYY/MM/DD and DD.MM.YYYY dates). *sec: seconds since 1970-01-01, UTC
 * when an offset was given, else as written. *date_only is 1 when there was
 * no time of day. Returns 0 or -1.
 */
int ff_import_parse_iso(const char *s, size_t n, char decimal, double *sec,
                        int *date_only);

/* What a column header says. */
struct ff_header_info {
  enum ff_temp_unit unit;          /* temperature unit named, or UNKNOWN */
  enum ff_time_format time_unit;   /* SECONDS/MINUTES/HOURS named, or NONE */
  int time_word;                   /* "time", "zeit", "elapsed", "t" ... */
  const char *not_temp;            /* quantity that is not a temperature
                                      ("humidity", "pressure", ...), NULL */
};
void ff_import_header_info(const char *name, struct ff_header_info *h);

/* The dialect and column plan found at the start of a file. */
struct ff_sniff {
  struct ff_dialect dialect;
  size_t data_offset;              /* byte offset of the first data line */
  size_t n_columns;
  struct ff_column *col;           /* n_columns, malloc'd; caller frees */
  size_t time_col;                 /* 0-based */
  size_t n_channels;
};

/*
 * Looks at buf[0..len) (the file's first bytes; eof: the file ends there)
 * and decides the dialect, header, first data line and column roles.
 * Returns FF_OK, or FF_EINPUT / FF_EIO with d set (loc uses path).
 */
int ff_import_sniff(const char *buf, size_t len, int eof, const char *path,
                    const struct ff_import_opts *o, struct ff_sniff *out,
                    struct ff_diag *d);

/* Quotes bad text for a message: at most 40 bytes, control bytes as '?'. */
const char *ff_import_quote(char *dst, size_t cap, const char *s, size_t n);

/* ff_import_fast() stepped aside: read the file the general way. */
#define FF_FAST_DECLINED 1

/* What the fast path needs to know, all decided by the sniffing. */
struct ff_fast_in {
  int fd;                          /* a regular file for pread, or -1:
                                      the whole file is buf[0..len) */
  const char *buf;                 /* the sample read for sniffing */
  size_t len;
  size_t size;                     /* file size (len when fd is -1) */
  size_t data_offset;              /* first data line */
  size_t n_columns, time_col;
  size_t min_fields;               /* fewer fields: a short row */
  const long *chan;                /* per column: channel index or -1 */
  const enum ff_temp_unit *units;  /* per channel: unit in the file */
  double time_scale;               /* numeric time to seconds */
  int iso;                         /* 1: ISO 8601 date-times */
  int clock;                       /* 1: clock times (mm:ss, hh:mm:ss) */
  char delimiter, decimal;
  const double *sentinels;
  size_t n_sentinels;
  void (*progress)(void *ctx, unsigned long long done,
                   unsigned long long total);
  void *progress_ctx;
  int no_fast;                     /* 1: always decline */
};

/*
 * The fast path for plain tables (single-byte delimiter, no quotes,
 * numeric, clock or ISO 8601 time): parses the data region in parallel
 * chunks into ds (which new_dataset() in import.c prepared: columns and
 * channels set, no rows) and does what the general reader's end does
 * (times from the first kept row, ranges, counters). Returns FF_OK, or
 * FF_FAST_DECLINED with ds as it came when the file holds anything the
 * general reader must judge (quotes, bad cells, ragged rows, lone CR line
 * ends, NUL bytes, very long lines, no kept rows ...) or memory runs
 * out. Either way the result equals the general reader's, bit for bit.
 * FF_IMPORT_NO_FAST=1 in the environment makes it always decline.
 */
int ff_import_fast(const struct ff_fast_in *in, struct ff_dataset *ds);

/*
 * The number at p (text that ends in a byte which is not a digit, sign or
 * `decimal`) when it is "[+|-]digits[<decimal>digits]" with at most 19
 * digits in all, a value of at most 2^53 and at most 22 after the mark:
 * the case where ff_import_parse_number makes one exact multiply or divide;
 * this makes the same one (the same double as strtod). Returns the end of
 * the number, or NULL for anything else (then ask ff_import_parse_number).
 */
const char *ff_import_quick_number(const char *p, char decimal, double *out);

/* For tests: chunk and block sizes of the fast path in bytes (0, 0 = the
 * defaults), and how many imports it has finished in this process. */
void ff_import_fast_tune(size_t chunk_bytes, size_t block_bytes);
unsigned long ff_import_fast_count(void);

#endif /* FF_IMPORT_IMPL_H */
