/* d-separation and minimal separators on the graph's DAG, with the campaign's design node.
 * See LICENSE. */
#include <stdlib.h>
#include <string.h>

#include "coverage/graph/graph.h"

void cov_dag_free(cov_dag *d)
{
    if (d == NULL) return;
    free(d->par_start);
    free(d->par);
    free(d->ch_start);
    free(d->ch);
    free(d);
}

int cov_noise_shared(const cov_graph *g, size_t v)
{
    return v < g->n_vars && g->vars[v].role == COV_OUTPUT && !g->noise_independent &&
           !g->vars[v].noise_own;
}

int cov_dag_build(const cov_graph *g, int with_design, size_t skip_edge, cov_dag **out)
{
    *out = NULL;
    cov_dag *d = calloc(1, sizeof *d);
    if (d == NULL) return COV_ENOMEM;
    /* Outputs of one run share its random stream: a hidden common cause of each output that
     * shares it, as the design node is of the inputs. One output alone has nothing to share. */
    size_t n_sharing = 0;
    for (size_t v = 0; v < g->n_vars; v++) n_sharing += (size_t)cov_noise_shared(g, v);
    int with_noise = n_sharing >= 2;
    d->n_vars = g->n_vars;
    d->n = g->n_vars + (with_design ? 1 : 0) + (with_noise ? 1 : 0);
    d->design = with_design ? g->n_vars : COV_NO_NODE;
    d->noise = with_noise ? g->n_vars + (with_design ? 1 : 0) : COV_NO_NODE;
    size_t m = 0;
    for (size_t i = 0; i < g->n_edges; i++)
        if (i != skip_edge) m++;
    if (with_design)
        for (size_t v = 0; v < g->n_vars; v++)
            if (g->vars[v].role == COV_INPUT) m++;
    if (with_noise) m += n_sharing;
    d->par_start = calloc(d->n + 1, sizeof *d->par_start);
    d->ch_start = calloc(d->n + 1, sizeof *d->ch_start);
    d->par = malloc((m ? m : 1) * sizeof *d->par);
    d->ch = malloc((m ? m : 1) * sizeof *d->ch);
    size_t *fill_p = calloc(d->n, sizeof *fill_p), *fill_c = calloc(d->n, sizeof *fill_c);
    if (!d->par_start || !d->ch_start || !d->par || !d->ch || !fill_p || !fill_c) goto fail;
    /* Two passes: count, then place (a compressed adjacency layout). */
    for (size_t i = 0; i < g->n_edges; i++) {
        if (i == skip_edge) continue;
        d->par_start[g->edges[i].to + 1]++;
        d->ch_start[g->edges[i].from + 1]++;
    }
    if (with_design)
        for (size_t v = 0; v < g->n_vars; v++)
            if (g->vars[v].role == COV_INPUT) {
                d->par_start[v + 1]++;
                d->ch_start[d->design + 1]++;
            }
    if (with_noise)
        for (size_t v = 0; v < g->n_vars; v++)
            if (cov_noise_shared(g, v)) {
                d->par_start[v + 1]++;
                d->ch_start[d->noise + 1]++;
            }
    for (size_t v = 0; v < d->n; v++) {
        d->par_start[v + 1] += d->par_start[v];
        d->ch_start[v + 1] += d->ch_start[v];
    }
    for (size_t i = 0; i < g->n_edges; i++) {
        if (i == skip_edge) continue;
        size_t a = g->edges[i].from, b = g->edges[i].to;
        d->par[d->par_start[b] + fill_p[b]++] = a;
        d->ch[d->ch_start[a] + fill_c[a]++] = b;
    }
    if (with_design)
        for (size_t v = 0; v < g->n_vars; v++)
            if (g->vars[v].role == COV_INPUT) {
                d->par[d->par_start[v] + fill_p[v]++] = d->design;
                d->ch[d->ch_start[d->design] + fill_c[d->design]++] = v;
            }
    if (with_noise)
        for (size_t v = 0; v < g->n_vars; v++)
            if (cov_noise_shared(g, v)) {
                d->par[d->par_start[v] + fill_p[v]++] = d->noise;
                d->ch[d->ch_start[d->noise] + fill_c[d->noise]++] = v;
            }
    free(fill_p);
    free(fill_c);
    *out = d;
    return COV_OK;
fail:
    free(fill_p);
    free(fill_c);
    cov_dag_free(d);
    return COV_ENOMEM;
}

/* Mark the ancestors of the marked nodes (the nodes themselves included), in place. */
static int mark_ancestors(const cov_dag *d, unsigned char *mark)
{
    size_t *stack = malloc((d->n ? d->n : 1) * sizeof *stack);
    if (stack == NULL) return COV_ENOMEM;
    size_t top = 0;
    for (size_t v = 0; v < d->n; v++)
        if (mark[v]) stack[top++] = v;
    while (top > 0) {
        size_t v = stack[--top];
        for (size_t k = d->par_start[v]; k < d->par_start[v + 1]; k++)
            if (!mark[d->par[k]]) {
                mark[d->par[k]] = 1;
                stack[top++] = d->par[k];
            }
    }
    free(stack);
    return COV_OK;
}

