/* The `shoal import` command. See LICENSE. */
#include "coverage/coverage.h"

/* Placeholder until the command is written: it reports that it is not available. */
int cov_cmd_import(const cov_options *o, FILE *out, FILE *note, int *adequate, cov_error *err)
{
    (void)o; (void)out; (void)note; (void)adequate;
    return cov_fail(err, COV_EINPUT, "", "the import command is not built yet");
}
