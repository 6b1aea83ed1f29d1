/* compare.c - several runs side by side per population, with the exact
 * distances between every pair of runs, as text (80 columns), CSV or JSON. */
#include "svg.h"

#include <math.h>   /* isfinite, INFINITY */
#include <stdlib.h> /* calloc, free */
#include <string.h> /* strcmp */

#include <msgcensus/distance.h> /* mc_distance_compute */
#include <msgcensus/stats.h>    /* mc_center_name */

#define LABEL_W 21       /* first column of the text table */
#define COL_W 11         /* one run column */
#define RUNS_PER_BLOCK 5 /* 21 + 5 * 11 = 76 columns */

static const mc_summary_pop *find_pop(const mc_summary *s, const char *name)
{
    for (size_t i = 0; i < s->npops; i++)
        if (s->pops[i].name && strcmp(s->pops[i].name, name) == 0)
            return &s->pops[i];
    return NULL;
}

/* The population names of every run, first appearance first. */
static const char **pop_union(const mc_summary *const *runs, size_t n,
                              size_t *count)
{
    size_t cap = 0;
    for (size_t r = 0; r < n; r++)
        cap += runs[r]->npops;
    const char **names = calloc(cap ? cap : 1, sizeof *names);
    size_t k = 0;
    if (!names)
        return NULL;
    for (size_t r = 0; r < n; r++)
        for (size_t i = 0; i < runs[r]->npops; i++) {
            const char *nm = runs[r]->pops[i].name;
            size_t j = 0;
            while (j < k && strcmp(names[j], nm) != 0)
                j++;
            if (j == k)
                names[k++] = nm;
        }
    *count = k;
    return names;
}

/* A message count that fits a column: grouped digits, or 3 significant
 * digits with a decimal prefix beyond 10 characters. */
static const char *fmt_msgs(uint64_t v, char *buf, size_t cap)
{
    mc__fmt_count(v, buf, cap);
    if (strlen(buf) <= 10)
        return buf;
    static const char *const pre[] = {"K", "M", "G", "T", "P", "E"};
    double d = (double)v;
    int u = -1;
    while (d >= 1000.0 && u < 5) {
        d /= 1000.0;
        u++;
    }
    snprintf(buf, cap, "%.3g %s", d, pre[u]);
    return buf;
}

/* The library reports an unbounded MAD(mean)/MAD(best) as -1. */
static double ratio_value(double v) { return v < 0.0 ? INFINITY : v; }

/* Does the best center differ between the runs that have the population? */
static int best_differs(const mc_summary_pop *const *pp, size_t n)
{
    int best = -1;
    for (size_t r = 0; r < n; r++) {
        if (!pp[r] || pp[r]->stats.count == 0)
            continue;
        if (best < 0)
            best = (int)pp[r]->fitness.best;
        else if (best != (int)pp[r]->fitness.best)
            return 1;
    }
    return 0;
}

/* One text row: a label and one cell per run of the block. */
typedef const char *(*cell_fn)(const mc_summary_pop *p, char *buf, size_t cap);

static const char *cell_msgs(const mc_summary_pop *p, char *b, size_t c)
{
    return fmt_msgs(p->stats.count, b, c);
}
static const char *cell_bytes(const mc_summary_pop *p, char *b, size_t c)
{
    return mc__fmt_bytes((double)p->stats.total_bytes, b, c);
}
static const char *cell_median(const mc_summary_pop *p, char *b, size_t c)
{
    return mc__fmt_bytes(p->stats.median, b, c);
}
static const char *cell_mode(const mc_summary_pop *p, char *b, size_t c)
{
    return mc__fmt_bytes((double)p->stats.mode, b, c);
}
static const char *cell_mean(const mc_summary_pop *p, char *b, size_t c)
{
    return mc__fmt_bytes(p->stats.mean, b, c);
}
static const char *cell_best(const mc_summary_pop *p, char *b, size_t c)
{
    snprintf(b, c, "%s", mc_center_name(p->fitness.best));
    return b;
}
static const char *cell_mad_best(const mc_summary_pop *p, char *b, size_t c)
{
    return mc__fmt_bytes(p->fitness.fit[p->fitness.best].mad, b, c);
}
static const char *cell_ratio(const mc_summary_pop *p, char *b, size_t c)
{
    return mc__fmt_ratio(p->fitness.mad_ratio_mean, b, c);
}

