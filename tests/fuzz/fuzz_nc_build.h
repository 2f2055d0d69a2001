/* Structure-aware netCDF inputs for the fuzz harnesses of the two netCDF
 * readers (atmosphere and injection profiles).
 *
 * The fuzzer's bytes DATA are used in one of two ways, chosen by the first
 * byte:
 *   - build: the bytes steer a generator that writes a netCDF-3 file close
 *     to a valid one: dimension lengths, the rank and dimensions of every
 *     variable (a 2-D or too-long coordinate, a bounds variable on the wrong
 *     dimension), types, units and standard names from small menus, the
 *     values themselves;
 *   - patch: a valid file is built once, then bytes of it are overwritten
 *     (pairs of offset and value) and it may be cut short: damaged headers,
 *     counts that do not fit, wrong tags.
 * The file is written (in memory, nc_create_mem; then to a private path)
 * for the reader under test.  HDF5-based files are not mutated: crashes
 * inside HDF5 on a damaged file are that library's, not ours. */
#ifndef SL_FUZZ_NC_BUILD_H
#define SL_FUZZ_NC_BUILD_H

#include <netcdf.h>
#include <netcdf_mem.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

typedef struct fz_in {
    const uint8_t *d;
    size_t n, pos;
} fz_in;

static unsigned fz_byte(fz_in *in)
{
    return in->pos < in->n ? in->d[in->pos++] : 0u;
}

static double fz_value(fz_in *in)
{
    static const double menu[] = {0.0, 1.0, -1.0, 1000.0, 15000.0, 30000.0, 250.0, 101325.0,
                                  1e-6, 1e9, 1e300, -1e300, 9.96920996838686905e+36, 0.5, 2.0, 100.0};
    unsigned b = fz_byte(in);
    if (b < 16)
        return menu[b];
    return (double)b * 300.0 + (double)fz_byte(in);
}

/* Which family of files: the atmosphere reader wants standard names, the
 * injection reader an altitude coordinate with bounds and masses. */
enum { FZ_ATMOS = 0, FZ_INJECTION = 1, FZ_GRID = 2 };

