/* cli/cmd_inspect.c - 'frostfit inspect'. Placeholder until its stage lands. */
#include "cli.h"

int ff_cmd_inspect(int argc, char **argv)
{
  (void)argc;
  (void)argv;
  ff_cli_msg("inspect: not built yet");
  return FF_EUNTRUSTED;
}
