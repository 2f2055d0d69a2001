/* atmosphere_file: user atmosphere profiles from files, and the text writer
 * (part of the atmosphere module; the physics is in atmosphere.c).
 *
 * Text profiles (atmospheres/README.md): '#' header lines "# name: ...",
 * "# source: ...", "# columns: ..." and free comments, then one level per
 * line, values separated by blanks or commas.  A first non-comment line made
 * of column names (the CSV header written by `steamloft atmos --csv`) also
 * declares the columns.  Column names carry their unit (altitude_m,
 * altitude_km, geopotential_height_m, temperature_K, temperature_degC,
 * pressure_Pa, pressure_hPa, h2o_ppmv, h2o_mole_fraction,
 * humidity_mixing_ratio_kg_kg, humidity_mixing_ratio_g_kg,
 * specific_humidity_kg_kg); derived columns written by the tool
 * (density_kg_m3, n2_per_s2, ice_saturation_ppmv) are accepted and ignored,
 * because they are recomputed.
 *
 * CF netCDF profiles: variables are found by their standard_name (altitude,
 * height_above_mean_sea_level, geopotential_height or geopotential;
 * air_temperature; air_pressure; optionally
 * mole_fraction_of_water_vapor_in_air, humidity_mixing_ratio or
 * specific_humidity), may have any number of dimensions of which only one is
 * longer than 1 (one reanalysis column), are unpacked with scale_factor and
 * add_offset, and must carry CF/UDUNITS units.  Geopotential height H is
 * turned into geometric altitude with z = r0 H / (r0 - H) (r0 of USSA76).
 *
 * Every level is checked: finite, in range, altitude strictly monotonic
 * (a top-down profile is reversed), pressure falling with altitude, each
 * layer hydrostatically plausible (the mean temperature implied by the
 * pressure drop, T = g M0 dz / (R* ln(p1/p2)), within a factor 2 of the
 * given one: catches km-for-m and similar unit mistakes), and the lowest
 * pressure within a factor 3 of the U.S. Standard Atmosphere at that altitude
 * (catches hPa-for-Pa).  A profile starting between 0 and 2000 m is extended
 * to 0 m by one isothermal hydrostatic layer (noted in the source line), so
 * plumes can start at the sea surface.  Messages name the file and the line, or the netCDF
 * variable and index, and the valid range; all are SL_EDATA (exit 65). */
#include "atmosphere_internal.h"

#include "steamloft/infile.h"
#include "steamloft/units.h"
#include "steamloft/water.h"

#include <ctype.h>
#include <errno.h>
#include <math.h>
#include <netcdf.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* ---- quantities and their units ------------------------------------------ */

enum qty { Q_ALT, Q_TEMP, Q_PRES, Q_H2O, Q_DERIVED, Q_N };

/* How a column's values become SI. */
enum conv { C_SCALE, C_GEOPOT_H, C_GEOPOT, C_OFFSET, C_MIXING, C_SPECIFIC };

typedef struct column_def {
    const char *name;
    enum qty qty;
    enum conv conv;
    double factor; /* scale to SI (or offset for C_OFFSET) */
} column_def;

static const column_def text_columns[] = {
    {"altitude_m", Q_ALT, C_SCALE, 1.0},
    {"altitude_km", Q_ALT, C_SCALE, 1.0e3},
    {"geopotential_height_m", Q_ALT, C_GEOPOT_H, 1.0},
    {"geopotential_height_km", Q_ALT, C_GEOPOT_H, 1.0e3},
    {"temperature_K", Q_TEMP, C_SCALE, 1.0},
    {"temperature_degC", Q_TEMP, C_OFFSET, 273.15},
    {"pressure_Pa", Q_PRES, C_SCALE, 1.0},
    {"pressure_hPa", Q_PRES, C_SCALE, 100.0},
    {"h2o_ppmv", Q_H2O, C_SCALE, 1.0e-6},
    {"h2o_mole_fraction", Q_H2O, C_SCALE, 1.0},
    {"humidity_mixing_ratio_kg_kg", Q_H2O, C_MIXING, 1.0},
    {"humidity_mixing_ratio_g_kg", Q_H2O, C_MIXING, 1.0e-3},
    {"specific_humidity_kg_kg", Q_H2O, C_SPECIFIC, 1.0},
    {"density_kg_m3", Q_DERIVED, C_SCALE, 1.0},
    {"n2_per_s2", Q_DERIVED, C_SCALE, 1.0},
    {"ice_saturation_ppmv", Q_DERIVED, C_SCALE, 1.0},
};
#define N_TEXT_COLUMNS (sizeof text_columns / sizeof text_columns[0])

static const char *qty_word[Q_N] = {"altitude", "temperature", "pressure", "water vapour", "derived"};

