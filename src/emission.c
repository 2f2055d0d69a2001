/* emission: model-input profile, horizontal grids and the footprint (see
 * include/steamloft/emission.h).  Geometry only; the masses are the
 * injection stage's. */
#include "steamloft/emission.h"
#include "steamloft/infile.h"

#include "steamloft/units.h"

#include <ctype.h>
#include <errno.h>
#include <math.h>
#include <netcdf.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

static double deg2rad(double d) { return d * SL_PI / 180.0; }

int sl_emission_profile_build(sl_emission_profile *p, const sl_injection *inj, double model_top_m,
                              sl_err *e)
{
    memset(p, 0, sizeof *p);
    p->layer = calloc(inj->n_bands > 0 ? inj->n_bands : 1, sizeof *p->layer);
    if (p->layer == NULL)
        SL_FAIL_RETURN(e, SL_ENOMEM, "out of memory (model-input profile)");
    const double zt = isfinite(inj->tropopause_altitude_m) ? inj->tropopause_altitude_m : -INFINITY;
    const double ztop = isfinite(model_top_m) ? model_top_m : INFINITY;
    for (size_t i = 0; i < inj->n_bands; i++) {
        double lo = inj->band_bottom_m[i], hi = inj->band_top_m[i], dz = hi - lo;
        double v = inj->vapor_kg[i], c = inj->ice_kg[i];
        if (hi <= zt || dz <= 0.0)
            continue;
        if (lo < zt) { /* the band holding the tropopause: its share above it */
            double f = (hi - zt) / dz;
            v *= f, c *= f, lo = zt;
        }
        if (lo >= ztop) {
            p->above_top_kg += v + c;
            continue;
        }
        if (hi > ztop) { /* the band holding the model top: the part above is reported */
            double f = (ztop - lo) / (hi - lo);
            p->above_top_kg += (v + c) * (1.0 - f);
            v *= f, c *= f, hi = ztop;
        }
        if (v + c <= 0.0)
            continue;
        p->layer[p->n++] = (sl_emission_layer){lo, hi, v, c};
        p->total_kg += v + c;
    }
    return SL_OK;
}

void sl_emission_profile_free(sl_emission_profile *p)
{
    if (p == NULL)
        return;
    free(p->layer);
    memset(p, 0, sizeof *p);
}

void sl_emission_grid_free(sl_emission_grid *g)
{
    if (g == NULL)
        return;
    free(g->lat_deg);
    free(g->lon_deg);
    free(g->lat_edge_deg);
    free(g->lon_edge_deg);
    free(g->area_m2);
    memset(g, 0, sizeof *g);
}

static int grid_alloc(sl_emission_grid *g, size_t nlat, size_t nlon, sl_err *e)
{
    memset(g, 0, sizeof *g);
    g->nlat = nlat, g->nlon = nlon;
    g->lat_deg = malloc(nlat * sizeof(double));
    g->lon_deg = malloc(nlon * sizeof(double));
    g->lat_edge_deg = malloc(2 * nlat * sizeof(double));
    g->lon_edge_deg = malloc(2 * nlon * sizeof(double));
    g->area_m2 = malloc(nlat * nlon * sizeof(double));
    if (!g->lat_deg || !g->lon_deg || !g->lat_edge_deg || !g->lon_edge_deg || !g->area_m2) {
        sl_emission_grid_free(g);
        SL_FAIL_RETURN(e, SL_ENOMEM, "out of memory (a %zux%zu grid)", nlat, nlon);
    }
    return SL_OK;
}

/* Cell areas on the sphere: R^2 |dlon| |sin(lat1) - sin(lat0)|. */
static void grid_areas(sl_emission_grid *g)
{
    const double r2 = SL_EARTH_MEAN_RADIUS_M * SL_EARTH_MEAN_RADIUS_M;
    for (size_t j = 0; j < g->nlat; j++) {
        double s = fabs(sin(deg2rad(g->lat_edge_deg[2 * j + 1])) - sin(deg2rad(g->lat_edge_deg[2 * j])));
        for (size_t i = 0; i < g->nlon; i++) {
            double dl = fabs(g->lon_edge_deg[2 * i + 1] - g->lon_edge_deg[2 * i]);
            g->area_m2[j * g->nlon + i] = r2 * deg2rad(dl) * s;
        }
    }
}

