/* The claim record: one table of fields, written as JSON or CSV by every command and the report.
 * See LICENSE. */
#include <assert.h>
#include <math.h>
#include <stdint.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "coverage/report/report.h"

/* ---- values --------------------------------------------------------------------------------- */

typedef enum {
    RV_NULL,    /* JSON null, an empty CSV cell */
    RV_NUM,     /* a double: null / empty when NAN; JSON null and CSV "inf" when infinite */
    RV_COUNT,   /* a whole number */
    RV_BOOL,    /* JSON true/false, CSV 1/0 */
    RV_WORD,    /* a fixed word of ours (no escaping needed, still escaped) */
    RV_TEXT,    /* user or message text; NULL text is null / empty */
    RV_NAMES    /* a set of variables: a JSON array of names, one CSV cell joined by ';' */
} rv_kind;

typedef struct {
    rv_kind kind;
    double num;
    long long count;
    const char *text;
    const size_t *vars;
    size_t n_vars;
} rec_value;

/* The last written amount and its text, kept by a table writer: every absence claim of a graph
 * carries the same margin, so its text is formatted once, not once per row. cov_amount_text reads
 * the value, unit, per and step only. */
typedef struct {
    int have;
    cov_amount key;
    char text[96];
} amount_memo;

/* What one row of the record is made from (all borrowed). */
typedef struct {
    const cov_graph *g;
    const cov_claim *c;
    size_t index;               /* 0-based claim index */
    const cov_assessment *a;    /* the assessment when the claim is testable and assessed */
    const cov_assessment *any;  /* the assessment whatever the status, or NULL */
    const cov_support *s;       /* the support, or NULL */
    char text[96];              /* scratch for a formatted field */
    amount_memo *written;       /* a table writer's memo of effect_written, or NULL */
} rec_row;

static rec_value v_null(void) { return (rec_value){RV_NULL, NAN, 0, NULL, NULL, 0}; }
static rec_value v_num(double x) { return (rec_value){RV_NUM, x, 0, NULL, NULL, 0}; }
static rec_value v_count(long long n) { return (rec_value){RV_COUNT, NAN, n, NULL, NULL, 0}; }
static rec_value v_bool(int b) { return (rec_value){RV_BOOL, NAN, b != 0, NULL, NULL, 0}; }
static rec_value v_word(const char *w) { return (rec_value){RV_WORD, NAN, 0, w, NULL, 0}; }
static rec_value v_text(const char *t) { return (rec_value){RV_TEXT, NAN, 0, t, NULL, 0}; }
static rec_value v_names(const size_t *v, size_t n)
{
    return (rec_value){RV_NAMES, NAN, 0, NULL, v, n};
}

/* ---- the getters of fields that are not a plain number of the assessment or support ---------- */

static rec_value get_index(rec_row *r) { return v_count((long long)r->index + 1); }
static rec_value get_kind(rec_row *r) { return v_word(cov_claim_kind_word(r->c->kind)); }
static rec_value get_treatment(rec_row *r) { return v_text(r->g->vars[r->c->treatment].name); }
static rec_value get_outcome(rec_row *r) { return v_text(r->g->vars[r->c->outcome].name); }
static rec_value get_set(rec_row *r) { return v_names(r->c->cond, r->c->n_cond); }
static rec_value get_effect(rec_row *r) { return v_num(r->c->effect.value); }
static rec_value get_unit(rec_row *r)
{
    return v_word(r->c->effect.unit == COV_UNIT_SD ? "sd" : "raw");
}
static rec_value get_sign(rec_row *r) { return v_count(r->c->sign); }
static rec_value get_status(rec_row *r)
{
    return v_word(r->c->status == COV_TESTABLE ? "testable" : "untestable");
}
static rec_value get_claim_reason(rec_row *r) { return v_text(r->c->reason); }
static rec_value get_steerable(rec_row *r) { return v_bool(r->c->steerable); }
static rec_value get_min_set(rec_row *r) { return v_names(r->c->min_cond, r->c->n_min_cond); }

/* What the graph says about the claim beyond its sets (README, "What the graph claims"): the
 * amount as written and what it is counted over, the variables' units, the expected shape, and
 * whether the claim rests on the declaration that two outputs' run noise is independent. The
 * written amount is formatted into the row's own buffer. */
