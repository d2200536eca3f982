/* The plan file: writing it atomically, reading it back against the graph.
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

/* The seed column's name: `seed`, lengthened with underscores until no input has it (ignoring
 * ASCII case, as SQLite column names do). */
static void seed_name(const cov_graph *g, char *buf, size_t size)
{
    /* A declared seed column (`runseed`) is the name the runs will be imported under. */
    if (cov_graph_seed_column(g) != NULL) {
        snprintf(buf, size, "%s", cov_graph_seed_column(g));
        return;
    }
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
    char sname[512];
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
    text = cov_csv_unneutralise(text);
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
    double x;
    if (cov_parse_double(text, &x) != 0) return -1;
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
    char where[600], sname[512];
    seed_name(g, sname, sizeof sname);
    if (var_of == NULL) goto nomem;
    for (size_t i = 0; i < nf; i++) {
        const char *h = cov_csv_unneutralise(cov_csv_header(csv, i));
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
