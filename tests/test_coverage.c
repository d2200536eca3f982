/* Tests of input-space coverage, discrepancy, gaps, dependence and claim support.
 * See LICENSE. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_rng.h>
#include <gsl/gsl_test.h>

#include "coverage/plan/plan.h"
#include "coverage/report/report.h"

/* Counting results are exact integers, so shares made from them must equal the rational to the
 * last bit of a double division: tolerance 0 where the value is a ratio of small integers and
 * 4 ulp (about 1e-15) where a formula adds rounding. */
#define TOL_RATIO 1e-15
/* CD^2 sums n^2 products of d factors near 1: each adds about one ulp, so 1e-13 is generous for
 * the n <= 6, d <= 3 sets of tests/REFERENCES.md section 8. */
#define TOL_CD 1e-13

/* ---- building graphs and data in code ---------------------------------------------------------- */

typedef struct {
    cov_graph g;
    cov_data d;
    cov_var vars[32];
    double *cols[32];
    size_t n_missing[32], n_outside[32];
    char names[32][32];
} fixture;

static void fx_init(fixture *f, size_t n_runs)
{
    memset(f, 0, sizeof *f);
    f->g.vars = f->vars;
    f->g.path = "invented";
    f->g.default_effect.value = NAN;
    f->g.margin.value = NAN;
    f->d.n_runs = n_runs;
    f->d.col = f->cols;
    f->d.n_missing = f->n_missing;
    f->d.n_outside = f->n_outside;
}

static char *level_names[] = {"low", "mid", "high", "top", "e", "f", "g", "h"};

/* Add a variable with its column; returns its index. */
static size_t fx_var(fixture *f, const char *name, cov_role role, cov_type type, double lo,
                     double hi)
{
    size_t v = f->g.n_vars++;
    f->d.n_vars = f->g.n_vars;
    cov_var *x = &f->vars[v];
    snprintf(f->names[v], sizeof f->names[v], "%s", name);
    x->name = f->names[v];
    x->role = role;
    x->type = type;
    x->lo = lo;
    x->hi = hi;
    x->noise_sd = NAN;
    if (type == COV_BOOL) x->lo = 0, x->hi = 1;
    if (type == COV_LEVELS) {
        x->levels = level_names;
        x->n_levels = (size_t)hi;
        x->lo = 0;
        x->hi = hi - 1;
    }
    f->cols[v] = calloc(f->d.n_runs ? f->d.n_runs : 1, sizeof(double));
    return v;
}

static void fx_free(fixture *f)
{
    for (size_t v = 0; v < f->g.n_vars; v++) free(f->cols[v]);
}

static cov_coverage_options opts(size_t min_runs, int way)
{
    cov_coverage_options o;
    o.min_runs = min_runs;
    o.bins = 10;
    o.way = way;
    o.dependence_threshold = 0.5;
    o.seed = 20261202UL;
    return o;
}

/* ---- bins --------------------------------------------------------------------------------------- */

static void test_bins(void)
{
    /* Rules of issue 4: 10 equal-width bins with the top edge in the last bin; bools 2; levels L;
     * integers with <= 10 values one bin per value. */
    cov_var r = {.name = "r", .type = COV_REAL, .lo = 0, .hi = 10};
    gsl_test_int((int)cov_bin_count(&r, 10), 10, "bins: real input has --bins bins");
    gsl_test_int((int)cov_bin_of(&r, 10, 0), 0, "bins: lower edge in bin 0");
    gsl_test_int((int)cov_bin_of(&r, 10, 10), 9, "bins: top edge belongs to the last bin");
    gsl_test_int((int)cov_bin_of(&r, 10, 3), 3, "bins: 3 in [3, 4) is bin 3");
    gsl_test_int((int)cov_bin_of(&r, 10, 2.999), 2, "bins: 2.999 in bin 2");
    gsl_test_int((int)cov_bin_of(&r, 10, -0.001), -1, "bins: below the domain is -1");
    gsl_test_int((int)cov_bin_of(&r, 10, 10.001), -1, "bins: above the domain is -1");
    gsl_test_int((int)cov_bin_of(&r, 10, NAN), -1, "bins: missing is -1");
    cov_var i6 = {.name = "i", .type = COV_INTEGER, .lo = 1, .hi = 6};
    gsl_test_int((int)cov_bin_count(&i6, 10), 6, "bins: integer 1..6 has one bin per value");
    gsl_test_int((int)cov_bin_of(&i6, 10, 4), 3, "bins: integer 4 of 1..6 is bin 3");
    gsl_test_int((int)cov_bin_of(&i6, 10, 4.5), -1, "bins: 4.5 is not an integer value");
    cov_var i10 = {.name = "j", .type = COV_INTEGER, .lo = 0, .hi = 9};
    gsl_test_int((int)cov_bin_count(&i10, 4), 10, "bins: integer 0..9 (10 values) is exact");
    cov_var i11 = {.name = "k", .type = COV_INTEGER, .lo = 0, .hi = 10};
    gsl_test_int((int)cov_bin_count(&i11, 4), 4, "bins: integer 0..10 (11 values) uses --bins");
    gsl_test_int((int)cov_bin_of(&i11, 4, 10), 3, "bins: integer top edge in last bin");
    cov_var b = {.name = "b", .type = COV_BOOL, .lo = 0, .hi = 1};
    gsl_test_int((int)cov_bin_count(&b, 10), 2, "bins: bool has 2 bins");
    gsl_test_int((int)cov_bin_of(&b, 10, 1), 1, "bins: true is bin 1");
    char *lv[] = {"a", "b", "c"};
    cov_var l = {.name = "l", .type = COV_LEVELS, .levels = lv, .n_levels = 3, .lo = 0, .hi = 2};
    gsl_test_int((int)cov_bin_count(&l, 10), 3, "bins: level set has one bin per level");
    gsl_test_int((int)cov_bin_of(&l, 10, 2), 2, "bins: level index is its bin");
    gsl_test_int((int)cov_bin_of(&l, 10, 3), -1, "bins: undeclared level index is -1");
}

