/* outfile: safe creation of output files (see include/steamloft/outfile.h).
 *
 * No physics here: this is the file-system discipline every writer shares.
 * The method is the usual one for atomic replacement on POSIX systems: write
 * into a temporary location on the same file system, fsync, then rename(2),
 * which replaces the directory entry atomically.  Several files go through
 * one private staging directory (mkdtemp(3) inside the destination) so that
 * a set (CSV files, plot data, script and images) appears together.  Refusal
 * to overwrite uses renameat2(2) with RENAME_NOREPLACE (Linux >= 3.15, glibc
 * >= 2.28), with link(2)+unlink(2) as the fallback where a file system does
 * not support that flag; both fail with EEXIST without touching the old
 * file.  With --force an existing file is first hard-linked into the stage,
 * so that a failure later in the same commit can put it back. */
#include "steamloft/outfile.h"

#include <dirent.h>
#include <errno.h>
#include <fcntl.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/types.h>
#include <unistd.h>

static const char stage_template[] = ".steamloft-stage-XXXXXX";
static const char backup_prefix[] = ".replaced.";

/* OUT = A "/" PREFIX B; 0 (and OUT empty) when it does not fit in LEN. */
static int join3(char *out, size_t len, const char *a, const char *prefix, const char *b)
{
    size_t la = strlen(a), lp = strlen(prefix), lb = strlen(b);
    if (la + 1 + lp + lb + 1 > len) {
        if (len)
            out[0] = '\0';
        return 0;
    }
    memcpy(out, a, la);
    out[la] = '/';
    memcpy(out + la + 1, prefix, lp);
    memcpy(out + la + 1 + lp, b, lb + 1);
    return 1;
}

static int join(char *out, size_t len, const char *a, const char *b)
{
    return join3(out, len, a, "", b);
}

/* Remove every entry of the stage directory and the directory itself. */
static void remove_stage(const char *stage)
{
    if (stage[0] == '\0')
        return;
    DIR *d = opendir(stage);
    if (d != NULL) {
        struct dirent *de;
        char p[SL_OUTSET_PATH_LEN + SL_OUTSET_NAME_LEN + 2];
        while ((de = readdir(d)) != NULL) {
            if (strcmp(de->d_name, ".") == 0 || strcmp(de->d_name, "..") == 0)
                continue;
            if (join(p, sizeof p, stage, de->d_name))
                (void)unlink(p);
        }
        closedir(d);
    }
    (void)rmdir(stage);
}

int sl_outset_begin(sl_outset *set, const char *dir, int force, int create_dir, sl_err *e)
{
    if (set->active)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "output set for '%s' begun twice", set->dir);
    memset(set, 0, sizeof *set);
    if (dir == NULL || dir[0] == '\0')
        dir = ".";
    if (strlen(dir) + sizeof stage_template + 2 >= sizeof set->dir)
        SL_FAIL_RETURN(e, SL_ECANTCREAT, "output directory path is too long: '%.80s...'", dir);
    strcpy(set->dir, dir);
    size_t L = strlen(set->dir);
    while (L > 1 && set->dir[L - 1] == '/')
        set->dir[--L] = '\0';
    set->force = force != 0;

    struct stat st;
    if (stat(set->dir, &st) != 0) {
        if (errno == ENOENT && create_dir) {
            if (mkdir(set->dir, 0777) != 0)
                SL_FAIL_RETURN(e, SL_ECANTCREAT, "cannot create output directory '%s': %s",
                               set->dir, strerror(errno));
            set->created_dir = 1;
        } else {
            SL_FAIL_RETURN(e, SL_ECANTCREAT, "output directory '%s': %s", set->dir,
                           strerror(errno));
        }
    } else if (!S_ISDIR(st.st_mode)) {
        SL_FAIL_RETURN(e, SL_ECANTCREAT, "output directory '%s' is not a directory", set->dir);
    }
    /* mkdtemp both proves the directory is writable (it honours read-only
     * mounts and permissions, unlike access(2) for root) and makes the stage. */
    if (!join(set->stage, sizeof set->stage, set->dir, stage_template) ||
        mkdtemp(set->stage) == NULL) {
        int err = errno;
        set->stage[0] = '\0';
        if (set->created_dir)
            (void)rmdir(set->dir);
        SL_FAIL_RETURN(e, SL_ECANTCREAT, "cannot write in output directory '%s': %s", set->dir,
                       strerror(err));
    }
    set->active = 1;
    return SL_OK;
}