static int same_amount(const cov_amount *a, const cov_amount *b)
{
    return memcmp(&a->value, &b->value, sizeof a->value) == 0 && a->unit == b->unit &&
           a->per == b->per && memcmp(&a->step, &b->step, sizeof a->step) == 0;
}
static rec_value get_written(rec_row *r)
{
    amount_memo *m = r->written;
    if (m == NULL) return v_text(cov_amount_text(&r->c->effect, r->text, sizeof r->text));
    if (!m->have || !same_amount(&m->key, &r->c->effect)) {
        cov_amount_text(&r->c->effect, m->text, sizeof m->text);
        m->key = r->c->effect;
        m->have = 1;
    }
    return v_text(m->text);
}
static rec_value get_per(rec_row *r)
{
    static const char *const per_word[] = {"unit", "step", "range"};
    return v_word(per_word[r->c->effect.per]);
}
static rec_value get_step(rec_row *r)
{
    return v_num(r->c->effect.per == COV_PER_STEP ? r->c->effect.step : NAN);
}
static rec_value get_per_unit(rec_row *r)
{
    return v_num(cov_amount_per_unit_factor(&r->c->effect, &r->g->vars[r->c->treatment]));
}
static rec_value get_t_unit(rec_row *r) { return v_text(cov_var_unit(&r->g->vars[r->c->treatment])); }
static rec_value get_y_unit(rec_row *r) { return v_text(cov_var_unit(&r->g->vars[r->c->outcome])); }
static rec_value get_shape(rec_row *r)
{
    return v_word(r->c->shape == COV_SHAPE_TURNING ? "turning" : "monotone");
}
static rec_value get_rests(rec_row *r) { return v_bool(r->c->rests_on_noise); }

static rec_value get_verdict(rec_row *r)
{
    return v_word(cov_verdict_word(cov_claim_verdict(r->c, r->any)));
}
static rec_value get_verdict_reason(rec_row *r)
{
    return v_text(cov_claim_verdict_reason(r->c, r->any));
}
static rec_value get_n(rec_row *r) { return r->a ? v_count((long long)r->a->n) : v_null(); }
static rec_value get_unreachable(rec_row *r)
{
    return r->a ? v_bool(isinf(r->a->runs_needed)) : v_null();
}
static rec_value get_noise_flag(rec_row *r) { return r->a ? v_bool(r->a->noise_flag) : v_null(); }
static rec_value get_noise_note(rec_row *r) { return r->a ? v_text(r->a->noise_note) : v_null(); }
static rec_value get_pure(rec_row *r) { return r->a ? v_bool(r->a->has_pure_error) : v_null(); }
/* Untestable on these runs: the variable that takes one value in every run the claim uses. */
static rec_value get_fixed_var(rec_row *r)
{
    if (r->any == NULL || r->any->fixed_var == SIZE_MAX) return v_null();
    return v_text(r->g->vars[r->any->fixed_var].name);
}
static rec_value get_fixed_value(rec_row *r)
{
    if (r->any == NULL || r->any->fixed_var == SIZE_MAX) return v_null();
    cov_value_text(&r->g->vars[r->any->fixed_var], r->any->fixed_value, r->text, sizeof r->text);
    return v_text(r->text);
}

