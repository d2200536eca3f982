/* The `shoal coverage` command: input-space coverage, design dependence and claim support.
 * See LICENSE. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "coverage/plan/plan.h"
#include "coverage/report/report.h"

/* Worst pairs and empty cells shown in the table; JSON and CSV carry every one. */
#define SHOW_PAIRS 10
#define SHOW_CELLS 8

/* A bin in the input's own words: "[2, 4)", "hill", "true", "3". */
static void bin_label(const cov_var *v, size_t bins, size_t k, char *buf, size_t size)
{
    size_t nb = cov_bin_count(v, bins);
    if (v->type == COV_BOOL) snprintf(buf, size, "%s", k ? "true" : "false");
    else if (v->type == COV_LEVELS) snprintf(buf, size, "%s", k < v->n_levels ? v->levels[k] : "?");
    else if (v->type == COV_INTEGER && nb != bins) snprintf(buf, size, "%g", ceil(v->lo) + (double)k);
    else {
        double w = (v->hi - v->lo) / (double)nb;
        snprintf(buf, size, "[%.4g, %.4g%s", v->lo + (double)k * w, v->lo + (double)(k + 1) * w,
                 k + 1 == nb ? "]" : ")");
    }
}

/* A figure for the table, "-" when it does not apply. */
static void fmt_num(char *buf, size_t size, double x, const char *fmt)
{
    if (isnan(x)) snprintf(buf, size, "-");
    else if (isinf(x)) snprintf(buf, size, "%s", x > 0 ? "inf" : "-inf");
    else snprintf(buf, size, fmt, x);
}

static int is_numeric(const cov_var *v) { return v->type == COV_REAL || v->type == COV_INTEGER; }

/* A unit-cube coordinate back in the input's units (integer inputs to the nearest value). */
static double domain_value(const cov_var *v, double u)
{
    double x = v->lo + u * (v->hi - v->lo);
    return v->type == COV_INTEGER ? round(x) : x;
}

static const char *reading(double cd2, double random)
{
    if (!isfinite(cd2) || !isfinite(random)) return "not measured";
    return cd2 < random ? "better than random" : cd2 > random ? "worse than random" : "as random";
}

/* Variance inflation of claim k's treatment given its adjustment set: (sd / sd(X|S))^2. */
static double vif_of(const cov_support *s)
{
    if (!(s->spread > 0)) return NAN;
    if (!(s->spread_resid > 0)) return INFINITY;
    return (s->spread / s->spread_resid) * (s->spread / s->spread_resid);
}

static int holds(const cov_claim *c, size_t v)
{
    for (size_t k = 0; k < c->n_cond; k++)
        if (c->cond[k] == v) return 1;
    return 0;
}

/* Claims whose power the dependence of inputs a and b costs: the treatment is one of them and the
 * adjustment set holds the other. */
static int costs(const cov_claim *c, size_t a, size_t b)
{
    return c->status == COV_TESTABLE
           && ((c->treatment == a && holds(c, b)) || (c->treatment == b && holds(c, a)));
}