/* The reachability walk of Bayes-ball (Shachter 1998, "Bayes-ball: the rational pastime", UAI;
 * in the form of Koller & Friedman 2009, Probabilistic Graphical Models, Algorithm 3.1). States
 * are (node, direction): 2v means v was entered from a child (travelling up), 2v+1 from a parent
 * (travelling down). A trail that moves up may continue to parents and children of an unobserved
 * node; one that moves down continues to children of an unobserved node, and turns back up at a
 * node that is observed or has an observed descendant (an opened collider). prev[s] records the
 * state each state was first reached from, so the open path can be read back. */
static int reach(const cov_dag *d, size_t x, const unsigned char *in_z, size_t *prev)
{
    unsigned char *anc = calloc(d->n ? d->n : 1, 1);
    size_t *queue = malloc((2 * d->n + 1) * sizeof *queue);
    int rc = COV_ENOMEM;
    if (anc == NULL || queue == NULL) goto fail;
    for (size_t v = 0; v < d->n; v++) anc[v] = in_z[v] != 0;
    if (mark_ancestors(d, anc)) goto fail;
    for (size_t s = 0; s < 2 * d->n; s++) prev[s] = COV_NO_NODE;
    size_t head = 0, tail = 0;
    prev[2 * x] = 2 * x;
    queue[tail++] = 2 * x;
    while (head < tail) {
        size_t s = queue[head++], v = s / 2;
        int up = (s % 2) == 0;
        int go_par = (up && !in_z[v]) || (!up && anc[v]);
        int go_ch = !in_z[v];
        if (go_par)
            for (size_t k = d->par_start[v]; k < d->par_start[v + 1]; k++) {
                size_t t = 2 * d->par[k];
                if (prev[t] == COV_NO_NODE) {
                    prev[t] = s;
                    queue[tail++] = t;
                }
            }
        if (go_ch)
            for (size_t k = d->ch_start[v]; k < d->ch_start[v + 1]; k++) {
                size_t t = 2 * d->ch[k] + 1;
                if (prev[t] == COV_NO_NODE) {
                    prev[t] = s;
                    queue[tail++] = t;
                }
            }
    }
    rc = COV_OK;
fail:
    free(anc);
    free(queue);
    return rc;
}

int cov_dsep_separated(const cov_dag *d, size_t x, size_t y, const unsigned char *in_z,
                       int *separated)
{
    size_t *prev = malloc((2 * d->n + 1) * sizeof *prev);
    if (prev == NULL) return COV_ENOMEM;
    int rc = reach(d, x, in_z, prev);
    if (rc == COV_OK)
        *separated = prev[2 * y] == COV_NO_NODE && prev[2 * y + 1] == COV_NO_NODE;
    free(prev);
    return rc;
}

int cov_dsep_open_path(const cov_dag *d, size_t x, size_t y, const unsigned char *in_z,
                       size_t *path, int *dir, size_t *len)
{
    *len = 0;
    size_t *prev = malloc((2 * d->n + 1) * sizeof *prev);
    if (prev == NULL) return COV_ENOMEM;
    int rc = reach(d, x, in_z, prev);
    if (rc != COV_OK) goto done;
    size_t s = prev[2 * y] != COV_NO_NODE ? 2 * y : 2 * y + 1;
    if (prev[s] == COV_NO_NODE) goto done;
    /* Read the states back to x, then reverse. A state entered from a parent (odd) was reached
     * over the arrow parent -> node. */
    size_t n = 0;
    for (;;) {
        path[n] = s / 2;
        dir[n] = (s % 2) ? +1 : -1;
        n++;
        if (prev[s] == s) break;
        s = prev[s];
    }
    for (size_t i = 0; i < n / 2; i++) {
        size_t t = path[i];
        path[i] = path[n - 1 - i];
        path[n - 1 - i] = t;
    }
    /* dir was recorded on the arriving node; shift it onto the edge's first node. */
    int *tmp = malloc(n * sizeof *tmp);
    if (tmp == NULL) {
        rc = COV_ENOMEM;
        goto done;
    }
    for (size_t i = 0; i < n; i++) tmp[i] = dir[n - 1 - i];
    for (size_t i = 0; i + 1 < n; i++) dir[i] = tmp[i + 1];
    dir[n - 1] = 0;
    free(tmp);
    *len = n;
done:
    free(prev);
    return rc;
}

