/* summary_read.c - read an HDF5 summary (layout v1) into the in-memory
 * model, and free it. */
#include "summary_internal.h"

#include <stdint.h> /* uintptr_t */
#include <stdlib.h> /* calloc, free */
#include <string.h> /* strcmp, strdup */
#include <unistd.h> /* access */

/* Free a pointer the model declares const (views own their arrays). */
static void free_const(const void *p) { free((void *)(uintptr_t)p); }

typedef struct rctx {
    const char *path;
    mc_errinfo *err;
} rctx;

static int bad(rctx *r, const char *what)
{
    return mc_errinfo_set(r->err, MC_ESUMMARY, r->path, -1, -1,
                          "cannot read %s", what);
}

static int nomem(rctx *r, const char *what)
{
    return mc_errinfo_set(r->err, MC_ENOMEM, r->path, -1, -1, "%s", what);
}

static char *dup_or_empty(const char *s) { return strdup(s ? s : ""); }

/* ---- attributes ------------------------------------------------------- */

/* Read a numeric scalar attribute converting to @mtype; absent is an error
 * only when @required. */
static int attr_num(rctx *r, hid_t loc, const char *name, hid_t mtype,
                    void *out, int required)
{
    if (H5Aexists(loc, name) <= 0)
        return required ? bad(r, name) : 0;
    const hid_t a = H5Aopen(loc, name, H5P_DEFAULT);
    if (a < 0)
        return bad(r, name);
    const herr_t rc = H5Aread(a, mtype, out);
    H5Aclose(a);
    return rc < 0 ? bad(r, name) : 0;
}

/* Read a string attribute (variable or fixed length) into a heap copy;
 * absent gives "" unless @required. */
static int attr_str(rctx *r, hid_t loc, const char *name, char **out,
                    int required)
{
    *out = NULL;
    if (H5Aexists(loc, name) <= 0) {
        if (required)
            return bad(r, name);
        *out = strdup("");
        return *out ? 0 : nomem(r, name);
    }
    const hid_t a = H5Aopen(loc, name, H5P_DEFAULT);
    if (a < 0)
        return bad(r, name);
    int rc = 0;
    const hid_t ft = H5Aget_type(a);
    if (ft < 0 || H5Tget_class(ft) != H5T_STRING) {
        rc = bad(r, name);
    } else if (H5Tis_variable_str(ft) > 0) {
        const hid_t mt = H5Tcopy(H5T_C_S1);
        H5Tset_size(mt, H5T_VARIABLE);
        H5Tset_cset(mt, H5Tget_cset(ft)); /* HDF5 converts no character sets */
        char *v = NULL;
        if (H5Aread(a, mt, &v) < 0) {
            rc = bad(r, name);
        } else {
            *out = dup_or_empty(v);
            const hid_t sp = H5Aget_space(a);
            H5Dvlen_reclaim(mt, sp, H5P_DEFAULT, &v);
            H5Sclose(sp);
            if (!*out)
                rc = nomem(r, name);
        }
        H5Tclose(mt);
    } else {
        const size_t n = H5Tget_size(ft);
        char *v = calloc(n + 1, 1);
        const hid_t mt = H5Tcopy(H5T_C_S1);
        H5Tset_size(mt, n + 1);
        H5Tset_cset(mt, H5Tget_cset(ft));
        if (!v)
            rc = nomem(r, name);
        else if (H5Aread(a, mt, v) < 0)
            rc = bad(r, name);
        H5Tclose(mt);
        if (rc)
            free(v);
        else
            *out = v;
    }
    if (ft >= 0)
        H5Tclose(ft);
    H5Aclose(a);
    return rc;
}

/* ---- datasets --------------------------------------------------------- */

/* Read the 1-D dataset @name as @mtype rows of @esize bytes into a new
 * array (*out, *n). An absent dataset is an error only when @required. */
