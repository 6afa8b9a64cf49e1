/* test_import.c - the importer: every dialect, missing values, time formats,
 * units, locale independence and every kind of bad input.
 * Fixtures: tests/data/import (made by make-fixtures.sh; synthetic values).
 * Unit conversions: K = C + 273.15 and F = C * 9/5 + 32 are the SI / NIST
 * SP 811 definitions (common practice, no source needed beyond that). */
#include <criterion/criterion.h>
#include <locale.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "frostfit/import.h"
#include "../src/import_impl.h"

#define DIR "tests/data/import/"
/* Values typed in a fixture and read back in degrees C: the parser is exact
 * (same double as strtod), so only conversions need a tolerance. */
#define EXACT 0.0
/* K and F conversions round once or twice in binary64. */
#define CONV 1e-12

static struct ff_dataset *load(const char *name, const struct ff_import_opts *o)
{
  struct ff_diag d = FF_DIAG_INIT;
  struct ff_dataset *ds = ff_import_file(name, o, &d);

  cr_assert_not_null(ds, "%s: %s:%lu:%lu: %s", name, d.path, d.line, d.col,
                     d.msg);
  cr_assert_eq(d.status, FF_OK);
  return ds;
}

static void near(double got, double want, double tol, const char *what)
{
  cr_expect(fabs(got - want) <= tol, "%s: got %.17g, want %.17g", what, got,
            want);
}

Test(import, semicolon_decimal_comma_metadata_crlf)
{
  struct ff_dataset *ds = load(DIR "logger_semicolon_comma.csv", NULL);
  struct ff_diag d = FF_DIAG_INIT;

  cr_assert_eq(ds->dialect.delimiter, ';');
  cr_assert_eq(ds->dialect.decimal, ',');
  cr_assert_str_eq(ds->dialect.line_end, "CRLF");
  cr_assert_eq(ds->dialect.bom, 0);
  cr_assert_eq(ds->dialect.header_line, 5);
  cr_assert_eq(ds->dialect.metadata_lines, 4);
  cr_assert_eq(ds->dialect.first_data_line, 6);
  cr_assert_eq(ds->n, 121);
  cr_assert_eq(ds->stats.rows_read, 121);
  cr_assert_eq(ds->n_channels, 2);
  cr_assert_str_eq(ds->ch[0].name, "T1 (\xC2\xB0" "C)");
  cr_assert_eq(ds->ch[0].column, 2);
  cr_assert_eq(ds->ch[0].unit_in, FF_UNIT_C);
  cr_assert_eq(ds->col[0].role, FF_ROLE_TIME);
  cr_assert_eq(ds->col[0].time_format, FF_TIME_SECONDS);
  near(ds->t_s[0], 0.0, EXACT, "t[0]");
  near(ds->t_s[34], 170.0, EXACT, "t[34]");
  near(ds->t_s[120], 600.0, EXACT, "t[120]");
  near(ds->ch[0].temp_c[0], 5.0, EXACT, "T1 at 0 s");
  near(ds->ch[0].temp_c[1], 4.592, EXACT, "T1 at 5 s");
  near(ds->ch[0].temp_c[34], -1.988, EXACT, "T1 at 170 s");
  near(ds->ch[1].temp_c[1], -4.994, EXACT, "T2 at 5 s");
  near(ds->ch[0].min_c, -2.472, EXACT, "T1 min");
  near(ds->ch[0].max_c, 5.0, EXACT, "T1 max");
  near(ff_dataset_median_dt(ds), 5.0, EXACT, "median dt");
  cr_assert_eq(ff_dataset_find_channel(ds, "2", &d), 1);
  cr_assert_eq(ff_dataset_find_channel(ds, "T1 (\xC2\xB0" "C)", &d), 0);
  cr_assert_eq(ff_dataset_find_channel(ds, "t2 (\xC2\xB0" "c)", &d), 1);
  cr_assert_eq(d.status, FF_OK);
  cr_assert_eq(ff_dataset_find_channel(ds, "3", &d), -1);
  cr_assert_eq(d.status, FF_EINPUT);
  cr_assert(strstr(d.msg, "found '3'") != NULL, "%s", d.msg);
  ff_dataset_free(ds);
}

Test(import, comma_lf_quoted_cells)
{
  struct ff_dataset *ds = load(DIR "comma_lf.csv", NULL);

  cr_assert_eq(ds->dialect.delimiter, ',');
  cr_assert_eq(ds->dialect.decimal, '.');
  cr_assert_str_eq(ds->dialect.line_end, "LF");
  cr_assert_str_eq(ds->col[0].name, "time (s)");
  cr_assert_eq(ds->n, 4);
  near(ds->t_s[1], 2.5, EXACT, "t[1]");
  near(ds->ch[0].temp_c[1], 20.25, EXACT, "quoted \"20.25\"");
  near(ds->t_s[3], 7.5, EXACT, "t[3]");
  near(ds->ch[0].temp_c[3], 18.0625, EXACT, "T[3]");
  ff_dataset_free(ds);
}