/* Build a netCDF-3 file from the bytes of IN into *BUF (malloc'd). */
static int fz_build(fz_in *in, int family, void **buf, size_t *len)
{
    int ncid;
    if (nc_create_mem("fuzz.nc", fz_byte(in) & 1 ? NC_64BIT_OFFSET : 0, 4096, &ncid) != NC_NOERR)
        return -1;
    size_t dimlen[4] = {1 + fz_byte(in) % 12, 1 + fz_byte(in) % 12, 2, 1 + fz_byte(in) % 3};
    static const char *const dimname[4] = {"altitude", "level", "nv", "x"};
    int dims[4];
    for (int i = 0; i < 4; i++)
        nc_def_dim(ncid, dimname[i], fz_byte(in) % 7 == 0 ? NC_UNLIMITED : dimlen[i], &dims[i]);
    static const char *const atm_vars[] = {"z", "t", "p", "q", "h"};
    static const char *const atm_std[] = {"altitude", "air_temperature", "air_pressure",
                                          "mole_fraction_of_water_vapor_in_air",
                                          "geopotential_height", "specific_humidity",
                                          "humidity_mixing_ratio", "air_temperature"};
    static const char *const inj_vars[] = {"altitude", "altitude_bnds", "vapor_mass", "ice_mass",
                                           "latitude", "time", "tropopause_altitude", "cloud_area"};
    static const char *const grid_vars[] = {"lat", "lon", "lat_bnds", "lon_bnds"};
    static const char *const units[] = {"m", "km", "K", "degC", "Pa", "hPa", "1", "ppmv", "kg",
                                        "Tg", "s", "days", "degrees_north", "m2", "degrees_east", "furlong"};
    static const nc_type types[] = {NC_DOUBLE, NC_FLOAT, NC_INT, NC_SHORT, NC_BYTE, NC_CHAR};
    size_t nvars = family == FZ_ATMOS ? 5 : family == FZ_GRID ? 4 : 8;
    int varid[8], rank[8], vdims[8][3];
    for (size_t v = 0; v < nvars; v++) {
        unsigned shape = fz_byte(in);
        rank[v] = (int)(shape % 4 == 3 ? 2 : shape % 4 == 2 ? 0 : 1);
        if (family == FZ_INJECTION && v == 1 && shape % 5)
            rank[v] = 2;
        for (int k = 0; k < rank[v]; k++)
            vdims[v][k] = dims[(shape >> (2 + 2 * k)) % 4];
        if (family == FZ_INJECTION && v == 1 && rank[v] == 2 && shape % 3) {
            vdims[v][0] = dims[0];
            vdims[v][1] = dims[2];
        }
        if (shape % 9 == 0 && rank[v] >= 1)
            vdims[v][0] = dims[0];
        nc_type t = types[fz_byte(in) % (sizeof types / sizeof types[0])];
        const char *name = family == FZ_ATMOS ? atm_vars[v] : family == FZ_GRID ? grid_vars[v] : inj_vars[v];
        if (nc_def_var(ncid, name, t, rank[v], vdims[v], &varid[v]) != NC_NOERR)
            varid[v] = -1;
        if (varid[v] < 0)
            continue;
        const char *u = units[fz_byte(in) % 16];
        nc_put_att_text(ncid, varid[v], "units", strlen(u), u);
        if (family == FZ_ATMOS) {
            const char *sn = atm_std[(v + fz_byte(in) % 3) % 8];
            nc_put_att_text(ncid, varid[v], "standard_name", strlen(sn), sn);
            if (fz_byte(in) % 5 == 0) {
                double f = fz_value(in);
                nc_put_att_double(ncid, varid[v], "_FillValue", t == NC_CHAR ? NC_DOUBLE : t, 1, &f);
            }
            if (fz_byte(in) % 7 == 0) {
                double sf = fz_value(in);
                nc_put_att_double(ncid, varid[v], "scale_factor", NC_DOUBLE, 1, &sf);
            }
        } else if (family == FZ_GRID) {
            if (v < 2 && fz_byte(in) % 3) {
                const char *b = v == 0 ? "lat_bnds" : fz_byte(in) % 4 ? "lon_bnds" : "lat";
                nc_put_att_text(ncid, varid[v], "bounds", strlen(b), b);
            }
        } else if (v == 0 && fz_byte(in) % 6) {
            const char *b = fz_byte(in) % 4 ? "altitude_bnds" : "vapor_mass";
            nc_put_att_text(ncid, varid[v], "bounds", strlen(b), b);
        }
    }
    if (nc_enddef(ncid) != NC_NOERR) {
        nc_abort(ncid);
        return -1;
    }
    for (size_t v = 0; v < nvars; v++) {
        if (varid[v] < 0)
            continue;
        size_t count[3] = {1, 1, 1}, start[3] = {0, 0, 0}, total = 1;
        for (int k = 0; k < rank[v]; k++) {
            size_t l;
            nc_inq_dimlen(ncid, vdims[v][k], &l);
            if (l == 0)
                l = 1 + fz_byte(in) % 4; /* records */
            count[k] = l;
            total *= l;
        }
        double *vals = malloc(total * sizeof *vals);
        if (vals == NULL)
            continue;
        /* Mostly an increasing sequence, sometimes the fuzzer's own values. */
        double base = fz_value(in), step = fz_value(in);
        for (size_t i = 0; i < total; i++)
            vals[i] = fz_byte(in) % 8 == 0 ? fz_value(in) : base + step * (double)i;
        nc_put_vara_double(ncid, varid[v], start, count, vals);
        free(vals);
    }
    NC_memio mem = {0, NULL, 0};
    if (nc_close_memio(ncid, &mem) != NC_NOERR)
        return -1;
    *buf = mem.memory;
    *len = mem.size;
    return 0;
}

/* Write the file for the reader: build or patch per the first byte. */
static int fz_write_input(const uint8_t *data, size_t size, int family, const char *path)
{
    fz_in in = {data, size, 0};
    void *buf = NULL;
    size_t len = 0;
    unsigned mode = fz_byte(&in);
    if (mode & 1) {
        /* Patch a file built from fixed bytes (a valid one most of the time). */
        static const uint8_t seed_atm[] = {0, 4, 4, 2, 1, 1, 1, 1, 0, 0, 0, 4, 0, 0, 0,
                                           0, 0, 1, 0, 0, 2, 0, 0, 4, 0, 0, 6, 0};
        fz_in s = {seed_atm, sizeof seed_atm, 0};
        if (fz_build(&s, family, &buf, &len) != 0)
            return -1;
        unsigned cut = fz_byte(&in);
        while (in.pos + 3 <= in.n) {
            size_t off = ((size_t)fz_byte(&in) << 8 | fz_byte(&in)) % (len ? len : 1);
            ((uint8_t *)buf)[off] = (uint8_t)fz_byte(&in);
        }
        if (cut & 0x80)
            len = len * (cut & 0x7f) / 128;
    } else if (fz_build(&in, family, &buf, &len) != 0) {
        return -1;
    }
    FILE *f = fopen(path, "wb");
    if (f == NULL) {
        free(buf);
        return -1;
    }
    fwrite(buf, 1, len, f);
    fclose(f);
    free(buf);
    return 0;
}

#endif
