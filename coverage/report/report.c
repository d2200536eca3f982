/* The survey report: what its formats share, summary.json, claims.csv and the report writer.
 * See LICENSE. */
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "coverage/report/report.h"

/* Cautions, in the report and the README: what the verdict does not say. */
const char *const cov_report_cautions[] = {
    "An adequate campaign can still be testing a wrong graph: the verdict says whether the runs "
    "could test each claim, not whether the claims are true.",
    "The figures assume roughly linear effects, runs that are independent of one another, and "
    "the noise model stated in the graph (or, where none is stated, the noise seen in the runs).",
    "Power and the runs needed are computed at the declared effect of interest, never at the "
    "effect the runs happen to show.",
    "The final judgement belongs to people who know the domain, above all where the model informs "
    "decisions about people.",
};
const size_t cov_report_n_cautions = sizeof cov_report_cautions / sizeof cov_report_cautions[0];

/* ---- small helpers shared by the formats ----------------------------------------------------- */

const char *cov_report_var(const cov_findings *f, size_t v) { return f->graph->vars[v].name; }

const cov_assessment *cov_report_assessment(const cov_findings *f, size_t i)
{
    return f->assess != NULL && i < f->assess->n ? &f->assess->items[i] : NULL;
}

static const cov_support *support(const cov_findings *f, size_t i)
{
    return f->support != NULL && i < f->support->n ? &f->support->items[i] : NULL;
}

cov_verdict cov_report_verdict(const cov_findings *f, size_t i)
{
    return cov_claim_verdict(&f->claims->items[i], cov_report_assessment(f, i));
}

const char *cov_report_reason(const cov_findings *f, size_t i)
{
    const char *why = cov_claim_verdict_reason(&f->claims->items[i], cov_report_assessment(f, i));
    const cov_support *s = support(f, i);
    if (why == NULL && s != NULL && !s->ok) why = s->reason;
    return why;
}

static double power_of(const cov_findings *f, size_t i)
{
    const cov_assessment *a = cov_report_assessment(f, i);
    return a != NULL ? a->power : NAN;
}

static int order_rank(cov_verdict v) { return v == COV_UNDERPOWERED ? 0 : v == COV_BLIND ? 1 : 2; }

void cov_report_order(const cov_findings *f, size_t *order)
{
    size_t n = f->claims->n;
    for (size_t i = 0; i < n; i++) order[i] = i;
    /* Insertion sort: stable, and claim lists are short. */
    for (size_t i = 1; i < n; i++) {
        size_t k = order[i], j = i;
        while (j > 0) {
            size_t p = order[j - 1];
            int rk = order_rank(cov_report_verdict(f, k));
            int rp = order_rank(cov_report_verdict(f, p));
            double wk = power_of(f, k), wp = power_of(f, p);
            if (isnan(wk)) wk = 2.0;
            if (isnan(wp)) wp = 2.0;
            if (rp < rk || (rp == rk && wp <= wk)) break;
            order[j] = p;
            j--;
        }
        order[j] = k;
    }
}

void cov_report_count_verdicts(const cov_findings *f, long long count[3])
{
    count[COV_AMPLE] = count[COV_UNDERPOWERED] = count[COV_BLIND] = 0;
    for (size_t i = 0; i < f->claims->n; i++) count[cov_report_verdict(f, i)]++;
}

const char *cov_report_kind(const cov_claim *c)
{
    return cov_claim_kind_word(c->kind);
}

/* The declared effect of interest: "+0.01", "0.25 sd", "|b| < 0.1 sd". */
void cov_report_effect_text(const cov_claim *c, char *buf, size_t size)
{
    char unit[64] = "";
    /* The amount as written: `sd`, then `per STEP` or `over range` (issue 10's forms). */
    snprintf(unit, sizeof unit, "%s", c->effect.unit == COV_UNIT_SD ? " sd" : "");
    if (c->effect.per == COV_PER_STEP)
        snprintf(unit + strlen(unit), sizeof unit - strlen(unit), " per %g", c->effect.step);
    else if (c->effect.per == COV_PER_RANGE)
        snprintf(unit + strlen(unit), sizeof unit - strlen(unit), " over range");
    if (c->shape == COV_SHAPE_TURNING)
        snprintf(unit + strlen(unit), sizeof unit - strlen(unit), ", turning");
    if (c->kind == COV_CLAIM_ABSENCE)
        snprintf(buf, size, "|b| < %g%s", c->effect.value, unit);
    else if (c->sign != 0)
        snprintf(buf, size, "%c%g%s", c->sign > 0 ? '+' : '-', c->effect.value, unit);
    else
        snprintf(buf, size, "%g%s", c->effect.value, unit);
}

