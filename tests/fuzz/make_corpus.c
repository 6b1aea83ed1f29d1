/* make_corpus.c - writes the seed corpus of the fuzz harnesses: small valid
 * traces (both codecs, with and without footer, tiny blocks) made with the
 * writer API, and CSV files made with the exporter. */
#include <stdio.h>  /* printf, fprintf, snprintf */
#include <string.h> /* memset */

#include <msgcensus/csv.h>   /* the CSV exporter */
#include <msgcensus/ops.h>   /* MC_OP_*, MC_DIR_* */
#include <msgcensus/trace.h> /* the writer */

/* A small, varied record sequence: point-to-point sends and receives,
 * collectives and one-sided calls, with sizes from 0 to a few MiB and
 * increasing times. */
static void make_records(mc_record *recs, size_t n, int32_t rank)
{
    static const struct {
        uint16_t op;
        uint8_t dir;
        uint8_t flags;
    } kinds[] = {
        {MC_OP_Isend, MC_DIR_SEND, 0},
        {MC_OP_Irecv, MC_DIR_RECV, MC_RF_POSTED_SIZE},
        {MC_OP_Allreduce, MC_DIR_NONE, 0},
        {MC_OP_Sendrecv, MC_DIR_SEND, 0},
        {MC_OP_Sendrecv, MC_DIR_RECV, 0},
        {MC_OP_Bcast, MC_DIR_NONE, MC_RF_IN_PLACE},
        {MC_OP_Put, MC_DIR_SEND, 0},
        {MC_OP_Alltoallv, MC_DIR_NONE, MC_RF_PER_PEER},
    };
    const size_t nk = sizeof kinds / sizeof kinds[0];
    uint64_t t = 1000;
    for (size_t i = 0; i < n; i++) {
        mc_record *r = &recs[i];
        memset(r, 0, sizeof *r);
        const size_t k = i % nk;
        r->op = kinds[k].op;
        r->dir = kinds[k].dir;
        r->flags = kinds[k].flags;
        r->bytes = (uint64_t)8 << (i % 20);
        r->t_start_ns = t;
        r->t_end_ns = t + 250 + 17 * (i % 7);
        t = r->t_end_ns + 40;
        r->comm_id = r->dir == MC_DIR_NONE ? 1 : 0;
        r->comm_size = 4;
        r->peer = r->dir == MC_DIR_NONE ? MC_PEER_NONE : (rank + 1) % 4;
        r->tag = r->dir == MC_DIR_NONE ? MC_TAG_NONE : (int32_t)(i % 3);
    }
}

static void seed_header(mc_trace_header *h)
{
    mc_trace_header_init(h, 1, 4);
    snprintf(h->host, sizeof h->host, "seed-node-001");
    h->created_unix_ns = 1700000000000000000LL;
    h->epoch_unix_ns = 1700000000000000000ULL;
}

/* @major: trace format to write (0 = the current one). */
static int write_one_major(const char *dir, const char *name, size_t nrec,
                           uint32_t block_records, mc_codec codec, int footer,
                           int flush_partial, unsigned major)
{
    char path[4096];
    snprintf(path, sizeof path, "%s/%s", dir, name);
    mc_trace_header h;
    seed_header(&h);
    mc_writer_opts o;
    mc_writer_opts_init(&o);
    o.block_records = block_records;
    o.codec = codec;
    o.write_footer = footer;
    o.format_major = major;
    mc_record recs[64];
    if (nrec > sizeof recs / sizeof recs[0])
        nrec = sizeof recs / sizeof recs[0];
    make_records(recs, nrec, h.app_rank);
    mc_trace_writer *w = NULL;
    mc_errinfo e;
    mc_errinfo_clear(&e);
    int rc = mc_trace_writer_open(path, &h, &o, &w, &e);
    if (!rc)
        rc = mc_trace_write(w, recs, nrec, &e);
    if (!rc && !footer && flush_partial)
        rc = mc_trace_writer_flush(w, &e);
    if (!rc && !footer && !flush_partial) {
        /* What a crash leaves: whole blocks only, no footer. */
        mc_trace_writer_abandon(w);
        w = NULL;
    }
    if (w) {
        const int rc2 = mc_trace_writer_close(w, rc ? NULL : &e);
        if (!rc)
            rc = rc2;
    }
    if (rc) {
        char line[2048];
        mc_errinfo_format(&e, line, sizeof line);
        fprintf(stderr, "make_corpus: %s\n", line);
        return 1;
    }
    printf("%s\n", path);
    return 0;
}

