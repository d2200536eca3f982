/* The read's staged blocks of rows and their copy into the columns, on the reading thread or on a
 * second thread that takes finished blocks from a small ring while the first keeps reading.
 * See LICENSE. */
#if defined(__linux__) && !defined(_DEFAULT_SOURCE)
#define _DEFAULT_SOURCE     /* madvise, used on Linux only */
#endif
#include <pthread.h>
#include <stdint.h>
#include <stdlib.h>

#if defined(__linux__)
#include <sys/mman.h>
#include <unistd.h>
#endif

#include "coverage/archive/archive.h"

/* Columns smaller than this fault in quickly enough on their own. */
#define PREFAULT_MIN_BYTES ((size_t)1 << 20)
/* The ring's budget: a few blocks, so the reader rarely waits for the copier, and little enough
 * memory to stay in the second level cache. At least two blocks whatever the width. */
#define RING_BYTES ((size_t)256 << 10)
#define RING_MAX_SLOTS 16
/* The copier maps the columns' pages ahead of the rows it writes, one column's slice of this many
 * rows (64 KiB) per block copied: 80 columns' slices take 80 blocks of 64 rows (5,120 rows), so
 * the mapped rows stay ahead of the written ones, and each block's share of mapping is small
 * enough that the reader never waits behind one long call. */
#define MAP_SLICE_ROWS ((size_t)8192)
/* How far ahead of the copied rows the mapping runs before it pauses. */
#define MAP_LEAD_ROWS (2 * MAP_SLICE_ROWS)

/* Map [p, p + bytes) for writing in one call (MADV_POPULATE_WRITE, Linux 5.14), the pages at either
 * end included when `outward` (their other bytes belong to the same allocation or to memory
 * already mapped). Advice only: where it is not available nothing changes. */
static void populate(void *p, size_t bytes, int outward)
{
#if defined(__linux__) && defined(MADV_POPULATE_WRITE)
    long page = sysconf(_SC_PAGESIZE);
    if (page <= 0 || bytes == 0) return;
    uintptr_t pg = (uintptr_t)page;
    uintptr_t lo = outward ? (uintptr_t)p / pg * pg : ((uintptr_t)p + pg - 1) / pg * pg;
    uintptr_t end = (uintptr_t)p + bytes;
    uintptr_t hi = outward ? (end + pg - 1) / pg * pg : end / pg * pg;
    if (hi > lo) (void)madvise((void *)lo, hi - lo, MADV_POPULATE_WRITE);
#else
    (void)p;
    (void)bytes;
    (void)outward;
#endif
}

void cov_stage_prefault(void *p, size_t bytes)
{
    if (bytes >= PREFAULT_MIN_BYTES) populate(p, bytes, 0);
}

void cov_stage_unstage(double *const *col, const size_t *vars, size_t n_rec, const double *stage,
                       size_t base, size_t count)
{
    /* Eight columns at a time: each staged row is then read a whole cache line at once, and
     * eight column streams are written, few enough for the store buffers. */
    for (size_t k0 = 0; k0 < n_rec; k0 += 8) {
        size_t k1 = k0 + 8 < n_rec ? k0 + 8 : n_rec;
        for (size_t i = 0; i < count; i++) {
            const double *src = stage + i * n_rec;
            for (size_t k = k0; k < k1; k++) col[vars[k]][base + i] = src[k];
        }
    }
}

struct cov_stage {
    pthread_t copier;
    pthread_mutex_t mu;
    pthread_cond_t filled;      /* a block was handed over, or the reader finished or stopped */
    pthread_cond_t emptied;     /* a block was copied */
    double *ring;               /* slots blocks of rows x n_rec values */
    size_t slots, rows, n_rec;
    size_t *base, *count;       /* per slot: the first row and the rows it holds */
    size_t head;                /* the oldest block handed over and not yet copied */
    size_t n_full;              /* blocks handed over and not yet copied (the copier's included) */
    size_t fill;                /* the slot the reader fills */
    size_t cap;                 /* the columns' capacity in rows, as of the last hand-over */
    size_t wake;                /* blocks that wake an idle copier; a full ring's reader waits
                                   until this many are free again */
    int copier_waiting, reader_waiting;
    size_t reader_until;        /* the reader waits until n_full is at most this */
    int done, stop;
    double *const *col;
    const size_t *vars;
    size_t map_row, map_col;    /* the mapping's frontier: rows below map_row are mapped in every
                                   column, and in columns before map_col up to one slice more */
};

/* Map the next column slice when the mapped rows are not far enough ahead of row `upto`. */
static void map_ahead(cov_stage *s, size_t upto, size_t cap)
{
    if (cap * sizeof(double) < PREFAULT_MIN_BYTES || s->map_row >= cap ||
        s->map_row >= upto + MAP_LEAD_ROWS)
        return;
    size_t end = s->map_row + MAP_SLICE_ROWS < cap ? s->map_row + MAP_SLICE_ROWS : cap;
    double *c = s->col[s->vars[s->map_col]];
    populate(c + s->map_row, (end - s->map_row) * sizeof *c, 1);
    if (++s->map_col == s->n_rec) {
        s->map_col = 0;
        s->map_row = end;
    }
}