/* ---- t-way coverage: NIST example and the hand-worked example of tests/REFERENCES.md section 10 ------ */

static size_t pair_index(const cov_coverage *c, size_t a, size_t b)
{
    for (size_t p = 0; p < c->n_pairs; p++)
        if (c->pairs[p].a == a && c->pairs[p].b == b) return p;
    return (size_t)-1;
}

static void test_nist_example(void)
{
    /* Kuhn, Kacker & Lei (2012), NISTIR 7878, example: binary a, b, c, d; tests 0000, 0110, 1001,
     * 0111. NIST: 19 of 24 2-way configurations covered; per pair ab .75 ac .75 ad .75 bc .5
     * bd 1 cd 1. tests/REFERENCES.md section 10 adds 3-way total 15/32. With m = 1 our pooled share is
     * NIST's total variable-value configuration coverage. Tolerance TOL_RATIO: exact ratios. */
    static const double t[4][4] = {{0, 0, 0, 0}, {0, 1, 1, 0}, {1, 0, 0, 1}, {0, 1, 1, 1}};
    fixture f;
    fx_init(&f, 4);
    const char *nm[4] = {"a", "b", "c", "d"};
    for (size_t v = 0; v < 4; v++) {
        fx_var(&f, nm[v], COV_INPUT, COV_BOOL, 0, 1);
        for (size_t i = 0; i < 4; i++) f.cols[v][i] = t[i][v];
    }
    cov_coverage_options o = opts(1, 3);
    cov_coverage *c = NULL;
    cov_error err;
    int rc = cov_coverage_measure(&f.g, &f.d, &o, &c, &err);
    gsl_test_int(rc, COV_OK, "NISTIR 7878 example: coverage measured");
    if (rc == COV_OK) {
        gsl_test_rel(c->pairwise_share, 19.0 / 24.0, TOL_RATIO,
                     "NISTIR 7878 example: total 2-way configuration coverage 19/24");
        static const double want[6] = {0.75, 0.75, 0.75, 0.5, 1.0, 1.0};   /* ab ac ad bc bd cd */
        static const size_t pa[6] = {0, 0, 0, 1, 1, 2}, pb[6] = {1, 2, 3, 2, 3, 3};
        for (size_t k = 0; k < 6; k++) {
            size_t p = pair_index(c, pa[k], pb[k]);
            gsl_test_rel(p < c->n_pairs ? c->pairs[p].share : NAN, want[k], TOL_RATIO,
                         "NISTIR 7878 example: pair %s%s coverage %.2f", nm[pa[k]], nm[pb[k]],
                         want[k]);
        }
        gsl_test_rel(c->threeway_share, 15.0 / 32.0, TOL_RATIO,
                     "tests/REFERENCES.md 10, NIST example: 3-way total coverage 15/32");
        gsl_test_rel(c->marginal_share, 1.0, TOL_RATIO, "NIST example: every value appears");
        size_t w = c->worst[0];
        gsl_test(!(c->pairs[w].a == 1 && c->pairs[w].b == 2),
                 "NIST example: worst pair first is bc (share 0.5)");
        gsl_test_int((int)c->pairs[pair_index(c, 1, 2)].n_empty, 2,
                     "NIST example: bc misses 01 and 10");
    }
    cov_coverage_free(c);

    /* With m = 2 a configuration seen once is not covered. By hand, ab takes 00, 01, 10, 01:
     * only 01 has 2 runs, so 1 of 4 cells is covered. */
    o = opts(2, 2);
    rc = cov_coverage_measure(&f.g, &f.d, &o, &c, &err);
    if (rc == COV_OK) {
        gsl_test_rel(c->pairs[pair_index(c, 0, 1)].share, 0.25, TOL_RATIO,
                     "hand count: pair ab with m = 2 has 1 of 4 cells covered");
        gsl_test(!isnan(c->threeway_share), "--way 2: no 3-way share computed");
    }
    cov_coverage_free(c);
    fx_free(&f);
}