void cov_report_num_text(double x, const char *fmt, char *buf, size_t size)
{
    if (isnan(x)) snprintf(buf, size, "-");
    else if (isinf(x)) snprintf(buf, size, "unreachable");
    else snprintf(buf, size, fmt, x);
}

void cov_report_share_text(double x, char *buf, size_t size)
{
    if (isfinite(x)) snprintf(buf, size, "%.1f%%", 100.0 * x);
    else snprintf(buf, size, "not computed");
}

static const char *store_word(cov_history_store s)
{
    return s == COV_HISTORY_ARCHIVE ? "archive" : s == COV_HISTORY_SIDE ? "side file" : "none";
}

/* ---- summary.json ----------------------------------------------------------------------------- */

static void json_round(FILE *out, const cov_snapshot *r)
{
    fputs("{\"at\": ", out);
    cov_emit_json_string(out, r->at);
    fprintf(out, ", \"runs\": %lld, \"batches\": %lld, \"ample\": %lld, \"underpowered\": %lld, "
                 "\"untestable\": %lld, \"marginal_share\": ", r->n_runs, r->n_batches, r->n_ample,
            r->n_underpowered, r->n_blind);
    cov_emit_json_number(out, r->marginal_share);
    cov_emit_json_num_field(out, "pairwise_share", r->pairwise_share);
    cov_emit_json_num_field(out, "threeway_share", r->threeway_share);
    fputc('}', out);
}

static cov_record_src record_src(const cov_findings *f)
{
    return (cov_record_src){f->graph, f->claims, f->assess, f->support};
}

static void json_coverage(FILE *out, const cov_findings *f)
{
    const cov_coverage *cv = f->coverage;
    const struct { const char *key; double x; } fig[] = {
        {"marginal_share", cv->marginal_share}, {"pairwise_share", cv->pairwise_share},
        {"threeway_share", cv->threeway_share}, {"cd2", cv->cd2}, {"cd2_random", cv->cd2_random},
        {"fill_distance", cv->fill_distance},
    };
    fputs("  \"coverage\": {", out);
    for (size_t k = 0; k < sizeof fig / sizeof fig[0]; k++) {
        fprintf(out, "%s\"%s\": ", k ? ", " : "", fig[k].key);
        cov_emit_json_number(out, fig[k].x);
    }
    fprintf(out, ", \"min_runs\": %zu, \"bins\": %zu, \"cd_subsampled\": %s, \"inputs_outside\": "
                 "%zu,\n    \"marginal\": [", cv->opt.min_runs, cv->opt.bins,
            cv->cd_subsampled ? "true" : "false", cv->n_outside);
    for (size_t m = 0; m < cv->n_inputs; m++) {
        const cov_marginal *mg = &cv->marginal[m];
        fprintf(out, "%s\n      {\"input\": ", m ? "," : "");
        cov_emit_json_string(out, cov_report_var(f, mg->var));
        cov_emit_json_num_field(out, "share", mg->share);
        fputs(", \"counts\": [", out);
        for (size_t b = 0; b < mg->n_bins; b++) fprintf(out, "%s%zu", b ? ", " : "", mg->count[b]);
        fputs("]}", out);
    }
    fputs("],\n    \"pairs\": [", out);
    for (size_t k = 0; k < cv->n_pairs; k++) {
        const cov_pair *p = &cv->pairs[cv->worst ? cv->worst[k] : k];
        fprintf(out, "%s\n      {\"a\": ", k ? "," : "");
        cov_emit_json_string(out, cov_report_var(f, p->a));
        fputs(", \"b\": ", out);
        cov_emit_json_string(out, cov_report_var(f, p->b));
        cov_emit_json_num_field(out, "share", p->share);
        fprintf(out, ", \"cells\": %zu, \"empty_cells\": %zu}", p->na * p->nb, p->n_empty);
    }
    fputs("],\n    \"dependence\": [", out);
    size_t shown = 0;
    for (size_t i = 0; cv->dependence && i < cv->n_inputs; i++)
        for (size_t j = i + 1; j < cv->n_inputs; j++) {
            double dep = cv->dependence[i * cv->n_inputs + j];
            fprintf(out, "%s\n      {\"a\": ", shown++ ? "," : "");
            cov_emit_json_string(out, cov_report_var(f, cv->inputs[i]));
            fputs(", \"b\": ", out);
            cov_emit_json_string(out, cov_report_var(f, cv->inputs[j]));
            cov_emit_json_num_field(out, "strength", dep);
            fprintf(out, ", \"flagged\": %s}",
                    isfinite(dep) && dep > cv->opt.dependence_threshold ? "true" : "false");
        }
    fputs("],\n    \"gaps\": [", out);
    for (size_t k = 0; k < cv->n_gaps; k++) {
        fprintf(out, "%s\n      {\"distance\": ", k ? "," : "");
        cov_emit_json_number(out, cv->gap_dist[k]);
        fputs(", \"at\": {", out);
        for (size_t d = 0; d < cv->n_numeric; d++) {
            if (d) fputs(", ", out);
            cov_emit_json_string(out, cov_report_var(f, cv->numeric[d]));
            fputs(": ", out);
            cov_emit_json_number(out, cv->gaps[k * cv->n_numeric + d]);
        }
        fputs("}}", out);
    }
    fputs("]},\n", out);
}

