/* Shared, mergeable summaries of the archive that every claim's support reads: centred
 * cross-products and per-variable distinct counts, computed once, in shards, on several threads.
 * See LICENSE. */
#include <math.h>
#include <pthread.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "coverage/measure/measure.h"

/* Rows per shard. Shards are fixed by the archive, not by the thread count, and merged in shard
 * order, so the figures do not depend on how many threads summarised them. */
#define COV_SHARD_ROWS 65536
/* Rows per block of the cross-products within a shard: 128 rows of 80 columns fit the L2 cache. */
#define COV_SUMMARY_BLOCK 128
#define COV_MAX_THREADS 64

void cov_summary_free(cov_summary *s)
{
    if (s == NULL) return;
    pw_moments_free(s->xprod);
    free(s->col);
    free(s->distinct);
    free(s);
}

/* Moments of the summarised columns over rows [r0, r1). */
static int shard_moments(const cov_summary *s, size_t r0, size_t r1, pw_moments **out)
{
    size_t K = s->xprod->k;
    double *block = malloc(COV_SUMMARY_BLOCK * K * sizeof *block);
    int rc = pw_moments_alloc(K, out);
    if (rc != PW_OK || block == NULL) {
        free(block);
        return COV_ENOMEM;
    }
    for (size_t i = r0; i < r1; i += COV_SUMMARY_BLOCK) {
        size_t nb = r1 - i < COV_SUMMARY_BLOCK ? r1 - i : COV_SUMMARY_BLOCK;
        for (size_t v = 0; v < s->d->n_vars; v++) {
            if (s->col[v] == SIZE_MAX) continue;
            const double *x = s->d->col[v] + i;
            for (size_t r = 0; r < nb; r++) block[r * K + s->col[v]] = x[r];
        }
        if (pw_moments_add_block(*out, block, nb) != PW_OK) {
            free(block);
            return COV_ENOMEM;
        }
    }
    free(block);
    return COV_OK;
}

/* Distinct values of x[0..n-1] (no NaN), exactly. The values are first partitioned by the top
 * byte of their hash into 256 buckets, then each bucket is counted in a small open-addressing
 * table (linear probing, Knuth TAOCP vol. 3, 6.4, Algorithm L) that stays in cache: two
 * sequential passes instead of one random access per value into a table of the whole column.
 * part: room for n hashes, the caller's scratch (one per thread, reused from column to column, so
 * no column's worth of fresh pages is faulted in again for each). Returns (size_t)-1 when out of
 * memory. */
static size_t distinct_values(const double *x, size_t n, uint64_t *part)
{
    if (n == 0) return 0;
    size_t start[257] = {0}, fill[256];
    uint64_t *table = NULL;
    unsigned char *used = NULL;
    size_t distinct = (size_t)-1, cap = 0;
    for (size_t i = 0; i < n; i++) start[(cov_mix64(cov_value_bits(x[i])) >> 56) + 1]++;
    size_t biggest = 0;
    for (int b = 0; b < 256; b++) {
        if (start[b + 1] > biggest) biggest = start[b + 1];
        start[b + 1] += start[b];
    }
    memcpy(fill, start, sizeof fill);
    /* The partitions hold the hashes, not the values: cov_mix64 is a bijection of 64-bit words
     * (each step, an xor with a right shift or a multiplication by an odd number, is
     * invertible), so the hashes are exactly as many as the values are distinct, and the table
     * below need not hash again. */
    for (size_t i = 0; i < n; i++) {
        uint64_t h = cov_mix64(cov_value_bits(x[i]));
        part[fill[h >> 56]++] = h;
    }
    cap = 16;
    while (cap < 2 * biggest) cap *= 2;
    table = malloc(cap * sizeof *table);
    used = malloc(cap);
    if (table == NULL || used == NULL) goto done;
    distinct = 0;
    for (int b = 0; b < 256; b++) {
        size_t m = start[b + 1] - start[b], c = 16;
        while (c < 2 * m) c *= 2;
        memset(used, 0, c);
        for (size_t i = start[b]; i < start[b + 1]; i++) {
            uint64_t v = part[i];
            size_t h = (size_t)v & (c - 1);
            while (used[h] && table[h] != v) h = (h + 1) & (c - 1);
            if (!used[h]) {
                used[h] = 1;
                table[h] = v;
                distinct++;
            }
        }
    }
done:
    free(table);
    free(used);
    return distinct;
}

/* Work shared by the threads: shard moments, then distinct counts of the wanted variables, each
 * item taken from a counter under a lock. Results land in per-item slots, so the order in which
 * threads finish never shows. */
typedef struct {
    cov_summary *s;
    pw_moments **shard;
    size_t n_shards, shard_rows;
    const unsigned char *want;
    size_t next;
    int failed;
    pthread_mutex_t lock;
} summary_job;

