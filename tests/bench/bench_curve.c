/* Benchmark of the plan on a simulator that bends, grows noisier and costlier toward saturation:
 * the plan against Sobol, Latin hypercube and uniform random sampling. See LICENSE. */
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_qrng.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>

#include "coverage/plan/plan.h"

/* The simulator is invented: a service line whose load u = demand (1.2 - 0.8 capacity) runs from
 * idle to past saturation. Throughput saturates in u; delay bends sharply upward near u = 1.35;
 * dropped work is zero below u = 0.6 and grows after (zero-inflated). The noise SD grows about
 * fivefold toward saturation and is skewed (centred gamma); a run's cost (CPU seconds) grows with
 * load with lognormal scatter. shift affects nothing, so its absence claims hold. */
static const char graph_text[] =
    "# invented service-line benchmark (saturating, heteroscedastic, costly near saturation)\n"
    "input demand real [0, 1]\n"
    "input capacity real [0, 1]\n"
    "input buffer real [0, 1]\n"
    "input express bool\n"
    "input shift real [0, 1]\n"
    "output throughput real\n"
    "output delay real\n"
    "output dropped real\n"
    "design independent\n"
    "default margin 0.6\n"
    "demand -> throughput effect 1.0\n"
    "capacity -> throughput effect 0.5\n"
    "express -> throughput effect 0.25\n"
    "demand -> delay effect 1.5\n"
    "capacity -> delay effect 1.0\n"
    "express -> delay effect 0.4\n"
    "demand -> dropped effect 0.5\n"
    "capacity -> dropped effect 0.3\n"
    "buffer -> dropped effect 0.3\n";

enum { DEMAND, CAPACITY, BUFFER, EXPRESS, SHIFT, THROUGHPUT, DELAY, DROPPED, N_VARS };

/* Centred, unit-variance skewed noise: (Gamma(2, 1) - 2) / sqrt(2). */
static double skewed(gsl_rng *r) { return (gsl_ran_gamma(r, 2.0, 1.0) - 2.0) / sqrt(2.0); }

static void simulate(double *v, gsl_rng *r, double *cost)
{
    double u = v[DEMAND] * (1.2 - 0.8 * v[CAPACITY]);
    double grow = 1.0 + 3.0 * u * u;
    v[THROUGHPUT] = 10.0 * (1.0 - exp(-1.5 * u)) + 0.5 * v[EXPRESS] + 0.3 * grow * skewed(r);
    v[DELAY] = 2.0 / (1.35 - u) - 0.8 * v[EXPRESS] + 0.25 * grow * skewed(r);
    double over = u - 0.6 - 0.4 * v[BUFFER];
    double dr = over > 0 ? 6.0 * over : 0.0;
    dr += 0.15 * grow * skewed(r);
    v[DROPPED] = dr > 0 ? dr : 0.0;
    *cost = (1.0 + 4.0 * u * u) * gsl_ran_lognormal(r, 0.0, 0.2);
}

typedef struct {
    double *v;     /* n * N_VARS */
    double *cost;
    size_t n, cap;
} runs;

static void add_run(runs *a, const double *in, gsl_rng *r)
{
    if (a->n == a->cap) {
        a->cap = a->cap ? 2 * a->cap : 256;
        a->v = realloc(a->v, a->cap * N_VARS * sizeof *a->v);
        a->cost = realloc(a->cost, a->cap * sizeof *a->cost);
    }
    double *v = a->v + a->n * N_VARS;
    for (int k = 0; k < N_VARS; k++) v[k] = k <= SHIFT ? in[k] : NAN;
    simulate(v, r, &a->cost[a->n]);
    a->n++;
}

static cov_data *as_data(const runs *a)
{
    cov_data *d = calloc(1, sizeof *d);
    d->n_runs = a->n;
    d->n_vars = N_VARS;
    d->col = calloc(N_VARS, sizeof *d->col);
    d->n_missing = calloc(N_VARS, sizeof *d->n_missing);
    d->n_outside = calloc(N_VARS, sizeof *d->n_outside);
    for (int k = 0; k < N_VARS; k++) {
        d->col[k] = malloc((a->n + 1) * sizeof(double));
        for (size_t i = 0; i < a->n; i++) d->col[k][i] = a->v[i * N_VARS + k];
    }
    return d;
}

/* The claims that reach the target on these runs, as a bit mask; *n_reach how many. */
static unsigned long reached(const cov_graph *g, const cov_claims *c, const runs *a,
                             const cov_power_options *opt, size_t *n_reach)
{
    cov_data *d = as_data(a);
    cov_assessments *as = NULL;
    cov_error err = {{0}, {0}};
    unsigned long mask = 0;
    *n_reach = 0;
    if (cov_assess(g, c, d, opt, &as, &err) == COV_OK)
        for (size_t i = 0; i < c->n && i < 64; i++)
            if (c->items[i].status == COV_TESTABLE && as->items[i].power >= opt->target) {
                mask |= 1UL << i;
                (*n_reach)++;
            }
    cov_assessments_free(as);
    cov_data_free(d);
    return mask;
}

