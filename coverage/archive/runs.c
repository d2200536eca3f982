/* What counts as one run: a configuration (every input) plus its seed. Repeated rows of the same
 * run are counted once, and the configurations, replicates and shared seeds are counted.
 * See LICENSE. */
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "coverage/archive/archive.h"

/* The bits of a cell for hashing: every NaN alike (missing cells compare equal), -0 as +0. */
static uint64_t cell_bits(double x)
{
    if (isnan(x)) return UINT64_C(0x7ff8000000000000);
    if (x == 0) return 0;
    uint64_t u;
    memcpy(&u, &x, sizeof u);
    return u;
}

/* A 64-bit mix per word (the finaliser of MurmurHash3, Appleby 2011), folded into h. */
static uint64_t mix(uint64_t h, uint64_t w)
{
    w ^= w >> 33;
    w *= UINT64_C(0xff51afd7ed558ccd);
    w ^= w >> 33;
    w *= UINT64_C(0xc4ceb9fe1a85ec53);
    w ^= w >> 33;
    return (h ^ w) * UINT64_C(0x100000001b3) + UINT64_C(0x9e3779b97f4a7c15);
}

static int same(double a, double b)
{
    return a == b || (isnan(a) && isnan(b));
}

typedef struct {
    const cov_data *d;
    size_t *in, n_in;     /* the input columns */
    size_t *out, n_out;   /* the output columns */
} run_view;

static int seeded(const run_view *w, size_t i)
{
    return w->d->seed != NULL && w->d->seed[i] != COV_SEED_NONE;
}

static int inputs_equal(const run_view *w, size_t i, size_t j)
{
    for (size_t k = 0; k < w->n_in; k++)
        if (!same(w->d->col[w->in[k]][i], w->d->col[w->in[k]][j])) return 0;
    return 1;
}

static int outputs_equal(const run_view *w, size_t i, size_t j)
{
    for (size_t k = 0; k < w->n_out; k++)
        if (!same(w->d->col[w->out[k]][i], w->d->col[w->out[k]][j])) return 0;
    return 1;
}

/* The hash of every row's inputs, column by column (each column read in order, so the cost is a
 * stream through memory, not a jump between columns per row). */
static void hash_inputs_all(const run_view *w, uint64_t *hin, size_t n)
{
    for (size_t i = 0; i < n; i++) hin[i] = UINT64_C(0xcbf29ce484222325);
    for (size_t k = 0; k < w->n_in; k++) {
        const double *c = w->d->col[w->in[k]];
        for (size_t i = 0; i < n; i++) hin[i] = mix(hin[i], cell_bits(c[i]));
    }
}

/* The identity of row i from its inputs' hash: with its seed, or, without a seed, its outputs. */
static uint64_t hash_identity(const run_view *w, uint64_t hin, size_t i)
{
    if (seeded(w, i)) return mix(hin ^ 1, (uint64_t)w->d->seed[i]);
    uint64_t h = hin;
    for (size_t k = 0; k < w->n_out; k++) h = mix(h, cell_bits(w->d->col[w->out[k]][i]));
    return h;
}

static int identity_equal(const run_view *w, size_t i, size_t j)
{
    if (seeded(w, i) != seeded(w, j) || !inputs_equal(w, i, j)) return 0;
    if (seeded(w, i)) return w->d->seed[i] == w->d->seed[j];
    return outputs_equal(w, i, j);
}

/* An open-addressing table of row numbers (row + 1; 0 is empty) with linear probing, each slot
 * with the high 32 bits of its row's hash, so most mismatches cost no look at the rows. Eight
 * bytes a slot and a load of at most 0.8: at 10,000,000 runs, 128 MB. Which rows a probe meets
 * first never changes a result: repeats and conflicts are decided by full comparison, and
 * configurations are numbered in the order of their first row. */
typedef struct {
    uint32_t *slot;
    uint32_t *tag;
    size_t mask;
} row_table;

#define TAG(h) ((uint32_t)((h) >> 32))

