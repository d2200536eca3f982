/* Probe for tests/cli_survey.sh: `shoal survey GRAPH ARCHIVE -o DIR` with the report writer made to
 * fail halfway through the test seam cov_options.fault_at, which the shoal binary never sets.
 * See LICENSE. */
#include <stdio.h>
#include <string.h>

#include <gsl/gsl_errno.h>

#include "coverage/coverage.h"

static int fail_at_report(const char *stage) { return strcmp(stage, "report") == 0; }

int main(int argc, char **argv)
{
    if (argc != 4) {
        fprintf(stderr, "usage: probe_survey GRAPH ARCHIVE DIR\n");
        return 2;
    }
    gsl_set_error_handler_off();
    cov_options o;
    cov_options_default(&o);
    o.graph_path = argv[1];
    o.archive_path = argv[2];
    o.out_path = argv[3];
    o.quiet = 1;
    o.fault_at = fail_at_report;
    cov_error err;
    memset(&err, 0, sizeof err);
    int adequate = 0;
    int rc = cov_cmd_survey(&o, stdout, stderr, &adequate, &err);
    if (rc != COV_OK) {
        fprintf(stderr, "shoal: %s%s%s\n", err.where, err.where[0] ? ": " : "", err.msg);
        return 2;
    }
    return adequate ? 0 : 1;
}
