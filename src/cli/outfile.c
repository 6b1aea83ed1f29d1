/* outfile.c - write-to-temporary-then-rename for CLI outputs, never replacing a
 * file without --force. */
#include "outfile.h"

#include <errno.h>    /* errno, EEXIST */
#include <stdio.h>    /* snprintf, rename */
#include <string.h>   /* strrchr */
#include <sys/stat.h> /* stat */
#include <unistd.h>   /* link, unlink, getpid */

int mc_outfile_begin(mc_outfile *o, const char *path, int force,
                     mc_errinfo *err)
{
    static unsigned counter;
    struct stat st;
    if (snprintf(o->final, sizeof o->final, "%s", path) >= (int)sizeof o->final)
        return mc_errinfo_set(err, MC_EINVAL, path, -1, -1, "name too long");
    o->force = force;
    o->tmp[0] = '\0';
    if (!force && stat(path, &st) == 0)
        return mc_errinfo_set(err, MC_EEXIST, path, -1, -1,
                              "use --force to replace it");
    const char *slash = strrchr(path, '/');
    const int dirlen = slash ? (int)(slash - path + 1) : 0;
    snprintf(o->tmp, sizeof o->tmp, "%.*s.%s.tmp-%ld-%u", dirlen, path,
             slash ? slash + 1 : path, (long)getpid(), counter++);
    return 0;
}

int mc_outfile_commit(mc_outfile *o, mc_errinfo *err)
{
    if (o->force) {
        if (rename(o->tmp, o->final) == 0)
            return 0;
    } else {
        /* link() fails if the name exists, so a file that appeared after
         * mc_outfile_begin() is not replaced either. */
        if (link(o->tmp, o->final) == 0) {
            unlink(o->tmp);
            return 0;
        }
        /* File systems without hard links: check, then rename. */
        struct stat st;
        if ((errno == EPERM || errno == EOPNOTSUPP || errno == ENOSYS) &&
            stat(o->final, &st) != 0 && rename(o->tmp, o->final) == 0)
            return 0;
        if (stat(o->final, &st) == 0)
            errno = EEXIST;
    }
    const int e = errno;
    mc_outfile_discard(o);
    if (e == EEXIST)
        return mc_errinfo_set(err, MC_EEXIST, o->final, -1, -1,
                              "use --force to replace it");
    if (err)
        err->sys_errno = e;
    return mc_errinfo_set(err, MC_EIO, o->final, -1, -1,
                          "cannot move the finished file into place");
}

void mc_outfile_discard(mc_outfile *o)
{
    if (o->tmp[0])
        unlink(o->tmp);
}
