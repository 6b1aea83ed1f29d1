/* csv.c - the CSV text form of trace records: a streaming line parser with
 * precise errors, and the exporter. */
#include <msgcensus/csv.h>

#include <inttypes.h> /* PRIu64, PRId64 */
#include <stdarg.h>   /* va_list */
#include <stdlib.h>   /* malloc, free */
#include <string.h>   /* strcmp, memcpy */

#include <msgcensus/ops.h> /* mc_op_from_name, mc_op_name */

struct mc_csv_reader {
    FILE *in;
    char *name;
    long long line; /* line read last */
    char buf[MC_CSV_MAX_LINE + 2];
    size_t len; /* bytes in buf, without the newline */
    mc_csv_meta meta;
};

static const char *const field_names[MC_CSV_FIELDS] = {
    "op",        "dir", "peer",       "bytes",    "comm_id",
    "comm_size", "tag", "t_start_ns", "t_end_ns", "flags"};

/* Read one line into r->buf. @return 1, 0 at EOF, or MC_ECSV / MC_EIO. A
 * trailing "\r" is dropped, so CRLF files read like LF files. */
static int read_line(mc_csv_reader *r, mc_errinfo *err)
{
    size_t n = 0;
    int c;
    while ((c = getc(r->in)) != EOF && c != '\n') {
        if (n == MC_CSV_MAX_LINE) {
            r->line++;
            mc_errinfo_set(err, MC_ECSV, r->name, -1, -1,
                           "line longer than %d bytes", MC_CSV_MAX_LINE);
            if (err) {
                err->line = r->line;
                err->column = MC_CSV_MAX_LINE + 1;
            }
            return MC_ECSV;
        }
        r->buf[n++] = (char)c;
    }
    if (ferror(r->in))
        return mc_errinfo_set(err, MC_EIO, r->name, -1, -1, "read failed");
    if (c == EOF && n == 0)
        return 0;
    r->line++;
    if (n > 0 && r->buf[n - 1] == '\r')
        n--;
    r->buf[n] = '\0';
    r->len = n;
    return 1;
}

#if defined(__GNUC__)
__attribute__((format(printf, 4, 5)))
#endif
static int
csv_error(const mc_csv_reader *r, mc_errinfo *err, size_t column,
          const char *fmt, ...)
{
    if (!err)
        return MC_ECSV;
    char detail[sizeof err->detail];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(detail, sizeof detail, fmt, ap);
    va_end(ap);
    mc_errinfo_set(err, MC_ECSV, r->name, -1, -1, "%s", detail);
    err->line = r->line;
    err->column = (int64_t)column;
    return MC_ECSV;
}

/* Decimal digits only, into *v, at most @max. */
static int parse_unsigned(const char *s, size_t len, uint64_t max, uint64_t *v)
{
    if (len == 0)
        return -1;
    uint64_t x = 0;
    for (size_t i = 0; i < len; i++) {
        const unsigned d = (unsigned)(unsigned char)s[i] - '0';
        if (d > 9)
            return -1;
        if (x > (max - d) / 10)
            return -2;
        x = x * 10 + d;
    }
    *v = x;
    return 0;
}

/* An optional '-' then decimal digits, within [min, max]. */
static int parse_signed(const char *s, size_t len, int64_t min, int64_t max,
                        int64_t *v)
{
    const int neg = len > 0 && s[0] == '-';
    uint64_t m;
    const uint64_t lim = neg ? (uint64_t)(-(min + 1)) + 1 : (uint64_t)max;
    const int rc = parse_unsigned(s + neg, len - (size_t)neg, lim, &m);
    if (rc)
        return rc;
    *v = neg ? (m == 0 ? 0 : -(int64_t)(m - 1) - 1) : (int64_t)m;
    return 0;
}

