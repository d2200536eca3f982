/* d-separation and minimal separators on the graph's DAG, with the campaign's design node.
 * See LICENSE. */
#include <stdint.h>
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
    size_t *fill_p = calloc(d->n ? d->n : 1, sizeof *fill_p);
    size_t *fill_c = calloc(d->n ? d->n : 1, sizeof *fill_c);
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

/* ---- the workspace ----------------------------------------------------------------------------
 * Every search marks nodes with a generation stamp instead of clearing an array of the whole
 * graph, so a query costs what it visits, not the size of the graph: deriving the claims of a
 * large graph asks hundreds of thousands of them. */

struct cov_dsep_ws {
    size_t n;
    unsigned *anc, anc_gen;      /* the ancestral set of the current query */
    unsigned *out, out_gen;      /* An(y) of the fixed outcome */
    unsigned *seen, seen_gen;    /* breadth-first search in the moral graph */
    unsigned *wed;               /* children whose parents that search has already joined */
    unsigned *zm, z_gen;         /* Z1 of FindMinSep */
    unsigned *st, st_gen;        /* Bayes-ball states, 2 per node */
    unsigned *za, za_gen;        /* ancestors of the conditioning set, for Bayes-ball */
    size_t *prev;                /* Bayes-ball: the state each state was reached from */
    size_t *queue, *stack, *list;
    size_t *out_list, n_out;     /* the members of An(y), in the order they were found */
    const cov_dag *fix_d;        /* the fixed outcome's DAG and node; NULL when none is fixed */
    size_t fix_y;
    /* The shortcut for the fixed outcome (see cov_dsep_minsep_parents_ws): its distinct parents
     * ascending, stamped in pa; for each node, how many of them it reaches by a directed path
     * through no other parent of y (counted in hits where hit_stamp carries hit_gen). */
    int pa_state;                /* 0: not yet computed for this outcome, 1: ready, -1: not used */
    unsigned *pa, pa_gen;
    unsigned *walk, walk_gen;    /* one backward walk from a parent */
    unsigned *hits, *hit_stamp, hit_gen;
    size_t *pa_list, n_pa;
};

void cov_dsep_ws_free(cov_dsep_ws *w)
{
    if (w == NULL) return;
    free(w->anc);
    free(w->out);
    free(w->seen);
    free(w->wed);
    free(w->zm);
    free(w->st);
    free(w->za);
    free(w->prev);
    free(w->queue);
    free(w->stack);
    free(w->list);
    free(w->out_list);
    free(w->pa);
    free(w->walk);
    free(w->hits);
    free(w->hit_stamp);
    free(w->pa_list);
    free(w);
}

int cov_dsep_ws_alloc(size_t n, cov_dsep_ws **out)
{
    *out = NULL;
    cov_dsep_ws *w = calloc(1, sizeof *w);
    if (w == NULL) return COV_ENOMEM;
    size_t m = n ? n : 1;
    w->n = n;
    w->anc = calloc(m, sizeof *w->anc);
    w->out = calloc(m, sizeof *w->out);
    w->seen = calloc(m, sizeof *w->seen);
    w->wed = calloc(m, sizeof *w->wed);
    w->zm = calloc(m, sizeof *w->zm);
    w->za = calloc(m, sizeof *w->za);
    w->st = calloc(2 * m, sizeof *w->st);
    w->prev = malloc(2 * m * sizeof *w->prev);
    w->queue = malloc(2 * m * sizeof *w->queue);
    w->stack = malloc(m * sizeof *w->stack);
    w->list = malloc(m * sizeof *w->list);
    w->out_list = malloc(m * sizeof *w->out_list);
    if (!w->anc || !w->out || !w->seen || !w->wed || !w->zm || !w->za || !w->st || !w->prev || !w->queue
        || !w->stack || !w->list || !w->out_list) {
        cov_dsep_ws_free(w);
        return COV_ENOMEM;
    }
    *out = w;
    return COV_OK;
}

