/* libFuzzer harness: the graph parser and claim derivation on arbitrary text. See LICENSE. */
#include <stdlib.h>
#include <string.h>

#include "coverage/coverage.h"
#include "tests/fuzz/fuzz.h"

/* Claim derivation grows with the cube of the variable count (issue 12); inputs beyond this size
 * would spend the fuzzing time in one slow case rather than on the parser's paths. */
#define FUZZ_GRAPH_MAX_BYTES 4096

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    if (size > FUZZ_GRAPH_MAX_BYTES) return 0;
    /* The file path route reads the bytes as given (NUL and non-UTF-8 included). */
    const char *path = fuzz_scratch(".graph", data, size);
    if (path == NULL) return 0;
    cov_graph *g = NULL;
    cov_claims *c = NULL;
    cov_error err;
    if (cov_graph_parse_file(path, &g, &err) == COV_OK) {
        if (cov_claims_derive(g, &c, &err) == COV_OK) cov_claims_free(c);
        cov_graph_free(g);
    }
    return 0;
}