static int write_one(const char *dir, const char *name, size_t nrec,
                     uint32_t block_records, mc_codec codec, int footer,
                     int flush_partial)
{
    return write_one_major(dir, name, nrec, block_records, codec, footer,
                           flush_partial, 0);
}

/* A CSV file: the exporter's preamble (or only the header row) and
 * @nrec records, with CRLF line ends when @crlf. */
static int write_csv(const char *dir, const char *name, size_t nrec,
                     int preamble, int crlf)
{
    char path[4096];
    snprintf(path, sizeof path, "%s/%s", dir, name);
    FILE *f = fopen(path, "wb");
    if (!f) {
        fprintf(stderr, "make_corpus: cannot create %s\n", path);
        return 1;
    }
    mc_trace_header h;
    seed_header(&h);
    snprintf(h.host, sizeof h.host, "seed node,%%01");
    int bad = preamble ? mc_csv_write_preamble(f, &h) != 0
                       : fputs(MC_CSV_HEADER_ROW "\n", f) < 0;
    mc_record recs[64];
    if (nrec > sizeof recs / sizeof recs[0])
        nrec = sizeof recs / sizeof recs[0];
    make_records(recs, nrec, h.app_rank);
    for (size_t i = 0; i < nrec && !bad; i++) {
        char line[MC_CSV_MAX_LINE + 2];
        const int k = mc_csv_format_record(&recs[i], line, sizeof line, NULL);
        if (k <= 0 || (size_t)k >= sizeof line) {
            bad = 1;
            break;
        }
        if (crlf) {
            line[k - 1] = '\r';
            bad = fputs(line, f) < 0 || fputc('\n', f) == EOF;
        } else {
            bad = fputs(line, f) < 0;
        }
    }
    if (fclose(f) != 0 || bad) {
        fprintf(stderr, "make_corpus: cannot write %s\n", path);
        return 1;
    }
    printf("%s\n", path);
    return 0;
}

int main(int argc, char **argv)
{
    if (argc != 3) {
        fprintf(stderr, "usage: fuzz_make_corpus TRACE_DIR CSV_DIR\n");
        return 2;
    }
    const char *d = argv[1], *c = argv[2];
    int bad = 0;
    bad |= write_one(d, "plain-footer.mct", 11, 4, MC_CODEC_NONE, 1, 0);
    bad |= write_one(d, "plain-nofooter.mct", 11, 4, MC_CODEC_NONE, 0, 1);
    bad |= write_one(d, "plain-abandoned.mct", 11, 4, MC_CODEC_NONE, 0, 0);
    bad |= write_one(d, "zstd-footer.mct", 24, 8, MC_CODEC_ZSTD, 1, 0);
    bad |= write_one(d, "zstd-nofooter.mct", 24, 8, MC_CODEC_ZSTD, 0, 1);
    bad |= write_one(d, "one-record.mct", 1, 1, MC_CODEC_NONE, 1, 0);
    bad |= write_one(d, "empty-footer.mct", 0, 4, MC_CODEC_NONE, 1, 0);
    bad |= write_one(d, "header-only.mct", 0, 4, MC_CODEC_NONE, 0, 1);
    bad |= write_one(d, "zstd-one-block.mct", 64, 64, MC_CODEC_ZSTD, 1, 0);
    /* Format 1.x files (XXH64 payload checksums), which readers still read. */
    bad |= write_one_major(d, "v1-plain-footer.mct", 11, 4, MC_CODEC_NONE, 1, 0,
                           1);
    bad |=
        write_one_major(d, "v1-zstd-footer.mct", 24, 8, MC_CODEC_ZSTD, 1, 0, 1);
    bad |= write_csv(c, "preamble.csv", 16, 1, 0);
    bad |= write_csv(c, "header-row-only.csv", 0, 0, 0);
    bad |= write_csv(c, "no-preamble.csv", 8, 0, 0);
    bad |= write_csv(c, "crlf.csv", 8, 1, 1);
    return bad;
}