static double to_si(enum conv c, double factor, double v)
{
    switch (c) {
    case C_SCALE: return v * factor;
    case C_OFFSET: return v + factor;
    case C_GEOPOT_H: {
        const double h = v * factor;
        return SL_USSA_R0_M * h / (SL_USSA_R0_M - h);
    }
    case C_GEOPOT: {
        const double h = v * factor / SL_USSA_G0_M_S2;
        return SL_USSA_R0_M * h / (SL_USSA_R0_M - h);
    }
    case C_MIXING: return sl_water_mole_fraction_from_mixing_ratio(v * factor);
    case C_SPECIFIC:
        return sl_water_mole_fraction_from_mixing_ratio(sl_water_mixing_ratio_from_specific_humidity(v * factor));
    }
    return NAN;
}

/* ---- checks shared by both readers --------------------------------------- */

/* Where level i came from, for messages: "FILE:LINE" or "FILE: variable ...". */
typedef struct origin {
    const char *path;
    const size_t *line;            /* text: source line of each level (NULL for netCDF) */
    const char *var[Q_N];          /* netCDF: variable names */
    const size_t *index;           /* netCDF: original index of each level */
} origin;

static void where(const origin *o, size_t i, enum qty q, char *buf, size_t cap)
{
    if (o->line)
        snprintf(buf, cap, "%s:%zu", o->path, o->line[i]);
    else
        snprintf(buf, cap, "%s: variable '%s' index %zu", o->path, o->var[q] ? o->var[q] : qty_word[q],
                 o->index ? o->index[i] : i);
}

static int check_levels(const origin *o, size_t n, const double *z, const double *t, const double *p,
                        const double *x, sl_err *e)
{
    char w[600];
    if (n < 3) {
        SL_FAIL_RETURN(e, SL_EDATA, "%s: %zu level%s, a profile needs at least 3", o->path, n, n == 1 ? "" : "s");
    }
    for (size_t i = 0; i < n; i++) {
        if (!(z[i] >= -1000.0 && z[i] <= 1.0e6)) {
            where(o, i, Q_ALT, w, sizeof w);
            SL_FAIL_RETURN(e, SL_EDATA, "%s: altitude %g m is not within -1000 to 1000000 m", w, z[i]);
        }
        if (!(t[i] >= 50.0 && t[i] <= 2000.0)) {
            where(o, i, Q_TEMP, w, sizeof w);
            SL_FAIL_RETURN(e, SL_EDATA, "%s: temperature %g K is not within 50 to 2000 K (wrong units?)", w, t[i]);
        }
        if (!(p[i] > 0.0 && p[i] <= 2.0e5)) {
            where(o, i, Q_PRES, w, sizeof w);
            SL_FAIL_RETURN(e, SL_EDATA,
                           "%s: pressure %g Pa is not within 0 (exclusive) to 200000 Pa (negative or wrong units?)",
                           w, p[i]);
        }
        if (x && !(x[i] >= 0.0 && x[i] < 0.5)) {
            where(o, i, Q_H2O, w, sizeof w);
            SL_FAIL_RETURN(e, SL_EDATA,
                           "%s: water vapour mole fraction %g (%g ppmv) is not within 0 to 0.5 (wrong units?)", w,
                           x[i], x[i] * 1e6);
        }
    }
    for (size_t i = 1; i < n; i++) {
        if (!(z[i] > z[i - 1])) {
            where(o, i, Q_ALT, w, sizeof w);
            SL_FAIL_RETURN(e, SL_EDATA,
                           "%s: altitude %g m does not continue the strictly monotonic order of the levels before "
                           "it (%g m); altitude must be strictly increasing or strictly decreasing",
                           w, z[i], z[i - 1]);
        }
        if (!(p[i] < p[i - 1])) {
            where(o, i, Q_PRES, w, sizeof w);
            SL_FAIL_RETURN(e, SL_EDATA, "%s: pressure %g Pa at %g m does not fall below the %g Pa at %g m", w, p[i],
                           z[i], p[i - 1], z[i - 1]);
        }
        const double zm = 0.5 * (z[i] + z[i - 1]);
        const double t_implied = sl_atmosphere_gravity_m_s2(zm) * SL_USSA_M0_KG_KMOL * (z[i] - z[i - 1]) /
                                 (SL_USSA_RSTAR_J_KMOL_K * log(p[i - 1] / p[i]));
        const double t_mean = 0.5 * (t[i] + t[i - 1]);
        /* (M0 holds to 86 km; above, the composition changes and the check stops) */
        if (zm <= 86000.0 && !(t_implied > 0.5 * t_mean && t_implied < 2.0 * t_mean)) {
            where(o, i, Q_PRES, w, sizeof w);
            SL_FAIL_RETURN(e, SL_EDATA,
                           "%s: pressure falls from %g Pa to %g Pa over %g m, which hydrostatic balance allows only "
                           "at a mean temperature of %.4g K, not the %.4g K given (valid: within a factor 2); check "
                           "the units of the altitude and pressure",
                           w, p[i - 1], p[i], z[i] - z[i - 1], t_implied, t_mean);
        }
    }
    if (z[0] <= 86000.0 && z[0] >= 0.0) {
        double p_std = NAN;
        SL_TRY_RETURN(e, sl_atmosphere_us1976(z[0], NULL, &p_std, NULL, e));
        if (!(p[0] > p_std / 3.0 && p[0] < 3.0 * p_std)) {
            where(o, 0, Q_PRES, w, sizeof w);
            SL_FAIL_RETURN(e, SL_EDATA,
                           "%s: pressure %g Pa at the lowest level (%g m) is not within a factor 3 of the U.S. "
                           "Standard Atmosphere's %.5g Pa there (wrong units?)",
                           w, p[0], z[0], p_std);
        }
    }
    return SL_OK;
}

