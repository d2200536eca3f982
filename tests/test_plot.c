/* Tests of the survey plots and the gnuplot pipe, on invented findings built by hand.
 * See LICENSE. */
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_test.h>

#include "coverage/plan/plan.h"
#include "coverage/report/report.h"

/* ---- an invented campaign: four inputs, two outputs, names chosen to break naive quoting ----- */

#define N_RUNS 90
#define N_VARS 6
#define N_INPUTS 4
#define MIN_RUNS 5
#define BINS 10

static const char *const NAME_ODD = "it's;\"odd\"";
static const char *const NAME_SCRIPT = "<script>";
static const char *const LEVEL_ODD = "a_b^c";   /* enhanced text would set b as a subscript */

static const char *const LEVEL_PCT = "100% high";   /* a tic label is a format to gnuplot */

static char *levels_script[3] = {"low", "a_b^c", "100% high"};

static cov_var vars[N_VARS] = {
    {"rate", COV_INPUT, COV_REAL, 0, 10, NULL, 0, NAN, 0, NAN, 1, 1, NULL, 0, NULL, 0},
    {"it's;\"odd\"", COV_INPUT, COV_BOOL, 0, 1, NULL, 0, NAN, 0, NAN, 2, 1, NULL, 0, NULL, 0},
    {"<script>", COV_INPUT, COV_LEVELS, 0, 2, levels_script, 3, NAN, 0, NAN, 3, 1, NULL, 0, NULL, 0},
    {"batch", COV_INPUT, COV_INTEGER, 1, 5, NULL, 0, NAN, 0, NAN, 4, 1, NULL, 0, NULL, 0},
    {"wait", COV_OUTPUT, COV_REAL, NAN, NAN, NULL, 0, 1.0, 0, NAN, 5, 1, NULL, 0, NULL, 0},
    {"cost", COV_OUTPUT, COV_REAL, NAN, NAN, NULL, 0, 2.0, 0, NAN, 6, 1, NULL, 0, NULL, 0},
};

static cov_graph graph = {.path = "invented.graph", .vars = vars, .n_vars = N_VARS,
                          .default_effect = {0.25, COV_UNIT_SD, COV_PER_UNIT, NAN},
                          .margin = {0.1, COV_UNIT_SD, COV_PER_UNIT, NAN}};

static double columns[N_VARS][N_RUNS];
static double *colp[N_VARS];

/* A fixed linear congruential stream (Knuth, TAOCP vol. 2, MMIX constants): reproducible runs. */
static unsigned long long lcg_state = 20261202ULL;
static double uniform01(void)
{
    lcg_state = lcg_state * 6364136223846793005ULL + 1442695040888963407ULL;
    return (double)(lcg_state >> 11) / 9007199254740992.0;
}

/* Runs that leave gaps: rate mostly below 6, level "high" rare, batch 5 never used. */
static void make_runs(void)
{
    for (size_t i = 0; i < N_RUNS; i++) {
        columns[0][i] = 6.0 * uniform01() + (i % 9 == 0 ? 3.5 : 0.0);
        columns[1][i] = uniform01() < 0.5 ? 0 : 1;
        double u = uniform01();
        columns[2][i] = u < 0.55 ? 0 : u < 0.93 ? 1 : 2;
        columns[3][i] = 1 + floor(4 * uniform01());
        columns[4][i] = 0.3 * columns[0][i] + uniform01();
        columns[5][i] = columns[2][i] + uniform01();
    }
    columns[0][3] = NAN;   /* a missing cell must simply be left out */
    for (size_t v = 0; v < N_VARS; v++) colp[v] = columns[v];
}

/* This test's own binning, the rule of coverage.h: bools 2 bins, level sets L, integers with at
 * most 10 values one per value, else BINS equal-width bins. */
static size_t nbins(const cov_var *v)
{
    if (v->type == COV_BOOL) return 2;
    if (v->type == COV_LEVELS) return v->n_levels;
    if (v->type == COV_INTEGER && v->hi - v->lo + 1 <= 10) return (size_t)(v->hi - v->lo + 1);
    return BINS;
}

static long bin(const cov_var *v, double x)
{
    if (!isfinite(x)) return -1;
    size_t n = nbins(v);
    if (v->type == COV_BOOL || v->type == COV_LEVELS) return (long)x;
    if (v->type == COV_INTEGER && n == (size_t)(v->hi - v->lo + 1)) return (long)(x - v->lo);
    long b = (long)floor((x - v->lo) / (v->hi - v->lo) * (double)n);
    return b >= (long)n ? (long)n - 1 : b;
}

