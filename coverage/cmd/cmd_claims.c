/* The `shoal claims` command: list the claims a graph implies as a table, CSV or JSON.
 * See LICENSE. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "coverage/plan/plan.h"
#include "coverage/report/report.h"

/* The adjustment set for the table: "[a, b]", or "[]" when nothing needs adjusting (the brackets
 * of the claim notation, base.h). */
static char *set_text(const cov_graph *g, const cov_claim *c)
{
    size_t len = 3;
    for (size_t i = 0; i < c->n_cond; i++) len += strlen(g->vars[c->cond[i]].name) + 2;
    char *s = malloc(len);
    if (s == NULL) return NULL;
    strcpy(s, "[");
    for (size_t i = 0; i < c->n_cond; i++) {
        if (i) strcat(s, ", ");
        strcat(s, g->vars[c->cond[i]].name);
    }
    strcat(s, "]");
    return s;
}

/* The table fits the terminal: when a row would be too wide, the adjustment set and the reason
 * follow the row on lines of their own. */
static int print_table(const cov_graph *g, const cov_claims *cl, size_t width, FILE *out)
{
    static const char *const head[7] = {"kind", "treatment", "outcome", "effect of interest",
                                        "status", "adjustment set", "why untestable"};
    cov_table *t = cov_table_new(7, head, "lllllll", ".....dd");
    if (t == NULL) return COV_ENOMEM;
    int rc = COV_OK;
    size_t n_untestable = 0, n_effect = 0;
    for (size_t i = 0; i < cl->n && rc == COV_OK; i++) {
        const cov_claim *c = &cl->items[i];
        char eff[64];
        cov_report_effect_text(c, eff, sizeof eff);
        char *set = c->status == COV_TESTABLE ? set_text(g, c) : NULL;
        if (c->status == COV_TESTABLE && set == NULL) {
            rc = COV_ENOMEM;
            break;
        }
        const char *row[7] = {cov_claim_kind_word(c->kind), g->vars[c->treatment].name,
                              g->vars[c->outcome].name, eff, c->status == COV_TESTABLE ? "testable" : "untestable",
                              set ? set : "-", c->reason ? c->reason : "-"};
        rc = cov_table_add(t, row);
        free(set);
        n_untestable += c->status != COV_TESTABLE;
        n_effect += c->kind == COV_CLAIM_EFFECT;
    }
    if (rc == COV_OK) rc = cov_table_print(t, out, width);
    if (rc == COV_OK) {
        fprintf(out, "\n%zu claims (%zu effect, %zu absence), %zu untestable\n", cl->n, n_effect,
                cl->n - n_effect, n_untestable);
    }
    cov_table_free(t);
    return rc;
}

static void print_csv(const cov_graph *g, const cov_claims *cl, FILE *out)
{
    cov_record_src src = {g, cl, NULL, NULL};
    cov_record_csv_header(out, COV_RECORD_CLAIM);
    cov_record_csv_rows(out, &src, 0, cl->n, COV_RECORD_CLAIM);
}

static void print_json(const cov_graph *g, const cov_claims *cl, const char *path, FILE *out)
{
    fputs("{\"schema_version\": 3, \"graph\": ", out);
    cov_emit_json_string(out, path);
    fputs(", \"claims\": [", out);
    cov_record_src src = {g, cl, NULL, NULL};
    for (size_t i = 0; i < cl->n; i++) {
        fputs(i ? ",\n  " : "\n  ", out);
        cov_record_json(out, &src, i, COV_RECORD_CLAIM);
    }
    fputs(cl->n ? "\n]}\n" : "]}\n", out);
}

int cov_cmd_claims(const cov_options *o, FILE *out, FILE *note, int *adequate, cov_error *err)
{
    (void)note;
    cov_graph *g = NULL;
    cov_claims *cl = NULL;
    *adequate = 1;   /* listing claims has no gate */
    int rc = cov_graph_parse_file(o->graph_path, &g, err);
    if (!rc) rc = cov_claims_derive(g, &cl, err);
    if (rc) goto fail;
    if (o->quiet) goto fail;
    switch (o->format) {
    case COV_FMT_JSON: print_json(g, cl, o->graph_path, out); break;
    case COV_FMT_CSV: print_csv(g, cl, out); break;
    case COV_FMT_TABLE: rc = print_table(g, cl, o->width, out); break;
    }
    if (rc == COV_ENOMEM) cov_fail(err, rc, "", "out of memory printing the claims");
fail:
    cov_claims_free(cl);
    cov_graph_free(g);
    return rc;
}
