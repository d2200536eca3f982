/* `make check-faults`: every public entry point (import into a new and into an existing archive,
 * claims, power, coverage, survey, plan) is run once to count its allocations, then once more for
 * every k with the k-th allocation failing. Each run must end cleanly: a status with a message,
 * or success with the same output as without the failure; no leak (LeakSanitizer at exit sees
 * every block any run lost, and fails the program), no crash (AddressSanitizer); a failed import leaves the archive as it was (no new file,
 * an existing one byte for byte), a failed survey leaves no report and a failed plan no file.
 * Prints one PASS/FAIL line per entry point and the allocation sites made to fail.
 * Usage: fault_run WORKDIR. See LICENSE. */
#undef malloc
#undef calloc
#undef realloc
#undef strdup
#include <dirent.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "coverage/coverage.h"
#include "tests/fault/fault.h"

static char work[4096];
static char graph[4200], csv[4200], csv2[4200], archive[4200], snapshot[4200], target[4200], outdir[4200];

typedef int (*entry_fn)(void);
static cov_error err;
static cov_options opt;

static void base_options(void)
{
    cov_options_default(&opt);
    opt.quiet = 0;
    opt.graph_path = graph;
    opt.archive_path = archive;
}

static FILE *out_stream;
static char *out_text;
static size_t out_len;

/* ---- the entry points ------------------------------------------------------------------------ */

static int run_import_new(void)
{
    long long batch;
    size_t rows;
    return cov_import_csv(csv, target, NULL, &batch, &rows, &err);
}
static int run_import_existing(void)
{
    long long batch;
    size_t rows;
    return cov_import_csv(csv2, archive, NULL, &batch, &rows, &err);
}
static int run_cmd(int (*fn)(const cov_options *, FILE *, FILE *, int *, cov_error *))
{
    int adequate = 0;
    return fn(&opt, out_stream, out_stream, &adequate, &err);
}
/* The archive read with a second thread copying rows (its ring and thread are allocated by the
 * reading thread, so the count of allocations is the same from run to run). */
static int run_read_threads(void)
{
    cov_graph *g = NULL;
    cov_archive *a = NULL;
    cov_data *d = NULL;
    int rc = cov_graph_parse_file(graph, &g, &err);
    if (rc == COV_OK) rc = cov_archive_open(archive, NULL, &a, &err);
    if (rc == COV_OK) rc = cov_data_read_threads(a, g, 2, NULL, NULL, &d, &err);
    if (rc == COV_OK)
        fprintf(out_stream, "%zu runs, %zu configurations\n", d->n_runs, d->n_configs);
    cov_data_free(d);
    cov_archive_close(a);
    cov_graph_free(g);
    return rc;
}
static int run_claims(void) { return run_cmd(cov_cmd_claims); }
static int run_power(void) { return run_cmd(cov_cmd_power); }
static int run_coverage(void) { return run_cmd(cov_cmd_coverage); }
static int run_survey(void)
{
    opt.out_path = outdir;
    int rc = run_cmd(cov_cmd_survey);
    opt.out_path = NULL;
    return rc;
}
static int run_plan(void)
{
    opt.out_path = target;
    opt.budget = 4;
    int rc = run_cmd(cov_cmd_plan);
    opt.out_path = NULL;
    opt.budget = 0;
    return rc;
}

/* ---- files ----------------------------------------------------------------------------------- */

