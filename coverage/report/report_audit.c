/* The plan's own track record in the survey: what each recorded plan predicted per claim against
 * what the runs achieved once they arrived, for the terminal, report.md and index.html. See LICENSE. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "coverage/report/report.h"

/* Whether a claim's prediction held: a claim predicted to reach the target reached it, and one
 * predicted short stayed short. -1 when nothing was achieved yet. */
static int held(const cov_pred_record *r, const cov_pred_claim *c)
{
    if (isnan(c->achieved)) return -1;
    return (c->achieved >= r->target) == (c->reaches != 0);
}

static void tally(const cov_pred_record *r, size_t *pred, size_t *reach, size_t *agree,
                  size_t *measured)
{
    *pred = *reach = *agree = *measured = 0;
    for (size_t k = 0; k < r->n_claims; k++) {
        const cov_pred_claim *c = &r->claims[k];
        int h = held(r, c);
        if (h < 0) continue;
        (*measured)++;
        *agree += (size_t)h;
        if (c->reaches) {
            (*pred)++;
            *reach += c->achieved >= r->target;
        }
    }
}

static int arrived_all(const cov_pred_record *r) { return r->arrived >= r->n_seeds; }

static void num(FILE *out, double x)
{
    if (isnan(x)) fputs("-", out);
    else fprintf(out, "%.3f", x);
}

static void term_text(FILE *out, const char *s)
{
    for (const unsigned char *p = (const unsigned char *)(s ? s : ""); *p; p++)
        fputc(*p < 0x20 || *p == 0x7f ? '?' : *p, out);
}

void cov_report_audit_text(const cov_findings *f, FILE *out)
{
    if (f->n_preds == 0) return;
    const cov_pred_record *r = &f->preds[f->n_preds - 1];
    size_t pred, reach, agree, measured;
    tally(r, &pred, &reach, &agree, &measured);
    fprintf(out, "\nplan of %s (SHA-256 %.12s): %zu of %zu planned runs arrived", r->made_at,
            r->digest, r->arrived, r->n_seeds);
    if (measured == 0) {
        fputs("; nothing to compare yet\n", out);
        return;
    }
    fprintf(out, "%s\n  predicted to reach power %.2f: %zu claim%s, reached: %zu; predictions held "
                 "for %zu of %zu claims\n",
            arrived_all(r) ? "" : " (partial: figures so far)", r->target, pred,
            pred == 1 ? "" : "s", reach, agree, measured);
    for (size_t k = 0; k < r->n_claims; k++) {
        const cov_pred_claim *c = &r->claims[k];
        if (held(r, c) != 0) continue;
        fputs("  missed: ", out);
        term_text(out, c->treatment);
        fprintf(out, " %s ", cov_claim_arrow(strcmp(c->kind, "effect") == 0 ? COV_CLAIM_EFFECT
                                                                            : COV_CLAIM_ABSENCE));
        term_text(out, c->outcome);
        fputs(" predicted ", out);
        num(out, c->power_pred);
        fputs(", achieved ", out);
        num(out, c->achieved);
        fputc('\n', out);
    }
    size_t rounds = 0, all_pred = 0, all_reach = 0;
    for (size_t i = 0; i < f->n_preds; i++) {
        tally(&f->preds[i], &pred, &reach, &agree, &measured);
        if (measured == 0) continue;
        rounds++;
        all_pred += pred;
        all_reach += reach;
    }
    if (rounds > 1)
        fprintf(out, "  track record over %zu planned rounds: %zu of %zu predicted to reach did\n",
                rounds, all_reach, all_pred);
}

static void md_cell(FILE *out, const char *s)
{
    fputc('`', out);
    for (const unsigned char *p = (const unsigned char *)(s ? s : ""); *p; p++)
        fputc(*p == '`' || *p == '|' || *p < 0x20 || *p == 0x7f ? '?' : *p, out);
    fputc('`', out);
}

static const char *held_word(const cov_pred_record *r, const cov_pred_claim *c)
{
    int h = held(r, c);
    return h < 0 ? "-" : h ? "yes" : "no";
}

