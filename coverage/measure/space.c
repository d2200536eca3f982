/* Input-space coverage: bins, marginal, 2-way and 3-way combination coverage of the runs.
 * See LICENSE. */
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_rng.h>

#include "coverage/measure/measure.h"

/* Integer inputs with at most this many whole values get one bin per value (issue 4). */
#define COV_INTEGER_EXACT_MAX 10
/* Runs binned at a time: the codes of one block (inputs x block x 2 bytes) and the scaled numeric
 * values (x 8 bytes) stay in cache while every pair's counters are updated from them. */
#define COV_BLOCK 512
/* 3-way counting costs runs x triples increments and cells of memory: above this many triples
 * (C(20, 3) = 1140 is the default limit's count) a fixed-seed random sample of them is counted. */
#define COV_THREEWAY_MAX_TRIPLES 2000
/* Counter cells (4 bytes each) allowed for the 3-way tables and for the 2-way tables: 400 MB and
 * 1 GB. Many inputs with many bins (--bins up to 1000) would otherwise exhaust memory; beyond the
 * 3-way limit fewer triples are sampled, beyond the 2-way limit the user is asked for fewer bins. */
#define COV_THREEWAY_MAX_CELLS 1e8
#define COV_PAIR_MAX_CELLS 2.5e8
/* Inputs up to which --way 0 (auto) adds 3-way coverage (issue 4). */
#define COV_THREEWAY_AUTO_INPUTS 20
/* Discrepancy is O(n^2 d): above this many runs it is computed on a fixed-seed subsample; with
 * many numeric inputs the subsample shrinks so that n^2 d / 2 stays under COV_CD_MAX_WORK (the
 * work of 4,000 runs in 16 dimensions). */
#define COV_CD_MAX_RUNS 4000
#define COV_CD_MAX_WORK 1.28e8
/* Gap points kept for the plots and the plan (issue 4). */
#define COV_N_GAPS 20

/* 1 for an integer input whose declared domain holds COV_INTEGER_EXACT_MAX values or fewer. */
static int small_integer(const cov_var *v)
{
    return v->type == COV_INTEGER && isfinite(v->lo) && isfinite(v->hi)
           && floor(v->hi) - ceil(v->lo) + 1 <= COV_INTEGER_EXACT_MAX;
}

size_t cov_bin_count(const cov_var *v, size_t bins)
{
    switch (v->type) {
    case COV_BOOL: return 2;
    case COV_LEVELS: return v->n_levels;
    case COV_INTEGER:
        if (small_integer(v)) return (size_t)(floor(v->hi) - ceil(v->lo) + 1);
        return bins;
    case COV_REAL: return bins;
    }
    return bins;
}

long cov_bin_of(const cov_var *v, size_t bins, double x)
{
    if (isnan(x)) return -1;
    switch (v->type) {
    case COV_BOOL:
        return x == 0 ? 0 : x == 1 ? 1 : -1;
    case COV_LEVELS:
        if (x < 0 || x >= (double)v->n_levels || x != floor(x)) return -1;
        return (long)x;
    case COV_INTEGER:
        if (small_integer(v)) {
            if (x < v->lo || x > v->hi || x != floor(x)) return -1;
            return (long)(x - ceil(v->lo));
        }
        break;
    case COV_REAL:
        break;
    }
    if (!(x >= v->lo && x <= v->hi) || bins == 0) return -1;
    /* Equal-width bins [lo + k w, lo + (k+1) w); the top edge hi belongs to the last bin. The
     * scale bins / (hi - lo) is computed first so the counting pass can hoist it (a multiply per
     * value instead of a divide) and still give the same bin at every edge. */
    double b = floor((x - v->lo) * ((double)bins / (v->hi - v->lo)));
    /* The graph's range limits keep this finite; converting a NaN to an integer is undefined. */
    if (isnan(b)) return -1;
    if (b >= (double)bins) b = (double)bins - 1;
    if (b < 0) b = 0;
    return (long)b;
}

void cov_coverage_free(cov_coverage *c)
{
    if (c == NULL) return;
    if (c->marginal != NULL)
        for (size_t k = 0; k < c->n_inputs; k++) free(c->marginal[k].count);
    free(c->marginal);
    if (c->pairs != NULL)
        for (size_t p = 0; p < c->n_pairs; p++) free(c->pairs[p].count);
    free(c->pairs);
    free(c->worst);
    free(c->inputs);
    free(c->numeric);
    free(c->gaps);
    free(c->gap_dist);
    free(c->dependence);
    free(c);
}

