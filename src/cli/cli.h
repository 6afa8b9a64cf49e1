/* cli/cli.h - what the command files share; only the CLI prints or exits. */
#ifndef FF_CLI_H
#define FF_CLI_H

#include <stddef.h>
#include <stdio.h>
#include "frostfit/diag.h"

/* Every command: argv[0] is the command name; returns the exit status. */
int ff_cmd_inspect(int argc, char **argv);
int ff_cmd_point(int argc, char **argv);
int ff_cmd_series(int argc, char **argv);
int ff_cmd_mass(int argc, char **argv);
int ff_cmd_solvents(int argc, char **argv);
int ff_cmd_simulate(int argc, char **argv);

/* Prints "frostfit: <diag>" on stderr and returns d->status. */
int ff_cli_fail(const struct ff_diag *d);

/* Prints "frostfit: <msg>" on stderr (printf style). */
void ff_cli_msg(const char *fmt, ...) __attribute__((format(printf, 1, 2)));

/* Prints a usage error and the hint to run --help; returns FF_EUSAGE. */
int ff_cli_usage(const char *cmd, const char *fmt, ...)
  __attribute__((format(printf, 2, 3)));

/*
 * Parses a number given on the command line (C locale, whole string).
 * Returns 0, or -1 after printing a usage error naming opt.
 */
int ff_cli_number(const char *cmd, const char *opt, const char *s, double *out);

/* Flushes stdout; returns FF_EIO (after saying so) when the write failed. */
int ff_cli_finish(int status);

/*
 * 1 when input sits in fig_dir under a name a figure file could take, so
 * writing figures there could replace it: with series_names, the names the
 * series figures use (run_*, solute_*, unknown_*, overview*, render* with
 * .gp .dat .png .svg .pdf); without, any file with those endings.
 */
int ff_cli_figure_would_replace(const char *fig_dir, const char *input,
                                int series_names);

/* A progress bar on stderr, drawn only when stderr is a terminal and not
 * quiet; ff_cli_progress_end clears it before anything else is printed. */
struct ff_cli_progress {
  const char *label;           /* e.g. the file name; borrowed */
  int on, shown;
  double last_s;
};
void ff_cli_progress_init(struct ff_cli_progress *p, const char *label,
                          int quiet);
/* Callbacks in the shape frostfit/import.h and frostfit/series.h take;
 * ctx is the struct ff_cli_progress. */
void ff_cli_progress_bytes(void *ctx, unsigned long long done,
                           unsigned long long total);
void ff_cli_progress_items(void *ctx, const char *stage, size_t done,
                           size_t total);
void ff_cli_progress_end(struct ff_cli_progress *p);

/* The folder that holds solvents.csv etc.; see DEVELOPERS.md. */
const char *ff_cli_datadir(void);

#endif /* FF_CLI_H */
