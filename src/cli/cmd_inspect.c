/* cli/cmd_inspect.c - 'frostfit inspect': what the importer understood. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "cli.h"
#include "frostfit/import.h"
#include "frostfit/json.h"

static const char *const CMD = "inspect";

static void help(void)
{
  printf("usage: frostfit inspect FILE [OPTIONS]\n\n"
         "Shows what frostfit reads from a logger CSV: dialect, columns and\n"
         "their roles, units, channel numbers, rows kept and skipped, time\n"
         "span, sampling interval and each channel's range. FILE '-' is\n"
         "standard input.\n\n"
         "options:\n"
         "  --json               machine-readable output\n"
         "  --unit C|K|F         temperature unit of every channel (overrides\n"
         "                       the header)\n"
         "  --delimiter X        field separator: ',' ';' tab space\n"
         "  --decimal X          decimal mark: '.' or ','\n"
         "  --time-column NAME   the time column, by header name or 1-based\n"
         "                       number\n"
         "  --help               this text\n\n"
         "Channels are numbered 1, 2, ... over every temperature column left\n"
         "to right; other commands use the same numbers.\n\n"
         "exit codes: 0 ok, 1 usage error, 2 bad input (file:line:column),\n"
         "4 i/o error\n");
}

static int parse_unit(const char *s, enum ff_temp_unit *u)
{
  if (strcmp(s, "C") == 0 || strcmp(s, "c") == 0)
    *u = FF_UNIT_C;
  else if (strcmp(s, "K") == 0 || strcmp(s, "k") == 0)
    *u = FF_UNIT_K;
  else if (strcmp(s, "F") == 0 || strcmp(s, "f") == 0)
    *u = FF_UNIT_F;
  else
    return -1;
  return 0;
}

static int parse_delim(const char *s, char *c)
{
  if (strcmp(s, "tab") == 0 || strcmp(s, "\\t") == 0 || strcmp(s, "\t") == 0)
    *c = '\t';
  else if (strcmp(s, "space") == 0 || strcmp(s, " ") == 0)
    *c = ' ';
  else if (strcmp(s, "comma") == 0 || strcmp(s, ",") == 0)
    *c = ',';
  else if (strcmp(s, "semicolon") == 0 || strcmp(s, ";") == 0)
    *c = ';';
  else
    return -1;
  return 0;
}

static int parse_decimal(const char *s, char *c)
{
  if (strcmp(s, ".") == 0 || strcmp(s, "point") == 0)
    *c = '.';
  else if (strcmp(s, ",") == 0 || strcmp(s, "comma") == 0)
    *c = ',';
  else
    return -1;
  return 0;
}

static const char *delim_name(char c)
{
  switch (c) {
  case ',': return ",";
  case ';': return ";";
  case '\t': return "tab";
  case ' ': return "space";
  default: return "?";
  }
}

/* Prints s padded to width characters (UTF-8 aware: names hold °). */
static void print_padded(const char *s, int width)
{
  int chars = 0;

  for (const unsigned char *p = (const unsigned char *)s; *p; p++)
    chars += (*p & 0xC0) != 0x80;
  fputs(s, stdout);
  for (; chars < width; chars++)
    putchar(' ');
}

static void print_text(const struct ff_dataset *ds)
{
  const struct ff_dialect *dl = &ds->dialect;
  const struct ff_import_stats *st = &ds->stats;
  double dt = ff_dataset_median_dt(ds);

  printf("file: %s\n", ds->path);
  printf("dialect: delimiter '%s', decimal '%c', line ends %s%s\n",
         delim_name(dl->delimiter), dl->decimal, dl->line_end,
         dl->bom ? ", UTF-8 byte-order mark" : "");
  if (dl->header_line > 0)
    printf("header: line %lu", dl->header_line);
  else
    printf("header: none (columns named 'column N')");
  printf("; %lu metadata line%s before it; data from line %lu",
         dl->metadata_lines, dl->metadata_lines == 1 ? "" : "s",
         dl->first_data_line);
  if (dl->comment_lines > 0)
    printf("; %lu '#' line%s skipped", dl->comment_lines,
           dl->comment_lines == 1 ? "" : "s");
  printf("\n\ncolumns:\n");
  for (size_t c = 0; c < ds->n_columns; c++) {
    const struct ff_column *col = &ds->col[c];
    printf("  %3zu  ", c + 1);
    print_padded(col->name, 24);
    putchar(' ');
    switch (col->role) {
    case FF_ROLE_TIME:
      printf("time, %s\n", ff_time_format_name(col->time_format));
      break;
    case FF_ROLE_TEMP:
      printf("channel %u, %s%s\n", col->channel, ff_unit_name(col->unit),
             col->unit_assumed ? " (assumed: no unit in the header)" : "");
      break;
    default:
      printf("ignored: %s\n", col->why);
      break;
    }
  }
  printf("\nrows: %zu read, %zu kept", st->rows_read, st->rows_kept);
  if (st->rows_no_time)
    printf(", %zu without a time", st->rows_no_time);
  if (st->rows_time_duplicate)
    printf(", %zu with a repeated time (first on line %lu)",
           st->rows_time_duplicate, st->first_duplicate_line);
  if (st->rows_time_backwards)
    printf(", %zu with a time going backwards (first on line %lu)",
           st->rows_time_backwards, st->first_backwards_line);
  if (st->rows_all_missing)
    printf(", %zu with no temperature", st->rows_all_missing);
  printf("\n");
  printf("time: %.10g s span", ds->t_s[ds->n - 1]);
  if (ds->t0_iso[0] != '\0')
    printf(" from %s", ds->t0_iso);
  if (isfinite(dt))
    printf(", median interval %.10g s", dt);
  if (st->midnight_wraps > 0)
    printf(", passes midnight %zu time%s", st->midnight_wraps,
           st->midnight_wraps == 1 ? "" : "s");
  printf("\n\nchannels (values in C):\n");
  printf("  %3s  %-24s %6s %4s %10s %10s %8s\n", "#", "name", "column", "unit",
         "min", "max", "missing");
  for (size_t k = 0; k < ds->n_channels; k++) {
    const struct ff_channel *ch = &ds->ch[k];
    char lo[32] = "-", hi[32] = "-";
    if (isfinite(ch->min_c)) {
      snprintf(lo, sizeof lo, "%.4f", ch->min_c);
      snprintf(hi, sizeof hi, "%.4f", ch->max_c);
    }
    printf("  %3zu  ", k + 1);
    print_padded(ch->name, 24);
    printf(" %6u %4s %10s %10s %8zu\n", ch->column, ff_unit_name(ch->unit_in),
           lo, hi, ch->n_missing);
  }
}

