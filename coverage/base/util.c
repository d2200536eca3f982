/* Error filling, verdict words and option defaults shared by every coverage/ file.
 * See LICENSE. */
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "coverage/base/base.h"

int cov_fail(cov_error *err, int status, const char *where, const char *fmt, ...)
{
    if (err != NULL) {
        snprintf(err->where, sizeof err->where, "%s", where ? where : "");
        va_list ap;
        va_start(ap, fmt);
        vsnprintf(err->msg, sizeof err->msg, fmt, ap);
        va_end(ap);
    }
    return status;
}

const char *cov_verdict_word(cov_verdict v)
{
    switch (v) {
    case COV_AMPLE: return "ample";
    case COV_UNDERPOWERED: return "underpowered";
    case COV_BLIND: return "untestable";
    }
    return "?";
}

void cov_options_default(cov_options *o)
{
    memset(o, 0, sizeof *o);
    o->format = COV_FMT_TABLE;
    o->power.alpha = 0.05;
    o->power.target = 0.80;
    o->power.bonferroni = 1;
    o->power.one_sided = 0;
    o->power.test = COV_TEST_ROBUST;
    o->power.power_by = COV_POWER_BY_AUTO;
    o->coverage.min_runs = 5;
    o->coverage.bins = 10;
    o->coverage.way = 0;              /* 0: decide from the input count */
    o->coverage.dependence_threshold = 0.5;
    o->coverage.seed = 20261202UL;
    o->coverage.threads = 1;
    o->power.threads = 1;
    o->need_marginal = NAN;
    o->need_pairwise = NAN;
    o->need_threeway = NAN;
    o->budget = 0;
    o->replicates = 1;
    o->rounds = 1;
    o->width = 80;
}

int cov_text_vappend(char **s, const char *sep, const char *fmt, va_list ap)
{
    va_list again;
    va_copy(again, ap);
    int len = vsnprintf(NULL, 0, fmt, ap);
    size_t old = *s ? strlen(*s) : 0, gap = old ? strlen(sep) : 0;
    char *n = len < 0 ? NULL : realloc(*s, old + gap + (size_t)len + 1);
    if (n == NULL) {
        va_end(again);
        return COV_ENOMEM;
    }
    memcpy(n + old, sep, gap);
    vsnprintf(n + old + gap, (size_t)len + 1, fmt, again);
    va_end(again);
    *s = n;
    return COV_OK;
}

int cov_text_append(char **s, const char *sep, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    int rc = cov_text_vappend(s, sep, fmt, ap);
    va_end(ap);
    return rc;
}
