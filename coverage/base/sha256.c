/* SHA-256 (FIPS 180-4, section 6.2) for the audit trail's digests of the graph file and of the
 * runs; by the x86 SHA extensions when the processor has them (the same digest, faster).
 * See LICENSE. */
#include <stdio.h>
#include <string.h>

#include "coverage/base/base.h"

#if defined(__x86_64__) && defined(__GNUC__)
#include <cpuid.h>
#include <immintrin.h>
#define COV_SHA_X86 1
#endif

/* The round constants: the first 32 bits of the fractional parts of the cube roots of the first
 * 64 primes (FIPS 180-4, section 4.2.2). */
static const uint32_t K[64] = {
    0x428a2f98, 0x71374491, 0xb5c0fbcf, 0xe9b5dba5, 0x3956c25b, 0x59f111f1, 0x923f82a4, 0xab1c5ed5,
    0xd807aa98, 0x12835b01, 0x243185be, 0x550c7dc3, 0x72be5d74, 0x80deb1fe, 0x9bdc06a7, 0xc19bf174,
    0xe49b69c1, 0xefbe4786, 0x0fc19dc6, 0x240ca1cc, 0x2de92c6f, 0x4a7484aa, 0x5cb0a9dc, 0x76f988da,
    0x983e5152, 0xa831c66d, 0xb00327c8, 0xbf597fc7, 0xc6e00bf3, 0xd5a79147, 0x06ca6351, 0x14292967,
    0x27b70a85, 0x2e1b2138, 0x4d2c6dfc, 0x53380d13, 0x650a7354, 0x766a0abb, 0x81c2c92e, 0x92722c85,
    0xa2bfe8a1, 0xa81a664b, 0xc24b8b70, 0xc76c51a3, 0xd192e819, 0xd6990624, 0xf40e3585, 0x106aa070,
    0x19a4c116, 0x1e376c08, 0x2748774c, 0x34b0bcb5, 0x391c0cb3, 0x4ed8aa4a, 0x5b9cca4f, 0x682e6ff3,
    0x748f82ee, 0x78a5636f, 0x84c87814, 0x8cc70208, 0x90befffa, 0xa4506ceb, 0xbef9a3f7, 0xc67178f2,
};

#define ROTR(x, n) (((x) >> (n)) | ((x) << (32 - (n))))

/* One 64-byte block by the portable compression function (FIPS 180-4, section 6.2.2). */
static void block(cov_sha256 *h, const unsigned char *p)
{
    uint32_t w[64];
    for (int t = 0; t < 16; t++)
        w[t] = (uint32_t)p[4 * t] << 24 | (uint32_t)p[4 * t + 1] << 16 |
               (uint32_t)p[4 * t + 2] << 8 | (uint32_t)p[4 * t + 3];
    for (int t = 16; t < 64; t++) {
        uint32_t s0 = ROTR(w[t - 15], 7) ^ ROTR(w[t - 15], 18) ^ (w[t - 15] >> 3);
        uint32_t s1 = ROTR(w[t - 2], 17) ^ ROTR(w[t - 2], 19) ^ (w[t - 2] >> 10);
        w[t] = w[t - 16] + s0 + w[t - 7] + s1;
    }
    uint32_t a = h->state[0], b = h->state[1], c = h->state[2], d = h->state[3];
    uint32_t e = h->state[4], f = h->state[5], g = h->state[6], k = h->state[7];
    for (int t = 0; t < 64; t++) {
        uint32_t t1 = k + (ROTR(e, 6) ^ ROTR(e, 11) ^ ROTR(e, 25)) + ((e & f) ^ (~e & g)) + K[t] +
                      w[t];
        uint32_t t2 = (ROTR(a, 2) ^ ROTR(a, 13) ^ ROTR(a, 22)) + ((a & b) ^ (a & c) ^ (b & c));
        k = g, g = f, f = e, e = d + t1, d = c, c = b, b = a, a = t1 + t2;
    }
    h->state[0] += a, h->state[1] += b, h->state[2] += c, h->state[3] += d;
    h->state[4] += e, h->state[5] += f, h->state[6] += g, h->state[7] += k;
}

#ifdef COV_SHA_X86
/* The same compression by the SHA extensions (Intel, "Intel SHA Extensions", 2013: SHA256RNDS2
 * does two rounds on the state held as ABEF and CDGH; SHA256MSG1 and SHA256MSG2 compute the
 * message schedule of section 6.2.2 four words at a time). */
