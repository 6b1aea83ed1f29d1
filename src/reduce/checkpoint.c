/* checkpoint.c - one self-checking file per finished unit of work, written
 * atomically, so a killed reduce resumes where it was (layout in
 * docs/summary-format.md, "Checkpoints"). */
#include "checkpoint.h"

#include <dirent.h>   /* opendir, readdir */
#include <errno.h>    /* errno, EEXIST, ENOENT */
#include <fcntl.h>    /* open, O_* */
#include <stdarg.h>   /* va_list */
#include <stdio.h>    /* snprintf, rename */
#include <stdlib.h>   /* malloc, calloc, free, bsearch */
#include <string.h>   /* memcmp, memcpy, strcmp, strlen */
#include <sys/stat.h> /* stat, mkdir */
#include <unistd.h>   /* read, write, fsync, close, unlink, rmdir, getpid */

#include <xxhash.h> /* XXH64: file names and the trailing checksum */

#define MAGIC "MCCKUNIT"
#define MAGIC_LEN 8u
#define PREFIX "mcck-"
#define SUFFIX ".ckpt"
#define TMP_PREFIX ".mcck-"
#define TMP_MARK ".tmp-"
#define NAME_MAX_LEN 4096u /* longest campaign file name accepted */
#define IOBUF (64u * 1024u)

/* Little-endian hosts store u64 arrays in file order already. */
#if defined(__BYTE_ORDER__) && __BYTE_ORDER__ == __ORDER_LITTLE_ENDIAN__
#define HOST_LE 1
#else
#define HOST_LE 0
#endif

/* ---- buffered output with a running XXH64 ------------------------------- */

typedef struct wout {
    int fd;
    int sys_errno; /* first failed write, 0 if none */
    XXH64_state_t *st;
    size_t n;
    unsigned char buf[IOBUF];
} wout;

static void w_flush(wout *w)
{
    size_t at = 0;
    while (at < w->n && !w->sys_errno) {
        const ssize_t k = write(w->fd, w->buf + at, w->n - at);
        if (k < 0 && errno == EINTR)
            continue;
        if (k <= 0)
            w->sys_errno = k < 0 ? errno : EIO;
        else
            at += (size_t)k;
    }
    w->n = 0;
}

static void w_bytes(wout *w, const void *p, size_t len)
{
    XXH64_update(w->st, p, len);
    const unsigned char *q = p;
    while (len) {
        if (w->n == IOBUF)
            w_flush(w);
        const size_t m = len < IOBUF - w->n ? len : IOBUF - w->n;
        memcpy(w->buf + w->n, q, m);
        w->n += m;
        q += m;
        len -= m;
    }
}

static void w_u32(wout *w, uint32_t v)
{
    unsigned char b[4];
    for (int i = 0; i < 4; i++)
        b[i] = (unsigned char)(v >> (8 * i));
    w_bytes(w, b, sizeof b);
}

static void w_u64(wout *w, uint64_t v)
{
    unsigned char b[8];
    for (int i = 0; i < 8; i++)
        b[i] = (unsigned char)(v >> (8 * i));
    w_bytes(w, b, sizeof b);
}

static void w_u64s(wout *w, const uint64_t *v, size_t n)
{
    if (HOST_LE) {
        w_bytes(w, v, n * sizeof *v);
        return;
    }
    for (size_t i = 0; i < n; i++)
        w_u64(w, v[i]);
}

/* ---- buffered input with a running XXH64 and a byte budget -------------- */

typedef struct rin {
    int fd;
    int failed;      /* MC_E* of the first problem, 0 if none */
    uint64_t remain; /* bytes before the trailer not yet consumed */
    XXH64_state_t *st;
    size_t pos, len;
    unsigned char buf[IOBUF];
} rin;

static int r_fill(rin *r)
{
    r->pos = 0;
    r->len = 0;
    for (;;) {
        const ssize_t k = read(r->fd, r->buf, IOBUF);
        if (k < 0 && errno == EINTR)
            continue;
        if (k <= 0)
            return k < 0 ? MC_EIO : MC_ETRUNC;
        r->len = (size_t)k;
        return 0;
    }
}

/* Copy @n bytes out; counts them against the budget and the checksum. */
static void r_bytes(rin *r, void *p, size_t n)
{
    unsigned char *q = p;
    if (r->failed || n > r->remain) {
        if (!r->failed)
            r->failed = MC_ETRUNC;
        memset(p, 0, n);
        return;
    }
    r->remain -= n;
    while (n) {
        if (r->pos == r->len) {
            const int rc = r_fill(r);
            if (rc) {
                r->failed = rc;
                memset(q, 0, n);
                return;
            }
        }
        const size_t m = n < r->len - r->pos ? n : r->len - r->pos;
        memcpy(q, r->buf + r->pos, m);
        XXH64_update(r->st, q, m);
        r->pos += m;
        q += m;
        n -= m;
    }
}

static uint32_t r_u32(rin *r)
{
    unsigned char b[4];
    r_bytes(r, b, sizeof b);
    uint32_t v = 0;
    for (int i = 3; i >= 0; i--)
        v = (v << 8) | b[i];
    return v;
}

static uint64_t r_u64(rin *r)
{
    unsigned char b[8];
    r_bytes(r, b, sizeof b);
    uint64_t v = 0;
    for (int i = 7; i >= 0; i--)
        v = (v << 8) | b[i];
    return v;
}

