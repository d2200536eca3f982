/* The graph drawn: variables in layers by their longest path from an input, each edge styled by
 * the verdict of its effect claim, each absence claim as a thin line styled by its verdict,
 * hidden variables marked. Drawn by gnuplot like the other plots, so every name passes through
 * the same quoting. See LICENSE. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "coverage/report/report.h"

/* Pixels per row of the tallest layer, and the least height. */
#define GRAPH_ROW_PX 78
#define GRAPH_MIN_H 560
/* Half the width and height of a node's box in data units (x spans the layers 0..1, y 0..1),
 * where arrows start and end. */
#define NODE_RX 0.085
#define NODE_RY_PX 16.0

/* The palette of the report: ample blue, underpowered orange, untestable grey (each also drawn in its own
 * dash pattern, so the verdict does not rest on colour). */
static const char *const verdict_ink[3] = {"#1F6E99", "#B35C0C", "#5B5F66"};
static const char *const verdict_dash[3] = {"1", "2", "3"};

typedef struct {
    double *x, *y;
} layout;

/* Layers by longest path from a variable without parents; within a layer, ordered by the mean
 * position of the parents (the barycentre heuristic of Sugiyama, Tagawa and Toda 1981, one
 * downward sweep). */
static int lay_out(const cov_graph *g, layout *L, size_t *max_rows)
{
    size_t n = g->n_vars;
    size_t *depth = calloc(n ? n : 1, sizeof *depth), *count = NULL;
    L->x = calloc(n ? n : 1, sizeof *L->x);
    L->y = calloc(n ? n : 1, sizeof *L->y);
    double *key = calloc(n ? n : 1, sizeof *key);
    size_t *order = calloc(n ? n : 1, sizeof *order);
    if (depth == NULL || L->x == NULL || L->y == NULL || key == NULL || order == NULL) goto fail;
    for (size_t pass = 0; pass < n; pass++)   /* a DAG settles within n passes */
        for (size_t e = 0; e < g->n_edges; e++)
            if (depth[g->edges[e].to] < depth[g->edges[e].from] + 1)
                depth[g->edges[e].to] = depth[g->edges[e].from] + 1;
    size_t layers = 1;
    for (size_t v = 0; v < n; v++)
        if (depth[v] + 1 > layers) layers = depth[v] + 1;
    count = calloc(layers, sizeof *count);
    if (count == NULL) goto fail;
    *max_rows = 1;
    for (size_t d = 0; d < layers; d++) {
        size_t m = 0;
        for (size_t v = 0; v < n; v++) {
            if (depth[v] != d) continue;
            double sum = 0;
            size_t parents = 0;
            for (size_t e = 0; e < g->n_edges; e++)
                if (g->edges[e].to == v) sum += L->y[g->edges[e].from], parents++;
            key[v] = parents ? sum / (double)parents : (double)v / (double)(n + 1);
            order[m++] = v;
        }
        for (size_t i = 1; i < m; i++)   /* insertion sort by key, stable */
            for (size_t j = i; j > 0 && key[order[j - 1]] > key[order[j]]; j--) {
                size_t t = order[j];
                order[j] = order[j - 1];
                order[j - 1] = t;
            }
        /* Inputs share the height evenly; later layers sit near their parents' mean height (a
         * lone node of a layer zigzags off the line of the layer before, so that edges passing
         * over it stay apart), hidden variables near the top, then pushed apart to a gap. */
        double gap = 0.8 / (double)(m > 1 ? m : 2);
        for (size_t i = 0; i < m; i++) {
            size_t v = order[i];
            L->x[v] = layers > 1 ? (double)d / (double)(layers - 1) : 0.5;
            if (d == 0) L->y[v] = ((double)i + 1) / ((double)m + 1);
            else if (g->vars[v].role == COV_HIDDEN) L->y[v] = 0.1 + gap * (double)i;
            else L->y[v] = key[v] + (m == 1 ? (d % 2 ? 0.16 : -0.16) : 0.0);
        }
        for (size_t i = 1; i < m; i++)
            if (L->y[order[i]] < L->y[order[i - 1]] + gap) L->y[order[i]] = L->y[order[i - 1]] + gap;
        double over = m ? L->y[order[m - 1]] - 0.92 : 0;
        for (size_t i = 0; i < m && over > 0; i++) L->y[order[i]] -= over;
        for (size_t i = 0; i < m; i++)
            if (L->y[order[i]] < 0.08) L->y[order[i]] = 0.08 + gap * (double)i;
        if (m > *max_rows) *max_rows = m;
    }
    free(depth);
    free(count);
    free(key);
    free(order);
    return COV_OK;
fail:
    free(depth);
    free(count);
    free(key);
    free(order);
    return COV_ENOMEM;
}

/* The verdict of the claim about (a, b) of the given kind, or -1 when there is none. */
static int claim_verdict(const cov_findings *f, cov_claim_kind kind, size_t a, size_t b)
{
    for (size_t i = 0; i < f->claims->n; i++) {
        const cov_claim *c = &f->claims->items[i];
        if (c->kind == kind && ((c->treatment == a && c->outcome == b) ||
                                (kind == COV_CLAIM_ABSENCE && c->treatment == b && c->outcome == a)))
            return (int)cov_report_verdict(f, i);
    }
    return -1;
}