/* A fresh generation of one stamp array; when the counter wraps, the array is cleared once. */
static unsigned next_gen(unsigned *marks, unsigned *gen, size_t len)
{
    if (++*gen == 0) {
        memset(marks, 0, len * sizeof *marks);
        *gen = 1;
    }
    return *gen;
}

/* Stamp the ancestors of the nodes on the stack (themselves included) with gen in marks, skipping
 * nodes already stamped or, when skip is not NULL, stamped with skip_gen in skip. Appends each
 * newly stamped node to list (when not NULL) and returns how many. */
static size_t stamp_ancestors(const cov_dag *d, size_t *stack, size_t top, unsigned *marks,
                              unsigned gen, const unsigned *skip, unsigned skip_gen, size_t *list)
{
    size_t count = 0, kept = 0;
    for (size_t i = 0; i < top; i++) {
        size_t v = stack[i];
        if (marks[v] == gen || (skip && skip[v] == skip_gen)) continue;
        marks[v] = gen;
        if (list) list[count] = v;
        count++;
        stack[kept++] = v;
    }
    top = kept;
    while (top > 0) {
        size_t v = stack[--top];
        for (size_t k = d->par_start[v]; k < d->par_start[v + 1]; k++) {
            size_t p = d->par[k];
            if (marks[p] == gen || (skip && skip[p] == skip_gen)) continue;
            marks[p] = gen;
            if (list) list[count] = p;
            count++;
            stack[top++] = p;
        }
    }
    return count;
}

void cov_dsep_ws_fix_outcome(cov_dsep_ws *w, const cov_dag *d, size_t y)
{
    unsigned gen = next_gen(w->out, &w->out_gen, w->n);
    w->stack[0] = y;
    w->n_out = stamp_ancestors(d, w->stack, 1, w->out, gen, NULL, 0, w->out_list);
    w->fix_d = d;
    w->fix_y = y;
    w->pa_state = 0;
}

void cov_dsep_ws_unfix(cov_dsep_ws *w)
{
    w->fix_d = NULL;
}

/* The ancestral set A = An({x, y}) of a query: An(y) from the fixed outcome when it is y, and the
 * ancestors of x not already in it stamped in w->anc. */
static int fixed(const cov_dsep_ws *w, const cov_dag *d, size_t y)
{
    return w->fix_d == d && w->fix_y == y;
}

static void query_ancestors(cov_dsep_ws *w, const cov_dag *d, size_t x, size_t y)
{
    unsigned gen = next_gen(w->anc, &w->anc_gen, w->n);
    if (fixed(w, d, y)) {
        w->stack[0] = x;
        stamp_ancestors(d, w->stack, 1, w->anc, gen, w->out, w->out_gen, NULL);
    } else {
        w->stack[0] = x;
        w->stack[1] = y;
        stamp_ancestors(d, w->stack, 2, w->anc, gen, NULL, 0, NULL);
    }
}

static int in_query(const cov_dsep_ws *w, int fix, size_t v)
{
    return w->anc[v] == w->anc_gen || (fix && w->out[v] == w->out_gen);
}

/* Breadth-first search from src in the moral graph of the sub-DAG on the ancestral set A (each
 * node joined to its parents, the parents of each node joined to each other, directions dropped:
 * Lauritzen, Dawid, Larsen & Leimer 1990, Networks 20:491-505). The moral graph is never built:
 * the neighbours of v are its parents, its children in A and their other parents (A is ancestral,
 * so every parent of a member is a member). Nodes that block are reached, appended
 * to w->list, and not passed through (mode 0: Z0, mode 1: Z1); src is always passed through. The search stops once
 * `enough` blocking nodes are reached (SIZE_MAX: never). Returns the count appended; every node
 * reached carries the new seen stamp. Each child's parents are joined once per search: after
 * that they are all reached, so looking again finds nothing new. */