static int print_table(const cov_options *o, const cov_graph *g, const cov_claims *cl,
                        const cov_data *d, const cov_coverage *c, const cov_supports *sp,
                        FILE *out)
{
    const size_t m = c->opt.min_runs, bins = c->opt.bins;
    /* Everything above the support table is written aside, then its long lines are wrapped to
     * the terminal's width. */
    cov_reflow rf;
    FILE *const out_final = out;
    out = cov_reflow_begin(&rf, out_final);
    fprintf(out, "campaign: %zu runs, %zu inputs (%zu numeric); a bin or cell is covered with "
            ">= %zu runs\n\n", d->n_runs, c->n_inputs, c->n_numeric, m);

    fprintf(out, "marginal coverage: %.1f%% of all bins\n", 100 * c->marginal_share);
    for (size_t k = 0; k < c->n_inputs; k++) {
        const cov_marginal *mg = &c->marginal[k];
        const cov_var *v = &g->vars[mg->var];
        fprintf(out, "  %-20s %5.1f%% of %zu bins", v->name, 100 * mg->share, mg->n_bins);
        size_t shown = 0, short_bins = 0;
        for (size_t b = 0; b < mg->n_bins; b++) {
            if (mg->count[b] >= m) continue;
            if (short_bins++ >= SHOW_CELLS) continue;
            char lab[96];
            bin_label(v, bins, b, lab, sizeof lab);
            fprintf(out, "%s%s %s (%zu)", shown++ ? ", " : "; short: ", lab,
                    mg->count[b] ? "sparse" : "empty", mg->count[b]);
        }
        if (short_bins > shown) fprintf(out, ", ... (%zu short bins in all)", short_bins);
        fputc('\n', out);
    }

    if (c->n_pairs == 0)
        fprintf(out, "\n2-way coverage: not measured (fewer than 2 inputs)\n");
    else
        fprintf(out, "\n2-way coverage: %.1f%% of the cells of %zu input pairs\n",
                100 * c->pairwise_share, c->n_pairs);
    for (size_t w = 0; w < c->n_pairs && w < SHOW_PAIRS; w++) {
        const cov_pair *p = &c->pairs[c->worst[w]];
        if (p->share >= 1) break;
        const cov_var *va = &g->vars[p->a], *vb = &g->vars[p->b];
        fprintf(out, "  %s x %s: %.1f%%, %zu empty cells", va->name, vb->name, 100 * p->share,
                p->n_empty);
        size_t shown = 0;
        for (size_t i = 0; i < p->na && shown < SHOW_CELLS; i++)
            for (size_t j = 0; j < p->nb && shown < SHOW_CELLS; j++) {
                if (p->count[i * p->nb + j] != 0) continue;
                char la[96], lb[96];
                bin_label(va, bins, i, la, sizeof la);
                bin_label(vb, bins, j, lb, sizeof lb);
                fprintf(out, "%s%s=%s %s=%s", shown ? "; " : ": ", va->name, la, vb->name, lb);
                shown++;
            }
        if (shown < p->n_empty) fprintf(out, "; ...");
        fputc('\n', out);
    }
    if (isfinite(c->threeway_share))
        fprintf(out, "3-way coverage: %.1f%% of the cells of %zu input triples%s\n",
                100 * c->threeway_share, c->n_triples,
                c->threeway_sampled ? " (a fixed-seed sample of all triples)" : "");
    else if (c->n_inputs < 3)
        fprintf(out, "3-way coverage: not measured (fewer than 3 inputs)\n");
    else if (c->opt.way == 2)
        fprintf(out, "3-way coverage: not measured (--way 2 asks for pairs only)\n");
    else
        fprintf(out, "3-way coverage: not measured (more than 20 inputs: ask with --way 3; or too "
                "many bins for 3-way tables)\n");

    fprintf(out, "\nspace filling of the %zu numeric inputs (%zu complete runs):\n", c->n_numeric,
            c->n_complete);
    if (isfinite(c->cd2)) {
        fprintf(out, "  centred L2 discrepancy (squared): %.4g; %zu random points would give "
                "%.4g on average: %s", c->cd2, c->cd_n, c->cd2_random,
                reading(c->cd2, c->cd2_random));
        if (c->cd_subsampled) fprintf(out, " (on a random subsample of %zu runs)", c->cd_n);
        fputc('\n', out);
        fprintf(out, "  fill distance: %.4g (largest distance from %zu probe points to the nearest "
                "run, in the unit cube%s)\n", c->fill_distance, c->n_probes,
                c->gaps_subsampled ? "; measured to a random subsample of runs, so an upper bound"
                                   : "");
        if (c->n_gaps > 0) fprintf(out, "  gaps (points farthest from any run, in input units):\n");
        for (size_t q = 0; q < c->n_gaps; q++) {
            fprintf(out, "  %3zu. distance %.3f:", q + 1, c->gap_dist[q]);
            for (size_t j = 0; j < c->n_numeric; j++) {
                const cov_var *v = &g->vars[c->numeric[j]];
                fprintf(out, "%s %s=%.4g", j ? "," : "", v->name,
                        domain_value(v, c->gaps[q * c->n_numeric + j]));
            }
            fputc('\n', out);
        }
    } else {
        fprintf(out, "  not measured (no numeric input or no complete run)\n");
    }

    fprintf(out, "\ndesign dependence above %.2f:", c->opt.dependence_threshold);
    int any = 0;
    for (size_t a = 0; a < c->n_inputs; a++)
        for (size_t b = a + 1; b < c->n_inputs; b++) {
            double v = c->dependence[a * c->n_inputs + b];
            if (!(v > c->opt.dependence_threshold)) continue;
            const cov_var *va = &g->vars[c->inputs[a]], *vb = &g->vars[c->inputs[b]];
            fprintf(out, "\n  %s ~ %s: %s %.3f", va->name, vb->name,
                    is_numeric(va) && is_numeric(vb) ? "|r|" : "Cramer's V", v);
            any = 1;
            for (size_t k = 0; k < cl->n; k++) {
                if (!costs(&cl->items[k], c->inputs[a], c->inputs[b])) continue;
                char lab[512];
                cov_claim_label(g, &cl->items[k], lab, sizeof lab);
                fprintf(out, "\n      costs %s: variance inflation %.3g", lab,
                        vif_of(&sp->items[k]));
            }
        }
    fprintf(out, "%s\n", any ? "" : " none");

    if (c->n_outside > 0 || d->n_issues > 0) {
        fprintf(out, "\ndata errors: %zu input cells outside their declared domain (left out of "
                "every figure)\n", c->n_outside);
        for (size_t k = 0; k < d->n_issues; k++)
            fprintf(out, "  %s, row %zu: %g %s\n", g->vars[d->issues[k].var].name,
                    d->issues[k].row, d->issues[k].value, d->issues[k].what);
    }

    fprintf(out, "\nsupport per claim (overlap and ESS for bool and level-set treatments):\n");
    out = out_final;
    cov_reflow_end(&rf, out, o->width);
    static const char *const head[8] = {"claim", "runs", "distinct", "overlap", "ESS", "support",
                                        "detail", "why short"};
    cov_table *t = cov_table_new(8, head, "lrrrrlll", "......dd");
    if (t == NULL) return COV_ENOMEM;
    for (size_t k = 0; k < cl->n; k++) {
        const cov_support *s = &sp->items[k];
        const cov_claim *cc = &cl->items[k];
        char lab[512], set[512], runs[32], distinct[32], detail[1024], f[5][32];
        cov_claim_pair_label(g, cc, lab, sizeof lab);
        size_t used = (size_t)snprintf(set, sizeof set, "[");
        for (size_t q = 0; q < cc->n_cond && used < sizeof set; q++)
            used += (size_t)snprintf(set + used, sizeof set - used, "%s%s", q ? ", " : "",
                                     g->vars[cc->cond[q]].name);
        if (used < sizeof set) snprintf(set + used, sizeof set - used, "]");
        if (cc->status != COV_TESTABLE) snprintf(set, sizeof set, "-");
        fmt_num(f[0], sizeof f[0], s->spread, "%.4g");
        fmt_num(f[1], sizeof f[1], s->spread_resid, "%.4g");
        fmt_num(f[2], sizeof f[2], s->overlap, "%.2f");
        fmt_num(f[3], sizeof f[3], s->kish_ess, "%.1f");
        fmt_num(f[4], sizeof f[4], s->runs_per_config, "%.3g");
        snprintf(runs, sizeof runs, "%zu", s->n);
        snprintf(distinct, sizeof distinct, "%zu", s->distinct);
        if (cc->status != COV_TESTABLE)
            snprintf(detail, sizeof detail, "-");
        else
            snprintf(detail, sizeof detail, "adjustment set %s; spread %s, sd(X|S) %s; %s runs per "
                     "configuration; replicates %s", set, f[0], f[1], f[4],
                     s->pure_error ? "yes" : "no");
        const char *row[8] = {lab, runs, distinct, f[2], f[3], s->ok ? "ok" : "short", detail,
                              s->reason ? s->reason : "-"};
        if (cov_table_add(t, row) != COV_OK) {
            /* A table that lost a row would read as fewer claims: fail instead. */
            cov_table_free(t);
            return COV_ENOMEM;
        }
    }
    int rc = cov_table_print(t, out, o->width);
    cov_table_free(t);
    return rc;
}

