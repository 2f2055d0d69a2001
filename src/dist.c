/* dist: distributions written as scenario values, each sampled by its
 * inverse CDF x = F^-1(u): uniform a + u (b - a); normal mean + sd Phi^-1(u);
 * lognormal median exp(sigma Phi^-1(u)) (Phi^-1 = gsl_cdf_ugaussian_Pinv);
 * choice v[floor(u n)]; and the impact angle of an isotropic flux of bodies,
 * dP = sin 2θ dθ on 0..90° (Gilbert 1893; Shoemaker 1962), whose CDF is
 * F(θ) = sin²θ, so θ = asin(sqrt(u)); truncated to [lo, hi] it is
 * θ = asin(sqrt(sin²lo + u (sin²hi - sin²lo))).
 *
 * Part of the input layer: the scenario reader uses it to recognise a value
 * that is a distribution, and the ensemble samples it. */
#include "steamloft/dist.h"
#include "steamloft/infile.h"
#include "steamloft/units.h"
#include "steamloft/units_table.h"

#include <gsl/gsl_cdf.h>

#include <ctype.h>
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

typedef struct dist_name {
    const char *name;
    sl_dist_kind kind;
} dist_name;

static const dist_name dist_names[] = {
    {"uniform", SL_DIST_UNIFORM}, {"normal", SL_DIST_NORMAL},     {"lognormal", SL_DIST_LOGNORMAL},
    {"choice", SL_DIST_CHOICE},   {"flux_angle", SL_DIST_FLUX_ANGLE},
};

static const char *dist_valid_forms =
    "uniform(a, b), normal(mean, sd), lognormal(median, sigma), choice(v1, v2, ...), "
    "flux_angle() or flux_angle(lo, hi)";

/* Length of the identifier at s. */
static size_t ident_len(const char *s)
{
    size_t n = 0;
    while (isalnum((unsigned char)s[n]) || s[n] == '_')
        n++;
    return n;
}

static const dist_name *find_dist(const char *s, size_t n)
{
    for (size_t i = 0; i < sizeof dist_names / sizeof dist_names[0]; i++)
        if (strlen(dist_names[i].name) == n && strncmp(dist_names[i].name, s, n) == 0)
            return &dist_names[i];
    return NULL;
}

int sl_dist_is_distribution(const char *text)
{
    if (text == NULL)
        return 0;
    while (isspace((unsigned char)*text))
        text++;
    size_t n = ident_len(text);
    if (n == 0 || find_dist(text, n) == NULL)
        return 0;
    const char *p = text + n;
    while (isspace((unsigned char)*p))
        p++;
    return *p == '(';
}

int sl_dist_looks_like_law(const char *text)
{
    if (text == NULL)
        return 0;
    while (isspace((unsigned char)*text))
        text++;
    size_t n = ident_len(text);
    if (n == 0 || isdigit((unsigned char)text[0]))
        return 0;
    const char *p = text + n;
    while (isspace((unsigned char)*p))
        p++;
    return *p == '(';
}

const char *sl_dist_forms(void)
{
    return dist_valid_forms;
}

void sl_dist_free(sl_dist *d)
{
    if (d == NULL)
        return;
    free(d->values);
    memset(d, 0, sizeof *d);
}

/* Parse the comma-separated numbers between the parentheses of ARGS (the text
 * after '(' up to the closing ')'), into vals (at most maxv).  Returns the
 * count or -1 with a message. */
static int parse_args(const char *args, size_t len, double *vals, size_t maxv, size_t *nv,
                      const char *where, const char *form, sl_err *e)
{
    *nv = 0;
    size_t i = 0;
    /* Empty argument list. */
    size_t k = 0;
    while (k < len && isspace((unsigned char)args[k]))
        k++;
    if (k == len)
        return SL_OK;
    while (i <= len) {
        size_t j = i;
        while (j < len && args[j] != ',')
            j++;
        char buf[96];
        size_t tl = j - i;
        /* Trim. */
        const char *t = args + i;
        while (tl > 0 && isspace((unsigned char)*t)) {
            t++;
            tl--;
        }
        while (tl > 0 && isspace((unsigned char)t[tl - 1]))
            tl--;
        if (tl == 0)
            SL_FAIL_RETURN(e, SL_EDATA, "%s: empty argument in %s", where, form);
        if (tl >= sizeof buf)
            SL_FAIL_RETURN(e, SL_EDATA, "%s: argument '%.20s...' of %s is too long", where, t, form);
        memcpy(buf, t, tl);
        buf[tl] = '\0';
        double v;
        if (sl_infile_parse_double(buf, &v) != 0)
            SL_FAIL_RETURN(e, SL_EDATA, "%s: '%s' in %s is not a finite number (decimal only)", where,
                           buf, form);
        if (*nv >= maxv)
            SL_FAIL_RETURN(e, SL_EDATA, "%s: %s takes at most %zu values", where, form, maxv);
        vals[(*nv)++] = v;
        i = j + 1;
        if (j == len)
            break;
    }
    return SL_OK;
}

