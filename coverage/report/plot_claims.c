/* The survey's claim plots: power bars, MDE beside the effect of interest, power over added runs.
 * See LICENSE. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "coverage/report/report.h"

/* Row plots (power, MDE) show at most this many claims, the worst ones, so the labels stay legible;
 * each row takes ROW_PX pixels beyond the fixed margins. */
#define PLOT_MAX_ROWS 30
#define ROW_PX 17
#define ROW_MARGIN_PX 150
#define MAX_CURVES 4           /* power curves of the weakest claims */
#define CURVE_STEPS 80         /* points per power curve: smooth at 900 px */
#define CURVE_HEADROOM 1.3     /* the x axis runs 30% past the largest need, to show the plateau */
#define CURVE_LOG_RATIO 8.0    /* needs further apart than this share one plot on a log axis */
#define CURVES_H 680           /* the curves' legend takes one row per entry, up to seven */

/* Verdict colours, chosen by the palette's rules in coverage/report/plot.c. */
#define C_AMPLE   "#2B5C9E"   /* ample: dark blue, CIE L* about 39 */
#define C_UNDER   "#E3872D"   /* underpowered: orange, L* about 65; blue against orange survives deutan and
                                 protan vision, the lightness gap tritan vision and grey */
/* Power curves: navy, vermilion, sky, gold; L* about 25, 48, 67, 82; distinct dashes and points. */
static const char *const curve_colour[MAX_CURVES] = {"#1B3A6B", "#C8471B", "#5AA9D6", "#E9C46A"};
static const int curve_dash[MAX_CURVES] = {1, 2, 4, 5};
static const int curve_point[MAX_CURVES] = {7, 5, 9, 13};

/* A claim's row: its assessment index and the key it is sorted by. */
typedef struct {
    size_t idx;
    double key;
} row_key;

static int by_key_up(const void *pa, const void *pb)
{
    const row_key *a = pa, *b = pb;
    if (a->key < b->key) return -1;
    if (a->key > b->key) return 1;
    return a->idx < b->idx ? -1 : (a->idx > b->idx);
}

static int testable(const cov_assessment *it)
{
    return it->verdict != COV_BLIND && isfinite(it->power);
}

/* Testable claims sorted by power, lowest first (mde = 0), or by MDE over effect of interest,
 * highest first (mde = 1). Caller frees. */
static row_key *claim_rows(const cov_findings *f, int mde, size_t *n)
{
    *n = 0;
    if (f->assess == NULL || f->assess->n == 0) return NULL;
    row_key *rows = malloc(f->assess->n * sizeof *rows);
    if (rows == NULL) return NULL;
    for (size_t i = 0; i < f->assess->n; i++) {
        const cov_assessment *it = &f->assess->items[i];
        if (!testable(it) || it->claim >= f->claims->n) continue;
        if (mde && !(isfinite(it->effect_raw) && it->effect_raw > 0)) continue;
        double key = it->power;
        if (mde) key = isfinite(it->mde) ? -(it->mde / it->effect_raw) : -INFINITY;
        rows[(*n)++] = (row_key){i, key};
    }
    qsort(rows, *n, sizeof *rows, by_key_up);
    return rows;
}

/* The claims each row plot would show: testable ones (power), those with a positive effect of
 * interest (MDE), those whose test cov_assess_design can give again (curves). */
void cov_plot_claim_counts(const cov_findings *f, size_t *power, size_t *mde, size_t *curves)
{
    *power = *mde = *curves = 0;
    if (f->assess == NULL || f->claims == NULL) return;
    for (size_t i = 0; i < f->assess->n; i++) {
        const cov_assessment *it = &f->assess->items[i];
        if (!testable(it) || it->claim >= f->claims->n) continue;
        (*power)++;
        *mde += isfinite(it->effect_raw) && it->effect_raw > 0;
        pw_design d;
        double pw;
        *curves += cov_assess_design(f->graph, f->claims, f->assess, it->claim, &d) == COV_OK &&
                   pw_power(&d, &pw) == PW_OK;
    }
}

/* The claim in the compact notation without its adjustment set (cov_claim_arrow). */
static void claim_label(const cov_findings *f, size_t claim, char *out, size_t size)
{
    const cov_claim *c = &f->claims->items[claim];
    char a[COV_PLOT_NAME_SHOWN + 8], b[COV_PLOT_NAME_SHOWN + 8];
    snprintf(out, size, "%s %s %s", cov_plot_var_name(f, c->treatment, a, sizeof a),
             cov_claim_arrow(c->kind),
             cov_plot_var_name(f, c->outcome, b, sizeof b));
}

