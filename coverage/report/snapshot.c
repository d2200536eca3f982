/* A survey's snapshot for the history: its counts and shares, and one line per claim, handed to
 * the archive's history tables (coverage/archive/history.c). See LICENSE. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>

#include "coverage/report/report.h"

void cov_snapshot_from_findings(const cov_findings *f, cov_snapshot *r)
{
    cov_snapshot_from_findings_digest(f, NULL, r);
}

void cov_snapshot_from_findings_digest(const cov_findings *f, const char *runs_digest,
                                       cov_snapshot *r)
{
    r->n_runs = f->data ? (long long)f->data->n_runs : 0;
    r->n_batches = f->data ? (long long)f->data->n_batches : 0;
    long long count[3];
    cov_report_count_verdicts(f, count);
    r->n_ample = count[COV_AMPLE];
    r->n_underpowered = count[COV_UNDERPOWERED];
    r->n_blind = count[COV_BLIND];
    r->marginal_share = f->coverage ? f->coverage->marginal_share : NAN;
    r->pairwise_share = f->coverage ? f->coverage->pairwise_share : NAN;
    r->threeway_share = f->coverage ? f->coverage->threeway_share : NAN;
    if (f->data == NULL) r->digest[0] = '\0';
    else if (runs_digest != NULL) snprintf(r->digest, sizeof r->digest, "%s", runs_digest);
    else cov_data_digest(f->graph, f->data, r->digest);
}

int cov_report_history_record(const char *db_path, int create_file, const cov_findings *f,
                              const cov_snapshot *r, cov_error *err)
{
    size_t n = f->claims->n;
    cov_snapshot_claim *lines = calloc(n ? n : 1, sizeof *lines);
    if (lines == NULL) return cov_fail(err, COV_ENOMEM, "", "out of memory recording the history");
    for (size_t i = 0; i < n; i++) {
        const cov_claim *c = &f->claims->items[i];
        const cov_assessment *a = cov_report_assessment(f, i);
        cov_snapshot_claim *l = &lines[i];
        l->kind = cov_claim_kind_word(c->kind);
        l->treatment = cov_report_var(f, c->treatment);
        l->outcome = cov_report_var(f, c->outcome);
        l->verdict = cov_verdict_word(cov_report_verdict(f, i));
        l->assessed = a != NULL && c->status == COV_TESTABLE;
        l->runs = l->assessed ? (long long)a->n : 0;
        l->power = l->assessed ? a->power : NAN;
        l->mde = l->assessed ? a->mde : NAN;
        l->runs_needed = l->assessed ? a->runs_needed : NAN;
    }
    cov_history_source src = {f->graph->path, f->opt ? f->opt->archive_path : NULL};
    int rc = cov_history_record(db_path, create_file, &src, r, lines, n, err);
    free(lines);
    return rc;
}
