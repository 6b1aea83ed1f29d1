/* plan.c - scan a campaign, split large files at block boundaries and
 * assign units of work to reducer ranks (LPT on bytes), then broadcast. */
#include "reduce_internal.h"

#include <dirent.h>   /* opendir, readdir */
#include <errno.h>    /* errno */
#include <limits.h>   /* INT_MAX */
#include <stdio.h>    /* snprintf */
#include <stdlib.h>   /* calloc, realloc, qsort */
#include <string.h>   /* strcmp, strlen */
#include <sys/stat.h> /* stat, S_ISREG */

static int cmp_name(const void *a, const void *b)
{
    return strcmp(*(char *const *)a, *(char *const *)b);
}

/* Sorted names of the regular files DIR/NAME.mct. */
static int list_campaign(const char *dir, char ***names, size_t *n,
                         mc_errinfo *err)
{
    *names = NULL;
    *n = 0;
    DIR *d = opendir(dir);
    if (!d) {
        const int e = errno;
        mc_errinfo_set(err, MC_EOPEN, dir, -1, -1,
                       "cannot open campaign directory");
        if (err)
            err->sys_errno = e;
        return MC_EOPEN;
    }
    size_t cap = 0;
    char **v = NULL;
    int rc = 0;
    const struct dirent *de;
    char path[4096];
    while ((de = readdir(d)) != NULL) {
        const size_t len = strlen(de->d_name);
        if (len <= 4 || strcmp(de->d_name + len - 4, ".mct") != 0)
            continue;
        struct stat sb;
        snprintf(path, sizeof path, "%s/%s", dir, de->d_name);
        if (stat(path, &sb) != 0 || !S_ISREG(sb.st_mode))
            continue;
        if (*n == cap) {
            cap = cap ? 2 * cap : 64;
            char **nv = realloc(v, cap * sizeof *v);
            if (!nv) {
                rc = mc_errinfo_set(err, MC_ENOMEM, dir, -1, -1, "file list");
                break;
            }
            v = nv;
        }
        v[*n] = strdup(de->d_name);
        if (!v[*n]) {
            rc = mc_errinfo_set(err, MC_ENOMEM, dir, -1, -1, "file list");
            break;
        }
        (*n)++;
    }
    closedir(d);
    if (!rc && *n == 0)
        rc = mc_errinfo_set(err, MC_ENODATA, dir, -1, -1,
                            "no .mct trace files in the campaign directory");
    if (rc) {
        for (size_t i = 0; i < *n; i++)
            free(v[i]);
        free(v);
        *n = 0;
        return rc;
    }
    qsort(v, *n, sizeof *v, cmp_name);
    *names = v;
    return 0;
}

static int push_unit(mc__plan *p, size_t *cap, const mc__unit *u)
{
    if (p->nunits == *cap) {
        *cap = *cap ? 2 * *cap : 64;
        mc__unit *nv = realloc(p->units, *cap * sizeof *nv);
        if (!nv)
            return MC_ENOMEM;
        p->units = nv;
    }
    p->units[p->nunits++] = *u;
    return 0;
}

/* Units for one file: the whole file, or runs of blocks cut near multiples
 * of size/pieces when it is larger than a fair share. */
static int plan_file(mc__plan *p, size_t *cap, uint32_t fi, uint64_t fair,
                     const char *path)
{
    const mc__file *f = &p->files[fi];
    mc__unit whole = {fi, 0, 0, MC__TO_END, f->size, {0, 0, 0, 0}};
    if (fair == 0 || f->size <= fair)
        return push_unit(p, cap, &whole);
    mc_trace_reader *r = NULL;
    mc_errinfo e;
    mc_errinfo_clear(&e);
    if (mc_trace_open(path, &r, &e) != 0)
        return push_unit(p, cap, &whole);
    const mc_block_info *b = NULL;
    size_t nb = 0;
    int from_footer = 0, complete = 0;
    int rc = 0;
    if (mc_trace_index(r, &b, &nb, &from_footer, &complete, &e) != 0 ||
        nb < 2) {
        rc = push_unit(p, cap, &whole);
        mc_trace_close(r);
        return rc;
    }
    uint64_t pieces = (f->size + fair - 1) / fair;
    if (pieces > nb)
        pieces = nb;
    /* Cut before block j when its offset passes the next target. The last
     * unit reads to the end, so blocks the index could not see (after a
     * damaged header) and the footer belong to it. */
    size_t start = 0;
    uint64_t k = 1;
    for (size_t j = 1; j < nb && k < pieces && !rc; j++) {
        const uint64_t target = (f->size / pieces) * k;
        if (b[j].offset < target)
            continue;
        mc__unit u = {fi,
                      0,
                      start,
                      j - start,
                      b[j].offset - (start ? b[start].offset : 0),
                      b[start]};
        rc = push_unit(p, cap, &u);
        start = j;
        k++;
    }
    if (!rc) {
        mc__unit u = {fi,
                      0,
                      start,
                      MC__TO_END,
                      f->size - (start ? b[start].offset : 0),
                      b[start]};
        rc = push_unit(p, cap, &u);
    }
    mc_trace_close(r);
    return rc;
}

