/* Rows an import would add that the archive already holds, by content: each stored row's values in
 * the CSV's columns are hashed once, and each CSV row is looked up as it is inserted.
 * See LICENSE. */
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <sqlite3.h>

#include "coverage/archive/archive.h"

/* Rows are matched by a 64-bit hash of their typed values: with a million stored rows and a
 * million new ones the chance of one false match is about 5e-8 (the birthday bound n m / 2^64),
 * far below the chance of a real repeated import. */
struct cov_overlap {
    uint64_t *hash;       /* open addressing; 0 marks an empty slot (a zero hash is stored as 1) */
    long long *batch;     /* the batch of the earliest stored row with that hash; 0 for none */
    size_t cap, n;
    size_t matched;       /* rows looked up and found */
    size_t rows;          /* rows looked up */
    long long bid[COV_OVERLAP_BATCHES];
    size_t bcount[COV_OVERLAP_BATCHES];
    size_t n_bid, other, unbatched;
};

static uint64_t mix(uint64_t h, uint64_t w)
{
    /* The MurmurHash3 finaliser (Appleby 2011) on each word, folded FNV-style into h. */
    w ^= w >> 33;
    w *= UINT64_C(0xff51afd7ed558ccd);
    w ^= w >> 33;
    w *= UINT64_C(0xc4ceb9fe1a85ec53);
    w ^= w >> 33;
    return (h ^ w) * UINT64_C(0x100000001b3) + UINT64_C(0x9e3779b97f4a7c15);
}

uint64_t cov_overlap_start(void)
{
    return UINT64_C(0xcbf29ce484222325);
}

uint64_t cov_overlap_null(uint64_t h)
{
    return mix(h, 0x4e554c4cU);
}

uint64_t cov_overlap_int(uint64_t h, long long v)
{
    return mix(mix(h, 0x494e54U), (uint64_t)v);
}

uint64_t cov_overlap_real(uint64_t h, double v)
{
    /* A whole real is the same content as that integer: 12.0 and 12 match. */
    if (v == (double)(long long)v && v > -9.2e18 && v < 9.2e18) return cov_overlap_int(h, (long long)v);
    if (v == 0) v = 0;    /* -0 as +0 */
    uint64_t u;
    memcpy(&u, &v, sizeof u);
    return mix(mix(h, 0x5245414cU), u);
}

uint64_t cov_overlap_text(uint64_t h, const char *s, size_t len)
{
    h = mix(mix(h, 0x54455854U), (uint64_t)len);
    uint64_t w = 0;
    size_t k = 0;
    for (size_t i = 0; i < len; i++) {
        w = (w << 8) | (unsigned char)s[i];
        if (++k == 8) {
            h = mix(h, w);
            w = 0;
            k = 0;
        }
    }
    return k ? mix(h, w) : h;
}

static int put(cov_overlap *o, uint64_t h, long long batch)
{
    if (h == 0) h = 1;
    if (2 * (o->n + 1) > o->cap) {
        size_t cap = o->cap ? 2 * o->cap : 1024;
        uint64_t *nh = calloc(cap, sizeof *nh);
        long long *nb = malloc(cap * sizeof *nb);
        if (nh == NULL || nb == NULL) {
            free(nh);
            free(nb);
            return -1;
        }
        for (size_t i = 0; i < o->cap; i++) {
            if (o->hash[i] == 0) continue;
            size_t s = (size_t)o->hash[i] & (cap - 1);
            while (nh[s] != 0) s = (s + 1) & (cap - 1);
            nh[s] = o->hash[i];
            nb[s] = o->batch[i];
        }
        free(o->hash);
        free(o->batch);
        o->hash = nh;
        o->batch = nb;
        o->cap = cap;
    }
    size_t s = (size_t)h & (o->cap - 1);
    while (o->hash[s] != 0) {
        if (o->hash[s] == h) return 0;      /* rows are read in rowid order: keep the earliest */
        s = (s + 1) & (o->cap - 1);
    }
    o->hash[s] = h;
    o->batch[s] = batch;
    o->n++;
    return 0;
}