__attribute__((target("sha,sse4.1,ssse3"))) static void blocks_x86(uint32_t state[8],
                                                                 const unsigned char *p,
                                                                 size_t n_blocks)
{
    /* Each 32-bit word of the block is big-endian. */
    const __m128i swap = _mm_set_epi64x(0x0c0d0e0f08090a0bLL, 0x0405060700010203LL);
    __m128i dcba = _mm_loadu_si128((const __m128i *)&state[0]);
    __m128i hgfe = _mm_loadu_si128((const __m128i *)&state[4]);
    __m128i cdab = _mm_shuffle_epi32(dcba, 0xb1);
    __m128i efgh = _mm_shuffle_epi32(hgfe, 0x1b);
    __m128i abef = _mm_alignr_epi8(cdab, efgh, 8);
    __m128i cdgh = _mm_blend_epi16(efgh, cdab, 0xf0);
    for (; n_blocks > 0; n_blocks--, p += 64) {
        __m128i abef0 = abef, cdgh0 = cdgh, w[16];
        for (int g = 0; g < 16; g++) {
            if (g < 4)
                w[g] = _mm_shuffle_epi8(_mm_loadu_si128((const __m128i *)(p + 16 * g)), swap);
            else
                w[g] = _mm_sha256msg2_epu32(
                    _mm_add_epi32(_mm_sha256msg1_epu32(w[g - 4], w[g - 3]),
                                  _mm_alignr_epi8(w[g - 1], w[g - 2], 4)),
                    w[g - 1]);
            __m128i wk = _mm_add_epi32(w[g], _mm_loadu_si128((const __m128i *)&K[4 * g]));
            cdgh = _mm_sha256rnds2_epu32(cdgh, abef, wk);
            abef = _mm_sha256rnds2_epu32(abef, cdgh, _mm_shuffle_epi32(wk, 0x0e));
        }
        abef = _mm_add_epi32(abef, abef0);
        cdgh = _mm_add_epi32(cdgh, cdgh0);
    }
    __m128i feba = _mm_shuffle_epi32(abef, 0x1b);
    __m128i dchg = _mm_shuffle_epi32(cdgh, 0xb1);
    _mm_storeu_si128((__m128i *)&state[0], _mm_blend_epi16(feba, dchg, 0xf0));
    _mm_storeu_si128((__m128i *)&state[4], _mm_alignr_epi8(dchg, feba, 8));
}

/* CPUID leaf 7 EBX bit 29 (SHA), leaf 1 ECX bits 19 (SSE4.1) and 9 (SSSE3). */
static int cpu_has_sha(void)
{
    unsigned a, b, c, d;
    if (!__get_cpuid(1, &a, &b, &c, &d) || !(c & (1u << 19)) || !(c & (1u << 9))) return 0;
    if (!__get_cpuid_count(7, 0, &a, &b, &c, &d)) return 0;
    return (b >> 29) & 1u;
}
#endif

/* n_blocks whole blocks from p, by the extensions when init found them. */
static void blocks(cov_sha256 *h, const unsigned char *p, size_t n_blocks)
{
#ifdef COV_SHA_X86
    if (h->hw) {
        blocks_x86(h->state, p, n_blocks);
        return;
    }
#endif
    for (; n_blocks > 0; n_blocks--, p += 64) block(h, p);
}

void cov_sha256_init(cov_sha256 *h)
{
    /* FIPS 180-4, section 5.3.3. */
    static const uint32_t H0[8] = {0x6a09e667, 0xbb67ae85, 0x3c6ef372, 0xa54ff53a,
                                   0x510e527f, 0x9b05688c, 0x1f83d9ab, 0x5be0cd19};
    memcpy(h->state, H0, sizeof H0);
    h->bytes = 0;
    h->fill = 0;
#ifdef COV_SHA_X86
    h->hw = cpu_has_sha();
#else
    h->hw = 0;
#endif
}

void cov_sha256_update(cov_sha256 *h, const void *data, size_t n)
{
    const unsigned char *p = data;
    h->bytes += n;
    while (n > 0) {
        if (h->fill == 0 && n >= 64) {   /* whole blocks straight from the caller's bytes */
            blocks(h, p, n / 64);
            p += n / 64 * 64, n %= 64;
            continue;
        }
        size_t take = 64 - h->fill < n ? 64 - h->fill : n;
        memcpy(h->buf + h->fill, p, take);
        h->fill += take, p += take, n -= take;
        if (h->fill == 64) {
            blocks(h, h->buf, 1);
            h->fill = 0;
        }
    }
}

void cov_sha256_hex(cov_sha256 *h, char hex[65])
{
    /* Padding: a 1 bit, zeros, and the message length in bits as 64 bits (section 5.1.1). */
    uint64_t bits = h->bytes * 8;
    unsigned char pad[72] = {0x80};
    size_t n = (h->fill < 56 ? 56 : 120) - h->fill;
    for (int i = 0; i < 8; i++) pad[n + (size_t)i] = (unsigned char)(bits >> (56 - 8 * i));
    cov_sha256_update(h, pad, n + 8);
    for (int i = 0; i < 8; i++) snprintf(hex + 8 * i, 9, "%08x", (unsigned)h->state[i]);
}