static void reverse(double *a, size_t n)
{
    for (size_t i = 0, j = n - 1; i < j; i++, j--) {
        const double t = a[i];
        a[i] = a[j];
        a[j] = t;
    }
}

static void reverse_sz(size_t *a, size_t n)
{
    for (size_t i = 0, j = n - 1; i < j; i++, j--) {
        const size_t t = a[i];
        a[i] = a[j];
        a[j] = t;
    }
}


/* Build ATM from checked levels; a profile starting between 0 and 2000 m is
 * first extended to 0 m with one isothermal level in hydrostatic balance:
 * p(0) = p(z0) exp(g z0 [(1-x)/Rd + x/Rv] / T0), g at z0/2. */
#define SURFACE_EXTENSION_MAX_M 2000.0
static int build_extended(sl_atmosphere *atm, const char *name, const char *source, size_t n, const double *z,
                          const double *t, const double *p, const double *x, sl_err *e)
{
    if (!(z[0] > 0.0 && z[0] <= SURFACE_EXTENSION_MAX_M))
        return sl_atmosphere_build_(atm, name, source, n, z, t, p, x, SL_ATM_WATER_BACKGROUND, e);
    double *buf = malloc(4 * (n + 1) * sizeof(double));
    if (!buf)
        SL_FAIL_RETURN(e, SL_ENOMEM, "atmosphere '%s': out of memory", name);
    double *z2 = buf, *t2 = buf + (n + 1), *p2 = buf + 2 * (n + 1), *x2 = buf + 3 * (n + 1);
    const double x0 = x ? x[0] : 0.0;
    z2[0] = 0.0;
    t2[0] = t[0];
    x2[0] = x0;
    p2[0] = p[0] * exp(sl_atmosphere_gravity_m_s2(0.5 * z[0]) * z[0] *
                       ((1.0 - x0) / SL_R_DRY_AIR_J_KG_K + x0 / SL_R_VAPOR_J_KG_K) / t[0]);
    memcpy(z2 + 1, z, n * sizeof(double));
    memcpy(t2 + 1, t, n * sizeof(double));
    memcpy(p2 + 1, p, n * sizeof(double));
    if (x)
        memcpy(x2 + 1, x, n * sizeof(double));
    char src2[512];
    snprintf(src2, sizeof src2, "%.400s; extended isothermally from %.6g m down to 0 m", source, z[0]);
    const int rc = sl_atmosphere_build_(atm, name, src2, n + 1, z2, t2, p2, x ? x2 : NULL,
                                        SL_ATM_WATER_BACKGROUND, e);
    free(buf);
    return rc;
}

/* ---- text reader ---------------------------------------------------------- */

typedef struct text_buf {
    size_t n, cap;
    double *v[Q_N];
    size_t *line;
} text_buf;

static void text_buf_free(text_buf *b)
{
    for (int q = 0; q < Q_N; q++)
        free(b->v[q]);
    free(b->line);
}

static int text_buf_push(text_buf *b, const double *vals, size_t line, sl_err *e)
{
    if (b->n == b->cap) {
        const size_t cap = b->cap ? 2 * b->cap : 256;
        for (int q = 0; q < Q_N; q++) {
            double *nv = realloc(b->v[q], cap * sizeof(double));
            if (!nv)
                SL_FAIL_RETURN(e, SL_ENOMEM, "atmosphere file: out of memory at line %zu", line);
            b->v[q] = nv;
        }
        size_t *nl = realloc(b->line, cap * sizeof(size_t));
        if (!nl)
            SL_FAIL_RETURN(e, SL_ENOMEM, "atmosphere file: out of memory at line %zu", line);
        b->line = nl;
        b->cap = cap;
    }
    for (int q = 0; q < Q_N; q++)
        b->v[q][b->n] = vals[q];
    b->line[b->n] = line;
    b->n++;
    return SL_OK;
}

static char *trim(char *s)
{
    while (isspace((unsigned char)*s))
        s++;
    size_t l = strlen(s);
    while (l > 0 && isspace((unsigned char)s[l - 1]))
        s[--l] = '\0';
    return s;
}

