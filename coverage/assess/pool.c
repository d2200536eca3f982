/* The claims of one assessment shared out among threads: each item to its own slot, items taken
 * in order from one counter, the first failing item in item order reported. See LICENSE. */
#include <pthread.h>
#include <stdint.h>

#include "coverage/assess/assess.h"

typedef struct {
    size_t n;
    int (*fn)(void *ctx, int worker, size_t item);
    void *ctx;
    pthread_mutex_t lock;
    size_t next;          /* the next item to take */
    size_t first_fail;    /* the lowest failing item so far, or n */
    int status;           /* its status */
} pool;

typedef struct {
    pool *p;
    int worker;
} pool_arg;

static void *pool_worker(void *arg)
{
    pool_arg *pa = arg;
    pool *p = pa->p;
    for (;;) {
        pthread_mutex_lock(&p->lock);
        size_t item = p->next;
        /* Items after a failing one are not started: the caller reports the first failure in
         * item order, and every item before it is taken (the counter only rises) and finished. */
        int stop = item >= p->n || item > p->first_fail;
        if (!stop) p->next++;
        pthread_mutex_unlock(&p->lock);
        if (stop) break;
        int rc = p->fn(p->ctx, pa->worker, item);
        if (rc != COV_OK) {
            pthread_mutex_lock(&p->lock);
            if (item < p->first_fail) {
                p->first_fail = item;
                p->status = rc;
            }
            pthread_mutex_unlock(&p->lock);
        }
    }
    return NULL;
}

size_t cov_assess_pool(size_t n, int threads, int (*fn)(void *ctx, int worker, size_t item),
                       void *ctx, int *status)
{
    *status = COV_OK;
    if (threads > COV_ASSESS_MAX_THREADS) threads = COV_ASSESS_MAX_THREADS;
    if ((size_t)threads > n) threads = (int)n;
    if (threads <= 1) {
        /* One thread: every item in the calling thread, in order, up to the first failure. */
        for (size_t i = 0; i < n; i++) {
            int rc = fn(ctx, 0, i);
            if (rc != COV_OK) {
                *status = rc;
                return i;
            }
        }
        return n;
    }
    pool p = {n, fn, ctx, PTHREAD_MUTEX_INITIALIZER, 0, n, COV_OK};
    pthread_t tid[COV_ASSESS_MAX_THREADS];
    pool_arg args[COV_ASSESS_MAX_THREADS];
    int started = 0;
    for (int t = 1; t < threads; t++) {
        args[t] = (pool_arg){&p, t};
        /* A thread that cannot be started leaves its share to the others: the same items, the
         * same results. */
        if (pthread_create(&tid[started], NULL, pool_worker, &args[t]) != 0) break;
        started++;
    }
    args[0] = (pool_arg){&p, 0};
    pool_worker(&args[0]);   /* the calling thread works too */
    for (int t = 0; t < started; t++) pthread_join(tid[t], NULL);
    pthread_mutex_destroy(&p.lock);
    *status = p.status;
    return p.first_fail;
}