/* One input's binning, hoisted out of the run loop. */
typedef struct {
    cov_type type;
    size_t nb;            /* bins; code nb means missing or outside */
    double lo, hi, scale; /* numeric bins: bin = floor((x - lo) * scale) with scale = nb/(hi-lo) */
    int exact;            /* one bin per whole value (bool, levels, small integer) */
    const cov_var *var;
    size_t bins;
} binner;

static inline uint16_t bin_code(const binner *b, double x)
{
    if (b->exact) {
        long k = cov_bin_of(b->var, b->bins, x);
        return (uint16_t)(k < 0 ? b->nb : (size_t)k);
    }
    if (!(x >= b->lo && x <= b->hi)) return (uint16_t)b->nb;
    /* The same expression as cov_bin_of, so both give the same bin at every edge. */
    /* x >= lo here, so the product is non-negative and truncation equals floor (without a libm
     * call on processors lacking a rounding instruction). */
    double f = (x - b->lo) * b->scale;
    /* The graph's range limits keep f finite; a NaN must not reach the integer conversion. */
    if (!(f < (double)b->nb)) return (uint16_t)(f >= (double)b->nb ? b->nb - 1 : b->nb);
    return (uint16_t)(size_t)f;
}

static int cmp_worst(const void *pa, const void *pb, const cov_pair *pairs)
{
    const cov_pair *a = &pairs[*(const size_t *)pa], *b = &pairs[*(const size_t *)pb];
    if (a->share != b->share) return a->share < b->share ? -1 : 1;
    if (a->n_empty != b->n_empty) return a->n_empty > b->n_empty ? -1 : 1;
    return *(const size_t *)pa < *(const size_t *)pb ? -1 : 1;
}

/* Order the pair indices worst first; a merge sort, since qsort passes no context. */
static void sort_worst(size_t *idx, size_t *tmp, size_t n, const cov_pair *pairs)
{
    if (n < 2) return;
    size_t h = n / 2;
    sort_worst(idx, tmp, h, pairs);
    sort_worst(idx + h, tmp, n - h, pairs);
    size_t i = 0, j = h, k = 0;
    while (i < h && j < n)
        tmp[k++] = cmp_worst(&idx[j], &idx[i], pairs) < 0 ? idx[j++] : idx[i++];
    while (i < h) tmp[k++] = idx[i++];
    while (j < n) tmp[k++] = idx[j++];
    memcpy(idx, tmp, n * sizeof *idx);
}

/* Everything the single pass over the runs fills. */
typedef struct {
    size_t K;              /* inputs */
    binner *bn;
    size_t n_pairs;
    uint32_t **pc;         /* per pair: (na+1) x (nb+1) counters, the last row/column = missing */
    size_t n_tri;
    size_t (*tri)[3];      /* input positions of each counted triple */
    uint32_t **tc;         /* per triple: (na+1)(nb+1)(nc+1) counters */
} pass_state;

static void pass_free(pass_state *s)
{
    if (s->pc != NULL)
        for (size_t p = 0; p < s->n_pairs; p++) free(s->pc[p]);
    free(s->pc);
    if (s->tc != NULL)
        for (size_t t = 0; t < s->n_tri; t++) free(s->tc[t]);
    free(s->tc);
    free(s->tri);
    free(s->bn);
}

/* Choose the triples: all of them when few enough, else a fixed-seed sample without replacement
 * (Knuth 1997, TAOCP vol. 2, 3.4.2, Algorithm S: selection sampling in index order). */
static int choose_triples(pass_state *s, size_t K, unsigned long seed, int *sampled)
{
    size_t total = K < 3 ? 0 : K * (K - 1) * (K - 2) / 6;
    size_t want = total <= COV_THREEWAY_MAX_TRIPLES ? total : COV_THREEWAY_MAX_TRIPLES;
    /* The largest table a triple can need bounds how many fit in COV_THREEWAY_MAX_CELLS. */
    double top[3] = {0, 0, 0};
    for (size_t k = 0; k < K; k++) {
        double c = (double)(s->bn[k].nb + 1);
        if (c > top[0]) top[2] = top[1], top[1] = top[0], top[0] = c;
        else if (c > top[1]) top[2] = top[1], top[1] = c;
        else if (c > top[2]) top[2] = c;
    }
    double fit = COV_THREEWAY_MAX_CELLS / (top[0] * top[1] * top[2]);
    if ((double)want > fit) want = (size_t)fit;
    *sampled = want < total;
    s->n_tri = 0;
    if (want == 0) return COV_OK;
    s->tri = malloc(want * sizeof *s->tri);
    if (s->tri == NULL) return COV_ENOMEM;
    gsl_rng *r = NULL;
    if (*sampled) {
        r = gsl_rng_alloc(gsl_rng_mt19937);
        if (r == NULL) return COV_ENOMEM;
        gsl_rng_set(r, seed ^ 0x3a3aUL);
    }
    size_t seen = 0;
    for (size_t a = 0; a < K; a++)
        for (size_t b = a + 1; b < K; b++)
            for (size_t c = b + 1; c < K; c++, seen++) {
                if (s->n_tri == want) continue;
                if (r != NULL && (double)(total - seen) * gsl_rng_uniform(r)
                                     >= (double)(want - s->n_tri))
                    continue;
                s->tri[s->n_tri][0] = a;
                s->tri[s->n_tri][1] = b;
                s->tri[s->n_tri][2] = c;
                s->n_tri++;
            }
    gsl_rng_free(r);
    return COV_OK;
}

