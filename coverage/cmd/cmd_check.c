/* The `shoal check` command: read the archive against the graph and report what is missing or
 * outside the declared domains. See LICENSE. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "coverage/plan/plan.h"
#include "coverage/report/report.h"

static const char *role_word(cov_role r)
{
    return r == COV_INPUT ? "input" : r == COV_OUTPUT ? "output" : "hidden";
}

static const char *type_word(cov_type t)
{
    switch (t) {
    case COV_REAL: return "real";
    case COV_INTEGER: return "integer";
    case COV_BOOL: return "bool";
    case COV_LEVELS: return "levels";
    }
    return "?";
}

/* "real [2, 12]", "levels {a, b}", "bool" */
static void type_text(const cov_var *v, char *buf, size_t n)
{
    size_t at = (size_t)snprintf(buf, n, "%s", type_word(v->type));
    if ((v->type == COV_REAL || v->type == COV_INTEGER) && isfinite(v->lo) && isfinite(v->hi)) {
        snprintf(buf + at, n - at, " [%g, %g]", v->lo, v->hi);
    } else if (v->type == COV_LEVELS) {
        for (size_t k = 0; k < v->n_levels && at < n; k++)
            at += (size_t)snprintf(buf + at, n - at, "%s%s", k ? ", " : " {", v->levels[k]);
        if (at < n && v->n_levels > 0) snprintf(buf + at, n - at, "}");
    }
}

/* Runs of each batch present in the table (a user may have deleted some since the import). */
static size_t batch_runs(const cov_data *d, long long id)
{
    size_t n = 0;
    for (size_t i = 0; d->batch && i < d->n_runs; i++) n += d->batch[i] == id;
    return n;
}

/* Problems that make the check fail, counted for the verdict. */
typedef struct {
    size_t vars_outside;      /* inputs with values outside the domain */
    size_t vars_empty;        /* recorded variables with no value at all */
    size_t conflicts;         /* runs equal in inputs and seed but not in outputs */
} problems;

static problems count_problems(const cov_graph *g, const cov_data *d)
{
    problems p = {0, 0, d->n_conflicts};
    for (size_t v = 0; v < g->n_vars; v++) {
        if (g->vars[v].role == COV_HIDDEN) continue;
        if (d->n_outside[v] > 0) p.vars_outside++;
        if (d->n_missing[v] >= d->n_runs) p.vars_empty++;
    }
    return p;
}

