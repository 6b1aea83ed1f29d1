/* cmd_verify.c - the verify subcommand: check every file and block of a
 * campaign, and the campaign as a whole. */
#include "cli.h"

#include <dirent.h>   /* opendir, readdir */
#include <stdarg.h>   /* va_list */
#include <stdint.h>   /* uintptr_t */
#include <stdio.h>    /* printf */
#include <stdlib.h>   /* qsort, malloc, free */
#include <string.h>   /* strcmp, strlen */
#include <sys/stat.h> /* stat, S_ISDIR */

#include <msgcensus/trace.h>

static void usage(FILE *out)
{
    fprintf(out,
            "usage: msgcensus verify [OPTIONS] DIR|FILE...\n\n"
            "Check trace files completely: file header, every block header, "
            "checksum,\nzstd frame and record, and the footer against the "
            "blocks. A DIR is a\ncampaign: its regular files ending in .mct "
            "(the writers name them\nrank-NNNNNN.mct); it must hold exactly "
            "one file for each rank 0..size-1,\nall agreeing on the "
            "application size.\n\n"
            "Prints one line per damaged file or campaign problem and a total "
            "line.\nExit status 0 when everything is intact, 1 otherwise.\n\n"
            "Options:\n"
            "  -q, --quiet     print the problems only, no total line\n"
            "  -v, --verbose   print a line for every intact file too\n"
            "  -h, --help      this help\n");
}

typedef struct totals {
    unsigned long long files_ok, files_bad, blocks, records, bytes, no_footer;
    unsigned long long campaign_problems;
} totals;

/* The ranks found in one campaign directory. */
typedef struct rank_entry {
    int32_t rank, size;
    char *name;
} rank_entry;

static int cmp_names(const void *a, const void *b)
{
    return strcmp(*(char *const *)a, *(char *const *)b);
}

static int cmp_ranks(const void *a, const void *b)
{
    const rank_entry *x = a, *y = b;
    return x->rank < y->rank   ? -1
           : x->rank > y->rank ? 1
                               : strcmp(x->name, y->name);
}

/* Check one file; on success fill *hdr. @return 1 intact, 0 damaged. */
static int verify_file(const char *path, totals *t, mc_trace_header *hdr)
{
    mc_trace_check c;
    mc_errinfo err;
    mc_errinfo_clear(&err);
    const int rc = mc_trace_verify(path, &c, &err);
    if (rc) {
        mc_cli_error(&err, rc, path);
        t->files_bad++;
        return 0;
    }
    t->files_ok++;
    t->blocks += c.blocks;
    t->records += c.records;
    t->bytes += c.file_bytes;
    t->no_footer += !c.has_footer;
    *hdr = c.header;
    if (mc_cli_verbosity >= 2) {
        char b[32];
        printf("ok %s: rank %d of %d, %llu blocks, %llu records, %s%s\n", path,
               (int)c.header.app_rank, (int)c.header.app_size,
               (unsigned long long)c.blocks, (unsigned long long)c.records,
               mc_format_bytes((double)c.file_bytes, b, sizeof b),
               c.has_footer ? "" : ", no footer (the writer did not close)");
    }
    return 1;
}

#if defined(__GNUC__)
__attribute__((format(printf, 4, 5)))
#endif
static void
campaign_problem(totals *t, int code, const char *dir, const char *fmt, ...)
{
    mc_errinfo err;
    mc_errinfo_clear(&err);
    char detail[sizeof err.detail];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(detail, sizeof detail, fmt, ap);
    va_end(ap);
    mc_errinfo_set(&err, code, dir, -1, -1, "%s", detail);
    mc_cli_error(&err, code, dir);
    t->campaign_problems++;
}

/* The rank-level checks of one directory's intact files. */
static void check_campaign(const char *dir, rank_entry *e, size_t n, totals *t)
{
    if (n == 0)
        return;
    for (size_t i = 1; i < n; i++)
        if (e[i].size != e[0].size) {
            campaign_problem(t, MC_ECAMPAIGN, dir,
                             "files disagree on the application size: %s says "
                             "%d, %s says %d",
                             e[0].name, (int)e[0].size, e[i].name,
                             (int)e[i].size);
            return; /* missing ranks mean nothing without one size */
        }
    qsort(e, n, sizeof *e, cmp_ranks);
    const int32_t size = e[0].size;
    for (size_t i = 0; i < n; i++) {
        if (e[i].rank < 0 || e[i].rank >= size)
            campaign_problem(t, MC_ECAMPAIGN, dir,
                             "%s claims rank %d, outside 0..%d", e[i].name,
                             (int)e[i].rank, (int)size - 1);
        if (i > 0 && e[i].rank == e[i - 1].rank)
            campaign_problem(t, MC_EDUPRANK, dir,
                             "%s and %s both claim rank %d", e[i - 1].name,
                             e[i].name, (int)e[i].rank);
    }
    /* Missing ranks as ranges: "ranks missing of 8: 2, 5-6". */
    char list[200];
    size_t len = 0;
    long long missing = 0;
    int32_t want = 0;
    size_t i = 0;
    while (want < size) {
        while (i < n && e[i].rank < want)
            i++;
        if (i < n && e[i].rank == want) {
            want++;
            continue;
        }
        const int32_t first = want;
        int32_t last = i < n && e[i].rank < size ? e[i].rank - 1 : size - 1;
        missing += (long long)last - first + 1;
        if (len < sizeof list - 40) {
            len += (size_t)snprintf(list + len, sizeof list - len, "%s%d",
                                    len ? ", " : "", (int)first);
            if (last > first)
                len += (size_t)snprintf(list + len, sizeof list - len, "-%d",
                                        (int)last);
        } else if (list[len - 1] != '.') {
            len += (size_t)snprintf(list + len, sizeof list - len, ", ...");
        }
        want = last + 1;
    }
    if (missing)
        campaign_problem(t, MC_ECAMPAIGN, dir,
                         "%lld of %d ranks have no intact trace file: %s",
                         missing, (int)size, list);
}

