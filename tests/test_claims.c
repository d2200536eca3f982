/* Tests of d-separation, minimal separators and claims on the worked examples E1-E4 of
 * tests/REFERENCES.md section 9, written as graph files. See LICENSE. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_test.h>

#include "coverage/plan/plan.h"
#include "coverage/report/report.h"

/* Sources: tests/REFERENCES.md section 9 "Worked examples" (each verified there with networkx 2.8.8
 * d_separated, a moral-graph test and Bayes-ball), its minimal separators found by FindMinSep
 * (van der Zander, Liskiewicz & Textor 2019) and its Shipley (2000) basis of E4. The answers are
 * true/false and sets, compared exactly: no tolerance applies. */

static cov_graph *parse(const char *name, const char *text)
{
    cov_graph *g = NULL;
    cov_error err;
    int rc = cov_graph_parse_text(name, text, &g, &err);
    gsl_test_int(rc, COV_OK, "claims: %s parses (%s %s)", name, rc ? err.where : "",
                 rc ? err.msg : "");
    return g;
}

/* Mark the comma-separated names of list in z (length d->n). */
static void mark(const cov_graph *g, const cov_dag *d, const char *list, unsigned char *z)
{
    memset(z, 0, d->n);
    char buf[256];
    snprintf(buf, sizeof buf, "%s", list);
    for (char *tok = strtok(buf, ","); tok != NULL; tok = strtok(NULL, ",")) {
        long k = cov_graph_find(g, tok);
        if (k >= 0) z[k] = 1;
    }
}

/* One row of the worked-example table: x and y d-separated given z, expected true or false. */
static void query(const cov_graph *g, const cov_dag *d, const char *ex, const char *x,
                  const char *y, const char *z, int expect)
{
    unsigned char in_z[64];
    mark(g, d, z, in_z);
    int sep = -1;
    int rc = cov_dsep_separated(d, (size_t)cov_graph_find(g, x), (size_t)cov_graph_find(g, y),
                                in_z, &sep);
    gsl_test(rc != COV_OK || sep != expect,
             "claims: %s %s -0-> %s given {%s} is %s (tests/REFERENCES.md 9, networkx 2.8.8)", ex, x, y,
             z, expect ? "True" : "False");
}

/* The names of a marked set, comma-joined in variable order. */
static void set_names(const cov_graph *g, const unsigned char *z, size_t n, char *buf, size_t size)
{
    buf[0] = '\0';
    for (size_t v = 0; v < n && v < g->n_vars; v++)
        if (z[v]) {
            if (buf[0]) strncat(buf, ",", size - strlen(buf) - 1);
            strncat(buf, g->vars[v].name, size - strlen(buf) - 1);
        }
}

static void minsep(const cov_graph *g, const cov_dag *d, const char *ex, const char *x,
                   const char *y, const char *expect)
{
    unsigned char allowed[64], z[64];
    memset(allowed, 1, d->n);
    int found = 0;
    int rc = cov_dsep_minsep(d, (size_t)cov_graph_find(g, x), (size_t)cov_graph_find(g, y),
                             allowed, z, &found);
    char got[256];
    set_names(g, z, d->n, got, sizeof got);
    gsl_test(rc != COV_OK || !found || strcmp(got, expect) != 0,
             "claims: %s FindMinSep(%s, %s) = {%s} (tests/REFERENCES.md 9; got {%s})", ex, x, y, expect,
             got);
}

/* Names of a claim's set, comma-joined in variable order. */
static void list_names(const cov_graph *g, const size_t *set, size_t n, char *buf, size_t size)
{
    buf[0] = '\0';
    for (size_t j = 0; j < n; j++) {
        if (j) strncat(buf, ",", size - strlen(buf) - 1);
        strncat(buf, g->vars[set[j]].name, size - strlen(buf) - 1);
    }
}

/* Check claim i: kind, treatment, outcome, the set the test adjusts for and the minimal separator
 * ("" for the empty set; set NULL when untestable, min NULL when it equals set). */