/* The audit trail: what a reviewer needs to repeat the survey and to know it saw the same inputs. */
static void json_audit(FILE *out, const cov_findings *f, const cov_report_info *info)
{
    const cov_options *o = f->opt;
    fputs("  \"audit\": {\"version\": ", out);
    cov_emit_json_string(out, o->version ? o->version : "");
    fputs(", \"command_line\": ", out);
    char *line = NULL;
    size_t len = 0;
    FILE *m = open_memstream(&line, &len);
    if (m != NULL) {
        cov_audit_command_line(o, m);
        if (fclose(m) != 0) {
            free(line);
            line = NULL;
        }
    }
    cov_emit_json_string(out, line ? line : "");
    free(line);
    fputs(", \"argv\": [", out);
    for (int i = 0; o->argv != NULL && i < o->argc; i++) {
        if (i) fputs(", ", out);
        cov_emit_json_string(out, o->argv[i]);
    }
    fputs("],\n    \"options\": [", out);
    cov_audit_option opts[40];
    size_t n = cov_audit_options(o, opts, sizeof opts / sizeof opts[0]);
    for (size_t k = 0; k < n; k++) {
        fputs(k ? ",\n      {\"name\": " : "\n      {\"name\": ", out);
        cov_emit_json_string(out, opts[k].name);
        fputs(", \"value\": ", out);
        cov_emit_json_string(out, opts[k].value);
        fprintf(out, ", \"default\": %s}", opts[k].given ? "false" : "true");
    }
    fprintf(out, "],\n    \"seed\": %lu, \"archive\": ", o->coverage.seed);
    cov_emit_json_string(out, o->archive_path ? o->archive_path : "");
    fprintf(out, ", \"table\": ");
    cov_emit_json_string(out, o->table ? o->table : COV_DEFAULT_TABLE);
    fprintf(out, ", \"rows\": %zu, \"runs_digest\": ", f->data ? f->data->n_runs : 0);
    cov_emit_json_string(out, info->runs_digest ? info->runs_digest : "");
    fputs(", \"graph\": ", out);
    cov_emit_json_string(out, f->graph->path);
    fputs(", \"graph_digest\": ", out);
    cov_emit_json_string(out, info->graph_digest ? info->graph_digest : "");
    fputs(", \"digest_method\": \"SHA-256 (FIPS 180-4)\", \"time\": ", out);
    cov_emit_json_string(out, info->generated ? info->generated : "");
    fputs("},\n", out);
}

