/* output_nc: CF-1.11 netCDF writer (see include/steamloft/output_nc.h).
 *
 * What is computed here are only unit conversions at the output boundary:
 * band centres z_c = (z_bottom + z_top)/2 with the edges as CF cell bounds
 * (CF-1.11 section 7.1; shared edges written bit-identically); the mass
 * content of a layer, m_i / A in kg m-2, with A the area of the Earth
 * (4 pi R^2, R = 6371.0088 km, the IUGG mean radius) for the global mean and
 * the young cloud's area for the local value, which is what the CF standard
 * name mass_content_of_water_vapor_in_atmosphere_layer describes ("mass per
 * unit area of the layer whose extent is given by the vertical bounds");
 * time in days since the event (CF section 4.4: "days since" a reference
 * date with a calendar; CF advises against months and years); latitude
 * region centres as the midpoints of their bounds.  The stratospheric part
 * of the profile is the vapour plus ice above the tropopause, a band that
 * straddles it counted in proportion to the part of its depth above (the
 * same uniform-in-altitude assumption the injection module uses).
 *
 * Conventions used: CF-1.11 (Conventions, history, source, references,
 * comment; coordinate variables with units, axis, positive; bounds without
 * repeated attributes; units_metadata for temperatures; no ppmv on
 * standard-named variables), netCDF-C practice (text attributes as NC_CHAR,
 * never NC_STRING, so netCDF-3 and Fortran readers work; every call
 * checked). */
#include "steamloft/output_nc.h"

#include "steamloft/cli.h"
#include "steamloft/outfile.h"
#include "steamloft/output_text.h"
#include "steamloft/units.h"

#include "sl_gitversion.h"

#include <math.h>
#include <netcdf.h>
#include <netcdf_mem.h>
#include <hdf5.h>
#include <zlib.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <errno.h>
#include <sys/statvfs.h>

enum { MAX_PUT = 96 };

typedef struct ncw {
    int ncid;
    const char *path;  /* final path, for messages */
    int nc4;           /* deflate allowed */
    int deflate_level;
    size_t n_put;
    struct {
        int varid;
        const double *data;
    } put[MAX_PUT];
    size_t n_owned;
    double *owned[MAX_PUT];
    int profile_ids[3];  /* vapor_mass, ice_mass, vapor_mass_content: get the scalar coordinates */
    int time_dim;        /* the record dimension (unlimited), -1 before the series */
    size_t n_records;
} ncw;

int sl_output_nc_parse_format(const char *text, sl_nc_format *fmt, sl_err *e)
{
    static const char *const nc4[] = {"netcdf4", "netcdf4-classic", "netcdf4_classic", "nc4", NULL};
    static const char *const nc3[] = {"classic", "netcdf3", "nc3", NULL};
    for (size_t i = 0; text && nc4[i]; i++)
        if (strcmp(text, nc4[i]) == 0) {
            *fmt = SL_NC_NETCDF4_CLASSIC;
            return SL_OK;
        }
    for (size_t i = 0; text && nc3[i]; i++)
        if (strcmp(text, nc3[i]) == 0) {
            *fmt = SL_NC_CLASSIC;
            return SL_OK;
        }
    SL_FAIL_RETURN(e, SL_EUSAGE,
                   "--format: '%s' is not a netCDF format (valid: netcdf4 (default: netCDF-4 "
                   "classic model with deflate) or classic (netCDF-3))",
                   text ? text : "");
}

static const char *var_label(const ncw *w, int varid, char *buf)
{
    if (varid == NC_GLOBAL)
        return "global attributes";
    if (nc_inq_varname(w->ncid, varid, buf) != NC_NOERR)
        strcpy(buf, "?");
    return buf;
}

/* The message of netCDF status STATUS for a file at PATH.  The libraries
 * report a full disk under other names (HDF5 failures come back as
 * "Permission denied" or "HDF error"); when the file system holding PATH
 * has no free block left, that is said first. */
static const char *nc_cause(const char *path, int status, char *buf, size_t n)
{
    char dir[SL_OUTSET_PATH_LEN];
    const char *slash = path ? strrchr(path, '/') : NULL;
    snprintf(dir, sizeof dir, "%.*s", slash ? (int)(slash - path) : 1, slash ? path : ".");
    if (slash == path)
        strcpy(dir, "/");
    struct statvfs vfs;
    if (statvfs(dir, &vfs) == 0 && vfs.f_bavail == 0) {
        snprintf(buf, n, "%s (the netCDF library said: %s)", strerror(ENOSPC), nc_strerror(status));
        return buf;
    }
    return nc_strerror(status);
}

/* "writing 'out.nc': attribute 'units' of altitude: NetCDF: ..." */
static int nc_fail(const ncw *w, int varid, const char *what, const char *name, int status_in,
                   sl_err *e, int line)
{
    char vn[NC_MAX_NAME + 1], cause[256];
    const char *label = var_label(w, varid, vn);
    const char *status = nc_cause(w->path, status_in, cause, sizeof cause);
    if (name && name[0] && varid == NC_GLOBAL)
        return sl_err_set(e, SL_EIO, "sl_output_nc_write", line, "writing '%s': %s '%s': %s",
                          w->path, what, name, status);
    if (name && name[0])
        return sl_err_set(e, SL_EIO, "sl_output_nc_write", line, "writing '%s': %s '%s' of %s: %s",
                          w->path, what, name, label, status);
    return sl_err_set(e, SL_EIO, "sl_output_nc_write", line, "writing '%s': %s %s: %s", w->path,
                      what, label, status);
}

static int queue(ncw *w, int varid, const double *data, sl_err *e)
{
    if (w->n_put >= MAX_PUT)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "writing '%s': too many variables", w->path);
    w->put[w->n_put].varid = varid;
    w->put[w->n_put].data = data;
    w->n_put++;
    return SL_OK;
}

#define NCK(w, varid, what, name, call)                                          \
    do {                                                                         \
        int nck_st_ = (call);                                                    \
        if (nck_st_ != NC_NOERR)                                                 \
            return nc_fail((w), (varid), (what), (name), nck_st_, e, __LINE__);  \
    } while (0)

static int att_text(ncw *w, int varid, const char *name, const char *text, sl_err *e)
{
    if (text == NULL)
        return SL_OK;
    NCK(w, varid, "attribute", name, nc_put_att_text(w->ncid, varid, name, strlen(text), text));
    return SL_OK;
}

static int att_double(ncw *w, int varid, const char *name, double value, sl_err *e)
{
    NCK(w, varid, "attribute", name, nc_put_att_double(w->ncid, varid, name, NC_DOUBLE, 1, &value));
    return SL_OK;
}

/* A buffer freed when the writer finishes. */
static double *own(ncw *w, size_t n, sl_err *e)
{
    if (w->n_owned >= MAX_PUT) {
        sl_err_set(e, SL_EINTERNAL, __func__, __LINE__, "writing '%s': too many buffers", w->path);
        return NULL;
    }
    double *p = calloc(n ? n : 1, sizeof *p);
    if (p == NULL) {
        sl_err_set(e, SL_ENOMEM, __func__, __LINE__, "writing '%s': out of memory", w->path);
        return NULL;
    }
    w->owned[w->n_owned++] = p;
    return p;
}

/* Number of values of a variable on DIMS (the record dimension counted with
 * the records to come). */
static size_t values_of(const ncw *w, int ndims, const int *dims)
{
    size_t n = 1;
    for (int k = 0; k < ndims; k++) {
        size_t len = 0;
        if (dims[k] == w->time_dim)
            len = w->n_records;
        else if (nc_inq_dimlen(w->ncid, dims[k], &len) != NC_NOERR)
            return 0;
        n *= len;
    }
    return n;
}

