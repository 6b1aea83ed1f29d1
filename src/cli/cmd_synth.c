/* cmd_synth.c - the synth subcommand: write a synthetic campaign. */
#include "cli.h"

#include <stdio.h>  /* printf, fprintf */
#include <stdlib.h> /* strtoul */
#include <string.h> /* strcmp, strncmp, strchr */
#include <time.h>   /* clock_gettime */
#include <unistd.h> /* isatty */

#include <msgcensus/synth.h>

static void help(void)
{
    printf("usage: msgcensus synth -o DIR [OPTIONS]\n\n"
           "Write a synthetic campaign: one trace per rank of an invented 3-D\n"
           "halo-exchange solver (face, edge and corner halos with MPI_Isend/\n"
           "MPI_Irecv, MPI_Allreduce every step, row MPI_Alltoall transposes,\n"
           "MPI_Bcast of parameters, checkpoint MPI_Gather). The same options\n"
           "give byte-identical files. See docs/synth.md.\n\n"
           "Options:\n"
           "  -o, --output DIR      campaign directory (required)\n"
           "  --ranks P             number of ranks (default 8)\n"
           "  --steps S             solver steps (default 100)\n"
           "  --target-size SIZE    choose the steps for a campaign of about\n"
           "                        SIZE bytes uncompressed (e.g. 2GiB)\n"
           "  --seed N              seed of jitter, time stamps, skew (default "
           "1)\n"
           "  --input NAME          input deck (default deck-a):\n");
    for (size_t i = 0; i < mc_synth_deck_count(); i++) {
        const mc_synth_deck *d = mc_synth_deck_at(i);
        printf("                          %-7s %s\n", d->name, d->summary);
    }
    printf(
        "  --scaling weak|strong weak: fixed cells per rank (--local);\n"
        "                        strong: fixed global grid (--global)\n"
        "  --local N|NxNxN       cells per rank, weak scaling (default 32)\n"
        "  --global N|NxNxN      global cells, strong scaling (default 128)\n"
        "  --periodic            periodic boundaries (default: not periodic)\n"
        "  --uneven              skewed extra local work: very uneven files\n"
        "  --zstd                compress blocks with zstd\n"
        "  --block-records N     records per block (default 16384)\n"
        "  --trace-format N      write format N.0: 2 (default), or 1 for\n"
        "                        older readers\n"
        "  --no-footer           leave out the footer index, as a crash would\n"
        "  --threads N           rank files written at once (default 1, or 2\n"
        "                        with --zstd)\n"
        "  --force               write into a non-empty DIR, replacing its\n"
        "                        rank files\n"
        "  -q, --quiet           no progress or result line\n"
        "  -v, --verbose         more detail\n"
        "  -h, --help            this help\n");
}

/* "N" or "NxNxN", each 1..2^20. */
static int parse_dims(const char *s, uint32_t out[3])
{
    uint64_t v[3];
    char buf[64];
    if (strlen(s) >= sizeof buf)
        return MC_EINVAL;
    strcpy(buf, s);
    char *part = buf;
    int n = 0;
    for (;;) {
        char *x = strchr(part, 'x');
        if (x)
            *x = '\0';
        if (n == 3 || mc_parse_u64(part, &v[n]) || v[n] < 1 ||
            v[n] > (1u << 20))
            return MC_EINVAL;
        n++;
        if (!x)
            break;
        part = x + 1;
    }
    if (n == 2)
        return MC_EINVAL;
    for (int i = 0; i < 3; i++)
        out[i] = (uint32_t)(n == 1 ? v[0] : v[i]);
    return 0;
}

/* parse_dims() for option @opt, with a usage message on failure.
 * @return 0 or MC_EXIT_USAGE. */
static int dims_option(const char *cmd, const char *opt, const char *v,
                       uint32_t out[3])
{
    if (parse_dims(v, out) == 0)
        return 0;
    return mc_cli_usage_error(cmd, "%s: '%s' is not N or NxNxN (1..1048576)",
                              opt, v);
}

