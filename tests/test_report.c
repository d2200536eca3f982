/* Tests of the survey report writers and the history snapshots, on an invented graph whose names are
 * chosen to break naive escaping. See LICENSE. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_test.h>

#include "coverage/plan/plan.h"
#include "coverage/report/report.h"

/* Three inputs named to break HTML, CSV and Markdown code spans; one output. The graph gives two
 * effect claims and one absence claim ("a`b" and y are not adjacent). */
static const char graph_text[] =
    "input \"<script>\" real [0, 1]\n"
    "input \"it's; \\\"odd\\\"\" bool\n"
    "input \"a`b\" real [0, 2]\n"
    "output y real\n"
    "default effect 0.5 sd\n"
    "default margin 0.1 sd\n"
    "\"<script>\" -> y\n"
    "\"it's; \\\"odd\\\"\" -> y\n";

static char *read_text(const char *dir, const char *name)
{
    char path[4096];
    snprintf(path, sizeof path, "%s/%s", dir, name);
    FILE *f = fopen(path, "rb");
    if (f == NULL) return NULL;
    size_t cap = 1 << 20, n;
    char *buf = malloc(cap + 1);
    n = buf ? fread(buf, 1, cap, f) : 0;
    fclose(f);
    if (buf) buf[n] = '\0';
    return buf;
}

/* The test seam of cov_options: fail at the report's halfway point. */
static int fail_at_report(const char *stage) { return strcmp(stage, "report") == 0; }

static size_t count_of(const char *hay, const char *needle)
{
    size_t n = 0;
    for (const char *p = hay; p && (p = strstr(p, needle)) != NULL; p += strlen(needle)) n++;
    return n;
}

static void remove_dir(const char *dir)
{
    static const char *const names[] = {"index.html", "report.md", "summary.json", "claims.csv",
                                        "side.db", "notsql.db"};
    char path[4096];
    for (size_t k = 0; k < sizeof names / sizeof names[0]; k++) {
        snprintf(path, sizeof path, "%s/%s", dir, names[k]);
        unlink(path);
    }
    rmdir(dir);
}

