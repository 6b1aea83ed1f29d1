/* cmd_share.c - placeholder until the share subcommand lands. */
#include "cli.h"

int mc_cmd_share(int argc, char **argv)
{
    (void)argc;
    return mc_cli_usage_error(argv[0], "this build has no '%s' yet", argv[0]);
}