static int table_read(rctx *r, hid_t loc, const char *name, hid_t mtype,
                      size_t esize, void **out, size_t *n, int required)
{
    *out = NULL;
    *n = 0;
    if (H5Lexists(loc, name, H5P_DEFAULT) <= 0)
        return required ? bad(r, name) : 0;
    const hid_t d = H5Dopen2(loc, name, H5P_DEFAULT);
    if (d < 0)
        return bad(r, name);
    int rc = 0;
    const hid_t sp = H5Dget_space(d);
    hsize_t dims[1] = {0};
    if (sp < 0 || H5Sget_simple_extent_ndims(sp) != 1 ||
        H5Sget_simple_extent_dims(sp, dims, NULL) < 0) {
        rc = bad(r, name);
        goto out;
    }
    *out = calloc(dims[0] ? (size_t)dims[0] : 1, esize);
    if (!*out) {
        rc = nomem(r, name);
        goto out;
    }
    if (dims[0] > 0 &&
        H5Dread(d, mtype, H5S_ALL, H5S_ALL, H5P_DEFAULT, *out) < 0) {
        free(*out);
        *out = NULL;
        rc = bad(r, name);
        goto out;
    }
    *n = (size_t)dims[0];
out:
    if (sp >= 0)
        H5Sclose(sp);
    H5Dclose(d);
    return rc;
}

/* ---- parts ------------------------------------------------------------ */

static int read_meta(rctx *r, hid_t f, mc_summary_meta *m)
{
    int rc = attr_str(r, f, "format_name", &m->format_name, 1);
    if (!rc && strcmp(m->format_name, MC_SUMMARY_FORMAT_NAME) != 0)
        return mc_errinfo_set(r->err, MC_ESUMMARY, r->path, -1, -1,
                              "format is '%s'", m->format_name);
    int32_t vmaj = 0, vmin = 0, approx = 0;
    rc =
        rc ? rc
           : attr_num(r, f, "format_version_major", H5T_NATIVE_INT32, &vmaj, 1);
    rc =
        rc ? rc
           : attr_num(r, f, "format_version_minor", H5T_NATIVE_INT32, &vmin, 1);
    if (!rc && vmaj != MC_SUMMARY_VERSION_MAJOR)
        return mc_errinfo_set(r->err, MC_ESUMMARY, r->path, -1, -1,
                              "layout version %d.%d, this reader knows %d.x",
                              (int)vmaj, (int)vmin, MC_SUMMARY_VERSION_MAJOR);
    m->version_major = vmaj;
    m->version_minor = vmin;
    rc = rc ? rc : attr_str(r, f, "tool_version", &m->tool_version, 0);
    rc = rc ? rc : attr_str(r, f, "created", &m->created, 0);
    rc = rc ? rc : attr_str(r, f, "campaign_path", &m->campaign_path, 0);
    rc = rc ? rc : attr_str(r, f, "run_label", &m->run_label, 0);
    rc = rc ? rc : attr_str(r, f, "host", &m->host, 0);
    rc = rc ? rc
            : attr_num(r, f, "app_ranks", H5T_NATIVE_INT64, &m->app_ranks, 0);
    rc = rc ? rc
            : attr_num(r, f, "reducer_ranks", H5T_NATIVE_INT64,
                       &m->reducer_ranks, 0);
    rc = rc ? rc : attr_num(r, f, "files", H5T_NATIVE_INT64, &m->files, 0);
    rc = rc ? rc
            : attr_num(r, f, "records_read", H5T_NATIVE_UINT64,
                       &m->records_read, 0);
    rc = rc ? rc
            : attr_num(r, f, "records_rejected", H5T_NATIVE_UINT64,
                       &m->records_rejected, 0);
    rc =
        rc ? rc
           : attr_num(r, f, "bytes_read", H5T_NATIVE_UINT64, &m->bytes_read, 0);
    rc = rc ? rc
            : attr_num(r, f, "elapsed_seconds", H5T_NATIVE_DOUBLE,
                       &m->elapsed_s, 0);
    rc = rc ? rc : attr_str(r, f, "shared_note", &m->shared_note, 0);
    rc = rc ? rc : attr_num(r, f, "approximate", H5T_NATIVE_INT32, &approx, 0);
    m->approximate = approx;
    return rc;
}

