/* Support of each claim in the runs: treatment variation, overlap, effective size, replication.
 * See LICENSE. */
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_multifit.h>

#include "coverage/measure/measure.h"

/* Separating sets up to this size are stratified by binning each member; larger ones through
 * propensity-score strata (the lead's decision: a product of more bins leaves strata nearly empty). */
#define COV_STRATA_MAX_COND 3
/* Equal-width bins per numeric member of S when stratifying: 5 mirrors the 5 propensity strata,
 * the number Cochran (1968, Biometrics 24:295-313) found removes about 90% of the bias of one
 * confounder. */
#define COV_STRATUM_BINS 5
#define COV_PROPENSITY_STRATA 5
/* Support verdict thresholds (ours): overlap below 0.8 means more than one run in five sits where
 * the treatment cannot be compared within its stratum; a residual spread below a tenth of the raw
 * spread is a variance inflation above 100. */
#define COV_MIN_OVERLAP 0.8
#define COV_MIN_RESID_SHARE 0.1

double cov_kish_ess(const double *w, size_t n)
{
    /* Kish (1965), "Survey Sampling", sec. 11.7: n_eff = (sum w)^2 / sum w^2. */
    double s = 0, s2 = 0;
    for (size_t i = 0; i < n; i++) s += w[i], s2 += w[i] * w[i];
    return s2 > 0 ? s * s / s2 : NAN;
}

void cov_supports_free(cov_supports *s)
{
    if (s == NULL) return;
    if (s->items != NULL)
        for (size_t k = 0; k < s->n; k++) free(s->items[k].reason);
    free(s->items);
    free(s);
}

/* Dense ids for the distinct rows of an n x k table (row-major), in the order of each row's first
 * appearance, by open addressing (linear probing, Knuth TAOCP vol. 3, 6.4, Algorithm L) on a hash
 * that folds each value's bits through splitmix64's finaliser (cov_mix64). The ids, hence every
 * figure made from them, do not depend on the hash; only the time does. Writes id[i] and returns
 * the number of distinct rows, or (size_t)-1 when out of memory. */
static size_t tuple_ids(const double *t, size_t n, size_t k, size_t *id)
{
    size_t cap = 16;
    while (cap < 2 * n) cap *= 2;
    size_t *slot = malloc(cap * sizeof *slot);   /* representative row + 1; 0 = empty */
    if (slot == NULL) return (size_t)-1;
    memset(slot, 0, cap * sizeof *slot);
    size_t distinct = 0;
    size_t *first_id = malloc((n ? n : 1) * sizeof *first_id);
    if (first_id == NULL) {
        free(slot);
        return (size_t)-1;
    }
    for (size_t i = 0; i < n; i++) {
        const double *row = t + i * k;
        uint64_t h = 0;
        for (size_t j = 0; j < k; j++) h = cov_mix64(h + cov_value_bits(row[j]));
        size_t s = (size_t)h & (cap - 1);
        for (;;) {
            if (slot[s] == 0) {
                slot[s] = i + 1;
                first_id[i] = distinct;
                id[i] = distinct++;
                break;
            }
            const double *other = t + (slot[s] - 1) * k;
            size_t j = 0;
            while (j < k && other[j] == row[j]) j++;
            if (j == k) {
                id[i] = first_id[slot[s] - 1];
                break;
            }
            s = (s + 1) & (cap - 1);
        }
    }
    free(slot);
    free(first_id);
    return distinct;
}

/* Bin of x for stratification: categories as they are, numbers in COV_STRATUM_BINS equal-width
 * bins of the declared domain (inputs) or of the observed range (outputs have none declared). */
static double stratum_bin(const cov_var *v, double lo, double hi, double x)
{
    if (v->type == COV_BOOL || v->type == COV_LEVELS) return x;
    long b = cov_bin_of(v, COV_STRATUM_BINS, x);
    if (b >= 0 && isfinite(v->lo)) return (double)b;
    if (!(hi > lo)) return 0;
    double k = floor((x - lo) / (hi - lo) * COV_STRATUM_BINS);
    return k >= COV_STRATUM_BINS ? COV_STRATUM_BINS - 1 : k < 0 ? 0 : k;
}

