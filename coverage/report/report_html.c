/* The survey report's index.html: one self-contained page, plots inlined as SVG elements.
 * See LICENSE. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "coverage/report/report.h"

/* The worst pairs and data-issue examples listed in the report. */
#define REPORT_WORST_PAIRS 10

/* Write s as HTML text or attribute content: & < > " ' become character references, and control
 * characters other than newline and tab (never meant for a reader; a name read from a file may
 * hold them) become '?'. */
void cov_html_text(FILE *out, const char *s)
{
    for (const char *p = s ? s : ""; *p; p++) {
        unsigned char ch = (unsigned char)*p;
        switch (ch) {
        case '&': fputs("&amp;", out); break;
        case '<': fputs("&lt;", out); break;
        case '>': fputs("&gt;", out); break;
        case '"': fputs("&quot;", out); break;
        case '\'': fputs("&#39;", out); break;
        default: fputc((ch < 0x20 && ch != '\n' && ch != '\t') || ch == 0x7f ? '?' : ch, out);
        }
    }
}

/* Like cov_html_text, with each arrow ("->", "<-") kept whole: a browser may break a line after a
 * hyphen, which split "a -" from "> b". */
static void html_reason(FILE *out, const char *s)
{
    for (const char *p = s ? s : ""; *p; p++) {
        if ((p[0] == '-' && p[1] == '>') || (p[0] == '<' && p[1] == '-')) {
            fputs(p[0] == '-' ? "<span class=\"nw\">-&gt;</span>" : "<span class=\"nw\">&lt;-</span>",
                  out);
            p++;
            continue;
        }
        char one[2] = {*p, '\0'};
        cov_html_text(out, one);
    }
}

/* ---- index.html ------------------------------------------------------------------------------ */

/* Our own palette, told apart without colour vision too (each verdict also carries its word). */
static const char html_style[] =
    "body{font:15px/1.45 system-ui,sans-serif;color:#1d232a;background:#fbfbf8;margin:0 auto;"
    "max-width:1340px;padding:1.2em 1.6em 3em}\n"
    "h1{font-size:1.6em;margin:.2em 0}h2{font-size:1.25em;margin-top:1.8em;border-bottom:2px solid "
    "#d9dcd3;padding-bottom:.2em}\n"
    ".sub{color:#5a6169;margin:0}code{background:#eef0ea;padding:0 .25em;border-radius:3px}\n"
    ".verdict{border-left:8px solid #c96f1b;background:#fff4e6;padding:.7em 1.1em;margin:1em 0}\n"
    ".verdict.ok{border-color:#1f6e99;background:#e8f2f8}.verdict .big{font-size:1.35em;"
    "font-weight:700;margin:.1em 0 .4em}\n"
    ".cards{display:flex;flex-wrap:wrap;gap:.8em;margin:.4em 0}.card{background:#fff;border:1px "
    "solid #d9dcd3;border-radius:6px;padding:.4em .9em;min-width:8em}\n"
    ".card b{display:block;font-size:1.4em}\n"
    "table{border-collapse:collapse;margin:.6em 0;font-size:.93em}th,td{border-bottom:1px solid "
    "#e1e3dc;padding:.3em .55em;text-align:left;vertical-align:top}\n"
    "th{background:#eef0ea}table.sortable th{cursor:pointer}table.sortable th:after{content:' "
    "\\2195';color:#8a9099}\n"
    "td.num{text-align:right;font-variant-numeric:tabular-nums}\n"
    ".v-ample{color:#1f6e99;font-weight:600}.v-underpowered{color:#b35c0c;font-weight:600}"
    ".v-untestable{color:#5b5f66;font-weight:600;font-style:italic}\n"
    "figure{margin:1em 0;background:#fff;border:1px solid #e1e3dc;padding:.6em}figure img,figure svg{"
    "max-width:100%;height:auto;display:block}figcaption{color:#4a5058;margin-top:.3em}\n"
    ".note{background:#f3f1e8;border:1px dashed #b9b39b;padding:.5em .9em}\n"
    "#claims-table td:last-child{min-width:14em}td small{color:#6a7079;white-space:nowrap}\n"
    ".wide{overflow-x:auto}\n"
    "ul.cautions li,ul.found li{margin:.35em 0}.caution-tag{color:#8a4b0f;font-size:.9em}\n"
    "h3.caution{font-size:1.05em;margin:1em 0 .2em}.claim-name{font-weight:600}\n"
    "dl.audit dt{font-weight:600;margin-top:.4em}dl.audit dd{margin-left:1.2em}"
    "code.digest,code.cmdline{overflow-wrap:anywhere;word-break:break-all}\n"
    /* Every column stays on screen: long names break anywhere rather than widen the table, and an
     * arrow never splits from its dash. */
    "code,td{overflow-wrap:anywhere}.nw{white-space:nowrap}#claims-table{width:100%}\n"
    "#snapshots-chart{max-width:100%;height:auto}p.full{margin:.2em 0 0;font-size:.9em}\n"
    /* A phone: the claims table becomes one card per claim, plots keep a readable size and
     * scroll inside their frame, with a link to the full-size drawing. */
    "@media (max-width:640px){body{padding:.8em .7em 2em}"
    "#claims-table thead{display:none}"
    "#claims-table,#claims-table tbody,#claims-table tr,#claims-table td{display:block}"
    "#claims-table tr{border:1px solid #d9dcd3;border-radius:6px;margin:.7em 0;padding:.35em .6em;"
    "background:#fff}#claims-table td{border:0;padding:.08em 0;text-align:left;min-width:0}"
    "#claims-table td:last-child{min-width:0}"
    "#claims-table td::before{display:inline-block;min-width:8.8em;color:#5a6169;font-weight:600}"
    "#claims-table td:nth-child(1)::before{content:'claim'}"
    "#claims-table td:nth-child(2)::before{content:'verdict'}"
    "#claims-table td:nth-child(3)::before{content:'kind'}"
    "#claims-table td:nth-child(4)::before{content:'treatment'}"
    "#claims-table td:nth-child(5)::before{content:'outcome'}"
    "#claims-table td:nth-child(6)::before{content:'adjusted for'}"
    "#claims-table td:nth-child(7)::before{content:'effect of interest'}"
    "#claims-table td:nth-child(8)::before{content:'in outcome units'}"
    "#claims-table td:nth-child(9)::before{content:'runs used'}"
    "#claims-table td:nth-child(10)::before{content:'power'}"
    "#claims-table td:nth-child(11)::before{content:'MDE'}"
    "#claims-table td:nth-child(12)::before{content:'runs needed'}"
    "#claims-table td:nth-child(13)::before{content:'why'}"
    ".plot{overflow-x:auto}.plot svg,.plot img{min-width:720px;max-width:none}}\n";