/* One segment from (x0, y0) to (x1, y1), cut back to the edges of the two nodes' boxes. */
static void segment(FILE *s, double x0, double y0, double x1, double y1, double ry)
{
    double dx = x1 - x0, dy = y1 - y0;
    double t = 1.0 / sqrt((dx / NODE_RX) * (dx / NODE_RX) + (dy / ry) * (dy / ry));
    if (!(t < 0.5)) return;   /* overlapping boxes: nothing to draw between them */
    cov_plot_num(s, x0 + t * dx);
    fputc(' ', s);
    cov_plot_num(s, y0 + t * dy);
    fputc(' ', s);
    cov_plot_num(s, dx * (1 - 2 * t));
    fputc(' ', s);
    cov_plot_num(s, dy * (1 - 2 * t));
    fputc('\n', s);
}

int cov_plot_graph_height(const cov_findings *f)
{
    layout L = {NULL, NULL};
    size_t rows = 1;
    int rc = lay_out(f->graph, &L, &rows);
    free(L.x);
    free(L.y);
    int h = (int)(120 + GRAPH_ROW_PX * rows);
    return rc == COV_OK && h > GRAPH_MIN_H ? h : GRAPH_MIN_H;
}

int cov_plot_graph(FILE *s, const cov_findings *f, const char *dir)
{
    const cov_graph *g = f->graph;
    layout L = {NULL, NULL};
    size_t rows = 1;
    if (lay_out(g, &L, &rows) != COV_OK) {
        free(L.x);
        free(L.y);
        return COV_ENOMEM;
    }
    int height = cov_plot_graph_height(f);
    double ry = NODE_RY_PX / (double)(height - 120);
    /* Effect edges by verdict (3 = an edge no claim tests: into or out of a hidden variable). */
    for (int cls = 0; cls < 4; cls++) {
        fprintf(s, "$edges%d << EOD\n", cls);
        for (size_t e = 0; e < g->n_edges; e++) {
            int v = claim_verdict(f, COV_CLAIM_EFFECT, g->edges[e].from, g->edges[e].to);
            if ((v < 0 ? 3 : v) != cls) continue;
            segment(s, L.x[g->edges[e].from], L.y[g->edges[e].from], L.x[g->edges[e].to],
                    L.y[g->edges[e].to], ry);
        }
        fputs("NaN NaN NaN NaN\nEOD\n", s);
    }
    for (int cls = 0; cls < 3; cls++) {
        fprintf(s, "$absent%d << EOD\n", cls);
        for (size_t i = 0; i < f->claims->n; i++) {
            const cov_claim *c = &f->claims->items[i];
            if (c->kind != COV_CLAIM_ABSENCE || (int)cov_report_verdict(f, i) != cls) continue;
            segment(s, L.x[c->treatment], L.y[c->treatment], L.x[c->outcome], L.y[c->outcome], ry);
        }
        fputs("NaN NaN NaN NaN\nEOD\n", s);
    }
    cov_plot_start(s, height);
    cov_plot_title(s, "The graph and what the runs can say about it",
                   "arrows: expected effects; thin lines: expected absences; by verdict");
    fputs("unset xtics\nunset ytics\nunset border\nset xrange [-0.16:1.16]\n"
          "set yrange [1:0]\nset key outside bottom center horizontal font ',11'\n"
          "set style textbox 1 opaque fillcolor rgb '#FFFFFF' border lc rgb '" COV_PLOT_INK "'\n"
          "set style textbox 2 opaque fillcolor rgb '#EEEEEE' border lc rgb '#8A9099'\n", s);
    for (size_t v = 0; v < g->n_vars; v++) {
        char buf[COV_PLOT_NAME_SHOWN + 8], text[COV_PLOT_NAME_SHOWN + 32];
        const char *name = cov_plot_var_name(f, v, buf, sizeof buf);
        int hidden = g->vars[v].role == COV_HIDDEN;
        snprintf(text, sizeof text, "%s%s", name, hidden ? " (hidden)" : "");
        fprintf(s, "set label %zu ", v + 1);
        cov_gp_quote(s, text);
        fputs(" at ", s);
        cov_plot_num(s, L.x[v]);
        fputc(',', s);
        cov_plot_num(s, L.y[v]);
        fprintf(s, " center front boxed bs %d font ',14' tc rgb '%s'\n", hidden ? 2 : 1,
                hidden ? "#5B5F66" : COV_PLOT_INK);
    }
    char plot[2048];
    size_t used = (size_t)snprintf(plot, sizeof plot, "plot ");
    static const char *const word[4] = {"ample", "underpowered", "untestable",
                                        "through a hidden variable"};
    for (int cls = 0; cls < 4; cls++)
        used += (size_t)snprintf(plot + used, sizeof plot - used,
                                 "$edges%d using 1:2:3:4 with vectors head filled size 0.02,20 "
                                 "lw %s lc rgb '%s' dt %s title 'effect: %s', ", cls,
                                 cls == 3 ? "1.2" : "2.6", cls == 3 ? "#9AA0A6" : verdict_ink[cls],
                                 cls == 3 ? "1" : verdict_dash[cls], word[cls]);
    for (int cls = 0; cls < 3; cls++)
        used += (size_t)snprintf(plot + used, sizeof plot - used,
                                 "$absent%d using 1:2:3:4 with vectors nohead lw 1.2 lc rgb '%s' "
                                 "dt %s title 'absence: %s'%s", cls, verdict_ink[cls],
                                 verdict_dash[cls], word[cls], cls < 2 ? ", " : "\n");
    cov_plot_finish(s, dir, "graph", height, plot);
    free(L.x);
    free(L.y);
    return COV_OK;
}