/* A child attached to parent at once, so freeing root frees everything. */
static json_t *child(json_t *parent, const char *key, json_t *c, int *bad)
{
  if (c == NULL || json_object_set_new(parent, key, c) != 0)
    *bad = 1;
  return c;
}

static int set_int(json_t *o, const char *key, unsigned long long v)
{
  return json_object_set_new(o, key, json_integer((json_int_t)v));
}

/* A line number, or null when there is none. */
static int set_line(json_t *o, const char *key, unsigned long v)
{
  return json_object_set_new(o, key, v ? json_integer((json_int_t)v)
                                       : json_null());
}

static json_t *to_json(const struct ff_dataset *ds)
{
  const struct ff_dialect *dl = &ds->dialect;
  const struct ff_import_stats *st = &ds->stats;
  char dec[2] = { dl->decimal, '\0' };
  int bad = 0;
  json_t *root = json_object(), *dj, *cols, *rows, *tj, *chs;

  if (root == NULL)
    return NULL;
  bad |= ff_json_set_str(root, "file", ds->path);
  dj = child(root, "dialect", json_object(), &bad);
  cols = child(root, "columns", json_array(), &bad);
  rows = child(root, "rows", json_object(), &bad);
  tj = child(root, "time", json_object(), &bad);
  chs = child(root, "channels", json_array(), &bad);
  if (bad) {
    json_decref(root);
    return NULL;
  }
  bad |= ff_json_set_str(dj, "delimiter", dl->delimiter == '\t' ? "\t"
                         : dl->delimiter == ' ' ? " " : delim_name(dl->delimiter));
  bad |= ff_json_set_str(dj, "decimal", dec);
  bad |= ff_json_set_str(dj, "line_end", dl->line_end);
  bad |= json_object_set_new(dj, "bom", json_boolean(dl->bom));
  bad |= set_line(dj, "header_line", dl->header_line);
  bad |= set_int(dj, "first_data_line", dl->first_data_line);
  bad |= set_int(dj, "metadata_lines", dl->metadata_lines);
  bad |= set_int(dj, "comment_lines", dl->comment_lines);
  for (size_t c = 0; c < ds->n_columns; c++) {
    const struct ff_column *col = &ds->col[c];
    json_t *o = json_object();
    if (o == NULL || json_array_append_new(cols, o) != 0) {
      bad = 1;
      break;
    }
    bad |= set_int(o, "column", c + 1);
    bad |= ff_json_set_str(o, "name", col->name);
    bad |= ff_json_set_str(o, "role", ff_role_name(col->role));
    if (col->role == FF_ROLE_TIME) {
      bad |= ff_json_set_str(o, "time_format",
                             ff_time_format_name(col->time_format));
      bad |= ff_json_set_str(tj, "format",
                             ff_time_format_name(col->time_format));
      bad |= set_int(tj, "column", c + 1);
    }
    if (col->role == FF_ROLE_TEMP) {
      bad |= set_int(o, "channel", col->channel);
      bad |= ff_json_set_str(o, "unit", ff_unit_name(col->unit));
      bad |= json_object_set_new(o, "unit_assumed",
                                 json_boolean(col->unit_assumed));
    }
    if (col->role == FF_ROLE_IGNORE)
      bad |= ff_json_set_str(o, "why", col->why);
  }
  bad |= set_int(rows, "read", st->rows_read);
  bad |= set_int(rows, "kept", st->rows_kept);
  bad |= set_int(rows, "no_time", st->rows_no_time);
  bad |= set_int(rows, "duplicate_time", st->rows_time_duplicate);
  bad |= set_int(rows, "backwards_time", st->rows_time_backwards);
  bad |= set_int(rows, "all_missing", st->rows_all_missing);
  bad |= set_line(rows, "first_duplicate_line", st->first_duplicate_line);
  bad |= set_line(rows, "first_backwards_line", st->first_backwards_line);
  bad |= ff_json_set_num(tj, "start_s", ds->t0_s);
  bad |= ff_json_set_num(tj, "span_s", ds->t_s[ds->n - 1]);
  bad |= ff_json_set_num(tj, "median_interval_s", ff_dataset_median_dt(ds));
  bad |= ff_json_set_str(tj, "start_iso", ds->t0_iso[0] ? ds->t0_iso : NULL);
  bad |= set_int(tj, "midnight_wraps", st->midnight_wraps);
  for (size_t k = 0; k < ds->n_channels; k++) {
    const struct ff_channel *ch = &ds->ch[k];
    json_t *o = json_object();
    if (o == NULL || json_array_append_new(chs, o) != 0) {
      bad = 1;
      break;
    }
    bad |= set_int(o, "channel", k + 1);
    bad |= ff_json_set_str(o, "name", ch->name);
    bad |= set_int(o, "column", ch->column);
    bad |= ff_json_set_str(o, "unit_in", ff_unit_name(ch->unit_in));
    bad |= ff_json_set_num(o, "min_c", ch->min_c);
    bad |= ff_json_set_num(o, "max_c", ch->max_c);
    bad |= set_int(o, "missing", ch->n_missing);
    bad |= set_int(o, "present", ds->n - ch->n_missing);
  }
  if (bad) {
    json_decref(root);
    return NULL;
  }
  return root;
}

