/* Benchmark of the plan: runs --budget auto needs against a lower bound, Sobol and Latin hypercube.
 * See LICENSE. */
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_qrng.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>

#include "coverage/plan/plan.h"
#include "coverage/report/report.h"

/* The synthetic simulator (invented): inputs x0.. are real on [0, RANGE] or bool (every third);
 * output y_j = sum over its parents of effect * x + N(0, SIGMA^2), effects exactly at the effects of
 * interest written in the graph; absent edges have no effect (so absence claims hold exactly). */
#define SIGMA 1.0
#define RANGE 2.0
#define EFFECT 0.35
#define MARGIN 0.5
#define MAX_STEPS 200000    /* sampling baselines stop here (and report it) */

typedef struct {
    int n_in, n_out, n_par;
    int *par;               /* n_out * n_par real input indices */
    int bools_everywhere;   /* 1: every bool input is a parent of every output, with effect
                               RANGE * EFFECT (its on-off step as large as a real input's effect
                               over its whole domain); 0: bools are drawn as parents like reals */
} model;

static int is_bool_input(int i) { return i % 3 == 2; }

static char *graph_text(const model *m)
{
    size_t cap = 4096 + (size_t)m->n_in * 64 + (size_t)m->n_out * (64 + 32 * (size_t)(m->n_par + m->n_in));
    char *t = malloc(cap), *p = t;
    p += sprintf(p, "# invented linear-Gaussian benchmark model\n");
    for (int i = 0; i < m->n_in; i++)
        p += is_bool_input(i) ? sprintf(p, "input x%d bool\n", i)
                              : sprintf(p, "input x%d real [0, %g]\n", i, RANGE);
    for (int j = 0; j < m->n_out; j++) p += sprintf(p, "output y%d real noise %g\n", j, SIGMA);
    p += sprintf(p, "design independent\ndefault margin %g\n", MARGIN);
    for (int j = 0; j < m->n_out; j++) {
        for (int k = 0; k < m->n_par; k++)
            p += sprintf(p, "x%d -> y%d effect %g\n", m->par[j * m->n_par + k], j, EFFECT);
        for (int i = 0; m->bools_everywhere && i < m->n_in; i++)
            if (is_bool_input(i)) p += sprintf(p, "x%d -> y%d effect %g\n", i, j, RANGE * EFFECT);
    }
    return t;
}

static void simulate(const model *m, const cov_graph *g, const double *in_vals, double *out_vals,
                     gsl_rng *r)
{
    (void)g;
    for (int j = 0; j < m->n_out; j++) {
        double y = 0;
        for (int k = 0; k < m->n_par; k++) y += EFFECT * in_vals[m->par[j * m->n_par + k]];
        for (int i = 0; m->bools_everywhere && i < m->n_in; i++)
            if (is_bool_input(i)) y += RANGE * EFFECT * in_vals[i];
        out_vals[j] = y + gsl_ran_gaussian(r, SIGMA);
    }
}

/* Per steered claim: its assessed test and the cross-products of its regression on the archive,
 * kept so that any added runs can be judged by the same yardstick. */
typedef struct {
    size_t claim, p;
    size_t *vars;           /* treatment, then the adjustment set */
    double *gram;           /* p * p over [1, vars] raw */
    double q0, v0;          /* assessed q and the archive's treatment variance */
    double q_req;           /* q the target needs at the lower bound's run count */
    pw_design pd;
} judge;

static void add_row(judge *j, const double *vals, double w)
{
    double x[64];
    x[0] = 1;
    for (size_t k = 1; k < j->p; k++) x[k] = vals[j->vars[k - 1]];
    for (size_t a = 0; a < j->p; a++)
        for (size_t b = 0; b < j->p; b++) j->gram[a * j->p + b] += w * x[a] * x[b];
}

static double treat_var(const judge *j)
{
    double inv[64 * 64];
    if (pw_spd_inverse(j->gram, j->p, inv) != PW_OK) return INFINITY;
    return inv[1 * j->p + 1];
}

/* Does every judged claim reach the target with `added` runs added to its cross-products? The
 * assessed q is moved by the ratio of information, as the archive's own sigma is kept. */