static void *copier_main(void *arg)
{
    cov_stage *s = arg;
    pthread_mutex_lock(&s->mu);
    for (;;) {
        while (s->n_full == 0 && !s->done && !s->stop) {
            s->copier_waiting = 1;
            pthread_cond_wait(&s->filled, &s->mu);
            s->copier_waiting = 0;
        }
        if (s->stop || s->n_full == 0) break;
        size_t slot = s->head, base = s->base[slot], count = s->count[slot], cap = s->cap;
        pthread_mutex_unlock(&s->mu);
        /* The reader neither moves the columns nor touches this slot until n_full drops. */
        cov_stage_unstage(s->col, s->vars, s->n_rec, s->ring + slot * s->rows * s->n_rec, base,
                          count);
        map_ahead(s, base + count, cap);
        pthread_mutex_lock(&s->mu);
        s->head = (s->head + 1) % s->slots;
        s->n_full--;
        if (s->reader_waiting && s->n_full <= s->reader_until) pthread_cond_signal(&s->emptied);
    }
    pthread_mutex_unlock(&s->mu);
    return NULL;
}

int cov_stage_open(double *const *col, const size_t *vars, size_t n_rec, size_t rows,
                   cov_stage **out)
{
    *out = NULL;
    int rc = COV_ENOMEM;
    cov_stage *s = calloc(1, sizeof *s);
    if (s == NULL) return COV_ENOMEM;
    size_t block = rows * (n_rec ? n_rec : 1) * sizeof(double);
    s->slots = RING_BYTES / block;
    if (s->slots < 2) s->slots = 2;
    if (s->slots > RING_MAX_SLOTS) s->slots = RING_MAX_SLOTS;
    s->wake = s->slots / 2;
    s->rows = rows;
    s->n_rec = n_rec;
    s->col = col;
    s->vars = vars;
    s->ring = malloc(s->slots * block);
    s->base = calloc(s->slots, sizeof *s->base);
    s->count = calloc(s->slots, sizeof *s->count);
    if (s->ring == NULL || s->base == NULL || s->count == NULL) goto fail;
    if (pthread_mutex_init(&s->mu, NULL) != 0) goto fail;
    if (pthread_cond_init(&s->filled, NULL) != 0) {
        pthread_mutex_destroy(&s->mu);
        goto fail;
    }
    if (pthread_cond_init(&s->emptied, NULL) != 0) {
        pthread_cond_destroy(&s->filled);
        pthread_mutex_destroy(&s->mu);
        goto fail;
    }
    if (pthread_create(&s->copier, NULL, copier_main, s) != 0) {
        /* No second thread (a limit on threads, not on memory): the caller copies its own. */
        pthread_cond_destroy(&s->emptied);
        pthread_cond_destroy(&s->filled);
        pthread_mutex_destroy(&s->mu);
        rc = COV_OK;
        goto fail;
    }
    *out = s;
    return COV_OK;
fail:
    free(s->ring);
    free(s->base);
    free(s->count);
    free(s);
    return rc;
}

double *cov_stage_block(cov_stage *s)
{
    return s->ring + s->fill * s->rows * s->n_rec;
}

/* Wait, holding the lock, until at most `until` blocks wait to be copied. */
static void reader_wait(cov_stage *s, size_t until)
{
    s->reader_until = until;
    s->reader_waiting = 1;
    while (s->n_full > until) pthread_cond_wait(&s->emptied, &s->mu);
    s->reader_waiting = 0;
}

/* The threads wake each other a few blocks at a time, not at every block: a wake-up costs a
 * system call and a switch on each side, about as much as copying a block. */
double *cov_stage_pass(cov_stage *s, size_t base, size_t count, size_t cap)
{
    pthread_mutex_lock(&s->mu);
    s->base[s->fill] = base;
    s->count[s->fill] = count;
    s->cap = cap;
    s->n_full++;
    if (s->copier_waiting && s->n_full >= s->wake) pthread_cond_signal(&s->filled);
    /* The next slot is free once fewer than all slots wait to be copied. */
    if (s->n_full == s->slots) reader_wait(s, s->slots - s->wake);
    s->fill = (s->head + s->n_full) % s->slots;
    pthread_mutex_unlock(&s->mu);
    return cov_stage_block(s);
}

void cov_stage_drain(cov_stage *s)
{
    pthread_mutex_lock(&s->mu);
    if (s->copier_waiting && s->n_full > 0) pthread_cond_signal(&s->filled);
    reader_wait(s, 0);
    pthread_mutex_unlock(&s->mu);
}

void cov_stage_close(cov_stage *s, size_t base, size_t count, size_t cap)
{
    if (s == NULL) return;
    pthread_mutex_lock(&s->mu);
    if (count > 0 && !s->stop) {
        /* The reader's last, partial block: there is a free slot, the one it filled. */
        s->base[s->fill] = base;
        s->count[s->fill] = count;
        s->cap = cap;
        s->n_full++;
    }
    s->done = 1;
    pthread_cond_signal(&s->filled);
    pthread_mutex_unlock(&s->mu);
    pthread_join(s->copier, NULL);
    pthread_cond_destroy(&s->emptied);
    pthread_cond_destroy(&s->filled);
    pthread_mutex_destroy(&s->mu);
    free(s->ring);
    free(s->base);
    free(s->count);
    free(s);
}

void cov_stage_abort(cov_stage *s)
{
    if (s == NULL) return;
    pthread_mutex_lock(&s->mu);
    s->stop = 1;
    pthread_mutex_unlock(&s->mu);
    cov_stage_close(s, 0, 0, 0);
}
