/* The verdict as JUnit XML, the test-report format CI servers display: one test suite per survey,
 * a test case per claim (failing when the claim is underpowered or cannot be tested on these runs) and
 * per --need-* coverage gate. See LICENSE. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "coverage/report/report.h"

/* XML 1.0 character data and attribute values (section 2.4 and 3.3.3): & < > " ' as references;
 * control characters other than tab, LF and CR are not XML characters at all (section 2.2), so
 * they become '?'. */
static void xml_text(FILE *out, const char *s)
{
    for (const unsigned char *p = (const unsigned char *)(s ? s : ""); *p; p++) {
        switch (*p) {
        case '&': fputs("&amp;", out); break;
        case '<': fputs("&lt;", out); break;
        case '>': fputs("&gt;", out); break;
        case '"': fputs("&quot;", out); break;
        case '\'': fputs("&apos;", out); break;
        case '\t': fputs("&#9;", out); break;
        case '\n': fputs("&#10;", out); break;
        case '\r': fputs("&#13;", out); break;
        default: fputc(*p < 0x20 || *p == 0x7f ? '?' : *p, out);
        }
    }
}

typedef struct {
    const char *opt, *name;
    double need, got;
} gate;

static size_t gates_of(const cov_findings *f, gate g[3])
{
    const cov_options *o = f->opt;
    size_t n = 0;
    if (o == NULL || f->coverage == NULL) return 0;
    const gate all[3] = {
        {"--need-marginal", "marginal", o->need_marginal, f->coverage->marginal_share},
        {"--need-pairwise", "2-way", o->need_pairwise, f->coverage->pairwise_share},
        {"--need-threeway", "3-way", o->need_threeway, f->coverage->threeway_share},
    };
    for (size_t k = 0; k < 3; k++)
        if (!isnan(all[k].need)) g[n++] = all[k];
    return n;
}

void cov_report_junit(const cov_findings *f, const cov_report_info *info, FILE *out)
{
    gate g[3];
    size_t n_gates = gates_of(f, g);
    size_t failures = 0, skipped = 0;
    for (size_t i = 0; i < f->claims->n; i++) {
        if (f->claims->items[i].status != COV_TESTABLE) skipped++;
        else if (cov_report_verdict(f, i) != COV_AMPLE) failures++;
    }
    for (size_t k = 0; k < n_gates; k++) failures += !(g[k].got >= g[k].need);
    size_t tests = f->claims->n + n_gates;
    fputs("<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n", out);
    fprintf(out, "<testsuites name=\"shoal\" tests=\"%zu\" failures=\"%zu\" errors=\"0\" "
                 "skipped=\"%zu\" time=\"0\">\n", tests, failures, skipped);
    fputs("  <testsuite name=\"shoal survey ", out);
    xml_text(out, f->graph->path);
    fputs(" on ", out);
    xml_text(out, f->opt && f->opt->archive_path ? f->opt->archive_path : "");
    fprintf(out, "\" tests=\"%zu\" failures=\"%zu\" errors=\"0\" skipped=\"%zu\" time=\"0\" "
                 "timestamp=\"", tests, failures, skipped);
    /* JUnit's timestamp is ISO 8601 without a zone designator. */
    char at[32];
    snprintf(at, sizeof at, "%s", info->generated ? info->generated : "");
    size_t len = strlen(at);
    if (len > 0 && at[len - 1] == 'Z') at[len - 1] = '\0';
    xml_text(out, at);
    fputs("\" hostname=\"localhost\">\n    <properties>\n", out);
    if (f->opt != NULL) {
        fprintf(out, "      <property name=\"shoal.version\" value=\"");
        xml_text(out, f->opt->version ? f->opt->version : "");
        fprintf(out, "\"/>\n      <property name=\"alpha\" value=\"%g\"/>\n      <property "
                     "name=\"target_power\" value=\"%g\"/>\n      <property name=\"runs\" "
                     "value=\"%zu\"/>\n      <property name=\"adequate\" value=\"%s\"/>\n",
                f->opt->power.alpha, f->opt->power.target, f->data ? f->data->n_runs : 0,
                info->adequate ? "true" : "false");
    }
    fputs("    </properties>\n", out);
    for (size_t i = 0; i < f->claims->n; i++) {
        const cov_claim *c = &f->claims->items[i];
        const cov_assessment *a = cov_report_assessment(f, i);
        cov_verdict v = cov_report_verdict(f, i);
        char label[600];
        cov_claim_label(f->graph, c, label, sizeof label);
        fprintf(out, "    <testcase classname=\"shoal.claims.%s\" name=\"", cov_report_kind(c));
        xml_text(out, label);
        fputs("\" time=\"0\"", out);
        const char *why = cov_report_reason(f, i);
        if (c->status != COV_TESTABLE) {
            fputs(">\n      <skipped message=\"untestable by the graph: ", out);
            xml_text(out, why ? why : "");
            fputs("\"/>\n    </testcase>\n", out);
        } else if (v != COV_AMPLE) {
            fprintf(out, ">\n      <failure type=\"%s\" message=\"",
                    v == COV_UNDERPOWERED ? "underpowered" : "untestable on these runs");
            if (a != NULL && isfinite(a->power))
                fprintf(out, "power %.2f below the target %.2f", a->power,
                        f->opt ? f->opt->power.target : 0.8);
            else
                fputs("the runs cannot test it", out);
            fputs("\">", out);
            xml_text(out, why ? why : "");
            fputs("</failure>\n    </testcase>\n", out);
        } else {
            fputs("/>\n", out);
        }
    }
    for (size_t k = 0; k < n_gates; k++) {
        fprintf(out, "    <testcase classname=\"shoal.coverage\" name=\"%s coverage of at least "
                     "%.1f%% (%s)\" time=\"0\"", g[k].name, 100 * g[k].need, g[k].opt);
        if (g[k].got >= g[k].need) {
            fputs("/>\n", out);
        } else if (!isfinite(g[k].got)) {
            fprintf(out, ">\n      <failure type=\"coverage\" message=\"%s coverage was not "
                         "measured\"/>\n    </testcase>\n", g[k].name);
        } else {
            fprintf(out, ">\n      <failure type=\"coverage\" message=\"%s coverage %.1f%%, %.1f "
                         "points short of %.1f%%\"/>\n    </testcase>\n", g[k].name,
                    100 * g[k].got, 100 * (g[k].need - g[k].got), 100 * g[k].need);
        }
    }
    fputs("  </testsuite>\n</testsuites>\n", out);
}
