/* frostfit/numparse.h - locale-independent decimal numbers from CSV cells, used by the importer. */
#ifndef FF_NUMPARSE_H
#define FF_NUMPARSE_H

#include <stddef.h>

/* Why a cell is not a number. FF_NUM_OK is 0. */
enum ff_num_status {
  FF_NUM_OK = 0,
  FF_NUM_EMPTY,        /* nothing but blanks (or len 0) */
  FF_NUM_SYNTAX,       /* not a plain decimal number: letters, two decimal
                          marks, a lone sign, "inf", "nan", hex, ... */
  FF_NUM_RANGE,        /* magnitude above DBL_MAX; *out is +-HUGE_VAL */
  FF_NUM_NOMEM         /* a cell over 255 characters and no memory to copy it */
};

/*
 * Parses the len bytes at s (no NUL needed; s may be NULL when len is 0)
 * as one decimal number, whatever the process locale:
 *
 *   [blanks] [+|-] digits [decimal digits] [(e|E) [+|-] digits] [blanks]
 *
 * with at least one mantissa digit on either side of the decimal mark
 * ("5.", ".5" are fine). decimal is the decimal mark the file uses: '.' or
 * ','; the other character is rejected, so "1.234,5" is an error under
 * either mark (no thousands separators). Blanks are spaces and tabs.
 * Rejected: empty text, trailing garbage, "inf", "nan", hexadecimal and
 * anything else strtod accepts beyond the grammar above: callers decide
 * themselves what counts as a missing-value marker.
 *
 * The result is bit for bit what strtod() gives under the "C" locale
 * (round to nearest): an exact fast path handles up to 19 mantissa
 * digits whose value fits in 53 bits with a power of ten up to 1e22
 * (one correctly rounded multiply or divide); everything else goes to the
 * C library's strtod_l with a "C" locale object. A value that underflows
 * gives the correctly rounded subnormal or signed zero and FF_NUM_OK.
 *
 * Returns FF_NUM_OK with the value in *out, or another ff_num_status with
 * *out untouched (except FF_NUM_RANGE, which stores +-HUGE_VAL). Thread-safe;
 * allocates only for cells of 256 characters or more (FF_NUM_NOMEM).
 */
int ff_parse_double(const char *s, size_t len, char decimal, double *out);

/* Short lower-case description of a status, e.g. "not a number". */
const char *ff_num_status_name(int st);

#endif /* FF_NUMPARSE_H */
