/* The plan's predictions, kept with the plan file's digest in shoal's own archive or a side file,
 * and what the runs achieved once they arrived. See LICENSE. */
#include <errno.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include <sqlite3.h>

#include "coverage/archive/archive.h"

/* A writer waits this long for another connection's lock before it gives up (milliseconds). */
#define PRED_BUSY_MS 5000

static const char pred_schema[] =
    "CREATE TABLE IF NOT EXISTS shoal_plans ("
    " id INTEGER PRIMARY KEY, made_at TEXT NOT NULL, digest TEXT NOT NULL, plan_file TEXT,"
    " runs_before INTEGER NOT NULL, target REAL NOT NULL, total_cost REAL, achieved_at TEXT);"
    "CREATE TABLE IF NOT EXISTS shoal_plan_claims ("
    " plan INTEGER NOT NULL REFERENCES shoal_plans(id), k INTEGER NOT NULL, kind TEXT NOT NULL,"
    " treatment TEXT NOT NULL, outcome TEXT NOT NULL, power_now REAL, power_pred REAL,"
    " runs_now REAL, runs_after REAL, reaches INTEGER NOT NULL, achieved REAL,"
    " PRIMARY KEY (plan, k));"
    "CREATE TABLE IF NOT EXISTS shoal_plan_seeds ("
    " plan INTEGER NOT NULL REFERENCES shoal_plans(id), seed INTEGER NOT NULL);";

static int sql_fail(cov_error *err, int status, sqlite3 *db, const char *path, const char *what)
{
    return cov_fail(err, status, "", "%s %s: %s", what, path, db ? sqlite3_errmsg(db) : "no memory");
}

static void bind_real(sqlite3_stmt *st, int k, double x)
{
    if (isfinite(x)) sqlite3_bind_double(st, k, x);
    else sqlite3_bind_null(st, k);
}

static double column_real(sqlite3_stmt *st, int k)
{
    return sqlite3_column_type(st, k) == SQLITE_NULL ? NAN : sqlite3_column_double(st, k);
}

static char *dup_text(sqlite3_stmt *st, int k)
{
    const unsigned char *t = sqlite3_column_text(st, k);
    return strdup(t != NULL ? (const char *)t : "");
}

void cov_pred_records_free(cov_pred_record *r, size_t n)
{
    for (size_t i = 0; r != NULL && i < n; i++) {
        for (size_t k = 0; k < r[i].n_claims; k++) {
            free(r[i].claims[k].kind);
            free(r[i].claims[k].treatment);
            free(r[i].claims[k].outcome);
        }
        free(r[i].claims);
        free(r[i].seeds);
        free(r[i].plan_file);
    }
    free(r);
}

/* Run one prepared insert per step, failing on any error. */
static int step_done(sqlite3_stmt *st) { return sqlite3_step(st) == SQLITE_DONE ? 0 : -1; }