static int table_init(row_table *t, size_t n)
{
    size_t cap = 16;
    while (cap < n + n / 4) cap *= 2;
    t->slot = calloc(cap, sizeof *t->slot);
    t->tag = malloc(cap * sizeof *t->tag);
    t->mask = cap - 1;
    return t->slot != NULL && t->tag != NULL ? 0 : -1;
}

static void table_free(row_table *t)
{
    free(t->slot);
    free(t->tag);
    t->slot = NULL;
    t->tag = NULL;
}

int cov_runs_identify(cov_data *d, const cov_graph *g, unsigned char *kept, cov_error *err)
{
    run_view w = {d, NULL, 0, NULL, 0};
    row_table t = {NULL, NULL, 0}, tc = {NULL, NULL, 0}, ts = {NULL, NULL, 0};
    unsigned char *keep = NULL, *conflict = NULL, *shared = NULL;
    uint32_t *config_of = NULL, *config_runs = NULL;
    uint64_t *hin = NULL;
    size_t n = d->n_runs;
    int rc = COV_ENOMEM;
    if (n >= UINT32_MAX) {   /* row numbers are held in 32 bits */
        rc = COV_EINPUT;
        cov_fail(err, rc, "", "%zu rows: more than shoal can identify runs among (at most %lu)",
                 n, (unsigned long)UINT32_MAX - 1);
        return rc;
    }
    w.in = malloc((g->n_vars + 1) * sizeof *w.in);
    w.out = malloc((g->n_vars + 1) * sizeof *w.out);
    keep = malloc(n + 1);
    conflict = calloc(n + 1, 1);
    hin = malloc((n + 1) * sizeof *hin);
    if (w.in == NULL || w.out == NULL || keep == NULL || conflict == NULL || hin == NULL ||
        table_init(&t, n))
        goto fail;
    for (size_t v = 0; v < g->n_vars; v++) {
        if (d->col[v] == NULL) continue;
        if (g->vars[v].role == COV_INPUT) w.in[w.n_in++] = v;
        else if (g->vars[v].role == COV_OUTPUT) w.out[w.n_out++] = v;
    }
    hash_inputs_all(&w, hin, n);

    /* One pass: a row whose identity and outputs match an earlier row is a repeat; a row whose
     * identity matches but whose outputs differ is a conflicting replicate, kept. */
    d->n_rows = n;
    d->n_duplicates = 0;
    for (size_t i = 0; i < n; i++) {
        uint64_t h = hash_identity(&w, hin[i], i);
        size_t s = (size_t)h & t.mask;
        int dup = 0;
        for (; t.slot[s] != 0; s = (s + 1) & t.mask) {
            size_t j = t.slot[s] - 1;
            if (t.tag[s] != TAG(h) || !identity_equal(&w, i, j)) continue;
            if (outputs_equal(&w, i, j)) {
                dup = 1;
                break;
            }
            conflict[i] = conflict[j] = 1;
        }
        keep[i] = (unsigned char)!dup;
        if (dup) {
            d->n_duplicates++;
            continue;
        }
        t.slot[s] = (uint32_t)(i + 1);
        t.tag[s] = TAG(h);
    }
    table_free(&t);

    if (kept != NULL) memcpy(kept, keep, n);
    /* Keep each run once, in first-seen order, and the row each came from. */
    if (d->n_duplicates > 0) {
        size_t m = 0;
        free(d->row_of);
        d->row_of = malloc((n - d->n_duplicates + 1) * sizeof *d->row_of);
        if (d->row_of == NULL) goto fail;
        for (size_t i = 0; i < n; i++) {
            if (!keep[i]) continue;
            d->row_of[m] = i;
            if (m != i) {
                for (size_t v = 0; v < g->n_vars; v++)
                    if (d->col[v] != NULL) d->col[v][m] = d->col[v][i];
                if (d->batch != NULL) d->batch[m] = d->batch[i];
                if (d->seed != NULL) d->seed[m] = d->seed[i];
                conflict[m] = conflict[i];
                hin[m] = hin[i];
            }
            m++;
        }
        n = d->n_runs = m;
        for (size_t v = 0; v < g->n_vars; v++) {
            if (d->col[v] == NULL) continue;
            size_t miss = 0;
            for (size_t i = 0; i < n; i++) miss += (size_t)isnan(d->col[v][i]);
            d->n_missing[v] = miss;
        }
    }
    d->n_conflicts = 0;
    for (size_t i = 0; i < n; i++) d->n_conflicts += conflict[i];
    /* Freed as soon as they are read: the passes below hold the most memory of the whole read. */
    free(keep);
    free(conflict);
    keep = conflict = NULL;

    /* Configurations and how often each was run. */
    config_of = malloc((n + 1) * sizeof *config_of);
    config_runs = calloc(n + 1, sizeof *config_runs);
    if (config_of == NULL || config_runs == NULL || table_init(&tc, n)) goto fail;
    d->n_configs = 0;
    for (size_t i = 0; i < n; i++) {
        uint64_t h = hin[i];
        size_t s = (size_t)h & tc.mask;
        for (; tc.slot[s] != 0; s = (s + 1) & tc.mask)
            if (tc.tag[s] == TAG(h) && inputs_equal(&w, i, tc.slot[s] - 1)) break;
        if (tc.slot[s] == 0) {
            tc.slot[s] = (uint32_t)(i + 1);
            tc.tag[s] = TAG(h);
            config_of[i] = (uint32_t)d->n_configs++;
        } else {
            config_of[i] = config_of[tc.slot[s] - 1];
        }
        config_runs[config_of[i]]++;
    }
    table_free(&tc);
    free(hin);
    hin = NULL;
    d->n_replicated = 0;
    for (size_t c = 0; c < d->n_configs; c++) d->n_replicated += config_runs[c] >= 2;
    free(config_runs);
    config_runs = NULL;

    /* Seeds, and those that more than one configuration used. */
    d->n_seeds = d->n_shared_seeds = 0;
    if (d->seed != NULL) {
        shared = calloc(n + 1, 1);
        if (shared == NULL || table_init(&ts, n)) goto fail;
        for (size_t i = 0; i < n; i++) {
            if (d->seed[i] == COV_SEED_NONE) continue;
            uint64_t h = mix(0, (uint64_t)d->seed[i]);
            size_t s = (size_t)h & ts.mask;
            for (; ts.slot[s] != 0; s = (s + 1) & ts.mask)
                if (d->seed[ts.slot[s] - 1] == d->seed[i]) break;
            if (ts.slot[s] == 0) {
                ts.slot[s] = (uint32_t)(i + 1);
                d->n_seeds++;
                continue;
            }
            size_t first = ts.slot[s] - 1;
            if (config_of[first] != config_of[i] && !shared[first]) {
                shared[first] = 1;
                d->n_shared_seeds++;
            }
        }
    }
    rc = COV_OK;
fail:
    if (rc != COV_OK) cov_fail(err, rc, "", "out of memory while identifying runs");
    table_free(&t);
    table_free(&tc);
    table_free(&ts);
    free(w.in);
    free(w.out);
    free(keep);
    free(conflict);
    free(shared);
    free(config_of);
    free(config_runs);
    free(hin);
    return rc;
}

void cov_data_rows_to_runs(const cov_data *d, double *col, size_t *n)
{
    if (d->row_of == NULL || col == NULL || *n != d->n_rows) return;
    /* row_of is increasing, so the copy never overwrites a row still to be read. */
    for (size_t i = 0; i < d->n_runs; i++) col[i] = col[d->row_of[i]];
    *n = d->n_runs;
}

unsigned long cov_runs_fingerprint(const cov_data *d)
{
    uint64_t h = mix(UINT64_C(0xcbf29ce484222325), (uint64_t)d->n_runs);
    for (size_t v = 0; v < d->n_vars; v++) {
        if (d->col[v] == NULL) continue;
        for (size_t i = 0; i < d->n_runs; i++) h = mix(h, cell_bits(d->col[v][i]));
    }
    if (d->seed != NULL)
        for (size_t i = 0; i < d->n_runs; i++) h = mix(h, (uint64_t)d->seed[i]);
    /* Within --seed's range, 1 .. 2^31 - 1. */
    return (unsigned long)(h % UINT64_C(2147483647)) + 1UL;
}
