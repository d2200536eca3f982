/* The `shoal power` command: power, MDE and runs needed per claim, as a table, CSV or JSON.
 * See LICENSE. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "coverage/plan/plan.h"
#include "coverage/report/report.h"

static void fmt_num(char *buf, size_t size, double x)
{
    if (isnan(x)) snprintf(buf, size, "-");
    else if (isinf(x)) snprintf(buf, size, "%s", x > 0 ? "inf" : "-inf");
    else snprintf(buf, size, "%.4g", x);
}

static void family_line(const cov_assessments *as, size_t width, FILE *out)
{
    const cov_power_options *p = &as->opt;
    char line[512];
    if (p->bonferroni && as->n_testable > 1)
        snprintf(line, sizeof line, "family: Bonferroni over %zu testable claims: alpha %g / %zu = "
                 "%.4g per claim; target power %g; %s tests", as->n_testable, p->alpha,
                 as->n_testable, cov_family_alpha(p, as->n_testable), p->target,
                 p->one_sided ? "one-sided (where a sign is given)" : "two-sided");
    else
        snprintf(line, sizeof line, "family: %s: alpha %g per claim; target power %g; %s tests",
                 !p->bonferroni          ? "no correction (--family none)"
                 : as->n_testable == 0   ? "Bonferroni over 0 testable claims"
                                         : "Bonferroni over 1 testable claim",
                 p->alpha, p->target, p->one_sided ? "one-sided (where a sign is given)"
                                                   : "two-sided");
    cov_term_wrap(out, line, 0, 2, width);
    fputc('\n', out);
    snprintf(line, sizeof line, "test: %s (%s standard errors); power by %s",
             cov_test_word(p->test), p->test == COV_TEST_ROBUST ? "HC3" : "OLS",
             p->power_by == COV_POWER_BY_FORMULA      ? "the normal formula"
             : p->power_by == COV_POWER_BY_RESAMPLING ? "the wild bootstrap"
                                                      : "the normal formula, or the wild "
                                                        "bootstrap where the noise calls for it");
    cov_term_wrap(out, line, 0, 2, width);
    fputc('\n', out);
}

/* "[a, b]" or "[]" (nothing to adjust for) into buf, as the claim notation writes the set. */
static void set_text(const cov_graph *g, const cov_claim *c, char *buf, size_t size)
{
    size_t used = (size_t)snprintf(buf, size, "[");
    for (size_t k = 0; k < c->n_cond && used < size; k++)
        used += (size_t)snprintf(buf + used, size - used, "%s%s", k ? ", " : "",
                                 g->vars[c->cond[k]].name);
    if (used < size) snprintf(buf + used, size - used, "]");
}

/* The table fits the terminal: the claim and its figures in the row; the separating set, sigma,
 * sd(X|S) and the power interval follow the row when the terminal is too narrow for them. Notes
 * come after the table, one per distinct text: a noise note shared by several claims of the same
 * outcome is printed once, after their names. */
/* The note of kind fit (0 noise, 1 lack of fit) of claim i, or NULL. */
static const char *note_of(const cov_assessments *as, size_t i, int fit)
{
    return fit ? as->items[i].fit_note : as->items[i].noise_note;
}

/* Claims i and j share a note: same outcome, same flag, same text. */
static int same_note(const cov_claims *cl, const cov_assessments *as, size_t i, size_t j, int fit)
{
    const char *x = note_of(as, i, fit), *y = note_of(as, j, fit);
    return x != NULL && y != NULL && cl->items[i].outcome == cl->items[j].outcome &&
           as->items[i].noise_flag == as->items[j].noise_flag && strcmp(x, y) == 0;
}

