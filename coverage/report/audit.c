/* The audit trail of a survey: shoal's version, the exact command line, every option with its
 * value and whether it was given or left at its default, the seed, the archive's and the graph's
 * digests, the time. See LICENSE. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "coverage/report/report.h"

static int given(const cov_options *o, const char *name)
{
    for (size_t k = 0; k < o->n_given; k++)
        if (strcmp(o->given[k], name) == 0) return 1;
    return 0;
}

static void share(char *buf, size_t size, double x)
{
    if (isnan(x)) snprintf(buf, size, "none");
    else snprintf(buf, size, "%g%%", 100 * x);
}

size_t cov_audit_options(const cov_options *o, cov_audit_option *out, size_t cap)
{
    size_t n = 0;
#define PUT(NAME, ...)                                                                             \
    do {                                                                                           \
        if (n < cap) {                                                                             \
            out[n].name = NAME;                                                                    \
            snprintf(out[n].value, sizeof out[n].value, __VA_ARGS__);                              \
            out[n].given = given(o, NAME);                                                         \
            n++;                                                                                   \
        }                                                                                          \
    } while (0)
    PUT("table", "%s", o->table ? o->table : COV_DEFAULT_TABLE);
    PUT("alpha", "%g", o->power.alpha);
    PUT("power", "%g", o->power.target);
    PUT("family", "%s", o->power.bonferroni ? "bonferroni" : "none");
    PUT("one-sided", "%s", o->power.one_sided ? "yes" : "no");
    PUT("min-runs", "%zu", o->coverage.min_runs);
    PUT("bins", "%zu", o->coverage.bins);
    if (o->coverage.way) PUT("way", "%d", o->coverage.way);
    else PUT("way", "3 up to 20 inputs, else 2");
    char buf[32];
    share(buf, sizeof buf, o->need_marginal);
    PUT("need-marginal", "%s", buf);
    share(buf, sizeof buf, o->need_pairwise);
    PUT("need-pairwise", "%s", buf);
    share(buf, sizeof buf, o->need_threeway);
    PUT("need-threeway", "%s", buf);
    PUT("seed", "%lu", o->coverage.seed);
    PUT("output", "%s", o->out_path ? o->out_path : "shoal-report");
    PUT("history", "%s", o->history_path ? o->history_path : "none");
    PUT("record-snapshot", "%s", o->record_snapshot ? "yes" : "no");
    PUT("plan", "%s", o->plan_path ? o->plan_path : "none");
    PUT("junit", "%s", o->junit_path ? o->junit_path : "none");
    PUT(o->format == COV_FMT_CSV ? "csv" : "json", "%s",
        o->format == COV_FMT_TABLE ? "no (terminal text)" : "yes");
    PUT("quiet", "%s", o->quiet ? "yes" : "no");
#undef PUT
    return n;
}

/* Characters a POSIX shell word may hold unquoted. */
static int shell_plain(const char *s)
{
    if (*s == '\0') return 0;
    for (; *s; s++)
        if (!(('a' <= *s && *s <= 'z') || ('A' <= *s && *s <= 'Z') || ('0' <= *s && *s <= '9') ||
              strchr("_./=:,+-@%", *s) != NULL))
            return 0;
    return 1;
}

void cov_audit_command_line(const cov_options *o, FILE *out)
{
    for (int i = 0; o->argv != NULL && i < o->argc; i++) {
        const char *a = o->argv[i];
        if (i) fputc(' ', out);
        if (shell_plain(a)) {
            fputs(a, out);
            continue;
        }
        /* Single quotes keep everything but a quote, written as '\'' (POSIX.1-2017, XCU 2.2.2). */
        fputc('\'', out);
        for (; *a; a++) {
            if (*a == '\'') fputs("'\\''", out);
            else fputc(*a, out);
        }
        fputc('\'', out);
    }
}
