/* What to do next, in the terminal and the report: the plan command with the runs it is expected
 * to need, the hidden variables whose recording would make untestable claims testable, and the
 * coverage gates missed with their shortfall. See LICENSE. */
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "coverage/report/report.h"

static int add_line(cov_next_steps *s, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
static int add_line(cov_next_steps *s, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    int len = vsnprintf(NULL, 0, fmt, ap);
    va_end(ap);
    char *line = len >= 0 ? malloc((size_t)len + 1) : NULL;
    char **grown = realloc(s->lines, (s->n + 1) * sizeof *grown);
    if (grown != NULL) s->lines = grown;
    if (line == NULL || grown == NULL) {
        free(line);
        return COV_ENOMEM;
    }
    va_start(ap, fmt);
    vsnprintf(line, (size_t)len + 1, fmt, ap);
    va_end(ap);
    s->lines[s->n++] = line;
    return COV_OK;
}

/* The claims untestable now that would be testable under what_if (the same graph with one thing
 * changed), matched by kind, treatment and outcome. Names into buf. */
static int unlocked(const cov_findings *f, const cov_graph *what_if, char *buf, size_t size,
                    size_t *count)
{
    const cov_graph *g = f->graph;
    *count = 0;
    buf[0] = '\0';
    cov_claims *c2 = NULL;
    int rc = cov_claims_derive(what_if, &c2, NULL);
    if (rc == COV_OK) {
        size_t used = 0;
        for (size_t i = 0; i < f->claims->n; i++) {
            const cov_claim *a = &f->claims->items[i];
            if (a->status == COV_TESTABLE) continue;
            for (size_t j = 0; j < c2->n; j++) {
                const cov_claim *b = &c2->items[j];
                if (b->kind != a->kind || b->treatment != a->treatment || b->outcome != a->outcome ||
                    b->status != COV_TESTABLE)
                    continue;
                char lab[300];
                cov_claim_pair_label(g, a, lab, sizeof lab);
                int w = snprintf(buf + used, size - used, "%s%s", *count ? ", " : "", lab);
                if (w > 0 && (size_t)w < size - used) used += (size_t)w;
                (*count)++;
                break;
            }
        }
    }
    cov_claims_free(c2);
    return rc == COV_ENOMEM ? COV_ENOMEM : COV_OK;
}

/* The same with hidden variable h recorded (an output). */
static int unlocked_by(const cov_findings *f, size_t h, char *buf, size_t size, size_t *count)
{
    const cov_graph *g = f->graph;
    cov_var *vars = malloc(g->n_vars * sizeof *vars);
    if (vars == NULL) return COV_ENOMEM;
    memcpy(vars, g->vars, g->n_vars * sizeof *vars);
    vars[h].role = COV_OUTPUT;
    cov_graph what_if = *g;
    what_if.vars = vars;
    int rc = unlocked(f, &what_if, buf, size, count);
    free(vars);
    return rc;
}

int cov_next_steps_make(const cov_findings *f, cov_next_steps **out)
{
    *out = calloc(1, sizeof **out);
    if (*out == NULL) return COV_ENOMEM;
    cov_next_steps *s = *out;
    const cov_options *o = f->opt;
    double target = o ? o->power.target : 0.8;
    int rc = COV_OK;

    /* 1. The plan. Runs needed per claim assume more runs like the current ones; the largest of
     * them is what brings every reachable claim to the target that way (a planned design that
     * places runs where they inform most usually needs fewer: README, "Planning"). */
    double most = 0;
    size_t n_under = 0, n_unreach = 0, worst = SIZE_MAX;
    char unreach[1024] = "";
    size_t used = 0;
    for (size_t i = 0; f->assess != NULL && i < f->assess->n; i++) {
        const cov_assessment *a = &f->assess->items[i];
        if (f->claims->items[i].status != COV_TESTABLE || a->verdict != COV_UNDERPOWERED) continue;
        n_under++;
        if (isfinite(a->runs_needed)) {
            double more = a->runs_needed - (double)a->n;
            if (more > most) most = more, worst = i;
        } else {
            char lab[300];
            cov_claim_pair_label(f->graph, &f->claims->items[i], lab, sizeof lab);
            int w = snprintf(unreach + used, sizeof unreach - used, "%s%s", n_unreach ? ", " : "",
                             lab);
            if (w > 0 && (size_t)w < sizeof unreach - used) used += (size_t)w;
            n_unreach++;
        }
    }
    const char *graph = f->graph->path, *archive = o && o->archive_path ? o->archive_path : "ARCHIVE";
    if (n_under > 0 && worst != SIZE_MAX) {
        char lab[300];
        cov_claim_pair_label(f->graph, &f->claims->items[worst], lab, sizeof lab);
        rc = add_line(s, "Plan the next runs: shoal plan %s %s --budget auto -o plan.csv. By the "
                      "current runs' figures, about %.0f more runs like them bring the %zu "
                      "underpowered claim%s that more runs can help to power %.2f (the most needed "
                      "by %s); a planned design usually needs fewer. Simulate the planned runs, "
                      "shoal import them, and survey again.", graph, archive, most,
                      n_under - n_unreach, n_under - n_unreach == 1 ? "" : "s", target, lab);
    }
    if (rc == COV_OK && n_unreach > 0)
        rc = add_line(s, "No number of runs like these brings %s to power %.2f: widen the "
                      "treatment's range, vary it independently of the adjustment set, or revisit "
                      "the effect of interest in the graph.", unreach, target);

    /* 2. Hidden variables worth recording. */
    for (size_t h = 0; rc == COV_OK && h < f->graph->n_vars; h++) {
        if (f->graph->vars[h].role != COV_HIDDEN) continue;
        char names[2048];
        size_t count = 0;
        if ((rc = unlocked_by(f, h, names, sizeof names, &count)) != COV_OK) break;
        if (count > 0)
            rc = add_line(s, "Record %s (hidden now): %zu untestable claim%s would become "
                          "testable: %s.", f->graph->vars[h].name, count, count == 1 ? "" : "s",
                          names);
    }

    /* 2b. Assumptions the graph could state, when the user knows them to hold: shoal cannot
     * check them from the runs, so it says what each would unlock. */
    if (rc == COV_OK && !f->graph->noise_independent) {
        cov_graph what_if = *f->graph;
        what_if.noise_independent = 1;
        char names[2048];
        size_t count = 0;
        rc = unlocked(f, &what_if, names, sizeof names, &count);
        if (rc == COV_OK && count > 0)
            rc = add_line(s, "If the simulator draws each output's run-to-run noise separately, "
                          "say 'noise independent' in the graph: %zu untestable claim%s would "
                          "become testable: %s. The runs cannot show this; the simulator's code "
                          "can.", count, count == 1 ? "" : "s", names);
    }
    if (rc == COV_OK && !f->graph->inputs_independent) {
        cov_graph what_if = *f->graph;
        what_if.inputs_independent = 1;
        char names[2048];
        size_t count = 0;
        rc = unlocked(f, &what_if, names, sizeof names, &count);
        if (rc == COV_OK && count > 0)
            rc = add_line(s, "If the campaign set its inputs independently of each other, say "
                          "'design independent' in the graph: %zu untestable claim%s would become "
                          "testable: %s.", count, count == 1 ? "" : "s", names);
    }

    /* 3. Coverage gates missed, by how much. */
    if (rc == COV_OK && o != NULL && f->coverage != NULL) {
        const struct { const char *opt, *name; double need, got; } gate[] = {
            {"--need-marginal", "marginal", o->need_marginal, f->coverage->marginal_share},
            {"--need-pairwise", "2-way", o->need_pairwise, f->coverage->pairwise_share},
            {"--need-threeway", "3-way", o->need_threeway, f->coverage->threeway_share},
        };
        for (size_t k = 0; rc == COV_OK && k < 3; k++) {
            if (isnan(gate[k].need) || gate[k].got >= gate[k].need) continue;
            if (!isfinite(gate[k].got))
                rc = add_line(s, "The %s coverage gate (%s %.1f%%) is missed: %s coverage was not "
                              "measured.", gate[k].name, gate[k].opt, 100 * gate[k].need,
                              gate[k].name);
            else
                rc = add_line(s, "The %s coverage gate (%s %.1f%%) is missed by %.1f points "
                              "(%.1f%% reached): shoal coverage lists the empty cells, and the "
                              "plan's runs fill them where they help a claim.", gate[k].name,
                              gate[k].opt, 100 * gate[k].need,
                              100 * (gate[k].need - gate[k].got), 100 * gate[k].got);
        }
    }
    if (rc == COV_OK && s->n == 0)
        rc = add_line(s, "Nothing to add: every testable claim reaches power %.2f and every gate "
                      "given is met. Survey again when the graph or the simulator changes.",
                      target);
    if (rc != COV_OK) {
        cov_next_steps_free(s);
        *out = NULL;
    }
    return rc;
}

void cov_next_steps_free(cov_next_steps *s)
{
    if (s == NULL) return;
    for (size_t i = 0; i < s->n; i++) free(s->lines[i]);
    free(s->lines);
    free(s);
}

void cov_next_steps_print(const cov_next_steps *s, FILE *out, size_t width)
{
    if (s == NULL || s->n == 0) return;
    fputs("\nnext steps:\n", out);
    for (size_t i = 0; i < s->n; i++) {
        fprintf(out, "  %zu. ", i + 1);
        cov_term_wrap(out, s->lines[i], 5, 5, width);
        fputc('\n', out);
    }
}
