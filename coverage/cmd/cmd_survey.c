/* The `shoal survey` command: claims, power, support and coverage in one pass, with plots, a report
 * written atomically, and the campaign's history. See LICENSE. */
#include <dirent.h>
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

#include "coverage/plan/plan.h"
#include "coverage/report/report.h"

#define DEFAULT_REPORT_DIR "shoal-report"
/* The terminal lists this many underpowered or untestable claims; the report has them all. */
#define TERMINAL_CLAIMS 12

/* ANSI colours, used only when the driver says stdout is a terminal without NO_COLOR. */
#define C_RESET "\033[0m"
#define C_BOLD "\033[1m"
#define C_AMPLE "\033[36m"
#define C_THIN "\033[33m"
#define C_BLIND "\033[2m"

static void step_note(const cov_options *o, FILE *note, const char *what)
{
    if (o->progress && !o->quiet && note != NULL) {
        fprintf(note, "shoal: %s\n", what);
        fflush(note);
    }
}

/* ---- the report directory, written aside and renamed into place ----------------------------- */

/* Remove a directory that holds only files (a report, or a failed attempt at one). */
static void remove_flat_dir(const char *dir)
{
    DIR *d = opendir(dir);
    if (d != NULL) {
        struct dirent *e;
        char path[4096];
        while ((e = readdir(d)) != NULL) {
            if (strcmp(e->d_name, ".") == 0 || strcmp(e->d_name, "..") == 0) continue;
            if (snprintf(path, sizeof path, "%s/%s", dir, e->d_name) < (int)sizeof path)
                unlink(path);
        }
        closedir(d);
    }
    rmdir(dir);
}

/* Remove the plot files from dir after gnuplot failed, so no half-drawn plot is shipped. */
static void remove_plot_files(const char *dir)
{
    DIR *d = opendir(dir);
    if (d == NULL) return;
    struct dirent *e;
    char path[4096];
    while ((e = readdir(d)) != NULL) {
        size_t len = strlen(e->d_name);
        if ((len > 4 && (strcmp(e->d_name + len - 4, ".svg") == 0 ||
                         strcmp(e->d_name + len - 4, ".png") == 0)) &&
            snprintf(path, sizeof path, "%s/%s", dir, e->d_name) < (int)sizeof path)
            unlink(path);
    }
    closedir(d);
}

/* An existing report directory may be replaced only when it is empty or looks like a report of
 * ours: plain files only, summary.json among them. Anything else is the user's and stays. */
static int check_replaceable(const char *dir, cov_error *err)
{
    struct stat sb;
    if (lstat(dir, &sb) != 0) {
        if (errno == ENOENT) return COV_OK;
        return cov_fail(err, COV_EIO, "", "cannot inspect %s: %s", dir, strerror(errno));
    }
    if (!S_ISDIR(sb.st_mode))
        return cov_fail(err, COV_EINPUT, "", "%s exists and is not a directory; expected a "
                                             "report directory (-o DIR)", dir);
    DIR *d = opendir(dir);
    if (d == NULL) return cov_fail(err, COV_EIO, "", "cannot read %s: %s", dir, strerror(errno));
    int files = 0, has_summary = 0, foreign = 0;
    struct dirent *e;
    char path[4096];
    while ((e = readdir(d)) != NULL) {
        if (strcmp(e->d_name, ".") == 0 || strcmp(e->d_name, "..") == 0) continue;
        files++;
        has_summary |= strcmp(e->d_name, "summary.json") == 0;
        if (snprintf(path, sizeof path, "%s/%s", dir, e->d_name) >= (int)sizeof path ||
            lstat(path, &sb) != 0 || !S_ISREG(sb.st_mode))
            foreign = 1;
    }
    closedir(d);
    if (files > 0 && (!has_summary || foreign))
        return cov_fail(err, COV_EINPUT, "", "%s exists and does not look like a shoal report "
                                             "(expected summary.json and plain files only); "
                                             "choose another -o DIR or remove it", dir);
    return COV_OK;
}

