/* Times cov_data_read of a table's columns against a bare sqlite3_step scan of the same columns,
 * each as the median of REPEATS runs, and prints both and their ratio. See LICENSE. */
#if defined(__linux__) && !defined(_DEFAULT_SOURCE)
#define _DEFAULT_SOURCE     /* madvise */
#endif
#include <errno.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include <gsl/gsl_errno.h>
#include <sqlite3.h>
#if defined(__linux__)
#include <sys/mman.h>
#endif

#include "coverage/plan/plan.h"
#include "coverage/report/report.h"

/* Three runs, as the brief for the benchmark asks; the median discards one slow outlier. */
#define REPEATS 3

/* Keeps the compiler from dropping the scans whose values are otherwise unused. */
static volatile double sink_out;

/* Wall-clock and CPU seconds: on a shared machine the CPU time (user + system, this process) is
 * the steadier figure, so both are reported. */
typedef struct {
    double wall, cpu;
} stamp;

static stamp now(void)
{
    struct timespec w, c;
    clock_gettime(CLOCK_MONOTONIC, &w);
    clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &c);
    stamp s = {(double)w.tv_sec + 1e-9 * (double)w.tv_nsec,
               (double)c.tv_sec + 1e-9 * (double)c.tv_nsec};
    return s;
}

static stamp since(stamp t0)
{
    stamp t1 = now(), d = {t1.wall - t0.wall, t1.cpu - t0.cpu};
    return d;
}

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* The baseline: one SELECT of the columns, sqlite3_step over every row, each value read once. */
static stamp bare_scan(const char *db_path, const char *sql, int n_cols, double *sink)
{
    sqlite3 *db = NULL;
    sqlite3_stmt *st = NULL;
    stamp t0 = now();
    /* Opened as cov_archive_open opens the archive, so both scans pay the same locking. */
    if (sqlite3_open_v2(db_path, &db, SQLITE_OPEN_READONLY | SQLITE_OPEN_NOMUTEX, NULL) ||
        sqlite3_prepare_v2(db, sql, -1, &st, NULL) != SQLITE_OK) {
        fprintf(stderr, "bench_scan: %s\n", sqlite3_errmsg(db));
        exit(1);
    }
    double sum = 0;
    while (sqlite3_step(st) == SQLITE_ROW)
        for (int j = 0; j < n_cols; j++) sum += sqlite3_column_double(st, j);
    sqlite3_finalize(st);
    sqlite3_close(db);
    *sink += sum;
    return since(t0);
}

/* One bare scan of every column of table runs (SELECT *), as the baseline of a whole command
 * timed beside it: prints "CPU WALL" seconds. */
static int bare_all(const char *db_path)
{
    sqlite3 *db = NULL;
    sqlite3_stmt *st = NULL;
    double sink = 0;
    stamp t0 = now();
    if (sqlite3_open_v2(db_path, &db, SQLITE_OPEN_READONLY | SQLITE_OPEN_NOMUTEX, NULL) ||
        sqlite3_prepare_v2(db, "SELECT * FROM runs", -1, &st, NULL) != SQLITE_OK) {
        fprintf(stderr, "bench_scan: %s\n", sqlite3_errmsg(db));
        sqlite3_close(db);
        return 1;
    }
    int n_cols = sqlite3_column_count(st);
    while (sqlite3_step(st) == SQLITE_ROW)
        for (int j = 0; j < n_cols; j++) sink += sqlite3_column_double(st, j);
    sqlite3_finalize(st);
    sqlite3_close(db);
    stamp t = since(t0);
    sink_out = sink;
    printf("%.3f %.3f\n", t.cpu, t.wall);
    return 0;
}

/* Fresh memory of bytes, first written: from the heap, its pages populated in one call as
 * coverage/archive/data.c does (huge == 0), or as an anonymous mapping advised to use huge pages
 * and populated in one call (huge == 1). The CPU time of getting, writing and releasing it. */
static double touch(size_t bytes, int huge, size_t *check)
{
    stamp t0 = now();
    unsigned char *p = NULL;
#if defined(__linux__) && defined(MADV_HUGEPAGE) && defined(MADV_POPULATE_WRITE)
    if (huge) {
        void *m = mmap(NULL, bytes, PROT_READ | PROT_WRITE, MAP_PRIVATE | MAP_ANONYMOUS, -1, 0);
        if (m == MAP_FAILED) return NAN;
        p = m;
        (void)madvise(p, bytes, MADV_HUGEPAGE);
        (void)madvise(p, bytes, MADV_POPULATE_WRITE);
    } else {
        p = malloc(bytes);
        if (p == NULL) return NAN;
        size_t lo = (4096 - (uintptr_t)p % 4096) % 4096;
        if (bytes > lo + 4096) (void)madvise(p + lo, (bytes - lo) / 4096 * 4096, MADV_POPULATE_WRITE);
    }
#else
    if (huge) return NAN;
    p = malloc(bytes);
    if (p == NULL) return NAN;
#endif
    memset(p, 1, bytes);
    *check += p[bytes - 1];
#if defined(__linux__) && defined(MADV_HUGEPAGE) && defined(MADV_POPULATE_WRITE)
    if (huge) munmap(p, bytes);
    else free(p);
#else
    free(p);
#endif
    return since(t0).cpu;
}

/* The floor under any survey that holds the analysed columns in memory and digests them, as the
 * baseline of bench_scale.sh: the CPU time to get and first write the raw column bytes of fresh
 * memory in the cheaper of two ways (heap pages populated in one call; huge pages populated in
 * one call), and to take their SHA-256 with shoal's own code (cov_data_digest's cost). On a
 * virtual machine whose host backs guest memory lazily the first write costs far more than a
 * write to memory already touched. Prints "MEMORY DIGEST HEAP HUGE" seconds of CPU, MEMORY being
 * the lesser of HEAP and HUGE. */
