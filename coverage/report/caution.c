/* The cautions a survey computes, gathered once for every format: the terminal verdict, index.html,
 * report.md, summary.json and the JUnit file. A new caution is one entry in `kinds` below.
 * See LICENSE. */
#include <math.h>
#include <stdarg.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "coverage/report/report.h"

/* A lack-of-fit test significant at this level is a caution (the level coverage/assess/assess.c
 * flags the noise at). */
#define CAUTION_LOF_P 0.01
/* One value in at least this share of an outcome's runs: nearly constant (as assess.c's flag). */
#define CAUTION_MODE_SHARE 0.5

struct cov_caution_sink {
    cov_cautions *list;
    int failed;
};
typedef cov_caution_sink sink;

/* Append one caution of kind k about claim (or -1) with printf-style text. */
static void add(sink *s, const cov_caution_kind *k, long claim, const char *fmt, ...)
    __attribute__((format(printf, 4, 5)));
static void add(sink *s, const cov_caution_kind *k, long claim, const char *fmt, ...)
{
    if (s->failed) return;
    va_list ap;
    va_start(ap, fmt);
    int len = vsnprintf(NULL, 0, fmt, ap);
    va_end(ap);
    char *text = len >= 0 ? malloc((size_t)len + 1) : NULL;
    cov_caution *grown = realloc(s->list->items, (s->list->n + 1) * sizeof *grown);
    if (text == NULL || grown == NULL) {
        free(text);
        if (grown != NULL) s->list->items = grown;
        s->failed = 1;
        return;
    }
    va_start(ap, fmt);
    vsnprintf(text, (size_t)len + 1, fmt, ap);
    va_end(ap);
    s->list->items = grown;
    s->list->items[s->list->n++] = (cov_caution){k, claim, text};
}

static const char *name_of(const cov_findings *f, size_t v) { return f->graph->vars[v].name; }

/* ---- the gatherers, one per kind -------------------------------------------------------------- */

static void family(const cov_findings *f, const cov_caution_kind *k, sink *s)
{
    if (f->assess == NULL || f->opt == NULL) return;
    const cov_power_options *p = &f->assess->opt;
    size_t m = f->assess->n_testable;
    if (p->bonferroni && m > 1)
        add(s, k, -1, "%zu testable claims are judged together: Bonferroni over %zu claims, "
            "each tested at %.4g (family-wise level %g / %zu); target power %g, %s tests.", m, m,
            p->alpha / (double)m, p->alpha, m, p->target, p->one_sided ? "one-sided" : "two-sided");
    else
        add(s, k, -1, "%zu testable claim%s, each tested at %.4g (%s); target power %g, %s tests.",
            m, m == 1 ? "" : "s", p->alpha, p->bonferroni ? "a family of one or none"
                                                         : "no family-wise correction",
            p->target, p->one_sided ? "one-sided" : "two-sided");
}

static void noise(const cov_findings *f, const cov_caution_kind *k, sink *s)
{
    for (size_t i = 0; f->assess != NULL && i < f->assess->n; i++) {
        const cov_assessment *a = &f->assess->items[i];
        if (f->claims->items[i].status != COV_TESTABLE || !a->noise_flag) continue;
        add(s, k, (long)i, "power and MDE for %s can be off (the noise may not be what the "
            "figure assumes): %s.", name_of(f, f->claims->items[i].outcome),
            a->noise_note ? a->noise_note : "see the diagnostics in summary.json");
    }
}

static void lack_of_fit(const cov_findings *f, const cov_caution_kind *k, sink *s)
{
    for (size_t i = 0; f->assess != NULL && i < f->assess->n; i++) {
        const cov_assessment *a = &f->assess->items[i];
        if (f->claims->items[i].status != COV_TESTABLE || !a->has_pure_error ||
            !(a->lof_p < CAUTION_LOF_P))
            continue;
        add(s, k, (long)i, "the straight-line model of %s misses structure the replicated runs "
            "show (lack of fit F = %.3g, p = %.2g; pure-error SD %.4g against residual SD %.4g): "
            "the effect may not be linear, and power assumes it is.",
            name_of(f, f->claims->items[i].outcome), a->lof_f, a->lof_p, a->sigma_pure, a->sigma);
    }
}

/* The assessment's own cautions on the effect's shape and on levels never run for this claim. */
static void shape(const cov_findings *f, const cov_caution_kind *k, sink *s)
{
    for (size_t i = 0; f->assess != NULL && i < f->assess->n; i++)
        if (f->assess->items[i].caution != NULL)
            add(s, k, (long)i, "%s.", f->assess->items[i].caution);
}

