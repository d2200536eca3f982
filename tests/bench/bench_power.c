/* Power benchmark: writes an invented 64-input, 16-output archive and times the power of every
 * claim against a bare SQLite scan of the same columns. See LICENSE. */
#include <errno.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_math.h>
#include <sqlite3.h>

#include "coverage/plan/plan.h"
#include "coverage/report/report.h"
#include "tests/bench/bench.h"

#define N_IN 64
#define N_OUT 16
#define PARENTS 4            /* inputs per output: 16 x 4 covers the 64 inputs once */
#define REPEATS 3            /* medians of three runs, as the brief for the benchmark asks */

static volatile double sink_out;

static double unif(uint64_t *s)
{
    return (double)(bench_next(s) >> 11) * 0x1.0p-53;
}

/* A standard normal by Box & Muller (1958); the second value is dropped for simplicity. */
static double gauss(uint64_t *s)
{
    double u = unif(s), v = unif(s);
    return sqrt(-2 * log(u > 0 ? u : 0x1.0p-53)) * cos(2 * M_PI * v);
}

/* The invented graph: inputs x0..x63 on [0, 1], outputs y0..y15, y_j caused by x_{4j..4j+3}. */
static int write_graph(const char *path)
{
    FILE *f = fopen(path, "w");
    if (f == NULL) return -1;
    fprintf(f, "# Invented benchmark graph: 64 inputs, 16 outputs, no real system behind it.\n"
               "design independent\ndefault margin 0.1 sd\n");
    for (int i = 0; i < N_IN; i++) fprintf(f, "input x%d real [0, 1]\n", i);
    for (int j = 0; j < N_OUT; j++) fprintf(f, "output y%d real noise 1\n", j);
    for (int j = 0; j < N_OUT; j++)
        for (int k = 0; k < PARENTS; k++)
            fprintf(f, "x%d -> y%d effect 0.05\n", PARENTS * j + k, j);
    return fclose(f);
}

static int write_archive(const char *path, long rows, uint64_t seed)
{
    sqlite3 *db = NULL;
    sqlite3_stmt *st = NULL;
    char sql[8192];
    size_t at = (size_t)snprintf(sql, sizeof sql, "CREATE TABLE runs(");
    for (int i = 0; i < N_IN; i++) at += (size_t)snprintf(sql + at, sizeof sql - at, "x%d REAL, ", i);
    for (int j = 0; j < N_OUT; j++)
        at += (size_t)snprintf(sql + at, sizeof sql - at, "y%d REAL%s", j, j + 1 < N_OUT ? ", " : ")");
    if (sqlite3_open(path, &db) != SQLITE_OK ||
        sqlite3_exec(db, "PRAGMA journal_mode=OFF; PRAGMA synchronous=OFF", NULL, NULL, NULL) ||
        sqlite3_exec(db, sql, NULL, NULL, NULL) ||
        sqlite3_exec(db, "BEGIN", NULL, NULL, NULL))
        goto fail;
    at = (size_t)snprintf(sql, sizeof sql, "INSERT INTO runs VALUES(");
    for (int c = 0; c < N_IN + N_OUT; c++)
        at += (size_t)snprintf(sql + at, sizeof sql - at, "?%s", c + 1 < N_IN + N_OUT ? "," : ")");
    if (sqlite3_prepare_v2(db, sql, -1, &st, NULL) != SQLITE_OK) goto fail;
    double x[N_IN];
    for (long r = 0; r < rows; r++) {
        for (int i = 0; i < N_IN; i++) {
            x[i] = unif(&seed);
            sqlite3_bind_double(st, i + 1, x[i]);
        }
        for (int j = 0; j < N_OUT; j++) {
            double y = gauss(&seed);
            for (int k = 0; k < PARENTS; k++) y += 0.5 * x[PARENTS * j + k];
            sqlite3_bind_double(st, N_IN + j + 1, y);
        }
        if (sqlite3_step(st) != SQLITE_DONE) goto fail;
        sqlite3_reset(st);
    }
    sqlite3_finalize(st);
    st = NULL;
    if (sqlite3_exec(db, "COMMIT", NULL, NULL, NULL)) goto fail;
    sqlite3_close(db);
    return 0;
fail:
    fprintf(stderr, "bench_power: %s\n", sqlite3_errmsg(db));
    sqlite3_finalize(st);
    sqlite3_close(db);
    return -1;
}

