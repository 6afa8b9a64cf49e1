/* cli/cmd_series.c - 'frostfit series'. Placeholder until its stage lands. */
#include "cli.h"

int ff_cmd_series(int argc, char **argv)
{
  (void)argc;
  (void)argv;
  ff_cli_msg("series: not built yet");
  return FF_EUNTRUSTED;
}