/* Split dir into a writable copy without trailing slashes and the temporary names beside it. */
static int sibling_name(const char *dir, const char *tag, char *out, size_t size)
{
    char copy[4096];
    if (snprintf(copy, sizeof copy, "%s", dir) >= (int)sizeof copy) return -1;
    size_t len = strlen(copy);
    while (len > 1 && copy[len - 1] == '/') copy[--len] = '\0';
    char *slash = strrchr(copy, '/');
    const char *base = slash ? slash + 1 : copy;
    int n;
    if (slash == NULL) n = snprintf(out, size, ".%s.%s.XXXXXX", base, tag);
    else if (slash == copy) n = snprintf(out, size, "/.%s.%s.XXXXXX", base, tag);
    else {
        *slash = '\0';
        n = snprintf(out, size, "%s/.%s.%s.XXXXXX", copy, base, tag);
    }
    return n < 0 || (size_t)n >= size ? -1 : 0;
}

/* Move the finished report tmp to dir, replacing an earlier report only now that the new one is
 * complete. On failure the earlier report is put back. */
static int move_into_place(const char *tmp, const char *dir, cov_error *err)
{
    struct stat sb;
    char old[4096] = "";
    if (lstat(dir, &sb) == 0) {
        if (sibling_name(dir, "old", old, sizeof old) != 0 || mkdtemp(old) == NULL)
            return cov_fail(err, COV_EIO, "", "cannot make room beside %s: %s", dir,
                            strerror(errno));
        /* rename(2) replaces the empty directory just made. */
        if (rename(dir, old) != 0) {
            int e = errno;
            rmdir(old);
            return cov_fail(err, COV_EIO, "", "cannot move the earlier report %s aside: %s", dir,
                            strerror(e));
        }
    }
    if (rename(tmp, dir) != 0) {
        int e = errno;
        if (old[0] != '\0') rename(old, dir);
        return cov_fail(err, COV_EIO, "", "cannot move the report into %s: %s", dir, strerror(e));
    }
    if (old[0] != '\0') remove_flat_dir(old);
    return COV_OK;
}

/* ---- the terminal verdict -------------------------------------------------------------------- */

#define term_text cov_term_text

static const char *verdict_colour(cov_verdict v)
{
    return v == COV_AMPLE ? C_AMPLE : v == COV_UNDERPOWERED ? C_THIN : C_BLIND;
}

static void print_share(FILE *out, const char *label, double x)
{
    if (isfinite(x)) fprintf(out, "%s %.1f%%", label, 100 * x);
    else fprintf(out, "%s not computed", label);
}

/* order: room for one index per claim, allocated before the report was written (so that running
 * out of memory here cannot follow a report already in place). */
