/* The survey's plots: their list, the gnuplot script pieces with inline datablocks, the coverage
 * plots (pairs matrix, pair grids) and the run that writes every plot as SVG and PNG.
 * See LICENSE. */
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "coverage/report/report.h"

/* Layout: 900 x 560 (COV_PLOT_H) reads well beside text in a report and on a laptop screen. */
#define PLOT_W 900
#define MAX_PAIR_PLOTS 4       /* cell grids of the sparsest pairs */
#define MATRIX_LABEL_MAX 14    /* beyond this many inputs the matrix cells are too small to label */
#define GRID_LABEL_MAX 144     /* likewise for the cells of a pair's grid */
#define MAX_POINTS 4000        /* runs drawn per pair grid; more are thinned evenly */
#define JITTER 0.32            /* share of a category's cell width runs spread over, each side */

/* The palette, our own. Every pair of colours that must be told apart differs in lightness as well
 * as hue, so the plots survive the common colour-vision deficiencies (deutan, protan, tritan) and
 * greyscale printing; shapes and dash types carry the same distinctions again. The ink and the
 * planned runs' colour are in the module headers under coverage/, the verdict and curve colours in
 * coverage/report/plot_claims.c. */
#define C_RUNS    "#1E3F66"   /* archive runs: navy dots */
#define C_EMPTY   "#BEBEBE"   /* empty cell: mid grey, no hue to confuse */
#define C_FEW     "#F6DDB4"   /* cell with some runs but fewer than the minimum: pale sand */
#define C_EDGE    "#8C8C8C"   /* cell borders */
/* The coverage matrix: a sequential scale whose lightness rises steadily from dark violet (no cell
 * covered) to pale cream (all covered), so it reads the same without colour. */
static const char *const matrix_palette =
    "(0 '#2B1140', 0.25 '#6A2366', 0.5 '#B63E63', 0.75 '#EE8A58', 1 '#FBEBB5')";

enum plot_kind { PLOT_PAIRS, PLOT_PAIR, PLOT_POWER, PLOT_MDE, PLOT_CURVES, PLOT_GRAPH };

typedef struct {
    enum plot_kind kind;
    size_t arg;       /* PLOT_PAIR: the rank among the thinnest pairs (0 = sparsest) */
} plot_ref;

#define MAX_PLOTS (1 + 1 + MAX_PAIR_PLOTS + 3)

/* The sparse pairs drawn cell by cell: up to MAX_PAIR_PLOTS of those not fully covered, worst first;
 * when every pair is covered, the worst one still, so the report always shows where runs lie. */
static size_t pair_plot_count(const cov_findings *f)
{
    const cov_coverage *c = f->coverage;
    if (c == NULL || c->n_pairs == 0 || c->worst == NULL) return 0;
    size_t n = 0;
    while (n < c->n_pairs && n < MAX_PAIR_PLOTS && c->pairs[c->worst[n]].share < 1) n++;
    return n > 0 ? n : 1;
}

/* The plots for f, in report order. */
static size_t plan_plots(const cov_findings *f, plot_ref *refs)
{
    size_t n = 0;
    if (f->graph->n_vars > 0 && f->claims != NULL) refs[n++] = (plot_ref){PLOT_GRAPH, 0};
    if (f->coverage != NULL && f->coverage->n_inputs >= 2 && f->coverage->n_pairs > 0) {
        refs[n++] = (plot_ref){PLOT_PAIRS, 0};
        for (size_t k = 0; k < pair_plot_count(f); k++) refs[n++] = (plot_ref){PLOT_PAIR, k};
    }
    size_t power, mde, curves;
    cov_plot_claim_counts(f, &power, &mde, &curves);
    if (power > 0) refs[n++] = (plot_ref){PLOT_POWER, 0};
    if (mde > 0) refs[n++] = (plot_ref){PLOT_MDE, 0};
    if (curves > 0) refs[n++] = (plot_ref){PLOT_CURVES, 0};
    return n;
}

/* name, cut at a UTF-8 character boundary after COV_PLOT_NAME_SHOWN bytes, with "..." when cut. */
static const char *shown(const char *name, char *buf, size_t size)
{
    size_t len = strlen(name);
    if (len <= COV_PLOT_NAME_SHOWN || size < COV_PLOT_NAME_SHOWN + 4) return name;
    size_t cut = COV_PLOT_NAME_SHOWN;
    while (cut > 0 && ((unsigned char)name[cut] & 0xC0) == 0x80) cut--;
    snprintf(buf, size, "%.*s...", (int)cut, name);
    return buf;
}

