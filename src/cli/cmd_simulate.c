/* cli/cmd_simulate.c - 'frostfit simulate'. Placeholder until its stage lands. */
#include "cli.h"

int ff_cmd_simulate(int argc, char **argv)
{
  (void)argc;
  (void)argv;
  ff_cli_msg("simulate: not built yet");
  return FF_EUNTRUSTED;
}