/* ---- LPT assignment ----------------------------------------------------- */

typedef struct slot {
    uint64_t load;
    int rank;
} slot;

static int slot_less(const slot *a, const slot *b)
{
    return a->load < b->load || (a->load == b->load && a->rank < b->rank);
}

static void heap_down(slot *h, size_t n, size_t i)
{
    for (;;) {
        size_t m = i;
        const size_t l = 2 * i + 1, r = l + 1;
        if (l < n && slot_less(&h[l], &h[m]))
            m = l;
        if (r < n && slot_less(&h[r], &h[m]))
            m = r;
        if (m == i)
            return;
        const slot t = h[i];
        h[i] = h[m];
        h[m] = t;
        i = m;
    }
}

static const mc__unit *lpt_units; /* qsort context: single-threaded scan */

static int cmp_lpt(const void *a, const void *b)
{
    const mc__unit *x = &lpt_units[*(const size_t *)a];
    const mc__unit *y = &lpt_units[*(const size_t *)b];
    if (x->bytes != y->bytes)
        return x->bytes > y->bytes ? -1 : 1;
    if (x->file != y->file)
        return x->file < y->file ? -1 : 1;
    return (x->first_block > y->first_block) -
           (x->first_block < y->first_block);
}

/* Largest unit first onto the least-loaded rank; ties go to the lower
 * rank, so the plan depends only on the campaign and P. */
int mc__plan_assign(mc__plan *p, int nranks)
{
    size_t *order = malloc((p->nunits ? p->nunits : 1) * sizeof *order);
    slot *h = malloc((size_t)nranks * sizeof *h);
    if (!order || !h) {
        free(order);
        free(h);
        return MC_ENOMEM;
    }
    for (size_t i = 0; i < p->nunits; i++)
        order[i] = i;
    lpt_units = p->units;
    qsort(order, p->nunits, sizeof *order, cmp_lpt);
    for (int r = 0; r < nranks; r++)
        h[r] = (slot){0, r};
    for (size_t i = 0; i < p->nunits; i++) {
        mc__unit *u = &p->units[order[i]];
        u->owner = h[0].rank;
        h[0].load += u->bytes ? u->bytes : 1;
        heap_down(h, (size_t)nranks, 0);
    }
    free(order);
    free(h);
    return 0;
}

/* ---- scan ---------------------------------------------------------------- */

typedef struct rank_ix {
    int32_t rank;
    uint32_t file;
} rank_ix;

static int cmp_rank(const void *a, const void *b)
{
    const rank_ix *x = a, *y = b;
    if (x->rank != y->rank)
        return x->rank < y->rank ? -1 : 1;
    return (x->file > y->file) - (x->file < y->file);
}

/* Every rank 0..size-1 must have a file: a campaign with ranks missing
 * would be summarised as if it were whole. With --skip-damaged, files whose
 * header could not be read stand for as many missing ranks (their rank is
 * unknown). @ix is sorted by rank and free of duplicates. */