static int all_reach(const judge *js, size_t n_j, double added, double *worst)
{
    int ok = 1;
    *worst = 1;
    /* A cheap screen first: with more runs than the lower bound the needed q can only be lower,
     * and by far less than 3% (degrees of freedom above 100), so a q below 97% of the need at the
     * bound cannot pass; the exact power is evaluated only when every claim clears the screen. */
    for (size_t i = 0; i < n_j; i++)
        if (js[i].q0 * sqrt(js[i].v0 / treat_var(&js[i])) < 0.97 * js[i].q_req) return 0;
    for (size_t i = 0; i < n_j; i++) {
        double q = js[i].q0 * sqrt(js[i].v0 / treat_var(&js[i])), pw = 0;
        pw_design t;
        if (pw_design_with_q(&js[i].pd, js[i].pd.n + added, q, &t) != PW_OK || pw_power(&t, &pw) != PW_OK)
            pw = 0;
        if (pw < *worst) *worst = pw;
        if (pw < js[i].pd.target) ok = 0;
    }
    return ok;
}

static double now_s(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

int main(int argc, char **argv)
{
    gsl_set_error_handler_off();
    if (argc != 7 && argc != 8) {
        fprintf(stderr, "usage: bench_plan compare|time|gen N_IN N_OUT N_PAR N0 SEED [mixed]\n"
                        "  default: bool inputs feed every output; mixed: drawn like the reals\n"
                        "  gen writes GRAPH text to bench-plan.graph and runs to bench-plan.csv\n");
        return 2;
    }
    model m;
    long v[5];
    for (int k = 0; k < 5; k++) {
        char *end = NULL;
        errno = 0;
        v[k] = strtol(argv[k + 2], &end, 10);
        if (errno || *end || v[k] < 1) {
            fprintf(stderr, "bench_plan: bad number '%s'\n", argv[k + 2]);
            return 2;
        }
    }
    m.n_in = (int)v[0];
    m.n_out = (int)v[1];
    m.n_par = (int)v[2];
    m.bools_everywhere = !(argc == 8 && strcmp(argv[7], "mixed") == 0);
    size_t n0 = (size_t)v[3];
    if (m.n_par > m.n_in || m.n_par > 60) return 2;
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    gsl_rng_set(r, (unsigned long)v[4]);
    m.par = malloc(sizeof(int) * (size_t)(m.n_out * m.n_par));
    int *perm = malloc(sizeof(int) * (size_t)m.n_in);
    int n_pool = 0;
    for (int i = 0; i < m.n_in; i++)
        if (!m.bools_everywhere || !is_bool_input(i)) perm[n_pool++] = i;
    if (m.n_par > n_pool) return 2;
    for (int j = 0; j < m.n_out; j++) {
        gsl_ran_shuffle(r, perm, (size_t)n_pool, sizeof(int));
        for (int k = 0; k < m.n_par; k++) m.par[j * m.n_par + k] = perm[k];
    }
    char *text = graph_text(&m);
    cov_graph *g = NULL;
    cov_claims *c = NULL;
    cov_error err = {{0}, {0}};
    if (cov_graph_parse_text("bench.graph", text, &g, &err) != COV_OK ||
        cov_claims_derive(g, &c, &err) != COV_OK) {
        fprintf(stderr, "bench_plan: %s %s\n", err.where, err.msg);
        return 2;
    }
    /* The sparse starting archive: n0 uniform random runs. */
    double *in_vals = calloc(g->n_vars, sizeof *in_vals), *outs = calloc((size_t)m.n_out, sizeof *outs);
    cov_data *d = calloc(1, sizeof *d);
    d->n_runs = n0;
    d->n_vars = g->n_vars;
    d->col = calloc(g->n_vars, sizeof *d->col);
    d->n_missing = calloc(g->n_vars, sizeof *d->n_missing);
    d->n_outside = calloc(g->n_vars, sizeof *d->n_outside);
    for (size_t i = 0; i < g->n_vars; i++) d->col[i] = calloc(n0, sizeof(double));
    FILE *csv = NULL;
    if (strcmp(argv[1], "gen") == 0) {
        FILE *gf = fopen("bench-plan.graph", "w");
        fputs(text, gf);
        fclose(gf);
        csv = fopen("bench-plan.csv", "w");
        for (int i = 0; i < m.n_in; i++) fprintf(csv, "x%d,", i);
        for (int j = 0; j < m.n_out; j++) fprintf(csv, "y%d%s", j, j + 1 < m.n_out ? "," : "\n");
    }
    for (size_t i = 0; i < n0; i++) {
        for (int k = 0; k < m.n_in; k++)
            in_vals[k] = is_bool_input(k) ? (double)gsl_rng_uniform_int(r, 2) : RANGE * gsl_rng_uniform(r);
        simulate(&m, g, in_vals, outs, r);
        for (int k = 0; k < m.n_in; k++) d->col[k][i] = in_vals[k];
        for (int j = 0; j < m.n_out; j++) d->col[(size_t)m.n_in + (size_t)j][i] = outs[j];
        if (csv != NULL) {
            for (int k = 0; k < m.n_in; k++) fprintf(csv, "%.6f,", in_vals[k]);
            for (int j = 0; j < m.n_out; j++) fprintf(csv, "%.6f%s", outs[j], j + 1 < m.n_out ? "," : "\n");
        }
    }
    if (csv != NULL) {
        fclose(csv);
        printf("wrote bench-plan.graph (%zu claims) and bench-plan.csv (%zu runs)\n", c->n, n0);
        return 0;
    }

    cov_options o;
    cov_options_default(&o);
    cov_assessments *a = NULL;
    cov_plan *p = NULL;
    double t0 = now_s();
    int arc = cov_assess(g, c, d, &o.power, &a, &err);
    double t_assess = now_s() - t0;
    t0 = now_s();
    if (arc != COV_OK || cov_plan_make(g, c, d, a, &o.power, &o.coverage, -1, 1, &p, &err) != COV_OK) {
        fprintf(stderr, "bench_plan: %s %s\n", err.where, err.msg);
        return 2;
    }
    double t_plan = now_s() - t0;
    if (strcmp(argv[1], "time") == 0) {
        printf("inputs %d outputs %d claims %zu runs %zu: assess_seconds %.3f plan_seconds %.3f "
               "plan_auto %zu capped %d\n",
               m.n_in, m.n_out, c->n, n0, t_assess, t_plan, p->n_configs, p->capped);
        return 0;
    }

    /* Judges and the lower bound: with half the runs at each end of a numeric treatment's domain
     * (or balanced bool groups) q^2 = n (range/2)^2 (n/4), the most n runs can hold; the largest
     * per-claim minimum total, less the runs already made, bounds the added runs from below. */
    judge *js = calloc(c->n, sizeof *js);
    size_t n_j = 0;
    double lb_total = 0;
    for (size_t i = 0; i < c->n; i++) {
        const cov_claim *cl = &c->items[i];
        pw_design pd;
        /* Claims on an output (treatment or adjustment set) are not steered by any method. */
        int steer = cl->status == COV_TESTABLE && g->vars[cl->treatment].role == COV_INPUT;
        for (size_t k = 0; steer && k < cl->n_cond; k++) steer = g->vars[cl->cond[k]].role == COV_INPUT;
        if (!steer || cov_assess_design(g, c, a, i, &pd) != COV_OK) continue;
        judge *j = &js[n_j++];
        j->claim = i;
        j->pd = pd;
        j->p = cl->n_cond + 2;
        j->vars = malloc(sizeof(size_t) * (j->p - 1));
        j->vars[0] = cl->treatment;
        for (size_t k = 0; k < cl->n_cond; k++) j->vars[k + 1] = cl->cond[k];
        j->gram = calloc(j->p * j->p, sizeof(double));
        for (size_t run = 0; run < n0; run++) {
            for (size_t k = 0; k < g->n_vars; k++) in_vals[k] = d->col[k][run];
            add_row(j, in_vals, 1);
        }
        j->v0 = treat_var(j);
        j->q0 = pw_design_q(&pd);
        double half = is_bool_input((int)cl->treatment) ? 0.5 : RANGE / 2;
        for (double n = pd.n_params + 3; n < 1e7; n = n < 1000 ? n + 1 : ceil(n * 1.001)) {
            pw_design t;
            double pw = 0;
            if (pw_design_with_q(&pd, n, sqrt(n) * half, &t) == PW_OK && pw_power(&t, &pw) == PW_OK &&
                pw >= pd.target) {
                if (n > lb_total) lb_total = n;
                break;
            }
        }
    }
    double lb = lb_total - (double)n0;
    for (size_t i = 0; i < n_j; i++)
        if (pw_design_q_needed(&js[i].pd, lb_total, &js[i].q_req) != PW_OK) js[i].q_req = 0;
    double worst = 0;
    /* The plan's rows, judged by the same yardstick. */
    judge *jp = calloc(n_j, sizeof *jp);
    for (size_t i = 0; i < n_j; i++) {
        jp[i] = js[i];
        jp[i].gram = malloc(js[i].p * js[i].p * sizeof(double));
        memcpy(jp[i].gram, js[i].gram, js[i].p * js[i].p * sizeof(double));
        for (size_t k = 0; k < p->n_configs; k++) add_row(&jp[i], p->rows + k * g->n_vars, 1);
    }
    int plan_ok = all_reach(jp, n_j, (double)p->n_configs, &worst);
    double plan_worst = worst;

    /* Sobol sampling (unscrambled gsl_qrng_sobol, the first min(inputs, 40) dimensions; beyond 40
     * a second block) and Latin hypercube sampling (McKay, Beckman & Conover 1979), run by run. */
    double n_sobol = NAN, n_lhs = NAN;
    for (int method = 0; method < 2; method++) {
        for (size_t i = 0; i < n_j; i++) {
            memcpy(jp[i].gram, js[i].gram, js[i].p * js[i].p * sizeof(double));
        }
        gsl_qrng *q1 = gsl_qrng_alloc(gsl_qrng_sobol, (unsigned)(m.n_in < 40 ? m.n_in : 40));
        gsl_qrng *q2 = m.n_in > 40 ? gsl_qrng_alloc(gsl_qrng_sobol, (unsigned)(m.n_in - 40)) : NULL;
        double u[128];
        /* LHS of a fixed size would have to be redrawn for every size; instead strata of a growing
         * design are filled in rounds of LHS_BLOCK runs, each round a Latin hypercube of its own. */
        enum { LHS_BLOCK = 16 };
        size_t *lperm = malloc(sizeof(size_t) * LHS_BLOCK * (size_t)m.n_in);
        size_t steps = 0;
        for (size_t n = 1; n <= MAX_STEPS; n++) {
            if (method == 0) {
                gsl_qrng_get(q1, u);
                if (q2 != NULL) gsl_qrng_get(q2, u + 40);
            } else {
                size_t pos = (n - 1) % LHS_BLOCK;
                if (pos == 0)
                    for (int k = 0; k < m.n_in; k++) {
                        for (size_t s = 0; s < LHS_BLOCK; s++) lperm[k * LHS_BLOCK + s] = s;
                        gsl_ran_shuffle(r, lperm + k * LHS_BLOCK, LHS_BLOCK, sizeof(size_t));
                    }
                for (int k = 0; k < m.n_in; k++)
                    u[k] = ((double)lperm[k * LHS_BLOCK + pos] + gsl_rng_uniform(r)) / LHS_BLOCK;
            }
            for (int k = 0; k < m.n_in; k++)
                in_vals[k] = is_bool_input(k) ? (u[k] < 0.5 ? 0.0 : 1.0) : RANGE * u[k];
            for (size_t i = 0; i < n_j; i++) add_row(&jp[i], in_vals, 1);
            steps = n;
            if (all_reach(jp, n_j, (double)n, &worst)) break;
        }
        (method == 0 ? &n_sobol : &n_lhs)[0] = steps >= MAX_STEPS ? INFINITY : (double)steps;
        free(lperm);
        gsl_qrng_free(q1);
        gsl_qrng_free(q2);
    }
    size_t n_steered = 0, n_testable = 0;
    for (size_t j = 0; j < p->n; j++) n_steered += p->items[j].mode == COV_PLAN_STEERED;
    for (size_t i = 0; i < c->n; i++) n_testable += c->items[i].status == COV_TESTABLE;
    printf("inputs %d outputs %d claims %zu (steered %zu) sparse archive %zu runs\n", m.n_in, m.n_out,
           n_testable, n_steered, n0);
    printf("plan_auto %zu lower_bound %.0f sobol %.0f lhs %.0f assess_seconds %.3f plan_seconds %.3f plan_all_reach %d "
           "plan_worst_power %.4f capped %d\n",
           p->n_configs, lb, n_sobol, n_lhs, t_assess, t_plan, plan_ok, plan_worst, p->capped);
    for (size_t i = 0; i < n_j; i++) {
        free(js[i].vars);
        free(js[i].gram);
        free(jp[i].gram);
    }
    free(js);
    free(jp);
    cov_plan_free(p);
    cov_assessments_free(a);
    cov_data_free(d);
    cov_claims_free(c);
    cov_graph_free(g);
    free(text);
    free(in_vals);
    free(outs);
    free(m.par);
    free(perm);
    gsl_rng_free(r);
    return 0;
}