int sl_dist_parse(const char *text, const char *key, const char *where, sl_dist *d, sl_err *e)
{
    memset(d, 0, sizeof *d);
    if (where == NULL)
        where = key ? key : "distribution";
    const char *s = text ? text : "";
    while (isspace((unsigned char)*s))
        s++;
    size_t n = ident_len(s);
    const dist_name *dn = find_dist(s, n);
    if (dn == NULL && sl_dist_looks_like_law(s))
        SL_FAIL_RETURN(e, SL_EDATA, "%s: '%.*s' is not a distribution law (valid: %s)", where,
                       (int)(n > 40 ? 40 : n), s, dist_valid_forms);
    if (dn == NULL)
        SL_FAIL_RETURN(e, SL_EDATA, "%s: '%s' is not a distribution; valid: %s", where, s,
                       dist_valid_forms);
    const char *p = s + n;
    while (isspace((unsigned char)*p))
        p++;
    if (*p != '(')
        SL_FAIL_RETURN(e, SL_EDATA, "%s: expected '(' after '%s'; valid: %s", where, dn->name,
                       dist_valid_forms);
    const char *close = strrchr(p, ')');
    if (close == NULL)
        SL_FAIL_RETURN(e, SL_EDATA, "%s: missing ')' in '%s'", where, s);
    for (const char *q = close + 1; *q; q++)
        if (!isspace((unsigned char)*q))
            SL_FAIL_RETURN(e, SL_EDATA, "%s: unexpected text '%s' after '%.*s'", where, q,
                           (int)(close + 1 - s), s);
    double vals[SL_DIST_MAX_CHOICES];
    size_t nv = 0;
    char form[64];
    switch (dn->kind) {
    case SL_DIST_UNIFORM: snprintf(form, sizeof form, "uniform(a, b)"); break;
    case SL_DIST_NORMAL: snprintf(form, sizeof form, "normal(mean, sd)"); break;
    case SL_DIST_LOGNORMAL: snprintf(form, sizeof form, "lognormal(median, sigma)"); break;
    case SL_DIST_CHOICE: snprintf(form, sizeof form, "choice(v1, v2, ...)"); break;
    default: snprintf(form, sizeof form, "flux_angle() or flux_angle(lo, hi)"); break;
    }
    SL_TRY_RETURN(e, parse_args(p + 1, (size_t)(close - p - 1), vals, SL_DIST_MAX_CHOICES, &nv,
                                where, form, e));
    d->kind = dn->kind;
    switch (dn->kind) {
    case SL_DIST_UNIFORM:
        if (nv != 2)
            SL_FAIL_RETURN(e, SL_EDATA, "%s: %s takes 2 values, got %zu", where, form, nv);
        if (!(vals[0] < vals[1]))
            SL_FAIL_RETURN(e, SL_EDATA, "%s: uniform(%g, %g) needs a < b", where, vals[0], vals[1]);
        break;
    case SL_DIST_NORMAL:
        if (nv != 2)
            SL_FAIL_RETURN(e, SL_EDATA, "%s: %s takes 2 values, got %zu", where, form, nv);
        if (!(vals[1] > 0))
            SL_FAIL_RETURN(e, SL_EDATA, "%s: normal(%g, %g) needs sd > 0", where, vals[0], vals[1]);
        break;
    case SL_DIST_LOGNORMAL:
        if (nv != 2)
            SL_FAIL_RETURN(e, SL_EDATA, "%s: %s takes 2 values, got %zu", where, form, nv);
        if (!(vals[0] > 0) || !(vals[1] > 0))
            SL_FAIL_RETURN(e, SL_EDATA, "%s: lognormal(%g, %g) needs median > 0 and sigma > 0",
                           where, vals[0], vals[1]);
        break;
    case SL_DIST_CHOICE:
        if (nv < 1)
            SL_FAIL_RETURN(e, SL_EDATA, "%s: %s needs 1 to %d values", where, form,
                           (int)SL_DIST_MAX_CHOICES);
        d->values = malloc(nv * sizeof *d->values);
        if (d->values == NULL)
            SL_FAIL_RETURN(e, SL_ENOMEM, "%s: out of memory", where);
        memcpy(d->values, vals, nv * sizeof *vals);
        d->n_values = nv;
        break;
    case SL_DIST_FLUX_ANGLE: {
        const sl_unit *u = key ? sl_units_for_key(key) : NULL;
        if (u == NULL || strcmp(u->si_symbol, "rad") != 0)
            SL_FAIL_RETURN(e, SL_EDATA,
                           "%s: flux_angle applies only to an angle key (unit _deg); '%s' is not one",
                           where, key ? key : "?");
        d->unit_to_rad = u->to_si;
        if (nv == 0) {
            vals[0] = 0.0;
            vals[1] = 0.5 * SL_PI / u->to_si;
        } else if (nv != 2) {
            SL_FAIL_RETURN(e, SL_EDATA, "%s: %s takes 0 or 2 values, got %zu", where, form, nv);
        }
        double right = 0.5 * SL_PI / u->to_si;
        if (!(vals[0] >= 0 && vals[0] < vals[1] && vals[1] <= right * (1 + 1e-12)))
            SL_FAIL_RETURN(e, SL_EDATA, "%s: flux_angle(%g, %g) needs 0 <= lo < hi <= %g %s", where,
                           vals[0], vals[1], right, u->symbol);
        if (vals[1] > right)
            vals[1] = right;
        break;
    }
    default: break;
    }
    if (dn->kind != SL_DIST_CHOICE) {
        d->a = nv > 0 ? vals[0] : 0.0;
        d->b = nv > 1 ? vals[1] : 0.0;
        if (dn->kind == SL_DIST_FLUX_ANGLE) {
            d->a = vals[0];
            d->b = vals[1];
        }
    }
    return SL_OK;
}