static rec_value get_test(rec_row *r)
{
    if (r->a == NULL) return v_null();
    const pw_design *d = &r->a->design;
    return v_word(!r->a->has_design              ? "none"
                  : d->test == PW_TEST_TREND_T   ? "trend t"
                  : d->test == PW_TEST_LEVELS_F  ? "levels F"
                  : d->test == PW_TEST_BASIS_F   ? "basis F"
                  : d->test == PW_TEST_TWO_PROP  ? "two proportions"
                  : d->test == PW_TEST_TOST      ? "equivalence"
                                                 : "coefficient t");
}
/* The test's standard errors and the power method (issue 11). */
static rec_value get_test_se(rec_row *r)
{
    return r->a && r->a->has_design ? v_word(cov_test_word(r->a->test)) : v_null();
}
static rec_value get_power_method(rec_row *r)
{
    return r->a && r->a->has_design ? v_word(cov_method_word(r->a->power_method)) : v_null();
}
static rec_value get_replicates(rec_row *r)
{
    return r->a ? v_count((long long)r->a->replicates) : v_null();
}
static rec_value get_resampling(rec_row *r)
{
    if (r->a == NULL || r->a->power_method != COV_METHOD_RESAMPLED) return v_null();
    return v_word(r->a->resample_kind ? "pairs" : "wild");
}
static rec_value get_noise_reasons(rec_row *r)
{
    static const char *const why[] = {"formula_vs_resampled", "few_values", "one_run",
                                      "near_constant", "unseen_tail", "classic_hetero",
                                      "few_df", "other"};
    if (r->a == NULL) return v_null();
    size_t at = 0;
    r->text[0] = '\0';
    for (unsigned b = 0; b < 8; b++)
        if (r->a->noise_reasons & (1u << b))
            at += (size_t)snprintf(r->text + at, at < sizeof r->text ? sizeof r->text - at : 0,
                                   "%s%s", at ? ";" : "", why[b]);
    return v_text(r->text);
}
static rec_value get_fit_note(rec_row *r) { return r->a ? v_text(r->a->fit_note) : v_null(); }
static rec_value get_trend(rec_row *r) { return r->a ? v_bool(r->a->trend) : v_null(); }
static rec_value get_distinct_values(rec_row *r)
{
    return r->a ? v_count((long long)r->a->distinct) : v_null();
}
static rec_value get_checkable(rec_row *r) { return r->a ? v_bool(r->a->distinct >= 3) : v_null(); }
static rec_value get_shape_pure(rec_row *r)
{
    return r->a && isfinite(r->a->shape_f) ? v_bool(r->a->shape_pure) : v_null();
}
static rec_value get_caution(rec_row *r) { return r->a ? v_text(r->a->caution) : v_null(); }
/* Seed blocks (coverage/assess/seedblock.c): whether the test used them, how many there were. */
static rec_value get_seed_used(rec_row *r) { return r->a ? v_bool(r->a->seed_blocks_used) : v_null(); }
static rec_value get_seed_blocks(rec_row *r)
{
    return r->a ? v_count((long long)r->a->seed.blocks) : v_null();
}
static rec_value get_seed_unblocked(rec_row *r)
{
    return r->a && r->a->seed.blocks > 0 ? v_count((long long)r->a->seed.unblocked) : v_null();
}

static rec_value get_runs(rec_row *r) { return r->s ? v_count((long long)r->s->n) : v_null(); }
static rec_value get_distinct(rec_row *r)
{
    return r->s ? v_count((long long)r->s->distinct) : v_null();
}
static rec_value get_s_pure(rec_row *r) { return r->s ? v_bool(r->s->pure_error) : v_null(); }
static rec_value get_s_ok(rec_row *r) { return r->s ? v_bool(r->s->ok) : v_null(); }
static rec_value get_s_reason(rec_row *r) { return r->s ? v_text(r->s->reason) : v_null(); }

/* ---- the table: the one place a field is added ----------------------------------------------
 * A field is its name (JSON key and CSV column), the record it belongs to and how its value is
 * found: a getter, or, for a plain double of the assessment or the support, its offset (null when
 * the claim is untestable or the part was not computed). Order here is the order of the output. */

typedef enum { SRC_GET, SRC_ASSESS, SRC_SUPPORT } rec_source;

typedef struct {
    const char *name;
    unsigned parts;                       /* COV_RECORD_* bits */
    rec_source src;
    rec_value (*get)(rec_row *);    /* SRC_GET */
    size_t offset;                        /* SRC_ASSESS, SRC_SUPPORT: offset of a double */
} rec_field;

#define CLAIM_F (COV_RECORD_CLAIM | COV_RECORD_ASSESS | COV_RECORD_SUPPORT)
#define GET(name, parts, fn) {name, parts, SRC_GET, fn, 0}
#define A_NUM(name, member) {name, COV_RECORD_ASSESS, SRC_ASSESS, NULL, offsetof(cov_assessment, member)}
#define S_NUM(name, member) {name, COV_RECORD_SUPPORT, SRC_SUPPORT, NULL, offsetof(cov_support, member)}

