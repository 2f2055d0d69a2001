/* ensemble_stats: binned percentiles of per-member series (see the
 * sl_ens_hist part of include/steamloft/ensemble.h). */
#include "steamloft/ensemble.h"
#include "steamloft/minmax.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

void sl_ens_hist_free(sl_ens_hist *h)
{
    if (h == NULL)
        return;
    free(h->count);
    free(h->vmin);
    free(h->vmax);
    free(h->n);
    memset(h, 0, sizeof *h);
}

int sl_ens_hist_init(sl_ens_hist *h, size_t n_series, double lo_log10, double hi_log10, double per_decade,
                     sl_err *e)
{
    memset(h, 0, sizeof *h);
    if (!(hi_log10 > lo_log10) || !(per_decade >= 1.0) || (hi_log10 - lo_log10) * per_decade > 1e6)
        SL_FAIL_RETURN(e, SL_EUSAGE, "binned percentiles: bad bin layout %g..%g, %g per decade", lo_log10,
                       hi_log10, per_decade);
    h->n_series = n_series;
    h->n_bins = (size_t)ceil((hi_log10 - lo_log10) * per_decade - 1e-9);
    h->lo_log10 = lo_log10;
    h->per_decade = per_decade;
    size_t ns = n_series ? n_series : 1;
    h->count = calloc(ns * (h->n_bins + 3), sizeof *h->count);
    h->vmin = malloc(ns * sizeof *h->vmin);
    h->vmax = malloc(ns * sizeof *h->vmax);
    h->n = calloc(ns, sizeof *h->n);
    if (!h->count || !h->vmin || !h->vmax || !h->n) {
        sl_ens_hist_free(h);
        SL_FAIL_RETURN(e, SL_ENOMEM, "out of memory for the binned percentiles");
    }
    for (size_t k = 0; k < ns; k++) {
        h->vmin[k] = INFINITY;
        h->vmax[k] = -INFINITY;
    }
    return SL_OK;
}

/* Slot of X: 0 zero (and negatives), 1 below, 2.. bins, n_bins + 2 above. */
static size_t slot_of(const sl_ens_hist *h, double x)
{
    if (!(x > 0.0))
        return 0;
    double b = (log10(x) - h->lo_log10) * h->per_decade;
    if (b < 0.0)
        return 1;
    if (b >= (double)h->n_bins)
        return h->n_bins + 2;
    return 2 + (size_t)b;
}

void sl_ens_hist_add(sl_ens_hist *h, const double *values)
{
    for (size_t k = 0; k < h->n_series; k++) {
        double x = values[k];
        if (!isfinite(x))
            continue;
        h->count[k * (h->n_bins + 3) + slot_of(h, x)]++;
        h->n[k]++;
        /* Inline (minmax.h): this runs once per band and time of every member. */
        h->vmin[k] = sl_min(h->vmin[k], x);
        h->vmax[k] = sl_max(h->vmax[k], x);
    }
}

double sl_ens_hist_percentile(const sl_ens_hist *h, size_t k, double p)
{
    if (k >= h->n_series || h->n[k] == 0 || !(p >= 0.0 && p <= 100.0))
        return NAN;
    size_t n = h->n[k];
    if (p == 0.0)
        return h->vmin[k];
    if (p == 100.0)
        return h->vmax[k];
    size_t rank = (size_t)floor((double)(n - 1) * p / 100.0), seen = 0;
    const uint32_t *c = h->count + k * (h->n_bins + 3);
    size_t s = 0;
    for (; s < h->n_bins + 3; s++) {
        seen += c[s];
        if (seen > rank)
            break;
    }
    double v;
    if (s == 0)
        v = sl_min(0.0, h->vmax[k]);
    else if (s == 1)
        v = pow(10.0, h->lo_log10);
    else if (s >= h->n_bins + 2)
        v = h->vmax[k];
    else
        v = pow(10.0, h->lo_log10 + ((double)(s - 2) + 0.5) / h->per_decade);
    return sl_min(sl_max(v, h->vmin[k]), h->vmax[k]);
}
