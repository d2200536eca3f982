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

static void pad(FILE *f, const char *s, size_t width)
{
    fputs(s, f);
    for (size_t w = cov_text_width(s); w < width + 2; w++) fputc(' ', f);
}

static int print_table(const cov_graph *g, const cov_claims *cl, FILE *out)
{
    static const char *const head[5] = {"kind", "treatment", "outcome", "adjustment set",
                                        "effect of interest"};
    size_t width[5];
    for (int k = 0; k < 5; k++) width[k] = strlen(head[k]);
    char **sets = calloc(cl->n ? cl->n : 1, sizeof *sets);
    if (sets == NULL) return COV_ENOMEM;
    int rc = COV_ENOMEM;
    for (size_t i = 0; i < cl->n; i++) {
        const cov_claim *c = &cl->items[i];
        char eff[64];
        if (c->status == COV_TESTABLE && (sets[i] = set_text(g, c)) == NULL) goto fail;
        cov_report_effect_text(c, eff, sizeof eff);
        size_t w[5] = {cov_text_width(cov_claim_kind_word(c->kind)), cov_text_width(g->vars[c->treatment].name),
                       cov_text_width(g->vars[c->outcome].name), sets[i] ? cov_text_width(sets[i]) : 1,
                       cov_text_width(eff)};
        for (int k = 0; k < 5; k++)
            if (w[k] > width[k]) width[k] = w[k];
    }
    for (int k = 0; k < 5; k++) pad(out, head[k], width[k]);
    fputs("status\n", out);
    size_t n_untestable = 0, n_effect = 0;
    for (size_t i = 0; i < cl->n; i++) {
        const cov_claim *c = &cl->items[i];
        char eff[64];
        cov_report_effect_text(c, eff, sizeof eff);
        pad(out, cov_claim_kind_word(c->kind), width[0]);
        pad(out, g->vars[c->treatment].name, width[1]);
        pad(out, g->vars[c->outcome].name, width[2]);
        pad(out, sets[i] ? sets[i] : "-", width[3]);
        pad(out, eff, width[4]);
        if (c->status == COV_TESTABLE) {
            fputs("testable\n", out);
        } else {
            fprintf(out, "untestable: %s\n", c->reason ? c->reason : "");
            n_untestable++;
        }
        n_effect += c->kind == COV_CLAIM_EFFECT;
    }
    fprintf(out, "\n%zu claims (%zu effect, %zu absence), %zu untestable\n", cl->n, n_effect,
            cl->n - n_effect, n_untestable);
    rc = COV_OK;
fail:
    for (size_t i = 0; i < cl->n; i++) free(sets[i]);
    free(sets);
    return rc;
}

static void print_csv(const cov_graph *g, const cov_claims *cl, FILE *out)
{
    cov_record_src src = {g, cl, NULL, NULL};
    cov_record_csv_header(out, COV_RECORD_CLAIM);
    for (size_t i = 0; i < cl->n; i++) cov_record_csv_row(out, &src, i, COV_RECORD_CLAIM);
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
    case COV_FMT_TABLE: rc = print_table(g, cl, out); break;
    }
    if (rc == COV_ENOMEM) cov_fail(err, rc, "", "out of memory printing the claims");
fail:
    cov_claims_free(cl);
    cov_graph_free(g);
    return rc;
}
