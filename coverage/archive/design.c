/* The regression design of one claim: complete cases, dummy coding, row map.
 * See LICENSE. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "coverage/archive/archive.h"

/* How one variable enters the design: one column as it is, or dummies for the levels present. */
typedef struct {
    size_t var;
    int is_levels;
    long ref;             /* level-set: the reference level (the first present), -1 if none */
    unsigned char *present;   /* level-set: which levels occur in the rows used */
    size_t cols;          /* columns this variable takes */
} term;

static int row_complete(const cov_data *d, const size_t *vars, size_t n_vars, size_t i)
{
    for (size_t k = 0; k < n_vars; k++)
        if (isnan(d->col[vars[k]][i])) return 0;
    return 1;
}

/* Decide the columns of one term from the levels that occur in the complete rows. */
static int term_prepare(const cov_graph *g, const cov_data *d, const unsigned char *use,
                        term *t)
{
    const cov_var *v = &g->vars[t->var];
    t->is_levels = v->type == COV_LEVELS;
    t->ref = -1;
    t->present = NULL;
    if (!t->is_levels) {
        t->cols = 1;
        return COV_OK;
    }
    t->present = calloc(v->n_levels ? v->n_levels : 1, 1);
    if (t->present == NULL) return COV_ENOMEM;
    const double *x = d->col[t->var];
    for (size_t i = 0; i < d->n_runs; i++) {
        if (!use[i]) continue;
        long lv = (long)x[i];
        if (lv >= 0 && (size_t)lv < v->n_levels) t->present[lv] = 1;
    }
    size_t n_present = 0;
    for (size_t l = 0; l < v->n_levels; l++) {
        if (!t->present[l]) continue;
        if (t->ref < 0) t->ref = (long)l;
        n_present++;
    }
    t->cols = n_present > 0 ? n_present - 1 : 0;
    return COV_OK;
}

/* Write the term's columns for run i at dst; returns the number written. */
static size_t term_fill(const term *t, const cov_graph *g, double x, double *dst)
{
    if (!t->is_levels) {
        dst[0] = x;
        return 1;
    }
    size_t c = 0;
    long lv = (long)x;
    for (size_t l = 0; l < g->vars[t->var].n_levels; l++) {
        if (!t->present[l] || (long)l == t->ref) continue;
        dst[c++] = (long)l == lv ? 1.0 : 0.0;
    }
    return c;
}

int cov_claim_design_build(const cov_graph *g, const cov_claim *c, const cov_data *d,
                           cov_claim_design **out, cov_error *err)
{
    int rc = COV_ENOMEM;
    size_t n_vars = 2 + c->n_cond;
    size_t *vars = malloc(n_vars * sizeof *vars);
    term *terms = calloc(n_vars - 1, sizeof *terms);
    unsigned char *use = calloc(d->n_runs ? d->n_runs : 1, 1);
    cov_claim_design *cd = calloc(1, sizeof *cd);
    *out = NULL;
    if (vars == NULL || terms == NULL || use == NULL || cd == NULL) goto fail;

    vars[0] = c->outcome;
    vars[1] = c->treatment;
    memcpy(vars + 2, c->cond, c->n_cond * sizeof *vars);
    for (size_t k = 0; k < n_vars; k++) {
        if (d->col[vars[k]] == NULL) {
            rc = cov_fail(err, COV_EINPUT, "", "variable '%s' is not recorded in the archive",
                          g->vars[vars[k]].name);
            goto fail;
        }
    }
    size_t n = 0;
    for (size_t i = 0; i < d->n_runs; i++)
        if ((use[i] = (unsigned char)row_complete(d, vars, n_vars, i))) n++;

    size_t p = 1;   /* the intercept */
    for (size_t k = 0; k < n_vars - 1; k++) {
        terms[k].var = vars[k + 1];
        if ((rc = term_prepare(g, d, use, &terms[k])) != COV_OK) goto fail;
        p += terms[k].cols;
    }
    rc = COV_ENOMEM;
    cd->n = n;
    cd->p = p;
    cd->treat_first = 1;
    cd->treat_cols = terms[0].cols;
    cd->X = malloc((n ? n : 1) * p * sizeof *cd->X);
    cd->y = malloc((n ? n : 1) * sizeof *cd->y);
    cd->row = malloc((n ? n : 1) * sizeof *cd->row);
    if (cd->X == NULL || cd->y == NULL || cd->row == NULL) goto fail;

    size_t r = 0;
    for (size_t i = 0; i < d->n_runs; i++) {
        if (!use[i]) continue;
        double *xr = cd->X + r * p;
        size_t col = 0;
        xr[col++] = 1.0;
        for (size_t k = 0; k < n_vars - 1; k++)
            col += term_fill(&terms[k], g, d->col[terms[k].var][i], xr + col);
        cd->y[r] = d->col[c->outcome][i];
        cd->row[r] = i;
        r++;
    }
    *out = cd;
    cd = NULL;
    rc = COV_OK;
fail:
    if (terms != NULL)
        for (size_t k = 0; k < n_vars - 1; k++) free(terms[k].present);
    free(terms);
    free(vars);
    free(use);
    cov_claim_design_free(cd);
    return rc;
}

void cov_claim_design_free(cov_claim_design *cd)
{
    if (cd == NULL) return;
    free(cd->X);
    free(cd->y);
    free(cd->row);
    free(cd);
}
