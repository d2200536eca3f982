/* The `shoal import` command: append a CSV file to an SQLite archive as a new batch.
 * See LICENSE. */
#include <stdio.h>

#include "coverage/plan/plan.h"
#include "coverage/report/report.h"

int cov_cmd_import(const cov_options *o, FILE *out, FILE *note, int *adequate, cov_error *err)
{
    (void)note;
    *adequate = 1;
    if (o->csv_path == NULL || o->archive_path == NULL)
        return cov_fail(err, COV_EINPUT, "", "import needs a CSV file and --archive FILE.db");
    long long batch = 0;
    size_t rows = 0;
    int rc = cov_import_csv(o->csv_path, o->archive_path, o->table, &batch, &rows, err);
    if (rc) return rc;
    if (o->quiet) return COV_OK;
    if (o->format == COV_FMT_JSON) {
        fprintf(out, "{\"schema_version\": 1, \"archive\": ");
        cov_emit_json_string(out, o->archive_path);
        fprintf(out, ", \"table\": ");
        cov_emit_json_string(out, o->table ? o->table : COV_DEFAULT_TABLE);
        fprintf(out, ", \"source\": ");
        cov_emit_json_string(out, o->csv_path);
        fprintf(out, ", \"batch\": %lld, \"rows\": %zu}\n", batch, rows);
    } else {
        fprintf(out, "imported %zu row%s from %s into %s as batch %lld\n", rows,
                rows == 1 ? "" : "s", o->csv_path, o->archive_path, batch);
    }
    return COV_OK;
}