/* The moral graph of the sub-DAG on the marked (ancestral) nodes: each node joined to its parents,
 * and the parents of each node joined to each other, directions dropped (Lauritzen, Dawid, Larsen
 * & Leimer 1990, Networks 20:491-505). Stored as offset arrays like the DAG. */
typedef struct {
    size_t *start, *adj;
} moral_graph;

static int moralize(const cov_dag *d, const unsigned char *keep, moral_graph *m)
{
    m->start = calloc(d->n + 1, sizeof *m->start);
    m->adj = NULL;
    size_t *fill = calloc(d->n ? d->n : 1, sizeof *fill);
    if (m->start == NULL || fill == NULL) goto fail;
    for (int pass = 0; pass < 2; pass++) {
        for (size_t v = 0; v < d->n; v++) {
            if (!keep[v]) continue;
            size_t a = d->par_start[v], b = d->par_start[v + 1];
            for (size_t i = a; i < b; i++) {
                size_t p = d->par[i];
                if (pass == 0) {
                    m->start[v + 1]++;
                    m->start[p + 1]++;
                } else {
                    m->adj[m->start[v] + fill[v]++] = p;
                    m->adj[m->start[p] + fill[p]++] = v;
                }
                for (size_t j = i + 1; j < b; j++) {
                    size_t q = d->par[j];
                    if (pass == 0) {
                        m->start[p + 1]++;
                        m->start[q + 1]++;
                    } else {
                        m->adj[m->start[p] + fill[p]++] = q;
                        m->adj[m->start[q] + fill[q]++] = p;
                    }
                }
            }
        }
        if (pass == 0) {
            for (size_t v = 0; v < d->n; v++) m->start[v + 1] += m->start[v];
            m->adj = malloc((m->start[d->n] ? m->start[d->n] : 1) * sizeof *m->adj);
            if (m->adj == NULL) goto fail;
        }
    }
    free(fill);
    return COV_OK;
fail:
    free(fill);
    free(m->start);
    free(m->adj);
    m->start = m->adj = NULL;
    return COV_ENOMEM;
}

/* Breadth-first search in the moral graph from src. Nodes with block[v] set are reached but not
 * passed through; seen[v] is set for every node reached. */
static void moral_reach(const moral_graph *m, size_t n, size_t src, const unsigned char *block,
                        unsigned char *seen, size_t *queue)
{
    memset(seen, 0, n);
    size_t head = 0, tail = 0;
    seen[src] = 1;
    queue[tail++] = src;
    while (head < tail) {
        size_t v = queue[head++];
        if (v != src && block[v]) continue;
        for (size_t k = m->start[v]; k < m->start[v + 1]; k++) {
            size_t w = m->adj[k];
            if (!seen[w]) {
                seen[w] = 1;
                queue[tail++] = w;
            }
        }
    }
}

/* FindMinSep of van der Zander, Liskiewicz & Textor (2019), "Separators and adjustment sets in
 * causal graphs: complete criteria and an algorithmic framework", Artificial Intelligence 270:1-40
 * (earlier Acid & de Campos 1996), with no nodes forced in:
 *   A = An({x, y}); M = moral graph of G[A]; Z0 = (allowed n A) \ {x, y}.
 *   When Z0 does not separate x and y in M, no separator within `allowed` exists.
 *   Z1 = members of Z0 reachable from x in M by paths whose interior avoids Z0.
 *   Z  = members of Z1 reachable from y in M by paths whose interior avoids Z1.
 * Every subset of A has the same moral graph An({x, y} u Z) = A, where separation is monotone, so
 * Z is minimal: no proper subset separates. */
int cov_dsep_minsep(const cov_dag *d, size_t x, size_t y, const unsigned char *allowed,
                    unsigned char *z, int *found)
{
    size_t n = d->n;
    unsigned char *anc = calloc(n ? n : 1, 1), *seen = malloc(n ? n : 1);
    size_t *queue = malloc((n ? n : 1) * sizeof *queue);
    moral_graph m = {NULL, NULL};
    int rc = COV_ENOMEM;
    *found = 0;
    if (anc == NULL || seen == NULL || queue == NULL) goto fail;
    anc[x] = anc[y] = 1;
    if (mark_ancestors(d, anc)) goto fail;
    if (moralize(d, anc, &m)) goto fail;
    for (size_t v = 0; v < n; v++) z[v] = anc[v] && allowed[v] && v != x && v != y;
    moral_reach(&m, n, x, z, seen, queue);
    rc = COV_OK;
    if (seen[y]) goto fail;
    for (size_t v = 0; v < n; v++) z[v] = z[v] && seen[v];
    moral_reach(&m, n, y, z, seen, queue);
    for (size_t v = 0; v < n; v++) z[v] = z[v] && seen[v];
    *found = 1;
fail:
    free(anc);
    free(seen);
    free(queue);
    free(m.start);
    free(m.adj);
    return rc;
}
