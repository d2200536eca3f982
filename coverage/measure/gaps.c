/* Fill distance and the largest empty places of the numeric input space, on a probe set.
 * See LICENSE. */
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_qrng.h>
#include <gsl/gsl_rng.h>

#include "coverage/measure/measure.h"

/* gsl_qrng_sobol supports up to 40 dimensions (GSL 2.7 manual, "Quasi-Random Sequences"); above
 * that the probes come from gsl_qrng_halton (up to 1229 dimensions). */
#define COV_SOBOL_MAX_DIMS 40
/* Probe points: 4096 = 2^12 keeps Sobol's balance properties (a power of two) and, with the k-d
 * tree, costs milliseconds; above COV_KD_USEFUL_DIMS the tree prunes little, so fewer probes. */
#define COV_PROBES_LOW 4096
#define COV_PROBES_HIGH 1024
#define COV_KD_USEFUL_DIMS 12
/* Distance work (probes x runs x dimensions) allowed before the runs are subsampled: a fraction
 * of a second of brute-force search where the tree cannot prune. */
#define COV_GAP_MAX_WORK 1e8
/* Runs per leaf of the k-d tree: small enough to prune, large enough to amortise recursion. */
#define COV_KD_LEAF 16

size_t cov_probe_count(size_t d)
{
    return d <= COV_KD_USEFUL_DIMS ? COV_PROBES_LOW : COV_PROBES_HIGH;
}

/* Randomization (fixed by seed, so reports are reproducible):
 * - up to 40 dimensions, Sobol points (Bratley & Fox 1988, ACM TOMS 659, as in gsl_qrng_sobol)
 *   with a random digital shift: the first 32 binary digits of each coordinate XORed with a random
 *   32-bit mask per dimension (Dick & Pillichshammer 2010, "Digital Nets and Sequences", sec. 4.4).
 *   A digital shift keeps the net's stratification, unlike a plain random rotation; it is not
 *   Owen's full nested scrambling.
 * - above 40, Halton points with a Cranley-Patterson rotation (Cranley & Patterson 1976, SIAM
 *   J. Numer. Anal. 13:904-914): a random shift per dimension added modulo 1. */
int cov_probe_points(size_t n, size_t d, unsigned long seed, double *out)
{
    if (d == 0 || n == 0) return COV_OK;
    int sobol = d <= COV_SOBOL_MAX_DIMS;
    gsl_qrng *q = gsl_qrng_alloc(sobol ? gsl_qrng_sobol : gsl_qrng_halton, (unsigned)d);
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    uint32_t *mask = malloc(d * sizeof *mask);
    double *shift = malloc(d * sizeof *shift);
    if (q == NULL || r == NULL || mask == NULL || shift == NULL) {
        gsl_qrng_free(q);
        gsl_rng_free(r);
        free(mask);
        free(shift);
        return COV_ENOMEM;
    }
    gsl_rng_set(r, seed ^ 0x9a95UL);
    for (size_t k = 0; k < d; k++) {
        mask[k] = (uint32_t)(gsl_rng_get(r) & 0xffffffffUL);   /* mt19937 yields 32 bits */
        shift[k] = gsl_rng_uniform(r);
    }
    const double two32 = 4294967296.0;
    for (size_t i = 0; i < n; i++) {
        double *p = out + i * d;
        /* gsl_qrng_sobol starts at the sequence's second point; the first is the origin, and
         * with it the first 2^m points form a (t, m, d)-net. */
        if (sobol && i == 0) memset(p, 0, d * sizeof *p);
        else gsl_qrng_get(q, p);
        for (size_t k = 0; k < d; k++) {
            if (sobol) {
                double u = floor(p[k] * two32);
                if (u >= two32) u = two32 - 1;
                uint32_t bits = (uint32_t)u ^ mask[k];
                p[k] = ((double)bits + 0.5) / two32;   /* centre of the 2^-32 cell */
            } else {
                p[k] += shift[k];
                if (p[k] >= 1) p[k] -= 1;
            }
        }
    }
    gsl_qrng_free(q);
    gsl_rng_free(r);
    free(mask);
    free(shift);
    return COV_OK;
}

/* A k-d tree (Bentley 1975, CACM 18:509-517) stored implicitly: the points are permuted so that
 * the node over [lo, hi) splits at m = (lo + hi) / 2 on dimension dim[m], with the median point at
 * m; [lo, m) lies at or below it and [m, hi) at or above. Nearest-neighbour search descends the
 * near side first and visits the far side only when the splitting plane is closer than the best
 * distance so far (Friedman, Bentley & Finkel 1977, ACM TOMS 3:209-226). */