const char *cov_plot_var_name(const cov_findings *f, size_t v, char *buf, size_t size)
{
    return shown(f->graph->vars[v].name, buf, size);
}

/* A quantity axis's label: the variable's shown name and, when the graph declares one, its unit
 * in parentheses ("flow (veh/h)"). */
static const char *axis_label(const cov_findings *f, size_t v, char *buf, size_t size)
{
    char nb[COV_PLOT_NAME_SHOWN + 8], ub[COV_PLOT_NAME_SHOWN + 8];
    const char *name = cov_plot_var_name(f, v, nb, sizeof nb);
    const char *unit = cov_var_unit(&f->graph->vars[v]);
    if (*unit == '\0') snprintf(buf, size, "%s", name);
    else snprintf(buf, size, "%s (%s)", name, shown(unit, ub, sizeof ub));
    return buf;
}

static void caption(const cov_findings *f, plot_ref r, char *out, size_t size)
{
    char a[COV_PLOT_NAME_SHOWN + 8], b[COV_PLOT_NAME_SHOWN + 8];
    size_t min_runs = f->coverage ? f->coverage->opt.min_runs : 0;
    switch (r.kind) {
    case PLOT_GRAPH:
        snprintf(out, size,
                 "The graph: arrows are expected effects, thin lines expected absences, each "
                 "drawn by its verdict (blue solid ample, orange dashed underpowered, grey dotted "
                 "untestable); grey boxes are hidden variables. The list below the drawing says "
                 "the same in words.");
        return;
    case PLOT_PAIRS:
        snprintf(out, size,
                 "Pairwise coverage: for every pair of inputs, the share of its cells that hold at "
                 "least %zu runs. Darker is sparser; the outlined pairs are drawn cell by cell "
                 "next.",
                 min_runs);
        return;
    case PLOT_PAIR: {
        const cov_pair *p = &f->coverage->pairs[f->coverage->worst[r.arg]];
        snprintf(out, size,
                 "%s pair %zu: %s by %s. Each cell shows its run count; grey cells hold no run, "
                 "sand cells fewer than %zu; dots are runs%s.",
                 p->share < 1 ? "Sparse" : "Every pair is covered;", r.arg + 1,
                 cov_plot_var_name(f, p->a, a, sizeof a), cov_plot_var_name(f, p->b, b, sizeof b),
                 min_runs,
                 f->n_planned ? ", triangles the planned runs" : "");
        return;
    }
    case PLOT_POWER:
        snprintf(out, size,
                 "Power of each testable claim at its effect of interest, lowest first, with the "
                 "target power dashed. Blue bars are ample, orange bars underpowered.");
        return;
    case PLOT_MDE:
        snprintf(out, size,
                 "Smallest detectable effect of each claim (dot, with its uncertainty range) as a "
                 "multiple of its effect of interest, log scale, one axis for every outcome's "
                 "units. A claim is sized well when its dot lies left of the dashed line at 1.");
        return;
    case PLOT_CURVES:
        snprintf(out, size,
                 "Power of the lowest-powered claims as runs like the current ones are added; the "
                 "large dots mark the runs each needs to reach the target%s.",
                 f->n_planned ? ", the dotted line the planned runs" : "");
        return;
    }
    out[0] = '\0';
}

static const char *plot_base(plot_ref r, char *buf, size_t size)
{
    switch (r.kind) {
    case PLOT_PAIRS: return "pairs";
    case PLOT_PAIR: snprintf(buf, size, "pair-%zu", r.arg + 1); return buf;
    case PLOT_POWER: return "power";
    case PLOT_MDE: return "mde";
    case PLOT_CURVES: return "curves";
    case PLOT_GRAPH: return "graph";
    }
    return "plot";
}

void cov_plots_free(cov_plots *p)
{
    if (p == NULL) return;
    for (size_t i = 0; i < p->n; i++) {
        free(p->items[i].name);
        free(p->items[i].caption);
    }
    free(p->items);
    free(p);
}

