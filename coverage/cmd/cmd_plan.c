/* The `shoal plan` command: plan the next runs, print the plan, write the plan file (plan_file.c).
 * See LICENSE. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "coverage/plan/plan.h"
#include "coverage/report/report.h"

#define DEFAULT_PLAN_PATH "next-runs.csv"

/* ---- the command ------------------------------------------------------------------------------- */

static void claim_label(const cov_graph *g, const cov_claim *cl, char *buf, size_t size)
{
    snprintf(buf, size, "%s %s %s", g->vars[cl->treatment].name, cov_claim_arrow(cl->kind),
             g->vars[cl->outcome].name);
}

static const char *mode_word(const cov_plan_claim *it);

static void print_prob(FILE *out, double x)
{
    if (isnan(x)) fprintf(out, " %10s", "-");
    else fprintf(out, " %10.3f", x);
}

static void print_report(FILE *out, const cov_options *o, const cov_graph *g, const cov_claims *c,
                         const cov_assessments *as, const cov_plan *p, size_t n_testable,
                         const char *path, unsigned long seed, int from_archive)
{
    size_t runs = p->n_configs * (size_t)p->replicates;
    fprintf(out, "planned %zu configuration%s x %d seed%s = %zu run%s, written to %s\n",
            p->n_configs, p->n_configs == 1 ? "" : "s", p->replicates,
            p->replicates == 1 ? "" : "s", runs, runs == 1 ? "" : "s", path);
    fprintf(out, "planner seed %lu (%s); the planned runs' seeds are new to the archive\n", seed,
            from_archive ? "drawn from the archive's runs: the same archive gives the same plan; "
                           "--seed S overrides"
                         : o->seed_given ? "from --seed" : "the default: no runs yet");
    fprintf(out, "target power %.2f at family alpha %g (%s over %zu testable claims)\n\n",
            o->power.target, o->power.alpha, o->power.bonferroni ? "Bonferroni" : "no correction",
            n_testable);
    size_t width = 5;
    char label[512];
    for (size_t j = 0; j < p->n; j++) {
        claim_label(g, &c->items[p->items[j].claim], label, sizeof label);
        if (strlen(label) > width) width = strlen(label);
    }
    if (width > 60) width = 60;
    fprintf(out, "%-*s  %-10s %9s %10s %9s %10s  %s\n", (int)width, "claim", "how", "runs now",
            "power now", "runs after", "predicted", "outlook");
    size_t n_assumed = 0, n_unsized = 0, n_unreach = 0, n_noise = 0, n_fixed = 0;
    for (size_t j = 0; j < p->n; j++) {
        const cov_plan_claim *it = &p->items[j];
        claim_label(g, &c->items[it->claim], label, sizeof label);
        const char *how = mode_word(it);
        fprintf(out, "%-*.*s  %-10s %9.0f", (int)width, (int)width, label, how, it->n_now);
        print_prob(out, it->power_now);
        if (isnan(it->n_after)) fprintf(out, " %9s", "-");
        else fprintf(out, " %9.0f", it->n_after);
        print_prob(out, it->power_after);
        fprintf(out, "  %s\n", it->mode == COV_PLAN_UNSIZED ? "cannot be sized"
                               : it->mode == COV_PLAN_FIXED ? "untestable on these runs"
                               : it->unreachable       ? "unreachable"
                               : it->reaches           ? "reaches target"
                                                       : "short");
        n_assumed += it->mode == COV_PLAN_ASSUMED;
        n_unsized += it->mode == COV_PLAN_UNSIZED;
        n_fixed += it->mode == COV_PLAN_FIXED;
        n_unreach += it->unreachable != 0;
        n_noise += it->from_noise != 0;
    }
    if (c->n > n_testable)
        fprintf(out, "\n%zu untestable claim%s left out: no runs can test %s (see shoal claims).\n",
                c->n - n_testable, c->n - n_testable == 1 ? "" : "s",
                c->n - n_testable == 1 ? "it" : "them");
    if (n_assumed > 0)
        fprintf(out, "\nassumed (not steered): %zu claim%s with an output as treatment or in the "
                     "adjustment set. The plan cannot set outputs, so it assumes new runs add "
                     "information as the current runs do (the run count is scaled).\n",
                n_assumed, n_assumed == 1 ? "" : "s");
    if (n_noise > 0)
        fprintf(out, "\n%zu claim%s sized from the noise SD declared in the graph (too few runs to "
                     "estimate it).\n",
                n_noise, n_noise == 1 ? " is" : "s are");
    if (n_unsized > 0) {
        fprintf(out, "\ncannot be sized: %zu claim%s whose outcome has no declared noise SD and "
                     "whose runs cannot estimate it (no runs, too few, or a treatment that never "
                     "varies; for assumed claims, no runs to scale):",
                n_unsized, n_unsized == 1 ? "" : "s");
        for (size_t j = 0; j < p->n; j++)
            if (p->items[j].mode == COV_PLAN_UNSIZED) {
                size_t k = p->items[j].claim;
                claim_label(g, &c->items[k], label, sizeof label);
                fprintf(out, " %s", label);
                /* A constant input treatment: name it, so the plan's reason matches power's. */
                if (as != NULL && as->items[k].fixed_var != SIZE_MAX && as->items[k].reason)
                    fprintf(out, " (%s)", as->items[k].reason);
                fputc(';', out);
            }
        fputc('\n', out);
    }
    if (n_fixed > 0 && as != NULL) {
        fprintf(out, "\nuntestable on these runs: %zu claim%s whose outcome (or output treatment) "
                     "never varies; no runs are planned for %s:\n", n_fixed,
                n_fixed == 1 ? "" : "s", n_fixed == 1 ? "it" : "them");
        for (size_t j = 0; j < p->n; j++)
            if (p->items[j].mode == COV_PLAN_FIXED) {
                claim_label(g, &c->items[p->items[j].claim], label, sizeof label);
                const char *why = as->items[p->items[j].claim].reason;
                fprintf(out, "  %s: %s\n", label, why ? why : "untestable on these runs");
            }
    }
    if (n_unreach > 0)
        fprintf(out, "\nunreachable: %zu claim%s cannot reach the target within %d configurations "
                     "(a held or output treatment, or a need far beyond the cap)%s\n",
                n_unreach, n_unreach == 1 ? "" : "s", COV_PLAN_AUTO_CAP,
                p->capped ? "; --budget auto stopped at the cap" : "");
}