/* Sorts the claims table by the clicked column: numbers by data-v, text by its content. */
static const char html_script[] =
    "document.querySelectorAll('table.sortable').forEach(function(t){\n"
    " t.querySelectorAll('th').forEach(function(th,i){th.addEventListener('click',function(){\n"
    "  var body=t.tBodies[0],rows=Array.prototype.slice.call(body.rows),up=th.dataset.dir!=='up';\n"
    "  th.dataset.dir=up?'up':'down';var num=th.dataset.type==='num';\n"
    "  rows.sort(function(a,b){var x=a.cells[i],y=b.cells[i];\n"
    "   if(num){var p=parseFloat(x.dataset.v),q=parseFloat(y.dataset.v);\n"
    "    if(isNaN(p))p=Infinity;if(isNaN(q))q=Infinity;return up?p-q:q-p;}\n"
    "   return up?x.textContent.localeCompare(y.textContent):y.textContent.localeCompare(x.textContent);});\n"
    "  rows.forEach(function(r){body.appendChild(r);});});});});\n";

/* One numeric table cell whose sort key is x (Infinity sorts last). */
static void html_num_cell(FILE *out, double x, const char *text)
{
    fputs("<td class=\"num\" data-v=\"", out);
    if (isnan(x)) fputs("NaN", out);
    else if (isinf(x)) fputs("Infinity", out);
    else fprintf(out, "%.9g", x);
    fputs("\">", out);
    cov_html_text(out, text);
    fputs("</td>", out);
}

/* The cautions that name claim i, as short links to their headings. */
static void html_claim_cautions(FILE *out, const cov_cautions *c, size_t i)
{
    for (size_t j = 0; c != NULL && j < c->n; j++) {
        if (c->items[j].claim != (long)i) continue;
        fprintf(out, "<br><a class=\"caution-tag\" href=\"#caution-%s\">&#9888; ",
                c->items[j].kind->key);
        cov_html_text(out, c->items[j].kind->title);
        fputs("</a>", out);
    }
}