void cov_report_summary_json(const cov_findings *f, const cov_report_info *info, FILE *out)
{
    const cov_options *o = f->opt;
    long long count[3];
    cov_report_count_verdicts(f, count);
    fputs("{\n  \"schema_version\": 3,\n  \"graph\": ", out);
    cov_emit_json_string(out, f->graph->path);
    fputs(",\n  \"archive\": ", out);
    cov_emit_json_string(out, o && o->archive_path ? o->archive_path : "");
    fputs(",\n  \"generated\": ", out);
    cov_emit_json_string(out, info->generated ? info->generated : "");
    fprintf(out, ",\n  \"adequate\": %s,\n  \"gate_note\": ", info->adequate ? "true" : "false");
    if (info->gate_note) cov_emit_json_string(out, info->gate_note);
    else fputs("null", out);
    fprintf(out, ",\n  \"runs\": %zu, \"batches\": %zu,\n", f->data ? f->data->n_runs : 0,
            f->data ? f->data->n_batches : 0);
    if (f->data != NULL) {
        fputs("  \"run_identity\": ", out);
        cov_runs_json(out, f->data);
        fputs(",\n", out);
    }
    if (f->assess != NULL) {
        fputs("  \"seed_blocks\": ", out);
        cov_seed_outcomes_json(out, f->graph, f->claims, f->assess);
        fputs(",\n", out);
    }
    fprintf(out, "  \"counts\": {\"claims\": %zu, \"ample\": %lld, \"underpowered\": %lld, "
                 "\"untestable\": %lld},\n", f->claims->n, count[COV_AMPLE], count[COV_UNDERPOWERED],
            count[COV_BLIND]);
    if (o != NULL) {
        fputs("  \"options\": {\"alpha\": ", out);
        cov_emit_json_number(out, o->power.alpha);
        cov_emit_json_num_field(out, "target_power", o->power.target);
        fprintf(out, ", \"family\": \"%s\", \"one_sided\": %s, \"min_runs\": %zu, \"bins\": %zu, "
                     "\"way\": %d,\n    \"need_marginal\": ", o->power.bonferroni ? "bonferroni" : "none",
                o->power.one_sided ? "true" : "false", o->coverage.min_runs, o->coverage.bins,
                o->coverage.way);
        cov_emit_json_number(out, o->need_marginal);
        cov_emit_json_num_field(out, "need_pairwise", o->need_pairwise);
        cov_emit_json_num_field(out, "need_threeway", o->need_threeway);
        fputs("},\n", out);
    }
    if (o != NULL) json_audit(out, f, info);
    if (f->coverage != NULL) json_coverage(out, f);
    fputs("  \"plots\": {\"made\": ", out);
    fputs(info->plot_note ? "false, \"note\": " : "true, \"note\": null", out);
    if (info->plot_note) cov_emit_json_string(out, info->plot_note);
    fprintf(out, "},\n  \"history\": {\"store\": \"%s\", \"path\": ", store_word(info->store));
    if (info->history_path) cov_emit_json_string(out, info->history_path);
    else fputs("null", out);
    fputs(", \"snapshots\": [", out);
    for (size_t r = 0; r < info->n_snapshots; r++) {
        fputs(r ? ",\n    " : "\n    ", out);
        json_round(out, &info->snapshots[r]);
    }
    fputs("]},\n  \"data\": {\"missing\": {", out);
    size_t shown = 0;
    for (size_t v = 0; f->data && v < f->data->n_vars; v++) {
        if (f->graph->vars[v].role == COV_HIDDEN) continue;
        fputs(shown++ ? ", " : "", out);
        cov_emit_json_string(out, cov_report_var(f, v));
        fprintf(out, ": %zu", f->data->n_missing ? f->data->n_missing[v] : 0);
    }
    fputs("}},\n  \"cautions\": [", out);
    for (size_t k = 0; k < cov_report_n_cautions; k++) {
        fputs(k ? ",\n    " : "\n    ", out);
        cov_emit_json_string(out, cov_report_cautions[k]);
    }
    fputs("],\n  \"next_steps\": [", out);
    for (size_t k = 0; info->next != NULL && k < info->next->n; k++) {
        fputs(k ? ",\n    " : "\n    ", out);
        cov_emit_json_string(out, info->next->lines[k]);
    }
    fputs("],\n  \"caveats\": [", out);
    for (size_t k = 0; info->cautions != NULL && k < info->cautions->n; k++) {
        const cov_caution *c = &info->cautions->items[k];
        fprintf(out, "%s{\"kind\": \"%s\", \"claim\": ", k ? ",\n    " : "\n    ", c->kind->key);
        if (c->claim >= 0) fprintf(out, "%ld", c->claim + 1);
        else fputs("null", out);
        fputs(", \"text\": ", out);
        cov_emit_json_string(out, c->text);
        fputc('}', out);
    }
    cov_record_src src = record_src(f);
    fputs("],\n  \"claims\": [\n", out);
    for (size_t i = 0; i < f->claims->n; i++) {
        fputs("    ", out);
        cov_record_json(out, &src, i, COV_RECORD_ASSESS);
        fputs(i + 1 < f->claims->n ? ",\n" : "\n", out);
    }
    fputs("  ]", out);
    if (f->support != NULL) {
        fputs(",\n  \"support\": [\n", out);
        for (size_t i = 0; i < f->claims->n; i++) {
            fputs("    ", out);
            cov_record_json(out, &src, i, COV_RECORD_SUPPORT);
            fputs(i + 1 < f->claims->n ? ",\n" : "\n", out);
        }
        fputs("  ]", out);
    }
    fputs("\n}\n", out);
}

