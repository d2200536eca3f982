/* Tests of the CSV reader (RFC 4180), `shoal import`, the read-only archive and the data checks.
 * See LICENSE. */
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_test.h>
#include <sqlite3.h>

#include "coverage/plan/plan.h"
#include "coverage/report/report.h"

static char dir[256];

/* A path inside the test's temporary directory (a few rotating buffers). */
static const char *tp(const char *name)
{
    static char buf[8][512];
    static int k;
    k = (k + 1) % 8;
    snprintf(buf[k], sizeof buf[k], "%s/%s", dir, name);
    return buf[k];
}

static void write_file(const char *path, const char *text)
{
    FILE *f = fopen(path, "wb");
    if (f == NULL) {
        perror(path);
        exit(1);
    }
    fwrite(text, 1, strlen(text), f);
    fclose(f);
}

/* The whole file, for byte-for-byte comparisons; *n its size. */
static char *slurp(const char *path, size_t *n)
{
    FILE *f = fopen(path, "rb");
    if (f == NULL) return NULL;
    fseek(f, 0, SEEK_END);
    long len = ftell(f);
    fseek(f, 0, SEEK_SET);
    char *p = malloc((size_t)len + 1);
    *n = fread(p, 1, (size_t)len, f);
    fclose(f);
    return p;
}

static int contains(const char *hay, const char *needle) { return strstr(hay, needle) != NULL; }

