/* cli/files.c - what the commands share about the files they write. */
#include <limits.h>
#include <stdio.h>
#include <string.h>
#include <strings.h>
#include <sys/stat.h>

#include "cli.h"

int ff_cli_figure_would_replace(const char *fig_dir, const char *input,
                                int series_names)
{
  static const char *const stems[] = { "run_", "solute_", "unknown_",
                                       "overview", "render" };
  static const char *const exts[] = { ".gp", ".dat", ".png", ".svg", ".pdf" };
  struct stat fig, in;
  char dir[PATH_MAX];
  const char *base, *dot;
  int stem = !series_names, ext = 0;

  if (input == NULL || stat(fig_dir, &fig) != 0)
    return 0;                  /* a new folder holds no input */
  base = strrchr(input, '/');
  if (base == NULL) {
    strcpy(dir, ".");
    base = input;
  } else {
    snprintf(dir, sizeof dir, "%.*s", (int)(base - input + 1), input);
    base++;
  }
  if (stat(dir, &in) != 0 || in.st_dev != fig.st_dev
      || in.st_ino != fig.st_ino)
    return 0;
  dot = strrchr(base, '.');
  for (size_t j = 0; series_names && j < sizeof stems / sizeof stems[0]; j++)
    stem |= strncasecmp(base, stems[j], strlen(stems[j])) == 0;
  for (size_t j = 0; dot != NULL && j < sizeof exts / sizeof exts[0]; j++)
    ext |= strcasecmp(dot, exts[j]) == 0;
  return stem && ext;
}
