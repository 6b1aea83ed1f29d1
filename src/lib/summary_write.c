/* summary_write.c - write a summary model to an HDF5 file (serial HDF5,
 * layout v1 of docs/summary-format.md). */
#include "summary_internal.h"
#include "fdio.h" /* mc__write_all */

#include <errno.h>    /* errno */
#include <fcntl.h>    /* open */
#include <stdlib.h>   /* calloc, free */
#include <string.h>   /* strlen, memcpy */
#include <sys/stat.h> /* stat: refuse an existing target */
#include <unistd.h>   /* fsync, close, unlink */

/* Rows per chunk of the 1-D datasets; chunks of at most this many rows keep
 * small datasets small and large ones compressible. */
#define CHUNK_ROWS 16384u

/* Everything one write needs to report a failure. */
typedef struct wctx {
    const char *path;
    mc_errinfo *err;
    int failed;
} wctx;

static int fail(wctx *w, const char *what)
{
    if (!w->failed)
        mc_errinfo_set(w->err, MC_EHDF5, w->path, -1, -1, "cannot write %s",
                       what);
    w->failed = 1;
    return MC_EHDF5;
}

/* ---- attributes ------------------------------------------------------- */

static int attr_write(wctx *w, hid_t loc, const char *name, hid_t type,
                      hid_t space, const void *data)
{
    const hid_t a =
        H5Acreate2(loc, name, type, space, H5P_DEFAULT, H5P_DEFAULT);
    if (a < 0)
        return fail(w, name);
    const herr_t rc = H5Awrite(a, type, data);
    H5Aclose(a);
    return rc < 0 ? fail(w, name) : 0;
}

static int attr_scalar(wctx *w, hid_t loc, const char *name, hid_t type,
                       const void *data)
{
    const hid_t sp = H5Screate(H5S_SCALAR);
    if (sp < 0)
        return fail(w, name);
    const int rc = attr_write(w, loc, name, type, sp, data);
    H5Sclose(sp);
    return rc;
}

static int attr_str(wctx *w, hid_t loc, const char *name, const char *value)
{
    const char *v = value ? value : "";
    const hid_t t = H5Tcopy(H5T_C_S1);
    if (t < 0)
        return fail(w, name);
    int rc = MC_EHDF5;
    if (H5Tset_size(t, H5T_VARIABLE) >= 0 && H5Tset_cset(t, H5T_CSET_UTF8) >= 0)
        rc = attr_scalar(w, loc, name, t, &v);
    else
        fail(w, name);
    H5Tclose(t);
    return rc;
}

static int attr_f64_array(wctx *w, hid_t loc, const char *name, const double *v,
                          size_t n)
{
    const hsize_t dims[1] = {n};
    const hid_t sp = H5Screate_simple(1, dims, NULL);
    if (sp < 0)
        return fail(w, name);
    const int rc = attr_write(w, loc, name, H5T_NATIVE_DOUBLE, sp, v);
    H5Sclose(sp);
    return rc;
}

/* ---- datasets --------------------------------------------------------- */

/* A chunked, deflate-compressed 1-D dataset of @n rows of @type. The
 * dataset keeps no modification times, so equal content gives equal files
 * apart from the root attributes. */
static int table_write(wctx *w, hid_t loc, const char *name, hid_t type,
                       size_t n, const void *rows)
{
    const hsize_t dims[1] = {n};
    const hsize_t maxdims[1] = {H5S_UNLIMITED};
    hsize_t chunk[1] = {n < CHUNK_ROWS ? (n ? n : 1) : CHUNK_ROWS};
    int rc = MC_EHDF5;
    hid_t sp = -1, dcpl = -1, d = -1;
    sp = H5Screate_simple(1, dims, maxdims);
    dcpl = H5Pcreate(H5P_DATASET_CREATE);
    if (sp < 0 || dcpl < 0 || H5Pset_chunk(dcpl, 1, chunk) < 0 ||
        H5Pset_shuffle(dcpl) < 0 || H5Pset_deflate(dcpl, 6) < 0 ||
        H5Pset_obj_track_times(dcpl, 0) < 0)
        goto out;
    d = H5Dcreate2(loc, name, type, sp, H5P_DEFAULT, dcpl, H5P_DEFAULT);
    if (d < 0)
        goto out;
    if (n > 0 && H5Dwrite(d, type, H5S_ALL, H5S_ALL, H5P_DEFAULT, rows) < 0)
        goto out;
    rc = 0;
out:
    if (d >= 0)
        H5Dclose(d);
    if (dcpl >= 0)
        H5Pclose(dcpl);
    if (sp >= 0)
        H5Sclose(sp);
    return rc ? fail(w, name) : 0;
}

