/* main.c - the msgcensus command: dispatch to a subcommand. */
#include "cli.h"

#include <errno.h>  /* errno */
#include <stdarg.h> /* va_list */
#include <stdio.h>  /* printf, fprintf */
#include <string.h> /* strcmp */

#include <msgcensus/common.h>

int mc_cli_verbosity = 1;

typedef struct mc_command {
    const char *name;
    mc_cmd_fn fn;
    const char *help;
} mc_command;

static const mc_command commands[] = {
#define MC_COMMAND(name, fn, help) {name, fn, help},
#include "commands.def"
#undef MC_COMMAND
};

static void usage(FILE *out)
{
    fprintf(out, "usage: msgcensus COMMAND [OPTIONS] [ARGS]\n\n"
                 "Exact census of MPI message sizes: record, reduce, study.\n\n"
                 "Commands:\n");
    for (size_t i = 0; i < sizeof commands / sizeof commands[0]; i++)
        fprintf(out, "  %-10s %s\n", commands[i].name, commands[i].help);
    fprintf(out, "\nRun 'msgcensus COMMAND --help' for the options of one "
                 "command.\n'msgcensus --version' prints the version.\n");
}

void mc_cli_error(const mc_errinfo *info, int code, const char *fallback_path)
{
    char line[4096];
    mc_errinfo tmp;
    if (!info || info->code == 0) {
        mc_errinfo_clear(&tmp);
        tmp.code = code;
        info = &tmp;
    }
    if (!info->path[0] && fallback_path) {
        tmp = *info;
        snprintf(tmp.path, sizeof tmp.path, "%s", fallback_path);
        info = &tmp;
    }
    mc_errinfo_format(info, line, sizeof line);
    fprintf(stderr, "msgcensus: %s\n", line);
}

int mc_cli_usage_error(const char *cmd, const char *fmt, ...)
{
    va_list ap;
    fprintf(stderr, "msgcensus %s: ", cmd);
    va_start(ap, fmt);
    vfprintf(stderr, fmt, ap);
    va_end(ap);
    fprintf(stderr, "\nTry 'msgcensus %s --help'.\n", cmd);
    return MC_EXIT_USAGE;
}

int main(int argc, char **argv)
{
    if (argc < 2) {
        usage(stderr);
        return MC_EXIT_USAGE;
    }
    if (!strcmp(argv[1], "--help") || !strcmp(argv[1], "-h") ||
        !strcmp(argv[1], "help")) {
        usage(stdout);
        return MC_EXIT_OK;
    }
    if (!strcmp(argv[1], "--version")) {
        printf("msgcensus %s\n", mc_version());
        return MC_EXIT_OK;
    }
    for (size_t i = 0; i < sizeof commands / sizeof commands[0]; i++)
        if (!strcmp(argv[1], commands[i].name))
            return commands[i].fn(argc - 1, argv + 1);
    fprintf(stderr, "msgcensus: unknown command '%s'\n", argv[1]);
    usage(stderr);
    return MC_EXIT_USAGE;
}
