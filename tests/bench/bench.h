/* Clocks, a median sort key and a seeded stream shared by the benchmark programs in tests/bench/.
 * See LICENSE. */
#ifndef SHOAL_BENCH_H
#define SHOAL_BENCH_H

#include <stdint.h>
#include <time.h>

/* Wall-clock seconds from an arbitrary origin (CLOCK_MONOTONIC, so time steps do not show). */
static inline double bench_wall(void)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

/* Processor seconds of this process: on a machine shared with other work wall time swings with
 * the load, while processor time measures the work itself; the benchmarks print both. */
static inline double bench_cpu(void)
{
    struct timespec t;
    clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

/* qsort comparison of doubles in ascending order, for medians of repeated runs. */
static inline int bench_cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* splitmix64 (Steele, Lea & Flood 2014): fast, and the same invented stream on every machine for
 * a seed. */
static inline uint64_t bench_next(uint64_t *s)
{
    uint64_t z = (*s += 0x9E3779B97F4A7C15ULL);
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ULL;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBULL;
    return z ^ (z >> 31);
}

#endif