/* The most common value of x's non-missing cells when it fills at least half of them, without
 * sorting: any such value is the first cell's or the majority of the cells after it (a value
 * with exactly half of n cells, not first, has more than half of the other n - 1), and the
 * majority vote of Boyer & Moore (1981, "MJRTY") finds that one in a pass. A second pass counts
 * both candidates; ties at exactly half go to the smaller value, as a sorted count would.
 * Writes the cells counted to *n, and to *best and *mode the count and value (0 and NAN when no
 * value fills half). */
static void half_mode(const double *x, size_t n_runs, size_t *n, size_t *best, double *mode)
{
    size_t first = 0, votes = 0, count = 0;
    while (first < n_runs && isnan(x[first])) first++;
    double c0 = first < n_runs ? x[first] : NAN, c1 = NAN;
    for (size_t i = first; i < n_runs; i++) {
        if (isnan(x[i])) continue;
        count++;
        if (i == first) continue;
        if (votes == 0) c1 = x[i], votes = 1;
        else votes += x[i] == c1 ? 1 : (size_t)-1;
    }
    size_t n0 = 0, n1 = 0;
    for (size_t i = first; i < n_runs; i++) {
        n0 += x[i] == c0;
        n1 += x[i] == c1;
    }
    if (c0 == c1) n1 = 0;
    *n = count;
    *best = 0;
    *mode = NAN;
    if (2 * n0 >= count && n0 > 0) *best = n0, *mode = c0;
    if (2 * n1 >= count && n1 > 0 && (n1 > *best || (n1 == *best && c1 < *mode)))
        *best = n1, *mode = c1;
    if (*mode == 0) *mode = 0;   /* -0 and +0 are one value */
}

/* Outcomes that never vary, or take one value in most runs (CAUTION_MODE_SHARE, at least one
 * half, is what half_mode can find). */
static void constant(const cov_findings *f, const cov_caution_kind *k, sink *s)
{
    if (f->data == NULL) return;
    for (size_t v = 0; v < f->graph->n_vars; v++) {
        if (f->graph->vars[v].role != COV_OUTPUT || f->data->col[v] == NULL) continue;
        size_t n, best;
        double mode;
        half_mode(f->data->col[v], f->data->n_runs, &n, &best, &mode);
        if (n < 2) continue;
        if (best == n)
            add(s, k, -1, "%s never varies: all %zu recorded runs give %g, so no claim on it can "
                "show an effect or its absence; check that the simulator records it.",
                name_of(f, v), n, mode);
        else if ((double)best >= CAUTION_MODE_SHARE * (double)n)
            add(s, k, -1, "%s is nearly constant: %.0f%% of its %zu runs give %g, so its residual "
                "SD says little about the noise of the rest and its power figures are rough.",
                name_of(f, v), 100.0 * (double)best / (double)n, n, mode);
    }
}

/* Pairs of inputs the campaign moved together, with the variance inflation they cost each claim
 * whose treatment is one of them and whose separating set holds the other. */
static void dependence(const cov_findings *f, const cov_caution_kind *k, sink *s)
{
    const cov_coverage *cv = f->coverage;
    if (cv == NULL || cv->dependence == NULL) return;
    for (size_t i = 0; i < cv->n_inputs; i++)
        for (size_t j = i + 1; j < cv->n_inputs; j++) {
            double dep = cv->dependence[i * cv->n_inputs + j];
            if (!(dep > cv->opt.dependence_threshold)) continue;
            size_t va = cv->inputs[i], vb = cv->inputs[j];
            const cov_var *A = &f->graph->vars[va], *B = &f->graph->vars[vb];
            int numeric = (A->type == COV_REAL || A->type == COV_INTEGER) &&
                          (B->type == COV_REAL || B->type == COV_INTEGER);
            char cost[1024] = "";
            size_t used = 0, hit = 0;
            for (size_t c = 0; f->assess != NULL && c < f->claims->n; c++) {
                const cov_claim *cl = &f->claims->items[c];
                if (cl->status != COV_TESTABLE || c >= f->assess->n ||
                    !isfinite(f->assess->items[c].vif))
                    continue;
                size_t other = cl->treatment == va ? vb : cl->treatment == vb ? va : SIZE_MAX;
                int held = 0;
                for (size_t m = 0; other != SIZE_MAX && m < cl->n_cond; m++)
                    held |= cl->cond[m] == other;
                if (!held) continue;
                char lab[256];
                cov_claim_pair_label(f->graph, cl, lab, sizeof lab);
                int w = snprintf(cost + used, sizeof cost - used, "%s%s (variance inflation %.3g)",
                                 hit ? "; " : "", lab, f->assess->items[c].vif);
                if (w > 0 && (size_t)w < sizeof cost - used) used += (size_t)w;
                hit++;
            }
            add(s, k, -1, "the design moved %s and %s together (%s %.2f), so their effects are "
                "hard to tell apart%s%s%s", A->name, B->name, numeric ? "|r|" : "Cramer's V", dep,
                hit ? ": it costs " : "; no testable claim adjusts one for the other",
                cost, hit ? ", the factor by which each test's variance grows." : ".");
        }
}

