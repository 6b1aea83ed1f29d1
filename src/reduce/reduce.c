/* reduce.c - the reducer's driver: plan, reduce the units of this rank,
 * merge, and on rank 0 build and safely write the summary. */
#include "reduce.h"
#include "reduce_internal.h"
#include "checkpoint.h" /* --checkpoint */
#include "memlimit.h"   /* --max-memory */

#include <errno.h>    /* errno, EEXIST */
#include <stdio.h>    /* snprintf, rename */
#include <stdlib.h>   /* calloc, free */
#include <string.h>   /* strrchr, memcpy */
#include <sys/stat.h> /* stat */
#include <time.h>     /* time, gmtime_r, strftime */
#include <unistd.h>   /* access, getpid, gethostname, link, unlink */
#include <dirent.h>   /* opendir, readdir: leftover temporary files */
#include <signal.h>   /* kill(pid, 0): is a writer still running */

void mc_reduce_opts_init(mc_reduce_opts *o)
{
    memset(o, 0, sizeof *o);
    o->progress_interval_s = 0.5;
}

/* This host's name as it goes into temporary file names: at most 64
 * characters of [A-Za-z0-9._-], anything else as '_'. */
static void host_tag(char *buf, size_t cap)
{
    char h[256] = "";
    if (gethostname(h, sizeof h - 1) != 0 || !h[0])
        snprintf(h, sizeof h, "unknown");
    size_t n = 0;
    for (const char *p = h; *p && n + 1 < cap && n < 64; p++) {
        const char c = *p;
        const int ok = (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') ||
                       (c >= '0' && c <= '9') || c == '.' || c == '-' ||
                       c == '_';
        buf[n++] = ok ? c : '_';
    }
    buf[n] = '\0';
}

/* Temporary name next to the target, so the final rename stays inside one
 * file system: DIR/.BASE.tmp-HOST-PID. The host keeps writers on different
 * hosts of a shared file system apart, and tells the leftover cleanup
 * which temporary files it can judge. */
static void temp_name(const char *out, char *buf, size_t cap)
{
    char host[65];
    host_tag(host, sizeof host);
    const char *slash = strrchr(out, '/');
    if (slash)
        snprintf(buf, cap, "%.*s/.%s.tmp-%s-%ld", (int)(slash - out), out,
                 slash + 1, host, (long)getpid());
    else
        snprintf(buf, cap, ".%s.tmp-%s-%ld", out, host, (long)getpid());
}

/* Move the finished temporary file to @out: rename() with --force; without
 * it link() + unlink(), which refuses atomically if @out appeared since the
 * first check. The temporary file is gone afterwards in every case. */
static int publish(const char *tmp, const char *out, int force, mc_errinfo *err)
{
    if (force) {
        if (rename(tmp, out) == 0)
            return 0;
    } else {
        if (link(tmp, out) == 0) {
            unlink(tmp);
            return 0;
        }
        if (errno == EEXIST) {
            unlink(tmp);
            return mc_errinfo_set(
                err, MC_EEXIST, out, -1, -1,
                "appeared while reducing; use --force to replace");
        }
        /* File systems without hard links: check, then rename. */
        struct stat sb;
        if (stat(out, &sb) != 0 && rename(tmp, out) == 0)
            return 0;
    }
    const int e = errno;
    unlink(tmp);
    mc_errinfo_set(err, MC_EIO, out, -1, -1,
                   "cannot move the summary into place");
    if (err)
        err->sys_errno = e;
    return MC_EIO;
}

static int write_summary(const mc_summary *s, const char *out, int force,
                         mc_errinfo *err)
{
    char tmp[4096];
    temp_name(out, tmp, sizeof tmp);
    unlink(tmp); /* a leftover of a killed run with our pid */
    const int rc = mc_summary_write(tmp, s, err);
    if (rc) {
        unlink(tmp);
        if (err) /* name the file the user asked for, not our temporary */
            snprintf(err->path, sizeof err->path, "%s", out);
        return rc;
    }
    return publish(tmp, out, force, err);
}

/* Temporary summaries of killed runs: DIR/.BASE.tmp-HOST-PID written on
 * this host whose PID is no running process here (a kill -9 while writing
 * leaves one; it is never at the target). The next run to the same target
 * on the same host removes them; those of other hosts are left alone,
 * since only their own host can tell whether their writer still runs. */
static void remove_leftovers(const mc_reduce_opts *o)
{
    char dir[4096], pre[1100], path[8192];
    const char *slash = strrchr(o->output, '/');
    const char *base = slash ? slash + 1 : o->output;
    if (slash && slash > o->output)
        snprintf(dir, sizeof dir, "%.*s", (int)(slash - o->output), o->output);
    else
        snprintf(dir, sizeof dir, "%s", slash ? "/" : ".");
    char host[65];
    host_tag(host, sizeof host);
    const int np = snprintf(pre, sizeof pre, ".%s.tmp-%s-", base, host);
    DIR *d = opendir(dir);
    if (!d || np <= 0 || (size_t)np >= sizeof pre) {
        if (d)
            closedir(d);
        return;
    }
    const struct dirent *de;
    while ((de = readdir(d)) != NULL) {
        if (strncmp(de->d_name, pre, (size_t)np) != 0)
            continue;
        const char *q = de->d_name + np;
        long pid = 0;
        while (*q >= '0' && *q <= '9' && pid < 1000000000L)
            pid = pid * 10 + (*q++ - '0');
        if (*q || pid <= 0 || pid == (long)getpid())
            continue;
        if (kill((pid_t)pid, 0) == 0 || errno != ESRCH)
            continue; /* its writer may still run */
        snprintf(path, sizeof path, "%s/%s", dir, de->d_name);
        if (unlink(path) == 0 && o->note) {
            char line[8300];
            snprintf(line, sizeof line,
                     "removed 1 temporary file(s) of an interrupted run: %s",
                     path);
            o->note(o->note_ud, 1, line);
        }
    }
    closedir(d);
}

static void iso_now(char *buf, size_t cap)
{
    const time_t t = time(NULL);
    struct tm tm;
    gmtime_r(&t, &tm);
    strftime(buf, cap, "%Y-%m-%dT%H:%M:%SZ", &tm);
}

/* Unit @i of this rank: from its checkpoint when it has one, else read;
 * with a checkpoint directory a unit read is kept there before it is
 * merged. @return as mc__unit_reduce(). */
static int reduce_unit(mc__ckpt *ck, const mc_reduce_opts *o,
                       const mc__plan *plan, size_t i, mc__acc *acc,
                       mc__unit_result *res, mc__progress *prog,
                       mc_errinfo *err)
{
    const int got = mc__ckpt_resume(ck, plan, i, acc, res, prog, err);
    if (got)
        return got < 0 ? got : prog->stop ? 1 : 0;
    if (!ck)
        return mc__unit_reduce(plan, &plan->units[i], i, o->per_comm,
                               o->skip_damaged, acc, res, prog, err);
    mc__acc ua; /* the unit alone, as its checkpoint stores it */
    mc__acc_init(&ua);
    int rc = mc__unit_reduce(plan, &plan->units[i], i, o->per_comm,
                             o->skip_damaged, &ua, res, prog, err);
    if (rc == 0) {
        mc__ckpt_keep(ck, plan, i, &ua, res);
        rc = mc__acc_merge(acc, &ua);
        if (rc)
            mc_errinfo_set(err, rc, o->campaign, -1, -1, "merging a unit");
    }
    mc__acc_free(&ua);
    return rc;
}

/* --max-memory: what @acc holds now (into @held), plus with @build the
 * estimate of what building the summary adds, against the limit. */
static int memory_check(const mc_reduce_opts *o, const mc__acc *acc, int build,
                        const char *stage, mc__memuse *held, mc_errinfo *err)
{
    if (!o->max_memory)
        return 0;
    memset(held, 0, sizeof *held);
    mc__memuse_add_acc(held, acc);
    const uint64_t extra = build ? mc__memuse_build(acc) : 0;
    return mc__memuse_check(o->max_memory, held->bytes + extra, held, stage,
                            o->campaign, err);
}

/* Rank 0: build the model, stamp the elapsed time and write it. */
static int finish(MPI_Comm comm, const mc_reduce_opts *o, const mc__plan *plan,
                  mc__acc *acc, const mc__unit_result *res, size_t nres,
                  double t0, mc_reduce_result *out, mc_errinfo *err)
{
    int np = 1;
    MPI_Comm_size(comm, &np);
    char created[32], host[256] = "";
    iso_now(created, sizeof created);
    gethostname(host, sizeof host - 1);
    const mc__build_meta bm = {
        o->tool_version, created, o->campaign, o->label, host, np, o->per_comm};
    mc_summary *s = NULL;
    int rc = mc__build_summary(plan, acc, res, nres, &bm, &s);
    if (rc)
        return mc_errinfo_set(err, rc, o->output, -1, -1,
                              "cannot compute the statistics");
    s->meta.elapsed_s = MPI_Wtime() - t0;
    out->files = plan->nfiles;
    out->records = s->meta.records_read;
    out->rejected = s->meta.records_rejected;
    out->bytes = s->meta.bytes_read;
    remove_leftovers(o);
    rc = write_summary(s, o->output, o->force, err);
    out->elapsed_s = MPI_Wtime() - t0;
    out->summary_s = out->elapsed_s - out->plan_s - out->read_s - out->merge_s;
    mc_summary_free(s);
    return rc;
}

int mc_reduce_run(MPI_Comm comm, const mc_reduce_opts *o, mc_reduce_result *res,
                  mc_errinfo *err)
{
    const double t0 = MPI_Wtime();
    int me = 0, np = 1;
    MPI_Comm_rank(comm, &me);
    MPI_Comm_size(comm, &np);
    mc_reduce_result dummy;
    if (!res)
        res = &dummy;
    memset(res, 0, sizeof *res);
    mc_errinfo local;
    if (!err)
        err = &local;
    mc_errinfo_clear(err);

    mc__plan plan;
    memset(&plan, 0, sizeof plan);
    mc__acc acc;
    mc__acc_init(&acc);
    mc__unit_result *results = NULL;
    size_t nresults = 0;
    mc__ckpt *ck = NULL;
    mc__memuse held = {0, 0, 0, 0, 0}; /* what acc holds, for --max-memory */
    int rc = 0;

    /* Refuse an existing output, or one that cannot be created, before
     * any work. */
    if (me == 0) {
        struct stat sb;
        char dir[4096];
        const char *slash = strrchr(o->output, '/');
        if (slash)
            snprintf(dir, sizeof dir, "%.*s", (int)(slash - o->output + 1),
                     o->output);
        else
            snprintf(dir, sizeof dir, ".");
        if (!o->force && stat(o->output, &sb) == 0)
            rc = mc_errinfo_set(err, MC_EEXIST, o->output, -1, -1,
                                "use --force to replace it");
        else if (access(dir, W_OK) != 0)
            rc = mc_errinfo_set(err, MC_EOPEN, o->output, -1, -1,
                                "its directory is not writable");
        else if (o->checkpoint)
            rc = mc__ckpt_plan_build(o->campaign, np, o->skip_damaged,
                                     o->checkpoint_unit ? o->checkpoint_unit
                                                        : MC__CKPT_DEFAULT_UNIT,
                                     &plan, err);
        else
            rc = mc__plan_build(o->campaign, np, o->skip_damaged, &plan, err);
    }
    if ((rc = mc__agree(comm, rc, err)) != 0)
        goto out;
    rc = mc__plan_bcast(comm, &plan);
    if (rc)
        mc_errinfo_set(err, rc, o->campaign, -1, -1, "cannot share the plan");
    if ((rc = mc__agree(comm, rc, err)) != 0)
        goto out;
    const double t_planned = MPI_Wtime();
    res->plan_s = t_planned - t0;
    if (o->checkpoint &&
        (rc = mc__ckpt_open(comm, o->checkpoint, &plan, o->per_comm,
                            o->skip_damaged, o->note, o->note_ud, &ck, err)) !=
            0)
        goto out;

    res->units = plan.nunits;
    for (size_t i = 1; i < plan.nunits; i++)
        res->split_files +=
            plan.units[i].file == plan.units[i - 1].file &&
            (i < 2 || plan.units[i - 2].file != plan.units[i].file);

    /* Reduce this rank's units, in plan order. */
    size_t mine = 0;
    for (size_t i = 0; i < plan.nunits; i++)
        mine += plan.units[i].owner == me;
    results = calloc(mine ? mine : 1, sizeof *results);
    mc__progress prog;
    rc = mc__progress_open(&prog, comm, plan.total_bytes,
                           o->progress_interval_s, t0);
    const int prog_open = rc == 0;
    prog.cb = me == 0 ? o->progress : NULL;
    prog.ud = o->progress_ud;
    prog.mem_limit = o->max_memory;
    prog.mem_base = &held;
    if (rc)
        mc_errinfo_set(err, rc, o->campaign, -1, -1,
                       "cannot create the progress window");
    else if (!results)
        rc =
            mc_errinfo_set(err, MC_ENOMEM, o->campaign, -1, -1, "unit results");
    for (size_t i = 0; i < plan.nunits && !rc; i++) {
        if (plan.units[i].owner != me)
            continue;
        rc = reduce_unit(ck, o, &plan, i, &acc, &results[nresults], &prog, err);
        nresults++;
        if (!rc)
            rc = memory_check(o, &acc, 0, "reading", &held, err);
        if (rc < 0)
            mc__progress_add(&prog, 0, 1, 1);
    }
    if (rc == 1)
        rc = 0; /* stopped for another rank's failure, which agree reports */
    if (prog_open)
        mc__progress_close(&prog);
    if ((rc = mc__agree(comm, rc, err)) != 0)
        goto out;
    const double t_read = MPI_Wtime();
    res->read_s = t_read - t_planned;
    if (me == 0 && o->progress)
        o->progress(o->progress_ud, plan.total_bytes, plan.total_bytes,
                    MPI_Wtime() - t0, 1);
    res->resumed_units = ck ? mc__ckpt_report(ck, comm) : 0;

    rc = mc__merge_hists(comm, &acc);
    if (rc)
        mc_errinfo_set(err, rc, o->output, -1, -1, "merging histograms");
    if (!rc)
        rc = memory_check(o, &acc, 0, "merging", &held, err);
    if ((rc = mc__agree(comm, rc, err)) != 0)
        goto out;
    rc = mc__gather_tables(comm, &acc, &results, &nresults);
    if (rc)
        mc_errinfo_set(err, rc, o->output, -1, -1, "gathering tables");
    if ((rc = mc__agree(comm, rc, err)) != 0)
        goto out;
    res->merge_s = MPI_Wtime() - t_read;
    if (me == 0)
        rc = memory_check(o, &acc, 1, "building the summary", &held, err);
    if (me == 0 && !rc)
        rc = finish(comm, o, &plan, &acc, results, nresults, t0, res, err);
    rc = mc__agree(comm, rc, err);
    if (!rc && me == 0)
        mc__ckpt_finish(ck, &plan, o->output);
    if (!rc) {
        uint64_t v[4] = {res->files, res->records, res->rejected, res->bytes};
        double el = res->elapsed_s;
        MPI_Bcast(v, 4, MPI_UINT64_T, 0, comm);
        MPI_Bcast(&el, 1, MPI_DOUBLE, 0, comm);
        res->files = v[0];
        res->records = v[1];
        res->rejected = v[2];
        res->bytes = v[3];
        res->elapsed_s = el;
    }
out:
    for (size_t i = 0; i < nresults; i++)
        mc__unit_result_free(&results[i]);
    free(results);
    mc__ckpt_free(ck);
    mc__acc_free(&acc);
    mc__plan_free(&plan);
    return rc;
}