Test(import, bom_tab_crlf_kelvin)
{
  struct ff_dataset *ds = load(DIR "tab_crlf_bom_kelvin.tsv", NULL);

  cr_assert_eq(ds->dialect.bom, 1);
  cr_assert_eq(ds->dialect.delimiter, '\t');
  cr_assert_str_eq(ds->dialect.line_end, "CRLF");
  cr_assert_str_eq(ds->col[0].name, "t [s]");
  cr_assert_eq(ds->ch[0].unit_in, FF_UNIT_K);
  cr_assert_eq(ds->n, 3);
  near(ds->t_s[2], 20.0, EXACT, "t[2]");
  near(ds->ch[0].temp_c[0], 5.0, CONV, "278.15 K");
  near(ds->ch[0].temp_c[1], 3.5, CONV, "276.65 K");
  near(ds->ch[0].temp_c[2], -0.164, CONV, "272.986 K");
  ff_dataset_free(ds);
}

Test(import, tab_decimal_comma_exponents_comment_inside)
{
  struct ff_dataset *ds = load(DIR "tab_decimal_comma.tsv", NULL);

  cr_assert_eq(ds->dialect.delimiter, '\t');
  cr_assert_eq(ds->dialect.decimal, ',');
  cr_assert_eq(ds->dialect.comment_lines, 1);
  cr_assert_eq(ds->col[0].time_format, FF_TIME_MINUTES);
  cr_assert_eq(ds->n, 3);
  near(ds->t_s[1], 15.0, EXACT, "0,25 min");
  near(ds->ch[0].temp_c[0], 21.5, EXACT, "2,15E+01");
  near(ds->ch[0].temp_c[1], 18.75, EXACT, "1,875E+01");
  near(ds->ch[0].temp_c[2], -1.25, EXACT, "after the '#' line");
  ff_dataset_free(ds);
}

Test(import, lone_cr_hours_fahrenheit)
{
  struct ff_dataset *ds = load(DIR "cr_hours_fahrenheit.csv", NULL);

  cr_assert_str_eq(ds->dialect.line_end, "CR");
  cr_assert_eq(ds->col[0].time_format, FF_TIME_HOURS);
  cr_assert_eq(ds->n, 3);
  cr_assert_eq(ds->n_channels, 2);
  cr_assert_eq(ds->ch[1].unit_in, FF_UNIT_F);
  near(ds->t_s[1], 900.0, EXACT, "0.25 h");
  near(ds->t_s[2], 1800.0, EXACT, "0.5 h");
  near(ds->ch[0].temp_c[0], 20.5, CONV, "68.9 F");
  near(ds->ch[0].temp_c[1], 10.1, CONV, "50.18 F");
  near(ds->ch[0].temp_c[2], -0.5, CONV, "31.1 F");
  near(ds->ch[1].temp_c[0], 0.0, CONV, "32 F");
  near(ds->ch[1].temp_c[2], -20.0, CONV, "-4 F");
  ff_dataset_free(ds);
}

Test(import, latin1_degree_minutes_no_final_newline)
{
  struct ff_dataset *ds = load(DIR "latin1_minutes.csv", NULL);

  /* byte 0xB0 in the file, kept as UTF-8 U+00B0 */
  cr_assert_str_eq(ds->ch[0].name, "T (\xC2\xB0" "C)");
  cr_assert_eq(ds->ch[0].unit_in, FF_UNIT_C);
  cr_assert_eq(ds->col[0].time_format, FF_TIME_MINUTES);
  cr_assert_eq(ds->dialect.decimal, ',');
  cr_assert_eq(ds->n, 3);
  near(ds->t_s[1], 30.0, EXACT, "0,5 min");
  near(ds->t_s[2], 60.0, EXACT, "1 min");
  near(ds->ch[0].temp_c[0], 4.25, EXACT, "4,25");
  near(ds->ch[0].temp_c[2], -0.375, EXACT, "-0,375 on the last line");
  ff_dataset_free(ds);
}

Test(import, clock_mm_ss_and_degf_word)
{
  struct ff_dataset *ds = load(DIR "clock_mmss.csv", NULL);

  cr_assert_eq(ds->col[0].time_format, FF_TIME_CLOCK);
  cr_assert_eq(ds->ch[0].unit_in, FF_UNIT_F);
  cr_assert_eq(ds->n, 4);
  near(ds->t_s[1], 30.0, EXACT, "00:30");
  near(ds->t_s[3], 630.5, EXACT, "10:30.5");
  near(ds->ch[0].temp_c[0], 5.0, CONV, "41 F");
  near(ds->ch[0].temp_c[1], 2.0, CONV, "35.6 F");
  near(ds->ch[0].temp_c[3], -1.0, CONV, "30.2 F");
  ff_dataset_free(ds);
}

