/* Claims: the effect and absence claims a graph implies, each with its adjustment set.
 * See LICENSE. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "coverage/graph/graph.h"

/* How the design node is shown in reasons; brackets keep it apart from any variable's name. */
#define DESIGN_LABEL "[design]"
/* The run's own random stream, which every output of the run shares unless declared otherwise. */
#define NOISE_LABEL "[run noise]"

/* The adjustment sets of all claims live in blocks the claims own, not in two allocations per
 * claim: a large graph's 300,000 claims would otherwise spend more time in malloc and free than in
 * the separator searches. */
#define SET_BLOCK_NODES 65536

typedef struct set_block {
    struct set_block *next;
    size_t used, cap;
    size_t v[];
} set_block;

/* What cov_claims_derive hands out: the public claims, then the blocks of their sets. */
typedef struct {
    cov_claims pub;
    set_block *blocks;
} claims_store;

void cov_claims_free(cov_claims *c)
{
    if (c == NULL) return;
    claims_store *st = (claims_store *)c;
    for (size_t i = 0; i < c->n; i++) free(c->items[i].reason);
    while (st->blocks != NULL) {
        set_block *b = st->blocks;
        st->blocks = b->next;
        free(b);
    }
    free(c->items);
    free(st);
}

/* Room for m nodes in st's blocks (never NULL when it succeeds, even for m = 0). */
static size_t *set_room(claims_store *st, size_t m)
{
    size_t need = m ? m : 1;
    set_block *b = st->blocks;
    if (b == NULL || b->cap - b->used < need) {
        size_t cap = need > SET_BLOCK_NODES ? need : SET_BLOCK_NODES;
        b = malloc(sizeof *b + cap * sizeof b->v[0]);
        if (b == NULL) return NULL;
        b->used = 0;
        b->cap = cap;
        b->next = st->blocks;
        st->blocks = b;
    }
    size_t *at = b->v + b->used;
    b->used += need;
    return at;
}

static int recorded(const cov_graph *g, size_t v)
{
    return v < g->n_vars && g->vars[v].role != COV_HIDDEN;
}

static const char *node_name(const cov_graph *g, const cov_dag *d, size_t v)
{
    return v < g->n_vars ? g->vars[v].name : v == d->noise ? NOISE_LABEL : DESIGN_LABEL;
}

/* What the separator searches of one derivation share: a d-separation workspace and dense marks
 * that are all zero between calls (each call clears what it set). */
typedef struct {
    cov_dsep_ws *ws;
    unsigned char *allowed, *in_z, *recorded;
    size_t *z, *pref;
    size_t *path;          /* an open path (room for 2n + 1 nodes) and its arrows */
    int *dir;
    claims_store *store;   /* where the sets go */
} sep_ctx;

/* A growable string for reasons. */
typedef struct {
    char *s;
    size_t n, cap;
    int oom;
} strbuf;

static void sb_add(strbuf *b, const char *t)
{
    size_t k = strlen(t);
    if (b->oom) return;
    if (b->n + k + 1 > b->cap) {
        size_t cap = b->cap ? b->cap : 64;
        while (cap < b->n + k + 1) cap *= 2;
        char *s = realloc(b->s, cap);
        if (s == NULL) {
            b->oom = 1;
            return;
        }
        b->s = s;
        b->cap = cap;
    }
    memcpy(b->s + b->n, t, k + 1);
    b->n += k;
}

/* "open path a <- h -> b runs through hidden h": the path comes from the walk that finds the
 * largest candidate set open, so each of its non-colliders is unrecorded. */