/* ---- CSV: one long table, scope,name,figure,value ------------------------------------------- */

static void csv_row(FILE *out, const char *scope, const char *name, const char *figure, double x)
{
    fprintf(out, "%s,", scope);
    cov_emit_csv_field(out, name);
    fprintf(out, ",%s,", figure);
    cov_emit_csv_number(out, x);
    fputc('\n', out);
}

static void csv_text_row(FILE *out, const char *scope, const char *name, const char *figure,
                         const char *text)
{
    fprintf(out, "%s,", scope);
    cov_emit_csv_field(out, name);
    fprintf(out, ",%s,", figure);
    cov_emit_csv_field(out, text);
    fputc('\n', out);
}

static void print_csv(const cov_graph *g, const cov_claims *cl, const cov_data *d,
                      const cov_coverage *c, const cov_supports *sp, FILE *out)
{
    fputs("scope,name,figure,value\n", out);
    csv_row(out, "campaign", "", "runs", (double)d->n_runs);
    csv_row(out, "campaign", "", "min_runs", (double)c->opt.min_runs);
    csv_row(out, "campaign", "", "marginal_share", c->marginal_share);
    csv_row(out, "campaign", "", "pairwise_share", c->pairwise_share);
    csv_row(out, "campaign", "", "threeway_share", c->threeway_share);
    csv_row(out, "campaign", "", "cd2", c->cd2);
    csv_row(out, "campaign", "", "cd2_random", c->cd2_random);
    csv_row(out, "campaign", "", "cd_subsampled", c->cd_subsampled);
    csv_row(out, "campaign", "", "fill_distance", c->fill_distance);
    csv_row(out, "campaign", "", "cells_outside_domain", (double)c->n_outside);
    for (size_t k = 0; k < c->n_inputs; k++)
        csv_row(out, "input", g->vars[c->marginal[k].var].name, "share", c->marginal[k].share);
    for (size_t w = 0; w < c->n_pairs; w++) {
        const cov_pair *p = &c->pairs[c->worst[w]];
        size_t len = strlen(g->vars[p->a].name) + strlen(g->vars[p->b].name) + 4;
        char *nm = malloc(len);
        if (nm == NULL) continue;
        snprintf(nm, len, "%s x %s", g->vars[p->a].name, g->vars[p->b].name);
        csv_row(out, "pair", nm, "share", p->share);
        csv_row(out, "pair", nm, "empty_cells", (double)p->n_empty);
        free(nm);
    }
    for (size_t q = 0; q < c->n_gaps; q++) {
        char nm[32];
        snprintf(nm, sizeof nm, "gap %zu", q + 1);
        csv_row(out, "gap", nm, "distance", c->gap_dist[q]);
        for (size_t j = 0; j < c->n_numeric; j++) {
            const cov_var *v = &g->vars[c->numeric[j]];
            fprintf(out, "gap,%s,", nm);
            cov_emit_csv_field(out, v->name);
            fputc(',', out);
            cov_emit_csv_number(out, domain_value(v, c->gaps[q * c->n_numeric + j]));
            fputc('\n', out);
        }
    }
    for (size_t a = 0; a < c->n_inputs; a++)
        for (size_t b = a + 1; b < c->n_inputs; b++) {
            double v = c->dependence[a * c->n_inputs + b];
            if (!(v > c->opt.dependence_threshold)) continue;
            const cov_var *va = &g->vars[c->inputs[a]], *vb = &g->vars[c->inputs[b]];
            size_t len = strlen(va->name) + strlen(vb->name) + 4;
            char *nm = malloc(len);
            if (nm == NULL) continue;
            snprintf(nm, len, "%s ~ %s", va->name, vb->name);
            csv_row(out, "dependence", nm, is_numeric(va) && is_numeric(vb) ? "abs_r" : "cramer_v",
                    v);
            free(nm);
        }
    for (size_t k = 0; k < cl->n; k++) {
        const cov_support *s = &sp->items[k];
        char lab[512];
        cov_claim_label(g, &cl->items[k], lab, sizeof lab);
        csv_row(out, "claim", lab, "runs", (double)s->n);
        csv_row(out, "claim", lab, "distinct", (double)s->distinct);
        csv_row(out, "claim", lab, "spread", s->spread);
        csv_row(out, "claim", lab, "spread_resid", s->spread_resid);
        csv_row(out, "claim", lab, "overlap", s->overlap);
        csv_row(out, "claim", lab, "kish_ess", s->kish_ess);
        csv_row(out, "claim", lab, "runs_per_config", s->runs_per_config);
        csv_row(out, "claim", lab, "replicated", s->pure_error);
        csv_row(out, "claim", lab, "support_ok", s->ok);
        if (s->reason) csv_text_row(out, "claim", lab, "support_reason", s->reason);
    }
}

