/* model_inputs: the injection table, the gridded emission file and the
 * forcing series (see include/steamloft/model_inputs.h).  No physics: the
 * numbers are the stages' results, converted at this output boundary. */
#include "steamloft/model_inputs.h"

#include "steamloft/cli.h"
#include "steamloft/date.h"
#include "steamloft/json.h"
#include "steamloft/outfile.h"
#include "steamloft/output_nc.h"
#include "steamloft/units.h"

#include <math.h>
#include <netcdf.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

void sl_model_inputs_digest(const char *text, char out[17])
{
    unsigned long long h = 14695981039346656037ull; /* FNV-1a offset basis */
    for (const unsigned char *p = (const unsigned char *)text; *p; p++) {
        h ^= *p;
        h *= 1099511628211ull; /* FNV prime */
    }
    snprintf(out, 17, "%016llx", h);
}

static int ends_with(const char *s, const char *suffix)
{
    size_t n = strlen(s), m = strlen(suffix);
    return n > m && strcasecmp(s + n - m, suffix) == 0;
}

/* The directory of PATH into DIR; returns its file name. */
static const char *split_path(const char *path, char *dir, size_t n)
{
    const char *slash = strrchr(path, '/');
    if (slash == NULL)
        snprintf(dir, n, ".");
    else if (slash == path)
        snprintf(dir, n, "/");
    else
        snprintf(dir, n, "%.*s", (int)(slash - path), path);
    return slash ? slash + 1 : path;
}

/* One text file of the model inputs, staged and renamed into place (outfile.h). */
typedef struct text_out {
    sl_outset *set;
    char dir[SL_OUTSET_PATH_LEN];
    const char *base;
    FILE *fp;
} text_out;

static int text_open(text_out *t, const char *path, int force, sl_err *e)
{
    memset(t, 0, sizeof *t);
    t->set = calloc(1, sizeof *t->set);
    if (t->set == NULL)
        SL_FAIL_RETURN(e, SL_ENOMEM, "writing '%s': out of memory", path);
    t->base = split_path(path, t->dir, sizeof t->dir);
    int rc = sl_outset_begin(t->set, t->dir, force, 0, e);
    if (rc == SL_OK)
        rc = sl_outset_fopen(t->set, t->base, &t->fp, e);
    if (rc != SL_OK) {
        sl_outset_abort(t->set);
        free(t->set);
        t->set = NULL;
    }
    return rc;
}

/* Close, then rename into place when RC is SL_OK, else leave nothing. */
static int text_close(text_out *t, int rc, sl_err *e)
{
    sl_err close_err = {0};
    const int rc_close = sl_outset_fclose(t->set, t->base, t->fp, rc == SL_OK ? e : &close_err);
    if (rc == SL_OK)
        rc = rc_close;
    if (rc == SL_OK)
        rc = sl_outset_commit(t->set, e);
    else
        sl_outset_abort(t->set);
    free(t->set);
    t->set = NULL;
    return rc;
}

static double pressure_hPa(const sl_atmosphere *atm, double z_m)
{
    sl_atmos_state st;
    sl_err e = {0};
    if (atm == NULL || sl_atmosphere_at(atm, z_m, &st, &e) != SL_OK)
        return NAN;
    return st.pressure_Pa / 100.0;
}