static int untestable_reason(const cov_graph *g, const cov_dag *d, size_t x, size_t y,
                             sep_ctx *sc, size_t nz, char **out)
{
    size_t *path = sc->path;
    int *dir = sc->dir;
    strbuf b = {NULL, 0, 0, 0};
    size_t len = 0;
    int rc = COV_ENOMEM;
    if (cov_dsep_open_path_ws(sc->ws, d, x, y, sc->in_z, sc->z, nz, path, dir, &len)) goto fail;
    if (len == 0) {
        sb_add(&b, "no adjustment set among recorded variables");
    } else {
        sb_add(&b, "open path ");
        for (size_t i = 0; i < len; i++) {
            sb_add(&b, node_name(g, d, path[i]));
            if (i + 1 < len) sb_add(&b, dir[i] > 0 ? " -> " : " <- ");
        }
        int n_hidden = 0, via_design = 0, via_noise = 0;
        for (size_t i = 1; i + 1 < len; i++) {
            int collider = dir[i - 1] > 0 && dir[i] < 0;
            if (collider || recorded(g, path[i])) continue;
            int dup = 0;
            for (size_t j = 1; j < i; j++) dup |= path[j] == path[i];
            if (dup) continue;
            sb_add(&b, n_hidden ? ", " : " runs through hidden ");
            sb_add(&b, node_name(g, d, path[i]));
            if (path[i] == d->design) via_design = 1;
            if (path[i] == d->noise) via_noise = 1;
            n_hidden++;
        }
        if (via_design)
            sb_add(&b, " (the campaign may set inputs together; say 'design independent' if it "
                   "set them independently)");
        if (via_noise)
            sb_add(&b, " (outputs of one run share its random stream, so this claim rests on an "
                   "assumption; say 'noise independent' for these outputs if their noise is "
                   "independent)");
    }
    if (b.oom) goto fail;
    *out = b.s;
    b.s = NULL;
    rc = COV_OK;
fail:
    free(b.s);
    return rc;
}

/* The listed nodes (ascending) as a set in st's blocks; *steerable = 1 when all are inputs. */
static int to_set(const cov_graph *g, claims_store *st, const size_t *list, size_t m,
                  size_t **set, size_t *k, int *steerable)
{
    *set = set_room(st, m);
    if (*set == NULL) return COV_ENOMEM;
    memcpy(*set, list, m * sizeof **set);
    *k = m;
    *steerable = 1;
    for (size_t i = 0; i < m; i++)
        if (list[i] >= g->n_vars || g->vars[list[i]].role != COV_INPUT) *steerable = 0;
    return COV_OK;
}

static int cmp_node(const void *a, const void *b)
{
    size_t x = *(const size_t *)a, y = *(const size_t *)b;
    return (x > y) - (x < y);
}

/* Is the listed set a separator by Bayes-ball? */
static int check_separates(sep_ctx *sc, const cov_dag *d, size_t x, size_t y, const size_t *z,
                           size_t nz, int *sep)
{
    for (size_t i = 0; i < nz; i++) sc->in_z[z[i]] = 1;
    int rc = cov_dsep_separated_ws(sc->ws, d, x, y, sc->in_z, z, nz, sep);
    for (size_t i = 0; i < nz; i++) sc->in_z[z[i]] = 0;
    return rc;
}

/* Find the sets of one claim. pref lists the preferred set (the outcome's other parents, or the
 * parents of both ends; repeats allowed). When all of it is recorded the test adjusts for all of
 * it: it always separates then (the local Markov property: a node is d-separated from its
 * non-descendants by its parents; Lauritzen et al. 1990), and the extra parents of the outcome
 * lower the residual variance, so the test is more precise than on a smaller set. min_cond is
 * then a minimal subset of it; otherwise both are a minimal separator among all recorded
 * variables. Each reported set is checked by an independent method, the Bayes-ball walk. */
