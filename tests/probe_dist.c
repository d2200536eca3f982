/* Probe for tests/ref_dist.py and tests/ref_tost.py: evaluates power/ distributions line by line.
 * See LICENSE. */
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_errno.h>

#include "power/power.h"

/* Input lines on stdin, one query each; output one line each, "lower upper" or one value, %.17g:
 *   nct t df ncp              ncf f d1 d2 lam            ncx2 x df lam
 *   nctq p upper df ncp       ncfq p upper d1 d2 lam     ncx2q p upper df lam
 *   tost theta lo hi se df alpha                         owenq nu t delta R
 * A failed computation prints "ERR <pw_strerror text>"; a malformed line exits with status 2. */

#define MAX_ARGS 6
#define LINE_MAX_LEN 1024

static int parse_args(char *rest, double *v, int want)
{
    char *p = rest;
    for (int i = 0; i < want; i++) {
        char *end;
        errno = 0;
        v[i] = strtod(p, &end);
        if (end == p || errno == ERANGE)
            return -1;
        p = end;
    }
    while (*p == ' ' || *p == '\t' || *p == '\n' || *p == '\r')
        p++;
    return *p == '\0' ? 0 : -1;
}

int main(void)
{
    gsl_set_error_handler_off();
    char line[LINE_MAX_LEN];
    long lineno = 0;
    while (fgets(line, sizeof line, stdin)) {
        lineno++;
        char cmd[16];
        int used = 0;
        if (sscanf(line, "%15s%n", cmd, &used) != 1)
            continue;
        char *rest = line + used;
        double v[MAX_ARGS], lo = 0.0, up = 0.0, x = 0.0;
        int s, two = 1, want;
        if (strcmp(cmd, "nct") == 0 || strcmp(cmd, "ncx2") == 0 || strcmp(cmd, "nctq") == 0)
            want = strcmp(cmd, "nctq") == 0 ? 4 : 3;
        else if (!strcmp(cmd, "ncf") || !strcmp(cmd, "owenq") || !strcmp(cmd, "ncx2q"))
            want = 4;
        else if (strcmp(cmd, "ncfq") == 0)
            want = 5;
        else if (strcmp(cmd, "tost") == 0)
            want = 6;
        else {
            fprintf(stderr, "probe_dist: line %ld: unknown query '%s'\n", lineno, cmd);
            return 2;
        }
        if (parse_args(rest, v, want) != 0
            || (cmd[strlen(cmd) - 1] == 'q' && strcmp(cmd, "owenq") != 0 && v[1] != 0.0
                && v[1] != 1.0)) {
            fprintf(stderr, "probe_dist: line %ld: expected %d numbers after '%s' (upper 0 or 1)\n",
                    lineno, want, cmd);
            return 2;
        }
        if (strcmp(cmd, "nct") == 0)
            s = pw_nct_cdf(v[0], v[1], v[2], &lo, &up);
        else if (strcmp(cmd, "ncf") == 0)
            s = pw_ncf_cdf(v[0], v[1], v[2], v[3], &lo, &up);
        else if (strcmp(cmd, "ncx2") == 0)
            s = pw_ncchisq_cdf(v[0], v[1], v[2], &lo, &up);
        else {
            two = 0;
            if (strcmp(cmd, "nctq") == 0)
                s = pw_nct_quantile(v[0], (int)v[1], v[2], v[3], &x);
            else if (strcmp(cmd, "ncfq") == 0)
                s = pw_ncf_quantile(v[0], (int)v[1], v[2], v[3], v[4], &x);
            else if (strcmp(cmd, "ncx2q") == 0)
                s = pw_ncchisq_quantile(v[0], (int)v[1], v[2], v[3], &x);
            else if (strcmp(cmd, "owenq") == 0)
                s = pw_owen_q(v[0], v[1], v[2], v[3], &x);
            else
                s = pw_tost_power(v[0], v[1], v[2], v[3], v[4], v[5], &x);
        }
        if (s != PW_OK)
            printf("ERR %s\n", pw_strerror(s));
        else if (two)
            printf("%.17g %.17g\n", lo, up);
        else
            printf("%.17g\n", x);
        fflush(stdout);
    }
    return 0;
}