static void html_claims(FILE *out, const cov_findings *f, const cov_report_info *info,
                        const size_t *order)
{
    fputs("<div class=\"wide\"><table id=\"claims-table\" class=\"sortable\"><thead><tr>"
          "<th data-type=\"num\">#</th><th>verdict</th><th>kind</th><th>treatment</th>"
          "<th>outcome</th><th>adjustment set</th><th>effect of interest</th>"
          "<th data-type=\"num\">in outcome units</th><th data-type=\"num\">runs used</th>"
          "<th data-type=\"num\">power</th><th data-type=\"num\">MDE</th>"
          "<th data-type=\"num\">runs needed</th><th>why</th></tr></thead>\n<tbody>\n", out);
    for (size_t k = 0; k < f->claims->n; k++) {
        size_t i = order[k];
        const cov_claim *c = &f->claims->items[i];
        const cov_assessment *a = c->status == COV_TESTABLE ? cov_report_assessment(f, i) : NULL;
        const char *word = cov_verdict_word(cov_report_verdict(f, i));
        char buf[160];
        fprintf(out, "<tr class=\"claim v-row-%s\">", word);
        snprintf(buf, sizeof buf, "%zu", i + 1);
        html_num_cell(out, (double)(i + 1), buf);
        /* The claim in words as the kind cell's tooltip: "no effect of x on y given s". */
        char words[1024];
        cov_claim_sentence(f->graph, c, words, sizeof words);
        words[cov_utf8_valid_prefix(words, strlen(words))] = '\0';
        fprintf(out, "<td class=\"v-%s\">%s</td><td title=\"", word, word);
        cov_html_text(out, words);
        fprintf(out, "\">%s</td><td>", cov_report_kind(c));
        cov_html_text(out, cov_report_var(f, c->treatment));
        fputs("</td><td>", out);
        cov_html_text(out, cov_report_var(f, c->outcome));
        fputs("</td><td>", out);
        if (c->status != COV_TESTABLE) fputs("-", out);
        else if (c->n_cond == 0) fputs("nothing", out);
        for (size_t m = 0; c->status == COV_TESTABLE && m < c->n_cond; m++) {
            if (m) fputs(", ", out);
            cov_html_text(out, cov_report_var(f, c->cond[m]));
        }
        cov_report_effect_text(c, buf, sizeof buf);
        fputs("</td><td>", out);
        cov_html_text(out, buf);
        fputs("</td>", out);
        double fx = a ? a->effect_raw : NAN;
        cov_report_num_text(fx, "%.4g", buf, sizeof buf);
        html_num_cell(out, fx, buf);
        cov_report_num_text(a ? (double)a->n : NAN, "%.0f", buf, sizeof buf);
        html_num_cell(out, a ? (double)a->n : NAN, buf);
        cov_report_num_text(a ? a->power : NAN, "%.2f", buf, sizeof buf);
        if (a && isfinite(a->power) && isfinite(a->power_lo) && isfinite(a->power_hi))
            fprintf(out, "<td class=\"num\" data-v=\"%.9g\">%s<br><small>%.2f to %.2f<br>%s test, "
                    "%s</small></td>", a->power, buf, a->power_lo, a->power_hi,
                    cov_test_word(a->test), cov_method_word(a->power_method));
        else html_num_cell(out, a ? a->power : NAN, buf);
        cov_report_num_text(a ? a->mde : NAN, "%.4g", buf, sizeof buf);
        html_num_cell(out, a ? a->mde : NAN, buf);
        cov_report_num_text(a ? a->runs_needed : NAN, "%.0f", buf, sizeof buf);
        html_num_cell(out, a ? a->runs_needed : NAN, buf);
        fputs("<td>", out);
        html_reason(out, cov_report_reason(f, i) ? cov_report_reason(f, i) : "");
        html_claim_cautions(out, info->cautions, i);
        fputs("</td></tr>\n", out);
    }
    fputs("</tbody></table></div>\n", out);
}

/* The units an effect between a and b is counted in, " (delay in min, flow in veh/h)", naming
 * only the variables whose unit the graph declares; nothing when neither has one. */
static void html_units(FILE *out, const cov_graph *g, size_t a, size_t b)
{
    const char *ua = cov_var_unit(&g->vars[a]), *ub = cov_var_unit(&g->vars[b]);
    if (!*ua && !*ub) return;
    fputs(" (", out);
    if (*ub) {
        cov_html_text(out, g->vars[b].name);
        fputs(" in ", out);
        cov_html_text(out, ub);
    }
    if (*ua) {
        if (*ub) fputs(", ", out);
        cov_html_text(out, g->vars[a].name);
        fputs(" in ", out);
        cov_html_text(out, ua);
    }
    fputs(")", out);
}

