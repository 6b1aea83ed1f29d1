/* html.c - one self-contained HTML page for a summary: metadata, the tables
 * of `report` and every figure as inline SVG; no external resources. */
#include "svg.h"

#include <errno.h>  /* errno */
#include <stdio.h>  /* FILE, fopen, rename */
#include <string.h> /* strerror, strcmp */
#include <unistd.h> /* getpid, unlink */

#include <msgcensus/common.h> /* mc_version */
#include <msgcensus/stats.h>  /* mc_center_name, mc_quantile_levels */

static const char css[] =
    "body{font-family:system-ui,sans-serif;color:#222;margin:24px auto;"
    "max-width:1120px;padding:0 16px;line-height:1.4}\n"
    "h1{font-size:1.5em;margin-bottom:4px}h2{font-size:1.2em;margin-top:2em;"
    "border-bottom:1px solid #ccc;padding-bottom:3px}h3{font-size:1em;"
    "margin:1.2em 0 .3em}\n"
    "table{border-collapse:collapse;margin:.3em 0 1em;font-size:.9em}\n"
    "th,td{padding:2px 10px;border-bottom:1px solid #e4e4e4;text-align:right;"
    "white-space:nowrap}\n"
    "th{background:#f3f1ea}td.l,th.l{text-align:left}\n"
    "table.meta td{white-space:normal;max-width:820px}\n"
    "tr.best td{font-weight:bold;background:#fdf3dd}\n"
    ".approx{background:#fbe3d3;border:1px solid #d9895b;padding:6px 10px}\n"
    ".note{color:#555;font-size:.85em}\n"
    "figure{margin:1em 0}figure svg{max-width:100%;height:auto;"
    "border:1px solid #eee}\n"
    "nav a{margin-right:10px}\n";

/* Text into HTML with &, <, > and quotes escaped (same rules as XML). */
static void esc(mc_sbuf *b, const char *s) { mc_sbuf_xml(b, s ? s : ""); }

static void row_text(mc_sbuf *b, const char *k, const char *v)
{
    mc_sbuf_printf(b, "<tr><th class=\"l\">");
    esc(b, k);
    mc_sbuf_printf(b, "</th><td class=\"l\">");
    esc(b, v);
    mc_sbuf_printf(b, "</td></tr>\n");
}

static void row_u64(mc_sbuf *b, const char *k, uint64_t v)
{
    char buf[40];
    row_text(b, k, mc__fmt_count(v, buf, sizeof buf));
}

static void meta_table(mc_sbuf *b, const mc_summary *s)
{
    const mc_summary_meta *m = &s->meta;
    char buf[64];
    mc_sbuf_printf(
        b, "<section id=\"run\"><h2>Run</h2>\n<table class=\"meta\">\n");
    row_text(b, "run label",
             m->run_label && m->run_label[0] ? m->run_label : "(none)");
    snprintf(buf, sizeof buf, "%lld", (long long)m->app_ranks);
    row_text(b, "application ranks", buf);
    snprintf(buf, sizeof buf, "%lld", (long long)m->reducer_ranks);
    row_text(b, "reducer ranks", buf);
    snprintf(buf, sizeof buf, "%lld", (long long)m->files);
    row_text(b, "trace files", buf);
    row_u64(b, "records read", m->records_read);
    row_u64(b, "records rejected", m->records_rejected);
    row_text(b, "trace bytes read",
             mc__fmt_bytes((double)m->bytes_read, buf, sizeof buf));
    snprintf(buf, sizeof buf, "%.3f s", m->elapsed_s);
    row_text(b, "reduction time", buf);
    row_text(b, "created", m->created);
    row_text(b, "tool version", m->tool_version);
    if (m->campaign_path && m->campaign_path[0])
        row_text(b, "campaign", m->campaign_path);
    if (m->host && m->host[0])
        row_text(b, "host", m->host);
    if (m->shared_note && m->shared_note[0])
        row_text(b, "shared copy", m->shared_note);
    mc_sbuf_printf(b, "</table>\n</section>\n");
}

static void figure(mc_sbuf *b, const char *cls, int rc, const mc_sbuf *fig)
{
    if (rc != 0 || fig->oom)
        return;
    mc_sbuf_printf(b, "<figure class=\"%s\">\n", cls);
    mc_sbuf_printf(b, "%s", fig->data);
    mc_sbuf_printf(b, "</figure>\n");
}

static void pop_anchor(mc_sbuf *b, const char *name)
{
    char safe[256];
    mc_study_file_name(name, safe, sizeof safe);
    mc_sbuf_printf(b, "pop-%s", safe);
}