typedef struct {
    size_t n, d;
    double *pts;          /* n x d, tree order */
    unsigned char *dim;   /* split dimension per internal node, at its m */
    double *split;        /* split value per internal node, at its m (the children's own splits
                             move the median row, so the value is kept here) */
} kdtree;

static double coord(const double *pts, size_t d, size_t i, size_t k) { return pts[i * d + k]; }

static void swap_rows(double *pts, size_t d, size_t i, size_t j, double *tmp)
{
    memcpy(tmp, pts + i * d, d * sizeof *tmp);
    memcpy(pts + i * d, pts + j * d, d * sizeof *tmp);
    memcpy(pts + j * d, tmp, d * sizeof *tmp);
}

/* Quickselect (Hoare 1961, CACM Algorithm 65 "FIND") on rows [lo, hi) by coordinate k, so that the
 * row at m holds the value it would hold if sorted. */
static void select_rows(double *pts, size_t d, size_t lo, size_t hi, size_t m, size_t k,
                        double *tmp)
{
    while (hi - lo > 1) {
        size_t mid = lo + (hi - lo) / 2;
        /* Median of three as pivot, moved to lo. */
        double a = coord(pts, d, lo, k), b = coord(pts, d, mid, k), c = coord(pts, d, hi - 1, k);
        size_t piv = (a < b) ? ((b < c) ? mid : (a < c ? hi - 1 : lo))
                             : ((a < c) ? lo : (b < c ? hi - 1 : mid));
        swap_rows(pts, d, lo, piv, tmp);
        double pv = coord(pts, d, lo, k);
        size_t i = lo + 1, j = hi - 1;
        for (;;) {
            while (i <= j && coord(pts, d, i, k) < pv) i++;
            while (i <= j && coord(pts, d, j, k) > pv) j--;
            if (i >= j) break;
            swap_rows(pts, d, i, j, tmp);
            i++;
            j--;
        }
        swap_rows(pts, d, lo, j, tmp);   /* pivot to its final place j */
        if (j == m) return;
        if (m < j) hi = j;
        else lo = j + 1;
    }
}

/* Split rows [lo, hi) at the median of the widest side of their cell: the cell is the root's
 * bounding box narrowed by the splits above (cell_lo, cell_hi; restored on return), so no node
 * scans its rows for their extent. The tree only prunes the search: any choice of splits gives
 * the same nearest distances. */
static void kd_build(kdtree *t, size_t lo, size_t hi, double *tmp, double *cell_lo,
                     double *cell_hi)
{
    if (hi - lo <= COV_KD_LEAF) return;
    const size_t d = t->d;
    size_t best = 0;
    for (size_t k = 1; k < d; k++)
        if (cell_hi[k] - cell_lo[k] > cell_hi[best] - cell_lo[best]) best = k;
    size_t m = lo + (hi - lo) / 2;
    select_rows(t->pts, d, lo, hi, m, best, tmp);
    t->dim[m] = (unsigned char)best;
    double split = t->split[m] = coord(t->pts, d, m, best), keep = cell_hi[best];
    cell_hi[best] = split;
    kd_build(t, lo, m, tmp, cell_lo, cell_hi);
    cell_hi[best] = keep;
    keep = cell_lo[best];
    cell_lo[best] = split;
    kd_build(t, m, hi, tmp, cell_lo, cell_hi);
    cell_lo[best] = keep;
}

static void kd_nearest(const kdtree *t, size_t lo, size_t hi, const double *q, double *best2)
{
    const size_t d = t->d;
    if (hi - lo <= COV_KD_LEAF) {
        for (size_t i = lo; i < hi; i++) {
            const double *p = t->pts + i * d;
            double s = 0;
            for (size_t k = 0; k < d && s < *best2; k++) {   /* partial distance: stop early */
                double diff = p[k] - q[k];
                s += diff * diff;
            }
            if (s < *best2) *best2 = s;
        }
        return;
    }
    size_t m = lo + (hi - lo) / 2;
    size_t k = t->dim[m];
    double diff = q[k] - t->split[m];
    if (diff < 0) {
        kd_nearest(t, lo, m, q, best2);
        if (diff * diff < *best2) kd_nearest(t, m, hi, q, best2);
    } else {
        kd_nearest(t, m, hi, q, best2);
        if (diff * diff < *best2) kd_nearest(t, lo, m, q, best2);
    }
}

