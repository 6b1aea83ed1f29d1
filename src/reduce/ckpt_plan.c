/* ckpt_plan.c - units of work for checkpointed runs: files cut at fixed
 * byte strides, independent of the number of reducer ranks, so a restart
 * with another P finds the same units in the checkpoint directory. */
#include "checkpoint.h"

#include <stdio.h>  /* snprintf */
#include <stdlib.h> /* malloc, realloc, qsort */
#include <string.h> /* memset */

static int push(mc__unit **v, size_t *n, size_t *cap, const mc__unit *u)
{
    if (*n == *cap) {
        const size_t ncap = *cap ? 2 * *cap : 64;
        mc__unit *nv = realloc(*v, ncap * sizeof *nv);
        if (!nv)
            return MC_ENOMEM;
        *v = nv;
        *cap = ncap;
    }
    (*v)[(*n)++] = *u;
    return 0;
}

/* The units of file @fi: a cut before block j when its offset reaches the
 * next multiple of @stride. The last unit reads to the end, so blocks an
 * index could not see (after a damaged header) and the footer belong to
 * it, as in plan.c. */
static int cut_file(const mc__plan *p, uint32_t fi, uint64_t stride,
                    mc__unit **v, size_t *n, size_t *cap)
{
    const mc__file *f = &p->files[fi];
    const mc__unit whole = {fi, 0, 0, MC__TO_END, f->size, {0, 0, 0, 0}};
    if (f->size <= stride)
        return push(v, n, cap, &whole);
    char path[4096];
    snprintf(path, sizeof path, "%s/%s", p->dir, f->name);
    mc_trace_reader *r = NULL;
    mc_errinfo e;
    mc_errinfo_clear(&e);
    if (mc_trace_open(path, &r, &e) != 0)
        return push(v, n, cap, &whole); /* reading it reports the error */
    const mc_block_info *b = NULL;
    size_t nb = 0;
    int from_footer = 0, complete = 0;
    int rc = 0;
    if (mc_trace_index(r, &b, &nb, &from_footer, &complete, &e) != 0 ||
        nb < 2) {
        rc = push(v, n, cap, &whole);
        mc_trace_close(r);
        return rc;
    }
    size_t start = 0;
    uint64_t next = stride;
    for (size_t j = 1; j < nb && !rc; j++) {
        if (b[j].offset < next)
            continue;
        const uint64_t from = start ? b[start].offset : 0;
        const mc__unit u = {fi,      0, start, j - start, b[j].offset - from,
                            b[start]};
        rc = push(v, n, cap, &u);
        start = j;
        while (next <= b[j].offset)
            next += stride;
    }
    if (!rc) {
        const uint64_t from = start ? b[start].offset : 0;
        const mc__unit u = {fi, 0, start, MC__TO_END, f->size - from, b[start]};
        rc = push(v, n, cap, &u);
    }
    mc_trace_close(r);
    return rc;
}

int mc__ckpt_plan_build(const char *dir, int nranks, int skip_damaged,
                        uint64_t unit_bytes, mc__plan *plan, mc_errinfo *err)
{
    if (nranks < 1 || unit_bytes == 0)
        return mc_errinfo_set(err, MC_EINVAL, dir, -1, -1,
                              "checkpoint unit size must be positive");
    /* One rank: the scan, checks and whole-file units of plan.c; the units
     * are then cut again here. */
    int rc = mc__plan_build(dir, 1, skip_damaged, plan, err);
    if (rc)
        return rc;
    mc__unit *v = NULL;
    size_t n = 0, cap = 0;
    for (size_t i = 0; i < plan->nunits && !rc; i++)
        rc = cut_file(plan, plan->units[i].file, unit_bytes, &v, &n, &cap);
    if (rc) {
        free(v);
        mc__plan_free(plan);
        return mc_errinfo_set(err, rc, dir, -1, -1, "plan");
    }
    free(plan->units);
    plan->units = v;
    plan->nunits = n;
    rc = mc__plan_assign(plan, nranks);
    if (rc) {
        mc__plan_free(plan);
        return mc_errinfo_set(err, rc, dir, -1, -1, "plan");
    }
    return 0;
}