/* The population is on the page: all of them, or only @only. */
static int shown(const mc_summary_pop *p, const char *only)
{
    return !only || strcmp(p->name, only) == 0;
}

static void overview(mc_sbuf *b, const mc_summary *s, const char *only)
{
    char v[40], w[40], x[40];
    mc_sbuf_printf(b, "<section id=\"overview\"><h2>Populations</h2>\n<table>\n"
                      "<tr><th class=\"l\">population</th><th>messages</th>"
                      "<th>bytes</th><th>distinct sizes</th><th>median</th>"
                      "<th>mean</th><th class=\"l\">best center</th>"
                      "<th>MAD(best)</th><th>MAD(mean)/MAD(best)</th></tr>\n");
    for (size_t i = 0; i < s->npops; i++) {
        const mc_summary_pop *p = &s->pops[i];
        if (!shown(p, only))
            continue;
        mc_sbuf_printf(b, "<tr><td class=\"l\"><a href=\"#");
        pop_anchor(b, p->name);
        mc_sbuf_printf(b, "\">");
        esc(b, p->name);
        mc_sbuf_printf(b, "</a></td><td>%s</td>",
                       mc__fmt_count(p->stats.count, v, sizeof v));
        if (p->stats.count == 0) {
            mc_sbuf_printf(b,
                           "<td colspan=\"7\" class=\"l\">empty</td></tr>\n");
            continue;
        }
        mc_sbuf_printf(b, "<td>%s</td><td>%llu</td>",
                       mc__fmt_bytes((double)p->stats.total_bytes, w, sizeof w),
                       (unsigned long long)p->stats.distinct);
        mc_sbuf_printf(b, "<td>%s</td>",
                       mc__fmt_bytes(p->stats.median, v, sizeof v));
        mc_sbuf_printf(b, "<td>%s</td><td class=\"l\">%s</td>",
                       mc__fmt_bytes(p->stats.mean, w, sizeof w),
                       mc_center_name(p->fitness.best));
        char r[32];
        mc_sbuf_printf(
            b, "<td>%s</td><td>%s</td></tr>\n",
            mc__fmt_bytes(p->fitness.fit[p->fitness.best].mad, x, sizeof x),
            mc__fmt_ratio(p->fitness.mad_ratio_mean, r, sizeof r));
    }
    mc_sbuf_printf(b, "</table>\n");
    mc_sbuf fig;
    mc_sbuf_init(&fig);
    figure(b, "fig-mad", mc_study_fig_mad(s, 0, &fig), &fig);
    mc_sbuf_free(&fig);
    mc_sbuf_printf(b, "</section>\n");
}