/* "name=value" for a stratum member, given a run's value of it. */
static void describe_member(char *buf, size_t len, const cov_var *v, double lo, double hi,
                            double x)
{
    if (v->type == COV_BOOL) {
        snprintf(buf, len, "%s=%s", v->name, x == 1 ? "true" : "false");
    } else if (v->type == COV_LEVELS) {
        size_t l = (size_t)x;
        snprintf(buf, len, "%s=%s", v->name, l < v->n_levels ? v->levels[l] : "?");
    } else if (v->type == COV_INTEGER && cov_bin_count(v, COV_STRATUM_BINS) != COV_STRATUM_BINS
               && cov_bin_of(v, COV_STRATUM_BINS, x) >= 0) {
        snprintf(buf, len, "%s=%g", v->name, x);
    } else {
        double a = isfinite(v->lo) ? v->lo : lo, b = isfinite(v->hi) ? v->hi : hi;
        double k = stratum_bin(v, lo, hi, x), w = (b - a) / COV_STRATUM_BINS;
        snprintf(buf, len, "%s in [%.4g, %.4g%s", v->name, a + k * w, a + (k + 1) * w,
                 k == COV_STRATUM_BINS - 1 ? "]" : ")");
    }
}

/* The word for one treatment value: on/off for bools, the level name, or the number. */
static void treatment_value(char *buf, size_t len, const cov_var *v, double x)
{
    if (v->type == COV_BOOL) snprintf(buf, len, "%s", x == 1 ? "on" : "off");
    else if (v->type == COV_LEVELS && (size_t)x < v->n_levels)
        snprintf(buf, len, "%s", v->levels[(size_t)x]);
    else snprintf(buf, len, "%g", x);
}

static char *dup_printf(const char *fmt, const char *a, const char *b)
{
    size_t len = strlen(fmt) + strlen(a) + strlen(b) + 1;
    char *s = malloc(len);
    if (s != NULL) snprintf(s, len, fmt, a, b);
    return s;
}

/* sd(X | S), divisor n: the residual SD of x after an intercept and the columns 1 .. q-1 of the
 * n x q matrix Z (column 0 is the intercept), computed the one way shoal computes it, from the
 * centred cross-products by pw_resid_sd (the fit the assessment makes). COV_OK, COV_ENOMEM or
 * COV_ENUMERIC. */
static int resid_sd(const double *Z, const double *x, size_t n, size_t q, double *out)
{
    size_t k = q;              /* the q - 1 columns of S, then x */
    pw_moments *m = NULL;
    double *row = malloc(k * sizeof *row);
    size_t *idx = malloc(k * sizeof *idx);
    int rc = COV_ENOMEM;
    if (row == NULL || idx == NULL || pw_moments_alloc(k, &m) != PW_OK) goto done;
    for (size_t i = 0; i < n; i++) {
        for (size_t j = 1; j < q; j++) row[j - 1] = Z[i * q + j];
        row[k - 1] = x[i];
        pw_moments_add(m, row);
    }
    for (size_t j = 0; j < k; j++) idx[j] = j;
    int prc = pw_resid_sd(m, idx, k - 1, out);
    rc = prc == PW_OK ? COV_OK : prc == PW_ENOMEM ? COV_ENOMEM : COV_ENUMERIC;
done:
    free(row);
    free(idx);
    pw_moments_free(m);
    return rc;
}

/* Rows the claim can use: complete cases of X, Y and S, as the regression sees them. */
typedef struct {
    const cov_graph *g;
    const cov_claim *cl;
    const cov_data *d;
    const cov_claim_design *cd;
    size_t min_runs;
    double *x;            /* treatment per row */
    double *z;            /* n x q: intercept and S columns of the design */
    size_t q;
    double *lo, *hi;      /* observed range of each S member */
} claim_rows;

/* Order (score, row) pairs by score, then row, so ties split the same way every time. */
static int cmp_score(const void *a, const void *b)
{
    const double *x = a, *y = b;
    if (x[0] != y[0]) return x[0] < y[0] ? -1 : 1;
    return x[1] < y[1] ? -1 : x[1] > y[1];
}

