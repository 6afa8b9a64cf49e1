/* cli/cmd_mass.c - 'frostfit mass'. Placeholder until its stage lands. */
#include "cli.h"

int ff_cmd_mass(int argc, char **argv)
{
  (void)argc;
  (void)argv;
  ff_cli_msg("mass: not built yet");
  return FF_EUNTRUSTED;
}