static void test_hand_example(void)
{
    /* tests/REFERENCES.md section 10, hand-worked: a, b in {0,1}, c in {0,1,2}; tests (0,0,0),
     * (0,1,1), (1,0,2), (1,1,0): 2-way total 12/16 = 0.75, ac 4/6, 3-way 4/12, 1-way 1. */
    static const double t[4][3] = {{0, 0, 0}, {0, 1, 1}, {1, 0, 2}, {1, 1, 0}};
    fixture f;
    fx_init(&f, 4);
    fx_var(&f, "a", COV_INPUT, COV_BOOL, 0, 1);
    fx_var(&f, "b", COV_INPUT, COV_INTEGER, 0, 1);
    fx_var(&f, "c", COV_INPUT, COV_LEVELS, 0, 3);
    for (size_t v = 0; v < 3; v++)
        for (size_t i = 0; i < 4; i++) f.cols[v][i] = t[i][v];
    cov_coverage_options o = opts(1, 0);   /* auto: 3 inputs <= 20 adds 3-way */
    cov_coverage *c = NULL;
    cov_error err;
    int rc = cov_coverage_measure(&f.g, &f.d, &o, &c, &err);
    gsl_test_int(rc, COV_OK, "hand example: coverage measured");
    if (rc == COV_OK) {
        gsl_test_rel(c->pairwise_share, 0.75, TOL_RATIO, "hand example: 2-way total 12/16");
        gsl_test_rel(c->pairs[pair_index(c, 0, 2)].share, 4.0 / 6.0, TOL_RATIO,
                     "hand example: pair ac 4/6");
        gsl_test_rel(c->threeway_share, 1.0 / 3.0, TOL_RATIO, "hand example: 3-way 4/12");
        gsl_test_rel(c->marginal_share, 1.0, TOL_RATIO, "hand example: 1-way 1");
        gsl_test_int((int)c->n_numeric, 1, "hand example: one numeric (integer) input");
    }
    cov_coverage_free(c);
    fx_free(&f);
}

static void test_threeway_sampling(void)
{
    /* 25 inputs with --way 3: C(25,3) = 2300 triples exceed the cap of 2000, so a sample is
     * counted and flagged. With every run at all-zero the share is known exactly: 1 of 8 cells
     * per triple, whatever triples the sample picks. */
    fixture f;
    fx_init(&f, 6);
    for (size_t v = 0; v < 25; v++) {
        char nm[24];
        snprintf(nm, sizeof nm, "x%zu", v);
        fx_var(&f, nm, COV_INPUT, COV_BOOL, 0, 1);
    }
    cov_coverage_options o = opts(5, 3);
    cov_coverage *c = NULL;
    cov_error err;
    int rc = cov_coverage_measure(&f.g, &f.d, &o, &c, &err);
    gsl_test_int(rc, COV_OK, "3-way cap: measured");
    if (rc == COV_OK) {
        gsl_test_int(c->threeway_sampled, 1, "3-way cap: 2300 triples are sampled");
        gsl_test_int((int)c->n_triples, 2000, "3-way cap: 2000 triples counted");
        gsl_test_rel(c->threeway_share, 1.0 / 8.0, TOL_RATIO, "3-way cap: constant runs 1/8");
        gsl_test_rel(c->pairwise_share, 0.25, TOL_RATIO, "constant runs: 2-way share 1/4");
        gsl_test(isfinite(c->dependence[1]), "constant inputs: Cramer's V undefined (NAN)");
    }
    cov_coverage_free(c);
    o = opts(5, 0);
    rc = cov_coverage_measure(&f.g, &f.d, &o, &c, &err);
    if (rc == COV_OK)
        gsl_test(!isnan(c->threeway_share), "auto way with 25 inputs (> 20): no 3-way share");
    cov_coverage_free(c);
    fx_free(&f);
}

/* ---- discrepancy ------------------------------------------------------------------------------ */