static int check_complete(const mc__plan *plan, const rank_ix *ix, size_t nix,
                          int skip_damaged, mc_errinfo *err)
{
    size_t skipped = 0;
    for (size_t i = 0; i < plan->nfiles; i++)
        skipped += plan->files[i].state == MC__FILE_SKIPPED;
    const uint64_t size = plan->app_size > 0 ? (uint64_t)plan->app_size : 0;
    const uint64_t missing = size - nix;
    if (nix == 0 || missing == 0 || (skip_damaged && missing <= skipped))
        return nix == 0 && !skip_damaged
                   ? mc_errinfo_set(err, MC_ENODATA, plan->dir, -1, -1,
                                    "no readable trace file")
                   : 0;
    /* "2 of 4 ranks have no intact trace file: 1-2, 5" */
    char list[160] = "";
    size_t len = 0, j = 0;
    int32_t r = 0;
    while ((uint64_t)r < size && len + 24 < sizeof list) {
        while (j < nix && ix[j].rank < r)
            j++;
        if (j < nix && ix[j].rank == r) {
            r++;
            continue;
        }
        int32_t e = r;
        while ((uint64_t)(e + 1) < size && !(j < nix && ix[j].rank == e + 1))
            e++;
        len += (size_t)snprintf(list + len, sizeof list - len, "%s%d",
                                len ? ", " : "", (int)r);
        if (e > r)
            len +=
                (size_t)snprintf(list + len, sizeof list - len, "-%d", (int)e);
        r = e + 1;
    }
    if ((uint64_t)r < size)
        snprintf(list + len, sizeof list - len, ", ...");
    return mc_errinfo_set(err, MC_ECAMPAIGN, plan->dir, -1, -1,
                          "%llu of %llu ranks have no intact trace file: %s",
                          (unsigned long long)missing, (unsigned long long)size,
                          list);
}

int mc__plan_build(const char *dir, int nranks, int skip_damaged,
                   mc__plan *plan, mc_errinfo *err)
{
    memset(plan, 0, sizeof *plan);
    char **names = NULL;
    size_t n = 0;
    int rc = list_campaign(dir, &names, &n, err);
    if (rc)
        return rc;
    plan->dir = strdup(dir);
    plan->files = calloc(n, sizeof *plan->files);
    rank_ix *ix = calloc(n, sizeof *ix);
    size_t nix = 0, cap = 0;
    char path[4096];
    if (!plan->dir || !plan->files || !ix) {
        rc = mc_errinfo_set(err, MC_ENOMEM, dir, -1, -1, "plan");
        goto out;
    }
    plan->nfiles = n;
    for (size_t i = 0; i < n; i++) {
        mc__file *f = &plan->files[i];
        f->name = names[i];
        names[i] = NULL;
        snprintf(path, sizeof path, "%s/%s", dir, f->name);
        struct stat sb;
        f->size = stat(path, &sb) == 0 ? (uint64_t)sb.st_size : 0;
        mc_trace_reader *r = NULL;
        mc_errinfo e;
        mc_errinfo_clear(&e);
        const int orc = mc_trace_open(path, &r, &e);
        if (orc != 0) {
            if (!skip_damaged) {
                if (err)
                    *err = e;
                rc = orc;
                goto out;
            }
            f->state = MC__FILE_SKIPPED;
            f->skip_code = orc;
            f->app_rank = -1;
            continue;
        }
        const mc_trace_header *h = mc_trace_get_header(r);
        f->app_rank = h->app_rank;
        f->app_size = h->app_size;
        mc_trace_close(r);
        if (f->app_rank < 0 || f->app_rank >= f->app_size) {
            rc = mc_errinfo_set(err, MC_ECAMPAIGN, path, -1, -1,
                                "claims rank %d, outside 0..%d",
                                (int)f->app_rank, (int)f->app_size - 1);
            goto out;
        }
        if (plan->app_size == 0)
            plan->app_size = f->app_size;
        if (f->app_size != plan->app_size) {
            rc = mc_errinfo_set(err, MC_ECAMPAIGN, path, -1, -1,
                                "application size %d, other files say %d",
                                (int)f->app_size, (int)plan->app_size);
            goto out;
        }
        ix[nix++] = (rank_ix){f->app_rank, (uint32_t)i};
        plan->total_bytes += f->size;
    }
    qsort(ix, nix, sizeof *ix, cmp_rank);
    for (size_t i = 1; i < nix; i++) {
        if (ix[i].rank == ix[i - 1].rank) {
            snprintf(path, sizeof path, "%s/%s", dir,
                     plan->files[ix[i].file].name);
            rc = mc_errinfo_set(err, MC_EDUPRANK, path, -1, -1,
                                "rank %d is also in %s", (int)ix[i].rank,
                                plan->files[ix[i - 1].file].name);
            goto out;
        }
    }
    if (!rc)
        rc = check_complete(plan, ix, nix, skip_damaged, err);
    if (rc)
        goto out;
    const uint64_t fair =
        nranks > 1
            ? (plan->total_bytes + (uint64_t)nranks - 1) / (uint64_t)nranks
            : 0;
    for (size_t i = 0; i < n && !rc; i++) {
        if (plan->files[i].state != MC__FILE_OK)
            continue;
        snprintf(path, sizeof path, "%s/%s", dir, plan->files[i].name);
        rc = plan_file(plan, &cap, (uint32_t)i, fair, path);
        if (rc)
            mc_errinfo_set(err, rc, dir, -1, -1, "plan");
    }
    if (!rc && mc__plan_assign(plan, nranks) != 0)
        rc = mc_errinfo_set(err, MC_ENOMEM, dir, -1, -1, "plan");
out:
    for (size_t i = 0; i < n; i++)
        free(names[i]);
    free(names);
    free(ix);
    if (rc)
        mc__plan_free(plan);
    return rc;
}

