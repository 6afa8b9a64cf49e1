#!/bin/sh
# make-fixtures.sh - writes the importer's test files byte for byte (printf,
# so line ends, byte-order marks and Latin-1 bytes are exact). Run from this
# folder; the files are committed, this script documents how they were made.
# All values are synthetic (invented for the tests), not measurements.
set -e
export LC_ALL=C
cd "$(dirname "$0")"

# Semicolon, decimal comma, CRLF, metadata lines, two channels: a synthetic
# cooling curve of a dilute aqueous solution (sample T1) in a bath (T2):
# Newton cooling to -5 C, supercooling to -2.5 C, nucleation at 170 s,
# recalescence to -0.45 C, then a slowly falling freezing branch.
{
  printf 'Instrument;TL-4 thermometer logger (synthetic)\r\n'
  printf 'Date;2026-11-30\r\n'
  printf 'Operator;A. Student\r\n'
  printf '# synthetic demo data, not a measurement\r\n'
  printf 'Zeit (s);T1 (\302\260C);T2 (\302\260C)\r\n'
  awk 'BEGIN {
    for (t = 0; t <= 600; t += 5) {
      if (t < 170) y = -5 + 10 * exp(-t / 120);
      else if (t < 185) y = -2.5 + (t - 165) / 20 * 2.05;
      else y = -0.45 - 0.0015 * (t - 185);
      b = -5.0 + 0.05 * sin(t / 40);
      s = sprintf("%d;%.3f;%.3f", t, y, b);
      gsub(/\./, ",", s);
      printf "%s\r\n", s;
    }
  }'
} > logger_semicolon_comma.csv

# Comma, LF, quoted header cells and numbers, seconds.
printf '"time (s)","T (C)"\n0,21.5\n2.5,"20.25"\n5,19.125\n7.5,18.0625\n' \
  > comma_lf.csv

# UTF-8 BOM, tab, CRLF, kelvin.
printf '\357\273\277t [s]\ttemp [K]\r\n0\t278.15\r\n10\t276.65\r\n20\t272.986\r\n' \
  > tab_crlf_bom_kelvin.tsv

# Lone CR line ends, hours, Fahrenheit (UTF-8 degree sign).
printf 'Time/h,Temp1 (\302\260F),Temp2 (\302\260F)\r0,68.9,32\r0.25,50.18,14\r0.5,31.1,-4\r' \
  > cr_hours_fahrenheit.csv

# Latin-1 degree sign (byte 0xB0), minutes, semicolon with decimal comma, no
# final line end.
printf 'time (min);T (\260C)\n0;4,25\n0,5;2,125\n1;-0,375' \
  > latin1_minutes.csv

# mm:ss elapsed time, degF header word.
printf 'Time,Probe degF\n00:00,41.0\n00:30,35.6\n01:00,33.8\n10:30.5,30.2\n' \
  > clock_mmss.csv

# Time of day with milliseconds across midnight.
printf 'Clock,T (C)\n23:59:58.250,-1.5\n23:59:59.250,-1.6\n00:00:00.250,-1.7\n00:00:01.750,-1.8\n' \
  > clock_midnight.csv

# ISO 8601 with offsets, a humidity column to ignore.
printf 'Timestamp,T1 (C),T2 (C),RH (%%)\n2026-11-30T23:59:30+01:00,0.5,-3.25,45\n2026-11-30T22:59:45Z,0.25,-3.5,45\n2026-12-01T00:00:00+01:00,0.0,-3.75,46\n' \
  > iso_offset.csv

# No header at all: time in seconds, then channels.
printf '0,1.5,-2.25\n5,1.25,-2.5\n10,1,-2.75\n' > noheader.csv

# Missing values of every kind, plus bad time stamps.
{
  printf 'time (s),T1 (C),T2 (C),T3 (C)\n'
  printf '0,1.5,2.5,3.5\n'
  printf '1,,NaN,-999\n'
  printf '2,---,OL,ERR\n'
  printf '3,####,1.75,-9999\n'
  printf ',1.0,1.0,1.0\n'
  printf '4,9999,99999,-100\n'
  printf '4,1.0,1.0,1.0\n'
  printf '3.5,1.0,1.0,1.0\n'
  printf '5,-1.25,n/a,3.25\n'
} > missing.csv

# Blank-aligned columns.
printf '  time    T1      T2\n     0   5.125  -1.000\n    10   4.500  -1.250\n    20   3.875  -1.500\n' \
  > whitespace.txt

