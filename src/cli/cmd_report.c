/* cmd_report.c - the report subcommand: print the populations of a summary
 * as text (80 columns), CSV (one value per row) or JSON. */
#include "cli.h"

#include <math.h>   /* isfinite */
#include <stdio.h>  /* printf */
#include <string.h> /* strcmp, strlen */

#include <msgcensus/summary.h>

#include "outfile.h" /* mc_outfile_*: no overwrite without --force */
#include "study.h"   /* mc_study_html_write */

static void usage(FILE *out)
{
    fprintf(
        out,
        "usage: msgcensus report [OPTIONS] SUMMARY.h5\n\n"
        "Print, for each population of a summary, the message count, "
        "total bytes,\nevery candidate center with its MAD and relative "
        "MAD (the best marked),\nthe quantiles, the most frequent sizes, "
        "the peaks and the mixture.\n\n"
        "Options:\n"
        "  --format F         text (default; fits 80 columns), csv or json\n"
        "  --population NAME  only this population (e.g. all, p2p, "
        "op/MPI_Isend)\n"
        "  --html FILE        write one self-contained HTML page (tables and "
        "figures)\n"
        "                     to FILE instead of printing\n"
        "  --force            replace an existing --html FILE\n"
        "  -h, --help         this help\n\n"
        "CSV has one value per row: population,section,item,field,value.\n");
}

/* ---- text ------------------------------------------------------------------
 */

/* "65536 B (64.0 KiB)", or "512 B" when below 1 KiB; non-integers keep one
 * decimal. */
static const char *size_text(double v, char *buf, size_t cap)
{
    char u[32];
    const int integral = v == (double)(uint64_t)v && v < 1e19;
    if (v < 1024.0) {
        if (integral)
            snprintf(buf, cap, "%.0f B", v);
        else
            snprintf(buf, cap, "%.1f B", v);
    } else if (integral) {
        snprintf(buf, cap, "%.0f B (%s)", v, mc_format_bytes(v, u, sizeof u));
    } else {
        snprintf(buf, cap, "%.1f B (%s)", v, mc_format_bytes(v, u, sizeof u));
    }
    return buf;
}

/* Print "label: value" keeping the line within 80 columns: a long value is
 * shortened from the left with "...". */
static void field_line(const char *label, const char *value)
{
    const size_t room = 80 - strlen(label) - 2;
    const size_t n = strlen(value);
    if (n <= room)
        printf("%s: %s\n", label, value);
    else
        printf("%s: ...%s\n", label, value + (n - (room - 3)));
}