static size_t inputs[N_INPUTS] = {0, 1, 2, 3};
static cov_pair pairs[6];
static size_t worst[6];
static size_t counts[6][BINS * BINS];
static cov_coverage coverage;

static void make_coverage(void)
{
    size_t k = 0;
    for (size_t a = 0; a < N_INPUTS; a++)
        for (size_t b = a + 1; b < N_INPUTS; b++, k++) {
            cov_pair *p = &pairs[k];
            p->a = a;
            p->b = b;
            p->na = nbins(&vars[a]);
            p->nb = nbins(&vars[b]);
            p->count = counts[k];
            for (size_t i = 0; i < N_RUNS; i++) {
                long ia = bin(&vars[a], columns[a][i]), ib = bin(&vars[b], columns[b][i]);
                if (ia >= 0 && ib >= 0) p->count[(size_t)ia * p->nb + (size_t)ib]++;
            }
            size_t covered = 0;
            for (size_t c = 0; c < p->na * p->nb; c++) {
                covered += p->count[c] >= MIN_RUNS;
                p->n_empty += p->count[c] == 0;
            }
            p->share = (double)covered / (double)(p->na * p->nb);
            worst[k] = k;
        }
    /* Worst share first (insertion sort over six pairs). */
    for (size_t i = 1; i < 6; i++)
        for (size_t j = i; j > 0 && pairs[worst[j]].share < pairs[worst[j - 1]].share; j--) {
            size_t t = worst[j];
            worst[j] = worst[j - 1];
            worst[j - 1] = t;
        }
    coverage.opt.min_runs = MIN_RUNS;
    coverage.opt.bins = BINS;
    coverage.inputs = inputs;
    coverage.n_inputs = N_INPUTS;
    coverage.pairs = pairs;
    coverage.n_pairs = 6;
    coverage.worst = worst;
}

#define N_CLAIMS 6
static cov_claim claim_items[N_CLAIMS] = {
    {COV_CLAIM_EFFECT, 0, 4, NULL, 0, {0.2, COV_UNIT_RAW, COV_PER_UNIT, NAN}, 1, COV_TESTABLE, NULL, 1, NULL, 0, 0, COV_SHAPE_MONOTONE},
    {COV_CLAIM_EFFECT, 1, 4, NULL, 0, {0.5, COV_UNIT_RAW, COV_PER_UNIT, NAN}, 0, COV_TESTABLE, NULL, 1, NULL, 0, 0, COV_SHAPE_MONOTONE},
    {COV_CLAIM_EFFECT, 2, 5, NULL, 0, {0.8, COV_UNIT_RAW, COV_PER_UNIT, NAN}, 0, COV_TESTABLE, NULL, 1, NULL, 0, 0, COV_SHAPE_MONOTONE},
    {COV_CLAIM_EFFECT, 3, 5, NULL, 0, {0.3, COV_UNIT_RAW, COV_PER_UNIT, NAN}, 0, COV_TESTABLE, NULL, 1, NULL, 0, 0, COV_SHAPE_MONOTONE},
    {COV_CLAIM_ABSENCE, 0, 5, NULL, 0, {0.1, COV_UNIT_SD, COV_PER_UNIT, NAN}, 0, COV_TESTABLE, NULL, 1, NULL, 0, 0, COV_SHAPE_MONOTONE},
    {COV_CLAIM_ABSENCE, 3, 4, NULL, 0, {0.1, COV_UNIT_SD, COV_PER_UNIT, NAN}, 0, COV_UNTESTABLE,
     "open path through hidden load", 0, NULL, 0, 0, COV_SHAPE_MONOTONE},
};
static cov_claims claims = {claim_items, N_CLAIMS};

static cov_assessment assess_items[N_CLAIMS];
static cov_assessments assessments;

/* Hand-made figures of the kind cov_assess writes; power from pw_power on the same design, so the
 * bars and the curves agree. */