/* Grouped counting. Inputs are taken two at a time; a group's code is the cell of its own pair
 * ((na+1)(nb+1) values, missing included). One increment in the joint table of two groups counts
 * a run for four input pairs at once, so the pass makes about K^2/8 increments per run instead of
 * K^2/2; the pair tables are summed out of the group tables at the end. Used when every group has
 * at most COV_GROUP_MAX_CODES codes, which keeps a joint table (4 bytes a cell) within a typical
 * 64 KB L2 slice; otherwise each pair is counted on its own. */
#define COV_GROUP_MAX_CODES 128
/* Runs per block in grouped counting. Each group pair is counted into a 16-bit scratch table
 * (at most 128 x 128 cells, 32 KB: it stays in the L1 cache), which a block of up to 65,535 runs
 * cannot overflow, and then added to its 32-bit totals. */
#define COV_GROUP_BLOCK 65535

typedef struct {
    size_t n_groups;
    size_t (*member)[2];   /* input positions; member[g][1] == SIZE_MAX for a lone input */
    size_t *codes;         /* codes per group: (na+1)(nb+1), or na+1 */
    uint32_t **joint;      /* per group pair g1 < g2: codes[g1] x codes[g2] counters */
    uint32_t **own;        /* per group: counts of its codes (its own pair's table) */
    uint8_t *gcode;        /* n_groups x COV_GROUP_BLOCK */
    uint16_t *grow;        /* the same codes times stride: row offsets into the scratch table */
    size_t stride;         /* the largest group's code count: the scratch table's row length */
    uint16_t *scratch;     /* one joint table's counts within a block */
} grouping;

static void grouping_free(grouping *gr)
{
    size_t np = gr->n_groups * (gr->n_groups - (gr->n_groups > 0)) / 2;
    if (gr->joint != NULL)
        for (size_t q = 0; q < np; q++) free(gr->joint[q]);
    if (gr->own != NULL)
        for (size_t q = 0; q < gr->n_groups; q++) free(gr->own[q]);
    free(gr->joint);
    free(gr->own);
    free(gr->member);
    free(gr->codes);
    free(gr->gcode);
    free(gr->grow);
    free(gr->scratch);
}

/* Set up the groups; returns COV_OK with n_groups == 0 when grouping does not apply. */
static int grouping_init(grouping *gr, const pass_state *s)
{
    memset(gr, 0, sizeof *gr);
    const size_t K = s->K, G = (K + 1) / 2;
    if (K < 4) return COV_OK;   /* too few pairs to gain anything */
    for (size_t g = 0; g < G; g++) {
        size_t c = s->bn[2 * g].nb + 1;
        if (2 * g + 1 < K) c *= s->bn[2 * g + 1].nb + 1;
        if (c > COV_GROUP_MAX_CODES) return COV_OK;
    }
    gr->member = malloc(G * sizeof *gr->member);
    gr->codes = malloc(G * sizeof *gr->codes);
    gr->joint = calloc(G * (G - 1) / 2 + 1, sizeof *gr->joint);
    gr->own = calloc(G, sizeof *gr->own);
    gr->gcode = malloc(G * COV_GROUP_BLOCK);
    gr->grow = malloc(G * COV_GROUP_BLOCK * sizeof *gr->grow);
    gr->scratch = malloc(COV_GROUP_MAX_CODES * COV_GROUP_MAX_CODES * sizeof *gr->scratch);
    gr->n_groups = G;
    if (!gr->member || !gr->codes || !gr->joint || !gr->own || !gr->gcode || !gr->grow
        || !gr->scratch)
        return COV_ENOMEM;
    for (size_t g = 0; g < G; g++) {
        gr->member[g][0] = 2 * g;
        gr->member[g][1] = 2 * g + 1 < K ? 2 * g + 1 : SIZE_MAX;
        gr->codes[g] = (s->bn[2 * g].nb + 1) * (2 * g + 1 < K ? s->bn[2 * g + 1].nb + 1 : 1);
        if (gr->codes[g] > gr->stride) gr->stride = gr->codes[g];
        if ((gr->own[g] = calloc(gr->codes[g], sizeof **gr->own)) == NULL) return COV_ENOMEM;
    }
    for (size_t a = 0, q = 0; a < G; a++)
        for (size_t b = a + 1; b < G; b++, q++)
            if ((gr->joint[q] = calloc(gr->codes[a] * gr->codes[b], sizeof **gr->joint)) == NULL)
                return COV_ENOMEM;
    return COV_OK;
}