/* A group without time stamps; @ordered tracks link creation order. */
static hid_t group_create(wctx *w, hid_t loc, const char *name, int ordered)
{
    hid_t g = -1;
    const hid_t gcpl = H5Pcreate(H5P_GROUP_CREATE);
    if (gcpl >= 0 && H5Pset_obj_track_times(gcpl, 0) >= 0 &&
        (!ordered ||
         H5Pset_link_creation_order(gcpl, H5P_CRT_ORDER_TRACKED |
                                              H5P_CRT_ORDER_INDEXED) >= 0))
        g = H5Gcreate2(loc, name, H5P_DEFAULT, gcpl, H5P_DEFAULT);
    if (gcpl >= 0)
        H5Pclose(gcpl);
    if (g < 0)
        fail(w, name);
    return g;
}

/* ---- parts of the file ------------------------------------------------ */

static int write_meta(wctx *w, hid_t root, const mc_summary_meta *m)
{
    const int32_t vmaj = m->version_major, vmin = m->version_minor;
    const int32_t approx = m->approximate;
    int rc = 0;
    rc = rc ? rc : attr_str(w, root, "format_name", m->format_name);
    rc = rc ? rc
            : attr_scalar(w, root, "format_version_major", H5T_NATIVE_INT32,
                          &vmaj);
    rc = rc ? rc
            : attr_scalar(w, root, "format_version_minor", H5T_NATIVE_INT32,
                          &vmin);
    rc = rc ? rc : attr_str(w, root, "tool_version", m->tool_version);
    rc = rc ? rc : attr_str(w, root, "created", m->created);
    rc = rc ? rc : attr_str(w, root, "campaign_path", m->campaign_path);
    rc = rc ? rc : attr_str(w, root, "run_label", m->run_label);
    rc = rc ? rc : attr_str(w, root, "host", m->host);
    rc =
        rc ? rc
           : attr_scalar(w, root, "app_ranks", H5T_NATIVE_INT64, &m->app_ranks);
    rc = rc ? rc
            : attr_scalar(w, root, "reducer_ranks", H5T_NATIVE_INT64,
                          &m->reducer_ranks);
    rc = rc ? rc : attr_scalar(w, root, "files", H5T_NATIVE_INT64, &m->files);
    rc = rc ? rc
            : attr_scalar(w, root, "records_read", H5T_NATIVE_UINT64,
                          &m->records_read);
    rc = rc ? rc
            : attr_scalar(w, root, "records_rejected", H5T_NATIVE_UINT64,
                          &m->records_rejected);
    rc = rc ? rc
            : attr_scalar(w, root, "bytes_read", H5T_NATIVE_UINT64,
                          &m->bytes_read);
    rc = rc ? rc
            : attr_scalar(w, root, "elapsed_seconds", H5T_NATIVE_DOUBLE,
                          &m->elapsed_s);
    rc = rc ? rc : attr_str(w, root, "shared_note", m->shared_note);
    rc = rc ? rc
            : attr_scalar(w, root, "approximate", H5T_NATIVE_INT32, &approx);
    return rc;
}

static int write_sources(wctx *w, hid_t root, const mc_summary *s)
{
    mc__source_row *rows = calloc(s->nsources ? s->nsources : 1, sizeof *rows);
    if (!rows)
        return mc_errinfo_set(w->err, MC_ENOMEM, w->path, -1, -1,
                              "sources table");
    for (size_t i = 0; i < s->nsources; i++) {
        const mc_summary_source *src = &s->sources[i];
        rows[i].path = src->path ? src->path : "";
        rows[i].app_rank = src->app_rank;
        rows[i].bytes = src->bytes;
        rows[i].records = src->records;
        rows[i].blocks = src->blocks;
        rows[i].skipped_blocks = src->skipped_blocks;
        rows[i].skipped_records = src->skipped_records;
        rows[i].checksum = src->checksum;
        rows[i].status = src->status ? src->status : "";
    }
    int rc = MC_EHDF5;
    const hid_t t = mc__h5_source_type();
    if (t >= 0)
        rc = table_write(w, root, "sources", t, s->nsources, rows);
    else
        fail(w, "sources");
    if (t >= 0)
        H5Tclose(t);
    free(rows);
    return rc;
}

