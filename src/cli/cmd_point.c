/* cli/cmd_point.c - 'frostfit point'. Placeholder until its stage lands. */
#include "cli.h"

int ff_cmd_point(int argc, char **argv)
{
  (void)argc;
  (void)argv;
  ff_cli_msg("point: not built yet");
  return FF_EUNTRUSTED;
}
