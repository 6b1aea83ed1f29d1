/* outfile.h - output files of the CLI: refuse to overwrite without --force,
 * write to a temporary name, then rename. */
#ifndef MSGCENSUS_OUTFILE_H
#define MSGCENSUS_OUTFILE_H

#include <msgcensus/error.h>

typedef struct mc_outfile {
    char final[1024]; /* the name the user asked for */
    char tmp[1100];   /* a hidden temporary name in the same directory */
    int force;        /* replace an existing file */
} mc_outfile;

/*! mc_outfile_begin() : check that @path may be written (MC_EEXIST when it
 *  exists and @force is 0) and choose the temporary name o->tmp, which the
 *  caller then creates and writes.
 *  @return 0 or MC_EEXIST / MC_EINVAL with @err filled. */
int mc_outfile_begin(mc_outfile *o, const char *path, int force,
                     mc_errinfo *err);

/*! mc_outfile_commit() : move the finished temporary file to its name.
 *  Without force this fails with MC_EEXIST if the name appeared meanwhile.
 *  The temporary file is removed on failure. */
int mc_outfile_commit(mc_outfile *o, mc_errinfo *err);

/*! mc_outfile_discard() : remove the temporary file (after a failure). */
void mc_outfile_discard(mc_outfile *o);

#endif /* MSGCENSUS_OUTFILE_H */
