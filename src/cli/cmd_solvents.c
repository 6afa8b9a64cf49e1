/* cli/cmd_solvents.c - 'frostfit solvents'. Placeholder until its stage lands. */
#include "cli.h"

int ff_cmd_solvents(int argc, char **argv)
{
  (void)argc;
  (void)argv;
  ff_cli_msg("solvents: not built yet");
  return FF_EUNTRUSTED;
}