/* Every distinct note of one kind once, after the names of the claims that share it. */
static void shared_notes(const cov_graph *g, const cov_claims *cl, const cov_assessments *as,
                         int fit, size_t width, int *any, FILE *out)
{
    for (size_t i = 0; i < cl->n; i++) {
        if (note_of(as, i, fit) == NULL) continue;
        int seen = 0;
        for (size_t j = 0; j < i && !seen; j++) seen = same_note(cl, as, j, i, fit);
        if (seen) continue;
        if (!*any) fputs("\n", out);
        *any = 1;
        char *line = NULL;
        size_t len = 0;
        FILE *m = open_memstream(&line, &len);
        if (m == NULL) continue;
        fprintf(m, "%s of %s%s for", fit ? "fit" : "noise", g->vars[cl->items[i].outcome].name,
                !fit && as->items[i].noise_flag ? " (power can be off)" : "");
        for (size_t j = i, first = 1; j < cl->n; j++) {
            if (j != i && !same_note(cl, as, i, j, fit)) continue;
            char lab[512];
            cov_claim_pair_label(g, &cl->items[j], lab, sizeof lab);
            fprintf(m, "%s %s", first ? "" : ";", lab);
            first = 0;
        }
        fprintf(m, ": %s", note_of(as, i, fit));
        if (fclose(m) == 0 && line != NULL) {
            cov_term_wrap(out, line, 0, 4, width);
            fputc('\n', out);
        }
        free(line);
    }
}

