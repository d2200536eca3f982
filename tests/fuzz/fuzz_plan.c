/* libFuzzer harness: the plan-file reader (`shoal survey --plan FILE`) on arbitrary bytes, against
 * a fixed graph. See LICENSE. */
#include <stdlib.h>
#include <string.h>

#include "coverage/plan/plan.h"
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
    const char *path = fuzz_scratch(".csv", data, size);
    if (path == NULL) return 0;
    double *rows = NULL;
    size_t n = 0;
    if (cov_plan_read_csv(g, path, &rows, &n, &err) == COV_OK) free(rows);
    return 0;
}