static void text_pop(const mc_summary_pop *p)
{
    const mc_stats *st = &p->stats;
    char a[48], b[48];
    printf("\n== population %.60s ==\n", p->name);
    printf("messages %llu, distinct sizes %llu, zero-size %llu\n",
           (unsigned long long)st->count, (unsigned long long)st->distinct,
           (unsigned long long)st->zero_count);
    printf("total bytes %s\n", size_text((double)st->total_bytes, a, sizeof a));
    if (st->count == 0)
        return;
    printf("min %s, max %s\n", size_text((double)st->min, a, sizeof a),
           size_text((double)st->max, b, sizeof b));
    printf("\n%-10s %-28s %12s %9s %5s\n", "center", "value", "MAD", "rel.MAD",
           "rank");
    for (int c = 0; c < MC_NCENTERS; c++) {
        const mc_center_fit *f = &p->fitness.fit[c];
        if (!f->defined) {
            printf("%-10s %-28s\n", mc_center_name((mc_center)c), "undefined");
            continue;
        }
        char rel[16];
        if (f->rel_mad < 0)
            snprintf(rel, sizeof rel, "%s", "n/a");
        else
            snprintf(rel, sizeof rel, "%.4f", f->rel_mad);
        printf("%-10s %-28s %12.6g %9s %5d%s\n", mc_center_name((mc_center)c),
               size_text(f->value, a, sizeof a), f->mad, rel, f->rank,
               (mc_center)c == p->fitness.best ? " best" : "");
    }
    if (p->fitness.mad_ratio_mean >= 0)
        printf("MAD(mean) / MAD(best) = %.4g\n", p->fitness.mad_ratio_mean);
    else
        printf("MAD(mean) / MAD(best): n/a (the best center has MAD 0)\n");
    printf("\n%-8s %-30s %s\n", "quantile", "by messages", "by bytes");
    for (int i = 0; i < MC_NQUANTILES; i++)
        printf("%6.0f %%  %-30s %s\n", 100.0 * mc_quantile_levels[i],
               size_text(st->quantiles[i], a, sizeof a),
               size_text(st->byte_quantiles[i], b, sizeof b));
    if (p->ntop) {
        printf("\n%-30s %14s %8s %8s\n", "top sizes", "messages", "% msgs",
               "% bytes");
        for (size_t i = 0; i < p->ntop; i++)
            printf("%-30s %14llu %8.2f %8.2f\n",
                   size_text((double)p->top[i].size, a, sizeof a),
                   (unsigned long long)p->top[i].count,
                   100.0 * p->top[i].msg_share, 100.0 * p->top[i].byte_share);
    }
    if (p->npeaks) {
        printf("\n%-30s %14s %8s %8s\n", "peaks (at size)", "messages",
               "% msgs", "promin.");
        for (size_t i = 0; i < p->npeaks; i++)
            printf("%-30s %14llu %8.2f %8.4f\n",
                   size_text((double)p->peaks[i].peak_size, a, sizeof a),
                   (unsigned long long)p->peaks[i].count,
                   100.0 * p->peaks[i].msg_share, p->peaks[i].prominence);
    }
    if (p->gmm.ncomp > 0) {
        printf("\nmixture on log2(size): %d component(s), BIC %.6g\n",
               p->gmm.ncomp, p->gmm.bic);
        printf("%-30s %8s %10s %10s\n", "center", "weight", "mu", "sigma");
        for (int i = 0; i < p->gmm.ncomp; i++)
            printf("%-30s %8.4f %10.4f %10.4f\n",
                   size_text(p->gmm.center[i], a, sizeof a), p->gmm.weight[i],
                   p->gmm.mu[i], p->gmm.sigma[i]);
    }
}

static void text_head(const char *path, const mc_summary *s)
{
    const mc_summary_meta *m = &s->meta;
    char a[48], line[160];
    field_line("summary", path);
    snprintf(line, sizeof line, "%s %d.%d, written by msgcensus %s",
             m->format_name, m->version_major, m->version_minor,
             m->tool_version);
    field_line("format", line);
    field_line("campaign", m->campaign_path);
    if (m->run_label[0])
        field_line("run label", m->run_label);
    field_line("created", m->created);
    snprintf(line, sizeof line, "%lld ranks, %lld files, %s of traces",
             (long long)m->app_ranks, (long long)m->files,
             mc_format_bytes((double)m->bytes_read, a, sizeof a));
    field_line("application", line);
    snprintf(line, sizeof line, "%llu read, %llu rejected",
             (unsigned long long)m->records_read,
             (unsigned long long)m->records_rejected);
    field_line("records", line);
    if (m->approximate || m->shared_note[0])
        field_line("note", m->shared_note[0] ? m->shared_note : "approximate");
}

/* ---- CSV ---------------------------------------------------------------- */

static void csv_str(const char *s)
{
    int quote = 0;
    for (const char *q = s; *q; q++)
        quote |= *q == ',' || *q == '"' || *q == '\n';
    if (!quote) {
        fputs(s, stdout);
        return;
    }
    putchar('"');
    for (const char *q = s; *q; q++) {
        if (*q == '"')
            putchar('"');
        putchar(*q);
    }
    putchar('"');
}

static void csv_row(const char *pop, const char *sec, const char *item,
                    const char *field, const char *value)
{
    csv_str(pop);
    putchar(',');
    fputs(sec, stdout);
    putchar(',');
    csv_str(item);
    printf(",%s,%s\n", field, value);
}

static const char *fmt_u(uint64_t v, char *b, size_t cap)
{
    snprintf(b, cap, "%llu", (unsigned long long)v);
    return b;
}

static const char *fmt_d(double v, char *b, size_t cap)
{
    if (isfinite(v))
        snprintf(b, cap, "%.17g", v);
    else
        snprintf(b, cap, "%s", "");
    return b;
}