static void test_discrepancy(void)
{
    /* Exact rationals of tests/REFERENCES.md section 8 (Hickernell 1998 formula, Python fractions). */
    static const double s1[] = {0.5}, s2[] = {0.25, 0.75};
    static const double s3[] = {1. / 8, 3. / 8, 3. / 8, 7. / 8, 5. / 8, 1. / 8, 7. / 8, 5. / 8};
    static const double s5[] = {.1, .5, .9, .3, .9, .3, .5, .1, .7, .7, .7, .1, .9, .3, .5};
    gsl_test_abs(cov_cd2(s1, 1, 1), 1.0 / 12, TOL_CD, "tests/REFERENCES.md 8, S1: CD^2 = 1/12");
    gsl_test_abs(cov_cd2(s2, 2, 1), 1.0 / 48, TOL_CD, "tests/REFERENCES.md 8, S2: CD^2 = 1/48");
    gsl_test_abs(cov_cd2(s3, 4, 2), 1199.0 / 73728, TOL_CD,
                 "tests/REFERENCES.md 8, S3: CD^2 = 1199/73728");
    gsl_test_abs(cov_cd2(s5, 5, 3), 4071281.0 / 135000000, TOL_CD,
                 "tests/REFERENCES.md 8, S5: CD^2 = 4071281/135000000");

    /* S4 (the scipy docstring example) through the whole measure: inputs declared on
     * [0.5, 6.5]^2 so the scaling to the unit cube is exercised; CD^2 = 1013/124416. */
    static const double s4[6][2] = {{1, 3}, {2, 6}, {3, 2}, {4, 5}, {5, 1}, {6, 4}};
    fixture f;
    fx_init(&f, 6);
    fx_var(&f, "u", COV_INPUT, COV_REAL, 0.5, 6.5);
    fx_var(&f, "v", COV_INPUT, COV_REAL, 0.5, 6.5);
    for (size_t i = 0; i < 6; i++) f.cols[0][i] = s4[i][0], f.cols[1][i] = s4[i][1];
    cov_coverage_options o = opts(1, 0);
    cov_coverage *c = NULL;
    cov_error err;
    int rc = cov_coverage_measure(&f.g, &f.d, &o, &c, &err);
    gsl_test_int(rc, COV_OK, "S4: measured");
    if (rc == COV_OK) {
        gsl_test_abs(c->cd2, 1013.0 / 124416, TOL_CD,
                     "tests/REFERENCES.md 8, S4 via scaled domain: CD^2 = 1013/124416");
        gsl_test_int(c->cd_subsampled, 0, "S4: 6 runs are not subsampled");
        gsl_test_rel(c->cd2_random, (pow(1.25, 2) - pow(13. / 12, 2)) / 6, TOL_RATIO,
                     "S4: random expectation for n = 6, d = 2");
    }
    cov_coverage_free(c);
    fx_free(&f);

    /* Monte Carlo check of our derivation E[CD^2] = ((5/4)^d - (13/12)^d) / n for iid uniforms,
     * n = 10, d = 3, 20000 replicates (fixed seed). The mean is compared with the formula within
     * 4.5 Monte Carlo standard errors: a false alarm rate below 1e-5 for a normal mean. The
     * alternative ((19/12)^d - (13/12)^d) / n, three times larger here, must fail the same test. */
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    gsl_rng_set(r, 4242);
    const size_t n = 10, d = 3, reps = 20000;
    double x[30], s = 0, q = 0;
    for (size_t k = 0; k < reps; k++) {
        for (size_t j = 0; j < n * d; j++) x[j] = gsl_rng_uniform(r);
        double v = cov_cd2(x, n, d);
        s += v;
        q += v * v;
    }
    gsl_rng_free(r);
    double mean = s / reps, se = sqrt((q / reps - mean * mean) / reps);
    double want = cov_cd2_random(n, d);
    gsl_test(!(fabs(mean - want) < 4.5 * se),
             "Monte Carlo: mean CD^2 of 10 uniform points in 3-D %.6g matches %.6g (SE %.2g)",
             mean, want, se);
    double other = (pow(19. / 12, 3) - pow(13. / 12, 3)) / n;
    gsl_test(fabs(mean - other) < 4.5 * se,
             "Monte Carlo: the (19/12)^d variant %.6g is rejected", other);
}

/* ---- gaps ------------------------------------------------------------------------------------- */

static void test_gaps(void)
{
    /* One run at the centre of [0,1]: the farthest probe is near a corner, so the fill distance is
     * just under 1/2 (probes are 4096 shifted Sobol points, spacing 2^-12). */
    double centre = 0.5, fill, gaps[20 * 3], gd[20];   /* room for 20 gaps in 3-D below */
    size_t ng;
    int sub;
    int rc = cov_fill_gaps(&centre, 1, 1, 7, 20, &fill, gaps, gd, &ng, &sub);
    gsl_test_int(rc, COV_OK, "fill distance: one run");
    gsl_test_abs(fill, 0.5, 1.0 / 4096, "fill distance: one central run in 1-D, 1/2 within 2^-12");
    gsl_test_int((int)ng, 20, "fill distance: 20 gaps kept");
    gsl_test(!(gd[0] >= gd[19]), "gaps: farthest first");
    gsl_test(!(fabs(gaps[0] - 0.5) == gd[0]), "gaps: distance of the first gap to the run");

    /* The probe points are a (0, m, d)-net in base 2 after the digital shift: in 2-D every one of
     * the 64 x 64 elementary boxes of side 1/64 holds exactly one of 4096 points (Sobol 1967;
     * a digital shift preserves the net property, Dick & Pillichshammer 2010, Lemma 4.3x). */
    double *p = malloc(4096 * 2 * sizeof *p);
    int *box = calloc(64 * 64, sizeof *box), bad = 0;
    if (p != NULL && box != NULL && cov_probe_points(4096, 2, 99, p) == COV_OK) {
        for (size_t i = 0; i < 4096; i++)
            box[(int)(p[2 * i] * 64) * 64 + (int)(p[2 * i + 1] * 64)]++;
        for (size_t k = 0; k < 64 * 64; k++) bad += box[k] != 1;
    } else {
        bad = -1;
    }
    gsl_test_int(bad, 0, "probe set: 4096 shifted Sobol points fill each 1/64 x 1/64 box once");
    free(p);
    free(box);

    /* A k-d tree answer equals brute force on random data (exact: the same distances). */
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    gsl_rng_set(r, 11);
    const size_t n = 3000, d = 3;
    double *pts = malloc(n * d * sizeof *pts), *pr = malloc(4096 * d * sizeof *pr);
    for (size_t i = 0; i < n * d; i++) pts[i] = gsl_rng_uniform(r);
    gsl_rng_free(r);
    rc = cov_fill_gaps(pts, n, d, 5, 20, &fill, gaps, gd, &ng, &sub);
    cov_probe_points(cov_probe_count(d), d, 5, pr);
    double brute = 0;
    for (size_t k = 0; k < cov_probe_count(d); k++) {
        double best = INFINITY;
        for (size_t i = 0; i < n; i++) {
            double s = 0;
            for (size_t j = 0; j < d; j++) s += pow(pr[k * d + j] - pts[i * d + j], 2);
            if (s < best) best = s;
        }
        if (sqrt(best) > brute) brute = sqrt(best);
    }
    gsl_test_rel(fill, brute, 1e-15, "k-d tree fill distance equals brute force (3000 runs, 3-D)");
    free(pts);
    free(pr);
}