static void print_table(const cov_graph *g, cov_archive *a,
                        const cov_data *d, const cov_batch *b, size_t nb, problems p, FILE *out)
{
    fprintf(out, "archive   %s (table %s%s)\n", cov_archive_path(a), cov_archive_table(a),
            cov_archive_owned(a) ? ", written by shoal import" : ", the user's own: read only");
    char runs[512];
    cov_runs_summary(d, runs, sizeof runs);
    fprintf(out, "runs      %zu", d->n_runs);
    if (d->batch) fprintf(out, " in %zu batch%s", d->n_batches, d->n_batches == 1 ? "" : "es");
    fprintf(out, "\nidentity  %s\n", runs);
    if (g->seed_name != NULL) fprintf(out, "seed      column %s\n", g->seed_name);
    if (g->n_ledger > 0) {
        fprintf(out, "kept      ");
        for (size_t i = 0; i < g->n_ledger; i++)
            fprintf(out, "%s%s%s", i ? ", " : "", g->ledger[i].name,
                    g->ledger[i].is_cost ? " (cost)" : "");
        fprintf(out, " (bookkeeping, not analysed)\n");
    }
    fprintf(out, "\n");

    int wname = 8, wtype = 4;
    char type[256];
    for (size_t v = 0; v < g->n_vars; v++) {
        if (g->vars[v].role == COV_HIDDEN) continue;
        int len = (int)strlen(g->vars[v].name);
        if (len > wname) wname = len;
        type_text(&g->vars[v], type, sizeof type);
        len = (int)strlen(type);
        if (len > wtype) wtype = len;
    }
    if (wname > 40) wname = 40;
    if (wtype > 40) wtype = 40;
    fprintf(out, "%-*s  %-6s  %-*s  %8s  %8s\n", wname, "variable", "role", wtype, "type",
            "missing", "outside");
    for (size_t v = 0; v < g->n_vars; v++) {
        const cov_var *var = &g->vars[v];
        if (var->role == COV_HIDDEN) continue;
        type_text(var, type, sizeof type);
        fprintf(out, "%-*s  %-6s  %-*s  %8zu  ", wname, var->name, role_word(var->role), wtype,
                type, d->n_missing[v]);
        if (var->role == COV_INPUT) fprintf(out, "%8zu\n", d->n_outside[v]);
        else fprintf(out, "%8s\n", "-");
    }
    size_t n_hidden = 0;
    for (size_t v = 0; v < g->n_vars; v++) n_hidden += g->vars[v].role == COV_HIDDEN;
    if (n_hidden > 0) {
        fprintf(out, "not recorded (hidden):");
        for (size_t v = 0; v < g->n_vars; v++)
            if (g->vars[v].role == COV_HIDDEN) fprintf(out, " %s", g->vars[v].name);
        fputc('\n', out);
    }
    if (d->n_issues > 0) {
        fprintf(out, "\nexamples of values set aside (stored as missing):\n");
        for (size_t i = 0; i < d->n_issues; i++) {
            const cov_data_issue *is = &d->issues[i];
            fprintf(out, "  %s, row %zu: %.10g, %s\n", g->vars[is->var].name, is->row, is->value,
                    is->what);
        }
    }
    if (nb > 0) {
        fprintf(out, "\n%5s  %-20s  %8s  %8s  %s\n", "batch", "imported (UTC)", "rows", "present",
                "source");
        for (size_t i = 0; i < nb; i++)
            fprintf(out, "%5lld  %-20s  %8lld  %8zu  %s\n", b[i].id, b[i].imported_at, b[i].rows,
                    batch_runs(d, b[i].id), b[i].source);
    }
    fputc('\n', out);
    char caution[768];
    if (cov_runs_caution(d, g, caution, sizeof caution)) fprintf(out, "caution: %s\n", caution);
    if (p.vars_outside == 0 && p.vars_empty == 0 && p.conflicts == 0) {
        fprintf(out, "check passed: every recorded variable has values and every input is inside "
                "its declared domain\n");
        return;
    }
    fprintf(out, "check failed:");
    if (p.vars_outside > 0)
        fprintf(out, " %zu input%s ha%s values outside the declared domain%s", p.vars_outside,
                p.vars_outside == 1 ? "" : "s", p.vars_outside == 1 ? "s" : "ve",
                p.vars_empty > 0 || p.conflicts > 0 ? ";" : "");
    if (p.vars_empty > 0)
        fprintf(out, " %zu recorded variable%s ha%s no values at all%s", p.vars_empty,
                p.vars_empty == 1 ? "" : "s", p.vars_empty == 1 ? "s" : "ve",
                p.conflicts > 0 ? ";" : "");
    if (p.conflicts > 0)
        fprintf(out, " %zu run%s disagree%s with another run of the same inputs and seed",
                p.conflicts, p.conflicts == 1 ? "" : "s", p.conflicts == 1 ? "s" : "");
    fputc('\n', out);
}