Test(import, clock_time_of_day_across_midnight)
{
  struct ff_dataset *ds = load(DIR "clock_midnight.csv", NULL);

  cr_assert_eq(ds->n, 4);
  cr_assert_eq(ds->stats.midnight_wraps, 1);
  cr_assert_eq(ds->stats.rows_time_backwards, 0);
  near(ds->t_s[1], 1.0, 1e-9, "23:59:59.250");
  near(ds->t_s[2], 2.0, 1e-9, "00:00:00.250 next day");
  near(ds->t_s[3], 3.5, 1e-9, "00:00:01.750");
  near(ds->ch[0].temp_c[3], -1.8, EXACT, "T[3]");
  ff_dataset_free(ds);
}

Test(import, iso8601_with_offsets_and_ignored_humidity)
{
  struct ff_dataset *ds = load(DIR "iso_offset.csv", NULL);

  cr_assert_eq(ds->col[0].time_format, FF_TIME_ISO8601);
  cr_assert_eq(ds->n, 3);
  /* 23:59:30+01:00 = 22:59:30Z; 22:59:45Z; 00:00:00+01:00 = 23:00:00Z */
  near(ds->t_s[1], 15.0, EXACT, "t[1]");
  near(ds->t_s[2], 30.0, EXACT, "t[2] across midnight and offsets");
  cr_assert_str_eq(ds->t0_iso, "2026-11-30T23:59:30+01:00");
  cr_assert_eq(ds->n_channels, 2);
  cr_assert_eq(ds->col[3].role, FF_ROLE_IGNORE);
  cr_assert(strstr(ds->col[3].why, "humidity") != NULL, "%s", ds->col[3].why);
  near(ds->ch[1].temp_c[2], -3.75, EXACT, "T2[2]");
  ff_dataset_free(ds);
}

Test(import, no_header_first_column_is_seconds)
{
  struct ff_dataset *ds = load(DIR "noheader.csv", NULL);

  cr_assert_eq(ds->dialect.header_line, 0);
  cr_assert_eq(ds->dialect.first_data_line, 1);
  cr_assert_eq(ds->n, 3);
  cr_assert_eq(ds->n_channels, 2);
  cr_assert_str_eq(ds->ch[0].name, "column 2");
  cr_assert_str_eq(ds->ch[1].name, "column 3");
  cr_assert(ds->col[1].unit_assumed);
  near(ds->t_s[2], 10.0, EXACT, "t[2]");
  near(ds->ch[1].temp_c[1], -2.5, EXACT, "T2[1]");
  ff_dataset_free(ds);
}

Test(import, missing_values_and_bad_time_stamps)
{
  struct ff_dataset *ds = load(DIR "missing.csv", NULL);
  double t[8], y[8];

  cr_assert_eq(ds->stats.rows_read, 9);
  cr_assert_eq(ds->n, 4);
  cr_assert_eq(ds->stats.rows_no_time, 1);
  cr_assert_eq(ds->stats.rows_time_duplicate, 1);
  cr_assert_eq(ds->stats.first_duplicate_line, 8);
  cr_assert_eq(ds->stats.rows_time_backwards, 1);
  cr_assert_eq(ds->stats.first_backwards_line, 9);
  cr_assert_eq(ds->stats.rows_all_missing, 2);
  /* kept: t = 0, 3, 4, 5 */
  near(ds->t_s[1], 3.0, EXACT, "t[1]");
  near(ds->t_s[3], 5.0, EXACT, "t[3]");
  cr_assert(isnan(ds->ch[0].temp_c[1]), "#### is missing, not zero");
  cr_assert(isnan(ds->ch[0].temp_c[2]), "9999 is a sentinel");
  cr_assert(isnan(ds->ch[1].temp_c[2]), "99999 is a sentinel");
  cr_assert(isnan(ds->ch[2].temp_c[1]), "-9999 is a sentinel");
  cr_assert(isnan(ds->ch[1].temp_c[3]), "n/a is missing");
  near(ds->ch[2].temp_c[2], -100.0, EXACT, "-100 is a value by default");
  cr_assert_eq(ds->ch[0].n_missing, 2);
  cr_assert_eq(ds->ch[1].n_missing, 2);
  cr_assert_eq(ds->ch[2].n_missing, 1);
  cr_assert_eq(ff_dataset_channel_xy(ds, 0, t, y), 2);
  near(t[1], 5.0, EXACT, "xy t");
  near(y[1], -1.25, EXACT, "xy y");
  ff_dataset_free(ds);
}

Test(import, extra_sentinel_from_options)
{
  static const double extra[] = { -100.0 };
  struct ff_import_opts o = FF_IMPORT_OPTS_DEFAULT;
  struct ff_dataset *ds;

  o.sentinels = extra;
  o.n_sentinels = 1;
  ds = load(DIR "missing.csv", &o);
  /* the row at t = 4 with -100 is now empty, so the next t = 4 row is the
   * first kept one at 4 s, not a duplicate */
  cr_assert_eq(ds->stats.rows_all_missing, 3);
  cr_assert_eq(ds->stats.rows_time_duplicate, 0);
  cr_assert_eq(ds->n, 4);
  near(ds->ch[2].temp_c[2], 1.0, EXACT, "T3 at 4 s");
  ff_dataset_free(ds);
}

