/* The SHA-256 digest of a plan file, which ties recorded predictions to the plan that made them.
 * See LICENSE. */
#include <errno.h>
#include <stdio.h>
#include <string.h>

#include "coverage/plan/plan.h"

/* SHA-256 (FIPS 180-4) by coverage/base/sha256.c, read in 16 KiB pieces. */
int cov_sha256_file(const char *path, char hex[65], cov_error *err)
{
    FILE *f = fopen(path, "rb");
    if (f == NULL)
        return cov_fail(err, COV_EIO, path, "cannot read to take its digest: %s", strerror(errno));
    cov_sha256 h;
    cov_sha256_init(&h);
    unsigned char buf[1 << 14];
    size_t got;
    while ((got = fread(buf, 1, sizeof buf, f)) > 0) cov_sha256_update(&h, buf, got);
    int bad = ferror(f);
    fclose(f);
    if (bad) return cov_fail(err, COV_EIO, path, "cannot read to take its digest");
    cov_sha256_hex(&h, hex);
    return COV_OK;
}