int cov_plot_list(const cov_findings *f, cov_plots **out, cov_error *err)
{
    *out = NULL;
    plot_ref refs[MAX_PLOTS];
    size_t n = plan_plots(f, refs);
    cov_plots *p = calloc(1, sizeof *p);
    if (p == NULL) goto fail;
    p->items = calloc(n ? n : 1, sizeof *p->items);
    if (p->items == NULL) goto fail;
    for (size_t i = 0; i < n; i++, p->n++) {
        char base[32], text[1024];
        caption(f, refs[i], text, sizeof text);
        p->items[i].name = strdup(plot_base(refs[i], base, sizeof base));
        p->items[i].caption = strdup(text);
        if (p->items[i].name == NULL || p->items[i].caption == NULL) {
            p->n++;
            goto fail;
        }
    }
    *out = p;
    return COV_OK;
fail:
    cov_plots_free(p);
    return cov_fail(err, COV_ENOMEM, "", "out of memory listing the plots");
}

/* ---- script pieces --------------------------------------------------------------------------- */

void cov_plot_num(FILE *s, double x)
{
    if (isfinite(x)) fprintf(s, "%.9g", x);
    else fputs("NaN", s);
}

/* "set output 'DIR/BASE.EXT'". A relative dir gets "./" in front, because gnuplot reads an output
 * name starting with '|' as a command to pipe into and one starting with '~' as a home
 * directory. */
static void set_output(FILE *s, const char *dir, const char *base, const char *ext)
{
    size_t len = strlen(dir) + strlen(base) + strlen(ext) + 8;
    char *path = malloc(len);
    fputs("set output ", s);
    if (path != NULL) {
        snprintf(path, len, "%s%s/%s.%s", dir[0] == '/' ? "" : "./", dir, base, ext);
        cov_gp_quote_path(s, path);
    } else {
        cov_gp_quote(s, "");   /* the write fails in gnuplot; the missing file is then reported */
    }
    fputc('\n', s);
    free(path);
}

/* The common start of every plot. height in pixels. */
void cov_plot_start(FILE *s, int height)
{
    fprintf(s, "reset\nset encoding utf8\nset terminal svg size %d,%d fixed noenhanced "
               "font 'DejaVu Sans,12' background '#FFFFFF'\n", PLOT_W, height);
    fputs("set border lc rgb '" COV_PLOT_INK "'\nset tics textcolor rgb '" COV_PLOT_INK "'\n", s);
}

/* Write the plot command held in `plot` to both files. */
void cov_plot_finish(FILE *s, const char *dir, const char *base, int height, const char *plot)
{
    set_output(s, dir, base, "svg");
    fputs(plot, s);
    fprintf(s, "set output\nset terminal pngcairo size %d,%d noenhanced font 'DejaVu Sans,10' "
               "background '#FFFFFF'\n", PLOT_W, height);
    set_output(s, dir, base, "png");
    fputs("replot\nset output\n", s);
}

/* "set title 'line1'" with an optional second line of our own words. */
void cov_plot_title(FILE *s, const char *line1, const char *line2)
{
    fputs("set title ", s);
    cov_gp_quote(s, line1);
    if (line2 != NULL) {
        fputs(".\"\\n\".", s);
        cov_gp_quote(s, line2);
    }
    fputs(" font ',13'\n", s);
}

static void set_label_cmd(FILE *s, const char *what, const char *text)
{
    fprintf(s, "set %s ", what);
    cov_gp_quote(s, text);
    fputc('\n', s);
}

/* ---- 1. the pairwise coverage matrix --------------------------------------------------------- */

static long input_pos(const cov_coverage *c, size_t var)
{
    for (size_t i = 0; i < c->n_inputs; i++)
        if (c->inputs[i] == var) return (long)i;
    return -1;
}

