/* The candidate runs `shoal plan` chooses among: scrambled Sobol points, corners, extremes, levels.
 * See LICENSE. */
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_qrng.h>
#include <gsl/gsl_rng.h>

#include "coverage/plan/plan.h"

/* Scrambled Sobol points in the candidate set, and as many again rounded to the domain ends. */
#define PLAN_N_SOBOL 256
/* GSL's Sobol generator goes up to 40 dimensions; more inputs are padded with further
 * independently scrambled Sobol blocks (Owen 1998, "Latin supercube sampling"). */
#define PLAN_SOBOL_MAX_DIM 40
/* Level combinations enumerated per set of level-set inputs a claim needs. */
#define PLAN_LEVEL_COMBO_CAP 256
/* Real values are drawn on a grid of this share of the domain, so that they print short. */
#define PLAN_REAL_GRID 1e-6

static unsigned parity32(uint32_t x)
{
    x ^= x >> 16;
    x ^= x >> 8;
    x ^= x >> 4;
    x ^= x >> 2;
    x ^= x >> 1;
    return x & 1u;
}

/* Random linear scrambling with a digital shift (Matousek 1998, "On the L2-discrepancy for
 * anchored boxes", J. Complexity 14): digit i of the output is digit i of the input plus a random
 * combination of the digits before it, plus a random shift digit, all mod 2. The scrambled net keeps
 * its (t, m, s) properties. */
typedef struct {
    uint32_t rows[32];        /* rows[i]: bit 31 - j set when input digit j enters output digit i */
    uint32_t shift;
} scramble;

static void scramble_init(scramble *s, gsl_rng *r)
{
    for (int i = 0; i < 32; i++) {
        uint32_t below = i == 0 ? 0u : (uint32_t)(gsl_rng_get(r) & 0xffffffffUL);
        uint32_t keep = i == 0 ? 0u : ~(uint32_t)0 << (32 - i);    /* digits 0 .. i-1 */
        s->rows[i] = (below & keep) | (1u << (31 - i));
    }
    s->shift = (uint32_t)(gsl_rng_get(r) & 0xffffffffUL);
}

static double scramble_apply(const scramble *s, double u)
{
    uint32_t b = (uint32_t)ldexp(u, 32), out = 0;
    if (u >= 1.0) b = 0xffffffffu;
    for (int i = 0; i < 32; i++) out |= (uint32_t)parity32(s->rows[i] & b) << (31 - i);
    out ^= s->shift;
    return ldexp((double)out + 0.5, -32);
}

/* A value of input v from a share u in [0, 1); corner = 1 takes the nearer end instead. */
static double value_of(const cov_var *v, double u, int corner)
{
    if (v->held) return v->held_value;
    if (v->type == COV_BOOL) return u < 0.5 ? 0.0 : 1.0;
    if (v->type == COV_LEVELS) {
        double k = floor(u * (double)v->n_levels);
        return k >= (double)v->n_levels ? (double)v->n_levels - 1 : k;
    }
    if (corner) return u < 0.5 ? v->lo : v->hi;
    if (v->type == COV_INTEGER) {
        double k = v->lo + floor(u * (v->hi - v->lo + 1.0));
        return k > v->hi ? v->hi : k;
    }
    double x = v->lo + (v->hi - v->lo) * (PLAN_REAL_GRID * floor(u / PLAN_REAL_GRID));
    return x > v->hi ? v->hi : (x < v->lo ? v->lo : x);
}

/* The candidate set as it grows: n rows of g->n_vars values, room for cap. */
typedef struct {
    const cov_graph *g;
    double *vals;
    size_t n, cap;
} cand_set;

static int cand_push(cand_set *cs, const double *vals)
{
    const cov_graph *g = cs->g;
    if (cs->n == cs->cap) {
        size_t nc = cs->cap ? 2 * cs->cap : 512;
        /* At least one slot per row: realloc to 0 bytes frees the block and returns NULL. */
        double *nv = realloc(cs->vals, nc * (g->n_vars ? g->n_vars : 1) * sizeof *nv);
        if (nv == NULL) return COV_ENOMEM;
        cs->vals = nv;
        cs->cap = nc;
    }
    double *dst = cs->vals + cs->n * g->n_vars;
    for (size_t v = 0; v < g->n_vars; v++) {
        const cov_var *var = &g->vars[v];
        dst[v] = var->role != COV_INPUT ? NAN : (var->held ? var->held_value : vals[v]);
    }
    cs->n++;
    return COV_OK;
}

/* The candidate set: scrambled Sobol points, the same rounded to the domain ends (corners), the
 * centre and one-at-a-time extremes, and every combination of the level sets that underpowered steered
 * claims use. */
