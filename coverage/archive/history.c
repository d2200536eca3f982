/* The history of surveys, one snapshot each, in SQLite: shoal's own archive or a side file.
 * See LICENSE. */
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include <sqlite3.h>

#include "coverage/archive/archive.h"

/* A writer waits this long for another connection's lock before it gives up (milliseconds). */
#define HISTORY_BUSY_MS 5000

static const char history_schema[] =
    "CREATE TABLE IF NOT EXISTS shoal_snapshots ("
    " id INTEGER PRIMARY KEY, surveyed_at TEXT NOT NULL, graph TEXT, archive TEXT,"
    " runs INTEGER NOT NULL, batches INTEGER NOT NULL, ample INTEGER NOT NULL,"
    " underpowered INTEGER NOT NULL, untestable INTEGER NOT NULL,"
    " marginal_share REAL, pairwise_share REAL, threeway_share REAL, runs_digest TEXT);"
    "CREATE TABLE IF NOT EXISTS shoal_snapshot_claims ("
    " snapshot INTEGER NOT NULL REFERENCES shoal_snapshots(id), claim INTEGER NOT NULL,"
    " kind TEXT NOT NULL, treatment TEXT NOT NULL, outcome TEXT NOT NULL, verdict TEXT NOT NULL,"
    " runs INTEGER, power REAL, mde REAL, runs_needed REAL, PRIMARY KEY (snapshot, claim));";

/* Copy SQLite's message at once (it belongs to the connection) into err. */
static int sql_fail(cov_error *err, int status, sqlite3 *db, const char *path, const char *what)
{
    return cov_fail(err, status, "", "%s %s: %s", what, path, db ? sqlite3_errmsg(db) : "no memory");
}

static double column_real(sqlite3_stmt *st, int k)
{
    return sqlite3_column_type(st, k) == SQLITE_NULL ? NAN : sqlite3_column_double(st, k);
}

int cov_history_load(const char *db_path, int missing_ok, cov_snapshot **out, size_t *n,
                     cov_error *err)
{
    *out = NULL;
    *n = 0;
    struct stat sb;
    if (stat(db_path, &sb) != 0) {
        if (missing_ok && errno == ENOENT) return COV_OK;
        return cov_fail(err, COV_EIO, "", "cannot read the history in %s: %s", db_path,
                        strerror(errno));
    }
    sqlite3 *db = NULL;
    sqlite3_stmt *st = NULL;
    cov_snapshot *snaps = NULL;
    size_t count = 0, cap = 0;
    int rc;
    if (sqlite3_open_v2(db_path, &db, SQLITE_OPEN_READONLY, NULL) != SQLITE_OK) {
        rc = sql_fail(err, COV_EIO, db, db_path, "cannot open");
        goto fail;
    }
    /* Asking the schema first tells a file that is not SQLite (an error) from one with no
     * history yet (no snapshots). */
    int has_table = cov_sqlite_has_table(db, "shoal_snapshots");
    if (has_table < 0) {
        rc = sql_fail(err, COV_EINPUT, db, db_path, "not an SQLite file with history:");
        goto fail;
    }
    if (has_table) {
        /* Snapshots recorded before the digest column existed read as digest "". */
        if (sqlite3_prepare_v2(db, "SELECT surveyed_at, runs, batches, ample, underpowered, "
                                   "untestable, marginal_share, pairwise_share, threeway_share, "
                                   "runs_digest FROM shoal_snapshots ORDER BY id", -1, &st,
                               NULL) != SQLITE_OK &&
            sqlite3_prepare_v2(db, "SELECT surveyed_at, runs, batches, ample, underpowered, "
                                   "untestable, marginal_share, pairwise_share, threeway_share, '' "
                                   "FROM shoal_snapshots ORDER BY id", -1, &st, NULL) != SQLITE_OK) {
            rc = sql_fail(err, COV_EIO, db, db_path, "cannot read the history in");
            goto fail;
        }
        int step;
        while ((step = sqlite3_step(st)) == SQLITE_ROW) {
            if (count == cap) {
                size_t bigger = cap ? 2 * cap : 8;
                cov_snapshot *grown = realloc(snaps, bigger * sizeof *grown);
                if (grown == NULL) {
                    rc = cov_fail(err, COV_ENOMEM, "", "out of memory reading the history");
                    goto fail;
                }
                snaps = grown;
                cap = bigger;
            }
            cov_snapshot *r = &snaps[count++];
            const unsigned char *at = sqlite3_column_text(st, 0);
            snprintf(r->at, sizeof r->at, "%s", at ? (const char *)at : "");
            r->n_runs = sqlite3_column_int64(st, 1);
            r->n_batches = sqlite3_column_int64(st, 2);
            r->n_ample = sqlite3_column_int64(st, 3);
            r->n_underpowered = sqlite3_column_int64(st, 4);
            r->n_blind = sqlite3_column_int64(st, 5);
            r->marginal_share = column_real(st, 6);
            r->pairwise_share = column_real(st, 7);
            r->threeway_share = column_real(st, 8);
            const unsigned char *dg = sqlite3_column_text(st, 9);
            snprintf(r->digest, sizeof r->digest, "%s", dg ? (const char *)dg : "");
        }
        if (step != SQLITE_DONE) {
            rc = sql_fail(err, COV_EIO, db, db_path, "cannot read the history in");
            goto fail;
        }
    }
    sqlite3_finalize(st);
    sqlite3_close(db);
    *out = snaps;
    *n = count;
    return COV_OK;
fail:
    sqlite3_finalize(st);
    sqlite3_close(db);
    free(snaps);
    return rc;
}