static runs copy_runs(const runs *a)
{
    runs b = {malloc((a->cap + 1) * N_VARS * sizeof(double)), malloc((a->cap + 1) * sizeof(double)),
              a->n, a->cap};
    memcpy(b.v, a->v, a->n * N_VARS * sizeof(double));
    memcpy(b.cost, a->cost, a->n * sizeof(double));
    return b;
}

static double cost_since(const runs *a, size_t from)
{
    double s = 0;
    for (size_t i = from; i < a->n; i++) s += a->cost[i];
    return s;
}

/* The points of a method: 0 Sobol (unscrambled, the first point skipped), 1 Latin hypercube of
 * exactly n points, 2 uniform random. u gets n * 5 values in [0, 1). */
static void points(int method, size_t n, gsl_rng *r, double *u)
{
    if (method == 0) {
        gsl_qrng *q = gsl_qrng_alloc(gsl_qrng_sobol, 5);
        double skip[5];
        gsl_qrng_get(q, skip);
        for (size_t i = 0; i < n; i++) gsl_qrng_get(q, u + i * 5);
        gsl_qrng_free(q);
    } else if (method == 1) {
        size_t *perm = malloc(n * sizeof *perm);
        for (int k = 0; k < 5; k++) {
            for (size_t i = 0; i < n; i++) perm[i] = i;
            gsl_ran_shuffle(r, perm, n, sizeof *perm);
            for (size_t i = 0; i < n; i++)
                u[i * 5 + k] = ((double)perm[i] + gsl_rng_uniform(r)) / (double)n;
        }
        free(perm);
    } else {
        for (size_t i = 0; i < n * 5; i++) u[i] = gsl_rng_uniform(r);
    }
}

static void to_inputs(const double *u, double *in)
{
    in[DEMAND] = u[0];
    in[CAPACITY] = u[1];
    in[BUFFER] = u[2];
    in[EXPRESS] = u[3] < 0.5 ? 0.0 : 1.0;
    in[SHIFT] = u[4];
}

#define MAX_ALT 6000
static const char *const method_name[3] = {"Sobol", "LHS", "random"};