/* ---- 3. power bars --------------------------------------------------------------------------- */

static int row_height(size_t rows)
{
    int h = ROW_MARGIN_PX + ROW_PX * (int)rows;
    return h > COV_PLOT_H ? h : COV_PLOT_H;
}

/* ytics naming each row by its claim. */
static void row_tics(FILE *s, const cov_findings *f, const row_key *rows, size_t n,
                     const char *suffix_nan_mde)
{
    fputs("set ytics scale 0 (", s);
    for (size_t r = 0; r < n; r++) {
        const cov_assessment *it = &f->assess->items[rows[r].idx];
        char label[3 * COV_PLOT_NAME_SHOWN + 64];
        claim_label(f, it->claim, label, sizeof label);
        if (suffix_nan_mde != NULL && !isfinite(it->mde))
            strncat(label, suffix_nan_mde, sizeof label - strlen(label) - 1);
        else if (suffix_nan_mde != NULL && !(it->mde > 0))   /* an exact fit: a log axis has no 0 */
            strncat(label, " (MDE 0: no noise)", sizeof label - strlen(label) - 1);
        if (r) fputs(", ", s);
        cov_gp_quote_tic(s, label);
        fprintf(s, " %zu", r + 1);
    }
    fprintf(s, ")\nset yrange [%zu.5:0.5]\n", n);
}

/* Legend entries for the verdict colours present among the shown rows: "ample" and "underpowered",
 * each drawn as `sample` (a gnuplot style) and titled with `prefix` in front. */
static void verdict_keys(char *out, size_t size, const cov_findings *f, const row_key *rows,
                         size_t n, const char *sample, const char *prefix)
{
    int ample = 0, under = 0;
    for (size_t r = 0; r < n; r++) {
        if (f->assess->items[rows[r].idx].verdict == COV_AMPLE) ample = 1;
        else under = 1;
    }
    int len = 0;
    out[0] = '\0';
    if (ample)
        len = snprintf(out, size, ", \\\n  keyentry with %s lc rgb '" C_AMPLE "' title '%sample'",
                       sample, prefix);
    if (under && len >= 0 && (size_t)len < size)
        snprintf(out + len, size - (size_t)len,
                 ", \\\n  keyentry with %s lc rgb '" C_UNDER "' title '%sunderpowered'", sample, prefix);
}

static void rows_title(FILE *s, const char *what, size_t shown_n, size_t total, const char *line2)
{
    char line[256];
    if (shown_n < total)
        snprintf(line, sizeof line, "%s (the %zu worst of %zu)", what, shown_n, total);
    else snprintf(line, sizeof line, "%s", what);
    cov_plot_title(s, line, line2);
}

int cov_plot_power(FILE *s, const cov_findings *f, const char *dir)
{
    size_t total;
    row_key *rows = claim_rows(f, 0, &total);
    if (rows == NULL) return COV_ENOMEM;
    size_t n = total < PLOT_MAX_ROWS ? total : PLOT_MAX_ROWS;
    double target = f->assess->opt.target;
    fputs("$power << EOD\n", s);
    for (size_t r = 0; r < n; r++) {
        const cov_assessment *it = &f->assess->items[rows[r].idx];
        fprintf(s, "%zu ", r + 1);
        cov_plot_num(s, it->power);
        fputc(' ', s);
        cov_plot_num(s, isfinite(it->power_lo) ? it->power_lo : it->power);
        fputc(' ', s);
        cov_plot_num(s, isfinite(it->power_hi) ? it->power_hi : it->power);
        fprintf(s, " %d\n", it->verdict == COV_AMPLE ? 0x2B5C9E : 0xE3872D);
    }
    fputs("EOD\n", s);
    int h = row_height(n);
    cov_plot_start(s, h);
    rows_title(s, "Power of each testable claim at its effect of interest, lowest first", n, total,
               NULL);
    row_tics(s, f, rows, n, NULL);
    /* Room right of 1 for the value printed after each whisker. */
    fputs("set xrange [0:1.1]\nset xtics 0, 0.1, 1 format '%.1f'\n", s);
    fputs("set grid xtics lc rgb '#DDDDDD'\n", s);
    fputs("set xlabel 'power: the chance the test detects the effect of interest'\n", s);
    fputs("set key below horizontal maxcols 2 height 1.5\nset errorbars small\n", s);
    fputs("set arrow 1 from ", s);
    cov_plot_num(s, target);
    fputs(", graph 0 to ", s);
    cov_plot_num(s, target);
    fputs(", graph 1 nohead dt 2 lw 2 lc rgb '" COV_PLOT_INK "' front\n", s);
    char plot[1536], keys[512];
    verdict_keys(keys, sizeof keys, f, rows, n, "boxes fs solid 1 noborder", "");
    snprintf(plot, sizeof plot,
             "plot $power using ($2/2):1:($2/2):(0.36):5 with boxxyerror fs solid 1 noborder "
             "lc rgb variable notitle, \\\n"
             "  $power using 2:1:3:4 with xerrorbars pt 7 ps 0.4 lw 1.2 lc rgb '" COV_PLOT_INK
             "' title 'uncertainty range', \\\n"
             "  $power using 4:1:(sprintf('%%.2f', $2)) with labels left offset 0.6,0 font ',9' "
             "notitle%s, \\\n"
             "  keyentry with lines dt 2 lw 2 lc rgb '" COV_PLOT_INK
             "' title 'target power %.2f'\n",
             keys, target);
    cov_plot_finish(s, dir, "power", h, plot);
    free(rows);
    return COV_OK;
}