static int read_sources(rctx *r, hid_t f, mc_summary *s)
{
    const hid_t t = mc__h5_source_type();
    if (t < 0)
        return bad(r, "sources");
    void *buf = NULL;
    size_t n = 0;
    int rc =
        table_read(r, f, "sources", t, sizeof(mc__source_row), &buf, &n, 1);
    if (rc) {
        H5Tclose(t);
        return rc;
    }
    mc__source_row *rows = buf;
    s->sources = calloc(n ? n : 1, sizeof *s->sources);
    if (!s->sources)
        rc = nomem(r, "sources");
    for (size_t i = 0; !rc && i < n; i++) {
        mc_summary_source *o = &s->sources[i];
        o->path = dup_or_empty(rows[i].path);
        o->status = dup_or_empty(rows[i].status);
        o->app_rank = rows[i].app_rank;
        o->bytes = rows[i].bytes;
        o->records = rows[i].records;
        o->blocks = rows[i].blocks;
        o->skipped_blocks = rows[i].skipped_blocks;
        o->skipped_records = rows[i].skipped_records;
        o->checksum = rows[i].checksum;
        s->nsources = i + 1;
        if (!o->path || !o->status)
            rc = nomem(r, "sources");
    }
    if (n > 0) {
        const hsize_t dims[1] = {n};
        const hid_t sp = H5Screate_simple(1, dims, NULL);
        H5Dvlen_reclaim(t, sp, H5P_DEFAULT, rows);
        H5Sclose(sp);
    }
    free(rows);
    H5Tclose(t);
    return rc;
}