static const char *mode_word(const cov_plan_claim *it)
{
    return it->mode == COV_PLAN_STEERED   ? "steered"
           : it->mode == COV_PLAN_ASSUMED ? "assumed"
           : it->mode == COV_PLAN_FIXED   ? "untestable"
                                          : "unsized";
}

static void print_json(FILE *out, const cov_options *o, const cov_graph *g, const cov_claims *c,
                       const cov_assessments *as, const cov_plan *p, const char *path,
                       unsigned long seed, int from_archive)
{
    fprintf(out, "{\"schema_version\": 1, \"graph\": ");
    cov_emit_json_string(out, o->graph_path);
    fprintf(out, ", \"plan_file\": ");
    cov_emit_json_string(out, path);
    fprintf(out, ", \"configurations\": %zu, \"replicates\": %d, \"runs\": %zu, "
                 "\"candidates\": %zu, \"capped\": %s, \"target_power\": ",
            p->n_configs, p->replicates, p->n_configs * (size_t)p->replicates, p->n_candidates,
            p->capped ? "true" : "false");
    cov_emit_json_number(out, o->power.target);
    fprintf(out, ", \"planner_seed\": %lu, \"planner_seed_from\": \"%s\"", seed,
            from_archive ? "archive" : o->seed_given ? "option" : "default");
    fputs(", \"claims\": [", out);
    for (size_t j = 0; j < p->n; j++) {
        const cov_plan_claim *it = &p->items[j];
        const cov_claim *cl = &c->items[it->claim];
        fprintf(out, "%s\n  {\"kind\": \"%s\", \"treatment\": ", j ? "," : "",
                cov_claim_kind_word(cl->kind));
        cov_emit_json_string(out, g->vars[cl->treatment].name);
        fputs(", \"outcome\": ", out);
        cov_emit_json_string(out, g->vars[cl->outcome].name);
        fprintf(out, ", \"how\": \"%s\", \"from_noise\": %s, \"runs_now\": ", mode_word(it),
                it->from_noise ? "true" : "false");
        cov_emit_json_number(out, it->n_now);
        fputs(", \"power_now\": ", out);
        cov_emit_json_number(out, it->power_now);
        fputs(", \"runs_after\": ", out);
        cov_emit_json_number(out, it->n_after);
        fputs(", \"power_after\": ", out);
        cov_emit_json_number(out, it->power_after);
        fprintf(out, ", \"reaches\": %s, \"unreachable\": %s", it->reaches ? "true" : "false",
                it->unreachable ? "true" : "false");
        fputs(", \"verdict_reason\": ", out);
        if (it->mode == COV_PLAN_FIXED && as != NULL && as->items[it->claim].reason != NULL)
            cov_emit_json_string(out, as->items[it->claim].reason);
        else
            fputs("null", out);
        fputc('}', out);
    }
    fputs("\n]}\n", out);
}