/* "--opt=value" or "--opt value"; returns the value or NULL. */
static const char *opt_value(const char *name, int argc, char **argv, int *i)
{
  size_t n = strlen(name);

  if (strncmp(argv[*i], name, n) != 0)
    return NULL;
  if (argv[*i][n] == '=')
    return argv[*i] + n + 1;
  if (argv[*i][n] != '\0')
    return NULL;
  if (*i + 1 >= argc)
    return "";
  return argv[++*i];
}

int ff_cmd_inspect(int argc, char **argv)
{
  struct ff_import_opts o = FF_IMPORT_OPTS_DEFAULT;
  struct ff_diag d = FF_DIAG_INIT;
  struct ff_dataset *ds;
  const char *file = NULL, *v;
  int json = 0, status = FF_OK;

  for (int i = 1; i < argc; i++) {
    const char *a = argv[i];
    if (strcmp(a, "--help") == 0 || strcmp(a, "-h") == 0) {
      help();
      return FF_OK;
    } else if (strcmp(a, "--json") == 0) {
      json = 1;
    } else if ((v = opt_value("--unit", argc, argv, &i)) != NULL) {
      if (parse_unit(v, &o.unit) != 0)
        return ff_cli_usage(CMD, "--unit expects C, K or F, found '%s'", v);
    } else if ((v = opt_value("--delimiter", argc, argv, &i)) != NULL) {
      if (parse_delim(v, &o.delimiter) != 0)
        return ff_cli_usage(CMD, "--delimiter expects ',', ';', tab or "
                            "space, found '%s'", v);
    } else if ((v = opt_value("--decimal", argc, argv, &i)) != NULL) {
      if (parse_decimal(v, &o.decimal) != 0)
        return ff_cli_usage(CMD, "--decimal expects '.' or ',', found '%s'", v);
    } else if ((v = opt_value("--time-column", argc, argv, &i)) != NULL) {
      if (v[0] == '\0')
        return ff_cli_usage(CMD, "--time-column expects a name or number");
      o.time_column = v;
    } else if (a[0] == '-' && a[1] != '\0') {
      return ff_cli_usage(CMD, "unknown option '%s'", a);
    } else if (file != NULL) {
      return ff_cli_usage(CMD, "expected one FILE, found a second: '%s'", a);
    } else {
      file = a;
    }
  }
  if (file == NULL)
    return ff_cli_usage(CMD, "expected a FILE to inspect");
  if (o.delimiter == ',' && o.decimal == ',')
    return ff_cli_usage(CMD, "a decimal comma needs a ';' or tab delimiter");
  ds = ff_import_file(file, &o, &d);
  if (ds == NULL)
    return ff_cli_fail(&d);
  if (json) {
    json_t *root = to_json(ds);
    if (root == NULL) {
      ff_cli_msg("out of memory");
      status = FF_EIO;
    } else {
      if (ff_json_write(root, stdout) != 0)
        status = FF_EIO;
      json_decref(root);
    }
  } else {
    print_text(ds);
  }
  ff_dataset_free(ds);
  return status;
}