/* The graph drawn, and the same in words: every edge and absence with its verdict. */
static void html_graph(FILE *out, const cov_findings *f, const cov_report_info *info,
                       const char *dir)
{
    fputs("<section id=\"graph\"><h2>The graph</h2>\n", out);
    if (info->plot_note == NULL) {
        cov_plots *plots = NULL;
        if (cov_plot_list(f, &plots, NULL) == COV_OK)
            for (size_t k = 0; k < plots->n; k++)
                if (strcmp(plots->items[k].name, "graph") == 0)
                    cov_html_figure(out, dir, &plots->items[k], k + 1);
        cov_plots_free(plots);
    }
    const cov_graph *g = f->graph;
    static const char *const role_word[3] = {"Inputs", "Outputs", "Hidden (never recorded)"};
    static const cov_role roles[3] = {COV_INPUT, COV_OUTPUT, COV_HIDDEN};
    fputs("<ul class=\"graph-list\">\n", out);
    for (int r = 0; r < 3; r++) {
        int any = 0;
        for (size_t v = 0; v < g->n_vars; v++) {
            if (g->vars[v].role != roles[r]) continue;
            fputs(any ? ", " : "<li>", out);
            if (!any) fprintf(out, "%s: ", role_word[r]);
            fputs("<code>", out);
            cov_html_text(out, g->vars[v].name);
            fputs("</code>", out);
            if (*cov_var_unit(&g->vars[v])) {
                fputs(" (", out);
                cov_html_text(out, cov_var_unit(&g->vars[v]));
                fputs(")", out);
            }
            any = 1;
        }
        if (any) fputs("</li>\n", out);
    }
    for (size_t e = 0; e < g->n_edges; e++) {
        size_t a = g->edges[e].from, b = g->edges[e].to;
        long claim = -1;
        for (size_t i = 0; i < f->claims->n; i++)
            if (f->claims->items[i].kind == COV_CLAIM_EFFECT &&
                f->claims->items[i].treatment == a && f->claims->items[i].outcome == b)
                claim = (long)i;
        fputs("<li><code>", out);
        cov_html_text(out, g->vars[a].name);
        fputs("</code> <span class=\"nw\">-&gt;</span> <code>", out);
        cov_html_text(out, g->vars[b].name);
        fputs("</code>: ", out);
        if (claim < 0) {
            fputs("part of the model, tested by no claim (a hidden variable at one end)", out);
        } else {
            char eff[96];
            const char *word = cov_verdict_word(cov_report_verdict(f, (size_t)claim));
            cov_report_effect_text(&f->claims->items[claim], eff, sizeof eff);
            fputs("expected effect ", out);
            cov_html_text(out, eff);
            html_units(out, g, a, b);
            fprintf(out, "; <span class=\"v-%s\">%s</span>", word, word);
        }
        fputs("</li>\n", out);
    }
    for (size_t i = 0; i < f->claims->n; i++) {
        const cov_claim *c = &f->claims->items[i];
        if (c->kind != COV_CLAIM_ABSENCE) continue;
        const char *word = cov_verdict_word(cov_report_verdict(f, i));
        char eff[96];
        cov_report_effect_text(c, eff, sizeof eff);
        fputs("<li><code>", out);
        cov_html_text(out, g->vars[c->treatment].name);
        fputs("</code> <span class=\"nw\">", out);
        cov_html_text(out, cov_claim_arrow(c->kind));
        fputs("</span> <code>", out);
        cov_html_text(out, g->vars[c->outcome].name);
        fputs("</code>: expected absence ", out);
        cov_html_text(out, eff);
        html_units(out, g, c->treatment, c->outcome);
        fprintf(out, "; <span class=\"v-%s\">%s</span></li>\n", word, word);
    }
    fputs("</ul>\n</section>\n", out);
}

static void html_plots(FILE *out, const cov_findings *f, const cov_report_info *info,
                       const char *dir, cov_error *err, int *rc)
{
    fputs("<section id=\"plots\"><h2>Where the runs are sparse</h2>\n", out);
    if (info->plot_note != NULL) {
        fputs("<p class=\"note\">Plots were skipped: ", out);
        cov_html_text(out, info->plot_note);
        fputs("</p>\n</section>\n", out);
        return;
    }
    cov_plots *plots = NULL;
    if ((*rc = cov_plot_list(f, &plots, err)) != COV_OK) return;
    size_t shown = 0;
    for (size_t k = 0; k < plots->n; k++) {
        if (strcmp(plots->items[k].name, "graph") == 0) continue;   /* in its own section */
        shown += cov_html_figure(out, dir, &plots->items[k], k + 1);
    }
    if (shown == 0) fputs("<p class=\"note\">No plot applies to this campaign.</p>\n", out);
    fputs("</section>\n", out);
    cov_plots_free(plots);
}

