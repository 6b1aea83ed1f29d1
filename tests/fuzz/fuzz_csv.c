/* fuzz_csv.c - fuzz harness: the CSV importer on arbitrary text, with an
 * export-and-reimport round trip of whatever it accepts. */
#include "fuzz_common.h"

#include <stdio.h>  /* fmemopen, open_memstream, fputs */
#include <stdlib.h> /* malloc, realloc, free */
#include <string.h> /* memcpy, memcmp, strcmp */

#include <msgcensus/csv.h>   /* the importer and exporter */
#include <msgcensus/trace.h> /* mc_record_check */

/* A stream over @len bytes of @buf (fmemopen refuses a zero size). */
static FILE *open_bytes(char *buf, size_t len)
{
    return len ? fmemopen(buf, len, "r") : fopen("/dev/null", "r");
}

/* Lines in the input, the most a reader can report. */
static int64_t count_lines(const uint8_t *data, size_t size)
{
    int64_t n = 1;
    for (size_t i = 0; i < size; i++)
        n += data[i] == '\n';
    return n;
}

typedef struct parsed {
    int ok; /* the header block and header row were accepted */
    mc_csv_meta meta;
    mc_record *recs;
    size_t n, cap;
} parsed;

/* Read all records; stops at the first error. */
static void parse(char *buf, size_t len, int64_t max_line, parsed *out)
{
    FILE *in = open_bytes(buf, len);
    FUZZ_CHECK(in != NULL);
    mc_csv_reader *r = NULL;
    mc_errinfo e;
    mc_errinfo_clear(&e);
    int rc = mc_csv_reader_open(in, "fuzz.csv", &r, &e);
    if (rc) {
        fuzz_check_errinfo(&e, rc, -1);
        FUZZ_CHECK(rc == MC_ECSV || rc == MC_EIO || rc == MC_ENOMEM);
        FUZZ_CHECK(e.line >= 0 && e.line <= max_line);
        FUZZ_CHECK(r == NULL);
        fclose(in);
        return;
    }
    out->ok = 1;
    out->meta = *mc_csv_reader_meta(r);
    FUZZ_CHECK(strnlen(out->meta.header.host, sizeof out->meta.header.host) <
               sizeof out->meta.header.host);
    for (int64_t it = 0;; it++) {
        FUZZ_CHECK(it <= max_line);
        mc_record rec;
        mc_errinfo_clear(&e);
        rc = mc_csv_read(r, &rec, &e);
        if (rc == 0)
            break;
        if (rc < 0) {
            fuzz_check_errinfo(&e, rc, -1);
            FUZZ_CHECK(rc == MC_ECSV || rc == MC_EIO);
            FUZZ_CHECK(e.line >= 1 && e.line <= max_line);
            FUZZ_CHECK(e.column >= 0 && e.column <= MC_CSV_MAX_LINE + 1);
            break;
        }
        FUZZ_CHECK(rc == 1);
        FUZZ_CHECK(mc_csv_reader_line(r) >= 1 &&
                   mc_csv_reader_line(r) <= max_line);
        /* csv.h: a record the importer returns passes the record check. */
        mc_errinfo re;
        mc_errinfo_clear(&re);
        FUZZ_CHECK(mc_record_check(&rec, &re) == 0);
        if (out->n == out->cap) {
            const size_t cap = out->cap ? 2 * out->cap : 64;
            mc_record *n = realloc(out->recs, cap * sizeof *n);
            FUZZ_CHECK(n != NULL);
            out->recs = n;
            out->cap = cap;
        }
        out->recs[out->n++] = rec;
    }
    mc_csv_reader_free(r);
    fclose(in);
}

/* Export what was accepted and import it again: same header fields, same
 * records. */
static void round_trip(const parsed *p)
{
    char *text = NULL;
    size_t len = 0;
    FILE *out = open_memstream(&text, &len);
    FUZZ_CHECK(out != NULL);
    FUZZ_CHECK(mc_csv_write_preamble(out, &p->meta.header) == 0);
    for (size_t i = 0; i < p->n; i++) {
        char line[MC_CSV_MAX_LINE + 2];
        mc_errinfo e;
        mc_errinfo_clear(&e);
        const int k = mc_csv_format_record(&p->recs[i], line, sizeof line, &e);
        FUZZ_CHECK(k > 0 && (size_t)k < sizeof line);
        FUZZ_CHECK(strlen(line) == (size_t)k && line[k - 1] == '\n');
        fputs(line, out);
    }
    FUZZ_CHECK(fclose(out) == 0);

    parsed q;
    memset(&q, 0, sizeof q);
    parse(text, len, INT64_MAX, &q);
    FUZZ_CHECK(q.ok);
    FUZZ_CHECK(q.n == p->n);
    FUZZ_CHECK(q.n == 0 || memcmp(q.recs, p->recs, q.n * sizeof *q.recs) == 0);
    const mc_trace_header *a = &p->meta.header, *b = &q.meta.header;
    FUZZ_CHECK(a->app_rank == b->app_rank && a->app_size == b->app_size &&
               a->clock_res_ps == b->clock_res_ps &&
               a->created_unix_ns == b->created_unix_ns &&
               a->epoch_unix_ns == b->epoch_unix_ns);
    FUZZ_CHECK(strcmp(a->host, b->host) == 0);
    free(q.recs);
    free(text);
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    /* fmemopen reads a writable buffer; take a copy of the input. */
    char *buf = malloc(size ? size : 1);
    FUZZ_CHECK(buf != NULL);
    if (size)
        memcpy(buf, data, size);
    parsed p;
    memset(&p, 0, sizeof p);
    parse(buf, size, count_lines(data, size), &p);
    if (p.ok)
        round_trip(&p);
    free(p.recs);
    free(buf);
    return 0;
}