static void claim(const cov_graph *g, const cov_claims *c, size_t i, const char *ex,
                  cov_claim_kind kind, const char *x, const char *y, const char *set,
                  const char *min)
{
    if (c == NULL || i >= c->n) {
        gsl_test(1, "claims: %s claim %zu exists", ex, i);
        return;
    }
    const cov_claim *k = &c->items[i];
    char got[256], got_min[256];
    list_names(g, k->cond, k->n_cond, got, sizeof got);
    list_names(g, k->min_cond, k->n_min_cond, got_min, sizeof got_min);
    if (min == NULL) min = set;
    int ok = k->kind == kind && strcmp(g->vars[k->treatment].name, x) == 0 &&
             strcmp(g->vars[k->outcome].name, y) == 0;
    if (set == NULL)
        ok = ok && k->status == COV_UNTESTABLE && k->n_cond == 0 && k->n_min_cond == 0;
    else ok = ok && k->status == COV_TESTABLE && strcmp(got, set) == 0 && strcmp(got_min, min) == 0;
    gsl_test(!ok, "claims: %s claim %zu is %s %s -> %s given {%s}, minimal {%s} (got %s %s -> %s "
             "given {%s}, minimal {%s}%s)", ex, i,
             kind == COV_CLAIM_EFFECT ? "effect" : "absence", x, y, set ? set : "untestable",
             min ? min : "", k->kind == COV_CLAIM_EFFECT ? "effect" : "absence",
             g->vars[k->treatment].name, g->vars[k->outcome].name, got, got_min,
             k->status == COV_UNTESTABLE ? ", untestable" : "");
}

static cov_claims *derive(const cov_graph *g, const char *ex)
{
    cov_claims *c = NULL;
    cov_error err;
    int rc = g ? cov_claims_derive(g, &c, &err) : COV_EINPUT;
    gsl_test_int(rc, COV_OK, "claims: %s claims derived", ex);
    return c;
}

/* E1: chain A -> B -> C. */
static void test_e1(void)
{
    cov_graph *g = parse("e1.graph", "input A real [0, 1]\noutput B real\noutput C real\n"
                                     "default effect 1\ndefault margin 0.1\nnoise independent\nA -> B -> C\n");
    cov_dag *d = NULL;
    if (g == NULL || cov_dag_build(g, 0, COV_NO_NODE, &d)) goto done;
    query(g, d, "E1", "A", "C", "", 0);
    query(g, d, "E1", "A", "C", "B", 1);
    cov_claims *c = derive(g, "E1");
    gsl_test_int(c ? (int)c->n : -1, 3, "claims: E1 has 2 effect claims and 1 absence claim");
    claim(g, c, 0, "E1", COV_CLAIM_EFFECT, "A", "B", "", NULL);
    claim(g, c, 1, "E1", COV_CLAIM_EFFECT, "B", "C", "", NULL);
    /* Pa(A) holds the hidden design node, so the set is a minimal one among recorded names. */
    claim(g, c, 2, "E1", COV_CLAIM_ABSENCE, "A", "C", "B", NULL);
    cov_claims_free(c);
done:
    cov_dag_free(d);
    cov_graph_free(g);
}

/* E2: collider A -> C <- B, C -> D; all recorded outputs. */
static void test_e2(void)
{
    cov_graph *g = parse("e2.graph", "output A real\noutput B real\noutput C real\noutput D real\n"
                                     "default effect 1\ndefault margin 0.1\nnoise independent\nA, B -> C -> D\n");
    cov_dag *d = NULL;
    if (g == NULL || cov_dag_build(g, 0, COV_NO_NODE, &d)) goto done;
    query(g, d, "E2", "A", "B", "", 1);
    query(g, d, "E2", "A", "B", "C", 0);
    query(g, d, "E2", "A", "B", "D", 0);
    cov_claims *c = derive(g, "E2");
    gsl_test_int(c ? (int)c->n : -1, 6, "claims: E2 has 3 effect and 3 absence claims");
    /* The test adjusts for C's other parent; it is not needed to separate once A -> C is cut
     * (A and B are independent), so the minimal set is empty. */
    claim(g, c, 0, "E2", COV_CLAIM_EFFECT, "A", "C", "B", "");
    claim(g, c, 1, "E2", COV_CLAIM_EFFECT, "B", "C", "A", "");
    claim(g, c, 2, "E2", COV_CLAIM_EFFECT, "C", "D", "", NULL);
    claim(g, c, 3, "E2", COV_CLAIM_ABSENCE, "A", "B", "", NULL);
    claim(g, c, 4, "E2", COV_CLAIM_ABSENCE, "A", "D", "C", NULL);
    claim(g, c, 5, "E2", COV_CLAIM_ABSENCE, "B", "D", "C", NULL);
    cov_claims_free(c);
done:
    cov_dag_free(d);
    cov_graph_free(g);
}