static const rec_field fields[] = {
    /* the claim, as `shoal claims` prints it */
    GET("index", CLAIM_F, get_index),
    GET("kind", CLAIM_F, get_kind),
    GET("treatment", CLAIM_F, get_treatment),
    GET("outcome", CLAIM_F, get_outcome),
    GET("adjustment_set", CLAIM_F, get_set),
    GET("effect_of_interest", CLAIM_F, get_effect),
    GET("effect_unit", CLAIM_F, get_unit),
    GET("sign", CLAIM_F, get_sign),
    GET("status", CLAIM_F, get_status),
    GET("reason", CLAIM_F, get_claim_reason),
    GET("steerable", CLAIM_F, get_steerable),
    GET("minimal_adjustment_set", CLAIM_F, get_min_set),
    GET("effect_written", CLAIM_F, get_written),
    GET("effect_per", CLAIM_F, get_per),
    GET("effect_step", CLAIM_F, get_step),
    GET("effect_per_unit_factor", CLAIM_F, get_per_unit),
    GET("treatment_unit", CLAIM_F, get_t_unit),
    GET("outcome_unit", CLAIM_F, get_y_unit),
    GET("shape", CLAIM_F, get_shape),
    GET("rests_on_noise_independence", CLAIM_F, get_rests),
    /* its assessment, as `shoal power` and the survey print it */
    GET("verdict", COV_RECORD_ASSESS, get_verdict),
    GET("verdict_reason", COV_RECORD_ASSESS, get_verdict_reason),
    GET("n", COV_RECORD_ASSESS, get_n),
    A_NUM("df", df),
    A_NUM("estimate", estimate),
    A_NUM("se", se),
    A_NUM("sigma", sigma),
    A_NUM("sd_treatment_resid", sd_treatment_resid),
    A_NUM("vif", vif),
    A_NUM("effect_raw", effect_raw),
    A_NUM("alpha", alpha),
    A_NUM("power", power),
    A_NUM("power_lo", power_lo),
    A_NUM("power_hi", power_hi),
    A_NUM("mde", mde),
    A_NUM("mde_lo", mde_lo),
    A_NUM("mde_hi", mde_hi),
    A_NUM("runs_needed", runs_needed),
    GET("runs_unreachable", COV_RECORD_ASSESS, get_unreachable),
    GET("noise_flag", COV_RECORD_ASSESS, get_noise_flag),
    GET("noise_note", COV_RECORD_ASSESS, get_noise_note),
    GET("pure_error", COV_RECORD_ASSESS, get_pure),
    A_NUM("sigma_pure", sigma_pure),
    A_NUM("lack_of_fit_f", lof_f),
    A_NUM("lack_of_fit_p", lof_p),
    A_NUM("effect_written_raw", effect_written_raw),
    GET("test", COV_RECORD_ASSESS, get_test),
    GET("trend", COV_RECORD_ASSESS, get_trend),
    A_NUM("omnibus_df1", omnibus_df1),
    A_NUM("omnibus_f", omnibus_f),
    A_NUM("omnibus_p", omnibus_p),
    A_NUM("omnibus_power", omnibus_power),
    A_NUM("turn_lo", turn_lo),
    A_NUM("turn_hi", turn_hi),
    GET("distinct_values", COV_RECORD_ASSESS, get_distinct_values),
    GET("shape_checkable", COV_RECORD_ASSESS, get_checkable),
    A_NUM("shape_f", shape_f),
    A_NUM("shape_df1", shape_df1),
    A_NUM("shape_df2", shape_df2),
    A_NUM("shape_p", shape_p),
    GET("shape_pure_error", COV_RECORD_ASSESS, get_shape_pure),
    GET("caution", COV_RECORD_ASSESS, get_caution),
    /* untestable on these runs: the variable that never varies, and its value */
    GET("never_varies", COV_RECORD_ASSESS, get_fixed_var),
    GET("never_varies_value", COV_RECORD_ASSESS, get_fixed_value),
    GET("test_se", COV_RECORD_ASSESS, get_test_se),
    GET("power_method", COV_RECORD_ASSESS, get_power_method),
    A_NUM("power_formula", power_formula),
    A_NUM("mc_se", mc_se),
    GET("replicates", COV_RECORD_ASSESS, get_replicates),
    GET("resampling", COV_RECORD_ASSESS, get_resampling),
    A_NUM("se_robust", se_robust),
    A_NUM("leave_out_share", leave_out_share),
    GET("noise_reasons", COV_RECORD_ASSESS, get_noise_reasons),
    GET("fit_note", COV_RECORD_ASSESS, get_fit_note),
    /* seed blocks: shared seeds as fixed effects in the claim's regression */
    GET("seed_blocks_used", COV_RECORD_ASSESS, get_seed_used),
    GET("seed_blocks", COV_RECORD_ASSESS, get_seed_blocks),
    GET("seed_unblocked_runs", COV_RECORD_ASSESS, get_seed_unblocked),
    A_NUM("seed_share", seed.share),
    A_NUM("seed_variance_drop", seed.var_drop),
    A_NUM("seed_f", seed.f),
    A_NUM("seed_df1", seed.df1),
    A_NUM("seed_df2", seed.df2),
    A_NUM("seed_p", seed.p),
    A_NUM("power_unblocked", power_unblocked),
    /* its support in the runs, as `shoal coverage` and the survey print it */
    GET("runs", COV_RECORD_SUPPORT, get_runs),
    GET("distinct", COV_RECORD_SUPPORT, get_distinct),
    S_NUM("spread", spread),
    S_NUM("spread_resid", spread_resid),
    S_NUM("overlap", overlap),
    S_NUM("kish_ess", kish_ess),
    S_NUM("runs_per_config", runs_per_config),
    GET("replicated", COV_RECORD_SUPPORT, get_s_pure),
    GET("support_ok", COV_RECORD_SUPPORT, get_s_ok),
    GET("support_reason", COV_RECORD_SUPPORT, get_s_reason),
};
static const size_t n_fields = sizeof fields / sizeof fields[0];