/* ---- dependence ------------------------------------------------------------------------------- */

static void test_dependence(void)
{
    /* Hand values: a diagonal table has V = 1; a table with proportional rows has chi2 = 0. The
     * 2x2 table [[10, 20], [30, 40]]: chi2 = 100 (10*40 - 20*30)^2 / (30*70*40*60) = 0.79365...,
     * V = sqrt(chi2 / 100) = 0.0890870806 (phi coefficient; Cramer 1946, sec. 21.9; tests/REFERENCES.md 11). */
    size_t diag[9] = {5, 0, 0, 0, 7, 0, 0, 0, 9}, prop[4] = {2, 4, 3, 6}, t[4] = {10, 20, 30, 40};
    gsl_test_rel(cov_cramer_v(diag, 3, 3), 1.0, 1e-15, "Cramer's V of a diagonal table is 1");
    gsl_test_abs(cov_cramer_v(prop, 2, 2), 0.0, 1e-15, "Cramer's V of proportional rows is 0");
    gsl_test_rel(cov_cramer_v(t, 2, 2), sqrt(100.0 * 40000 / (30.0 * 70 * 40 * 60) / 100), 1e-14,
                 "Cramer's V (phi) of [[10,20],[30,40]] by hand");
    size_t empty_row[6] = {10, 20, 0, 0, 30, 40};
    gsl_test_rel(cov_cramer_v(empty_row, 3, 2), cov_cramer_v(t, 2, 2), 1e-15,
                 "Cramer's V: an empty row is dropped");
    double x[5] = {1, 2, 3, 4, 5}, y[5] = {2, 4, 6, 8, 10.5}, z[5] = {5, 4, 3, 2, 1};
    gsl_test_rel(cov_abs_pearson(x, z, 5), 1.0, 1e-15, "|r| of a reversed sequence is 1");
    /* r(x, y) by hand: y = 2x except the last +0.5. */
    double mx = 3, my = 6.1, sxy = 0, sxx = 0, syy = 0;
    for (int i = 0; i < 5; i++)
        sxy += (x[i] - mx) * (y[i] - my), sxx += pow(x[i] - mx, 2), syy += pow(y[i] - my, 2);
    gsl_test_rel(cov_abs_pearson(x, y, 5), sxy / sqrt(sxx * syy), 1e-14, "|r| by hand formula");

    /* Blocked pass with missing values equals pairwise-complete cov_abs_pearson. */
    fixture f;
    const size_t n = 1000;
    fx_init(&f, n);
    fx_var(&f, "p", COV_INPUT, COV_REAL, 0, 1);
    fx_var(&f, "q", COV_INPUT, COV_REAL, -5, 5);
    fx_var(&f, "s", COV_INPUT, COV_LEVELS, 0, 3);
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    gsl_rng_set(r, 3);
    for (size_t i = 0; i < n; i++) {
        f.cols[0][i] = gsl_rng_uniform(r);
        f.cols[1][i] = 8 * (f.cols[0][i] - 0.5) + gsl_rng_uniform(r) - 0.5;
        f.cols[2][i] = f.cols[0][i] < 0.3 ? 0 : (double)gsl_rng_uniform_int(r, 3);
        if (i % 97 == 5) f.cols[1][i] = NAN;
    }
    gsl_rng_free(r);
    f.n_missing[1] = 11;
    cov_coverage_options o = opts(5, 0);
    cov_coverage *c = NULL;
    cov_error err;
    int rc = cov_coverage_measure(&f.g, &f.d, &o, &c, &err);
    gsl_test_int(rc, COV_OK, "dependence: measured");
    if (rc == COV_OK) {
        gsl_test_rel(c->dependence[0 * 3 + 1], cov_abs_pearson(f.cols[0], f.cols[1], n), 1e-12,
                     "blocked |r| with missing cells equals the two-pass pairwise value");
        gsl_test_rel(c->dependence[0 * 3 + 2],
                     cov_cramer_v(c->pairs[pair_index(c, 0, 2)].count, 10, 3), 1e-15,
                     "numeric x levels pair uses Cramer's V of the binned table");
        gsl_test(!(c->dependence[1] > 0.5), "a strong design dependence is above 0.5");
    }
    cov_coverage_free(c);
    fx_free(&f);
}

