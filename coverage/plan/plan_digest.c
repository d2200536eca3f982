/* The SHA-256 digest of a plan file, which ties recorded predictions to the plan that made them.
 * See LICENSE. */
#include <errno.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>

#include "coverage/plan/plan.h"

/* SHA-256 as specified in FIPS 180-4 (NIST 2015), sec. 6.2: the round constants of sec. 4.2.2 and
 * the initial hash value of sec. 5.3.3. */
static const uint32_t K256[64] = {
    0x428a2f98, 0x71374491, 0xb5c0fbcf, 0xe9b5dba5, 0x3956c25b, 0x59f111f1, 0x923f82a4, 0xab1c5ed5,
    0xd807aa98, 0x12835b01, 0x243185be, 0x550c7dc3, 0x72be5d74, 0x80deb1fe, 0x9bdc06a7, 0xc19bf174,
    0xe49b69c1, 0xefbe4786, 0x0fc19dc6, 0x240ca1cc, 0x2de92c6f, 0x4a7484aa, 0x5cb0a9dc, 0x76f988da,
    0x983e5152, 0xa831c66d, 0xb00327c8, 0xbf597fc7, 0xc6e00bf3, 0xd5a79147, 0x06ca6351, 0x14292967,
    0x27b70a85, 0x2e1b2138, 0x4d2c6dfc, 0x53380d13, 0x650a7354, 0x766a0abb, 0x81c2c92e, 0x92722c85,
    0xa2bfe8a1, 0xa81a664b, 0xc24b8b70, 0xc76c51a3, 0xd192e819, 0xd6990624, 0xf40e3585, 0x106aa070,
    0x19a4c116, 0x1e376c08, 0x2748774c, 0x34b0bcb5, 0x391c0cb3, 0x4ed8aa4a, 0x5b9cca4f, 0x682e6ff3,
    0x748f82ee, 0x78a5636f, 0x84c87814, 0x8cc70208, 0x90befffa, 0xa4506ceb, 0xbef9a3f7, 0xc67178f2};

#define ROTR(x, n) (((x) >> (n)) | ((x) << (32 - (n))))

static void block(uint32_t h[8], const unsigned char *b)
{
    uint32_t w[64];
    for (int t = 0; t < 16; t++)
        w[t] = (uint32_t)b[4 * t] << 24 | (uint32_t)b[4 * t + 1] << 16 |
               (uint32_t)b[4 * t + 2] << 8 | (uint32_t)b[4 * t + 3];
    for (int t = 16; t < 64; t++) {
        uint32_t s0 = ROTR(w[t - 15], 7) ^ ROTR(w[t - 15], 18) ^ (w[t - 15] >> 3);
        uint32_t s1 = ROTR(w[t - 2], 17) ^ ROTR(w[t - 2], 19) ^ (w[t - 2] >> 10);
        w[t] = w[t - 16] + s0 + w[t - 7] + s1;
    }
    uint32_t a = h[0], bb = h[1], c = h[2], d = h[3], e = h[4], f = h[5], g = h[6], hh = h[7];
    for (int t = 0; t < 64; t++) {
        uint32_t t1 = hh + (ROTR(e, 6) ^ ROTR(e, 11) ^ ROTR(e, 25)) + ((e & f) ^ (~e & g)) +
                      K256[t] + w[t];
        uint32_t t2 = (ROTR(a, 2) ^ ROTR(a, 13) ^ ROTR(a, 22)) + ((a & bb) ^ (a & c) ^ (bb & c));
        hh = g;
        g = f;
        f = e;
        e = d + t1;
        d = c;
        c = bb;
        bb = a;
        a = t1 + t2;
    }
    h[0] += a, h[1] += bb, h[2] += c, h[3] += d, h[4] += e, h[5] += f, h[6] += g, h[7] += hh;
}

int cov_sha256_file(const char *path, char hex[65], cov_error *err)
{
    FILE *f = fopen(path, "rb");
    if (f == NULL)
        return cov_fail(err, COV_EIO, path, "cannot read to take its digest: %s", strerror(errno));
    uint32_t h[8] = {0x6a09e667, 0xbb67ae85, 0x3c6ef372, 0xa54ff53a,
                     0x510e527f, 0x9b05688c, 0x1f83d9ab, 0x5be0cd19};
    unsigned char buf[64];
    uint64_t bits = 0;
    size_t got;
    int done = 0;
    while (!done) {
        got = fread(buf, 1, 64, f);
        bits += (uint64_t)got * 8;
        if (got == 64) {
            block(h, buf);
            continue;
        }
        /* Padding (sec. 5.1.1): a 1 bit, zeros, then the length in bits, big-endian. */
        buf[got++] = 0x80;
        if (got > 56) {
            memset(buf + got, 0, 64 - got);
            block(h, buf);
            got = 0;
        }
        memset(buf + got, 0, 56 - got);
        for (int k = 0; k < 8; k++) buf[56 + k] = (unsigned char)(bits >> (56 - 8 * k));
        block(h, buf);
        done = 1;
    }
    int bad = ferror(f);
    fclose(f);
    if (bad) return cov_fail(err, COV_EIO, path, "cannot read to take its digest");
    for (int k = 0; k < 8; k++) snprintf(hex + 8 * k, 9, "%08x", (unsigned)h[k]);
    return COV_OK;
}
