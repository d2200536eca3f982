/* The one decimal reader (coverage/base/number.c) against glibc's strtod, which converts decimal
 * text correctly rounded (C11 7.22.1.3; glibc documents exact conversion): every accepted text
 * must give strtod's double bit for bit, and every text outside the plain decimal syntax must be
 * refused, whatever strtod would make of it. See LICENSE. */
#include <float.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_rng.h>
#include <gsl/gsl_test.h>

#include "coverage/base/base.h"

static int scan(const char *s, double *v)
{
    return cov_number_scan(s, strlen(s), NULL, v, NULL);
}

int main(void)
{
    gsl_test_verbose(1);
    double v = 0;
    /* Refused everywhere: strtod would read each of these as a number. */
    const char *refused[] = {"0x1A", "0x1p-5", "inf", "-inf", "nan", "NAN", "infinity", " 1",
                             "1 ", "1e", "1e+", ".", "-", "+", "", "1,5", "1.2.3", "0X10"};
    for (size_t i = 0; i < sizeof refused / sizeof refused[0]; i++)
        gsl_test_int(scan(refused[i], &v), COV_NUM_NONE, "'%s' is not a plain decimal number",
                     refused[i]);
    /* Overflow has no finite value; underflow keeps the subnormal (C11 5.2.4.2.2: DBL_TRUE_MIN is
     * 2^-1074, about 4.94e-324, the value "4.9e-324" rounds to). */
    gsl_test_int(scan("1e309", &v), COV_NUM_RANGE, "1e309 is out of range");
    gsl_test_int(scan("-1e400", &v), COV_NUM_RANGE, "-1e400 is out of range");
    gsl_test_int(scan("4.9e-324", &v), COV_NUM_REAL, "4.9e-324 is a number");
    gsl_test(v != DBL_TRUE_MIN, "4.9e-324 reads as the smallest subnormal (DBL_TRUE_MIN)");
    gsl_test_int(scan("1e-400", &v), COV_NUM_REAL, "1e-400 is a number (it rounds to 0)");
    gsl_test(v != 0.0, "1e-400 reads as 0");
    long long iv = 0;
    int lz = 0;
    gsl_test_int(cov_number_scan("-42", 3, &iv, &v, &lz), COV_NUM_INT, "-42 is an integer");
    gsl_test(iv != -42 || v != -42.0 || lz != 0, "-42 reads as -42 without a leading zero");
    gsl_test_int(cov_number_scan("007", 3, &iv, &v, &lz), COV_NUM_INT, "007 is an integer");
    gsl_test(lz != 1, "007 has a leading zero");
    gsl_test_int(scan("1234567890123456789", &v), COV_NUM_REAL,
                 "19 significant digits read as a real");
    gsl_test(cov_parse_double("0x1p-5", &v) == 0, "cov_parse_double refuses 0x1p-5");
    gsl_test(cov_parse_double("0.05", &v) != 0 || v != 0.05, "cov_parse_double reads 0.05");

    /* Random decimal texts of every shape against strtod, bit for bit. */
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    gsl_rng_set(r, 20261205UL);
    size_t bad = 0, n = 200000;
    char buf[96];
    for (size_t i = 0; i < n; i++) {
        int len = 0;
        if (gsl_rng_uniform(r) < 0.3) buf[len++] = gsl_rng_uniform(r) < 0.5 ? '-' : '+';
        int int_digits = (int)gsl_rng_uniform_int(r, 21);
        int frac_digits = (int)gsl_rng_uniform_int(r, 21);
        if (int_digits + frac_digits == 0) int_digits = 1;
        for (int k = 0; k < int_digits; k++)
            buf[len++] = (char)('0' + (k == 0 && int_digits > 1 ? 1 + gsl_rng_uniform_int(r, 9)
                                                                 : gsl_rng_uniform_int(r, 10)));
        if (frac_digits > 0 || gsl_rng_uniform(r) < 0.1) {
            buf[len++] = '.';
            for (int k = 0; k < frac_digits; k++) buf[len++] = (char)('0' + gsl_rng_uniform_int(r, 10));
        }
        if (gsl_rng_uniform(r) < 0.6)
            len += snprintf(buf + len, sizeof buf - (size_t)len, "e%d",
                            (int)gsl_rng_uniform_int(r, 700) - 350);
        buf[len] = '\0';
        double want = strtod(buf, NULL), got = NAN;
        int kind = scan(buf, &got);
        if (!isfinite(want)) {
            bad += kind != COV_NUM_RANGE;
        } else if ((kind != COV_NUM_INT && kind != COV_NUM_REAL) ||
                   memcmp(&want, &got, sizeof got) != 0) {
            if (bad < 5) printf("# %s: strtod %.17g, scan %d %.17g\n", buf, want, kind, got);
            bad++;
        }
    }
    gsl_test_int((int)bad, 0, "%zu random decimal texts read bit for bit as glibc's strtod", n);
    gsl_rng_free(r);
    exit(gsl_test_summary());
}
