/* Sorting doubles in linear time: a least-significant-digit radix sort on their bit patterns.
 * See LICENSE. */
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "power/power.h"

/* Below this many values an insertion sort is as fast and needs no scratch. */
#define PW_SORT_SMALL 64
/* Digits of 11 bits: six passes cover 64 bits with 2,048 counters each (16 KB), which stay in the
 * first-level cache; passes in which every key has the same digit are skipped. */
#define PW_SORT_BITS 11
#define PW_SORT_PASSES 6

/* The bit pattern as an unsigned key in the order of the values (IEEE 754 binary64: flip every
 * bit of a negative number, only the sign bit of a positive one); -0 is keyed as +0. */
static uint64_t key_of(double x)
{
    uint64_t b;
    if (x == 0) x = 0;
    memcpy(&b, &x, sizeof b);
    return b >> 63 ? ~b : b ^ 0x8000000000000000ULL;
}

static double value_of(uint64_t k)
{
    uint64_t b = k >> 63 ? k ^ 0x8000000000000000ULL : ~k;
    double x;
    memcpy(&x, &b, sizeof x);
    return x;
}

int pw_sort_doubles(double *x, size_t n)
{
    if (n < PW_SORT_SMALL) {   /* insertion sort on the same keys */
        for (size_t i = 0; i < n; i++) {
            uint64_t k = key_of(x[i]);
            size_t j = i;
            for (; j > 0 && key_of(x[j - 1]) > k; j--) x[j] = x[j - 1];
            x[j] = value_of(k);
        }
        return PW_OK;
    }
    uint64_t *a = malloc(n * sizeof *a), *b = malloc(n * sizeof *b);
    size_t(*count)[1 << PW_SORT_BITS] = calloc(PW_SORT_PASSES, sizeof *count);
    if (a == NULL || b == NULL || count == NULL) {
        free(a);
        free(b);
        free(count);
        return PW_ENOMEM;
    }
    const uint64_t mask = (1u << PW_SORT_BITS) - 1;
    for (size_t i = 0; i < n; i++) {
        a[i] = key_of(x[i]);
        for (int p = 0; p < PW_SORT_PASSES; p++) count[p][(a[i] >> (p * PW_SORT_BITS)) & mask]++;
    }
    for (int p = 0; p < PW_SORT_PASSES; p++) {
        unsigned shift = (unsigned)(p * PW_SORT_BITS);
        if (count[p][(a[0] >> shift) & mask] == n) continue;   /* one digit: nothing moves */
        size_t start = 0;
        for (size_t d = 0; d <= mask; d++) {
            size_t c = count[p][d];
            count[p][d] = start;
            start += c;
        }
        for (size_t i = 0; i < n; i++) b[count[p][(a[i] >> shift) & mask]++] = a[i];
        uint64_t *t = a;
        a = b;
        b = t;
    }
    for (size_t i = 0; i < n; i++) x[i] = value_of(a[i]);
    free(a);
    free(b);
    free(count);
    return PW_OK;
}