/* ---- support ---------------------------------------------------------------------------------- */

/* A claim T -> Y given S (all variables already in f). */
static cov_claim claim_of(size_t t, size_t y, size_t *s, size_t ns)
{
    cov_claim c;
    memset(&c, 0, sizeof c);
    c.kind = COV_CLAIM_EFFECT;
    c.treatment = t;
    c.outcome = y;
    c.cond = s;
    c.n_cond = ns;
    c.effect.value = 0.5;
    c.status = COV_TESTABLE;
    return c;
}

static void test_support_overlap(void)
{
    /* Invented hand example. Z = false: 10 runs, T on in 2 (propensity e = 0.2); Z = true: 10 runs,
     * T on in 5 (e = 0.5). Overlap weights (Li, Morgan & Zaslavsky 2018): treated 1 - e, others e:
     * sum w = 2(0.8) + 8(0.2) + 5(0.5) + 5(0.5) = 8.2, sum w^2 = 2(0.64) + 8(0.04) + 10(0.25) = 4.1,
     * so Kish's ESS (Kish 1965) = 8.2^2 / 4.1 = 16.4. With m = 5 only the Z = true stratum holds
     * both levels 5 times: overlap 10/20 = 0.5. Configurations (T, Z): 4, so 5 runs each. */
    fixture f;
    fx_init(&f, 20);
    size_t T = fx_var(&f, "T", COV_INPUT, COV_BOOL, 0, 1);
    size_t Z = fx_var(&f, "Z", COV_INPUT, COV_BOOL, 0, 1);
    size_t Y = fx_var(&f, "Y", COV_OUTPUT, COV_REAL, NAN, NAN);
    for (size_t i = 0; i < 20; i++) {
        f.cols[Z][i] = i >= 10;
        f.cols[T][i] = i < 10 ? (i < 2) : (i < 15);
        f.cols[Y][i] = (double)i;
    }
    size_t s[1] = {Z};
    cov_claim cl[2] = {claim_of(T, Y, s, 1), claim_of(T, Y, NULL, 0)};
    cl[1].status = COV_UNTESTABLE;
    cl[1].reason = "open path through hidden h";
    cov_claims cs = {cl, 2};
    cov_coverage_options o = opts(5, 0);
    cov_supports *sp = NULL;
    cov_error err;
    int rc = cov_support_measure(&f.g, &cs, &f.d, &o, &sp, &err);
    gsl_test_int(rc, COV_OK, "support: measured");
    if (rc == COV_OK) {
        const cov_support *a = &sp->items[0];
        gsl_test_rel(a->kish_ess, 16.4, 1e-14, "hand example: Kish ESS of overlap weights 16.4");
        gsl_test_rel(a->overlap, 0.5, TOL_RATIO, "hand example: overlap 10/20");
        gsl_test_int(a->ok, 0, "hand example: overlap 0.5 is not enough");
        gsl_test(a->reason == NULL || strstr(a->reason, "T on in only 2 runs at Z=false") == NULL,
                 "hand example: reason names the stratum: %s", a->reason ? a->reason : "(none)");
        gsl_test_int((int)a->distinct, 2, "hand example: 2 distinct treatment values");
        gsl_test_rel(a->runs_per_config, 5.0, TOL_RATIO, "hand example: 5 runs per configuration");
        gsl_test_int(a->pure_error, 1, "hand example: replicates give pure error");
        /* sd(T) with divisor n: 7 of 20 on, sqrt(0.35 * 0.65); sd(T | Z): within-group
         * variances 0.2*0.8 and 0.5*0.5 averaged, sqrt((0.16 + 0.25) / 2). */
        gsl_test_rel(a->spread, sqrt(0.35 * 0.65), 1e-14, "hand example: SD of T");
        gsl_test_rel(a->spread_resid, sqrt((0.16 + 0.25) / 2), 1e-12, "hand example: sd(T | Z)");
        gsl_test_int(sp->items[1].ok, 0, "untestable claim has ok = 0");
        gsl_test(sp->items[1].reason == NULL || strstr(sp->items[1].reason, "hidden h") == NULL,
                 "untestable claim keeps its reason");
    }
    cov_supports_free(sp);

    /* Make T constant: the treatment takes one value. */
    for (size_t i = 0; i < 20; i++) f.cols[T][i] = 1;
    cs.n = 1;
    rc = cov_support_measure(&f.g, &cs, &f.d, &o, &sp, &err);
    if (rc == COV_OK) {
        gsl_test_int((int)sp->items[0].distinct, 1, "constant treatment: 1 distinct value");
        gsl_test(sp->items[0].reason == NULL
                     || strstr(sp->items[0].reason, "takes one value (on)") == NULL,
                 "constant treatment: reason says it takes one value");
    }
    cov_supports_free(sp);
    /* Balanced: every stratum holds 5 on and 5 off -> overlap 1, ok. */
    for (size_t i = 0; i < 20; i++) f.cols[T][i] = (i % 10) < 5;
    rc = cov_support_measure(&f.g, &cs, &f.d, &o, &sp, &err);
    if (rc == COV_OK) {
        gsl_test_rel(sp->items[0].overlap, 1.0, TOL_RATIO, "balanced strata: overlap 1");
        gsl_test_int(sp->items[0].ok, 1, "balanced strata: support ok");
        gsl_test_rel(sp->items[0].kish_ess, 20.0, 1e-14, "balanced: equal weights, ESS = n");
    }
    cov_supports_free(sp);
    fx_free(&f);
}

