/* output_nc: the results of one run as a CF-1.11 netCDF file.
 *
 * Layout (names are the netCDF variable names):
 *   altitude(altitude), altitude_bnds(altitude,nv)  band centres and edges, m, positive up, axis Z
 *   vapor_mass, ice_mass (altitude)                  lofted mass per band, kg
 *   vapor_mass_content (altitude)                    standard_name
 *       mass_content_of_water_vapor_in_atmosphere_layer, kg m-2, averaged over the Earth
 *   cloud_vapor_mass_content (altitude), cloud_area  the same over the young cloud (area known)
 *   total_vapor_mass, total_ice_mass, tropopause_altitude, stratospheric_water,
 *       latitude, injection_time (scalars)
 *   atm_altitude(atm_altitude) with air_temperature, air_pressure, air_density,
 *       h2o_mole_fraction (mole_fraction_of_water_vapor_in_air), buoyancy_frequency_squared,
 *       background_stratospheric_water_mass/_column     the background used
 *   time(time) days since the event, calendar standard; lat(lat), lat_bnds(lat,nv) regions;
 *       region_tropopause_altitude(lat); box_bottom, box_top (lat,<z>) each region's boxes
 *   excess_water_mass(time,lat,<z>), mole_fraction_anomaly(time,<z>), global_excess_water_mass,
 *       column_anomaly, local_column_anomaly, percent_of_background, forcing_indicator,
 *       removed_<sink> (time)                        the box-model series; <z> is altitude when the
 *                                                    box layers equal the bands, else layer(layer)
 *                                                    with layer_bnds
 *   source_kind(source), source_regime(source), regime  (a run) CF flag variables (NC_BYTE,
 *       flag_values 0 1 2): the kind ("sea_plume airburst explosion") and the regime
 *       ("thermal blow-out ballistic") of each source of the plume stage, in the order of
 *       the JSON "sources"/"thermals", and the event's regime (the highest)
 *   one scalar variable per sl_output_scalar (e-folding time, burst altitude, ...)
 *   Undefined results are _FillValue (CF 2.5.1), never 0: excess_water_mass where a
 *   region has no box in a layer (below its tropopause), and a scalar the run cannot
 *   give (an e-folding time when nothing entered the stratosphere: null in the JSON,
 *   and no result_<name> attribute)
 *   global attributes: Conventions, title, source, history (UTC time and the command line),
 *       references (the published methods used), comment (the caution, the validity note),
 *       tool_version, git_hash, event_time, scenario_file, validity_warning,
 *       background_atmosphere(_source), scenario_parameter_origins, and scenario_<section>_<key>
 *       for every scenario parameter (numbers in the key's unit).
 * Standard names come only from the CF standard-name table (version 83); a
 * quantity without one (mass per band in kg, anomalies, the forcing
 * indicator) has long_name and units only.  Data are written in double
 * precision so that the masses read back equal the run's to rounding.
 * netCDF-4 and netCDF-3 files of one run hold the same content; in netCDF-4
 * each variable's storage is chosen by sl_output_nc_storage (compact,
 * contiguous, or one chunk shuffled and deflated), lossless.
 *
 * The file is written through the outfile module: a temporary file in the
 * same directory, renamed into place when complete; an existing file is not
 * replaced unless FORCE; no partial file remains on any error.  Every
 * netCDF-C call is checked; a failure names the file, the variable or
 * attribute and nc_strerror's text.  netCDF-C is not thread-safe: call from
 * one thread. */
#ifndef STEAMLOFT_OUTPUT_NC_H
#define STEAMLOFT_OUTPUT_NC_H

#include "steamloft/err.h"
#include "steamloft/outfile.h"
#include "steamloft/output.h"

typedef enum sl_nc_format {
    SL_NC_NETCDF4_CLASSIC = 0, /* HDF5-based netCDF-4, classic data model, deflate */
    SL_NC_CLASSIC = 1          /* netCDF-3 classic format (CDF-1), no compression */
} sl_nc_format;