static void r_u64s(rin *r, uint64_t *v, size_t n)
{
    r_bytes(r, v, n * sizeof *v);
    if (!HOST_LE) {
        for (size_t i = 0; i < n; i++) {
            const unsigned char *b = (const unsigned char *)&v[i];
            uint64_t x = 0;
            for (int j = 7; j >= 0; j--)
                x = (x << 8) | b[j];
            v[i] = x;
        }
    }
}

/* Open @path for reading; the budget is its size minus the trailer. */
static int r_open(rin *r, const char *path, mc_errinfo *err)
{
    memset(r, 0, offsetof(rin, buf));
    r->fd = open(path, O_RDONLY | O_CLOEXEC);
    struct stat sb;
    if (r->fd < 0 || fstat(r->fd, &sb) != 0) {
        const int e = errno;
        if (r->fd >= 0)
            close(r->fd);
        r->fd = -1;
        mc_errinfo_set(err, MC_EOPEN, path, -1, -1, "cannot open checkpoint");
        if (err)
            err->sys_errno = e;
        return MC_EOPEN;
    }
    r->st = XXH64_createState();
    if (!r->st) {
        close(r->fd);
        r->fd = -1;
        return mc_errinfo_set(err, MC_ENOMEM, path, -1, -1, "checksum state");
    }
    XXH64_reset(r->st, 0);
    r->remain = (uint64_t)sb.st_size >= 8 ? (uint64_t)sb.st_size - 8 : 0;
    if ((uint64_t)sb.st_size < 8)
        r->failed = MC_ETRUNC;
    return 0;
}

static void r_close(rin *r)
{
    if (r->fd >= 0)
        close(r->fd);
    XXH64_freeState(r->st);
    r->fd = -1;
    r->st = NULL;
}

/* ---- header: magic, version and the unit's fingerprint ------------------- */

static void write_key(wout *w, const mc__ckpt_key *k)
{
    const size_t nl = strlen(k->name);
    w_bytes(w, MAGIC, MAGIC_LEN);
    w_u32(w, MC__CKPT_VERSION);
    w_u32(w, (uint32_t)MC__NOPKEYS);
    w_u64(w, k->file_size);
    w_u64(w, (uint64_t)k->mtime_ns);
    w_u64(w, k->first_block);
    w_u64(w, k->nblocks);
    w_u64(w, k->bytes);
    w_u64(w, k->start_offset);
    w_u32(w, (uint32_t)k->app_rank);
    w_u32(w, (uint32_t)k->app_size);
    w_u32(w, k->flags);
    w_u32(w, (uint32_t)nl);
    w_bytes(w, k->name, nl);
}

/* Read the header into @k, its name into @name (NAME_MAX_LEN + 1 bytes). */
static int read_key(rin *r, mc__ckpt_key *k, char *name, const char *path,
                    mc_errinfo *err)
{
    char magic[MAGIC_LEN];
    r_bytes(r, magic, sizeof magic);
    if (r->failed)
        return mc_errinfo_set(err, r->failed, path, -1, 0, "checkpoint header");
    if (memcmp(magic, MAGIC, MAGIC_LEN) != 0)
        return mc_errinfo_set(err, MC_EMAGIC, path, -1, 0,
                              "not a msgcensus checkpoint");
    const uint32_t version = r_u32(r), nkeys = r_u32(r);
    if (!r->failed && version != MC__CKPT_VERSION)
        return mc_errinfo_set(err, MC_EVERSION, path, -1, 8,
                              "checkpoint version %u, this build reads %u",
                              (unsigned)version, (unsigned)MC__CKPT_VERSION);
    if (!r->failed && nkeys != MC__NOPKEYS)
        return mc_errinfo_set(err, MC_EVERSION, path, -1, 12,
                              "checkpoint of a build with another operation "
                              "table (%u keys, this build has %u)",
                              (unsigned)nkeys, (unsigned)MC__NOPKEYS);
    k->file_size = r_u64(r);
    k->mtime_ns = (int64_t)r_u64(r);
    k->first_block = r_u64(r);
    k->nblocks = r_u64(r);
    k->bytes = r_u64(r);
    k->start_offset = r_u64(r);
    k->app_rank = (int32_t)r_u32(r);
    k->app_size = (int32_t)r_u32(r);
    k->flags = r_u32(r);
    const uint32_t nl = r_u32(r);
    if (!r->failed && (nl == 0 || nl > NAME_MAX_LEN))
        return mc_errinfo_set(err, MC_ERANGE, path, -1, 76,
                              "file name length %u", (unsigned)nl);
    r_bytes(r, name, r->failed ? 0 : nl);
    name[r->failed ? 0 : nl] = '\0';
    if (r->failed)
        return mc_errinfo_set(err, r->failed, path, -1, -1,
                              "checkpoint header");
    if (strlen(name) != nl)
        return mc_errinfo_set(err, MC_ERANGE, path, -1, 80,
                              "file name holds a NUL byte");
    k->name = name;
    return 0;
}

/* The first field in which @a and @b differ, or NULL. */
static const char *key_diff(const mc__ckpt_key *a, const mc__ckpt_key *b)
{
    if (strcmp(a->name, b->name) != 0)
        return "campaign file name";
    if (a->file_size != b->file_size)
        return "file size";
    if (a->mtime_ns != b->mtime_ns)
        return "modification time";
    if (a->app_rank != b->app_rank || a->app_size != b->app_size)
        return "application rank";
    if (a->first_block != b->first_block || a->nblocks != b->nblocks ||
        a->bytes != b->bytes || a->start_offset != b->start_offset)
        return "block range";
    if (a->flags != b->flags)
        return "options (--per-comm, --skip-damaged)";
    return NULL;
}

