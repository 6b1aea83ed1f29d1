/* csv.h - the CSV text form of trace records (docs/trace-format.md, "CSV text
 * form"): streaming import and export. */
#ifndef MSGCENSUS_CSV_H
#define MSGCENSUS_CSV_H

#include <stddef.h> /* size_t */
#include <stdio.h>  /* FILE */

#include "common.h"
#include "error.h"
#include "trace.h"

/* The header row, exactly; it follows the optional comment block. */
#define MC_CSV_HEADER_ROW                                                      \
    "op,dir,peer,bytes,comm_id,comm_size,tag,t_start_ns,t_end_ns,flags"
#define MC_CSV_FIELDS 10
#define MC_CSV_MAX_LINE 4096 /* longest accepted line, without newline */

/* Which trace header fields the comment block gave (mc_csv_meta.present). */
#define MC_CSV_HAVE_RANK 0x01u    /* # app_rank=INT */
#define MC_CSV_HAVE_SIZE 0x02u    /* # app_size=INT */
#define MC_CSV_HAVE_HOST 0x04u    /* # host=TEXT (%XX escapes) */
#define MC_CSV_HAVE_CLOCK 0x08u   /* # clock_res_ps=UINT */
#define MC_CSV_HAVE_CREATED 0x10u /* # created_unix_ns=INT */
#define MC_CSV_HAVE_EPOCH 0x20u   /* # epoch_unix_ns=UINT */

/* Trace header fields read from the leading `# key=value` lines. Fields not
 * given keep the values of mc_trace_header_init(hdr, 0, 0). */
typedef struct mc_csv_meta {
    mc_trace_header header;
    unsigned present; /* MC_CSV_HAVE_* bits */
} mc_csv_meta;

typedef struct mc_csv_reader mc_csv_reader;

/*! mc_csv_reader_open() :
 *  Start reading CSV records from @in (not closed by the reader). Reads the
 *  comment block and the header row. @name is used in error messages (the
 *  file name, or "-"). Memory is bounded by one line buffer.
 *  @return 0 and *out, or MC_ECSV (line, column and reason in @err),
 *  MC_EIO or MC_ENOMEM. */
MC_API int mc_csv_reader_open(FILE *in, const char *name, mc_csv_reader **out,
                              mc_errinfo *err);

/*! mc_csv_reader_meta() : the header fields found in the comment block. */
MC_API const mc_csv_meta *mc_csv_reader_meta(const mc_csv_reader *r);

/*! mc_csv_read() : parse the next record line into @rec, which then also
 *  passes mc_record_check().
 *  @return 1 for a record, 0 at end of input, or MC_ECSV / MC_EIO with the
 *  file, line, column and reason in @err. */
MC_API int mc_csv_read(mc_csv_reader *r, mc_record *rec, mc_errinfo *err);

/*! mc_csv_reader_line() : 1-based number of the line read last. */
MC_API long long mc_csv_reader_line(const mc_csv_reader *r);

/*! mc_csv_reader_free() : free the reader; NULL is accepted. */
MC_API void mc_csv_reader_free(mc_csv_reader *r);

/*! mc_csv_write_preamble() : write the comment block for @hdr (every key)
 *  and the header row to @out.
 *  @return 0 or MC_EIO. */
MC_API int mc_csv_write_preamble(FILE *out, const mc_trace_header *hdr);

/*! mc_csv_format_record() : one record as a CSV line with its '\n', into
 *  @buf of @cap bytes (NUL-terminated when cap > 0).
 *  @return the length of the line (like snprintf), or MC_ERECORD when the
 *  record does not pass mc_record_check() (detail in @err). */
MC_API int mc_csv_format_record(const mc_record *rec, char *buf, size_t cap,
                                mc_errinfo *err);

#endif /* MSGCENSUS_CSV_H */
