/* error.c - error names, messages and the error context helpers. */
#include <msgcensus/error.h>

#include <stdarg.h> /* va_list */
#include <stdio.h>  /* snprintf, vsnprintf */
#include <string.h> /* memset, strlen */

const char *mc_version(void) { return MC_VERSION_STRING; }

const char *mc_errname(int code)
{
    switch (code) {
    case MC_OK:
        return "MC_OK";
#define MC_ERR_NAME(name, value, text)                                         \
    case MC_##name:                                                            \
        return "MC_" #name;
        MC_ERRNO_MAP(MC_ERR_NAME)
#undef MC_ERR_NAME
    default:
        return "MC_E?";
    }
}

const char *mc_strerror(int code)
{
    switch (code) {
    case MC_OK:
        return "success";
#define MC_ERR_TEXT(name, value, text)                                         \
    case MC_##name:                                                            \
        return text;
        MC_ERRNO_MAP(MC_ERR_TEXT)
#undef MC_ERR_TEXT
    default:
        return "unknown error";
    }
}

void mc_errinfo_clear(mc_errinfo *info)
{
    if (!info)
        return;
    memset(info, 0, sizeof *info);
    info->block = -1;
    info->offset = -1;
}

int mc_errinfo_set(mc_errinfo *info, int code, const char *path, int64_t block,
                   int64_t offset, const char *detail, ...)
{
    if (!info)
        return code;
    int saved_errno = info->sys_errno;
    mc_errinfo_clear(info);
    info->code = code;
    info->sys_errno = saved_errno;
    if (path)
        snprintf(info->path, sizeof info->path, "%s", path);
    info->block = block;
    info->offset = offset;
    if (detail) {
        va_list ap;
        va_start(ap, detail);
        vsnprintf(info->detail, sizeof info->detail, detail, ap);
        va_end(ap);
    }
    return code;
}

/* Append to @buf (capacity @cap, @n used); keeps counting past the end so
 * the caller learns the full length, as snprintf does. */
#if defined(__GNUC__)
__attribute__((format(printf, 4, 5)))
#endif
static void
append(char *buf, size_t cap, size_t *n, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    int k =
        vsnprintf(*n < cap ? buf + *n : NULL, *n < cap ? cap - *n : 0, fmt, ap);
    va_end(ap);
    if (k > 0)
        *n += (size_t)k;
}

int mc_errinfo_format(const mc_errinfo *info, char *buf, size_t cap)
{
    size_t n = 0;
    if (cap > 0)
        buf[0] = '\0';
    if (!info) {
        append(buf, cap, &n, "%s", "unknown error");
        return (int)n;
    }
    if (info->path[0])
        append(buf, cap, &n, "%s: ", info->path);
    if (info->line > 0) {
        append(buf, cap, &n, "line %lld", (long long)info->line);
        if (info->column > 0)
            append(buf, cap, &n, ", column %lld", (long long)info->column);
        append(buf, cap, &n, ": ");
    } else if (info->block >= 0 && info->offset >= 0) {
        append(buf, cap, &n,
               "block %lld at offset %lld: ", (long long)info->block,
               (long long)info->offset);
    } else if (info->block >= 0) {
        append(buf, cap, &n, "block %lld: ", (long long)info->block);
    } else if (info->offset >= 0) {
        append(buf, cap, &n, "offset %lld: ", (long long)info->offset);
    }
    append(buf, cap, &n, "%s", mc_strerror(info->code));
    if (info->detail[0])
        append(buf, cap, &n, " (%s)", info->detail);
    if (info->sys_errno)
        append(buf, cap, &n, ": %s", strerror(info->sys_errno));
    return (int)n;
}