Test(import, blank_aligned_columns)
{
  struct ff_dataset *ds = load(DIR "whitespace.txt", NULL);

  cr_assert_eq(ds->dialect.whitespace, 1);
  cr_assert_eq(ds->n, 3);
  cr_assert_eq(ds->n_channels, 2);
  cr_assert_str_eq(ds->ch[1].name, "T2");
  near(ds->ch[0].temp_c[2], 3.875, EXACT, "T1[2]");
  near(ds->ch[1].temp_c[1], -1.25, EXACT, "T2[1]");
  ff_dataset_free(ds);
}

Test(import, column_roles_and_channel_numbers)
{
  struct ff_dataset *ds = load(DIR "roles.csv", NULL);
  struct ff_diag d = FF_DIAG_INIT;
  static const enum ff_col_role want[] = {
    FF_ROLE_IGNORE, FF_ROLE_TIME, FF_ROLE_TEMP, FF_ROLE_IGNORE, FF_ROLE_TEMP,
    FF_ROLE_IGNORE, FF_ROLE_IGNORE, FF_ROLE_TEMP, FF_ROLE_IGNORE
  };

  cr_assert_eq(ds->n_columns, 9);
  for (size_t c = 0; c < 9; c++)
    cr_expect_eq(ds->col[c].role, want[c], "column %zu", c + 1);
  cr_assert(strstr(ds->col[3].why, "pressure") != NULL);
  cr_assert(strstr(ds->col[5].why, "voltage") != NULL);
  cr_assert(strstr(ds->col[8].why, "empty") != NULL);
  cr_assert_eq(ds->n_channels, 3);
  cr_assert_eq(ds->ch[0].column, 3);
  cr_assert_eq(ds->ch[1].column, 5);
  cr_assert_eq(ds->ch[2].column, 8);
  cr_assert_eq(ds->col[7].channel, 3);
  cr_assert(ds->col[7].unit_assumed);
  cr_assert_eq(ff_dataset_find_channel(ds, "T sample (\xC2\xB0" "C)", &d), 1);
  cr_assert_eq(ff_dataset_find_channel(ds, "3", &d), 2);
  near(ds->ch[0].temp_c[2], -5.625, EXACT, "bath");
  near(ds->ch[1].temp_c[1], 2.0, EXACT, "sample");
  ff_dataset_free(ds);
}

Test(import, units_on_their_own_line)
{
  struct ff_dataset *ds = load(DIR "units_row.csv", NULL);

  cr_assert_eq(ds->dialect.header_line, 2);
  cr_assert_eq(ds->dialect.metadata_lines, 1);
  cr_assert_eq(ds->dialect.first_data_line, 4);
  cr_assert_str_eq(ds->col[0].name, "Time (s)");
  cr_assert_str_eq(ds->ch[0].name, "T1 (\xC2\xB0" "C)");
  cr_assert_eq(ds->ch[1].unit_in, FF_UNIT_K);
  cr_assert_eq(ds->col[3].role, FF_ROLE_IGNORE);
  cr_assert_eq(ds->n_channels, 2);
  near(ds->ch[1].temp_c[0], 2.0, CONV, "275,15 K");
  near(ds->ch[0].temp_c[1], 1.25, EXACT, "1,25 C");
  ff_dataset_free(ds);
}

Test(import, date_and_time_in_separate_columns)
{
  struct ff_dataset *ds = load(DIR "date_time_columns.csv", NULL);

  cr_assert_eq(ds->col[0].role, FF_ROLE_IGNORE);
  cr_assert_eq(ds->col[1].role, FF_ROLE_TIME);
  cr_assert_eq(ds->col[1].time_format, FF_TIME_CLOCK);
  cr_assert_eq(ds->n, 3);
  cr_assert_eq(ds->stats.midnight_wraps, 1);
  near(ds->t_s[2], 2.0, EXACT, "00:00:00 after 23:59:58");
  near(ds->ch[0].temp_c[1], 1.375, EXACT, "T[1]");
  ff_dataset_free(ds);
}

Test(import, dotted_dates_and_twelve_hour_clock)
{
  struct ff_dataset *ds = load(DIR "dotted_dates.csv", NULL);

  cr_assert_eq(ds->col[0].time_format, FF_TIME_ISO8601);
  cr_assert_str_eq(ds->ch[0].name, "Temperatur (\xC2\xB0" "C)");
  /* 2026-11-30T23:59:58, no offset: seconds since 1970 as written
   * (python3 datetime(2026,11,30,23,59,58,tzinfo=utc).timestamp()) */
  near(ds->t0_s, 1796083198.0, EXACT, "t0");
  near(ds->t_s[2], 5.0, EXACT, "01.12.2026 00:00:03");
  near(ds->ch[0].temp_c[2], 1.3, EXACT, "1,3");
  ff_dataset_free(ds);

  ds = load(DIR "ampm.csv", NULL);
  cr_assert_eq(ds->n, 3);
  near(ds->t_s[1], 2.0, EXACT, "12:00:01 AM after 11:59:59 PM");
  near(ds->t_s[2], 6.0, EXACT, "12:00:05 AM");
  ff_dataset_free(ds);
}