int sl_model_inputs_table_write(const sl_model_inputs *mi, const char *path, int force, sl_err *e)
{
    sl_emission_profile pr;
    SL_TRY_RETURN(e, sl_emission_profile_build(&pr, mi->inj, NAN, e));
    text_out t;
    int rc = text_open(&t, path, force, e);
    FILE *fp = t.fp;
    if (rc == SL_OK) {
        char when[32];
        sl_date_format(mi->event_time_s, when, sizeof when);
        const int json = ends_with(path, ".json");
        const char *sp[2] = {"water_vapour", "ice"};
        sl_json j;
        if (json) {
            sl_json_begin(&j, fp);
            sl_json_string(&j, "caution", sl_cli_caution());
            sl_json_string(&j, "version", sl_cli_version());
            sl_json_string(&j, "scenario_digest", mi->digest);
            sl_json_bool(&j, "time_is_nominal", !mi->date_given);
            sl_json_number(&j, "total_mass_kg", pr.total_kg);
            sl_json_begin_array(&j, "rows", SL_JSON_LINES);
        } else {
            fprintf(fp, "# %s\n# version: %s\n# scenario digest: %s (FNV-1a 64 of the scenario's "
                        "key=value lines)\n",
                    sl_cli_caution(), sl_cli_version(), mi->digest);
            fprintf(fp, "# event time %s%s; water above the tropopause in layers (the layer "
                        "holding the tropopause starts at it); pressures from the run's atmosphere\n",
                    when, mi->date_given ? "" : " is NOMINAL (no [site] date given)");
            fprintf(fp, "# total mass: %.10g kg\n", pr.total_kg);
            /* What `decay` needs to reproduce the run's box model from this
             * table (src/injection.c reads these keys; doubles round-trip). */
            if (isfinite(mi->inj->tropopause_altitude_m))
                fprintf(fp, "# tropopause_altitude_m = %.17g\n", mi->inj->tropopause_altitude_m);
            if (mi->inj->cloud_area_m2 > 0.0)
                fprintf(fp, "# cloud_area_m2 = %.17g\n", mi->inj->cloud_area_m2);
            if (!mi->date_given)
                fprintf(fp, "# event_month = %d\n", mi->month);
            fprintf(fp, "event_time_utc,latitude_deg,longitude_deg,bottom_m,top_m,bottom_hPa,top_hPa,"
                        "species,mass_kg,duration_s,radius_m\n");
        }
        for (size_t i = 0; i < pr.n; i++) {
            const sl_emission_layer *L = &pr.layer[i];
            double m[2] = {L->vapor_kg, L->ice_kg};
            double pb = pressure_hPa(mi->atm, L->bottom_m), pt = pressure_hPa(mi->atm, L->top_m);
            for (int s = 0; s < 2; s++) {
                if (!(m[s] > 0.0))
                    continue;
                if (json) {
                    sl_json_begin_object(&j, NULL, SL_JSON_INLINE);
                    sl_json_string(&j, "event_time_utc", when);
                    sl_json_number(&j, "latitude_deg", mi->latitude_deg);
                    sl_json_number(&j, "longitude_deg", mi->longitude_deg);
                    sl_json_number(&j, "bottom_m", L->bottom_m);
                    sl_json_number(&j, "top_m", L->top_m);
                    sl_json_number(&j, "bottom_hPa", pb);
                    sl_json_number(&j, "top_hPa", pt);
                    sl_json_string(&j, "species", sp[s]);
                    sl_json_number(&j, "mass_kg", m[s]);
                    sl_json_number(&j, "duration_s", mi->duration_s);
                    sl_json_number(&j, "radius_m", mi->radius_m);
                    sl_json_end_object(&j);
                } else {
                    fprintf(fp, "%s,%.6f,%.6f,%.17g,%.17g,%.6g,%.6g,%s,%.17g,%.10g,%.10g\n", when,
                            mi->latitude_deg, mi->longitude_deg, L->bottom_m, L->top_m, pb, pt, sp[s],
                            m[s], mi->duration_s, mi->radius_m);
                }
            }
        }
        if (json) {
            sl_json_end_array(&j);
            rc = sl_json_end(&j, e);
        }
        rc = text_close(&t, rc, e);
    }
    sl_emission_profile_free(&pr);
    return rc;
}

/* ---- the gridded emission file ------------------------------------------ */

/* Status of one netCDF call on file W through the output layer's one status
 * helper (sl_output_nc_check: file, what and the true cause, SL_EIO). */
static int chk(const sl_nc_file *w, const char *what, int status, sl_err *e)
{
    return sl_output_nc_check(status, w->ncid, NC_GLOBAL, w->path, "netCDF call for", what, e);
}

static int att_text(int ncid, int v, const char *name, const char *text)
{
    return nc_put_att_text(ncid, v, name, strlen(text), text);
}

/* The global attributes both model-input files carry: conventions, the
 * title, the caution, the version, what wrote it, where the method is
 * described, the scenario's digest and the event time. */
static int global_atts(const sl_nc_file *wp, const sl_model_inputs *mi, const char *title, const char *history,
                       const char *references, const char *when, sl_err *e)
{
    const char *const att[][2] = {
        {"Conventions", "CF-1.11"},
        {"title", mi->title ? mi->title : title},
        {"comment", sl_cli_caution()},
        {"source", sl_cli_version()},
        {"history", history},
        {"references", references},
        {"scenario_digest", mi->digest},
        {"event_time", when},
        {"event_time_is_nominal", mi->date_given ? "no" : "yes"},
    };
    for (size_t i = 0; i < sizeof att / sizeof att[0]; i++)
        SL_TRY_RETURN(e, chk(wp, "attributes", att_text(wp->ncid, NC_GLOBAL, att[i][0], att[i][1]), e));
    return SL_OK;
}

/* A coordinate with bounds: VALUES (n) and EDGES (n, 2). */
static int def_coord(int ncid, const char *name, int dim, int nv, const char *units,
                     const char *std, const char *axis, int *vid, int *bid)
{
    char b[64];
    snprintf(b, sizeof b, "%s_bnds", name);
    int dims[2] = {dim, nv}, st;
    if ((st = nc_def_var(ncid, name, NC_DOUBLE, dim < 0 ? 0 : 1, &dim, vid)) != NC_NOERR ||
        (st = att_text(ncid, *vid, "units", units)) != NC_NOERR ||
        (std && (st = att_text(ncid, *vid, "standard_name", std)) != NC_NOERR) ||
        (st = att_text(ncid, *vid, "axis", axis)) != NC_NOERR)
        return st;
    if (bid == NULL)
        return NC_NOERR;
    if ((st = att_text(ncid, *vid, "bounds", b)) != NC_NOERR ||
        (st = nc_def_var(ncid, b, NC_DOUBLE, 2, dims, bid)) != NC_NOERR)
        return st;
    return NC_NOERR;
}

