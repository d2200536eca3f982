/* Tests of the job runner (coverage/base/jobs.c): every job runs once, one thread keeps the list
 * order in the calling thread, several threads run jobs at once, and the error reported is the
 * first failing job's in list order whatever the order in which the jobs finish. See LICENSE. */
#include <pthread.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>
#include <time.h>

#include <gsl/gsl_test.h>

#include "coverage/base/base.h"

#define MAX_JOBS 12
/* A job that waits for another gives up after this long, so a runner that cannot run the two at
 * once (one thread) never hangs the test; on a busy machine 2 s is far more than a start takes. */
#define WAIT_NS 2000000000LL

typedef struct test_run test_run;
typedef struct {
    test_run *t;
    int index;
    int fail;             /* the status to return, COV_OK to succeed */
    int wait_for_later;   /* 1: before failing, wait until a later failing job has finished */
    int saw_later;        /* set when that wait ended because a later failing job finished */
    long delay_us;        /* sleep this long first */
    int runs;             /* times it ran */
    int seq;              /* the order in which it started (0-based) */
    pthread_t thread;
} job_arg;

struct test_run {
    job_arg a[MAX_JOBS];
    size_t n;
    pthread_mutex_t lock;
    pthread_cond_t done_cv;
    int started;
    int finished[MAX_JOBS];
    int in_flight, max_in_flight;
    int rendezvous;       /* 1: each job waits (bounded) until another job is running too */
};

static long long now_ns(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (long long)ts.tv_sec * 1000000000LL + ts.tv_nsec;
}

static void deadline_in(struct timespec *ts, long long ns)
{
    clock_gettime(CLOCK_REALTIME, ts);
    long long t = (long long)ts->tv_nsec + ns;
    ts->tv_sec += (time_t)(t / 1000000000LL);
    ts->tv_nsec = (long)(t % 1000000000LL);
}

static int later_failure_done(const test_run *t, int k)
{
    for (size_t j = (size_t)k + 1; j < t->n; j++)
        if (t->a[j].fail != COV_OK && t->finished[j]) return 1;
    return 0;
}

static int job(void *arg, cov_error *err)
{
    job_arg *a = arg;
    test_run *t = a->t;
    pthread_mutex_lock(&t->lock);
    a->runs++;
    a->seq = t->started++;
    a->thread = pthread_self();
    if (++t->in_flight > t->max_in_flight) t->max_in_flight = t->in_flight;
    pthread_cond_broadcast(&t->done_cv);
    if (t->rendezvous) {
        struct timespec until;
        deadline_in(&until, WAIT_NS);
        while (t->max_in_flight < 2 && pthread_cond_timedwait(&t->done_cv, &t->lock, &until) == 0)
            ;
    }
    pthread_mutex_unlock(&t->lock);
    if (a->delay_us > 0) {
        struct timespec d = {a->delay_us / 1000000, (a->delay_us % 1000000) * 1000};
        nanosleep(&d, NULL);
    }
    int rc = a->fail;
    pthread_mutex_lock(&t->lock);
    if (a->wait_for_later) {
        struct timespec until;
        deadline_in(&until, WAIT_NS);
        while (!later_failure_done(t, a->index) &&
               pthread_cond_timedwait(&t->done_cv, &t->lock, &until) == 0)
            ;
        a->saw_later = later_failure_done(t, a->index);
    }
    t->finished[a->index] = 1;
    t->in_flight--;
    pthread_cond_broadcast(&t->done_cv);
    pthread_mutex_unlock(&t->lock);
    if (rc != COV_OK)
        cov_fail(err, rc, "where", "job %d failed with %d", a->index, rc);
    return rc;
}

static void setup(test_run *t, size_t n)
{
    memset(t, 0, sizeof *t);
    t->n = n;
    pthread_mutex_init(&t->lock, NULL);
    pthread_cond_init(&t->done_cv, NULL);
    for (size_t k = 0; k < n; k++) {
        t->a[k].t = t;
        t->a[k].index = (int)k;
        t->a[k].fail = COV_OK;
    }
}

