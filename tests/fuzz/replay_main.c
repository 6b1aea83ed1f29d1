/* replay_main.c - main() for a fuzz harness in a normal build: feeds every file
 * named on the command line (or found in a named directory) to
 * LLVMFuzzerTestOneInput once. */
#include "fuzz_common.h"

#include <dirent.h>   /* opendir, readdir */
#include <stdio.h>    /* fopen, fread, printf */
#include <stdlib.h>   /* malloc, free */
#include <string.h>   /* strcmp */
#include <sys/stat.h> /* stat, S_ISDIR */

/* Run one file; returns 0, or 1 when it cannot be read. */
static int replay_file(const char *path)
{
    FILE *f = fopen(path, "rb");
    if (!f) {
        fprintf(stderr, "replay: cannot open %s\n", path);
        return 1;
    }
    size_t cap = 4096, n = 0;
    unsigned char *buf = malloc(cap);
    while (buf) {
        n += fread(buf + n, 1, cap - n, f);
        if (n < cap)
            break;
        unsigned char *b = realloc(buf, 2 * cap);
        if (!b) {
            free(buf);
            buf = NULL;
            break;
        }
        buf = b;
        cap *= 2;
    }
    const int bad = ferror(f) || !buf;
    fclose(f);
    if (bad) {
        free(buf);
        fprintf(stderr, "replay: cannot read %s\n", path);
        return 1;
    }
    LLVMFuzzerTestOneInput(buf, n);
    free(buf);
    return 0;
}

int main(int argc, char **argv)
{
    int failed = 0;
    unsigned long runs = 0;
    for (int i = 1; i < argc; i++) {
        struct stat st;
        if (stat(argv[i], &st) != 0) {
            fprintf(stderr, "replay: no such file %s\n", argv[i]);
            failed = 1;
            continue;
        }
        if (!S_ISDIR(st.st_mode)) {
            failed |= replay_file(argv[i]);
            runs++;
            continue;
        }
        DIR *d = opendir(argv[i]);
        if (!d) {
            fprintf(stderr, "replay: cannot list %s\n", argv[i]);
            failed = 1;
            continue;
        }
        const struct dirent *e;
        while ((e = readdir(d)) != NULL) {
            if (e->d_name[0] == '.')
                continue; /* ., .. and notes such as .gitkeep */
            char path[4096];
            snprintf(path, sizeof path, "%s/%s", argv[i], e->d_name);
            failed |= replay_file(path);
            runs++;
        }
        closedir(d);
    }
    printf("replay: %lu inputs, %s\n", runs, failed ? "FAILED" : "ok");
    return failed;
}
