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
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/types.h>
#include <unistd.h>

/* Stage folders are named ".steamloft-stage-HOST-PID-XXXXXX": a run killed
 * with SIGKILL leaves one behind, and the next run writing to the same
 * directory on the same host removes it when process PID no longer exists. */
static const char stage_prefix[] = ".steamloft-stage-";
static const char backup_prefix[] = ".replaced.";

/* The one mutable static of the program: the output sets that have a stage
 * folder, so that SIGINT, SIGTERM and SIGHUP can remove them (see
 * sl_outset_handle_signals).  Touched only by begin/commit/abort of a set and
 * read by the handler; a slot is a pointer store, atomic on every target. */
enum { MAX_LIVE_SETS = 16 };
static sl_outset *volatile live_sets[MAX_LIVE_SETS];

static void live_add(sl_outset *set)
{
    for (int i = 0; i < MAX_LIVE_SETS; i++)
        if (live_sets[i] == NULL) {
            live_sets[i] = set;
            return;
        }
}

static void live_remove(const sl_outset *set)
{
    for (int i = 0; i < MAX_LIVE_SETS; i++)
        if (live_sets[i] == set)
            live_sets[i] = NULL;
}

/* What kind of file ST is, for messages. */
static const char *file_kind(const struct stat *st)
{
    if (S_ISLNK(st->st_mode))
        return "a symbolic link";
    if (S_ISFIFO(st->st_mode))
        return "a FIFO (named pipe)";
    if (S_ISCHR(st->st_mode))
        return "a character device";
    if (S_ISBLK(st->st_mode))
        return "a block device";
    if (S_ISSOCK(st->st_mode))
        return "a socket";
    if (S_ISDIR(st->st_mode))
        return "a directory";
    return "not a regular file";
}

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

/* Remove stage folders in DIR left by killed runs of this HOST: the name
 * ends in "-HOST-PID-XXXXXX" and process PID is gone. */
static void remove_stale_stages(const char *dir, const char *host)
{
    DIR *d = opendir(dir);
    if (d == NULL)
        return;
    size_t lp = sizeof stage_prefix - 1, lh = strlen(host);
    struct dirent *de;
    char p[SL_OUTSET_PATH_LEN];
    while ((de = readdir(d)) != NULL) {
        const char *n = de->d_name;
        if (strncmp(n, stage_prefix, lp) != 0 || strncmp(n + lp, host, lh) != 0 ||
            n[lp + lh] != '-')
            continue;
        char *end = NULL;
        long pid = strtol(n + lp + lh + 1, &end, 10);
        if (end == NULL || *end != '-' || strlen(end) != 7 || pid <= 0)
            continue;
        if (pid == (long)getpid() || kill((pid_t)pid, 0) == 0 || errno != ESRCH)
            continue;
        if (join(p, sizeof p, dir, n))
            remove_stage(p);
    }
    closedir(d);
}

int sl_outset_begin(sl_outset *set, const char *dir, int force, int create_dir, sl_err *e)
{
    if (set->active)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "output set for '%s' begun twice", set->dir);
    memset(set, 0, sizeof *set);
    if (dir == NULL || dir[0] == '\0')
        dir = ".";
    if (strlen(dir) + sizeof stage_prefix + 100 >= sizeof set->dir)
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
    char host[65] = "host";
    if (gethostname(host, sizeof host - 1) != 0)
        strcpy(host, "host");
    host[sizeof host - 1] = '\0';
    for (char *h = host; *h; h++)
        if (*h == '/' || *h == '-' || *h == '.')
            *h = '_';
    remove_stale_stages(set->dir, host);
    char tmpl[sizeof stage_prefix + 96];
    snprintf(tmpl, sizeof tmpl, "%s%s-%ld-XXXXXX", stage_prefix, host, (long)getpid());
    /* mkdtemp both proves the directory is writable (it honours read-only
     * mounts and permissions, unlike access(2) for root) and makes the stage. */
    if (!join(set->stage, sizeof set->stage, set->dir, tmpl) || mkdtemp(set->stage) == NULL) {
        int err = errno;
        set->stage[0] = '\0';
        if (set->created_dir)
            (void)rmdir(set->dir);
        SL_FAIL_RETURN(e, SL_ECANTCREAT, "cannot write in output directory '%s': %s", set->dir,
                       strerror(err));
    }
    set->active = 1;
    live_add(set);
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
        if (!S_ISREG(st.st_mode))
            SL_FAIL_RETURN(e, SL_ECANTCREAT,
                           "'%s' is %s; only a regular file (or nothing) at an output path is "
                           "ever replaced, with or without --force",
                           final, file_kind(&st));
        if (!set->force)
            SL_FAIL_RETURN(e, SL_ECANTCREAT,
                           "'%s' exists; not overwritten (use --force to replace it)", final);
    }
    if (!join(set->stage_path[set->n], sizeof set->stage_path[0], set->stage, name))
        SL_FAIL_RETURN(e, SL_ECANTCREAT, "output path too long for '%s'", name);
    strcpy(set->name[set->n], name);
    if (stage_path)
        *stage_path = set->stage_path[set->n];
    set->n++;
    return SL_OK;
}