void mc__ckpt_file_name(const mc__ckpt_key *k, char *buf, size_t cap)
{
    XXH64_state_t *st = XXH64_createState();
    uint64_t h = 0;
    if (st) {
        unsigned char b[16];
        for (int i = 0; i < 8; i++) {
            b[i] = (unsigned char)(k->first_block >> (8 * i));
            b[8 + i] = (unsigned char)(k->nblocks >> (8 * i));
        }
        XXH64_reset(st, 0);
        XXH64_update(st, k->name, strlen(k->name) + 1);
        XXH64_update(st, b, sizeof b);
        h = XXH64_digest(st);
        XXH64_freeState(st);
    } else {
        /* Without memory for the state: the one-shot form of the name. */
        h = XXH64(k->name, strlen(k->name), k->first_block ^ k->nblocks);
    }
    snprintf(buf, cap, PREFIX "%016llx" SUFFIX, (unsigned long long)h);
}

/* ---- save ---------------------------------------------------------------- */

static int fsync_dir(const char *dir)
{
    const int fd = open(dir, O_RDONLY | O_CLOEXEC);
    if (fd < 0)
        return -1;
    const int rc = fsync(fd);
    close(fd);
    return rc;
}

static size_t count_hists(const mc__acc *acc)
{
    size_t n = 0;
    for (size_t k = 0; k < MC__NOPKEYS; k++)
        n += acc->op[k] != NULL;
    return n + acc->comm.n;
}

static int write_hist(wout *w, uint32_t kind, uint32_t key, mc_hist *h)
{
    mc_hview v;
    const int rc = mc_hist_sorted(h, &v);
    if (rc)
        return rc;
    w_u32(w, kind);
    w_u32(w, key);
    w_u64(w, v.k);
    w_u64s(w, v.sizes, v.k);
    w_u64s(w, v.counts, v.k);
    return 0;
}

static int write_body(wout *w, mc__acc *acc, const mc__unit_result *res)
{
    const uint64_t f[9] = {res->records,
                           res->blocks,
                           res->skipped_blocks,
                           res->skipped_records,
                           res->invalid,
                           res->bytes,
                           (uint64_t)res->damage_code,
                           (uint64_t)res->damage_block,
                           (uint64_t)res->tail_lost};
    for (size_t i = 0; i < 9; i++)
        w_u64(w, f[i]);
    w_u64(w, res->nsums);
    w_u64s(w, res->sums, res->nsums);
    w_u64(w, count_hists(acc));
    int rc = 0;
    for (size_t k = 0; k < MC__NOPKEYS && !rc; k++)
        if (acc->op[k])
            rc = write_hist(w, 0, (uint32_t)k, acc->op[k]);
    for (size_t i = 0; i < acc->comm.cap && !rc; i++)
        if (acc->comm.vals[i])
            rc = write_hist(w, 1, acc->comm.keys[i], acc->comm.vals[i]);
    if (rc)
        return rc;
    w_u64(w, acc->nrows);
    for (size_t i = 0; i < acc->nrows; i++) {
        w_u32(w, (uint32_t)acc->rows[i].rank);
        w_u32(w, 0);
        w_u64s(w, acc->rows[i].v, 8);
    }
    w_u64(w, acc->nedges);
    for (size_t i = 0; i < acc->nedges; i++) {
        w_u32(w, (uint32_t)acc->edges[i].src);
        w_u32(w, (uint32_t)acc->edges[i].dst);
        w_u64(w, acc->edges[i].msgs);
        w_u64(w, acc->edges[i].bytes);
    }
    return 0;
}

int mc__ckpt_save(const char *dir, const mc__ckpt_key *k, mc__acc *acc,
                  const mc__unit_result *res, mc_errinfo *err)
{
    char name[64], path[4096], tmp[4096];
    mc__ckpt_file_name(k, name, sizeof name);
    snprintf(path, sizeof path, "%s/%s", dir, name);
    snprintf(tmp, sizeof tmp, "%s/" TMP_PREFIX "%s" TMP_MARK "%ld", dir,
             name + strlen(PREFIX), (long)getpid());
    wout *w = malloc(sizeof *w);
    if (!w)
        return mc_errinfo_set(err, MC_ENOMEM, path, -1, -1, "checkpoint");
    w->n = 0;
    w->sys_errno = 0;
    w->st = XXH64_createState();
    w->fd = open(tmp, O_WRONLY | O_CREAT | O_TRUNC | O_CLOEXEC, 0644);
    int rc = 0;
    const char *what = "cannot create the temporary checkpoint";
    if (w->fd < 0 || !w->st) {
        rc = w->fd < 0 ? MC_EOPEN : MC_ENOMEM;
        w->sys_errno = w->fd < 0 ? errno : 0;
        goto out;
    }
    XXH64_reset(w->st, 0);
    write_key(w, k);
    rc = write_body(w, acc, res);
    what = "cannot write the checkpoint";
    if (rc)
        goto out;
    /* The trailer: XXH64 of everything before it, outside the hash. */
    const uint64_t sum = XXH64_digest(w->st);
    unsigned char b[8];
    for (int i = 0; i < 8; i++)
        b[i] = (unsigned char)(sum >> (8 * i));
    if (w->n + sizeof b > IOBUF)
        w_flush(w);
    memcpy(w->buf + w->n, b, sizeof b);
    w->n += sizeof b;
    w_flush(w);
    if (!w->sys_errno && fsync(w->fd) != 0)
        w->sys_errno = errno;
    if (close(w->fd) != 0 && !w->sys_errno)
        w->sys_errno = errno;
    w->fd = -1;
    if (w->sys_errno) {
        rc = MC_EIO;
        goto out;
    }
    what = "cannot move the checkpoint into place";
    if (rename(tmp, path) != 0) {
        w->sys_errno = errno;
        rc = MC_EIO;
        goto out;
    }
    /* Without this the rename may be lost in a crash; the unit would then
     * be read again, which is safe but slow. */
    what = "cannot sync the checkpoint directory";
    if (fsync_dir(dir) != 0) {
        w->sys_errno = errno;
        rc = MC_EIO;
    }
out:
    if (w->fd >= 0)
        close(w->fd);
    if (rc) {
        unlink(tmp); /* gone already when only the directory sync failed */
        mc_errinfo_set(err, rc, path, -1, -1, "%s", what);
        if (err)
            err->sys_errno = w->sys_errno;
    }
    XXH64_freeState(w->st);
    free(w);
    return rc;
}

