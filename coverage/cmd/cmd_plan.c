/* The `shoal plan` command: plan the next runs, print the plan, write the plan file (plan_file.c).
 * See LICENSE. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

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

/* What the plan's run adds besides its table: the models behind it, its cost, rounds, record. */
typedef struct {
    const char *record_note;  /* where the predictions were recorded, or why not */
    char digest[65];
    size_t full_configs;      /* --rounds: configurations of the whole plan; 0 otherwise */
    size_t full_reach;        /* --rounds: claims the whole plan brings to the target */
    const char *cost_column;  /* the column the cost model was fitted on, or NULL */
} plan_extra_info;

static void print_models(FILE *out, const cov_options *o, const cov_plan *p,
                         const plan_extra_info *xi)
{
    if (p->n_curved > 0)
        fprintf(out, "\nbent response: %zu outcome%s showed lack of fit to a straight line (F test, "
                     "1%%); their predictions use a quadratic mean in the numeric inputs, and the "
                     "straight-line test's residual SD includes the bend.\n",
                p->n_curved, p->n_curved == 1 ? "" : "s");
    if (p->n_hetero > 0)
        fprintf(out, "\nchanging noise: the residual spread of %zu outcome%s changes over the inputs "
                     "(Harvey's log-linear model, Koenker's test at 1%%); runs in noisy regions are "
                     "valued for the information they add net of the noise they bring.\n",
                p->n_hetero, p->n_hetero == 1 ? "" : "s");
    if (p->n_kept_inside > 0)
        fprintf(out, "\nkept inside: %zu candidate%s beyond the runs' range (by more than 10%% of an "
                     "input's span) were left out, since the models are fitted on the runs and say "
                     "nothing reliable far outside; the predictions assume the response and noise "
                     "there continue as at the edge of the runs.\n",
                p->n_kept_inside, p->n_kept_inside == 1 ? "" : "s");
    if (p->have_cost)
        fprintf(out, "\npredicted total cost: %.6g (sum of the fitted cost of each planned run; "
                     "cost column '%s', log-linear model with Duan's smearing)%s\n",
                p->total_cost, xi->cost_column,
                o->cost_budget > 0 ? "; within --cost-budget" : "");
    else if (o->cost_budget > 0)
        fprintf(out, "\npredicted total cost: %.6g runs (no cost column: each run costs 1)\n",
                p->total_cost);
    if (xi->full_configs > 0) {
        size_t rest = xi->full_configs > p->n_configs ? xi->full_configs - p->n_configs : 0;
        fprintf(out, "\nround 1 of %d: this batch holds %zu configuration%s (%zu of them where the "
                     "noise, bend and cost models know least). Run it, import the runs and plan "
                     "again: the models are refitted and the rest re-planned. The whole plan now "
                     "counts %zu configurations (%zu claim%s to the target), so about %zu remain.\n",
                o->rounds, p->n_configs, p->n_configs == 1 ? "" : "s", p->n_explore,
                xi->full_configs, xi->full_reach, xi->full_reach == 1 ? "" : "s", rest);
    }
    if (xi->record_note != NULL) fprintf(out, "\npredictions: %s\n", xi->record_note);
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
    size_t n_assumed = 0, n_unsized = 0, n_unreach = 0, n_noise = 0, n_fixed = 0, n_seed = 0;
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
        n_seed += it->seed_unblocked != 0;
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
    if (n_seed > 0)
        fprintf(out, "\n%zu claim%s whose test uses seed blocks %s sized here by the test without "
                     "them (power now without blocks): the planned runs carry fresh seeds, and a "
                     "run on a seed of its own adds nothing to a blocked test. Rerunning the "
                     "archive's shared seeds at the planned configurations would do better.\n",
                n_seed, n_seed == 1 ? "" : "s", n_seed == 1 ? "is" : "are");
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
                       unsigned long seed, int from_archive, const plan_extra_info *xi)
{
    fprintf(out, "{\"schema_version\": 1, \"graph\": ");
    cov_emit_json_string(out, o->graph_path);
    fprintf(out, ", \"plan_file\": ");
    cov_emit_json_string(out, path);
    fprintf(out, ", \"configurations\": %zu, \"replicates\": %d, \"runs\": %zu, "
                 "\"candidates\": %zu, \"capped\": %s, \"total_cost\": ",
            p->n_configs, p->replicates, p->n_configs * (size_t)p->replicates, p->n_candidates,
            p->capped ? "true" : "false");
    cov_emit_json_number(out, p->total_cost);
    fprintf(out, ", \"cost_fitted\": %s, \"curved_outcomes\": %zu, \"noisy_outcomes\": %zu, "
                 "\"kept_inside\": %zu, \"explore\": %zu, \"target_power\": ",
            p->have_cost ? "true" : "false", p->n_curved, p->n_hetero, p->n_kept_inside,
            p->n_explore);
    cov_emit_json_number(out, o->power.target);
    fprintf(out, ", \"planner_seed\": %lu, \"planner_seed_from\": \"%s\"", seed,
            from_archive ? "archive" : o->seed_given ? "option" : "default");
    fprintf(out, ", \"plan_sha256\": \"%s\", \"recorded\": %s, \"rounds\": %d, "
                 "\"whole_plan_configurations\": %zu",
            xi->digest, xi->record_note != NULL && strncmp(xi->record_note, "recorded", 8) == 0
                            ? "true" : "false",
            o->rounds, xi->full_configs > 0 ? xi->full_configs : p->n_configs);
    fputs(", \"claims\": [", out);
    for (size_t j = 0; j < p->n; j++) {
        const cov_plan_claim *it = &p->items[j];
        const cov_claim *cl = &c->items[it->claim];
        fprintf(out, "%s\n  {\"kind\": \"%s\", \"treatment\": ", j ? "," : "",
                cov_claim_kind_word(cl->kind));
        cov_emit_json_string(out, g->vars[cl->treatment].name);
        fputs(", \"outcome\": ", out);
        cov_emit_json_string(out, g->vars[cl->outcome].name);
        fprintf(out, ", \"how\": \"%s\", \"from_noise\": %s, \"sized_without_seed_blocks\": %s, "
                "\"runs_now\": ", mode_word(it), it->from_noise ? "true" : "false",
                it->seed_unblocked ? "true" : "false");
        cov_emit_json_number(out, it->n_now);
        cov_emit_json_num_field(out, "power_now", it->power_now);
        cov_emit_json_num_field(out, "runs_after", it->n_after);
        cov_emit_json_num_field(out, "power_after", it->power_after);
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

/* Record the plan's predictions with its file's digest: in shoal's own archive, or in the
 * --history side file; never in the user's archive. */
static int record_predictions(const cov_options *o, const cov_graph *g, const cov_claims *c,
                              const cov_plan *p, const cov_data *d, int owned, const char *path,
                              plan_extra_info *xi, char *note_buf, size_t note_size,
                              cov_error *err)
{
    const char *db = o->history_path != NULL ? o->history_path : owned ? o->archive_path : NULL;
    if (db == NULL) {
        snprintf(note_buf, note_size, "not recorded (%s; --history FILE keeps them for the "
                                      "audit that shoal survey shows once the runs arrive)",
                 o->archive_path ? "the archive is not shoal's own" : "no archive");
        xi->record_note = note_buf;
        return COV_OK;
    }
    if (o->history_path != NULL && o->archive_path != NULL) {
        struct stat sa, sh;
        if (stat(o->archive_path, &sa) == 0 && stat(o->history_path, &sh) == 0 &&
            sa.st_dev == sh.st_dev && sa.st_ino == sh.st_ino)
            return cov_fail(err, COV_EINPUT, "", "--history %s is the archive itself; the "
                                                 "predictions need a file of their own",
                            o->history_path);
    }
    cov_pred_record r;
    memset(&r, 0, sizeof r);
    time_t now = time(NULL);
    struct tm tm_utc;
    if (gmtime_r(&now, &tm_utc) == NULL ||
        strftime(r.made_at, sizeof r.made_at, "%Y-%m-%dT%H:%M:%SZ", &tm_utc) == 0)
        snprintf(r.made_at, sizeof r.made_at, "unknown");
    memcpy(r.digest, xi->digest, sizeof r.digest);
    r.plan_file = (char *)path;
    r.runs_before = d != NULL ? (long long)d->n_runs : 0;
    r.target = o->power.target;
    r.total_cost = p->have_cost ? p->total_cost : NAN;
    r.seeds = p->seeds;
    r.n_seeds = p->n_configs * (size_t)p->replicates;
    r.claims = calloc(p->n + 1, sizeof *r.claims);
    if (r.claims == NULL) return cov_fail(err, COV_ENOMEM, "", "out of memory");
    for (size_t j = 0; j < p->n; j++) {
        const cov_plan_claim *it = &p->items[j];
        const cov_claim *cl = &c->items[it->claim];
        cov_pred_claim *pc = &r.claims[r.n_claims++];
        pc->kind = cl->kind == COV_CLAIM_EFFECT ? "effect" : "absence";
        pc->treatment = g->vars[cl->treatment].name;
        pc->outcome = g->vars[cl->outcome].name;
        pc->power_now = it->power_now;
        pc->power_pred = it->power_after;
        pc->runs_now = it->n_now;
        pc->runs_after = it->n_after;
        pc->reaches = it->reaches;
    }
    int rc = cov_pred_save(db, o->history_path != NULL, &r, err);
    free(r.claims);
    if (rc != COV_OK) return rc;
    snprintf(note_buf, note_size, "recorded in %s with the plan file's SHA-256 %.16s...; shoal "
                                  "survey compares them with what the runs achieve once they "
                                  "arrive", db, xi->digest);
    xi->record_note = note_buf;
    return COV_OK;
}

int cov_cmd_plan(const cov_options *o, FILE *out, FILE *note, int *adequate, cov_error *err)
{
    (void)note;
    double *run_cost = NULL;
    plan_extra_info xi;
    memset(&xi, 0, sizeof xi);
    char note_buf[1024];
    int owned = 0;
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
    const char *side_inputs[] = {o->graph_path, o->archive_path, path};
    if (o->history_path != NULL &&
        (rc = cov_output_check(o->history_path, 0, side_inputs, 3, "--history", err)) != COV_OK)
        goto done;
    if ((rc = cov_graph_parse_file(o->graph_path, &g, err)) != COV_OK) goto done;
    /* The cost column: --cost-column, else the graph's `ledger NAME cost`. */
    const char *cost_column = o->cost_column;
    if (cost_column == NULL && cov_graph_cost_column(g) != NULL)
        cost_column = cov_graph_cost_column(g)->name;
    if (o->cost_column != NULL && o->archive_path == NULL) {
        rc = cov_fail(err, COV_EINPUT, "", "--cost-column needs an ARCHIVE whose runs record "
                                           "their cost");
        goto done;
    }
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
        owned = cov_archive_owned(ar);
        rc = cov_data_read(ar, g, NULL, NULL, &d, err);
        if (rc == COV_OK && cost_column != NULL) {
            size_t n_cost = 0;
            rc = cov_archive_read_number(ar, cost_column, &run_cost, &n_cost, err);
            /* Rows repeating a run are counted once: the cost of the run's first row. */
            if (rc == COV_OK) cov_data_rows_to_runs(d, run_cost, &n_cost);
            if (rc == COV_OK && n_cost != d->n_runs)
                rc = cov_fail(err, COV_EIO, o->archive_path, "the cost column gave %zu rows for "
                                                             "%zu runs", n_cost, d->n_runs);
        }
        cov_archive_close(ar);
        if (rc != COV_OK) goto done;
        if (d->n_runs > 0 && (rc = cov_assess(g, c, d, &o->power, &as, err)) != COV_OK) goto done;
    }
    cov_coverage_options copt = o->coverage;
    int from_archive = !o->seed_given && d != NULL && d->n_runs > 0;
    if (from_archive) copt.seed = cov_runs_fingerprint(d);
    xi.cost_column = cost_column;
    cov_plan_extra x = {run_cost, o->cost_budget, 0};
    /* A cost budget without a run count fills the cost. */
    long budget = o->budget == 0 && o->cost_budget > 0 ? COV_PLAN_AUTO_CAP : o->budget;
    if ((rc = cov_plan_make_ex(g, c, d, as, &o->power, &copt, budget, o->replicates, &x,
                               &p, err)) != COV_OK)
        goto done;
    if (o->rounds > 1 && p->n_configs > 1) {
        /* Round 1 of K: a K-th of the whole plan, a quarter of it where the models know least. */
        xi.full_configs = p->n_configs;
        for (size_t j = 0; j < p->n; j++) xi.full_reach += p->items[j].reaches != 0;
        size_t first = (p->n_configs + (size_t)o->rounds - 1) / (size_t)o->rounds;
        x.explore = first / 4;
        x.cost_budget = 0;
        cov_plan_free(p);
        p = NULL;
        if ((rc = cov_plan_make_ex(g, c, d, as, &o->power, &copt,
                                   (long)(first - x.explore), o->replicates, &x, &p, err)) != COV_OK)
            goto done;
    }
    if ((rc = cov_plan_write_csv(g, p, path, err)) != COV_OK) goto done;
    if ((rc = cov_sha256_file(path, xi.digest, err)) == COV_OK)
        rc = record_predictions(o, g, c, p, d, owned, path, &xi, note_buf, sizeof note_buf, err);
    if (rc != COV_OK) {
        /* A plan whose predictions were not recorded could never be checked against what its
         * runs achieve: the command fails, and leaves no plan file behind. */
        if (strcmp(path, "-") != 0) unlink(path);
        goto done;
    }
    size_t n_testable = 0;
    for (size_t i = 0; i < c->n; i++) n_testable += c->items[i].status == COV_TESTABLE;
    if (!o->quiet && o->format == COV_FMT_JSON)
        print_json(out, o, g, c, as, p, path, copt.seed, from_archive, &xi);
    else if (!o->quiet) {
        cov_reflow rf;   /* long notes and names wrap to the terminal's width */
        FILE *w = cov_reflow_begin(&rf, out);
        print_report(w, o, g, c, as, p, n_testable, path, copt.seed, from_archive);
        print_models(w, o, p, &xi);
        cov_reflow_end(&rf, out, o->width);
    }
    int all = 1;
    for (size_t j = 0; j < p->n; j++) all &= p->items[j].reaches;
    *adequate = all;
done:
    free(run_cost);
    cov_plan_free(p);
    cov_assessments_free(as);
    cov_data_free(d);
    cov_claims_free(c);
    cov_graph_free(g);
    return rc;
}
