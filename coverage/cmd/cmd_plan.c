/* The `shoal plan` command and the plan file: writing it atomically, reading it back.
 * See LICENSE. */
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <sys/stat.h>
#include <unistd.h>

#include "coverage/plan/plan.h"
#include "coverage/report/report.h"

#define DEFAULT_PLAN_PATH "next-runs.csv"

/* The seed column's name: `seed`, lengthened with underscores until no input has it (ignoring
 * ASCII case, as SQLite column names do). */
static void seed_name(const cov_graph *g, char *buf, size_t size)
{
    snprintf(buf, size, "seed");
    for (;;) {
        int clash = 0;
        for (size_t v = 0; v < g->n_vars; v++)
            if (g->vars[v].role == COV_INPUT && strcasecmp(g->vars[v].name, buf) == 0) clash = 1;
        size_t len = strlen(buf);
        if (!clash || len + 2 > size) return;
        buf[len] = '_';
        buf[len + 1] = '\0';
    }
}

/* One input value as the plan file writes it. Reals print with 10 significant digits unless that
 * rounding would leave the domain, then with 17 (exact). */
static void write_value(FILE *f, const cov_var *v, double x)
{
    char buf[64];
    switch (v->type) {
    case COV_LEVELS: cov_emit_csv_field(f, v->levels[(size_t)x]); return;
    case COV_BOOL: fputs(x != 0.0 ? "1" : "0", f); return;
    case COV_INTEGER: fprintf(f, "%.0f", x); return;
    default: break;
    }
    snprintf(buf, sizeof buf, "%.10g", x);
    double back = strtod(buf, NULL);
    if (back < v->lo || back > v->hi) snprintf(buf, sizeof buf, "%.17g", x);
    fputs(buf, f);
}

int cov_plan_write_csv(const cov_graph *g, const cov_plan *p, const char *path, cov_error *err)
{
    size_t len = strlen(path);
    char *tmp = malloc(len + 16);
    if (tmp == NULL) return cov_fail(err, COV_ENOMEM, "", "out of memory");
    snprintf(tmp, len + 16, "%s.tmp.XXXXXX", path);
    int fd = mkstemp(tmp);
    if (fd < 0) {
        int e = errno;
        free(tmp);
        return cov_fail(err, COV_EIO, path, "cannot create a temporary file beside it: %s",
                        strerror(e));
    }
    /* mkstemp makes the file private; the plan gets the mode of the file it replaces, or the
     * usual mode under the umask. */
    struct stat sb;
    mode_t mode = stat(path, &sb) == 0 ? (sb.st_mode & 07777) : cov_new_file_mode();
    FILE *f = fchmod(fd, mode) == 0 ? fdopen(fd, "w") : NULL;
    if (f == NULL) {
        close(fd);
        unlink(tmp);
        free(tmp);
        return cov_fail(err, COV_EIO, path, "cannot write: %s", strerror(errno));
    }
    char sname[64];
    seed_name(g, sname, sizeof sname);
    int first = 1;
    for (size_t v = 0; v < g->n_vars; v++) {
        if (g->vars[v].role != COV_INPUT) continue;
        if (!first) fputc(',', f);
        cov_emit_csv_field(f, g->vars[v].name);
        first = 0;
    }
    fprintf(f, "%s%s\n", first ? "" : ",", sname);
    for (size_t i = 0; i < p->n_configs; i++)
        for (int r = 0; r < p->replicates; r++) {
            const double *row = p->rows + i * p->n_vars;
            for (size_t v = 0; v < g->n_vars; v++) {
                if (g->vars[v].role != COV_INPUT) continue;
                write_value(f, &g->vars[v], row[v]);
                fputc(',', f);
            }
            fprintf(f, "%lu\n", p->seeds[i * (size_t)p->replicates + (size_t)r]);
        }
    int bad = ferror(f) != 0;
    bad |= fflush(f) != 0;
    bad |= fsync(fileno(f)) != 0;
    bad |= fclose(f) != 0;
    if (bad || rename(tmp, path) != 0) {
        int e = errno;
        unlink(tmp);
        free(tmp);
        return cov_fail(err, COV_EIO, path, "cannot write the plan: %s", strerror(e));
    }
    free(tmp);
    return COV_OK;
}

/* ---- reading a plan file ----------------------------------------------------------------------- */

