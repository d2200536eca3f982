/* The survey report's report.md: the verdict, the claims and the history of surveys in Markdown.
 * See LICENSE. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "coverage/report/report.h"

/* Write s as Markdown text: characters that Markdown or inline HTML would read are
 * backslash-escaped (CommonMark allows a backslash before any ASCII punctuation). */
static void md_text(FILE *out, const char *s)
{
    for (const char *p = s ? s : ""; *p; p++) {
        if ((unsigned char)*p < 0x20 || *p == 0x7f) fputc(' ', out);
        else {
            if (strchr("\\`*_{}[]<>()#!|&~", *p) != NULL) fputc('\\', out);
            fputc(*p, out);
        }
    }
}

/* Write a variable name as a Markdown code span, which shows it verbatim: the fence is longer than
 * any backtick run inside, and '|' is escaped so that a table cell does not split. */
static void md_name(FILE *out, const char *s)
{
    size_t run = 0, longest = 0;
    for (const char *p = s; *p; p++) {
        run = *p == '`' ? run + 1 : 0;
        if (run > longest) longest = run;
    }
    for (size_t k = 0; k <= longest; k++) fputc('`', out);
    if (longest) fputc(' ', out);
    for (const char *p = s; *p; p++) {
        if (*p == '|') fputc('\\', out);
        /* A CR or LF would end the table row; other control characters show as nothing. */
        fputc((unsigned char)*p < 0x20 || *p == 0x7f ? ' ' : *p, out);
    }
    if (longest) fputc(' ', out);
    for (size_t k = 0; k <= longest; k++) fputc('`', out);
}

/* ---- report.md ------------------------------------------------------------------------------- */

int cov_report_markdown(const cov_findings *f, const cov_report_info *info, FILE *out)
{
    long long count[3];
    cov_report_count_verdicts(f, count);
    size_t *order = malloc((f->claims->n ? f->claims->n : 1) * sizeof *order);
    if (order == NULL) return COV_ENOMEM;   /* the caller gives the message */
    cov_report_order(f, order);
    char buf[160];
    fputs("# Survey of the campaign\n\nGraph ", out);
    md_name(out, f->graph->path);
    fputs(", archive ", out);
    md_name(out, f->opt && f->opt->archive_path ? f->opt->archive_path : "");
    fputs(", surveyed ", out);
    md_text(out, info->generated);
    fprintf(out, " (UTC).\n\n**%s** %zu runs in %zu batch%s: %lld ample, %lld underpowered, %lld "
                 "untestable claims.\n", info->adequate ? "Adequate." : "Not adequate yet.",
            f->data ? f->data->n_runs : 0, f->data ? f->data->n_batches : 0,
            f->data && f->data->n_batches == 1 ? "" : "es", count[COV_AMPLE], count[COV_UNDERPOWERED],
            count[COV_BLIND]);
    if (info->gate_note) {
        fputs("\n", out);
        md_text(out, info->gate_note);
        fputs("\n", out);
    }
    if (f->data != NULL) {
        char run_line[512], caution[768];
        cov_runs_summary(f->data, run_line, sizeof run_line);
        fputs("\nRuns: ", out);
        md_text(out, run_line);
        fputs(".\n", out);
        if (cov_runs_caution(f->data, f->graph, caution, sizeof caution)) {
            fputs("\nCaution: ", out);
            md_text(out, caution);
            fputs(".\n", out);
        }
    }
    if (f->coverage != NULL) {
        char m[32], p2[32], p3[32];
        cov_report_share_text(f->coverage->marginal_share, m, sizeof m);
        cov_report_share_text(f->coverage->pairwise_share, p2, sizeof p2);
        cov_report_share_text(f->coverage->threeway_share, p3, sizeof p3);
        fprintf(out, "\nCoverage (bins or cells with at least %zu runs): marginal %s, 2-way %s, "
                     "3-way %s.\n", f->coverage->opt.min_runs, m, p2, p3);
    }
    fputs("\n## Claims\n\n| # | verdict | kind | treatment | outcome | adjustment set | effect of "
          "interest | runs | power | MDE | runs needed | why |\n"
          "|---:|---|---|---|---|---|---|---:|---:|---:|---:|---|\n", out);
    for (size_t k = 0; k < f->claims->n; k++) {
        size_t i = order[k];
        const cov_claim *c = &f->claims->items[i];
        const cov_assessment *a = c->status == COV_TESTABLE ? cov_report_assessment(f, i) : NULL;
        fprintf(out, "| %zu | %s | %s | ", i + 1, cov_verdict_word(cov_report_verdict(f, i)),
                cov_report_kind(c));
        md_name(out, cov_report_var(f, c->treatment));
        fputs(" | ", out);
        md_name(out, cov_report_var(f, c->outcome));
        fputs(" | ", out);
        if (c->status != COV_TESTABLE) fputs("-", out);
        for (size_t m = 0; c->status == COV_TESTABLE && m < c->n_cond; m++) {
            if (m) fputs(", ", out);
            md_name(out, cov_report_var(f, c->cond[m]));
        }
        cov_report_effect_text(c, buf, sizeof buf);
        fputs(" | ", out);
        md_text(out, buf);
        cov_report_num_text(a ? (double)a->n : NAN, "%.0f", buf, sizeof buf);
        fprintf(out, " | %s", buf);
        cov_report_num_text(a ? a->power : NAN, "%.2f", buf, sizeof buf);
        fprintf(out, " | %s", buf);
        cov_report_num_text(a ? a->mde : NAN, "%.4g", buf, sizeof buf);
        fprintf(out, " | %s", buf);
        cov_report_num_text(a ? a->runs_needed : NAN, "%.0f", buf, sizeof buf);
        fprintf(out, " | %s | ", buf);
        md_text(out, cov_report_reason(f, i) ? cov_report_reason(f, i) : "");
        fputs(" |\n", out);
    }
    if (info->plot_note) {
        fputs("\nPlots were skipped: ", out);
        md_text(out, info->plot_note);
        fputs("\n", out);
    } else {
        fputs("\nPlots (PNG and SVG) are beside this file and inside index.html.\n", out);
    }
    fputs("\n## History of surveys\n\n", out);
    if (info->store == COV_HISTORY_NONE)
        fputs("No history is kept for this archive (not made by `shoal import`, and no "
              "`--history` file given).\n\n", out);
    fputs("| snapshot | when (UTC) | runs | ample | underpowered | untestable |\n|---:|---|---:|---:|---:|---:|\n",
          out);
    for (size_t r = 0; r < info->n_snapshots; r++) {
        fprintf(out, "| %zu | ", r + 1);
        md_text(out, info->snapshots[r].at);
        fprintf(out, " | %lld | %lld | %lld | %lld |\n", info->snapshots[r].n_runs,
                info->snapshots[r].n_ample, info->snapshots[r].n_underpowered, info->snapshots[r].n_blind);
    }
    cov_report_audit_md(f, out);
    fputs("\n## Read with care\n\n", out);
    for (size_t k = 0; k < cov_report_n_cautions; k++)
        fprintf(out, "- %s\n", cov_report_cautions[k]);
    free(order);
    return COV_OK;
}
