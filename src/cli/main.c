/* cli/main.c - frostfit's entry point: dispatches to one command. */
#include <errno.h>
#include <limits.h>
#include <locale.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <gsl/gsl_errno.h>

#include "cli.h"
#include "frostfit/version.h"

struct command {
  const char *name;
  int (*run)(int argc, char **argv);
  const char *summary;
};

static const struct command commands[] = {
  { "inspect", ff_cmd_inspect,
    "show what the importer understands of a logger CSV" },
  { "point", ff_cmd_point,
    "freezing point of every freeze event, with uncertainty and flags" },
  { "series", ff_cmd_series,
    "a whole experiment from a run sheet: i, osmolality, fits, molar mass" },
  { "mass", ff_cmd_mass,
    "molar mass of an unknown from one measurement, with uncertainty" },
  { "solvents", ff_cmd_solvents,
    "solvent constants with their sources and cautions" },
  { "simulate", ff_cmd_simulate,
    "a synthetic cooling curve from a physical model" },
};
#define N_COMMANDS (sizeof commands / sizeof commands[0])

static void print_help(FILE *f)
{
  fprintf(f, "usage: frostfit COMMAND [OPTIONS] [FILE]\n\n"
             "Freezing points from cooling curves, and what follows from "
             "them.\n\ncommands:\n");
  for (size_t i = 0; i < N_COMMANDS; i++)
    fprintf(f, "  %-10s %s\n", commands[i].name, commands[i].summary);
  fprintf(f, "\n'frostfit COMMAND --help' shows a command's options.\n"
             "Every command takes --json for machine-readable output.\n\n"
             "exit codes:\n"
             "  0  ok\n"
             "  1  usage error\n"
             "  2  bad input data (reported as file:line:column)\n"
             "  3  the data do not support a trustworthy result (said why)\n"
             "  4  i/o or system error\n");
}

int ff_cli_fail(const struct ff_diag *d)
{
  char buf[1200];

  fprintf(stderr, "frostfit: %s\n", ff_diag_format(d, buf, sizeof buf));
  return d->status == FF_OK ? FF_EIO : (int)d->status;
}

void ff_cli_msg(const char *fmt, ...)
{
  va_list ap;

  fputs("frostfit: ", stderr);
  va_start(ap, fmt);
  vfprintf(stderr, fmt, ap);
  va_end(ap);
  fputc('\n', stderr);
}

int ff_cli_usage(const char *cmd, const char *fmt, ...)
{
  va_list ap;

  fputs("frostfit: ", stderr);
  if (cmd != NULL)
    fprintf(stderr, "%s: ", cmd);
  va_start(ap, fmt);
  vfprintf(stderr, fmt, ap);
  va_end(ap);
  fprintf(stderr, "\ntry 'frostfit %s%s--help'\n", cmd ? cmd : "",
          cmd ? " " : "");
  return FF_EUSAGE;
}

int ff_cli_number(const char *cmd, const char *opt, const char *s, double *out)
{
  char *end;
  double x;

  errno = 0;
  x = strtod(s, &end);
  if (end == s || *end != '\0' || errno == ERANGE || !isfinite(x)) {
    ff_cli_usage(cmd, "%s expects a number, found '%s'", opt, s);
    return -1;
  }
  *out = x;
  return 0;
}

int ff_cli_finish(int status)
{
  if (fflush(stdout) != 0 || ferror(stdout)) {
    ff_cli_msg("cannot write the output: %s", strerror(errno));
    return FF_EIO;
  }
  return status;
}

/*
 * Data files are found, in order: $FROSTFIT_DATADIR; datasets/ beside the
 * binary or one or two levels up (a build tree); ../share/frostfit/datasets
 * from the binary (an installed tree, wherever DESTDIR put it); the share
 * folder compiled in.
 */
const char *ff_cli_datadir(void)
{
  static char dir[PATH_MAX];
  static const char *const rel[] = { "/datasets", "/../datasets",
                                     "/../../datasets",
                                     "/../share/frostfit/datasets" };
  const char *env = getenv("FROSTFIT_DATADIR");
  char exe[PATH_MAX];
  ssize_t n;

  if (env != NULL && env[0] != '\0')
    return env;
  n = readlink("/proc/self/exe", exe, sizeof exe - 1);
  if (n > 0) {
    exe[n] = '\0';
    char *slash = strrchr(exe, '/');
    if (slash != NULL) {
      *slash = '\0';
      for (size_t i = 0; i < sizeof rel / sizeof rel[0]; i++) {
        char probe[PATH_MAX + 64];
        snprintf(probe, sizeof probe, "%s%s/solvents.csv", exe, rel[i]);
        if (access(probe, R_OK) == 0) {
          snprintf(dir, sizeof dir, "%s%s", exe, rel[i]);
          return dir;
        }
      }
    }
  }
  snprintf(dir, sizeof dir, "%s/datasets", FF_SHAREDIR);
  return dir;
}

int main(int argc, char **argv)
{
  /* Numbers are read and written in the C locale whatever the user's
   * LC_NUMERIC says: a decimal-comma locale must not change a result. */
  setlocale(LC_ALL, "C");
  gsl_set_error_handler_off();

  if (argc < 2)
    return print_help(stderr), FF_EUSAGE;
  if (strcmp(argv[1], "--help") == 0 || strcmp(argv[1], "-h") == 0
      || strcmp(argv[1], "help") == 0) {
    print_help(stdout);
    return ff_cli_finish(FF_OK);
  }
  if (strcmp(argv[1], "--version") == 0) {
    printf("frostfit %s\n", FF_VERSION);
    return ff_cli_finish(FF_OK);
  }
  for (size_t i = 0; i < N_COMMANDS; i++)
    if (strcmp(argv[1], commands[i].name) == 0)
      return ff_cli_finish(commands[i].run(argc - 1, argv + 1));
  return ff_cli_usage(NULL, "unknown command '%s'", argv[1]);
}