static void make_assessments(void)
{
    const double effect[N_CLAIMS] = {0.25, 0.5, 0.8, 0.3, 0.15, 0.1};
    const double sd_x[N_CLAIMS] = {1.7, 0.5, 0.75, 1.1, 1.7, 1.1};
    const double sigma[N_CLAIMS] = {1.0, 1.0, 2.0, 2.0, 2.0, 1.0};
    assessments.opt.alpha = 0.05;
    assessments.opt.target = 0.80;
    assessments.opt.bonferroni = 1;
    assessments.n_testable = 5;
    assessments.items = assess_items;
    assessments.n = N_CLAIMS;
    for (size_t k = 0; k < N_CLAIMS; k++) {
        cov_assessment *it = &assess_items[k];
        it->claim = k;
        it->n = N_RUNS - 1;
        it->df = (double)it->n - 2;
        it->sigma = sigma[k];
        it->sd_treatment_resid = sd_x[k];
        it->vif = 1;
        it->effect_raw = effect[k];
        it->alpha = 0.05 / 5;
        it->power = it->power_lo = it->power_hi = NAN;
        it->mde = it->mde_lo = it->mde_hi = it->runs_needed = NAN;
        if (k == 5) {
            it->verdict = COV_BLIND;
            continue;
        }
        pw_design d = {.test = claim_items[k].kind == COV_CLAIM_ABSENCE ? PW_TEST_TOST
                                                                         : PW_TEST_COEF_T,
                       .alpha = it->alpha, .sides = 2, .target = 0.80, .effect = effect[k],
                       .sigma = sigma[k], .sd_x_resid = sd_x[k], .n = (double)it->n,
                       .n_params = 1, .ncp_per_run = NAN};
        if (vars[claim_items[k].treatment].type == COV_LEVELS) {
            d.test = PW_TEST_LEVELS_F;
            d.n_levels = 3;
        }
        pw_power(&d, &it->power);
        pw_mde(&d, &it->mde);
        pw_runs_needed(&d, &it->runs_needed);
        it->power_lo = fmax(0, it->power - 0.08);
        it->power_hi = fmin(1, it->power + 0.08);
        it->mde_lo = it->mde * 0.85;
        it->mde_hi = it->mde * 1.2;
        it->verdict = it->power >= 0.80 ? COV_AMPLE : COV_UNDERPOWERED;
        it->has_design = 1;
        it->design = d;
    }
}

static double planned[3 * N_VARS];

static cov_findings findings(size_t n_planned)
{
    for (size_t i = 0; i < 3; i++) {
        double row[N_VARS] = {7.5 + i, (double)(i % 2), 2, 5, NAN, NAN};
        memcpy(&planned[i * N_VARS], row, sizeof row);
    }
    static cov_options opt;
    cov_options_default(&opt);
    static cov_data data;
    data.n_runs = N_RUNS;
    data.n_vars = N_VARS;
    data.col = colp;
    cov_findings f = {&opt, &graph, &claims, &data, &assessments, &coverage, NULL,
                      n_planned ? planned : NULL, n_planned, NULL, 0};
    return f;
}

/* ---- helpers --------------------------------------------------------------------------------- */

static char *slurp(const char *path, size_t *len)
{
    FILE *f = fopen(path, "rb");
    if (f == NULL) return NULL;
    char *buf = NULL;
    size_t cap = 0, n = 0;
    for (;;) {
        if (n + 4096 + 1 > cap) {
            cap = 2 * cap + 8192;
            char *nb = realloc(buf, cap);
            if (nb == NULL) break;
            buf = nb;
        }
        size_t r = fread(buf + n, 1, 4096, f);
        n += r;
        if (r == 0) break;
    }
    fclose(f);
    if (buf) buf[n] = '\0';
    if (len) *len = n;
    return buf;
}

static char *quoted(const char *s)
{
    char *out = NULL;
    size_t len = 0;
    FILE *m = open_memstream(&out, &len);
    cov_gp_quote(m, s);
    fclose(m);
    return out;
}

/* The string as gnuplot 5.4's svg terminal writes text: '&' and '<' as entities, the rest as is. */
static void xml_text(const char *s, char *out, size_t size)
{
    size_t n = 0;
    for (; *s && n + 6 < size; s++) {
        if (*s == '&') n += (size_t)snprintf(out + n, size - n, "&amp;");
        else if (*s == '<') n += (size_t)snprintf(out + n, size - n, "&lt;");
        else out[n++] = *s;
    }
    out[n] = '\0';
}

static int file_nonempty(const char *path)
{
    struct stat st;
    return stat(path, &st) == 0 && st.st_size > 0;
}

/* ---- the tests ------------------------------------------------------------------------------- */

/* Quoting by the rule of the gnuplot 5.4 manual ("Syntax: quote marks"): in a single-quoted string
 * only '' is special. Exact expected strings, written out by hand. */