/* ---- load ---------------------------------------------------------------- */

static int read_hists(rin *r, mc__acc *acc, const char *path, mc_errinfo *err)
{
    const uint64_t nh = r_u64(r);
    if (!r->failed && nh > r->remain / 16)
        return mc_errinfo_set(err, MC_ERANGE, path, -1, -1,
                              "%llu histograms in a file of this size",
                              (unsigned long long)nh);
    for (uint64_t i = 0; i < nh && !r->failed; i++) {
        const uint32_t kind = r_u32(r), key = r_u32(r);
        const uint64_t k = r_u64(r);
        if (r->failed)
            break;
        if (k > r->remain / 16)
            return mc_errinfo_set(err, MC_ERANGE, path, -1, -1,
                                  "histogram of %llu sizes in a file of "
                                  "this size",
                                  (unsigned long long)k);
        mc_hist *h = NULL;
        if (kind == 0 && key < MC__NOPKEYS && !acc->op[key]) {
            if (mc_hist_create(&acc->op[key]) != 0)
                return mc_errinfo_set(err, MC_ENOMEM, path, -1, -1,
                                      "histogram");
            h = acc->op[key];
        } else if (kind == 1) {
            const size_t before = acc->comm.n;
            h = mc__histmap_get(&acc->comm, key);
            if (!h)
                return mc_errinfo_set(err, MC_ENOMEM, path, -1, -1,
                                      "histogram");
            if (acc->comm.n == before)
                return mc_errinfo_set(err, MC_ERANGE, path, -1, -1,
                                      "communicator %u twice", (unsigned)key);
        } else {
            return mc_errinfo_set(err, MC_ERANGE, path, -1, -1,
                                  "histogram kind %u key %u", (unsigned)kind,
                                  (unsigned)key);
        }
        uint64_t *sizes = malloc((size_t)(k ? k : 1) * sizeof *sizes);
        uint64_t *counts = malloc((size_t)(k ? k : 1) * sizeof *counts);
        if (!sizes || !counts) {
            free(sizes);
            free(counts);
            return mc_errinfo_set(err, MC_ENOMEM, path, -1, -1, "histogram");
        }
        r_u64s(r, sizes, (size_t)k);
        r_u64s(r, counts, (size_t)k);
        int rc = 0;
        if (!r->failed) {
            rc = mc_hist_add_sorted(h, sizes, counts, (size_t)k);
            if (rc == 0 && mc_hist_distinct(h) != k)
                rc = MC_ERANGE; /* a zero count: not what save writes */
        }
        free(sizes);
        free(counts);
        if (rc)
            return mc_errinfo_set(err, rc == MC_EINVAL ? MC_ERANGE : rc, path,
                                  -1, -1, "histogram of key %u", (unsigned)key);
    }
    return 0;
}

static int read_tables(rin *r, mc__acc *acc, const char *path, mc_errinfo *err)
{
    const uint64_t nr = r_u64(r);
    if (!r->failed && nr > r->remain / 72)
        return mc_errinfo_set(err, MC_ERANGE, path, -1, -1, "%llu rows",
                              (unsigned long long)nr);
    if (!r->failed && nr) {
        acc->rows = malloc((size_t)nr * sizeof *acc->rows);
        if (!acc->rows)
            return mc_errinfo_set(err, MC_ENOMEM, path, -1, -1, "rows");
        acc->caprows = acc->nrows = (size_t)nr;
        for (size_t i = 0; i < acc->nrows; i++) {
            acc->rows[i].rank = (int32_t)r_u32(r);
            (void)r_u32(r);
            r_u64s(r, acc->rows[i].v, 8);
        }
    }
    const uint64_t ne = r_u64(r);
    if (!r->failed && ne > r->remain / 24)
        return mc_errinfo_set(err, MC_ERANGE, path, -1, -1, "%llu edges",
                              (unsigned long long)ne);
    if (!r->failed && ne) {
        acc->edges = malloc((size_t)ne * sizeof *acc->edges);
        if (!acc->edges)
            return mc_errinfo_set(err, MC_ENOMEM, path, -1, -1, "matrix");
        acc->capedges = acc->nedges = (size_t)ne;
        for (size_t i = 0; i < acc->nedges; i++) {
            acc->edges[i].src = (int32_t)r_u32(r);
            acc->edges[i].dst = (int32_t)r_u32(r);
            acc->edges[i].msgs = r_u64(r);
            acc->edges[i].bytes = r_u64(r);
        }
    }
    return 0;
}