static void bind_real(sqlite3_stmt *st, int k, double x)
{
    if (isfinite(x)) sqlite3_bind_double(st, k, x);
    else sqlite3_bind_null(st, k);
}

int cov_history_record(const char *db_path, int create_file, const cov_history_source *src,
                       const cov_snapshot *r, const cov_snapshot_claim *claims, size_t n_claims,
                       cov_error *err)
{
    sqlite3 *db = NULL;
    sqlite3_stmt *st = NULL;
    int rc = COV_OK, in_tx = 0;
    /* A side file may be created; shoal's archive must already exist. */
    int create = create_file ? SQLITE_OPEN_CREATE : 0;
    if (sqlite3_open_v2(db_path, &db, SQLITE_OPEN_READWRITE | create, NULL) != SQLITE_OK) {
        rc = sql_fail(err, COV_EIO, db, db_path, "cannot open for history");
        goto fail;
    }
    sqlite3_busy_timeout(db, HISTORY_BUSY_MS);
    if (sqlite3_exec(db, "BEGIN IMMEDIATE", NULL, NULL, NULL) != SQLITE_OK) {
        rc = sql_fail(err, COV_EIO, db, db_path, "cannot write the history into");
        goto fail;
    }
    in_tx = 1;
    if (sqlite3_exec(db, history_schema, NULL, NULL, NULL) != SQLITE_OK) {
        rc = sql_fail(err, COV_EIO, db, db_path, "cannot write the history into");
        goto fail;
    }
    /* A history begun before snapshots carried the runs' digest gains the column. */
    if (sqlite3_prepare_v2(db, "SELECT runs_digest FROM shoal_snapshots LIMIT 0", -1, &st,
                           NULL) != SQLITE_OK &&
        sqlite3_exec(db, "ALTER TABLE shoal_snapshots ADD COLUMN runs_digest TEXT", NULL, NULL,
                     NULL) != SQLITE_OK) {
        rc = sql_fail(err, COV_EIO, db, db_path, "cannot write the history into");
        goto fail;
    }
    sqlite3_finalize(st);
    st = NULL;
    if (sqlite3_prepare_v2(db, "INSERT INTO shoal_snapshots (surveyed_at, graph, archive, runs, "
                               "batches, ample, underpowered, untestable, marginal_share, "
                               "pairwise_share, threeway_share, runs_digest) VALUES (?, ?, ?, ?, ?, "
                               "?, ?, ?, ?, ?, ?, ?)", -1, &st, NULL) != SQLITE_OK) {
        rc = sql_fail(err, COV_EIO, db, db_path, "cannot write the history into");
        goto fail;
    }
    sqlite3_bind_text(st, 1, r->at, -1, SQLITE_TRANSIENT);
    if (src->graph_path) sqlite3_bind_text(st, 2, src->graph_path, -1, SQLITE_TRANSIENT);
    if (src->archive_path) sqlite3_bind_text(st, 3, src->archive_path, -1, SQLITE_TRANSIENT);
    sqlite3_bind_int64(st, 4, r->n_runs);
    sqlite3_bind_int64(st, 5, r->n_batches);
    sqlite3_bind_int64(st, 6, r->n_ample);
    sqlite3_bind_int64(st, 7, r->n_underpowered);
    sqlite3_bind_int64(st, 8, r->n_blind);
    bind_real(st, 9, r->marginal_share);
    bind_real(st, 10, r->pairwise_share);
    bind_real(st, 11, r->threeway_share);
    sqlite3_bind_text(st, 12, r->digest, -1, SQLITE_TRANSIENT);
    if (sqlite3_step(st) != SQLITE_DONE) {
        rc = sql_fail(err, COV_EIO, db, db_path, "cannot write the history into");
        goto fail;
    }
    sqlite3_int64 snapshot_id = sqlite3_last_insert_rowid(db);
    sqlite3_finalize(st);
    st = NULL;
    if (sqlite3_prepare_v2(db, "INSERT INTO shoal_snapshot_claims (snapshot, claim, kind, treatment, "
                               "outcome, verdict, runs, power, mde, runs_needed) "
                               "VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?)", -1, &st, NULL) != SQLITE_OK) {
        rc = sql_fail(err, COV_EIO, db, db_path, "cannot write the history into");
        goto fail;
    }
    for (size_t i = 0; i < n_claims; i++) {
        const cov_snapshot_claim *c = &claims[i];
        sqlite3_reset(st);
        sqlite3_clear_bindings(st);
        sqlite3_bind_int64(st, 1, snapshot_id);
        sqlite3_bind_int64(st, 2, (sqlite3_int64)i + 1);
        sqlite3_bind_text(st, 3, c->kind, -1, SQLITE_STATIC);
        sqlite3_bind_text(st, 4, c->treatment, -1, SQLITE_TRANSIENT);
        sqlite3_bind_text(st, 5, c->outcome, -1, SQLITE_TRANSIENT);
        sqlite3_bind_text(st, 6, c->verdict, -1, SQLITE_STATIC);
        if (c->assessed) {
            sqlite3_bind_int64(st, 7, (sqlite3_int64)c->runs);
            bind_real(st, 8, c->power);
            bind_real(st, 9, c->mde);
            bind_real(st, 10, c->runs_needed);
        }
        if (sqlite3_step(st) != SQLITE_DONE) {
            rc = sql_fail(err, COV_EIO, db, db_path, "cannot write the history into");
            goto fail;
        }
    }
    sqlite3_finalize(st);
    st = NULL;
    if (sqlite3_exec(db, "COMMIT", NULL, NULL, NULL) != SQLITE_OK) {
        rc = sql_fail(err, COV_EIO, db, db_path, "cannot commit the history into");
        goto fail;
    }
    sqlite3_close(db);
    return COV_OK;
fail:
    sqlite3_finalize(st);
    if (in_tx) sqlite3_exec(db, "ROLLBACK", NULL, NULL, NULL);
    sqlite3_close(db);
    return rc;
}