static void html_coverage(FILE *out, const cov_findings *f)
{
    const cov_coverage *cv = f->coverage;
    char buf[64];
    fputs("<section id=\"coverage\"><h2>Coverage of the input space</h2>\n<div class=\"wide\"><table><tbody>", out);
    cov_report_share_text(cv->marginal_share, buf, sizeof buf);
    fprintf(out, "<tr><th>bins of each input with at least %zu runs</th><td class=\"num\">%s</td>"
                 "</tr>", cv->opt.min_runs, buf);
    cov_report_share_text(cv->pairwise_share, buf, sizeof buf);
    fprintf(out, "<tr><th>cells of input pairs (2-way) with at least %zu runs</th>"
                 "<td class=\"num\">%s</td></tr>", cv->opt.min_runs, buf);
    cov_report_share_text(cv->threeway_share, buf, sizeof buf);
    fprintf(out, "<tr><th>cells of input triples (3-way) with at least %zu runs</th>"
                 "<td class=\"num\">%s</td></tr>", cv->opt.min_runs, buf);
    if (isfinite(cv->cd2))
        fprintf(out, "<tr><th>centred L2 discrepancy squared of the numeric inputs (as many "
                     "random points would give about %.3g)</th><td class=\"num\">%.3g</td></tr>",
                cv->cd2_random, cv->cd2);
    if (isfinite(cv->fill_distance))
        fprintf(out, "<tr><th>fill distance (largest gap, unit cube of the numeric inputs)</th>"
                     "<td class=\"num\">%.3g</td></tr>", cv->fill_distance);
    fputs("</tbody></table></div>\n<h3>Each input</h3>\n<div class=\"wide\"><table><thead><tr><th>input</th>"
          "<th>bins</th><th>covered</th><th>fewest runs in a bin</th></tr></thead><tbody>\n", out);
    for (size_t m = 0; m < cv->n_inputs; m++) {
        const cov_marginal *mg = &cv->marginal[m];
        size_t least = mg->n_bins ? mg->count[0] : 0;
        for (size_t b = 1; b < mg->n_bins; b++)
            if (mg->count[b] < least) least = mg->count[b];
        fputs("<tr><td>", out);
        cov_html_text(out, cov_report_var(f, mg->var));
        cov_report_share_text(mg->share, buf, sizeof buf);
        fprintf(out, "</td><td class=\"num\">%zu</td><td class=\"num\">%s</td>"
                     "<td class=\"num\">%zu</td></tr>\n", mg->n_bins, buf, least);
    }
    fputs("</tbody></table></div>\n", out);
    if (cv->n_pairs > 0) {
        fputs("<h3>Thinnest pairs of inputs</h3>\n<div class=\"wide\"><table><thead><tr><th>pair</th><th>cells</th>"
              "<th>covered</th><th>empty cells</th><th>dependence</th></tr></thead><tbody>\n", out);
        for (size_t k = 0; k < cv->n_pairs && k < REPORT_WORST_PAIRS; k++) {
            const cov_pair *p = &cv->pairs[cv->worst ? cv->worst[k] : k];
            double dep = NAN;
            for (size_t i = 0; cv->dependence && i < cv->n_inputs; i++)
                for (size_t j = 0; j < cv->n_inputs; j++)
                    if (cv->inputs[i] == p->a && cv->inputs[j] == p->b)
                        dep = cv->dependence[i * cv->n_inputs + j];
            fputs("<tr><td>", out);
            cov_html_text(out, cov_report_var(f, p->a));
            fputs(" &times; ", out);
            cov_html_text(out, cov_report_var(f, p->b));
            cov_report_share_text(p->share, buf, sizeof buf);
            fprintf(out, "</td><td class=\"num\">%zu</td><td class=\"num\">%s</td>"
                         "<td class=\"num\">%zu</td>", p->na * p->nb, buf, p->n_empty);
            cov_report_num_text(dep, "%.2f", buf, sizeof buf);
            fprintf(out, "<td class=\"num\">%s%s</td></tr>\n", buf,
                    isfinite(dep) && dep > cv->opt.dependence_threshold ? " (set together)" : "");
        }
        fputs("</tbody></table></div>\n<p>Dependence is |r| for two numeric inputs and Cram&eacute;r's V "
              "otherwise; above the threshold the campaign moved the two inputs together, so "
              "their effects are hard to tell apart.</p>\n", out);
    }
    fputs("</section>\n", out);
}

/* What the survey computed as cautions: a heading per kind; claims sharing a text listed once. */
static void html_found_cautions(FILE *out, const cov_findings *f, const cov_cautions *c)
{
    fputs("<section id=\"rests-on\"><h2>What these figures rest on</h2>\n", out);
    if (c == NULL || c->n == 0) {
        fputs("<p>No caution was computed for this campaign.</p>\n</section>\n", out);
        return;
    }
    const cov_caution_kind *last = NULL;
    for (size_t j = 0; j < c->n; j++) {
        const cov_caution *it = &c->items[j];
        if (it->kind != last) {
            if (last != NULL) fputs("</ul>\n", out);
            fprintf(out, "<h3 class=\"caution\" id=\"caution-%s\">", it->kind->key);
            cov_html_text(out, it->kind->title);
            fputs("</h3>\n<ul class=\"found\">\n", out);
            last = it->kind;
        }
        if (cov_caution_is_repeat(c, j)) continue;
        fputs("<li>", out);
        if (it->claim >= 0) {
            int first = 1;
            for (size_t i = j; i < c->n && c->items[i].kind == it->kind; i++) {
                if (strcmp(c->items[i].text, it->text) != 0) continue;
                size_t k = (size_t)c->items[i].claim;
                char lab[600];
                cov_claim_pair_label(f->graph, &f->claims->items[k], lab, sizeof lab);
                const char *word = cov_verdict_word(cov_report_verdict(f, k));
                fprintf(out, "%s<span class=\"claim-name\">", first ? "" : "; ");
                cov_html_text(out, lab);
                fprintf(out, "</span> (<span class=\"v-%s\">%s</span>)", word, word);
                first = 0;
            }
            fputs(": ", out);
        }
        cov_html_text(out, it->text);
        fputs("</li>\n", out);
    }
    fputs("</ul>\n</section>\n", out);
}