Test(import, blank_aligned_names_with_spaces)
{
  struct ff_dataset *ds = load(DIR "whitespace_names.txt", NULL);

  cr_assert_eq(ds->n_columns, 3);
  cr_assert_str_eq(ds->col[0].name, "Time (s)");
  cr_assert_str_eq(ds->ch[1].name, "T2 (C)");
  near(ds->ch[1].temp_c[1], 2.25, EXACT, "T2[1]");
  ff_dataset_free(ds);
}

Test(import, surplus_empty_last_column_may_be_left_out)
{
  struct ff_dataset *ds = load(DIR "trailing_separator.csv", NULL);

  cr_assert_eq(ds->n_columns, 3);
  cr_assert_eq(ds->col[2].role, FF_ROLE_IGNORE);
  cr_assert_eq(ds->n, 3);
  near(ds->ch[0].temp_c[1], 1.25, EXACT, "row without the surplus field");
  ff_dataset_free(ds);
}

Test(import, first_rows_without_a_reading_are_still_data)
{
  struct ff_dataset *ds = load(DIR "leading_missing.csv", NULL);

  cr_assert_eq(ds->dialect.header_line, 2);
  cr_assert_eq(ds->dialect.first_data_line, 3);
  cr_assert_str_eq(ds->col[0].name, "time");
  cr_assert_eq(ds->stats.rows_read, 4);
  cr_assert_eq(ds->stats.rows_all_missing, 2);
  cr_assert_eq(ds->n, 2);
  near(ds->t0_s, 2.0, EXACT, "first kept time");
  near(ds->ch[0].temp_c[1], 1.375, EXACT, "T[1]");
  ff_dataset_free(ds);
}

Test(import, quoted_field_over_two_lines)
{
  struct ff_dataset *ds = load(DIR "quoted_multiline.csv", NULL);

  cr_assert_eq(ds->n, 3);
  near(ds->t_s[2], 2.0, EXACT, "t[2]");
  near(ds->ch[0].temp_c[2], 1.0, EXACT, "T[2]");
  ff_dataset_free(ds);
}

Test(import, options_override_unit_time_column_dialect)
{
  struct ff_import_opts o = FF_IMPORT_OPTS_DEFAULT;
  struct ff_dataset *ds;

  o.unit = FF_UNIT_K;
  ds = load(DIR "comma_lf.csv", &o);
  cr_assert_eq(ds->ch[0].unit_in, FF_UNIT_K);
  near(ds->ch[0].temp_c[0], 21.5 - 273.15, CONV, "21.5 read as K");
  ff_dataset_free(ds);

  o = (struct ff_import_opts)FF_IMPORT_OPTS_DEFAULT;
  o.delimiter = ';';
  o.decimal = ',';
  o.time_column = "1";
  ds = load(DIR "logger_semicolon_comma.csv", &o);
  cr_assert_eq(ds->n, 121);
  near(ds->ch[0].temp_c[1], 4.592, EXACT, "T1 at 5 s");
  ff_dataset_free(ds);

  /* the second column as time: it goes backwards, rows are skipped */
  o.time_column = "t1 (\xC2\xB0" "c)";
  ds = load(DIR "logger_semicolon_comma.csv", &o);
  cr_assert_eq(ds->col[1].role, FF_ROLE_TIME);
  cr_assert_eq(ds->col[0].role, FF_ROLE_IGNORE);
  cr_assert(ds->stats.rows_time_backwards > 0);
  ff_dataset_free(ds);
}

Test(import, unknown_time_column_option_is_bad_input)
{
  struct ff_import_opts o = FF_IMPORT_OPTS_DEFAULT;
  struct ff_diag d = FF_DIAG_INIT;

  o.time_column = "Uhrzeit";
  cr_assert_null(ff_import_file(DIR "comma_lf.csv", &o, &d));
  cr_assert_eq(d.status, FF_EINPUT);
  cr_assert_eq(d.line, 1);
  cr_assert(strstr(d.msg, "'Uhrzeit'") != NULL, "%s", d.msg);
}

Test(import, missing_file_is_io_error)
{
  struct ff_diag d = FF_DIAG_INIT;

  cr_assert_null(ff_import_file(DIR "no-such-file.csv", NULL, &d));
  cr_assert_eq(d.status, FF_EIO);
}

/* Every rejected file: FF_EINPUT, exact line and column, the message. */
struct bad_case {
  const char *file;
  unsigned long line, col;
  const char *msg;          /* a part of the message */
};