static int separate(const cov_graph *g, const cov_dag *d, size_t x, size_t y, sep_ctx *sc,
                    size_t n_pref, cov_claim *c)
{
    size_t nz = 0, np = 0;
    int rc = COV_ENOMEM, found = 0, all_recorded = 1, sep = 0, steer = 0;
    /* The preferred set without x, y and repeats, ascending. */
    for (size_t i = 0; i < n_pref; i++) {
        size_t v = sc->pref[i];
        if (!recorded(g, v)) all_recorded = 0;
        if (v == x || v == y || sc->allowed[v]) continue;
        sc->allowed[v] = 1;
        sc->pref[np++] = v;
    }
    qsort(sc->pref, np, sizeof *sc->pref, cmp_node);
    if (all_recorded &&
        cov_dsep_minsep_parents_ws(sc->ws, d, x, y, sc->allowed, sc->z, &nz, &found))
        goto fail;
    for (size_t i = 0; i < np; i++) sc->allowed[sc->pref[i]] = 0;
    if (!found) {
        all_recorded = 0;
        if (cov_dsep_minsep_ws(sc->ws, d, x, y, sc->recorded, sc->z, &nz, &found)) goto fail;
    }
    if (!found) {
        c->status = COV_UNTESTABLE;
        c->steerable = 0;
        for (size_t i = 0; i < nz; i++) sc->in_z[sc->z[i]] = 1;
        rc = untestable_reason(g, d, x, y, sc, nz, &c->reason) ? COV_ENOMEM : COV_OK;
        for (size_t i = 0; i < nz; i++) sc->in_z[sc->z[i]] = 0;
        return rc;
    }
    if (check_separates(sc, d, x, y, sc->z, nz, &sep)) goto fail;
    if (!sep) return COV_ENUMERIC;
    if (to_set(g, sc->store, sc->z, nz, &c->min_cond, &c->n_min_cond, &steer)) goto fail;
    if (all_recorded) {
        /* The preferred set holds the checked minimal one and lies within An({x, y}), whose moral
         * graph it shares: separation is monotone there (Lauritzen et al. 1990), so it separates
         * too. Checked here: it holds every member of min_cond. */
        for (size_t i = 0, j = 0; i < nz; i++) {
            while (j < np && sc->pref[j] < sc->z[i]) j++;
            if (j == np || sc->pref[j] != sc->z[i]) return COV_ENUMERIC;
        }
        if (to_set(g, sc->store, sc->pref, np, &c->cond, &c->n_cond, &c->steerable)) goto fail;
    } else {
        if (to_set(g, sc->store, sc->z, nz, &c->cond, &c->n_cond, &c->steerable)) goto fail;
    }
    c->status = COV_TESTABLE;
    rc = COV_OK;
fail:
    return rc;
}

static int push_claim(cov_claims *cl, size_t *cap, cov_claim **out)
{
    if (cl->n == *cap) {
        size_t nc = *cap ? 2 * *cap : 16;
        cov_claim *it = realloc(cl->items, nc * sizeof *it);
        if (it == NULL) return COV_ENOMEM;
        cl->items = it;
        *cap = nc;
    }
    cov_claim *c = &cl->items[cl->n++];
    memset(c, 0, sizeof *c);
    *out = c;
    return COV_OK;
}

/* Position of each variable in a topological order (Kahn 1962), taking among the variables that
 * are ready the one declared first, so the order is fixed by the file. */
static int topo_rank(const cov_graph *g, size_t *rank)
{
    size_t n = g->n_vars;
    size_t *indeg = calloc(n ? n : 1, sizeof *indeg);
    unsigned char *done = calloc(n ? n : 1, 1);
    if (indeg == NULL || done == NULL) {
        free(indeg);
        free(done);
        return COV_ENOMEM;
    }
    for (size_t i = 0; i < g->n_edges; i++) indeg[g->edges[i].to]++;
    /* O(n^2 + n E) is ample for graphs a modeller writes by hand. */
    for (size_t r = 0; r < n; r++) {
        size_t pick = 0;
        while (pick < n && (done[pick] || indeg[pick] != 0)) pick++;
        if (pick == n) break;   /* cannot happen: the parser rejects cycles */
        done[pick] = 1;
        rank[pick] = r;
        for (size_t i = 0; i < g->n_edges; i++)
            if (g->edges[i].from == pick) indeg[g->edges[i].to]--;
    }
    free(indeg);
    free(done);
    return COV_OK;
}

