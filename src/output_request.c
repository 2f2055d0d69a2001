/* output_request: parse, check and write the file outputs of a command (see
 * include/steamloft/output_request.h).  No physics; the writers are
 * output_nc, output_csv and plot, every file through outfile. */
#include "steamloft/output_request.h"

#include "steamloft/outfile.h"
#include "steamloft/output_csv.h"
#include "steamloft/plot.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <unistd.h>

/* Every name a CSV or plot directory may receive (checked before a run). */
static const char *const csv_names[] = {"profile.csv", "background.csv", "series.csv",
                                        "series_layers.csv", "sources.csv"};
static const char *const plot_names[] = {"profile.dat", "background.dat", "decay.dat",
                                         "column.dat",  "steamloft.gp",   "profile.svg",
                                         "profile.png", "decay.svg",      "decay.png",
                                         "column.svg",  "column.png"};

int sl_output_request_is_option(int c)
{
    return c == 'o' || c == SL_OUTOPT_FORMAT || c == SL_OUTOPT_CSV || c == SL_OUTOPT_PLOT ||
           c == SL_OUTOPT_NO_RENDER;
}

int sl_output_request_is_nc_name(const char *path)
{
    size_t n = strlen(path);
    const char *base = strrchr(path, '/');
    base = base ? base + 1 : path;
    return n > 3 && strlen(base) > 3 && strcasecmp(path + n - 3, ".nc") == 0;
}

int sl_output_request_option(sl_output_request *rq, int c, const char *arg, sl_err *e)
{
    switch (c) {
    case 'o':
        if (strcmp(arg, "-") == 0)
            SL_FAIL_RETURN(e, SL_EUSAGE,
                           "-o: netCDF cannot be written to standard output; give a file name");
        if (arg[0] == '\0')
            SL_FAIL_RETURN(e, SL_EUSAGE, "-o: empty file name");
        /* The format follows the name: -o writes netCDF, so the name says so
         * (never netCDF under a .csv name, nor anything else under .nc). */
        if (!sl_output_request_is_nc_name(arg))
            SL_FAIL_RETURN(e, SL_EUSAGE,
                           "-o %s: -o writes netCDF, so the file name must end in .nc; for CSV "
                           "files give --csv DIR, for plots --plot DIR",
                           arg);
        rq->nc_path = arg;
        return SL_OK;
    case SL_OUTOPT_FORMAT:
        SL_TRY_RETURN(e, sl_output_nc_parse_format(arg, &rq->format, e));
        rq->format_given = 1;
        return SL_OK;
    case SL_OUTOPT_CSV:
        if (arg[0] == '\0')
            SL_FAIL_RETURN(e, SL_EUSAGE, "--csv: empty directory name");
        rq->csv_dir = arg;
        return SL_OK;
    case SL_OUTOPT_PLOT:
        if (arg[0] == '\0')
            SL_FAIL_RETURN(e, SL_EUSAGE, "--plot: empty directory name");
        rq->plot_dir = arg;
        return SL_OK;
    case SL_OUTOPT_NO_RENDER:
        rq->no_render = 1;
        return SL_OK;
    default:
        SL_FAIL_RETURN(e, SL_EINTERNAL, "option code %d is not an output option", c);
    }
}

int sl_output_request_any(const sl_output_request *rq)
{
    return rq->nc_path || rq->csv_dir || rq->plot_dir;
}

static int preflight_dir(const char *dir, const char *const *names, size_t n, int force, sl_err *e)
{
    sl_outset *set = calloc(1, sizeof *set);
    if (set == NULL)
        SL_FAIL_RETURN(e, SL_ENOMEM, "out of memory");
    int rc = sl_outset_begin(set, dir, force, 1, e);
    for (size_t i = 0; rc == SL_OK && i < n; i++)
        rc = sl_outset_add(set, names[i], NULL, e);
    sl_outset_abort(set); /* removes the stage, and the directory if we made it */
    free(set);
    return rc;
}