int sl_emission_grid_regular(sl_emission_grid *g, size_t nlat, size_t nlon, sl_err *e)
{
    if (nlat < 1 || nlat > 3600 || nlon < 1 || nlon > 3600)
        SL_FAIL_RETURN(e, SL_EUSAGE, "--grid %zux%zu: each size must be 1-3600 (valid: NLATxNLON, "
                                     "e.g. 180x360, or a template FILE.nc)", nlat, nlon);
    SL_TRY_RETURN(e, grid_alloc(g, nlat, nlon, e));
    for (size_t j = 0; j < nlat; j++) {
        g->lat_edge_deg[2 * j] = -90.0 + 180.0 * (double)j / (double)nlat;
        g->lat_edge_deg[2 * j + 1] = -90.0 + 180.0 * (double)(j + 1) / (double)nlat;
        g->lat_deg[j] = 0.5 * (g->lat_edge_deg[2 * j] + g->lat_edge_deg[2 * j + 1]);
    }
    for (size_t i = 0; i < nlon; i++) {
        g->lon_edge_deg[2 * i] = 360.0 * (double)i / (double)nlon;
        g->lon_edge_deg[2 * i + 1] = 360.0 * (double)(i + 1) / (double)nlon;
        g->lon_deg[i] = 0.5 * (g->lon_edge_deg[2 * i] + g->lon_edge_deg[2 * i + 1]);
    }
    grid_areas(g);
    snprintf(g->description, sizeof g->description, "regular %zux%zu", nlat, nlon);
    return SL_OK;
}

/* A 1-D coordinate of the template: by units, else by name. */
static int find_coord(int ncid, const char *units, const char *const *names, int *varid, size_t *n)
{
    int nvars = 0;
    if (nc_inq_nvars(ncid, &nvars) != NC_NOERR)
        return -1;
    int found = -1;
    for (int v = 0; v < nvars && found < 0; v++) {
        char u[64] = "";
        size_t len = 0;
        if (nc_inq_attlen(ncid, v, "units", &len) == NC_NOERR && len < sizeof u &&
            nc_get_att_text(ncid, v, "units", u) == NC_NOERR) {
            u[len] = '\0';
            if (strcmp(u, units) == 0)
                found = v;
        }
    }
    for (size_t k = 0; found < 0 && names[k]; k++)
        if (nc_inq_varid(ncid, names[k], &found) != NC_NOERR)
            found = -1;
    if (found < 0)
        return -1;
    int nd = 0, dim = 0;
    if (nc_inq_varndims(ncid, found, &nd) != NC_NOERR || nd != 1 ||
        nc_inq_vardimid(ncid, found, &dim) != NC_NOERR || nc_inq_dimlen(ncid, dim, n) != NC_NOERR)
        return -1;
    *varid = found;
    return 0;
}

/* Edges of cells from centres X (N), or from the bounds variable it names. */
static int coord_edges(int ncid, int varid, const double *x, size_t n, double lo, double hi,
                       double *edge)
{
    size_t len = 0;
    char bname[NC_MAX_NAME + 1];
    if (nc_inq_attlen(ncid, varid, "bounds", &len) == NC_NOERR && len <= NC_MAX_NAME &&
        nc_get_att_text(ncid, varid, "bounds", bname) == NC_NOERR) {
        bname[len] = '\0';
        int bid;
        size_t blen[2];
        int nd = 0, dims[2];
        if (nc_inq_varid(ncid, bname, &bid) == NC_NOERR && nc_inq_varndims(ncid, bid, &nd) == NC_NOERR &&
            nd == 2 && nc_inq_vardimid(ncid, bid, dims) == NC_NOERR &&
            nc_inq_dimlen(ncid, dims[0], &blen[0]) == NC_NOERR &&
            nc_inq_dimlen(ncid, dims[1], &blen[1]) == NC_NOERR && blen[0] == n && blen[1] == 2)
            return nc_get_var_double(ncid, bid, edge) == NC_NOERR ? 0 : -1;
        return -1;
    }
    for (size_t k = 0; k < n; k++) {
        double a = k > 0 ? 0.5 * (x[k - 1] + x[k]) : (n > 1 ? x[0] - 0.5 * (x[1] - x[0]) : x[0] - 0.5);
        double b = k + 1 < n ? 0.5 * (x[k] + x[k + 1]) : (n > 1 ? x[k] + 0.5 * (x[k] - x[k - 1]) : x[0] + 0.5);
        edge[2 * k] = fmin(fmax(a, lo), hi);
        edge[2 * k + 1] = fmin(fmax(b, lo), hi);
    }
    return 0;
}