enum { MAX_COLS = 16 };

/* Split S in place at blanks and commas; returns the number of fields. */
static size_t split_fields(char *s, char **f, size_t cap)
{
    size_t k = 0;
    char *save = NULL;
    for (char *tok = strtok_r(s, " \t,;", &save); tok; tok = strtok_r(NULL, " \t,;", &save)) {
        if (k == cap)
            return cap + 1;
        f[k++] = tok;
    }
    return k;
}

static int parse_columns(const char *path, size_t line, char *spec, const column_def **cols, size_t *ncols,
                         sl_err *e)
{
    char *f[MAX_COLS + 1];
    size_t k = split_fields(spec, f, MAX_COLS);
    if (k == 0 || k > MAX_COLS)
        SL_FAIL_RETURN(e, SL_EDATA, "%s:%zu: %s columns declared; 3 to %d expected", path, line,
                       k == 0 ? "no" : "too many", MAX_COLS);
    int seen[Q_N] = {0};
    for (size_t i = 0; i < k; i++) {
        const column_def *c = NULL;
        for (size_t j = 0; j < N_TEXT_COLUMNS; j++)
            if (strcmp(f[i], text_columns[j].name) == 0)
                c = &text_columns[j];
        if (!c)
            SL_FAIL_RETURN(e, SL_EDATA,
                           "%s:%zu: unknown column '%s' (valid: altitude_m, altitude_km, geopotential_height_m, "
                           "geopotential_height_km, temperature_K, temperature_degC, pressure_Pa, pressure_hPa, "
                           "h2o_ppmv, h2o_mole_fraction, humidity_mixing_ratio_kg_kg, humidity_mixing_ratio_g_kg, "
                           "specific_humidity_kg_kg, density_kg_m3, n2_per_s2, ice_saturation_ppmv)",
                           path, line, f[i]);
        if (c->qty != Q_DERIVED && seen[c->qty]++)
            SL_FAIL_RETURN(e, SL_EDATA, "%s:%zu: column '%s' is a second %s column", path, line, f[i],
                           qty_word[c->qty]);
        cols[i] = c;
    }
    static const char *need[3] = {"altitude (altitude_m, altitude_km, geopotential_height_m)",
                                  "temperature (temperature_K, temperature_degC)",
                                  "pressure (pressure_Pa, pressure_hPa)"};
    for (int q = Q_ALT; q <= Q_PRES; q++)
        if (!seen[q])
            SL_FAIL_RETURN(e, SL_EDATA, "%s:%zu: no %s column", path, line, need[q]);
    *ncols = k;
    return SL_OK;
}

static int header_value(char *body, const char *key, char **value)
{
    const size_t l = strlen(key);
    if (strncmp(body, key, l) != 0 || body[l] != ':')
        return 0;
    *value = trim(body + l + 1);
    return 1;
}

static int read_text_levels(char *text, const char *path, text_buf *b, char *name, size_t name_cap, char *src,
                            size_t src_cap, int *has_h2o, sl_err *e)
{
    const column_def *cols[MAX_COLS];
    size_t ncols = 0, lineno = 0;
    char *buf = NULL, *cursor = text;
    int rc = SL_OK;
    while (rc == SL_OK && sl_infile_next_line(&cursor, &buf)) {
        lineno++;
        if (sl_infile_content_len(buf, "#", 0) > SL_INFILE_MAX_LINE) {
            rc = sl_err_set(e, SL_EDATA, __func__, __LINE__,
                            "%s:%zu: line longer than %d characters (comments and line ends not counted)", path,
                            lineno, SL_INFILE_MAX_LINE);
            break;
        }
        char *s = trim(buf);
        if (*s == '\0')
            continue;
        if (*s == '#') {
            char *body = trim(s + 1), *v;
            if (header_value(body, "name", &v))
                snprintf(name, name_cap, "%s", v);
            else if (header_value(body, "source", &v))
                snprintf(src, src_cap, "%s", v);
            else if (header_value(body, "columns", &v)) {
                if (ncols)
                    rc = sl_err_set(e, SL_EDATA, __func__, __LINE__, "%s:%zu: a second columns declaration", path,
                                    lineno);
                else
                    rc = parse_columns(path, lineno, v, cols, &ncols, e);
            }
            continue;
        }
        if (ncols == 0) {
            /* A header line of column names (CSV), or data without columns. */
            if (isdigit((unsigned char)*s) || *s == '-' || *s == '+' || *s == '.') {
                rc = sl_err_set(e, SL_EDATA, __func__, __LINE__,
                                "%s:%zu: data before any column declaration ('# columns: altitude_m temperature_K "
                                "pressure_Pa ...' or a header line of column names)",
                                path, lineno);
                break;
            }
            rc = parse_columns(path, lineno, s, cols, &ncols, e);
            continue;
        }
        char *f[MAX_COLS + 1];
        const size_t k = split_fields(s, f, MAX_COLS);
        if (k != ncols) {
            rc = sl_err_set(e, SL_EDATA, __func__, __LINE__, "%s:%zu: %zu value%s, expected %zu (%s%s%s%s)", path,
                            lineno, k > MAX_COLS ? (size_t)MAX_COLS + 1 : k, k == 1 ? "" : "s", ncols,
                            cols[0]->name, ncols > 1 ? ", " : "", ncols > 1 ? cols[1]->name : "",
                            ncols > 2 ? ", ..." : "");
            break;
        }
        double vals[Q_N] = {NAN, NAN, NAN, NAN, NAN};
        for (size_t i = 0; i < k; i++) {
            double v;
            if (sl_infile_parse_double(f[i], &v) != 0) {
                rc = sl_err_set(e, SL_EDATA, __func__, __LINE__,
                                "%s:%zu: column %s: '%s' is not a finite number (decimal only, e.g. 1500, -2.5, 3e-6)",
                                path, lineno, cols[i]->name, f[i]);
                break;
            }
            if (cols[i]->qty != Q_DERIVED)
                vals[cols[i]->qty] = to_si(cols[i]->conv, cols[i]->factor, v);
        }
        if (rc == SL_OK)
            rc = text_buf_push(b, vals, lineno, e);
    }
    if (rc == SL_OK && ncols == 0)
        rc = sl_err_set(e, SL_EDATA, __func__, __LINE__, "%s: no column declaration and no data", path);
    *has_h2o = 0;
    for (size_t i = 0; i < ncols; i++)
        if (cols[i]->qty == Q_H2O)
            *has_h2o = 1;
    return rc;
}