static void teardown(test_run *t)
{
    pthread_mutex_destroy(&t->lock);
    pthread_cond_destroy(&t->done_cv);
}

static int run(test_run *t, int threads, cov_job *jobs, cov_error *err)
{
    for (size_t k = 0; k < t->n; k++) {
        jobs[k].run = job;
        jobs[k].arg = &t->a[k];
    }
    memset(err, 0, sizeof *err);
    return cov_jobs_run(jobs, t->n, threads, err);
}

/* The first failing job in list order, or -1. */
static int first_failing(const test_run *t)
{
    for (size_t k = 0; k < t->n; k++)
        if (t->a[k].fail != COV_OK) return (int)k;
    return -1;
}

/* The status and message are those of the first failing job in list order. */
static void expect_first(const test_run *t, int rc, const cov_error *err, const char *what)
{
    int k = first_failing(t);
    char want[128];
    snprintf(want, sizeof want, "job %d failed with %d", k, t->a[k].fail);
    gsl_test(rc != t->a[k].fail || strcmp(err->msg, want) != 0 || strcmp(err->where, "where") != 0,
             "%s: status %d and \"%s\" are job %d's (want %d, \"%s\")", what, rc, err->msg, k,
             t->a[k].fail, want);
    /* A job after the first failure may have run or been skipped; one before it ran once. */
    int ok = 1;
    for (int j = 0; j <= k; j++) ok &= t->a[j].runs == 1;
    gsl_test(!ok, "%s: every job up to the first failing one ran exactly once", what);
}

