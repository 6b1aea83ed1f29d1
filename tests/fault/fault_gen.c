/* fault_gen.c - writes one small trace file with chosen records and layout, for
 * the damaged-campaign tests (tests/fault/fault_matrix.py). */
#include <stdio.h>  /* fprintf, printf */
#include <stdlib.h> /* strtoll, strtoull */
#include <string.h> /* strcmp, memset */

#include <msgcensus/ops.h>   /* MC_OP_*, MC_DIR_* */
#include <msgcensus/trace.h> /* the writer */

static void usage(void)
{
    fprintf(stderr,
            "usage: fault_gen OUT --rank R --size S --records N [OPTIONS]\n"
            "  --block-records B  records per block (default 16)\n"
            "  --zstd             compress blocks with zstd\n"
            "  --no-footer        flush the last block, write no footer\n"
            "  --bad-op I         record I gets operation code 999 (unknown)\n"
            "  --backwards I      record I ends before it starts\n"
            "  --omit-block K     leave out the records of block K (the\n"
            "                     intact remainder of a damaged file)\n"
            "  --omit-record I    leave out record I\n"
            "  --seed X           varies the message sizes (default 1)\n"
            "Prints the number of records written.\n");
}

static int parse_ll(const char *s, long long *v)
{
    char *end;
    *v = strtoll(s, &end, 10);
    return s[0] == '\0' || *end != '\0';
}

/* Record @i of rank @rank in a job of @size ranks: a rotation of
 * point-to-point, collective and one-sided calls with sizes that repeat,
 * so that histograms have several bins of several counts. */
static void make_record(mc_record *r, long long i, int32_t rank, int32_t size,
                        unsigned long long seed)
{
    static const struct {
        uint16_t op;
        uint8_t dir;
    } kinds[] = {
        {MC_OP_Isend, MC_DIR_SEND},     {MC_OP_Irecv, MC_DIR_RECV},
        {MC_OP_Allreduce, MC_DIR_NONE}, {MC_OP_Isend, MC_DIR_SEND},
        {MC_OP_Irecv, MC_DIR_RECV},     {MC_OP_Alltoall, MC_DIR_NONE},
        {MC_OP_Put, MC_DIR_SEND},       {MC_OP_Bcast, MC_DIR_NONE},
    };
    const size_t nk = sizeof kinds / sizeof kinds[0];
    const size_t k = (size_t)i % nk;
    memset(r, 0, sizeof *r);
    r->op = kinds[k].op;
    r->dir = kinds[k].dir;
    const unsigned long long h = ((unsigned long long)i * 2654435761ull +
                                  (unsigned)rank * 40503ull + seed * 977ull) %
                                 97ull;
    r->bytes = r->op == MC_OP_Allreduce ? 64u : (uint64_t)8u << (h % 14u);
    r->t_start_ns = 1000u + (uint64_t)i * 1000u;
    r->t_end_ns = r->t_start_ns + 100u + (uint64_t)(h % 13u);
    const int p2p = r->dir != MC_DIR_NONE;
    r->comm_id = p2p ? 0u : 1u;
    r->comm_size = (uint32_t)size;
    r->peer = !p2p                    ? MC_PEER_NONE
              : r->dir == MC_DIR_SEND ? (rank + 1) % size
                                      : (rank + size - 1) % size;
    r->tag = p2p && r->op != MC_OP_Put ? (int32_t)(i % 4) : MC_TAG_NONE;
}

int main(int argc, char **argv)
{
    if (argc < 2 || argv[1][0] == '-') {
        usage();
        return 2;
    }
    const char *out = argv[1];
    long long rank = -1, size = -1, nrec = -1, block = 16, bad_op = -1,
              backwards = -1, omit = -1, omit_rec = -1, seed = 1;
    int zstd = 0, footer = 1;
    for (int i = 2; i < argc; i++) {
        const char *a = argv[i];
        long long *dst = !strcmp(a, "--rank")            ? &rank
                         : !strcmp(a, "--size")          ? &size
                         : !strcmp(a, "--records")       ? &nrec
                         : !strcmp(a, "--block-records") ? &block
                         : !strcmp(a, "--bad-op")        ? &bad_op
                         : !strcmp(a, "--backwards")     ? &backwards
                         : !strcmp(a, "--omit-block")    ? &omit
                         : !strcmp(a, "--omit-record")   ? &omit_rec
                         : !strcmp(a, "--seed")          ? &seed
                                                         : NULL;
        if (!strcmp(a, "--zstd")) {
            zstd = 1;
        } else if (!strcmp(a, "--no-footer")) {
            footer = 0;
        } else if (!dst || i + 1 >= argc || parse_ll(argv[++i], dst)) {
            usage();
            return 2;
        }
    }
    if (rank < -1000000 || size < 1 || nrec < 0 || block < 1 ||
        block > MC_BLOCK_MAX_RECORDS || size > 1000000 || rank > 1000000) {
        usage();
        return 2;
    }
    mc_trace_header h;
    mc_trace_header_init(&h, (int32_t)rank, (int32_t)size);
    snprintf(h.host, sizeof h.host, "fault-node-%03lld", rank / 4);
    h.created_unix_ns = 1760000000000000000LL;
    h.epoch_unix_ns = 1760000000000000000ULL;
    mc_writer_opts o;
    mc_writer_opts_init(&o);
    o.block_records = (uint32_t)block;
    o.codec = zstd ? MC_CODEC_ZSTD : MC_CODEC_NONE;
    o.write_footer = footer;

    mc_trace_writer *w = NULL;
    mc_errinfo e;
    mc_errinfo_clear(&e);
    int rc = mc_trace_writer_open(out, &h, &o, &w, &e);
    long long written = 0;
    for (long long i = 0; i < nrec && !rc; i++) {
        if ((omit >= 0 && i / block == omit) || i == omit_rec)
            continue;
        mc_record r;
        make_record(&r, i, (int32_t)rank, (int32_t)size,
                    (unsigned long long)seed);
        if (i == bad_op)
            r.op = 999;
        if (i == backwards)
            r.t_end_ns = r.t_start_ns - 1;
        rc = mc_trace_write(w, &r, 1, &e);
        written++;
    }
    if (!rc && !footer)
        rc = mc_trace_writer_flush(w, &e);
    const int rc2 = mc_trace_writer_close(w, rc ? NULL : &e);
    if (!rc)
        rc = rc2;
    if (rc) {
        char line[2048];
        mc_errinfo_format(&e, line, sizeof line);
        fprintf(stderr, "fault_gen: %s\n", line);
        return 1;
    }
    printf("%lld\n", written);
    return 0;
}