/* ---- JSON ------------------------------------------------------------------------------------ */

static void jnum(FILE *out, const char *key, double x)
{
    fprintf(out, "\"%s\": ", key);
    cov_emit_json_number(out, x);
}

static void print_json(const cov_graph *g, const cov_claims *cl, const cov_data *d,
                       const cov_coverage *c, const cov_supports *sp, FILE *out)
{
    const size_t bins = c->opt.bins;
    fprintf(out, "{\"schema_version\": 2, \"runs\": %zu, \"min_runs\": %zu, \"bins\": %zu,\n",
            d->n_runs, c->opt.min_runs, bins);
    fputs(" \"marginal\": {", out);
    jnum(out, "share", c->marginal_share);
    fputs(", \"inputs\": [", out);
    for (size_t k = 0; k < c->n_inputs; k++) {
        const cov_marginal *mg = &c->marginal[k];
        const cov_var *v = &g->vars[mg->var];
        fputs(k ? ",\n   {\"name\": " : "\n   {\"name\": ", out);
        cov_emit_json_string(out, v->name);
        fputs(", ", out);
        jnum(out, "share", mg->share);
        fputs(", \"bins\": [", out);
        for (size_t b = 0; b < mg->n_bins; b++) {
            char lab[96];
            bin_label(v, bins, b, lab, sizeof lab);
            fputs(b ? ", {\"bin\": " : "{\"bin\": ", out);
            cov_emit_json_string(out, lab);
            fprintf(out, ", \"runs\": %zu}", mg->count[b]);
        }
        fputs("]}", out);
    }
    fputs("]},\n \"pairwise\": {", out);
    jnum(out, "share", c->pairwise_share);
    fprintf(out, ", \"pairs\": %zu, \"worst\": [", c->n_pairs);
    int first = 1;
    for (size_t w = 0; w < c->n_pairs; w++) {
        const cov_pair *p = &c->pairs[c->worst[w]];
        if (p->share >= 1) break;
        fputs(first ? "\n   {\"a\": " : ",\n   {\"a\": ", out);
        first = 0;
        cov_emit_json_string(out, g->vars[p->a].name);
        fputs(", \"b\": ", out);
        cov_emit_json_string(out, g->vars[p->b].name);
        fputs(", ", out);
        jnum(out, "share", p->share);
        fputs(", \"empty_cells\": [", out);
        int f2 = 1;
        for (size_t i = 0; i < p->na; i++)
            for (size_t j = 0; j < p->nb; j++)
                if (p->count[i * p->nb + j] == 0) {
                    fprintf(out, "%s[%zu, %zu]", f2 ? "" : ", ", i, j);
                    f2 = 0;
                }
        fputs("]}", out);
    }
    fputs("]},\n \"threeway\": ", out);
    if (isfinite(c->threeway_share)) {
        fputs("{", out);
        jnum(out, "share", c->threeway_share);
        fprintf(out, ", \"triples\": %zu, \"sampled\": %s}", c->n_triples,
                c->threeway_sampled ? "true" : "false");
    } else {
        fputs("null", out);
    }
    fputs(",\n \"discrepancy\": {", out);
    jnum(out, "cd2", c->cd2);
    fputs(", ", out);
    jnum(out, "cd2_random", c->cd2_random);
    fprintf(out, ", \"subsampled\": %s, \"runs_used\": %zu, \"reading\": \"%s\"},\n ",
            c->cd_subsampled ? "true" : "false", c->cd_n, reading(c->cd2, c->cd2_random));
    jnum(out, "fill_distance", c->fill_distance);
    fprintf(out, ", \"probes\": %zu, \"fill_subsampled\": %s,\n \"gaps\": [", c->n_probes,
            c->gaps_subsampled ? "true" : "false");
    for (size_t q = 0; q < c->n_gaps; q++) {
        fputs(q ? ",\n   {" : "\n   {", out);
        jnum(out, "distance", c->gap_dist[q]);
        fputs(", \"at\": {", out);
        for (size_t j = 0; j < c->n_numeric; j++) {
            const cov_var *v = &g->vars[c->numeric[j]];
            if (j) fputs(", ", out);
            cov_emit_json_string(out, v->name);
            fputs(": ", out);
            cov_emit_json_number(out, domain_value(v, c->gaps[q * c->n_numeric + j]));
        }
        fputs("}}", out);
    }
    fputs("],\n \"dependence\": [", out);
    first = 1;
    for (size_t a = 0; a < c->n_inputs; a++)
        for (size_t b = a + 1; b < c->n_inputs; b++) {
            double v = c->dependence[a * c->n_inputs + b];
            if (!(v > c->opt.dependence_threshold)) continue;
            const cov_var *va = &g->vars[c->inputs[a]], *vb = &g->vars[c->inputs[b]];
            fputs(first ? "\n   {\"a\": " : ",\n   {\"a\": ", out);
            first = 0;
            cov_emit_json_string(out, va->name);
            fputs(", \"b\": ", out);
            cov_emit_json_string(out, vb->name);
            fprintf(out, ", \"measure\": \"%s\", ",
                    is_numeric(va) && is_numeric(vb) ? "abs_r" : "cramer_v");
            jnum(out, "value", v);
            fputs(", \"claims\": [", out);
            int f2 = 1;
            for (size_t k = 0; k < cl->n; k++) {
                if (!costs(&cl->items[k], c->inputs[a], c->inputs[b])) continue;
                fputs(f2 ? "{\"treatment\": " : ", {\"treatment\": ", out);
                f2 = 0;
                cov_emit_json_string(out, g->vars[cl->items[k].treatment].name);
                fputs(", \"outcome\": ", out);
                cov_emit_json_string(out, g->vars[cl->items[k].outcome].name);
                fputs(", ", out);
                jnum(out, "variance_inflation", vif_of(&sp->items[k]));
                fputs("}", out);
            }
            fputs("]}", out);
        }
    fprintf(out, "],\n \"data_errors\": {\"cells_outside_domain\": %zu, \"examples\": [",
            c->n_outside);
    for (size_t k = 0; k < d->n_issues; k++) {
        fputs(k ? ", {\"variable\": " : "{\"variable\": ", out);
        cov_emit_json_string(out, g->vars[d->issues[k].var].name);
        fprintf(out, ", \"row\": %zu, ", d->issues[k].row);
        jnum(out, "value", d->issues[k].value);
        fputs(", \"what\": ", out);
        cov_emit_json_string(out, d->issues[k].what);
        fputs("}", out);
    }
    fputs("]},\n \"support\": [", out);
    cov_record_src src = {g, cl, NULL, sp};
    for (size_t k = 0; k < cl->n; k++) {
        fputs(k ? ",\n   " : "\n   ", out);
        cov_record_json(out, &src, k, COV_RECORD_SUPPORT);
    }
    fputs(cl->n ? "\n ]}\n" : "]}\n", out);
}