static int parse_cell(const cov_var *v, const char *text, double *out)
{
    if (v->type == COV_LEVELS) {
        for (size_t k = 0; k < v->n_levels; k++)
            if (strcmp(v->levels[k], text) == 0) {
                *out = (double)k;
                return 0;
            }
        return -1;
    }
    if (v->type == COV_BOOL) {
        if (strcmp(text, "0") == 0 || strcasecmp(text, "false") == 0) *out = 0.0;
        else if (strcmp(text, "1") == 0 || strcasecmp(text, "true") == 0) *out = 1.0;
        else return -1;
        return 0;
    }
    char *end = NULL;
    errno = 0;
    double x = strtod(text, &end);
    if (errno != 0 || end == text || *end != '\0' || !isfinite(x)) return -1;
    if (x < v->lo || x > v->hi) return -1;
    if (v->type == COV_INTEGER && x != floor(x)) return -1;
    *out = x;
    return 0;
}

static const char *expected_of(const cov_var *v, char *buf, size_t size)
{
    switch (v->type) {
    case COV_LEVELS: snprintf(buf, size, "one of its %zu declared levels", v->n_levels); break;
    case COV_BOOL: snprintf(buf, size, "0, 1, true or false"); break;
    case COV_INTEGER: snprintf(buf, size, "a whole number in [%g, %g]", v->lo, v->hi); break;
    default: snprintf(buf, size, "a number in [%g, %g]", v->lo, v->hi); break;
    }
    return buf;
}

int cov_plan_read_csv(const cov_graph *g, const char *path, double **rows, size_t *n_rows,
                      cov_error *err)
{
    *rows = NULL;
    *n_rows = 0;
    cov_csv *csv = NULL;
    int rc = cov_csv_open(path, &csv, err);
    if (rc != COV_OK) return rc;
    size_t nf = cov_csv_n_fields(csv), cap = 0, n = 0;
    long *var_of = malloc((nf + 1) * sizeof *var_of);
    double *out = NULL;
    char where[600], sname[64];
    seed_name(g, sname, sizeof sname);
    if (var_of == NULL) goto nomem;
    for (size_t i = 0; i < nf; i++) {
        const char *h = cov_csv_header(csv, i);
        long v = cov_graph_find(g, h);
        var_of[i] = -1;
        if (v >= 0 && g->vars[v].role == COV_INPUT) var_of[i] = v;
        else if (strcasecmp(h, sname) == 0 || strcasecmp(h, "seed") == 0) var_of[i] = -1;
        else {
            snprintf(where, sizeof where, "%s: row 1, column %zu", path, i + 1);
            rc = cov_fail(err, COV_EINPUT, where,
                          "column '%s' is not an input of %s; expected input names and a seed "
                          "column",
                          h, g->path != NULL ? g->path : "the graph");
            goto fail;
        }
    }
    for (;;) {
        int got = 0;
        if ((rc = cov_csv_next(csv, &got, err)) != COV_OK) goto fail;
        if (!got) break;
        if (n == cap) {
            size_t nc = cap ? 2 * cap : 64;
            double *nr = realloc(out, nc * g->n_vars * sizeof *nr);
            if (nr == NULL) goto nomem;
            out = nr;
            cap = nc;
        }
        double *row = out + n * g->n_vars;
        for (size_t v = 0; v < g->n_vars; v++) row[v] = NAN;
        for (size_t i = 0; i < nf; i++) {
            if (var_of[i] < 0) continue;
            const cov_var *var = &g->vars[var_of[i]];
            const char *text = cov_csv_field(csv, i, NULL);
            if (parse_cell(var, text, &row[var_of[i]]) != 0) {
                char exp[128];
                snprintf(where, sizeof where, "%s: row %ld, column %zu", path, cov_csv_line(csv),
                         i + 1);
                rc = cov_fail(err, COV_EINPUT, where, "%s is '%s'; expected %s", var->name, text,
                              expected_of(var, exp, sizeof exp));
                goto fail;
            }
        }
        n++;
    }
    free(var_of);
    cov_csv_close(csv);
    *rows = out;
    *n_rows = n;
    return COV_OK;
nomem:
    rc = cov_fail(err, COV_ENOMEM, "", "out of memory reading %s", path);
fail:
    free(var_of);
    free(out);
    cov_csv_close(csv);
    return rc;
}

/* ---- the command ------------------------------------------------------------------------------- */

static void claim_label(const cov_graph *g, const cov_claim *cl, char *buf, size_t size)
{
    snprintf(buf, size, "%s %s %s", g->vars[cl->treatment].name, cov_claim_arrow(cl->kind),
             g->vars[cl->outcome].name);
}

static const char *mode_word(const cov_plan_claim *it);

static void print_prob(FILE *out, double x)
{
    if (isnan(x)) fprintf(out, " %10s", "-");
    else fprintf(out, " %10.3f", x);
}