/* Position of pair (a, b), a < b, among the K (K - 1) / 2 pairs in row order. */
static size_t pair_pos(size_t K, size_t a, size_t b) { return a * K - a * (a + 1) / 2 + (b - a - 1); }

/* Sum the group tables out into the input pairs' tables. */
static void grouping_finish(const grouping *gr, pass_state *s)
{
    const size_t K = s->K, G = gr->n_groups;
    for (size_t g = 0; g < G; g++)
        if (gr->member[g][1] != SIZE_MAX) {
            uint32_t *pc = s->pc[pair_pos(K, gr->member[g][0], gr->member[g][1])];
            for (size_t c = 0; c < gr->codes[g]; c++) pc[c] += gr->own[g][c];
        }
    for (size_t g1 = 0, q = 0; g1 < G; g1++)
        for (size_t g2 = g1 + 1; g2 < G; g2++, q++) {
            const uint32_t *t = gr->joint[q];
            size_t m1 = gr->member[g1][1] == SIZE_MAX ? 1 : 2;
            size_t m2 = gr->member[g2][1] == SIZE_MAX ? 1 : 2;
            size_t w1 = m1 == 2 ? s->bn[gr->member[g1][1]].nb + 1 : 1;   /* code = x * w1 + y */
            size_t w2 = m2 == 2 ? s->bn[gr->member[g2][1]].nb + 1 : 1;
            for (size_t x = 0; x < gr->codes[g1]; x++) {
                size_t part1[2] = {x / w1, x % w1};
                for (size_t y = 0; y < gr->codes[g2]; y++) {
                    uint32_t v = t[x * gr->codes[g2] + y];
                    if (v == 0) continue;
                    size_t part2[2] = {y / w2, y % w2};
                    for (size_t i = 0; i < m1; i++)
                        for (size_t j = 0; j < m2; j++) {
                            size_t a = gr->member[g1][i], b = gr->member[g2][j];
                            size_t stride = s->bn[b].nb + 1;
                            s->pc[pair_pos(K, a, b)][part1[i] * stride + part2[j]] += v;
                        }
                }
            }
        }
}

/* The one pass: per block of runs, every input's bin once, then every pair's (and counted
 * triple's) cell incremented, directly or through the groups. */
