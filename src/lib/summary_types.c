/* summary_types.c - the HDF5 compound types of the summary tables, built from
 * the in-memory row structs so that reads convert by member name. */
#include "summary_internal.h"

#include <string.h> /* strlen */

/* A variable-length C string type; the caller closes it. */
static hid_t vlen_string(void)
{
    const hid_t t = H5Tcopy(H5T_C_S1);
    if (t < 0)
        return t;
    if (H5Tset_size(t, H5T_VARIABLE) < 0 || H5Tset_cset(t, H5T_CSET_UTF8) < 0) {
        H5Tclose(t);
        return -1;
    }
    return t;
}

/* Insert a member of native type @mtype; returns the running error state. */
static int ins(hid_t t, const char *name, size_t off, hid_t mtype, int ok)
{
    return ok && H5Tinsert(t, name, off, mtype) >= 0;
}

/* Finish a type: close it and report -1 when an insert failed. */
static hid_t done(hid_t t, int ok)
{
    if (!ok) {
        H5Tclose(t);
        return -1;
    }
    return t;
}

hid_t mc__h5_source_type(void)
{
    const hid_t t = H5Tcreate(H5T_COMPOUND, sizeof(mc__source_row));
    const hid_t s = vlen_string();
    if (t < 0 || s < 0) {
        if (t >= 0)
            H5Tclose(t);
        if (s >= 0)
            H5Tclose(s);
        return -1;
    }
    int ok = 1;
    ok = ins(t, "path", offsetof(mc__source_row, path), s, ok);
    ok = ins(t, "app_rank", offsetof(mc__source_row, app_rank),
             H5T_NATIVE_INT32, ok);
    ok =
        ins(t, "bytes", offsetof(mc__source_row, bytes), H5T_NATIVE_UINT64, ok);
    ok = ins(t, "records", offsetof(mc__source_row, records), H5T_NATIVE_UINT64,
             ok);
    ok = ins(t, "blocks", offsetof(mc__source_row, blocks), H5T_NATIVE_UINT64,
             ok);
    ok = ins(t, "skipped_blocks", offsetof(mc__source_row, skipped_blocks),
             H5T_NATIVE_UINT64, ok);
    ok = ins(t, "skipped_records", offsetof(mc__source_row, skipped_records),
             H5T_NATIVE_UINT64, ok);
    ok = ins(t, "checksum", offsetof(mc__source_row, checksum),
             H5T_NATIVE_UINT64, ok);
    ok = ins(t, "status", offsetof(mc__source_row, status), s, ok);
    H5Tclose(s);
    return done(t, ok);
}

hid_t mc__h5_stat_type(void)
{
    const hid_t t = H5Tcreate(H5T_COMPOUND, sizeof(mc__stat_row));
    const hid_t s = H5Tcopy(H5T_C_S1);
    if (t < 0 || s < 0) {
        if (t >= 0)
            H5Tclose(t);
        if (s >= 0)
            H5Tclose(s);
        return -1;
    }
    int ok = H5Tset_size(s, MC__METRIC_LEN) >= 0 &&
             H5Tset_strpad(s, H5T_STR_NULLTERM) >= 0;
    ok = ins(t, "metric", offsetof(mc__stat_row, metric), s, ok);
    ok = ins(t, "value", offsetof(mc__stat_row, value), H5T_NATIVE_DOUBLE, ok);
    ok = ins(t, "exact", offsetof(mc__stat_row, exact), H5T_NATIVE_UINT64, ok);
    ok = ins(t, "mad", offsetof(mc__stat_row, mad), H5T_NATIVE_DOUBLE, ok);
    ok = ins(t, "rel_mad", offsetof(mc__stat_row, rel_mad), H5T_NATIVE_DOUBLE,
             ok);
    ok = ins(t, "rank", offsetof(mc__stat_row, rank), H5T_NATIVE_INT32, ok);
    ok = ins(t, "kind", offsetof(mc__stat_row, kind), H5T_NATIVE_INT32, ok);
    H5Tclose(s);
    return done(t, ok);
}

hid_t mc__h5_quantile_type(void)
{
    const hid_t t = H5Tcreate(H5T_COMPOUND, sizeof(mc__quantile_row));
    if (t < 0)
        return t;
    int ok = 1;
    ok = ins(t, "level", offsetof(mc__quantile_row, level), H5T_NATIVE_DOUBLE,
             ok);
    ok = ins(t, "value", offsetof(mc__quantile_row, value), H5T_NATIVE_DOUBLE,
             ok);
    ok = ins(t, "byte_value", offsetof(mc__quantile_row, byte_value),
             H5T_NATIVE_DOUBLE, ok);
    return done(t, ok);
}