static int read_result(rin *r, mc__unit_result *res, const char *path,
                       mc_errinfo *err)
{
    res->records = r_u64(r);
    res->blocks = r_u64(r);
    res->skipped_blocks = r_u64(r);
    res->skipped_records = r_u64(r);
    res->invalid = r_u64(r);
    res->bytes = r_u64(r);
    res->damage_code = (int64_t)r_u64(r);
    res->damage_block = (int64_t)r_u64(r);
    res->tail_lost = (int64_t)r_u64(r);
    const uint64_t ns = r_u64(r);
    if (r->failed)
        return 0;
    if (ns > r->remain / 8)
        return mc_errinfo_set(err, MC_ERANGE, path, -1, -1,
                              "%llu block checksums", (unsigned long long)ns);
    res->sums = malloc((size_t)(ns ? ns : 1) * sizeof *res->sums);
    if (!res->sums)
        return mc_errinfo_set(err, MC_ENOMEM, path, -1, -1, "checksums");
    res->nsums = (size_t)ns;
    r_u64s(r, res->sums, res->nsums);
    return 0;
}

int mc__ckpt_load(const char *dir, const mc__ckpt_key *k, mc__acc *acc,
                  mc__unit_result *res, mc_errinfo *err)
{
    char name[64], path[4096];
    mc__ckpt_file_name(k, name, sizeof name);
    snprintf(path, sizeof path, "%s/%s", dir, name);
    const uint64_t unit = res->unit;
    memset(res, 0, sizeof *res);
    res->unit = unit;
    rin *r = malloc(sizeof *r);
    char *fname = malloc(NAME_MAX_LEN + 1);
    int rc = r && fname ? 0 : MC_ENOMEM;
    if (rc) {
        free(r);
        free(fname);
        return mc_errinfo_set(err, rc, path, -1, -1, "checkpoint");
    }
    rc = r_open(r, path, err);
    if (rc) {
        free(r);
        free(fname);
        return rc;
    }
    mc__ckpt_key got;
    rc = read_key(r, &got, fname, path, err);
    const char *diff = rc ? NULL : key_diff(&got, k);
    if (diff)
        rc = mc_errinfo_set(err, MC_ESTALE, path, -1, -1, "%s differs", diff);
    rc = rc ? rc : read_result(r, res, path, err);
    rc = rc ? rc : read_hists(r, acc, path, err);
    rc = rc ? rc : read_tables(r, acc, path, err);
    if (!rc && r->failed)
        rc = mc_errinfo_set(err, r->failed, path, -1, -1, "checkpoint data");
    if (!rc && r->remain)
        rc = mc_errinfo_set(err, MC_ERANGE, path, -1, -1,
                            "%llu bytes after the data",
                            (unsigned long long)r->remain);
    if (!rc) {
        /* The trailer is read outside the hash it holds. */
        unsigned char b[8];
        size_t got_n = 0;
        while (got_n < sizeof b) {
            if (r->pos == r->len && r_fill(r) != 0)
                break;
            b[got_n++] = r->buf[r->pos++];
        }
        uint64_t stored = 0;
        for (int i = 7; i >= 0; i--)
            stored = (stored << 8) | b[i];
        const uint64_t computed = XXH64_digest(r->st);
        if (got_n != sizeof b)
            rc = mc_errinfo_set(err, MC_ETRUNC, path, -1, -1, "trailer");
        else if (stored != computed)
            rc = mc_errinfo_set(
                err, MC_ECHECKSUM, path, -1, -1,
                "checkpoint trailer: stored 0x%016llx, computed "
                "0x%016llx",
                (unsigned long long)stored, (unsigned long long)computed);
    }
    r_close(r);
    free(r);
    free(fname);
    if (rc) {
        mc__acc_free(acc);
        mc__acc_init(acc);
        mc__unit_result_free(res);
        memset(res, 0, sizeof *res);
        res->unit = unit;
    }
    return rc;
}

/* ---- the run's checkpoint directory -------------------------------------- */

struct mc__ckpt {
    char *dir;
    int me;
    uint32_t flags;
    size_t nfiles, nunits;
    uint64_t *fsize; /* per file, as rank 0 saw it at the start */
    int64_t *mtime;
    unsigned char *have; /* per unit: a checkpoint with its fingerprint */
    mc__ckpt_note_fn note;
    void *ud;
    uint64_t resumed, unreadable, save_failed;
    /* rank 0: other checkpoint files of this campaign, removed at the end */
    char **extra;
    size_t nextra, capextra;
};

static void note(const mc__ckpt *ck, int level, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 3, 4)))
#endif
    ;

static void note(const mc__ckpt *ck, int level, const char *fmt, ...)
{
    if (!ck->note)
        return;
    char line[1536];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(line, sizeof line, fmt, ap);
    va_end(ap);
    ck->note(ck->ud, level, line);
}

static void key_of(const mc__ckpt *ck, const mc__plan *plan, size_t i,
                   mc__ckpt_key *k)
{
    const mc__unit *u = &plan->units[i];
    const mc__file *f = &plan->files[u->file];
    k->name = f->name;
    k->file_size = ck->fsize[u->file];
    k->mtime_ns = ck->mtime[u->file];
    k->first_block = u->first_block;
    k->nblocks = u->nblocks;
    k->bytes = u->bytes;
    k->start_offset = u->first_block ? u->start.offset : 0;
    k->app_rank = f->app_rank;
    k->app_size = f->app_size;
    k->flags = ck->flags;
}

