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

static void family_line(const cov_assessments *as, FILE *out)
{
    const cov_power_options *p = &as->opt;
    if (p->bonferroni && as->n_testable > 1)
        fprintf(out, "family: Bonferroni over %zu testable claims: alpha %g / %zu = %.4g per "
                "claim; target power %g; %s tests\n", as->n_testable, p->alpha, as->n_testable,
                cov_family_alpha(p, as->n_testable), p->target,
                p->one_sided ? "one-sided (where a sign is given)" : "two-sided");
    else
        fprintf(out, "family: %s: alpha %g per claim; target power %g; %s tests\n",
                !p->bonferroni          ? "no correction (--family none)"
                : as->n_testable == 0   ? "Bonferroni over 0 testable claims"
                                        : "Bonferroni over 1 testable claim",
                p->alpha, p->target,
                p->one_sided ? "one-sided (where a sign is given)" : "two-sided");
}

static void print_table(const cov_graph *g, const cov_claims *cl, const cov_assessments *as,
                        const cov_data *d, FILE *out)
{
    char run_line[512], caution[768];
    cov_runs_summary(d, run_line, sizeof run_line);
    fprintf(out, "runs: %s\n", run_line);
    if (cov_runs_caution(d, g, caution, sizeof caution)) fprintf(out, "caution: %s\n", caution);
    family_line(as, out);
    int width = 5;
    for (size_t i = 0; i < cl->n; i++) {
        char label[512];
        cov_claim_label(g, &cl->items[i], label, sizeof label);
        int w = (int)cov_text_width(label);
        if (w > width) width = w;
    }
    fprintf(out, "\n%-*s %9s %9s %9s  %-22s %-22s %10s  %s\n", width, "claim", "n", "sigma",
            "sd(X|S)", "power [95% interval]", "MDE (effect)", "runs", "verdict");
    for (size_t i = 0; i < cl->n; i++) {
        const cov_claim *c = &cl->items[i];
        const cov_assessment *a = &as->items[i];
        char label[512], sigma[32], sdx[32], pw[96], mde[80], runs[32], e1[32], e2[32], e3[32];
        cov_claim_label(g, c, label, sizeof label);
        fmt_num(sigma, sizeof sigma, a->sigma);
        fmt_num(sdx, sizeof sdx, a->sd_treatment_resid);
        if (isnan(a->power)) snprintf(pw, sizeof pw, "-");
        else snprintf(pw, sizeof pw, "%.2f [%.2f, %.2f]", a->power, a->power_lo, a->power_hi);
        fmt_num(e1, sizeof e1, a->mde);
        fmt_num(e2, sizeof e2, a->effect_raw);
        snprintf(mde, sizeof mde, "%s (%s)", e1, e2);
        fmt_num(e3, sizeof e3, a->runs_needed);
        snprintf(runs, sizeof runs, "%s", isnan(a->runs_needed) ? "-" : e3);
        if (isfinite(a->runs_needed)) snprintf(runs, sizeof runs, "%.0f", a->runs_needed);
        fputs(label, out);
        for (int w = (int)cov_text_width(label); w < width; w++) fputc(' ', out);
        fprintf(out, " %9zu %9s %9s  %-22s %-22s %10s  %s%s\n", a->n, sigma, sdx, pw,
                a->verdict == COV_BLIND ? "-" : mde, a->verdict == COV_BLIND ? "-" : runs,
                cov_verdict_word(a->verdict), a->noise_flag ? " (noise?)" : "");
    }
    int any = 0;
    for (size_t i = 0; i < cl->n; i++) {
        const cov_assessment *a = &as->items[i];
        const cov_claim *cw = &cl->items[i];
        if (a->reason == NULL && a->noise_note == NULL && !a->trend && !isfinite(a->shape_f) &&
            cw->effect.per == COV_PER_UNIT && cw->effect.unit != COV_UNIT_SD)
            continue;
        if (!any) fputs("\n", out);
        any = 1;
        char label[512];
        cov_claim_label(g, &cl->items[i], label, sizeof label);
        if (a->reason) fprintf(out, "%s: %s: %s\n", label, cov_verdict_word(a->verdict), a->reason);
        if (a->noise_note)
            fprintf(out, "%s: noise%s: %s\n", label, a->noise_flag ? " (cannot be trusted)" : "",
                    a->noise_note);
        cov_assessment_table_shape(out, label, &cl->items[i], a);
    }
    size_t n_ample = 0, n_underpowered = 0, n_blind = 0;
    for (size_t i = 0; i < as->n; i++) {
        n_ample += as->items[i].verdict == COV_AMPLE;
        n_underpowered += as->items[i].verdict == COV_UNDERPOWERED;
        n_blind += as->items[i].verdict == COV_BLIND;
    }
    fprintf(out, "\n%zu claims: %zu ample, %zu underpowered, %zu untestable\n", as->n, n_ample, n_underpowered,
            n_blind);
}

static void print_csv(const cov_graph *g, const cov_claims *cl, const cov_assessments *as,
                      FILE *out)
{
    cov_record_src src = {g, cl, as, NULL};
    cov_record_csv_header(out, COV_RECORD_ASSESS);
    for (size_t i = 0; i < cl->n; i++) cov_record_csv_row(out, &src, i, COV_RECORD_ASSESS);
}

static void print_json(const cov_graph *g, const cov_claims *cl, const cov_assessments *as,
                       const cov_data *d, FILE *out)
{
    const cov_power_options *p = &as->opt;
    fputs("{\"schema_version\": 3, \"run_identity\": ", out);
    cov_runs_json(out, d);
    fputs(", \"alpha\": ", out);
    cov_emit_json_number(out, p->alpha);
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
        rc = cov_data_read(ar, g, o->progress && note && !o->quiet ? cov_progress_note : NULL, note,
                           &d, err);
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
    case COV_FMT_TABLE: print_table(g, cl, as, d, out); break;
    }
done:
    cov_assessments_free(as);
    cov_data_free(d);
    cov_archive_close(ar);
    cov_claims_free(cl);
    cov_graph_free(g);
    return rc;
}
