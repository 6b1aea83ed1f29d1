/* util.c - number parsing and formatting for the command line. */
#include "cli.h"

#include <ctype.h>  /* isdigit */
#include <string.h> /* strcmp */

int mc_parse_u64(const char *s, uint64_t *out)
{
    if (!s || !isdigit((unsigned char)*s))
        return MC_EINVAL;
    uint64_t v = 0;
    while (isdigit((unsigned char)*s)) {
        unsigned d = (unsigned)(*s - '0');
        if (v > (UINT64_MAX - d) / 10)
            return MC_ERANGE;
        v = v * 10 + d;
        s++;
    }
    static const struct {
        const char *suffix;
        uint64_t mul;
    } units[] = {
        {"", 1},
        {"K", 1000ull},
        {"k", 1000ull},
        {"M", 1000000ull},
        {"G", 1000000000ull},
        {"T", 1000000000000ull},
        {"KiB", 1ull << 10},
        {"MiB", 1ull << 20},
        {"GiB", 1ull << 30},
        {"TiB", 1ull << 40},
        {"Ki", 1ull << 10},
        {"Mi", 1ull << 20},
        {"Gi", 1ull << 30},
        {"Ti", 1ull << 40},
    };
    for (size_t i = 0; i < sizeof units / sizeof units[0]; i++) {
        if (strcmp(s, units[i].suffix) == 0) {
            if (v > UINT64_MAX / units[i].mul)
                return MC_ERANGE;
            *out = v * units[i].mul;
            return 0;
        }
    }
    return MC_EINVAL;
}

const char *mc_format_bytes(double bytes, char *buf, size_t cap)
{
    static const char *const unit[] = {"B", "KiB", "MiB", "GiB", "TiB", "PiB"};
    int u = 0;
    while (bytes >= 1024.0 && u < 5) {
        bytes /= 1024.0;
        u++;
    }
    if (u == 0)
        snprintf(buf, cap, "%.0f B", bytes);
    else
        snprintf(buf, cap, "%.1f %s", bytes, unit[u]);
    return buf;
}