/* ---------------------------------------------------------------- storage of a variable
 * Each variable of a netCDF-4 file is an HDF5 dataset, and what its storage
 * costs decides whether the file is smaller than its netCDF-3 twin.  The
 * costs, from the HDF5 File Format Specification (version 2, sections
 * III.A.1, IV.A.2.i and IV.A.2.l) for the HDF5-1.8 file format: a chunked
 * dataset carries a version-1 B-tree node, allocated whole, of 2K+1 keys of
 * 8 + 8 (rank + 1) bytes and 2K child addresses of 8 bytes (K the file's
 * istore_k: 32 by default, about 2.1 kB for rank 1; CHUNK_BTREE_K = 1 in the
 * run, decay and zonal files, 112 bytes) and, when filtered, a filter-pipeline message (about 64
 * bytes for shuffle and deflate); a contiguous or compact dataset carries
 * neither; compact storage keeps the data in the dataset's object header (no
 * separate data block and address).  Variables on the unlimited time
 * dimension must be chunked (one chunk holds the whole series: one record per
 * chunk, the library's default, costs a B-tree entry and a chunk per record).
 * The deflated size is not estimated but measured: the values are deflated
 * here with zlib at the file's level, with and without the shuffle filter's
 * byte order, which is what HDF5's deflate filter stores for the one chunk
 * (it calls zlib's compress2 on the chunk; HDF5 User's Guide, "Filters").
 * So: a record variable is deflated (shuffled or not, whichever is smaller)
 * when that saves more than the pipeline message; a fixed-size variable is
 * chunked and deflated only when the saving exceeds the B-tree node and the
 * pipeline message; otherwise it is compact when small and contiguous when
 * large.  Values are never changed: shuffle and deflate are lossless. */
enum { CHUNK_BTREE_K = SL_NC_ONE_CHUNK_BTREE_K, COMPACT_MAX_BYTES = 8192, PIPELINE_BYTES = 64 };

static size_t chunk_index_bytes(int ndims)
{
    size_t key = 8 + 8 * (size_t)(ndims + 1);
    return 24 + (2 * CHUNK_BTREE_K + 1) * key + 2 * CHUNK_BTREE_K * 8;
}

/* Bytes zlib's compress2 at LEVEL makes of the N doubles X, in their order
 * (SHUFFLE 0) or in the shuffle filter's (all first bytes, then all second
 * bytes, ...); the uncompressed size when that is not smaller or on any
 * failure (out of memory: the choice is then no compression). */
static size_t deflated_bytes(const double *x, size_t n, int shuffle, int level)
{
    size_t raw = 8 * n;
    unsigned char *in = malloc(raw ? raw : 1);
    uLongf out_n = compressBound((uLong)raw);
    unsigned char *out = malloc(out_n);
    size_t result = raw;
    if (in != NULL && out != NULL) {
        if (shuffle)
            for (size_t i = 0; i < n; i++) {
                unsigned char b[8];
                memcpy(b, &x[i], 8);
                for (int k = 0; k < 8; k++)
                    in[(size_t)k * n + i] = b[k];
            }
        else
            memcpy(in, x, raw);
        if (compress2(out, &out_n, in, (uLong)raw, level) == Z_OK && out_n < raw)
            result = out_n;
    }
    free(in);
    free(out);
    return result;
}

int sl_output_nc_storage(int ncid, int varid, const double *data, size_t n, int deflate_level,
                         const char *path, sl_err *e)
{
    int ndims = 0, dims[NC_MAX_VAR_DIMS], unlim = -1;
    SL_TRY_RETURN(e, sl_output_nc_check(nc_inq_varndims(ncid, varid, &ndims), ncid, varid, path,
                                        "inquiring", NULL, e));
    if (ndims > NC_MAX_VAR_DIMS)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "writing '%s': rank %d", path, ndims);
    SL_TRY_RETURN(e, sl_output_nc_check(nc_inq_vardimid(ncid, varid, dims), ncid, varid, path,
                                        "inquiring", NULL, e));
    SL_TRY_RETURN(e, sl_output_nc_check(nc_inq_unlimdim(ncid, &unlim), ncid, varid, path,
                                        "inquiring", NULL, e));
    int record = ndims > 0 && unlim >= 0 && dims[0] == unlim;
    int level = deflate_level > 0 ? deflate_level : 4;
    size_t raw = 8 * n, packed = raw;
    int shuffle = 0;
    if (data != NULL && n > 0) {
        size_t with = deflated_bytes(data, n, 1, level), without = deflated_bytes(data, n, 0, level);
        shuffle = with <= without;
        packed = shuffle ? with : without;
    }
    size_t chunk[NC_MAX_VAR_DIMS];
    for (int k = 0; k < ndims; k++)
        SL_TRY_RETURN(e, sl_output_nc_check(nc_inq_dimlen(ncid, dims[k], &chunk[k]), ncid, varid,
                                            path, "dimension length of", NULL, e));
    if (record) {
        size_t inner = 1;
        for (int k = 1; k < ndims; k++)
            inner *= chunk[k] ? chunk[k] : 1;
        chunk[0] = n / inner > 0 ? n / inner : 1;
    }
    int deflate = packed + PIPELINE_BYTES < raw;
    if (!record && !(ndims > 0 && packed + PIPELINE_BYTES + chunk_index_bytes(ndims) < raw)) {
        if (raw <= COMPACT_MAX_BYTES)
            return sl_output_nc_check(nc_def_var_chunking(ncid, varid, NC_COMPACT, NULL), ncid, varid,
                                      path, "storage of", NULL, e);
        return SL_OK; /* contiguous, the library's default */
    }
    SL_TRY_RETURN(e, sl_output_nc_check(nc_def_var_chunking(ncid, varid, NC_CHUNKED, chunk), ncid,
                                        varid, path, "chunking of", NULL, e));
    if (!deflate)
        return SL_OK;
    return sl_output_nc_check(nc_def_var_deflate(ncid, varid, shuffle, 1, level), ncid, varid, path,
                              "compression of", NULL, e);
}

static int storage(ncw *w, int id, int ndims, const int *dims, const double *data, sl_err *e)
{
    if (!w->nc4)
        return SL_OK;
    return sl_output_nc_storage(w->ncid, id, data, values_of(w, ndims, dims), w->deflate_level,
                                w->path, e);
}

/* Define an NC_DOUBLE variable with long_name and units (and standard_name
 * when given); queue DATA to be written after enddef. */
static int def_var(ncw *w, const char *name, int ndims, const int *dims, const double *data,
                   const char *standard_name, const char *long_name, const char *units,
                   int *varid, sl_err *e)
{
    int id;
    NCK(w, NC_GLOBAL, "defining variable", name, nc_def_var(w->ncid, name, NC_DOUBLE, ndims, dims, &id));
    SL_TRY_RETURN(e, att_text(w, id, "standard_name", standard_name, e));
    SL_TRY_RETURN(e, att_text(w, id, "long_name", long_name, e));
    SL_TRY_RETURN(e, att_text(w, id, "units", units, e));
    /* An undefined value (NaN in the view: an empty box, an e-folding time when
     * nothing entered) is written as _FillValue (CF 2.5.1), never as 0 or NaN. */
    size_t n = values_of(w, ndims, dims), n_undefined = 0;
    for (size_t i = 0; data != NULL && i < n; i++)
        n_undefined += isnan(data[i]) != 0;
    if (n_undefined > 0) {
        double *filled = own(w, n, e);
        if (filled == NULL)
            return e ? e->code : SL_ENOMEM;
        for (size_t i = 0; i < n; i++)
            filled[i] = isnan(data[i]) ? NC_FILL_DOUBLE : data[i];
        data = filled;
        SL_TRY_RETURN(e, att_double(w, id, "_FillValue", NC_FILL_DOUBLE, e));
    }
    SL_TRY_RETURN(e, storage(w, id, ndims, dims, data, e));
    SL_TRY_RETURN(e, queue(w, id, data, e));
    if (varid)
        *varid = id;
    return SL_OK;
}