static const char *base_name(const char *path)
{
    const char *s = strrchr(path, '/');
    return s ? s + 1 : path;
}

int sl_atmosphere_read_text_(sl_atmosphere *atm, const char *path, sl_err *e)
{
    char *text = NULL;
    size_t text_len = 0;
    SL_TRY_RETURN(e, sl_infile_read_text(path, "atmosphere profile", SL_INFILE_MAX_BYTES, &text, &text_len, e));
    text_buf b;
    memset(&b, 0, sizeof b);
    char name[64], src[200];
    snprintf(name, sizeof name, "%s", base_name(path));
    src[0] = '\0';
    int has_h2o = 0;
    int rc = read_text_levels(text, path, &b, name, sizeof name, src, sizeof src, &has_h2o, e);
    free(text);
    if (rc == SL_OK && b.n >= 2 && b.v[Q_ALT][1] < b.v[Q_ALT][0]) {
        for (int q = 0; q < Q_N; q++)
            reverse(b.v[q], b.n);
        reverse_sz(b.line, b.n);
    }
    if (rc == SL_OK) {
        origin o = {path, b.line, {NULL}, NULL};
        rc = check_levels(&o, b.n, b.v[Q_ALT], b.v[Q_TEMP], b.v[Q_PRES], has_h2o ? b.v[Q_H2O] : NULL, e);
    }
    if (rc == SL_OK) {
        char source[512];
        snprintf(source, sizeof source, "file %.100s%s%.140s%s", path, src[0] ? ": " : "", src,
                 has_h2o ? "" : "; background water model");
        rc = build_extended(atm, name, source, b.n, b.v[Q_ALT], b.v[Q_TEMP], b.v[Q_PRES],
                            has_h2o ? b.v[Q_H2O] : NULL, e);
    }
    text_buf_free(&b);
    return rc == SL_OK ? SL_OK : sl_err_push(e, rc, __func__, __LINE__);
}

/* ---- CF netCDF reader ----------------------------------------------------- */

typedef struct nc_var {
    int varid;
    char name[NC_MAX_NAME + 1];
    char standard_name[128];
    enum conv conv;
    double factor;
} nc_var;

static int nc_text_att(int ncid, int varid, const char *att, char *out, size_t cap)
{
    nc_type type;
    size_t len;
    out[0] = '\0';
    if (nc_inq_att(ncid, varid, att, &type, &len) != NC_NOERR || type != NC_CHAR || len >= cap)
        return 0;
    if (nc_get_att_text(ncid, varid, att, out) != NC_NOERR)
        return 0;
    out[len] = '\0';
    char *t = trim(out);
    memmove(out, t, strlen(t) + 1);
    return 1;
}

static int units_is(const char *u, const char *const *list)
{
    for (; *list; list++)
        if (strcmp(u, *list) == 0)
            return 1;
    return 0;
}