int sl_outset_begin_file(sl_outset *set, const char *path, int force, const char **stage_path,
                         sl_err *e)
{
    if (path == NULL || path[0] == '\0')
        SL_FAIL_RETURN(e, SL_EUSAGE, "empty output file name");
    const char *slash = strrchr(path, '/');
    const char *base = slash ? slash + 1 : path;
    if (base[0] == '\0')
        SL_FAIL_RETURN(e, SL_ECANTCREAT, "output path '%s' names a directory, not a file", path);
    char dir[SL_OUTSET_PATH_LEN];
    if (slash == NULL) {
        strcpy(dir, ".");
    } else if (slash == path) {
        strcpy(dir, "/");
    } else {
        size_t n = (size_t)(slash - path);
        if (n >= sizeof dir)
            SL_FAIL_RETURN(e, SL_ECANTCREAT, "output path is too long: '%.80s...'", path);
        memcpy(dir, path, n);
        dir[n] = '\0';
    }
    SL_TRY_RETURN(e, sl_outset_begin(set, dir, force, 0, e));
    int rc = sl_outset_add(set, base, stage_path, e);
    if (rc != SL_OK) {
        sl_outset_abort(set);
        return sl_err_push(e, rc, __func__, __LINE__);
    }
    return SL_OK;
}

static long find_name(const sl_outset *set, const char *name)
{
    for (size_t i = 0; i < set->n; i++)
        if (strcmp(set->name[i], name) == 0)
            return (long)i;
    return -1;
}

int sl_outset_add(sl_outset *set, const char *name, const char **stage_path, sl_err *e)
{
    if (!set->active)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "output set not begun (adding '%s')", name);
    if (name == NULL || name[0] == '\0' || strchr(name, '/') != NULL || strcmp(name, ".") == 0 ||
        strcmp(name, "..") == 0 || strncmp(name, backup_prefix, sizeof backup_prefix - 1) == 0 ||
        strlen(name) >= SL_OUTSET_NAME_LEN)
        SL_FAIL_RETURN(e, SL_EUSAGE, "'%s' is not a valid output file name", name ? name : "");
    if (find_name(set, name) >= 0)
        SL_FAIL_RETURN(e, SL_EUSAGE, "output file '%s' given twice", name);
    if (set->n >= SL_OUTSET_MAX_FILES)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "more than %d files in one output set",
                       SL_OUTSET_MAX_FILES);
    char final[SL_OUTSET_PATH_LEN];
    if (!join(final, sizeof final, set->dir, name))
        SL_FAIL_RETURN(e, SL_ECANTCREAT, "output path too long for '%s'", name);
    struct stat st;
    if (lstat(final, &st) == 0) {
        if (!set->force)
            SL_FAIL_RETURN(e, SL_ECANTCREAT,
                           "'%s' exists; not overwritten (use --force to replace it)", final);
        if (S_ISDIR(st.st_mode))
            SL_FAIL_RETURN(e, SL_ECANTCREAT, "'%s' is a directory; not replaced", final);
    }
    if (!join(set->stage_path[set->n], sizeof set->stage_path[0], set->stage, name))
        SL_FAIL_RETURN(e, SL_ECANTCREAT, "output path too long for '%s'", name);
    strcpy(set->name[set->n], name);
    if (stage_path)
        *stage_path = set->stage_path[set->n];
    set->n++;
    return SL_OK;
}

int sl_outset_fopen(sl_outset *set, const char *name, FILE **fp, sl_err *e)
{
    const char *p = NULL;
    *fp = NULL;
    SL_TRY_RETURN(e, sl_outset_add(set, name, &p, e));
    FILE *f = fopen(p, "wx");
    if (f == NULL)
        SL_FAIL_RETURN(e, SL_ECANTCREAT, "cannot create '%s/%s': %s", set->dir, name,
                       strerror(errno));
    *fp = f;
    return SL_OK;
}

int sl_outset_fclose(sl_outset *set, const char *name, FILE *fp, sl_err *e)
{
    if (fp == NULL)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "closing '%s': no open stream", name);
    int bad = ferror(fp) != 0;
    int err = bad ? EIO : 0;
    if (fflush(fp) != 0 && !bad) {
        bad = 1;
        err = errno;
    }
    if (!bad && fsync(fileno(fp)) != 0 && errno != EINVAL) {
        bad = 1;
        err = errno;
    }
    if (fclose(fp) != 0 && !bad) {
        bad = 1;
        err = errno;
    }
    if (bad)
        SL_FAIL_RETURN(e, SL_EIO, "writing '%s/%s': %s", set->dir, name, strerror(err));
    return SL_OK;
}