/* Overlap, Kish's ESS and the reason for a bool or level-set treatment. */
static int categorical_overlap(claim_rows *cr, cov_support *s, double treated_level)
{
    const cov_claim *cl = cr->cl;
    const cov_var *tv = &cr->g->vars[cl->treatment];
    const size_t n = cr->cd->n, L = tv->type == COV_BOOL ? 2 : tv->n_levels;
    int rc = COV_ENOMEM;
    size_t *stratum = malloc(n * sizeof *stratum), ns = 0;
    double *e = malloc(n * sizeof *e), *w = malloc(n * sizeof *w), *key = NULL;
    size_t *cnt = NULL, *size = NULL;
    double *treated = NULL;
    int propensity = cl->n_cond > COV_STRATA_MAX_COND;
    /* No adjustment set, or too few runs to fit a propensity model: one stratum of all runs. */
    int single = cl->n_cond == 0 || (propensity && n <= cr->q + 1);
    if (single) propensity = 0;
    if (stratum == NULL || e == NULL || w == NULL) goto done;
    double *ind = w;   /* the treated indicator, before w is needed */
    for (size_t i = 0; i < n; i++) ind[i] = cr->x[i] == treated_level;

    if (single) {
        for (size_t i = 0; i < n; i++) stratum[i] = 0;
        ns = 1;
    } else if (!propensity) {
        key = malloc((n * (cl->n_cond ? cl->n_cond : 1)) * sizeof *key);
        if (key == NULL) goto done;
        for (size_t i = 0; i < n; i++) {
            if (cl->n_cond == 0) key[i] = 0;
            for (size_t j = 0; j < cl->n_cond; j++) {
                const cov_var *v = &cr->g->vars[cl->cond[j]];
                key[i * cl->n_cond + j] =
                    stratum_bin(v, cr->lo[j], cr->hi[j], cr->d->col[cl->cond[j]][cr->cd->row[i]]);
            }
        }
        ns = tuple_ids(key, n, cl->n_cond ? cl->n_cond : 1, stratum);
        if (ns == (size_t)-1) goto done;
    } else {
        /* Propensity of the treated level given S (Rosenbaum & Rubin 1983, 1984): logistic
         * regression by IRLS; strata are its quintiles (Rosenbaum & Rubin 1984, JASA 79:516). */
        int pr = pw_logit_fit(cr->z, ind, n, cr->q, NULL, e, NULL);
        if (pr == PW_ENOMEM) goto done;
        /* PW_ENOCONV (no settling within the iteration cap, as under quasi-separation): the last
         * iterate still ranks the runs, and extreme scores are what the overlap check reports. */
        if (pr != PW_OK && pr != PW_ENOCONV) {
            /* Aliased S dummies or too few runs: fall back to a linear probability model by SVD
             * least squares, clipped to [0, 1], which only has to rank the runs. */
            gsl_matrix *A = gsl_matrix_alloc(n, cr->q), *cv = gsl_matrix_alloc(cr->q, cr->q);
            gsl_vector *b = gsl_vector_alloc(n), *c = gsl_vector_alloc(cr->q);
            gsl_multifit_linear_workspace *ws = gsl_multifit_linear_alloc(n, cr->q);
            double chisq;
            int ok = A && cv && b && c && ws;
            if (ok) {
                for (size_t i = 0; i < n; i++) {
                    for (size_t j = 0; j < cr->q; j++) gsl_matrix_set(A, i, j, cr->z[i * cr->q + j]);
                    gsl_vector_set(b, i, ind[i]);
                }
                ok = gsl_multifit_linear(A, b, c, cv, &chisq, ws) == GSL_SUCCESS;
                for (size_t i = 0; ok && i < n; i++) {
                    double f = 0;
                    for (size_t j = 0; j < cr->q; j++) f += cr->z[i * cr->q + j] * gsl_vector_get(c, j);
                    e[i] = f < 0 ? 0 : f > 1 ? 1 : f;
                }
            }
            gsl_matrix_free(A);
            gsl_matrix_free(cv);
            gsl_vector_free(b);
            gsl_vector_free(c);
            gsl_multifit_linear_free(ws);
            if (!ok) {
                /* Neither model could be fitted: judge overlap over all runs together. */
                single = 1;
                propensity = 0;
                for (size_t i = 0; i < n; i++) stratum[i] = 0;
                ns = 1;
            }
        }
        if (propensity) {
            /* Quintiles by rank: sort (score, row) pairs by score. */
            key = malloc(2 * n * sizeof *key);
            if (key == NULL) goto done;
            for (size_t i = 0; i < n; i++) key[2 * i] = e[i], key[2 * i + 1] = (double)i;
            qsort(key, n, 2 * sizeof *key, cmp_score);
            for (size_t r = 0; r < n; r++)
                stratum[(size_t)key[2 * r + 1]] = r * COV_PROPENSITY_STRATA / n;
            ns = COV_PROPENSITY_STRATA < n ? COV_PROPENSITY_STRATA : n;
        }
    }

    cnt = calloc(ns * L, sizeof *cnt);
    size = calloc(ns, sizeof *size);
    treated = calloc(ns, sizeof *treated);
    if (cnt == NULL || size == NULL || treated == NULL) goto done;
    unsigned char *present = calloc(L, 1);
    if (present == NULL) goto done;
    for (size_t i = 0; i < n; i++) {
        size_t lv = (size_t)cr->x[i];
        if (lv < L) cnt[stratum[i] * L + lv]++, present[lv] = 1;
        size[stratum[i]]++;
        treated[stratum[i]] += ind[i];
    }
    size_t good = 0, worst_s = ns, worst_l = 0;
    for (size_t t = 0; t < ns; t++) {
        size_t lmin = L;
        for (size_t l = 0; l < L; l++)
            if (present[l] && (lmin == L || cnt[t * L + l] < cnt[t * L + lmin])) lmin = l;
        if (lmin == L || cnt[t * L + lmin] >= cr->min_runs) good += size[t];
        else if (worst_s == ns || size[t] > size[worst_s]) worst_s = t, worst_l = lmin;
    }
    free(present);
    s->overlap = (double)good / (double)n;
    /* Overlap weights (Li, Morgan & Zaslavsky 2018, JASA 113:390-400): 1 - e for the treated,
     * e for the others; e is the stratum's treated share, or the fitted propensity. */
    for (size_t i = 0; i < n; i++) {
        double ei = propensity ? e[i] : treated[stratum[i]] / (double)size[stratum[i]];
        w[i] = cr->x[i] == treated_level ? 1 - ei : ei;
    }
    s->kish_ess = cov_kish_ess(w, n);

    if (s->overlap < COV_MIN_OVERLAP && worst_s < ns) {
        char val[128], where[512] = "", part[256];
        treatment_value(val, sizeof val, tv, (double)worst_l);
        size_t r0 = 0;
        while (r0 < n && stratum[r0] != worst_s) r0++;
        if (propensity) {
            double a = INFINITY, b = -INFINITY;
            for (size_t i = 0; i < n; i++)
                if (stratum[i] == worst_s) a = e[i] < a ? e[i] : a, b = e[i] > b ? e[i] : b;
            snprintf(where, sizeof where, "propensity stratum %zu of %d (score %.3g to %.3g)",
                     worst_s + 1, COV_PROPENSITY_STRATA, a, b);
        } else if (single) {
            snprintf(where, sizeof where, "%s", cl->n_cond == 0 ? "any run" : "all runs together");
        } else {
            for (size_t j = 0; j < cl->n_cond; j++) {
                const cov_var *v = &cr->g->vars[cl->cond[j]];
                describe_member(part, sizeof part, v, cr->lo[j], cr->hi[j],
                                cr->d->col[cl->cond[j]][cr->cd->row[r0]]);
                if (j > 0) strncat(where, ", ", sizeof where - strlen(where) - 1);
                strncat(where, part, sizeof where - strlen(where) - 1);
            }
        }
        size_t c = cnt[worst_s * L + worst_l];
        char head[96], body[1024];
        snprintf(head, sizeof head, "overlap %.2f below %.2f", s->overlap, COV_MIN_OVERLAP);
        if (tv->type == COV_BOOL) {
            if (c == 0) snprintf(body, sizeof body, "%s never %s at %s", tv->name, val, where);
            else snprintf(body, sizeof body, "%s %s in only %zu runs at %s", tv->name, val, c, where);
        } else {
            if (c == 0) snprintf(body, sizeof body, "%s=%s never at %s", tv->name, val, where);
            else snprintf(body, sizeof body, "%s=%s in only %zu runs at %s", tv->name, val, c, where);
        }
        s->reason = dup_printf("%s: %s", head, body);
        if (s->reason == NULL) goto done;
        s->ok = 0;
    }
    rc = COV_OK;
done:
    free(stratum);
    free(e);
    free(w);
    free(key);
    free(cnt);
    free(size);
    free(treated);
    return rc;
}