/* The baseline: one SELECT of the 80 columns, sqlite3_step over every row, each value read once. */
static double bare_scan(const char *path, double *sink, double *cpu_s)
{
    char sql[4096];
    size_t at = (size_t)snprintf(sql, sizeof sql, "SELECT ");
    for (int i = 0; i < N_IN; i++) at += (size_t)snprintf(sql + at, sizeof sql - at, "x%d, ", i);
    for (int j = 0; j < N_OUT; j++)
        at += (size_t)snprintf(sql + at, sizeof sql - at, "y%d%s", j, j + 1 < N_OUT ? ", " : "");
    snprintf(sql + at, sizeof sql - at, " FROM runs");
    sqlite3 *db = NULL;
    sqlite3_stmt *st = NULL;
    double t0 = bench_wall(), c0 = bench_cpu();
    if (sqlite3_open_v2(path, &db, SQLITE_OPEN_READONLY, NULL) != SQLITE_OK ||
        sqlite3_prepare_v2(db, sql, -1, &st, NULL) != SQLITE_OK) {
        fprintf(stderr, "bench_power: %s\n", sqlite3_errmsg(db));
        exit(1);
    }
    double sum = 0;
    while (sqlite3_step(st) == SQLITE_ROW)
        for (int c = 0; c < N_IN + N_OUT; c++) sum += sqlite3_column_double(st, c);
    sqlite3_finalize(st);
    sqlite3_close(db);
    *sink += sum;
    *cpu_s = bench_cpu() - c0;
    return bench_wall() - t0;
}

static int time_all(const char *db_path, const char *graph_path)
{
    cov_error err = {{0}, {0}};
    cov_graph *g = NULL;
    cov_claims *cl = NULL;
    if (cov_graph_parse_file(graph_path, &g, &err) || cov_claims_derive(g, &cl, &err)) {
        fprintf(stderr, "bench_power: %s: %s\n", err.where, err.msg);
        return 1;
    }
    cov_power_options opt = {0.05, 0.80, 1, 0, COV_TEST_ROBUST, COV_POWER_BY_AUTO, 0, 0, 1};
    double t_scan[REPEATS], t_read[REPEATS], t_assess[REPEATS], sink = 0;
    double c_scan[REPEATS], c_read[REPEATS], c_assess[REPEATS], c_classic[REPEATS];
    /* Baseline of the same run: the classic test with the normal formula only (issue 11's cost). */
    cov_power_options opt_classic = {0.05, 0.80, 1, 0, COV_TEST_CLASSIC, COV_POWER_BY_FORMULA, 0,
                                     0, 1};
    size_t runs = 0, n_ample = 0, n_resampled = 0;
    for (int r = 0; r < REPEATS; r++) {
        t_scan[r] = bare_scan(db_path, &sink, &c_scan[r]);
        cov_archive *a = NULL;
        cov_data *d = NULL;
        cov_assessments *as = NULL;
        double t0 = bench_wall(), c0 = bench_cpu();
        int rc = cov_archive_open(db_path, NULL, &a, &err);
        if (rc == COV_OK) rc = cov_data_read(a, g, NULL, NULL, &d, &err);
        double t1 = bench_wall(), c1 = bench_cpu();
        if (rc == COV_OK) rc = cov_assess(g, cl, d, &opt, &as, &err);
        double t2 = bench_wall(), c2 = bench_cpu();
        cov_assessments *as_classic = NULL;
        if (rc == COV_OK) rc = cov_assess(g, cl, d, &opt_classic, &as_classic, &err);
        c_classic[r] = bench_cpu() - c2;
        cov_assessments_free(as_classic);
        c_read[r] = c1 - c0;
        c_assess[r] = c2 - c1;
        if (rc != COV_OK) {
            fprintf(stderr, "bench_power: %s: %s\n", err.where, err.msg);
            return 1;
        }
        t_read[r] = t1 - t0;
        t_assess[r] = t2 - t1;
        runs = d->n_runs;
        n_ample = n_resampled = 0;
        for (size_t i = 0; i < as->n; i++) {
            n_ample += as->items[i].verdict == COV_AMPLE;
            n_resampled += as->items[i].power_method == COV_METHOD_RESAMPLED;
        }
        cov_assessments_free(as);
        cov_data_free(d);
        cov_archive_close(a);
    }
    double *all[7] = {t_scan, t_read, t_assess, c_scan, c_read, c_assess, c_classic};
    for (int k = 0; k < 7; k++) qsort(all[k], REPEATS, sizeof(double), bench_cmp_double);
    double scan = t_scan[REPEATS / 2], rd = t_read[REPEATS / 2], as = t_assess[REPEATS / 2];
    double cs = c_scan[REPEATS / 2], cr = c_read[REPEATS / 2], ca = c_assess[REPEATS / 2];
    printf("power of %zu claims (%zu ample) on %zu runs x %d columns (medians of %d):\n"
           "  wall: bare scan %.2f s; cov_data_read %.2f s + cov_assess %.2f s = %.2f s\n"
           "  cpu:  bare scan %.2f s; cov_data_read %.2f s + cov_assess %.2f s = %.2f s\n"
           "  cpu ratio %.2f, wall ratio %.2f (target <= 3)\n", cl->n, n_ample, runs,
           N_IN + N_OUT, REPEATS, scan, rd, as, rd + as, cs, cr, ca, cr + ca, (cr + ca) / cs,
           (rd + as) / scan);
    printf("  robust test, power by auto (%zu claims resampled): cov_assess %.2f s cpu against "
           "%.2f s cpu for the classic test by formula alone (ratio %.2f)\n", n_resampled, ca,
           c_classic[REPEATS / 2], ca / c_classic[REPEATS / 2]);
    sink_out = sink;
    cov_claims_free(cl);
    cov_graph_free(g);
    return 0;
}

