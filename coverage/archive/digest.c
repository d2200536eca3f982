/* The content digest of the runs: SHA-256 over the recorded columns as shoal read them, so that
 * two surveys of the same runs agree whatever else (history tables, page layout) the file holds.
 * See LICENSE. */
#include <math.h>
#include <stdint.h>
#include <string.h>

#include "coverage/archive/archive.h"

void cov_data_digest(const cov_graph *g, const cov_data *d, char hex[65])
{
    cov_sha256 h;
    cov_sha256_init(&h);
    unsigned char n8[8];
    uint64_t n = d ? (uint64_t)d->n_runs : 0;
    for (int i = 0; i < 8; i++) n8[i] = (unsigned char)(n >> (8 * i));
    cov_sha256_update(&h, n8, 8);
    for (size_t v = 0; d != NULL && v < g->n_vars; v++) {
        if (d->col[v] == NULL) continue;
        /* The name with its NUL, then each value as IEEE 754 binary64, little-endian; every
         * missing cell as the one quiet NaN 0x7ff8000000000000. */
        cov_sha256_update(&h, g->vars[v].name, strlen(g->vars[v].name) + 1);
        /* Gathered into a buffer of whole blocks, so the hash runs over long pieces. */
        unsigned char buf[4096];
        size_t fill = 0;
        for (size_t r = 0; r < d->n_runs; r++) {
            double x = d->col[v][r];
            uint64_t bits = 0x7ff8000000000000ULL;
            if (!isnan(x)) {
                if (x == 0) x = 0;   /* -0 and +0 are the same value */
                memcpy(&bits, &x, sizeof bits);
            }
#if defined(__BYTE_ORDER__) && __BYTE_ORDER__ == __ORDER_LITTLE_ENDIAN__
            memcpy(buf + fill, &bits, 8);   /* already little-endian */
#else
            for (int i = 0; i < 8; i++) buf[fill + (size_t)i] = (unsigned char)(bits >> (8 * i));
#endif
            fill += 8;
            if (fill == sizeof buf) {
                cov_sha256_update(&h, buf, fill);
                fill = 0;
            }
        }
        cov_sha256_update(&h, buf, fill);
    }
    cov_sha256_hex(&h, hex);
}