static void text_population(FILE *out, const mc_summary_pop *const *pp,
                            size_t n, const char *name, const mc_distance *dist,
                            const int *dist_ok)
{
    static const struct {
        const char *label;
        cell_fn fn;
    } rows[] = {
        {"messages", cell_msgs},      {"bytes", cell_bytes},
        {"median", cell_median},      {"mode", cell_mode},
        {"mean", cell_mean},          {"best center", cell_best},
        {"MAD(best)", cell_mad_best}, {"MAD(mean)/MAD(best)", cell_ratio},
    };
    fprintf(out, "\nPopulation %s\n", name);
    for (size_t b0 = 0; b0 < n; b0 += RUNS_PER_BLOCK) {
        const size_t b1 = b0 + RUNS_PER_BLOCK < n ? b0 + RUNS_PER_BLOCK : n;
        fprintf(out, "%-*s", LABEL_W, "");
        for (size_t r = b0; r < b1; r++) {
            char h[24];
            snprintf(h, sizeof h, "R%zu", r + 1);
            fprintf(out, "%*s", COL_W, h);
        }
        fputc('\n', out);
        for (size_t i = 0; i < sizeof rows / sizeof rows[0]; i++) {
            fprintf(out, "  %-*s", LABEL_W - 2, rows[i].label);
            for (size_t r = b0; r < b1; r++) {
                char cell[64];
                const char *v = "-";
                if (pp[r] && pp[r]->stats.count > 0)
                    v = rows[i].fn(pp[r], cell, sizeof cell);
                fprintf(out, "%*s", COL_W, v);
            }
            fputc('\n', out);
        }
    }
    if (best_differs(pp, n)) {
        /* Grouped by center in report order: "harmonic R1 R2; median R3". */
        fprintf(out, "  ! best center differs:");
        int col = 24, first = 1;
        for (int c = 0; c < MC_NCENTERS; c++) {
            int named = 0;
            for (size_t r = 0; r < n; r++) {
                if (!pp[r] || pp[r]->stats.count == 0 ||
                    (int)pp[r]->fitness.best != c)
                    continue;
                char item[48];
                int len;
                if (!named)
                    len = snprintf(item, sizeof item, "%s %s R%zu",
                                   first ? "" : ";",
                                   mc_center_name((mc_center)c), r + 1);
                else
                    len = snprintf(item, sizeof item, " R%zu", r + 1);
                if (col + len > 78) {
                    fprintf(out, "\n   ");
                    col = 3;
                }
                fputs(item, out);
                col += len;
                named = 1;
                first = 0;
            }
        }
        fputc('\n', out);
    }
    if (n > 1) {
        fprintf(out, "  %-*s%14s%9s%13s\n", LABEL_W - 2, "distance",
                "W1 log2 (oct)", "KS", "KS at");
        for (size_t a = 0; a < n; a++)
            for (size_t b = a + 1; b < n; b++) {
                char pair[48], at[32];
                snprintf(pair, sizeof pair, "R%zu vs R%zu", a + 1, b + 1);
                const size_t d = a * n + b;
                if (!dist_ok[d]) {
                    fprintf(out, "  %-*s%14s%9s%13s\n", LABEL_W - 2, pair, "-",
                            "-", "-");
                    continue;
                }
                fprintf(out, "  %-*s%14.4f%9.4f%13s\n", LABEL_W - 2, pair,
                        dist[d].w1_log2, dist[d].ks,
                        mc__fmt_bytes((double)dist[d].ks_at, at, sizeof at));
            }
    }
}

/* ---- CSV and JSON ------------------------------------------------------- */

static void csv_field(FILE *out, const char *s)
{
    int quote = 0;
    for (const char *c = s; *c; c++)
        if (*c == ',' || *c == '"' || *c == '\n' || *c == '\r')
            quote = 1;
    if (!quote) {
        fputs(s, out);
        return;
    }
    fputc('"', out);
    for (const char *c = s; *c; c++) {
        if (*c == '"')
            fputc('"', out);
        fputc(*c, out);
    }
    fputc('"', out);
}

static void json_string(FILE *out, const char *s)
{
    fputc('"', out);
    for (const unsigned char *c = (const unsigned char *)(s ? s : ""); *c;
         c++) {
        if (*c == '"' || *c == '\\')
            fprintf(out, "\\%c", *c);
        else if (*c < 0x20)
            fprintf(out, "\\u%04x", *c);
        else
            fputc(*c, out);
    }
    fputc('"', out);
}

static void json_number(FILE *out, double v)
{
    if (isfinite(v))
        fprintf(out, "%.17g", v);
    else
        fputs("null", out);
}

static const char *label_of(const mc_summary *s)
{
    return s->meta.run_label ? s->meta.run_label : "";
}