static void test_support_numeric_and_propensity(void)
{
    /* Numeric treatment almost a copy of S: little spread left once S is known. */
    const size_t n = 400;
    fixture f;
    fx_init(&f, n);
    size_t X = fx_var(&f, "X", COV_INPUT, COV_REAL, 0, 1);
    size_t S[4];
    for (size_t k = 0; k < 4; k++) {
        char nm[24];
        snprintf(nm, sizeof nm, "s%zu", k);
        S[k] = fx_var(&f, nm, COV_INPUT, COV_REAL, 0, 1);
    }
    size_t B = fx_var(&f, "B", COV_INPUT, COV_BOOL, 0, 1);
    size_t Y = fx_var(&f, "Y", COV_OUTPUT, COV_REAL, NAN, NAN);
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    gsl_rng_set(r, 17);
    for (size_t i = 0; i < n; i++) {
        for (size_t k = 0; k < 4; k++) f.cols[S[k]][i] = gsl_rng_uniform(r);
        f.cols[X][i] = f.cols[S[0]][i] + 0.01 * (gsl_rng_uniform(r) - 0.5);
        f.cols[B][i] = f.cols[S[1]][i] > 0.5;   /* separated by s1 */
        f.cols[Y][i] = gsl_rng_uniform(r);
    }
    gsl_rng_free(r);
    size_t one[1] = {S[0]};
    cov_claim cl[3] = {claim_of(X, Y, one, 1), claim_of(B, Y, S, 4), claim_of(B, Y, S, 4)};
    cov_claims cs = {cl, 2};
    cov_coverage_options o = opts(5, 0);
    cov_supports *sp = NULL;
    cov_error err;
    int rc = cov_support_measure(&f.g, &cs, &f.d, &o, &sp, &err);
    gsl_test_int(rc, COV_OK, "support: numeric and propensity measured");
    if (rc == COV_OK) {
        gsl_test_int(sp->items[0].ok, 0, "numeric treatment copied from S: not ok");
        gsl_test(!(sp->items[0].spread_resid < 0.1 * sp->items[0].spread),
                 "numeric treatment: residual spread under a tenth");
        gsl_test(isnan(sp->items[0].overlap) == 0, "numeric treatment: overlap NAN");
        gsl_test(!(sp->items[1].overlap < 0.5),
                 "propensity strata: treatment separated by s1 leaves little overlap (%.2f)",
                 sp->items[1].overlap);
        gsl_test(sp->items[1].reason == NULL
                     || strstr(sp->items[1].reason, "propensity stratum") == NULL,
                 "propensity strata: reason names the stratum: %s",
                 sp->items[1].reason ? sp->items[1].reason : "(none)");
        gsl_test_int((int)sp->items[0].distinct, (int)n, "numeric treatment: all values distinct");
        gsl_test_int(sp->items[0].pure_error, 0, "no repeated configuration: no pure error");
    }
    cov_supports_free(sp);
    /* B independent of S: propensity strata all hold both values. */
    r = gsl_rng_alloc(gsl_rng_mt19937);
    gsl_rng_set(r, 18);
    for (size_t i = 0; i < n; i++) f.cols[B][i] = gsl_rng_uniform(r) < 0.5;
    gsl_rng_free(r);
    rc = cov_support_measure(&f.g, &cs, &f.d, &o, &sp, &err);
    if (rc == COV_OK) {
        gsl_test_rel(sp->items[1].overlap, 1.0, TOL_RATIO, "propensity strata: random B overlaps");
        gsl_test_int(sp->items[1].ok, 1, "propensity strata: support ok");
    }
    cov_supports_free(sp);
    fx_free(&f);
}