static int count_pass(const cov_data *d, const size_t *inputs, pass_state *s)
{
    const size_t K = s->K, n = d->n_runs;
    grouping gr;
    int rc = grouping_init(&gr, s);
    const size_t blk = gr.n_groups > 0 ? COV_GROUP_BLOCK : COV_BLOCK;
    uint16_t *codes = malloc((K ? K : 1) * blk * sizeof *codes);
    if (rc != COV_OK || codes == NULL) {
        free(codes);
        grouping_free(&gr);
        return COV_ENOMEM;
    }
    for (size_t i0 = 0; i0 < n; i0 += blk) {
        size_t m = n - i0 < blk ? n - i0 : blk;
        for (size_t k = 0; k < K; k++) {
            const double *x = d->col[inputs[k]] + i0;
            uint16_t *ck = codes + k * blk;
            const binner *b = &s->bn[k];
            for (size_t i = 0; i < m; i++) ck[i] = bin_code(b, x[i]);
        }
        if (gr.n_groups > 0) {
            for (size_t g = 0; g < gr.n_groups; g++) {
                uint8_t *gc = gr.gcode + g * COV_GROUP_BLOCK;
                const uint16_t *ca = codes + gr.member[g][0] * blk;
                uint32_t *own = gr.own[g];
                if (gr.member[g][1] == SIZE_MAX) {
                    for (size_t i = 0; i < m; i++) gc[i] = (uint8_t)ca[i];
                } else {
                    const uint16_t *cb = codes + gr.member[g][1] * blk;
                    const size_t w = s->bn[gr.member[g][1]].nb + 1;
                    for (size_t i = 0; i < m; i++) gc[i] = (uint8_t)(ca[i] * w + cb[i]);
                }
                for (size_t i = 0; i < m; i++) own[gc[i]]++;
                uint16_t *gw = gr.grow + g * COV_GROUP_BLOCK;
                for (size_t i = 0; i < m; i++) gw[i] = (uint16_t)(gc[i] * gr.stride);
            }
            /* The scratch table has rows of gr.stride cells, so a run's cell is its first group's
             * precomputed row offset plus its second group's code. The loop is unrolled by four
             * with the addresses formed first, which lets the processor overlap the increments
             * (about a third faster than the plain loop in our measurements). */
            const size_t W = gr.stride;
            for (size_t g1 = 0, q = 0; g1 < gr.n_groups; g1++) {
                const uint16_t *r1 = gr.grow + g1 * COV_GROUP_BLOCK;
                for (size_t g2 = g1 + 1; g2 < gr.n_groups; g2++, q++) {
                    const uint8_t *c2 = gr.gcode + g2 * COV_GROUP_BLOCK;
                    uint32_t *t = gr.joint[q];
                    uint16_t *sc = gr.scratch;
                    const size_t n1 = gr.codes[g1], n2 = gr.codes[g2];
                    memset(sc, 0, n1 * W * sizeof *sc);
                    size_t i = 0;
                    for (; i + 4 <= m; i += 4) {
                        size_t a0 = (size_t)r1[i] + c2[i], a1 = (size_t)r1[i + 1] + c2[i + 1];
                        size_t a2 = (size_t)r1[i + 2] + c2[i + 2], a3 = (size_t)r1[i + 3] + c2[i + 3];
                        sc[a0]++;
                        sc[a1]++;
                        sc[a2]++;
                        sc[a3]++;
                    }
                    for (; i < m; i++) sc[(size_t)r1[i] + c2[i]]++;
                    for (size_t x = 0; x < n1; x++)
                        for (size_t y = 0; y < n2; y++) t[x * n2 + y] += sc[x * W + y];
                }
            }
        } else {
            size_t p = 0;
            for (size_t a = 0; a < K; a++) {
                const uint16_t *ca = codes + a * blk;
                for (size_t b = a + 1; b < K; b++, p++) {
                    const uint16_t *cb = codes + b * blk;
                    uint32_t *cnt = s->pc[p];
                    const size_t stride = s->bn[b].nb + 1;
                    for (size_t i = 0; i < m; i++) cnt[(size_t)ca[i] * stride + cb[i]]++;
                }
            }
        }
        for (size_t t = 0; t < s->n_tri; t++) {
            const uint16_t *ca = codes + s->tri[t][0] * blk;
            const uint16_t *cb = codes + s->tri[t][1] * blk;
            const uint16_t *cc = codes + s->tri[t][2] * blk;
            const size_t sb = s->bn[s->tri[t][1]].nb + 1, sc = s->bn[s->tri[t][2]].nb + 1;
            uint32_t *cnt = s->tc[t];
            for (size_t i = 0; i < m; i++)
                cnt[((size_t)ca[i] * sb + cb[i]) * sc + cc[i]]++;
        }
    }
    if (gr.n_groups > 0) grouping_finish(&gr, s);
    free(codes);
    grouping_free(&gr);
    return COV_OK;
}

/* The runs with every numeric input present and inside its domain; NULL when out of memory. */
static size_t *complete_rows(const cov_graph *g, const cov_data *d, const size_t *numeric,
                             size_t nn, size_t *n_out)
{
    /* Column by column, so each pass streams one column. */
    size_t *rows = malloc((d->n_runs ? d->n_runs : 1) * sizeof *rows), m = 0;
    unsigned char *ok = malloc(d->n_runs ? d->n_runs : 1);
    if (rows == NULL || ok == NULL) {
        free(rows);
        free(ok);
        return NULL;
    }
    memset(ok, 1, d->n_runs);
    for (size_t k = 0; k < nn; k++) {
        const cov_var *v = &g->vars[numeric[k]];
        const double *x = d->col[numeric[k]], lo = v->lo, hi = v->hi;
        for (size_t i = 0; i < d->n_runs; i++) ok[i] &= x[i] >= lo && x[i] <= hi;
    }
    for (size_t i = 0; i < d->n_runs; i++)
        if (ok[i]) rows[m++] = i;
    free(ok);
    *n_out = m;
    return rows;
}

/* A fixed-seed sample of want of the n rows, in run order (Knuth, TAOCP vol. 2, 3.4.2,
 * Algorithm S); a copy of all of them when want >= n. */
static size_t *sample_rows(const size_t *rows, size_t n, size_t want, unsigned long seed,
                           size_t *m_out)
{
    size_t keep = want < n ? want : n, m = 0;
    size_t *out = malloc((keep ? keep : 1) * sizeof *out);
    if (out == NULL) return NULL;
    if (keep == n) {
        memcpy(out, rows, n * sizeof *out);
        *m_out = n;
        return out;
    }
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    if (r == NULL) {
        free(out);
        return NULL;
    }
    gsl_rng_set(r, seed);
    for (size_t i = 0; i < n && m < keep; i++)
        if ((double)(n - i) * gsl_rng_uniform(r) < (double)(keep - m)) out[m++] = rows[i];
    gsl_rng_free(r);
    *m_out = m;
    return out;
}