/* Each --need-* gate: met, or missed with the share reached and the shortfall in points. */
static void print_gates(const cov_options *o, const cov_coverage *c, FILE *out_final)
{
    cov_reflow rf;
    FILE *out = cov_reflow_begin(&rf, out_final);
    const struct { const char *opt, *name; double need, got; } gate[] = {
        {"--need-marginal", "marginal", o->need_marginal, c->marginal_share},
        {"--need-pairwise", "2-way", o->need_pairwise, c->pairwise_share},
        {"--need-threeway", "3-way", o->need_threeway, c->threeway_share},
    };
    int any = 0;
    for (size_t k = 0; k < sizeof gate / sizeof gate[0]; k++) {
        if (isnan(gate[k].need)) continue;
        if (!any) fputc('\n', out);
        any = 1;
        if (!isfinite(gate[k].got))
            fprintf(out, "gate %s %.1f%%: missed: %s coverage was not measured\n",
                    gate[k].opt, 100 * gate[k].need, gate[k].name);
        else if (gate[k].got >= gate[k].need)
            fprintf(out, "gate %s %.1f%%: met: %s coverage %.1f%%\n", gate[k].opt,
                    100 * gate[k].need, gate[k].name, 100 * gate[k].got);
        else
            fprintf(out, "gate %s %.1f%%: missed: %s coverage %.1f%%, %.1f points short\n",
                    gate[k].opt, 100 * gate[k].need, gate[k].name, 100 * gate[k].got,
                    100 * (gate[k].need - gate[k].got));
    }
    cov_reflow_end(&rf, out_final, o->width);
}