static int grid_read(sl_emission_grid *g, const char *path, sl_err *e)
{
    SL_TRY_RETURN(e, sl_infile_nc_precheck(path, e));
    int ncid, st = nc_open(path, NC_NOWRITE, &ncid);
    if (st != NC_NOERR)
        SL_FAIL_RETURN(e, st == ENOENT ? SL_ENOINPUT : SL_EDATA,
                       "--grid %s: cannot open the template: %s (valid: a netCDF file with 1-D "
                       "latitude and longitude coordinates)", path, nc_strerror(st));
    static const char *const lat_names[] = {"lat", "latitude", NULL};
    static const char *const lon_names[] = {"lon", "longitude", NULL};
    int vlat, vlon;
    size_t nlat = 0, nlon = 0;
    if (find_coord(ncid, "degrees_north", lat_names, &vlat, &nlat) != 0 ||
        find_coord(ncid, "degrees_east", lon_names, &vlon, &nlon) != 0 || nlat < 1 || nlon < 1 ||
        nlat > 3600 || nlon > 3600) {
        nc_close(ncid);
        SL_FAIL_RETURN(e, SL_EDATA,
                       "%s: variable lat/lon: no usable latitude and longitude (valid: 1-D "
                       "coordinates with units degrees_north and degrees_east, or named lat/latitude "
                       "and lon/longitude, 1-3600 values each)", path);
    }
    int rc = grid_alloc(g, nlat, nlon, e);
    if (rc != SL_OK) {
        nc_close(ncid);
        return rc;
    }
    int ok = nc_get_var_double(ncid, vlat, g->lat_deg) == NC_NOERR &&
             nc_get_var_double(ncid, vlon, g->lon_deg) == NC_NOERR;
    for (size_t j = 0; ok && j < nlat; j++)
        ok = isfinite(g->lat_deg[j]) && fabs(g->lat_deg[j]) <= 90.0;
    for (size_t i = 0; ok && i < nlon; i++)
        ok = isfinite(g->lon_deg[i]) && g->lon_deg[i] >= -360.0 && g->lon_deg[i] <= 720.0;
    ok = ok && coord_edges(ncid, vlat, g->lat_deg, nlat, -90.0, 90.0, g->lat_edge_deg) == 0 &&
         coord_edges(ncid, vlon, g->lon_deg, nlon, -INFINITY, INFINITY, g->lon_edge_deg) == 0;
    nc_close(ncid);
    if (!ok) {
        sl_emission_grid_free(g);
        SL_FAIL_RETURN(e, SL_EDATA,
                       "%s: variable lat/lon: values or bounds unusable (valid: latitudes -90 to 90, "
                       "longitudes -360 to 720 degrees, bounds of shape (n, 2))", path);
    }
    grid_areas(g);
    snprintf(g->description, sizeof g->description, "template %s", path);
    return SL_OK;
}

int sl_emission_grid_init(sl_emission_grid *g, const char *spec, sl_err *e)
{
    memset(g, 0, sizeof *g);
    size_t n = strlen(spec);
    if (n > 3 && strcasecmp(spec + n - 3, ".nc") == 0)
        return grid_read(g, spec, e);
    char *end = NULL;
    errno = 0;
    unsigned long a = isdigit((unsigned char)spec[0]) ? strtoul(spec, &end, 10) : 0;
    if (end && (*end == 'x' || *end == 'X') && isdigit((unsigned char)end[1])) {
        char *end2 = NULL;
        unsigned long b = strtoul(end + 1, &end2, 10);
        if (*end2 == '\0' && errno == 0)
            return sl_emission_grid_regular(g, (size_t)a, (size_t)b, e);
    }
    SL_FAIL_RETURN(e, SL_EUSAGE, "--grid %s: not a grid (valid: NLATxNLON such as 180x360, 1-3600 "
                                 "each, or a template FILE.nc)", spec);
}