/* Decide how variable V of quantity Q converts to SI, from its units. */
static int nc_units(const char *path, int ncid, nc_var *v, enum qty q, sl_err *e)
{
    char u[64];
    if (!nc_text_att(ncid, v->varid, "units", u, sizeof u))
        SL_FAIL_RETURN(e, SL_EDATA, "%s: variable '%s' (%s) has no units attribute", path, v->name,
                       v->standard_name);
    static const char *const m[] = {"m", "meter", "meters", "metre", "metres", NULL};
    static const char *const km[] = {"km", "kilometer", "kilometers", "kilometre", "kilometres", NULL};
    static const char *const geo[] = {"m2 s-2", "m2/s2", "m^2/s^2", "m**2 s**-2", "m^2 s^-2", NULL};
    static const char *const kel[] = {"K", "kelvin", "Kelvin", "degK", NULL};
    static const char *const cel[] = {"degC", "degree_Celsius", "degrees_Celsius", "celsius", "Celsius", NULL};
    static const char *const pa[] = {"Pa", "pascal", "Pascal", NULL};
    static const char *const hpa[] = {"hPa", "mbar", "millibar", "millibars", "mb", NULL};
    static const char *const one[] = {"1",         "mol mol-1", "mol/mol",   "mol mol**-1", "kg kg-1",
                                      "kg kg**-1", "kg/kg",     "kg kg^-1",  "",            NULL};
    static const char *const ppmv[] = {"1e-6", "ppmv", "ppm", NULL};
    static const char *const gkg[] = {"g kg-1", "g/kg", NULL};
    const char *sn = v->standard_name;
    v->conv = C_SCALE;
    v->factor = 1.0;
    const char *valid = "";
    switch (q) {
    case Q_ALT:
        if (strcmp(sn, "geopotential") == 0) {
            if (units_is(u, geo)) {
                v->conv = C_GEOPOT;
                return SL_OK;
            }
            valid = "m2 s-2";
        } else {
            if (strcmp(sn, "geopotential_height") == 0)
                v->conv = C_GEOPOT_H;
            if (units_is(u, m))
                return SL_OK;
            if (units_is(u, km)) {
                v->factor = 1e3;
                return SL_OK;
            }
            valid = "m or km";
        }
        break;
    case Q_TEMP:
        if (units_is(u, kel))
            return SL_OK;
        if (units_is(u, cel)) {
            v->conv = C_OFFSET;
            v->factor = 273.15;
            return SL_OK;
        }
        valid = "K or degC";
        break;
    case Q_PRES:
        if (units_is(u, pa))
            return SL_OK;
        if (units_is(u, hpa)) {
            v->factor = 100.0;
            return SL_OK;
        }
        if (strcmp(u, "kPa") == 0) {
            v->factor = 1000.0;
            return SL_OK;
        }
        valid = "Pa, hPa or kPa";
        break;
    case Q_H2O:
        if (strcmp(sn, "humidity_mixing_ratio") == 0)
            v->conv = C_MIXING;
        else if (strcmp(sn, "specific_humidity") == 0)
            v->conv = C_SPECIFIC;
        if (units_is(u, one))
            return SL_OK;
        if (v->conv == C_SCALE && units_is(u, ppmv)) {
            v->factor = 1e-6;
            return SL_OK;
        }
        if (v->conv != C_SCALE && units_is(u, gkg)) {
            v->factor = 1e-3;
            return SL_OK;
        }
        valid = v->conv == C_SCALE ? "1, mol mol-1 or 1e-6" : "1, kg kg-1 or g kg-1";
        break;
    default: break;
    }
    SL_FAIL_RETURN(e, SL_EDATA, "%s: variable '%s' (%s): units '%s' not understood (valid: %s)", path, v->name, sn,
                   u, valid);
}

/* Read variable V as n doubles (only one dimension longer than 1), unpacked,
 * with missing values rejected. */
