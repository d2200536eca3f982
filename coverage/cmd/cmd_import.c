/* The `shoal import` command: append a CSV file to an SQLite archive as a new batch.
 * See LICENSE. */
#include <stdio.h>
#include <string.h>

#include "coverage/plan/plan.h"
#include "coverage/report/report.h"

int cov_cmd_import(const cov_options *o, FILE *out, FILE *note, int *adequate, cov_error *err)
{
    *adequate = 1;
    if (o->csv_path == NULL || o->archive_path == NULL)
        return cov_fail(err, COV_EINPUT, "", "import needs a CSV file and --archive FILE.db");
    long long batch = 0;
    size_t rows = 0;
    cov_import_overlap ov;
    int rc = cov_import_csv_checked(o->csv_path, o->archive_path, o->table, o->again, &batch,
                                    &rows, &ov, err);
    if (rc) return rc;
    if (ov.matched > 0 && note != NULL && !o->quiet && o->format != COV_FMT_JSON) {
        /* Partial overlap (or a repeat appended on request): say how much, and where from. */
        fprintf(note, "shoal: %zu of %zu rows were already in the archive (", ov.matched, ov.rows);
        for (size_t k = 0; k < ov.n_batches; k++)
            fprintf(note, "%sbatch %lld: %zu", k ? ", " : "", ov.batch[k], ov.count[k]);
        if (ov.other > 0) fprintf(note, "%sother batches: %zu", ov.n_batches ? ", " : "", ov.other);
        if (ov.unbatched > 0)
            fprintf(note, "%swithout a batch: %zu", ov.n_batches || ov.other ? ", " : "",
                    ov.unbatched);
        fprintf(note, ")%s; the analysis counts each run once\n",
                o->again && ov.matched == ov.rows ? ", appended anyway as --again asks" : "");
    }
    if (o->quiet) return COV_OK;
    if (o->format == COV_FMT_JSON) {
        fprintf(out, "{\"schema_version\": 1, \"archive\": ");
        cov_emit_json_string(out, o->archive_path);
        fprintf(out, ", \"table\": ");
        cov_emit_json_string(out, o->table ? o->table : COV_DEFAULT_TABLE);
        fprintf(out, ", \"source\": ");
        cov_emit_json_string(out, o->csv_path);
        fprintf(out, ", \"batch\": %lld, \"rows\": %zu, \"rows_already_present\": %zu, "
                "\"appended_anyway\": %s, \"earlier_batches\": [", batch, rows, ov.matched,
                o->again && ov.matched > 0 && ov.matched == ov.rows ? "true" : "false");
        for (size_t k = 0; k < ov.n_batches; k++)
            fprintf(out, "%s{\"batch\": %lld, \"rows\": %zu}", k ? ", " : "", ov.batch[k],
                    ov.count[k]);
        fprintf(out, "]}\n");
    } else {
        cov_reflow rf;   /* long paths wrap to the terminal's width */
        FILE *w = cov_reflow_begin(&rf, out);
        fprintf(w, "imported %zu row%s from %s into %s as batch %lld\n", rows,
                rows == 1 ? "" : "s", strcmp(o->csv_path, "-") == 0 ? "standard input"
                                                                     : o->csv_path,
                o->archive_path, batch);
        cov_reflow_end(&rf, out, o->width);
    }
    return COV_OK;
}