static const struct bad_case bad[] = {
  { "bad_empty.csv", 1, 1, "found an empty file" },
  { "bad_header_only.csv", 2, 1,
    "expected data rows below the header on line 1, found the end of the file" },
  { "bad_no_time.csv", 1, 1, "expected a time column" },
  { "bad_no_channel.csv", 1, 2, "expected at least one temperature column" },
  { "bad_binary.csv", 4, 1, "found a NUL byte" },
  { "bad_utf16le.csv", 1, 1, "found UTF-16 (byte-order mark FF FE)" },
  { "bad_utf16_nobom.csv", 1, 1, "found UTF-16" },
  { "bad_truncated.csv", 4, 3, "expected 3 fields, found 2: the last row is cut short" },
  { "bad_ragged.csv", 5, 3, "expected 3 fields as in the rows above, found 2" },
  { "bad_ragged_long.csv", 4, 4, "expected 3 fields as in the rows above, found 4" },
  { "bad_cell.csv", 4, 2, "expected a number in column 'T (C)', found '21..4'" },
  { "bad_after_multiline.csv", 6, 2, "expected a number in column 'T (C)', found 'x1'" },
  { "bad_time.csv", 4, 1, "expected a number (time) in column 'time (s)', found 'abc'" },
};

Test(import, bad_files_give_line_and_column)
{
  for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
    char path[256];
    struct ff_diag d = FF_DIAG_INIT;
    struct ff_dataset *ds;

    snprintf(path, sizeof path, DIR "%s", bad[i].file);
    ds = ff_import_file(path, NULL, &d);
    cr_expect_null(ds, "%s was accepted", bad[i].file);
    ff_dataset_free(ds);
    cr_expect_eq(d.status, FF_EINPUT, "%s: status %d", bad[i].file, d.status);
    cr_expect_str_eq(d.path, path);
    cr_expect_eq(d.line, bad[i].line, "%s: line %lu, want %lu (%s)",
                 bad[i].file, d.line, bad[i].line, d.msg);
    cr_expect_eq(d.col, bad[i].col, "%s: column %lu, want %lu (%s)",
                 bad[i].file, d.col, bad[i].col, d.msg);
    cr_expect(strstr(d.msg, bad[i].msg) != NULL, "%s: message '%s'",
              bad[i].file, d.msg);
    cr_expect(d.msg[strlen(d.msg) - 1] != '.', "%s: final period", bad[i].file);
  }
}

static void temp_path(char *buf, size_t n, const char *what)
{
  snprintf(buf, n, "/tmp/ff-import-%ld-%s", (long)getpid(), what);
}

Test(import, absurdly_long_line_is_rejected)
{
  char path[128];
  struct ff_diag d = FF_DIAG_INIT;
  FILE *f;

  temp_path(path, sizeof path, "long.csv");
  f = fopen(path, "w");
  cr_assert_not_null(f);
  fprintf(f, "time (s),T (C)\n0,1.5\n1,");
  for (size_t i = 0; i < (size_t)1200 * 1024; i++)
    fputc('7', f);
  fprintf(f, "\n2,1.25\n");
  fclose(f);
  cr_assert_null(ff_import_file(path, NULL, &d));
  remove(path);
  cr_assert_eq(d.status, FF_EINPUT);
  cr_assert_eq(d.line, 3);
  cr_assert_eq(d.col, 2);
  cr_assert(strstr(d.msg, "shorter than") != NULL, "%s", d.msg);
}

/* Many rows: chunk boundaries fall inside lines and inside CRLF pairs; the
 * line of a bad cell far down must still be exact. */
Test(import, streams_many_rows_with_exact_lines)
{
  char path[128];
  struct ff_diag d = FF_DIAG_INIT;
  struct ff_dataset *ds;
  FILE *f;
  const size_t rows = 60000;

  temp_path(path, sizeof path, "many.csv");
  f = fopen(path, "w");
  cr_assert_not_null(f);
  fprintf(f, "# comment\r\ntime (s);T1 (C);T2 (C)\r\n");
  for (size_t i = 0; i < rows; i++)
    fprintf(f, "%zu;%zu,%02zu;-%zu,5\r\n", i, i % 50, i % 100, i % 7);
  fclose(f);
  ds = ff_import_file(path, NULL, &d);
  cr_assert_not_null(ds, "%s:%lu:%lu: %s", d.path, d.line, d.col, d.msg);
  cr_assert_eq(ds->n, rows);
  near(ds->t_s[rows - 1], (double)(rows - 1), EXACT, "last t");
  near(ds->ch[0].temp_c[12345], 45.45, EXACT, "T1 row 12345");
  near(ds->ch[1].temp_c[12345], -4.5, EXACT, "T2 row 12345");
  ff_dataset_free(ds);

  /* the same with one bad cell on physical line 45001 (row 44999) */
  f = fopen(path, "w");
  cr_assert_not_null(f);
  fprintf(f, "# comment\r\ntime (s);T1 (C);T2 (C)\r\n");
  for (size_t i = 0; i < rows; i++)
    if (i == 44998)
      fprintf(f, "%zu;1,0;x\r\n", i);
    else
      fprintf(f, "%zu;%zu,%02zu;-%zu,5\r\n", i, i % 50, i % 100, i % 7);
  fclose(f);
  ds = ff_import_file(path, NULL, &d);
  remove(path);
  cr_assert_null(ds);
  cr_assert_eq(d.status, FF_EINPUT);
  cr_assert_eq(d.line, 45001, "line %lu: %s", d.line, d.msg);
  cr_assert_eq(d.col, 3);
}