static int plot_pairs(FILE *s, const cov_findings *f, const char *dir)
{
    const cov_coverage *c = f->coverage;
    size_t n = c->n_inputs;
    char buf[COV_PLOT_NAME_SHOWN + 8], line[256];
    fputs("$pairs << EOD\n", s);
    for (size_t k = 0; k < c->n_pairs; k++) {
        long i = input_pos(c, c->pairs[k].a), j = input_pos(c, c->pairs[k].b);
        if (i < 0 || j < 0) continue;
        if (i > j) { long t = i; i = j; j = t; }
        double share = c->pairs[k].share;
        /* Text colour: white on the dark half of the scale, black on the light half. */
        fprintf(s, "%ld %ld ", i, j);
        cov_plot_num(s, share);
        fprintf(s, " %d\n", share < 0.55 ? 0xFFFFFF : 0x000000);
    }
    fputs("EOD\n$outlined << EOD\n", s);
    for (size_t k = 0; k < pair_plot_count(f); k++) {
        const cov_pair *p = &c->pairs[c->worst[k]];
        long i = input_pos(c, p->a), j = input_pos(c, p->b);
        if (i > j) { long t = i; i = j; j = t; }
        fprintf(s, "%ld %ld %zu\n", i, j, k + 1);
    }
    fputs("EOD\n", s);
    cov_plot_start(s, COV_PLOT_H);
    snprintf(line, sizeof line, "Pairwise coverage: share of each pair's cells with at least %zu "
             "runs", c->opt.min_runs);
    cov_plot_title(s, line,
              "outlined and numbered: the sparsest pairs, drawn cell by cell in the next plots");
    fputs("set size ratio -1\nset xtics scale 0 rotate by 40 right (", s);
    for (size_t i = 0; i + 1 < n; i++) {
        if (i) fputs(", ", s);
        cov_gp_quote_tic(s, cov_plot_var_name(f, c->inputs[i], buf, sizeof buf));
        fprintf(s, " %zu", i);
    }
    fputs(")\nset ytics scale 0 (", s);
    for (size_t i = 1; i < n; i++) {
        if (i > 1) fputs(", ", s);
        cov_gp_quote_tic(s, cov_plot_var_name(f, c->inputs[i], buf, sizeof buf));
        fprintf(s, " %zu", i);
    }
    fprintf(s, ")\nset xrange [-0.5:%zu.5]\nset yrange [%zu.5:0.5]\n", n - 2, n - 1);
    fprintf(s, "set cbrange [0:1]\nset palette defined %s\n", matrix_palette);
    fputs("set cbtics ('0%%' 0, '25%%' 0.25, '50%%' 0.5, '75%%' 0.75, '100%%' 1)\n", s);
    fputs("set cblabel 'share of cells covered'\nunset key\nset style fill solid 1 noborder\n", s);
    fputs("set xlabel 'input'\nset ylabel 'input'\n", s);
    char plot[1024];
    snprintf(plot, sizeof plot,
             "plot $pairs using 1:2:(0.5):(0.5):3 with boxxyerror fc palette notitle%s, \\\n"
             "  $outlined using 1:2:(0.45):(0.45) with boxxyerror fs empty border lw 4 "
             "lc rgb '#000000' notitle, \\\n"
             "  $outlined using 1:2:(0.41):(0.41) with boxxyerror fs empty border lw 1.5 "
             "lc rgb '#FFFFFF' notitle, \\\n"
             "  $outlined using ($1-%s):($2-%s):(sprintf('%%d', $3)) with labels "
             "font ',%d' tc rgb '#000000' boxed notitle\n",
             n <= MATRIX_LABEL_MAX
                 ? ", \\\n  $pairs using 1:2:(sprintf('%.0f%%', 100*$3)):4 with labels "
                   "tc rgb variable notitle"
                 : "",
             /* In a large matrix the number covers its small cell, which is outlined anyway. */
             n <= MATRIX_LABEL_MAX ? "0.36" : "0", n <= MATRIX_LABEL_MAX ? "0.3" : "0",
             n <= MATRIX_LABEL_MAX ? 9 : 7);
    fputs("set style textbox opaque fc rgb '#FFFFFF' noborder margins 1,1\n", s);
    cov_plot_finish(s, dir, "pairs", COV_PLOT_H, plot);
    return COV_OK;
}

/* ---- 2. the cell grid of one sparse pair ------------------------------------------------------- */

/* How one input's bins sit on its axis. */
typedef struct {
    int categorical;      /* bool or level set: bins are the categories 0..L-1 */
    int per_value;        /* integer with one bin per value */
    int integer;          /* integer values in wider bins */
    double lo, width;     /* bin k spans lo + k*width .. lo + (k+1)*width */
    size_t nbins;
} axis_geom;

