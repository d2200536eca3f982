/* The rules every command shares: the family-wise level, a claim's test and sides, its verdict
 * when not assessed, and the adequacy gate. See LICENSE. */
#include <assert.h>

#include "coverage/assess/assess.h"

double cov_family_alpha(const cov_power_options *opt, size_t n_testable)
{
    /* Bonferroni (Dunn 1961): each of the m testable claims at alpha / m keeps the chance of any
     * false verdict in the family at or below alpha. */
    return opt->bonferroni && n_testable > 1 ? opt->alpha / (double)n_testable : opt->alpha;
}

int cov_claim_sides(const cov_power_options *opt, const cov_claim *c)
{
    return opt->one_sided && c->sign != 0 && c->kind == COV_CLAIM_EFFECT ? 1 : 2;
}

pw_test cov_claim_test(const cov_graph *g, const cov_claim *c, int fitted, size_t treat_rank)
{
    const cov_var *y = &g->vars[c->outcome], *x = &g->vars[c->treatment];
    assert(!fitted || treat_rank >= 1);   /* a fit whose treatment was dropped has no test */
    if (c->kind == COV_CLAIM_ABSENCE) return PW_TEST_TOST;
    /* A numeric treatment expected to turn: the omnibus F over its polynomial basis (turning.c). */
    if (cov_claim_turns(g, c)) return PW_TEST_BASIS_F;
    if (!fitted) {
        if (x->type != COV_LEVELS) return PW_TEST_COEF_T;
        /* An ordered level set is tested by its linear trend unless a turning shape is expected. */
        return x->ordered && c->shape != COV_SHAPE_TURNING ? PW_TEST_TREND_T : PW_TEST_LEVELS_F;
    }
    /* The two-proportion test needs the base rate and the treated share the runs give. */
    int bool_outcome = y->type == COV_BOOL || (y->type == COV_LEVELS && y->n_levels == 2);
    if (bool_outcome && x->type == COV_BOOL) return PW_TEST_TWO_PROP;
    return treat_rank >= 2 ? PW_TEST_LEVELS_F : PW_TEST_COEF_T;
}

cov_verdict cov_claim_verdict(const cov_claim *c, const cov_assessment *a)
{
    if (a != NULL) return a->verdict;
    /* Not assessed: a testable claim cannot be shown ample, an untestable one stays untestable. */
    return c->status == COV_TESTABLE ? COV_UNDERPOWERED : COV_BLIND;
}

const char *cov_claim_verdict_reason(const cov_claim *c, const cov_assessment *a)
{
    if (a != NULL) return a->reason;
    return c->status == COV_TESTABLE ? NULL : c->reason;
}

int cov_claims_ample(const cov_claims *c, const cov_assessments *as)
{
    assert(as == NULL || as->n == c->n);
    if (c->n == 0) return 0;   /* a graph that implies no claim gives the runs nothing to be
                                  adequate for */
    for (size_t i = 0; i < c->n; i++)
        if (c->items[i].status == COV_TESTABLE &&
            (as == NULL || i >= as->n || as->items[i].verdict != COV_AMPLE))
            return 0;
    return 1;
}