static rec_value value_of(const rec_field *fd, rec_row *r)
{
    switch (fd->src) {
    case SRC_GET: return fd->get(r);
    case SRC_ASSESS:
        return r->a ? v_num(*(const double *)((const char *)r->a + fd->offset)) : v_null();
    case SRC_SUPPORT:
        return r->s ? v_num(*(const double *)((const char *)r->s + fd->offset)) : v_null();
    }
    return v_null();
}

static rec_row row_of(const cov_record_src *src, size_t i)
{
    assert(src != NULL && src->g != NULL && src->claims != NULL && i < src->claims->n);
    assert(src->assess == NULL || src->assess->n == src->claims->n);
    assert(src->support == NULL || src->support->n == src->claims->n);
        rec_row r = {src->g, &src->claims->items[i], i, NULL, NULL, NULL, "", NULL};
    if (src->assess != NULL && i < src->assess->n) r.any = &src->assess->items[i];
    if (r.any != NULL && r.c->status == COV_TESTABLE) r.a = r.any;
    if (src->support != NULL && i < src->support->n) r.s = &src->support->items[i];
    return r;
}

/* ---- JSON ------------------------------------------------------------------------------------- */

static void json_value(FILE *out, const cov_graph *g, const rec_value *v)
{
    switch (v->kind) {
    case RV_NULL: fputs("null", out); break;
    case RV_NUM: cov_emit_json_number(out, v->num); break;
    case RV_COUNT: fprintf(out, "%lld", v->count); break;
    case RV_BOOL: fputs(v->count ? "true" : "false", out); break;
    case RV_WORD:
    case RV_TEXT:
        if (v->text) cov_emit_json_string(out, v->text);
        else fputs("null", out);
        break;
    case RV_NAMES:
        fputc('[', out);
        for (size_t k = 0; k < v->n_vars; k++) {
            if (k) fputs(", ", out);
            cov_emit_json_string(out, g->vars[v->vars[k]].name);
        }
        fputc(']', out);
        break;
    }
}

void cov_record_json(FILE *out, const cov_record_src *src, size_t i, unsigned parts)
{
    rec_row r = row_of(src, i);
    int first = 1;
    fputc('{', out);
    for (size_t k = 0; k < n_fields; k++) {
        if (!(fields[k].parts & parts)) continue;
        rec_value v = value_of(&fields[k], &r);
        fprintf(out, "%s\"%s\": ", first ? "" : ", ", fields[k].name);
        json_value(out, src->g, &v);
        first = 0;
    }
    fputc('}', out);
}

/* ---- CSV -------------------------------------------------------------------------------------- */