/* A vertical coordinate NAME(NAME) with bounds NAME_bnds(NAME, nv). */
static int def_zaxis(ncw *w, const char *name, const char *long_name, const double *bottom,
                     const double *top, size_t n, int nv_dim, int *dim, sl_err *e)
{
    char bname[NC_MAX_NAME + 1];
    snprintf(bname, sizeof bname, "%s_bnds", name);
    NCK(w, NC_GLOBAL, "defining dimension", name, nc_def_dim(w->ncid, name, n, dim));
    double *c = own(w, n, e), *b = own(w, 2 * n, e);
    if (c == NULL || b == NULL)
        return e ? e->code : SL_ENOMEM;
    for (size_t i = 0; i < n; i++) {
        c[i] = 0.5 * (bottom[i] + top[i]);
        b[2 * i] = bottom[i];
        b[2 * i + 1] = top[i];
    }
    int id, bid, bd[2] = {*dim, nv_dim};
    SL_TRY_RETURN(e, def_var(w, name, 1, dim, c, "altitude", long_name, "m", &id, e));
    SL_TRY_RETURN(e, att_text(w, id, "positive", "up", e));
    SL_TRY_RETURN(e, att_text(w, id, "axis", "Z", e));
    SL_TRY_RETURN(e, att_text(w, id, "bounds", bname, e));
    /* CF 7.1: bounds inherit units etc. from their coordinate; none repeated. */
    NCK(w, NC_GLOBAL, "defining variable", bname, nc_def_var(w->ncid, bname, NC_DOUBLE, 2, bd, &bid));
    SL_TRY_RETURN(e, storage(w, bid, 2, bd, b, e));
    return queue(w, bid, b, e);
}

static int def_scalar(ncw *w, const char *name, double value, const char *standard_name,
                      const char *long_name, const char *units, sl_err *e)
{
    double *p = own(w, 1, e);
    if (p == NULL)
        return e ? e->code : SL_ENOMEM;
    *p = value;
    return def_var(w, name, 0, NULL, p, standard_name, long_name, units, NULL, e);
}

/* Vapour + ice above ALT_M, a straddling band counted in proportion. */
static double mass_above(const sl_injection *inj, double alt_m)
{
    double sum = 0;
    for (size_t i = 0; i < inj->n_bands; i++) {
        double b = inj->band_bottom_m[i], t = inj->band_top_m[i];
        double m = inj->vapor_kg[i] + inj->ice_kg[i];
        if (b >= alt_m)
            sum += m;
        else if (t > alt_m)
            sum += m * (t - alt_m) / (t - b);
    }
    return sum;
}

static int safe_arg(const char *s)
{
    if (*s == '\0')
        return 0;
    for (; *s; s++)
        if (!strchr("abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ0123456789_./=:,+-@%", *s))
            return 0;
    return 1;
}

/* "2026-12-01T17:00:00Z: steamloft run 'my scen.ini' -o out.nc" */
static void history_line(const sl_output_view *v, char *buf, size_t len)
{
    time_t now = time(NULL);
    struct tm tmv;
    size_t used = 0;
    if (gmtime_r(&now, &tmv) != NULL)
        used = strftime(buf, len, "%Y-%m-%dT%H:%M:%SZ: ", &tmv);
    buf[used] = '\0';
    if (v->argc <= 0 || v->argv == NULL) {
        snprintf(buf + used, len - used, "written by %s", sl_cli_version());
        return;
    }
    for (int i = 0; i < v->argc && used + 4 < len; i++) {
        const char *a = v->argv[i] ? v->argv[i] : "";
        if (i > 0)
            buf[used++] = ' ';
        if (safe_arg(a)) {
            int n = snprintf(buf + used, len - used, "%s", a);
            used += n > 0 ? (size_t)n : 0;
        } else {
            buf[used++] = '\'';
            for (; *a && used + 6 < len; a++) {
                if (*a == '\'') {
                    memcpy(buf + used, "'\\''", 4);
                    used += 4;
                } else {
                    buf[used++] = *a;
                }
            }
            buf[used++] = '\'';
        }
        if (used >= len)
            used = len - 1;
        buf[used] = '\0';
    }
    buf[used < len ? used : len - 1] = '\0';
}

static int global_attrs(ncw *w, const sl_output_view *v, sl_err *e)
{
    char buf[4096];
    SL_TRY_RETURN(e, att_text(w, NC_GLOBAL, "Conventions", "CF-1.11", e));
    snprintf(buf, sizeof buf, "Water lofted into the stratosphere and its decay: %s",
             v->title && v->title[0] ? v->title : "steamloft run");
    SL_TRY_RETURN(e, att_text(w, NC_GLOBAL, "title", buf, e));
    SL_TRY_RETURN(e, att_text(w, NC_GLOBAL, "source", sl_cli_version(), e));
    history_line(v, buf, sizeof buf);
    SL_TRY_RETURN(e, att_text(w, NC_GLOBAL, "history", buf, e));
    sl_output_references(v->methods, buf, sizeof buf);
    if (buf[0])
        SL_TRY_RETURN(e, att_text(w, NC_GLOBAL, "references", buf, e));
    snprintf(buf, sizeof buf,
             "%s%s%s%s Masses are totals per altitude band, not rates. Time 0 is the event; "
             "the date in the time units is nominal (%s).",
             sl_cli_caution(), v->regime_note && v->regime_note[0] ? " Validity: " : "",
             v->regime_note && v->regime_note[0] ? v->regime_note : "",
             v->regime_note && v->regime_note[0] ? "." : "",
             v->event_time && v->event_time[0] ? "only its month is the event's" : "no date given");
    SL_TRY_RETURN(e, att_text(w, NC_GLOBAL, "comment", buf, e));
    SL_TRY_RETURN(e, att_text(w, NC_GLOBAL, "tool_version", sl_cli_version(), e));
    SL_TRY_RETURN(e, att_text(w, NC_GLOBAL, "git_hash", SL_GIT_HASH, e));
    SL_TRY_RETURN(e, att_text(w, NC_GLOBAL, "event_time", sl_output_event_time(v), e));
    if (v->scenario_path)
        SL_TRY_RETURN(e, att_text(w, NC_GLOBAL, "scenario_file", v->scenario_path, e));
    if (v->regime_note && v->regime_note[0])
        SL_TRY_RETURN(e, att_text(w, NC_GLOBAL, "validity_warning", v->regime_note, e));
    /* Where each value came from, in one attribute: "key: origin; ...". */
    size_t used = 0;
    buf[0] = '\0';
    for (size_t i = 0; i < v->n_params && used + 2 < sizeof buf; i++) {
        if (v->params[i].origin == NULL)
            continue;
        int n = snprintf(buf + used, sizeof buf - used, "%s%s: %s", used ? "; " : "",
                         v->params[i].name, v->params[i].origin);
        if (n < 0 || (size_t)n >= sizeof buf - used)
            break;
        used += (size_t)n;
    }
    if (used > 0)
        SL_TRY_RETURN(e, att_text(w, NC_GLOBAL, "scenario_parameter_origins", buf, e));
    for (size_t i = 0; i < v->n_params; i++) {
        const sl_output_param *p = &v->params[i];
        size_t n = (size_t)snprintf(buf, NC_MAX_NAME + 1, "scenario_%s", p->name);
        if (n > NC_MAX_NAME)
            SL_FAIL_RETURN(e, SL_EINTERNAL, "scenario parameter name too long: '%s'", p->name);
        for (char *c = buf; *c; c++)
            if (!((*c >= 'a' && *c <= 'z') || (*c >= 'A' && *c <= 'Z') || (*c >= '0' && *c <= '9')))
                *c = '_';
        if (p->text)
            SL_TRY_RETURN(e, att_text(w, NC_GLOBAL, buf, p->text, e));
        else
            SL_TRY_RETURN(e, att_double(w, NC_GLOBAL, buf, p->value, e));
    }
    return SL_OK;
}

