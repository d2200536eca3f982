/* Keeps gnuplot's SVG files well-formed XML whatever the names in them: gnuplot escapes '<' and
 * '&' in text but not '>', and the sequence "]]>" may not appear in XML character data (XML 1.0,
 * section 2.4), so a name holding it would break every plot it labels. See LICENSE. */
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "coverage/report/report.h"

int cov_svg_make_wellformed(const char *path, cov_error *err)
{
    FILE *f = fopen(path, "rb");
    if (f == NULL) return cov_fail(err, COV_EIO, path, "cannot read the plot: %s", strerror(errno));
    char *text = NULL;
    size_t len = 0, cap = 0;
    int rc = COV_OK;
    for (;;) {
        if (cap - len < 65536) {
            char *nt = realloc(text, cap + 65536 + 1);
            if (nt == NULL) {
                rc = cov_fail(err, COV_ENOMEM, path, "out of memory reading the plot");
                goto done;
            }
            text = nt;
            cap += 65536;
        }
        size_t got = fread(text + len, 1, cap - len, f);
        len += got;
        if (got == 0) break;
    }
    if (ferror(f)) {
        rc = cov_fail(err, COV_EIO, path, "cannot read the plot: %s", strerror(errno));
        goto done;
    }
    text[len] = '\0';
    fclose(f);
    f = NULL;
    /* Character data outside CDATA sections: "]]>" becomes "]]&gt;" (same text once parsed). */
    size_t n_fix = 0;
    for (size_t i = 0; i + 3 <= len; i++) {
        if (strncmp(text + i, "<![CDATA[", 9) == 0) {
            char *end = strstr(text + i + 9, "]]>");
            if (end == NULL) break;
            i = (size_t)(end - text) + 2;
        } else if (strncmp(text + i, "]]>", 3) == 0) {
            n_fix++;
        }
    }
    if (n_fix == 0) goto done;
    f = fopen(path, "wb");
    if (f == NULL) {
        rc = cov_fail(err, COV_EIO, path, "cannot rewrite the plot: %s", strerror(errno));
        goto done;
    }
    for (size_t i = 0; i < len; i++) {
        if (strncmp(text + i, "<![CDATA[", 9) == 0) {
            char *end = strstr(text + i + 9, "]]>");
            size_t stop = end ? (size_t)(end - text) + 3 : len;
            fwrite(text + i, 1, stop - i, f);
            i = stop - 1;
        } else if (strncmp(text + i, "]]>", 3) == 0) {
            fputs("]]&gt;", f);
            i += 2;
        } else {
            fputc(text[i], f);
        }
    }
    if (fclose(f) != 0) rc = cov_fail(err, COV_EIO, path, "cannot rewrite the plot: %s",
                                      strerror(errno));
    f = NULL;
done:
    if (f != NULL) fclose(f);
    free(text);
    return rc;
}
