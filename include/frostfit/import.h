/* frostfit/import.h - logger CSV to time series, the first pipeline stage. */
#ifndef FF_IMPORT_H
#define FF_IMPORT_H

#include <stddef.h>
#include "frostfit/diag.h"

enum ff_temp_unit { FF_UNIT_UNKNOWN = 0, FF_UNIT_C, FF_UNIT_K, FF_UNIT_F };

enum ff_col_role { FF_ROLE_IGNORE = 0, FF_ROLE_TIME, FF_ROLE_TEMP };

enum ff_time_format {
  FF_TIME_NONE = 0,
  FF_TIME_SECONDS,     /* plain number, seconds */
  FF_TIME_MINUTES,     /* plain number, header says minutes */
  FF_TIME_HOURS,       /* plain number, header says hours */
  FF_TIME_CLOCK,       /* mm:ss or hh:mm:ss(.fff), may wrap past midnight */
  FF_TIME_ISO8601      /* date-time, optional zone offset */
};

/*
 * How to read a file. Zero/NULL fields mean "find out from the file".
 * See docs/formats/logger-csv.md for what is recognised.
 */
struct ff_import_opts {
  char delimiter;                  /* ',', ';', '\t', ' ' or 0 = sniff */
  char decimal;                    /* '.', ',' or 0 = sniff */
  enum ff_temp_unit unit;          /* FF_UNIT_UNKNOWN = from the header */
  const char *time_column;         /* header name or 1-based column; NULL */
  const double *sentinels;         /* extra missing-value markers, or NULL */
  size_t n_sentinels;
  /* Called after each chunk read: bytes so far and the file's size (0 when
   * unknown, e.g. a pipe). NULL: nothing. For a progress bar. */
  void (*progress)(void *ctx, unsigned long long done,
                   unsigned long long total);
  void *progress_ctx;
  /* 1: never take the parallel fast path for plain numeric tables (the
   * result is the same either way; for tests and benchmarks). The
   * environment variable FF_IMPORT_NO_FAST=1 does the same. */
  int no_fast_path;
};
#define FF_IMPORT_OPTS_DEFAULT { 0 }

/* One column as understood. */
struct ff_column {
  char name[128];                  /* header text (or "column N") */
  enum ff_col_role role;
  enum ff_temp_unit unit;          /* temperature columns */
  enum ff_time_format time_format; /* the time column */
  unsigned channel;                /* 1-based channel number, 0 if none */
  char why[96];                    /* why ignored, e.g. "text", "empty" */
  int unit_assumed;                /* 1: no unit in the header, C (or the
                                      override) was assumed */
};

/* One temperature channel; values converted to degrees C on import. */
struct ff_channel {
  char name[128];
  unsigned column;                 /* 1-based CSV column */
  enum ff_temp_unit unit_in;       /* unit found in the file */
  double *temp_c;                  /* n values (dataset's n); NaN = missing */
  size_t n_missing;                /* NaN among the n kept rows */
  double min_c, max_c;             /* over the values present; NaN when
                                      the channel has none */
};

struct ff_dialect {
  char delimiter;                  /* as used */
  char decimal;
  char line_end[8];                /* "LF", "CRLF", "CR" */
  int bom;                         /* 1 when a UTF-8 BOM was skipped */
  unsigned long header_line;       /* 1-based, 0 = no header row */
  unsigned long first_data_line;
  unsigned long metadata_lines;    /* lines before the header */
  int whitespace;                  /* 1: columns aligned with blanks */
  unsigned long comment_lines;     /* '#' lines skipped inside the table */
};

struct ff_import_stats {
  size_t rows_read;                /* data rows seen ('#' and blank lines
                                      not counted) */
  size_t rows_kept;                /* = dataset n */
  size_t rows_no_time;             /* time cell missing or unreadable */
  size_t rows_time_backwards;      /* time stamp earlier than the previous */
  size_t rows_time_duplicate;      /* time stamp equal to the previous */
  size_t rows_all_missing;         /* no channel had a value (skipped) */
  unsigned long first_backwards_line; /* first line of such a row, 0 */
  unsigned long first_duplicate_line;
  size_t midnight_wraps;           /* clock times that passed midnight */
};

/*
 * What the importer made of one file. Owned by the caller: free with
 * ff_dataset_free(). t_s is strictly increasing, seconds from the first
 * kept row (t0_iso keeps the absolute start when the file had dates).
 */
struct ff_dataset {
  char path[512];
  size_t n;                        /* rows kept */
  double *t_s;                     /* n times, seconds */
  size_t n_channels;
  struct ff_channel *ch;           /* n_channels channels */
  size_t n_columns;
  struct ff_column *col;           /* every column left to right */
  struct ff_dialect dialect;
  struct ff_import_stats stats;
  char t0_iso[40];                 /* "" when the time had no date */
  double t0_s;                     /* first kept time as the file gives it,
                                      in seconds (ISO 8601: seconds since
                                      1970-01-01, UTC when the file gave
                                      an offset) */
};

/*
 * Reads path ("-" = standard input) with libcsv, streaming: the file's text
 * is never held whole, only the numbers (8 bytes a value). Plain numeric
 * tables in regular files are parsed in parallel chunks by a fast path
 * with the same result. o may be NULL
 * (defaults). Missing cells, sentinel values and overflow markers become
 * NaN; rows without a time, with a repeated or backwards time, or with no
 * temperature at all are skipped and counted in stats. Temperatures are
 * converted to degrees C. The process locale is never consulted.
 * Returns a new dataset, or NULL with the reason in d: FF_EINPUT with line
 * and column for bad data (empty file, header only, no time column, no
 * temperature column, binary or UTF-16 content, ragged or truncated rows,
 * absurd line lengths, a cell that is neither a number nor a missing
 * marker), FF_EIO when the file cannot be opened or read or memory runs out.
 */
struct ff_dataset *ff_import_file(const char *path,
                                  const struct ff_import_opts *o,
                                  struct ff_diag *d);

/* Frees ds and everything in it; NULL is a no-op. */
void ff_dataset_free(struct ff_dataset *ds);

/*
 * Finds a channel by header name (exact, then case-insensitive) or by
 * 1-based number counting every temperature column left to right.
 * Returns the 0-based index into ds->ch, or -1 with FF_EINPUT in d.
 */
long ff_dataset_find_channel(const struct ff_dataset *ds, const char *spec,
                             struct ff_diag *d);

/*
 * Copies channel k's present values (missing ones left out) into t and y,
 * each with room for ds->n values. Returns how many were copied.
 */
size_t ff_dataset_channel_xy(const struct ff_dataset *ds, size_t k,
                             double *t, double *y);

/*
 * Median of the time steps t_s[i+1] - t_s[i] (GSL), seconds; NaN when
 * ds->n < 2.
 */
double ff_dataset_median_dt(const struct ff_dataset *ds);

/* "seconds", "minutes", "hours", "clock", "iso8601" or "none" */
const char *ff_time_format_name(enum ff_time_format f);

/* "time", "temperature" or "ignored" */
const char *ff_role_name(enum ff_col_role r);

/* "C", "K", "F" or "?" */
const char *ff_unit_name(enum ff_temp_unit u);

#endif /* FF_IMPORT_H */