static int profile_vars(ncw *w, const sl_output_view *v, int nv, int *zdim, sl_err *e)
{
    const sl_injection *inj = v->inj;
    size_t n = inj->n_bands;
    int id;
    SL_TRY_RETURN(e, def_zaxis(w, "altitude", "altitude of the band centre", inj->band_bottom_m,
                               inj->band_top_m, n, nv, zdim, e));
    SL_TRY_RETURN(e, def_var(w, "vapor_mass", 1, zdim, inj->vapor_kg, NULL,
                             "water vapour lofted into the altitude band", "kg", &id, e));
    w->profile_ids[0] = id;
    SL_TRY_RETURN(e, att_text(w, id, "cell_methods", "altitude: sum", e));
    SL_TRY_RETURN(e, def_var(w, "ice_mass", 1, zdim, inj->ice_kg, NULL,
                             "condensed water (ice and liquid) lofted into the altitude band", "kg",
                             &id, e));
    w->profile_ids[1] = id;
    SL_TRY_RETURN(e, att_text(w, id, "cell_methods", "altitude: sum", e));

    double *glob = own(w, n, e);
    if (glob == NULL)
        return e ? e->code : SL_ENOMEM;
    for (size_t i = 0; i < n; i++)
        glob[i] = inj->vapor_kg[i] / SL_EARTH_AREA_M2;
    /* An increment (lofted water), not the layer's total content: no standard name (the CF
     * name mass_content_of_water_vapor_in_atmosphere_layer means all the layer's vapour). */
    SL_TRY_RETURN(e, def_var(w, "vapor_mass_content", 1, zdim, glob, NULL,
                             "lofted water vapour per unit area, averaged over the whole Earth",
                             "kg m-2", &id, e));
    w->profile_ids[2] = id;
    SL_TRY_RETURN(e, att_text(w, id, "cell_methods", "area: mean", e));
    SL_TRY_RETURN(e, att_text(w, id, "comment",
                              "vapor_mass divided by the area of the Earth (4 pi R^2, "
                              "R = 6371.0088 km); the layer is given by altitude_bnds", e));
    if (inj->cloud_area_m2 > 0) {
        double *loc = own(w, n, e);
        if (loc == NULL)
            return e ? e->code : SL_ENOMEM;
        for (size_t i = 0; i < n; i++)
            loc[i] = inj->vapor_kg[i] / inj->cloud_area_m2;
        SL_TRY_RETURN(e, def_var(w, "cloud_vapor_mass_content", 1, zdim, loc, NULL,
                                 "lofted water vapour per unit area over the young cloud", "kg m-2",
                                 &id, e));
        SL_TRY_RETURN(e, att_text(w, id, "comment",
                                  "vapor_mass divided by cloud_area; the layer is given by "
                                  "altitude_bnds", e));
        SL_TRY_RETURN(e, def_scalar(w, "cloud_area", inj->cloud_area_m2, NULL,
                                    "horizontal area of the young cloud", "m2", e));
    }
    double tv = 0, ti = 0;
    for (size_t i = 0; i < n; i++) {
        tv += inj->vapor_kg[i];
        ti += inj->ice_kg[i];
    }
    SL_TRY_RETURN(e, def_scalar(w, "total_vapor_mass", tv, NULL,
                                "total water vapour lofted (sum over the bands)", "kg", e));
    SL_TRY_RETURN(e, def_scalar(w, "total_ice_mass", ti, NULL,
                                "total condensed water lofted (sum over the bands)", "kg", e));
    double trop = inj->tropopause_altitude_m;
    if (!isfinite(trop) && v->atm)
        trop = v->atm->tropopause_altitude_m;
    if (isfinite(trop)) {
        SL_TRY_RETURN(e, def_scalar(w, "tropopause_altitude", trop, "tropopause_altitude",
                                    "tropopause altitude (WMO lapse-rate definition)", "m", e));
        SL_TRY_RETURN(e, def_scalar(w, "stratospheric_water", mass_above(inj, trop), NULL,
                                    "water (vapour and condensate) lofted above the tropopause",
                                    "kg", e));
    }
    SL_TRY_RETURN(e, def_scalar(w, "latitude", inj->latitude_deg, "latitude",
                                "latitude of the event", "degrees_north", e));
    if (isfinite(inj->longitude_deg)) /* a scalar coordinate beside latitude (CF 5.7) */
        SL_TRY_RETURN(e, def_scalar(w, "longitude", inj->longitude_deg, "longitude",
                                    "longitude of the event", "degrees_east", e));
    for (size_t k = 0; k < sizeof w->profile_ids / sizeof w->profile_ids[0]; k++)
        if (w->profile_ids[k] >= 0)
            SL_TRY_RETURN(e, att_text(w, w->profile_ids[k], "coordinates",
                                      isfinite(inj->longitude_deg) ? "latitude longitude" : "latitude", e));
    if (inj->month >= 1 && inj->month <= 12) {
        NCK(w, NC_GLOBAL, "writing attribute", "event_month",
            nc_put_att_int(w->ncid, NC_GLOBAL, "event_month", NC_INT, 1, &inj->month));
    }
    SL_TRY_RETURN(e, att_text(w, NC_GLOBAL, "event_time_is_nominal",
                              isfinite(inj->event_time_s) ? "no" : "yes", e));
    SL_TRY_RETURN(e, def_scalar(w, "injection_time", inj->time_s, NULL,
                                "time after the event that the injection profile refers to", "s", e));
    return SL_OK;
}

/* A flag variable NAME(source) of NC_BYTE codes (CF 3.5: flag_values of the
 * variable's type, flag_meanings the blank-separated names NAMES_OF(0..N-1)). */
static int def_flags(ncw *w, const char *name, int ndims, const int *dim, const double *codes,
                     const char *long_name, const char *(*names_of)(int), int n_flags, sl_err *e)
{
    int id;
    NCK(w, NC_GLOBAL, "defining variable", name, nc_def_var(w->ncid, name, NC_BYTE, ndims, dim, &id));
    SL_TRY_RETURN(e, storage(w, id, ndims, dim, NULL, e));
    SL_TRY_RETURN(e, att_text(w, id, "long_name", long_name, e));
    signed char values[8];
    char meanings[256] = "";
    for (int k = 0; k < n_flags && k < 8; k++) {
        values[k] = (signed char)k;
        size_t used = strlen(meanings);
        snprintf(meanings + used, sizeof meanings - used, "%s%s", k ? " " : "", names_of(k));
    }
    NCK(w, id, "attribute", "flag_values", nc_put_att_schar(w->ncid, id, "flag_values", NC_BYTE, (size_t)n_flags, values));
    SL_TRY_RETURN(e, att_text(w, id, "flag_meanings", meanings, e));
    return queue(w, id, codes, e);
}