static int touch_floor(const char *arg)
{
    char *end = NULL;
    errno = 0;
    unsigned long long b = strtoull(arg, &end, 10);
    if (errno || *end || b < 64 || b > ((unsigned long long)1 << 40)) {
        fprintf(stderr, "bench_scan: BYTES must be 64 to 2^40\n");
        return 2;
    }
    size_t bytes = (size_t)b, check = 0;
    double heap = touch(bytes, 0, &check), huge = touch(bytes, 1, &check);
    unsigned char *p = malloc(bytes);
    if (p == NULL) {
        fprintf(stderr, "bench_scan: out of memory\n");
        return 1;
    }
    memset(p, 2, bytes);   /* touched before the clock starts: only the digest is timed */
    char hex[65];
    stamp t0 = now();
    cov_sha256 h;
    cov_sha256_init(&h);
    cov_sha256_update(&h, p, bytes);
    cov_sha256_hex(&h, hex);
    double digest = since(t0).cpu;
    free(p);
    sink_out = (double)check + (double)hex[0];
    double memory = isnan(huge) || heap < huge ? heap : huge;
    printf("%.3f %.3f %.3f %.3f\n", memory, digest, heap, huge);
    return 0;
}

int main(int argc, char **argv)
{
    gsl_set_error_handler_off();
    if (argc == 3 && strcmp(argv[1], "bare") == 0) return bare_all(argv[2]);
    if (argc == 3 && strcmp(argv[1], "touch") == 0) return touch_floor(argv[2]);
    if (argc != 3) {
        fprintf(stderr, "usage: bench_scan ARCHIVE.db COLUMNS | bench_scan bare ARCHIVE.db | "
                        "bench_scan touch BYTES\n");
        return 2;
    }
    char *end = NULL;
    errno = 0;
    long n_cols = strtol(argv[2], &end, 10);
    if (errno || *end || n_cols < 1 || n_cols > 2000) {
        fprintf(stderr, "bench_scan: COLUMNS must be 1..2000\n");
        return 2;
    }
    /* An invented graph over columns c1..cN: odd ones inputs with a domain (so the domain check
     * runs), even ones outputs. */
    cov_var *vars = calloc((size_t)n_cols, sizeof *vars);
    char (*names)[16] = calloc((size_t)n_cols, sizeof *names);
    size_t sql_len = 64 + 16 * (size_t)n_cols;
    char *sql = malloc(sql_len);
    size_t at = (size_t)snprintf(sql, sql_len, "SELECT ");
    for (long j = 0; j < n_cols; j++) {
        snprintf(names[j], sizeof names[j], "c%ld", j + 1);
        vars[j].name = names[j];
        vars[j].role = j % 2 == 0 ? COV_INPUT : COV_OUTPUT;
        vars[j].type = COV_REAL;
        vars[j].lo = j % 2 == 0 ? 0 : NAN;
        vars[j].hi = j % 2 == 0 ? 1000 : NAN;
        vars[j].noise_sd = NAN;
        at += (size_t)snprintf(sql + at, sql_len - at, "%s\"c%ld\"", j ? ", " : "", j + 1);
    }
    snprintf(sql + at, sql_len - at, " FROM runs");
    cov_graph g = {.path = "bench.graph", .vars = vars, .n_vars = (size_t)n_cols,
                    .default_effect = {NAN, COV_UNIT_RAW, COV_PER_UNIT, NAN},
                    .margin = {NAN, COV_UNIT_RAW, COV_PER_UNIT, NAN}};

    double bare_wall[REPEATS], bare_cpu[REPEATS], read_wall[REPEATS], read_cpu[REPEATS], sink = 0;
    size_t runs = 0;
    for (int r = 0; r < REPEATS; r++) {
        stamp t = bare_scan(argv[1], sql, (int)n_cols, &sink);
        bare_wall[r] = t.wall;
        bare_cpu[r] = t.cpu;
        cov_error err = {{0}, {0}};
        cov_archive *a = NULL;
        cov_data *d = NULL;
        stamp t0 = now();
        int rc = cov_archive_open(argv[1], NULL, &a, &err);
        if (rc == COV_OK) rc = cov_data_read(a, &g, NULL, NULL, &d, &err);
        t = since(t0);
        read_wall[r] = t.wall;
        read_cpu[r] = t.cpu;
        if (rc != COV_OK) {
            fprintf(stderr, "bench_scan: %s: %s\n", err.where, err.msg);
            return 1;
        }
        runs = d->n_runs;
        sink += d->col[0][0];
        cov_data_free(d);
        cov_archive_close(a);
    }
    qsort(bare_wall, REPEATS, sizeof(double), cmp_double);
    qsort(bare_cpu, REPEATS, sizeof(double), cmp_double);
    qsort(read_wall, REPEATS, sizeof(double), cmp_double);
    qsort(read_cpu, REPEATS, sizeof(double), cmp_double);
    int m = REPEATS / 2;
    printf("read %zu runs x %ld columns (median of %d): bare sqlite3_step scan %.2f s wall "
           "%.2f s cpu, cov_data_read %.2f s wall %.2f s cpu; ratio wall %.2f, cpu %.2f\n", runs,
           n_cols, REPEATS, bare_wall[m], bare_cpu[m], read_wall[m], read_cpu[m],
           read_wall[m] / bare_wall[m], read_cpu[m] / bare_cpu[m]);
    sink_out = sink;
    free(vars);
    free(names);
    free(sql);
    return 0;
}