/* Every claim's record (the serializer of `shoal power --json`), to compare thread counts. */
static char *records_of(const cov_graph *g, const cov_claims *cl, const cov_assessments *as)
{
    char *buf = NULL;
    size_t len = 0;
    FILE *m = open_memstream(&buf, &len);
    if (m == NULL) return NULL;
    cov_record_src src = {g, cl, as, NULL};
    for (size_t i = 0; i < cl->n; i++) cov_record_json(m, &src, i, COV_RECORD_ASSESS);
    fclose(m);
    return buf;
}

/* The claims' assessment alone (the archive read once) on 1 and `threads` threads, alternating,
 * REPEATS times each, power by the noise and by resampling: medians of CPU and wall, and whether
 * every claim's record is the same bytes on both. */
static int time_threads(const char *db_path, const char *graph_path, int threads)
{
    cov_error err = {{0}, {0}};
    cov_graph *g = NULL;
    cov_claims *cl = NULL;
    cov_archive *a = NULL;
    cov_data *d = NULL;
    if (cov_graph_parse_file(graph_path, &g, &err) || cov_claims_derive(g, &cl, &err) ||
        cov_archive_open(db_path, NULL, &a, &err) || cov_data_read(a, g, NULL, NULL, &d, &err)) {
        fprintf(stderr, "bench_power: %s: %s\n", err.where, err.msg);
        return 1;
    }
    int status = 0;
    for (int by = 0; by < 2; by++) {
        double wall[2][REPEATS], cpu[2][REPEATS];
        char *rec[2] = {NULL, NULL};
        int same = 1;
        for (int r = 0; r < REPEATS; r++)
            for (int k = 0; k < 2; k++) {
                cov_power_options opt = {0.05, 0.80, 1, 0, COV_TEST_ROBUST,
                                         by ? COV_POWER_BY_RESAMPLING : COV_POWER_BY_AUTO, 0, 0,
                                         k ? threads : 1};
                cov_assessments *as = NULL;
                double t0 = bench_wall(), c0 = bench_cpu();
                if (cov_assess(g, cl, d, &opt, &as, &err) != COV_OK) {
                    fprintf(stderr, "bench_power: %s\n", err.msg);
                    return 1;
                }
                wall[k][r] = bench_wall() - t0;
                cpu[k][r] = bench_cpu() - c0;
                char *text = records_of(g, cl, as);
                if (rec[k] == NULL) rec[k] = text;
                else {
                    same &= text != NULL && strcmp(text, rec[k]) == 0;
                    free(text);
                }
                cov_assessments_free(as);
            }
        same &= rec[0] != NULL && rec[1] != NULL && strcmp(rec[0], rec[1]) == 0;
        free(rec[0]);
        free(rec[1]);
        for (int k = 0; k < 2; k++) {
            qsort(wall[k], REPEATS, sizeof(double), bench_cmp_double);
            qsort(cpu[k], REPEATS, sizeof(double), bench_cmp_double);
        }
        double w1 = wall[0][REPEATS / 2], wn = wall[1][REPEATS / 2];
        printf("cov_assess of %zu claims on %zu runs, power by %s (medians of %d, alternating): "
               "1 thread cpu %.2f s wall %.2f s; %d threads cpu %.2f s wall %.2f s; wall ratio "
               "%.2f; records %s\n", cl->n, d->n_runs, by ? "resampling" : "auto", REPEATS,
               cpu[0][REPEATS / 2], w1, threads, cpu[1][REPEATS / 2], wn, wn / w1,
               same ? "byte-identical" : "DIFFER");
        if (!same) status = 1;
    }
    cov_data_free(d);
    cov_archive_close(a);
    cov_claims_free(cl);
    cov_graph_free(g);
    return status;
}

int main(int argc, char **argv)
{
    gsl_set_error_handler_off();
    if (argc == 5 && strcmp(argv[1], "make") == 0) {
        char *end = NULL;
        errno = 0;
        long rows = strtol(argv[4], &end, 10);
        if (errno || *end || rows < 1) {
            fprintf(stderr, "bench_power: ROWS must be a positive whole number\n");
            return 2;
        }
        if (write_graph(argv[3]) != 0) return 1;
        return write_archive(argv[2], rows, 20261202ULL) != 0;
    }
    if (argc == 4 && strcmp(argv[1], "time") == 0) return time_all(argv[2], argv[3]);
    if (argc == 5 && strcmp(argv[1], "threads") == 0) {
        int t = atoi(argv[4]);
        return time_threads(argv[2], argv[3], t >= 2 && t <= 64 ? t : 2);
    }
    fprintf(stderr, "usage: bench_power make ARCHIVE.db GRAPH ROWS | bench_power time ARCHIVE.db "
                    "GRAPH | bench_power threads ARCHIVE.db GRAPH N\n");
    return 2;
}