hid_t mc__h5_top_type(void)
{
    const hid_t t = H5Tcreate(H5T_COMPOUND, sizeof(mc_topsize));
    if (t < 0)
        return t;
    int ok = 1;
    ok = ins(t, "size", offsetof(mc_topsize, size), H5T_NATIVE_UINT64, ok);
    ok = ins(t, "count", offsetof(mc_topsize, count), H5T_NATIVE_UINT64, ok);
    ok = ins(t, "msg_share", offsetof(mc_topsize, msg_share), H5T_NATIVE_DOUBLE,
             ok);
    ok = ins(t, "byte_share", offsetof(mc_topsize, byte_share),
             H5T_NATIVE_DOUBLE, ok);
    return done(t, ok);
}

hid_t mc__h5_peak_type(void)
{
    const hid_t t = H5Tcreate(H5T_COMPOUND, sizeof(mc_peak));
    if (t < 0)
        return t;
    int ok = 1;
    ok = ins(t, "lo", offsetof(mc_peak, lo), H5T_NATIVE_UINT64, ok);
    ok = ins(t, "hi", offsetof(mc_peak, hi), H5T_NATIVE_UINT64, ok);
    ok = ins(t, "peak_size", offsetof(mc_peak, peak_size), H5T_NATIVE_UINT64,
             ok);
    ok = ins(t, "count", offsetof(mc_peak, count), H5T_NATIVE_UINT64, ok);
    ok = ins(t, "msg_share", offsetof(mc_peak, msg_share), H5T_NATIVE_DOUBLE,
             ok);
    ok = ins(t, "byte_share", offsetof(mc_peak, byte_share), H5T_NATIVE_DOUBLE,
             ok);
    ok = ins(t, "prominence", offsetof(mc_peak, prominence), H5T_NATIVE_DOUBLE,
             ok);
    return done(t, ok);
}

hid_t mc__h5_mixture_type(void)
{
    const hid_t t = H5Tcreate(H5T_COMPOUND, sizeof(mc__mixture_row));
    if (t < 0)
        return t;
    int ok = 1;
    ok = ins(t, "weight", offsetof(mc__mixture_row, weight), H5T_NATIVE_DOUBLE,
             ok);
    ok = ins(t, "mu", offsetof(mc__mixture_row, mu), H5T_NATIVE_DOUBLE, ok);
    ok = ins(t, "sigma", offsetof(mc__mixture_row, sigma), H5T_NATIVE_DOUBLE,
             ok);
    ok = ins(t, "center", offsetof(mc__mixture_row, center), H5T_NATIVE_DOUBLE,
             ok);
    return done(t, ok);
}

hid_t mc__h5_rank_type(void)
{
    const hid_t t = H5Tcreate(H5T_COMPOUND, sizeof(mc_summary_rank));
    if (t < 0)
        return t;
    int ok = 1;
    ok = ins(t, "rank", offsetof(mc_summary_rank, rank), H5T_NATIVE_INT32, ok);
    ok = ins(t, "p2p_msgs", offsetof(mc_summary_rank, p2p_msgs),
             H5T_NATIVE_UINT64, ok);
    ok = ins(t, "p2p_bytes", offsetof(mc_summary_rank, p2p_bytes),
             H5T_NATIVE_UINT64, ok);
    ok = ins(t, "recv_msgs", offsetof(mc_summary_rank, recv_msgs),
             H5T_NATIVE_UINT64, ok);
    ok = ins(t, "recv_bytes", offsetof(mc_summary_rank, recv_bytes),
             H5T_NATIVE_UINT64, ok);
    ok = ins(t, "coll_msgs", offsetof(mc_summary_rank, coll_msgs),
             H5T_NATIVE_UINT64, ok);
    ok = ins(t, "coll_bytes", offsetof(mc_summary_rank, coll_bytes),
             H5T_NATIVE_UINT64, ok);
    ok = ins(t, "os_msgs", offsetof(mc_summary_rank, os_msgs),
             H5T_NATIVE_UINT64, ok);
    ok = ins(t, "os_bytes", offsetof(mc_summary_rank, os_bytes),
             H5T_NATIVE_UINT64, ok);
    return done(t, ok);
}

int mc__pop_group_name(const char *name, char *out, size_t cap)
{
    const size_t n = strlen(name);
    if (n == 0 || n + 1 > cap)
        return -1;
    for (size_t i = 0; i < n; i++) {
        const char c = name[i];
        const int safe = (c >= 'A' && c <= 'Z') || (c >= 'a' && c <= 'z') ||
                         (c >= '0' && c <= '9') || c == '_' || c == ':' ||
                         c == '.' || c == '+' || c == '-';
        if (c == '/')
            out[i] = ':';
        else if (safe)
            out[i] = c;
        else
            return -1;
    }
    out[n] = '\0';
    return (out[0] == '.') ? -1 : 0;
}