static int adjacent(const cov_dag *d, size_t a, size_t b)
{
    for (size_t k = d->ch_start[a]; k < d->ch_start[a + 1]; k++)
        if (d->ch[k] == b) return 1;
    for (size_t k = d->ch_start[b]; k < d->ch_start[b + 1]; k++)
        if (d->ch[k] == a) return 1;
    return 0;
}

/* A default counted `over range` needs a treatment with a declared range: an output has none. */
static int check_default(const cov_graph *g, const cov_amount *a, size_t x, size_t y, int line,
                         int col, const char *what, cov_error *err)
{
    if (a->per != COV_PER_RANGE || !isnan(cov_amount_per_unit_factor(a, &g->vars[x])))
        return COV_OK;
    char where[512];
    snprintf(where, sizeof where, "%s:%d:%d", g->path ? g->path : "(graph)", line, col);
    return cov_fail(err, COV_EINPUT, where, "found '%s ... over range', which the claim %s -> %s "
                    "takes, but '%s' has no declared range; expected an amount per unit or "
                    "'per STEP' (on the edge itself, or in the default)", what, g->vars[x].name,
                    g->vars[y].name, g->vars[x].name);
}

static void sep_ctx_free(sep_ctx *sc)
{
    cov_dsep_ws_free(sc->ws);
    free(sc->allowed);
    free(sc->in_z);
    free(sc->recorded);
    free(sc->z);
    free(sc->pref);
    free(sc->path);
    free(sc->dir);
}

static int sep_ctx_init(const cov_graph *g, size_t n, sep_ctx *sc)
{
    memset(sc, 0, sizeof *sc);
    sc->allowed = calloc(n, 1);
    sc->in_z = calloc(n, 1);
    sc->recorded = calloc(n, 1);
    sc->z = malloc(n * sizeof *sc->z);
    sc->pref = malloc(2 * n * sizeof *sc->pref);   /* Pa(x) and Pa(y) before repeats go */
    sc->path = malloc((2 * n + 1) * sizeof *sc->path);
    sc->dir = malloc((2 * n + 1) * sizeof *sc->dir);
    if (!sc->allowed || !sc->in_z || !sc->recorded || !sc->z || !sc->pref || !sc->path || !sc->dir
        || cov_dsep_ws_alloc(n, &sc->ws)) {
        sep_ctx_free(sc);
        return COV_ENOMEM;
    }
    for (size_t v = 0; v < n; v++) sc->recorded[v] = (unsigned char)recorded(g, v);
    return COV_OK;
}