/* The reason for a numeric treatment whose residual spread is too small. */
static int resid_reason(const cov_var *tv, cov_support *s)
{
    char share[64], lim[32];
    snprintf(share, sizeof share, "%.1f%%", 100 * s->spread_resid / s->spread);
    snprintf(lim, sizeof lim, "%.0f%%", 100 * COV_MIN_RESID_SHARE);
    char *part = dup_printf("keeps %s of its spread once the adjustment set is known "
                            "(below %s)", share, lim);
    if (part == NULL) return COV_ENOMEM;
    s->ok = 0;
    s->reason = dup_printf("%s %s", tv->name, part);
    free(part);
    return s->reason != NULL ? COV_OK : COV_ENOMEM;
}

/* SD with divisor n. */
static double sd_n(const double *x, size_t n)
{
    double m = 0, q = 0;
    for (size_t i = 0; i < n; i++) m += x[i];
    m /= (double)n;
    for (size_t i = 0; i < n; i++) q += (x[i] - m) * (x[i] - m);
    return sqrt(q / (double)n);
}

/* Distinct tuples among the claim's rows of the treatment and the first k1 - 1 members of S, by
 * tuple_ids over a table made for the purpose only when no count settles them without it.
 * (size_t)-1 when out of memory. */
static size_t count_tuples(const claim_rows *cr, size_t k1)
{
    const size_t n = cr->cd->n;
    double *t = malloc((n ? n : 1) * k1 * sizeof *t);
    size_t *ids = malloc((n ? n : 1) * sizeof *ids), m = (size_t)-1;
    if (t != NULL && ids != NULL) {
        for (size_t i = 0; i < n; i++) {
            t[i * k1] = cr->x[i];
            for (size_t j = 0; j + 1 < k1; j++)
                t[i * k1 + 1 + j] = cr->d->col[cr->cl->cond[j]][cr->cd->row[i]];
        }
        m = tuple_ids(t, n, k1, ids);
    }
    free(t);
    free(ids);
    return m;
}