int sl_model_inputs_emission_write(const sl_model_inputs *mi, const char *path,
                                   const sl_emission_grid *g, int cesm, double model_top_m,
                                   int force, double *above_top_kg, sl_err *e)
{
    sl_emission_profile pr;
    SL_TRY_RETURN(e, sl_emission_profile_build(&pr, mi->inj, model_top_m, e));
    if (above_top_kg)
        *above_top_kg = pr.above_top_kg;
    if (pr.n == 0) {
        /* No water above the tropopause (or below the model top): one empty 1-km layer
         * above the tropopause, so that the file exists with zero rates (a netCDF
         * dimension of length 0 would be a second unlimited one). */
        double z0 = isfinite(mi->inj->tropopause_altitude_m) ? mi->inj->tropopause_altitude_m
                    : mi->inj->n_bands > 0 ? mi->inj->band_bottom_m[0] : 0.0;
        pr.layer[0] = (sl_emission_layer){z0, z0 + 1000.0, 0.0, 0.0};
        pr.n = 1;
    }
    const size_t nc = g->nlat * g->nlon, nz = pr.n;
    double *w = malloc(nc * sizeof *w);
    float *slab = malloc(nc * sizeof *slab);
    double *edge = malloc(2 * (nz > 0 ? nz : 1) * sizeof *edge);
    double *mid = malloc((nz + 1) * sizeof *mid);
    int rc = SL_OK;
    sl_nc_file W = {.ncid = -1, .path = path}, *wp = &W;
    if (!w || !slab || !edge || !mid) {
        rc = SL_ENOMEM;
        sl_err_set(e, SL_ENOMEM, __func__, __LINE__, "out of memory (emission file on a %zux%zu grid)", g->nlat, g->nlon);
        goto done;
    }
    double found_area = 0.0;
    rc = sl_emission_footprint(g, mi->latitude_deg, mi->longitude_deg, mi->radius_m, w, &found_area, e);
    if (rc != SL_OK)
        goto done;
    rc = sl_output_nc_create(wp, path, NC_NETCDF4 | NC_CLASSIC_MODEL, force, e);
    if (rc != SL_OK)
        goto done;
    int d_time, d_lat, d_lon, d_alt, d_nv, d_alti = -1;
    int v_time, v_tb = -1, v_lat, v_latb, v_lon, v_lonb, v_alt, v_altb = -1, v_alti = -1;
    int v_date = -1, v_datesec = -1, v_q[2] = {-1, -1};
    const size_t nrec = cesm ? 4 : 1;
    if ((rc = chk(wp, "dimensions", nc_def_dim(wp->ncid, "time", NC_UNLIMITED, &d_time), e)) != SL_OK)
        goto done;
    if ((rc = chk(wp, "dimensions", nc_def_dim(wp->ncid, "altitude", nz, &d_alt), e)) != SL_OK)
        goto done;
    if (cesm)
        if ((rc = chk(wp, "dimensions", nc_def_dim(wp->ncid, "altitude_int", nz + 1, &d_alti), e)) != SL_OK)
            goto done;
    if ((rc = chk(wp, "dimensions", nc_def_dim(wp->ncid, "lat", g->nlat, &d_lat), e)) != SL_OK)
        goto done;
    if ((rc = chk(wp, "dimensions", nc_def_dim(wp->ncid, "lon", g->nlon, &d_lon), e)) != SL_OK)
        goto done;
    if ((rc = chk(wp, "dimensions", nc_def_dim(wp->ncid, "nv", 2, &d_nv), e)) != SL_OK)
        goto done;
    char tunits[64], when[32];
    sl_date_format(mi->event_time_s, when, sizeof when);
    sl_date_fields f0;
    sl_date_split(mi->event_time_s, &f0);
    const double t_ref = sl_date_epoch_of_day(f0.year, f0.month, f0.day);
    snprintf(tunits, sizeof tunits, "days since %04d-%02d-%02d 00:00:00", f0.year, f0.month, f0.day);
    if ((rc = chk(wp, "time", def_coord(wp->ncid, "time", d_time, d_nv, tunits, "time", "T", &v_time,
                                 cesm ? NULL : &v_tb), e)) != SL_OK)
        goto done;
    if ((rc = chk(wp, "time", att_text(wp->ncid, v_time, "calendar", cesm ? "gregorian" : "standard"), e)) != SL_OK)
        goto done;
    if ((rc = chk(wp, "altitude", def_coord(wp->ncid, "altitude", d_alt, d_nv, "km", "altitude", "Z", &v_alt,
                                     cesm ? NULL : &v_altb), e)) != SL_OK)
        goto done;
    if ((rc = chk(wp, "altitude", att_text(wp->ncid, v_alt, "positive", "up"), e)) != SL_OK)
        goto done;
    if (cesm) {
        if ((rc = chk(wp, "altitude_int", nc_def_var(wp->ncid, "altitude_int", NC_DOUBLE, 1, &d_alti, &v_alti), e)) != SL_OK)
            goto done;
        if ((rc = chk(wp, "altitude_int", att_text(wp->ncid, v_alti, "units", "km"), e)) != SL_OK)
            goto done;
        if ((rc = chk(wp, "altitude_int", att_text(wp->ncid, v_alti, "long_name", "altitude interfaces"), e)) != SL_OK)
            goto done;
        if ((rc = chk(wp, "date", nc_def_var(wp->ncid, "date", NC_INT, 1, &d_time, &v_date), e)) != SL_OK)
            goto done;
        if ((rc = chk(wp, "date", att_text(wp->ncid, v_date, "long_name", "date (YYYYMMDD)"), e)) != SL_OK)
            goto done;
        if ((rc = chk(wp, "datesec", nc_def_var(wp->ncid, "datesec", NC_INT, 1, &d_time, &v_datesec), e)) != SL_OK)
            goto done;
        if ((rc = chk(wp, "datesec", att_text(wp->ncid, v_datesec, "long_name", "seconds of the day"), e)) != SL_OK)
            goto done;
        if ((rc = chk(wp, "datesec", att_text(wp->ncid, v_datesec, "units", "s"), e)) != SL_OK)
            goto done;
    }
    if ((rc = chk(wp, "lat", def_coord(wp->ncid, "lat", d_lat, d_nv, "degrees_north", "latitude", "Y", &v_lat, &v_latb), e)) != SL_OK)
        goto done;
    if ((rc = chk(wp, "lon", def_coord(wp->ncid, "lon", d_lon, d_nv, "degrees_east", "longitude", "X", &v_lon, &v_lonb), e)) != SL_OK)
        goto done;
    int dims[4] = {d_time, d_alt, d_lat, d_lon};
    size_t chunk[4] = {1, 1, g->nlat, g->nlon};
    const char *names_cf[2] = {"water_vapour_emission", "ice_emission"};
    const char *longs_cf[2] = {"water vapour emitted per volume and time",
                               "ice (and liquid) emitted per volume and time"};
    for (int s = 0; s < (cesm ? 1 : 2); s++) {
        const char *nm = cesm ? "H2O" : names_cf[s];
        if ((rc = chk(wp, nm, nc_def_var(wp->ncid, nm, NC_FLOAT, 4, dims, &v_q[s]), e)) != SL_OK)
            goto done;
        if ((rc = chk(wp, nm, nc_def_var_chunking(wp->ncid, v_q[s], NC_CHUNKED, chunk), e)) != SL_OK)
            goto done;
        if ((rc = chk(wp, nm, nc_def_var_deflate(wp->ncid, v_q[s], 1, 1, 4), e)) != SL_OK)
            goto done;
        if ((rc = chk(wp, nm, att_text(wp->ncid, v_q[s], "units", cesm ? "molecules/cm3/s" : "kg m-3 s-1"), e)) != SL_OK)
            goto done;
        if ((rc = chk(wp, nm, att_text(wp->ncid, v_q[s], "long_name",
                                cesm ? "water (vapour and ice: the ice sublimates in the dry "
                                       "stratosphere) emitted, molecules per volume and time"
                                     : longs_cf[s]), e)) != SL_OK)
            goto done;
        if (cesm) {
            double mw = SL_MOLAR_MASS_H2O_KG_MOL * 1e3;
            if ((rc = chk(wp, nm, nc_put_att_double(wp->ncid, v_q[s], "molecular_weight", NC_DOUBLE, 1, &mw), e)) != SL_OK)
                goto done;
            if ((rc = chk(wp, nm, att_text(wp->ncid, v_q[s], "molecular_weight_units", "g/mole"), e)) != SL_OK)
                goto done;
        } else {
            if ((rc = chk(wp, nm, att_text(wp->ncid, v_q[s], "cell_methods", "time: mean area: mean"), e)) != SL_OK)
                goto done;
        }
    }
    /* Global attributes. */
    if ((rc = global_atts(wp, mi, "steamloft emission", "written by steamloft run --emission",
                          "docs/physics.md section 10 of the steamloft sources (footprint, rates, records)", when,
                          e)) != SL_OK)
        goto done;
    if ((rc = chk(wp, "attributes", att_text(wp->ncid, NC_GLOBAL, "grid", g->description), e)) != SL_OK)
        goto done;
    if ((rc = chk(wp, "attributes", att_text(wp->ncid, NC_GLOBAL, "emission_convention", cesm ? "cesm" : "cf"), e)) != SL_OK)
        goto done;
    double attv[8] = {mi->latitude_deg, mi->longitude_deg, mi->radius_m, mi->duration_s, pr.total_kg,
                      pr.above_top_kg, found_area, isfinite(model_top_m) ? model_top_m : -1.0};
    const char *attn[8] = {"event_latitude_deg", "event_longitude_deg", "footprint_radius_m", "pulse_duration_s",
                           "mass_check_kg", "water_above_model_top_kg", "footprint_area_m2", "model_top_m"};
    for (int k = 0; k < 8; k++)
        if (k != 7 || isfinite(model_top_m))
            if ((rc = chk(wp, attn[k], nc_put_att_double(wp->ncid, NC_GLOBAL, attn[k], NC_DOUBLE, 1, &attv[k]), e)) != SL_OK)
                goto done;
    if ((rc = chk(wp, "attributes",
           att_text(wp->ncid, NC_GLOBAL, "mass_check",
                    cesm ? "mass_check_kg = sum over cells of H2O x 1e6 / molecules_per_kg x cell area x "
                           "layer depth (altitude_int) integrated linearly in time over the records"
                         : "mass_check_kg = sum of (vapour + ice) x cell area x layer depth x pulse "
                           "length (time_bnds); cell areas of the sphere of radius 6371008.8 m"), e)) != SL_OK)
        goto done;
    if ((rc = chk(wp, "enddef", nc_enddef(wp->ncid), e)) != SL_OK)
        goto done;

    /* Coordinates. */
    for (size_t k = 0; k < nz; k++) {
        edge[2 * k] = pr.layer[k].bottom_m / 1e3;
        edge[2 * k + 1] = pr.layer[k].top_m / 1e3;
        mid[k] = 0.5 * (edge[2 * k] + edge[2 * k + 1]);
    }
    if (nz > 0)
        if ((rc = chk(wp, "altitude", nc_put_var_double(wp->ncid, v_alt, mid), e)) != SL_OK)
            goto done;
    if (cesm) {
        for (size_t k = 0; k < nz; k++)
            mid[k] = edge[2 * k];
        mid[nz] = nz > 0 ? edge[2 * nz - 1] : 0.0;
        if ((rc = chk(wp, "altitude_int", nc_put_var_double(wp->ncid, v_alti, mid), e)) != SL_OK)
            goto done;
    } else if (nz > 0) {
        if ((rc = chk(wp, "altitude_bnds", nc_put_var_double(wp->ncid, v_altb, edge), e)) != SL_OK)
            goto done;
    }
    if ((rc = chk(wp, "lat", nc_put_var_double(wp->ncid, v_lat, g->lat_deg), e)) != SL_OK)
        goto done;
    if ((rc = chk(wp, "lat_bnds", nc_put_var_double(wp->ncid, v_latb, g->lat_edge_deg), e)) != SL_OK)
        goto done;
    if ((rc = chk(wp, "lon", nc_put_var_double(wp->ncid, v_lon, g->lon_deg), e)) != SL_OK)
        goto done;
    if ((rc = chk(wp, "lon_bnds", nc_put_var_double(wp->ncid, v_lonb, g->lon_edge_deg), e)) != SL_OK)
        goto done;
    const double t0 = (mi->event_time_s - t_ref) / SL_S_PER_DAY, D = mi->duration_s;
    double on[4] = {0.0, 1.0, 1.0, 0.0};
    for (size_t r = 0; r < nrec; r++) {
        size_t st = r, cnt = 1;
        double tsec = cesm ? (r == 0 ? 0.0 : r == 1 ? 1.0 : r == 2 ? D : D + 1.0) : 0.5 * D;
        double tv = t0 + tsec / SL_S_PER_DAY;
        if ((rc = chk(wp, "time", nc_put_vara_double(wp->ncid, v_time, &st, &cnt, &tv), e)) != SL_OK)
            goto done;
        if (cesm) {
            sl_date_fields f;
            sl_date_split(mi->event_time_s + tsec, &f);
            int date = f.year * 10000 + f.month * 100 + f.day, ds = f.hour * 3600 + f.minute * 60 + f.second;
            if ((rc = chk(wp, "date", nc_put_vara_int(wp->ncid, v_date, &st, &cnt, &date), e)) != SL_OK)
                goto done;
            if ((rc = chk(wp, "datesec", nc_put_vara_int(wp->ncid, v_datesec, &st, &cnt, &ds), e)) != SL_OK)
                goto done;
        } else {
            double tb[2] = {t0, t0 + D / SL_S_PER_DAY};
            size_t s2[2] = {r, 0}, c2[2] = {1, 2};
            if ((rc = chk(wp, "time_bnds", nc_put_vara_double(wp->ncid, v_tb, s2, c2, tb), e)) != SL_OK)
                goto done;
        }
        for (int s = 0; s < (cesm ? 1 : 2); s++) {
            for (size_t k = 0; k < nz; k++) {
                const sl_emission_layer *L = &pr.layer[k];
                double mass = cesm ? L->vapor_kg + L->ice_kg : (s == 0 ? L->vapor_kg : L->ice_kg);
                double dz = L->top_m - L->bottom_m;
                double conv = cesm ? sl_emission_molecules_per_kg() * 1e-6 : 1.0; /* per m3 -> per cm3 */
                for (size_t c = 0; c < nc; c++) {
                    double rate = w[c] > 0.0 ? mass * w[c] / (g->area_m2[c] * dz * D) * conv : 0.0;
                    slab[c] = (float)(cesm ? rate * on[r] : rate);
                }
                size_t st4[4] = {r, k, 0, 0}, cn4[4] = {1, 1, g->nlat, g->nlon};
                if ((rc = chk(wp, "emission", nc_put_vara_float(wp->ncid, v_q[s], st4, cn4, slab), e)) != SL_OK)
                    goto done;
            }
        }
    }
done:
    if (W.set != NULL) /* closes, writes and renames on success; discards on error */
        rc = sl_output_nc_finish(wp, rc, e);
    free(w);
    free(slab);
    free(edge);
    free(mid);
    sl_emission_profile_free(&pr);
    return rc;
}