void cov_report_audit_md(const cov_findings *f, FILE *out)
{
    if (f->n_preds == 0) return;
    const cov_pred_record *r = &f->preds[f->n_preds - 1];
    fputs("\n## The plan's predictions against what the runs achieved\n\n", out);
    fprintf(out, "Latest plan: made %s, plan file SHA-256 `%s`; %zu of %zu planned runs arrived%s. "
                 "Power is at the declared effect of interest, target %.2f.\n\n",
            r->made_at, r->digest, r->arrived, r->n_seeds,
            arrived_all(r) ? "" : " (partial: the achieved column is provisional)", r->target);
    fputs("| claim | power before | predicted | achieved | held |\n|---|---:|---:|---:|---|\n", out);
    for (size_t k = 0; k < r->n_claims; k++) {
        const cov_pred_claim *c = &r->claims[k];
        fputs("| ", out);
        md_cell(out, c->treatment);
        fprintf(out, " %s ", cov_claim_arrow(strcmp(c->kind, "effect") == 0 ? COV_CLAIM_EFFECT
                                                                            : COV_CLAIM_ABSENCE));
        md_cell(out, c->outcome);
        fputs(" | ", out);
        num(out, c->power_now);
        fputs(" | ", out);
        num(out, c->power_pred);
        fputs(" | ", out);
        num(out, c->achieved);
        fprintf(out, " | %s |\n", held_word(r, c));
    }
    fputs("\nTrack record (each plan's figures are frozen when all its runs have arrived):\n\n"
          "| plan made (UTC) | SHA-256 | runs arrived | predicted to reach | reached | held |\n"
          "|---|---|---:|---:|---:|---:|\n", out);
    for (size_t i = 0; i < f->n_preds; i++) {
        const cov_pred_record *q = &f->preds[i];
        size_t pred, reach, agree, measured;
        tally(q, &pred, &reach, &agree, &measured);
        fprintf(out, "| %s | `%.12s` | %zu of %zu | %zu | %zu | %zu of %zu |\n", q->made_at,
                q->digest, q->arrived, q->n_seeds, pred, reach, agree, measured);
    }
    fputs("\nA prediction holds when a claim predicted to reach the target did, or one predicted "
          "short stayed short. Predictions rest on the plan's models of the mean, the noise and "
          "the cost fitted to the runs before it; a miss says those models were wrong there.\n",
          out);
}

void cov_report_audit_html(const cov_findings *f, FILE *out)
{
    if (f->n_preds == 0) return;
    const cov_pred_record *r = &f->preds[f->n_preds - 1];
    fputs("<section id=\"plan-audit\"><h2>The plan's predictions against what the runs "
          "achieved</h2>\n<p>Latest plan: made ", out);
    cov_html_text(out, r->made_at);
    fputs(", plan file SHA-256 <code>", out);
    cov_html_text(out, r->digest);
    fprintf(out, "</code>; %zu of %zu planned runs arrived%s. Power is at the declared effect of "
                 "interest, target %.2f.</p>\n",
            r->arrived, r->n_seeds,
            arrived_all(r) ? "" : " (partial: the achieved column is provisional)", r->target);
    fputs("<table class=\"audit\"><thead><tr><th>claim</th><th>power before</th><th>predicted</th>"
          "<th>achieved</th><th>held</th></tr></thead><tbody>\n", out);
    for (size_t k = 0; k < r->n_claims; k++) {
        const cov_pred_claim *c = &r->claims[k];
        fputs(strcmp(c->kind, "effect") == 0 ? "<tr><td>an effect of <code>"
                                             : "<tr><td>no effect of <code>", out);
        cov_html_text(out, c->treatment);
        fputs("</code> on <code>", out);
        cov_html_text(out, c->outcome);
        fputs("</code></td><td>", out);
        num(out, c->power_now);
        fputs("</td><td>", out);
        num(out, c->power_pred);
        fputs("</td><td>", out);
        num(out, c->achieved);
        fprintf(out, "</td><td>%s</td></tr>\n", held_word(r, c));
    }
    fputs("</tbody></table>\n<h3>Track record</h3>\n<table class=\"audit\"><thead><tr><th>plan "
          "made (UTC)</th><th>SHA-256</th><th>runs arrived</th><th>predicted to reach</th>"
          "<th>reached</th><th>held</th></tr></thead><tbody>\n", out);
    for (size_t i = 0; i < f->n_preds; i++) {
        const cov_pred_record *q = &f->preds[i];
        size_t pred, reach, agree, measured;
        tally(q, &pred, &reach, &agree, &measured);
        fputs("<tr><td>", out);
        cov_html_text(out, q->made_at);
        fputs("</td><td><code>", out);
        cov_html_text(out, q->digest);
        fprintf(out, "</code></td><td>%zu of %zu</td><td>%zu</td><td>%zu</td><td>%zu of %zu</td>"
                     "</tr>\n",
                q->arrived, q->n_seeds, pred, reach, agree, measured);
    }
    fputs("</tbody></table>\n<p class=\"note\">A prediction holds when a claim predicted to reach "
          "the target did, or one predicted short stayed short. Each plan's figures are frozen "
          "when all its runs have arrived. Predictions rest on the plan's models of the mean, the "
          "noise and the cost fitted to the runs before it; a miss says those models were wrong "
          "there.</p>\n</section>\n", out);
}