/* Levels (and bool values) of an input that no run used. */
static void never_run(const cov_findings *f, const cov_caution_kind *k, sink *s)
{
    const cov_coverage *cv = f->coverage;
    if (cv == NULL) return;
    for (size_t m = 0; m < cv->n_inputs; m++) {
        const cov_marginal *mg = &cv->marginal[m];
        const cov_var *v = &f->graph->vars[mg->var];
        if (v->type != COV_LEVELS && v->type != COV_BOOL) continue;
        for (size_t b = 0; b < mg->n_bins; b++) {
            if (mg->count[b] > 0) continue;
            const char *level = v->type == COV_LEVELS ? v->levels[b] : b ? "true" : "false";
            add(s, k, -1, "%s = %s never ran: no claim says anything about it, and claims on %s "
                "compare the other values only.", v->name, level, v->name);
        }
    }
}

/* Claims whose separating set or treatment holds an output: no planned run can set it, and the
 * test rests on the graph's arrows among outputs and on no hidden variable joining them. */
static void assumed(const cov_findings *f, const cov_caution_kind *k, sink *s)
{
    for (size_t i = 0; i < f->claims->n; i++) {
        const cov_claim *c = &f->claims->items[i];
        if (c->status != COV_TESTABLE || c->steerable) continue;
        char outs[512] = "";
        size_t used = 0;
        const size_t *vars[2] = {&c->treatment, c->cond};
        size_t counts[2] = {1, c->n_cond};
        for (int g = 0; g < 2; g++)
            for (size_t m = 0; m < counts[g]; m++) {
                size_t v = vars[g][m];
                if (f->graph->vars[v].role == COV_INPUT) continue;
                int w = snprintf(outs + used, sizeof outs - used, "%s%s", used ? ", " : "",
                                 name_of(f, v));
                if (w > 0 && (size_t)w < sizeof outs - used) used += (size_t)w;
            }
        add(s, k, (long)i, "the test adjusts for or starts from outputs (%s), which no run can "
            "set: it holds only if the graph's arrows among them are right and no unrecorded "
            "variable joins them.", outs);
    }
}

/* Runs that share inputs and seed but not outputs (coverage/base/runs_text.c says it). */
static void conflicting_runs(const cov_findings *f, const cov_caution_kind *k, sink *s)
{
    char text[768];
    if (f->data != NULL && cov_runs_caution(f->data, f->graph, text, sizeof text))
        add(s, k, -1, "%s.", text);
}

static void data_errors(const cov_findings *f, const cov_caution_kind *k, sink *s)
{
    if (f->coverage != NULL && f->coverage->n_outside > 0)
        add(s, k, -1, "%zu input cells lie outside their declared domain; those runs are left "
            "out of every figure (shoal check lists them).", f->coverage->n_outside);
}

/* Shared seeds: how much of each outcome's variation they explain, and the claims whose test
 * uses seed blocks with the assumption that comes with them (coverage/assess/seedblock.c). */
static void seed_blocks(const cov_findings *f, const cov_caution_kind *k, sink *s)
{
    if (f->assess == NULL) return;
    char text[640];
    for (size_t v = 0; v < f->graph->n_vars; v++)
        if (cov_seed_outcome_text(f->graph, f->claims, f->assess, v, text, sizeof text))
            add(s, k, -1, "%s%s.", text[0] == 't' ? "T" : "", text + (text[0] == 't'));
    for (size_t i = 0; i < f->assess->n && i < f->claims->n; i++) {
        const cov_assessment *a = &f->assess->items[i];
        if (f->claims->items[i].status != COV_TESTABLE || !a->seed_blocks_used) continue;
        cov_seed_note(a, text, sizeof text);
        add(s, k, (long)i, "%s%s.", text[0] == 't' ? "T" : "", text + (text[0] == 't'));
    }
}