static void test_quote(void)
{
    struct { const char *in, *want, *desc; } cases[] = {
        {"it's;\"odd\"", "'it''s;\"odd\"'", "quote doubled, semicolon and double quotes kept"},
        {"<script>", "'<script>'", "angle brackets pass (gnuplot escapes them in SVG)"},
        {"a\nb\tc\x7f", "'a?b?c?'", "control characters replaced: no line break reaches gnuplot"},
        {"\xc3\xa9t\xc3\xa9", "'\xc3\xa9t\xc3\xa9'", "valid UTF-8 kept"},
        {"x\xff\xc0\xafy", "'x???y'", "invalid UTF-8 bytes and an overlong form replaced"},
        {"`touch x` @GPVAL_TERM \\n", "'`touch x` @GPVAL_TERM \\n'",
         "backquote, macro, backslash kept"},
        {"''", "''''''", "two quotes become four inside the literal"},
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        char *q = quoted(cases[i].in);
        gsl_test(q == NULL || strcmp(q, cases[i].want) != 0, "cov_gp_quote: %s (got %s)",
                 cases[i].desc, q ? q : "(null)");
        free(q);
    }
    char *t = NULL;
    size_t tlen = 0;
    FILE *m = open_memstream(&t, &tlen);
    cov_gp_quote_tic(m, "it's 5%");
    fclose(m);
    gsl_test(t == NULL || strcmp(t, "'it''s 5%%'") != 0, "cov_gp_quote_tic doubles %% too (got %s)",
             t ? t : "(null)");
    free(t);
    t = NULL;
    m = open_memstream(&t, &tlen);
    cov_gp_quote_path(m, "/tmp/it's/\xff.svg");
    fclose(m);
    gsl_test(t == NULL || strcmp(t, "'/tmp/it''s/\xff.svg'") != 0,
             "cov_gp_quote_path keeps a file name's bytes, doubling the quote");
    free(t);
    char *q = quoted(NULL);
    gsl_test(q == NULL || strcmp(q, "''") != 0, "cov_gp_quote: NULL is the empty literal");
    free(q);
}

/* Round trip through gnuplot itself (the Debian gnuplot-nox 5.4 package is the reference): every
 * tricky string set as a label must come out literally in the SVG, and a backquoted command must
 * not run. */
static void test_round_trip(const char *tmp)
{
    const char *strings[] = {"it's;\"odd\"", "<script>alert(1)</script>", "a_b^c {x} @GPVAL_TERM",
                             "`touch pwned-by-plot` & \\n", "\xc3\xa9t\xc3\xa9 # not a comment"};
    size_t ns = sizeof strings / sizeof strings[0];
    char *script = NULL;
    size_t len = 0;
    FILE *m = open_memstream(&script, &len);
    fprintf(m, "set encoding utf8\nset terminal svg size 400,300 noenhanced\nset output ");
    char path[1024];
    snprintf(path, sizeof path, "%s/round.svg", tmp);
    cov_gp_quote(m, path);
    fputs("\nset multiplot\n", m);
    for (size_t i = 0; i < ns; i++) {
        fprintf(m, "set label %zu ", i + 1);
        cov_gp_quote(m, strings[i]);
        fprintf(m, " at graph 0.1, graph %.2f\n", 0.9 - 0.15 * (double)i);
    }
    fputs("plot x notitle\nunset multiplot\nset output\n", m);
    fclose(m);
    char cwd[1024];
    if (getcwd(cwd, sizeof cwd) == NULL) cwd[0] = '\0';
    if (chdir(tmp) != 0) gsl_test(1, "chdir to the scratch directory");
    cov_error err = {{0}, {0}};
    int rc = cov_gp_run(script, len, NULL, &err);
    gsl_test_int(rc, COV_OK, "gnuplot runs a script of quoted tricky strings cleanly (%s)",
                 err.msg);
    struct stat st;
    gsl_test(stat("pwned-by-plot", &st) == 0,
             "a backquoted command in a quoted string does not run");
    if (cwd[0] && chdir(cwd) != 0) gsl_test(1, "chdir back");
    char *svg = slurp(path, NULL);
    gsl_test(svg == NULL, "gnuplot wrote the round-trip SVG");
    for (size_t i = 0; svg && i < ns; i++) {
        char want[256];
        xml_text(strings[i], want, sizeof want);
        gsl_test(strstr(svg, want) == NULL, "round trip: \"%s\" appears literally in the SVG as %s",
                 strings[i], want);
    }
    gsl_test(svg && strstr(svg, "<script") != NULL, "round trip: no raw <script in the SVG");
    free(svg);
    free(script);
}

static const char *const expected[] = {"graph", "pairs", "pair-1", "pair-2", "pair-3",
                                       "pair-4", "power", "mde", "curves"};
#define N_EXPECTED (sizeof expected / sizeof expected[0])