int main(void)
{
    gsl_test_verbose(1);
    test_run t;
    cov_job jobs[MAX_JOBS];
    cov_error err;

    /* Every job runs exactly once and the call succeeds, for any thread count and job count. */
    static const size_t counts[] = {0, 1, 4, 9, MAX_JOBS};
    for (size_t c = 0; c < sizeof counts / sizeof counts[0]; c++)
        for (int threads = 1; threads <= 5; threads++) {
            setup(&t, counts[c]);
            int rc = run(&t, threads, jobs, &err);
            int once = 1;
            for (size_t k = 0; k < t.n; k++) once &= t.a[k].runs == 1 && jobs[k].rc == COV_OK;
            gsl_test(rc != COV_OK || !once, "%zu succeeding jobs on %d threads: each ran once, "
                     "status %d", counts[c], threads, rc);
            teardown(&t);
        }

    /* One thread: the calling thread, in list order, stopping at the first failure. */
    setup(&t, 6);
    t.a[3].fail = COV_EIO;
    t.a[5].fail = COV_EINPUT;
    int rc = run(&t, 1, jobs, &err);
    int in_order = 1;
    for (int k = 0; k <= 3; k++)
        in_order &= t.a[k].runs == 1 && t.a[k].seq == k && pthread_equal(t.a[k].thread,
                                                                          pthread_self());
    gsl_test(!in_order, "one thread: jobs 0-3 ran in list order in the calling thread");
    gsl_test(t.a[4].runs != 0 || t.a[5].runs != 0 || jobs[4].rc != COV_JOB_SKIPPED ||
             jobs[5].rc != COV_JOB_SKIPPED,
             "one thread: the jobs after the first failure did not run (runs %d %d)", t.a[4].runs,
             t.a[5].runs);
    expect_first(&t, rc, &err, "one thread");
    teardown(&t);

    /* Several threads run jobs at once: each of two jobs waits for the other to be running. */
    for (int threads = 2; threads <= 4; threads++) {
        setup(&t, 2);
        t.rendezvous = 1;
        long long t0 = now_ns();
        rc = run(&t, threads, jobs, &err);
        gsl_test(rc != COV_OK || t.max_in_flight != 2 || pthread_equal(t.a[0].thread,
                                                                       t.a[1].thread),
                 "%d threads: two jobs ran at once on two threads (at most %d at once, %.2f s)",
                 threads, t.max_in_flight, (double)(now_ns() - t0) * 1e-9);
        teardown(&t);
    }

    /* A later failure finishes first: the first failing job in list order waits until a later
     * failing job has failed (only when there are threads to run it), yet its error is the one
     * reported. */
    static const int fail_sets[][MAX_JOBS] = {
        {0, 0, 1, 0, 0, 1, 1, 0},   /* 1 marks a failing job */
        {1, 0, 0, 0, 0, 0, 0, 1},
        {0, 1, 1, 1, 1, 1, 1, 1},
        {0, 0, 0, 0, 0, 0, 1, 1},
    };
    static const int codes[] = {COV_EINPUT, COV_ENOMEM, COV_EIO, COV_ENUMERIC};
    for (size_t s = 0; s < sizeof fail_sets / sizeof fail_sets[0]; s++)
        for (int threads = 1; threads <= 4; threads++)
            for (int wait = 0; wait <= (threads > 1); wait++) {
                setup(&t, 8);
                for (size_t k = 0; k < 8; k++)
                    if (fail_sets[s][k]) t.a[k].fail = codes[k % 4];
                int k = first_failing(&t);
                t.a[k].wait_for_later = wait;
                rc = run(&t, threads, jobs, &err);
                char what[96];
                snprintf(what, sizeof what, "failure set %zu, %d threads, %s", s, threads,
                         wait ? "a later failure first" : "no waiting");
                expect_first(&t, rc, &err, what);
                if (wait)   /* the schedule did what it was meant to */
                    gsl_test(!t.a[k].saw_later, "%s: a later failing job finished first", what);
                teardown(&t);
            }

    /* Random delays and failure sets (fixed seed): the same error on 1 to 4 threads. */
    uint64_t x = 20261205;
    int agree = 1, trials = 0;
    for (int trial = 0; trial < 60; trial++) {
        unsigned char fails[MAX_JOBS];
        long delays[MAX_JOBS];
        for (size_t k = 0; k < MAX_JOBS; k++) {
            x = x * 6364136223846793005ULL + 1442695040888963407ULL;   /* Knuth's MMIX LCG */
            fails[k] = (x >> 60) < 4;       /* a quarter of the jobs fail */
            delays[k] = (long)((x >> 20) % 300);   /* up to 0.3 ms */
        }
        int first_rc = -2;
        char first_msg[sizeof err.msg] = "";
        for (int threads = 1; threads <= 4; threads++) {
            setup(&t, MAX_JOBS);
            for (size_t k = 0; k < MAX_JOBS; k++) {
                t.a[k].fail = fails[k] ? codes[k % 4] : COV_OK;
                t.a[k].delay_us = delays[k];
            }
            rc = run(&t, threads, jobs, &err);
            int k = first_failing(&t);
            int want = k < 0 ? COV_OK : t.a[k].fail;
            if (threads == 1) {
                first_rc = rc;
                snprintf(first_msg, sizeof first_msg, "%s", err.msg);
            }
            agree &= rc == want && rc == first_rc && strcmp(err.msg, first_msg) == 0;
            trials++;
            teardown(&t);
        }
    }
    gsl_test(!agree, "random delays and failures, %d runs: the status and message never depend "
             "on the thread count", trials);

    /* Out of memory in one job while the others succeed (the library's jobs say COV_ENOMEM). */
    for (int threads = 1; threads <= 3; threads++) {
        setup(&t, 4);
        t.a[2].fail = COV_ENOMEM;
        rc = run(&t, threads, jobs, &err);
        gsl_test(rc != COV_ENOMEM || strcmp(err.msg, "job 2 failed with 2") != 0 ||
                 t.a[0].runs != 1 || t.a[1].runs != 1 || jobs[0].rc != COV_OK,
                 "%d threads: one job out of memory gives COV_ENOMEM and its message (%d, \"%s\")",
                 threads, rc, err.msg);
        teardown(&t);
    }

    /* A NULL err is allowed. */
    setup(&t, 3);
    t.a[1].fail = COV_EIO;
    for (size_t k = 0; k < t.n; k++) {
        jobs[k].run = job;
        jobs[k].arg = &t.a[k];
    }
    rc = cov_jobs_run(jobs, t.n, 2, NULL);
    gsl_test(rc != COV_EIO, "a NULL err: the status is still job 1's (%d)", rc);
    teardown(&t);

    return gsl_test_summary();
}