int main(int argc, char **argv)
{
    gsl_set_error_handler_off();
    long n_seeds = argc > 1 ? strtol(argv[1], NULL, 10) : 10;
    long n0 = argc > 2 ? strtol(argv[2], NULL, 10) : 80;
    int use_cost = !(argc > 3 && strcmp(argv[3], "nocost") == 0);
    if (n_seeds < 1 || n0 < 20) return 2;
    cov_graph *g = NULL;
    cov_claims *c = NULL;
    cov_error err = {{0}, {0}};
    if (cov_graph_parse_text("curve.graph", graph_text, &g, &err) != COV_OK ||
        cov_claims_derive(g, &c, &err) != COV_OK || g->n_vars != N_VARS) {
        fprintf(stderr, "bench_curve: %s %s\n", err.where, err.msg);
        return 2;
    }
    cov_options o;
    cov_options_default(&o);
    size_t pred_reach = 0, pred_held = 0, testable = 0;
    for (size_t i = 0; i < c->n; i++) testable += c->items[i].status == COV_TESTABLE;
    double *ratio_runs = calloc((size_t)n_seeds, sizeof(double));
    double *ratio_cost = calloc((size_t)n_seeds, sizeof(double));
    printf("%4s %5s %6s %8s %6s %7s | %-26s | %-26s | %s\n", "seed", "start", "plan", "plan",
           "claims", "pred", "runs to match the plan", "cost to match the plan",
           "claims at the plan's runs / cost");
    printf("%4s %5s %6s %8s %6s %7s | %8s %8s %8s | %8s %8s %8s | %s\n", "", "", "runs", "cost",
           "reach", "held", "Sobol", "LHS", "random", "Sobol", "LHS", "random",
           "Sobol LHS random");
    for (long seed = 1; seed <= n_seeds; seed++) {
        gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
        gsl_rng_set(r, (unsigned long)seed);
        /* A small uneven starting campaign: demand mostly low to middling (Beta(2, 3)), the rest
         * uniform, as a modeller explores the easy region first. */
        runs a0 = {NULL, NULL, 0, 0};
        for (long i = 0; i < n0; i++) {
            double u[5] = {gsl_ran_beta(r, 2.0, 3.0), gsl_rng_uniform(r), gsl_rng_uniform(r),
                           gsl_rng_uniform(r), gsl_rng_uniform(r)};
            double in[N_VARS];
            to_inputs(u, in);
            add_run(&a0, in, r);
        }
        cov_data *d0 = as_data(&a0);
        cov_assessments *as0 = NULL;
        cov_plan *p = NULL;
        if (cov_assess(g, c, d0, &o.power, &as0, &err) != COV_OK) return 1;
        size_t start_reach = 0;
        reached(g, c, &a0, &o.power, &start_reach);
        cov_plan_extra x = {use_cost ? a0.cost : NULL, 0, 0};
        if (cov_plan_make_ex(g, c, d0, as0, &o.power, &o.coverage, -1, 1, &x, &p, &err) != COV_OK) {
            fprintf(stderr, "bench_curve: plan: %s\n", err.msg);
            return 1;
        }
        runs ap = copy_runs(&a0);
        for (size_t k = 0; k < p->n_configs; k++) add_run(&ap, p->rows + k * N_VARS, r);
        size_t plan_reach = 0;
        unsigned long plan_mask = reached(g, c, &ap, &o.power, &plan_reach);
        double plan_cost = cost_since(&ap, a0.n);
        size_t my_pred = 0, my_held = 0;
        for (size_t j = 0; j < p->n; j++) {
            if (!p->items[j].reaches) continue;
            my_pred++;
            my_held += (plan_mask >> p->items[j].claim) & 1UL;
        }
        pred_reach += my_pred;
        pred_held += my_held;
        /* Each alternative: the fewest added runs (a grid rising by 10%) that reach every claim
         * the plan reached; and its claims at the plan's run count and at the plan's cost. */
        double need_runs[3], need_cost[3];
        size_t at_runs[3], at_cost[3];
        double *u = malloc(MAX_ALT * 5 * sizeof *u);
        for (int m = 0; m < 3; m++) {
            need_runs[m] = need_cost[m] = INFINITY;
            at_runs[m] = at_cost[m] = 0;
            gsl_rng *rm = gsl_rng_alloc(gsl_rng_mt19937);
            gsl_rng_set(rm, (unsigned long)(seed * 7919 + m));
            size_t n_plan = p->n_configs;
            int done_runs = 0, done_cost = 0;
            for (double nn = 10; nn <= MAX_ALT; nn = ceil(nn * 1.1)) {
                size_t n = (size_t)nn;
                if (!done_runs && n >= n_plan) n = n_plan, nn = (double)n_plan;
                points(m, n, rm, u);
                runs am = copy_runs(&a0);
                for (size_t i = 0; i < n; i++) {
                    double in[N_VARS];
                    to_inputs(u + i * 5, in);
                    add_run(&am, in, rm);
                }
                size_t k = 0;
                unsigned long mask = reached(g, c, &am, &o.power, &k);
                double cost = cost_since(&am, a0.n);
                if (n == n_plan && !done_runs) at_runs[m] = k, done_runs = 1;
                if (!done_cost && cost >= plan_cost) at_cost[m] = k, done_cost = 1;
                int match = (mask & plan_mask) == plan_mask;
                free(am.v);
                free(am.cost);
                if (match && isinf(need_runs[m])) {
                    need_runs[m] = (double)n;
                    need_cost[m] = cost;
                }
                if (!isinf(need_runs[m]) && done_runs && done_cost) break;
            }
            gsl_rng_free(rm);
        }
        free(u);
        double best_runs = fmin(need_runs[0], fmin(need_runs[1], need_runs[2]));
        double best_cost = fmin(need_cost[0], fmin(need_cost[1], need_cost[2]));
        ratio_runs[seed - 1] = (double)p->n_configs / best_runs;
        ratio_cost[seed - 1] = plan_cost / best_cost;
        printf("%4ld %5zu %6zu %8.0f %6zu %3zu/%-3zu | %8.0f %8.0f %8.0f | %8.0f %8.0f %8.0f | "
               "%zu/%zu %zu/%zu %zu/%zu (plan %zu)\n",
               seed, start_reach, p->n_configs, plan_cost, plan_reach, my_held, my_pred,
               need_runs[0], need_runs[1], need_runs[2], need_cost[0], need_cost[1], need_cost[2],
               at_runs[0], at_cost[0], at_runs[1], at_cost[1], at_runs[2], at_cost[2], plan_reach);
        cov_plan_free(p);
        cov_assessments_free(as0);
        cov_data_free(d0);
        free(a0.v);
        free(a0.cost);
        free(ap.v);
        free(ap.cost);
        gsl_rng_free(r);
    }
    /* Medians over the seeds. */
    for (int pass = 0; pass < 2; pass++) {
        double *x = pass ? ratio_cost : ratio_runs;
        for (long i = 1; i < n_seeds; i++)
            for (long j = i; j > 0 && x[j] < x[j - 1]; j--) {
                double t = x[j];
                x[j] = x[j - 1];
                x[j - 1] = t;
            }
    }
    double med_runs = ratio_runs[(n_seeds - 1) / 2], med_cost = ratio_cost[(n_seeds - 1) / 2];
    double held = pred_reach ? (double)pred_held / (double)pred_reach : NAN;
    printf("testable claims %zu; predicted to reach: %zu, reached: %zu (%.1f%%)\n", testable,
           pred_reach, pred_held, 100 * held);
    printf("plan / best alternative to reach the plan's claims: runs median %.3f (worst %.3f), "
           "cost median %.3f (worst %.3f)\n",
           med_runs, ratio_runs[n_seeds - 1], med_cost, ratio_cost[n_seeds - 1]);
    printf("result held_share %.4f runs_ratio %.4f cost_ratio %.4f\n", held, med_runs, med_cost);
    (void)method_name;
    free(ratio_runs);
    free(ratio_cost);
    cov_claims_free(c);
    cov_graph_free(g);
    return 0;
}