/* A set of names as one CSV cell: names joined by ';', a name holding ';' or '"' quoted with its
 * quotes doubled (RFC 4180's rule with ';' as the separator); then the whole cell quoted for the
 * row when it holds a comma, quote, CR or LF. Written in two passes, without allocating. */
static int name_needs_inner(const char *s) { return strpbrk(s, ";\"") != NULL; }

static void csv_names(FILE *out, const cov_graph *g, const size_t *vars, size_t n)
{
    int outer = 0;
    for (size_t k = 0; k < n; k++) {
        const char *s = g->vars[vars[k]].name;
        if (name_needs_inner(s) || strpbrk(s, ",\r\n") != NULL) outer = 1;
    }
    if (outer) fputc('"', out);
    /* A cell a spreadsheet would run as a formula gets a leading apostrophe, as
     * cov_emit_csv_field gives one. */
    if (n > 0 && !name_needs_inner(g->vars[vars[0]].name) && g->vars[vars[0]].name[0] != '\0' &&
        strchr("=+-@\t\r", g->vars[vars[0]].name[0]) != NULL)
        fputc('\'', out);
    for (size_t k = 0; k < n; k++) {
        const char *s = g->vars[vars[k]].name;
        int inner = name_needs_inner(s);
        if (k) fputc(';', out);
        if (inner) fputs(outer ? "\"\"" : "\"", out);
        for (const char *p = s; *p; p++) {
            if (*p == '"') fputs(outer ? "\"\"\"\"" : "\"\"", out);
            else fputc(*p, out);
        }
        if (inner) fputs(outer ? "\"\"" : "\"", out);
    }
    if (outer) fputc('"', out);
}

/* A table of rows is assembled in a buffer and written in large blocks: a claims table of
 * 300,000 rows would otherwise cost a dozen stdio calls and several printf's per row. The bytes
 * are those of the stdio forms (cov_emit_csv_field, cov_emit_csv_number, csv_names); a cell that
 * needs quoting or a formula guard is rare, so it flushes the buffer and is written by those. */
#define CSV_BUF 65536     /* the table's buffer */
#define CSV_BUF_SMALL 1024 /* one row's, or the table's when the large one cannot be had */
#define CSV_NUM_TEXT 32   /* "%.10g" of a double: at most 17 characters */

typedef struct {
    FILE *f;
    char *buf;
    size_t n, cap;
    /* per field, the last double formatted and its text: a column often repeats one value */
    int have[sizeof fields / sizeof fields[0]];
    double last[sizeof fields / sizeof fields[0]];
    char text[sizeof fields / sizeof fields[0]][CSV_NUM_TEXT];
    amount_memo written;
} csv_out;

static void out_flush(csv_out *o)
{
    if (o->n) fwrite(o->buf, 1, o->n, o->f);
    o->n = 0;
}

static void out_write(csv_out *o, const char *s, size_t len)
{
    if (len > o->cap - o->n) {
        out_flush(o);
        if (len > o->cap) {
            fwrite(s, 1, len, o->f);
            return;
        }
    }
    memcpy(o->buf + o->n, s, len);
    o->n += len;
}

static void out_char(csv_out *o, char c)
{
    if (o->n == o->cap) out_flush(o);
    o->buf[o->n++] = c;
}

/* A whole number in decimal, as "%lld" writes it. */
static size_t count_text(long long v, char *t)
{
    char rev[24];
    size_t k = 0, n = 0;
    unsigned long long m = v < 0 ? 0ull - (unsigned long long)v : (unsigned long long)v;
    do {
        rev[k++] = (char)('0' + m % 10);
        m /= 10;
    } while (m);
    if (v < 0) t[n++] = '-';
    while (k) t[n++] = rev[--k];
    return n;
}

/* A finite double as "%.10g" writes it. A whole number below 1e10 in magnitude has at most 10
 * digits, so "%.10g" prints it as an integer; -0 keeps its sign through printf. */
static size_t num_text(double x, char *t)
{
    if (fabs(x) < 1e10 && x == (double)(long long)x && !(x == 0 && signbit(x)))
        return count_text((long long)x, t);
    int len = snprintf(t, CSV_NUM_TEXT, "%.10g", x);
    return len > 0 && len < CSV_NUM_TEXT ? (size_t)len : 0;
}

/* 1 when s is written as it is (nothing to quote, no formula guard), with its length in *len;
 * one pass, since the cells are short. */
