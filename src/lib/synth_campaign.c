/* synth_campaign.c - write a synthetic campaign directory with threads. */
#include <msgcensus/synth.h>

#include <dirent.h>   /* opendir, readdir */
#include <errno.h>    /* errno, ENOENT, EEXIST */
#include <pthread.h>  /* pthread_create, mutexes */
#include <stdio.h>    /* snprintf, fopen */
#include <stdlib.h>   /* calloc, realloc, free */
#include <string.h>   /* strlen, memset */
#include <sys/stat.h> /* stat, mkdir */
#include <unistd.h>   /* unlink */

int mc_synth_rank_path(const char *dir, int32_t rank, char *buf, size_t cap)
{
    const int k = snprintf(buf, cap, "%s/rank-%06ld.mct", dir, (long)rank);
    return k < 0 || (size_t)k >= cap ? MC_ERANGE : 0;
}

/* rank-NNNNNN.mct (six or more digits): @return the rank, or -1. */
static long rank_file_number(const char *name)
{
    if (strncmp(name, "rank-", 5) != 0)
        return -1;
    const char *s = name + 5;
    long v = 0;
    size_t digits = 0;
    while (*s >= '0' && *s <= '9' && digits < 10) {
        v = v * 10 + (*s - '0');
        s++;
        digits++;
    }
    return digits >= 6 && strcmp(s, ".mct") == 0 ? v : -1;
}

int mc_synth_dir_scan(const char *dir, uint64_t *entries, uint64_t *traces,
                      mc_errinfo *err)
{
    *entries = *traces = 0;
    DIR *d = opendir(dir);
    if (!d) {
        if (errno == ENOENT)
            return 0;
        if (err)
            err->sys_errno = errno;
        return mc_errinfo_set(err, MC_EOPEN, dir, -1, -1,
                              "cannot read directory");
    }
    const struct dirent *e;
    while ((e = readdir(d)) != NULL) {
        if (!strcmp(e->d_name, ".") || !strcmp(e->d_name, ".."))
            continue;
        (*entries)++;
        if (rank_file_number(e->d_name) >= 0)
            (*traces)++;
    }
    closedir(d);
    return 0;
}

/* Remove rank files with a rank outside the new campaign. */
static int remove_stale(const char *dir, int32_t ranks, mc_errinfo *err)
{
    DIR *d = opendir(dir);
    if (!d)
        return mc_errinfo_set(err, MC_EOPEN, dir, -1, -1,
                              "cannot read directory");
    const struct dirent *e;
    char path[4096];
    int rc = 0;
    while (!rc && (e = readdir(d)) != NULL) {
        const long r = rank_file_number(e->d_name);
        if (r < ranks)
            continue;
        snprintf(path, sizeof path, "%s/%s", dir, e->d_name);
        if (unlink(path) != 0) {
            if (err)
                err->sys_errno = errno;
            rc = mc_errinfo_set(err, MC_EIO, path, -1, -1,
                                "cannot remove stale rank file");
        }
    }
    closedir(d);
    return rc;
}

/* Shared state of the writing threads. */
typedef struct job {
    const mc_synth_params *p;
    const char *dir;
    mc_writer_opts wopts;
    mc_synth_progress_fn progress;
    void *user;
    pthread_mutex_t lock;
    int32_t next_rank; /* next rank file to write */
    uint64_t files_done;
    uint64_t bytes_done; /* finished files, on disk */
    uint64_t *partial;   /* per thread: raw bytes of the file in work */
    unsigned nthreads;
    uint64_t records;
    int rc; /* first error */
    mc_errinfo err;
} job;

typedef struct worker {
    job *j;
    unsigned id;
} worker;

static uint64_t progress_bytes(const job *j)
{
    uint64_t b = j->bytes_done;
    for (unsigned i = 0; i < j->nthreads; i++)
        b += j->partial[i];
    return b;
}