static void pop_tables(mc_sbuf *b, const mc_summary_pop *p)
{
    const mc_stats *st = &p->stats;
    char v[40], w[40];
    mc_sbuf_printf(b, "<h3>Counts</h3>\n<table class=\"counts\">\n");
    row_u64(b, "messages", st->count);
    row_u64(b, "zero-size messages", st->zero_count);
    row_u64(b, "distinct sizes", st->distinct);
    snprintf(w, sizeof w, "%s (%llu B)",
             mc__fmt_bytes((double)st->total_bytes, v, sizeof v),
             (unsigned long long)st->total_bytes);
    row_text(b, "bytes", w);
    row_text(b, "smallest size", mc__fmt_bytes((double)st->min, v, sizeof v));
    row_text(b, "largest size", mc__fmt_bytes((double)st->max, v, sizeof v));
    mc_sbuf_printf(b, "</table>\n");

    mc_sbuf_printf(
        b, "<h3>Candidate centers</h3>\n<table class=\"centers\">\n"
           "<tr><th class=\"l\">center</th><th>value</th><th>MAD</th>"
           "<th>relative MAD</th><th>rank</th><th class=\"l\"></th></tr>\n");
    for (int c = 0; c < MC_NCENTERS; c++) {
        const mc_center_fit *f = &p->fitness.fit[c];
        const int best = (int)p->fitness.best == c && f->defined;
        mc_sbuf_printf(b, "<tr%s><td class=\"l\">%s</td>",
                       best ? " class=\"best\"" : "",
                       mc_center_name((mc_center)c));
        if (!f->defined) {
            mc_sbuf_printf(
                b, "<td colspan=\"5\" class=\"l\">undefined</td></tr>\n");
            continue;
        }
        mc_sbuf_printf(b, "<td>%s</td>", mc__fmt_bytes(f->value, v, sizeof v));
        mc_sbuf_printf(b, "<td>%s</td>", mc__fmt_bytes(f->mad, w, sizeof w));
        if (f->rel_mad < 0)
            mc_sbuf_printf(b, "<td>-</td>");
        else
            mc_sbuf_printf(b, "<td>%.3f</td>", f->rel_mad);
        mc_sbuf_printf(b, "<td>%d</td><td class=\"l\">%s</td></tr>\n", f->rank,
                       best ? "best" : "");
    }
    char r[32];
    mc_sbuf_printf(
        b,
        "</table>\n<p class=\"note\">MAD = median absolute deviation of "
        "the message sizes about the center; MAD(mean)/MAD(best) = "
        "%s.</p>\n",
        mc__fmt_ratio(p->fitness.mad_ratio_mean, r, sizeof r));

    mc_sbuf_printf(b,
                   "<h3>Quantiles</h3>\n<table class=\"quantiles\">\n"
                   "<tr><th>level</th><th>messages</th><th>bytes</th></tr>\n");
    for (int q = 0; q < MC_NQUANTILES; q++)
        mc_sbuf_printf(b, "<tr><td>%g %%</td><td>%s</td><td>%s</td></tr>\n",
                       100.0 * mc_quantile_levels[q],
                       mc__fmt_bytes(st->quantiles[q], v, sizeof v),
                       mc__fmt_bytes(st->byte_quantiles[q], w, sizeof w));
    mc_sbuf_printf(b, "</table>\n");

    if (p->ntop > 0) {
        mc_sbuf_printf(
            b, "<h3>Top sizes</h3>\n<table class=\"top\">\n<tr><th>size</th>"
               "<th>messages</th><th>share of messages</th>"
               "<th>share of bytes</th></tr>\n");
        for (size_t i = 0; i < p->ntop; i++) {
            const mc_topsize *t = &p->top[i];
            mc_sbuf_printf(b,
                           "<tr><td>%s</td><td>%s</td><td>%.2f %%</td>"
                           "<td>%.2f %%</td></tr>\n",
                           mc__fmt_bytes((double)t->size, v, sizeof v),
                           mc__fmt_count(t->count, w, sizeof w),
                           100 * t->msg_share, 100 * t->byte_share);
        }
        mc_sbuf_printf(b, "</table>\n");
    }
    if (p->npeaks > 0) {
        mc_sbuf_printf(
            b, "<h3>Peaks</h3>\n<table class=\"peaks\">\n<tr><th>bin</th>"
               "<th>peak size</th><th>messages</th><th>share</th>"
               "<th>prominence</th></tr>\n");
        for (size_t i = 0; i < p->npeaks; i++) {
            const mc_peak *k = &p->peaks[i];
            char lo[32], hi[32], pk[32];
            mc_sbuf_printf(b,
                           "<tr><td>%s to %s</td><td>%s</td><td>%s</td>"
                           "<td>%.2f %%</td><td>%.3f</td></tr>\n",
                           mc__fmt_bytes((double)k->lo, lo, sizeof lo),
                           mc__fmt_bytes((double)k->hi, hi, sizeof hi),
                           mc__fmt_bytes((double)k->peak_size, pk, sizeof pk),
                           mc__fmt_count(k->count, v, sizeof v),
                           100 * k->msg_share, k->prominence);
        }
        mc_sbuf_printf(b, "</table>\n");
    }
    if (p->gmm.ncomp > 0) {
        mc_sbuf_printf(
            b, "<h3>Mixture on log2(size)</h3>\n<table class=\"mixture\">\n"
               "<tr><th>component</th><th>weight</th><th>center</th>"
               "<th>mean of log2</th><th>sd of log2</th></tr>\n");
        for (int c = 0; c < p->gmm.ncomp && c < MC_GMM_MAX; c++)
            mc_sbuf_printf(
                b,
                "<tr><td>%d</td><td>%.3f</td><td>%s</td><td>%.3f</td>"
                "<td>%.3f</td></tr>\n",
                c + 1, p->gmm.weight[c],
                mc__fmt_bytes(p->gmm.center[c], v, sizeof v), p->gmm.mu[c],
                p->gmm.sigma[c]);
        mc_sbuf_printf(
            b,
            "</table>\n<p class=\"note\">%d component%s chosen by BIC "
            "(%.1f); %llu zero-size messages left out of the fit.</p>\n",
            p->gmm.ncomp, p->gmm.ncomp == 1 ? "" : "s", p->gmm.bic,
            (unsigned long long)p->gmm.excluded_zero);
    }
}