static int csv_plain(const char *s, size_t *len)
{
    if (s[0] == '=' || s[0] == '+' || s[0] == '-' || s[0] == '@' || s[0] == '\t' || s[0] == '\r')
        return 0;
    size_t n = 0;
    for (; s[n]; n++)
        if (s[n] == ',' || s[n] == '"' || s[n] == '\r' || s[n] == '\n') return 0;
    *len = n;
    return 1;
}

static void csv_value(csv_out *o, const cov_graph *g, const rec_value *v, size_t k)
{
    char t[CSV_NUM_TEXT];
    size_t len;
    switch (v->kind) {
    case RV_NULL: break;
    case RV_NUM:
        if (isfinite(v->num)) {
            if (!o->have[k] || memcmp(&o->last[k], &v->num, sizeof v->num) != 0) {
                len = num_text(v->num, t);
                if (len == 0) {
                    out_flush(o);
                    cov_emit_csv_number(o->f, v->num);
                    break;
                }
                memcpy(o->text[k], t, len);
                o->text[k][len] = '\0';
                o->last[k] = v->num;
                o->have[k] = 1;
            }
            out_write(o, o->text[k], strlen(o->text[k]));
        } else if (isinf(v->num)) {
            out_write(o, v->num > 0 ? "inf" : "-inf", v->num > 0 ? 3 : 4);
        }
        break;
    case RV_COUNT: out_write(o, t, count_text(v->count, t)); break;
    case RV_BOOL: out_char(o, v->count ? '1' : '0'); break;
    case RV_WORD:
    case RV_TEXT:
        if (v->text == NULL) break;
        if (csv_plain(v->text, &len)) {
            out_write(o, v->text, len);
        } else {
            out_flush(o);
            cov_emit_csv_field(o->f, v->text);
        }
        break;
    case RV_NAMES: {
        int plain = 1;
        for (size_t j = 0; j < v->n_vars && plain; j++)
            plain = strpbrk(g->vars[v->vars[j]].name, ";,\"\r\n") == NULL &&
                    (j > 0 || csv_plain(g->vars[v->vars[j]].name, &len));
        if (!plain) {
            out_flush(o);
            csv_names(o->f, g, v->vars, v->n_vars);
            break;
        }
        for (size_t j = 0; j < v->n_vars; j++) {
            const char *name = g->vars[v->vars[j]].name;
            if (j) out_char(o, ';');
            out_write(o, name, strlen(name));
        }
        break;
    }
    }
}

void cov_record_csv_header(FILE *out, unsigned parts)
{
    int first = 1;
    for (size_t k = 0; k < n_fields; k++) {
        if (!(fields[k].parts & parts)) continue;
        fprintf(out, "%s%s", first ? "" : ",", fields[k].name);
        first = 0;
    }
    fputc('\n', out);
}

static void csv_row(csv_out *o, const cov_record_src *src, size_t i, unsigned parts)
{
    rec_row r = row_of(src, i);
    r.written = &o->written;
    int first = 1;
    for (size_t k = 0; k < n_fields; k++) {
        if (!(fields[k].parts & parts)) continue;
        if (!first) out_char(o, ',');
        rec_value v = value_of(&fields[k], &r);
        csv_value(o, src->g, &v, k);
        first = 0;
    }
    out_char(o, '\n');
}

void cov_record_csv_rows(FILE *out, const cov_record_src *src, size_t from, size_t to,
                         unsigned parts)
{
    char small[CSV_BUF_SMALL];
    csv_out o;
    o.f = out;
    o.n = 0;
    o.buf = to - from > 1 ? malloc(CSV_BUF) : NULL;
    o.cap = o.buf != NULL ? CSV_BUF : sizeof small;
    if (o.buf == NULL) o.buf = small;
    memset(o.have, 0, sizeof o.have);
    o.written.have = 0;
    for (size_t i = from; i < to; i++) csv_row(&o, src, i, parts);
    out_flush(&o);
    if (o.buf != small) free(o.buf);
}

size_t cov_record_field_names(unsigned parts, const char **names, size_t cap)
{
    size_t n = 0;
    for (size_t k = 0; k < n_fields; k++) {
        if (!(fields[k].parts & parts)) continue;
        if (n < cap) names[n] = fields[k].name;
        n++;
    }
    return n;
}
