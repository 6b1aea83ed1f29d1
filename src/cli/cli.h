/* cli.h - what the subcommands of the msgcensus command share. */
#ifndef MSGCENSUS_CLI_H
#define MSGCENSUS_CLI_H

#include <stdint.h> /* uint64_t */
#include <stdio.h>  /* FILE, fprintf */

#include <msgcensus/error.h>

/* Exit statuses of every subcommand. */
enum {
    MC_EXIT_OK = 0,
    MC_EXIT_FAIL = 1, /* the work failed (damage, I/O, ...) */
    MC_EXIT_USAGE = 2 /* bad command line */
};

/* One verbosity setting for the whole command: 0 quiet, 1 normal, 2 verbose.
 * Read everywhere through MC_SAY. */
extern int mc_cli_verbosity;
#define MC_SAY(level, ...)                                                     \
    do {                                                                       \
        if (mc_cli_verbosity >= (level))                                       \
            fprintf(stderr, __VA_ARGS__);                                      \
    } while (0)

/* A subcommand: argv[0] is the subcommand's name. Returns an exit status. */
typedef int (*mc_cmd_fn)(int argc, char **argv);

#define MC_COMMAND(name, fn, help) int fn(int argc, char **argv);
#include "commands.def"
#undef MC_COMMAND

/*! mc_cli_error() : print "msgcensus: <formatted errinfo>" on stderr. When
 *  @info carries no path, @fallback_path (may be NULL) is used. */
void mc_cli_error(const mc_errinfo *info, int code, const char *fallback_path);

/*! mc_cli_usage_error() : print "msgcensus CMD: message" and a hint to run
 *  --help; @return MC_EXIT_USAGE. */
int mc_cli_usage_error(const char *cmd, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 2, 3)))
#endif
    ;

struct mc_summary;

/*! mc_cli_read_summaries() : read the @n summaries named in @files. On the
 *  first failure prints its one-line message, frees what was read and
 *  returns NULL; otherwise an array for mc_cli_free_summaries(). */
struct mc_summary **mc_cli_read_summaries(const char *const *files, size_t n);

/*! mc_cli_free_summaries() : free the array and every summary; NULL ok. */
void mc_cli_free_summaries(struct mc_summary **runs, size_t n);

/*! mc_parse_u64() : a decimal number with an optional unit suffix: K, M, G, T
 *  (powers of 1000) or KiB, MiB, GiB, TiB (powers of 1024); "k" is accepted
 *  for K. Overflow and trailing junk are errors.
 *  @return 0 or MC_ERANGE / MC_EINVAL. */
int mc_parse_u64(const char *s, uint64_t *out);

/*! mc_format_bytes() : "1.5 MiB" style, into @buf of @cap bytes. */
const char *mc_format_bytes(double bytes, char *buf, size_t cap);

#endif /* MSGCENSUS_CLI_H */
