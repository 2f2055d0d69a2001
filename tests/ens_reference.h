/* The statistics of src/ensemble.c as they were before the column store
 * (main at 7c5e2e2), kept verbatim apart from the names (ref_ for sl_ens_,
 * static), on in-memory results only.  tests/test_ensemble.c checks that the
 * library, in memory and from the column store, gives bit for bit the same
 * percentiles, means, exceedances, rank correlations and first-order
 * indices as this code. */
#ifndef SL_TEST_ENS_REFERENCE_H
#define SL_TEST_ENS_REFERENCE_H

#include "steamloft/ensemble.h"

#include <gsl/gsl_sort.h>
#include <gsl/gsl_statistics_double.h>

#include <math.h>
#include <stdlib.h>

/* Copy output j of the successful members into buf (member order). */
static size_t ref_gather_ok(const sl_ens_result *r, size_t j, double *buf)
{
    size_t k = 0;
    for (size_t m = 0; m < r->n_members; m++)
        if (r->status[m] == SL_OK && isfinite(r->outputs[m * r->n_outputs + j]))
            buf[k++] = r->outputs[m * r->n_outputs + j];
    return k;
}

static int ref_percentiles(const sl_ens_result *r, size_t j, const double *pct, size_t np,
                       double *vals, size_t *n_ok, sl_err *e)
{
    for (size_t k = 0; k < np; k++)
        if (!(pct[k] >= 0 && pct[k] <= 100))
            SL_FAIL_RETURN(e, SL_EUSAGE, "percentile %g is outside 0..100", pct[k]);
    double *buf = malloc((r->n_members + 1) * sizeof *buf);
    if (buf == NULL)
        SL_FAIL_RETURN(e, SL_ENOMEM, "out of memory sorting %zu members", r->n_members);
    size_t n = ref_gather_ok(r, j, buf);
    gsl_sort(buf, 1, n);
    for (size_t k = 0; k < np; k++)
        vals[k] = n ? gsl_stats_quantile_from_sorted_data(buf, 1, n, pct[k] / 100.0) : NAN;
    free(buf);
    *n_ok = n;
    return SL_OK;
}

static void ref_mean_sd(const sl_ens_result *r, size_t j, double *mean, double *sd, size_t *n_ok)
{
    double s = 0;
    size_t n = 0;
    for (size_t m = 0; m < r->n_members; m++)
        if (r->status[m] == SL_OK && isfinite(r->outputs[m * r->n_outputs + j])) {
            s += r->outputs[m * r->n_outputs + j];
            n++;
        }
    double mu = n ? s / (double)n : NAN, ss = 0;
    for (size_t m = 0; m < r->n_members; m++)
        if (r->status[m] == SL_OK && isfinite(r->outputs[m * r->n_outputs + j])) {
            double d = r->outputs[m * r->n_outputs + j] - mu;
            ss += d * d;
        }
    *mean = mu;
    *sd = n > 1 ? sqrt(ss / (double)(n - 1)) : NAN;
    *n_ok = n;
}


static void ref_exceedance(const sl_ens_result *r, size_t j, const sl_ens_threshold *t, double *p,
                       double *stderr_p, size_t *n_ok)
{
    size_t n = 0, k = 0;
    for (size_t m = 0; m < r->n_members; m++) {
        double x = r->outputs[m * r->n_outputs + j];
        if (r->status[m] != SL_OK || !isfinite(x))
            continue;
        int hit = t->op == '>' ? x > t->value
                  : t->op == 'g' ? x >= t->value
                  : t->op == '<' ? x < t->value
                                 : x <= t->value;
        k += (size_t)hit;
        n++;
    }
    *n_ok = n;
    *p = n ? (double)k / (double)n : NAN;
    *stderr_p = n ? sqrt(*p * (1 - *p) / (double)n) : NAN;
}

static int ref_spearman(const sl_ens_result *r, size_t i, size_t j, double *rho, sl_err *e)
{
    size_t nm = r->n_members;
    double *buf = malloc((4 * nm + 1) * sizeof *buf);
    if (buf == NULL)
        SL_FAIL_RETURN(e, SL_ENOMEM, "out of memory ranking %zu members", nm);
    double *x = buf, *y = buf + nm, *w = buf + 2 * nm;
    size_t n = 0;
    int xconst = 1, yconst = 1;
    for (size_t m = 0; m < nm; m++) {
        if (r->status[m] != SL_OK || !isfinite(r->outputs[m * r->n_outputs + j]))
            continue;
        x[n] = r->inputs[m * r->n_inputs + i];
        y[n] = r->outputs[m * r->n_outputs + j];
        if (n > 0) {
            xconst &= x[n] == x[0];
            yconst &= y[n] == y[0];
        }
        n++;
    }
    *rho = (n < 3 || xconst || yconst) ? NAN : gsl_stats_spearman(x, 1, y, 1, n, w);
    free(buf);
    return SL_OK;
}