static int print_table(const cov_graph *g, const cov_claims *cl, const cov_assessments *as,
                        const cov_data *d, size_t width, FILE *out)
{
    char run_line[512], caution[768];
    cov_runs_summary(d, run_line, sizeof run_line);
    size_t col = cov_term_wrap(out, "runs:", 0, 4, width);
    fputc(' ', out);
    cov_term_wrap(out, run_line, col + 1, 4, width);
    fputc('\n', out);
    if (cov_runs_caution(d, g, caution, sizeof caution)) {
        col = cov_term_wrap(out, "caution:", 0, 4, width);
        fputc(' ', out);
        cov_term_wrap(out, caution, col + 1, 4, width);
        fputc('\n', out);
    }
    for (size_t v = 0; v < g->n_vars; v++) {
        char seeds[640];
        if (!cov_seed_outcome_text(g, cl, as, v, seeds, sizeof seeds)) continue;
        col = cov_term_wrap(out, "seeds:", 0, 4, width);
        fputc(' ', out);
        cov_term_wrap(out, seeds, col + 1, 4, width);
        fputc('\n', out);
    }
    family_line(as, width, out);
    static const char *const head[8] = {"claim", "n", "power", "MDE", "effect", "needs",
                                        "verdict", "detail"};
    cov_table *t = cov_table_new(8, head, "lrrrrrll", ".......d");
    if (t == NULL) return COV_ENOMEM;
    int any_noise = 0;
    for (size_t i = 0; t != NULL && i < cl->n; i++) {
        const cov_claim *c = &cl->items[i];
        const cov_assessment *a = &as->items[i];
        char label[512], set[512], n[32], pw[32], mde[32], eff[32], runs[32], verdict[32];
        char detail[1024], e1[32], e2[32], seed[96] = "";
        cov_claim_pair_label(g, c, label, sizeof label);
        if (c->status == COV_TESTABLE) set_text(g, c, set, sizeof set);
        else snprintf(set, sizeof set, "-");
        snprintf(n, sizeof n, "%zu", a->n);
        if (isnan(a->power)) snprintf(pw, sizeof pw, "-");
        else snprintf(pw, sizeof pw, "%.2f", a->power);
        fmt_num(mde, sizeof mde, a->verdict == COV_BLIND ? NAN : a->mde);
        fmt_num(eff, sizeof eff, a->verdict == COV_BLIND ? NAN : a->effect_raw);
        if (a->verdict == COV_BLIND || isnan(a->runs_needed)) snprintf(runs, sizeof runs, "-");
        else if (isinf(a->runs_needed)) snprintf(runs, sizeof runs, "unreachable");
        else snprintf(runs, sizeof runs, "%.0f", a->runs_needed);
        snprintf(verdict, sizeof verdict, "%s%s", cov_verdict_word(a->verdict),
                 a->noise_flag ? "*" : "");
        any_noise |= a->noise_flag;
        fmt_num(e1, sizeof e1, a->sigma);
        fmt_num(e2, sizeof e2, a->sd_treatment_resid);
        if (c->status != COV_TESTABLE || isnan(a->power))
            snprintf(detail, sizeof detail, "-");
        else {
            /* Seed blocks (README.md, "Seed blocks"): used or not, and the seed's share. */
            if (a->seed_blocks_used)
                snprintf(seed, sizeof seed, "; seed blocks used (seed explains %.0f%%; power "
                         "%.2f without)", 100 * a->seed.share, a->power_unblocked);
            else if (a->seed.blocks > 0 && !isnan(a->seed.share))
                snprintf(seed, sizeof seed, "; seed blocks not used (seed explains %.0f%%)",
                         100 * a->seed.share);
            snprintf(detail, sizeof detail, "%s test, power by %s; adjustment set %s; sigma %s, "
                     "sd(X|S) %s; power 95%% interval [%.2f, %.2f]%s", cov_test_word(a->test),
                     cov_method_word(a->power_method), set, e1, e2, a->power_lo, a->power_hi,
                     seed);
        }
        const char *row[8] = {label, n, pw, mde, eff, runs, verdict, detail};
        if (cov_table_add(t, row) != COV_OK) {
            /* A table that lost a row would read as a shorter campaign: fail instead. */
            cov_table_free(t);
            return COV_ENOMEM;
        }
    }
    fputc('\n', out);
    int prc = cov_table_print(t, out, width);
    cov_table_free(t);
    if (prc != COV_OK) return prc;
    fputs("\nMDE and effect (of interest): outcome units per unit of the treatment.\n"
          "needs: runs in all for the target power.\n", out);
    for (size_t i = 0; i < cl->n; i++)
        if (isfinite(as->items[i].turn_lo)) {
            fputs("Claims expected to turn: the height of the turn over the treatment's range.\n",
                  out);
            break;
        }
    if (any_noise) fputs("*: the power figure can be off (notes below).\n", out);
    int any = 0;
    for (size_t i = 0; i < cl->n; i++) {
        const cov_assessment *a = &as->items[i];
        char label[512], line[2048];
        cov_claim_label(g, &cl->items[i], label, sizeof label);
        if (a->reason) {
            if (!any) fputs("\n", out);
            any = 1;
            snprintf(line, sizeof line, "%s: %s: %s", label, cov_verdict_word(a->verdict),
                     a->reason);
            cov_term_wrap(out, line, 0, 4, width);
            fputc('\n', out);
        }
        const cov_claim *cw = &cl->items[i];
        if (a->trend || isfinite(a->shape_f) || cw->effect.per != COV_PER_UNIT ||
            cw->effect.unit == COV_UNIT_SD) {
            /* The effect's shape and units, as the assessment words it, wrapped to the width. */
            if (!any) fputs("\n", out);
            any = 1;
            cov_reflow rf;
            FILE *w = cov_reflow_begin(&rf, out);
            cov_assessment_table_shape(w, label, cw, a);
            cov_reflow_end(&rf, out, width);
        }
        if (a->power_method == COV_METHOD_RESAMPLED) {
            if (!any) fputs("\n", out);
            any = 1;
            snprintf(line, sizeof line, "%s: power resampled: %.3f (Monte Carlo SE %.3f, %zu %s "
                     "bootstrap replicates); the normal formula gives %.3f", label, a->power,
                     a->mc_se, a->replicates, a->resample_kind ? "pairs" : "wild",
                     a->power_formula);
            cov_term_wrap(out, line, 0, 4, width);
            fputc('\n', out);
        }
    }
    /* Noise and fit notes, each text once with the claims of its outcome that share it. */
    shared_notes(g, cl, as, 0, width, &any, out);
    shared_notes(g, cl, as, 1, width, &any, out);
    size_t n_ample = 0, n_underpowered = 0, n_blind = 0;
    for (size_t i = 0; i < as->n; i++) {
        n_ample += as->items[i].verdict == COV_AMPLE;
        n_underpowered += as->items[i].verdict == COV_UNDERPOWERED;
        n_blind += as->items[i].verdict == COV_BLIND;
    }
    fprintf(out, "\n%zu claims: %zu ample, %zu underpowered, %zu untestable\n", as->n, n_ample, n_underpowered,
            n_blind);
    return COV_OK;
}