Test(import, number_parser_matches_strtod)
{
  /* The C locale is in force in the test process, so strtod is the
   * reference: every string must give the same double, bit for bit. */
  static const char *const ok[] = {
    "0", "-0", "21.5", "-2.472", "+.5", "5.", "1e3", "1.5E-3", "273.15",
    "0.1", "0.30000000000000004", "123456789012345678901234", "1e-300",
    "9007199254740993", "4.9406564584124654e-324", "  7.25 "
  };
  static const char *const bad_num[] = {
    "", "-", ".", "21..4", "1.2.3", "1,5", "e5", "1e", "abc", "0x10",
    "1 2", "inf", "nan", "1e999"
  };
  double x, y;

  for (size_t i = 0; i < sizeof ok / sizeof ok[0]; i++) {
    cr_assert_eq(ff_import_parse_number(ok[i], strlen(ok[i]), '.', &x), 0,
                 "'%s'", ok[i]);
    y = strtod(ok[i], NULL);
    cr_expect(memcmp(&x, &y, sizeof x) == 0, "'%s': %.17g vs strtod %.17g",
              ok[i], x, y);
  }
  for (size_t i = 0; i < sizeof bad_num / sizeof bad_num[0]; i++)
    cr_expect_neq(ff_import_parse_number(bad_num[i], strlen(bad_num[i]), '.',
                                         &x), 0, "'%s' accepted", bad_num[i]);
  cr_assert_eq(ff_import_parse_number("-0,375", 6, ',', &x), 0);
  cr_expect(fabs(x + 0.375) <= 0.0, "-0,375 gave %.17g", x);
  cr_expect_neq(ff_import_parse_number("0.375", 5, ',', &x), 0,
                "a point in a decimal-comma file is not a number");

  /* random decimals with 1 to 17 digits */
  srand(2385);
  for (int k = 0; k < 20000; k++) {
    char s[40];
    int n = snprintf(s, sizeof s, "%s%d.%0*d", rand() % 2 ? "-" : "",
                     rand() % 100000, 1 + rand() % 9, rand() % 100000000);
    cr_assert_eq(ff_import_parse_number(s, (size_t)n, '.', &x), 0, "%s", s);
    y = strtod(s, NULL);
    cr_assert(memcmp(&x, &y, sizeof x) == 0, "'%s': %.17g vs %.17g", s, x, y);
  }
}

Test(import, missing_markers_and_sentinels)
{
  static const char *const miss[] = { "", "  ", "NaN", "nan", "N/A", "---",
                                      "-", "OL", "-OL", "ERR", "Error", "####",
                                      "inf", "-Inf", "null" };
  static const char *const not_miss[] = { "0", "OLD", "21.5", "x", "-1" };

  for (size_t i = 0; i < sizeof miss / sizeof miss[0]; i++)
    cr_expect(ff_import_is_missing_text(miss[i], strlen(miss[i])), "'%s'",
              miss[i]);
  for (size_t i = 0; i < sizeof not_miss / sizeof not_miss[0]; i++)
    cr_expect(!ff_import_is_missing_text(not_miss[i], strlen(not_miss[i])),
              "'%s'", not_miss[i]);
  cr_expect(ff_import_is_sentinel(-999.0, NULL, 0));
  cr_expect(ff_import_is_sentinel(-9999.0, NULL, 0));
  cr_expect(ff_import_is_sentinel(9999.0, NULL, 0));
  cr_expect(ff_import_is_sentinel(99999.0, NULL, 0));
  cr_expect(!ff_import_is_sentinel(-99.9, NULL, 0));
}