/* Central angle between two points (radians), by the haversine form. */
static double central_angle(double lat1, double lon1, double lat2, double lon2)
{
    double a = sin(0.5 * (lat2 - lat1)), b = sin(0.5 * (lon2 - lon1));
    double h = a * a + cos(lat1) * cos(lat2) * b * b;
    return 2.0 * asin(sqrt(fmin(1.0, h)));
}

int sl_emission_footprint(const sl_emission_grid *g, double lat_deg, double lon_deg, double radius_m,
                          double *w, double *area_m2, sl_err *e)
{
    if (!(radius_m > 0.0) || !isfinite(radius_m))
        SL_FAIL_RETURN(e, SL_EDATA, "footprint radius %g m: must be positive (valid: 1000 m to 5000 km)",
                       radius_m);
    const double a = radius_m / SL_EARTH_MEAN_RADIUS_M; /* angular radius */
    const double la0 = deg2rad(lat_deg), lo0 = deg2rad(lon_deg);
    const size_t nc = g->nlat * g->nlon;
    double sum = 0.0, found = 0.0;
    for (size_t j = 0; j < g->nlat; j++) {
        double y0 = deg2rad(g->lat_edge_deg[2 * j]), y1 = deg2rad(g->lat_edge_deg[2 * j + 1]);
        double ymin = fmin(y0, y1), ymax = fmax(y0, y1);
        if (ymin > la0 + a || ymax < la0 - a) {
            for (size_t i = 0; i < g->nlon; i++)
                w[j * g->nlon + i] = 0.0;
            continue;
        }
        double s0 = sin(y0), s1 = sin(y1);
        for (size_t i = 0; i < g->nlon; i++) {
            size_t c = j * g->nlon + i;
            double x0 = deg2rad(g->lon_edge_deg[2 * i]), x1 = deg2rad(g->lon_edge_deg[2 * i + 1]);
            /* Quick rejection: the centre's distance against the disc and half the cell's
             * diagonal (an upper bound on the distance from centre to any corner). */
            double yc = 0.5 * (y0 + y1), xc = 0.5 * (x0 + x1);
            double half = 0.5 * (fabs(y1 - y0) + fabs(x1 - x0) * cos(fmin(fabs(ymin), fabs(ymax))));
            if (!(ymin <= -0.5 * SL_PI + a || ymax >= 0.5 * SL_PI - a) &&
                central_angle(yc, xc, la0, lo0) > a + 1.5 * half) {
                w[c] = 0.0;
                continue;
            }
            /* Equal-area sub-grid: uniform in sin(latitude) and in longitude; at least 8
             * samples a side, and sub-cells of at most a fifth of the radius, up to 96. */
            double span_m = SL_EARTH_MEAN_RADIUS_M * fmax(fabs(y1 - y0), fabs(x1 - x0) * cos(yc));
            int ns = (int)fmin(96.0, fmax(8.0, ceil(5.0 * span_m / radius_m)));
            int inside = 0;
            for (int q = 0; q < ns; q++) {
                double y = asin(s0 + (s1 - s0) * (q + 0.5) / ns);
                for (int p = 0; p < ns; p++) {
                    double x = x0 + (x1 - x0) * (p + 0.5) / ns;
                    inside += central_angle(y, x, la0, lo0) <= a;
                }
            }
            double f = (double)inside / ((double)ns * ns);
            w[c] = f * g->area_m2[c];
            sum += w[c];
        }
    }
    found = sum;
    if (!(sum > 0.0)) {
        /* Smaller than the sampling: all of it in the cell holding the centre (the nearest
         * cell centre). */
        size_t best = 0;
        double bd = INFINITY;
        for (size_t c = 0; c < nc; c++) {
            double d = central_angle(deg2rad(g->lat_deg[c / g->nlon]), deg2rad(g->lon_deg[c % g->nlon]), la0, lo0);
            w[c] = 0.0;
            if (d < bd)
                bd = d, best = c;
        }
        w[best] = 1.0;
        if (area_m2)
            *area_m2 = 0.0;
        return SL_OK;
    }
    for (size_t c = 0; c < nc; c++)
        w[c] /= sum;
    if (area_m2)
        *area_m2 = found;
    return SL_OK;
}

double sl_emission_molecules_per_kg(void)
{
    return SL_AVOGADRO_PER_MOL / SL_MOLAR_MASS_H2O_KG_MOL;
}