static void print_report(FILE *out, const cov_options *o, const cov_graph *g, const cov_claims *c,
                         const cov_plan *p, size_t n_testable, const char *path)
{
    size_t runs = p->n_configs * (size_t)p->replicates;
    fprintf(out, "planned %zu configuration%s x %d seed%s = %zu run%s, written to %s\n",
            p->n_configs, p->n_configs == 1 ? "" : "s", p->replicates,
            p->replicates == 1 ? "" : "s", runs, runs == 1 ? "" : "s", path);
    fprintf(out, "target power %.2f at family alpha %g (%s over %zu testable claims)\n\n",
            o->power.target, o->power.alpha, o->power.bonferroni ? "Bonferroni" : "no correction",
            n_testable);
    size_t width = 5;
    char label[512];
    for (size_t j = 0; j < p->n; j++) {
        claim_label(g, &c->items[p->items[j].claim], label, sizeof label);
        if (strlen(label) > width) width = strlen(label);
    }
    if (width > 60) width = 60;
    fprintf(out, "%-*s  %-8s %9s %10s %9s %10s  %s\n", (int)width, "claim", "how", "runs now",
            "power now", "runs after", "predicted", "outlook");
    size_t n_assumed = 0, n_unsized = 0, n_unreach = 0, n_noise = 0;
    for (size_t j = 0; j < p->n; j++) {
        const cov_plan_claim *it = &p->items[j];
        claim_label(g, &c->items[it->claim], label, sizeof label);
        const char *how = mode_word(it);
        fprintf(out, "%-*.*s  %-8s %9.0f", (int)width, (int)width, label, how, it->n_now);
        print_prob(out, it->power_now);
        fprintf(out, " %9.0f", it->n_after);
        print_prob(out, it->power_after);
        fprintf(out, "  %s\n", it->mode == COV_PLAN_UNSIZED ? "cannot be sized"
                               : it->unreachable       ? "unreachable"
                               : it->reaches           ? "reaches target"
                                                       : "short");
        n_assumed += it->mode == COV_PLAN_ASSUMED;
        n_unsized += it->mode == COV_PLAN_UNSIZED;
        n_unreach += it->unreachable != 0;
        n_noise += it->from_noise != 0;
    }
    if (c->n > n_testable)
        fprintf(out, "\n%zu untestable claim%s left out: no runs can test %s (see shoal claims).\n",
                c->n - n_testable, c->n - n_testable == 1 ? "" : "s",
                c->n - n_testable == 1 ? "it" : "them");
    if (n_assumed > 0)
        fprintf(out, "\nassumed (not steered): %zu claim%s with an output as treatment or in the "
                     "adjustment set. The plan cannot set outputs, so it assumes new runs add "
                     "information as the current runs do (the run count is scaled).\n",
                n_assumed, n_assumed == 1 ? "" : "s");
    if (n_noise > 0)
        fprintf(out, "\n%zu claim%s sized from the noise SD declared in the graph (too few runs to "
                     "estimate it).\n",
                n_noise, n_noise == 1 ? " is" : "s are");
    if (n_unsized > 0) {
        fprintf(out, "\ncannot be sized: %zu claim%s whose outcome has no declared noise SD and "
                     "whose runs cannot estimate it (no runs, too few, or a treatment that never "
                     "varies; for assumed claims, no runs to scale):",
                n_unsized, n_unsized == 1 ? "" : "s");
        for (size_t j = 0; j < p->n; j++)
            if (p->items[j].mode == COV_PLAN_UNSIZED) {
                claim_label(g, &c->items[p->items[j].claim], label, sizeof label);
                fprintf(out, " %s;", label);
            }
        fputc('\n', out);
    }
    if (n_unreach > 0)
        fprintf(out, "\nunreachable: %zu claim%s cannot reach the target within %d configurations "
                     "(a held or output treatment, or a need far beyond the cap)%s\n",
                n_unreach, n_unreach == 1 ? "" : "s", COV_PLAN_AUTO_CAP,
                p->capped ? "; --budget auto stopped at the cap" : "");
}

static const char *mode_word(const cov_plan_claim *it)
{
    return it->mode == COV_PLAN_STEERED ? "steered" : it->mode == COV_PLAN_ASSUMED ? "assumed"
                                                                                   : "unsized";
}