int cov_pred_save(const char *db_path, int create, const cov_pred_record *r, cov_error *err)
{
    sqlite3 *db = NULL;
    sqlite3_stmt *st = NULL;
    int rc = COV_EIO, in_tx = 0;
    if (sqlite3_open_v2(db_path, &db, SQLITE_OPEN_READWRITE | (create ? SQLITE_OPEN_CREATE : 0),
                        NULL) != SQLITE_OK) {
        rc = sql_fail(err, COV_EIO, db, db_path, "cannot open to record the plan's predictions:");
        goto fail;
    }
    sqlite3_busy_timeout(db, PRED_BUSY_MS);
    if (sqlite3_exec(db, "BEGIN IMMEDIATE", NULL, NULL, NULL) != SQLITE_OK) goto sqlerr;
    in_tx = 1;
    if (sqlite3_exec(db, pred_schema, NULL, NULL, NULL) != SQLITE_OK ||
        sqlite3_prepare_v2(db, "INSERT INTO shoal_plans (made_at, digest, plan_file, runs_before, "
                               "target, total_cost) VALUES (?, ?, ?, ?, ?, ?)", -1, &st,
                           NULL) != SQLITE_OK)
        goto sqlerr;
    sqlite3_bind_text(st, 1, r->made_at, -1, SQLITE_TRANSIENT);
    sqlite3_bind_text(st, 2, r->digest, -1, SQLITE_TRANSIENT);
    sqlite3_bind_text(st, 3, r->plan_file, -1, SQLITE_TRANSIENT);
    sqlite3_bind_int64(st, 4, r->runs_before);
    sqlite3_bind_double(st, 5, r->target);
    bind_real(st, 6, r->total_cost);
    if (step_done(st)) goto sqlerr;
    sqlite3_int64 id = sqlite3_last_insert_rowid(db);
    sqlite3_finalize(st);
    st = NULL;
    if (sqlite3_prepare_v2(db, "INSERT INTO shoal_plan_claims (plan, k, kind, treatment, outcome, "
                               "power_now, power_pred, runs_now, runs_after, reaches) "
                               "VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?)", -1, &st, NULL) != SQLITE_OK)
        goto sqlerr;
    for (size_t k = 0; k < r->n_claims; k++) {
        const cov_pred_claim *c = &r->claims[k];
        sqlite3_reset(st);
        sqlite3_clear_bindings(st);
        sqlite3_bind_int64(st, 1, id);
        sqlite3_bind_int64(st, 2, (sqlite3_int64)k);
        sqlite3_bind_text(st, 3, c->kind, -1, SQLITE_TRANSIENT);
        sqlite3_bind_text(st, 4, c->treatment, -1, SQLITE_TRANSIENT);
        sqlite3_bind_text(st, 5, c->outcome, -1, SQLITE_TRANSIENT);
        bind_real(st, 6, c->power_now);
        bind_real(st, 7, c->power_pred);
        bind_real(st, 8, c->runs_now);
        bind_real(st, 9, c->runs_after);
        sqlite3_bind_int(st, 10, c->reaches);
        if (step_done(st)) goto sqlerr;
    }
    sqlite3_finalize(st);
    st = NULL;
    if (sqlite3_prepare_v2(db, "INSERT INTO shoal_plan_seeds (plan, seed) VALUES (?, ?)", -1, &st,
                           NULL) != SQLITE_OK)
        goto sqlerr;
    for (size_t k = 0; k < r->n_seeds; k++) {
        sqlite3_reset(st);
        sqlite3_bind_int64(st, 1, id);
        sqlite3_bind_int64(st, 2, (sqlite3_int64)r->seeds[k]);
        if (step_done(st)) goto sqlerr;
    }
    sqlite3_finalize(st);
    st = NULL;
    if (sqlite3_exec(db, "COMMIT", NULL, NULL, NULL) != SQLITE_OK) goto sqlerr;
    sqlite3_close(db);
    return COV_OK;
sqlerr:
    rc = sql_fail(err, COV_EIO, db, db_path, "cannot record the plan's predictions in");
fail:
    sqlite3_finalize(st);
    if (in_tx) sqlite3_exec(db, "ROLLBACK", NULL, NULL, NULL);
    sqlite3_close(db);
    return rc;
}

