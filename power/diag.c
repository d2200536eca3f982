/* Residual diagnostics: kurtosis, heteroscedasticity, one dominant value, pure error, lack of fit.
 * See LICENSE. */
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_cdf.h>

#include "power/power.h"

/* The variance ratio of the outer thirds only qualifies a Breusch-Pagan test that is significant
 * at this level; below it the ratio is not computed (it needs a sort). */
#define PW_THIRDS_P 0.05

/* A hash of kk doubles: each 64-bit pattern (with -0 folded into +0, so equal values hash
 * equally) mixed by the splitmix64 finaliser (Steele, Lea & Flood 2014). */
static uint64_t key_hash(const double *key, size_t kk)
{
    uint64_t h = 0x9E3779B97F4A7C15ULL;
    for (size_t j = 0; j < kk; j++) {
        double v = key[j] == 0 ? 0.0 : key[j];
        uint64_t b;
        memcpy(&b, &v, sizeof b);
        h ^= b + 0x9E3779B97F4A7C15ULL + (h << 6) + (h >> 2);
        h ^= h >> 30;
        h *= 0xBF58476D1CE4E5B9ULL;
        h ^= h >> 27;
        h *= 0x94D049BB133111EBULL;
        h ^= h >> 31;
    }
    return h;
}

/* Number the distinct rows of keys (m rows of kk values): group[i] is the group of row i, groups
 * numbered from 0 in order of first appearance. Open addressing. */
static int group_rows(const double *keys, size_t kk, size_t m, size_t *group, size_t *n_groups)
{
    size_t cap = 16;
    while (cap < 2 * m) cap *= 2;
    size_t *slot = calloc(cap, sizeof *slot);   /* 1 + first row of the group; 0 = empty */
    size_t *first_group = malloc(m * sizeof *first_group);
    if (slot == NULL || first_group == NULL) {
        free(slot);
        free(first_group);
        return PW_ENOMEM;
    }
    *n_groups = 0;
    for (size_t i = 0; i < m; i++) {
        const double *key = keys + i * kk;
        size_t s = (size_t)(key_hash(key, kk) & (cap - 1));
        /* memcmp tells -0 from +0; such a pair forms two groups, which only costs a degree of
           freedom of pure error. */
        while (slot[s] != 0 && memcmp(keys + (slot[s] - 1) * kk, key, kk * sizeof *key) != 0)
            s = (s + 1) & (cap - 1);
        if (slot[s] == 0) {
            slot[s] = i + 1;
            first_group[i] = (*n_groups)++;
        }
        group[i] = first_group[slot[s] - 1];
    }
    free(slot);
    free(first_group);
    return PW_OK;
}

int pw_mode_share(const double *y, size_t m, double *share)
{
    *share = NAN;
    if (m == 0) return PW_EFEW;
    size_t *group = malloc(m * sizeof *group);
    double *count = calloc(m, sizeof *count);
    size_t n_groups = 0;
    int rc = PW_ENOMEM;
    if (group == NULL || count == NULL || group_rows(y, 1, m, group, &n_groups) != PW_OK)
        goto fail;
    double best = 0;
    for (size_t i = 0; i < m; i++) {
        count[group[i]] += 1;
        if (count[group[i]] > best) best = count[group[i]];
    }
    *share = best / (double)m;
    rc = PW_OK;
fail:
    free(group);
    free(count);
    return rc;
}