int sl_output_request_preflight(const sl_output_request *rq, int force, sl_err *e)
{
    if (rq->format_given && rq->nc_path == NULL)
        SL_FAIL_RETURN(e, SL_EUSAGE, "--format applies to the netCDF file: give -o FILE.nc too");
    if (rq->no_render && rq->plot_dir == NULL)
        SL_FAIL_RETURN(e, SL_EUSAGE, "--no-render applies to --plot DIR");
    if (rq->nc_path) {
        sl_outset *set = calloc(1, sizeof *set);
        if (set == NULL)
            SL_FAIL_RETURN(e, SL_ENOMEM, "out of memory");
        int rc = sl_outset_begin_file(set, rq->nc_path, force, NULL, e);
        sl_outset_abort(set);
        free(set);
        SL_TRY_RETURN(e, rc);
    }
    if (rq->csv_dir)
        SL_TRY_RETURN(e, preflight_dir(rq->csv_dir, csv_names,
                                       sizeof csv_names / sizeof csv_names[0], force, e));
    if (rq->plot_dir)
        SL_TRY_RETURN(e, preflight_dir(rq->plot_dir, plot_names,
                                       sizeof plot_names / sizeof plot_names[0], force, e));
    return SL_OK;
}

/* Remove what an earlier output of this command created (only without
 * force: then preflight proved none of it existed before). */
static void undo_outputs(const sl_output_request *rq, int nc_done, int csv_done)
{
    char p[4096];
    if (nc_done)
        (void)unlink(rq->nc_path);
    if (csv_done) {
        for (size_t i = 0; i < sizeof csv_names / sizeof csv_names[0]; i++) {
            snprintf(p, sizeof p, "%s/%s", rq->csv_dir, csv_names[i]);
            (void)unlink(p);
        }
        (void)rmdir(rq->csv_dir); /* only when empty: never removes other files */
    }
}

int sl_output_request_write(const sl_output_request *rq, const sl_output_view *v,
                            const sl_cli_globals *g, const char *cmd, sl_err *e)
{
    const char *prog = g && g->prog ? g->prog : "steamloft";
    int force = g ? g->force : 0, verbose = g && g->verbosity > 0, quiet = g && g->verbosity < 0;
    int nc_done = 0, csv_done = 0, rc = SL_OK;
    if (rq->nc_path) {
        sl_nc_options o = {rq->format, 0, force};
        rc = sl_output_nc_write(v, rq->nc_path, &o, e);
        if (rc != SL_OK)
            goto fail;
        nc_done = 1;
        if (verbose)
            fprintf(stderr, "%s %s: wrote %s\n", prog, cmd, rq->nc_path);
    }
    if (rq->csv_dir) {
        rc = sl_output_csv_write(v, rq->csv_dir, force, e);
        if (rc != SL_OK)
            goto fail;
        csv_done = 1;
        if (verbose)
            fprintf(stderr, "%s %s: wrote CSV files into %s\n", prog, cmd, rq->csv_dir);
    }
    if (rq->plot_dir) {
        sl_plot_options po = {force, !rq->no_render, NULL};
        sl_plot_result res;
        rc = sl_plot_write(v, rq->plot_dir, &po, &res, e);
        if (rc != SL_OK)
            goto fail;
        if (res.warning[0] && !quiet && !rq->no_render)
            fprintf(stderr, "%s %s: warning: %s\n", prog, cmd, res.warning);
        if (verbose)
            fprintf(stderr, "%s %s: wrote %zu plot files into %s%s\n", prog, cmd, res.n_files,
                    rq->plot_dir, res.rendered ? " (SVG and PNG rendered)" : "");
    }
    return SL_OK;
fail:
    /* All or nothing across the outputs too, as far as it is safe: what this
     * command created is removed again; files replaced under --force stay
     * (complete, from this run). */
    if (!force)
        undo_outputs(rq, nc_done, csv_done);
    return sl_err_push(e, rc, __func__, __LINE__);
}