/* Distinct values of variable v among the claim's rows, when known without hashing them: a level
 * set's levels present (its cells x[0..n-1] are level indices; x may be NULL when they are not at
 * hand), or the shared summaries' count when the claim's rows are all the runs. (size_t)-1 when
 * not known. */
static size_t known_distinct(const cov_graph *g, const cov_data *d, const cov_summary *sh,
                             size_t v, const double *x, size_t n)
{
    const cov_var *var = &g->vars[v];
    if (var->type == COV_LEVELS && var->n_levels <= 256 && x != NULL) {
        unsigned char seen[256] = {0};
        size_t k = 0;
        for (size_t i = 0; i < n; i++) {
            size_t l = (size_t)x[i];
            if (l < var->n_levels && !seen[l]) seen[l] = 1, k++;
        }
        return k;
    }
    if (sh != NULL && n == d->n_runs && sh->col[v] != SIZE_MAX && sh->distinct[v] > 0)
        return sh->distinct[v];
    return (size_t)-1;
}

/* The claim's configurations when the archive's settle them: its rows are all the runs, the
 * treatment and every member of S are inputs, and one of them takes as many distinct values as
 * the runs have configurations of all inputs (d->n_configs, coverage/archive/runs.c). That
 * member's value then names the configuration (each configuration has one value of it, and no
 * two share one), so the claim's tuples, which a configuration fixes and which fix that member,
 * are exactly as many as the configurations. (size_t)-1 otherwise. */
static size_t archive_configs(const cov_graph *g, const cov_claim *cl, const cov_data *d,
                              const cov_summary *sh, size_t n)
{
    if (sh == NULL || n != d->n_runs || d->n_configs == 0) return (size_t)-1;
    if (g->vars[cl->treatment].role != COV_INPUT) return (size_t)-1;
    for (size_t j = 0; j < cl->n_cond; j++)
        if (g->vars[cl->cond[j]].role != COV_INPUT) return (size_t)-1;
    for (size_t j = 0; j <= cl->n_cond; j++) {
        size_t v = j < cl->n_cond ? cl->cond[j] : cl->treatment;
        if (sh->col[v] != SIZE_MAX && sh->distinct[v] == d->n_configs) return d->n_configs;
    }
    return (size_t)-1;
}