/* ---- 4. MDE beside the effect of interest ---------------------------------------------------- */

int cov_plot_mde(FILE *s, const cov_findings *f, const char *dir)
{
    size_t total;
    row_key *rows = claim_rows(f, 1, &total);
    if (rows == NULL && total > 0) return COV_ENOMEM;
    size_t n = total < PLOT_MAX_ROWS ? total : PLOT_MAX_ROWS;
    /* Each claim's MDE as a multiple of its own effect of interest: one unitless axis for claims
     * whose outcomes have different units, with the line at 1 where the two are equal. */
    double lo = 1, hi = 1;
    fputs("$mde << EOD\n", s);
    for (size_t r = 0; r < n; r++) {
        const cov_assessment *it = &f->assess->items[rows[r].idx];
        double e = it->effect_raw > 0 ? it->effect_raw : NAN;
        double v[3] = {it->mde / e, it->mde_lo / e, it->mde_hi / e};
        for (int k = 0; k < 3; k++)
            if (isfinite(v[k]) && v[k] > 0) {
                lo = fmin(lo, v[k]);
                hi = fmax(hi, v[k]);
            }
        double mlo = isfinite(v[1]) && v[1] > 0 ? v[1] : v[0];
        double mhi = isfinite(v[2]) ? v[2] : v[0];
        fprintf(s, "%zu 1 ", r + 1);
        cov_plot_num(s, v[0] > 0 ? v[0] : NAN);
        fputc(' ', s);
        cov_plot_num(s, mlo > 0 ? mlo : NAN);
        fputc(' ', s);
        cov_plot_num(s, mhi > 0 ? mhi : NAN);
        fprintf(s, " %d\n", it->verdict == COV_AMPLE ? 0x2B5C9E : 0xE3872D);
    }
    fputs("EOD\n", s);
    if (!(lo < hi)) {   /* every ratio 1, or none: a decade either side */
        lo = 0.1;
        hi = 10;
    }
    int h = row_height(n);
    cov_plot_start(s, h);
    rows_title(s, "Smallest detectable effect as a multiple of the effect of interest", n, total,
               "a claim is sized well when its dot lies left of the line at 1");
    row_tics(s, f, rows, n, " (no MDE)");
    fputs("set logscale x\nset xrange [", s);
    cov_plot_num(s, lo / 1.6);
    fputc(':', s);
    cov_plot_num(s, hi * 1.6);
    fputs("]\nset grid xtics lc rgb '#E4E4E4'\nset xtics (", s);
    /* Tics at 1, 2 and 5 times each power of ten over a short range (a log axis labelled only at
     * decades is hard to read off), at decades over a longer one, and at every other decade beyond
     * that, so labels never run into each other at 900 px. */
    double x0 = lo / 1.6, x1 = hi * 1.6, decades = log10(x1 / x0);
    int per_decade = decades <= 2.5 ? 3 : 1;
    double step = decades > 8 ? 100 : 10;
    int first = 1;
    for (double dec = pow(10, floor(log10(x0))); dec <= x1; dec *= step)
        for (int m = 0; m < per_decade; m++) {
            double t = dec * (m == 0 ? 1 : m == 1 ? 2 : 5);
            if (t < x0 || t > x1) continue;
            fputs(first ? "" : ", ", s);
            fprintf(s, "%.6g", t);
            first = 0;
        }
    fputs(") format '%g'\n", s);
    fputs("set xlabel 'MDE / effect of interest (log scale; unitless)'\n", s);
    fputs("set arrow 1 from 1, graph 0 to 1, graph 1 nohead lw 1.5 dt 2 lc rgb '" COV_PLOT_INK
          "'\nset label 1 'MDE = effect of interest' at 1, graph 1.02 center tc rgb '"
          COV_PLOT_INK "'\n", s);
    fputs("set key below horizontal height 1.5\nset errorbars small\n", s);
    char plot[1536], keys[512];
    verdict_keys(keys, sizeof keys, f, rows, n, "points pt 7 ps 1.1", "MDE, ");
    snprintf(plot, sizeof plot,
             "plot $mde using 2:1:($3-$2):(0) with vectors nohead lw 5 lc rgb '#DADADA' "
             "notitle, \\\n"
             "  $mde using 3:1:4:5:6 with xerrorbars pt 7 ps 1.1 lw 1.2 lc rgb variable "
             "notitle%s\n", keys);
    cov_plot_finish(s, dir, "mde", h, plot);
    free(rows);
    return COV_OK;
}