static void print_verdict(const cov_findings *f, const cov_report_info *info, const char *dir,
                          size_t *order, FILE *out)
{
    const cov_options *o = f->opt;
    const cov_graph *g = f->graph;
    int col = o->color;
    long long count[3] = {0, 0, 0}, unrun = 0;
    for (size_t i = 0; i < f->claims->n; i++) {
        count[f->assess->items[i].verdict]++;
        /* Testable by the graph, yet the runs cannot test it (e.g. the treatment never varies). */
        if (f->claims->items[i].status == COV_TESTABLE && f->assess->items[i].verdict == COV_BLIND)
            unrun++;
    }
    fprintf(out, "%sshoal survey%s ", col ? C_BOLD : "", col ? C_RESET : "");
    term_text(out, g->path);
    fputs(" on ", out);
    term_text(out, o->archive_path);
    fprintf(out, ": %zu runs in %zu batch%s\n", f->data->n_runs, f->data->n_batches,
            f->data->n_batches == 1 ? "" : "es");
    char run_line[512];
    cov_runs_summary(f->data, run_line, sizeof run_line);
    fprintf(out, "runs: %s\n", run_line);   /* a conflicting run is in the cautions below */
    fprintf(out, "claims: %zu  %s%lld ample%s  %s%lld underpowered%s  %s%lld untestable%s\n", f->claims->n,
            col ? C_AMPLE : "", count[COV_AMPLE], col ? C_RESET : "", col ? C_THIN : "",
            count[COV_UNDERPOWERED], col ? C_RESET : "", col ? C_BLIND : "", count[COV_BLIND],
            col ? C_RESET : "");
    {
        /* Which test and power method the figures are for (per claim in the report). */
        size_t by_resampling = 0, by_formula = 0, flagged = 0;
        for (size_t i = 0; i < f->assess->n; i++) {
            const cov_assessment *a = &f->assess->items[i];
            if (isnan(a->power) || a->verdict == COV_BLIND) continue;
            if (a->power_method == COV_METHOD_RESAMPLED) by_resampling++;
            else by_formula++;
            flagged += a->noise_flag != 0;
        }
        fprintf(out, "power: %s test (%s standard errors), %zu claim%s by resampling, %zu by "
                "formula; %zu whose figure can be off (see the report)\n",
                cov_test_word(o->power.test), o->power.test == COV_TEST_ROBUST ? "HC3" : "OLS",
                by_resampling, by_resampling == 1 ? "" : "s", by_formula, flagged);
    }
    fprintf(out, "coverage (bins or cells with >= %zu runs): ", f->coverage->opt.min_runs);
    print_share(out, "marginal", f->coverage->marginal_share);
    print_share(out, ", 2-way", f->coverage->pairwise_share);
    print_share(out, ", 3-way", f->coverage->threeway_share);
    fputc('\n', out);
    fprintf(out, "\n%s%s%s", col ? C_BOLD : "", info->adequate ? "ADEQUATE" : "NOT ADEQUATE",
            col ? C_RESET : "");
    if (info->adequate)
        fprintf(out, ": every testable claim reaches power %.2f.\n", o->power.target);
    else if (count[COV_UNDERPOWERED] > 0)
        fprintf(out, ": %lld testable claim%s below power %.2f.\n", count[COV_UNDERPOWERED],
                count[COV_UNDERPOWERED] == 1 ? " is" : "s are", o->power.target);
    else if (unrun > 0)
        fprintf(out, ": %lld claim%s testable by the graph cannot be tested on these runs.\n",
                unrun, unrun == 1 ? "" : "s");
    else
        fputs(".\n", out);
    if (info->gate_note) fprintf(out, "%s\n", info->gate_note);

    {
        cov_report_order(f, order);
        size_t shown = 0, left = 0;
        for (size_t k = 0; k < f->claims->n; k++) {
            size_t i = order[k];
            const cov_claim *c = &f->claims->items[i];
            const cov_assessment *a = &f->assess->items[i];
            if (a->verdict == COV_AMPLE) continue;
            if (shown == TERMINAL_CLAIMS) {
                left++;
                continue;
            }
            if (shown++ == 0) fputs("\nweakest first:\n", out);
            fprintf(out, "  %s%-12s%s ", col ? verdict_colour(a->verdict) : "",
                    cov_verdict_word(a->verdict), col ? C_RESET : "");
            char lab[600];
            cov_claim_pair_label(g, c, lab, sizeof lab);
            size_t at = cov_term_wrap(out, lab, 15, 15, o->width);
            /* The assessment's reason already gives power and runs needed; say them here only
             * when it is silent. */
            char line[1200] = "";
            if (a->verdict == COV_UNDERPOWERED && a->reason == NULL) {
                if (isinf(a->runs_needed))
                    snprintf(line, sizeof line, " power %.2f, not reachable by more runs like "
                             "these", a->power);
                else if (isfinite(a->runs_needed))
                    snprintf(line, sizeof line, " power %.2f, needs %.0f runs (%.0f more)",
                             a->power, a->runs_needed, a->runs_needed > (double)a->n
                                                          ? a->runs_needed - (double)a->n : 0.0);
                else
                    snprintf(line, sizeof line, " power %.2f", a->power);
                at = cov_term_wrap(out, line, at, 15, o->width);
            }
            const char *why = a->reason ? a->reason : c->reason;
            if (why == NULL && f->support->items[i].reason) why = f->support->items[i].reason;
            fputs("\n               ", out);
            at = cov_term_wrap(out, why, 15, 15, o->width);
            const cov_caution *first;
            size_t n_caut = cov_cautions_of_claim(info->cautions, i, &first);
            if (n_caut > 0) {
                snprintf(line, sizeof line, " (%zu caution%s below)", n_caut, n_caut == 1 ? "" : "s");
                cov_term_wrap(out, line, at, 15, o->width);
            }
            fputc('\n', out);
        }
        if (left > 0) fprintf(out, "  ... and %zu more in the report\n", left);
    }
    cov_next_steps_print(info->next, out, o->width);
    cov_cautions_print(f, info->cautions, out, o->width);
    if (info->plot_note) {
        fputs("\nplots skipped: ", out);
        term_text(out, info->plot_note);
        fputc('\n', out);
    }
    cov_report_audit_text(f, out);
    fputs("\nreport: ", out);
    term_text(out, dir);
    fputs("/index.html (also report.md, summary.json, claims.csv)\n", out);
    if (info->store == COV_HISTORY_NONE) {
        fputs("history: not kept (the archive is not shoal's own; --history FILE keeps it)\n", out);
    } else if (info->recorded) {
        fprintf(out, "history: snapshot %zu, kept in ", info->n_snapshots);
        term_text(out, info->history_path);
        fputc('\n', out);
    } else {
        fprintf(out, "history: the runs are those of snapshot %zu (%s); none recorded "
                     "(--record-snapshot records one anyway)\n", info->n_snapshots,
                info->snapshots[info->n_snapshots - 1].at);
    }
}