/* Decode %XX escapes of a host value into @out (cap bytes with NUL). */
static int unescape(const char *s, char *out, size_t cap)
{
    size_t n = 0;
    for (size_t i = 0; s[i]; i++) {
        int c = (unsigned char)s[i];
        if (c == '%') {
            unsigned v = 0;
            for (int k = 1; k <= 2; k++) {
                const char h = s[i + (size_t)k];
                const unsigned d =
                    h >= '0' && h <= '9'   ? (unsigned)(h - '0')
                    : h >= 'a' && h <= 'f' ? (unsigned)(h - 'a' + 10)
                    : h >= 'A' && h <= 'F' ? (unsigned)(h - 'A' + 10)
                                           : 16u;
                if (d == 16)
                    return -1;
                v = v * 16 + d;
            }
            c = (int)v;
            i += 2;
        }
        if (c == 0 || n + 1 >= cap)
            return -1;
        out[n++] = (char)c;
    }
    out[n] = '\0';
    return 0;
}

/* A `# key=value` line with a known key sets a header field; any other
 * comment is free text. */
static int parse_comment(mc_csv_reader *r, mc_errinfo *err)
{
    const char *p = r->buf + 1;
    while (*p == ' ' || *p == '\t')
        p++;
    const char *key = p;
    while ((*p >= 'a' && *p <= 'z') || *p == '_')
        p++;
    if (*p != '=' || p == key)
        return 0;
    const size_t klen = (size_t)(p - key);
    const char *val = p + 1;
    const size_t vlen = strlen(val);
    const size_t col = (size_t)(val - r->buf) + 1;
    mc_trace_header *h = &r->meta.header;
    uint64_t u;
    int64_t s;
#define KEY(name) (klen == sizeof(name) - 1 && memcmp(key, name, klen) == 0)
    if (KEY("app_rank") || KEY("app_size")) {
        if (parse_signed(val, vlen, INT32_MIN, INT32_MAX, &s))
            return csv_error(r, err, col, "expected an integer for %.*s",
                             (int)klen, key);
        if (KEY("app_rank")) {
            h->app_rank = (int32_t)s;
            r->meta.present |= MC_CSV_HAVE_RANK;
        } else {
            h->app_size = (int32_t)s;
            r->meta.present |= MC_CSV_HAVE_SIZE;
        }
    } else if (KEY("clock_res_ps") || KEY("epoch_unix_ns")) {
        if (parse_unsigned(val, vlen, UINT64_MAX, &u))
            return csv_error(r, err, col,
                             "expected an unsigned integer for %.*s", (int)klen,
                             key);
        if (KEY("clock_res_ps")) {
            h->clock_res_ps = u;
            r->meta.present |= MC_CSV_HAVE_CLOCK;
        } else {
            h->epoch_unix_ns = u;
            r->meta.present |= MC_CSV_HAVE_EPOCH;
        }
    } else if (KEY("created_unix_ns")) {
        if (parse_signed(val, vlen, INT64_MIN, INT64_MAX, &s))
            return csv_error(r, err, col,
                             "expected an integer for "
                             "created_unix_ns");
        h->created_unix_ns = s;
        r->meta.present |= MC_CSV_HAVE_CREATED;
    } else if (KEY("host")) {
        if (unescape(val, h->host, sizeof h->host))
            return csv_error(r, err, col,
                             "host must be at most %u bytes, "
                             "with %%XX escapes and no NUL",
                             MC_TRACE_HOST_LEN);
        r->meta.present |= MC_CSV_HAVE_HOST;
    }
#undef KEY
    return 0;
}

int mc_csv_reader_open(FILE *in, const char *name, mc_csv_reader **out,
                       mc_errinfo *err)
{
    if (!in || !out)
        return mc_errinfo_set(err, MC_EINVAL, name, -1, -1, "no input");
    *out = NULL;
    if (!name)
        name = "-";
    mc_csv_reader *r = calloc(1, sizeof *r);
    const size_t nl = strlen(name) + 1;
    if (!r || !(r->name = malloc(nl))) {
        free(r);
        return mc_errinfo_set(err, MC_ENOMEM, name, -1, -1, NULL);
    }
    memcpy(r->name, name, nl);
    r->in = in;
    mc_trace_header_init(&r->meta.header, 0, 0);
    int rc;
    for (;;) {
        rc = read_line(r, err);
        if (rc < 0)
            goto fail;
        if (rc == 0) {
            rc = csv_error(r, err, 0, "no header row '%s'", MC_CSV_HEADER_ROW);
            goto fail;
        }
        if (r->len == 0)
            continue;
        if (r->buf[0] == '#') {
            rc = parse_comment(r, err);
            if (rc)
                goto fail;
            continue;
        }
        if (strcmp(r->buf, MC_CSV_HEADER_ROW) != 0) {
            size_t i = 0;
            while (r->buf[i] && r->buf[i] == MC_CSV_HEADER_ROW[i])
                i++;
            rc = csv_error(r, err, i + 1, "expected the header row '%s'",
                           MC_CSV_HEADER_ROW);
            goto fail;
        }
        break;
    }
    *out = r;
    return 0;
fail:
    mc_csv_reader_free(r);
    return rc;
}