static axis_geom geometry(const cov_var *v, size_t nbins)
{
    axis_geom g = {0, 0, v->type == COV_INTEGER, 0.0, 1.0, nbins};
    if (v->type == COV_BOOL || v->type == COV_LEVELS) {
        g.categorical = 1;
        g.lo = -0.5;
    } else if (v->type == COV_INTEGER && fabs(v->hi - v->lo + 1 - (double)nbins) < 0.5) {
        g.per_value = 1;
        g.integer = 0;
        g.lo = v->lo - 0.5;
    } else {
        g.lo = v->lo;
        g.width = (v->hi - v->lo) / (double)nbins;
    }
    return g;
}

/* A reproducible number in [-1, 1) for run i on axis `axis` (splitmix64 finaliser, Steele, Lea &
 * Flood 2014), so the jitter looks random but the plots are the same from one survey to the
 * next. */
static double jitter(size_t i, unsigned axis)
{
    uint64_t z = (uint64_t)i * 2 + axis + 0x9E3779B97F4A7C15ULL;
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ULL;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBULL;
    z ^= z >> 31;
    return (double)(z >> 11) / 4503599627370496.0 - 1.0;   /* 2^52 */
}

/* Where run i's value x is drawn. Categories and single values spread over their cell; an integer
 * in a wider bin spreads over the part of its bin within 0.4 of it, so that runs of one value do
 * not pile on a line and each dot stays in the cell it is counted in (coverage.h's binning). */
static double place(axis_geom g, double x, size_t i, unsigned axis)
{
    if (g.categorical || g.per_value) return x + JITTER * jitter(i, axis);
    if (!g.integer || !(g.width > 0)) return x;
    double k = floor((x - g.lo) / g.width);
    if (k > (double)g.nbins - 1) k = (double)g.nbins - 1;
    if (k < 0) k = 0;
    double lo = fmax(g.lo + k * g.width, x - 0.4), hi = fmin(g.lo + (k + 1) * g.width, x + 0.4);
    if (!(hi > lo)) return x;
    return lo + (hi - lo) * (0.5 + 0.45 * jitter(i, axis));
}

static void axis_tics(FILE *s, const char *axis, const cov_var *v, axis_geom g, size_t nbins)
{
    if (g.categorical) {
        fprintf(s, "set %stics scale 0 (", axis);
        for (size_t k = 0; k < nbins; k++) {
            if (k) fputs(", ", s);
            char buf[COV_PLOT_NAME_SHOWN + 8];
            const char *name = v->type == COV_BOOL ? (k ? "true" : "false")
                             : k < v->n_levels ? shown(v->levels[k], buf, sizeof buf) : "?";
            cov_gp_quote_tic(s, name);
            fprintf(s, " %zu", k);
        }
        fputs(")\n", s);
    } else if (g.per_value) {
        fprintf(s, "set %stics 1 scale 0\n", axis);
    } else {
        /* Tics on the bin edges, so each cell is read between two numbers. */
        fprintf(s, "set %stics ", axis);
        cov_plot_num(s, g.lo);
        fputs(", ", s);
        cov_plot_num(s, g.width * (nbins > 5 ? 2 : 1));
        fprintf(s, " format '%%.3g'\n");
    }
    fprintf(s, "set %srange [", axis);
    cov_plot_num(s, g.lo);
    fputc(':', s);
    cov_plot_num(s, g.lo + g.width * (double)nbins);
    fputs("]\n", s);
}