static void test_list(void)
{
    cov_findings f = findings(0);
    cov_plots *p = NULL;
    cov_error err = {{0}, {0}};
    int rc = cov_plot_list(&f, &p, &err);
    gsl_test_int(rc, COV_OK, "cov_plot_list succeeds");
    if (rc != COV_OK) return;
    gsl_test_int((int)p->n, (int)N_EXPECTED,
                 "cov_plot_list: graph, matrix, 4 thin pairs, power, MDE, curves");
    for (size_t i = 0; i < p->n && i < N_EXPECTED; i++) {
        gsl_test(strcmp(p->items[i].name, expected[i]) != 0, "plot %zu is named %s (got %s)", i + 1,
                 expected[i], p->items[i].name);
        gsl_test(strlen(p->items[i].caption) < 40, "plot %s has a caption", expected[i]);
    }
    cov_plots_free(p);

    /* No testable claim and one input: nothing to draw, and cov_plot_all does not need gnuplot. */
    cov_assessments none = assessments;
    none.n = 0;
    cov_coverage one = coverage;
    one.n_inputs = 1;
    one.n_pairs = 0;
    f.assess = &none;
    f.coverage = &one;
    rc = cov_plot_list(&f, &p, &err);
    gsl_test(rc != COV_OK || p->n != 1 || strcmp(p->items[0].name, "graph") != 0,
             "cov_plot_list: only the graph without pairs or testable claims");
    cov_plots_free(p);
}

static int is_svg(const char *text)
{
    return text && strstr(text, "<svg") && strstr(text, "</svg>");
}

/* Draw every plot of f into dir and check that it succeeds and gnuplot warns of nothing. */
static void plot_quietly(const cov_findings *f, const char *dir, const char *what)
{
    cov_error err = {{0}, {0}};
    char *note_text = NULL;
    size_t note_len = 0;
    FILE *note = open_memstream(&note_text, &note_len);
    int rc = cov_plot_all(f, dir, note, &err);
    fclose(note);
    gsl_test_int(rc, COV_OK, "%s: cov_plot_all succeeds (%s)", what, err.msg);
    gsl_test(note_len != 0, "%s: gnuplot printed no warning (%s)", what,
             note_text ? note_text : "");
    free(note_text);
}

static void test_all(const char *dir, size_t n_planned, const char *what)
{
    cov_findings f = findings(n_planned);
    plot_quietly(&f, dir, what);
    int odd_seen = 0, script_seen = 0, level_seen = 0, pct_seen = 0, raw_script = 0;
    int planned_seen = 0;
    char odd_xml[64], script_xml[64];
    xml_text(NAME_ODD, odd_xml, sizeof odd_xml);
    xml_text(NAME_SCRIPT, script_xml, sizeof script_xml);
    for (size_t i = 0; i < N_EXPECTED; i++) {
        char path[1024];
        snprintf(path, sizeof path, "%s/%s.svg", dir, expected[i]);
        char *svg = slurp(path, NULL);
        gsl_test(!is_svg(svg), "%s: %s.svg exists and holds <svg ... </svg>", what, expected[i]);
        if (svg) {
            odd_seen |= strstr(svg, odd_xml) != NULL;
            script_seen |= strstr(svg, script_xml) != NULL;
            level_seen |= strstr(svg, LEVEL_ODD) != NULL;
            pct_seen |= strstr(svg, LEVEL_PCT) != NULL;
            raw_script |= strstr(svg, "<script") != NULL;
            planned_seen |= strstr(svg, "planned runs") != NULL;
        }
        free(svg);
        snprintf(path, sizeof path, "%s/%s.png", dir, expected[i]);
        size_t len = 0;
        char *png = slurp(path, &len);
        /* The PNG signature, ISO/IEC 15948:2003 section 5.2 (PNG specification). */
        static const unsigned char sig[8] = {0x89, 'P', 'N', 'G', '\r', '\n', 0x1A, '\n'};
        gsl_test(png == NULL || len < 1000 || memcmp(png, sig, 8) != 0,
                 "%s: %s.png exists, starts with the PNG signature and is not a stub (%zu bytes)",
                 what, expected[i], len);
        free(png);
    }
    gsl_test(!odd_seen, "%s: the name %s appears literally in the SVGs", what, NAME_ODD);
    gsl_test(!script_seen, "%s: the name <script> appears XML-escaped as %s", what, script_xml);
    gsl_test(raw_script, "%s: no raw <script reaches any SVG", what);
    gsl_test(!level_seen, "%s: the level a_b^c is shown as typed (no enhanced text)", what);
    gsl_test(!pct_seen, "%s: the level '%s' is shown with its %% sign", what, LEVEL_PCT);
    gsl_test(planned_seen != (n_planned > 0), "%s: planned runs are %s", what,
             n_planned ? "drawn and named in a legend" : "absent when none are planned");
}

/* Edge cases that must not make gnuplot warn: every claim ample (no runs needed, so no marks),
 * no run data at all (nothing to scatter), one claim without an MDE. */