/* mkdir -p of @dir. */
static int make_dir(const char *dir, mc_errinfo *err)
{
    char p[4096];
    const int n = snprintf(p, sizeof p, "%s", dir);
    if (n <= 0 || (size_t)n >= sizeof p)
        return mc_errinfo_set(err, MC_EINVAL, dir, -1, -1,
                              "checkpoint directory name too long");
    for (char *q = p + 1; *q; q++) {
        if (*q != '/')
            continue;
        *q = '\0';
        if (mkdir(p, 0777) != 0 && errno != EEXIST)
            break;
        *q = '/';
    }
    if (mkdir(p, 0777) != 0 && errno != EEXIST) {
        const int e = errno;
        mc_errinfo_set(err, MC_EOPEN, dir, -1, -1,
                       "cannot create the checkpoint directory");
        if (err)
            err->sys_errno = e;
        return MC_EOPEN;
    }
    struct stat sb;
    if (stat(dir, &sb) != 0 || !S_ISDIR(sb.st_mode))
        return mc_errinfo_set(err, MC_EOPEN, dir, -1, -1,
                              "checkpoint path is not a directory");
    return 0;
}

static int has_suffix(const char *s, const char *suf)
{
    const size_t a = strlen(s), b = strlen(suf);
    return a > b && strcmp(s + a - b, suf) == 0;
}

static int is_ckpt_name(const char *s)
{
    return strncmp(s, PREFIX, strlen(PREFIX)) == 0 && has_suffix(s, SUFFIX);
}

static int is_tmp_name(const char *s)
{
    return strncmp(s, TMP_PREFIX, strlen(TMP_PREFIX)) == 0 &&
           strstr(s, TMP_MARK) != NULL;
}

static int add_extra(mc__ckpt *ck, const char *name)
{
    if (ck->nextra == ck->capextra) {
        const size_t c = ck->capextra ? 2 * ck->capextra : 16;
        char **nv = realloc(ck->extra, c * sizeof *nv);
        if (!nv)
            return MC_ENOMEM;
        ck->extra = nv;
        ck->capextra = c;
    }
    ck->extra[ck->nextra] = strdup(name);
    if (!ck->extra[ck->nextra])
        return MC_ENOMEM;
    ck->nextra++;
    return 0;
}

static int cmp_file_name(const void *key, const void *elem)
{
    return strcmp((const char *)key, ((const mc__file *)elem)->name);
}

/* Per campaign file, what the scan found about its checkpoints. */
typedef struct file_scan {
    uint64_t stale; /* checkpoints of an older version of the file */
    uint64_t old_size;
    int64_t old_mtime;
} file_scan;

/* Rank 0: look at one checkpoint file @name of the directory. */
static int scan_one(mc__ckpt *ck, const mc__plan *plan, const size_t *first,
                    file_scan *fs, const char *name, char *fname,
                    uint64_t *damaged, uint64_t *other)
{
    char path[4096], line[1400];
    snprintf(path, sizeof path, "%s/%s", ck->dir, name);
    rin *r = malloc(sizeof *r);
    if (!r)
        return MC_ENOMEM;
    mc_errinfo e;
    mc_errinfo_clear(&e);
    mc__ckpt_key got;
    int rc = r_open(r, path, &e);
    if (rc == 0) {
        rc = read_key(r, &got, fname, path, &e);
        r_close(r);
    }
    free(r);
    if (rc == MC_ENOMEM)
        return rc;
    if (rc) {
        mc_errinfo_format(&e, line, sizeof line);
        note(ck, MC__NOTE_WARN, "checkpoint damaged, removed: %s", line);
        unlink(path);
        (*damaged)++;
        return 0;
    }
    const mc__file *f = bsearch(got.name, plan->files, plan->nfiles,
                                sizeof *plan->files, cmp_file_name);
    if (!f)
        return 0; /* another campaign's: not ours to judge or remove */
    const size_t fi = (size_t)(f - plan->files);
    if (got.file_size != ck->fsize[fi] || got.mtime_ns != ck->mtime[fi] ||
        got.app_rank != f->app_rank || got.app_size != f->app_size) {
        fs[fi].stale++;
        fs[fi].old_size = got.file_size;
        fs[fi].old_mtime = got.mtime_ns;
        unlink(path);
        return 0;
    }
    for (size_t i = first[fi]; i < first[fi + 1]; i++) {
        mc__ckpt_key want;
        key_of(ck, plan, i, &want);
        char wname[64];
        mc__ckpt_file_name(&want, wname, sizeof wname);
        if (!key_diff(&got, &want) && strcmp(wname, name) == 0) {
            ck->have[i] = 1;
            return 0;
        }
    }
    (*other)++;
    return add_extra(ck, name);
}