/* The stdio stream of a staged file: plain write(2) on FD that remembers
 * the errno of the first failure; close fsyncs and returns it. */
typedef struct out_cookie {
    int fd;
    int first_errno;
} out_cookie;

static ssize_t cookie_write(void *cookie, const char *buf, size_t size)
{
    out_cookie *c = cookie;
    size_t done = 0;
    while (done < size) {
        ssize_t w = write(c->fd, buf + done, size - done);
        if (w < 0 && errno == EINTR)
            continue;
        if (w <= 0) {
            if (c->first_errno == 0)
                c->first_errno = w < 0 ? errno : EIO;
            errno = c->first_errno;
            return done > 0 ? (ssize_t)done : -1;
        }
        done += (size_t)w;
    }
    return (ssize_t)done;
}

static int cookie_close(void *cookie)
{
    out_cookie *c = cookie;
    int err = c->first_errno;
    if (err == 0 && fsync(c->fd) != 0 && errno != EINVAL)
        err = errno;
    if (close(c->fd) != 0 && err == 0 && errno != EINTR)
        err = errno;
    free(c);
    if (err != 0) {
        errno = err;
        return -1;
    }
    return 0;
}

int sl_outset_fopen(sl_outset *set, const char *name, FILE **fp, sl_err *e)
{
    const char *p = NULL;
    *fp = NULL;
    SL_TRY_RETURN(e, sl_outset_add(set, name, &p, e));
    int fd = open(p, O_WRONLY | O_CREAT | O_EXCL | O_CLOEXEC, 0666);
    if (fd < 0)
        SL_FAIL_RETURN(e, SL_ECANTCREAT, "cannot create '%s/%s': %s", set->dir, name,
                       strerror(errno));
    out_cookie *c = malloc(sizeof *c);
    FILE *f = NULL;
    if (c != NULL) {
        c->fd = fd;
        c->first_errno = 0;
        f = fopencookie(c, "w", (cookie_io_functions_t){NULL, cookie_write, NULL, cookie_close});
    }
    if (f == NULL) {
        free(c);
        close(fd);
        SL_FAIL_RETURN(e, SL_ENOMEM, "cannot open '%s/%s': out of memory", set->dir, name);
    }
    *fp = f;
    return SL_OK;
}

int sl_outset_write_file(sl_outset *set, const char *name, const void *data, size_t len,
                         sl_err *e)
{
    const char *p = NULL;
    SL_TRY_RETURN(e, sl_outset_add(set, name, &p, e));
    int fd = open(p, O_WRONLY | O_CREAT | O_EXCL | O_CLOEXEC, 0666);
    if (fd < 0)
        SL_FAIL_RETURN(e, SL_ECANTCREAT, "cannot create '%s/%s': %s", set->dir, name,
                       strerror(errno));
    const char *b = data;
    int err = 0;
    while (len > 0) {
        ssize_t w = write(fd, b, len);
        if (w < 0 && errno == EINTR)
            continue;
        if (w <= 0) {
            err = w < 0 ? errno : EIO;
            break;
        }
        b += w;
        len -= (size_t)w;
    }
    if (err == 0 && fsync(fd) != 0 && errno != EINVAL)
        err = errno;
    if (close(fd) != 0 && err == 0 && errno != EINTR)
        err = errno;
    if (err != 0) {
        (void)unlink(p);
        SL_FAIL_RETURN(e, SL_EIO, "writing '%s/%s': %s", set->dir, name, strerror(err));
    }
    return SL_OK;
}

