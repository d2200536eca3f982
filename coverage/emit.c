/* Escaping for the JSON and CSV writers of every command. See LICENSE. */
#include <math.h>
#include <stdio.h>

#include "coverage/internal.h"

void cov_emit_json_string(FILE *f, const char *s)
{
    fputc('"', f);
    for (const unsigned char *p = (const unsigned char *)(s ? s : ""); *p; p++) {
        switch (*p) {
        case '"': fputs("\\\"", f); break;
        case '\\': fputs("\\\\", f); break;
        case '\b': fputs("\\b", f); break;
        case '\f': fputs("\\f", f); break;
        case '\n': fputs("\\n", f); break;
        case '\r': fputs("\\r", f); break;
        case '\t': fputs("\\t", f); break;
        default:
            /* '<' is escaped too, so a string can never close a <script> block it is embedded in. */
            if (*p < 0x20 || *p == '<') fprintf(f, "\\u%04x", *p);
            else fputc(*p, f);
        }
    }
    fputc('"', f);
}

void cov_emit_json_number(FILE *f, double x)
{
    if (!isfinite(x)) fputs("null", f);
    else fprintf(f, "%.10g", x);
}

void cov_emit_csv_field(FILE *f, const char *s)
{
    const char *p = s ? s : "";
    int quote = 0;
    for (const char *q = p; *q; q++)
        if (*q == ',' || *q == '"' || *q == '\r' || *q == '\n') quote = 1;
    if (!quote) {
        fputs(p, f);
        return;
    }
    fputc('"', f);
    for (; *p; p++) {
        if (*p == '"') fputc('"', f);
        fputc(*p, f);
    }
    fputc('"', f);
}

void cov_emit_csv_number(FILE *f, double x)
{
    if (isfinite(x)) fprintf(f, "%.10g", x);
    else if (isinf(x)) fputs(x > 0 ? "inf" : "-inf", f);
}