/* Rank 0: sort out the directory's files. */
static int scan_dir(mc__ckpt *ck, const mc__plan *plan, mc_errinfo *err)
{
    size_t *first = calloc(plan->nfiles + 1, sizeof *first);
    file_scan *fs = calloc(plan->nfiles ? plan->nfiles : 1, sizeof *fs);
    char *fname = malloc(NAME_MAX_LEN + 1);
    DIR *d = opendir(ck->dir);
    int rc = 0;
    if (!first || !fs || !fname) {
        rc = mc_errinfo_set(err, MC_ENOMEM, ck->dir, -1, -1, "checkpoint");
        goto out;
    }
    if (!d) {
        const int e = errno;
        rc = mc_errinfo_set(err, MC_EOPEN, ck->dir, -1, -1,
                            "cannot read the checkpoint directory");
        err->sys_errno = e;
        goto out;
    }
    /* Units of file f are first[f] .. first[f+1]-1 (sorted by file). */
    for (size_t i = 0, f = 0; f <= plan->nfiles; f++) {
        while (i < plan->nunits && plan->units[i].file < f)
            i++;
        first[f] = i;
    }
    uint64_t temps = 0, damaged = 0, other = 0;
    const struct dirent *de;
    char path[4096];
    while ((de = readdir(d)) != NULL && !rc) {
        if (is_tmp_name(de->d_name)) {
            /* Left by a killed run: never renamed, so never complete. */
            snprintf(path, sizeof path, "%s/%s", ck->dir, de->d_name);
            temps += unlink(path) == 0;
        } else if (is_ckpt_name(de->d_name)) {
            rc = scan_one(ck, plan, first, fs, de->d_name, fname, &damaged,
                          &other);
        }
    }
    if (rc) {
        mc_errinfo_set(err, rc, ck->dir, -1, -1, "checkpoint scan");
        goto out;
    }
    for (size_t f = 0; f < plan->nfiles; f++) {
        if (!fs[f].stale)
            continue;
        char what[160] = "";
        if (fs[f].old_size != ck->fsize[f])
            snprintf(what, sizeof what, "size %llu -> %llu bytes",
                     (unsigned long long)fs[f].old_size,
                     (unsigned long long)ck->fsize[f]);
        else if (fs[f].old_mtime != ck->mtime[f])
            snprintf(what, sizeof what, "modification time changed");
        else
            snprintf(what, sizeof what, "header changed");
        note(ck, MC__NOTE_WARN,
             "checkpoint: %s/%s changed since its checkpoints were written "
             "(%s); %llu checkpoint(s) discarded, its units are read again",
             plan->dir, plan->files[f].name, what,
             (unsigned long long)fs[f].stale);
    }
    size_t have = 0;
    for (size_t i = 0; i < plan->nunits; i++)
        have += ck->have[i];
    if (temps)
        note(ck, MC__NOTE_INFO,
             "checkpoint: removed %llu unfinished temporary file(s) of an "
             "interrupted run",
             (unsigned long long)temps);
    if (other)
        note(ck, MC__NOTE_INFO,
             "checkpoint: %llu checkpoint(s) of this campaign were written "
             "with other options or unit size and are not used",
             (unsigned long long)other);
    if (have)
        note(ck, MC__NOTE_INFO,
             "checkpoint %s: %zu of %zu units done earlier, reading the "
             "other %zu",
             ck->dir, have, plan->nunits, plan->nunits - have);
out:
    if (d)
        closedir(d);
    free(first);
    free(fs);
    free(fname);
    return rc;
}

int mc__ckpt_open(MPI_Comm comm, const char *dir, const mc__plan *plan,
                  int per_comm, int skip_damaged, mc__ckpt_note_fn note_fn,
                  void *note_ud, mc__ckpt **out, mc_errinfo *err)
{
    *out = NULL;
    int me = 0;
    MPI_Comm_rank(comm, &me);
    mc__ckpt *ck = calloc(1, sizeof *ck);
    int rc = 0;
    if (ck) {
        ck->me = me;
        ck->dir = strdup(dir);
        ck->nfiles = plan->nfiles;
        ck->nunits = plan->nunits;
        ck->fsize = calloc(plan->nfiles ? plan->nfiles : 1, sizeof *ck->fsize);
        ck->mtime = calloc(plan->nfiles ? plan->nfiles : 1, sizeof *ck->mtime);
        ck->have = calloc(plan->nunits ? plan->nunits : 1, 1);
        ck->flags = (per_comm ? MC__CKPT_F_PER_COMM : 0u) |
                    (skip_damaged ? MC__CKPT_F_SKIP_DAMAGED : 0u);
        ck->note = note_fn;
        ck->ud = note_ud;
    }
    if (!ck || !ck->dir || !ck->fsize || !ck->mtime || !ck->have)
        rc = mc_errinfo_set(err, MC_ENOMEM, dir, -1, -1, "checkpoint");
    if (!rc && me == 0) {
        char path[4096];
        for (size_t f = 0; f < plan->nfiles; f++) {
            struct stat sb;
            snprintf(path, sizeof path, "%s/%s", plan->dir,
                     plan->files[f].name);
            if (stat(path, &sb) == 0) {
                ck->fsize[f] = (uint64_t)sb.st_size;
                ck->mtime[f] = (int64_t)sb.st_mtim.tv_sec * 1000000000 +
                               (int64_t)sb.st_mtim.tv_nsec;
            } else {
                ck->fsize[f] = UINT64_MAX; /* reading it reports why */
                ck->mtime[f] = -1;
            }
        }
        rc = make_dir(dir, err);
        rc = rc ? rc : scan_dir(ck, plan, err);
    }
    rc = mc__agree(comm, rc, err);
    if (!rc) {
        /* Counts are int; one broadcast per table in pieces. */
        const size_t piece = 1u << 26;
        for (size_t at = 0; at < plan->nfiles; at += piece) {
            const int m =
                (int)(plan->nfiles - at < piece ? plan->nfiles - at : piece);
            MPI_Bcast(ck->fsize + at, m, MPI_UINT64_T, 0, comm);
            MPI_Bcast(ck->mtime + at, m, MPI_INT64_T, 0, comm);
        }
        for (size_t at = 0; at < plan->nunits; at += piece) {
            const int m =
                (int)(plan->nunits - at < piece ? plan->nunits - at : piece);
            MPI_Bcast(ck->have + at, m, MPI_UNSIGNED_CHAR, 0, comm);
        }
        *out = ck;
        return 0;
    }
    mc__ckpt_free(ck);
    return rc;
}