static void print_csv(const cov_graph *g, const cov_claims *cl, const cov_assessments *as,
                      FILE *out)
{
    cov_record_src src = {g, cl, as, NULL};
    cov_record_csv_header(out, COV_RECORD_ASSESS);
    cov_record_csv_rows(out, &src, 0, cl->n, COV_RECORD_ASSESS);
}

static void print_json(const cov_graph *g, const cov_claims *cl, const cov_assessments *as,
                       const cov_data *d, FILE *out)
{
    const cov_power_options *p = &as->opt;
    fprintf(out, "{\"schema_version\": 3, \"test_se\": \"%s\", \"power_by\": \"%s\", "
            "\"run_identity\": ", cov_test_word(as->opt.test),
            as->opt.power_by == COV_POWER_BY_FORMULA      ? "formula"
            : as->opt.power_by == COV_POWER_BY_RESAMPLING ? "resampling"
                                                          : "auto");
    cov_runs_json(out, d);
    fputs(", \"seed_blocks\": ", out);
    cov_seed_outcomes_json(out, g, cl, as);
    cov_emit_json_num_field(out, "alpha", p->alpha);
    fprintf(out, ", \"family\": \"%s\", \"family_size\": %zu, \"sides\": \"%s\", "
            "\"target_power\": ", p->bonferroni ? "bonferroni" : "none", as->n_testable,
            p->one_sided ? "one-sided where signed" : "two-sided");
    cov_emit_json_number(out, p->target);
    fputs(", \"claims\": [", out);
    cov_record_src src = {g, cl, as, NULL};
    for (size_t i = 0; i < cl->n; i++) {
        fputs(i ? ",\n  " : "\n  ", out);
        cov_record_json(out, &src, i, COV_RECORD_ASSESS);
    }
    fputs(cl->n ? "\n]}\n" : "]}\n", out);
}

int cov_cmd_power(const cov_options *o, FILE *out, FILE *note, int *adequate, cov_error *err)
{
    cov_graph *g = NULL;
    cov_claims *cl = NULL;
    cov_archive *ar = NULL;
    cov_data *d = NULL;
    cov_assessments *as = NULL;
    *adequate = 0;
    if (o->graph_path == NULL || o->archive_path == NULL)
        return cov_fail(err, COV_EINPUT, "", "power needs a graph file and an archive");
    int rc = cov_graph_parse_file(o->graph_path, &g, err);
    if (!rc) rc = cov_claims_derive(g, &cl, err);
    if (!rc) rc = cov_archive_open(o->archive_path, o->table, &ar, err);
    if (!rc)
        rc = cov_data_read_threads(ar, g, o->power.threads,
                                   o->progress && note && !o->quiet ? cov_progress_note : NULL,
                                   note, &d, err);
    if (!rc) rc = cov_assess(g, cl, d, &o->power, &as, err);
    if (rc) goto done;
    /* A graph that implies no claim gives the runs nothing to be adequate for. */
    *adequate = cov_claims_ample(cl, as);
    if (cl->n == 0 && !o->quiet && note != NULL)
        fprintf(note, "shoal: %s implies no claims, so no runs can be adequate for it\n",
                o->graph_path);
    if (o->quiet) goto done;
    switch (o->format) {
    case COV_FMT_JSON: print_json(g, cl, as, d, out); break;
    case COV_FMT_CSV: print_csv(g, cl, as, out); break;
    case COV_FMT_TABLE:
        if (print_table(g, cl, as, d, o->width, out) != COV_OK)
            rc = cov_fail(err, COV_ENOMEM, "", "out of memory while printing the power table");
        break;
    }
done:
    cov_assessments_free(as);
    cov_data_free(d);
    cov_archive_close(ar);
    cov_claims_free(cl);
    cov_graph_free(g);
    return rc;
}