typedef struct sl_nc_options {
    sl_nc_format format;
    int deflate_level; /* 0-9, netCDF-4 only; 0 means the default (4) */
    int force;         /* replace an existing file */
} sl_nc_options;

/* Parse "netcdf4" / "netcdf4-classic" / "nc4" or "classic" / "netcdf3" / "nc3"
 * into *FMT; SL_EUSAGE naming the valid values otherwise. */
int sl_output_nc_parse_format(const char *text, sl_nc_format *fmt, sl_err *e);

/* Write view V (checked with sl_output_view_check) to PATH.  Errors:
 * SL_ECANTCREAT (directory missing or read-only, file exists without
 * force), SL_EIO (a netCDF call failed while writing), SL_EINTERNAL (bad
 * view).  On any error PATH is untouched and no temporary file remains. */
int sl_output_nc_write(const sl_output_view *v, const char *path, const sl_nc_options *opt,
                       sl_err *e);

/* For the other netCDF writers of the output layer (the ensemble file,
 * output_ensemble.c), so every netCDF message has one form: a netCDF-C
 * STATUS other than NC_NOERR becomes SL_EIO "writing 'PATH': WHAT 'NAME' of
 * VARIABLE: nc_strerror"; NC_NOERR gives SL_OK. */
int sl_output_nc_check(int status, int ncid, int varid, const char *path, const char *what, const char *name,
                       sl_err *e);
/* One netCDF file of the output layer, built in memory and put on disk with
 * write(2) (so a full disk is an ordinary write error, exit 74 with its true
 * cause), staged and renamed into place: sl_output_nc_create opens F->ncid
 * with netCDF-C creation mode CMODE (0: netCDF-3 classic); the caller
 * defines and writes through F->ncid, then sl_output_nc_finish(F, RC, E)
 * with its status RC: on SL_OK it closes, writes and renames, else (or when
 * that fails) it discards everything; it returns the final status and frees
 * F's resources.  On an error of sl_output_nc_create nothing is left. */
typedef struct sl_nc_file {
    int ncid;
    const char *path;              /* final path, for messages */
    char base[SL_OUTSET_NAME_LEN]; /* its file name */
    sl_outset *set;
} sl_nc_file;
int sl_output_nc_create(sl_nc_file *f, const char *path, int cmode, int force, sl_err *e);
/* The same with the B-tree K of the netCDF-4 file's chunk indexes (HDF5's
 * istore_k; 0: HDF5's default, 32).  A small K saves about 2 kB per chunked
 * variable of one chunk but makes an index of many chunks grow with their
 * square (output_nc.c): only for files whose chunked variables are one chunk
 * each.  A netCDF-4 file of either lists its variables and attributes in the
 * order they were defined and can be reopened for writing by netCDF-C. */
int sl_output_nc_create_k(sl_nc_file *f, const char *path, int cmode, int btree_k, int force, sl_err *e);
/* The K for files whose chunked variables are one chunk each. */
enum { SL_NC_ONE_CHUNK_BTREE_K = 1 };
int sl_output_nc_finish(sl_nc_file *f, int rc, sl_err *e);

/* The storage of NC_DOUBLE variable VARID of a netCDF-4 file NCID (call in
 * define mode, before the data are written), chosen from what the HDF5 file
 * format charges (output_nc.c says how): a variable on the unlimited
 * dimension is chunked as one chunk of its N values and shuffled and deflated
 * when that is estimated to save bytes; a fixed-size one is chunked and
 * deflated only when the estimated saving exceeds the chunk index, else
 * compact when small, else contiguous.  DATA (N values, NULL if unknown) is
 * what will be written; DEFLATE_LEVEL 1-9 (0: 4).  Lossless: the values read
 * back are the values written.  Errors as sl_output_nc_check. */
int sl_output_nc_storage(int ncid, int varid, const double *data, size_t n, int deflate_level,
                         const char *path, sl_err *e);

/* A text attribute (NC_CHAR, so netCDF-3 readers work), checked as above;
 * TEXT NULL writes nothing. */
int sl_output_nc_att_text(int ncid, int varid, const char *path, const char *name, const char *text, sl_err *e);

#endif