static const char *kind_name_of(int k) { return sl_output_source_kind_name((sl_source_kind)k); }

/* Each source of the plume stage (the order of the JSON "sources" and
 * "thermals"): its kind and its regime (issue 12: the regime is a per-source
 * field in every output); regime, the event's, is the highest of them. */
static int source_vars(ncw *w, const sl_plume *pl, sl_err *e)
{
    size_t n = pl->n_thermals;
    int dim;
    NCK(w, NC_GLOBAL, "defining dimension", "source", nc_def_dim(w->ncid, "source", n, &dim));
    double *kind = own(w, n, e), *regime = own(w, n, e), *event = own(w, 1, e);
    if (kind == NULL || regime == NULL || event == NULL)
        return e ? e->code : SL_ENOMEM;
    for (size_t i = 0; i < n; i++) {
        kind[i] = (double)pl->th[i].kind;
        regime[i] = (double)pl->th[i].regime;
    }
    *event = (double)pl->regime;
    SL_TRY_RETURN(e, def_flags(w, "source_kind", 1, &dim, kind, "kind of the source", kind_name_of, 3, e));
    SL_TRY_RETURN(e, def_flags(w, "source_regime", 1, &dim, regime,
                               "regime of the source's rise (buoyant thermal, blow-out or ballistic)",
                               sl_plume_regime_name, 3, e));
    return def_flags(w, "regime", 0, NULL, event, "regime of the event (the highest of its sources)",
                     sl_plume_regime_name, 3, e);
}

static int atmosphere_vars(ncw *w, const sl_atmosphere *a, sl_err *e)
{
    int dim, id;
    NCK(w, NC_GLOBAL, "defining dimension", "atm_altitude", nc_def_dim(w->ncid, "atm_altitude", a->n, &dim));
    SL_TRY_RETURN(e, def_var(w, "atm_altitude", 1, &dim, a->altitude_m, "altitude",
                             "altitude of the background profile level", "m", &id, e));
    SL_TRY_RETURN(e, att_text(w, id, "positive", "up", e));
    SL_TRY_RETURN(e, att_text(w, id, "axis", "Z", e));
    SL_TRY_RETURN(e, def_var(w, "air_temperature", 1, &dim, a->temperature_K, "air_temperature",
                             "background air temperature", "K", &id, e));
    SL_TRY_RETURN(e, att_text(w, id, "units_metadata", "temperature: on_scale", e));
    SL_TRY_RETURN(e, def_var(w, "air_pressure", 1, &dim, a->pressure_Pa, "air_pressure",
                             "background air pressure", "Pa", &id, e));
    SL_TRY_RETURN(e, def_var(w, "air_density", 1, &dim, a->density_kg_m3, "air_density",
                             "background moist-air density", "kg m-3", &id, e));
    SL_TRY_RETURN(e, def_var(w, "h2o_mole_fraction", 1, &dim, a->h2o_mole_fraction,
                             "mole_fraction_of_water_vapor_in_air",
                             "background water vapour mole fraction", "mol mol-1", &id, e));
    SL_TRY_RETURN(e, def_var(w, "buoyancy_frequency_squared", 1, &dim, a->n2_per_s2,
                             "square_of_brunt_vaisala_frequency_in_air",
                             "square of the background buoyancy (Brunt-Vaisala) frequency", "s-2",
                             &id, e));
    SL_TRY_RETURN(e, att_text(w, NC_GLOBAL, "background_atmosphere", a->name, e));
    if (a->source[0])
        SL_TRY_RETURN(e, att_text(w, NC_GLOBAL, "background_atmosphere_source", a->source, e));
    if (isfinite(a->join_altitude_m)) { /* a low user column joined onto a climate zone (atmosphere.c) */
        SL_TRY_RETURN(e, att_double(w, NC_GLOBAL, "background_atmosphere_join_altitude_m", a->join_altitude_m, e));
        SL_TRY_RETURN(e, att_text(w, NC_GLOBAL, "background_atmosphere_joined_onto", a->joined_onto, e));
    }
    if (isfinite(a->strat_water_burden_kg) && a->strat_water_burden_kg > 0) {
        SL_TRY_RETURN(e, def_scalar(w, "background_stratospheric_water_mass", a->strat_water_burden_kg,
                                    NULL, "background water vapour in the stratosphere (global)",
                                    "kg", e));
        SL_TRY_RETURN(e, def_scalar(w, "background_stratospheric_water_column",
                                    a->strat_water_column_kg_m2, NULL,
                                    "background stratospheric water vapour column", "kg m-2", e));
    }
    return SL_OK;
}

static int same_cells(const double *b1, const double *t1, size_t n1, const double *b2,
                      const double *t2, size_t n2)
{
    if (n1 != n2)
        return 0;
    for (size_t i = 0; i < n1; i++)
        if (b1[i] != b2[i] || t1[i] != t2[i])
            return 0;
    return 1;
}

