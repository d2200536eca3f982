/* The graph file's forms of issue 10: units, steps and ranges, ordered levels, run noise, unknown
 * and turning expectations; good input and bad input with file:line:column. See LICENSE. */
#include <math.h>
#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_test.h>

#include "coverage/graph/graph.h"

#define DECL "input x real [0, 0.4] unit \"share\"\ninput b bool\n" \
             "input s levels {lo, mid, hi}\ninput k levels {k30, k50, k70} ordered at {30, 50, 70}\n" \
             "output y real unit \"min\"\noutput z real\noutput w real\ndefault effect 1\n"

static void test_good(void)
{
    cov_graph *g = NULL;
    cov_error err = {{0}, {0}};
    const char *text = DECL "noise independent z, w\n"
                            "x -> y effect 5 per 1000\nk -> y expect ? effect 2 sd per 10\n"
                            "s -> z expect turning\nb -> w effect 0.5\n";
    int rc = cov_graph_parse_text("t.graph", text, &g, &err);
    gsl_test_int(rc, COV_OK, "forms: the invented graph parses (%s)", err.msg);
    if (g == NULL) return;
    gsl_test(strcmp(cov_var_unit(&g->vars[0]), "share") != 0, "forms: unit of x is 'share'");
    gsl_test(strcmp(cov_var_unit(&g->vars[4]), "min") != 0, "forms: unit of y is 'min'");
    gsl_test(strcmp(cov_var_unit(&g->vars[5]), "") != 0, "forms: no unit reads as \"\"");
    const cov_var *k = &g->vars[3];
    gsl_test(!(k->ordered && k->positions && k->positions[0] == 30 && k->positions[2] == 70),
             "forms: ordered levels keep their positions 30, 50, 70");
    gsl_test(g->vars[2].ordered, "forms: an unordered level set stays unordered");
    gsl_test(!(g->vars[5].noise_own && g->vars[6].noise_own && !g->vars[4].noise_own &&
               !g->noise_independent), "forms: 'noise independent z, w' marks z and w only");
    const cov_edge *e = g->edges;
    /* Identities: 5 per 1000 is 0.005 per unit; 2 over the range 30..70 is 2 / 40. */
    gsl_test_rel(e[0].effect.value * cov_amount_per_unit_factor(&e[0].effect, &g->vars[0]), 0.005,
                 1e-15, "forms: 'effect 5 per 1000' is 0.005 per unit");
    cov_amount over = {2, COV_UNIT_SD, COV_PER_RANGE, NAN};   /* a default counted over range */
    gsl_test_rel(cov_amount_per_unit_factor(&over, k), 1.0 / 40, 1e-15,
                 "forms: a default 'over range' on positions 30..70 divides by 40");
    gsl_test_rel(cov_amount_per_unit_factor(&over, &g->vars[0]), 1.0 / 0.4, 1e-15,
                 "forms: 'over range' on [0, 0.4] divides by 0.4");
    gsl_test(!(e[1].sign == 0 && e[1].effect.unit == COV_UNIT_SD && e[1].effect.per == COV_PER_STEP &&
               e[1].effect.step == 10),
             "forms: 'expect ? effect 2 sd per 10' reads as unknown sign, sd, per a step of 10");
    gsl_test(e[2].shape != COV_SHAPE_TURNING, "forms: 'expect turning' sets the shape");
    char buf[64];
    gsl_test(strcmp(cov_amount_text(&e[0].effect, buf, sizeof buf), "5 per 1000") != 0,
             "forms: the amount reads back as written (%s)", buf);
    cov_graph_free(g);
}

struct bad_case {
    const char *what, *text, *where, *says;
};

static const struct bad_case bad_cases[] = {
    {"step of 0", DECL "x -> y effect 5 per 0\n", "9:21", "step greater than 0"},
    {"negative step", DECL "x -> y effect 5 per -10\n", "9:21", "step greater than 0"},
    {"range form on a bool", DECL "b -> y effect 1 over range\n", "9:17", "bool"},
    {"range form on a level set", DECL "s -> y effect 1 over range\n", "9:17", "level set"},
    {"range form on an ordered level set", DECL "k -> y effect 1 over range\n", "9:17",
     "level set"},
    {"per on an unordered level set", DECL "s -> y effect 1 per 2\n", "9:17", "'per'"},
    {"per on a bool", DECL "b -> y effect 1 per 2\n", "9:17", "bool"},
    {"positions not increasing", "input k levels {a, b, c} ordered at {1, 3, 2}\n", "1:44",
     "increasing"},
    {"positions equal", "input k levels {a, b, c} ordered at {1, 1, 2}\n", "1:41", "increasing"},
    {"too few positions", "input k levels {a, b, c} ordered at {1, 2}\n", "1:42", "expected 3"},
    {"unit with a carriage return", "output y real unit \"mi\rn\"\n", "1:20",
     "control character"},
    {"unit with a tab", "input x real [0, 1] unit \"a\tb\"\n", "1:26", "control character"},
    {"unit without quotes", "output y real unit min\n", "1:20", "quoted unit"},
    {"noise independent on an input", DECL "noise independent x\n", "9:19", "expected an output"},
    {"over without range", DECL "x -> y effect 1 over all\n", "9:22", "'range'"},
};
#define N_BAD (sizeof bad_cases / sizeof bad_cases[0])

static void test_bad(void)
{
    for (size_t i = 0; i < N_BAD; i++) {
        const struct bad_case *b = &bad_cases[i];
        cov_graph *g = NULL;
        cov_error err = {{0}, {0}};
        int rc = cov_graph_parse_text("t.graph", b->text, &g, &err);
        char want[64];
        snprintf(want, sizeof want, "t.graph:%s", b->where);
        gsl_test_int(rc, COV_EINPUT, "forms bad input (%s): COV_EINPUT", b->what);
        gsl_test(strcmp(err.where, want) != 0, "forms bad input (%s): at %s (got %s: %s)", b->what,
                 want, err.where, err.msg);
        gsl_test(strstr(err.msg, b->says) == NULL || strstr(err.msg, "found") == NULL ||
                     strstr(err.msg, "expected") == NULL,
                 "forms bad input (%s): message says found/expected and '%s' (got '%s')", b->what,
                 b->says, err.msg);
        cov_graph_free(g);
    }
}

int main(void)
{
    gsl_set_error_handler_off();
    gsl_test_verbose(1);
    test_good();
    test_bad();
    return gsl_test_summary();
}