const mc_csv_meta *mc_csv_reader_meta(const mc_csv_reader *r)
{
    return &r->meta;
}

long long mc_csv_reader_line(const mc_csv_reader *r) { return r->line; }

void mc_csv_reader_free(mc_csv_reader *r)
{
    if (!r)
        return;
    free(r->name);
    free(r);
}

int mc_csv_read(mc_csv_reader *r, mc_record *rec, mc_errinfo *err)
{
    int rc;
    do {
        rc = read_line(r, err);
        if (rc <= 0)
            return rc;
    } while (r->len == 0);
    if (r->buf[0] == '#')
        return csv_error(r, err, 1,
                         "comment lines are allowed only before "
                         "the header row");
    /* Split at commas; fields never contain commas, so there is no quoting. */
    const char *f[MC_CSV_FIELDS];
    size_t flen[MC_CSV_FIELDS], fcol[MC_CSV_FIELDS];
    size_t nf = 0, start = 0;
    for (size_t i = 0; i <= r->len; i++) {
        if (i < r->len && r->buf[i] != ',')
            continue;
        if (nf == MC_CSV_FIELDS)
            return csv_error(r, err, start + 1, "more than %d fields",
                             MC_CSV_FIELDS);
        f[nf] = r->buf + start;
        flen[nf] = i - start;
        fcol[nf] = start + 1;
        nf++;
        start = i + 1;
    }
    if (nf < MC_CSV_FIELDS)
        return csv_error(r, err, r->len + 1,
                         "expected %d fields, found %zu "
                         "(missing column %s)",
                         MC_CSV_FIELDS, nf, field_names[nf]);
    memset(rec, 0, sizeof *rec);

    /* op: an MPI name of the operation table. */
    char opname[64];
    if (flen[0] == 0 || flen[0] >= sizeof opname)
        return csv_error(r, err, fcol[0],
                         "expected an MPI operation name in "
                         "column op");
    memcpy(opname, f[0], flen[0]);
    opname[flen[0]] = '\0';
    const unsigned op = mc_op_from_name(opname);
    if (op == MC_OP_NONE || strncmp(opname, "MPI_", 4) != 0)
        return csv_error(r, err, fcol[0],
                         "unknown operation '%s' in column op "
                         "(expected a name like MPI_Isend)",
                         opname);
    rec->op = (uint16_t)op;

    /* dir */
    if (flen[1] == 4 && !memcmp(f[1], "none", 4))
        rec->dir = MC_DIR_NONE;
    else if (flen[1] == 4 && !memcmp(f[1], "send", 4))
        rec->dir = MC_DIR_SEND;
    else if (flen[1] == 4 && !memcmp(f[1], "recv", 4))
        rec->dir = MC_DIR_RECV;
    else
        return csv_error(r, err, fcol[1],
                         "expected none, send or recv in "
                         "column dir");

    /* Integer columns. */
    int64_t sv;
    uint64_t uv;
    static const struct {
        int col;
        int is_signed;
        uint64_t max;
    } ints[] = {{2, 1, INT32_MAX},  {3, 0, UINT64_MAX}, {4, 0, UINT32_MAX},
                {5, 0, UINT32_MAX}, {6, 1, INT32_MAX},  {7, 0, UINT64_MAX},
                {8, 0, UINT64_MAX}, {9, 0, UINT8_MAX}};
    uint64_t vals[MC_CSV_FIELDS] = {0};
    for (size_t k = 0; k < sizeof ints / sizeof ints[0]; k++) {
        const int c = ints[k].col;
        if (ints[k].is_signed) {
            const int prc =
                parse_signed(f[c], flen[c], INT32_MIN, INT32_MAX, &sv);
            if (prc == -1)
                return csv_error(r, err, fcol[c],
                                 "expected integer in column "
                                 "%s",
                                 field_names[c]);
            if (prc == -2)
                return csv_error(r, err, fcol[c],
                                 "value out of range in "
                                 "column %s (32-bit signed)",
                                 field_names[c]);
            vals[c] = (uint64_t)sv;
        } else {
            const int prc = parse_unsigned(f[c], flen[c], ints[k].max, &uv);
            if (prc == -1)
                return csv_error(r, err, fcol[c],
                                 "expected unsigned integer "
                                 "in column %s",
                                 field_names[c]);
            if (prc == -2)
                return csv_error(r, err, fcol[c],
                                 "value out of range in "
                                 "column %s (max %" PRIu64 ")",
                                 field_names[c], ints[k].max);
            vals[c] = uv;
        }
    }
    rec->peer = (int32_t)(int64_t)vals[2];
    rec->bytes = vals[3];
    rec->comm_id = (uint32_t)vals[4];
    rec->comm_size = (uint32_t)vals[5];
    rec->tag = (int32_t)(int64_t)vals[6];
    rec->t_start_ns = vals[7];
    rec->t_end_ns = vals[8];
    rec->flags = (uint8_t)vals[9];
    if (rec->t_end_ns < rec->t_start_ns)
        return csv_error(r, err, fcol[8],
                         "t_end_ns is earlier than "
                         "t_start_ns");
    if (rec->flags & ~MC_RF_KNOWN_MASK)
        return csv_error(r, err, fcol[9],
                         "unknown flag bits 0x%02x in column "
                         "flags (known 0x%02x)",
                         (unsigned)(rec->flags & ~MC_RF_KNOWN_MASK),
                         MC_RF_KNOWN_MASK);
    mc_errinfo rerr;
    mc_errinfo_clear(&rerr);
    if (mc_record_check(rec, &rerr))
        return csv_error(r, err, 1, "%s", rerr.detail);
    return 1;
}

