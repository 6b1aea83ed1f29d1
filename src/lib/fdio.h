/* fdio.h - internal: writing a whole buffer to a file descriptor. */
#ifndef MSGCENSUS_FDIO_H
#define MSGCENSUS_FDIO_H

#include <stddef.h> /* size_t */

/*! mc__write_all() : write all @len bytes of @p to @fd, retrying after
 *  signals and short writes. *@done (may be NULL) receives the bytes
 *  written. @return 0, or the errno of the failing write (EIO when a write
 *  wrote nothing). */
int mc__write_all(int fd, const void *p, size_t len, size_t *done);

#endif /* MSGCENSUS_FDIO_H */