static void *summary_worker(void *arg)
{
    summary_job *j = arg;
    size_t n_vars = j->s->d->n_vars;
    uint64_t *part = NULL;   /* distinct_values' scratch, made at the first count */
    for (;;) {
        pthread_mutex_lock(&j->lock);
        size_t item = j->next++;
        int stop = j->failed;
        pthread_mutex_unlock(&j->lock);
        if (stop || item >= j->n_shards + n_vars) break;
        int rc = COV_OK;
        if (item < j->n_shards) {
            size_t r0 = item * j->shard_rows, r1 = r0 + j->shard_rows;
            if (r1 > j->s->d->n_runs) r1 = j->s->d->n_runs;
            rc = shard_moments(j->s, r0, r1, &j->shard[item]);
        } else {
            size_t v = item - j->n_shards;
            if (j->want == NULL || !j->want[v] || j->s->col[v] == SIZE_MAX) continue;
            size_t n = j->s->d->n_runs;
            if (part == NULL) part = malloc((n ? n : 1) * sizeof *part);
            size_t k = part == NULL ? (size_t)-1 : distinct_values(j->s->d->col[v], n, part);
            if (k == (size_t)-1) rc = COV_ENOMEM;
            else j->s->distinct[v] = k;
        }
        if (rc != COV_OK) {
            pthread_mutex_lock(&j->lock);
            j->failed = 1;
            pthread_mutex_unlock(&j->lock);
        }
    }
    free(part);
    return NULL;
}

int cov_summary_build(const cov_graph *g, const cov_data *d, const unsigned char *want_distinct,
                      int threads, cov_summary **out)
{
    return cov_summary_build_shared(g, d, want_distinct, threads, NULL, out);
}

int cov_summary_build_shared(const cov_graph *g, const cov_data *d,
                             const unsigned char *want_distinct, int threads,
                             const cov_xshare *shared, cov_summary **out)
{
    *out = NULL;
    cov_summary *s = calloc(1, sizeof *s);
    if (s == NULL) return COV_ENOMEM;
    s->d = d;
    s->col = malloc((d->n_vars ? d->n_vars : 1) * sizeof *s->col);
    s->distinct = calloc(d->n_vars ? d->n_vars : 1, sizeof *s->distinct);
    if (s->col == NULL || s->distinct == NULL) goto fail;
    size_t K = 0;
    for (size_t v = 0; v < d->n_vars; v++) {
        s->col[v] = SIZE_MAX;
        if (d->col[v] == NULL || d->n_missing[v] > 0 || g->vars[v].type == COV_LEVELS) continue;
        s->col[v] = K++;
    }
    if (K == 0 || d->n_runs == 0) {
        *out = s;
        return COV_OK;
    }
    if (pw_moments_alloc(K, &s->xprod) != PW_OK) goto fail;
    /* The shared pass summed these columns in these shards and blocks (archive/xshare.c). */
    _Static_assert(COV_SHARD_ROWS == COV_XSHARE_SHARD && COV_SUMMARY_BLOCK == COV_XSHARE_BLOCK,
                   "the shared pass's shards and blocks are ours");
    int same = shared != NULL && shared->sub != NULL && shared->k_sub == K;
    for (size_t v = 0; same && v < d->n_vars; v++) same = shared->sub_col[v] == s->col[v];
    if (same) {
        s->xprod->n = shared->sub->n;
        memcpy(s->xprod->mean, shared->sub->mean, K * sizeof *s->xprod->mean);
        memcpy(s->xprod->xprod, shared->sub->xprod, K * K * sizeof *s->xprod->xprod);
    }
    summary_job j;
    memset(&j, 0, sizeof j);
    j.s = s;
    j.want = want_distinct;
    j.shard_rows = COV_SHARD_ROWS;
    j.n_shards = same ? 0 : (d->n_runs + j.shard_rows - 1) / j.shard_rows;
    j.shard = calloc(j.n_shards ? j.n_shards : 1, sizeof *j.shard);
    if (j.shard == NULL || pthread_mutex_init(&j.lock, NULL) != 0) {
        free(j.shard);
        goto fail;
    }
    if (threads < 1) threads = 1;
    if (threads > COV_MAX_THREADS) threads = COV_MAX_THREADS;
    pthread_t tid[COV_MAX_THREADS];
    int started = 0;
    for (int t = 1; t < threads; t++) {
        if (pthread_create(&tid[started], NULL, summary_worker, &j) != 0) break;
        started++;
    }
    summary_worker(&j);   /* the calling thread works too */
    for (int t = 0; t < started; t++) pthread_join(tid[t], NULL);
    pthread_mutex_destroy(&j.lock);
    int rc = j.failed ? COV_ENOMEM : COV_OK;
    for (size_t k = 0; k < j.n_shards; k++) {
        if (rc == COV_OK && pw_moments_merge(s->xprod, j.shard[k]) != PW_OK) rc = COV_ENOMEM;
        pw_moments_free(j.shard[k]);
    }
    free(j.shard);
    if (rc != COV_OK) goto fail;
    *out = s;
    return COV_OK;
fail:
    cov_summary_free(s);
    return COV_ENOMEM;
}
