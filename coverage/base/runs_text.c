/* How the commands and reports say what counts as one run: repeated rows, conflicting replicates,
 * configurations and seeds (the figures of coverage/archive/runs.c). See LICENSE. */
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

void cov_fixed_json(FILE *f, const cov_graph *g, const cov_claim *c, const cov_assessment *a)
{
    fputs(", \"never_varies\": ", f);
    if (a == NULL || a->fixed_var == SIZE_MAX) {
        fputs("null", f);
        return;
    }
    char val[160];
    cov_value_text(&g->vars[a->fixed_var], a->fixed_value, val, sizeof val);
    fputs("{\"variable\": ", f);
    cov_emit_json_string(f, g->vars[a->fixed_var].name);
    fprintf(f, ", \"as\": \"%s\", \"value\": ", a->fixed_var == c->outcome ? "outcome" : "treatment");
    cov_emit_json_string(f, val);
    fputc('}', f);
}