/* One testable claim's support. sh: the shared summaries (or NULL), whose distinct counts spare
 * hashing the runs where they settle a count. */
static int support_one(const cov_graph *g, const cov_claim *cl, const cov_data *d,
                       const cov_coverage_options *opt, const cov_summary *sh, cov_support *s,
                       cov_error *err)
{
    cov_claim_design *cd = NULL;
    claim_rows cr;
    memset(&cr, 0, sizeof cr);
    double *ind = NULL;
    int rc = cov_claim_design_build(g, cl, d, &cd, err);
    if (rc != COV_OK) return rc;
    rc = COV_ENOMEM;
    const cov_var *tv = &g->vars[cl->treatment];
    const size_t n = cd->n, k1 = 1 + cl->n_cond;
    s->n = n;
    s->ok = 1;
    if (n == 0) {
        s->ok = 0;
        s->reason = dup_printf("no run records %s, %s and the whole adjustment set together",
                               tv->name, g->vars[cl->outcome].name);
        rc = s->reason != NULL ? COV_OK : COV_ENOMEM;
        goto done;
    }
    cr.g = g, cr.cl = cl, cr.d = d, cr.cd = cd, cr.min_runs = opt->min_runs;
    cr.x = malloc(n * sizeof *cr.x);
    cr.q = cd->p - cd->treat_cols;
    cr.z = malloc(n * cr.q * sizeof *cr.z);
    cr.lo = malloc(k1 * sizeof *cr.lo);
    cr.hi = malloc(k1 * sizeof *cr.hi);
    ind = malloc(n * sizeof *ind);
    if (cr.x == NULL || cr.z == NULL || cr.lo == NULL || cr.hi == NULL || ind == NULL) goto done;
    for (size_t j = 0; j < cl->n_cond; j++) cr.lo[j] = INFINITY, cr.hi[j] = -INFINITY;
    for (size_t i = 0; i < n; i++) {
        size_t run = cd->row[i];
        cr.x[i] = d->col[cl->treatment][run];
        for (size_t j = 0; j < cl->n_cond; j++) {
            double v = d->col[cl->cond[j]][run];
            if (v < cr.lo[j]) cr.lo[j] = v;
            if (v > cr.hi[j]) cr.hi[j] = v;
        }
        /* Intercept and S columns: the design without its treatment columns. */
        const double *row = cd->X + i * cd->p;
        size_t c = 0;
        for (size_t j = 0; j < cd->p; j++)
            if (j < cd->treat_first || j >= cd->treat_first + cd->treat_cols)
                cr.z[i * cr.q + c++] = row[j];
    }

    /* Distinct treatment values. */
    size_t distinct = known_distinct(g, d, sh, cl->treatment, cr.x, n);
    if (distinct == (size_t)-1) distinct = count_tuples(&cr, 1);
    if (distinct == (size_t)-1) goto done;
    s->distinct = distinct;

    /* Replication: runs per distinct configuration of the treatment and S. When one member takes
     * a distinct value in every run, so does every configuration. */
    size_t n_cfg = distinct == n ? n : (size_t)-1;
    for (size_t j = 0; n_cfg != n && j < cl->n_cond; j++)
        if (known_distinct(g, d, sh, cl->cond[j], NULL, n) == n) n_cfg = n;
    if (n_cfg == (size_t)-1) n_cfg = archive_configs(g, cl, d, sh, n);
    if (n_cfg == (size_t)-1) n_cfg = count_tuples(&cr, k1);
    if (n_cfg == (size_t)-1) goto done;
    s->runs_per_config = (double)n / (double)n_cfg;
    s->pure_error = n_cfg < n;

    /* The variable whose spread is measured: the treatment, or for a level set the indicator of
     * its rarest level (the comparison with the least information). */
    double treated_level = 1;
    if (tv->type == COV_LEVELS) {
        size_t *cnt = calloc(tv->n_levels ? tv->n_levels : 1, sizeof *cnt);
        if (cnt == NULL) goto done;
        for (size_t i = 0; i < n; i++)
            if ((size_t)cr.x[i] < tv->n_levels) cnt[(size_t)cr.x[i]]++;
        size_t best = tv->n_levels;
        for (size_t l = 0; l < tv->n_levels; l++)
            if (cnt[l] > 0 && (best == tv->n_levels || cnt[l] < cnt[best])) best = l;
        free(cnt);
        treated_level = (double)best;
        for (size_t i = 0; i < n; i++) ind[i] = cr.x[i] == treated_level;
    } else {
        memcpy(ind, cr.x, n * sizeof *ind);
    }
    s->spread = sd_n(ind, n);
    if (cr.q > 0 && n > cr.q) {
        rc = resid_sd(cr.z, ind, n, cr.q, &s->spread_resid);
        if (rc == COV_ENOMEM) goto done;   /* a numeric failure leaves the figure NAN */
        rc = COV_ENOMEM;
    } else {
        s->spread_resid = 0;   /* no more runs than columns: nothing is left over */
    }

    if (distinct < 2) {
        char val[128];
        treatment_value(val, sizeof val, tv, cr.x[0]);
        s->ok = 0;
        s->reason = dup_printf("treatment %s takes one value (%s)", tv->name, val);
        if (s->reason == NULL) goto done;
    } else if (tv->type == COV_BOOL || tv->type == COV_LEVELS) {
        if ((rc = categorical_overlap(&cr, s, treated_level)) != COV_OK) goto done;
        rc = COV_ENOMEM;
    } else if (!(s->spread_resid >= COV_MIN_RESID_SHARE * s->spread)) {
        if ((rc = resid_reason(tv, s)) != COV_OK) goto done;
    }
    rc = COV_OK;
done:
    cov_claim_design_free(cd);
    free(cr.x);
    free(cr.z);
    free(cr.lo);
    free(cr.hi);
    free(ind);
    if (rc == COV_ENOMEM) cov_fail(err, rc, "", "out of memory measuring support");
    return rc;
}

