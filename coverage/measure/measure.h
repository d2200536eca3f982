/* shoal coverage/measure/: measures of the campaign: coverage, discrepancy, gaps, dependence, support. Private to coverage/.
 * See LICENSE. */
#ifndef SHOAL_COVERAGE_MEASURE_H
#define SHOAL_COVERAGE_MEASURE_H

#include <stdint.h>
#include <stdio.h>
#include <string.h>

#include "coverage/archive/archive.h"

/* ---- hashing values (coverage/measure/summary.c's distinct counts, support.c's tuples) -------- */

/* splitmix64's finaliser (Steele, Lea & Flood 2014): a bijection of 64-bit words that spreads the
 * bits of a word over the word. Inline: the distinct counts call it once per value. */
static inline uint64_t cov_mix64(uint64_t z)
{
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ULL;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBULL;
    return z ^ (z >> 31);
}

/* The bits of a number for hashing, -0 as +0 (one value). */
static inline uint64_t cov_value_bits(double x)
{
    double v = x == 0 ? 0.0 : x;
    uint64_t b;
    memcpy(&b, &v, sizeof b);
    return b;
}

/* ---- coverage and support (coverage/space.c, coverage/support.c, ...) ------------------------- */

/* Centred L2 discrepancy squared (Hickernell 1998) of n points in [0,1]^d, row-major; O(n^2 d).
 * Returns NAN when n or d is 0. */
double cov_cd2(const double *x, size_t n, size_t d);
/* Expected CD^2 of n independent uniform points in [0,1]^d: ((5/4)^d - (13/12)^d) / n (derived in
 * coverage/discrepancy.c). */
double cov_cd2_random(size_t n, size_t d);

/* Probe points for the fill distance: n points of [0,1)^d, row-major, a randomized low-discrepancy
 * sequence fixed by seed (coverage/gaps.c says which). Returns COV_OK, COV_ENOMEM. */
int cov_probe_points(size_t n, size_t d, unsigned long seed, double *out);
/* Probe points the fill distance uses for d numeric inputs. */
size_t cov_probe_count(size_t d);
/* Runs cov_fill_gaps measures distances to when given n runs in d dimensions: n, or the size of
 * the fixed-seed subsample that keeps the search within its work limit. */
size_t cov_gap_runs(size_t n, size_t d);

/* Fill distance of the n runs pts (row-major, n x d, unit cube) over cov_probe_count(d) probes:
 * the largest distance from a probe to its nearest run, and up to max_gaps probes farthest from
 * any run (gaps: max_gaps x d, gap_dist: max_gaps; written farthest first). *subsampled is 1 when
 * the distances were measured to a fixed-seed random subsample of the runs (an upper bound).
 * Returns COV_OK, COV_ENOMEM. */
int cov_fill_gaps(const double *pts, size_t n, size_t d, unsigned long seed, size_t max_gaps,
                  double *fill, double *gaps, double *gap_dist, size_t *n_gaps, int *subsampled);

/* Cramer's V (Cramer 1946) of an na x nb table of counts, row-major; empty rows and columns are
 * dropped; no bias correction. NAN when fewer than two non-empty rows or columns remain. */
double cov_cramer_v(const size_t *count, size_t na, size_t nb);
/* |Pearson r| of x and y over the indices where both are finite; NAN when a side is constant. */
double cov_abs_pearson(const double *x, const double *y, size_t n);
/* Fill c->dependence from c->pairs and the data (coverage/dependence.c). */
int cov_dependence_fill(const cov_graph *g, const cov_data *d, cov_coverage *c);

/* cov_support_measure with the runs' cross-products already summed by cov_xshare_build of the
 * same g and d (NULL: summed here); the same figures bit for bit either way. */
int cov_support_measure_shared(const cov_graph *g, const cov_claims *c, const cov_data *d,
                               const cov_coverage_options *opt, const cov_xshare *shared,
                               cov_supports **out, cov_error *err);

/* Shared summaries of the archive for every claim's support (coverage/measure/summary.c): the
 * centred cross-products of every complete, non-level-set variable, merged shard by shard
 * (Chan, Golub & LeVeque 1983), and the distinct values of the variables asked for. */
typedef struct {
    const cov_data *d;
    size_t *col;          /* cross-product column of each variable; SIZE_MAX when not summarised */
    pw_moments *xprod;    /* NULL when nothing is summarised */
    size_t *distinct;     /* per variable: its distinct values when asked for, else 0 */
} cov_summary;

/* Summarise d on up to `threads` threads; want_distinct (length d->n_vars, may be NULL when no
 * counts are wanted) marks the summarised variables whose distinct values to count. The figures do
 * not depend on the thread count. Returns COV_OK or COV_ENOMEM. */
int cov_summary_build(const cov_graph *g, const cov_data *d, const unsigned char *want_distinct,
                      int threads, cov_summary **out);
/* The same with the cross-products taken from the shared pass (cov_xshare_build of the same g and
 * d; NULL: summed here): the same figures bit for bit. */
int cov_summary_build_shared(const cov_graph *g, const cov_data *d,
                             const unsigned char *want_distinct, int threads,
                             const cov_xshare *shared, cov_summary **out);
void cov_summary_free(cov_summary *s);

/* Kish's effective sample size (Kish 1965) of weights w: (sum w)^2 / sum w^2; NAN when all are 0. */
double cov_kish_ess(const double *w, size_t n);

/* The coverage gates (coverage/measure/gates.c): 0 when every --need-* share o asks for is met by
 * cv; else 1, with the first missed gate described in buf (size bytes). A share that was not
 * measured (too few inputs or runs) misses its gate, and the message says it was not measured. */
int cov_coverage_gate_missed(const cov_options *o, const cov_coverage *cv, char *buf, size_t size);

#endif