int cov_overlap_load(sqlite3 *db, const char *table, const char *const *cols, size_t n_cols,
                     cov_overlap **out, cov_error *err)
{
    *out = NULL;
    cov_overlap *o = calloc(1, sizeof *o);
    char *qt = cov_sql_ident(table), *sql = NULL;
    sqlite3_stmt *st = NULL;
    int rc = COV_ENOMEM;
    if (o == NULL || qt == NULL) goto fail;
    size_t len = strlen(qt) + 64;
    for (size_t i = 0; i < n_cols; i++) len += 2 * strlen(cols[i]) + 4;
    sql = malloc(len);
    if (sql == NULL) goto fail;
    size_t at = (size_t)snprintf(sql, len, "SELECT ");
    for (size_t i = 0; i < n_cols; i++) {
        char *q = cov_sql_ident(cols[i]);
        if (q == NULL) goto fail;
        at += (size_t)snprintf(sql + at, len - at, "%s, ", q);
        free(q);
    }
    snprintf(sql + at, len - at, "\"shoal_batch\" FROM %s ORDER BY rowid", qt);
    if (sqlite3_prepare_v2(db, sql, -1, &st, NULL) != SQLITE_OK) {
        rc = cov_fail(err, COV_EIO, "", "cannot read the archive's rows: %s", sqlite3_errmsg(db));
        goto fail;
    }
    int step;
    while ((step = sqlite3_step(st)) == SQLITE_ROW) {
        uint64_t h = cov_overlap_start();
        for (size_t i = 0; i < n_cols; i++) {
            int c = (int)i;
            switch (sqlite3_column_type(st, c)) {
            case SQLITE_NULL: h = cov_overlap_null(h); break;
            case SQLITE_INTEGER: h = cov_overlap_int(h, sqlite3_column_int64(st, c)); break;
            case SQLITE_FLOAT: h = cov_overlap_real(h, sqlite3_column_double(st, c)); break;
            default: {
                const char *t = (const char *)sqlite3_column_blob(st, c);
                h = cov_overlap_text(h, t ? t : "", (size_t)sqlite3_column_bytes(st, c));
            }
            }
        }
        long long b = sqlite3_column_type(st, (int)n_cols) == SQLITE_NULL
                          ? 0 : sqlite3_column_int64(st, (int)n_cols);
        if (put(o, h, b)) goto fail;
    }
    if (step != SQLITE_DONE) {
        rc = cov_fail(err, COV_EIO, "", "cannot read the archive's rows: %s", sqlite3_errmsg(db));
        goto fail;
    }
    sqlite3_finalize(st);
    free(sql);
    free(qt);
    *out = o;
    return COV_OK;
fail:
    if (rc == COV_ENOMEM) cov_fail(err, rc, "", "out of memory while reading the archive's rows");
    sqlite3_finalize(st);
    free(sql);
    free(qt);
    cov_overlap_free(o);
    return rc;
}

void cov_overlap_match(cov_overlap *o, uint64_t h)
{
    if (h == 0) h = 1;
    o->rows++;
    if (o->cap == 0) return;
    size_t s = (size_t)h & (o->cap - 1);
    for (; o->hash[s] != 0; s = (s + 1) & (o->cap - 1)) {
        if (o->hash[s] != h) continue;
        o->matched++;
        long long b = o->batch[s];
        if (b == 0) {
            o->unbatched++;
            return;
        }
        for (size_t k = 0; k < o->n_bid; k++)
            if (o->bid[k] == b) {
                o->bcount[k]++;
                return;
            }
        if (o->n_bid < COV_OVERLAP_BATCHES) {
            o->bid[o->n_bid] = b;
            o->bcount[o->n_bid++] = 1;
        } else {
            o->other++;
        }
        return;
    }
}

void cov_overlap_result(const cov_overlap *o, cov_import_overlap *res)
{
    memset(res, 0, sizeof *res);
    res->rows = o->rows;
    res->matched = o->matched;
    res->n_batches = o->n_bid;
    for (size_t k = 0; k < o->n_bid; k++) {
        res->batch[k] = o->bid[k];
        res->count[k] = o->bcount[k];
    }
    res->other = o->other;
    res->unbatched = o->unbatched;
}

void cov_overlap_free(cov_overlap *o)
{
    if (o == NULL) return;
    free(o->hash);
    free(o->batch);
    free(o);
}