int mc__ckpt_resume(mc__ckpt *ck, const mc__plan *plan, size_t i, mc__acc *acc,
                    mc__unit_result *res, mc__progress *prog, mc_errinfo *err)
{
    if (!ck || !ck->have[i])
        return 0;
    mc__ckpt_key k;
    key_of(ck, plan, i, &k);
    mc__acc ua;
    mc__acc_init(&ua);
    mc_errinfo e;
    mc_errinfo_clear(&e);
    res->unit = i;
    const int lrc = mc__ckpt_load(ck->dir, &k, &ua, res, &e);
    if (lrc == 0) {
        const int rc = mc__acc_merge(acc, &ua);
        mc__acc_free(&ua);
        if (rc)
            return mc_errinfo_set(err, rc, ck->dir, -1, -1,
                                  "merging a checkpoint");
        ck->resumed++;
        mc__progress_add(prog, plan->units[i].bytes, 0, 0);
        return 1;
    }
    if (lrc == MC_ENOMEM) {
        if (err)
            *err = e;
        return lrc;
    }
    /* Unreadable: the unit is read again and its save replaces the file. */
    char line[1400];
    mc_errinfo_format(&e, line, sizeof line);
    note(ck, MC__NOTE_WARN, "checkpoint unusable, reading its unit again: %s",
         line);
    ck->unreadable++;
    return 0;
}

void mc__ckpt_keep(mc__ckpt *ck, const mc__plan *plan, size_t i, mc__acc *ua,
                   const mc__unit_result *res)
{
    if (!ck)
        return;
    mc__ckpt_key k;
    key_of(ck, plan, i, &k);
    mc_errinfo e;
    mc_errinfo_clear(&e);
    if (mc__ckpt_save(ck->dir, &k, ua, res, &e) == 0)
        return;
    /* The reduction is still exact without it: warn once per rank and count
     * the rest. */
    if (!ck->save_failed) {
        char line[1400];
        mc_errinfo_format(&e, line, sizeof line);
        note(ck, MC__NOTE_WARN,
             "checkpoint not saved (the run goes on, but after an "
             "interruption this unit is read again): %s",
             line);
    }
    ck->save_failed++;
}

uint64_t mc__ckpt_report(mc__ckpt *ck, MPI_Comm comm)
{
    uint64_t mine[3] = {0, 0, 0}, all[3] = {0, 0, 0};
    if (ck) {
        mine[0] = ck->resumed;
        mine[1] = ck->save_failed;
        mine[2] = ck->unreadable;
    }
    MPI_Allreduce(mine, all, 3, MPI_UINT64_T, MPI_SUM, comm);
    if (ck && ck->me == 0) {
        note(ck, MC__NOTE_INFO, "resumed: %llu of %zu units from checkpoint %s",
             (unsigned long long)all[0], ck->nunits, ck->dir);
        if (all[1])
            note(ck, MC__NOTE_WARN,
                 "checkpoint: %llu unit(s) could not be saved (see the "
                 "warning above)",
                 (unsigned long long)all[1]);
        if (all[2])
            note(ck, MC__NOTE_INFO,
                 "checkpoint: %llu unusable checkpoint(s) were read again",
                 (unsigned long long)all[2]);
    }
    return all[0];
}

/* fsync of @path and of the directory that holds it. */
static int sync_output(const char *path)
{
    const int fd = open(path, O_RDONLY | O_CLOEXEC);
    if (fd < 0)
        return -1;
    int rc = fsync(fd);
    close(fd);
    char dir[4096];
    const char *slash = strrchr(path, '/');
    if (slash)
        snprintf(dir, sizeof dir, "%.*s", (int)(slash - path), path);
    else
        snprintf(dir, sizeof dir, ".");
    if (!dir[0])
        snprintf(dir, sizeof dir, "/");
    if (fsync_dir(dir) != 0)
        rc = -1;
    return rc;
}

void mc__ckpt_finish(mc__ckpt *ck, const mc__plan *plan, const char *output)
{
    if (!ck || ck->me != 0)
        return;
    if (sync_output(output) != 0) {
        note(ck, MC__NOTE_WARN,
             "checkpoint %s kept: cannot sync %s to disk (%s)", ck->dir, output,
             strerror(errno));
        return;
    }
    char path[4096], name[64];
    uint64_t removed = 0;
    for (size_t i = 0; i < plan->nunits; i++) {
        mc__ckpt_key k;
        key_of(ck, plan, i, &k);
        mc__ckpt_file_name(&k, name, sizeof name);
        snprintf(path, sizeof path, "%s/%s", ck->dir, name);
        removed += unlink(path) == 0;
    }
    for (size_t i = 0; i < ck->nextra; i++) {
        snprintf(path, sizeof path, "%s/%s", ck->dir, ck->extra[i]);
        removed += unlink(path) == 0;
    }
    const int gone = rmdir(ck->dir) == 0;
    const int e = gone ? 0 : errno;
    if (gone)
        note(ck, MC__NOTE_INFO,
             "checkpoint: summary complete; removed %llu checkpoint file(s) "
             "and the directory %s",
             (unsigned long long)removed, ck->dir);
    else if (e == ENOENT)
        note(ck, MC__NOTE_WARN,
             "checkpoint: summary complete; the directory %s had been "
             "removed meanwhile",
             ck->dir);
    else
        note(ck, MC__NOTE_INFO,
             "checkpoint: summary complete; removed %llu checkpoint file(s); "
             "%s holds other files and stays (remove it yourself when they "
             "are not needed: rm -r %s)",
             (unsigned long long)removed, ck->dir, ck->dir);
}

void mc__ckpt_free(mc__ckpt *ck)
{
    if (!ck)
        return;
    for (size_t i = 0; i < ck->nextra; i++)
        free(ck->extra[i]);
    free(ck->extra);
    free(ck->fsize);
    free(ck->mtime);
    free(ck->have);
    free(ck->dir);
    free(ck);
}
