/* Tests of SHA-256 (coverage/base/sha256.c) and of terminal word wrapping (coverage/base/term.c).
 * See LICENSE. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_test.h>

#include "coverage/base/base.h"

static int portable;   /* 1: the portable compression even where the processor has SHA */

static void digest_of(const void *p, size_t n, size_t chunk, char hex[65])
{
    cov_sha256 h;
    cov_sha256_init(&h);
    if (portable) h.hw = 0;
    for (size_t k = 0; k < n; k += chunk)
        cov_sha256_update(&h, (const char *)p + k, n - k < chunk ? n - k : chunk);
    cov_sha256_hex(&h, hex);
}

int main(void)
{
    gsl_test_verbose(1);
    cov_sha256 probe;
    cov_sha256_init(&probe);
    int hw = probe.hw;
    /* FIPS 180-2, Appendix B.1-B.3 (the published SHA-256 examples); the same values come out of
     * Python's hashlib (checked when these lines were written). Exact: a digest matches or not. */
    static const struct { const char *msg; size_t repeat; const char *hex; } vec[] = {
        {"abc", 1, "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"},
        {"abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq", 1,
         "248d6a61d20638b8e5c026930c3e6039a33ce45964ff2167f6ecedd419db06c1"},
        {"a", 1000000, "cdc76e5c9914fb9281a1c7e284d73e67f1809a48a497200e046d39ccc7112cd0"},
        /* The empty message (FIPS 180-4's padding of zero bits; hashlib agrees). */
        {"", 1, "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855"},
    };
    for (size_t k = 0; k < sizeof vec / sizeof vec[0]; k++) {
        size_t len = strlen(vec[k].msg) * vec[k].repeat;
        char *buf = malloc(len + 1);
        for (size_t r = 0; r < vec[k].repeat; r++)
            memcpy(buf + r * strlen(vec[k].msg), vec[k].msg, strlen(vec[k].msg));
        /* Fed whole, and in pieces that straddle the 64-byte blocks. */
        const size_t chunks[] = {len ? len : 1, 1, 7, 63, 64, 65, 4096};
        for (portable = 0; portable < 2; portable++)
            for (size_t c = 0; c < sizeof chunks / sizeof chunks[0]; c++) {
                char hex[65];
                digest_of(buf, len, chunks[c], hex);
                gsl_test(strcmp(hex, vec[k].hex) != 0, "SHA-256 of FIPS example %zu in pieces of "
                         "%zu bytes (%s): %s", k + 1, chunks[c], portable ? "portable" :
                         hw ? "SHA extensions" : "portable, no SHA extensions", hex);
            }
        free(buf);
    }
    /* The two compressions agree on pseudo-random messages of every length up to 300 bytes
     * (identity: the same function by two implementations). */
    if (hw) {
        unsigned char msg[300];
        unsigned long long s = 20261205ULL;
        int differ = 0;
        for (size_t len = 0; len <= sizeof msg; len++) {
            for (size_t i = 0; i < len; i++) {
                s = s * 6364136223846793005ULL + 1442695040888963407ULL;   /* Knuth's MMIX LCG */
                msg[i] = (unsigned char)(s >> 56);
            }
            char a[65], b[65];
            portable = 0;
            digest_of(msg, len, 37, a);
            portable = 1;
            digest_of(msg, len, 37, b);
            differ += strcmp(a, b) != 0;
        }
        gsl_test_int(differ, 0, "SHA extensions and the portable compression agree on 301 "
                     "pseudo-random messages");
    }

    /* Wrapping: no line passes the width, words stay whole, the text survives word for word. */
    const char *text = "open path arrivals -> occupancy <- case_mix -> left_early runs through "
                       "hidden case_mix, a somewhat long note about a claim";
    char *out = NULL;
    size_t out_len = 0;
    FILE *m = open_memstream(&out, &out_len);
    size_t col = cov_term_wrap(m, text, 13, 13, 40);
    fclose(m);
    size_t longest = 0, line = 13;
    for (const char *p = out; *p; p++) {
        if (*p == '\n') {
            if (line > longest) longest = line;
            line = 0;
        } else {
            line++;
        }
    }
    if (line > longest) longest = line;
    gsl_test(longest > 40, "wrapped lines stay within 40 columns (longest %zu)", longest);
    gsl_test_int((int)col, (int)line, "the returned column is where the text ends");
    char joined[512] = "";
    size_t j = 0;
    for (const char *p = out; *p && j < sizeof joined - 1; p++) {
        if (*p == '\n') continue;
        if (*p == ' ' && j > 0 && joined[j - 1] == ' ') continue;
        joined[j++] = *p;
    }
    joined[j] = '\0';
    gsl_test(strcmp(joined, text) != 0, "wrapping keeps the words: '%s'", joined);
    free(out);
    /* Control characters in user text become '?'. */
    m = open_memstream(&out, &out_len);
    cov_term_wrap(m, "a\033[2Jb", 0, 2, 80);
    fclose(m);
    gsl_test(strcmp(out, "a?[2Jb") != 0, "an escape sequence is shown as '?': %s", out);
    free(out);
    return gsl_test_summary();
}