static void csv_number(FILE *out, double v)
{
    if (isfinite(v))
        fprintf(out, "%.17g", v);
    else
        fputs("inf", out);
}

static void csv_population(FILE *out, const mc_summary *const *runs,
                           const char *const *files,
                           const mc_summary_pop *const *pp, size_t n,
                           const char *name, const mc_distance *dist,
                           const int *dist_ok)
{
    const int differs = best_differs(pp, n);
    for (size_t r = 0; r < n; r++) {
        const mc_summary_pop *p = pp[r];
        fputs("run,", out);
        csv_field(out, name);
        fprintf(out, ",R%zu,,", r + 1);
        csv_field(out, files[r]);
        fputc(',', out);
        csv_field(out, label_of(runs[r]));
        fprintf(out, ",%lld,%d,", (long long)runs[r]->meta.app_ranks,
                runs[r]->meta.approximate);
        if (!p || p->stats.count == 0) {
            fputs(",,,,,,,,,,,,\n", out);
            continue;
        }
        const mc_fitness *ft = &p->fitness;
        fprintf(out, "%llu,%llu,", (unsigned long long)p->stats.count,
                (unsigned long long)p->stats.total_bytes);
        csv_number(out, p->stats.median);
        fprintf(out, ",%llu,", (unsigned long long)p->stats.mode);
        csv_number(out, p->stats.mean);
        fprintf(out, ",%s,", mc_center_name(ft->best));
        csv_number(out, ft->fit[ft->best].mad);
        fputc(',', out);
        csv_number(out, ft->fit[MC_CENTER_MEAN].mad);
        fputc(',', out);
        csv_number(out, ratio_value(ft->mad_ratio_mean));
        fprintf(out, ",%d,,,\n", differs);
    }
    for (size_t a = 0; a < n; a++)
        for (size_t b = a + 1; b < n; b++) {
            const size_t d = a * n + b;
            if (!dist_ok[d])
                continue;
            fputs("distance,", out);
            csv_field(out, name);
            fprintf(out, ",R%zu,R%zu,,,,,,,,,,,,,,,%.17g,%.17g,%llu\n", a + 1,
                    b + 1, dist[d].w1_log2, dist[d].ks,
                    (unsigned long long)dist[d].ks_at);
        }
}

static void json_population(FILE *out, const mc_summary_pop *const *pp,
                            size_t n, const char *name, const mc_distance *dist,
                            const int *dist_ok, int first)
{
    fprintf(out, "%s\n    {\"name\": ", first ? "" : ",");
    json_string(out, name);
    fprintf(out, ", \"best_differs\": %s,\n     \"runs\": [",
            best_differs(pp, n) ? "true" : "false");
    for (size_t r = 0; r < n; r++) {
        const mc_summary_pop *p = pp[r];
        fprintf(out, "%s\n      ", r ? "," : "");
        if (!p || p->stats.count == 0) {
            fputs("null", out);
            continue;
        }
        const mc_fitness *ft = &p->fitness;
        fprintf(out,
                "{\"run\": %zu, \"messages\": %llu, \"bytes\": %llu, "
                "\"median\": ",
                r + 1, (unsigned long long)p->stats.count,
                (unsigned long long)p->stats.total_bytes);
        json_number(out, p->stats.median);
        fprintf(out, ", \"mode\": %llu, \"mean\": ",
                (unsigned long long)p->stats.mode);
        json_number(out, p->stats.mean);
        fprintf(out,
                ", \"best\": \"%s\", \"mad_best\": ", mc_center_name(ft->best));
        json_number(out, ft->fit[ft->best].mad);
        fputs(", \"mad_mean\": ", out);
        json_number(out, ft->fit[MC_CENTER_MEAN].mad);
        fputs(", \"mad_ratio_mean\": ", out);
        json_number(out, ratio_value(ft->mad_ratio_mean));
        fputc('}', out);
    }
    fputs("],\n     \"distances\": [", out);
    int any = 0;
    for (size_t a = 0; a < n; a++)
        for (size_t b = a + 1; b < n; b++) {
            const size_t d = a * n + b;
            if (!dist_ok[d])
                continue;
            fprintf(out, "%s\n      {\"a\": %zu, \"b\": %zu, \"w1_log2\": ",
                    any ? "," : "", a + 1, b + 1);
            json_number(out, dist[d].w1_log2);
            fputs(", \"ks\": ", out);
            json_number(out, dist[d].ks);
            fprintf(out, ", \"ks_at\": %llu}",
                    (unsigned long long)dist[d].ks_at);
            any = 1;
        }
    fputs("]}", out);
}