/* Write one rank file; on failure the error goes to @err. */
static int write_rank(job *j, unsigned id, int32_t rank, mc_record **buf,
                      size_t *cap, mc_errinfo *err)
{
    char path[4096];
    int rc = mc_synth_rank_path(j->dir, rank, path, sizeof path);
    if (rc)
        return mc_errinfo_set(err, rc, j->dir, -1, -1, "path too long");
    mc_synth_gen *g = NULL;
    mc_trace_writer *w = NULL;
    rc = mc_synth_gen_create(j->p, rank, &g, err);
    if (rc)
        goto done;
    /* At least one block's worth, and at least one whole step. */
    size_t need = j->wopts.block_records ? j->wopts.block_records
                                         : MC_BLOCK_DEFAULT_RECORDS;
    if (need < mc_synth_gen_max_step(g))
        need = mc_synth_gen_max_step(g);
    if (need > *cap) {
        mc_record *nb = realloc(*buf, need * sizeof **buf);
        if (!nb) {
            rc = mc_errinfo_set(err, MC_ENOMEM, path, -1, -1, NULL);
            goto done;
        }
        *buf = nb;
        *cap = need;
    }
    mc_trace_header hdr;
    mc_synth_header(j->p, rank, &hdr);
    rc = mc_trace_writer_open(path, &hdr, &j->wopts, &w, err);
    if (rc)
        goto done;
    size_t n;
    uint64_t since_report = 0;
    while ((n = mc_synth_gen_fill(g, *buf, *cap)) > 0) {
        rc = mc_trace_write(w, *buf, n, err);
        if (rc)
            goto done;
        since_report += n;
        if (since_report >= (1u << 18)) { /* about every 12 MiB */
            pthread_mutex_lock(&j->lock);
            j->partial[id] = mc_trace_writer_records(w) * MC_RECORD_SIZE;
            if (j->progress && j->rc == 0)
                j->progress(j->user, j->files_done, (uint64_t)j->p->ranks,
                            progress_bytes(j));
            const int stop = j->rc != 0;
            pthread_mutex_unlock(&j->lock);
            since_report = 0;
            if (stop) /* another file failed: give up early */
                goto done;
        }
    }
    const uint64_t recs = mc_trace_writer_records(w);
    rc = mc_trace_writer_close(w, err);
    w = NULL;
    if (rc)
        goto done;
    struct stat st;
    if (stat(path, &st) != 0) {
        rc = mc_errinfo_set(err, MC_EIO, path, -1, -1, "cannot stat");
        goto done;
    }
    pthread_mutex_lock(&j->lock);
    j->partial[id] = 0;
    j->files_done++;
    j->bytes_done += (uint64_t)st.st_size;
    j->records += recs;
    if (j->progress)
        j->progress(j->user, j->files_done, (uint64_t)j->p->ranks,
                    progress_bytes(j));
    pthread_mutex_unlock(&j->lock);
done:
    mc_trace_writer_abandon(w);
    mc_synth_gen_free(g);
    return rc;
}

static void *worker_main(void *arg)
{
    const worker *wk = arg;
    job *j = wk->j;
    mc_record *buf = NULL;
    size_t cap = 0;
    mc_errinfo err;
    for (;;) {
        pthread_mutex_lock(&j->lock);
        const int32_t rank = j->rc ? j->p->ranks : j->next_rank++;
        pthread_mutex_unlock(&j->lock);
        if (rank >= j->p->ranks)
            break;
        mc_errinfo_clear(&err);
        const int rc = write_rank(j, wk->id, rank, &buf, &cap, &err);
        if (rc) {
            pthread_mutex_lock(&j->lock);
            if (j->rc == 0) {
                j->rc = rc;
                j->err = err;
            }
            pthread_mutex_unlock(&j->lock);
            break;
        }
    }
    free(buf);
    return NULL;
}

static int write_description(const mc_synth_params *p, const char *dir,
                             const mc_writer_opts *wo, const job *j,
                             mc_errinfo *err)
{
    char path[4096];
    snprintf(path, sizeof path, "%s/campaign.txt", dir);
    FILE *f = fopen(path, "w");
    if (!f) {
        if (err)
            err->sys_errno = errno;
        return mc_errinfo_set(err, MC_EOPEN, path, -1, -1, "cannot create");
    }
    mc_synth_rank_info ri;
    mc_synth_rank_geometry(p, 0, &ri);
    const mc_synth_deck *dk = p->deck;
    const int weak = p->scaling == MC_SYNTH_WEAK;
    const uint32_t *g = weak ? p->local : p->global;
    fprintf(
        f,
        "# msgcensus synthetic campaign: 3-D halo-exchange solver "
        "(docs/synth.md)\n"
        "scenario = halo3d\n"
        "ranks = %ld\n"
        "rank_grid = %ldx%ldx%ld\n"
        "steps = %llu\n"
        "seed = %llu\n"
        "input = %s\n"
        "input_summary = %s\n"
        "variables = %u\n"
        "halo = %u\n"
        "transpose_every = %u\n"
        "bcast_every = %u\n"
        "checkpoint_every = %u\n"
        "put_every = %u\n"
        "allreduce_bytes = %u\n"
        "bcast_bytes = %u\n"
        "scaling = %s\n"
        "%s = %ux%ux%u\n"
        "periodic = %s\n"
        "uneven = %s\n"
        "block_records = %u\n"
        "codec = %s\n"
        "trace_format = %u.0\n"
        "footer = %s\n"
        "files = %llu\n"
        "records = %llu\n"
        "bytes = %llu\n",
        (long)p->ranks, (long)ri.dims[0], (long)ri.dims[1], (long)ri.dims[2],
        (unsigned long long)p->steps, (unsigned long long)p->seed, dk->name,
        dk->summary, dk->vars, dk->halo, dk->transpose_every, dk->bcast_every,
        dk->checkpoint_every, dk->put_every, dk->allreduce_bytes,
        dk->bcast_bytes, weak ? "weak" : "strong", weak ? "local" : "global",
        g[0], g[1], g[2], p->periodic ? "yes" : "no", p->uneven ? "yes" : "no",
        wo->block_records ? wo->block_records : MC_BLOCK_DEFAULT_RECORDS,
        wo->codec == MC_CODEC_ZSTD ? "zstd" : "none",
        wo->format_major ? wo->format_major : MC_TRACE_VERSION_MAJOR,
        wo->write_footer ? "yes" : "no", (unsigned long long)j->files_done,
        (unsigned long long)j->records, (unsigned long long)j->bytes_done);
    if (fclose(f) != 0)
        return mc_errinfo_set(err, MC_EIO, path, -1, -1, "write failed");
    return 0;
}

