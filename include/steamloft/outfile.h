/* outfile: safe creation of output files, shared by every writer (netCDF,
 * CSV, plots).
 *
 * An output set is one or more files that appear in one destination
 * directory together or not at all.  Every file is first written into a
 * private staging directory created inside the destination (same file
 * system, so the final rename(2) is atomic); only when every file is
 * complete are they renamed into place.  The guarantees:
 *   - a file that already exists is never replaced unless FORCE is set: the
 *     check happens when the name is added (early, before any work) and
 *     again atomically at the rename (renameat2 RENAME_NOREPLACE, falling
 *     back to link(2)+unlink(2) on file systems without it);
 *   - only a regular file (or nothing) at an output path is ever replaced,
 *     with or without FORCE: a symbolic link, FIFO, device, socket or
 *     directory there fails with SL_ECANTCREAT (exit 73), when the name is
 *     added and again at the rename;
 *   - a missing or unwritable destination fails with SL_ECANTCREAT (exit 73)
 *     naming the path;
 *   - the stage folder is ".steamloft-stage-HOST-PID-XXXXXX"; SIGINT, SIGTERM
 *     and SIGHUP remove it (sl_outset_handle_signals), and one left by a
 *     killed run is removed by the next set begun in that directory on the
 *     same host once process PID is gone;
 *   - after any failure, and after sl_outset_abort(), nothing of the set is
 *     left behind: no staging directory, no partial file, and no file of the
 *     set that was already moved (those are removed again; with FORCE a
 *     replaced older file cannot be brought back, which the contract says).
 * Files are fsync'ed before they are renamed.
 *
 * Usage:
 *   sl_outset set = {0};
 *   SL_TRY_RETURN(e, sl_outset_begin(&set, dir, force, 0, e));
 *   FILE *fp; rc = sl_outset_fopen(&set, "profile.csv", &fp, e);   ... fclose via sl_outset_fclose
 *   const char *p; rc = sl_outset_add(&set, "out.nc", &p, e);      ... nc_create(p, ...)
 *   rc = sl_outset_commit(&set, e);      (on any failure: sl_outset_abort(&set))
 *
 * Not thread-safe per set; distinct sets are independent. */
#ifndef STEAMLOFT_OUTFILE_H
#define STEAMLOFT_OUTFILE_H

#include <stdio.h>

#include "steamloft/err.h"

enum { SL_OUTSET_MAX_FILES = 32, SL_OUTSET_PATH_LEN = 4096, SL_OUTSET_NAME_LEN = 256 };

typedef struct sl_outset {
    int active;                                  /* 1 between begin and commit/abort */
    int force;                                   /* replace existing files */
    int created_dir;                             /* we made dir; remove it on abort */
    char dir[SL_OUTSET_PATH_LEN];                /* destination directory */
    char stage[SL_OUTSET_PATH_LEN];              /* private staging directory inside dir */
    size_t n;                                    /* files added */
    char name[SL_OUTSET_MAX_FILES][SL_OUTSET_NAME_LEN]; /* plain file names */
    char stage_path[SL_OUTSET_MAX_FILES][SL_OUTSET_PATH_LEN]; /* where each is written */
} sl_outset;

/* Start a set in directory DIR.  With CREATE_DIR the directory itself may be
 * missing and is created (one level; its parent must exist) and removed again
 * if the set is aborted while still empty.  Fails with SL_ECANTCREAT naming
 * DIR when it is missing (without CREATE_DIR), not a directory, or not
 * writable.  SET must be zeroed or aborted/committed before. */
int sl_outset_begin(sl_outset *set, const char *dir, int force, int create_dir, sl_err *e);

/* Start a set for the single file PATH (its directory is the destination).
 * Equivalent to begin(dirname) + add(basename).  *STAGE_PATH receives the
 * path to write to. */
int sl_outset_begin_file(sl_outset *set, const char *path, int force, const char **stage_path,
                         sl_err *e);

/* Register file NAME (no '/', not "." or "..") and give the path to write it
 * to in *STAGE_PATH (valid until commit/abort).  Fails with SL_ECANTCREAT
 * when DIR/NAME exists and FORCE is off, or SL_EUSAGE for a bad name or a
 * name added twice. */
int sl_outset_add(sl_outset *set, const char *name, const char **stage_path, sl_err *e);

/* add() and open the staged file for writing with stdio. */
int sl_outset_fopen(sl_outset *set, const char *name, FILE **fp, sl_err *e);

/* Flush, fsync and close FP (opened by sl_outset_fopen for NAME), reporting
 * any write error as SL_EIO naming the final path.  FP is closed even on
 * failure. */
int sl_outset_fclose(sl_outset *set, const char *name, FILE *fp, sl_err *e);

/* add() NAME and write its whole content DATA (LEN bytes) with plain
 * write(2) and fsync; a failure is SL_EIO with the true cause (no space left
 * on device, disk quota exceeded) and leaves no staged file. */
int sl_outset_write_file(sl_outset *set, const char *name, const void *data, size_t len,
                         sl_err *e);

/* Take NAME out of the set again (its staged file, if written, is deleted).
 * For outputs that turn out not to be produced (plots without gnuplot).
 * Unknown names are ignored.  Stage paths handed out for names added after
 * NAME are invalidated (they move up one slot). */
void sl_outset_forget(sl_outset *set, const char *name);

/* The final path of NAME in the destination (for messages), or NULL. */
const char *sl_outset_final_path(const sl_outset *set, const char *name, char *buf, size_t len);

/* Move every staged file into place.  All files must exist in the stage
 * (SL_EINTERNAL otherwise).  On failure nothing of the set remains (see the
 * header comment) and the set is aborted. */
int sl_outset_commit(sl_outset *set, sl_err *e);

/* Remove everything staged; safe on a zeroed, committed or aborted set. */
void sl_outset_abort(sl_outset *set);

/* Install handlers for SIGINT, SIGTERM and SIGHUP (main() calls it once):
 * they remove the stage folders of every set begun and not yet committed or
 * aborted, and exit with status 128 + the signal number.  A signal the
 * parent ignores stays ignored. */
int sl_outset_handle_signals(sl_err *e);

#endif