/* E3: the M-graph X <- A -> M <- B -> Y, with A and B hidden. */
static void test_e3(void)
{
    cov_graph *g = NULL;
    cov_error err;
    int rc = cov_graph_parse_text("e3.graph", "hidden A real\noutput X real\nX <- A\n", &g, &err);
    gsl_test_int(rc, COV_EINPUT, "claims: E3 a backwards arrow '<-' is not in the format");
    cov_graph_free(g);

    g = parse("e3.graph", "hidden A real\nhidden B real\noutput X real\noutput M real\n"
                          "output Y real\ndefault margin 0.1\nnoise independent\nA -> X, M\nB -> M, Y\n");
    cov_dag *d = NULL;
    if (g == NULL || cov_dag_build(g, 0, COV_NO_NODE, &d)) goto done;
    query(g, d, "E3", "X", "Y", "", 1);
    query(g, d, "E3", "X", "Y", "M", 0);
    query(g, d, "E3", "X", "Y", "M,A", 1);
    query(g, d, "E3", "X", "Y", "M,B", 1);
    minsep(g, d, "E3", "X", "Y", "");
    cov_claims *c = derive(g, "E3");
    gsl_test_int(c ? (int)c->n : -1, 3, "claims: E3 has 3 absence claims");
    claim(g, c, 0, "E3", COV_CLAIM_ABSENCE, "X", "M", NULL, NULL);
    claim(g, c, 1, "E3", COV_CLAIM_ABSENCE, "X", "Y", "", NULL);
    claim(g, c, 2, "E3", COV_CLAIM_ABSENCE, "M", "Y", NULL, NULL);
    if (c != NULL && c->n == 3) {
        const char *r0 = c->items[0].reason ? c->items[0].reason : "";
        const char *r2 = c->items[2].reason ? c->items[2].reason : "";
        gsl_test(strcmp(r0, "open path X <- A -> M runs through hidden A") != 0,
                 "claims: E3 X, M untestable: the reason names the open path through hidden A "
                 "(got '%s')", r0);
        gsl_test(strcmp(r2, "open path M <- B -> Y runs through hidden B") != 0,
                 "claims: E3 M, Y untestable: the reason names hidden B (got '%s')", r2);
        gsl_test(c->items[1].reason != NULL, "claims: E3 a testable claim has no reason");
        gsl_test_int(c->items[0].steerable, 0, "claims: E3 untestable claims are not steerable");
        gsl_test_int(c->items[1].steerable, 1, "claims: E3 empty set counts as steerable");
    }
    cov_claims_free(c);
done:
    cov_dag_free(d);
    cov_graph_free(g);
}