int cov_pred_load(const char *db_path, int missing_ok, cov_pred_record **out, size_t *n,
                  cov_error *err)
{
    *out = NULL;
    *n = 0;
    struct stat sb;
    if (stat(db_path, &sb) != 0) {
        if (missing_ok && errno == ENOENT) return COV_OK;
        return cov_fail(err, COV_EIO, "", "cannot read the plan records in %s: %s", db_path,
                        strerror(errno));
    }
    sqlite3 *db = NULL;
    sqlite3_stmt *st = NULL, *sc = NULL;
    cov_pred_record *recs = NULL;
    size_t count = 0;
    int rc = COV_EIO;
    if (sqlite3_open_v2(db_path, &db, SQLITE_OPEN_READONLY, NULL) != SQLITE_OK) goto sqlerr;
    int has = cov_sqlite_has_table(db, "shoal_plans");
    if (has < 0) goto sqlerr;
    if (!has) {
        sqlite3_close(db);
        return COV_OK;
    }
    if (sqlite3_prepare_v2(db, "SELECT id, made_at, digest, plan_file, runs_before, target, "
                               "total_cost, achieved_at, (SELECT count(*) FROM shoal_plan_claims "
                               "c WHERE c.plan = p.id), (SELECT count(*) FROM shoal_plan_seeds s "
                               "WHERE s.plan = p.id) FROM shoal_plans p ORDER BY id", -1, &st,
                           NULL) != SQLITE_OK)
        goto sqlerr;
    int step;
    while ((step = sqlite3_step(st)) == SQLITE_ROW) {
        cov_pred_record *grown = realloc(recs, (count + 1) * sizeof *grown);
        if (grown == NULL) goto nomem;
        recs = grown;
        cov_pred_record *r = &recs[count++];
        memset(r, 0, sizeof *r);
        r->id = sqlite3_column_int64(st, 0);
        const unsigned char *t = sqlite3_column_text(st, 1);
        snprintf(r->made_at, sizeof r->made_at, "%s", t ? (const char *)t : "");
        t = sqlite3_column_text(st, 2);
        snprintf(r->digest, sizeof r->digest, "%s", t ? (const char *)t : "");
        r->plan_file = dup_text(st, 3);
        r->runs_before = sqlite3_column_int64(st, 4);
        r->target = sqlite3_column_double(st, 5);
        r->total_cost = column_real(st, 6);
        t = sqlite3_column_text(st, 7);
        snprintf(r->achieved_at, sizeof r->achieved_at, "%s", t ? (const char *)t : "");
        size_t nc = (size_t)sqlite3_column_int64(st, 8), ns = (size_t)sqlite3_column_int64(st, 9);
        r->claims = calloc(nc + 1, sizeof *r->claims);
        r->seeds = malloc((ns + 1) * sizeof *r->seeds);
        if (r->plan_file == NULL || r->claims == NULL || r->seeds == NULL) goto nomem;
        if (sqlite3_prepare_v2(db, "SELECT kind, treatment, outcome, power_now, power_pred, "
                                   "runs_now, runs_after, reaches, achieved FROM shoal_plan_claims "
                                   "WHERE plan = ? ORDER BY k", -1, &sc, NULL) != SQLITE_OK)
            goto sqlerr;
        sqlite3_bind_int64(sc, 1, r->id);
        while (r->n_claims < nc && sqlite3_step(sc) == SQLITE_ROW) {
            cov_pred_claim *c = &r->claims[r->n_claims++];
            c->kind = dup_text(sc, 0);
            c->treatment = dup_text(sc, 1);
            c->outcome = dup_text(sc, 2);
            if (c->kind == NULL || c->treatment == NULL || c->outcome == NULL) goto nomem;
            c->power_now = column_real(sc, 3);
            c->power_pred = column_real(sc, 4);
            c->runs_now = column_real(sc, 5);
            c->runs_after = column_real(sc, 6);
            c->reaches = sqlite3_column_int(sc, 7);
            c->achieved = column_real(sc, 8);
        }
        sqlite3_finalize(sc);
        sc = NULL;
        if (sqlite3_prepare_v2(db, "SELECT seed FROM shoal_plan_seeds WHERE plan = ?", -1, &sc,
                               NULL) != SQLITE_OK)
            goto sqlerr;
        sqlite3_bind_int64(sc, 1, r->id);
        while (r->n_seeds < ns && sqlite3_step(sc) == SQLITE_ROW)
            r->seeds[r->n_seeds++] = (unsigned long)sqlite3_column_int64(sc, 0);
        sqlite3_finalize(sc);
        sc = NULL;
    }
    if (step != SQLITE_DONE) goto sqlerr;
    sqlite3_finalize(st);
    sqlite3_close(db);
    *out = recs;
    *n = count;
    return COV_OK;
nomem:
    rc = cov_fail(err, COV_ENOMEM, "", "out of memory reading the plan records");
    goto fail;
sqlerr:
    rc = sql_fail(err, COV_EIO, db, db_path, "cannot read the plan records in");
fail:
    sqlite3_finalize(st);
    sqlite3_finalize(sc);
    sqlite3_close(db);
    cov_pred_records_free(recs, count);
    return rc;
}

int cov_pred_save_achieved(const char *db_path, const cov_pred_record *r, cov_error *err)
{
    sqlite3 *db = NULL;
    sqlite3_stmt *st = NULL;
    int in_tx = 0;
    if (sqlite3_open_v2(db_path, &db, SQLITE_OPEN_READWRITE, NULL) != SQLITE_OK) goto sqlerr;
    sqlite3_busy_timeout(db, PRED_BUSY_MS);
    if (sqlite3_exec(db, "BEGIN IMMEDIATE", NULL, NULL, NULL) != SQLITE_OK) goto sqlerr;
    in_tx = 1;
    if (sqlite3_prepare_v2(db, "UPDATE shoal_plans SET achieved_at = ? WHERE id = ?", -1, &st,
                           NULL) != SQLITE_OK)
        goto sqlerr;
    sqlite3_bind_text(st, 1, r->achieved_at, -1, SQLITE_TRANSIENT);
    sqlite3_bind_int64(st, 2, r->id);
    if (step_done(st)) goto sqlerr;
    sqlite3_finalize(st);
    st = NULL;
    if (sqlite3_prepare_v2(db, "UPDATE shoal_plan_claims SET achieved = ? WHERE plan = ? AND k = ?",
                           -1, &st, NULL) != SQLITE_OK)
        goto sqlerr;
    for (size_t k = 0; k < r->n_claims; k++) {
        sqlite3_reset(st);
        bind_real(st, 1, r->claims[k].achieved);
        sqlite3_bind_int64(st, 2, r->id);
        sqlite3_bind_int64(st, 3, (sqlite3_int64)k);
        if (step_done(st)) goto sqlerr;
    }
    sqlite3_finalize(st);
    st = NULL;
    if (sqlite3_exec(db, "COMMIT", NULL, NULL, NULL) != SQLITE_OK) goto sqlerr;
    sqlite3_close(db);
    return COV_OK;
sqlerr:;
    int rc = sql_fail(err, COV_EIO, db, db_path, "cannot record what the planned runs achieved in");
    sqlite3_finalize(st);
    if (in_tx) sqlite3_exec(db, "ROLLBACK", NULL, NULL, NULL);
    sqlite3_close(db);
    return rc;
}
