/* Tests of shoal's claim notation (coverage/base/base.h): the compact form, the words and the kind
 * word, on an invented graph. See LICENSE. */
#include <stdio.h>
#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_test.h>

#include "coverage/report/report.h"

/* Two inputs drive y, y drives z: three effect claims and two absence claims (a, z and b, z),
 * each absence claim adjusting for y. */
static const char graph_text[] = "# invented notation test model\n"
                                 "input a real [0, 1]\n"
                                 "input b real [0, 1]\n"
                                 "output y real\n"
                                 "output z real\n"
                                 "default effect 0.5 sd\n"
                                 "default margin 0.1 sd\n"
                                 /* y and z's run noise declared independent, so that the
                                  * claims given y stay testable (issue 10's shared noise). */
                                 "noise independent\n"
                                 "a, b -> y\n"
                                 "y -> z\n";

int main(void)
{
    cov_graph *g = NULL;
    cov_claims *cl = NULL;
    cov_error err = {0};
    gsl_set_error_handler_off();
    gsl_test_verbose(1);
    int rc = cov_graph_parse_text("notation.graph", graph_text, &g, &err);
    if (rc == COV_OK) rc = cov_claims_derive(g, &cl, &err);
    gsl_test_int(rc, COV_OK, "notation: the invented graph parses (%s)", err.msg);
    if (rc != COV_OK) return gsl_test_summary();
    static const char *const label[] = {"a -> y [b]", "b -> y [a]", "y -> z", "a -0-> z [y]",
                                        "b -0-> z [y]"};
    static const char *const words[] = {"an effect of a on y given b", "an effect of b on y given a",
                                        "an effect of y on z", "no effect of a on z given y",
                                        "no effect of b on z given y"};
    static const char *const kind[] = {"effect", "effect", "effect", "absence", "absence"};
    gsl_test_int((int)cl->n, 5, "notation: five claims");
    for (size_t i = 0; i < cl->n && i < 5; i++) {
        char buf[128];
        cov_claim_label(g, &cl->items[i], buf, sizeof buf);
        gsl_test(strcmp(buf, label[i]) != 0, "notation: claim %zu reads '%s' (got '%s')", i + 1,
                 label[i], buf);
        /* Nothing of another program's look: no bar, no braces. */
        gsl_test(strpbrk(buf, "|{}") != NULL, "notation: claim %zu has no '|' or braces", i + 1);
        cov_claim_sentence(g, &cl->items[i], buf, sizeof buf);
        gsl_test(strcmp(buf, words[i]) != 0, "notation: claim %zu in words '%s' (got '%s')", i + 1,
                 words[i], buf);
        gsl_test(strcmp(cov_claim_kind_word(cl->items[i].kind), kind[i]) != 0,
                 "notation: claim %zu kind word '%s'", i + 1, kind[i]);
    }
    gsl_test(strcmp(cov_claim_arrow(COV_CLAIM_EFFECT), "->") != 0 ||
                 strcmp(cov_claim_arrow(COV_CLAIM_ABSENCE), "-0->") != 0,
             "notation: the arrows are '->' and '-0->'");
    /* Truncation keeps a terminated prefix of the full label. */
    char small[8];
    cov_claim_label(g, &cl->items[3], small, sizeof small);
    gsl_test(strcmp(small, "a -0-> ") != 0, "notation: a 8-byte buffer holds 'a -0-> ' (got '%s')",
             small);
    cov_claims_free(cl);
    cov_graph_free(g);
    return gsl_test_summary();
}