/* ---- the forcing series ---------------------------------------------------- */

int sl_model_inputs_forcing_write(const sl_model_inputs *mi, const char *path, int force, sl_err *e)
{
    const sl_strat_result *r = mi->strat;
    if (r == NULL || r->n_times < 2)
        SL_FAIL_RETURN(e, SL_EUSAGE, "--forcing-series: the run has no box-model time series");
    text_out t;
    int rc = text_open(&t, path, force, e);
    FILE *fp = t.fp;
    if (rc == SL_OK) {
        char when[32];
        sl_date_format(mi->event_time_s, when, sizeof when);
        fprintf(fp, "# %s\n# version: %s\n# scenario digest: %s\n", sl_cli_caution(), sl_cli_version(),
                mi->digest);
        fprintf(fp, "# comment: annual means of the box model's forcing indicator: an order-of-magnitude "
                    "stratospheric water vapour radiative forcing scaled from the global anomaly "
                    "(docs/physics.md), not a radiative-transfer result; time 0 = event at %s%s; "
                    "year k spans [k, k+1) Julian years after the event, mean of the output steps "
                    "inside it (trapezoids)\n",
                when, mi->date_given ? "" : " (nominal)");
        fprintf(fp, "time_start_years,time_end_years,forcing_indicator_W_m2\n");
        const double tend = r->time_s[r->n_times - 1];
        for (int y = 0; (double)(y + 1) * SL_S_PER_YEAR <= tend * (1.0 + 1e-12); y++) {
            double a = y * SL_S_PER_YEAR, b = a + SL_S_PER_YEAR, sum = 0.0;
            for (size_t i = 0; i + 1 < r->n_times; i++) {
                double t0 = r->time_s[i], t1 = r->time_s[i + 1];
                double lo = fmax(t0, a), hi = fmin(t1, b);
                if (hi <= lo)
                    continue;
                /* linear between output steps: mean over [lo, hi] */
                double f0 = r->forcing_W_m2[i], f1 = r->forcing_W_m2[i + 1];
                double flo = f0 + (f1 - f0) * (lo - t0) / (t1 - t0), fhi = f0 + (f1 - f0) * (hi - t0) / (t1 - t0);
                sum += 0.5 * (flo + fhi) * (hi - lo);
            }
            fprintf(fp, "%d,%d,%.6g\n", y, y + 1, sum / SL_S_PER_YEAR);
        }
        rc = text_close(&t, SL_OK, e);
    }
    return rc;
}