int cov_plan_candidates(const cov_graph *g, const cov_claims *c, const unsigned char *under,
                        unsigned long seed, double **cand_vals, size_t *n_cand)
{
    size_t nv = g->n_vars;
    cand_set cs = {g, NULL, 0, 0};
    int rc = COV_ENOMEM;
    *cand_vals = NULL;
    *n_cand = 0;
    size_t *free_in = malloc((nv + 1) * sizeof *free_in);
    double *u = malloc((nv + 1) * sizeof *u), *vals = malloc((nv + 1) * sizeof *vals);
    double *pts = NULL;
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    if (free_in == NULL || u == NULL || vals == NULL || r == NULL) goto fail;
    gsl_rng_set(r, seed);
    size_t dim = 0;
    for (size_t v = 0; v < nv; v++)
        if (g->vars[v].role == COV_INPUT && !g->vars[v].held) free_in[dim++] = v;
    for (size_t v = 0; v < nv; v++) vals[v] = NAN;
    pts = malloc((size_t)PLAN_N_SOBOL * (dim + 1) * sizeof *pts);
    if (pts == NULL) goto fail;
    for (size_t b0 = 0; b0 < dim; b0 += PLAN_SOBOL_MAX_DIM) {
        size_t bd = dim - b0 < PLAN_SOBOL_MAX_DIM ? dim - b0 : PLAN_SOBOL_MAX_DIM;
        gsl_qrng *q = gsl_qrng_alloc(gsl_qrng_sobol, (unsigned)bd);
        scramble *sc = malloc(bd * sizeof *sc);
        if (q == NULL || sc == NULL) {
            gsl_qrng_free(q);
            free(sc);
            goto fail;
        }
        for (size_t k = 0; k < bd; k++) scramble_init(&sc[k], r);
        for (size_t i = 0; i < PLAN_N_SOBOL; i++) {
            if (gsl_qrng_get(q, u) != 0) {
                gsl_qrng_free(q);
                free(sc);
                rc = COV_ENUMERIC;
                goto fail;
            }
            for (size_t k = 0; k < bd; k++)
                pts[i * (dim + 1) + b0 + k] = scramble_apply(&sc[k], u[k]);
        }
        gsl_qrng_free(q);
        free(sc);
    }
    for (int corner = 0; corner <= 1; corner++)
        for (size_t i = 0; i < PLAN_N_SOBOL; i++) {
            for (size_t k = 0; k < dim; k++)
                vals[free_in[k]] = value_of(&g->vars[free_in[k]], pts[i * (dim + 1) + k], corner);
            if ((rc = cand_push(&cs, vals)) != COV_OK) goto fail;
        }
    /* The centre of the numeric domains, and each numeric input at either end from there. */
    for (size_t k = 0; k < dim; k++) vals[free_in[k]] = value_of(&g->vars[free_in[k]], 0.5, 0);
    if ((rc = cand_push(&cs, vals)) != COV_OK) goto fail;
    for (size_t k = 0; k < dim; k++) {
        const cov_var *var = &g->vars[free_in[k]];
        if (!cov_plan_is_numeric(var)) continue;
        double mid = vals[free_in[k]];
        vals[free_in[k]] = var->lo;
        if ((rc = cand_push(&cs, vals)) != COV_OK) goto fail;
        vals[free_in[k]] = var->hi;
        if ((rc = cand_push(&cs, vals)) != COV_OK) goto fail;
        vals[free_in[k]] = mid;
    }
    /* Level combinations: for each underpowered claim's level-set inputs, every combination, the other
     * inputs taken from the corner points in turn. */
    size_t *lv = malloc((nv + 1) * sizeof *lv), *digit = malloc((nv + 1) * sizeof *digit);
    if (lv == NULL || digit == NULL) {
        free(lv);
        free(digit);
        rc = COV_ENOMEM;
        goto fail;
    }
    size_t rot = 0;
    for (size_t i = 0; i < c->n; i++) {
        const cov_claim *cl = &c->items[i];
        if (!under[i]) continue;
        size_t n_lv = 0;
        for (size_t m = 0; m <= cl->n_cond; m++) {
            size_t v = m < cl->n_cond ? cl->cond[m] : cl->treatment;
            const cov_var *var = &g->vars[v];
            if (var->role == COV_INPUT && var->type == COV_LEVELS && !var->held) lv[n_lv++] = v;
        }
        if (n_lv == 0) continue;
        size_t combos = 1;
        for (size_t m = 0; m < n_lv && combos <= PLAN_LEVEL_COMBO_CAP; m++)
            combos *= g->vars[lv[m]].n_levels;
        if (combos > PLAN_LEVEL_COMBO_CAP) combos = PLAN_LEVEL_COMBO_CAP;
        for (size_t m = 0; m < n_lv; m++) digit[m] = 0;
        for (size_t t = 0; t < combos; t++) {
            size_t base = PLAN_N_SOBOL + rot++ % PLAN_N_SOBOL;
            memcpy(vals, cs.vals + base * nv, nv * sizeof *vals);
            for (size_t m = 0; m < n_lv; m++) vals[lv[m]] = (double)digit[m];
            if ((rc = cand_push(&cs, vals)) != COV_OK) {
                free(lv);
                free(digit);
                goto fail;
            }
            for (size_t m = 0; m < n_lv; m++) {
                if (++digit[m] < g->vars[lv[m]].n_levels) break;
                digit[m] = 0;
            }
        }
    }
    free(lv);
    free(digit);
    *cand_vals = cs.vals;
    *n_cand = cs.n;
    cs.vals = NULL;
    rc = COV_OK;
fail:
    free(cs.vals);
    gsl_rng_free(r);
    free(free_in);
    free(u);
    free(vals);
    free(pts);
    return rc;
}