void mc__plan_free(mc__plan *plan)
{
    if (!plan)
        return;
    for (size_t i = 0; i < plan->nfiles; i++)
        free(plan->files[i].name);
    free(plan->files);
    free(plan->units);
    free(plan->dir);
    memset(plan, 0, sizeof *plan);
}

/* ---- broadcast ------------------------------------------------------------
 */

/* Wire form: a u64 header, the file and unit structs without pointers, then
 * the NUL-terminated strings (directory, then file names). */
int mc__plan_bcast(MPI_Comm comm, mc__plan *plan)
{
    int me = 0;
    MPI_Comm_rank(comm, &me);
    uint64_t hdr[4] = {0, 0, 0, 0};
    size_t strbytes = 0;
    if (me == 0) {
        strbytes = strlen(plan->dir) + 1;
        for (size_t i = 0; i < plan->nfiles; i++)
            strbytes += strlen(plan->files[i].name) + 1;
        hdr[0] = plan->nfiles;
        hdr[1] = plan->nunits;
        hdr[2] = strbytes;
        hdr[3] = plan->total_bytes;
    }
    MPI_Bcast(hdr, 4, MPI_UINT64_T, 0, comm);
    const size_t nf = (size_t)hdr[0], nu = (size_t)hdr[1];
    strbytes = (size_t)hdr[2];
    const size_t fbytes = nf * sizeof(mc__file), ubytes = nu * sizeof(mc__unit);
    const size_t total = fbytes + ubytes + strbytes + sizeof(int32_t);
    int rc = total > (size_t)INT_MAX ? MC_ELIMIT : 0;
    char *buf = rc ? NULL : malloc(total);
    int ok = buf != NULL;
    /* Everyone must agree before the big broadcast. */
    MPI_Allreduce(MPI_IN_PLACE, &ok, 1, MPI_INT, MPI_MIN, comm);
    if (!ok) {
        free(buf);
        return rc ? rc : MC_ENOMEM;
    }
    if (me == 0) {
        char *q = buf;
        memcpy(q, plan->files, fbytes);
        q += fbytes;
        if (ubytes)
            memcpy(q, plan->units, ubytes);
        q += ubytes;
        memcpy(q, &plan->app_size, sizeof(int32_t));
        q += sizeof(int32_t);
        const size_t dl = strlen(plan->dir) + 1;
        memcpy(q, plan->dir, dl);
        q += dl;
        for (size_t i = 0; i < nf; i++) {
            const size_t l = strlen(plan->files[i].name) + 1;
            memcpy(q, plan->files[i].name, l);
            q += l;
        }
    }
    MPI_Bcast(buf, (int)total, MPI_BYTE, 0, comm);
    if (me != 0) {
        memset(plan, 0, sizeof *plan);
        plan->files = calloc(nf ? nf : 1, sizeof *plan->files);
        plan->units = calloc(nu ? nu : 1, sizeof *plan->units);
        if (!plan->files || !plan->units) {
            free(buf);
            mc__plan_free(plan);
            return MC_ENOMEM;
        }
        const char *q = buf;
        memcpy(plan->files, q, fbytes);
        q += fbytes;
        if (ubytes)
            memcpy(plan->units, q, ubytes);
        q += ubytes;
        memcpy(&plan->app_size, q, sizeof(int32_t));
        q += sizeof(int32_t);
        plan->nfiles = nf;
        plan->nunits = nu;
        plan->total_bytes = hdr[3];
        for (size_t i = 0; i < nf; i++)
            plan->files[i].name = NULL;
        plan->dir = strdup(q);
        q += strlen(q) + 1;
        for (size_t i = 0; i < nf && plan->dir; i++) {
            plan->files[i].name = strdup(q);
            if (!plan->files[i].name)
                break;
            q += strlen(q) + 1;
        }
        if (!plan->dir || (nf && !plan->files[nf - 1].name)) {
            free(buf);
            mc__plan_free(plan);
            return MC_ENOMEM;
        }
    }
    free(buf);
    return 0;
}