/* E4: A -> B, A -> C, B -> D, C -> D, D -> E; all recorded outputs. */
static void test_e4(void)
{
    cov_graph *g = parse("e4.graph", "output A real\noutput B real\noutput C real\noutput D real\n"
                                     "output E real\ndefault effect 0.5 sd\n"
                                     "default margin 0.1 sd\nnoise independent\nA -> B, C -> D -> E\n");
    cov_dag *d = NULL;
    if (g == NULL || cov_dag_build(g, 0, COV_NO_NODE, &d)) goto done;
    query(g, d, "E4", "A", "E", "D", 1);
    query(g, d, "E4", "B", "C", "A", 1);
    query(g, d, "E4", "B", "C", "A,D", 0);
    query(g, d, "E4", "B", "C", "A,E", 0);
    query(g, d, "E4", "A", "D", "B", 0);
    query(g, d, "E4", "A", "D", "B,C", 1);
    minsep(g, d, "E4", "A", "E", "B,C");
    minsep(g, d, "E4", "B", "C", "A");
    minsep(g, d, "E4", "A", "D", "B,C");
    minsep(g, d, "E4", "B", "E", "D");
    /* The Shipley basis sets of E4 are all separators (tests/REFERENCES.md 9). */
    query(g, d, "E4 Shipley basis", "B", "E", "A,D", 1);
    query(g, d, "E4 Shipley basis", "C", "E", "A,D", 1);
    cov_claims *c = derive(g, "E4");
    gsl_test_int(c ? (int)c->n : -1, 10, "claims: E4 has 5 effect claims and C(5,2) - 5 = 5 "
                 "absence claims (Shipley 2000 basis count)");
    claim(g, c, 0, "E4", COV_CLAIM_EFFECT, "A", "B", "", NULL);
    claim(g, c, 1, "E4", COV_CLAIM_EFFECT, "A", "C", "", NULL);
    claim(g, c, 2, "E4", COV_CLAIM_EFFECT, "B", "D", "C", NULL);
    claim(g, c, 3, "E4", COV_CLAIM_EFFECT, "C", "D", "B", NULL);
    claim(g, c, 4, "E4", COV_CLAIM_EFFECT, "D", "E", "", NULL);
    /* The tests adjust for the Shipley basis sets exactly as tests/REFERENCES.md 9 lists them; the
     * minimal subsets drop A from {A, D} for B, E and C, E. */
    claim(g, c, 5, "E4", COV_CLAIM_ABSENCE, "B", "C", "A", NULL);
    claim(g, c, 6, "E4", COV_CLAIM_ABSENCE, "A", "D", "B,C", NULL);
    claim(g, c, 7, "E4", COV_CLAIM_ABSENCE, "A", "E", "D", NULL);
    claim(g, c, 8, "E4", COV_CLAIM_ABSENCE, "B", "E", "A,D", "D");
    claim(g, c, 9, "E4", COV_CLAIM_ABSENCE, "C", "E", "A,D", "D");
    if (c != NULL && c->n == 10) {
        gsl_test_abs(c->items[0].effect.value, 0.5, 0, "claims: E4 default effect applied");
        gsl_test_int(c->items[0].effect.unit, COV_UNIT_SD, "claims: E4 default effect unit sd");
        gsl_test_abs(c->items[7].effect.value, 0.1, 0, "claims: E4 margin on absence claims");
        gsl_test_int(c->items[7].steerable, 0, "claims: E4 a set of outputs is not steerable");
    }
    cov_claims_free(c);
done:
    cov_dag_free(d);
    cov_graph_free(g);
}

/* The design node: inputs may be set together by the campaign, so other inputs join the set
 * unless the file says `design independent`. */