static int copy_file(const char *from, const char *to)
{
    FILE *a = fopen(from, "rb"), *b = fopen(to, "wb");
    int ok = a != NULL && b != NULL;
    char buf[65536];
    size_t n;
    while (ok && (n = fread(buf, 1, sizeof buf, a)) > 0) ok = fwrite(buf, 1, n, b) == n;
    if (a) fclose(a);
    if (b && fclose(b) != 0) ok = 0;
    return ok ? 0 : -1;
}
static int same_file(const char *x, const char *y)
{
    FILE *a = fopen(x, "rb"), *b = fopen(y, "rb");
    int same = a != NULL && b != NULL;
    while (same) {
        int ca = fgetc(a), cb = fgetc(b);
        if (ca != cb) same = 0;
        if (ca == EOF || cb == EOF) break;
    }
    if (a) fclose(a);
    if (b) fclose(b);
    return same;
}
/* Remove a report directory (it holds plain files only). */
static void remove_tree(const char *dir)
{
    DIR *d = opendir(dir);
    if (d == NULL) return;
    struct dirent *e;
    char path[8400];
    while ((e = readdir(d)) != NULL) {
        if (strcmp(e->d_name, ".") == 0 || strcmp(e->d_name, "..") == 0) continue;
        snprintf(path, sizeof path, "%s/%s", dir, e->d_name);
        unlink(path);
    }
    closedir(d);
    rmdir(dir);
}
/* Files in the work directory whose names start with ".": temporary files left behind. */
static int leftovers(void)
{
    DIR *d = opendir(work);
    if (d == NULL) return 1;
    int found = 0;
    struct dirent *e;
    while ((e = readdir(d)) != NULL)
        if (e->d_name[0] == '.' && strcmp(e->d_name, ".") != 0 && strcmp(e->d_name, "..") != 0)
            found = 1;
    closedir(d);
    return found;
}

/* ---- one entry point over every k ------------------------------------------------------------ */

enum effect { NONE, NEW_FILE, OWN_ARCHIVE, REPORT_DIR };

static void reset_outputs(enum effect eff)
{
    unlink(target);
    remove_tree(outdir);
    if (eff == OWN_ARCHIVE || eff == REPORT_DIR) copy_file(snapshot, archive);
    out_stream = open_memstream(&out_text, &out_len);
}

static int check_entry(const char *name, entry_fn fn, enum effect eff, size_t *total_runs)
{
    reset_outputs(eff);
    fault_arm(0);
    int rc0 = fn();
    unsigned long n = fault_count();
    fclose(out_stream);
    char *want = out_text;
    size_t want_len = out_len;
    if (rc0 != COV_OK) {
        printf("FAIL: %s: the run without faults failed: %s %s\n", name, err.where, err.msg);
        free(want);
        return 1;
    }
    size_t bad = 0, failed_clean = 0, survived = 0;
    const char *from = getenv("FAULT_K");
    const char *last = getenv("FAULT_K_LAST");
    unsigned long stop = last ? strtoul(last, NULL, 10) : n;
    for (unsigned long k = from ? strtoul(from, NULL, 10) : 1; k <= n && k <= stop; k++) {
        reset_outputs(eff);
        memset(&err, 0, sizeof err);
        fault_arm(k);
        int rc = fn();
        int fired = fault_fired();
        fault_arm(0);
        fclose(out_stream);
        const char *why = NULL;
        if (rc != COV_OK && err.msg[0] == '\0') why = "a failure without a message";
        else if (rc == COV_OK && fired && (out_len != want_len || memcmp(out_text, want, out_len)))
            why = "success with another output";
        else if (rc != COV_OK && eff == NEW_FILE && access(target, F_OK) == 0)
            why = "a file left after a failure";
        else if (rc != COV_OK && (eff == OWN_ARCHIVE || eff == REPORT_DIR) &&
                 !same_file(archive, snapshot))
            why = "a changed archive after a failure";
        else if (rc != COV_OK && eff == REPORT_DIR && access(outdir, F_OK) == 0)
            why = "a partial report after a failure";
        else if (leftovers())
            why = "temporary files left";
        free(out_text);
        if (why != NULL) {
            if (bad < 5) printf("FAIL: %s: allocation %lu of %lu failing gives %s (%s %s)\n", name,
                                k, n, why, err.where, err.msg);
            bad++;
        }
        if (rc != COV_OK) failed_clean++;
        else survived++;
    }
    free(want);
    *total_runs += n;
    printf("%s: %s: %lu allocations, each made to fail: %zu clean errors, %zu handled with the "
           "same result, %zu problems\n", bad ? "FAIL" : "PASS", name, n, failed_clean, survived,
           bad);
    return bad != 0;
}