static int series_vars(ncw *w, const sl_output_view *v, int nv, int band_dim, sl_err *e)
{
    const sl_output_series *s = v->series;
    const sl_injection *inj = v->inj;
    size_t nt = s->n_time, nr = s->n_region;
    int tdim, ldim, zdim, id;
    char units[96];

    /* Unlimited, so that record operators (NCO's ncrcat) join runs along time. */
    NCK(w, NC_GLOBAL, "defining dimension", "time", nc_def_dim(w->ncid, "time", NC_UNLIMITED, &tdim));
    w->time_dim = tdim;
    w->n_records = nt;
    double *days = own(w, nt, e);
    if (days == NULL)
        return e ? e->code : SL_ENOMEM;
    for (size_t t = 0; t < nt; t++)
        days[t] = sl_s_to_days(s->time_s[t]);
    snprintf(units, sizeof units, "days since %s", sl_output_event_time(v));
    SL_TRY_RETURN(e, def_var(w, "time", 1, &tdim, days, "time", "time since the event", units, &id, e));
    SL_TRY_RETURN(e, att_text(w, id, "calendar", "standard", e));
    SL_TRY_RETURN(e, att_text(w, id, "axis", "T", e));

    NCK(w, NC_GLOBAL, "defining dimension", "lat", nc_def_dim(w->ncid, "lat", nr, &ldim));
    double *lat = own(w, nr, e), *lb = own(w, 2 * nr, e);
    if (lat == NULL || lb == NULL)
        return e ? e->code : SL_ENOMEM;
    for (size_t r = 0; r < nr; r++) {
        lat[r] = 0.5 * (s->region_south_deg[r] + s->region_north_deg[r]);
        lb[2 * r] = s->region_south_deg[r];
        lb[2 * r + 1] = s->region_north_deg[r];
    }
    SL_TRY_RETURN(e, def_var(w, "lat", 1, &ldim, lat, "latitude", "centre of the latitude region",
                             "degrees_north", &id, e));
    SL_TRY_RETURN(e, att_text(w, id, "axis", "Y", e));
    SL_TRY_RETURN(e, att_text(w, id, "bounds", "lat_bnds", e));
    int bd[2] = {ldim, nv}, bid;
    NCK(w, NC_GLOBAL, "defining variable", "lat_bnds", nc_def_var(w->ncid, "lat_bnds", NC_DOUBLE, 2, bd, &bid));
    SL_TRY_RETURN(e, storage(w, bid, 2, bd, lb, e));
    SL_TRY_RETURN(e, queue(w, bid, lb, e));

    if (same_cells(s->layer_bottom_m, s->layer_top_m, s->n_layer, inj->band_bottom_m,
                   inj->band_top_m, inj->n_bands))
        zdim = band_dim;
    else
        SL_TRY_RETURN(e, def_zaxis(w, "layer", "altitude of the box-model layer centre",
                                   s->layer_bottom_m, s->layer_top_m, s->n_layer, nv, &zdim, e));

    if (s->region_tropopause_m) {
        SL_TRY_RETURN(e, def_var(w, "region_tropopause_altitude", 1, &ldim, s->region_tropopause_m,
                                 "tropopause_altitude", "tropopause altitude of the latitude region",
                                 "m", &id, e));
        SL_TRY_RETURN(e, att_text(w, id, "comment",
                                  "the box model's lowest box in each region starts here", e));
    }
    if (s->box_bottom_m && s->box_top_m) {
        /* Each region's boxes (the lowest starts at the region's own tropopause);
         * _FillValue where a region has no box in a layer. */
        int dz[2] = {ldim, zdim};
        SL_TRY_RETURN(e, def_var(w, "box_bottom", 2, dz, s->box_bottom_m, NULL,
                                 "bottom of the box-model box of this latitude region and layer", "m", &id, e));
        SL_TRY_RETURN(e, def_var(w, "box_top", 2, dz, s->box_top_m, NULL,
                                 "top of the box-model box of this latitude region and layer", "m", &id, e));
    }
    int d3[3] = {tdim, ldim, zdim}, d2[2] = {tdim, zdim};
    SL_TRY_RETURN(e, def_var(w, "excess_water_mass", 3, d3, s->excess_kg, NULL,
                             "excess water in the box (latitude region and layer) over background",
                             "kg", &id, e));
    SL_TRY_RETURN(e, att_text(w, id, "cell_methods", "area: sum", e));
    if (s->mole_fraction_anomaly)
        SL_TRY_RETURN(e, def_var(w, "mole_fraction_anomaly", 2, d2, s->mole_fraction_anomaly, NULL,
                                 "global-mean excess water vapour mole fraction over background",
                                 "mol mol-1", &id, e));
    SL_TRY_RETURN(e, def_var(w, "global_excess_water_mass", 1, &tdim, s->global_excess_kg, NULL,
                             "excess water remaining in the stratosphere (global total)", "kg",
                             &id, e));
    if (s->column_anomaly_kg_m2)
        SL_TRY_RETURN(e, def_var(w, "column_anomaly", 1, &tdim, s->column_anomaly_kg_m2, NULL,
                                 "global-mean column of excess stratospheric water", "kg m-2",
                                 &id, e));
    if (s->local_column_anomaly_kg_m2)
        SL_TRY_RETURN(e, def_var(w, "local_column_anomaly", 1, &tdim, s->local_column_anomaly_kg_m2,
                                 NULL, "column of excess stratospheric water over the early local cloud",
                                 "kg m-2", &id, e));
    if (s->percent_of_background)
        SL_TRY_RETURN(e, def_var(w, "percent_of_background", 1, &tdim, s->percent_of_background,
                                 NULL, "excess as a percentage of the background stratospheric water",
                                 "percent", &id, e));
    if (s->forcing_W_m2) {
        SL_TRY_RETURN(e, def_var(w, "forcing_indicator", 1, &tdim, s->forcing_W_m2, NULL,
                                 "first-order radiative forcing indicator of the excess water",
                                 "W m-2", &id, e));
        SL_TRY_RETURN(e, att_text(w, id, "comment",
                                  "coarse: a constant forcing per ppmv of global-mean excess; not a "
                                  "radiative-transfer result", e));
    }
    for (size_t k = 0; k < s->n_sink; k++) {
        char name[NC_MAX_NAME + 1], ln[256];
        snprintf(name, sizeof name, "removed_%s", s->sink_name[k]);
        snprintf(ln, sizeof ln, "excess water removed so far by %s (cumulative)", s->sink_name[k]);
        SL_TRY_RETURN(e, def_var(w, name, 1, &tdim, s->sink_kg + k * nt, NULL, ln, "kg", &id, e));
    }
    return SL_OK;
}

static int write_all(ncw *w, const sl_output_view *v, sl_err *e)
{
    int nv, zdim;
    SL_TRY_RETURN(e, global_attrs(w, v, e));
    NCK(w, NC_GLOBAL, "defining dimension", "nv", nc_def_dim(w->ncid, "nv", 2, &nv));
    SL_TRY_RETURN(e, profile_vars(w, v, nv, &zdim, e));
    if (v->plume && v->plume->n_thermals > 0)
        SL_TRY_RETURN(e, source_vars(w, v->plume, e));
    if (v->atm)
        SL_TRY_RETURN(e, atmosphere_vars(w, v->atm, e));
    if (v->series)
        SL_TRY_RETURN(e, series_vars(w, v, nv, zdim, e));
    for (size_t i = 0; i < v->n_scalars; i++) {
        const sl_output_scalar *sc = &v->scalars[i];
        SL_TRY_RETURN(e, def_scalar(w, sc->name, sc->value, sc->standard_name, sc->long_name,
                                    sc->units, e));
    }
    /* The scalar results again as global attributes result_<name> (their units in
     * result_units): tools that keep only gridded variables (CDO drops scalar
     * variables) keep global attributes, so the key numbers survive `cdo copy`. */
    if (v->n_scalars > 0) {
        size_t cap = 64 * v->n_scalars + 1, off = 0;
        char *units = malloc(cap);
        if (units == NULL)
            SL_FAIL_RETURN(e, SL_ENOMEM, "writing '%s': out of memory", w->path);
        units[0] = '\0';
        int rc = SL_OK;
        for (size_t i = 0; i < v->n_scalars && rc == SL_OK; i++) {
            const sl_output_scalar *sc = &v->scalars[i];
            if (isnan(sc->value))
                continue; /* undefined: no attribute (the variable holds _FillValue) */
            char name[NC_MAX_NAME + 1];
            snprintf(name, sizeof name, "result_%s", sc->name);
            rc = att_double(w, NC_GLOBAL, name, sc->value, e);
            int k = snprintf(units + off, cap - off, "%s%s: %s", off ? "; " : "", sc->name, sc->units);
            if (k > 0 && (size_t)k < cap - off)
                off += (size_t)k;
        }
        if (rc == SL_OK)
            rc = att_text(w, NC_GLOBAL, "result_units", units, e);
        free(units);
        SL_TRY_RETURN(e, rc);
    }
    NCK(w, NC_GLOBAL, "leaving define mode after", NULL, nc_enddef(w->ncid));
    for (size_t i = 0; i < w->n_put; i++) {
        /* Record variables need their counts: nc_put_var writes as many records as the
         * file has, which is none yet. */
        int id = w->put[i].varid, nd = 0, dims[NC_MAX_VAR_DIMS];
        NCK(w, id, "inquiring", NULL, nc_inq_varndims(w->ncid, id, &nd));
        NCK(w, id, "inquiring", NULL, nc_inq_vardimid(w->ncid, id, dims));
        if (nd > 0 && nd <= 4 && dims[0] == w->time_dim) {
            size_t start[4] = {0, 0, 0, 0}, count[4];
            count[0] = w->n_records;
            for (int k = 1; k < nd; k++)
                NCK(w, id, "dimension length of", NULL, nc_inq_dimlen(w->ncid, dims[k], &count[k]));
            NCK(w, id, "writing data of", NULL, nc_put_vara_double(w->ncid, id, start, count, w->put[i].data));
        } else {
            NCK(w, id, "writing data of", NULL, nc_put_var_double(w->ncid, id, w->put[i].data));
        }
    }
    return SL_OK;
}