static int ref_first_order(const sl_ens_result *r, size_t i, size_t j, double *s1, sl_err *e)
{
    size_t nm = r->n_members;
    *s1 = NAN;
    double *x = malloc((2 * nm + 1) * sizeof *x);
    size_t *ord = malloc((nm + 1) * sizeof *ord);
    if (x == NULL || ord == NULL) {
        free(x);
        free(ord);
        SL_FAIL_RETURN(e, SL_ENOMEM, "out of memory ranking %zu members", nm);
    }
    double *y = x + nm;
    size_t n = 0;
    for (size_t m = 0; m < nm; m++) {
        double v = r->outputs[m * r->n_outputs + j];
        if (r->status[m] != SL_OK || !isfinite(v))
            continue;
        x[n] = r->inputs[m * r->n_inputs + i];
        y[n] = v;
        n++;
    }
    if (n >= 20) {
        double mean = 0, var = 0;
        for (size_t k = 0; k < n; k++)
            mean += y[k];
        mean /= (double)n;
        for (size_t k = 0; k < n; k++)
            var += (y[k] - mean) * (y[k] - mean);
        if (var > 0) {
            gsl_sort_index(ord, x, 1, n);
            size_t nclass = (size_t)floor(sqrt((double)n)), used = 0;
            double between = 0;
            size_t start = 0;
            for (size_t c = 1; start < n; c++) {
                size_t end = c >= nclass ? n : (size_t)((double)c * (double)n / (double)nclass);
                if (end <= start)
                    end = start + 1;
                /* Keep equal input values (choice, grids) in one class. */
                while (end < n && x[ord[end]] == x[ord[end - 1]])
                    end++;
                double cm = 0;
                for (size_t k = start; k < end; k++)
                    cm += y[ord[k]];
                cm /= (double)(end - start);
                between += (double)(end - start) * (cm - mean) * (cm - mean);
                used++;
                start = end;
            }
            double raw = between / var;
            double b = (double)(used - 1) / (double)(n - 1);
            *s1 = used > 1 ? (raw - b) / (1 - b) : NAN; /* one class: a constant input */
        }
    }
    free(x);
    free(ord);
    return SL_OK;
}

/* A value and its member, sorted by value then member (a total order, so
 * the result does not depend on the sort algorithm). */
typedef struct ref_keyed {
    double v;
    size_t m;
} ref_keyed;

static int ref_keyed_cmp(const void *pa, const void *pb)
{
    const ref_keyed *a = pa, *b = pb;
    if (a->v < b->v)
        return -1;
    if (a->v > b->v)
        return 1;
    return (a->m > b->m) - (a->m < b->m);
}

/* ORDER[0..n-1] = the members M[k] sorted by value V[k] (ties by member). */
static void ref_sort_members(ref_keyed *work, const double *v, const size_t *mem, size_t n, size_t *order)
{
    for (size_t k = 0; k < n; k++) {
        work[k].v = v[k];
        work[k].m = mem ? mem[k] : k;
    }
    qsort(work, n, sizeof *work, ref_keyed_cmp);
    for (size_t k = 0; k < n; k++)
        order[k] = work[k].m;
}

/* Average ranks (1-based) of the NS members listed in ORDERED (sorted by
 * value VAL[member]), written to RANK[member]; ties share their mean rank. */
static void ref_average_ranks(const size_t *ordered, size_t ns, const double *val, size_t stride,
                          size_t off, double *rank)
{
    size_t a = 0;
    while (a < ns) {
        size_t b = a + 1;
        while (b < ns && val[ordered[b] * stride + off] == val[ordered[a] * stride + off])
            b++;
        double mean_rank = 0.5 * (double)(a + 1 + b); /* mean of a+1 .. b */
        for (size_t k = a; k < b; k++)
            rank[ordered[k]] = mean_rank;
        a = b;
    }
}