/* A claim whose support the shared summaries give: every run records its treatment, outcome and
 * separating set (so its rows are all the runs), the treatment is numeric and the set has no level
 * set (one cross-product column each). */
static int summarised(const cov_graph *g, const cov_claim *cl, const cov_data *d,
                      const cov_summary *sh)
{
    if (sh == NULL || sh->xprod == NULL || cl->status != COV_TESTABLE) return 0;
    const cov_var *tv = &g->vars[cl->treatment];
    if (tv->type == COV_BOOL || tv->type == COV_LEVELS) return 0;
    if (sh->col[cl->treatment] == SIZE_MAX) return 0;
    if (d->col[cl->outcome] == NULL || d->n_missing[cl->outcome] > 0) return 0;
    for (size_t j = 0; j < cl->n_cond; j++)
        if (sh->col[cl->cond[j]] == SIZE_MAX) return 0;
    return 1;
}

/* One claim's support from the shared summaries: the same figures as support_one. sd(X | S) is
 * the root of the residual sum of squares of X on S and an intercept over n, solved from the
 * cross-products (pw_xfit_solve) instead of a least-squares fit over the runs; the spread is the
 * root of X's centred sum of squares over n. Replication: when some member of (X, S) takes as
 * many distinct values as there are runs, every configuration is distinct; when the archive's
 * configurations settle it (archive_configs), they are counted; otherwise the runs'
 * configurations are counted as before. */