double sl_dist_quantile(const sl_dist *d, double u)
{
    switch (d->kind) {
    case SL_DIST_FIXED: return d->a;
    case SL_DIST_UNIFORM: return d->a + u * (d->b - d->a);
    case SL_DIST_NORMAL: return d->a + d->b * gsl_cdf_ugaussian_Pinv(u);
    case SL_DIST_LOGNORMAL: return d->a * exp(d->b * gsl_cdf_ugaussian_Pinv(u));
    case SL_DIST_CHOICE: {
        size_t k = (size_t)floor(u * (double)d->n_values);
        if (k >= d->n_values)
            k = d->n_values - 1;
        return d->values[k];
    }
    case SL_DIST_FLUX_ANGLE: {
        double slo = sin(d->a * d->unit_to_rad), shi = sin(d->b * d->unit_to_rad);
        double s2 = slo * slo + u * (shi * shi - slo * slo);
        if (s2 < 0)
            s2 = 0;
        if (s2 > 1)
            s2 = 1;
        return asin(sqrt(s2)) / d->unit_to_rad;
    }
    }
    return NAN;
}

double sl_dist_median(const sl_dist *d)
{
    return sl_dist_quantile(d, 0.5);
}

void sl_dist_describe(const sl_dist *d, char *buf, size_t n)
{
    switch (d->kind) {
    case SL_DIST_FIXED: snprintf(buf, n, "fixed %g", d->a); break;
    case SL_DIST_UNIFORM: snprintf(buf, n, "uniform(%g, %g)", d->a, d->b); break;
    case SL_DIST_NORMAL: snprintf(buf, n, "normal(mean %g, sd %g)", d->a, d->b); break;
    case SL_DIST_LOGNORMAL: snprintf(buf, n, "lognormal(median %g, sigma %g)", d->a, d->b); break;
    case SL_DIST_CHOICE:
        if (d->n_values <= 4) {
            int w = snprintf(buf, n, "choice(");
            for (size_t i = 0; i < d->n_values && w > 0 && (size_t)w < n; i++)
                w += snprintf(buf + w, n - (size_t)w, "%s%g", i ? ", " : "", d->values[i]);
            if (w > 0 && (size_t)w < n)
                snprintf(buf + w, n - (size_t)w, ")");
        } else {
            snprintf(buf, n, "choice of %zu values, %g ... %g", d->n_values, d->values[0],
                     d->values[d->n_values - 1]);
        }
        break;
    case SL_DIST_FLUX_ANGLE:
        snprintf(buf, n, "flux_angle(%g, %g): dP = sin 2θ dθ", d->a, d->b);
        break;
    }
}