int cov_cmd_coverage(const cov_options *o, FILE *out, FILE *note, int *adequate, cov_error *err)
{
    cov_graph *g = NULL;
    cov_claims *cl = NULL;
    cov_archive *ar = NULL;
    cov_data *d = NULL;
    cov_coverage *c = NULL;
    cov_supports *sp = NULL;
    *adequate = 0;
    if (o->graph_path == NULL || o->archive_path == NULL)
        return cov_fail(err, COV_EINPUT, "", "coverage needs a graph file and an archive");
    int show = o->progress && note != NULL && !o->quiet;
    cov_coverage_options copt = o->coverage;
    if (!isnan(o->need_threeway) && copt.way == 0) copt.way = 3;   /* a gate needs the figure */
    int rc = cov_graph_parse_file(o->graph_path, &g, err);
    if (!rc) rc = cov_claims_derive(g, &cl, err);
    if (!rc) rc = cov_archive_open(o->archive_path, o->table, &ar, err);
    if (!rc) rc = cov_data_read_threads(ar, g, copt.threads, show ? cov_progress_note : NULL, note,
                                        &d, err);
    if (!rc && show) fprintf(note, "measuring coverage of %zu runs\n", d->n_runs);
    if (!rc) rc = cov_coverage_measure(g, d, &copt, &c, err);
    if (!rc && show) fprintf(note, "measuring the support of %zu claims\n", cl->n);
    if (!rc) rc = cov_support_measure(g, cl, d, &copt, &sp, err);
    if (rc) goto done;

    /* Only the user's thresholds gate this command; support problems are reported (the survey
     * combines them with power). */
    char gate[256];
    *adequate = !cov_coverage_gate_missed(o, c, gate, sizeof gate);
    if (o->quiet) goto done;
    switch (o->format) {
    case COV_FMT_JSON: print_json(g, cl, d, c, sp, out); break;
    case COV_FMT_CSV: print_csv(g, cl, d, c, sp, out); break;
    case COV_FMT_TABLE:
        if (print_table(o, g, cl, d, c, sp, out) != COV_OK) {
            rc = cov_fail(err, COV_ENOMEM, "", "out of memory while printing the coverage table");
            break;
        }
        print_gates(o, c, out);
        break;
    }
done:
    cov_supports_free(sp);
    cov_coverage_free(c);
    cov_data_free(d);
    cov_archive_close(ar);
    cov_claims_free(cl);
    cov_graph_free(g);
    return rc;
}