int main(void)
{
    gsl_set_error_handler_off();
    gsl_test_verbose(1);
    cov_error err = {{0}, {0}};
    cov_graph *g = NULL;
    cov_claims *cl = NULL;
    int rc = cov_graph_parse_text("odd.graph", graph_text, &g, &err);
    gsl_test_int(rc, COV_OK, "the invented graph with odd names parses (%s)", err.msg);
    if (rc != COV_OK) return gsl_test_summary();
    rc = cov_claims_derive(g, &cl, &err);
    gsl_test_int(rc, COV_OK, "its claims derive (%s)", err.msg);
    if (rc != COV_OK) return gsl_test_summary();
    gsl_test_int((int)cl->n, 3, "two effect claims and one absence claim");

    cov_options o;
    cov_options_default(&o);
    o.archive_path = "runs.db";
    char dir[] = "/tmp/shoal-test-report.XXXXXX";
    if (mkdtemp(dir) == NULL) {
        gsl_test(1, "cannot make a temporary directory");
        return gsl_test_summary();
    }
    char side[4200];
    snprintf(side, sizeof side, "%s/side.db", dir);
    o.history_path = side;

    /* Hand-made verdicts: claim 1 ample (power 0.95), claim 2 underpowered (power 0.30), claim 3 underpowered
     * (power 0.10). The report lists underpowered claims first, weakest first, then ample ones. */
    cov_assessment items[3];
    memset(items, 0, sizeof items);
    const double power[3] = {0.95, 0.30, 0.10};
    const cov_verdict verdict[3] = {COV_AMPLE, COV_UNDERPOWERED, COV_UNDERPOWERED};
    for (size_t i = 0; i < 3; i++) {
        items[i].claim = i;
        items[i].n = 100;
        items[i].power = power[i];
        items[i].power_lo = items[i].power_hi = items[i].mde = items[i].runs_needed = NAN;
        items[i].verdict = verdict[i];
        items[i].reason = verdict[i] == COV_UNDERPOWERED ? "too few runs for <b>this</b>" : NULL;
    }
    cov_assessments as = {o.power, 3, items, 3, NULL};
    cov_findings f = {&o, g, cl, NULL, &as, NULL, NULL, NULL, 0, NULL, 0};
    size_t order[3];
    cov_report_order(&f, order);
    gsl_test(!(order[0] == 2 && order[1] == 1 && order[2] == 0),
             "claims ordered underpowered by rising power, then ample (got %zu %zu %zu)", order[0],
             order[1], order[2]);

    /* Two snapshots recorded into a side file come back in order; the side file is created. */
    cov_snapshot r1, r2;
    cov_snapshot_from_findings(&f, &r1);
    gsl_test(!(r1.n_ample == 1 && r1.n_underpowered == 2 && r1.n_blind == 0),
             "a snapshot counts 1 ample, 2 underpowered, 0 untestable");
    snprintf(r1.at, sizeof r1.at, "2026-01-01T00:00:00Z");
    r1.n_runs = 100;
    r2 = r1;
    snprintf(r2.at, sizeof r2.at, "2026-01-02T00:00:00Z");
    r2.n_runs = 250;
    r2.n_ample = 3;
    cov_snapshot *snaps = NULL;
    size_t n_snapshots = 9;
    rc = cov_history_load(side, 1, &snaps, &n_snapshots, &err);
    gsl_test(rc != COV_OK || n_snapshots != 0, "a side file that does not exist yet holds no snapshots");
    free(snaps);
    rc = cov_history_load(side, 0, &snaps, &n_snapshots, &err);
    gsl_test_int(rc, COV_EIO, "a missing file is an error when it must exist");
    memset(&err, 0, sizeof err);
    /* Without create_file (shoal's own archive) a missing file is not created. */
    char missing[4400];
    snprintf(missing, sizeof missing, "%s.absent", side);
    rc = cov_report_history_record(missing, 0, &f, &r1, &err);
    gsl_test(rc != COV_EIO || access(missing, F_OK) == 0,
             "history into a missing archive fails with COV_EIO and creates nothing");
    memset(&err, 0, sizeof err);
    rc = cov_report_history_record(side, 1, &f, &r1, &err);
    gsl_test_int(rc, COV_OK, "snapshot 1 recorded (%s)", err.msg);
    memset(&err, 0, sizeof err);
    rc = cov_report_history_record(side, 1, &f, &r2, &err);
    gsl_test_int(rc, COV_OK, "snapshot 2 recorded (%s)", err.msg);
    rc = cov_history_load(side, 1, &snaps, &n_snapshots, &err);
    gsl_test(rc != COV_OK || n_snapshots != 2, "two snapshots come back (got %zu)", n_snapshots);
    if (rc == COV_OK && n_snapshots == 2) {
        gsl_test(!(snaps[0].n_runs == 100 && snaps[1].n_runs == 250 && snaps[1].n_ample == 3),
                 "the snapshots keep their runs and counts, oldest first");
        gsl_test(strcmp(snaps[1].at, "2026-01-02T00:00:00Z") != 0, "the snapshot keeps its time");
        gsl_test(!isnan(snaps[0].pairwise_share), "a share not computed comes back as NAN");
    }
    char notsql[4200];
    snprintf(notsql, sizeof notsql, "%s/notsql.db", dir);
    FILE *junk = fopen(notsql, "w");
    if (junk) {
        fputs("this is not an SQLite database, only text long enough to be read as a header\n",
              junk);
        fclose(junk);
    }
    cov_snapshot *none = NULL;
    size_t n_none = 0;
    rc = cov_history_load(notsql, 1, &none, &n_none, &err);
    gsl_test_int(rc, COV_EINPUT, "a history file that is not SQLite is bad input");
    free(none);

    /* The report, with every user string escaped for its format. */
    /* The cautions too carry user names (outputs, variables moved together) into every format. */
    cov_cautions *cautions = NULL;
    gsl_test_int(cov_cautions_gather(&f, &cautions), COV_OK, "the cautions are gathered");
    cov_report_info info = {"2026-01-02T00:00:00Z", 0, NULL, "gnuplot is not on PATH",
                            COV_HISTORY_SIDE, side, snaps, n_snapshots, cautions, 1, NULL, NULL, NULL};
    memset(&err, 0, sizeof err);
    rc = cov_report_write(&f, &info, dir, &err);
    gsl_test_int(rc, COV_OK, "the report is written (%s)", err.msg);
    char *html = read_text(dir, "index.html"), *json = read_text(dir, "summary.json");
    char *md = read_text(dir, "report.md"), *csv = read_text(dir, "claims.csv");
    gsl_test(html == NULL || json == NULL || md == NULL || csv == NULL, "all four files exist");
    /* HTML5 (WHATWG, "Serialising HTML fragments"): '<', '&' and quotes in text and attributes
     * become character references; only the page's own sorting script is a script element. */
    gsl_test_int((int)count_of(html, "<script>"), 1, "index.html holds exactly one <script>, ours");
    gsl_test(count_of(html, "&lt;script&gt;") < 2, "the name <script> is shown as text");
    gsl_test(count_of(html, "it&#39;s; &quot;odd&quot;") < 2, "quotes in names become references");
    gsl_test(count_of(html, "<b>this</b>") != 0, "markup in a reason is escaped");
    gsl_test(count_of(html, "Plots were skipped: gnuplot is not on PATH") != 1,
             "the page says the plots were skipped and why");
    gsl_test(count_of(html, "Read with care") != 1 || count_of(html, "domain") < 1,
             "the page carries the cautions");
    /* RFC 8259 with '<' escaped as \u003c so the text can sit inside a script block. */
    gsl_test(count_of(json, "\"\\u003cscript>\"") < 2 || count_of(json, "<script>") != 0,
             "summary.json escapes '<' in names");
    gsl_test(count_of(json, "\"it's; \\\"odd\\\"\"") < 2, "summary.json escapes quotes");
    gsl_test(count_of(json, "\"snapshots\": [") != 1 || count_of(json, "\"runs\": 250") != 1,
             "summary.json lists the snapshots");
    /* RFC 4180: a field with a quote is quoted and its quotes doubled. */
    gsl_test(count_of(csv, "\"it's; \"\"odd\"\"\"") != 1, "claims.csv quotes the odd name");
    /* CommonMark code spans: a name with a backtick gets a longer fence, padded by spaces. */
    gsl_test(count_of(md, "`<script>`") < 1, "report.md shows <script> in a code span");
    gsl_test(count_of(md, "`` a`b ``") < 1, "report.md fences a name holding a backtick");
    gsl_test(count_of(md, "\\<b\\>this\\</b\\>") < 1, "report.md escapes markup in a reason");
    free(html);
    free(json);
    free(md);
    free(csv);

    /* The test seam fails the writer halfway (the command then discards the directory). */
    o.fault_at = fail_at_report;
    rc = cov_report_write(&f, &info, dir, &err);
    gsl_test_int(rc, COV_EIO, "cov_options.fault_at(\"report\") makes the writer fail");
    o.fault_at = NULL;

    free(snaps);
    cov_cautions_free(cautions);
    remove_dir(dir);
    cov_claims_free(cl);
    cov_graph_free(g);
    return gsl_test_summary();
}