static int nc_read_column(const char *path, int ncid, const nc_var *v, size_t *n_inout, double **out, sl_err *e)
{
    int ndims, dimids[NC_MAX_VAR_DIMS];
    int s = nc_inq_varndims(ncid, v->varid, &ndims);
    if (s == NC_NOERR)
        s = nc_inq_vardimid(ncid, v->varid, dimids);
    if (s != NC_NOERR)
        SL_FAIL_RETURN(e, SL_EDATA, "%s: variable '%s': %s", path, v->name, nc_strerror(s));
    size_t total = 1, longest = 0;
    for (int d = 0; d < ndims; d++) {
        size_t len;
        s = nc_inq_dimlen(ncid, dimids[d], &len);
        if (s != NC_NOERR)
            SL_FAIL_RETURN(e, SL_EDATA, "%s: variable '%s': %s", path, v->name, nc_strerror(s));
        if (len > 1) {
            if (longest > 1)
                SL_FAIL_RETURN(e, SL_EDATA,
                               "%s: variable '%s' (%s) has more than one dimension longer than 1; a profile is one "
                               "column (select one point, e.g. with cdo or ncks)",
                               path, v->name, v->standard_name);
            longest = len;
        }
        total *= len;
    }
    if (*n_inout && total != *n_inout)
        SL_FAIL_RETURN(e, SL_EDATA, "%s: variable '%s' (%s) has %zu values, the other profile variables %zu", path,
                       v->name, v->standard_name, total, *n_inout);
    if (total < 1)
        SL_FAIL_RETURN(e, SL_EDATA, "%s: variable '%s' (%s) is empty", path, v->name, v->standard_name);
    double *a = malloc(total * sizeof(double));
    if (!a)
        SL_FAIL_RETURN(e, SL_ENOMEM, "%s: out of memory reading '%s'", path, v->name);
    s = nc_get_var_double(ncid, v->varid, a);
    if (s != NC_NOERR) {
        free(a);
        SL_FAIL_RETURN(e, SL_EDATA, "%s: variable '%s': cannot read: %s", path, v->name, nc_strerror(s));
    }
    /* Missing values are looked for in the packed (stored) values. */
    double fill[2];
    int nfill = 0;
    if (nc_get_att_double(ncid, v->varid, "_FillValue", &fill[nfill]) == NC_NOERR)
        nfill++;
    if (nc_get_att_double(ncid, v->varid, "missing_value", &fill[nfill]) == NC_NOERR)
        nfill++;
    double scale = 1.0, offset = 0.0;
    (void)nc_get_att_double(ncid, v->varid, "scale_factor", &scale);
    (void)nc_get_att_double(ncid, v->varid, "add_offset", &offset);
    for (size_t i = 0; i < total; i++) {
        for (int k = 0; k < nfill; k++)
            if (a[i] == fill[k]) {
                free(a);
                SL_FAIL_RETURN(e, SL_EDATA, "%s: variable '%s' (%s) index %zu: missing value (%g)", path, v->name,
                               v->standard_name, i, fill[k]);
            }
        a[i] = a[i] * scale + offset;
        if (!isfinite(a[i])) {
            free(a);
            SL_FAIL_RETURN(e, SL_EDATA, "%s: variable '%s' (%s) index %zu: not a finite number", path, v->name,
                           v->standard_name, i);
        }
        a[i] = to_si(v->conv, v->factor, a[i]);
    }
    *n_inout = total;
    *out = a;
    return SL_OK;
}

static int read_netcdf(int ncid, const char *path, sl_atmosphere *atm, sl_err *e)
{
    static const char *const alt_names[] = {"altitude", "height_above_mean_sea_level", "geopotential_height",
                                            "geopotential", NULL};
    static const char *const h2o_names[] = {"mole_fraction_of_water_vapor_in_air", "humidity_mixing_ratio",
                                            "specific_humidity", NULL};
    int nvars;
    int s = nc_inq_nvars(ncid, &nvars);
    if (s != NC_NOERR)
        SL_FAIL_RETURN(e, SL_EDATA, "%s: %s", path, nc_strerror(s));
    nc_var vars[Q_N];
    int found[Q_N] = {0}, alt_rank = 99, h2o_rank = 99;
    for (int id = 0; id < nvars; id++) {
        nc_var v;
        memset(&v, 0, sizeof v);
        v.varid = id;
        if (nc_inq_varname(ncid, id, v.name) != NC_NOERR)
            continue;
        if (!nc_text_att(ncid, id, "standard_name", v.standard_name, sizeof v.standard_name))
            continue;
        enum qty q = Q_N;
        for (int k = 0; alt_names[k]; k++)
            if (strcmp(v.standard_name, alt_names[k]) == 0 && k < alt_rank) {
                q = Q_ALT;
                alt_rank = k;
            }
        if (strcmp(v.standard_name, "air_temperature") == 0)
            q = Q_TEMP;
        if (strcmp(v.standard_name, "air_pressure") == 0)
            q = Q_PRES;
        for (int k = 0; h2o_names[k]; k++)
            if (strcmp(v.standard_name, h2o_names[k]) == 0 && k < h2o_rank) {
                q = Q_H2O;
                h2o_rank = k;
            }
        if (q == Q_N)
            continue;
        if (found[q] && q != Q_ALT && q != Q_H2O)
            SL_FAIL_RETURN(e, SL_EDATA, "%s: two variables with standard_name %s ('%s' and '%s')", path,
                           v.standard_name, vars[q].name, v.name);
        vars[q] = v;
        found[q] = 1;
    }
    static const char *need[3] = {"altitude (or height_above_mean_sea_level, geopotential_height, geopotential)",
                                  "air_temperature",
                                  "air_pressure (a pressure-level coordinate without one can be given it with "
                                  "'ncatted -a standard_name,LEVEL,c,c,air_pressure FILE')"};
    for (int q = Q_ALT; q <= Q_PRES; q++)
        if (!found[q])
            SL_FAIL_RETURN(e, SL_EDATA, "%s: no variable with standard_name %s", path, need[q]);
    for (int q = Q_ALT; q <= Q_H2O; q++)
        if (found[q])
            SL_TRY_RETURN(e, nc_units(path, ncid, &vars[q], (enum qty)q, e));
    double *col[Q_N] = {NULL};
    size_t n = 0;
    int rc = SL_OK;
    for (int q = Q_ALT; q <= Q_H2O && rc == SL_OK; q++)
        if (found[q])
            rc = nc_read_column(path, ncid, &vars[q], &n, &col[q], e);
    size_t *index = NULL;
    if (rc == SL_OK) {
        index = malloc(n * sizeof(size_t));
        if (!index)
            rc = sl_err_set(e, SL_ENOMEM, __func__, __LINE__, "%s: out of memory", path);
        for (size_t i = 0; rc == SL_OK && i < n; i++)
            index[i] = i;
    }
    if (rc == SL_OK && n >= 2 && col[Q_ALT][1] < col[Q_ALT][0]) {
        for (int q = Q_ALT; q <= Q_H2O; q++)
            if (col[q])
                reverse(col[q], n);
        reverse_sz(index, n);
    }
    if (rc == SL_OK) {
        origin o = {path, NULL, {vars[Q_ALT].name, vars[Q_TEMP].name, vars[Q_PRES].name,
                                 found[Q_H2O] ? vars[Q_H2O].name : NULL, NULL},
                    index};
        rc = check_levels(&o, n, col[Q_ALT], col[Q_TEMP], col[Q_PRES], col[Q_H2O], e);
    }
    if (rc == SL_OK) {
        char name[64], title[128], source[256];
        snprintf(name, sizeof name, "%s", base_name(path));
        if (!nc_text_att(ncid, NC_GLOBAL, "title", title, sizeof title))
            title[0] = '\0';
        snprintf(source, sizeof source, "netCDF file %.100s%s%.100s%s", path, title[0] ? ": " : "", title,
                 found[Q_H2O] ? "" : "; background water model");
        rc = build_extended(atm, name, source, n, col[Q_ALT], col[Q_TEMP], col[Q_PRES], col[Q_H2O], e);
    }
    for (int q = 0; q < Q_N; q++)
        free(col[q]);
    free(index);
    return rc;
}