static int plot_pair(FILE *s, const cov_findings *f, const char *dir, size_t rank)
{
    const cov_coverage *c = f->coverage;
    const cov_pair *p = &c->pairs[c->worst[rank]];
    const cov_var *va = &f->graph->vars[p->a], *vb = &f->graph->vars[p->b];
    axis_geom ga = geometry(va, p->na), gb = geometry(vb, p->nb);
    size_t min_runs = c->opt.min_runs;

    fprintf(s, "$cells%zu << EOD\n", rank);
    for (size_t i = 0; i < p->na; i++)
        for (size_t j = 0; j < p->nb; j++) {
            size_t count = p->count[i * p->nb + j];
            cov_plot_num(s, ga.lo + ga.width * ((double)i + 0.5));
            fputc(' ', s);
            cov_plot_num(s, gb.lo + gb.width * ((double)j + 0.5));
            fputc(' ', s);
            cov_plot_num(s, ga.width / 2);
            fputc(' ', s);
            cov_plot_num(s, gb.width / 2);
            fprintf(s, " %zu %d\n", count, count == 0 ? 0 : count < min_runs ? 1 : 2);
        }
    fprintf(s, "EOD\n$runs%zu << EOD\n", rank);
    size_t shown_runs = 0, present = 0;
    const cov_data *d = f->data;
    if (d != NULL && d->col[p->a] != NULL && d->col[p->b] != NULL) {
        for (size_t i = 0; i < d->n_runs; i++)
            present += isfinite(d->col[p->a][i]) && isfinite(d->col[p->b][i]);
        size_t stride = present > MAX_POINTS ? (present + MAX_POINTS - 1) / MAX_POINTS : 1;
        for (size_t i = 0, seen = 0; i < d->n_runs; i++) {
            double x = d->col[p->a][i], y = d->col[p->b][i];
            if (!isfinite(x) || !isfinite(y)) continue;
            if (seen++ % stride != 0) continue;
            cov_plot_num(s, place(ga, x, i, 0));
            fputc(' ', s);
            cov_plot_num(s, place(gb, y, i, 1));
            fputc('\n', s);
            shown_runs++;
        }
    }
    fprintf(s, "EOD\n$planned%zu << EOD\n", rank);
    size_t nv = f->graph->n_vars, n_plan = 0;
    for (size_t i = 0; f->planned != NULL && i < f->n_planned; i++) {
        double x = f->planned[i * nv + p->a], y = f->planned[i * nv + p->b];
        if (!isfinite(x) || !isfinite(y)) continue;
        n_plan++;
        cov_plot_num(s, place(ga, x, i + 7919, 0));   /* another stream than the runs' */
        fputc(' ', s);
        cov_plot_num(s, place(gb, y, i + 7919, 1));
        fputc('\n', s);
    }
    fputs("EOD\n", s);

    cov_plot_start(s, COV_PLOT_H);
    char na[COV_PLOT_NAME_SHOWN + 8], nb[COV_PLOT_NAME_SHOWN + 8], line[512], line2[256];
    size_t covered = 0, few = 0;
    for (size_t k = 0; k < p->na * p->nb; k++) {
        covered += p->count[k] >= min_runs;
        few += p->count[k] > 0 && p->count[k] < min_runs;
    }
    const char *name_a = cov_plot_var_name(f, p->a, na, sizeof na);
    const char *name_b = cov_plot_var_name(f, p->b, nb, sizeof nb);
    snprintf(line, sizeof line, "%s %zu: %s by %s", p->share < 1 ? "Sparse pair" : "Pair", rank + 1,
             name_a, name_b);
    snprintf(line2, sizeof line2, "%zu of %zu cells hold at least %zu runs; %zu cells are empty",
             covered, p->na * p->nb, min_runs, p->n_empty);
    cov_plot_title(s, line, line2);
    axis_tics(s, "x", va, ga, p->na);
    axis_tics(s, "y", vb, gb, p->nb);
    char la[2 * COV_PLOT_NAME_SHOWN + 32], lb[2 * COV_PLOT_NAME_SHOWN + 32];
    set_label_cmd(s, "xlabel", axis_label(f, p->a, la, sizeof la));
    set_label_cmd(s, "ylabel", axis_label(f, p->b, lb, sizeof lb));
    fputs("set key below horizontal height 1.5\n", s);
    fputs("set style textbox opaque fc rgb '#FFFFFF' noborder margins 1,0.5\n", s);
    char runs_title[128], few_title[128], plan_title[128];
    if (shown_runs < present)
        snprintf(runs_title, sizeof runs_title, "runs (one in %zu of %zu shown)",
                 (present + MAX_POINTS - 1) / MAX_POINTS, present);
    else
        snprintf(runs_title, sizeof runs_title, "runs in the archive (%zu)", present);
    if (few > 0) snprintf(few_title, sizeof few_title, "title 'fewer than %zu runs'", min_runs);
    else snprintf(few_title, sizeof few_title, "notitle");
    snprintf(plan_title, sizeof plan_title, "planned runs (%zu)", n_plan);
    /* Dots fade when there are many, so dense regions still show their density. */
    const char *dot = shown_runs > 400 ? "#A01E3F66" : shown_runs > 100 ? "#401E3F66" : C_RUNS;
    char plot[2048];
    int len = snprintf(plot, sizeof plot,
        "plot $cells%zu using ($6==0 ? $1 : NaN):2:3:4 with boxxyerror fs solid 1 border lc rgb '"
        C_EDGE "' fc rgb '" C_EMPTY "' %s, \\\n"
        "  $cells%zu using ($6==1 ? $1 : NaN):2:3:4 with boxxyerror fs solid 1 border lc rgb '"
        C_EDGE "' fc rgb '" C_FEW "' %s, \\\n"
        "  $cells%zu using ($6==2 ? $1 : NaN):2:3:4 with boxxyerror fs empty border lw 1 lc rgb '"
        C_EDGE "' notitle",
        rank, p->n_empty > 0 ? "title 'no runs'" : "notitle", rank, few_title, rank);
    /* An empty datablock makes gnuplot warn, so the runs and the plan are drawn only when there. */
    if (shown_runs > 0)
        len += snprintf(plot + len, sizeof plot - (size_t)len,
                        ", \\\n  $runs%zu using 1:2 with points pt 7 ps 0.5 lc rgb '%s' title '%s'",
                        rank, dot, runs_title);
    if (n_plan > 0)
        len += snprintf(plot + len, sizeof plot - (size_t)len,
                        ", \\\n  $planned%zu using 1:2 with points pt 8 ps 1.3 lw 2 "
                        "lc rgb '" COV_PLOT_PLANNED "' title '%s'", rank, plan_title);
    if (p->na * p->nb <= GRID_LABEL_MAX)
        snprintf(plot + len, sizeof plot - (size_t)len,
                 ", \\\n  $cells%zu using ($1-$3):($2+$4):(sprintf('%%d', $5)) with labels left "
                 "offset 0.3,-0.6 boxed font ',9' notitle\n", rank);
    else
        snprintf(plot + len, sizeof plot - (size_t)len, "\n");
    char base[32];
    cov_plot_finish(s, dir, plot_base((plot_ref){PLOT_PAIR, rank}, base, sizeof base), COV_PLOT_H,
                    plot);
    return COV_OK;
}