size_t cov_gap_runs(size_t n, size_t d)
{
    size_t np = cov_probe_count(d);
    if (d <= COV_KD_USEFUL_DIMS || (double)np * (double)n * (double)d <= COV_GAP_MAX_WORK) return n;
    size_t keep = (size_t)(COV_GAP_MAX_WORK / ((double)np * (double)d));
    return keep < 1 ? 1 : keep;
}

int cov_fill_gaps(const double *pts, size_t n, size_t d, unsigned long seed, size_t max_gaps,
                  double *fill, double *gaps, double *gap_dist, size_t *n_gaps, int *subsampled)
{
    int rc = COV_ENOMEM;
    kdtree t = {0, d, NULL, NULL, NULL};
    double *probe = NULL, *dist = NULL, *tmp = NULL, *bmin = NULL, *bmax = NULL;
    size_t *order = NULL;
    gsl_rng *r = NULL;
    *fill = NAN;
    *n_gaps = 0;
    *subsampled = 0;
    if (n == 0 || d == 0) return COV_OK;
    if (d > 255) return COV_EINPUT;   /* dim[] holds a byte; callers stay far below */
    size_t np = cov_probe_count(d);

    /* Runs to search: all of them, or a fixed-seed subsample (Knuth's Algorithm S) when the tree
     * cannot prune and the brute-force work would pass COV_GAP_MAX_WORK. */
    size_t keep = cov_gap_runs(n, d);
    *subsampled = keep < n;
    t.pts = malloc(keep * d * sizeof *t.pts);
    t.dim = calloc(keep, 1);
    t.split = malloc(keep * sizeof *t.split);
    probe = malloc(np * d * sizeof *probe);
    dist = malloc(np * sizeof *dist);
    order = malloc(np * sizeof *order);
    tmp = malloc(d * sizeof *tmp);
    bmin = malloc(d * sizeof *bmin);
    bmax = malloc(d * sizeof *bmax);
    if (t.pts == NULL || t.dim == NULL || t.split == NULL || probe == NULL || dist == NULL || order == NULL
        || tmp == NULL || bmin == NULL || bmax == NULL)
        goto fail;
    if (keep == n) {
        memcpy(t.pts, pts, n * d * sizeof *t.pts);
    } else {
        r = gsl_rng_alloc(gsl_rng_mt19937);
        if (r == NULL) goto fail;
        gsl_rng_set(r, seed ^ 0x6a95UL);
        size_t m = 0;
        for (size_t i = 0; i < n && m < keep; i++)
            if ((double)(n - i) * gsl_rng_uniform(r) < (double)(keep - m))
                memcpy(t.pts + d * m++, pts + d * i, d * sizeof *t.pts);
        keep = m;
    }
    t.n = keep;
    for (size_t k = 0; k < d; k++) bmin[k] = INFINITY, bmax[k] = -INFINITY;
    for (size_t i = 0; i < keep; i++)
        for (size_t k = 0; k < d; k++) {
            double x = coord(t.pts, d, i, k);
            if (x < bmin[k]) bmin[k] = x;
            if (x > bmax[k]) bmax[k] = x;
        }
    kd_build(&t, 0, keep, tmp, bmin, bmax);
    if ((rc = cov_probe_points(np, d, seed, probe)) != COV_OK) goto fail;

    double worst = 0;
    for (size_t p = 0; p < np; p++) {
        double best2 = INFINITY;
        kd_nearest(&t, 0, keep, probe + p * d, &best2);
        dist[p] = sqrt(best2);
        if (dist[p] > worst) worst = dist[p];
        order[p] = p;
    }
    *fill = worst;
    /* The max_gaps farthest probes, farthest first (selection by repeated maximum: max_gaps is
     * small). Ties keep the probe order. */
    size_t ng = max_gaps < np ? max_gaps : np;
    for (size_t g = 0; g < ng; g++) {
        size_t arg = g;
        for (size_t p = g + 1; p < np; p++)
            if (dist[order[p]] > dist[order[arg]]
                || (dist[order[p]] == dist[order[arg]] && order[p] < order[arg]))
                arg = p;
        size_t sw = order[g];
        order[g] = order[arg];
        order[arg] = sw;
        memcpy(gaps + g * d, probe + order[g] * d, d * sizeof *gaps);
        gap_dist[g] = dist[order[g]];
    }
    *n_gaps = ng;
    rc = COV_OK;
fail:
    gsl_rng_free(r);
    free(t.pts);
    free(t.dim);
    free(t.split);
    free(probe);
    free(dist);
    free(order);
    free(tmp);
    free(bmin);
    free(bmax);
    return rc;
}