static void csv_pop(const mc_summary_pop *p)
{
    const mc_stats *st = &p->stats;
    char v[64], it[32];
    const char *n = p->name;
    csv_row(n, "count", "messages", "value", fmt_u(st->count, v, sizeof v));
    csv_row(n, "count", "total_bytes", "value",
            fmt_u(st->total_bytes, v, sizeof v));
    csv_row(n, "count", "distinct", "value", fmt_u(st->distinct, v, sizeof v));
    csv_row(n, "count", "zero_size", "value",
            fmt_u(st->zero_count, v, sizeof v));
    csv_row(n, "count", "min", "value", fmt_u(st->min, v, sizeof v));
    csv_row(n, "count", "max", "value", fmt_u(st->max, v, sizeof v));
    for (int c = 0; c < MC_NCENTERS; c++) {
        const mc_center_fit *f = &p->fitness.fit[c];
        const char *cn = mc_center_name((mc_center)c);
        csv_row(n, "center", cn, "defined", f->defined ? "1" : "0");
        csv_row(n, "center", cn, "value", fmt_d(f->value, v, sizeof v));
        csv_row(n, "center", cn, "mad", fmt_d(f->mad, v, sizeof v));
        csv_row(n, "center", cn, "rel_mad", fmt_d(f->rel_mad, v, sizeof v));
        snprintf(v, sizeof v, "%d", f->rank);
        csv_row(n, "center", cn, "rank", v);
        csv_row(n, "center", cn, "best",
                f->defined && (mc_center)c == p->fitness.best ? "1" : "0");
    }
    for (int i = 0; i < MC_NQUANTILES; i++) {
        snprintf(it, sizeof it, "%g", mc_quantile_levels[i]);
        csv_row(n, "quantile", it, "by_messages",
                fmt_d(st->quantiles[i], v, sizeof v));
        csv_row(n, "quantile", it, "by_bytes",
                fmt_d(st->byte_quantiles[i], v, sizeof v));
    }
    for (size_t i = 0; i < p->ntop; i++) {
        snprintf(it, sizeof it, "%zu", i + 1);
        csv_row(n, "top", it, "size", fmt_u(p->top[i].size, v, sizeof v));
        csv_row(n, "top", it, "count", fmt_u(p->top[i].count, v, sizeof v));
        csv_row(n, "top", it, "msg_share",
                fmt_d(p->top[i].msg_share, v, sizeof v));
        csv_row(n, "top", it, "byte_share",
                fmt_d(p->top[i].byte_share, v, sizeof v));
    }
    for (size_t i = 0; i < p->npeaks; i++) {
        snprintf(it, sizeof it, "%zu", i + 1);
        csv_row(n, "peak", it, "size",
                fmt_u(p->peaks[i].peak_size, v, sizeof v));
        csv_row(n, "peak", it, "count", fmt_u(p->peaks[i].count, v, sizeof v));
        csv_row(n, "peak", it, "prominence",
                fmt_d(p->peaks[i].prominence, v, sizeof v));
    }
    for (int i = 0; i < p->gmm.ncomp; i++) {
        snprintf(it, sizeof it, "%d", i + 1);
        csv_row(n, "mixture", it, "weight",
                fmt_d(p->gmm.weight[i], v, sizeof v));
        csv_row(n, "mixture", it, "center",
                fmt_d(p->gmm.center[i], v, sizeof v));
        csv_row(n, "mixture", it, "mu", fmt_d(p->gmm.mu[i], v, sizeof v));
        csv_row(n, "mixture", it, "sigma", fmt_d(p->gmm.sigma[i], v, sizeof v));
    }
}

/* ---- JSON -----------------------------------------------------------------
 */

static void json_str(const char *s)
{
    putchar('"');
    for (const unsigned char *q = (const unsigned char *)s; *q; q++) {
        if (*q == '"' || *q == '\\')
            printf("\\%c", *q);
        else if (*q < 0x20)
            printf("\\u%04x", *q);
        else
            putchar(*q);
    }
    putchar('"');
}

static void json_num(double v)
{
    if (isfinite(v))
        printf("%.17g", v);
    else
        printf("null");
}