/* ---- claims.csv ------------------------------------------------------------------------------ */

void cov_report_claims_csv(const cov_findings *f, FILE *out)
{
    cov_record_src src = record_src(f);
    cov_record_csv_header(out, COV_RECORD_ASSESS);
    cov_record_csv_rows(out, &src, 0, f->claims->n, COV_RECORD_ASSESS);
}

/* ---- the report directory -------------------------------------------------------------------- */

/* Open dir/name for writing. */
static FILE *open_in(const char *dir, const char *name, cov_error *err, int *rc)
{
    char path[4096];
    if (snprintf(path, sizeof path, "%s/%s", dir, name) >= (int)sizeof path) {
        *rc = cov_fail(err, COV_EIO, "", "report path too long: %s/%s", dir, name);
        return NULL;
    }
    FILE *f = fopen(path, "w");
    /* dir is the temporary directory beside the report: the message names the file and why. */
    if (f == NULL) *rc = cov_fail(err, COV_EIO, "", "cannot write the report's %s: %s%s", name,
                                  strerror(errno), errno == ENOSPC ? " (the disk is full)" : "");
    return f;
}

static int close_checked(FILE *f, const char *dir, const char *name, cov_error *err)
{
    (void)dir;
    int bad = ferror(f);
    errno = 0;
    int closed = fflush(f) == 0;
    int e = errno;
    if (fclose(f) != 0 && e == 0) e = errno;
    if (!closed || bad)
        return cov_fail(err, COV_EIO, "", "could not finish writing the report's %s: %s%s", name,
                        e ? strerror(e) : "write error", e == ENOSPC || bad ? " (is the disk "
                        "full?)" : "");
    return COV_OK;
}

int cov_report_write(const cov_findings *f, const cov_report_info *info, const char *dir,
                     cov_error *err)
{
    int rc = COV_OK;
    FILE *out;
    if ((out = open_in(dir, "summary.json", err, &rc)) == NULL) return rc;
    cov_report_summary_json(f, info, out);
    if ((rc = close_checked(out, dir, "summary.json", err)) != COV_OK) return rc;

    if ((out = open_in(dir, "claims.csv", err, &rc)) == NULL) return rc;
    cov_report_claims_csv(f, out);
    if ((rc = close_checked(out, dir, "claims.csv", err)) != COV_OK) return rc;

    /* The test seam (cov_options.fault_at): fail halfway through, so that tests can check that no
     * half-written report is left behind. */
    if (f->opt != NULL && f->opt->fault_at != NULL && f->opt->fault_at("report"))
        return cov_fail(err, COV_EIO, "", "injected failure while writing the report");

    if ((out = open_in(dir, "report.md", err, &rc)) == NULL) return rc;
    rc = cov_report_markdown(f, info, out);
    if (rc == COV_ENOMEM) cov_fail(err, rc, "", "out of memory writing report.md");
    int rc2 = close_checked(out, dir, "report.md", err);
    if (rc != COV_OK || rc2 != COV_OK) return rc != COV_OK ? rc : rc2;

    if ((out = open_in(dir, "index.html", err, &rc)) == NULL) return rc;
    rc = cov_report_html(f, info, dir, out, err);
    rc2 = close_checked(out, dir, "index.html", err);
    return rc != COV_OK ? rc : rc2;
}