int sl_output_nc_write(const sl_output_view *v, const char *path, const sl_nc_options *opt,
                       sl_err *e)
{
    SL_TRY_RETURN(e, sl_output_view_check(v, e));
    sl_nc_options o = opt ? *opt : (sl_nc_options){SL_NC_NETCDF4_CLASSIC, 0, 0};
    if (o.deflate_level < 0 || o.deflate_level > 9)
        SL_FAIL_RETURN(e, SL_EUSAGE, "deflate level %d outside 0-9", o.deflate_level);
    ncw *w = calloc(1, sizeof *w);
    if (w == NULL)
        SL_FAIL_RETURN(e, SL_ENOMEM, "writing '%s': out of memory", path);
    w->path = path;
    w->nc4 = o.format == SL_NC_NETCDF4_CLASSIC;
    w->deflate_level = o.deflate_level ? o.deflate_level : 4;
    w->profile_ids[0] = w->profile_ids[1] = w->profile_ids[2] = -1;
    w->time_dim = -1;
    w->ncid = -1;

    sl_nc_file file;
    /* NC_NOATTCREORD: no attribute creation-order index per HDF5 object. */
    int rc = sl_output_nc_create_k(&file, path, w->nc4 ? (NC_NETCDF4 | NC_CLASSIC_MODEL | NC_NOATTCREORD) : 0,
                                   CHUNK_BTREE_K, o.force, e);
    if (rc == SL_OK) {
        w->ncid = file.ncid;
        /* Every variable is written whole (write_all), so no fill value need be
         * stored per variable: without it a netCDF-4 variable's HDF5 object
         * header holds no fill-value data and no old-style fill message (HDF5
         * File Format Specification, IV.A.2.e-f; 32 bytes a variable).  The
         * _FillValue attributes of variables with undefined values are kept. */
        int old_fill;
        if (w->nc4)
            rc = sl_output_nc_check(nc_set_fill(w->ncid, NC_NOFILL, &old_fill), w->ncid, NC_GLOBAL, path,
                                    "setting the fill mode of", NULL, e);
    }
    if (rc == SL_OK) {
        rc = write_all(w, v, e);
    }
    if (rc == SL_OK || file.set != NULL)
        rc = sl_output_nc_finish(&file, rc, e);
    if (rc != SL_OK)
        sl_err_push(e, rc, __func__, __LINE__);
    for (size_t i = 0; i < w->n_owned; i++)
        free(w->owned[i]);
    free(w);
    return rc;
}

/* ------------------------------------------------------------ for the other netCDF writers */

/* The bytes of an in-memory HDF5 image that hold the file: HDF5's core driver
 * hands back its whole buffer, grown in 64 KiB steps, while the superblock
 * records the end-of-file address (HDF5 File Format Specification, section
 * II.A: superblock versions 0-3).  Anything that does not parse as a
 * superblock with base address 0 keeps its full size (netCDF-3 images). */
static size_t hdf5_image_bytes(const unsigned char *p, size_t n)
{
    static const unsigned char sig[8] = {0x89, 'H', 'D', 'F', '\r', '\n', 0x1a, '\n'};
    if (p == NULL || n < 64 || memcmp(p, sig, 8) != 0)
        return n;
    unsigned version = p[8];
    size_t so, at;
    if (version == 0 || version == 1) {
        so = p[13];
        at = (version == 0 ? 24 : 28);
    } else if (version == 2 || version == 3) {
        so = p[9];
        at = 12;
    } else {
        return n;
    }
    if (so != 2 && so != 4 && so != 8)
        return n;
    size_t base_at = at, eof_at = at + 2 * so;
    if (eof_at + so > n)
        return n;
    uint64_t base = 0, eof = 0;
    for (size_t i = 0; i < so; i++) {
        base |= (uint64_t)p[base_at + i] << (8 * i);
        eof |= (uint64_t)p[eof_at + i] << (8 * i);
    }
    if (base != 0 || eof < eof_at + so || eof > n)
        return n;
    return (size_t)eof;
}

/* ---------------------------------------------------------------- the empty netCDF-4 file
 * netCDF-C builds an in-memory netCDF-4 file (nc_create_mem) with HDF5's
 * default file-creation properties, unlike a file it creates on disk: no
 * link or attribute creation order, so the file lists its variables and
 * global attributes alphabetically and netCDF-C refuses to reopen it for
 * writing (NC_ECANTWRITE).  So the empty file is made here with the HDF5
 * library (the one netCDF-C uses) and opened with nc_open_memio:
 *  - link and attribute creation order tracked and indexed on the root
 *    group, as netCDF-C sets for its files (netCDF-C's hdf5create.c), so the
 *    order is the order of definition and the file can be reopened;
 *  - the root group's links and attributes kept in its object header
 *    (compact storage up to 65535 of each; HDF5 User's Guide, "Groups",
 *    H5Pset_link_phase_change and H5Pset_attr_phase_change), instead of a
 *    fractal heap and two version-2 B-trees each;
 *  - for the run and decay files, whose chunked variables each hold one
 *    chunk (sl_output_nc_storage), the B-tree of the chunk indexes with K =
 *    CHUNK_BTREE_K = 1 entries per half node (H5Pset_istore_k; HDF5's default
 *    32 allocates a node of 2.1 kB per chunked variable).  Measured with HDF5
 *    1.10.8: K = 1 makes the index grow with the square of the number of
 *    chunks (43 chunks: 166 kB against 3.7 kB for K = 32), so files of many
 *    chunks (the emission file) keep the default; a run file appended to in
 *    place grows the same way (rewrite it with nccopy first);
 *  - no object modification times (as netCDF-C), the _NCProperties
 *    attribute netCDF-C writes ("version=2,netcdf=...,hdf5=..."), and for
 *    the classic model the _nc3_strict attribute by which netCDF-C knows it.
 * Library version bounds: earliest to 1.8, as netCDF-C sets, so a reader
 * with HDF5 1.8 or later (netCDF-C 4.x) reads it: a non-default istore_k
 * is a version-1 superblock (HDF5 File Format Specification, section II.A,
 * HDF5 1.6 and later), creation-order tracking a version-2 object header of
 * the root group (HDF5 1.8 and later, what every netCDF-4 file created on
 * disk by netCDF-C has). */
static int hdf5_text_att(hid_t loc, const char *name, const char *text)
{
    hid_t type = H5Tcopy(H5T_C_S1), space = H5Screate(H5S_SCALAR), att = -1;
    int ok = type >= 0 && space >= 0 && H5Tset_size(type, strlen(text) + 1) >= 0 &&
             H5Tset_strpad(type, H5T_STR_NULLTERM) >= 0;
    if (ok)
        att = H5Acreate2(loc, name, type, space, H5P_DEFAULT, H5P_DEFAULT);
    ok = ok && att >= 0 && H5Awrite(att, type, text) >= 0;
    if (att >= 0)
        ok = H5Aclose(att) >= 0 && ok;
    if (space >= 0)
        H5Sclose(space);
    if (type >= 0)
        H5Tclose(type);
    return ok;
}

/* The bytes of an empty netCDF-4 file (classic model when CLASSIC; chunk
 * index B-tree K BTREE_K, 0 for HDF5's default) in *IMAGE
 * (malloc'd, *N bytes); 0 when the HDF5 library fails (out of memory). */