/* Set one stats row. */
static void stat_row(mc__stat_row *r, const char *metric, int kind,
                     double value, uint64_t exact)
{
    memset(r, 0, sizeof *r);
    const size_t n = strlen(metric);
    memcpy(r->metric, metric, n < MC__METRIC_LEN ? n : MC__METRIC_LEN - 1);
    r->kind = kind;
    r->value = value;
    r->exact = exact;
}

/* The stats table of one population (docs/summary-format.md, "stats"). */
static size_t build_stats(const mc_summary_pop *p, mc__stat_row *rows)
{
    const mc_stats *st = &p->stats;
    size_t n = 0;
#define COUNT_ROW(field)                                                       \
    stat_row(&rows[n++], #field, MC__KIND_COUNT, (double)st->field, st->field)
    COUNT_ROW(count);
    COUNT_ROW(zero_count);
    COUNT_ROW(distinct);
    COUNT_ROW(total_bytes);
    COUNT_ROW(positive_count);
    COUNT_ROW(mode_count);
#undef COUNT_ROW
    stat_row(&rows[n++], "mode_ties", MC__KIND_COUNT, (double)st->mode_ties,
             (uint64_t)st->mode_ties);
    stat_row(&rows[n++], "min", MC__KIND_SIZE, (double)st->min, st->min);
    stat_row(&rows[n++], "max", MC__KIND_SIZE, (double)st->max, st->max);
    for (int c = 0; c < MC_NCENTERS; c++) {
        const mc_center_fit *f = &p->fitness.fit[c];
        mc__stat_row *r = &rows[n++];
        stat_row(r, mc_center_name((mc_center)c), MC__KIND_CENTER, f->value,
                 c == MC_CENTER_MODE ? st->mode : 0);
        r->mad = f->mad;
        r->rel_mad = f->rel_mad;
        r->rank = f->defined ? f->rank : 0;
    }
    stat_row(&rows[n++], "hinge_lo", MC__KIND_REAL, st->hinge_lo, 0);
    stat_row(&rows[n++], "hinge_hi", MC__KIND_REAL, st->hinge_hi, 0);
    stat_row(&rows[n++], "stddev", MC__KIND_REAL, st->stddev, 0);
    stat_row(&rows[n++], "byte_median", MC__KIND_REAL, st->byte_median, 0);
    stat_row(&rows[n++], "mad_ratio_mean", MC__KIND_REAL,
             p->fitness.mad_ratio_mean, 0);
    return n;
}

#define MAX_STAT_ROWS (16 + MC_NCENTERS)

static int write_pop(wctx *w, hid_t pops, const mc_summary_pop *p)
{
    char gname[512];
    if (mc__pop_group_name(p->name, gname, sizeof gname) != 0)
        return mc_errinfo_set(w->err, MC_EINVAL, w->path, -1, -1,
                              "population name '%s' is not allowed", p->name);
    const hid_t g = group_create(w, pops, gname, 0);
    if (g < 0)
        return MC_EHDF5;
    int rc = attr_str(w, g, "name", p->name);
    rc = rc ? rc
            : table_write(w, g, "hist_sizes", H5T_NATIVE_UINT64, p->hist.k,
                          p->hist.sizes);
    rc = rc ? rc
            : table_write(w, g, "hist_counts", H5T_NATIVE_UINT64, p->hist.k,
                          p->hist.counts);
    hid_t t = -1;
    if (!rc) {
        mc__stat_row rows[MAX_STAT_ROWS];
        const size_t n = build_stats(p, rows);
        t = mc__h5_stat_type();
        rc = t < 0 ? fail(w, "stats") : table_write(w, g, "stats", t, n, rows);
        if (t >= 0)
            H5Tclose(t);
    }
    if (!rc) {
        mc__quantile_row q[MC_NQUANTILES];
        for (int i = 0; i < MC_NQUANTILES; i++) {
            q[i].level = mc_quantile_levels[i];
            q[i].value = p->stats.quantiles[i];
            q[i].byte_value = p->stats.byte_quantiles[i];
        }
        t = mc__h5_quantile_type();
        rc = t < 0 ? fail(w, "quantiles")
                   : table_write(w, g, "quantiles", t, MC_NQUANTILES, q);
        if (t >= 0)
            H5Tclose(t);
    }
    if (!rc) {
        t = mc__h5_top_type();
        rc = t < 0 ? fail(w, "modes")
                   : table_write(w, g, "modes", t, p->ntop, p->top);
        if (t >= 0)
            H5Tclose(t);
    }
    if (!rc) {
        t = mc__h5_peak_type();
        rc = t < 0 ? fail(w, "peaks")
                   : table_write(w, g, "peaks", t, p->npeaks, p->peaks);
        if (t >= 0)
            H5Tclose(t);
    }
    if (!rc) {
        const mc_gmm *m = &p->gmm;
        mc__mixture_row mix[MC_GMM_MAX];
        const int nc =
            m->ncomp < 0 ? 0 : (m->ncomp > MC_GMM_MAX ? MC_GMM_MAX : m->ncomp);
        for (int i = 0; i < nc; i++) {
            mix[i].weight = m->weight[i];
            mix[i].mu = m->mu[i];
            mix[i].sigma = m->sigma[i];
            mix[i].center = m->center[i];
        }
        t = mc__h5_mixture_type();
        rc = t < 0 ? fail(w, "mixture")
                   : table_write(w, g, "mixture", t, (size_t)nc, mix);
        if (t >= 0)
            H5Tclose(t);
        if (!rc) {
            const hid_t d = H5Dopen2(g, "mixture", H5P_DEFAULT);
            const int32_t ncomp = nc, iters = m->iterations;
            if (d < 0)
                rc = fail(w, "mixture");
            rc = rc ? rc : attr_scalar(w, d, "ncomp", H5T_NATIVE_INT32, &ncomp);
            rc =
                rc ? rc
                   : attr_scalar(w, d, "loglik", H5T_NATIVE_DOUBLE, &m->loglik);
            rc = rc ? rc : attr_scalar(w, d, "bic", H5T_NATIVE_DOUBLE, &m->bic);
            rc = rc ? rc
                    : attr_f64_array(w, d, "bic_by_k", m->bic_by_k, MC_GMM_MAX);
            rc = rc ? rc
                    : attr_scalar(w, d, "excluded_zero", H5T_NATIVE_UINT64,
                                  &m->excluded_zero);
            rc = rc ? rc
                    : attr_scalar(w, d, "iterations", H5T_NATIVE_INT32, &iters);
            if (d >= 0)
                H5Dclose(d);
        }
    }
    H5Gclose(g);
    return rc;
}

static int write_ranks(wctx *w, hid_t root, const mc_summary *s)
{
    const hid_t t = mc__h5_rank_type();
    if (t < 0)
        return fail(w, "ranks");
    const int rc = table_write(w, root, "ranks", t, s->nranks, s->ranks);
    H5Tclose(t);
    return rc;
}

static int write_matrix(wctx *w, hid_t root, const mc_summary *s)
{
    const size_t n = s->nedges;
    int32_t *src = calloc(n ? n : 1, sizeof *src);
    int32_t *dst = calloc(n ? n : 1, sizeof *dst);
    uint64_t *msgs = calloc(n ? n : 1, sizeof *msgs);
    uint64_t *bytes = calloc(n ? n : 1, sizeof *bytes);
    int rc = 0;
    if (!src || !dst || !msgs || !bytes) {
        rc = mc_errinfo_set(w->err, MC_ENOMEM, w->path, -1, -1, "matrix");
        goto out;
    }
    for (size_t i = 0; i < n; i++) {
        src[i] = s->edges[i].src;
        dst[i] = s->edges[i].dst;
        msgs[i] = s->edges[i].msgs;
        bytes[i] = s->edges[i].bytes;
    }
    const hid_t g = group_create(w, root, "matrix", 0);
    if (g < 0) {
        rc = MC_EHDF5;
        goto out;
    }
    rc = table_write(w, g, "src", H5T_NATIVE_INT32, n, src);
    rc = rc ? rc : table_write(w, g, "dst", H5T_NATIVE_INT32, n, dst);
    rc = rc ? rc : table_write(w, g, "msgs", H5T_NATIVE_UINT64, n, msgs);
    rc = rc ? rc : table_write(w, g, "bytes", H5T_NATIVE_UINT64, n, bytes);
    H5Gclose(g);
out:
    free(src);
    free(dst);
    free(msgs);
    free(bytes);
    return rc;
}

/* Write the finished file image to @path, created here (it must not
 * exist), and make it durable. On failure nothing is left at @path. */
static int write_image(const char *path, const unsigned char *img, size_t len,
                       mc_errinfo *err)
{
    const int fd = open(path, O_WRONLY | O_CREAT | O_EXCL | O_CLOEXEC, 0644);
    if (fd < 0) {
        const int e = errno;
        mc_errinfo_set(err, e == EEXIST ? MC_EEXIST : MC_EOPEN, path, -1, -1,
                       "cannot create file");
        if (err)
            err->sys_errno = e;
        return e == EEXIST ? MC_EEXIST : MC_EOPEN;
    }
    size_t done = 0;
    int e = mc__write_all(fd, img, len, &done);
    if (!e && fsync(fd) != 0)
        e = errno;
    if (close(fd) != 0 && !e)
        e = errno;
    if (!e)
        return 0;
    unlink(path);
    mc_errinfo_set(err, MC_EIO, path, -1, -1,
                   "write failed after %zu of %zu bytes", done, len);
    if (err)
        err->sys_errno = e;
    return MC_EIO;
}

int mc_summary_write(const char *path, const mc_summary *s, mc_errinfo *err)
{
    if (!path || !s)
        return mc_errinfo_set(err, MC_EINVAL, path, -1, -1, "no summary");
    struct stat sb;
    if (stat(path, &sb) == 0)
        return mc_errinfo_set(err, MC_EEXIST, path, -1, -1, NULL);

    /* The library never prints: silence HDF5's error stack while we work. */
    H5E_auto2_t old_fn = NULL;
    void *old_data = NULL;
    H5Eget_auto2(H5E_DEFAULT, &old_fn, &old_data);
    H5Eset_auto2(H5E_DEFAULT, NULL, NULL);

    wctx w = {path, err, 0};
    int rc = 0;
    hid_t f = -1, pops = -1;
    unsigned char *img = NULL;
    ssize_t len = 0;
    const hid_t fcpl = H5Pcreate(H5P_FILE_CREATE);
    if (fcpl >= 0)
        H5Pset_link_creation_order(fcpl, H5P_CRT_ORDER_TRACKED |
                                             H5P_CRT_ORDER_INDEXED);
    /* HDF5 builds the file in memory (the core driver without a backing
     * store) and write_image() puts it on disk. A full disk or an I/O error
     * is then a write() of ours that fails with errno, never a failed
     * H5Fclose(): that leaves the file open inside HDF5, which then
     * crashed at MPI_Finalize (seen on a full tmpfs). The image costs
     * memory of the size of the file, which is compressed and small next
     * to the histograms it was made from. */
    const hid_t fapl = H5Pcreate(H5P_FILE_ACCESS);
    if (fapl >= 0 && H5Pset_fapl_core(fapl, (size_t)1 << 20, 0) >= 0)
        f = H5Fcreate(path, H5F_ACC_EXCL, fcpl >= 0 ? fcpl : H5P_DEFAULT, fapl);
    if (fcpl >= 0)
        H5Pclose(fcpl);
    if (fapl >= 0)
        H5Pclose(fapl);
    if (f < 0) {
        rc = mc_errinfo_set(err, MC_EHDF5, path, -1, -1,
                            "cannot create the file in memory");
        goto out;
    }
    rc = write_meta(&w, f, &s->meta);
    if (!(s->omitted & MC_OMIT_SOURCES))
        rc = rc ? rc : write_sources(&w, f, s);
    if (!rc) {
        pops = group_create(&w, f, "populations", 1);
        if (pops < 0)
            rc = MC_EHDF5;
    }
    for (size_t i = 0; !rc && i < s->npops; i++)
        rc = write_pop(&w, pops, &s->pops[i]);
    if (!(s->omitted & MC_OMIT_RANKS))
        rc = rc ? rc : write_ranks(&w, f, s);
    if (!(s->omitted & MC_OMIT_MATRIX))
        rc = rc ? rc : write_matrix(&w, f, s);
    if (pops >= 0) {
        H5Gclose(pops);
        pops = -1;
    }
    if (!rc && H5Fflush(f, H5F_SCOPE_GLOBAL) < 0)
        rc = fail(&w, "file (flush)");
    if (!rc && (len = H5Fget_file_image(f, NULL, 0)) <= 0)
        rc = fail(&w, "file (image size)");
    if (!rc && !(img = malloc((size_t)len)))
        rc = mc_errinfo_set(err, MC_ENOMEM, path, -1, -1, "file image");
    if (!rc && H5Fget_file_image(f, img, (size_t)len) != len)
        rc = fail(&w, "file (image)");
out:
    if (pops >= 0)
        H5Gclose(pops);
    if (f >= 0 && H5Fclose(f) < 0 && !rc)
        rc = fail(&w, "file (close)");
    H5Eset_auto2(H5E_DEFAULT, old_fn, old_data);
    if (!rc)
        rc = write_image(path, img, (size_t)len, err);
    free(img);
    return rc;
}