static int ref_sensitivity(const sl_ens_result *r, double *rho, double *s1, sl_err *e)
{
    size_t n = r->n_members, ni = r->n_inputs, no = r->n_outputs;
    for (size_t q = 0; q < ni * no; q++) {
        if (rho)
            rho[q] = NAN;
        if (s1)
            s1[q] = NAN;
    }
    if (n == 0 || ni == 0 || no == 0)
        return SL_OK;
    size_t *gord = malloc(ni * n * sizeof *gord);
    size_t *sub = malloc(n * sizeof *sub), *ford = malloc(n * sizeof *ford);
    size_t *yord = malloc(n * sizeof *yord);
    double *col = malloc(n * sizeof *col), *rx = malloc(n * sizeof *rx), *ry = malloc(n * sizeof *ry);
    unsigned char *in = malloc(n);
    ref_keyed *work = malloc(n * sizeof *work);
    int rc = SL_OK;
    if (!gord || !sub || !ford || !yord || !col || !rx || !ry || !in || !work) {
        rc = sl_err_set(e, SL_ENOMEM, __func__, __LINE__, "out of memory ranking %zu members", n);
        goto out;
    }
    /* Each input sorted once over all members. */
    for (size_t i = 0; i < ni; i++) {
        for (size_t m = 0; m < n; m++)
            col[m] = r->inputs[m * ni + i];
        ref_sort_members(work, col, NULL, n, gord + i * n);
    }
    for (size_t j = 0; j < no; j++) {
        /* The members this output's statistics use, in member order. */
        size_t ns = 0;
        double mean = 0, var = 0;
        for (size_t m = 0; m < n; m++) {
            double y = r->outputs[m * no + j];
            in[m] = r->status[m] == SL_OK && isfinite(y);
            if (in[m]) {
                sub[ns++] = m;
                mean += y;
            }
        }
        if (ns < 3)
            continue;
        mean /= (double)ns;
        for (size_t k = 0; k < ns; k++) {
            double d = r->outputs[sub[k] * no + j] - mean;
            var += d * d;
        }
        /* Output ranks over the subset. */
        for (size_t k = 0; k < ns; k++)
            col[k] = r->outputs[sub[k] * no + j];
        ref_sort_members(work, col, sub, ns, yord);
        ref_average_ranks(yord, ns, r->outputs, no, j, ry);
        int yconst = r->outputs[yord[0] * no + j] == r->outputs[yord[ns - 1] * no + j];
        double mr = 0.5 * (double)(ns + 1);
        for (size_t i = 0; i < ni; i++) {
            /* This input's order restricted to the subset. */
            size_t nf = 0;
            for (size_t k = 0; k < n; k++) {
                size_t m = gord[i * n + k];
                if (in[m])
                    ford[nf++] = m;
            }
            int xconst = r->inputs[ford[0] * ni + i] == r->inputs[ford[nf - 1] * ni + i];
            if (rho && !xconst && !yconst) {
                ref_average_ranks(ford, nf, r->inputs, ni, i, rx);
                double sxy = 0, sxx = 0, syy = 0;
                for (size_t k = 0; k < ns; k++) {
                    double dx = rx[sub[k]] - mr, dy = ry[sub[k]] - mr;
                    sxy += dx * dy;
                    sxx += dx * dx;
                    syy += dy * dy;
                }
                rho[j * ni + i] = sxy / sqrt(sxx * syy);
            }
            /* First-order share: classes of equal count along this order. */
            if (s1 && ns >= 20 && var > 0 && !xconst) {
                size_t nclass = (size_t)floor(sqrt((double)ns)), used = 0, start = 0;
                double between = 0;
                for (size_t c = 1; start < ns; c++) {
                    size_t end = c >= nclass ? ns : (size_t)((double)c * (double)ns / (double)nclass);
                    if (end <= start)
                        end = start + 1;
                    while (end < ns && r->inputs[ford[end] * ni + i] == r->inputs[ford[end - 1] * ni + i])
                        end++;
                    double cm = 0;
                    for (size_t k = start; k < end; k++)
                        cm += r->outputs[ford[k] * no + j];
                    cm /= (double)(end - start);
                    between += (double)(end - start) * (cm - mean) * (cm - mean);
                    used++;
                    start = end;
                }
                double b = (double)(used - 1) / (double)(ns - 1);
                s1[j * ni + i] = used > 1 ? (between / var - b) / (1 - b) : NAN;
            }
        }
    }
out:
    free(gord);
    free(sub);
    free(ford);
    free(yord);
    free(col);
    free(rx);
    free(ry);
    free(in);
    free(work);
    return rc;
}

#endif