static int empty_netcdf4_image(int classic, int btree_k, void **image, size_t *n)
{
    *image = NULL;
    *n = 0;
    int ok = 0;
    hid_t fapl = -1, fcpl = -1, file = -1;
    H5E_BEGIN_TRY
    {
        fapl = H5Pcreate(H5P_FILE_ACCESS);
        fcpl = H5Pcreate(H5P_FILE_CREATE);
        ok = fapl >= 0 && fcpl >= 0 && H5Pset_fapl_core(fapl, 4096, 0) >= 0 &&
             H5Pset_libver_bounds(fapl, H5F_LIBVER_EARLIEST, H5F_LIBVER_V18) >= 0 &&
             (btree_k <= 0 || H5Pset_istore_k(fcpl, (unsigned)btree_k) >= 0) &&
             H5Pset_obj_track_times(fcpl, 0) >= 0 &&
             H5Pset_link_creation_order(fcpl, H5P_CRT_ORDER_TRACKED | H5P_CRT_ORDER_INDEXED) >= 0 &&
             H5Pset_attr_creation_order(fcpl, H5P_CRT_ORDER_TRACKED | H5P_CRT_ORDER_INDEXED) >= 0 &&
             H5Pset_link_phase_change(fcpl, 65535, 65535) >= 0 &&
             H5Pset_attr_phase_change(fcpl, 65535, 65535) >= 0;
        if (ok)
            ok = (file = H5Fcreate("steamloft-image", H5F_ACC_TRUNC, fcpl, fapl)) >= 0;
        char props[128], nc_version[32] = "";
        unsigned major = 0, minor = 0, release = 0;
        sscanf(nc_inq_libvers(), "%31[^ ]", nc_version);
        ok = ok && H5get_libversion(&major, &minor, &release) >= 0;
        snprintf(props, sizeof props, "version=2,netcdf=%s,hdf5=%u.%u.%u", nc_version, major, minor,
                 release);
        ok = ok && hdf5_text_att(file, "_NCProperties", props);
        if (ok && classic) {
            int one = 1;
            hid_t space = H5Screate(H5S_SCALAR), att = -1;
            if (space >= 0)
                att = H5Acreate2(file, "_nc3_strict", H5T_NATIVE_INT, space, H5P_DEFAULT, H5P_DEFAULT);
            ok = att >= 0 && H5Awrite(att, H5T_NATIVE_INT, &one) >= 0;
            if (att >= 0)
                ok = H5Aclose(att) >= 0 && ok;
            if (space >= 0)
                H5Sclose(space);
        }
        ok = ok && H5Fflush(file, H5F_SCOPE_GLOBAL) >= 0;
        ssize_t len = ok ? H5Fget_file_image(file, NULL, 0) : -1;
        if (len > 0 && (*image = malloc((size_t)len)) != NULL &&
            H5Fget_file_image(file, *image, (size_t)len) == len)
            *n = (size_t)len;
        ok = ok && *n > 0;
        if (file >= 0)
            ok = H5Fclose(file) >= 0 && ok;
        if (fcpl >= 0)
            H5Pclose(fcpl);
        if (fapl >= 0)
            H5Pclose(fapl);
    }
    H5E_END_TRY;
    if (!ok) {
        free(*image);
        *image = NULL;
        *n = 0;
    }
    return ok;
}

/* The file is built in memory (an HDF5 image opened with nc_open_memio, or
 * nc_create_mem for netCDF-3; nc_close_memio) and its bytes are then put
 * into the stage with plain write(2): a full disk or a quota is then an
 * ordinary write error with its true cause, never a failure inside the HDF5
 * library (which can crash after a failed write). */
int sl_output_nc_create(sl_nc_file *f, const char *path, int cmode, int force, sl_err *e)
{
    return sl_output_nc_create_k(f, path, cmode, 0, force, e);
}

int sl_output_nc_create_k(sl_nc_file *f, const char *path, int cmode, int btree_k, int force, sl_err *e)
{
    memset(f, 0, sizeof *f);
    f->ncid = -1;
    f->path = path;
    f->set = calloc(1, sizeof *f->set);
    if (f->set == NULL)
        SL_FAIL_RETURN(e, SL_ENOMEM, "writing '%s': out of memory", path);
    const char *stage = NULL;
    int rc = sl_outset_begin_file(f->set, path, force, &stage, e);
    if (rc == SL_OK) {
        const char *slash = strrchr(path, '/');
        snprintf(f->base, sizeof f->base, "%s", slash ? slash + 1 : path);
        sl_outset_forget(f->set, f->base); /* re-added by sl_outset_write_file */
        int st;
        if (cmode & NC_NETCDF4) {
            NC_memio mem = {0, NULL, 0};
            if (!empty_netcdf4_image((cmode & NC_CLASSIC_MODEL) != 0, btree_k, &mem.memory, &mem.size)) {
                st = NC_ENOMEM;
            } else {
                /* netCDF-C owns the image from here (NC_memio without NC_MEMIO_LOCKED) */
                st = nc_open_memio(f->base, NC_WRITE | (cmode & NC_NOATTCREORD), &mem, &f->ncid);
                /* on a failure netCDF-C may already have freed the image: not freed here */
                if (st == NC_NOERR && (st = nc_redef(f->ncid)) != NC_NOERR)
                    (void)nc_abort(f->ncid);
            }
        } else {
            st = nc_create_mem(f->base, cmode, 1 << 16, &f->ncid);
        }
        if (st != NC_NOERR) {
            f->ncid = -1;
            rc = st == NC_ENOMEM ? sl_err_set(e, SL_ENOMEM, __func__, __LINE__, "writing '%s': out of memory", path)
                                 : sl_err_set(e, SL_ECANTCREAT, __func__, __LINE__, "cannot create '%s': %s", path,
                                              nc_strerror(st));
        }
    }
    if (rc != SL_OK) {
        sl_outset_abort(f->set);
        free(f->set);
        f->set = NULL;
    }
    return rc;
}

int sl_output_nc_finish(sl_nc_file *f, int rc, sl_err *e)
{
    if (f->set == NULL)
        return rc != SL_OK ? rc : SL_EINTERNAL;
    if (rc == SL_OK) {
        NC_memio mem = {0, NULL, 0};
        int st = nc_close_memio(f->ncid, &mem);
        f->ncid = -1;
        if (st != NC_NOERR)
            rc = sl_err_set(e, st == NC_ENOMEM ? SL_ENOMEM : SL_EIO, __func__, __LINE__, "writing '%s': closing: %s",
                            f->path, nc_strerror(st));
        else
            rc = sl_outset_write_file(f->set, f->base, mem.memory, hdf5_image_bytes(mem.memory, mem.size), e);
        free(mem.memory);
    }
    if (rc == SL_OK)
        rc = sl_outset_commit(f->set, e);
    if (rc != SL_OK) {
        if (f->ncid >= 0)
            (void)nc_abort(f->ncid);
        sl_outset_abort(f->set);
    }
    f->ncid = -1;
    free(f->set);
    f->set = NULL;
    return rc;
}

int sl_output_nc_check(int status, int ncid, int varid, const char *path, const char *what, const char *name,
                       sl_err *e)
{
    if (status == NC_NOERR)
        return SL_OK;
    ncw w;
    memset(&w, 0, sizeof w);
    w.ncid = ncid;
    w.path = path;
    return nc_fail(&w, varid, what, name, status, e, __LINE__);
}

int sl_output_nc_att_text(int ncid, int varid, const char *path, const char *name, const char *text, sl_err *e)
{
    if (text == NULL)
        return SL_OK;
    return sl_output_nc_check(nc_put_att_text(ncid, varid, name, strlen(text), text), ncid, varid, path,
                              "attribute", name, e);
}
