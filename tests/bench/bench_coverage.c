/* Benchmark of `shoal coverage` against one bare SQLite scan of the same columns, and a writer
 * of the invented archive it runs on. See LICENSE. */
#include <errno.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include <gsl/gsl_errno.h>
#include <sqlite3.h>

#include "coverage/plan/plan.h"
#include "coverage/report/report.h"
#include "tests/bench/bench.h"

/* Median of three runs, as issue 4 asks. */
#define REPEATS 3

static volatile double sink_out;

static long arg(const char *s)
{
    char *end = NULL;
    errno = 0;
    long v = strtol(s, &end, 10);
    if (errno || end == s || *end || v <= 0) {
        fprintf(stderr, "bench_coverage: expected a positive whole number, got '%s'\n", s);
        exit(2);
    }
    return v;
}

/* Write table runs(c1..cK) of uniform values on [0, 1000) in one transaction. */
static int generate(const char *db_path, long rows, long cols, uint64_t seed)
{
    sqlite3 *db = NULL;
    sqlite3_stmt *st = NULL;
    size_t len = 64 + 24 * (size_t)cols;
    char *sql = malloc(len), *ins = malloc(len);
    size_t a = (size_t)snprintf(sql, len, "CREATE TABLE runs (");
    size_t b = (size_t)snprintf(ins, len, "INSERT INTO runs VALUES (");
    for (long j = 0; j < cols; j++) {
        a += (size_t)snprintf(sql + a, len - a, "%sc%ld REAL", j ? ", " : "", j + 1);
        b += (size_t)snprintf(ins + b, len - b, "%s?", j ? ", " : "");
    }
    snprintf(sql + a, len - a, ")");
    snprintf(ins + b, len - b, ")");
    int rc = 1;
    if (sqlite3_open(db_path, &db) != SQLITE_OK
        || sqlite3_exec(db, "PRAGMA journal_mode=OFF; PRAGMA synchronous=OFF;", 0, 0, 0)
        || sqlite3_exec(db, sql, 0, 0, 0) || sqlite3_exec(db, "BEGIN", 0, 0, 0)
        || sqlite3_prepare_v2(db, ins, -1, &st, NULL) != SQLITE_OK)
        goto done;
    for (long i = 0; i < rows; i++) {
        for (long j = 0; j < cols; j++)
            sqlite3_bind_double(st, (int)j + 1, (double)(bench_next(&seed) >> 11) * 0x1p-53 * 1000);
        if (sqlite3_step(st) != SQLITE_DONE) goto done;
        sqlite3_reset(st);
    }
    if (sqlite3_exec(db, "COMMIT", 0, 0, 0)) goto done;
    rc = 0;
done:
    if (rc) fprintf(stderr, "bench_coverage: %s\n", sqlite3_errmsg(db));
    sqlite3_finalize(st);
    sqlite3_close(db);
    free(sql);
    free(ins);
    return rc;
}

/* The baseline: one SELECT of the columns, sqlite3_step over every row, each value read once.
 * Returns wall seconds and writes CPU seconds to *cpu. */
static double bare_scan(const char *db_path, long cols, double *cpu)
{
    sqlite3 *db = NULL;
    sqlite3_stmt *st = NULL;
    size_t len = 64 + 16 * (size_t)cols;
    char *sql = malloc(len);
    size_t a = (size_t)snprintf(sql, len, "SELECT ");
    for (long j = 0; j < cols; j++) a += (size_t)snprintf(sql + a, len - a, "%sc%ld", j ? ", " : "", j + 1);
    snprintf(sql + a, len - a, " FROM runs");
    double t0 = bench_wall(), c0 = bench_cpu(), sum = 0;
    if (sqlite3_open_v2(db_path, &db, SQLITE_OPEN_READONLY, NULL) != SQLITE_OK
        || sqlite3_prepare_v2(db, sql, -1, &st, NULL) != SQLITE_OK) {
        fprintf(stderr, "bench_coverage: %s\n", sqlite3_errmsg(db));
        exit(1);
    }
    while (sqlite3_step(st) == SQLITE_ROW)
        for (int j = 0; j < (int)cols; j++) sum += sqlite3_column_double(st, j);
    sqlite3_finalize(st);
    sqlite3_close(db);
    free(sql);
    sink_out += sum;
    *cpu = bench_cpu() - c0;
    return bench_wall() - t0;
}

int main(int argc, char **argv)
{
    gsl_set_error_handler_off();
    if (argc == 6 && strcmp(argv[1], "generate") == 0)
        return generate(argv[2], arg(argv[3]), arg(argv[4]), (uint64_t)arg(argv[5]));
    if ((argc != 5 && argc != 6) || strcmp(argv[1], "time") != 0) {
        fprintf(stderr, "usage: bench_coverage generate ARCHIVE.db ROWS COLS SEED\n"
                        "       bench_coverage time GRAPH ARCHIVE.db COLS [info]\n");
        return 2;
    }
    long cols = arg(argv[4]);
    double scan[REPEATS], cmd[REPEATS], scan_cpu[REPEATS], cmd_cpu[REPEATS];
    cov_options o;
    cov_options_default(&o);
    o.graph_path = argv[2];
    o.archive_path = argv[3];
    o.format = COV_FMT_JSON;
    FILE *devnull = fopen("/dev/null", "w");
    if (devnull == NULL) return 1;
    for (int r = 0; r < REPEATS; r++) {
        scan[r] = bare_scan(argv[3], cols, &scan_cpu[r]);
        double t0 = bench_wall(), c0 = bench_cpu();
        int adequate;
        cov_error err;
        int rc = cov_cmd_coverage(&o, devnull, NULL, &adequate, &err);
        cmd[r] = bench_wall() - t0;
        cmd_cpu[r] = bench_cpu() - c0;
        if (rc != COV_OK) {
            fprintf(stderr, "bench_coverage: %s %s\n", err.where, err.msg);
            return 1;
        }
    }
    fclose(devnull);
    qsort(scan, REPEATS, sizeof *scan, bench_cmp_double);
    qsort(cmd, REPEATS, sizeof *cmd, bench_cmp_double);
    qsort(scan_cpu, REPEATS, sizeof *scan_cpu, bench_cmp_double);
    qsort(cmd_cpu, REPEATS, sizeof *cmd_cpu, bench_cmp_double);
    const int h = REPEATS / 2;
    printf("bare SQLite scan of %ld columns: median wall %.3f s, CPU %.3f s (of %d)\n", cols,
           scan[h], scan_cpu[h], REPEATS);
    printf("shoal coverage (whole command):  median wall %.3f s, CPU %.3f s (of %d)\n", cmd[h],
           cmd_cpu[h], REPEATS);
    int info = argc == 6;   /* informational: no target */
    printf("ratio wall %.2f, CPU %.2f%s\n", cmd[h] / scan[h], cmd_cpu[h] / scan_cpu[h],
           info ? "" : " (target <= 2, judged on CPU time)");
    if (info) return 0;
    return cmd_cpu[h] <= 2 * scan_cpu[h] ? 0 : 3;
}
