/* libFuzzer harness: `shoal import` of an arbitrary CSV file into a fresh archive, then reading
 * the archive back against a fixed graph as the analysis commands do. See LICENSE. */
#include <stdlib.h>
#include <string.h>

#include "coverage/coverage.h"
#include "tests/fuzz/fuzz.h"

/* An invented graph with one input of each type, whose names the seeds' headers use. */
static const char graph_text[] =
    "input arrivals real [2, 12]\n"
    "input staff integer [1, 9]\n"
    "input fast bool\n"
    "input site levels {north, south, east}\n"
    "output wait real noise 1.5\n"
    "default effect 0.25 sd\n"
    "arrivals -> wait\nstaff -> wait\nfast -> wait\nsite -> wait\n";

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    static cov_graph *g;
    cov_error err;
    if (g == NULL && cov_graph_parse_text("fuzz.graph", graph_text, &g, &err) != COV_OK) abort();
    const char *csv = fuzz_scratch(".csv", data, size);
    const char *db = fuzz_scratch_db();
    if (csv == NULL || db == NULL) return 0;
    fuzz_scratch_db_remove();
    long long batch = 0;
    size_t rows = 0;
    if (cov_import_csv(csv, db, NULL, &batch, &rows, &err) == COV_OK) {
        cov_archive *a = NULL;
        cov_data *d = NULL;
        if (cov_archive_open(db, NULL, &a, &err) == COV_OK) {
            if (cov_data_read(a, g, NULL, NULL, &d, &err) == COV_OK) cov_data_free(d);
            cov_archive_close(a);
        }
    }
    fuzz_scratch_db_remove();
    return 0;
}
