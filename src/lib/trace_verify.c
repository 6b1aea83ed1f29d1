/* trace_verify.c - the whole-file check of one trace: header, walk, footer
 * agreement, every block and record. */
#include "trace_internal.h"

#include <string.h> /* memset */

/* Check that the footer and the walk list the same blocks. */
static int compare_indexes(const char *path, const mc_block_info *f, size_t nf,
                           uint64_t ftotal, const mc_block_info *w, size_t nw,
                           mc_errinfo *err)
{
    if (nf != nw)
        return mc_errinfo_set(err, MC_EFOOTER, path, -1, -1,
                              "footer lists %zu blocks, the file holds %zu", nf,
                              nw);
    uint64_t total = 0;
    for (size_t i = 0; i < nw; i++) {
        if (f[i].offset != w[i].offset || f[i].nrecords != w[i].nrecords ||
            f[i].stored_len != w[i].stored_len)
            return mc_errinfo_set(
                err, MC_EFOOTER, path, (int64_t)i, (int64_t)w[i].offset,
                "footer entry (offset %llu, %u records, %u bytes) differs "
                "from the block header (offset %llu, %u records, %u bytes)",
                (unsigned long long)f[i].offset, f[i].nrecords, f[i].stored_len,
                (unsigned long long)w[i].offset, w[i].nrecords,
                w[i].stored_len);
        total += w[i].nrecords;
    }
    if (total != ftotal)
        return mc_errinfo_set(err, MC_EFOOTER, path, -1, -1,
                              "footer total %llu records, blocks hold %llu",
                              (unsigned long long)ftotal,
                              (unsigned long long)total);
    return 0;
}

int mc_trace_verify(const char *path, mc_trace_check *out, mc_errinfo *err)
{
    mc_trace_check local;
    mc_trace_check *c = out ? out : &local;
    memset(c, 0, sizeof *c);
    mc_trace_reader *r = NULL;
    int rc = mc_trace_open(path, &r, err);
    if (rc)
        return rc;
    c->header = *mc_trace_get_header(r);
    c->header_ok = 1;
    c->file_bytes = mc_trace_file_size(r);

    const mc_block_info *walk;
    size_t nwalk;
    int complete;
    rc = mc__trace_walk_index(r, &walk, &nwalk, &complete, err);
    if (rc)
        goto done;
    if (!complete) {
        rc = err ? err->code : MC_EBLOCK;
        goto done;
    }
    /* Where the walk stopped tells whether a footer must follow: blocks
     * that end at the end of the file have none (a writer that did not
     * close), blocks followed by "MCIX" must have a valid one. */
    const uint64_t end = nwalk ? walk[nwalk - 1].offset + MC_BLOCK_HEADER_SIZE +
                                     walk[nwalk - 1].stored_len
                               : mc__trace_header_size(r);
    if (end < c->file_bytes) {
        const mc_block_info *foot;
        size_t nfoot;
        uint64_t ftotal = 0;
        rc = mc__trace_footer_index(r, &foot, &nfoot, &ftotal, err);
        if (rc)
            goto done;
        rc = compare_indexes(path, foot, nfoot, ftotal, walk, nwalk, err);
        if (rc)
            goto done;
        c->has_footer = 1;
    }

    /* Read every block in order, as the reducer will. */
    for (;;) {
        const mc_record *recs;
        size_t n;
        rc = mc_trace_next_block(r, &recs, &n, err);
        if (rc == 0)
            break;
        if (rc < 0)
            goto done;
        uint64_t bi, boff;
        mc_trace_current_block(r, &bi, &boff);
        for (size_t i = 0; i < n; i++) {
            mc_errinfo rerr;
            mc_errinfo_clear(&rerr);
            if (mc_record_check(&recs[i], &rerr)) {
                rc = mc_errinfo_set(
                    err, MC_ERECORD, path, (int64_t)bi, (int64_t)boff,
                    "record %zu of the block: %s", i, rerr.detail);
                goto done;
            }
        }
        c->blocks++;
        c->records += n;
        c->raw_bytes += (uint64_t)n * MC_RECORD_SIZE;
    }
    if (c->blocks != nwalk) {
        rc = mc_errinfo_set(err, MC_EBLOCK, path, (int64_t)c->blocks, -1,
                            "read %llu blocks, the walk found %zu",
                            (unsigned long long)c->blocks, nwalk);
        goto done;
    }
    rc = 0;
done:
    mc_trace_close(r);
    return rc;
}