static int support_summary(const cov_graph *g, const cov_claim *cl, const cov_data *d,
                           const cov_summary *sh, cov_support *s, cov_error *err)
{
    const cov_var *tv = &g->vars[cl->treatment];
    const size_t n = d->n_runs, k1 = 1 + cl->n_cond;
    size_t *idx = malloc(k1 * sizeof *idx);
    int rc = COV_ENOMEM;
    if (idx == NULL) goto done;
    s->n = n;
    s->ok = 1;
    s->distinct = sh->distinct[cl->treatment];
    double cxx = pw_moments_at(sh->xprod, sh->col[cl->treatment], sh->col[cl->treatment]);
    s->spread = sqrt(cxx / (double)n);
    size_t most = s->distinct;
    for (size_t j = 0; j < cl->n_cond; j++) {
        idx[j] = sh->col[cl->cond[j]];
        if (sh->distinct[cl->cond[j]] > most) most = sh->distinct[cl->cond[j]];
    }
    idx[cl->n_cond] = sh->col[cl->treatment];
    if (n > k1) {
        pw_xfit *f = NULL;
        if (pw_xfit_solve(sh->xprod, idx, cl->n_cond, 0, &f) != PW_OK) goto done;
        s->spread_resid = sqrt(f->rss / (double)n);
        pw_xfit_free(f);
    } else {
        s->spread_resid = 0;   /* no more runs than columns: nothing is left over */
    }
    size_t n_cfg = most < n ? archive_configs(g, cl, d, sh, n) : n;
    if (n_cfg == (size_t)-1) {
        double *cfg = malloc(n * k1 * sizeof *cfg);
        size_t *ids = malloc(n * sizeof *ids);
        if (cfg == NULL || ids == NULL) {
            free(cfg);
            free(ids);
            goto done;
        }
        for (size_t i = 0; i < n; i++) {
            cfg[i * k1] = d->col[cl->treatment][i];
            for (size_t j = 0; j < cl->n_cond; j++) cfg[i * k1 + 1 + j] = d->col[cl->cond[j]][i];
        }
        n_cfg = tuple_ids(cfg, n, k1, ids);
        free(cfg);
        free(ids);
        if (n_cfg == (size_t)-1) goto done;
    }
    s->runs_per_config = (double)n / (double)n_cfg;
    s->pure_error = n_cfg < n;
    rc = COV_OK;
    if (s->distinct < 2) {
        char val[128];
        treatment_value(val, sizeof val, tv, d->col[cl->treatment][0]);
        s->ok = 0;
        s->reason = dup_printf("treatment %s takes one value (%s)", tv->name, val);
        if (s->reason == NULL) rc = COV_ENOMEM;
    } else if (!(s->spread_resid >= COV_MIN_RESID_SHARE * s->spread)) {
        rc = resid_reason(tv, s);
    }
done:
    free(idx);
    if (rc == COV_ENOMEM) cov_fail(err, rc, "", "out of memory measuring support");
    return rc;
}

int cov_support_measure(const cov_graph *g, const cov_claims *c, const cov_data *d,
                        const cov_coverage_options *opt, cov_supports **out, cov_error *err)
{
    return cov_support_measure_shared(g, c, d, opt, NULL, out, err);
}

int cov_support_measure_shared(const cov_graph *g, const cov_claims *c, const cov_data *d,
                               const cov_coverage_options *opt, const cov_xshare *shared,
                               cov_supports **out, cov_error *err)
{
    *out = NULL;
    cov_summary *sh = NULL;
    cov_supports *s = calloc(1, sizeof *s);
    unsigned char *want = calloc(d->n_vars ? d->n_vars : 1, 1);
    if (s == NULL || want == NULL) goto oom;
    s->items = calloc(c->n ? c->n : 1, sizeof *s->items);
    if (s->items == NULL) goto oom;
    s->n = c->n;
    /* The shared summaries, when some claim can use them. */
    int any = 0;
    for (size_t k = 0; k < c->n; k++) {
        const cov_claim *cl = &c->items[k];
        if (cl->status != COV_TESTABLE) continue;
        want[cl->treatment] = 1;
        for (size_t j = 0; j < cl->n_cond; j++) want[cl->cond[j]] = 1;
        any = 1;
    }
    if (any && d->n_runs > 0 && cov_summary_build_shared(g, d, want, opt->threads, shared, &sh) != COV_OK)
        goto oom;
    for (size_t k = 0; k < c->n; k++) {
        cov_support *it = &s->items[k];
        it->claim = k;
        it->spread = it->spread_resid = it->overlap = it->kish_ess = NAN;
        it->runs_per_config = NAN;
        if (c->items[k].status != COV_TESTABLE) {
            it->reason = dup_printf("untestable%s%s", c->items[k].reason ? ": " : "",
                                    c->items[k].reason ? c->items[k].reason : "");
            if (it->reason == NULL) goto oom;
            continue;
        }
        int rc = summarised(g, &c->items[k], d, sh)
                     ? support_summary(g, &c->items[k], d, sh, it, err)
                     : support_one(g, &c->items[k], d, opt, sh, it, err);
        if (rc != COV_OK) {
            cov_summary_free(sh);
            free(want);
            cov_supports_free(s);
            if (rc == COV_ENOMEM) cov_fail(err, rc, "", "out of memory measuring support");
            return rc;
        }
    }
    cov_summary_free(sh);
    free(want);
    *out = s;
    return COV_OK;
oom:
    cov_summary_free(sh);
    free(want);
    cov_supports_free(s);
    return cov_fail(err, COV_ENOMEM, "", "out of memory measuring support");
}
