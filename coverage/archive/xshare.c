/* One pass of centred cross-products over the runs for both the assessment and the support: each
 * block's moments computed once and merged into both of their totals. See LICENSE. */
#include <pthread.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "coverage/archive/archive.h"

/* Blocks whose moments are computed before they are merged, per thread: enough to keep every
 * thread busy between merges, and never more than XSHARE_SLOT_BYTES of block moments. */
#define XSHARE_BLOCKS_PER_THREAD 16
#define XSHARE_SLOT_BYTES ((size_t)64 << 20)
#define XSHARE_MAX_THREADS 64

void cov_xshare_free(cov_xshare *x)
{
    if (x == NULL) return;
    free(x->base);
    free(x->index_col);
    free(x->sub_col);
    free(x->sub_global);
    pw_moments_free(x->global);
    pw_moments_free(x->sub);
    free(x);
}

/* The global columns of runs [r0, r0 + nb) into rows (x->k values each), column by column: each
 * variable's value, a level set's dummies against its level 0, and a level-set output's level
 * index too. */
static void fill_global_rows(const cov_xshare *x, const cov_graph *g, const cov_data *d,
                             size_t r0, size_t nb, double *rows)
{
    size_t K = x->k;
    for (size_t v = 0; v < d->n_vars; v++) {
        if (x->base[v] == SIZE_MAX) continue;
        const cov_var *var = &g->vars[v];
        const double *col = d->col[v] + r0;
        double *dst = rows + x->base[v];
        if (var->type == COV_LEVELS && var->n_levels >= 2) {
            for (size_t r = 0; r < nb; r++)
                for (size_t l = 1; l < var->n_levels; l++)
                    dst[r * K + l - 1] = col[r] == (double)l ? 1.0 : 0.0;
        } else {
            for (size_t r = 0; r < nb; r++) dst[r * K] = col[r];
        }
        if (x->index_col[v] != SIZE_MAX)
            for (size_t r = 0; r < nb; r++) rows[r * K + x->index_col[v]] = col[r];
    }
}

/* Block moments of one chunk of blocks, shared out among threads block by block. */
typedef struct {
    const cov_xshare *x;
    const cov_graph *g;
    const cov_data *d;
    size_t first, count;      /* the chunk's blocks */
    pw_moments **slot;        /* one per block of the chunk */
    size_t next;
    int failed;
    pthread_mutex_t lock;
} chunk_job;

static void *chunk_worker(void *arg)
{
    chunk_job *j = arg;
    size_t K = j->x->k, n = j->d->n_runs;
    double *rows = malloc(COV_XSHARE_BLOCK * K * sizeof *rows);
    for (;;) {
        pthread_mutex_lock(&j->lock);
        size_t item = j->next++;
        int stop = j->failed || rows == NULL;
        if (rows == NULL) j->failed = 1;
        pthread_mutex_unlock(&j->lock);
        if (stop || item >= j->count) break;
        size_t r0 = (j->first + item) * COV_XSHARE_BLOCK;
        size_t nb = n - r0 < COV_XSHARE_BLOCK ? n - r0 : COV_XSHARE_BLOCK;
        fill_global_rows(j->x, j->g, j->d, r0, nb, rows);
        if (pw_moments_of_block(rows, nb, j->slot[item]) != PW_OK) {
            pthread_mutex_lock(&j->lock);
            j->failed = 1;
            pthread_mutex_unlock(&j->lock);
        }
    }
    free(rows);
    return NULL;
}

/* The subset columns of a block's global moments. */
static void take_subset(const cov_xshare *x, const pw_moments *b, pw_moments *s)
{
    size_t K = b->k, k = s->k;
    s->n = b->n;
    for (size_t p = 0; p < k; p++) {
        size_t gp = x->sub_global[p];
        s->mean[p] = b->mean[gp];
        for (size_t q = p; q < k; q++) s->xprod[p * k + q] = b->xprod[gp * K + x->sub_global[q]];
    }
}

