/* cmd_plot.c - placeholder until the plot subcommand lands. */
#include "cli.h"

int mc_cmd_plot(int argc, char **argv)
{
    (void)argc;
    return mc_cli_usage_error(argv[0], "this build has no '%s' yet", argv[0]);
}
