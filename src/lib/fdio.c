/* fdio.c - writing a whole buffer to a file descriptor. */
#include "fdio.h"

#include <errno.h>  /* errno, EINTR, EIO */
#include <unistd.h> /* write */

int mc__write_all(int fd, const void *p, size_t len, size_t *done)
{
    const unsigned char *b = p;
    size_t at = 0;
    int e = 0;
    while (at < len) {
        const ssize_t k = write(fd, b + at, len - at);
        if (k < 0 && errno == EINTR)
            continue;
        if (k <= 0) {
            e = k < 0 ? errno : EIO;
            break;
        }
        at += (size_t)k;
    }
    if (done)
        *done = at;
    return e;
}