static void ok(int cond, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
static void ok(int cond, const char *fmt, ...)
{
    char msg[512];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    gsl_test(!cond, "%s", msg);
}

/* ---- the CSV reader ------------------------------------------------------------------------- */

static char last_delim;

/* Read a whole CSV text; returns the status, and the fields joined as "a|b|c/d|e|f/" so one
 * string comparison checks every field of every row. */
static int read_csv(const char *text, char *joined, size_t n, cov_error *err)
{
    const char *path = tp("in.csv");
    write_file(path, text);
    cov_csv *c = NULL;
    int rc = cov_csv_open(path, &c, err);
    if (rc) return rc;
    size_t at = 0;
    joined[0] = '\0';
    last_delim = cov_csv_delimiter(c);
    for (size_t i = 0; i < cov_csv_n_fields(c); i++)
        at += (size_t)snprintf(joined + at, n - at, "%s%s", i ? "|" : "", cov_csv_header(c, i));
    at += (size_t)snprintf(joined + at, n - at, "/");
    for (;;) {
        int got = 0;
        rc = cov_csv_next(c, &got, err);
        if (rc || !got) break;
        for (size_t i = 0; i < cov_csv_n_fields(c); i++)
            at += (size_t)snprintf(joined + at, n - at, "%s%s", i ? "|" : "",
                                   cov_csv_field(c, i, NULL));
        at += (size_t)snprintf(joined + at, n - at, "/");
    }
    cov_csv_close(c);
    return rc;
}

static void expect_csv(const char *desc, const char *text, const char *want)
{
    char got[4096];
    cov_error err = {{0}, {0}};
    int rc = read_csv(text, got, sizeof got, &err);
    gsl_test_int(rc, COV_OK, "%s: reads without error (%s)", desc, err.msg);
    if (rc == COV_OK) gsl_test_str(got, want, "%s: fields", desc);
}

/* A CSV error: status COV_EINPUT, where "file:L:C", and a phrase of the message. */
static void expect_csv_error(const char *desc, const char *text, int line, int col,
                             const char *phrase)
{
    char got[4096], want_where[600];
    cov_error err = {{0}, {0}};
    int rc = read_csv(text, got, sizeof got, &err);
    gsl_test_int(rc, COV_EINPUT, "%s: rejected as bad input", desc);
    snprintf(want_where, sizeof want_where, "%s:%d:%d", tp("in.csv"), line, col);
    gsl_test_str(err.where, want_where, "%s: position", desc);
    ok(contains(err.msg, phrase), "%s: message '%s' says '%s'", desc, err.msg, phrase);
}

static void test_csv(void)
{
    /* RFC 4180 section 2: records end with CRLF (LF accepted too), a header row, fields
     * separated by the delimiter; the last record may lack a line break. */
    expect_csv("RFC 4180 comma, LF, no final newline", "a,b,c\n1,2,3\n4,5,6",
               "a|b|c/1|2|3/4|5|6/");
    expect_csv("RFC 4180 CRLF line breaks", "a,b\r\n1,2\r\n3,4\r\n", "a|b/1|2/3|4/");
    expect_csv("tab-separated detected from the header", "a\tb\tc\n1,5\t2\t3\n",
               "a|b|c/1,5|2|3/");
    gsl_test_int(last_delim, '\t', "the detected delimiter is the tab");
    expect_csv("semicolon-separated detected (decimal commas stay in the field)",
               "x;y\n1,5;2,25\n", "x|y/1,5|2,25/");
    gsl_test_int(last_delim, ';', "the detected delimiter is the semicolon");
    /* RFC 4180 section 2.6 and 2.7: quoted fields may hold delimiters, line breaks and doubled
     * quotes. */
    expect_csv("RFC 4180 quoted fields with delimiter, doubled quote, newline",
               "name,note\n\"a,b\",\"say \"\"hi\"\"\"\n\"two\nlines\",\"\"\n",
               "name|note/a,b|say \"hi\"/two\nlines|/");
    expect_csv("UTF-8 byte order mark skipped", "\xEF\xBB\xBF" "a,b\n1,2\n", "a|b/1|2/");
    expect_csv("empty fields kept, blank lines skipped", "a,b,c\n,,\n\n1,,3\n\n",
               "a|b|c/||/1||3/");
    expect_csv("quoted header with quotes and semicolons keeps comma as delimiter",
               "\"it's; \"\"odd\"\"\",b\n1,2\n", "it's; \"odd\"|b/1|2/");

    expect_csv_error("RFC 4180 2.4: a row with a field too many", "a,b\n1,2\n3,4,5\n", 3, 5,
                     "found 3 fields on this row, expected 2");
    expect_csv_error("RFC 4180 2.4: a short row points at its end", "a,b,c\n1,2\n", 2, 4,
                     "found 2 fields on this row, expected 3");
    expect_csv_error("unterminated quote points at the opening quote", "a,b\n1,2\n3,\"open\n4,5\n",
                     3, 3, "never closes");
    expect_csv_error("line numbers count newlines inside quoted fields",
                     "a,b\n\"x\ny\",2\n1\n", 4, 2, "found 1 field on this row, expected 2");
    expect_csv_error("empty header name", "a,,c\n1,2,3\n", 1, 3, "empty name for column 2");
    expect_csv_error("duplicate header name", "a,b,a\n1,2,3\n", 1, 5,
                     "found the column name 'a' a second time");
    expect_csv_error("duplicate header ignores ASCII case as SQLite does", "Load,load\n1,2\n", 1,
                     6, "a second time");
    expect_csv_error("RFC 4180 2.5: a quote inside an unquoted field", "a,b\n1,x\"y\n", 2, 4,
                     "inside an unquoted field");
    expect_csv_error("RFC 4180 2.6: text after a closing quote", "a,b\n\"1\"x,2\n", 2, 4,
                     "after a closing quote");
    expect_csv_error("empty file", "", 1, 1, "expected a header row");
    expect_csv_error("columns count UTF-8 characters, not bytes", "a,b\n\xC3\xA9\xC3\xA9,2,3\n",
                     2, 6, "found 3 fields");
}

/* ---- import ---------------------------------------------------------------------------------- */

static sqlite3 *open_rw(const char *path)
{
    sqlite3 *db = NULL;
    if (sqlite3_open_v2(path, &db, SQLITE_OPEN_READWRITE, NULL) != SQLITE_OK) {
        fprintf(stderr, "cannot open %s\n", path);
        exit(1);
    }
    return db;
}

/* One value of a query with no parameters, as text ("NULL" for null), plus its storage class. */
static void query1(const char *db_path, const char *sql, char *out, size_t n, int *type)
{
    sqlite3 *db = open_rw(db_path);
    sqlite3_stmt *st = NULL;
    snprintf(out, n, "(error)");
    *type = -1;
    if (sqlite3_prepare_v2(db, sql, -1, &st, NULL) == SQLITE_OK && sqlite3_step(st) == SQLITE_ROW) {
        *type = sqlite3_column_type(st, 0);
        const char *t = (const char *)sqlite3_column_text(st, 0);
        snprintf(out, n, "%s", t ? t : "NULL");
    }
    sqlite3_finalize(st);
    sqlite3_close(db);
}

static int import(const char *csv_text, const char *db, const char *table, long long *batch,
                  size_t *rows, cov_error *err)
{
    const char *path = tp("import.csv");
    write_file(path, csv_text);
    return cov_import_csv(path, db, table, batch, rows, err);
}

static void test_import(void)
{
    const char *db = tp("a.db");
    cov_error err = {{0}, {0}};
    long long batch = 0;
    size_t rows = 0;
    char v[256];
    int type;
    unlink(db);
    int rc = import("id,load,label,gap\n1,0.25,north,\n2,-3e2,\"x,y\",7\n", db, NULL, &batch,
                    &rows, &err);
    gsl_test_int(rc, COV_OK, "import creates the archive (%s)", err.msg);
    gsl_test_int((int)batch, 1, "first import is batch 1");
    gsl_test_int((int)rows, 2, "first import counts its rows");
    query1(db, "SELECT load FROM runs WHERE id = 2", v, sizeof v, &type);
    gsl_test_int(type, SQLITE_FLOAT, "a decimal field is stored as a real");
    gsl_test_str(v, "-300.0", "a decimal field keeps its value");
    query1(db, "SELECT id FROM runs WHERE rowid = 1", v, sizeof v, &type);
    gsl_test_int(type, SQLITE_INTEGER, "a whole-number field is stored as an integer");
    query1(db, "SELECT label FROM runs WHERE id = 2", v, sizeof v, &type);
    gsl_test_str(v, "x,y", "a quoted text field is stored as text");
    query1(db, "SELECT typeof(gap) FROM runs WHERE id = 1", v, sizeof v, &type);
    gsl_test_str(v, "null", "an empty field is stored as NULL");
    query1(db, "SELECT count(*) FROM runs WHERE shoal_batch = 1", v, sizeof v, &type);
    gsl_test_str(v, "2", "rows are stamped with their batch");

    /* A second CSV lacks "gap" and brings "extra": NULL where absent, a new column added. */
    rc = import("id,load,label,extra\n3,1.5,south,9\n", db, NULL, &batch, &rows, &err);
    gsl_test_int(rc, COV_OK, "second import appends (%s)", err.msg);
    gsl_test_int((int)batch, 2, "two imports make two batches");
    query1(db, "SELECT count(*) FROM shoal_batches", v, sizeof v, &type);
    gsl_test_str(v, "2", "the batch table has one row per import");
    query1(db, "SELECT rows FROM shoal_batches WHERE id = 2", v, sizeof v, &type);
    gsl_test_str(v, "1", "the batch table records the row count");
    query1(db, "SELECT source LIKE '%import.csv' FROM shoal_batches WHERE id = 1", v, sizeof v,
           &type);
    gsl_test_str(v, "1", "the batch table records the source file");
    query1(db, "SELECT imported_at GLOB '[0-9][0-9][0-9][0-9]-[0-9][0-9]-[0-9][0-9]T"
               "[0-9][0-9]:[0-9][0-9]:[0-9][0-9]Z' FROM shoal_batches WHERE id = 1", v, sizeof v,
           &type);
    gsl_test_str(v, "1", "ISO 8601 UTC time stamp (YYYY-MM-DDThh:mm:ssZ)");
    query1(db, "SELECT typeof(gap) || ',' || extra FROM runs WHERE id = 3", v, sizeof v, &type);
    gsl_test_str(v, "null,9", "a column the CSV lacks is NULL, a new column is added");
    query1(db, "SELECT typeof(extra) FROM runs WHERE id = 1", v, sizeof v, &type);
    gsl_test_str(v, "null", "older rows hold NULL in the added column");

    /* Number recognition against glibc's strtod, which rounds correctly (IEEE 754-2008 5.12.2):
     * every decimal must read back bit for bit. Leading zeros and non-decimal words stay text. */
    char *big = malloc(400000);
    size_t at = (size_t)sprintf(big, "x\n");
    unsigned long s = 12345;
    for (int i = 0; i < 5000; i++) {
        s = s * 6364136223846793005UL + 1442695040888963407UL;
        int e = (int)((s >> 33) % 40) - 20;
        double mant = (double)(s >> 11) / 9007199254740992.0;
        at += (size_t)sprintf(big + at, i % 3 == 0 ? "%.17g\n" : i % 3 == 1 ? "%.6fe%d\n"
                                                                           : "%.3f\n",
                              mant * (i % 2 ? 1 : -1) * 1000, e);
    }
    at += (size_t)sprintf(big + at, "007\nnan\ninf\n0x10\n1e\n+.5\n");
    write_file(tp("num.csv"), big);
    const char *db2 = tp("num.db");
    unlink(db2);
    rc = cov_import_csv(tp("num.csv"), db2, NULL, &batch, &rows, &err);
    gsl_test_int(rc, COV_OK, "import of 5006 numbers (%s)", err.msg);
    sqlite3 *h = open_rw(db2);
    sqlite3_stmt *st = NULL;
    sqlite3_prepare_v2(h, "SELECT x, typeof(x) FROM runs ORDER BY rowid", -1, &st, NULL);
    char *line = big + 2;
    int exact = 0, n = 0;
    char texts[512] = "";
    while (sqlite3_step(st) == SQLITE_ROW) {
        char *nl = strchr(line, '\n');
        *nl = '\0';
        if (n < 5000) {
            double want = strtod(line, NULL), got = sqlite3_column_double(st, 0);
            exact += memcmp(&want, &got, sizeof want) == 0;
        } else {
            strcat(texts, (const char *)sqlite3_column_text(st, 1));
            strcat(texts, " ");
        }
        line = nl + 1;
        n++;
    }
    sqlite3_finalize(st);
    sqlite3_close(h);
    gsl_test_int(exact, 5000, "every imported decimal equals glibc strtod bit for bit");
    gsl_test_str(texts, "text text text text text real ",
                 "007, nan, inf, 0x10 and 1e stay text; +.5 is a number");
    free(big);

    /* Identifiers with quotes and semicolons go into SQL quoted ("" doubles a quote inside a
     * quoted identifier: SQLite documentation, 'SQLite Keywords'). */
    const char *db3 = tp("odd.db");
    unlink(db3);
    rc = import("\"it's; \"\"odd\"\"\";\"a;b\"\n1,5;2\n", db3, "my \"runs\"; table", &batch, &rows,
                &err);
    gsl_test_int(rc, COV_OK, "import with quotes and semicolons in names (%s)", err.msg);
    query1(db3, "SELECT \"it's; \"\"odd\"\"\" || '|' || \"a;b\" FROM \"my \"\"runs\"\"; table\"",
           v, sizeof v, &type);
    gsl_test_str(v, "1,5|2", "quoted identifiers reach SQLite intact");
}

/* Bytes and modification time of a file, to show it was not touched. */
typedef struct {
    char *bytes;
    size_t n;
    struct timespec mtime;
} snapshot;

static snapshot snap(const char *path)
{
    snapshot s = {NULL, 0, {0, 0}};
    struct stat sb;
    s.bytes = slurp(path, &s.n);
    if (stat(path, &sb) == 0) s.mtime = sb.st_mtim;
    return s;
}

static int same(snapshot a, snapshot b)
{
    return a.bytes && b.bytes && a.n == b.n && memcmp(a.bytes, b.bytes, a.n) == 0 &&
           a.mtime.tv_sec == b.mtime.tv_sec && a.mtime.tv_nsec == b.mtime.tv_nsec;
}

static void test_failed_import(void)
{
    const char *db = tp("a.db");
    cov_error err = {{0}, {0}};
    long long batch = 0;
    size_t rows = 0;
    snapshot before = snap(db);
    /* The bad row comes after good ones, so rows were inserted before the error. */
    int rc = import("id,load\n10,1\n11,2\n12,3,4\n", db, NULL, &batch, &rows, &err);
    gsl_test_int(rc, COV_EINPUT, "an import with a bad row fails as bad input");
    ok(contains(err.where, "import.csv:4:"), "the failed import names file:line (%s)", err.where);
    snapshot after = snap(db);
    ok(before.n == after.n && memcmp(before.bytes, after.bytes, before.n) == 0,
       "a failed import leaves the archive's bytes unchanged (one transaction, rolled back)");
    free(before.bytes);
    free(after.bytes);
    /* A new column added inside the rolled-back transaction is gone too. */
    before = snap(db);
    rc = import("id,newcol\n1,2\n\"3\n", db, NULL, &batch, &rows, &err);
    gsl_test_int(rc, COV_EINPUT, "an import ending in an open quote fails");
    after = snap(db);
    ok(before.n == after.n && memcmp(before.bytes, after.bytes, before.n) == 0,
       "a failed import with a new column leaves the archive unchanged");
    free(before.bytes);
    free(after.bytes);
    const char *fresh = tp("fresh.db");
    unlink(fresh);
    rc = import("a,b\n1\n", fresh, NULL, &batch, &rows, &err);
    ok(rc == COV_EINPUT && access(fresh, F_OK) != 0,
       "a failed import into a new archive leaves no file behind");
    rc = import("a,shoal_batch\n1,2\n", fresh, NULL, &batch, &rows, &err);
    ok(rc == COV_EINPUT && contains(err.msg, "shoal_batch"), "the batch column name is refused");
    rc = import("a\n1\n", fresh, "shoal_batches", &batch, &rows, &err);
    ok(rc == COV_EINPUT, "the batch table name is refused as a table of runs");
}

static void test_open(void)
{
    cov_error err = {{0}, {0}};
    cov_archive *a = NULL;
    int rc = cov_archive_open(tp("nothing.db"), NULL, &a, &err);
    ok(rc == COV_EINPUT && a == NULL, "a missing archive is bad input");
    write_file(tp("text.db"), "this is not a database, just text that is long enough to matter\n");
    rc = cov_archive_open(tp("text.db"), NULL, &a, &err);
    ok(rc == COV_EINPUT && contains(err.msg, "not an SQLite database"),
       "a file that is not SQLite is bad input (%s)", err.msg);
    rc = cov_archive_open(tp("a.db"), "absent", &a, &err);
    ok(rc == COV_EINPUT && contains(err.msg, "found no table 'absent'"),
       "a missing table is bad input (%s)", err.msg);

    const char *db = tp("a.db");
    snapshot before = snap(db);
    rc = cov_archive_open(db, NULL, &a, &err);
    gsl_test_int(rc, COV_OK, "an imported archive opens (%s)", err.msg);
    gsl_test_int(cov_archive_owned(a), 1, "an imported archive is owned");
    gsl_test_str(cov_archive_path(a), db, "the archive keeps its path");
    cov_batch *b = NULL;
    size_t nb = 0;
    rc = cov_archive_batches(a, &b, &nb, &err);
    gsl_test_int((int)nb, 2, "the batch list has both imports");
    if (nb == 2) {
        ok(b[0].id == 1 && b[1].id == 2 && b[0].rows == 2 && b[1].rows == 1,
           "the batch list gives ids and row counts in order");
    }
    cov_batches_free(b, nb);
    cov_var lv[1] = {{0}};
    lv[0].name = "load";
    lv[0].role = COV_OUTPUT;
    lv[0].type = COV_REAL;
    lv[0].lo = lv[0].hi = lv[0].noise_sd = NAN;
    cov_graph lg = {.path = "invented.graph", .vars = lv, .n_vars = 1,
                    .default_effect = {NAN, COV_UNIT_RAW, COV_PER_UNIT, NAN},
                    .margin = {NAN, COV_UNIT_RAW, COV_PER_UNIT, NAN}};
    cov_data *d = NULL;
    rc = cov_data_read(a, &lg, NULL, NULL, &d, &err);
    ok(rc == COV_OK && d->n_runs == 3 && d->col[0][1] == -300 && d->n_batches == 2,
       "reading the archive gives 3 runs in 2 batches (%s)", err.msg);
    cov_data_free(d);
    int wr = sqlite3_exec(cov_archive_db(a), "CREATE TABLE t(x)", NULL, NULL, NULL);
    ok(wr != SQLITE_OK, "the archive's connection refuses to write");
    cov_archive_close(a);
    snapshot after = snap(db);
    ok(same(before, after), "opening and reading leaves the archive's bytes and mtime unchanged");
    free(before.bytes);
    free(after.bytes);

    /* An archive of the user's own, made without shoal: read-only and not owned. */
    const char *own = tp("own.db");
    unlink(own);
    sqlite3 *h = NULL;
    sqlite3_open(own, &h);
    sqlite3_exec(h, "CREATE TABLE runs(x REAL, y REAL); INSERT INTO runs VALUES(1, 2);", NULL,
                 NULL, NULL);
    sqlite3_close(h);
    rc = cov_archive_open(own, NULL, &a, &err);
    ok(rc == COV_OK && cov_archive_owned(a) == 0, "a user's own archive opens, not owned");
    rc = cov_archive_batches(a, &b, &nb, &err);
    ok(rc == COV_OK && nb == 0 && b == NULL, "a user's own archive has no batches");
    cov_archive_close(a);
}

/* ---- data checks ----------------------------------------------------------------------------- */

static char *lv_site[] = {"north", "south", "east"};
static char *lv_num[] = {"1", "2.5"};

static cov_var mkvar(const char *name, cov_role role, cov_type type, double lo, double hi)
{
    cov_var v;
    memset(&v, 0, sizeof v);
    v.name = (char *)name;
    v.role = role;
    v.type = type;
    v.lo = lo;
    v.hi = hi;
    v.noise_sd = NAN;
    return v;
}

/* Import csv into a fresh archive and read it against g. */
static int read_against(const char *csv_text, const cov_graph *g, cov_data **d, cov_error *err)
{
    const char *db = tp("data.db");
    long long batch;
    size_t rows;
    unlink(db);
    *d = NULL;
    int rc = import(csv_text, db, NULL, &batch, &rows, err);
    if (rc) return rc;
    cov_archive *a = NULL;
    rc = cov_archive_open(db, NULL, &a, err);
    if (rc) return rc;
    rc = cov_data_read(a, g, NULL, NULL, d, err);
    cov_archive_close(a);
    return rc;
}

static void progress_count(double share, void *ctx)
{
    double *last = ctx;
    last[0] += 1;
    last[1] = share;
}

static void test_data(void)
{
    cov_var vars[6];
    vars[0] = mkvar("arrivals", COV_INPUT, COV_REAL, 2, 12);
    vars[1] = mkvar("staff", COV_INPUT, COV_INTEGER, 1, 9);
    vars[2] = mkvar("fast", COV_INPUT, COV_BOOL, 0, 1);
    vars[3] = mkvar("site", COV_INPUT, COV_LEVELS, 0, 2);
    vars[3].levels = lv_site;
    vars[3].n_levels = 3;
    vars[4] = mkvar("mix", COV_HIDDEN, COV_REAL, NAN, NAN);
    vars[5] = mkvar("wait", COV_OUTPUT, COV_REAL, NAN, NAN);
    cov_graph g = {.path = "invented.graph", .vars = vars, .n_vars = 6,
                    .default_effect = {NAN, COV_UNIT_RAW, COV_PER_UNIT, NAN},
                    .margin = {NAN, COV_UNIT_RAW, COV_PER_UNIT, NAN}};
    cov_error err = {{0}, {0}};
    cov_data *d = NULL;

    int rc = read_against("run,arrivals,staff,fast,site,wait\n"
                          "1,3.5,2,1,north,10.5\n"
                          "2,12,9,FALSE,east,\n"
                          "3,13,4,true,south,NaN\n"
                          "4,2,4.5,0,north,7\n"
                          "5,,1,1,south,8\n",
                          &g, &d, &err);
    gsl_test_int(rc, COV_OK, "invented campaign reads (%s)", err.msg);
    if (rc == COV_OK) {
        gsl_test_int((int)d->n_runs, 5, "five runs read");
        ok(d->col[4] == NULL, "a hidden variable has no column");
        ok(d->col[0][0] == 3.5 && d->col[0][1] == 12 && isnan(d->col[0][2]),
           "real input read in rowid order; 13 outside [2, 12] stored as NAN");
        gsl_test_int((int)d->n_outside[0], 1, "one arrivals value outside its domain");
        gsl_test_int((int)d->n_missing[0], 2, "arrivals: empty cell plus out-of-domain missing");
        gsl_test_int((int)d->n_outside[1], 1, "4.5 is outside an integer domain");
        ok(isnan(d->col[1][3]) && d->col[1][2] == 4, "non-whole integer input stored as NAN");
        ok(d->col[2][0] == 1 && d->col[2][1] == 0 && d->col[2][2] == 1 && d->col[2][3] == 0,
           "bools accept 1, FALSE, true, 0");
        ok(d->col[3][0] == 0 && d->col[3][1] == 2 && d->col[3][2] == 1,
           "levels stored as their declared index");
        gsl_test_int((int)d->n_missing[5], 2, "output: NULL and NaN count as missing");
        ok(d->batch != NULL && d->batch[0] == 1 && d->n_batches == 1, "batch ids read");
        int found = 0;
        for (size_t i = 0; i < d->n_issues; i++)
            if (d->issues[i].var == 0 && d->issues[i].row == 3 && d->issues[i].value == 13 &&
                strcmp(d->issues[i].what, "outside [2, 12]") == 0)
                found = 1;
        ok(found, "the out-of-domain example names row 3, value 13, 'outside [2, 12]'");
        found = 0;
        for (size_t i = 0; i < d->n_issues; i++)
            if (d->issues[i].var == 1 && d->issues[i].row == 4 &&
                contains(d->issues[i].what, "not a whole number"))
                found = 1;
        ok(found, "the non-whole integer example names row 4");
    }
    cov_data_free(d);

    /* Examples are capped per variable, counts are not. */
    char csv[8192] = "run,arrivals,staff,fast,site,wait\n";
    /* Distinct outputs: rows equal in every input and output would be one run. */
    for (int i = 0; i < 40; i++)
        sprintf(csv + strlen(csv), "%d,%d,1,0,east,%d\n", i, i % 2 ? 50 : 5, i);
    rc = read_against(csv, &g, &d, &err);
    if (rc == COV_OK) {
        gsl_test_int((int)d->n_outside[0], 20, "20 of 40 values outside are all counted");
        gsl_test_int((int)d->n_issues, COV_ISSUE_EXAMPLES, "examples stop at COV_ISSUE_EXAMPLES");
    } else {
        gsl_test(1, "capped examples archive reads (%s)", err.msg);
    }
    cov_data_free(d);

    const char *head = "run,arrivals,staff,fast,site,wait\n";
    char buf[1024];
    snprintf(buf, sizeof buf, "%s1,3,2,1,north,1\n2,abc,2,1,north,1\n", head);
    rc = read_against(buf, &g, &d, &err);
    gsl_test_int(rc, COV_EINPUT, "a non-numeric cell is bad input");
    ok(contains(err.where, "data.db: row 2, column arrivals") &&
       strcmp(err.msg, "found 'abc', expected a number") == 0,
       "non-numeric cell message: '%s: %s'", err.where, err.msg);
    snprintf(buf, sizeof buf, "%s1,3,2,2,north,1\n", head);
    rc = read_against(buf, &g, &d, &err);
    ok(rc == COV_EINPUT && contains(err.where, "row 1, column fast") &&
       contains(err.msg, "found '2', expected 0, 1, true or false"),
       "a bool of 2 is bad input: '%s: %s'", err.where, err.msg);
    snprintf(buf, sizeof buf, "%s1,3,2,1,north,1\n2,3,2,yes,north,1\n", head);
    rc = read_against(buf, &g, &d, &err);
    ok(rc == COV_EINPUT && contains(err.where, "row 2, column fast") &&
       contains(err.msg, "found 'yes'"), "a bool of 'yes' is bad input: '%s: %s'", err.where,
       err.msg);
    snprintf(buf, sizeof buf, "%s1,3,2,1,west,1\n", head);
    rc = read_against(buf, &g, &d, &err);
    ok(rc == COV_EINPUT && contains(err.where, "row 1, column site") &&
       contains(err.msg, "found the level 'west'") && contains(err.msg, "north, south, east"),
       "an undeclared level names it and lists the declared ones: '%s'", err.msg);
    snprintf(buf, sizeof buf, "run,staff,fast\n1,2,1\n");
    rc = read_against(buf, &g, &d, &err);
    ok(rc == COV_EINPUT && contains(err.msg, "'arrivals'") && contains(err.msg, "'site'") &&
       contains(err.msg, "'wait'") && !contains(err.msg, "'mix'"),
       "every missing column is named, hidden ones are not: '%s'", err.msg);

    /* Level names that look like numbers were imported as numbers and still match. */
    cov_var nv[1];
    nv[0] = mkvar("dose", COV_INPUT, COV_LEVELS, 0, 1);
    nv[0].levels = lv_num;
    nv[0].n_levels = 2;
    cov_graph g2 = {.path = "invented.graph", .vars = nv, .n_vars = 1,
                    .default_effect = {NAN, COV_UNIT_RAW, COV_PER_UNIT, NAN},
                    .margin = {NAN, COV_UNIT_RAW, COV_PER_UNIT, NAN}};
    rc = read_against("dose\n2.5\n1\n", &g2, &d, &err);
    ok(rc == COV_OK && d->col[0][0] == 1 && d->col[0][1] == 0,
       "numeric-looking level names match cells stored as numbers (%s)", err.msg);
    cov_data_free(d);

    /* Progress is reported every 65536 rows and ends at 1. */
    const char *db = tp("big.db");
    FILE *f = fopen(tp("big.csv"), "w");
    fprintf(f, "dose\n");
    for (int i = 0; i < 140000; i++) fprintf(f, "%s\n", i % 2 ? "1" : "2.5");
    fclose(f);
    unlink(db);
    long long batch;
    size_t rows;
    rc = cov_import_csv(tp("big.csv"), db, NULL, &batch, &rows, &err);
    cov_archive *a = NULL;
    if (rc == COV_OK) rc = cov_archive_open(db, NULL, &a, &err);
    double seen[2] = {0, 0};
    if (rc == COV_OK) rc = cov_data_read(a, &g2, progress_count, seen, &d, &err);
    gsl_test_int(rc, COV_OK, "140000-row archive reads");
    gsl_test_int((int)seen[0], 3, "progress called at 65536, 131072 and the end");
    gsl_test_abs(seen[1], 1.0, 0, "the last progress share is 1");
    cov_data_free(d);
    cov_archive_close(a);
}

int main(void)
{
    gsl_set_error_handler_off();
    gsl_test_verbose(1);
    snprintf(dir, sizeof dir, "%s/shoal-test-archive-XXXXXX",
             getenv("TMPDIR") ? getenv("TMPDIR") : "/tmp");
    if (mkdtemp(dir) == NULL) {
        perror("mkdtemp");
        return 1;
    }
    test_csv();
    test_import();
    test_failed_import();
    test_open();
    test_data();
    char cmd[600];
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", dir);
    if (system(cmd) != 0) fprintf(stderr, "could not remove %s\n", dir);
    return gsl_test_summary();
}