int pw_resid_diagnose(const double *y, const double *fitted, size_t m, pw_resid_diag *out)
{
    out->excess_kurtosis = NAN;
    out->bp_lm = NAN;
    out->bp_p = NAN;
    out->third_ratio = NAN;
    if (m < 4) return PW_EFEW;

    /* Moments of the residuals, two-pass about their mean. */
    double mean = 0, zbar = 0;
    for (size_t i = 0; i < m; i++) {
        mean += ((y[i] - fitted[i]) - mean) / (double)(i + 1);
        zbar += (fitted[i] - zbar) / (double)(i + 1);
    }
    double m2 = 0, m4 = 0;
    for (size_t i = 0; i < m; i++) {
        double e = y[i] - fitted[i] - mean;
        m2 += e * e;
        m4 += e * e * e * e;
    }
    m2 /= (double)m;
    m4 /= (double)m;
    double e2bar = m2;
    if (m2 > 0) out->excess_kurtosis = m4 / (m2 * m2) - 3.0;

    /* Koenker's (1981) studentised form of the Breusch-Pagan (1979) test with the fitted values as
     * the single variance regressor: LM = m R^2 of e^2 on the fitted values, chi-squared with 1 df.
     * It stays valid when the residuals are not normal, which simulator outputs often are not. */
    double szz = 0, sez = 0, see = 0;
    for (size_t i = 0; i < m; i++) {
        double e = y[i] - fitted[i] - mean;
        double u = e * e - e2bar, z = fitted[i] - zbar;
        szz += z * z;
        sez += u * z;
        see += u * u;
    }
    if (szz > 0 && see > 0) {
        double r2 = sez * sez / (szz * see);
        out->bp_lm = (double)m * r2;
        out->bp_p = gsl_cdf_chisq_Q(out->bp_lm, 1.0);
    }
    if (out->bp_p < PW_THIRDS_P) {
        /* Residual variance of the highest third of fitted values against the lowest; only
         * needed to qualify a significant test, and it costs a sort. */
        double *sorted = malloc(m * sizeof *sorted);
        if (sorted == NULL) return PW_ENOMEM;
        memcpy(sorted, fitted, m * sizeof *sorted);
        if (pw_sort_doubles(sorted, m) != PW_OK) {
            free(sorted);
            return PW_ENOMEM;
        }
        double cut1 = sorted[m / 3], cut2 = sorted[(2 * m) / 3];
        double s_lo = 0, s_hi = 0;
        size_t n_lo = 0, n_hi = 0;
        for (size_t i = 0; i < m; i++) {
            double e = y[i] - fitted[i] - mean;
            if (fitted[i] < cut1) {
                s_lo += e * e;
                n_lo++;
            } else if (fitted[i] > cut2) {
                s_hi += e * e;
                n_hi++;
            }
        }
        if (n_lo > 1 && n_hi > 1 && s_lo > 0 && s_hi > 0) {
            double v_lo = s_lo / (double)n_lo, v_hi = s_hi / (double)n_hi;
            out->third_ratio = v_hi > v_lo ? v_hi / v_lo : v_lo / v_hi;
        }
        free(sorted);
    }
    return PW_OK;
}

int pw_lack_of_fit(const double *keys, size_t kk, const double *y, const double *fitted, size_t m,
                   double n_coef, pw_lof *out)
{
    out->groups = 0;
    out->repeated = 0;
    out->df_pe = 0;
    out->df_lof = 0;
    out->sigma_pure = NAN;
    out->f = NAN;
    out->p = NAN;
    if (m == 0) return PW_EFEW;
    size_t *group = malloc(m * sizeof *group);
    double *cnt = calloc(m, sizeof *cnt), *mean = calloc(m, sizeof *mean),
           *m2 = calloc(m, sizeof *m2);
    int rc = PW_ENOMEM;
    if (group == NULL || cnt == NULL || mean == NULL || m2 == NULL) goto fail;
    if ((rc = group_rows(keys, kk, m, group, &out->groups)) != PW_OK) goto fail;
    double ss_resid = 0;
    for (size_t i = 0; i < m; i++) {
        size_t g = group[i];
        /* Welford's update of the group's mean and sum of squares. */
        cnt[g] += 1;
        double d = y[i] - mean[g];
        mean[g] += d / cnt[g];
        m2[g] += d * (y[i] - mean[g]);
        double e = y[i] - fitted[i];
        ss_resid += e * e;
    }
    double ss_pe = 0;
    out->repeated = 0;
    for (size_t g = 0; g < out->groups; g++) {
        ss_pe += m2[g];
        out->repeated += cnt[g] >= 2;
    }
    out->df_pe = (double)(m - out->groups);
    out->df_lof = (double)out->groups - n_coef;
    rc = PW_OK;
    if (out->df_pe < 1) goto fail;
    out->sigma_pure = sqrt(ss_pe / out->df_pe);
    if (out->df_lof < 1 || !(ss_pe > 0)) goto fail;
    /* Lack-of-fit F test (Draper & Smith 1998, sec. 2.1): the residual sum of squares splits into
     * pure error within replicated configurations and the rest, which the linear model misses. */
    double ss_lof = ss_resid - ss_pe;
    if (ss_lof < 0) ss_lof = 0;
    out->f = (ss_lof / out->df_lof) / (ss_pe / out->df_pe);
    out->p = gsl_cdf_fdist_Q(out->f, out->df_lof, out->df_pe);
fail:
    free(group);
    free(cnt);
    free(mean);
    free(m2);
    return rc;
}