/* ---- the zonal-mean anomaly field ------------------------------------------- */

int sl_model_inputs_zonal_write(const sl_model_inputs *mi, const sl_strat_model *m,
                                const char *path, int force, sl_err *e)
{
    const sl_strat_result *r = mi->strat;
    if (r == NULL || m == NULL || r->n_times < 1)
        SL_FAIL_RETURN(e, SL_EUSAGE, "--zonal: the run has no box-model time series");
    const size_t nt = r->n_times, nl = m->n_layers, nr = SL_STRAT_N_REGIONS, nb = m->n_boxes;
    const double fill = NC_FILL_DOUBLE;
    const size_t nf = nt * nl * nr; /* values of one field */
    double *buf = malloc(2 * nf * sizeof *buf), *tday = malloc(nt * sizeof *tday);
    double *cb = malloc(nl * nr * sizeof *cb), *ct = malloc(nl * nr * sizeof *ct);
    int rc = SL_OK;
    sl_nc_file W = {.ncid = -1, .path = path}, *wp = &W;
    if (!buf || !tday || !cb || !ct) {
        rc = SL_ENOMEM;
        sl_err_set(e, SL_ENOMEM, __func__, __LINE__, "out of memory (zonal file)");
        goto done;
    }
    /* The values first: each variable's storage is chosen from them
     * (sl_output_nc_storage); every chunked variable is then one chunk. */
    const double eps = SL_MOLAR_MASS_H2O_KG_MOL / SL_MOLAR_MASS_DRY_AIR_KG_MOL;
    for (size_t t = 0; t < nt; t++)
        tday[t] = r->time_s[t] / SL_S_PER_DAY;
    for (int k = 0; k < 2; k++)
        for (size_t t = 0; t < nt; t++)
            for (size_t l = 0; l < nl; l++)
                for (size_t reg = 0; reg < nr; reg++) {
                    int b = m->box_of[reg][l];
                    double x = b >= 0 ? r->box_excess_kg[t * nb + (size_t)b] : fill;
                    if (b >= 0)
                        x = k ? x / m->region_area_m2[reg] : x / (eps * m->box_air_kg[b]);
                    buf[(size_t)k * nf + (t * nl + l) * nr + reg] = x;
                }
    rc = sl_output_nc_create_k(wp, path, NC_NETCDF4 | NC_CLASSIC_MODEL, SL_NC_ONE_CHUNK_BTREE_K, force, e);
    if (rc != SL_OK)
        goto done;
    int d_t, d_z, d_y, d_x, d_nv, v_t, v_z, v_zb, v_y, v_yb, v_x, v_xb, v_bb, v_bt, v_q, v_m;
    if ((rc = chk(wp, "dimensions", nc_def_dim(wp->ncid, "time", NC_UNLIMITED, &d_t), e)) != SL_OK)
        goto done;
    if ((rc = chk(wp, "dimensions", nc_def_dim(wp->ncid, "altitude", nl, &d_z), e)) != SL_OK)
        goto done;
    if ((rc = chk(wp, "dimensions", nc_def_dim(wp->ncid, "lat", nr, &d_y), e)) != SL_OK)
        goto done;
    /* One longitude cell spanning 0-360 (a zonal mean, as CDO's zonmean writes it):
     * with lon a scalar coordinate instead, CDO saw no latitude grid on the fields. */
    if ((rc = chk(wp, "dimensions", nc_def_dim(wp->ncid, "lon", 1, &d_x), e)) != SL_OK)
        goto done;
    if ((rc = chk(wp, "dimensions", nc_def_dim(wp->ncid, "nv", 2, &d_nv), e)) != SL_OK)
        goto done;
    char tunits[64], when[32];
    sl_date_format(mi->event_time_s, when, sizeof when);
    sl_date_fields f0;
    sl_date_split(mi->event_time_s, &f0);
    snprintf(tunits, sizeof tunits, "days since %04d-%02d-%02d %02d:%02d:%02d", f0.year, f0.month,
             f0.day, f0.hour, f0.minute, f0.second);
    if ((rc = chk(wp, "time", def_coord(wp->ncid, "time", d_t, d_nv, tunits, "time", "T", &v_t, NULL), e)) != SL_OK)
        goto done;
    if ((rc = chk(wp, "time", att_text(wp->ncid, v_t, "calendar", "standard"), e)) != SL_OK)
        goto done;
    if ((rc = sl_output_nc_storage(wp->ncid, v_t, tday, nt, 0, path, e)) != SL_OK)
        goto done;
    if ((rc = chk(wp, "altitude", def_coord(wp->ncid, "altitude", d_z, d_nv, "m", "altitude", "Z", &v_z, &v_zb), e)) != SL_OK)
        goto done;
    if ((rc = chk(wp, "altitude", att_text(wp->ncid, v_z, "positive", "up"), e)) != SL_OK)
        goto done;
    if ((rc = chk(wp, "altitude", att_text(wp->ncid, v_z, "long_name",
                                    "box-model layer (nominal bounds; each region's boxes in box_bottom/box_top)"), e)) != SL_OK)
        goto done;
    if ((rc = chk(wp, "lat", def_coord(wp->ncid, "lat", d_y, d_nv, "degrees_north", "latitude", "Y", &v_y, &v_yb), e)) != SL_OK)
        goto done;
    if ((rc = chk(wp, "lat", att_text(wp->ncid, v_y, "long_name", "centre of the latitude region"), e)) != SL_OK)
        goto done;
    if ((rc = chk(wp, "lon", def_coord(wp->ncid, "lon", d_x, d_nv, "degrees_east", "longitude", "X", &v_x, &v_xb), e)) != SL_OK)
        goto done;
    if ((rc = chk(wp, "lon", att_text(wp->ncid, v_x, "long_name", "all longitudes (zonal means)"), e)) != SL_OK)
        goto done;
    int d2[2] = {d_y, d_z}, d4[4] = {d_t, d_z, d_y, d_x};
    const char *bn[2] = {"box_bottom", "box_top"};
    int *bv[2] = {&v_bb, &v_bt};
    for (int k = 0; k < 2; k++) {
        if ((rc = chk(wp, bn[k], nc_def_var(wp->ncid, bn[k], NC_DOUBLE, 2, d2, bv[k]), e)) != SL_OK)
            goto done;
        if ((rc = chk(wp, bn[k], nc_def_var_fill(wp->ncid, *bv[k], 0, &fill), e)) != SL_OK)
            goto done;
        if ((rc = chk(wp, bn[k], att_text(wp->ncid, *bv[k], "units", "m"), e)) != SL_OK)
            goto done;
        if ((rc = chk(wp, bn[k], att_text(wp->ncid, *bv[k], "long_name",
                                   k ? "top of the box of this region and layer"
                                     : "bottom of the box of this region and layer (the lowest box "
                                       "of a region starts at the region's tropopause)"), e)) != SL_OK)
            goto done;
    }
    if ((rc = chk(wp, "mole_fraction_anomaly", nc_def_var(wp->ncid, "mole_fraction_anomaly", NC_DOUBLE, 4, d4, &v_q), e)) != SL_OK)
        goto done;
    if ((rc = chk(wp, "mass_per_area", nc_def_var(wp->ncid, "mass_per_area", NC_DOUBLE, 4, d4, &v_m), e)) != SL_OK)
        goto done;
    int vq[2] = {v_q, v_m};
    const char *qu[2] = {"mol mol-1", "kg m-2"};
    const char *ql[2] = {"excess water vapour mole fraction over background, mean over the box",
                         "excess water in the box per unit area of its latitude region"};
    for (int k = 0; k < 2; k++) {
        if ((rc = sl_output_nc_storage(wp->ncid, vq[k], buf + (size_t)k * nf, nf, 0, path, e)) != SL_OK)
            goto done;
        if ((rc = chk(wp, "field", nc_def_var_fill(wp->ncid, vq[k], 0, &fill), e)) != SL_OK)
            goto done;
        if ((rc = chk(wp, "field", att_text(wp->ncid, vq[k], "units", qu[k]), e)) != SL_OK)
            goto done;
        if ((rc = chk(wp, "field", att_text(wp->ncid, vq[k], "long_name", ql[k]), e)) != SL_OK)
            goto done;
        if ((rc = chk(wp, "field", att_text(wp->ncid, vq[k], "cell_methods",
                                     k ? "time: point altitude: sum area: mean"
                                       : "time: point altitude: mean area: mean"), e)) != SL_OK)
            goto done;
        if ((rc = chk(wp, "field", att_text(wp->ncid, vq[k], "comment",
                                     "_FillValue where the region has no box in the layer (below its "
                                     "tropopause); an anomaly over the background, not the total"), e)) != SL_OK)
            goto done;
    }
    if ((rc = global_atts(wp, mi, "steamloft zonal anomaly", "written by steamloft run --zonal",
                          "docs/physics.md sections 8 and 10 of the steamloft sources", when, e)) != SL_OK)
        goto done;
    if ((rc = chk(wp, "enddef", nc_enddef(wp->ncid), e)) != SL_OK)
        goto done;

    size_t st1 = 0, cn1 = nt;
    if ((rc = chk(wp, "time", nc_put_vara_double(wp->ncid, v_t, &st1, &cn1, tday), e)) != SL_OK)
        goto done;
    double zc[SL_STRAT_MAX_LAYERS], zb[2 * SL_STRAT_MAX_LAYERS], lowest = INFINITY;
    for (size_t b = 0; b < nb; b++)
        if (m->box_layer[b] == 0)
            lowest = fmin(lowest, m->box_bottom_m[b]);
    for (size_t l = 0; l < nl; l++) {
        zb[2 * l] = l > 0 ? m->layer_top_m[l - 1] : lowest;
        zb[2 * l + 1] = m->layer_top_m[l];
        zc[l] = 0.5 * (zb[2 * l] + zb[2 * l + 1]);
    }
    if ((rc = chk(wp, "altitude", nc_put_var_double(wp->ncid, v_z, zc), e)) != SL_OK)
        goto done;
    if ((rc = chk(wp, "altitude_bnds", nc_put_var_double(wp->ncid, v_zb, zb), e)) != SL_OK)
        goto done;
    const double edge = m->par.tropics_edge_deg;
    double yb[6] = {-90.0, -edge, -edge, edge, edge, 90.0}, yc[3] = {0.5 * (-90.0 - edge), 0.0, 0.5 * (90.0 + edge)};
    double xc = 180.0, xb[2] = {0.0, 360.0};
    if ((rc = chk(wp, "lat", nc_put_var_double(wp->ncid, v_y, yc), e)) != SL_OK)
        goto done;
    if ((rc = chk(wp, "lat_bnds", nc_put_var_double(wp->ncid, v_yb, yb), e)) != SL_OK)
        goto done;
    if ((rc = chk(wp, "lon", nc_put_var_double(wp->ncid, v_x, &xc), e)) != SL_OK)
        goto done;
    if ((rc = chk(wp, "lon_bnds", nc_put_var_double(wp->ncid, v_xb, xb), e)) != SL_OK)
        goto done;
    for (size_t reg = 0; reg < nr; reg++)
        for (size_t l = 0; l < nl; l++) {
            int b = m->box_of[reg][l];
            cb[reg * nl + l] = b >= 0 ? m->box_bottom_m[b] : fill;
            ct[reg * nl + l] = b >= 0 ? m->box_top_m[b] : fill;
        }
    if ((rc = chk(wp, "box_bottom", nc_put_var_double(wp->ncid, v_bb, cb), e)) != SL_OK)
        goto done;
    if ((rc = chk(wp, "box_top", nc_put_var_double(wp->ncid, v_bt, ct), e)) != SL_OK)
        goto done;
    size_t st4[4] = {0, 0, 0, 0}, cn4[4] = {nt, nl, nr, 1};
    for (int k = 0; k < 2; k++)
        if ((rc = chk(wp, "field", nc_put_vara_double(wp->ncid, vq[k], st4, cn4, buf + (size_t)k * nf), e)) != SL_OK)
            goto done;
done:
    if (W.set != NULL) /* closes, writes and renames on success; discards on error */
        rc = sl_output_nc_finish(wp, rc, e);
    free(buf);
    free(tday);
    free(cb);
    free(ct);
    return rc;
}