static void json_pop(const mc_summary_pop *p, int first)
{
    const mc_stats *st = &p->stats;
    printf("%s\n    {\"name\": ", first ? "" : ",");
    json_str(p->name);
    printf(
        ", \"count\": %llu, \"total_bytes\": %llu, \"distinct\": %llu, "
        "\"zero_size\": %llu, \"min\": %llu, \"max\": %llu,\n     \"best\": ",
        (unsigned long long)st->count, (unsigned long long)st->total_bytes,
        (unsigned long long)st->distinct, (unsigned long long)st->zero_count,
        (unsigned long long)st->min, (unsigned long long)st->max);
    if (st->count)
        json_str(mc_center_name(p->fitness.best));
    else
        printf("null");
    printf(", \"mad_ratio_mean\": ");
    json_num(p->fitness.mad_ratio_mean);
    printf(",\n     \"centers\": [");
    for (int c = 0; c < MC_NCENTERS; c++) {
        const mc_center_fit *f = &p->fitness.fit[c];
        printf(
            "%s{\"name\": \"%s\", \"defined\": %s, \"value\": ", c ? ", " : "",
            mc_center_name((mc_center)c), f->defined ? "true" : "false");
        json_num(f->value);
        printf(", \"mad\": ");
        json_num(f->mad);
        printf(", \"rel_mad\": ");
        json_num(f->rel_mad);
        printf(", \"rank\": %d}", f->rank);
    }
    printf("],\n     \"quantiles\": [");
    for (int i = 0; i < MC_NQUANTILES; i++) {
        printf("%s{\"level\": ", i ? ", " : "");
        json_num(mc_quantile_levels[i]);
        printf(", \"by_messages\": ");
        json_num(st->quantiles[i]);
        printf(", \"by_bytes\": ");
        json_num(st->byte_quantiles[i]);
        printf("}");
    }
    printf("],\n     \"top\": [");
    for (size_t i = 0; i < p->ntop; i++) {
        printf("%s{\"size\": %llu, \"count\": %llu, \"msg_share\": ",
               i ? ", " : "", (unsigned long long)p->top[i].size,
               (unsigned long long)p->top[i].count);
        json_num(p->top[i].msg_share);
        printf(", \"byte_share\": ");
        json_num(p->top[i].byte_share);
        printf("}");
    }
    printf("],\n     \"peaks\": [");
    for (size_t i = 0; i < p->npeaks; i++) {
        printf(
            "%s{\"size\": %llu, \"lo\": %llu, \"hi\": %llu, \"count\": %llu, "
            "\"prominence\": ",
            i ? ", " : "", (unsigned long long)p->peaks[i].peak_size,
            (unsigned long long)p->peaks[i].lo,
            (unsigned long long)p->peaks[i].hi,
            (unsigned long long)p->peaks[i].count);
        json_num(p->peaks[i].prominence);
        printf("}");
    }
    printf("],\n     \"mixture\": [");
    for (int i = 0; i < p->gmm.ncomp; i++) {
        printf("%s{\"weight\": ", i ? ", " : "");
        json_num(p->gmm.weight[i]);
        printf(", \"center\": ");
        json_num(p->gmm.center[i]);
        printf(", \"mu\": ");
        json_num(p->gmm.mu[i]);
        printf(", \"sigma\": ");
        json_num(p->gmm.sigma[i]);
        printf("}");
    }
    printf("]}");
}

static void json_head(const mc_summary *s)
{
    const mc_summary_meta *m = &s->meta;
    printf("{\n  \"format\": ");
    json_str(m->format_name);
    printf(", \"version\": \"%d.%d\", \"tool_version\": ", m->version_major,
           m->version_minor);
    json_str(m->tool_version);
    printf(",\n  \"campaign\": ");
    json_str(m->campaign_path);
    printf(", \"run_label\": ");
    json_str(m->run_label);
    printf(", \"created\": ");
    json_str(m->created);
    printf(",\n  \"app_ranks\": %lld, \"files\": %lld, \"records_read\": %llu, "
           "\"records_rejected\": %llu, \"bytes_read\": %llu,\n  "
           "\"populations\": [",
           (long long)m->app_ranks, (long long)m->files,
           (unsigned long long)m->records_read,
           (unsigned long long)m->records_rejected,
           (unsigned long long)m->bytes_read);
}

enum { FMT_TEXT, FMT_CSV, FMT_JSON };

/* The HTML page: written to a temporary name beside FILE and moved into
 * place, so a reader never sees half a page. */