static void verify_dir(const char *dir, totals *t)
{
    DIR *d = opendir(dir);
    if (!d) {
        mc_errinfo err;
        mc_errinfo_clear(&err);
        mc_errinfo_set(&err, MC_EOPEN, dir, -1, -1,
                       "cannot read the directory");
        mc_cli_error(&err, MC_EOPEN, dir);
        t->campaign_problems++;
        return;
    }
    char **names = NULL;
    size_t n = 0, cap = 0;
    const struct dirent *de;
    while ((de = readdir(d))) {
        const size_t l = strlen(de->d_name);
        if (l < 5 || strcmp(de->d_name + l - 4, ".mct") != 0)
            continue;
        char *p = malloc(strlen(dir) + l + 2);
        if (!p)
            break;
        size_t dl = strlen(dir);
        while (dl > 1 && dir[dl - 1] == '/')
            dl--; /* "camp/" names files "camp/rank-000000.mct" */
        sprintf(p, "%.*s/%s", (int)dl, dir, de->d_name);
        struct stat st;
        if (stat(p, &st) != 0 || !S_ISREG(st.st_mode)) {
            free(p);
            continue;
        }
        if (n == cap) {
            cap = cap ? 2 * cap : 64;
            char **nn = realloc(names, cap * sizeof *nn);
            if (!nn) {
                free(p);
                break;
            }
            names = nn;
        }
        names[n++] = p;
    }
    closedir(d);
    if (n == 0) {
        mc_errinfo err;
        mc_errinfo_clear(&err);
        mc_errinfo_set(&err, MC_ENODATA, dir, -1, -1,
                       "no trace files (*.mct) in the directory");
        mc_cli_error(&err, MC_ENODATA, dir);
        t->campaign_problems++;
        free(names);
        return;
    }
    qsort(names, n, sizeof *names, cmp_names);
    rank_entry *ranks = malloc(n * sizeof *ranks);
    size_t nr = 0;
    for (size_t i = 0; i < n; i++) {
        mc_trace_header h;
        if (verify_file(names[i], t, &h) && ranks) {
            const char *slash = strrchr(names[i], '/');
            ranks[nr++] = (rank_entry){h.app_rank, h.app_size,
                                       (char *)(uintptr_t)(slash + 1)};
        }
    }
    if (ranks)
        check_campaign(dir, ranks, nr, t);
    free(ranks);
    for (size_t i = 0; i < n; i++)
        free(names[i]);
    free(names);
}

int mc_cmd_verify(int argc, char **argv)
{
    const char *cmd = argv[0];
    int nargs = 0;
    for (int i = 1; i < argc; i++) {
        const char *a = argv[i];
        if (!strcmp(a, "-h") || !strcmp(a, "--help")) {
            usage(stdout);
            return MC_EXIT_OK;
        } else if (!strcmp(a, "-q") || !strcmp(a, "--quiet")) {
            mc_cli_verbosity = 0;
        } else if (!strcmp(a, "-v") || !strcmp(a, "--verbose")) {
            mc_cli_verbosity = 2;
        } else if (a[0] == '-' && a[1] != '\0') {
            return mc_cli_usage_error(cmd, "unknown option '%s'", a);
        } else {
            nargs++;
        }
    }
    if (nargs == 0)
        return mc_cli_usage_error(cmd, "no directory or file to check");
    totals t = {0};
    for (int i = 1; i < argc; i++) {
        const char *a = argv[i];
        if (a[0] == '-' && a[1] != '\0')
            continue;
        struct stat st;
        mc_trace_header h;
        if (stat(a, &st) == 0 && S_ISDIR(st.st_mode))
            verify_dir(a, &t);
        else
            verify_file(a, &t, &h);
    }
    if (mc_cli_verbosity >= 1) {
        char b[32];
        printf("verify: %llu files ok, %llu damaged", t.files_ok, t.files_bad);
        if (t.campaign_problems)
            printf(", %llu campaign problems", t.campaign_problems);
        printf("; %llu blocks, %llu records, %s", t.blocks, t.records,
               mc_format_bytes((double)t.bytes, b, sizeof b));
        if (t.no_footer)
            printf("; %llu files without footer", t.no_footer);
        printf("\n");
    }
    return t.files_bad || t.campaign_problems ? MC_EXIT_FAIL : MC_EXIT_OK;
}
