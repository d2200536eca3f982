/* Columns of the table of runs that are not graph variables: a run's cost, its seed.
 * See LICENSE. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <sqlite3.h>

#include "coverage/archive/archive.h"

int cov_archive_has_column(const cov_archive *a, const char *name)
{
    for (size_t i = 0; i < cov_archive_n_columns(a); i++)
        if (cov_ascii_casecmp(cov_archive_column(a, i), name) == 0) return 1;
    return 0;
}

int cov_archive_read_number(cov_archive *a, const char *name, double **out, size_t *n,
                            cov_error *err)
{
    *out = NULL;
    *n = 0;
    if (!cov_archive_has_column(a, name))
        return cov_fail(err, COV_EINPUT, cov_archive_path(a), "table '%s' has no column '%s'",
                        cov_archive_table(a), name);
    char *qc = cov_sql_ident(name), *qt = cov_sql_ident(cov_archive_table(a)), *sql = NULL;
    sqlite3_stmt *st = NULL;
    double *vals = NULL;
    size_t cap = 0, count = 0;
    int rc = COV_ENOMEM;
    if (qc == NULL || qt == NULL) goto fail;
    size_t len = strlen(qc) + strlen(qt) + 64;
    if ((sql = malloc(len)) == NULL) goto fail;
    /* The same order as cov_data_read: rowid order, else the table's own. */
    snprintf(sql, len, "SELECT %s FROM %s ORDER BY rowid", qc, qt);
    sqlite3 *db = cov_archive_db(a);
    if (sqlite3_prepare_v2(db, sql, -1, &st, NULL) != SQLITE_OK) {
        snprintf(sql, len, "SELECT %s FROM %s", qc, qt);
        if (sqlite3_prepare_v2(db, sql, -1, &st, NULL) != SQLITE_OK) {
            rc = cov_fail(err, COV_EIO, cov_archive_path(a), "cannot read column '%s': %s", name,
                          sqlite3_errmsg(db));
            goto fail;
        }
    }
    int step;
    while ((step = sqlite3_step(st)) == SQLITE_ROW) {
        if (count == cap) {
            size_t nc = cap ? 2 * cap : 1024;
            double *nv = realloc(vals, nc * sizeof *nv);
            if (nv == NULL) goto fail;
            vals = nv;
            cap = nc;
        }
        int t = sqlite3_column_type(st, 0);
        double x = NAN;
        if (t == SQLITE_INTEGER || t == SQLITE_FLOAT) x = sqlite3_column_double(st, 0);
        else if (t == SQLITE_TEXT) {
            const char *s = (const char *)sqlite3_column_text(st, 0);
            char *end = NULL;
            double y = s != NULL ? strtod(s, &end) : NAN;
            if (s != NULL && end != s && *end == '\0' && isfinite(y)) x = y;
        }
        vals[count++] = x;
    }
    if (step != SQLITE_DONE) {
        rc = cov_fail(err, COV_EIO, cov_archive_path(a), "cannot read column '%s': %s", name,
                      sqlite3_errmsg(db));
        goto fail;
    }
    sqlite3_finalize(st);
    free(qc);
    free(qt);
    free(sql);
    *out = vals;
    *n = count;
    return COV_OK;
fail:
    if (rc == COV_ENOMEM) cov_fail(err, COV_ENOMEM, "", "out of memory reading column '%s'", name);
    sqlite3_finalize(st);
    free(qc);
    free(qt);
    free(sql);
    free(vals);
    return rc;
}