static void test_quiet_edges(const char *tmp)
{
    cov_assessment items[N_CLAIMS];
    memcpy(items, assess_items, sizeof items);
    for (size_t k = 0; k < N_CLAIMS; k++) {
        if (items[k].verdict == COV_BLIND) continue;
        items[k].verdict = COV_AMPLE;
        items[k].power = 0.95;
        items[k].runs_needed = (double)items[k].n - 10;
        items[k].design.effect *= 4;
    }
    items[2].mde = items[2].mde_lo = items[2].mde_hi = NAN;
    cov_assessments a = assessments;
    a.items = items;
    cov_findings f = findings(0);
    f.assess = &a;
    f.data = NULL;
    char dir[1200];
    snprintf(dir, sizeof dir, "%s/edges", tmp);
    mkdir(dir, 0700);
    plot_quietly(&f, dir, "edge cases");
    for (size_t i = 0; i < N_EXPECTED; i++) {
        char path[1300];
        snprintf(path, sizeof path, "%s/%s.svg", dir, expected[i]);
        char *svg = slurp(path, NULL);
        gsl_test(!is_svg(svg), "edge cases: %s.svg is well formed", expected[i]);
        if (svg && strcmp(expected[i], "mde") == 0)
            gsl_test(strstr(svg, "(no MDE)") == NULL, "edge cases: a claim without MDE says so");
        free(svg);
    }
}

/* A larger invented campaign: 24 real inputs, two outputs, 48 claims, 276 pairs. The row plots
 * must keep to their 30 worst claims and say so; the matrix drops its per-cell labels. */
