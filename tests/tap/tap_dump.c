/* tap_dump.c - test helper: verify trace files with the library and print their
 * records as CSV. */
#include <stdio.h>  /* printf, fprintf */
#include <string.h> /* memset */

#include <msgcensus/error.h>
#include <msgcensus/ops.h>
#include <msgcensus/trace.h>

/* Output, one line per record:
 *   rank,op,dir,peer,bytes,comm_id,comm_size,tag,flags,t_start_ns,t_end_ns
 * and per file one line "#file,rank,size,blocks,records,has_footer".
 * Exit status 1 when a file does not verify. */
static int dump(const char *path)
{
    mc_errinfo err;
    mc_trace_check chk;
    memset(&err, 0, sizeof err);
    char line[1600];
    if (mc_trace_verify(path, &chk, &err) != 0) {
        mc_errinfo_format(&err, line, sizeof line);
        fprintf(stderr, "tap_dump: %s\n", line);
        return 1;
    }
    mc_trace_reader *r = NULL;
    if (mc_trace_open(path, &r, &err) != 0) {
        mc_errinfo_format(&err, line, sizeof line);
        fprintf(stderr, "tap_dump: %s\n", line);
        return 1;
    }
    const mc_trace_header *h = mc_trace_get_header(r);
    printf("#file,%d,%d,%llu,%llu,%d\n", h->app_rank, h->app_size,
           (unsigned long long)chk.blocks, (unsigned long long)chk.records,
           chk.has_footer);
    const mc_record *recs = NULL;
    size_t n = 0;
    int rc;
    while ((rc = mc_trace_next_block(r, &recs, &n, &err)) == 1) {
        for (size_t i = 0; i < n; i++) {
            const mc_record *x = &recs[i];
            const char *name = mc_op_name(x->op);
            printf("%d,%s,%u,%d,%llu,%u,%u,%d,%u,%llu,%llu\n", h->app_rank,
                   name ? name : "?", (unsigned)x->dir, x->peer,
                   (unsigned long long)x->bytes, x->comm_id, x->comm_size,
                   x->tag, (unsigned)x->flags,
                   (unsigned long long)x->t_start_ns,
                   (unsigned long long)x->t_end_ns);
        }
    }
    mc_trace_close(r);
    if (rc < 0) {
        mc_errinfo_format(&err, line, sizeof line);
        fprintf(stderr, "tap_dump: %s\n", line);
        return 1;
    }
    return 0;
}

int main(int argc, char **argv)
{
    int bad = 0;
    for (int i = 1; i < argc; i++)
        bad |= dump(argv[i]);
    return bad;
}