Test(import, header_units_and_time_words)
{
  static const struct {
    const char *h;
    enum ff_temp_unit u;
    enum ff_time_format t;
    int time_word;
  } cases[] = {
    { "T (C)", FF_UNIT_C, FF_TIME_NONE, 0 },
    { "temp [K]", FF_UNIT_K, FF_TIME_NONE, 0 },
    { "degF", FF_UNIT_F, FF_TIME_NONE, 0 },
    { "Temp1 (\xC2\xB0" "F)", FF_UNIT_F, FF_TIME_NONE, 0 },
    { "T (\xB0" "C)", FF_UNIT_C, FF_TIME_NONE, 0 },
    { "Temperature deg C", FF_UNIT_C, FF_TIME_NONE, 0 },
    { "time (min)", FF_UNIT_UNKNOWN, FF_TIME_MINUTES, 1 },
    { "t [s]", FF_UNIT_UNKNOWN, FF_TIME_SECONDS, 0 },
    { "Time/h", FF_UNIT_UNKNOWN, FF_TIME_HOURS, 1 },
    { "Zeit (s)", FF_UNIT_UNKNOWN, FF_TIME_SECONDS, 1 },
    { "t", FF_UNIT_UNKNOWN, FF_TIME_NONE, 1 },
    { "T", FF_UNIT_UNKNOWN, FF_TIME_NONE, 0 },
  };
  struct ff_header_info h;

  for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
    ff_import_header_info(cases[i].h, &h);
    cr_expect_eq(h.unit, cases[i].u, "'%s' unit %d", cases[i].h, h.unit);
    cr_expect_eq(h.time_unit, cases[i].t, "'%s' time unit %d", cases[i].h,
                 h.time_unit);
    cr_expect_eq(h.time_word, cases[i].time_word, "'%s' time word",
                 cases[i].h);
  }
  ff_import_header_info("RH (%)", &h);
  cr_expect_not_null(h.not_temp);
  ff_import_header_info("Probe A", &h);
  cr_expect_null(h.not_temp, "a lone 'A' outside brackets is a name");
  ff_import_header_info("U (V)", &h);
  cr_expect_not_null(h.not_temp);
}

/* glibc keeps the LOCPATH list for the life of the process (one small
 * block that LeakSanitizer reports); it is not the importer's. Used only
 * when the tests are built with -fsanitize=address. */
const char *__lsan_default_suppressions(void);
const char *__lsan_default_suppressions(void)
{
  return "leak:__argz_add_sep\n";
}

/*
 * A decimal-comma locale for this thread: de_DE.UTF-8 when installed, else
 * compiled with localedef into a temporary folder (LOCPATH). NULL when
 * neither works.
 */
static locale_t comma_locale(char *dir, size_t n)
{
  locale_t l = newlocale(LC_ALL_MASK, "de_DE.UTF-8", (locale_t)0);
  char cmd[512];

  dir[0] = '\0';
  if (l != (locale_t)0)
    return l;
  snprintf(dir, n, "/tmp/ff-locale-XXXXXX");
  if (mkdtemp(dir) == NULL)
    return (locale_t)0;
  snprintf(cmd, sizeof cmd,
           "localedef -i de_DE -f UTF-8 %s/de_DE.UTF-8 >/dev/null 2>&1", dir);
  if (system(cmd) == -1)
    return (locale_t)0;
  setenv("LOCPATH", dir, 1);
  return newlocale(LC_ALL_MASK, "de_DE.UTF-8", (locale_t)0);
}

static void same_dataset(const struct ff_dataset *a, const struct ff_dataset *b)
{
  cr_assert_eq(a->n, b->n);
  cr_assert_eq(a->n_channels, b->n_channels);
  cr_assert(memcmp(a->t_s, b->t_s, a->n * sizeof *a->t_s) == 0, "times differ");
  for (size_t k = 0; k < a->n_channels; k++)
    for (size_t i = 0; i < a->n; i++) {
      double x = a->ch[k].temp_c[i], y = b->ch[k].temp_c[i];
      cr_assert(memcmp(&x, &y, sizeof x) == 0, "channel %zu row %zu: %.17g vs "
                "%.17g", k + 1, i, x, y);
    }
}

Test(import, decimal_comma_locale_changes_nothing)
{
  static const char *const files[] = { DIR "logger_semicolon_comma.csv",
                                       DIR "comma_lf.csv",
                                       DIR "tab_crlf_bom_kelvin.tsv",
                                       DIR "clock_midnight.csv" };
  struct ff_dataset *ref[4];
  char dir[64], cmd[128];
  locale_t l;
  double probe;

  for (size_t i = 0; i < 4; i++)
    ref[i] = load(files[i], NULL);
  l = comma_locale(dir, sizeof dir);
  if (l == (locale_t)0) {
    for (size_t i = 0; i < 4; i++)
      ff_dataset_free(ref[i]);
    cr_skip_test("no decimal-comma locale: de_DE.UTF-8 is not installed and "
                 "localedef could not build it");
  }
  uselocale(l);
  /* the locale really has a decimal comma: strtod stops at the point */
  probe = strtod("1.5", NULL);
  cr_assert(strcmp(localeconv()->decimal_point, ",") == 0 && probe < 1.25,
            "the test locale does not use a decimal comma");
  for (size_t i = 0; i < 4; i++) {
    struct ff_dataset *ds = load(files[i], NULL);
    same_dataset(ref[i], ds);
    ff_dataset_free(ds);
    ff_dataset_free(ref[i]);
  }
  uselocale(LC_GLOBAL_LOCALE);
  freelocale(l);
  if (dir[0] != '\0') {
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", dir);
    cr_expect_eq(system(cmd), 0);
  }
}