/* Fill stats and fitness from the rows of a stats table. */
static void parse_stats(const mc__stat_row *rows, size_t n, mc_summary_pop *p)
{
    mc_stats *st = &p->stats;
    mc_fitness *fit = &p->fitness;
    for (size_t i = 0; i < n; i++) {
        char m[MC__METRIC_LEN + 1];
        memcpy(m, rows[i].metric, MC__METRIC_LEN);
        m[MC__METRIC_LEN] = '\0';
        const mc__stat_row *rw = &rows[i];
        if (rw->kind == MC__KIND_CENTER) {
            for (int c = 0; c < MC_NCENTERS; c++) {
                if (strcmp(m, mc_center_name((mc_center)c)) != 0)
                    continue;
                mc_center_fit *f = &fit->fit[c];
                f->value = rw->value;
                f->mad = rw->mad;
                f->rel_mad = rw->rel_mad;
                f->rank = rw->rank;
                f->defined = rw->rank > 0;
            }
        }
#define EXACT(field)                                                           \
    if (!strcmp(m, #field))                                                    \
        st->field = rw->exact;
#define REAL(field)                                                            \
    if (!strcmp(m, #field))                                                    \
        st->field = rw->value;
        EXACT(count)
        EXACT(zero_count)
        EXACT(distinct)
        EXACT(total_bytes)
        EXACT(positive_count)
        EXACT(mode_count)
        EXACT(min)
        EXACT(max)
        EXACT(mode)
        REAL(mean)
        REAL(median)
        REAL(harmonic)
        REAL(geometric)
        REAL(quadratic)
        REAL(trimean)
        REAL(hinge_lo)
        REAL(hinge_hi)
        REAL(stddev)
        REAL(byte_median)
#undef EXACT
#undef REAL
        if (!strcmp(m, "mode_ties"))
            st->mode_ties = (size_t)rw->exact;
        if (!strcmp(m, "mad_ratio_mean"))
            fit->mad_ratio_mean = rw->value;
    }
    /* The best center: rank 1, first in report order. */
    fit->best = MC_CENTER_MEAN;
    for (int c = 0; c < MC_NCENTERS; c++) {
        if (fit->fit[c].rank == 1) {
            fit->best = (mc_center)c;
            break;
        }
    }
}

static int read_pop(rctx *r, hid_t pops, const char *gname, mc_summary_pop *p)
{
    const hid_t g = H5Gopen2(pops, gname, H5P_DEFAULT);
    if (g < 0)
        return bad(r, gname);
    void *buf = NULL;
    size_t n = 0, n2 = 0;
    hid_t t = -1;
    int rc = attr_str(r, g, "name", &p->name, 1);
    if (!rc) {
        rc = table_read(r, g, "hist_sizes", H5T_NATIVE_UINT64, sizeof(uint64_t),
                        &buf, &n, 1);
        p->hist.sizes = buf;
    }
    if (!rc) {
        rc = table_read(r, g, "hist_counts", H5T_NATIVE_UINT64,
                        sizeof(uint64_t), &buf, &n2, 1);
        p->hist.counts = buf;
        p->hist.k = n < n2 ? n : n2;
        if (!rc && n != n2)
            rc = mc_errinfo_set(r->err, MC_ESUMMARY, r->path, -1, -1,
                                "population '%s': %zu sizes but %zu counts",
                                p->name, n, n2);
    }
    if (!rc) {
        t = mc__h5_stat_type();
        rc = t < 0 ? bad(r, "stats")
                   : table_read(r, g, "stats", t, sizeof(mc__stat_row), &buf,
                                &n, 1);
        if (t >= 0)
            H5Tclose(t);
        if (!rc)
            parse_stats(buf, n, p);
        free(buf);
    }
    if (!rc) {
        t = mc__h5_quantile_type();
        rc = t < 0 ? bad(r, "quantiles")
                   : table_read(r, g, "quantiles", t, sizeof(mc__quantile_row),
                                &buf, &n, 1);
        if (t >= 0)
            H5Tclose(t);
        const mc__quantile_row *q = buf;
        for (size_t i = 0; !rc && i < n && i < MC_NQUANTILES; i++) {
            p->stats.quantiles[i] = q[i].value;
            p->stats.byte_quantiles[i] = q[i].byte_value;
        }
        free(buf);
    }
    if (!rc) {
        t = mc__h5_top_type();
        rc = t < 0 ? bad(r, "modes")
                   : table_read(r, g, "modes", t, sizeof(mc_topsize), &buf, &n,
                                0);
        p->top = buf;
        p->ntop = n;
        if (t >= 0)
            H5Tclose(t);
    }
    if (!rc) {
        t = mc__h5_peak_type();
        rc = t < 0 ? bad(r, "peaks")
                   : table_read(r, g, "peaks", t, sizeof(mc_peak), &buf, &n, 0);
        p->peaks = buf;
        p->npeaks = n;
        if (t >= 0)
            H5Tclose(t);
    }
    if (!rc && H5Lexists(g, "mixture", H5P_DEFAULT) > 0) {
        t = mc__h5_mixture_type();
        rc = t < 0 ? bad(r, "mixture")
                   : table_read(r, g, "mixture", t, sizeof(mc__mixture_row),
                                &buf, &n, 1);
        if (t >= 0)
            H5Tclose(t);
        mc_gmm *m = &p->gmm;
        const mc__mixture_row *mix = buf;
        for (size_t i = 0; !rc && i < n && i < MC_GMM_MAX; i++) {
            m->weight[i] = mix[i].weight;
            m->mu[i] = mix[i].mu;
            m->sigma[i] = mix[i].sigma;
            m->center[i] = mix[i].center;
        }
        m->ncomp = (int)(n < MC_GMM_MAX ? n : MC_GMM_MAX);
        free(buf);
        const hid_t d = rc ? -1 : H5Dopen2(g, "mixture", H5P_DEFAULT);
        if (d >= 0) {
            int32_t iters = 0;
            rc = attr_num(r, d, "loglik", H5T_NATIVE_DOUBLE, &m->loglik, 0);
            rc = rc ? rc : attr_num(r, d, "bic", H5T_NATIVE_DOUBLE, &m->bic, 0);
            rc = rc ? rc
                    : attr_num(r, d, "excluded_zero", H5T_NATIVE_UINT64,
                               &m->excluded_zero, 0);
            rc = rc ? rc
                    : attr_num(r, d, "iterations", H5T_NATIVE_INT32, &iters, 0);
            m->iterations = iters;
            if (!rc && H5Aexists(d, "bic_by_k") > 0) {
                const hid_t a = H5Aopen(d, "bic_by_k", H5P_DEFAULT);
                const hid_t sp = a >= 0 ? H5Aget_space(a) : -1;
                if (sp < 0 || H5Sget_simple_extent_npoints(sp) != MC_GMM_MAX ||
                    H5Aread(a, H5T_NATIVE_DOUBLE, m->bic_by_k) < 0)
                    rc = bad(r, "bic_by_k");
                if (sp >= 0)
                    H5Sclose(sp);
                if (a >= 0)
                    H5Aclose(a);
            }
            H5Dclose(d);
        }
    }
    H5Gclose(g);
    return rc;
}

/* Population groups in creation order (the writer's order). */
static int read_pops(rctx *r, hid_t f, mc_summary *s)
{
    const hid_t pops = H5Gopen2(f, "populations", H5P_DEFAULT);
    if (pops < 0)
        return bad(r, "populations");
    H5G_info_t info;
    int rc = 0;
    if (H5Gget_info(pops, &info) < 0) {
        H5Gclose(pops);
        return bad(r, "populations");
    }
    s->pops = calloc(info.nlinks ? (size_t)info.nlinks : 1, sizeof *s->pops);
    if (!s->pops)
        rc = nomem(r, "populations");
    /* Files written by others may not index creation order; fall back to
     * name order then. */
    H5_index_t idx = H5_INDEX_CRT_ORDER;
    const hid_t gcpl = H5Gget_create_plist(pops);
    unsigned flags = 0;
    if (gcpl < 0 || H5Pget_link_creation_order(gcpl, &flags) < 0 ||
        !(flags & H5P_CRT_ORDER_INDEXED))
        idx = H5_INDEX_NAME;
    if (gcpl >= 0)
        H5Pclose(gcpl);
    for (hsize_t i = 0; !rc && i < info.nlinks; i++) {
        char gname[512];
        const ssize_t len = H5Lget_name_by_idx(
            pops, ".", idx, H5_ITER_INC, i, gname, sizeof gname, H5P_DEFAULT);
        if (len < 0 || (size_t)len >= sizeof gname) {
            rc = bad(r, "population name");
            break;
        }
        rc = read_pop(r, pops, gname, &s->pops[s->npops]);
        s->npops++;
    }
    H5Gclose(pops);
    return rc;
}

static int read_ranks(rctx *r, hid_t f, mc_summary *s)
{
    const hid_t t = mc__h5_rank_type();
    if (t < 0)
        return bad(r, "ranks");
    void *buf = NULL;
    size_t n = 0;
    const int rc =
        table_read(r, f, "ranks", t, sizeof(mc_summary_rank), &buf, &n, 1);
    H5Tclose(t);
    s->ranks = buf;
    s->nranks = n;
    return rc;
}

static int read_matrix(rctx *r, hid_t f, mc_summary *s)
{
    const hid_t g = H5Gopen2(f, "matrix", H5P_DEFAULT);
    if (g < 0)
        return bad(r, "matrix");
    void *src = NULL, *dst = NULL, *msgs = NULL, *bytes = NULL;
    size_t n[4] = {0, 0, 0, 0};
    int rc = table_read(r, g, "src", H5T_NATIVE_INT32, sizeof(int32_t), &src,
                        &n[0], 1);
    rc = rc ? rc
            : table_read(r, g, "dst", H5T_NATIVE_INT32, sizeof(int32_t), &dst,
                         &n[1], 1);
    rc = rc ? rc
            : table_read(r, g, "msgs", H5T_NATIVE_UINT64, sizeof(uint64_t),
                         &msgs, &n[2], 1);
    rc = rc ? rc
            : table_read(r, g, "bytes", H5T_NATIVE_UINT64, sizeof(uint64_t),
                         &bytes, &n[3], 1);
    if (!rc && (n[1] != n[0] || n[2] != n[0] || n[3] != n[0]))
        rc = mc_errinfo_set(r->err, MC_ESUMMARY, r->path, -1, -1,
                            "matrix columns differ in length");
    if (!rc) {
        s->edges = calloc(n[0] ? n[0] : 1, sizeof *s->edges);
        if (!s->edges)
            rc = nomem(r, "matrix");
    }
    for (size_t i = 0; !rc && i < n[0]; i++) {
        s->edges[i].src = ((const int32_t *)src)[i];
        s->edges[i].dst = ((const int32_t *)dst)[i];
        s->edges[i].msgs = ((const uint64_t *)msgs)[i];
        s->edges[i].bytes = ((const uint64_t *)bytes)[i];
    }
    if (!rc)
        s->nedges = n[0];
    free(src);
    free(dst);
    free(msgs);
    free(bytes);
    H5Gclose(g);
    return rc;
}

int mc_summary_read(const char *path, mc_summary **out, mc_errinfo *err)
{
    if (!path || !out)
        return mc_errinfo_set(err, MC_EINVAL, path, -1, -1, NULL);
    *out = NULL;
    if (access(path, R_OK) != 0)
        return mc_errinfo_set(err, MC_EOPEN, path, -1, -1, NULL);

    H5E_auto2_t old_fn = NULL;
    void *old_data = NULL;
    H5Eget_auto2(H5E_DEFAULT, &old_fn, &old_data);
    H5Eset_auto2(H5E_DEFAULT, NULL, NULL);

    rctx r = {path, err};
    int rc = 0;
    mc_summary *s = NULL;
    hid_t f = -1;
    if (H5Fis_hdf5(path) <= 0) {
        rc = mc_errinfo_set(err, MC_ESUMMARY, path, -1, -1, "not an HDF5 file");
        goto out;
    }
    f = H5Fopen(path, H5F_ACC_RDONLY, H5P_DEFAULT);
    if (f < 0) {
        rc = mc_errinfo_set(err, MC_EHDF5, path, -1, -1, "cannot open");
        goto out;
    }
    s = calloc(1, sizeof *s);
    if (!s) {
        rc = nomem(&r, "summary");
        goto out;
    }
    rc = read_meta(&r, f, &s->meta);
    /* Shareable copies may leave out the sources, per-rank and matrix
     * tables; their absence is recorded, not an error. */
    if (!rc && H5Lexists(f, "sources", H5P_DEFAULT) <= 0)
        s->omitted |= MC_OMIT_SOURCES;
    else
        rc = rc ? rc : read_sources(&r, f, s);
    rc = rc ? rc : read_pops(&r, f, s);
    if (!rc && H5Lexists(f, "ranks", H5P_DEFAULT) <= 0)
        s->omitted |= MC_OMIT_RANKS;
    else
        rc = rc ? rc : read_ranks(&r, f, s);
    if (!rc && H5Lexists(f, "matrix", H5P_DEFAULT) <= 0)
        s->omitted |= MC_OMIT_MATRIX;
    else
        rc = rc ? rc : read_matrix(&r, f, s);
out:
    if (f >= 0)
        H5Fclose(f);
    H5Eset_auto2(H5E_DEFAULT, old_fn, old_data);
    if (rc) {
        mc_summary_free(s);
        return rc;
    }
    *out = s;
    return 0;
}

const mc_summary_pop *mc_summary_find_pop(const mc_summary *s, const char *name)
{
    if (!s || !name)
        return NULL;
    for (size_t i = 0; i < s->npops; i++)
        if (s->pops[i].name && !strcmp(s->pops[i].name, name))
            return &s->pops[i];
    return NULL;
}

void mc_summary_free(mc_summary *s)
{
    if (!s)
        return;
    mc_summary_meta *m = &s->meta;
    free(m->format_name);
    free(m->tool_version);
    free(m->created);
    free(m->campaign_path);
    free(m->run_label);
    free(m->host);
    free(m->shared_note);
    for (size_t i = 0; i < s->nsources; i++) {
        free(s->sources[i].path);
        free(s->sources[i].status);
    }
    free(s->sources);
    for (size_t i = 0; i < s->npops; i++) {
        mc_summary_pop *p = &s->pops[i];
        free(p->name);
        free_const(p->hist.sizes);
        free_const(p->hist.counts);
        free(p->top);
        free(p->peaks);
    }
    free(s->pops);
    free(s->ranks);
    free(s->edges);
    free(s);
}
