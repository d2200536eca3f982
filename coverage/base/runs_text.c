/* How the commands and reports say what counts as one run: repeated rows, conflicting replicates,
 * configurations and seeds (the figures of coverage/archive/runs.c). See LICENSE. */
#include <math.h>
#include <stdint.h>
#include <stdio.h>

#include "coverage/base/base.h"

void cov_runs_summary(const cov_data *d, char *buf, size_t n)
{
    size_t at = (size_t)snprintf(buf, n, "%zu run%s", d->n_runs, d->n_runs == 1 ? "" : "s");
    if (at < n && d->n_duplicates > 0)
        at += (size_t)snprintf(buf + at, n - at, " (%zu rows: %zu repeated row%s of the same run "
                               "counted once)", d->n_rows, d->n_duplicates,
                               d->n_duplicates == 1 ? "" : "s");
    if (at < n && d->n_runs > 0)
        at += (size_t)snprintf(buf + at, n - at, "; %zu configuration%s, %zu run more than once",
                               d->n_configs, d->n_configs == 1 ? "" : "s", d->n_replicated);
    if (at < n && d->seed != NULL)
        snprintf(buf + at, n - at, "; %zu seed%s, %zu shared by several configurations",
                 d->n_seeds, d->n_seeds == 1 ? "" : "s", d->n_shared_seeds);
}

int cov_runs_caution(const cov_data *d, const cov_graph *g, char *buf, size_t n)
{
    buf[0] = '\0';
    if (d->n_conflicts == 0) return 0;
    snprintf(buf, n, "%zu run%s share%s every input and the seed (%s) with another run but not "
             "its outputs: the simulator is not deterministic under its seed, or the archive mixes "
             "campaigns; they are counted as replicates", d->n_conflicts,
             d->n_conflicts == 1 ? "" : "s", d->n_conflicts == 1 ? "s" : "",
             g->seed_name != NULL ? g->seed_name : "none declared");
    return 1;
}

void cov_runs_json(FILE *f, const cov_data *d)
{
    fprintf(f, "{\"rows\": %zu, \"runs\": %zu, \"repeated_rows\": %zu, \"conflicting_runs\": %zu, "
            "\"configurations\": %zu, \"configurations_repeated\": %zu, ", d->n_rows, d->n_runs,
            d->n_duplicates, d->n_conflicts, d->n_configs, d->n_replicated);
    if (d->seed != NULL)
        fprintf(f, "\"seeds\": %zu, \"seeds_shared\": %zu}", d->n_seeds, d->n_shared_seeds);
    else
        fprintf(f, "\"seeds\": null, \"seeds_shared\": null}");
}

/* An outcome's seed share as measured (seedblock.c), or NULL. */
static const cov_seed_share *outcome_share(const cov_graph *g, const cov_assessments *as, size_t v)
{
    if (as == NULL || as->seed_outcome == NULL || g->vars[v].role != COV_OUTPUT) return NULL;
    const cov_seed_share *sh = &as->seed_outcome[v];
    return sh->blocks > 0 && !isnan(sh->share) ? sh : NULL;
}

static size_t claims_using_blocks(const cov_claims *c, const cov_assessments *as, size_t v)
{
    size_t k = 0;
    for (size_t i = 0; i < as->n && i < c->n; i++)
        k += c->items[i].outcome == v && c->items[i].status == COV_TESTABLE &&
             as->items[i].seed_blocks_used;
    return k;
}

int cov_seed_outcome_text(const cov_graph *g, const cov_claims *c, const cov_assessments *as,
                          size_t v, char *buf, size_t n)
{
    buf[0] = '\0';
    const cov_seed_share *sh = outcome_share(g, as, v);
    if (sh == NULL) return 0;
    size_t used = claims_using_blocks(c, as, v);
    snprintf(buf, n, "the seed explains %.0f%% of the variation of %s left by the inputs (%zu seed "
             "block%s, %zu run%s on a seed of %s own; F = %.3g on %.0f and %.0f df, p = %.2g); %zu "
             "claim%s on it use%s seed blocks", 100 * sh->share, g->vars[v].name, sh->blocks,
             sh->blocks == 1 ? "" : "s", sh->unblocked, sh->unblocked == 1 ? "" : "s",
             sh->unblocked == 1 ? "its" : "their", sh->f,
             sh->df1, sh->df2, sh->p, used, used == 1 ? "" : "s", used == 1 ? "s" : "");
    return 1;
}

void cov_seed_outcomes_json(FILE *f, const cov_graph *g, const cov_claims *c,
                            const cov_assessments *as)
{
    if (as == NULL || as->seed_outcome == NULL) {
        fputs("null", f);
        return;
    }
    int first = 1;
    fputc('[', f);
    for (size_t v = 0; v < g->n_vars; v++) {
        const cov_seed_share *sh = outcome_share(g, as, v);
        if (sh == NULL) continue;
        fputs(first ? "{\"outcome\": " : ", {\"outcome\": ", f);
        first = 0;
        cov_emit_json_string(f, g->vars[v].name);
        fprintf(f, ", \"blocks\": %zu, \"unblocked_runs\": %zu, \"share\": ", sh->blocks,
                sh->unblocked);
        cov_emit_json_number(f, sh->share);
        cov_emit_json_num_field(f, "variance_drop", sh->var_drop);
        cov_emit_json_num_field(f, "f", sh->f);
        cov_emit_json_num_field(f, "df1", sh->df1);
        cov_emit_json_num_field(f, "df2", sh->df2);
        cov_emit_json_num_field(f, "p", sh->p);
        fprintf(f, ", \"claims_using_blocks\": %zu}", claims_using_blocks(c, as, v));
    }
    fputc(']', f);
}