int cov_cmd_plan(const cov_options *o, FILE *out, FILE *note, int *adequate, cov_error *err)
{
    (void)note;
    cov_graph *g = NULL;
    cov_claims *c = NULL;
    cov_archive *ar = NULL;
    cov_data *d = NULL;
    cov_assessments *as = NULL;
    cov_plan *p = NULL;
    *adequate = 0;
    if (o->graph_path == NULL)
        return cov_fail(err, COV_EINPUT, "", "plan needs a graph file: shoal plan GRAPH [ARCHIVE]");
    const char *path = o->out_path != NULL ? o->out_path : DEFAULT_PLAN_PATH;
    const char *inputs[] = {o->graph_path, o->archive_path};
    int rc = cov_plan_check_limits(o->budget, o->replicates, err);
    if (rc != COV_OK) goto done;
    if ((rc = cov_output_check(path, 0, inputs, 2, "-o", err)) != COV_OK) goto done;
    if ((rc = cov_graph_parse_file(o->graph_path, &g, err)) != COV_OK) goto done;
    size_t n_inputs = 0;
    for (size_t v = 0; v < g->n_vars; v++) n_inputs += g->vars[v].role == COV_INPUT;
    if (n_inputs == 0) {
        rc = cov_fail(err, COV_EINPUT, o->graph_path, "found no input in the graph, expected at "
                      "least one: a plan sets the inputs of new runs");
        goto done;
    }
    if ((rc = cov_claims_derive(g, &c, err)) != COV_OK) goto done;
    if (o->archive_path != NULL) {
        if ((rc = cov_archive_open(o->archive_path, o->table, &ar, err)) != COV_OK) goto done;
        rc = cov_data_read(ar, g, NULL, NULL, &d, err);
        cov_archive_close(ar);
        if (rc != COV_OK) goto done;
        if (d->n_runs > 0 && (rc = cov_assess(g, c, d, &o->power, &as, err)) != COV_OK) goto done;
    }
    /* The planner's seed: --seed, or one drawn from the archive's runs, so that each round plans
     * from another stream yet the same archive always gives the same plan. */
    cov_coverage_options copt = o->coverage;
    int from_archive = !o->seed_given && d != NULL && d->n_runs > 0;
    if (from_archive) copt.seed = cov_runs_fingerprint(d);
    if ((rc = cov_plan_make(g, c, d, as, &o->power, &copt, o->budget, o->replicates, &p,
                            err)) != COV_OK)
        goto done;
    if ((rc = cov_plan_write_csv(g, p, path, err)) != COV_OK) goto done;
    size_t n_testable = 0;
    for (size_t i = 0; i < c->n; i++) n_testable += c->items[i].status == COV_TESTABLE;
    if (!o->quiet && o->format == COV_FMT_JSON) print_json(out, o, g, c, as, p, path, copt.seed, from_archive);
    else if (!o->quiet) print_report(out, o, g, c, as, p, n_testable, path, copt.seed, from_archive);
    int all = 1;
    for (size_t j = 0; j < p->n; j++) all &= p->items[j].reaches;
    *adequate = all;
done:
    cov_plan_free(p);
    cov_assessments_free(as);
    cov_data_free(d);
    cov_claims_free(c);
    cov_graph_free(g);
    return rc;
}