#define BIG_IN 24
#define BIG_VARS (BIG_IN + 2)
#define BIG_RUNS 300
#define BIG_CLAIMS (2 * BIG_IN)
#define BIG_PAIRS (BIG_IN * (BIG_IN - 1) / 2)
static void test_big(const char *tmp)
{
    static cov_var bv[BIG_VARS];
    static char names[BIG_VARS][16];
    static double cols[BIG_VARS][BIG_RUNS];
    static double *bcol[BIG_VARS];
    static size_t bin_in[BIG_IN], bworst[BIG_PAIRS], bcounts[BIG_PAIRS][BINS * BINS];
    static cov_pair bpairs[BIG_PAIRS];
    static cov_claim bclaims[BIG_CLAIMS];
    static cov_assessment bitems[BIG_CLAIMS];
    for (size_t v = 0; v < BIG_VARS; v++) {
        if (v < BIG_IN) snprintf(names[v], sizeof names[v], "knob_%02zu", v);
        else snprintf(names[v], sizeof names[v], "out_%zu", v - BIG_IN);
        bv[v] = (cov_var){names[v], v < BIG_IN ? COV_INPUT : COV_OUTPUT, COV_REAL, 0, 1, NULL, 0,
                          1.0, 0, NAN, (int)v + 1, 1, NULL, 0, NULL, 0};
        for (size_t i = 0; i < BIG_RUNS; i++) cols[v][i] = uniform01() * (v % 2 ? 0.7 : 1.0);
        bcol[v] = cols[v];
    }
    cov_graph bg = {.path = "invented-big.graph", .vars = bv, .n_vars = BIG_VARS,
                    .default_effect = {0.25, COV_UNIT_SD, COV_PER_UNIT, NAN},
                    .margin = {0.1, COV_UNIT_SD, COV_PER_UNIT, NAN}};
    size_t k = 0;
    for (size_t a = 0; a < BIG_IN; a++) {
        bin_in[a] = a;
        for (size_t b = a + 1; b < BIG_IN; b++, k++) {
            cov_pair *p = &bpairs[k];
            *p = (cov_pair){a, b, BINS, BINS, bcounts[k], 0, 0};
            for (size_t i = 0; i < BIG_RUNS; i++) {
                long ia = bin(&bv[a], cols[a][i]), ib = bin(&bv[b], cols[b][i]);
                if (ia >= 0 && ib >= 0) p->count[(size_t)ia * BINS + (size_t)ib]++;
            }
            size_t covered = 0;
            for (size_t c = 0; c < BINS * BINS; c++) {
                covered += p->count[c] >= MIN_RUNS;
                p->n_empty += p->count[c] == 0;
            }
            p->share = (double)covered / (BINS * BINS);
            bworst[k] = k;
        }
    }
    for (size_t i = 1; i < BIG_PAIRS; i++)
        for (size_t j = i; j > 0 && bpairs[bworst[j]].share < bpairs[bworst[j - 1]].share; j--) {
            size_t t = bworst[j];
            bworst[j] = bworst[j - 1];
            bworst[j - 1] = t;
        }
    cov_coverage bc = coverage;
    bc.inputs = bin_in;
    bc.n_inputs = BIG_IN;
    bc.pairs = bpairs;
    bc.n_pairs = BIG_PAIRS;
    bc.worst = bworst;
    for (size_t c = 0; c < BIG_CLAIMS; c++) {
        bclaims[c] = (cov_claim){COV_CLAIM_EFFECT, c % BIG_IN, BIG_IN + c / BIG_IN, NULL, 0,
                                 {0.2, COV_UNIT_RAW, COV_PER_UNIT, NAN}, 0, COV_TESTABLE, NULL, 1, NULL, 0, 0, COV_SHAPE_MONOTONE};
        cov_assessment *it = &bitems[c];
        memset(it, 0, sizeof *it);
        it->claim = c;
        it->n = BIG_RUNS;
        it->effect_raw = 0.05 + 0.01 * (double)c;
        it->alpha = 0.05 / BIG_CLAIMS;
        pw_design d = {.test = PW_TEST_COEF_T, .alpha = it->alpha, .sides = 2, .target = 0.8,
                       .effect = it->effect_raw, .sigma = 1, .sd_x_resid = 0.29, .n = BIG_RUNS,
                       .n_params = 1, .ncp_per_run = NAN};
        pw_power(&d, &it->power);
        pw_mde(&d, &it->mde);
        pw_runs_needed(&d, &it->runs_needed);
        it->power_lo = it->power_hi = it->power;
        it->mde_lo = it->mde_hi = it->mde;
        it->verdict = it->power >= 0.8 ? COV_AMPLE : COV_UNDERPOWERED;
        it->has_design = 1;
        it->design = d;
    }
    cov_claims bcl = {bclaims, BIG_CLAIMS};
    cov_assessments ba = assessments;
    ba.items = bitems;
    ba.n = BIG_CLAIMS;
    ba.n_testable = BIG_CLAIMS;
    cov_data bd = {0};
    bd.n_runs = BIG_RUNS;
    bd.n_vars = BIG_VARS;
    bd.col = bcol;
    cov_options opt;
    cov_options_default(&opt);
    cov_findings f = {&opt, &bg, &bcl, &bd, &ba, &bc, NULL, NULL, 0, NULL, 0};

    char dir[1200];
    snprintf(dir, sizeof dir, "%s/big", tmp);
    mkdir(dir, 0700);
    plot_quietly(&f, dir, "24 inputs, 48 claims");
    for (size_t i = 0; i < N_EXPECTED; i++) {
        char path[1300];
        snprintf(path, sizeof path, "%s/%s.svg", dir, expected[i]);
        char *svg = slurp(path, NULL);
        gsl_test(!is_svg(svg), "24 inputs, 48 claims: %s.svg is well formed", expected[i]);
        if (svg && (strcmp(expected[i], "power") == 0 || strcmp(expected[i], "mde") == 0)) {
            gsl_test(strstr(svg, "the 30 worst of 48") == NULL,
                     "24 inputs, 48 claims: %s shows the 30 worst claims and says so", expected[i]);
            /* The first claims have the smallest effects, hence the lowest power: claim 0 is
             * shown, claim 47 (the largest effect, the highest power) is not. */
            gsl_test(strstr(svg, "knob_00 -&gt; out_0") == NULL &&
                         strstr(svg, "knob_00 -> out_0") == NULL,
                     "24 inputs, 48 claims: %s shows the weakest claim", expected[i]);
            gsl_test(strstr(svg, "knob_23 -> out_1") != NULL, "24 inputs, 48 claims: %s leaves out "
                     "the strongest claim", expected[i]);
        }
        free(svg);
    }
}