int sl_outset_fclose(sl_outset *set, const char *name, FILE *fp, sl_err *e)
{
    if (fp == NULL)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "closing '%s': no open stream", name);
    /* A stream from sl_outset_fopen keeps the errno of its first failed
     * write and reports it at close, so the message gives the true cause
     * (no space left, quota exceeded) rather than a bare I/O error. */
    int bad = ferror(fp) != 0;
    int err = 0;
    if (fflush(fp) != 0) {
        bad = 1;
        err = errno;
    }
    int fd = fileno(fp); /* -1 for our own streams: their close fsyncs */
    if (!bad && fd >= 0 && fsync(fd) != 0 && errno != EINVAL) {
        bad = 1;
        err = errno;
    }
    errno = 0;
    if (fclose(fp) != 0) {
        bad = 1;
        if (errno != 0)
            err = errno;
    }
    if (bad && err == 0)
        err = EIO;
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
        if (lstat(final, &st) == 0 && !S_ISREG(st.st_mode)) {
            sl_err_set(e, SL_ECANTCREAT, __func__, __LINE__,
                       "'%s' is %s; only a regular file (or nothing) at an output path is ever "
                       "replaced, with or without --force",
                       final, file_kind(&st));
            rc = SL_ECANTCREAT;
            goto rollback;
        }
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
    live_remove(set);
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
    live_remove(set);
    memset(set, 0, sizeof *set);
}

/* Async-signal-safe: unlink A "/" PREFIX B without stdio. */
static void unlink_joined(const char *a, const char *prefix, const char *b)
{
    char p[SL_OUTSET_PATH_LEN];
    if (join3(p, sizeof p, a, prefix, b))
        (void)unlink(p);
}

static void on_signal(int sig)
{
    for (int i = 0; i < MAX_LIVE_SETS; i++) {
        sl_outset *set = live_sets[i];
        if (set == NULL || !set->active || set->stage[0] == '\0')
            continue;
        for (size_t k = 0; k < set->n && k < SL_OUTSET_MAX_FILES; k++) {
            (void)unlink(set->stage_path[k]);
            /* A file already replaced in this commit keeps its old copy
             * here: put it back rather than lose it. */
            char backup[SL_OUTSET_PATH_LEN], final[SL_OUTSET_PATH_LEN];
            if (join3(backup, sizeof backup, set->stage, backup_prefix, set->name[k]) &&
                join(final, sizeof final, set->dir, set->name[k]) && access(backup, F_OK) == 0)
                (void)rename(backup, final);
            unlink_joined(set->stage, backup_prefix, set->name[k]);
        }
        (void)rmdir(set->stage);
        if (set->created_dir)
            (void)rmdir(set->dir);
    }
    _exit(128 + sig);
}

int sl_outset_handle_signals(sl_err *e)
{
    static const int sigs[] = {SIGINT, SIGTERM, SIGHUP};
    struct sigaction sa;
    memset(&sa, 0, sizeof sa);
    sa.sa_handler = on_signal;
    sigfillset(&sa.sa_mask);
    for (size_t i = 0; i < sizeof sigs / sizeof sigs[0]; i++) {
        struct sigaction old;
        /* A signal ignored by the parent (nohup) stays ignored. */
        if (sigaction(sigs[i], NULL, &old) == 0 && old.sa_handler == SIG_IGN)
            continue;
        if (sigaction(sigs[i], &sa, NULL) != 0)
            SL_FAIL_RETURN(e, SL_EINTERNAL, "cannot install the handler of signal %d: %s", sigs[i],
                           strerror(errno));
    }
    return SL_OK;
}