int main(int argc, char **argv)
{
    if (argc != 2) {
        fprintf(stderr, "usage: fault_run WORKDIR\n");
        return 2;
    }
    setvbuf(stdout, NULL, _IOLBF, 0);
    if (fault_route_sqlite() != 0) {
        printf("FAIL: cannot route SQLite's allocations\n");
        return 1;
    }
    snprintf(work, sizeof work, "%s", argv[1]);
    snprintf(graph, sizeof graph, "%s/g.graph", work);
    snprintf(csv, sizeof csv, "%s/runs.csv", work);
    snprintf(csv2, sizeof csv2, "%s/more.csv", work);
    snprintf(archive, sizeof archive, "%s/runs.db", work);
    snprintf(snapshot, sizeof snapshot, "%s/snapshot.db", work);
    snprintf(target, sizeof target, "%s/target.out", work);
    snprintf(outdir, sizeof outdir, "%s/report", work);
    /* An invented model: two inputs of each kind, one output, and 40 runs. */
    FILE *g = fopen(graph, "w"), *c = fopen(csv, "w");
    if (g == NULL || c == NULL) return 1;
    fputs("# Invented model for the fault run.\ninput load real [0, 10]\ninput crew integer [1, 5]\n"
          "input fast bool\ninput site levels {north, south}\nhidden mix real\n"
          "output wait real noise 1\ndefault effect 0.5\ndefault margin 0.3\n"
          "load -> wait\ncrew -> wait\nfast -> wait\nsite -> mix -> wait\n", g);
    fputs("run,load,crew,fast,site,wait\n", c);
    for (int i = 0; i < 40; i++)
        fprintf(c, "%d,%.2f,%d,%d,%s,%.3f\n", i, (i * 37 % 100) / 10.0, 1 + i % 5, i % 2,
                i % 3 ? "north" : "south", (i * 37 % 100) / 10.0 + (i % 7) * 0.3);
    fclose(g);
    fclose(c);
    /* More runs for the import into the existing archive (new rows, so not refused as copies). */
    if ((c = fopen(csv2, "w")) == NULL) return 1;
    fputs("run,load,crew,fast,site,wait\n", c);
    for (int i = 40; i < 60; i++)
        fprintf(c, "%d,%.2f,%d,%d,%s,%.3f\n", i, (i * 37 % 100) / 10.0, 1 + i % 5, i % 2,
                i % 3 ? "north" : "south", (i * 37 % 100) / 10.0 + (i % 7) * 0.3);
    fclose(c);
    long long batch;
    size_t rows;
    if (cov_import_csv(csv, archive, NULL, &batch, &rows, &err) != COV_OK ||
        copy_file(archive, snapshot) != 0) {
        printf("FAIL: setting up: %s %s\n", err.where, err.msg);
        return 1;
    }
    base_options();
    struct { const char *name; entry_fn fn; enum effect eff; } entries[] = {
        {"import into a new archive", run_import_new, NEW_FILE},
        {"import into an existing archive", run_import_existing, OWN_ARCHIVE},
        {"claims", run_claims, NONE},
        {"power", run_power, NONE},
        {"coverage", run_coverage, NONE},
        {"read on two threads", run_read_threads, NONE},
        {"survey", run_survey, REPORT_DIR},
        {"plan", run_plan, NEW_FILE},
    };
    const char *only = getenv("FAULT_ONLY");
    int fails = 0;
    size_t runs = 0;
    for (size_t i = 0; i < sizeof entries / sizeof entries[0]; i++) {
        if (only != NULL && strstr(entries[i].name, only) == NULL) continue;
        fails += check_entry(entries[i].name, entries[i].fn, entries[i].eff, &runs);
    }
    printf("%s: %zu runs with one failing allocation; %zu distinct allocation sites made to fail "
           "(SQLite's allocator counted as one)\n", fails ? "FAIL" : "PASS", runs, fault_sites());
    /* LeakSanitizer runs at exit: a leak in any run fails the program after this line. */
    printf("# leak check at exit follows (no report means no leak)\n");
    fflush(stdout);
    return fails != 0;
}