int mc_synth_write_campaign(const mc_synth_params *p, const char *dir,
                            const mc_synth_write_opts *opts, int replace,
                            mc_synth_progress_fn progress, void *user,
                            mc_synth_result *res, mc_errinfo *err)
{
    if (!p || !dir || !*dir)
        return mc_errinfo_set(err, MC_EINVAL, NULL, -1, -1,
                              "parameters and directory are required");
    int rc = mc_synth_check(p, err);
    if (rc)
        return rc;
    mc_synth_write_opts o;
    mc_writer_opts_init(&o.writer);
    o.threads = 1;
    if (opts)
        o = *opts;
    if (o.threads == 0)
        o.threads = 1;
    if (o.threads > 64)
        o.threads = 64;
    if (o.threads > (unsigned)p->ranks)
        o.threads = (unsigned)p->ranks;

    uint64_t entries, traces;
    rc = mc_synth_dir_scan(dir, &entries, &traces, err);
    if (rc)
        return rc;
    if (entries && !replace)
        return mc_errinfo_set(err, MC_EEXIST, dir, -1, -1,
                              "directory is not empty (%llu entries)",
                              (unsigned long long)entries);
    if (mkdir(dir, 0755) != 0 && errno != EEXIST) {
        if (err)
            err->sys_errno = errno;
        return mc_errinfo_set(err, MC_EOPEN, dir, -1, -1,
                              "cannot create directory");
    }
    if (traces) {
        rc = remove_stale(dir, p->ranks, err);
        if (rc)
            return rc;
    }

    job j;
    memset(&j, 0, sizeof j);
    j.p = p;
    j.dir = dir;
    j.wopts = o.writer;
    j.progress = progress;
    j.user = user;
    mc_errinfo_clear(&j.err);
    j.partial = calloc(o.threads, sizeof *j.partial);
    worker *wk = calloc(o.threads, sizeof *wk);
    pthread_t *tid = calloc(o.threads, sizeof *tid);
    if (!j.partial || !wk || !tid) {
        free(j.partial);
        free(wk);
        free(tid);
        return mc_errinfo_set(err, MC_ENOMEM, dir, -1, -1, NULL);
    }
    pthread_mutex_init(&j.lock, NULL);
    j.nthreads = o.threads;
    /* The calling thread is worker 0; the others run beside it. A thread
     * that cannot be started just leaves its share to the rest. */
    unsigned started = 1;
    for (unsigned i = 0; i < o.threads; i++) {
        wk[i].j = &j;
        wk[i].id = i;
    }
    for (unsigned i = 1; i < o.threads; i++) {
        if (pthread_create(&tid[i], NULL, worker_main, &wk[i]) != 0)
            break;
        started++;
    }
    worker_main(&wk[0]);
    for (unsigned i = 1; i < started; i++)
        pthread_join(tid[i], NULL);
    pthread_mutex_destroy(&j.lock);
    free(j.partial);
    free(wk);
    free(tid);

    rc = j.rc;
    if (rc) {
        if (err)
            *err = j.err;
        return rc;
    }
    rc = write_description(p, dir, &o.writer, &j, err);
    if (res) {
        res->files = j.files_done;
        res->records = j.records;
        res->bytes = j.bytes_done;
    }
    return rc;
}
