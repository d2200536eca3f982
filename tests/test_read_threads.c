/* The archive read on one, two and four threads (cov_data_read_threads): on invented campaigns
 * with replicates, repeated rows, missing cells and skewed outputs, every column, count, issue,
 * progress call and error must be those of the one-thread read, and the values those written.
 * See LICENSE. */
#include <math.h>
#include <stdarg.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_test.h>
#include <sqlite3.h>

#include "coverage/archive/archive.h"

static char dir[256];

static const char *tp(const char *name)
{
    static char buf[8][512];
    static int k;
    k = (k + 1) % 8;
    snprintf(buf[k], sizeof buf[k], "%s/%s", dir, name);
    return buf[k];
}

static void ok(int cond, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
static void ok(int cond, const char *fmt, ...)
{
    char msg[512];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    gsl_test(!cond, "%s", msg);
}

/* ---- an invented campaign ----------------------------------------------------------------------- */

/* An invented drying kiln (no real plant behind it): four inputs, a hidden mix, two outputs. */
static const char *graph_text =
    "# Invented model for the threaded-read tests.\n"
    "input  load    real    [0, 10]\n"
    "input  crew    integer [1, 6]\n"
    "input  fast    bool\n"
    "input  site    levels {north, south, east}\n"
    "hidden mix     real\n"
    "output wait    real noise 2\n"
    "output spoiled real\n"
    "runseed seed\n"
    "ledger  run_id\n"
    "default effect 0.5\n"
    "default margin 0.3\n"
    "load -> wait\ncrew -> wait\nfast -> spoiled\nsite -> mix -> wait\n";

static const char *site_names[] = {"north", "south", "east"};

/* splitmix64 (Steele, Lea and Flood 2014): a small deterministic generator. */
static uint64_t rng_state;
static uint64_t rng_next(void)
{
    uint64_t z = (rng_state += UINT64_C(0x9e3779b97f4a7c15));
    z = (z ^ (z >> 30)) * UINT64_C(0xbf58476d1ce4e5b9);
    z = (z ^ (z >> 27)) * UINT64_C(0x94d049bb133111eb);
    return z ^ (z >> 31);
}
static double unif(void) { return (double)(rng_next() >> 11) * 0x1.0p-53; }
static double normal(void)
{
    double u = unif(), v = unif();
    return sqrt(-2 * log(u + 1e-300)) * cos(8 * atan(1.0) * v);   /* Box and Muller (1958) */
}

/* What the generator wrote in each row, as the read must give it back: NAN for a missing cell,
 * the level's index for site, COV_SEED_NONE for an empty seed; an input planted outside its
 * domain is read as missing. */
typedef struct {
    double load, crew, fast, site, wait, spoiled;
    long long seed;
    int repeat;              /* a copy of the row before: not a run of its own */
    int load_out, crew_out;  /* an input planted outside its domain */
    long long batch;
} row_want;

/* Write `n` rows of the invented campaign into table runs of a new database at path, and what
 * each holds into want (n entries). The cells come in every storage the read accepts: reals,
 * integers, whole reals, numbers as text with blanks, bools as text, levels as text, NULL and
 * "nan" for missing outputs, seeds as integers, text and whole reals, or empty. */
static void make_campaign(const char *path, size_t n, uint64_t seed, row_want *want)
{
    sqlite3 *db = NULL;
    unlink(path);
    if (sqlite3_open(path, &db) != SQLITE_OK) {
        fprintf(stderr, "cannot create %s\n", path);
        exit(1);
    }
    sqlite3_exec(db, "CREATE TABLE runs (run_id INTEGER, load, crew, fast, site, wait, spoiled, "
                     "seed, shoal_batch INTEGER, note TEXT); BEGIN", NULL, NULL, NULL);
    sqlite3_stmt *ins = NULL;
    sqlite3_prepare_v2(db, "INSERT INTO runs VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10)",
                       -1, &ins, NULL);
    rng_state = seed;
    long long next_seed = 1000;
    for (size_t i = 0; i < n; i++) {
        row_want *w = &want[i];
        double u = unif();
        int kind = i == 0 ? 3 : u < 0.03 ? 0 : u < 0.05 ? 1 : u < 0.25 ? 2 : 3;
        /* 0: a repeated row; 1: same inputs and seed, other outputs; 2: a replicate (same
         * inputs, a new seed); 3: a new configuration. */
        if (kind == 0) {
            *w = want[i - 1];
            w->repeat = 1;
        } else {
            if (kind == 3) {
                w->load = floor(unif() * 1000) / 100;
                w->crew = 1 + floor(unif() * 6);
                w->fast = unif() < 0.5;
                w->site = floor(unif() * 3);
                w->load_out = unif() < 0.004;
                w->crew_out = !w->load_out && unif() < 0.004;
            } else {
                *w = want[i - 1];
            }
            w->repeat = 0;
            if (kind != 1) {
                double s = unif();
                w->seed = s < 0.02 ? COV_SEED_NONE : next_seed++;
            }
            /* Skewed output whose noise grows with the load; zero-inflated spoilage. */
            double lw = 1 + 0.1 * w->load + (0.2 + 0.05 * w->load) * normal();
            /* Missing 4% of the time, except in a conflicting row, whose outputs must differ. */
            double m = kind == 1 ? 1 : unif();
            w->wait = m < 0.04 ? NAN : round(exp(lw) * 1e6) / 1e6;
            w->spoiled = unif() < 0.6 ? 0 : round(pow(-log(unif() + 1e-300), 2) * 1e4) / 1e4;
        }
        w->batch = i < n / 2 ? 1 : 2;
        sqlite3_reset(ins);
        sqlite3_clear_bindings(ins);
        sqlite3_bind_int64(ins, 1, (long long)i + 1);
        /* Inputs, sometimes outside their domain (the read stores NAN and names them). */
        double load = w->load_out ? 10.5 : w->load;
        if (i % 50 == 7) {
            char t[64];
            snprintf(t, sizeof t, "  %.17g ", load);
            sqlite3_bind_text(ins, 2, t, -1, SQLITE_TRANSIENT);
        } else {
            sqlite3_bind_double(ins, 2, load);
        }
        if (w->crew_out) sqlite3_bind_double(ins, 3, w->crew + 0.5);
        else if (i % 40 == 3) sqlite3_bind_double(ins, 3, w->crew);
        else sqlite3_bind_int64(ins, 3, (long long)w->crew);
        if (i % 9 == 4) sqlite3_bind_text(ins, 4, w->fast ? "true" : "FALSE", -1, SQLITE_STATIC);
        else sqlite3_bind_int(ins, 4, (int)w->fast);
        sqlite3_bind_text(ins, 5, site_names[(int)w->site], -1, SQLITE_STATIC);
        if (!isnan(w->wait)) sqlite3_bind_double(ins, 6, w->wait);
        else if (i % 2) sqlite3_bind_text(ins, 6, "nan", -1, SQLITE_STATIC);
        /* (an unbound parameter is NULL) */
        sqlite3_bind_double(ins, 7, w->spoiled);
        if (w->seed != COV_SEED_NONE) {
            if (i % 31 == 5) {
                char t[32];
                snprintf(t, sizeof t, "%lld", w->seed);
                sqlite3_bind_text(ins, 8, t, -1, SQLITE_TRANSIENT);
            } else if (i % 29 == 6) {
                sqlite3_bind_double(ins, 8, (double)w->seed);
            } else {
                sqlite3_bind_int64(ins, 8, w->seed);
            }
        }
        sqlite3_bind_int64(ins, 9, w->batch);
        sqlite3_bind_text(ins, 10, "invented", -1, SQLITE_STATIC);
        if (sqlite3_step(ins) != SQLITE_DONE) {
            fprintf(stderr, "insert: %s\n", sqlite3_errmsg(db));
            exit(1);
        }
    }
    sqlite3_finalize(ins);
    /* A view of the same rows: the read cannot count its rows ahead, so its columns grow. */
    sqlite3_exec(db, "COMMIT; CREATE VIEW runs_view AS SELECT * FROM runs", NULL, NULL, NULL);
    sqlite3_close(db);
}

static void sql(const char *path, const char *statement)
{
    sqlite3 *db = NULL;
    char *msg = NULL;
    if (sqlite3_open(path, &db) != SQLITE_OK ||
        sqlite3_exec(db, statement, NULL, NULL, &msg) != SQLITE_OK) {
        fprintf(stderr, "%s: %s\n", statement, msg ? msg : sqlite3_errmsg(db));
        exit(1);
    }
    sqlite3_close(db);
}

/* ---- one read and the comparison ---------------------------------------------------------------- */

typedef struct {
    int rc;
    cov_error err;
    cov_data *d;
    size_t n_progress;
    double shares[64];
} read_result;

static void on_progress(double share, void *ctx)
{
    read_result *r = ctx;
    if (r->n_progress < sizeof r->shares / sizeof r->shares[0]) r->shares[r->n_progress] = share;
    r->n_progress++;
}

static read_result read_with(const cov_graph *g, const char *db, const char *table, int threads)
{
    read_result r;
    memset(&r, 0, sizeof r);
    cov_archive *a = NULL;
    r.rc = cov_archive_open(db, table, &a, &r.err);
    if (r.rc == COV_OK) r.rc = cov_data_read_threads(a, g, threads, on_progress, &r, &r.d, &r.err);
    cov_archive_close(a);
    return r;
}

static int same_bits(const void *x, const void *y, size_t bytes)
{
    if (x == NULL || y == NULL) return x == y;
    return memcmp(x, y, bytes) == 0;
}

/* Everything a read gives: columns bit for bit, every count, issue, seed, batch and row, the
 * progress calls, and the status and message. Returns the number of differences. */
static int differences(const read_result *x, const read_result *y)
{
    int diff = 0;
    diff += x->rc != y->rc;
    diff += strcmp(x->err.where, y->err.where) != 0 || strcmp(x->err.msg, y->err.msg) != 0;
    diff += x->n_progress != y->n_progress;
    if (x->n_progress == y->n_progress)
        diff += !same_bits(x->shares, y->shares, sizeof x->shares);
    if (x->d == NULL || y->d == NULL) return diff + (x->d != y->d);
    const cov_data *a = x->d, *b = y->d;
    if (a->n_vars != b->n_vars || a->n_runs != b->n_runs || a->n_rows != b->n_rows) return diff + 1;
    size_t n = a->n_runs;
    for (size_t v = 0; v < a->n_vars; v++) {
        diff += !same_bits(a->col[v], b->col[v], n * sizeof(double));
        diff += a->n_missing[v] != b->n_missing[v] || a->n_outside[v] != b->n_outside[v];
    }
    diff += a->n_issues != b->n_issues;
    for (size_t i = 0; i < a->n_issues && i < b->n_issues; i++) {
        const cov_data_issue *p = &a->issues[i], *q = &b->issues[i];
        diff += p->var != q->var || p->row != q->row || strcmp(p->what, q->what) != 0 ||
                !same_bits(&p->value, &q->value, sizeof p->value);
    }
    diff += !same_bits(a->batch, b->batch, n * sizeof *a->batch) || a->n_batches != b->n_batches;
    diff += !same_bits(a->seed, b->seed, n * sizeof *a->seed);
    diff += !same_bits(a->row_of, b->row_of, n * sizeof *a->row_of);
    diff += a->n_duplicates != b->n_duplicates || a->n_conflicts != b->n_conflicts ||
            a->n_configs != b->n_configs || a->n_replicated != b->n_replicated ||
            a->n_seeds != b->n_seeds || a->n_shared_seeds != b->n_shared_seeds;
    diff += cov_runs_fingerprint(a) != cov_runs_fingerprint(b);
    return diff;
}

static int equal_value(double got, double want)
{
    return (isnan(got) && isnan(want)) || got == want;
}

/* The one-thread read against what the generator wrote: each run's values, the repeats dropped,
 * the planted out-of-domain inputs counted. */
static void check_against_written(const char *what, const cov_graph *g, const read_result *r,
                                  const row_want *want, size_t n)
{
    if (r->rc != COV_OK) {
        ok(0, "%s: reads (%s %s)", what, r->err.where, r->err.msg);
        return;
    }
    const cov_data *d = r->d;
    size_t repeats = 0, load_out = 0, crew_out = 0;
    for (size_t i = 0; i < n; i++) {
        repeats += (size_t)want[i].repeat;
        load_out += (size_t)(!want[i].repeat && want[i].load_out);
        crew_out += (size_t)(!want[i].repeat && want[i].crew_out);
    }
    gsl_test_int((int)d->n_rows, (int)n, "%s: every row read", what);
    gsl_test_int((int)d->n_duplicates, (int)repeats, "%s: each planted repeat dropped", what);
    size_t v_load = 0, v_crew = 1, v_fast = 2, v_site = 3, v_wait = 5, v_spoiled = 6;
    ok(strcmp(g->vars[v_wait].name, "wait") == 0 && g->vars[4].role == COV_HIDDEN,
       "%s: variables in declared order", what);
    gsl_test_int((int)d->n_outside[v_load], (int)load_out, "%s: loads outside [0, 10]", what);
    gsl_test_int((int)d->n_outside[v_crew], (int)crew_out, "%s: crews outside 1..6", what);
    size_t bad = 0, r_i = 0;
    for (size_t i = 0; i < n; i++) {
        if (want[i].repeat) continue;
        size_t row = d->row_of ? d->row_of[r_i] : r_i;
        const row_want *w = &want[i];
        bad += row != i || !equal_value(d->col[v_load][r_i], w->load_out ? NAN : w->load) ||
               !equal_value(d->col[v_crew][r_i], w->crew_out ? NAN : w->crew) ||
               !equal_value(d->col[v_fast][r_i], w->fast) ||
               !equal_value(d->col[v_site][r_i], w->site) ||
               !equal_value(d->col[v_wait][r_i], w->wait) ||
               !equal_value(d->col[v_spoiled][r_i], w->spoiled) || d->seed[r_i] != w->seed ||
               d->batch[r_i] != w->batch;
        r_i++;
    }
    gsl_test_int((int)bad, 0, "%s: every run's values, seed and batch as written", what);
    gsl_test_int((int)d->n_batches, 2, "%s: two batches", what);
}

static void free_result(read_result *r)
{
    cov_data_free(r->d);
    r->d = NULL;
}

/* Read db (table) on 1, 2 and 4 threads and require the same result; returns the one-thread
 * read (the caller frees it). */
static read_result compare_threads(const char *what, const cov_graph *g, const char *db,
                                   const char *table)
{
    read_result one = read_with(g, db, table, 1);
    for (int t = 2; t <= 4; t += 2) {
        read_result many = read_with(g, db, table, t);
        int diff = differences(&one, &many);
        gsl_test_int(diff, 0, "%s: %d threads give the one-thread read (rc %d, '%s')", what, t,
                     many.rc, many.err.msg);
        free_result(&many);
    }
    return one;
}

/* ---- the cases ------------------------------------------------------------------------------ */

static void expect_error(const cov_graph *g, const char *db, const char *update, const char *where,
                         const char *msg)
{
    sql(db, update);
    read_result r = compare_threads(update, g, db, NULL);
    ok(r.rc == COV_EINPUT && strstr(r.err.where, where) != NULL && strstr(r.err.msg, msg) != NULL,
       "%s: reported as '%s: %s'", update, r.err.where, r.err.msg);
    free_result(&r);
}

static void test_campaigns(const cov_graph *g)
{
    /* More rows than one block of 64 and not a multiple of it, and more than the ring holds. */
    size_t n = 5037;
    row_want *want = calloc(140001, sizeof *want);
    const char *db = tp("kiln.db");
    make_campaign(db, n, 2026, want);
    read_result r = compare_threads("5037 rows", g, db, NULL);
    check_against_written("5037 rows", g, &r, want, n);
    ok(r.d != NULL && r.d->n_conflicts > 0 && r.d->n_replicated > 0 && r.d->n_issues > 0 &&
       r.d->n_missing[5] > 0, "5037 rows: the campaign has conflicts, replicates, issues and "
       "missing cells");
    free_result(&r);
    /* A view: no row count ahead, so the columns grow (and move) while the copier waits. */
    r = compare_threads("5037 rows through a view", g, db, "runs_view");
    check_against_written("5037 rows through a view", g, &r, want, n);
    free_result(&r);

    /* Fewer rows than one block, exactly one block, and none. */
    size_t small[] = {37, 64, 128, 0};
    for (size_t k = 0; k < sizeof small / sizeof small[0]; k++) {
        char what[64];
        snprintf(what, sizeof what, "%zu rows", small[k]);
        make_campaign(db, small[k], 7 + k, want);
        r = compare_threads(what, g, db, NULL);
        if (small[k] > 0) check_against_written(what, g, &r, want, small[k]);
        else gsl_test_int(r.rc == COV_OK ? (int)r.d->n_runs : -1, 0, "%s: reads", what);
        free_result(&r);
    }

    /* Columns of more than 1 MiB, which the copier maps ahead as it goes; progress every 65,536
     * rows. */
    n = 140001;
    make_campaign(db, n, 99, want);
    r = compare_threads("140001 rows", g, db, NULL);
    check_against_written("140001 rows", g, &r, want, n);
    gsl_test_int((int)r.n_progress, 3, "140001 rows: progress at 65,536, 131,072 and the end");
    free_result(&r);

    /* Bad cells: the first in row order (then column order) is the one reported, whichever
     * thread count, here in the last block, in the middle and in the first. */
    make_campaign(db, 5037, 2026, want);
    expect_error(g, db, "UPDATE runs SET wait = 'abc' WHERE rowid = 5030",
                 "kiln.db: row 5030, column wait", "found 'abc', expected a number");
    expect_error(g, db, "UPDATE runs SET load = 'x' WHERE rowid = 5029",
                 "kiln.db: row 5029, column load", "found 'x', expected a number");
    expect_error(g, db, "UPDATE runs SET spoiled = X'00' WHERE rowid = 5029",
                 "kiln.db: row 5029, column load", "found 'x'");
    expect_error(g, db, "UPDATE runs SET site = 'west' WHERE rowid = 2500",
                 "kiln.db: row 2500, column site", "found the level 'west'");
    expect_error(g, db, "UPDATE runs SET fast = 2 WHERE rowid = 1",
                 "kiln.db: row 1, column fast", "expected 0, 1, true or false");
    make_campaign(db, 5037, 2026, want);
    expect_error(g, db, "UPDATE runs SET seed = '12.5' WHERE rowid = 5037",
                 "kiln.db: row 5037, column seed", "expected a whole-number seed");
    free(want);
}

int main(void)
{
    gsl_set_error_handler_off();
    gsl_test_verbose(1);
    snprintf(dir, sizeof dir, "%s/shoal-test-threads-XXXXXX",
             getenv("TMPDIR") ? getenv("TMPDIR") : "/tmp");
    if (mkdtemp(dir) == NULL) {
        perror("mkdtemp");
        return 1;
    }
    FILE *f = fopen(tp("kiln.graph"), "w");
    if (f == NULL) return 1;
    fputs(graph_text, f);
    fclose(f);
    cov_graph *g = NULL;
    cov_error err;
    memset(&err, 0, sizeof err);
    if (cov_graph_parse_file(tp("kiln.graph"), &g, &err) != COV_OK) {
        printf("FAIL: the invented graph parses: %s %s\n", err.where, err.msg);
        return 1;
    }
    test_campaigns(g);
    cov_graph_free(g);
    char cmd[600];
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", dir);
    if (system(cmd) != 0) fprintf(stderr, "could not remove %s\n", dir);
    return gsl_test_summary();
}
