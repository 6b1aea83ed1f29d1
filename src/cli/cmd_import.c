/* cmd_import.c - placeholder until the import subcommand lands. */
#include "cli.h"

int mc_cmd_import(int argc, char **argv)
{
    (void)argc;
    return mc_cli_usage_error(argv[0], "this build has no '%s' yet", argv[0]);
}