int mc_study_compare(FILE *out, const mc_summary *const *runs,
                     const char *const *files, size_t n, const char *pop,
                     mc_study_format fmt, mc_errinfo *err)
{
    if (!out || !runs || !files || n == 0)
        return mc_errinfo_set(err, MC_EINVAL, NULL, -1, -1, "no runs");
    size_t npop = 0;
    const char **names = NULL;
    if (pop) {
        for (size_t r = 0; r < n && npop == 0; r++)
            if (find_pop(runs[r], pop))
                npop = 1;
        if (npop == 0)
            return mc_errinfo_set(err, MC_ENODATA, NULL, -1, -1,
                                  "no run has population '%s'", pop);
        names = calloc(1, sizeof *names);
        if (names)
            names[0] = pop;
    } else {
        names = pop_union(runs, n, &npop);
    }
    const mc_summary_pop **pp = calloc(n, sizeof *pp);
    mc_distance *dist = calloc(n * n, sizeof *dist);
    int *dist_ok = calloc(n * n, sizeof *dist_ok);
    if (!names || !pp || !dist || !dist_ok) {
        free(names);
        free(pp);
        free(dist);
        free(dist_ok);
        return mc_errinfo_set(err, MC_ENOMEM, NULL, -1, -1, NULL);
    }

    if (fmt == MC_STUDY_TEXT) {
        fprintf(out, "Runs\n");
        for (size_t r = 0; r < n; r++) {
            char cap[256];
            const char *approx =
                runs[r]->meta.approximate ? " (approximate)" : "";
            mc__run_caption(runs[r], cap, sizeof cap);
            const size_t len = 38 + strlen(files[r]) + strlen(approx);
            if (len <= 80 && strlen(cap) <= 30) {
                fprintf(out, "  R%-3zu %-30s %s%s\n", r + 1, cap, files[r],
                        approx);
                continue;
            }
            /* Too wide: the file on a line of its own, shortened from the
             * left (the end of a path says most). */
            const size_t room = 73 - strlen(approx);
            const size_t fl = strlen(files[r]);
            fprintf(out, "  R%-3zu %.72s\n       %s%s%s\n", r + 1, cap,
                    fl > room ? "..." : "",
                    fl > room ? files[r] + fl - (room - 3) : files[r], approx);
        }
        fprintf(out, "Distances: W1 = Wasserstein-1 on log2(size), in octaves "
                     "(size 0 at -1);\n"
                     "KS = largest gap between cumulative distributions.\n");
    } else if (fmt == MC_STUDY_CSV) {
        fprintf(out, "kind,population,run,other_run,file,label,app_ranks,"
                     "approximate,messages,bytes,median,mode,mean,best,"
                     "mad_best,mad_mean,mad_ratio_mean,best_differs,w1_log2,"
                     "ks,ks_at\n");
    } else {
        fputs("{\"runs\": [", out);
        for (size_t r = 0; r < n; r++) {
            fprintf(out, "%s\n    {\"run\": %zu, \"file\": ", r ? "," : "",
                    r + 1);
            json_string(out, files[r]);
            fputs(", \"label\": ", out);
            json_string(out, label_of(runs[r]));
            fprintf(out, ", \"app_ranks\": %lld, \"approximate\": %s}",
                    (long long)runs[r]->meta.app_ranks,
                    runs[r]->meta.approximate ? "true" : "false");
        }
        fputs("],\n  \"populations\": [", out);
    }

    for (size_t i = 0; i < npop; i++) {
        for (size_t r = 0; r < n; r++)
            pp[r] = find_pop(runs[r], names[i]);
        for (size_t a = 0; a < n; a++)
            for (size_t b = a + 1; b < n; b++) {
                const size_t d = a * n + b;
                dist_ok[d] = pp[a] && pp[b] &&
                             mc_distance_compute(&pp[a]->hist, &pp[b]->hist,
                                                 &dist[d]) == 0;
            }
        if (fmt == MC_STUDY_TEXT)
            text_population(out, pp, n, names[i], dist, dist_ok);
        else if (fmt == MC_STUDY_CSV)
            csv_population(out, runs, files, pp, n, names[i], dist, dist_ok);
        else
            json_population(out, pp, n, names[i], dist, dist_ok, i == 0);
    }
    if (fmt == MC_STUDY_JSON)
        fputs("]}\n", out);
    free(names);
    free(pp);
    free(dist);
    free(dist_ok);
    if (fflush(out) != 0 || ferror(out))
        return mc_errinfo_set(err, MC_EIO, NULL, -1, -1, "write failed");
    return 0;
}