static void print_json(const cov_graph *g, cov_archive *a, const cov_data *d, const cov_batch *b,
                       size_t nb, problems p, FILE *out)
{
    fprintf(out, "{\n  \"schema_version\": 1,\n  \"archive\": ");
    cov_emit_json_string(out, cov_archive_path(a));
    fprintf(out, ",\n  \"table\": ");
    cov_emit_json_string(out, cov_archive_table(a));
    fprintf(out, ",\n  \"owned\": %s,\n  \"runs\": %zu,\n  \"adequate\": %s,\n",
            cov_archive_owned(a) ? "true" : "false", d->n_runs,
            p.vars_outside == 0 && p.vars_empty == 0 && p.conflicts == 0 ? "true" : "false");
    fprintf(out, "  \"run_identity\": ");
    cov_runs_json(out, d);
    fprintf(out, ",\n  \"seed_column\": ");
    if (g->seed_name != NULL) cov_emit_json_string(out, g->seed_name);
    else fprintf(out, "null");
    fprintf(out, ",\n");
    fprintf(out, "  \"variables\": [");
    int first = 1;
    for (size_t v = 0; v < g->n_vars; v++) {
        const cov_var *var = &g->vars[v];
        if (var->role == COV_HIDDEN) continue;
        fprintf(out, "%s\n    {\"name\": ", first ? "" : ",");
        first = 0;
        cov_emit_json_string(out, var->name);
        fprintf(out, ", \"role\": \"%s\", \"type\": \"%s\", ", role_word(var->role),
                type_word(var->type));
        if (var->type == COV_LEVELS) {
            fprintf(out, "\"levels\": [");
            for (size_t k = 0; k < var->n_levels; k++) {
                if (k) fprintf(out, ", ");
                cov_emit_json_string(out, var->levels[k]);
            }
            fprintf(out, "], ");
        } else if (var->role == COV_INPUT && isfinite(var->lo) && isfinite(var->hi)) {
            fprintf(out, "\"domain\": [");
            cov_emit_json_number(out, var->lo);
            fprintf(out, ", ");
            cov_emit_json_number(out, var->hi);
            fprintf(out, "], ");
        }
        fprintf(out, "\"missing\": %zu, ", d->n_missing[v]);
        if (var->role == COV_INPUT) fprintf(out, "\"outside\": %zu, ", d->n_outside[v]);
        fprintf(out, "\"examples\": [");
        int fe = 1;
        for (size_t i = 0; i < d->n_issues; i++) {
            if (d->issues[i].var != v) continue;
            fprintf(out, "%s{\"row\": %zu, \"value\": ", fe ? "" : ", ", d->issues[i].row);
            cov_emit_json_number(out, d->issues[i].value);
            fprintf(out, ", \"what\": ");
            cov_emit_json_string(out, d->issues[i].what);
            fputc('}', out);
            fe = 0;
        }
        fprintf(out, "]}");
    }
    fprintf(out, "\n  ],\n  \"batches\": [");
    for (size_t i = 0; i < nb; i++) {
        fprintf(out, "%s\n    {\"id\": %lld, \"imported_at\": ", i ? "," : "", b[i].id);
        cov_emit_json_string(out, b[i].imported_at);
        fprintf(out, ", \"source\": ");
        cov_emit_json_string(out, b[i].source);
        fprintf(out, ", \"rows\": %lld, \"present\": %zu}", b[i].rows, batch_runs(d, b[i].id));
    }
    fprintf(out, "%s]\n}\n", nb ? "\n  " : "");
}

static void print_csv(const cov_graph *g, const cov_data *d, FILE *out)
{
    fprintf(out, "variable,role,type,missing,outside\n");
    for (size_t v = 0; v < g->n_vars; v++) {
        const cov_var *var = &g->vars[v];
        if (var->role == COV_HIDDEN) continue;
        cov_emit_csv_field(out, var->name);
        fprintf(out, ",%s,%s,%zu,", role_word(var->role), type_word(var->type), d->n_missing[v]);
        if (var->role == COV_INPUT) fprintf(out, "%zu", d->n_outside[v]);
        fputc('\n', out);
    }
}

int cov_cmd_check(const cov_options *o, FILE *out, FILE *note, int *adequate, cov_error *err)
{
    cov_graph *g = NULL;
    cov_archive *a = NULL;
    cov_data *d = NULL;
    cov_batch *b = NULL;
    size_t nb = 0;
    *adequate = 0;
    if (o->graph_path == NULL || o->archive_path == NULL)
        return cov_fail(err, COV_EINPUT, "", "check needs a graph file and an archive");
    int rc = cov_graph_parse_file(o->graph_path, &g, err);
    if (rc) goto done;
    rc = cov_archive_open(o->archive_path, o->table, &a, err);
    if (rc) goto done;
    rc = cov_data_read(a, g, o->progress && note && !o->quiet ? cov_progress_note : NULL, note, &d,
                       err);
    if (rc) goto done;
    rc = cov_archive_batches(a, &b, &nb, err);
    if (rc) goto done;
    problems p = count_problems(g, d);
    *adequate = p.vars_outside == 0 && p.vars_empty == 0 && p.conflicts == 0;
    if (o->quiet) goto done;
    if (o->format == COV_FMT_JSON) print_json(g, a, d, b, nb, p, out);
    else if (o->format == COV_FMT_CSV) print_csv(g, d, out);
    else {
        cov_reflow rf;   /* long notes and names wrap to the terminal's width */
        FILE *w = cov_reflow_begin(&rf, out);
        print_table(g, a, d, b, nb, p, w);
        cov_reflow_end(&rf, out, o->width);
    }
done:
    cov_batches_free(b, nb);
    cov_data_free(d);
    cov_archive_close(a);
    cov_graph_free(g);
    return rc;
}