/* The audit trail: version, command line, options (defaults marked), seed, digests, time. */
static void html_audit(FILE *out, const cov_findings *f, const cov_report_info *info)
{
    const cov_options *o = f->opt;
    if (o == NULL) return;
    fputs("<section id=\"audit\"><h2>Audit trail</h2>\n<dl class=\"audit\">", out);
    fputs("<dt>shoal version</dt><dd>", out);
    cov_html_text(out, o->version ? o->version : "unknown");
    fputs("</dd><dt>command line</dt><dd><code class=\"cmdline\">", out);
    char *line = NULL;
    size_t len = 0;
    FILE *m = open_memstream(&line, &len);
    if (m != NULL) {
        cov_audit_command_line(o, m);
        if (fclose(m) == 0 && line != NULL) cov_html_text(out, line);
    }
    free(line);
    fputs("</code></dd><dt>archive</dt><dd><code>", out);
    cov_html_text(out, o->archive_path);
    fprintf(out, "</code>, table <code>");
    cov_html_text(out, o->table ? o->table : COV_DEFAULT_TABLE);
    fprintf(out, "</code>, %zu rows; runs digest (SHA-256 of the recorded columns) <code "
                 "class=\"digest\">", f->data ? f->data->n_runs : 0);
    cov_html_text(out, info->runs_digest ? info->runs_digest : "not computed");
    fputs("</code></dd><dt>graph</dt><dd><code>", out);
    cov_html_text(out, f->graph->path);
    fputs("</code>; SHA-256 of the file <code class=\"digest\">", out);
    cov_html_text(out, info->graph_digest && info->graph_digest[0] ? info->graph_digest : "not computed");
    fprintf(out, "</code></dd><dt>seed</dt><dd>%lu</dd><dt>surveyed (UTC)</dt><dd>",
            o->coverage.seed);
    cov_html_text(out, info->generated);
    fputs("</dd></dl>\n<div class=\"wide\"><table class=\"options\"><thead><tr><th>option</th><th>value</th>"
          "<th>set by</th></tr></thead><tbody>\n", out);
    cov_audit_option opts[40];
    size_t n = cov_audit_options(o, opts, sizeof opts / sizeof opts[0]);
    for (size_t k = 0; k < n; k++) {
        fputs("<tr><td><code>--", out);
        cov_html_text(out, opts[k].name);
        fputs("</code></td><td>", out);
        cov_html_text(out, opts[k].value);
        fprintf(out, "</td><td>%s</td></tr>\n", opts[k].given ? "command line" : "default");
    }
    fputs("</tbody></table></div>\n</section>\n", out);
}