static double now_s(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

typedef struct progress_state {
    double t0, last;
    int tty;
    int shown;
} progress_state;

static void on_progress(void *user, uint64_t done, uint64_t total,
                        uint64_t bytes)
{
    progress_state *ps = user;
    const double t = now_s();
    /* At most once a second; the result line reports the end. */
    if (t - ps->last < 1.0 || done == total)
        return;
    ps->last = t;
    char b[32], r[32];
    const double dt = t - ps->t0 > 1e-9 ? t - ps->t0 : 1e-9;
    MC_SAY(1, "synth: %llu/%llu files, %s, %s/s%s", (unsigned long long)done,
           (unsigned long long)total,
           mc_format_bytes((double)bytes, b, sizeof b),
           mc_format_bytes((double)bytes / dt, r, sizeof r),
           ps->tty ? "\r" : "\n");
    ps->shown = 1;
}

/* Parse @v for option @opt into @out; a usage message when it is not a
 * number in lo..hi. @return 0 or MC_EXIT_USAGE. */
static int number(const char *cmd, const char *opt, const char *v, uint64_t lo,
                  uint64_t hi, uint64_t *out)
{
    if (mc_parse_u64(v, out) == 0 && *out >= lo && *out <= hi)
        return 0;
    return mc_cli_usage_error(cmd, "%s: '%s' is not a number in %llu..%llu",
                              opt, v, (unsigned long long)lo,
                              (unsigned long long)hi);
}

/* The value of option @name: "--name=V" or "--name V". Sets *missing when
 * the option is last and has no value (never clears it). */
static const char *opt_value(int argc, char **argv, int *i, const char *arg,
                             const char *name, int *missing)
{
    const size_t n = strlen(name);
    if (strncmp(arg, name, n) != 0)
        return NULL;
    if (arg[n] == '=')
        return arg + n + 1;
    if (arg[n] != '\0')
        return NULL;
    if (*i + 1 >= argc) {
        *missing = 1;
        return NULL;
    }
    return argv[++*i];
}

int mc_cmd_synth(int argc, char **argv)
{
    const char *cmd = argv[0];
    mc_synth_params p;
    mc_synth_params_init(&p);
    mc_synth_write_opts wo;
    mc_writer_opts_init(&wo.writer);
    wo.threads = 0; /* chosen after the options: see below */
    const char *dir = NULL;
    int force = 0, have_steps = 0, have_local = 0, have_global = 0;
    uint64_t target = 0;

    for (int i = 1; i < argc; i++) {
        const char *a = argv[i];
        const char *v;
        int miss = 0;
        uint64_t u;
#define VALUE(name) ((v = opt_value(argc, argv, &i, a, name, &miss)) != NULL)
#define MISSING()                                                              \
    do {                                                                       \
        if (miss)                                                              \
            return mc_cli_usage_error(cmd, "%s needs a value", a);             \
    } while (0)
#define NUMBER(lo, hi)                                                         \
    do {                                                                       \
        if (number(cmd, a, v, (lo), (hi), &u))                                 \
            return MC_EXIT_USAGE;                                              \
    } while (0)
        if (!strcmp(a, "-h") || !strcmp(a, "--help")) {
            help();
            return MC_EXIT_OK;
        } else if (!strcmp(a, "-q") || !strcmp(a, "--quiet")) {
            mc_cli_verbosity = 0;
        } else if (!strcmp(a, "-v") || !strcmp(a, "--verbose")) {
            mc_cli_verbosity = 2;
        } else if (!strcmp(a, "--force")) {
            force = 1;
        } else if (!strcmp(a, "--periodic")) {
            p.periodic = 1;
        } else if (!strcmp(a, "--uneven")) {
            p.uneven = 1;
        } else if (!strcmp(a, "--zstd")) {
            wo.writer.codec = MC_CODEC_ZSTD;
        } else if (!strcmp(a, "--no-footer")) {
            wo.writer.write_footer = 0;
        } else if (!strcmp(a, "-o")) {
            if (i + 1 >= argc)
                return mc_cli_usage_error(cmd, "-o needs a directory");
            dir = argv[++i];
        } else if (VALUE("--output")) {
            dir = v;
        } else if (VALUE("--ranks")) {
            NUMBER(1, 1000000);
            p.ranks = (int32_t)u;
        } else if (VALUE("--steps")) {
            NUMBER(1, 1ull << 40);
            p.steps = u;
            have_steps = 1;
        } else if (VALUE("--seed")) {
            NUMBER(0, UINT64_MAX);
            p.seed = u;
        } else if (VALUE("--target-size")) {
            NUMBER(1, UINT64_MAX);
            target = u;
        } else if (VALUE("--block-records")) {
            NUMBER(1, MC_BLOCK_MAX_RECORDS);
            wo.writer.block_records = (uint32_t)u;
        } else if (VALUE("--trace-format")) {
            NUMBER(MC_TRACE_OLDEST_MAJOR, MC_TRACE_VERSION_MAJOR);
            wo.writer.format_major = (unsigned)u;
        } else if (VALUE("--threads")) {
            NUMBER(1, 64);
            wo.threads = (unsigned)u;
        } else if (VALUE("--input")) {
            p.deck = mc_synth_deck_find(v);
            if (!p.deck)
                return mc_cli_usage_error(cmd,
                                          "unknown input '%s' (try "
                                          "deck-a or deck-b)",
                                          v);
        } else if (VALUE("--scaling")) {
            if (!strcmp(v, "weak"))
                p.scaling = MC_SYNTH_WEAK;
            else if (!strcmp(v, "strong"))
                p.scaling = MC_SYNTH_STRONG;
            else
                return mc_cli_usage_error(cmd,
                                          "--scaling must be weak or "
                                          "strong, not '%s'",
                                          v);
        } else if (VALUE("--local")) {
            if (dims_option(cmd, a, v, p.local))
                return MC_EXIT_USAGE;
            have_local = 1;
        } else if (VALUE("--global")) {
            if (dims_option(cmd, a, v, p.global))
                return MC_EXIT_USAGE;
            have_global = 1;
        } else {
            MISSING();
            return mc_cli_usage_error(cmd, "unknown option '%s'", a);
        }
#undef VALUE
#undef MISSING
#undef NUMBER
    }
    if (!dir)
        return mc_cli_usage_error(cmd, "an output directory (-o DIR) is "
                                       "required");
    if (have_steps && target)
        return mc_cli_usage_error(cmd, "--steps and --target-size exclude "
                                       "each other");
    if (have_local && p.scaling != MC_SYNTH_WEAK)
        return mc_cli_usage_error(cmd, "--local applies to --scaling weak");
    if (have_global && p.scaling != MC_SYNTH_STRONG)
        return mc_cli_usage_error(cmd, "--global applies to --scaling "
                                       "strong");
    /* Measured (docs/synth.md): uncompressed output is bound by the disk,
     * where two interleaved streams were slower than one; zstd is bound by
     * the CPU, where two threads help. */
    if (wo.threads == 0)
        wo.threads = wo.writer.codec == MC_CODEC_ZSTD ? 2u : 1u;
    mc_errinfo err;
    mc_errinfo_clear(&err);
    if (mc_synth_check(&p, &err))
        return mc_cli_usage_error(cmd, "%s", err.detail);

    const int footer = wo.writer.write_footer;
    char b1[32], b2[32];
    if (target) {
        mc_synth_steps_for_size(&p, target, wo.writer.block_records, footer,
                                &p.steps);
        MC_SAY(1, "synth: --target-size %s: %llu steps (%s uncompressed)\n",
               mc_format_bytes((double)target, b1, sizeof b1),
               (unsigned long long)p.steps,
               mc_format_bytes((double)mc_synth_campaign_bytes(
                                   &p, wo.writer.block_records, footer),
                               b2, sizeof b2));
    }

    uint64_t entries = 0, traces = 0;
    int rc = mc_synth_dir_scan(dir, &entries, &traces, &err);
    if (rc) {
        mc_cli_error(&err, rc, dir);
        return MC_EXIT_FAIL;
    }
    if (entries && !force) {
        mc_errinfo_set(&err, MC_EEXIST, dir, -1, -1,
                       "directory is not empty; use --force to replace its "
                       "rank files");
        mc_cli_error(&err, MC_EEXIST, dir);
        return MC_EXIT_FAIL;
    }
    if (traces)
        /* Printed even with --quiet: this destroys files. */
        fprintf(stderr,
                "msgcensus synth: caution: --force overwrites or removes "
                "%llu rank-*.mct files in %s. If that directory may hold "
                "real traces, keep a copy and follow your site's data "
                "retention policy.\n",
                (unsigned long long)traces, dir);

    progress_state ps = {now_s(), now_s(), isatty(2), 0};
    mc_synth_result res;
    rc = mc_synth_write_campaign(&p, dir, &wo, force, on_progress, &ps, &res,
                                 &err);
    if (ps.shown && ps.tty)
        MC_SAY(1, "\n");
    if (rc) {
        mc_cli_error(&err, rc, dir);
        return MC_EXIT_FAIL;
    }
    const double dt = now_s() - ps.t0;
    MC_SAY(
        1,
        "synth: wrote %llu files, %llu records, %s in %.2f s (%s/s) "
        "to %s\n",
        (unsigned long long)res.files, (unsigned long long)res.records,
        mc_format_bytes((double)res.bytes, b1, sizeof b1), dt,
        mc_format_bytes(dt > 0 ? (double)res.bytes / dt : 0.0, b2, sizeof b2),
        dir);
    return MC_EXIT_OK;
}