/* Every kind of caution, in the order the formats show them. */
static const cov_caution_kind kinds[] = {
    {"family", "Tests judged together", family},
    {"noise", "Power figure can be off", noise},
    {"lack-of-fit", "Lack of fit", lack_of_fit},
    {"shape", "The effect's shape and the levels run", shape},
    {"constant-outcome", "Constant or nearly constant outcome", constant},
    {"design-dependence", "Inputs moved together", dependence},
    {"never-run", "Levels never run", never_run},
    {"assumption", "Claims resting on the graph's assumptions", assumed},
    {"conflicting-runs", "Runs that disagree", conflicting_runs},
    {"data-errors", "Data errors", data_errors},
    {"seed-blocks", "Shared seeds (seed blocks)", seed_blocks},
};

const cov_caution_kind *cov_caution_kinds(size_t *n)
{
    *n = sizeof kinds / sizeof kinds[0];
    return kinds;
}

int cov_cautions_gather(const cov_findings *f, cov_cautions **out)
{
    *out = NULL;
    cov_cautions *list = calloc(1, sizeof *list);
    if (list == NULL) return COV_ENOMEM;
    sink s = {list, 0};
    for (size_t k = 0; k < sizeof kinds / sizeof kinds[0] && !s.failed; k++)
        kinds[k].gather(f, &kinds[k], &s);
    if (s.failed) {
        cov_cautions_free(list);
        return COV_ENOMEM;
    }
    *out = list;
    return COV_OK;
}

void cov_cautions_free(cov_cautions *c)
{
    if (c == NULL) return;
    for (size_t i = 0; i < c->n; i++) free(c->items[i].text);
    free(c->items);
    free(c);
}

size_t cov_cautions_of_claim(const cov_cautions *c, size_t claim, const cov_caution **first)
{
    size_t n = 0;
    *first = NULL;
    for (size_t i = 0; c != NULL && i < c->n; i++)
        if (c->items[i].claim == (long)claim) {
            if (n++ == 0) *first = &c->items[i];
        }
    return n;
}

/* ---- the terminal ------------------------------------------------------------------------------ */

int cov_caution_is_repeat(const cov_cautions *c, size_t j)
{
    for (size_t i = 0; i < j; i++)
        if (c->items[i].kind == c->items[j].kind && c->items[i].claim >= 0 &&
            strcmp(c->items[i].text, c->items[j].text) == 0)
            return 1;
    return 0;
}

void cov_cautions_print(const cov_findings *f, const cov_cautions *c, FILE *out, size_t width)
{
    if (c == NULL || c->n == 0) return;
    fputs("\ncautions (what these figures rest on):\n", out);
    const cov_caution_kind *last = NULL;
    for (size_t j = 0; j < c->n; j++) {
        const cov_caution *it = &c->items[j];
        if (it->kind != last) {
            size_t n_kind = 0;
            for (size_t i = j; i < c->n && c->items[i].kind == it->kind; i++) n_kind++;
            fprintf(out, "  %s", it->kind->title);
            if (it->claim >= 0) fprintf(out, " (%zu claim%s)", n_kind, n_kind == 1 ? "" : "s");
            fputs(":\n", out);
            last = it->kind;
        }
        if (it->claim >= 0 && cov_caution_is_repeat(c, j)) continue;
        size_t col = 4;
        fputs("  - ", out);
        if (it->claim >= 0) {
            /* The claims that share this text, then the text once: notes repeat per outcome. */
            char *list = NULL;
            size_t len = 0;
            FILE *m = open_memstream(&list, &len);
            if (m == NULL) {
                fputc('\n', out);
                continue;
            }
            int first = 1;
            for (size_t i = j; i < c->n && c->items[i].kind == it->kind; i++) {
                if (strcmp(c->items[i].text, it->text) != 0) continue;
                size_t k = (size_t)c->items[i].claim;
                char lab[300];
                cov_claim_pair_label(f->graph, &f->claims->items[k], lab, sizeof lab);
                fprintf(m, "%s%s (%s)", first ? "" : "; ", lab,
                        cov_verdict_word(cov_report_verdict(f, k)));
                first = 0;
            }
            fprintf(m, ": %s", it->text);
            if (fclose(m) == 0 && list != NULL) cov_term_wrap(out, list, col, 6, width);
            free(list);
            fputc('\n', out);
            continue;
        }
        cov_term_wrap(out, it->text, col, 6, width);
        fputc('\n', out);
    }
}