void sl_outset_forget(sl_outset *set, const char *name)
{
    long i = set && set->active ? find_name(set, name) : -1;
    if (i < 0)
        return;
    (void)unlink(set->stage_path[i]);
    for (size_t k = (size_t)i; k + 1 < set->n; k++) {
        memcpy(set->name[k], set->name[k + 1], sizeof set->name[k]);
        memcpy(set->stage_path[k], set->stage_path[k + 1], sizeof set->stage_path[k]);
    }
    set->n--;
}

const char *sl_outset_final_path(const sl_outset *set, const char *name, char *buf, size_t len)
{
    if (find_name(set, name) < 0 || !join(buf, len, set->dir, name))
        return NULL;
    return buf;
}

/* fsync a file given by path (netCDF files are closed by the library). */
static int fsync_path(const char *path)
{
    int fd = open(path, O_RDONLY | O_CLOEXEC);
    if (fd < 0)
        return -1;
    int rc = fsync(fd);
    int err = errno;
    close(fd);
    if (rc != 0 && err == EINVAL) /* file system without fsync support */
        rc = 0;
    errno = err;
    return rc;
}

/* Move SRC to DST without ever replacing an existing DST. */
static int move_noreplace(const char *src, const char *dst)
{
    if (renameat2(AT_FDCWD, src, AT_FDCWD, dst, RENAME_NOREPLACE) == 0)
        return 0;
    if (errno != EINVAL && errno != ENOSYS && errno != ENOTSUP)
        return -1;
    if (link(src, dst) != 0)
        return -1;
    (void)unlink(src);
    return 0;
}

int sl_outset_commit(sl_outset *set, sl_err *e)
{
    if (!set->active)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "output set not begun at commit");
    char final[SL_OUTSET_PATH_LEN];
    char backup[SL_OUTSET_PATH_LEN];
    int replaced[SL_OUTSET_MAX_FILES] = {0};
    size_t moved = 0;
    int rc = SL_OK;
    struct stat st;

    for (size_t i = 0; i < set->n; i++) {
        if (stat(set->stage_path[i], &st) != 0 || !S_ISREG(st.st_mode)) {
            sl_err_set(e, SL_EINTERNAL, __func__, __LINE__,
                       "output '%s/%s' was registered but never written", set->dir, set->name[i]);
            rc = SL_EINTERNAL;
            goto rollback;
        }
        if (fsync_path(set->stage_path[i]) != 0) {
            sl_err_set(e, SL_EIO, __func__, __LINE__, "syncing '%s/%s': %s", set->dir,
                       set->name[i], strerror(errno));
            rc = SL_EIO;
            goto rollback;
        }
    }
    for (size_t i = 0; i < set->n; i++) {
        join(final, sizeof final, set->dir, set->name[i]);
        if (set->force) {
            if (join3(backup, sizeof backup, set->stage, backup_prefix, set->name[i]) &&
                link(final, backup) == 0)
                replaced[i] = 1;
            if (rename(set->stage_path[i], final) != 0) {
                sl_err_set(e, SL_ECANTCREAT, __func__, __LINE__, "cannot create '%s': %s", final,
                           strerror(errno));
                rc = SL_ECANTCREAT;
                goto rollback;
            }
        } else if (move_noreplace(set->stage_path[i], final) != 0) {
            if (errno == EEXIST)
                sl_err_set(e, SL_ECANTCREAT, __func__, __LINE__,
                           "'%s' exists; not overwritten (use --force to replace it)", final);
            else
                sl_err_set(e, SL_ECANTCREAT, __func__, __LINE__, "cannot create '%s': %s", final,
                           strerror(errno));
            rc = SL_ECANTCREAT;
            goto rollback;
        }
        moved = i + 1;
    }
    /* The directory entries are durable once the directory is synced. */
    (void)fsync_path(set->dir);
    remove_stage(set->stage);
    memset(set, 0, sizeof *set);
    return SL_OK;

rollback:
    for (size_t i = 0; i < moved; i++) {
        join(final, sizeof final, set->dir, set->name[i]);
        if (replaced[i]) {
            if (join3(backup, sizeof backup, set->stage, backup_prefix, set->name[i]))
                (void)rename(backup, final);
        } else {
            (void)unlink(final);
        }
    }
    sl_outset_abort(set);
    return rc;
}

void sl_outset_abort(sl_outset *set)
{
    if (set == NULL || !set->active)
        return;
    remove_stage(set->stage);
    if (set->created_dir)
        (void)rmdir(set->dir); /* only succeeds when empty: never removes user files */
    memset(set, 0, sizeof *set);
}