static inline int block_z0(const cov_dsep_ws *w, const unsigned char *allowed, int fix,
                           size_t x, size_t y, size_t v)
{
    return v != x && v != y && allowed[v] && in_query(w, fix, v);
}

/* The blocking test of each search: Z0 (mode 0) or Z1 (mode 1). */
static inline int blocks(const cov_dsep_ws *w, int mode, const unsigned char *allowed, int fix,
                         size_t x, size_t y, size_t v)
{
    return mode ? w->zm[v] == w->z_gen : block_z0(w, allowed, fix, x, y, v);
}

static inline size_t moral_bfs(cov_dsep_ws *w, const cov_dag *d, size_t src, int mode,
                               const unsigned char *allowed, int fix, size_t x, size_t y,
                               size_t enough)
{
    unsigned gen = next_gen(w->seen, &w->seen_gen, w->n);
    if (gen == 1) memset(w->wed, 0, w->n * sizeof *w->wed);
    size_t head = 0, tail = 0, count = 0;
    w->seen[src] = gen;
    w->queue[tail++] = src;
#define VISIT(u)                                                                                    \
    do {                                                                                            \
        size_t u_ = (u);                                                                            \
        if (w->seen[u_] != gen) {                                                                   \
            w->seen[u_] = gen;                                                                      \
            if (blocks(w, mode, allowed, fix, x, y, u_)) w->list[count++] = u_;                           \
            else w->queue[tail++] = u_;                                                             \
        }                                                                                           \
    } while (0)
    while (head < tail && count < enough) {
        size_t v = w->queue[head++];
        for (size_t k = d->par_start[v]; k < d->par_start[v + 1]; k++) VISIT(d->par[k]);
        for (size_t k = d->ch_start[v]; k < d->ch_start[v + 1]; k++) {
            size_t c = d->ch[k];
            if (w->wed[c] == gen || !in_query(w, fix, c)) continue;
            w->wed[c] = gen;
            VISIT(c);
            for (size_t j = d->par_start[c]; j < d->par_start[c + 1]; j++) VISIT(d->par[j]);
        }
    }
#undef VISIT
    return count;
}