/* The snapshots as a small chart of ample claims against total runs, drawn directly as SVG. */
static void html_history(FILE *out, const cov_findings *f, const cov_report_info *info)
{
    fputs("<section id=\"history\"><h2>History of surveys</h2>\n", out);
    if (info->store == COV_HISTORY_NONE) {
        fputs("<p class=\"note\">No history is kept for this archive: it is not one that "
              "<code>shoal import</code> made, and no <code>--history FILE</code> was given, so "
              "only this survey is shown.</p>\n", out);
    } else {
        fputs("<p>History kept in the ", out);
        fputs(info->store == COV_HISTORY_ARCHIVE ? "archive " : "side file ", out);
        fputs("<code>", out);
        cov_html_text(out, info->history_path);
        fputs("</code>.</p>\n", out);
    }
    /* The vertical scale ends at the testable claims: the most that can ever be ample. */
    long long count[3];
    cov_report_count_verdicts(f, count);
    double max_runs = 1, max_claims = (double)(count[COV_AMPLE] + count[COV_UNDERPOWERED]);
    if (max_claims < 1) max_claims = 1;
    for (size_t r = 0; r < info->n_snapshots; r++)
        if ((double)info->snapshots[r].n_runs > max_runs) max_runs = (double)info->snapshots[r].n_runs;
    const double w = 520, h = 230, left = 50, right = 20, top = 15, bottom = 40;
    fprintf(out, "<svg id=\"snapshots-chart\" width=\"%.0f\" height=\"%.0f\" viewBox=\"0 0 %.0f %.0f\" "
                 "role=\"img\" aria-label=\"ample claims against total runs\">\n", w, h, w, h);
    fprintf(out, "<rect x=\"0\" y=\"0\" width=\"%.0f\" height=\"%.0f\" fill=\"#ffffff\"/>\n", w, h);
    fprintf(out, "<line x1=\"%.0f\" y1=\"%.0f\" x2=\"%.0f\" y2=\"%.0f\" stroke=\"#555\"/>"
                 "<line x1=\"%.0f\" y1=\"%.0f\" x2=\"%.0f\" y2=\"%.0f\" stroke=\"#555\"/>\n",
            left, h - bottom, w - right, h - bottom, left, top, left, h - bottom);
    fprintf(out, "<text x=\"%.0f\" y=\"%.0f\" font-size=\"12\" text-anchor=\"middle\">total runs"
                 "</text><text x=\"14\" y=\"%.0f\" font-size=\"12\" text-anchor=\"middle\" "
                 "transform=\"rotate(-90 14 %.0f)\">ample claims</text>\n",
            (left + w - right) / 2, h - 6, (top + h - bottom) / 2, (top + h - bottom) / 2);
    for (int t = 0; t <= 2; t++) {
        double xr = max_runs * t / 2, yc = floor(max_claims * t / 2);
        double px = left + (w - left - right) * t / 2;
        double py = h - bottom - (h - top - bottom) * yc / max_claims;
        fprintf(out, "<text x=\"%.1f\" y=\"%.0f\" font-size=\"11\" text-anchor=\"middle\">%.0f"
                     "</text><text x=\"%.0f\" y=\"%.1f\" font-size=\"11\" text-anchor=\"end\">%.0f"
                     "</text>\n", px, h - bottom + 16, xr, left - 6, py + 4, yc);
    }
    fprintf(out, "<line x1=\"%.0f\" y1=\"%.0f\" x2=\"%.0f\" y2=\"%.0f\" stroke=\"#b35c0c\" "
                 "stroke-dasharray=\"5 4\"/><text x=\"%.0f\" y=\"%.0f\" font-size=\"11\" "
                 "text-anchor=\"end\" fill=\"#b35c0c\">all %.0f testable claims</text>\n",
            left, top, w - right, top, w - right, top + 13, max_claims);
    fputs("<polyline fill=\"none\" stroke=\"#1f6e99\" stroke-width=\"2\" points=\"", out);
    for (size_t r = 0; r < info->n_snapshots; r++)
        fprintf(out, "%.1f,%.1f ", left + (w - left - right) * info->snapshots[r].n_runs / max_runs,
                h - bottom - (h - top - bottom) * info->snapshots[r].n_ample / max_claims);
    fputs("\"/>\n", out);
    for (size_t r = 0; r < info->n_snapshots; r++)
        fprintf(out, "<circle cx=\"%.1f\" cy=\"%.1f\" r=\"4.5\" fill=\"#1f6e99\"/>\n",
                left + (w - left - right) * info->snapshots[r].n_runs / max_runs,
                h - bottom - (h - top - bottom) * info->snapshots[r].n_ample / max_claims);
    fputs("</svg>\n<div class=\"wide\"><table><thead><tr><th>snapshot</th><th>when (UTC)</th><th>runs</th>"
          "<th>batches</th><th>ample</th><th>underpowered</th><th>untestable</th><th>2-way</th></tr>"
          "</thead><tbody>\n", out);
    for (size_t r = 0; r < info->n_snapshots; r++) {
        const cov_snapshot *rd = &info->snapshots[r];
        char buf[64];
        cov_report_share_text(rd->pairwise_share, buf, sizeof buf);
        fprintf(out, "<tr><td class=\"num\">%zu</td><td>", r + 1);
        cov_html_text(out, rd->at);
        fprintf(out, "</td><td class=\"num\">%lld</td><td class=\"num\">%lld</td>"
                     "<td class=\"num\">%lld</td><td class=\"num\">%lld</td>"
                     "<td class=\"num\">%lld</td><td class=\"num\">%s</td></tr>\n", rd->n_runs,
                rd->n_batches, rd->n_ample, rd->n_underpowered, rd->n_blind, buf);
    }
    fputs("</tbody></table></div>\n</section>\n", out);
}

