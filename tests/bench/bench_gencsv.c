/* Writes an invented CSV of random numbers for the archive benchmark: ROWS rows, COLS columns
 * c1..cCOLS, values uniform on [0, 1000) with 4 decimals, from a fixed seed. See LICENSE. */
#include <errno.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>

/* splitmix64 (Steele, Lea & Flood, "Fast splittable pseudorandom number generators", OOPSLA
 * 2014): fast, and the same stream on every machine for a given seed. */
static uint64_t next(uint64_t *s)
{
    uint64_t z = (*s += 0x9E3779B97F4A7C15ULL);
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ULL;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBULL;
    return z ^ (z >> 31);
}

static long arg(const char *s)
{
    char *end = NULL;
    errno = 0;
    long v = strtol(s, &end, 10);
    if (errno || end == s || *end || v <= 0) {
        fprintf(stderr, "bench_gencsv: expected a positive whole number, got '%s'\n", s);
        exit(2);
    }
    return v;
}

int main(int argc, char **argv)
{
    if (argc != 4) {
        fprintf(stderr, "usage: bench_gencsv ROWS COLS SEED > FILE.csv\n");
        return 2;
    }
    long rows = arg(argv[1]), cols = arg(argv[2]);
    uint64_t s = (uint64_t)arg(argv[3]);
    static char buf[1 << 20];
    setvbuf(stdout, buf, _IOFBF, sizeof buf);
    for (long j = 0; j < cols; j++) printf("%sc%ld", j ? "," : "", j + 1);
    putchar('\n');
    /* Formatted by hand: printf would take longer than the import being measured. */
    char line[32 * 2048];
    if (cols > 2048) cols = 2048;
    for (long i = 0; i < rows; i++) {
        char *p = line;
        for (long j = 0; j < cols; j++) {
            /* 0 .. 9999999 ten-thousandths: an integer part and 4 decimals. */
            uint64_t v = next(&s) % 10000000ULL;
            if (j) *p++ = ',';
            char digits[8];
            int nd = 0;
            uint64_t ip = v / 10000, fp = v % 10000;
            do {
                digits[nd++] = (char)('0' + ip % 10);
                ip /= 10;
            } while (ip);
            while (nd) *p++ = digits[--nd];
            *p++ = '.';
            p[3] = (char)('0' + fp % 10);
            p[2] = (char)('0' + fp / 10 % 10);
            p[1] = (char)('0' + fp / 100 % 10);
            p[0] = (char)('0' + fp / 1000);
            p += 4;
        }
        *p++ = '\n';
        fwrite(line, 1, (size_t)(p - line), stdout);
    }
    return fflush(stdout) == 0 ? 0 : 1;
}