/* Write the JUnit file beside its final name and rename it into place, so a CI server never
 * reads half a file; the mode follows the umask like any file a tool writes. */
static int write_junit(const char *path, const cov_findings *f, const cov_report_info *info,
                       cov_error *err)
{
    char tmp[4096];
    if (snprintf(tmp, sizeof tmp, "%s.XXXXXX", path) >= (int)sizeof tmp)
        return cov_fail(err, COV_EINPUT, "", "--junit path too long: %s", path);
    int fd = mkstemp(tmp);
    if (fd < 0) return cov_fail(err, COV_EIO, "", "cannot write %s: %s", path, strerror(errno));
    mode_t mask = umask(0);
    umask(mask);
    FILE *out = fchmod(fd, 0666 & ~mask) == 0 ? fdopen(fd, "w") : NULL;
    if (out == NULL) {
        int e = errno;
        close(fd);
        unlink(tmp);
        return cov_fail(err, COV_EIO, "", "cannot write %s: %s", path, strerror(e));
    }
    cov_report_junit(f, info, out);
    int bad = ferror(out);
    if (fclose(out) != 0 || bad || rename(tmp, path) != 0) {
        int e = errno;
        unlink(tmp);
        return cov_fail(err, COV_EIO, "", "could not finish writing %s: %s", path, strerror(e));
    }
    return COV_OK;
}

/* ---- the stages after the read --------------------------------------------------------------- */

/* The claims' assessment, coverage, support and (with threads) the runs' digest only read the
 * graph, the claims, the runs, the options and the shared cross-products, and each writes its own
 * result, so with --threads 2 or more they run as independent jobs (coverage/base/jobs.c). Their
 * order below is today's order of the one-thread survey, so the error reported when several fail
 * is the same whatever the thread count. With one thread everything runs in the calling thread in
 * that order. */
typedef struct {
    const cov_options *o;
    FILE *note;           /* the stages' progress notes; NULL while they run concurrently */
    const cov_graph *g;
    const cov_claims *claims;
    const cov_data *d;
    const cov_xshare *xs;
    cov_assessments *as;  /* each job writes its own result */
    cov_coverage *cv;
    cov_supports *sp;
    char digest[65];      /* the runs' content digest, for the snapshot */
} survey_stages;

static int stage_assess(void *arg, cov_error *err)
{
    survey_stages *s = arg;
    step_note(s->o, s->note, "assessing the claims");
    return cov_assess_shared(s->g, s->claims, s->d, &s->o->power, s->xs, &s->as, err);
}

static int stage_coverage(void *arg, cov_error *err)
{
    survey_stages *s = arg;
    step_note(s->o, s->note, "measuring coverage and support");
    return cov_coverage_measure(s->g, s->d, &s->o->coverage, &s->cv, err);
}

static int stage_support(void *arg, cov_error *err)
{
    survey_stages *s = arg;
    return cov_support_measure_shared(s->g, s->claims, s->d, &s->o->coverage, s->xs, &s->sp, err);
}

static int stage_digest(void *arg, cov_error *err)
{
    survey_stages *s = arg;
    (void)err;
    cov_data_digest(s->g, s->d, s->digest);
    return COV_OK;
}

/* Run the stages on up to `threads` threads. The results are s's whatever the status (NULL where
 * a stage failed or did not run), for the caller to free. */
static int survey_stages_run(survey_stages *s, int threads, cov_error *err)
{
    cov_job jobs[] = {{stage_assess, s, 0, {{0}, {0}}}, {stage_coverage, s, 0, {{0}, {0}}},
                      {stage_support, s, 0, {{0}, {0}}}, {stage_digest, s, 0, {{0}, {0}}}};
    if (threads > 1) {
        /* Notes from concurrent jobs would come in any order: say both first. */
        step_note(s->o, s->note, "assessing the claims");
        step_note(s->o, s->note, "measuring coverage and support");
        s->note = NULL;
    }
    return cov_jobs_run(jobs, sizeof jobs / sizeof jobs[0], threads, err);
}