static void test_support_few_runs(void)
{
    /* Four members of S give 5 propensity-model columns; with 6 runs no model is fitted and the
     * runs form one stratum. T is on in 3 and off in 3, fewer than m = 5 each: overlap 0. */
    fixture f;
    fx_init(&f, 6);
    size_t T = fx_var(&f, "T", COV_INPUT, COV_BOOL, 0, 1);
    size_t S[4];
    for (size_t k = 0; k < 4; k++) {
        char nm[24];
        snprintf(nm, sizeof nm, "s%zu", k);
        S[k] = fx_var(&f, nm, COV_INPUT, COV_REAL, 0, 1);
    }
    size_t Y = fx_var(&f, "Y", COV_OUTPUT, COV_REAL, NAN, NAN);
    for (size_t i = 0; i < 6; i++) {
        f.cols[T][i] = i % 2;
        for (size_t k = 0; k < 4; k++) f.cols[S[k]][i] = (double)((i * (k + 3)) % 7) / 7;
        f.cols[Y][i] = (double)i;
    }
    cov_claim cl = claim_of(T, Y, S, 4);
    cov_claims cs = {&cl, 1};
    cov_coverage_options o = opts(5, 0);
    cov_supports *sp = NULL;
    cov_error err;
    int rc = cov_support_measure(&f.g, &cs, &f.d, &o, &sp, &err);
    gsl_test_int(rc, COV_OK, "6 runs, 4 members of S: support measured without a model");
    if (rc == COV_OK) {
        gsl_test_abs(sp->items[0].overlap, 0.0, 0, "6 runs: 3 on and 3 off, m = 5: overlap 0");
        gsl_test(sp->items[0].reason == NULL
                     || strstr(sp->items[0].reason, "all runs together") == NULL,
                 "6 runs: reason says the runs were judged together: %s",
                 sp->items[0].reason ? sp->items[0].reason : "(none)");
    }
    cov_supports_free(sp);
    fx_free(&f);
}

static void test_logit(void)
{
    /* A saturated model has the closed-form MLE (McCullagh & Nelder 1989, sec. 4.5): with an
     * intercept and one 0/1 covariate, b0 = logit(p0) and b1 = logit(p1) - logit(p0), the sample
     * shares of y = 1 in each group. Invented data: group 0 has 3 of 10, group 1 has 7 of 8. The
     * IRLS stops at a relative deviance change of 1e-10, so coefficients agree to about 1e-8. */
    double X[36], y[18];
    for (int i = 0; i < 18; i++) {
        X[2 * i] = 1;
        X[2 * i + 1] = i >= 10;
        y[i] = i < 10 ? (i < 3) : (i < 17);
    }
    double coef[2], prob[18];
    int it = 0;
    int rc = pw_logit_fit(X, y, 18, 2, coef, prob, &it);
    gsl_test_int(rc, PW_OK, "logit IRLS converges on a saturated model");
    gsl_test_rel(coef[0], log(0.3 / 0.7), 1e-8, "logit: intercept = logit(3/10)");
    gsl_test_rel(coef[1], log(7.0) - log(0.3 / 0.7), 1e-8, "logit: slope = logit(7/8) - logit(3/10)");
    gsl_test_rel(prob[12], 7.0 / 8, 1e-9, "logit: fitted probability is the group share");
    double bad[2] = {0, 2};
    gsl_test_int(pw_logit_fit(X, bad, 2, 2, NULL, NULL, NULL), PW_EFEW, "logit: n <= p is PW_EFEW");
    double y2[18];
    for (int i = 0; i < 18; i++) y2[i] = i == 4 ? 0.5 : 0;
    gsl_test_int(pw_logit_fit(X, y2, 18, 2, NULL, NULL, NULL), PW_EDOM, "logit: y must be 0/1");
    for (int i = 0; i < 18; i++) X[2 * i + 1] = 1;   /* aliased with the intercept */
    gsl_test_int(pw_logit_fit(X, y, 18, 2, NULL, NULL, NULL), PW_ESING,
                 "logit: aliased columns are PW_ESING");
}

static void test_kish(void)
{
    /* Kish (1965): (sum w)^2 / sum w^2. Hand: w = (0.2, 0.5, 0.5, 0.8): 2^2 / 1.18 = 3.3898305085
     * (tests/REFERENCES.md 11). */
    double w[4] = {0.2, 0.5, 0.5, 0.8}, z[2] = {0, 0};
    gsl_test_rel(cov_kish_ess(w, 4), 4.0 / 1.18, 1e-15, "Kish ESS hand example 4/1.18");
    gsl_test(!isnan(cov_kish_ess(z, 2)), "Kish ESS of zero weights is NAN");
}

int main(void)
{
    gsl_set_error_handler_off();
    gsl_test_verbose(1);
    test_bins();
    test_nist_example();
    test_hand_example();
    test_threeway_sampling();
    test_discrepancy();
    test_gaps();
    test_dependence();
    test_kish();
    test_logit();
    test_support_overlap();
    test_support_numeric_and_propensity();
    test_support_few_runs();
    return gsl_test_summary();
}