# Column roles: id, time, two temperatures, other quantities, text, a
# numeric column without a unit (assumed C), an empty column.
{
  printf 'No.;Time (s);T bath (\302\260C);Pressure (hPa);T sample (\302\260C);Voltage (V);Status;Probe 3;Spare\n'
  printf '1;0;-5,5;1013;2,25;3,3;ok;1,5;\n'
  printf '2;10;-5,5;1013;2,0;3,3;ok;1,25;\n'
  printf '3;20;-5,625;1012;1,75;3,3;ok;1,0;\n'
} > roles.csv

# A quoted note that spans two physical lines; line counting must see it.
printf 'time (s),T (C),note\n0,1.5,"start"\n1,1.25,"a note\nover two lines"\n2,1.0,"end, ok"\n' \
  > quoted_multiline.csv

# Names on one line, units on the next; a humidity column.
printf 'Logger X (synthetic)\nTime;T1;T2;Hum\ns;\302\260C;K;%%\n0;1,5;275,15;40\n1;1,25;275,0;41\n' \
  > units_row.csv

# Date and time of day in separate columns, across midnight.
printf 'Date,Time,T (C)\n2026-11-30,23:59:58,1.5\n2026-11-30,23:59:59,1.375\n2026-12-01,00:00:00,1.25\n' \
  > date_time_columns.csv

# European date-time, Latin-1 degree sign, 12-hour clock in a second file.
printf 'Datum;Temperatur (\260C)\n30.11.2026 23:59:58;1,5\n30.11.2026 23:59:59;1,4\n01.12.2026 00:00:03;1,3\n' \
  > dotted_dates.csv
printf 'Time,T (C)\n11:59:59 PM,1.0\n12:00:01 AM,2.0\n12:00:05 AM,3.0\n' > ampm.csv

# Blank-aligned columns whose names hold single spaces.
printf '  Time (s)   T1 (C)   T2 (C)\n  0   1.5   2.5\n  1   1.25   2.25\n' > whitespace_names.txt

# Some rows end with a surplus separator (an empty last column), some not.
printf 'time (s),T (C)\n0,1.5,\n1,1.25\n2,1.0,\n' > trailing_separator.csv

# Tab separator with decimal comma, exponent notation, a '#' line inside.
printf 'Zeit [min]\tTemp (\302\260C)\n0\t2,15E+01\n0,25\t1,875E+01\n# probe moved\n0,5\t-1,25\n' \
  > tab_decimal_comma.tsv

# The first rows have a time but no reading yet (probe settling).
printf 'Logger X (synthetic)\ntime,T\n0,---\n1,---\n2,1.5\n3,1.375\n' > leading_missing.csv

# Bad input, one problem each.
: > bad_empty.csv
printf 'time (s),T (C)\n' > bad_header_only.csv
printf 'Sample,T1 (C),T2 (C)\nA,1.5,2.5\nB,1.25,2.25\n' > bad_no_time.csv
printf 'time (s),RH (%%),pressure (hPa)\n0,45,1013\n1,45,1013\n' > bad_no_channel.csv
printf 'time (s),T (C)\n0,1.5\n1,1.25\n2,\000\001\002\n' > bad_binary.csv
printf '\377\376t\000,\000T\000\n\0000\000,\0001\000\n\000' > bad_utf16le.csv
printf 't\000,\000T\000\n\0000\000,\0001\000\n\0001\000,\0002\000\n\000' > bad_utf16_nobom.csv
printf 'time (s),T1 (C),T2 (C)\n0,1.5,2.5\n5,1.4,2.4\n10,1.3' > bad_truncated.csv
printf 'time (s),T1 (C),T2 (C)\n0,1.5,2.5\n5,1.4,2.4\n10,1.3,2.3\n15,1.2\n20,1.1,2.1\n' > bad_ragged.csv
printf 'time (s),T1 (C),T2 (C)\n0,1.5,2.5\n5,1.4,2.4\n10,1.3,2.3,9.9\n' > bad_ragged_long.csv
printf 'time (s),T (C)\n0,21.5\n1,21.45\n2,21..4\n3,21.35\n' > bad_cell.csv
printf 'time (s),T (C),note\n0,1.5,"a\nb"\n1,1.25,"c\r\nd"\n2,x1,ok\n' > bad_after_multiline.csv
printf 'time (s);T (C)\r\n0;1,5\r\n1;1,25\r\nabc;1,0\r\n' > bad_time.csv
