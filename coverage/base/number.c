/* The one reader of decimal numbers, shared by import, the archive reader, the graph file, the
 * plan file and the command line, so that one text never means two values. See LICENSE. */
#include <errno.h>
#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "coverage/base/base.h"

/* Powers of ten that are exact in a double (10^22 is the largest, since 5^22 < 2^53). */
static const double exact_pow10[] = {
    1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11,
    1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22
};
#define EXACT_POW10_MAX 22
#define MANTISSA_EXACT_MAX 9007199254740992ULL   /* 2^53 */
/* Exponent digits beyond this value cannot change the result (it is 0 or infinite either way). */
#define EXPONENT_CAP 100000

/* Reals take Clinger's fast path when the significand is below 2^53 and the power of ten is
 * exact, which rounds correctly with one IEEE operation (W. D. Clinger, "How to read floating
 * point numbers accurately", PLDI 1990); the rest go through strtod, which rounds correctly too
 * (C11 7.22.1.3 with glibc's exact conversion). */
int cov_number_scan(const char *s, size_t len, long long *iv, double *dv, int *leading_zero)
{
    const char *p = s, *end = s + len;
    int neg = 0;
    if (leading_zero) *leading_zero = 0;
    if (p < end && (*p == '+' || *p == '-')) neg = *p++ == '-';
    const char *digits = p;
    uint64_t m = 0;
    int sig = 0, frac = 0, overflow = 0;
    while (p < end && *p >= '0' && *p <= '9') {
        if (sig < 19) m = m * 10 + (uint64_t)(*p - '0');
        else overflow = 1;
        if (m != 0) sig++;
        p++;
    }
    size_t int_digits = (size_t)(p - digits);
    if (int_digits > 1 && digits[0] == '0' && leading_zero) *leading_zero = 1;
    int is_real = 0;
    size_t frac_digits = 0;
    if (p < end && *p == '.') {
        is_real = 1;
        p++;
        while (p < end && *p >= '0' && *p <= '9') {
            if (sig < 19) {
                m = m * 10 + (uint64_t)(*p - '0');
                frac++;
                if (m != 0) sig++;
            } else {
                overflow = 1;
            }
            p++;
            frac_digits++;
        }
    }
    if (int_digits + frac_digits == 0) return COV_NUM_NONE;
    long e10 = 0;
    if (p < end && (*p == 'e' || *p == 'E')) {
        is_real = 1;
        p++;
        int eneg = 0;
        if (p < end && (*p == '+' || *p == '-')) eneg = *p++ == '-';
        if (p == end || *p < '0' || *p > '9') return COV_NUM_NONE;
        while (p < end && *p >= '0' && *p <= '9') {
            if (e10 < EXPONENT_CAP) e10 = e10 * 10 + (*p - '0');
            p++;
        }
        if (eneg) e10 = -e10;
    }
    if (p != end) return COV_NUM_NONE;
    if (!is_real && !overflow && sig <= 18) {
        if (iv) *iv = neg ? -(long long)m : (long long)m;
        if (dv) *dv = neg ? -(double)m : (double)m;
        return COV_NUM_INT;
    }
    long scale = e10 - frac;
    if (!overflow && m < MANTISSA_EXACT_MAX && FLT_EVAL_METHOD == 0 &&
        scale >= -EXACT_POW10_MAX && scale <= EXACT_POW10_MAX) {
        double v = (double)m;
        v = scale < 0 ? v / exact_pow10[-scale] : v * exact_pow10[scale];
        if (dv) *dv = neg ? -v : v;
        return COV_NUM_REAL;
    }
    /* strtod needs a terminated string: callers pass s[len] == '\0'. The syntax is checked
     * above, so strtod cannot take a hexadecimal, "inf" or "nan" reading here. */
    char *stop = NULL;
    errno = 0;
    double v = strtod(s, &stop);
    if (stop != end) return COV_NUM_NONE;
    /* Underflow gives a subnormal or zero, which is the value; overflow has no finite value. */
    if (!isfinite(v)) return COV_NUM_RANGE;
    if (dv) *dv = v;
    return COV_NUM_REAL;
}

int cov_parse_double(const char *s, double *out)
{
    double v;
    int kind = cov_number_scan(s, strlen(s), NULL, &v, NULL);
    if (kind != COV_NUM_INT && kind != COV_NUM_REAL) return -1;
    *out = v;
    return 0;
}
