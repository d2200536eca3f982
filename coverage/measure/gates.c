/* The coverage gates (--need-marginal, --need-pairwise, --need-threeway) of `shoal coverage` and
 * the survey. See LICENSE. */
#include <math.h>
#include <stdio.h>

#include "coverage/measure/measure.h"

int cov_coverage_gate_missed(const cov_options *o, const cov_coverage *cv, char *buf, size_t size)
{
    const struct { const char *name; double need, got; } gate[] = {
        {"marginal", o->need_marginal, cv->marginal_share},
        {"2-way", o->need_pairwise, cv->pairwise_share},
        {"3-way", o->need_threeway, cv->threeway_share},
    };
    for (size_t k = 0; k < sizeof gate / sizeof gate[0]; k++) {
        if (isnan(gate[k].need)) continue;
        if (!isfinite(gate[k].got)) {
            /* No cells to count (too few inputs or runs): the gate is missed, but nothing was
             * measured, so the message must not claim 0% was reached. */
            snprintf(buf, size, "The %s coverage gate is missed: %s coverage was not measured, "
                                "%.1f%% needed.", gate[k].name, gate[k].name, 100 * gate[k].need);
            return 1;
        }
        if (gate[k].got < gate[k].need) {
            snprintf(buf, size, "The %s coverage gate is missed: %.1f%% of cells reached, %.1f%% "
                                "needed.", gate[k].name, 100 * gate[k].got, 100 * gate[k].need);
            return 1;
        }
    }
    return 0;
}
