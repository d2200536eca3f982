/* Matching a recorded plan to the runs that arrived and filling what they achieved.
 * See LICENSE. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "coverage/plan/plan.h"

static int cmp_ulong(const void *a, const void *b)
{
    unsigned long x = *(const unsigned long *)a, y = *(const unsigned long *)b;
    return x < y ? -1 : x > y;
}

/* Claim index i of c matching record claim pc (kind, treatment and outcome by name), or -1. */
static long find_claim(const cov_graph *g, const cov_claims *c, const cov_pred_claim *pc)
{
    for (size_t i = 0; i < c->n; i++) {
        const cov_claim *cl = &c->items[i];
        const char *kind = cl->kind == COV_CLAIM_EFFECT ? "effect" : "absence";
        if (strcmp(kind, pc->kind) == 0 && strcmp(g->vars[cl->treatment].name, pc->treatment) == 0 &&
            strcmp(g->vars[cl->outcome].name, pc->outcome) == 0)
            return (long)i;
    }
    return -1;
}

int cov_plan_audit_fill(const cov_graph *g, const cov_claims *c, const cov_assessments *a,
                        size_t n_runs, const double *seed_col, cov_pred_record *recs, size_t n,
                        const char *now, unsigned char *frozen)
{
    for (size_t k = 0; k < n; k++) {
        cov_pred_record *r = &recs[k];
        frozen[k] = 0;
        size_t after = r->runs_before >= 0 && (size_t)r->runs_before < n_runs
                           ? n_runs - (size_t)r->runs_before : 0;
        if (seed_col != NULL && r->n_seeds > 0) {
            /* A planned run has arrived when a run imported after the plan carries one of its
             * seeds; each seed counts once. */
            unsigned long *s = malloc(r->n_seeds * sizeof *s);
            unsigned char *seen = calloc(r->n_seeds, 1);
            if (s == NULL || seen == NULL) {
                free(s);
                free(seen);
                return COV_ENOMEM;
            }
            memcpy(s, r->seeds, r->n_seeds * sizeof *s);
            qsort(s, r->n_seeds, sizeof *s, cmp_ulong);
            r->arrived = 0;
            for (size_t i = n_runs - after; i < n_runs; i++) {
                double x = seed_col[i];
                if (!(x >= 0) || x != floor(x) || x > 4.0e18) continue;
                unsigned long key = (unsigned long)x;
                unsigned long *hit = bsearch(&key, s, r->n_seeds, sizeof *s, cmp_ulong);
                if (hit != NULL && !seen[hit - s]) {
                    seen[hit - s] = 1;
                    r->arrived++;
                }
            }
            free(s);
            free(seen);
        } else {
            /* Without a seed column, the runs imported since the plan stand in for its runs. */
            r->arrived = after < r->n_seeds ? after : r->n_seeds;
        }
        if (r->achieved_at[0] != '\0') continue;   /* frozen when its runs arrived */
        if (r->arrived == 0) continue;
        for (size_t j = 0; j < r->n_claims; j++) {
            long i = find_claim(g, c, &r->claims[j]);
            r->claims[j].achieved = i >= 0 && a != NULL && (size_t)i < a->n &&
                                            c->items[i].status == COV_TESTABLE
                                        ? a->items[i].power
                                        : NAN;
        }
        if (r->arrived >= r->n_seeds) {
            snprintf(r->achieved_at, sizeof r->achieved_at, "%s", now);
            frozen[k] = 1;
        }
    }
    return COV_OK;
}