/* ---- all of them ----------------------------------------------------------------------------- */

int cov_plot_all(const cov_findings *f, const char *dir, FILE *note, cov_error *err)
{
    plot_ref refs[MAX_PLOTS];
    size_t n = plan_plots(f, refs);
    if (n == 0) return COV_OK;
    for (const char *p = dir; *p; p++)
        if ((unsigned char)*p < 0x20)
            return cov_fail(err, COV_ENOPLOT, "",
                            "the report directory's name holds a control character, which cannot "
                            "be passed to gnuplot");
    char *script = NULL;
    size_t len = 0;
    FILE *s = open_memstream(&script, &len);
    if (s == NULL) return cov_fail(err, COV_ENOMEM, "", "out of memory writing the plots");
    int rc = COV_OK;
    for (size_t i = 0; i < n && rc == COV_OK; i++) {
        switch (refs[i].kind) {
        case PLOT_PAIRS: rc = plot_pairs(s, f, dir); break;
        case PLOT_PAIR: rc = plot_pair(s, f, dir, refs[i].arg); break;
        case PLOT_POWER: rc = cov_plot_power(s, f, dir); break;
        case PLOT_MDE: rc = cov_plot_mde(s, f, dir); break;
        case PLOT_CURVES: rc = cov_plot_curves(s, f, dir); break;
        case PLOT_GRAPH: rc = cov_plot_graph(s, f, dir); break;
        }
    }
    if (fclose(s) != 0 && rc == COV_OK) rc = COV_ENOMEM;
    if (rc != COV_OK) {
        free(script);
        return cov_fail(err, COV_ENOMEM, "", "out of memory writing the plots");
    }
    rc = cov_gp_run(script, len, note, err);
    free(script);
    if (rc != COV_OK) return rc;
    /* gnuplot reports a file it cannot open as an error, but check: a report must not point at
     * a plot that is not there. */
    for (size_t i = 0; i < n; i++) {
        static const char *const ext[2] = {"svg", "png"};
        char base[32], path[4096];
        for (int e = 0; e < 2; e++) {
            snprintf(path, sizeof path, "%s/%s.%s", dir, plot_base(refs[i], base, sizeof base),
                     ext[e]);
            struct stat st;
            if (stat(path, &st) != 0 || st.st_size == 0)
                return cov_fail(err, COV_ENOPLOT, "", "gnuplot did not write %s", path);
            if (e == 0 && (rc = cov_svg_make_wellformed(path, err)) != COV_OK) return rc;
        }
    }
    return COV_OK;
}