static void test_no_gnuplot(const char *tmp)
{
    char empty[1024], out[1024], fake[1024], noexec[1024];
    snprintf(empty, sizeof empty, "%s/empty-path", tmp);
    snprintf(out, sizeof out, "%s/no-plots", tmp);
    snprintf(fake, sizeof fake, "%s/fake-path", tmp);
    snprintf(noexec, sizeof noexec, "%s/noexec-path", tmp);
    mkdir(empty, 0700);
    mkdir(out, 0700);
    mkdir(fake, 0700);
    mkdir(noexec, 0700);
    const char *old = getenv("PATH");
    char *saved = strdup(old ? old : "");
    cov_findings f = findings(0);
    cov_error err = {{0}, {0}};

    setenv("PATH", empty, 1);
    int rc = cov_plot_all(&f, out, NULL, &err);
    gsl_test_int(rc, COV_ENOPLOT, "PATH without gnuplot: cov_plot_all returns COV_ENOPLOT");
    gsl_test(strstr(err.msg, "gnuplot") == NULL || strstr(err.msg, "PATH") == NULL,
             "PATH without gnuplot: the message names gnuplot and PATH (%s)", err.msg);
    char path[1200];
    snprintf(path, sizeof path, "%s/pairs.svg", out);
    gsl_test(file_nonempty(path), "PATH without gnuplot: no plot file is written");

    /* A file named gnuplot that is not executable is not gnuplot. */
    char file[1200];
    snprintf(file, sizeof file, "%s/gnuplot", noexec);
    FILE *g = fopen(file, "w");
    if (g) { fputs("#!/bin/sh\nexit 0\n", g); fclose(g); }
    chmod(file, 0600);
    setenv("PATH", noexec, 1);
    char found[1024];
    gsl_test(cov_gp_find(found, sizeof found) == 0, "cov_gp_find skips a gnuplot without x bit");

    /* A gnuplot that fails: its status and last message line reach the error. */
    snprintf(file, sizeof file, "%s/gnuplot", fake);
    g = fopen(file, "w");
    if (g) {
        fputs("#!/bin/sh\necho 'first line' >&2\necho 'fake plotter broke' >&2\nexit 3\n", g);
        fclose(g);
    }
    chmod(file, 0700);
    setenv("PATH", fake, 1);
    memset(&err, 0, sizeof err);
    rc = cov_plot_all(&f, out, NULL, &err);
    gsl_test_int(rc, COV_ENOPLOT, "failing gnuplot: cov_plot_all returns COV_ENOPLOT");
    gsl_test(strstr(err.msg, "exit status 3") == NULL ||
                 strstr(err.msg, "fake plotter broke") == NULL,
             "failing gnuplot: the message gives its status and last line (%s)", err.msg);

    setenv("PATH", saved, 1);
    free(saved);

    /* A real gnuplot error (undefined variable) is reported, not swallowed. */
    memset(&err, 0, sizeof err);
    const char *bad = "print 1\nplot no_such_variable_here\n";
    rc = cov_gp_run(bad, strlen(bad), NULL, &err);
    gsl_test_int(rc, COV_ENOPLOT, "gnuplot error: cov_gp_run returns COV_ENOPLOT");
    gsl_test(strstr(err.msg, "no_such_variable_here") == NULL &&
                 strstr(err.msg, "undefined") == NULL,
             "gnuplot error: its message is passed on (%s)", err.msg);

    /* With descriptors 3..9 taken, the shell cannot name one for gnuplot's messages: the failure
     * must still be reported, by its exit status. */
    FILE *hold[8];
    size_t n_hold = 0;
    while (n_hold < 8 && (hold[n_hold] = fopen("/dev/null", "r")) != NULL) n_hold++;
    memset(&err, 0, sizeof err);
    rc = cov_gp_run(bad, strlen(bad), NULL, &err);
    gsl_test(rc != COV_ENOPLOT || strstr(err.msg, "exit status 1") == NULL,
             "gnuplot error with no free low descriptor: still COV_ENOPLOT with the status (%s)",
             err.msg);
    for (size_t i = 0; i < n_hold; i++) fclose(hold[i]);
}

int main(void)
{
    gsl_test_verbose(1);
    gsl_set_error_handler_off();
    make_runs();
    make_coverage();
    make_assessments();

    test_quote();
    test_list();

    char tmpl[] = "/tmp/shoal-plot-XXXXXX";
    char *tmp = mkdtemp(tmpl);
    if (tmp == NULL) {
        gsl_test(1, "mkdtemp: %s", strerror(errno));
        return gsl_test_summary();
    }
    char found[4096];
    if (cov_gp_find(found, sizeof found) != 0) {
        printf("SKIP: gnuplot is not on PATH; the plots themselves are not tested\n");
    } else {
        test_round_trip(tmp);
        char dir[1200];
        /* A directory whose name needs quoting, like the variables, and is not UTF-8. */
        snprintf(dir, sizeof dir, "%s/it's;dir-\xe9", tmp);
        mkdir(dir, 0700);
        test_all(dir, 0, "no plan");
        snprintf(dir, sizeof dir, "%s/planned", tmp);
        mkdir(dir, 0700);
        test_all(dir, 3, "with a plan");
        test_quiet_edges(tmp);
        test_big(tmp);
    }
    test_no_gnuplot(tmp);
    if (getenv("SHOAL_KEEP_PLOTS") == NULL) {
        char cmd[1200];
        snprintf(cmd, sizeof cmd, "rm -rf '%s'", tmp);   /* mkdtemp's name holds no quote */
        if (system(cmd) != 0) printf("note: could not remove %s\n", tmp);
    } else {
        printf("note: plots kept in %s\n", tmp);
    }
    return gsl_test_summary();
}
