/* Runs a fuzz harness on saved inputs, without libFuzzer: `make check` replays the regression
 * corpus (tests/fuzz/regress/) through every harness in the normal and sanitizer builds. Each
 * argument is a file or a directory of files. Prints one PASS line per input that returns; a crash
 * or sanitizer report ends the program, which the runner counts as a failure. See LICENSE. */
#include <dirent.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "tests/fuzz/fuzz.h"

static int replay_file(const char *path)
{
    FILE *f = fopen(path, "rb");
    if (f == NULL) {
        printf("FAIL: cannot open %s\n", path);
        return 1;
    }
    size_t cap = 1 << 16, len = 0;
    unsigned char *buf = malloc(cap);
    for (;;) {
        if (buf == NULL) break;
        if (len == cap) {
            unsigned char *nb = realloc(buf, cap * 2);
            if (nb == NULL) {
                free(buf);
                buf = NULL;
                break;
            }
            buf = nb;
            cap *= 2;
        }
        size_t got = fread(buf + len, 1, cap - len, f);
        len += got;
        if (got == 0) break;
    }
    fclose(f);
    if (buf == NULL) {
        printf("FAIL: out of memory reading %s\n", path);
        return 1;
    }
    /* libFuzzer hands over exactly size bytes in a buffer of that size. */
    unsigned char *exact = malloc(len ? len : 1);
    if (exact == NULL) {
        free(buf);
        printf("FAIL: out of memory reading %s\n", path);
        return 1;
    }
    memcpy(exact, buf, len);
    free(buf);
    LLVMFuzzerTestOneInput(exact, len);
    free(exact);
    printf("PASS: %s replays without a crash\n", path);
    return 0;
}

static int cmp(const void *a, const void *b)
{
    return strcmp(*(char *const *)a, *(char *const *)b);
}

int main(int argc, char **argv)
{
    int bad = 0;
    for (int i = 1; i < argc; i++) {
        struct stat sb;
        if (stat(argv[i], &sb) != 0) {
            printf("FAIL: no such input %s\n", argv[i]);
            bad = 1;
            continue;
        }
        if (!S_ISDIR(sb.st_mode)) {
            bad |= replay_file(argv[i]);
            continue;
        }
        DIR *d = opendir(argv[i]);
        if (d == NULL) continue;
        char **names = NULL;
        size_t n = 0;
        struct dirent *e;
        while ((e = readdir(d)) != NULL) {
            if (e->d_name[0] == '.') continue;
            char **nn = realloc(names, (n + 1) * sizeof *nn);
            if (nn == NULL) break;
            names = nn;
            size_t len = strlen(argv[i]) + strlen(e->d_name) + 2;
            names[n] = malloc(len);
            if (names[n] == NULL) break;
            snprintf(names[n], len, "%s/%s", argv[i], e->d_name);
            n++;
        }
        closedir(d);
        if (n > 1) qsort(names, n, sizeof *names, cmp);
        for (size_t k = 0; k < n; k++) {
            bad |= replay_file(names[k]);
            free(names[k]);
        }
        free(names);
    }
    return bad;
}