static void print_json(FILE *out, const cov_options *o, const cov_graph *g, const cov_claims *c,
                       const cov_plan *p, const char *path)
{
    fprintf(out, "{\"schema_version\": 1, \"graph\": ");
    cov_emit_json_string(out, o->graph_path);
    fprintf(out, ", \"plan_file\": ");
    cov_emit_json_string(out, path);
    fprintf(out, ", \"configurations\": %zu, \"replicates\": %d, \"runs\": %zu, "
                 "\"candidates\": %zu, \"capped\": %s, \"target_power\": ",
            p->n_configs, p->replicates, p->n_configs * (size_t)p->replicates, p->n_candidates,
            p->capped ? "true" : "false");
    cov_emit_json_number(out, o->power.target);
    fputs(", \"claims\": [", out);
    for (size_t j = 0; j < p->n; j++) {
        const cov_plan_claim *it = &p->items[j];
        const cov_claim *cl = &c->items[it->claim];
        fprintf(out, "%s\n  {\"kind\": \"%s\", \"treatment\": ", j ? "," : "",
                cov_claim_kind_word(cl->kind));
        cov_emit_json_string(out, g->vars[cl->treatment].name);
        fputs(", \"outcome\": ", out);
        cov_emit_json_string(out, g->vars[cl->outcome].name);
        fprintf(out, ", \"how\": \"%s\", \"from_noise\": %s, \"runs_now\": ", mode_word(it),
                it->from_noise ? "true" : "false");
        cov_emit_json_number(out, it->n_now);
        fputs(", \"power_now\": ", out);
        cov_emit_json_number(out, it->power_now);
        fputs(", \"runs_after\": ", out);
        cov_emit_json_number(out, it->n_after);
        fputs(", \"power_after\": ", out);
        cov_emit_json_number(out, it->power_after);
        fprintf(out, ", \"reaches\": %s, \"unreachable\": %s}", it->reaches ? "true" : "false",
                it->unreachable ? "true" : "false");
    }
    fputs("\n]}\n", out);
}

int cov_cmd_plan(const cov_options *o, FILE *out, FILE *note, int *adequate, cov_error *err)
{
    (void)note;
    cov_graph *g = NULL;
    cov_claims *c = NULL;
    cov_archive *ar = NULL;
    cov_data *d = NULL;
    cov_assessments *as = NULL;
    cov_plan *p = NULL;
    *adequate = 0;
    if (o->graph_path == NULL)
        return cov_fail(err, COV_EINPUT, "", "plan needs a graph file: shoal plan GRAPH [ARCHIVE]");
    const char *path = o->out_path != NULL ? o->out_path : DEFAULT_PLAN_PATH;
    const char *inputs[] = {o->graph_path, o->archive_path};
    int rc = cov_output_check(path, 0, inputs, 2, "-o", err);
    if (rc != COV_OK) goto done;
    if ((rc = cov_graph_parse_file(o->graph_path, &g, err)) != COV_OK) goto done;
    size_t n_inputs = 0;
    for (size_t v = 0; v < g->n_vars; v++) n_inputs += g->vars[v].role == COV_INPUT;
    if (n_inputs == 0) {
        rc = cov_fail(err, COV_EINPUT, o->graph_path, "found no input in the graph, expected at "
                      "least one: a plan sets the inputs of new runs");
        goto done;
    }
    if ((rc = cov_claims_derive(g, &c, err)) != COV_OK) goto done;
    if (o->archive_path != NULL) {
        if ((rc = cov_archive_open(o->archive_path, o->table, &ar, err)) != COV_OK) goto done;
        rc = cov_data_read(ar, g, NULL, NULL, &d, err);
        cov_archive_close(ar);
        if (rc != COV_OK) goto done;
        if (d->n_runs > 0 && (rc = cov_assess(g, c, d, &o->power, &as, err)) != COV_OK) goto done;
    }
    if ((rc = cov_plan_make(g, c, d, as, &o->power, &o->coverage, o->budget, o->replicates, &p,
                            err)) != COV_OK)
        goto done;
    if ((rc = cov_plan_write_csv(g, p, path, err)) != COV_OK) goto done;
    size_t n_testable = 0;
    for (size_t i = 0; i < c->n; i++) n_testable += c->items[i].status == COV_TESTABLE;
    if (!o->quiet && o->format == COV_FMT_JSON) print_json(out, o, g, c, p, path);
    else if (!o->quiet) print_report(out, o, g, c, p, n_testable, path);
    int all = 1;
    for (size_t j = 0; j < p->n; j++) all &= p->items[j].reaches;
    *adequate = all;
done:
    cov_plan_free(p);
    cov_assessments_free(as);
    cov_data_free(d);
    cov_claims_free(c);
    cov_graph_free(g);
    return rc;
}