static void build_page(mc_sbuf *b, const mc_summary *s, const char *only)
{
    char cap[256];
    mc__run_caption(s, cap, sizeof cap);
    mc_sbuf_printf(b, "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta "
                      "charset=\"utf-8\">\n"
                      "<meta name=\"viewport\" content=\"width=device-width, "
                      "initial-scale=1\">\n<title>Message-size census: ");
    esc(b, cap);
    mc_sbuf_printf(b, "</title>\n<style>\n%s</style>\n</head>\n<body>\n", css);
    mc_sbuf_printf(b, "<header><h1>Message-size census: ");
    esc(b, cap);
    mc_sbuf_printf(
        b, "</h1>\n<p class=\"note\">Exact histograms of MPI message sizes "
           "and the statistics of each population.</p>\n");
    if (s->meta.approximate)
        mc_sbuf_printf(
            b, "<p class=\"approx\">Approximate: this is a coarsened copy; "
               "statistics were recomputed from coarsened histograms. "
               "See &quot;shared copy&quot; below.</p>\n");
    mc_sbuf_printf(b,
                   "<nav><a href=\"#run\">run</a><a href=\"#overview\">"
                   "populations</a>%s</nav>\n</header>\n",
                   s->nedges ? "<a href=\"#matrix\">matrix</a>" : "");
    meta_table(b, s);
    overview(b, s, only);
    for (size_t i = 0; i < s->npops; i++) {
        const mc_summary_pop *p = &s->pops[i];
        if (p->stats.count == 0 || !shown(p, only))
            continue;
        mc_sbuf_printf(b, "<section class=\"population\" id=\"");
        pop_anchor(b, p->name);
        mc_sbuf_printf(b, "\">\n<h2>Population ");
        esc(b, p->name);
        mc_sbuf_printf(b, "</h2>\n");
        pop_tables(b, p);
        mc_sbuf fig;
        mc_sbuf_init(&fig);
        figure(b, "fig-sizes", mc_study_fig_sizes(s, p, &fig), &fig);
        mc_sbuf_free(&fig);
        mc_sbuf_init(&fig);
        figure(b, "fig-cdf", mc_study_fig_cdf(s, p, &fig), &fig);
        mc_sbuf_free(&fig);
        mc_sbuf_printf(b, "</section>\n");
    }
    if (s->nedges) {
        mc_sbuf_printf(b,
                       "<section id=\"matrix\"><h2>Rank-to-rank matrix</h2>\n");
        for (int w = 0; w < 2; w++) {
            mc_sbuf fig;
            mc_sbuf_init(&fig);
            figure(b, w ? "fig-matrix-bytes" : "fig-matrix-msgs",
                   mc_study_fig_matrix(s, w, 0, &fig), &fig);
            mc_sbuf_free(&fig);
        }
        mc_sbuf_printf(b, "</section>\n");
    }
    mc_sbuf_printf(
        b,
        "<footer><p class=\"note\">Written by msgcensus %s.</p></footer>\n"
        "</body>\n</html>\n",
        mc_version());
}

int mc_study_html_write(FILE *out, const mc_summary *s, const char *only)
{
    mc_sbuf b;
    mc_sbuf_init(&b);
    build_page(&b, s, only);
    if (b.oom) {
        mc_sbuf_free(&b);
        return MC_ENOMEM;
    }
    const size_t len = b.len;
    const size_t w = fwrite(b.data, 1, len, out);
    mc_sbuf_free(&b);
    return w == len && fflush(out) == 0 ? 0 : MC_EIO;
}

int mc_study_html_report(const mc_summary *s, const char *only,
                         const char *out_path, mc_errinfo *err)
{
    char tmp[1200];
    if (!s || !out_path)
        return mc_errinfo_set(err, MC_EINVAL, NULL, -1, -1,
                              "no summary or path");
    snprintf(tmp, sizeof tmp, "%s.tmp-%ld", out_path, (long)getpid());
    FILE *f = fopen(tmp, "w");
    if (!f) {
        const int e = errno;
        mc_errinfo_set(err, MC_EOPEN, tmp, -1, -1, "%s", strerror(e));
        if (err)
            err->sys_errno = e;
        return MC_EOPEN;
    }
    int rc = mc_study_html_write(f, s, only);
    if (fclose(f) != 0 && rc == 0)
        rc = MC_EIO;
    if (rc == 0 && rename(tmp, out_path) != 0) {
        const int e = errno;
        unlink(tmp);
        mc_errinfo_set(err, MC_EIO, out_path, -1, -1, "cannot rename: %s",
                       strerror(e));
        return MC_EIO;
    }
    if (rc != 0) {
        unlink(tmp);
        return mc_errinfo_set(err, rc, out_path, -1, -1,
                              rc == MC_ENOMEM ? "page too large for memory"
                                              : "write failed");
    }
    return 0;
}