int sl_atmosphere_read_netcdf_(sl_atmosphere *atm, const char *path, sl_err *e)
{
    int ncid;
    SL_TRY_RETURN(e, sl_infile_nc_precheck(path, e));
    int s = nc_open(path, NC_NOWRITE, &ncid);
    if (s != NC_NOERR)
        SL_FAIL_RETURN(e, SL_EDATA, "%s: not a readable netCDF file: %s", path, nc_strerror(s));
    int rc = read_netcdf(ncid, path, atm, e);
    nc_close(ncid);
    return rc == SL_OK ? SL_OK : sl_err_push(e, rc, __func__, __LINE__);
}

/* ---- writer ----------------------------------------------------------------- */

int sl_atmosphere_write_text(const sl_atmosphere *atm, int csv, void *stdio_file, sl_err *e)
{
    FILE *f = stdio_file;
    static const char *cols = "altitude_m temperature_K pressure_Pa h2o_ppmv density_kg_m3 n2_per_s2 "
                              "ice_saturation_ppmv";
    if (csv) {
        fprintf(f, "altitude_m,temperature_K,pressure_Pa,h2o_ppmv,density_kg_m3,n2_per_s2,ice_saturation_ppmv\n");
    } else {
        fprintf(f, "# steamloft atmosphere profile (format: atmospheres/README.md)\n");
        fprintf(f, "# name: %s\n", atm->name);
        fprintf(f, "# source: %s\n", atm->source);
        fprintf(f, "# units: altitude m (geometric, above mean sea level), temperature K, pressure Pa, "
                   "water vapour ppmv (mole fraction x 1e6), density kg m-3, squared buoyancy frequency s-2\n");
        fprintf(f, "# derived columns (density, N^2, ice saturation) are recomputed when the file is read\n");
        fprintf(f, "# columns: %s\n", cols);
    }
    for (size_t i = 0; i < atm->n; i++) {
        const double p = atm->pressure_Pa[i], t = atm->temperature_K[i];
        const double ice_ppmv = sl_water_esat_ice_Pa(t) / p * 1e6;
        if (csv)
            fprintf(f, "%.10g,%.10g,%.10g,%.10g,%.10g,%.10g,%.10g\n", atm->altitude_m[i], t, p,
                    atm->h2o_mole_fraction[i] * 1e6, atm->density_kg_m3[i], atm->n2_per_s2[i], ice_ppmv);
        else
            fprintf(f, "%10.2f %10.5f %.9e %.7e %.7e %.6e %.6e\n", atm->altitude_m[i], t, p,
                    atm->h2o_mole_fraction[i] * 1e6, atm->density_kg_m3[i], atm->n2_per_s2[i], ice_ppmv);
    }
    if (fflush(f) != 0 || ferror(f))
        SL_FAIL_RETURN(e, SL_EIO, "atmosphere '%s': write error: %s", atm->name, strerror(errno));
    return SL_OK;
}
