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

/* What the survey computed as cautions: a heading per kind; claims sharing a text listed once. */
static void md_found_cautions(FILE *out, const cov_findings *f, const cov_cautions *c)
{
    fputs("\n## What these figures rest on\n", out);
    if (c == NULL || c->n == 0) {
        fputs("\nNo caution was computed for this campaign.\n", out);
        return;
    }
    const cov_caution_kind *last = NULL;
    for (size_t j = 0; j < c->n; j++) {
        const cov_caution *it = &c->items[j];
        if (it->kind != last) {
            fputs("\n### ", out);
            md_text(out, it->kind->title);
            fputs("\n\n", out);
            last = it->kind;
        }
        if (cov_caution_is_repeat(c, j)) continue;
        fputs("- ", out);
        if (it->claim >= 0) {
            int first = 1;
            for (size_t i = j; i < c->n && c->items[i].kind == it->kind; i++) {
                if (strcmp(c->items[i].text, it->text) != 0) continue;
                size_t k = (size_t)c->items[i].claim;
                const cov_claim *cl = &f->claims->items[k];
                fputs(first ? "" : "; ", out);
                md_name(out, cov_report_var(f, cl->treatment));
                fputs(" ", out);
                md_text(out, cov_claim_arrow(cl->kind));
                fputs(" ", out);
                md_name(out, cov_report_var(f, cl->outcome));
                fprintf(out, " (%s)", cov_verdict_word(cov_report_verdict(f, k)));
                first = 0;
            }
            fputs(": ", out);
        }
        md_text(out, it->text);
        fputs("\n", out);
    }
}

/* The audit trail: version, command line, options (defaults marked), seed, digests, time. */
static void md_audit(FILE *out, const cov_findings *f, const cov_report_info *info)
{
    const cov_options *o = f->opt;
    if (o == NULL) return;
    fputs("\n## Audit trail\n\n- shoal version: ", out);
    md_text(out, o->version ? o->version : "unknown");
    fputs("\n- command line: ", out);
    char *line = NULL;
    size_t len = 0;
    FILE *m = open_memstream(&line, &len);
    if (m != NULL) {
        cov_audit_command_line(o, m);
        if (fclose(m) == 0 && line != NULL) md_name(out, line);
    }
    free(line);
    fputs("\n- archive: ", out);
    md_name(out, o->archive_path ? o->archive_path : "");
    fputs(", table ", out);
    md_name(out, o->table ? o->table : COV_DEFAULT_TABLE);
    fprintf(out, ", %zu rows; runs digest (SHA-256 of the recorded columns) ",
            f->data ? f->data->n_runs : 0);
    md_name(out, info->runs_digest ? info->runs_digest : "not computed");
    fputs("\n- graph: ", out);
    md_name(out, f->graph->path);
    fputs("; SHA-256 of the file ", out);
    md_name(out, info->graph_digest && info->graph_digest[0] ? info->graph_digest : "not computed");
    fprintf(out, "\n- seed: %lu\n- surveyed (UTC): ", o->coverage.seed);
    md_text(out, info->generated);
    fputs("\n\n| option | value | set by |\n|---|---|---|\n", out);
    cov_audit_option opts[40];
    size_t n = cov_audit_options(o, opts, sizeof opts / sizeof opts[0]);
    for (size_t k = 0; k < n; k++) {
        fputs("| ", out);
        char name[64];
        snprintf(name, sizeof name, "--%s", opts[k].name);
        md_name(out, name);
        fputs(" | ", out);
        md_text(out, opts[k].value);
        fprintf(out, " | %s |\n", opts[k].given ? "command line" : "default");
    }
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
        char run_line[512];
        cov_runs_summary(f->data, run_line, sizeof run_line);
        fputs("\nRuns: ", out);
        md_text(out, run_line);
        fputs(".\n", out);   /* a conflicting run is among the cautions below */
    }
    if (f->coverage != NULL) {
        char m[32], p2[32], p3[32];
        cov_report_share_text(f->coverage->marginal_share, m, sizeof m);
        cov_report_share_text(f->coverage->pairwise_share, p2, sizeof p2);
        cov_report_share_text(f->coverage->threeway_share, p3, sizeof p3);
        fprintf(out, "\nCoverage (bins or cells with at least %zu runs): marginal %s, 2-way %s, "
                     "3-way %s.\n", f->coverage->opt.min_runs, m, p2, p3);
    }
    if (info->next != NULL && info->next->n > 0) {
        fputs("\n## Next steps\n\n", out);
        for (size_t k = 0; k < info->next->n; k++) {
            fprintf(out, "%zu. ", k + 1);
            md_text(out, info->next->lines[k]);
            fputs("\n", out);
        }
    }
    md_found_cautions(out, f, info->cautions);
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
        if (a && isfinite(a->power))
            fprintf(out, " (%s test, %s)", cov_test_word(a->test), cov_method_word(a->power_method));
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
    md_audit(out, f, info);
    fputs("\n## Read with care\n\n", out);
    for (size_t k = 0; k < cov_report_n_cautions; k++)
        fprintf(out, "- %s\n", cov_report_cautions[k]);
    free(order);
    return COV_OK;
}