static void test_design(void)
{
    const char *base = "input X real [0, 1]\ninput W bool\noutput M real\noutput Y real\n"
                       "default margin 0.1\nnoise independent\nX -> Y effect 2 expect -\nW -> M -> Y effect 0.3 sd\n";
    char text[512];
    for (int indep = 0; indep < 2; indep++) {
        snprintf(text, sizeof text, "%s%s", base, indep ? "design independent\n" : "");
        const char *ex = indep ? "design independent" : "shared design";
        cov_graph *g = parse("design.graph", text);
        cov_claims *c = derive(g, ex);
        gsl_test_int(c ? (int)c->n : -1, 5, "claims: %s: 3 effect claims, 2 absence claims", ex);
        /* X -> Y: the test adjusts for Y's other parent M, which is needed to separate only
         * through X <- design -> W -> M. */
        claim(g, c, 0, ex, COV_CLAIM_EFFECT, "X", "Y", "M", indep ? "" : "M");
        claim(g, c, 1, ex, COV_CLAIM_EFFECT, "W", "M", "", NULL);
        claim(g, c, 2, ex, COV_CLAIM_EFFECT, "M", "Y", "X", indep ? "" : "X");
        /* Shared design: Pa(X) holds the hidden design node, so the set is a minimal one among
         * recorded variables. Independent: the Shipley set Pa(X) u Pa(M) = {W}. */
        claim(g, c, 3, ex, COV_CLAIM_ABSENCE, "X", "M", "W", indep ? "" : "W");
        claim(g, c, 4, ex, COV_CLAIM_ABSENCE, "W", "Y", "X,M", indep ? "M" : "X,M");
        if (c != NULL && c->n == 5) {
            gsl_test_int(c->items[0].sign, -1, "claims: %s: sign from the edge", ex);
            gsl_test_abs(c->items[0].effect.value, 2, 0, "claims: %s: edge effect", ex);
            gsl_test_int(c->items[2].effect.unit, COV_UNIT_SD, "claims: %s: edge unit", ex);
            gsl_test_int(c->items[3].steerable, 1, "claims: %s: inputs only: steerable", ex);
            gsl_test_int(c->items[0].steerable, 0,
                         "claims: %s: steerable is judged on the adjusted set {M}, an output", ex);
            gsl_test_int(c->items[4].steerable, 0,
                         "claims: %s: a set with an output: not steerable", ex);
        }
        cov_claims_free(c);
        cov_graph_free(g);
    }

    /* Four inputs set independently into one output: each test adjusts for the other three
     * parents (they lower the residual spread), yet none is needed to separate. */
    cov_graph *g = parse("four.graph", "input x0 real [0, 1]\ninput x1 real [0, 1]\n"
                                       "input x2 real [0, 1]\ninput x3 real [0, 1]\n"
                                       "output y0 real\ndefault effect 0.2 sd\n"
                                       "design independent\nx0, x1, x2, x3 -> y0\n");
    cov_claims *c = derive(g, "four independent inputs");
    gsl_test_int(c ? (int)c->n : -1, 4, "claims: four independent inputs: 4 effect claims");
    claim(g, c, 0, "four independent inputs", COV_CLAIM_EFFECT, "x0", "y0", "x1,x2,x3", "");
    claim(g, c, 3, "four independent inputs", COV_CLAIM_EFFECT, "x3", "y0", "x0,x1,x2", "");
    if (c != NULL && c->n == 4)
        gsl_test_int(c->items[0].steerable, 1,
                     "claims: four independent inputs: a set of inputs is steerable");
    cov_claims_free(c);
    cov_graph_free(g);
}

/* A hidden confounder makes an effect claim untestable; a missing margin is an error naming the
 * pair. */
static void test_untestable_and_margin(void)
{
    cov_graph *g = parse("conf.graph", "hidden H real\noutput X real\noutput Y real\n"
                                       "H -> X, Y\nX -> Y effect 1\n");
    cov_claims *c = derive(g, "confounded");
    claim(g, c, 0, "confounded", COV_CLAIM_EFFECT, "X", "Y", NULL, NULL);
    const char *r = c && c->n ? c->items[0].reason : NULL;
    gsl_test(r == NULL || strcmp(r, "open path X <- H -> Y runs through hidden H") != 0,
             "claims: confounded effect names the open path (got '%s')", r ? r : "(null)");
    cov_claims_free(c);
    cov_graph_free(g);

    g = parse("nomargin.graph", "input X real [0, 1]\noutput M real\noutput Y real\n"
                                "default effect 1\nX -> M\n");
    c = NULL;
    cov_error err = {{0}, {0}};
    int rc = g ? cov_claims_derive(g, &c, &err) : COV_OK;
    gsl_test_int(rc, COV_EINPUT, "claims: an absence claim without a margin is bad input");
    gsl_test(strcmp(err.where, "nomargin.graph:3:8") != 0,
             "claims: missing margin points at the outcome's declaration (got %s)", err.where);
    gsl_test(strstr(err.msg, "'X' and 'Y'") == NULL || strstr(err.msg, "default margin") == NULL,
             "claims: missing margin names the pair and the fix (got '%s')", err.msg);
    gsl_test(c != NULL, "claims: nothing returned on failure");
    cov_claims_free(c);
    cov_graph_free(g);

    /* No absence claim, no margin needed; two inputs are never a claim. */
    g = parse("twoinputs.graph", "input X real [0, 1]\ninput Z bool\noutput Y real\n"
                                 "default effect 1\nX, Z -> Y\n");
    c = derive(g, "two inputs");
    gsl_test_int(c ? (int)c->n : -1, 2, "claims: two inputs are not a claim; no margin needed");
    cov_claims_free(c);
    cov_graph_free(g);
    cov_claims_free(NULL);
}

int main(void)
{
    gsl_set_error_handler_off();
    gsl_test_verbose(1);
    test_e1();
    test_e2();
    test_e3();
    test_e4();
    test_design();
    test_untestable_and_margin();
    return gsl_test_summary();
}