int cov_claims_derive(const cov_graph *g, cov_claims **out, cov_error *err)
{
    *out = NULL;
    int with_design = !g->inputs_independent;
    claims_store *st = calloc(1, sizeof *st);
    cov_claims *cl = st != NULL ? &st->pub : NULL;
    cov_dag *full = NULL, *cut = NULL;
    size_t cap = 0, n = g->n_vars + 2;   /* the variables, the design and run-noise nodes */
    size_t *rank = calloc(n, sizeof *rank);
    sep_ctx sc;
    int rc = COV_ENOMEM, have_sc = 0;
    if (cl == NULL || rank == NULL) goto fail;
    if (sep_ctx_init(g, n, &sc)) goto fail;
    have_sc = 1;
    sc.store = st;
    if (cov_dag_build(g, with_design, COV_NO_NODE, &full)) goto fail;

    /* Effect claims, in edge order: the edge is removed so that the set isolates the direct
     * effect; the preferred set is the outcome's other parents. */
    for (size_t e = 0; e < g->n_edges; e++) {
        size_t x = g->edges[e].from, y = g->edges[e].to;
        if (!recorded(g, x) || !recorded(g, y)) continue;
        if (cov_dag_build(g, with_design, e, &cut)) goto fail;
        size_t np = 0;
        for (size_t k = cut->par_start[y]; k < cut->par_start[y + 1]; k++) sc.pref[np++] = cut->par[k];
        cov_claim *c;
        if (push_claim(cl, &cap, &c)) goto fail;
        c->kind = COV_CLAIM_EFFECT;
        c->treatment = x;
        c->outcome = y;
        c->sign = g->edges[e].sign;
        c->shape = g->edges[e].shape;
        c->rests_on_noise = g->vars[x].role == COV_OUTPUT && !(cov_noise_shared(g, x) &&
                                                               cov_noise_shared(g, y));
        c->effect = isnan(g->edges[e].effect.value) ? g->default_effect : g->edges[e].effect;
        if (isnan(g->edges[e].effect.value) &&
            (rc = check_default(g, &g->default_effect, x, y, g->default_effect_line,
                                g->default_effect_col, "default effect", err)))
            goto fail;
        rc = separate(g, cut, x, y, &sc, np, c);
        if (rc) goto fail;
        rc = COV_ENOMEM;
        cov_dag_free(cut);
        cut = NULL;
    }

    /* Absence claims: every non-adjacent recorded pair that is not two inputs, oriented so that
     * the outcome Y is an output and comes later in the topological order (Y is then no ancestor
     * of X). The preferred set is Pa(X) u Pa(Y), the basis set of Shipley (2000), Structural
     * Equation Modeling 7:206-218. Order: by outcome, then treatment, declaration index. The
     * ancestors of each outcome are found once and shared by all its pairs. */
    if (topo_rank(g, rank)) goto fail;
    for (size_t y = 0; y < g->n_vars; y++) {
        if (g->vars[y].role != COV_OUTPUT) continue;
        cov_dsep_ws_fix_outcome(sc.ws, full, y);
        for (size_t x = 0; x < g->n_vars; x++) {
            if (x == y || !recorded(g, x) || adjacent(full, x, y)) continue;
            if (g->vars[x].role == COV_OUTPUT && rank[x] > rank[y]) continue;
            /* Two outputs that share the run's noise are never independent given any recorded
             * set: no absence claim is made between them. */
            if (cov_noise_shared(g, x) && cov_noise_shared(g, y) && full->noise != COV_NO_NODE)
                continue;
            if (isnan(g->margin.value)) {
                char where[512];
                snprintf(where, sizeof where, "%s:%d:%d", g->path ? g->path : "(graph)",
                         g->vars[y].line, g->vars[y].col);
                rc = cov_fail(err, COV_EINPUT, where, "found no edge between '%s' and '%s', which "
                              "makes an absence claim; expected a 'default margin X [sd]' line "
                              "giving the largest effect that still counts as no effect",
                              g->vars[x].name, g->vars[y].name);
                goto fail;
            }
            size_t np = 0;
            for (size_t k = full->par_start[x]; k < full->par_start[x + 1]; k++)
                sc.pref[np++] = full->par[k];
            for (size_t k = full->par_start[y]; k < full->par_start[y + 1]; k++)
                sc.pref[np++] = full->par[k];
            cov_claim *c;
            if (push_claim(cl, &cap, &c)) goto fail;
            c->kind = COV_CLAIM_ABSENCE;
            c->treatment = x;
            c->outcome = y;
            c->sign = 0;
            c->effect = g->margin;
            c->rests_on_noise = g->vars[x].role == COV_OUTPUT;
            if ((rc = check_default(g, &g->margin, x, y, g->margin_line, g->margin_col,
                                    "default margin", err)))
                goto fail;
            rc = separate(g, full, x, y, &sc, np, c);
            if (rc) goto fail;
            rc = COV_ENOMEM;
        }
        cov_dsep_ws_unfix(sc.ws);
    }
    cov_dag_free(full);
    sep_ctx_free(&sc);
    free(rank);
    *out = cl;
    return COV_OK;
fail:
    if (rc == COV_ENOMEM) cov_fail(err, rc, "", "out of memory deriving the claims");
    else if (rc == COV_ENUMERIC)
        cov_fail(err, rc, "", "internal check failed: an adjustment set did not separate");
    cov_dag_free(full);
    cov_dag_free(cut);
    cov_claims_free(cl);
    if (have_sc) sep_ctx_free(&sc);
    free(rank);
    return rc;
}