static int cmp_size(const void *a, const void *b)
{
    size_t x = *(const size_t *)a, y = *(const size_t *)b;
    return (x > y) - (x < y);
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
int cov_dsep_minsep_ws(cov_dsep_ws *w, const cov_dag *d, size_t x, size_t y,
                       const unsigned char *allowed, size_t *z, size_t *nz, int *found)
{
    int fix = fixed(w, d, y);
    *found = 0;
    *nz = 0;
    query_ancestors(w, d, x, y);
    size_t n1 = moral_bfs(w, d, x, 0, allowed, fix, x, y, SIZE_MAX);
    if (w->seen[y] == w->seen_gen) {
        /* None: report Z0, the allowed members of A, which leaves some path open. */
        for (size_t v = 0; v < d->n; v++)
            if (block_z0(w, allowed, fix, x, y, v)) z[(*nz)++] = v;
        return COV_OK;
    }
    unsigned zg = next_gen(w->zm, &w->z_gen, w->n);
    for (size_t i = 0; i < n1; i++) w->zm[w->list[i]] = zg;
    /* Z is within Z1: once all of Z1 is reached there is nothing more to find. */
    size_t n2 = n1 ? moral_bfs(w, d, y, 1, allowed, fix, x, y, n1) : 0;
    memcpy(z, w->list, n2 * sizeof *z);
    qsort(z, n2, sizeof *z, cmp_size);
    *nz = n2;
    *found = 1;
    return COV_OK;
}

/* Preparing the shortcut below costs one backward walk over An(y) per parent of y. It stops, and
 * the general search does the work, once the walks have taken this many times the size of An(y)
 * in steps: about as much as that many of the outcome's pairs would cost without it, so a graph
 * whose outcomes never take the shortcut pays a bounded share for trying. */
#define PA_WALK_BUDGET 16

/* Prepare the shortcut for the fixed outcome y: its distinct parents, ascending, and for each
 * node u the number of them that u reaches by a directed path of one or more edges with no other
 * parent of y inside it (one backward walk from each parent, never entering another). */
static void prepare_parents(cov_dsep_ws *w, const cov_dag *d, size_t y)
{
    size_t k0 = d->par_start[y], k1 = d->par_start[y + 1], m = w->n ? w->n : 1;
    size_t budget = PA_WALK_BUDGET * (w->n_out + (k1 - k0) + 1), steps = 0;
    w->pa_state = -1;
    /* Allocated on first use: most workspaces never take the shortcut. Without memory the
     * general search does the work. */
    if (w->pa == NULL) {
        w->pa = calloc(m, sizeof *w->pa);
        w->walk = calloc(m, sizeof *w->walk);
        w->hits = calloc(m, sizeof *w->hits);
        w->hit_stamp = calloc(m, sizeof *w->hit_stamp);
        w->pa_list = malloc(m * sizeof *w->pa_list);
        if (!w->pa || !w->walk || !w->hits || !w->hit_stamp || !w->pa_list) {
            free(w->pa);
            free(w->walk);
            free(w->hits);
            free(w->hit_stamp);
            free(w->pa_list);
            w->pa = w->walk = w->hits = w->hit_stamp = NULL;
            w->pa_list = NULL;
            return;
        }
    }
    unsigned pg = next_gen(w->pa, &w->pa_gen, w->n);
    unsigned hg = next_gen(w->hit_stamp, &w->hit_gen, w->n);
    w->n_pa = 0;
    for (size_t k = k0; k < k1; k++) {
        size_t p = d->par[k];
        if (w->pa[p] == pg) continue;
        w->pa[p] = pg;
        w->pa_list[w->n_pa++] = p;
    }
    qsort(w->pa_list, w->n_pa, sizeof *w->pa_list, cmp_size);
    for (size_t i = 0; i < w->n_pa; i++) {
        unsigned wg = next_gen(w->walk, &w->walk_gen, w->n);
        size_t top = 0;
        w->stack[top++] = w->pa_list[i];
        while (top > 0) {
            size_t v = w->stack[--top];
            if (++steps > budget) return;
            for (size_t k = d->par_start[v]; k < d->par_start[v + 1]; k++) {
                size_t u = d->par[k];
                if (w->walk[u] == wg || w->pa[u] == pg) continue;
                w->walk[u] = wg;
                if (w->hit_stamp[u] != hg) {
                    w->hit_stamp[u] = hg;
                    w->hits[u] = 0;
                }
                w->hits[u]++;
                w->stack[top++] = u;
            }
        }
    }
    w->pa_state = 1;
}

/* The shortcut: when y is the fixed outcome, every parent of y is allowed and x reaches each of
 * them by a directed path through no other parent of y, FindMinSep's answer is Pa(y), found
 * without its two searches (which on a long chain walk every node between x and y, for every
 * pair). Why: x is then an ancestor of y, so A = An(y) holds no child of y and y's neighbours in
 * M are exactly Pa(y), all in Z0: Z0 separates. Each such directed path lies in A; its interior
 * nodes are descendants of x (so not parents of x), not parents of y, and so, by the caller's
 * promise, not in Z0: the first search reaches every parent of y, which puts all of Pa(y) in Z1,
 * and the second search, from y, meets only them. */
int cov_dsep_minsep_parents_ws(cov_dsep_ws *w, const cov_dag *d, size_t x, size_t y,
                               const unsigned char *allowed, size_t *z, size_t *nz, int *found)
{
    if (fixed(w, d, y)) {
        if (w->pa_state == 0) prepare_parents(w, d, y);
        int ok = w->pa_state == 1 && w->n_pa > 0 && x != y && w->pa[x] != w->pa_gen &&
                 w->hit_stamp[x] == w->hit_gen && w->hits[x] == w->n_pa;
        for (size_t i = 0; ok && i < w->n_pa; i++) ok = allowed[w->pa_list[i]] != 0;
        if (ok) {
            memcpy(z, w->pa_list, w->n_pa * sizeof *z);
            *nz = w->n_pa;
            *found = 1;
            return COV_OK;
        }
    }
    return cov_dsep_minsep_ws(w, d, x, y, allowed, z, nz, found);
}

/* The reachability walk of Bayes-ball (Shachter 1998, "Bayes-ball: the rational pastime", UAI;
 * in the form of Koller & Friedman 2009, Probabilistic Graphical Models, Algorithm 3.1). States
 * are (node, direction): 2v means v was entered from a child (travelling up), 2v+1 from a parent
 * (travelling down). A trail that moves up may continue to parents and children of an unobserved
 * node; one that moves down continues to children of an unobserved node, and turns back up at a
 * node that is observed or has an observed descendant (an opened collider). w->prev[s] records the
 * state each state was first reached from (valid where w->st[s] carries the current stamp), so the
 * open path can be read back. z lists the nz members of in_z. */
static void reach(cov_dsep_ws *w, const cov_dag *d, size_t x, const unsigned char *in_z,
                  const size_t *z, size_t nz, int restrict_to, int fix)
{
    /* The ancestors of Z are needed only when a trail first moves down; many checks end sooner. */
    int za_ready = 0;
    unsigned ag = 0;
    unsigned sg = next_gen(w->st, &w->st_gen, 2 * w->n);
    size_t head = 0, tail = 0;
    w->st[2 * x] = sg;
    w->prev[2 * x] = 2 * x;
    w->queue[tail++] = 2 * x;
    while (head < tail) {
        size_t s = w->queue[head++], v = s / 2;
        int up = (s % 2) == 0, go_par;
        if (up) {
            go_par = !in_z[v];
        } else {
            if (!za_ready) {
                ag = next_gen(w->za, &w->za_gen, w->n);
                memcpy(w->stack, z, nz * sizeof *z);
                stamp_ancestors(d, w->stack, nz, w->za, ag, NULL, 0, NULL);
                za_ready = 1;
            }
            go_par = w->za[v] == ag;
        }
        int go_ch = !in_z[v];
        if (go_par)
            for (size_t k = d->par_start[v]; k < d->par_start[v + 1]; k++) {
                size_t t = 2 * d->par[k];
                if (w->st[t] != sg) {
                    w->st[t] = sg;
                    w->prev[t] = s;
                    w->queue[tail++] = t;
                }
            }
        if (go_ch)
            for (size_t k = d->ch_start[v]; k < d->ch_start[v + 1]; k++) {
                size_t t = 2 * d->ch[k] + 1;
                if (w->st[t] != sg && (!restrict_to || in_query(w, fix, d->ch[k]))) {
                    w->st[t] = sg;
                    w->prev[t] = s;
                    w->queue[tail++] = t;
                }
            }
    }
}

/* When Z lies within A = An({x, y}), x and y are d-separated by Z in G exactly when they are in
 * the sub-DAG G[A] (Lauritzen et al. 1990; Z's ancestors are in A), so the walk keeps to A; it
 * starts from y, since d-separation is symmetric and the outcome's side is usually the smaller. */
int cov_dsep_separated_ws(cov_dsep_ws *w, const cov_dag *d, size_t x, size_t y,
                          const unsigned char *in_z, const size_t *z, size_t nz, int *separated)
{
    int fix = fixed(w, d, y), inside = 1;
    query_ancestors(w, d, x, y);
    for (size_t i = 0; i < nz && inside; i++) inside = in_query(w, fix, z[i]);
    reach(w, d, y, in_z, z, nz, inside, fix);
    *separated = w->st[2 * x] != w->st_gen && w->st[2 * x + 1] != w->st_gen;
    return COV_OK;
}

/* The members of a dense set as a list, for the entry points that take only the dense form. */
static size_t dense_list(const cov_dag *d, const unsigned char *in_z, size_t *z)
{
    size_t nz = 0;
    for (size_t v = 0; v < d->n; v++)
        if (in_z[v]) z[nz++] = v;
    return nz;
}

int cov_dsep_separated(const cov_dag *d, size_t x, size_t y, const unsigned char *in_z,
                       int *separated)
{
    cov_dsep_ws *w = NULL;
    size_t *z = malloc((d->n ? d->n : 1) * sizeof *z);
    int rc = z != NULL ? cov_dsep_ws_alloc(d->n, &w) : COV_ENOMEM;
    if (rc == COV_OK)
        rc = cov_dsep_separated_ws(w, d, x, y, in_z, z, dense_list(d, in_z, z), separated);
    cov_dsep_ws_free(w);
    free(z);
    return rc;
}

int cov_dsep_open_path_ws(cov_dsep_ws *w, const cov_dag *d, size_t x, size_t y,
                          const unsigned char *in_z, const size_t *z, size_t nz, size_t *path,
                          int *dir, size_t *len)
{
    *len = 0;
    reach(w, d, x, in_z, z, nz, 0, 0);
    size_t s = w->st[2 * y] == w->st_gen ? 2 * y : 2 * y + 1;
    if (w->st[s] != w->st_gen) return COV_OK;
    /* Read the states back to x, then reverse. A state entered from a parent (odd) was reached
     * over the arrow parent -> node. */
    size_t n = 0;
    for (;;) {
        path[n] = s / 2;
        dir[n] = (s % 2) ? +1 : -1;
        n++;
        if (w->prev[s] == s) break;
        s = w->prev[s];
    }
    for (size_t i = 0; i < n / 2; i++) {
        size_t t = path[i];
        path[i] = path[n - 1 - i];
        path[n - 1 - i] = t;
    }
    /* dir was recorded on the arriving node, read back from y: the arrow between path[i] and
     * path[i + 1] (after the reversal) is the one recorded at position n - 2 - i. */
    for (size_t i = 0; i < (n - 1) / 2; i++) {
        int t = dir[i];
        dir[i] = dir[n - 2 - i];
        dir[n - 2 - i] = t;
    }
    dir[n - 1] = 0;
    *len = n;
    return COV_OK;
}

int cov_dsep_open_path(const cov_dag *d, size_t x, size_t y, const unsigned char *in_z,
                       size_t *path, int *dir, size_t *len)
{
    *len = 0;
    cov_dsep_ws *w = NULL;
    size_t *z = malloc((d->n ? d->n : 1) * sizeof *z);
    int rc = z != NULL ? cov_dsep_ws_alloc(d->n, &w) : COV_ENOMEM;
    if (rc == COV_OK)
        rc = cov_dsep_open_path_ws(w, d, x, y, in_z, z, dense_list(d, in_z, z), path, dir, len);
    free(z);
    cov_dsep_ws_free(w);
    return rc;
}

int cov_dsep_minsep(const cov_dag *d, size_t x, size_t y, const unsigned char *allowed,
                    unsigned char *z, int *found)
{
    cov_dsep_ws *w = NULL;
    size_t *list = malloc((d->n ? d->n : 1) * sizeof *list), nz = 0;
    int rc = list != NULL ? cov_dsep_ws_alloc(d->n, &w) : COV_ENOMEM;
    if (rc == COV_OK) rc = cov_dsep_minsep_ws(w, d, x, y, allowed, list, &nz, found);
    if (rc == COV_OK) {
        memset(z, 0, d->n);
        for (size_t i = 0; i < nz; i++) z[list[i]] = 1;
    }
    cov_dsep_ws_free(w);
    free(list);
    return rc;
}