/* ---- the command ----------------------------------------------------------------------------- */

int cov_cmd_survey(const cov_options *o_in, FILE *out, FILE *note, int *adequate, cov_error *err)
{
    cov_options o = *o_in;
    const char *dir = o.out_path ? o.out_path : DEFAULT_REPORT_DIR;
    cov_graph *g = NULL;
    cov_claims *claims = NULL;
    cov_archive *ar = NULL;
    cov_data *d = NULL;
    cov_assessments *as = NULL;
    cov_coverage *cv = NULL;
    cov_supports *sp = NULL;
    cov_xshare *xs = NULL;
    cov_snapshot *snaps = NULL;
    size_t n_snapshots = 0;
    cov_cautions *cautions = NULL;
    cov_next_steps *next = NULL;
    double *planned = NULL;
    size_t n_planned = 0, *order = NULL;
    double *seed_col = NULL;
    size_t n_seed_col = 0;
    cov_pred_record *preds = NULL;
    size_t n_preds = 0;
    unsigned char *frozen = NULL;
    char tmp[4096] = "", gate[256], plot_msg[sizeof err->msg + 64], at[32], graph_digest[65] = "";
    char runs_digest[65] = "";
    int rc;
    *adequate = 0;

    if (o.archive_path == NULL) return cov_fail(err, COV_EINPUT, "", "survey needs an ARCHIVE");
    if (!isnan(o.need_threeway) && o.coverage.way == 2)
        return cov_fail(err, COV_EINPUT, "", "--need-threeway needs 3-way coverage, but --way 2 "
                                             "was given");
    if (!isnan(o.need_threeway)) o.coverage.way = 3;
    /* Output paths are checked before any work, so a bad one records no history round. */
    const char *inputs[] = {o.graph_path, o.archive_path, o.plan_path, o.history_path};
    if ((rc = check_replaceable(dir, err)) != COV_OK) return rc;
    if ((rc = cov_output_check(dir, 1, inputs, 4, "-o", err)) != COV_OK) return rc;
    if (o.history_path != NULL) {
        struct stat sh;
        if ((rc = cov_output_check(o.history_path, 0, inputs, 3, "--history", err)) != COV_OK)
            return rc;
        /* SQLite would silently make an empty file a database: it is someone else's file. */
        if (stat(o.history_path, &sh) == 0 && sh.st_size == 0)
            return cov_fail(err, COV_EINPUT, o.history_path, "--history names an empty file, "
                            "expected a history file shoal made or a new name");
    }

    step_note(&o, note, "reading the graph");
    /* Read as text first, so that the audit trail can name the digest of the very bytes parsed
     * (standard input included). */
    char *graph_text = NULL;
    rc = cov_graph_read_text(o.graph_path, &graph_text, err);
    if (rc == COV_OK) rc = cov_graph_parse_text(o.graph_path, graph_text, &g, err);
    if (graph_text != NULL) {
        cov_sha256 h;
        cov_sha256_init(&h);
        cov_sha256_update(&h, graph_text, strlen(graph_text));
        cov_sha256_hex(&h, graph_digest);
        free(graph_text);
    }
    if (rc != COV_OK) goto fail;
    if ((rc = cov_claims_derive(g, &claims, err)) != COV_OK) goto fail;
    /* A plan file is read before the archive, so a bad one stops the survey early. */
    if (o.plan_path != NULL &&
        (rc = cov_plan_read_csv(g, o.plan_path, &planned, &n_planned, err)) != COV_OK)
        goto fail;
    if ((rc = cov_archive_open(o.archive_path, o.table, &ar, err)) != COV_OK) goto fail;
    int owned = cov_archive_owned(ar);
    rc = cov_data_read_threads(ar, g, o.coverage.threads,
                               o.progress && note && !o.quiet ? cov_progress_note : NULL, note,
                               &d, err);
    if (rc != COV_OK) goto fail;
    /* The seeds of the runs, which tell which planned runs have arrived (the plan file's column). */
    const char *seed_name = cov_graph_seed_column(g) != NULL ? cov_graph_seed_column(g) : "seed";
    if (cov_archive_has_column(ar, seed_name) &&
        ((rc = cov_archive_read_number(ar, seed_name, &seed_col, &n_seed_col, err)) != COV_OK))
        goto fail;
    if (seed_col != NULL) cov_data_rows_to_runs(d, seed_col, &n_seed_col);
    if (seed_col != NULL && n_seed_col != d->n_runs) {
        free(seed_col);
        seed_col = NULL;
    }
    /* The read-only connection is closed before anything writes history into the archive. */
    cov_archive_close(ar);
    ar = NULL;

    /* Where the history goes: an explicit side file, else shoal's own archive, else nowhere. */
    cov_history_store store = o.history_path ? COV_HISTORY_SIDE
                              : owned        ? COV_HISTORY_ARCHIVE
                                             : COV_HISTORY_NONE;
    const char *history_path = store == COV_HISTORY_SIDE ? o.history_path
                               : store == COV_HISTORY_ARCHIVE ? o.archive_path : NULL;
    if (store == COV_HISTORY_SIDE) {
        struct stat sa, sh;
        if (stat(o.archive_path, &sa) == 0 && stat(o.history_path, &sh) == 0 &&
            sa.st_dev == sh.st_dev && sa.st_ino == sh.st_ino) {
            rc = cov_fail(err, COV_EINPUT, "", "--history %s is the archive itself; the history "
                                               "needs a file of its own", o.history_path);
            goto fail;
        }
    }
    if (store != COV_HISTORY_NONE &&
        (rc = cov_history_load(history_path, store == COV_HISTORY_SIDE, &snaps, &n_snapshots,
                               err)) != COV_OK)
        goto fail;

    if (store != COV_HISTORY_NONE &&
        (rc = cov_pred_load(history_path, store == COV_HISTORY_SIDE, &preds, &n_preds, err)) !=
            COV_OK)
        goto fail;

    /* One pass of cross-products over the runs for both the assessment and the support. */
    if (cov_xshare_build(g, d, o.coverage.threads, &xs) != COV_OK) {
        rc = cov_fail(err, COV_ENOMEM, "", "out of memory summing the runs' cross-products");
        goto fail;
    }
    {
        /* The stages after the read, concurrently with --threads 2 or more (survey_stages). */
        survey_stages st = {&o, note, g, claims, d, xs, NULL, NULL, NULL, ""};
        rc = survey_stages_run(&st, o.coverage.threads, err);
        as = st.as;
        cv = st.cv;
        sp = st.sp;
        memcpy(runs_digest, st.digest, sizeof runs_digest);
        if (rc != COV_OK) goto fail;
    }
    cov_xshare_free(xs);
    xs = NULL;

    time_t now = time(NULL);
    struct tm tm_utc;
    if (gmtime_r(&now, &tm_utc) == NULL || strftime(at, sizeof at, "%Y-%m-%dT%H:%M:%SZ",
                                                   &tm_utc) == 0)
        snprintf(at, sizeof at, "unknown");
    frozen = calloc(n_preds + 1, 1);
    if (frozen == NULL ||
        cov_plan_audit_fill(g, claims, as, d->n_runs, seed_col, preds, n_preds, at, frozen) !=
            COV_OK) {
        rc = cov_fail(err, COV_ENOMEM, "", "out of memory");
        goto fail;
    }
    cov_findings f = {&o, g, claims, d, as, cv, sp, planned, n_planned, preds, n_preds};
    int all_ample = cov_claims_ample(claims, as);
    int missed = cov_coverage_gate_missed(&o, cv, gate, sizeof gate);
    if (claims->n == 0) {
        missed = 1;
        snprintf(gate, sizeof gate, "The graph implies no claims, so there is nothing the runs "
                                    "could be adequate for.");
    }

    /* Everything is written into a fresh directory beside DIR and renamed at the end. */
    if (sibling_name(dir, "tmp", tmp, sizeof tmp) != 0 || mkdtemp(tmp) == NULL) {
        rc = cov_fail(err, COV_EIO, "", "cannot create a directory beside %s: %s", dir,
                      strerror(errno));
        tmp[0] = '\0';
        goto fail;
    }
    /* mkdtemp makes the directory private; the report gets the usual mode under the umask. */
    mode_t mask = umask(0);
    umask(mask);
    if (chmod(tmp, 0777 & ~mask) != 0) {
        rc = cov_fail(err, COV_EIO, "", "cannot set the mode of %s: %s", tmp, strerror(errno));
        goto fail;
    }
    step_note(&o, note, "drawing the plots");
    cov_error perr = {{0}, {0}};
    const char *plot_note = NULL;
    rc = cov_plot_all(&f, tmp, o.quiet ? NULL : note, &perr);
    if (rc == COV_ENOPLOT) {
        remove_plot_files(tmp);
        snprintf(plot_msg, sizeof plot_msg, "%s", perr.msg[0] ? perr.msg : "gnuplot failed");
        plot_note = plot_msg;
        if (!o.quiet && note != NULL) fprintf(note, "shoal: plots skipped: %s\n", plot_note);
    } else if (rc != COV_OK) {
        *err = perr;
        goto fail;
    }

    /* A snapshot is recorded only when the runs differ from the last one's (or when asked):
     * surveying the same runs again adds nothing to the campaign's history. */
    cov_snapshot this_snap;
    cov_snapshot_from_findings_digest(&f, runs_digest, &this_snap);
    snprintf(this_snap.at, sizeof this_snap.at, "%s", at);
    int record = store != COV_HISTORY_NONE &&
                 (o.record_snapshot || n_snapshots == 0 || snaps[n_snapshots - 1].digest[0] == '\0' ||
                  strcmp(snaps[n_snapshots - 1].digest, this_snap.digest) != 0);
    if (record || store == COV_HISTORY_NONE) {
        cov_snapshot *grown = realloc(snaps, (n_snapshots + 1) * sizeof *grown);
        if (grown == NULL) {
            rc = cov_fail(err, COV_ENOMEM, "", "out of memory");
            goto fail;
        }
        snaps = grown;
        snaps[n_snapshots++] = this_snap;
    }
    if ((rc = cov_cautions_gather(&f, &cautions)) != COV_OK) {
        rc = cov_fail(err, rc, "", "out of memory gathering the cautions");
        goto fail;
    }
    cov_report_info info = {at, all_ample && !missed, missed ? gate : NULL, plot_note, store,
                            history_path, snaps, n_snapshots, cautions, record,
                            this_snap.digest, graph_digest, NULL};
    if ((rc = cov_next_steps_make(&f, &next)) != COV_OK) {
        rc = cov_fail(err, rc, "", "out of memory writing the next steps");
        goto fail;
    }
    info.next = next;
    step_note(&o, note, "writing the report");
    if ((order = malloc((claims->n ? claims->n : 1) * sizeof *order)) == NULL) {
        rc = cov_fail(err, COV_ENOMEM, "", "out of memory");
        goto fail;
    }
    if ((rc = cov_report_write(&f, &info, tmp, err)) != COV_OK) goto fail;
    if (record && (rc = cov_report_history_record(history_path, store == COV_HISTORY_SIDE, &f,
                                                   &this_snap, err)) != COV_OK)
        goto fail;
    for (size_t k = 0; k < n_preds; k++)
        if (frozen[k] && (rc = cov_pred_save_achieved(history_path, &preds[k], err)) != COV_OK)
            goto fail;
    if ((rc = move_into_place(tmp, dir, err)) != COV_OK) goto fail;
    tmp[0] = '\0';
    if (o.junit_path != NULL && (rc = write_junit(o.junit_path, &f, &info, err)) != COV_OK)
        goto fail;

    if (!o.quiet) {
        if (o.format == COV_FMT_JSON) cov_report_summary_json(&f, &info, out);
        else if (o.format == COV_FMT_CSV) cov_report_claims_csv(&f, out);
        else {
            cov_reflow rf;   /* paths and names too long for a line wrap */
            FILE *w = cov_reflow_begin(&rf, out);
            print_verdict(&f, &info, dir, order, w);
            cov_reflow_end(&rf, out, o.width);
        }
    }
    *adequate = info.adequate;
    rc = COV_OK;
fail:
    if (tmp[0] != '\0') remove_flat_dir(tmp);
    free(order);
    cov_cautions_free(cautions);
    cov_next_steps_free(next);
    free(snaps);
    free(planned);
    free(seed_col);
    free(frozen);
    cov_pred_records_free(preds, n_preds);
    cov_xshare_free(xs);
    cov_supports_free(sp);
    cov_coverage_free(cv);
    cov_assessments_free(as);
    cov_data_free(d);
    cov_archive_close(ar);
    cov_claims_free(claims);
    cov_graph_free(g);
    return rc;
}