/* ---- 5. power over added runs ---------------------------------------------------------------- */

int cov_plot_curves(FILE *s, const cov_findings *f, const char *dir)
{
    size_t total;
    row_key *rows = claim_rows(f, 0, &total);
    if (rows == NULL) return COV_ENOMEM;
    double target = f->assess->opt.target;
    pw_design des[MAX_CURVES];
    size_t pick[MAX_CURVES], n = 0;
    for (size_t r = 0; r < total && n < MAX_CURVES; r++) {
        const cov_assessment *it = &f->assess->items[rows[r].idx];
        if (cov_assess_design(f->graph, f->claims, f->assess, it->claim, &des[n]) != COV_OK)
            continue;
        double p0;
        if (pw_power(&des[n], &p0) != PW_OK) continue;
        pick[n++] = rows[r].idx;
    }
    /* The x axis: past the largest finite need, or the current size when none is needed. */
    double need_max = 0, need_min = INFINITY, n_max = 0;
    for (size_t k = 0; k < n; k++) {
        const cov_assessment *it = &f->assess->items[pick[k]];
        double add = it->runs_needed - des[k].n;
        if (isfinite(add) && add > need_max) need_max = add;
        if (isfinite(add) && add >= 1 && add < need_min) need_min = add;
        n_max = fmax(n_max, des[k].n);
    }
    double span = need_max > 0 ? ceil(need_max * CURVE_HEADROOM) : fmax(20, n_max);
    if ((double)f->n_planned * 1.1 > span) span = ceil((double)f->n_planned * 1.1);
    /* When one claim needs hundreds of runs and another tens of thousands, a linear axis squeezes
     * the first against zero; a log axis of added runs (from 1) shows both. */
    int log_x = need_max > 0 && isfinite(need_min) && need_max / need_min > CURVE_LOG_RATIO;
    for (size_t k = 0; k < n; k++) {
        fprintf(s, "$curve%zu << EOD\n", k);
        double base = des[k].n, last = -1;
        for (int j = 0; j <= CURVE_STEPS; j++) {
            double add = log_x ? round(pow(span, (double)j / CURVE_STEPS))
                               : round(span * j / CURVE_STEPS);
            if (add == last) continue;
            last = add;
            pw_design d = des[k];
            d.n = base + add;
            double pw;
            if (pw_power(&d, &pw) != PW_OK) continue;
            cov_plot_num(s, add);
            fputc(' ', s);
            cov_plot_num(s, pw);
            fputc('\n', s);
        }
        fputs("EOD\n", s);
    }
    /* The runs-needed marks, in rising order; neighbours get their labels above and below the
     * target line alternately, so close needs stay readable. */
    row_key need[MAX_CURVES];
    double need_pw[MAX_CURVES];
    size_t n_need = 0;
    for (size_t k = 0; k < n; k++) {
        const cov_assessment *it = &f->assess->items[pick[k]];
        double add = it->runs_needed - des[k].n;
        if (!(isfinite(add) && add > 0)) continue;
        pw_design d = des[k];
        d.n = it->runs_needed;
        if (pw_power(&d, &need_pw[k]) != PW_OK) need_pw[k] = target;
        need[n_need++] = (row_key){k, add};
    }
    qsort(need, n_need, sizeof *need, by_key_up);
    fputs("$need << EOD\n", s);
    for (size_t j = 0; j < n_need; j++) {
        cov_plot_num(s, need[j].key);
        fputc(' ', s);
        cov_plot_num(s, need_pw[need[j].idx]);
        fprintf(s, " %zu\n", j % 2);
    }
    fputs("EOD\n", s);
    cov_plot_start(s, CURVES_H);
    cov_plot_title(s, "Power of the lowest-powered claims as runs are added",
              "assuming new runs resemble the current ones; "
              "large dots: runs needed for the target");
    fprintf(s, "set xlabel 'runs added to the campaign%s'\n", log_x ? " (log scale)" : "");
    fputs("set ylabel 'power at the effect of interest'\n", s);
    if (log_x) fputs("set logscale x\nset format x '%g'\nset mxtics 10\n", s);
    fputs("set yrange [0:1.04]\nset ytics 0.1 format '%.1f'\nset grid lc rgb '#E4E4E4'\n", s);
    fprintf(s, "set xrange [%d:", log_x ? 1 : 0);
    cov_plot_num(s, span);
    fputs("]\nset key below vertical maxcols 1 height 1\n", s);
    fputs("set arrow 1 from graph 0, first ", s);
    cov_plot_num(s, target);
    fputs(" to graph 1, first ", s);
    cov_plot_num(s, target);
    fputs(" nohead dt 2 lw 2 lc rgb '" COV_PLOT_INK "' back\n", s);
    if (f->n_planned > 0) {
        fprintf(s, "set arrow 2 from first %zu, graph 0 to first %zu, graph 1 nohead dt 3 lw 2 "
                   "lc rgb '" COV_PLOT_PLANNED "' back\n", f->n_planned, f->n_planned);
    }
    char *plot = NULL;
    size_t plot_len = 0;
    FILE *ps = open_memstream(&plot, &plot_len);
    if (ps == NULL) {
        free(rows);
        return COV_ENOMEM;
    }
    fputs("plot ", ps);
    for (size_t k = 0; k < n; k++) {
        const cov_assessment *it = &f->assess->items[pick[k]];
        char label[3 * COV_PLOT_NAME_SHOWN + 128];
        claim_label(f, it->claim, label, sizeof label);
        size_t used = strlen(label);
        double add = it->runs_needed - des[k].n;
        if (!isfinite(it->runs_needed))
            snprintf(label + used, sizeof label - used, ": %.2f now, target out of reach",
                     it->power);
        else if (add > 0)
            snprintf(label + used, sizeof label - used, ": %.2f now, needs %.0f more", it->power,
                     add);
        else
            snprintf(label + used, sizeof label - used, ": %.2f now", it->power);
        fprintf(ps, "%s$curve%zu using 1:2 with linespoints pointinterval 16 pt %d ps 1 lw 2.5 "
                    "dt %d lc rgb '%s' title ", k ? ", \\\n  " : "", k, curve_point[k],
                curve_dash[k], curve_colour[k]);
        cov_gp_quote(ps, label);
    }
    if (n_need > 0)
        fputs(", \\\n  $need using 1:2 with points pt 7 ps 1.8 lc rgb '" COV_PLOT_INK
              "' title 'runs needed', \\\n"
              "  $need using 1:($3==0 ? $2 : NaN):(sprintf('+%.0f', $1)) with labels offset 0,1.2 "
              "font ',10' notitle",
              ps);
    /* The second group of labels (below the line) only when it has a row: gnuplot 5.4.4 dies
     * with a segmentation fault on a labels plot whose every point is NaN. */
    if (n_need > 1)
        fputs(", \\\n"
              "  $need using 1:($3==1 ? $2 : NaN):(sprintf('+%.0f', $1)) with labels offset 0,-1.2 "
              "font ',10' notitle",
              ps);
    fputs(", \\\n  keyentry with lines dt 2 lw 2 lc rgb '" COV_PLOT_INK "' title 'target power'",
          ps);
    if (f->n_planned > 0)
        fprintf(ps, ", \\\n  keyentry with lines dt 3 lw 2 lc rgb '" COV_PLOT_PLANNED
                    "' title 'planned runs (%zu)'", f->n_planned);
    fputc('\n', ps);
    int rc = fclose(ps) == 0 ? COV_OK : COV_ENOMEM;
    if (rc == COV_OK) cov_plot_finish(s, dir, "curves", CURVES_H, plot);
    free(plot);
    free(rows);
    return rc;
}