static int write_html(const mc_summary *s, const char *only, const char *html,
                      int force)
{
    mc_outfile o;
    mc_errinfo err;
    mc_errinfo_clear(&err);
    int rc = mc_outfile_begin(&o, html, force, &err);
    if (rc) {
        mc_cli_error(&err, rc, html);
        return MC_EXIT_FAIL;
    }
    FILE *f = fopen(o.tmp, "w");
    if (!f) {
        mc_cli_error(NULL, MC_EOPEN, html);
        return MC_EXIT_FAIL;
    }
    rc = mc_study_html_write(f, s, only);
    if (fclose(f) != 0 && rc == 0)
        rc = MC_EIO;
    if (rc == 0)
        rc = mc_outfile_commit(&o, &err);
    else
        mc_outfile_discard(&o);
    if (rc) {
        mc_cli_error(&err, rc, html);
        return MC_EXIT_FAIL;
    }
    MC_SAY(1, "report: wrote %s\n", html);
    return MC_EXIT_OK;
}

int mc_cmd_report(int argc, char **argv)
{
    const char *cmd = argv[0];
    const char *path = NULL, *only = NULL, *html = NULL;
    int fmt = FMT_TEXT, force = 0;
    for (int i = 1; i < argc; i++) {
        const char *a = argv[i];
        if (!strcmp(a, "-h") || !strcmp(a, "--help")) {
            usage(stdout);
            return MC_EXIT_OK;
        } else if (!strcmp(a, "--format")) {
            if (++i == argc)
                return mc_cli_usage_error(cmd,
                                          "--format needs text, csv or json");
            if (!strcmp(argv[i], "text"))
                fmt = FMT_TEXT;
            else if (!strcmp(argv[i], "csv"))
                fmt = FMT_CSV;
            else if (!strcmp(argv[i], "json"))
                fmt = FMT_JSON;
            else
                return mc_cli_usage_error(cmd, "unknown format '%s'", argv[i]);
        } else if (!strcmp(a, "--population")) {
            if (++i == argc)
                return mc_cli_usage_error(cmd, "--population needs a name");
            only = argv[i];
        } else if (!strcmp(a, "--html")) {
            if (++i == argc)
                return mc_cli_usage_error(cmd, "--html needs a file name");
            html = argv[i];
        } else if (!strcmp(a, "--force")) {
            force = 1;
        } else if (a[0] == '-' && a[1] != '\0') {
            return mc_cli_usage_error(cmd, "unknown option '%s'", a);
        } else if (!path) {
            path = a;
        } else {
            return mc_cli_usage_error(cmd, "one summary only ('%s')", a);
        }
    }
    if (!path)
        return mc_cli_usage_error(cmd, "no summary given");
    mc_summary *s = NULL;
    mc_errinfo err;
    mc_errinfo_clear(&err);
    const int rc = mc_summary_read(path, &s, &err);
    if (rc) {
        mc_cli_error(&err, rc, path);
        return MC_EXIT_FAIL;
    }
    if (only && !mc_summary_find_pop(s, only)) {
        fprintf(stderr, "msgcensus: %s: no population '%s'; it has:", path,
                only);
        for (size_t i = 0; i < s->npops; i++)
            fprintf(stderr, " %s", s->pops[i].name);
        fprintf(stderr, "\n");
        mc_summary_free(s);
        return MC_EXIT_FAIL;
    }
    if (html) {
        const int st = write_html(s, only, html, force);
        mc_summary_free(s);
        return st;
    }
    if (fmt == FMT_TEXT)
        text_head(path, s);
    else if (fmt == FMT_JSON)
        json_head(s);
    else
        printf("population,section,item,field,value\n");
    int first = 1;
    for (size_t i = 0; i < s->npops; i++) {
        const mc_summary_pop *p = &s->pops[i];
        if (only && strcmp(p->name, only) != 0)
            continue;
        if (fmt == FMT_TEXT)
            text_pop(p);
        else if (fmt == FMT_CSV)
            csv_pop(p);
        else
            json_pop(p, first);
        first = 0;
    }
    if (fmt == FMT_JSON)
        printf("\n  ]\n}\n");
    mc_summary_free(s);
    return MC_EXIT_OK;
}
