/* Independent jobs on up to N POSIX threads, with the error of the first failing job in the list's
 * order, whatever the order in which they finish. See LICENSE. */
#include <pthread.h>
#include <string.h>

#include "coverage/base/base.h"

/* The jobs are handed out in list order from one counter. A job is skipped when a job before it
 * has already failed: its outcome could not change the error reported, since that error is the
 * first failure in list order and an earlier one exists. A job after no failure always runs, so
 * the first failing job in list order always runs and is always the one reported. */
typedef struct {
    cov_job *jobs;
    size_t n;
    size_t next;          /* the next job to hand out */
    size_t first_failed;  /* the lowest index of a failed job so far; n when none */
    pthread_mutex_t lock;
} job_queue;

static void *job_worker(void *arg)
{
    job_queue *q = arg;
    for (;;) {
        pthread_mutex_lock(&q->lock);
        size_t k = q->next;
        if (k < q->n) q->next++;
        int skip = q->first_failed < k;
        pthread_mutex_unlock(&q->lock);
        if (k >= q->n) break;
        cov_job *j = &q->jobs[k];
        if (skip) {
            j->rc = COV_JOB_SKIPPED;
            continue;
        }
        memset(&j->err, 0, sizeof j->err);
        j->rc = j->run(j->arg, &j->err);
        if (j->rc != COV_OK) {
            pthread_mutex_lock(&q->lock);
            if (k < q->first_failed) q->first_failed = k;
            pthread_mutex_unlock(&q->lock);
        }
    }
    return NULL;
}

int cov_jobs_run(cov_job *jobs, size_t n, int threads, cov_error *err)
{
    for (size_t k = 0; k < n; k++) jobs[k].rc = COV_JOB_SKIPPED;
    if (threads > COV_JOBS_MAX_THREADS) threads = COV_JOBS_MAX_THREADS;
    size_t first = n;
    if (threads <= 1 || n <= 1) {
        /* One thread: the calling thread runs the jobs in list order and stops at the first
         * failure, as a plain sequence of calls would. */
        for (size_t k = 0; k < n && first == n; k++) {
            memset(&jobs[k].err, 0, sizeof jobs[k].err);
            jobs[k].rc = jobs[k].run(jobs[k].arg, &jobs[k].err);
            if (jobs[k].rc != COV_OK) first = k;
        }
    } else {
        job_queue q;
        memset(&q, 0, sizeof q);
        q.jobs = jobs;
        q.n = n;
        q.first_failed = n;
        if (pthread_mutex_init(&q.lock, NULL) != 0) return cov_jobs_run(jobs, n, 1, err);
        size_t helpers = (size_t)threads - 1 < n - 1 ? (size_t)threads - 1 : n - 1;
        pthread_t tid[COV_JOBS_MAX_THREADS];
        size_t started = 0;
        /* A thread that cannot be started leaves its share to the others: the calling thread
         * works too, so every job runs even when none can be started. */
        while (started < helpers && pthread_create(&tid[started], NULL, job_worker, &q) == 0)
            started++;
        job_worker(&q);
        for (size_t t = 0; t < started; t++) pthread_join(tid[t], NULL);
        pthread_mutex_destroy(&q.lock);
        first = q.first_failed;
    }
    if (first == n) return COV_OK;
    if (err != NULL) *err = jobs[first].err;
    return jobs[first].rc;
}