/* The numeric inputs of the given runs scaled to the unit cube (m x nn, row-major). */
static double *unit_points(const cov_graph *g, const cov_data *d, const size_t *numeric,
                           size_t nn, const size_t *rows, size_t m)
{
    double *pts = malloc((m ? m : 1) * nn * sizeof *pts);
    if (pts == NULL) return NULL;
    for (size_t i = 0; i < m; i++)
        for (size_t k = 0; k < nn; k++) {
            const cov_var *v = &g->vars[numeric[k]];
            pts[i * nn + k] = (d->col[numeric[k]][rows[i]] - v->lo) / (v->hi - v->lo);
        }
    return pts;
}

/* Centred L2 discrepancy of the complete numeric runs; a fixed-seed subsample above the limit.
 * The subsample's CD^2 is compared with random points of the same number: a random subsample of
 * a structured design looks more random than the design, so above the limit the figure mainly
 * detects clumping and empty regions. Then the fill distance and gaps, on a subsample when the
 * probe search would be too long (see coverage/measure/gaps.c). */
static int space_filling(const cov_graph *g, const cov_data *d, unsigned long seed,
                         cov_coverage *c)
{
    const size_t nn = c->n_numeric;
    size_t n = 0, m = 0;
    size_t *rows = NULL, *sub = NULL;
    double *pts = NULL;
    int rc = COV_ENOMEM;
    c->cd_n = 0;
    if (nn == 0) return COV_OK;
    if ((rows = complete_rows(g, d, c->numeric, nn, &n)) == NULL) goto done;
    c->n_complete = n;
    rc = COV_OK;
    if (n == 0) goto done;
    rc = COV_ENOMEM;
    size_t limit = COV_CD_MAX_RUNS;
    if ((double)limit * (double)limit * (double)nn / 2 > COV_CD_MAX_WORK)
        limit = (size_t)sqrt(2 * COV_CD_MAX_WORK / (double)nn);
    if ((sub = sample_rows(rows, n, limit, seed ^ 0xcd2UL, &m)) == NULL) goto done;
    if ((pts = unit_points(g, d, c->numeric, nn, sub, m)) == NULL) goto done;
    c->cd2 = cov_cd2(pts, m, nn);
    /* With m and nn above 0, NAN means cov_cd2 ran out of memory: not a figure to report. */
    if (isnan(c->cd2)) goto done;
    c->cd2_random = cov_cd2_random(m, nn);
    c->cd_subsampled = m < n;
    c->cd_n = m;
    free(sub);
    free(pts);
    sub = NULL, pts = NULL;

    size_t want = cov_gap_runs(n, nn);
    if ((sub = sample_rows(rows, n, want, seed ^ 0x6a95UL, &m)) == NULL) goto done;
    if ((pts = unit_points(g, d, c->numeric, nn, sub, m)) == NULL) goto done;
    c->gaps = malloc(COV_N_GAPS * nn * sizeof *c->gaps);
    c->gap_dist = malloc(COV_N_GAPS * sizeof *c->gap_dist);
    if (c->gaps == NULL || c->gap_dist == NULL) goto done;
    c->n_probes = cov_probe_count(nn);
    rc = cov_fill_gaps(pts, m, nn, seed, COV_N_GAPS, &c->fill_distance, c->gaps, c->gap_dist,
                       &c->n_gaps, &c->gaps_subsampled);
    if (m < n) c->gaps_subsampled = 1;
done:
    free(rows);
    free(sub);
    free(pts);
    return rc;
}

/* Combinatorial coverage after Kuhn, Kacker & Lei (NIST SP 800-142, 2010; NISTIR 7878, 2012): a
 * t-way cell (a "variable-value configuration" of binned inputs) counts as covered when it holds at
 * least min_runs runs. With min_runs = 1 the pooled share over all pairs (triples) is their "total
 * variable-value configuration coverage", and a pair's share is its configuration coverage. */