int mc_csv_write_preamble(FILE *out, const mc_trace_header *hdr)
{
    char host[3 * MC_TRACE_HOST_LEN + 1];
    size_t n = 0;
    for (size_t i = 0; i < MC_TRACE_HOST_LEN && hdr->host[i]; i++) {
        const unsigned char c = (unsigned char)hdr->host[i];
        if (c > 0x20 && c < 0x7f && c != '%') {
            host[n++] = (char)c;
        } else {
            static const char hex[] = "0123456789ABCDEF";
            host[n++] = '%';
            host[n++] = hex[c >> 4];
            host[n++] = hex[c & 15];
        }
    }
    host[n] = '\0';
    const int k =
        fprintf(out,
                "# msgcensus trace records, CSV form of trace "
                "format %u.%u\n"
                "# app_rank=%" PRId32 "\n# app_size=%" PRId32 "\n"
                "# host=%s\n# clock_res_ps=%" PRIu64 "\n"
                "# created_unix_ns=%" PRId64 "\n"
                "# epoch_unix_ns=%" PRIu64 "\n%s\n",
                (unsigned)hdr->version_major, (unsigned)hdr->version_minor,
                hdr->app_rank, hdr->app_size, host, hdr->clock_res_ps,
                hdr->created_unix_ns, hdr->epoch_unix_ns, MC_CSV_HEADER_ROW);
    return k < 0 ? MC_EIO : 0;
}

int mc_csv_format_record(const mc_record *rec, char *buf, size_t cap,
                         mc_errinfo *err)
{
    const int rc = mc_record_check(rec, err);
    if (rc)
        return rc;
    static const char *const dirs[] = {"none", "send", "recv"};
    return snprintf(buf, cap,
                    "%s,%s,%" PRId32 ",%" PRIu64 ",%" PRIu32 ",%" PRIu32
                    ",%" PRId32 ",%" PRIu64 ",%" PRIu64 ",%u\n",
                    mc_op_name(rec->op), dirs[rec->dir], rec->peer, rec->bytes,
                    rec->comm_id, rec->comm_size, rec->tag, rec->t_start_ns,
                    rec->t_end_ns, (unsigned)rec->flags);
}