int cov_report_html(const cov_findings *f, const cov_report_info *info, const char *dir,
                           FILE *out, cov_error *err)
{
    long long count[3];
    cov_report_count_verdicts(f, count);
    size_t *order = malloc((f->claims->n ? f->claims->n : 1) * sizeof *order);
    if (order == NULL) return cov_fail(err, COV_ENOMEM, "", "out of memory writing the report");
    cov_report_order(f, order);
    char buf[64];
    fputs("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">\n<meta name=\"viewport\""
          " content=\"width=device-width, initial-scale=1\">\n<title>Survey of ", out);
    cov_html_text(out, f->graph->path);
    fprintf(out, "</title>\n<style>\n%s</style></head>\n<body>\n<header><h1>Is this campaign "
                 "enough to test the graph?</h1>\n<p class=\"sub\">Graph <code>", html_style);
    cov_html_text(out, f->graph->path);
    fputs("</code>, archive <code>", out);
    cov_html_text(out, f->opt && f->opt->archive_path ? f->opt->archive_path : "");
    fputs("</code>, surveyed ", out);
    cov_html_text(out, info->generated);
    fputs(" (UTC).</p></header>\n", out);

    fprintf(out, "<section id=\"summary\" class=\"verdict%s\"><p class=\"big\">%s</p>\n",
            info->adequate ? " ok" : "",
            info->adequate ? "Adequate: every testable claim has the power it needs."
                           : "Not adequate yet: some testable claims are underpowered.");
    if (info->gate_note) {
        fputs("<p>", out);
        cov_html_text(out, info->gate_note);
        fputs("</p>\n", out);
    }
    fputs("<div class=\"cards\">", out);
    fprintf(out, "<div class=\"card\"><b>%zu</b>runs in %zu batch%s</div>",
            f->data ? f->data->n_runs : 0, f->data ? f->data->n_batches : 0,
            f->data && f->data->n_batches == 1 ? "" : "es");
    fprintf(out, "<div class=\"card\"><b class=\"v-ample\">%lld</b>ample claims</div>"
                 "<div class=\"card\"><b class=\"v-underpowered\">%lld</b>underpowered claims</div>"
                 "<div class=\"card\"><b class=\"v-untestable\">%lld</b>untestable claims</div>",
            count[COV_AMPLE], count[COV_UNDERPOWERED], count[COV_BLIND]);
    if (f->coverage != NULL) {
        cov_report_share_text(f->coverage->marginal_share, buf, sizeof buf);
        fprintf(out, "<div class=\"card\"><b>%s</b>marginal coverage</div>", buf);
        cov_report_share_text(f->coverage->pairwise_share, buf, sizeof buf);
        fprintf(out, "<div class=\"card\"><b>%s</b>2-way coverage</div>", buf);
        cov_report_share_text(f->coverage->threeway_share, buf, sizeof buf);
        fprintf(out, "<div class=\"card\"><b>%s</b>3-way coverage</div>", buf);
    }
    fputs("</div>\n", out);
    if (f->data != NULL) {
        char run_line[512];
        cov_runs_summary(f->data, run_line, sizeof run_line);
        fputs("<p>Runs: ", out);
        cov_html_text(out, run_line);
        fputs(".</p>\n", out);   /* a conflicting run is among the cautions below */
    }
    if (f->opt != NULL)
        fprintf(out, "<p>Targets: power %.2f at family-wise level %.3g (%s), effects as declared in "
                     "the graph.</p>\n", f->opt->power.target, f->opt->power.alpha,
                f->opt->power.bonferroni ? "Bonferroni over the testable claims" : "no correction");
    fputs("</section>\n", out);

    if (info->next != NULL) {
        fputs("<section id=\"next\"><h2>Next steps</h2>\n<ol class=\"next\">\n", out);
        for (size_t k = 0; k < info->next->n; k++) {
            fputs("<li>", out);
            cov_html_text(out, info->next->lines[k]);
            fputs("</li>\n", out);
        }
        fputs("</ol>\n</section>\n", out);
    }
    html_found_cautions(out, f, info->cautions);
    fputs("<section id=\"claims\"><h2>Claims</h2>\n<p>Thin claims first, weakest first. Click a "
          "heading to sort. Power is at the declared effect of interest; for an absence claim it "
          "is the chance of showing the effect lies within the margin, and the MDE is the "
          "smallest margin the runs could show.</p>\n", out);
    html_claims(out, f, info, order);
    fputs("</section>\n", out);
    int rc = COV_OK;
    html_graph(out, f, info, dir);
    html_plots(out, f, info, dir, err, &rc);
    if (rc == COV_OK) {
        if (f->coverage != NULL) html_coverage(out, f);
        html_history(out, f, info);
        cov_report_audit_html(f, out);
        html_audit(out, f, info);
        fputs("<section id=\"cautions\"><h2>Read with care</h2>\n<ul class=\"cautions\">\n", out);
        for (size_t k = 0; k < cov_report_n_cautions; k++) {
            fputs("<li>", out);
            cov_html_text(out, cov_report_cautions[k]);
            fputs("</li>\n", out);
        }
        fprintf(out, "</ul>\n</section>\n<script>\n%s</script>\n</body></html>\n", html_script);
    }
    free(order);
    return rc;
}