int cov_coverage_measure(const cov_graph *g, const cov_data *d, const cov_coverage_options *opt,
                         cov_coverage **out, cov_error *err)
{
    int rc = COV_ENOMEM;
    pass_state s;
    memset(&s, 0, sizeof s);
    cov_coverage *c = calloc(1, sizeof *c);
    *out = NULL;
    if (c == NULL) goto fail;
    c->opt = *opt;
    if (opt->min_runs == 0 || opt->bins < 2) {
        rc = cov_fail(err, COV_EINPUT, "", "coverage needs --min-runs >= 1 and --bins >= 2");
        goto fail;
    }
    if (d->n_runs > UINT32_MAX) {
        rc = cov_fail(err, COV_EINPUT, "", "more than %lu runs are not supported",
                      (unsigned long)UINT32_MAX);
        goto fail;
    }
    c->threeway_share = NAN;
    c->cd2 = c->cd2_random = c->fill_distance = NAN;
    c->marginal_share = c->pairwise_share = NAN;

    size_t K = 0, nn = 0;
    for (size_t v = 0; v < g->n_vars; v++)
        if (g->vars[v].role == COV_INPUT) {
            K++;
            if (g->vars[v].type == COV_REAL || g->vars[v].type == COV_INTEGER) nn++;
        }
    c->inputs = malloc((K ? K : 1) * sizeof *c->inputs);
    c->numeric = malloc((nn ? nn : 1) * sizeof *c->numeric);
    c->marginal = calloc(K ? K : 1, sizeof *c->marginal);
    s.bn = calloc(K ? K : 1, sizeof *s.bn);
    if (c->inputs == NULL || c->numeric == NULL || c->marginal == NULL || s.bn == NULL) goto fail;
    for (size_t v = 0; v < g->n_vars; v++)
        if (g->vars[v].role == COV_INPUT) {
            c->inputs[c->n_inputs++] = v;
            if (g->vars[v].type == COV_REAL || g->vars[v].type == COV_INTEGER)
                c->numeric[c->n_numeric++] = v;
            c->n_outside += d->n_outside != NULL ? d->n_outside[v] : 0;
        }
    s.K = K;
    for (size_t k = 0; k < K; k++) {
        const cov_var *v = &g->vars[c->inputs[k]];
        binner *b = &s.bn[k];
        b->var = v;
        b->bins = opt->bins;
        b->type = v->type;
        b->nb = cov_bin_count(v, opt->bins);
        b->exact = v->type == COV_BOOL || v->type == COV_LEVELS || small_integer(v);
        b->lo = v->lo;
        b->hi = v->hi;
        b->scale = (double)b->nb / (v->hi - v->lo);
        if (b->nb == 0 || b->nb >= UINT16_MAX) {
            rc = cov_fail(err, COV_EINPUT, "", "input %s has %zu bins; 1 to %u are supported",
                          v->name, b->nb, (unsigned)UINT16_MAX - 1);
            goto fail;
        }
        if (!b->exact && !(v->lo < v->hi)) {
            rc = cov_fail(err, COV_EINPUT, "", "input %s has no usable domain", v->name);
            goto fail;
        }
    }

    /* Counters: one per pair, and per counted triple. */
    s.n_pairs = K < 2 ? 0 : K * (K - 1) / 2;
    c->n_pairs = s.n_pairs;
    double pair_cells = 0;
    for (size_t a = 0; a < K; a++)
        for (size_t b = a + 1; b < K; b++)
            pair_cells += (double)(s.bn[a].nb + 1) * (double)(s.bn[b].nb + 1);
    if (pair_cells > COV_PAIR_MAX_CELLS) {
        rc = cov_fail(err, COV_EINPUT, "", "%zu inputs at %zu bins need %.3g pair cells (limit "
                      "%.3g): use fewer --bins", K, opt->bins, pair_cells, COV_PAIR_MAX_CELLS);
        goto fail;
    }
    s.pc = calloc(s.n_pairs ? s.n_pairs : 1, sizeof *s.pc);
    c->pairs = calloc(s.n_pairs ? s.n_pairs : 1, sizeof *c->pairs);
    c->worst = malloc((s.n_pairs ? s.n_pairs : 1) * sizeof *c->worst);
    if (s.pc == NULL || c->pairs == NULL || c->worst == NULL) goto fail;
    for (size_t a = 0, p = 0; a < K; a++)
        for (size_t b = a + 1; b < K; b++, p++) {
            s.pc[p] = calloc((s.bn[a].nb + 1) * (s.bn[b].nb + 1), sizeof **s.pc);
            if (s.pc[p] == NULL) goto fail;
        }
    int want3 = opt->way == 3 || (opt->way == 0 && K <= COV_THREEWAY_AUTO_INPUTS);
    if (want3 && K >= 3) {
        if ((rc = choose_triples(&s, K, opt->seed, &c->threeway_sampled)) != COV_OK) goto fail;
        rc = COV_ENOMEM;
        s.tc = calloc(s.n_tri ? s.n_tri : 1, sizeof *s.tc);
        if (s.tc == NULL) goto fail;
        for (size_t t = 0; t < s.n_tri; t++) {
            size_t cells = (s.bn[s.tri[t][0]].nb + 1) * (s.bn[s.tri[t][1]].nb + 1)
                           * (s.bn[s.tri[t][2]].nb + 1);
            s.tc[t] = calloc(cells, sizeof **s.tc);
            if (s.tc[t] == NULL) goto fail;
        }
        c->n_triples = s.n_tri;
    }
    if (count_pass(d, c->inputs, &s) != COV_OK) goto fail;

    /* Marginal counts come from the pair tables' margins when there are pairs (the missing column
     * included), so the runs are read once; a lone input is counted directly. */
    size_t covered = 0, cells = 0;
    for (size_t k = 0; k < K; k++) {
        cov_marginal *mg = &c->marginal[k];
        mg->var = c->inputs[k];
        mg->n_bins = s.bn[k].nb;
        mg->count = calloc(mg->n_bins, sizeof *mg->count);
        if (mg->count == NULL) goto fail;
        if (K == 1) {
            for (size_t i = 0; i < d->n_runs; i++) {
                long bi = cov_bin_of(s.bn[k].var, opt->bins, d->col[mg->var][i]);
                if (bi >= 0) mg->count[bi]++;
            }
        } else {
            /* Pair (k, other): k is the row when it is the smaller position. */
            size_t other = k == 0 ? 1 : 0;
            size_t a = k < other ? k : other, b = k < other ? other : k;
            size_t p = pair_pos(K, a, b);
            size_t sb = s.bn[b].nb + 1;
            for (size_t r = 0; r <= s.bn[a].nb; r++)
                for (size_t q = 0; q < sb; q++) {
                    size_t mine = k == a ? r : q;
                    if (mine < mg->n_bins) mg->count[mine] += s.pc[p][r * sb + q];
                }
        }
        size_t cov_k = 0;
        for (size_t j = 0; j < mg->n_bins; j++) cov_k += mg->count[j] >= opt->min_runs;
        mg->share = mg->n_bins ? (double)cov_k / (double)mg->n_bins : NAN;
        covered += cov_k;
        cells += mg->n_bins;
    }
    c->marginal_share = cells ? (double)covered / (double)cells : NAN;

    covered = cells = 0;
    for (size_t a = 0, p = 0; a < K; a++)
        for (size_t b = a + 1; b < K; b++, p++) {
            cov_pair *pr = &c->pairs[p];
            pr->a = c->inputs[a];
            pr->b = c->inputs[b];
            pr->na = s.bn[a].nb;
            pr->nb = s.bn[b].nb;
            pr->count = malloc(pr->na * pr->nb * sizeof *pr->count);
            if (pr->count == NULL) goto fail;
            size_t cov_p = 0;
            for (size_t i = 0; i < pr->na; i++)
                for (size_t j = 0; j < pr->nb; j++) {
                    size_t x = s.pc[p][i * (pr->nb + 1) + j];
                    pr->count[i * pr->nb + j] = x;
                    cov_p += x >= opt->min_runs;
                    pr->n_empty += x == 0;
                }
            pr->share = (double)cov_p / (double)(pr->na * pr->nb);
            covered += cov_p;
            cells += pr->na * pr->nb;
            c->worst[p] = p;
        }
    c->pairwise_share = cells ? (double)covered / (double)cells : NAN;
    if (c->n_pairs > 1) {
        size_t *tmp = malloc(c->n_pairs * sizeof *tmp);
        if (tmp == NULL) goto fail;
        sort_worst(c->worst, tmp, c->n_pairs, c->pairs);
        free(tmp);
    }

    if (s.n_tri > 0) {
        covered = cells = 0;
        for (size_t t = 0; t < s.n_tri; t++) {
            size_t na = s.bn[s.tri[t][0]].nb, nb = s.bn[s.tri[t][1]].nb;
            size_t nc = s.bn[s.tri[t][2]].nb;
            for (size_t i = 0; i < na; i++)
                for (size_t j = 0; j < nb; j++)
                    for (size_t q = 0; q < nc; q++)
                        covered += s.tc[t][(i * (nb + 1) + j) * (nc + 1) + q] >= opt->min_runs;
            cells += na * nb * nc;
        }
        c->threeway_share = (double)covered / (double)cells;
    }

    if ((rc = cov_dependence_fill(g, d, c)) != COV_OK) goto fail;

    /* Space filling: discrepancy and gaps on the complete numeric runs in the unit cube. */
    if ((rc = space_filling(g, d, opt->seed, c)) != COV_OK) goto fail;
    pass_free(&s);
    *out = c;
    return COV_OK;
fail:
    pass_free(&s);
    cov_coverage_free(c);
    if (rc == COV_ENOMEM) cov_fail(err, COV_ENOMEM, "", "out of memory measuring coverage");
    return rc;
}