int cov_xshare_build(const cov_graph *g, const cov_data *d, int threads, cov_xshare **out)
{
    *out = NULL;
    int rc = COV_ENOMEM;
    pw_moments **slot = NULL, *shard = NULL, *part = NULL;
    size_t n_slots = 0;
    cov_xshare *x = calloc(1, sizeof *x);
    if (x == NULL) return COV_ENOMEM;
    size_t nv = d->n_vars ? d->n_vars : 1;
    x->base = malloc(nv * sizeof *x->base);
    x->index_col = malloc(nv * sizeof *x->index_col);
    x->sub_col = malloc(nv * sizeof *x->sub_col);
    x->sub_global = malloc(nv * sizeof *x->sub_global);
    if (!x->base || !x->index_col || !x->sub_col || !x->sub_global) goto fail;
    for (size_t v = 0; v < d->n_vars; v++) {
        x->base[v] = x->index_col[v] = x->sub_col[v] = SIZE_MAX;
        if (d->col[v] == NULL || d->n_missing[v] > 0) continue;
        const cov_var *var = &g->vars[v];
        x->base[v] = x->k;
        x->k += var->type == COV_LEVELS && var->n_levels >= 2 ? var->n_levels - 1 : 1;
        if (var->type == COV_LEVELS && var->role == COV_OUTPUT) x->index_col[v] = x->k++;
        if (var->type != COV_LEVELS) {
            x->sub_global[x->k_sub] = x->base[v];
            x->sub_col[v] = x->k_sub++;
        }
    }
    size_t n = d->n_runs, K = x->k;
    if (K == 0 || n == 0) {
        *out = x;
        return COV_OK;
    }
    if (pw_moments_alloc(K, &x->global) != PW_OK) goto fail;
    if (x->k_sub > 0 && (pw_moments_alloc(x->k_sub, &x->sub) != PW_OK ||
                         pw_moments_alloc(x->k_sub, &shard) != PW_OK ||
                         pw_moments_alloc(x->k_sub, &part) != PW_OK))
        goto fail;

    if (threads < 1) threads = 1;
    if (threads > XSHARE_MAX_THREADS) threads = XSHARE_MAX_THREADS;
    size_t n_blocks = (n + COV_XSHARE_BLOCK - 1) / COV_XSHARE_BLOCK;
    n_slots = threads == 1 ? 1 : (size_t)threads * XSHARE_BLOCKS_PER_THREAD;
    size_t fit = XSHARE_SLOT_BYTES / (K * K * sizeof(double) + 1);
    if (n_slots > fit) n_slots = fit > (size_t)threads ? fit : (size_t)threads;
    if (n_slots > n_blocks) n_slots = n_blocks;
    slot = calloc(n_slots, sizeof *slot);
    if (slot == NULL) goto fail;
    for (size_t s = 0; s < n_slots; s++)
        if (pw_moments_alloc(K, &slot[s]) != PW_OK) goto fail;

    for (size_t first = 0; first < n_blocks; first += n_slots) {
        chunk_job j;
        memset(&j, 0, sizeof j);
        j.x = x;
        j.g = g;
        j.d = d;
        j.first = first;
        j.count = n_blocks - first < n_slots ? n_blocks - first : n_slots;
        j.slot = slot;
        if (pthread_mutex_init(&j.lock, NULL) != 0) goto fail;
        pthread_t tid[XSHARE_MAX_THREADS];
        int started = 0;
        for (int t = 1; t < threads && (size_t)t < j.count; t++) {
            if (pthread_create(&tid[started], NULL, chunk_worker, &j) != 0) break;
            started++;
        }
        chunk_worker(&j);   /* the calling thread works too */
        for (int t = 0; t < started; t++) pthread_join(tid[t], NULL);
        pthread_mutex_destroy(&j.lock);
        if (j.failed) goto fail;
        /* Merged in run order: the assessment's total block after block; the support's per shard
         * of COV_XSHARE_SHARD runs, each shard's total merged in shard order. */
        for (size_t s = 0; s < j.count; s++) {
            size_t r0 = (first + s) * COV_XSHARE_BLOCK;
            size_t r1 = r0 + COV_XSHARE_BLOCK < n ? r0 + COV_XSHARE_BLOCK : n;
            if (pw_moments_merge(x->global, slot[s]) != PW_OK) goto fail;
            if (x->sub == NULL) continue;
            if (r0 % COV_XSHARE_SHARD == 0) {
                shard->n = 0;
                memset(shard->mean, 0, shard->k * sizeof *shard->mean);
                memset(shard->xprod, 0, shard->k * shard->k * sizeof *shard->xprod);
            }
            take_subset(x, slot[s], part);
            if (pw_moments_merge(shard, part) != PW_OK) goto fail;
            if (r1 % COV_XSHARE_SHARD == 0 || r1 == n)
                if (pw_moments_merge(x->sub, shard) != PW_OK) goto fail;
        }
    }
    rc = COV_OK;
    *out = x;
    x = NULL;
fail:
    for (size_t s = 0; s < n_slots && slot != NULL; s++) pw_moments_free(slot[s]);
    free(slot);
    pw_moments_free(shard);
    pw_moments_free(part);
    cov_xshare_free(x);
    return rc;
}
