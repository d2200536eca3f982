/* Probe for tests/ref_coverage.py: coverage figures of a campaign read from stdin.
 * See LICENSE. */
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_errno.h>

#include "coverage/plan/plan.h"
#include "coverage/report/report.h"

/* Usage:
 *   probe_coverage cd2        stdin "n d" then n*d numbers; prints CD^2.
 *   probe_coverage campaign   stdin "K n bins min_runs way", K lines "real|integer LO HI",
 *                             "bool" or "levels L", then n rows of K numbers ("nan" = missing);
 *                             prints every figure, and the probe points, one per line. */

#define MAX_K 32

static int read_double(double *x)
{
    char tok[64];
    if (scanf("%63s", tok) != 1) return -1;
    if (strcmp(tok, "nan") == 0) {
        *x = NAN;
        return 0;
    }
    char *end;
    errno = 0;
    *x = strtod(tok, &end);
    return (errno != 0 || *end != '\0') ? -1 : 0;
}

static int mode_cd2(void)
{
    size_t n, d;
    if (scanf("%zu %zu", &n, &d) != 2 || n == 0 || d == 0) return 2;
    double *x = malloc(n * d * sizeof *x);
    if (x == NULL) return 2;
    for (size_t i = 0; i < n * d; i++)
        if (read_double(&x[i])) return free(x), 2;
    printf("%.17g\n", cov_cd2(x, n, d));
    free(x);
    return 0;
}

static char *lv_names[64];

static int mode_campaign(void)
{
    size_t K, n, bins, min_runs;
    int way;
    if (scanf("%zu %zu %zu %zu %d", &K, &n, &bins, &min_runs, &way) != 5 || K > MAX_K) return 2;
    static cov_var vars[MAX_K];
    static char names[MAX_K][24];
    static double *cols[MAX_K];
    static size_t n_missing[MAX_K], n_outside[MAX_K];
    for (int l = 0; l < 64; l++) lv_names[l] = "level";
    for (size_t k = 0; k < K; k++) {
        char type[16];
        if (scanf("%15s", type) != 1) return 2;
        cov_var *v = &vars[k];
        snprintf(names[k], sizeof names[k], "x%zu", k);
        v->name = names[k];
        v->role = COV_INPUT;
        v->noise_sd = NAN;
        if (strcmp(type, "bool") == 0) {
            v->type = COV_BOOL, v->lo = 0, v->hi = 1;
        } else if (strcmp(type, "levels") == 0) {
            size_t L;
            if (scanf("%zu", &L) != 1 || L < 2 || L > 64) return 2;
            v->type = COV_LEVELS, v->n_levels = L, v->levels = lv_names, v->lo = 0;
            v->hi = (double)L - 1;
        } else {
            v->type = strcmp(type, "integer") == 0 ? COV_INTEGER : COV_REAL;
            if (read_double(&v->lo) || read_double(&v->hi)) return 2;
        }
        cols[k] = malloc((n ? n : 1) * sizeof **cols);
        if (cols[k] == NULL) return 2;
    }
    for (size_t i = 0; i < n; i++)
        for (size_t k = 0; k < K; k++)
            if (read_double(&cols[k][i])) return 2;
    cov_graph g;
    memset(&g, 0, sizeof g);
    g.vars = vars, g.n_vars = K, g.path = "stdin";
    cov_data d;
    memset(&d, 0, sizeof d);
    d.n_runs = n, d.n_vars = K, d.col = cols, d.n_missing = n_missing, d.n_outside = n_outside;
    cov_coverage_options o = {min_runs, bins, way, 0.5, 20261202UL, 1};
    cov_coverage *c = NULL;
    cov_error err;
    int rc = cov_coverage_measure(&g, &d, &o, &c, &err);
    if (rc != COV_OK) {
        fprintf(stderr, "probe_coverage: %s\n", err.msg);
        return 2;
    }
    printf("marginal_share %.17g\n", c->marginal_share);
    printf("pairwise_share %.17g\n", c->pairwise_share);
    printf("threeway_share %.17g %zu %d\n", c->threeway_share, c->n_triples, c->threeway_sampled);
    for (size_t k = 0; k < c->n_inputs; k++) {
        printf("marginal %zu %.17g", c->marginal[k].var, c->marginal[k].share);
        for (size_t b = 0; b < c->marginal[k].n_bins; b++) printf(" %zu", c->marginal[k].count[b]);
        printf("\n");
    }
    for (size_t p = 0; p < c->n_pairs; p++) {
        const cov_pair *pr = &c->pairs[p];
        printf("pair %zu %zu %zu %zu %.17g %zu", pr->a, pr->b, pr->na, pr->nb, pr->share,
               pr->n_empty);
        for (size_t j = 0; j < pr->na * pr->nb; j++) printf(" %zu", pr->count[j]);
        printf("\n");
    }
    printf("worst");
    for (size_t p = 0; p < c->n_pairs; p++) printf(" %zu", c->worst[p]);
    printf("\n");
    for (size_t a = 0; a < c->n_inputs; a++)
        for (size_t b = a + 1; b < c->n_inputs; b++)
            printf("dep %zu %zu %.17g\n", c->inputs[a], c->inputs[b],
                   c->dependence[a * c->n_inputs + b]);
    printf("cd2 %.17g %.17g %d %zu\n", c->cd2, c->cd2_random, c->cd_subsampled, c->cd_n);
    printf("fill %.17g %zu %d\n", c->fill_distance, c->n_gaps, c->gaps_subsampled);
    for (size_t q = 0; q < c->n_gaps; q++) {
        printf("gap %.17g", c->gap_dist[q]);
        for (size_t j = 0; j < c->n_numeric; j++) printf(" %.17g", c->gaps[q * c->n_numeric + j]);
        printf("\n");
    }
    if (c->n_numeric > 0 && c->n_complete > 0) {
        size_t np = cov_probe_count(c->n_numeric);
        double *pp = malloc(np * c->n_numeric * sizeof *pp);
        if (pp == NULL || cov_probe_points(np, c->n_numeric, o.seed, pp) != COV_OK) return 2;
        for (size_t q = 0; q < np; q++) {
            printf("probe");
            for (size_t j = 0; j < c->n_numeric; j++) printf(" %.17g", pp[q * c->n_numeric + j]);
            printf("\n");
        }
        free(pp);
    }
    cov_coverage_free(c);
    for (size_t k = 0; k < K; k++) free(cols[k]);
    return 0;
}

int main(int argc, char **argv)
{
    gsl_set_error_handler_off();
    if (argc != 2) return 2;
    if (strcmp(argv[1], "cd2") == 0) return mode_cd2();
    if (strcmp(argv[1], "campaign") == 0) return mode_campaign();
    return 2;
}
