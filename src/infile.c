/* infile: shared input rules (see include/steamloft/infile.h).
 *
 * The netCDF header walk follows the classic file format specification
 * (Unidata, "The NetCDF Classic Format Specification", netCDF-C
 * documentation, file_format_specifications; CDF-5 per the PnetCDF format
 * note): magic "CDF" + version, numrecs, then the dimension, global
 * attribute and variable lists, each ABSENT or a tag and a count.  Every
 * count is checked against the bytes left in the file before it is used,
 * so a damaged header is refused in a few microseconds instead of being
 * handed to the library. */
#include "steamloft/infile.h"

#include <ctype.h>
#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

int sl_infile_read_text(const char *path, const char *what, size_t max_bytes, char **text,
                        size_t *len, sl_err *e)
{
    *text = NULL;
    *len = 0;
    int fd = open(path, O_RDONLY | O_CLOEXEC);
    if (fd < 0)
        SL_FAIL_RETURN(e, SL_ENOINPUT, "%s: cannot open %s: %s", path, what, strerror(errno));
    struct stat st;
    if (fstat(fd, &st) == 0 && S_ISDIR(st.st_mode)) {
        close(fd);
        SL_FAIL_RETURN(e, SL_ENOINPUT, "%s: is a directory, not a%s %s file", path,
                       strchr("aeiou", what[0]) ? "n" : "", what);
    }
    size_t cap = 65536, n = 0;
    char *buf = malloc(cap + 1);
    if (buf == NULL) {
        close(fd);
        SL_FAIL_RETURN(e, SL_ENOMEM, "%s: out of memory reading the %s", path, what);
    }
    for (;;) {
        if (n == cap) {
            if (cap > max_bytes)
                break;
            size_t nc = cap * 2 > max_bytes + 1 ? max_bytes + 1 : cap * 2;
            char *nb = realloc(buf, nc + 1);
            if (nb == NULL) {
                free(buf);
                close(fd);
                SL_FAIL_RETURN(e, SL_ENOMEM, "%s: out of memory reading the %s", path, what);
            }
            buf = nb;
            cap = nc;
        }
        ssize_t got = read(fd, buf + n, cap - n);
        if (got < 0 && errno == EINTR)
            continue;
        if (got < 0) {
            int err = errno;
            free(buf);
            close(fd);
            SL_FAIL_RETURN(e, SL_EIO, "%s: read error in the %s: %s", path, what, strerror(err));
        }
        if (got == 0)
            break;
        n += (size_t)got;
        if (n > max_bytes)
            break;
    }
    close(fd);
    if (n > max_bytes) {
        free(buf);
        SL_FAIL_RETURN(e, SL_EDATA, "%s: larger than the limit of %zu bytes for a%s %s file", path,
                       max_bytes, strchr("aeiou", what[0]) ? "n" : "", what);
    }
    const char *nul = memchr(buf, '\0', n);
    if (nul != NULL) {
        size_t line = 1;
        for (const char *p = buf; p < nul; p++)
            line += *p == '\n';
        free(buf);
        SL_FAIL_RETURN(e, SL_EDATA, "%s:%zu: a NUL byte: not a text %s file", path, line, what);
    }
    size_t skip = n >= 3 && (unsigned char)buf[0] == 0xEF && (unsigned char)buf[1] == 0xBB &&
                          (unsigned char)buf[2] == 0xBF
                      ? 3
                      : 0;
    if (skip)
        memmove(buf, buf + skip, n - skip);
    n -= skip;
    buf[n] = '\0';
    *text = buf;
    *len = n;
    return SL_OK;
}

int sl_infile_next_line(char **cursor, char **line)
{
    char *p = *cursor;
    if (p == NULL || *p == '\0')
        return 0;
    char *nl = strchr(p, '\n');
    if (nl != NULL) {
        *nl = '\0';
        *cursor = nl + 1;
    } else {
        *cursor = p + strlen(p);
    }
    size_t n = strlen(p);
    if (n > 0 && p[n - 1] == '\r')
        p[n - 1] = '\0';
    *line = p;
    return 1;
}

size_t sl_infile_content_len(const char *line, const char *comment_chars, int inline_comments)
{
    size_t i = 0, end = 0;
    while (line[i] == ' ' || line[i] == '\t')
        i++;
    for (; line[i] != '\0' && line[i] != '\n'; i++) {
        if (strchr(comment_chars, line[i]) != NULL &&
            (end == 0 || (inline_comments && (line[i - 1] == ' ' || line[i - 1] == '\t'))))
            break;
        if (line[i] != ' ' && line[i] != '\t' && line[i] != '\r')
            end = i + 1;
    }
    return end;
}

int sl_infile_parse_double(const char *text, double *out)
{
    const char *p = text;
    while (*p == ' ' || *p == '\t')
        p++;
    const char *s = p;
    if (*p == '+' || *p == '-')
        p++;
    size_t digits = 0;
    while (isdigit((unsigned char)*p)) {
        p++;
        digits++;
    }
    if (*p == '.') {
        p++;
        while (isdigit((unsigned char)*p)) {
            p++;
            digits++;
        }
    }
    if (digits == 0)
        return -1;
    if (*p == 'e' || *p == 'E') {
        p++;
        if (*p == '+' || *p == '-')
            p++;
        if (!isdigit((unsigned char)*p))
            return -1;
        while (isdigit((unsigned char)*p))
            p++;
    }
    const char *stop = p;
    while (*p == ' ' || *p == '\t')
        p++;
    if (*p != '\0')
        return -1;
    char buf[128];
    size_t n = (size_t)(stop - s);
    if (n >= sizeof buf)
        return -1;
    memcpy(buf, s, n);
    buf[n] = '\0';
    char *end = NULL;
    errno = 0;
    double v = strtod(buf, &end);
    if (end != buf + n || errno == ERANGE || !isfinite(v))
        return -1;
    *out = v;
    return 0;
}

/* ------------------------------------------------------------ netCDF header */

typedef struct nc_walk {
    const unsigned char *b;
    size_t n, pos;
    int version;   /* 1 classic, 2 64-bit offset, 5 CDF-5 */
    const char *why;
} nc_walk;

static int get_be(nc_walk *w, size_t bytes, uint64_t *v)
{
    if (w->n - w->pos < bytes) {
        w->why = "the header ends early";
        return -1;
    }
    uint64_t x = 0;
    for (size_t i = 0; i < bytes; i++)
        x = (x << 8) | w->b[w->pos + i];
    w->pos += bytes;
    *v = x;
    return 0;
}

static size_t non_neg(const nc_walk *w)
{
    return w->version == 5 ? 8 : 4;
}

/* A count of items each at least MIN_BYTES long must fit in what is left. */
static int get_count(nc_walk *w, size_t min_bytes, uint64_t *count)
{
    if (get_be(w, non_neg(w), count) != 0)
        return -1;
    if (w->version != 5 && *count > INT32_MAX) {
        w->why = "a negative count";
        return -1;
    }
    if (*count > (w->n - w->pos) / (min_bytes ? min_bytes : 1)) {
        w->why = "a declared count does not fit in the file";
        return -1;
    }
    return 0;
}

static int skip_bytes(nc_walk *w, uint64_t len)
{
    uint64_t padded = (len + 3) & ~(uint64_t)3;
    if (len > w->n || padded > w->n - w->pos) {
        w->why = "a declared name or value runs past the end of the file";
        return -1;
    }
    w->pos += (size_t)padded;
    return 0;
}

static int skip_name(nc_walk *w)
{
    uint64_t len;
    if (get_count(w, 1, &len) != 0)
        return -1;
    if (len == 0 || len > 256) {
        w->why = "a name of length 0 or over 256";
        return -1;
    }
    return skip_bytes(w, len);
}

static int type_size(uint64_t t)
{
    switch (t) {
    case 1: case 2: case 7: return 1;   /* byte, char, ubyte */
    case 3: case 8: return 2;           /* short, ushort */
    case 4: case 5: case 9: return 4;   /* int, float, uint */
    case 6: case 10: case 11: return 8; /* double, int64, uint64 */
    default: return 0;
    }
}

static int skip_atts(nc_walk *w)
{
    uint64_t tag, count;
    if (get_be(w, 4, &tag) != 0 || get_count(w, 0, &count) != 0)
        return -1;
    if (tag == 0 && count == 0)
        return 0;
    if (tag != 0x0C) {
        w->why = "a bad attribute list tag";
        return -1;
    }
    if (count > (w->n - w->pos) / 12) {
        w->why = "a declared attribute count does not fit in the file";
        return -1;
    }
    for (uint64_t i = 0; i < count; i++) {
        uint64_t t, len;
        if (skip_name(w) != 0 || get_be(w, 4, &t) != 0)
            return -1;
        int sz = type_size(t);
        if (sz == 0 || (w->version != 5 && sz > 0 && t > 6)) {
            w->why = "an attribute of unknown type";
            return -1;
        }
        if (get_count(w, (size_t)sz, &len) != 0 || skip_bytes(w, len * (uint64_t)sz) != 0)
            return -1;
    }
    return 0;
}

static int walk_header(nc_walk *w, uint64_t file_size, uint64_t **dimlen)
{
    uint64_t v, tag, ndims = 0, nvars;
    w->pos = 4;
    if (get_be(w, non_neg(w), &v) != 0) /* numrecs */
        return -1;
    if (get_be(w, 4, &tag) != 0 || get_count(w, 0, &ndims) != 0)
        return -1;
    if (!(tag == 0 && ndims == 0)) {
        if (tag != 0x0A) {
            w->why = "a bad dimension list tag";
            return -1;
        }
        if (ndims > (w->n - w->pos) / 8) {
            w->why = "a declared dimension count does not fit in the file";
            return -1;
        }
        *dimlen = malloc((size_t)(ndims ? ndims : 1) * sizeof(uint64_t));
        if (*dimlen == NULL) {
            w->why = "out of memory";
            return -1;
        }
        for (uint64_t i = 0; i < ndims; i++)
            if (skip_name(w) != 0 || get_be(w, non_neg(w), &(*dimlen)[i]) != 0)
                return -1;
    }
    if (skip_atts(w) != 0)
        return -1;
    if (get_be(w, 4, &tag) != 0 || get_count(w, 0, &nvars) != 0)
        return -1;
    if (tag == 0 && nvars == 0)
        return 0;
    if (tag != 0x0B) {
        w->why = "a bad variable list tag";
        return -1;
    }
    if (nvars > (w->n - w->pos) / 24) {
        w->why = "a declared variable count does not fit in the file";
        return -1;
    }
    for (uint64_t i = 0; i < nvars; i++) {
        uint64_t nd, t, vsize, begin;
        if (skip_name(w) != 0 || get_count(w, non_neg(w), &nd) != 0)
            return -1;
        /* Bytes of a fixed-size variable: the product of its dimension
         * lengths (none of them the record dimension, length 0) times the
         * type size; it must fit in the file, which the library writes out in
         * full for fixed-size variables. */
        uint64_t bytes = 1;
        int is_record = 0, overflow = 0;
        for (uint64_t k = 0; k < nd; k++) {
            uint64_t id;
            if (get_be(w, non_neg(w), &id) != 0)
                return -1;
            if (id >= ndims) {
                w->why = "a variable names a dimension that does not exist";
                return -1;
            }
            uint64_t len = (*dimlen)[id];
            if (len == 0)
                is_record = 1;
            else if (bytes > UINT64_MAX / len)
                overflow = 1;
            else
                bytes *= len;
        }
        if (skip_atts(w) != 0 || get_be(w, 4, &t) != 0)
            return -1;
        int tsz = type_size(t);
        if (tsz == 0) {
            w->why = "a variable of unknown type";
            return -1;
        }
        if (get_be(w, non_neg(w), &vsize) != 0 || get_be(w, w->version == 1 ? 4 : 8, &begin) != 0)
            return -1;
        if (begin > file_size) {
            w->why = "a variable's data would start past the end of the file";
            return -1;
        }
        if (!is_record && (overflow || bytes > UINT64_MAX / (uint64_t)tsz ||
                           bytes * (uint64_t)tsz > file_size - begin)) {
            w->why = "a variable's declared size does not fit in the file";
            return -1;
        }
    }
    return 0;
}

int sl_infile_nc_precheck(const char *path, sl_err *e)
{
    FILE *f = fopen(path, "rb");
    if (f == NULL)
        SL_FAIL_RETURN(e, SL_ENOINPUT, "%s: cannot open: %s", path, strerror(errno));
    struct stat st;
    if (fstat(fileno(f), &st) != 0 || !S_ISREG(st.st_mode)) {
        fclose(f);
        return SL_OK; /* nothing to compare with; the library reads it */
    }
    unsigned char magic[4] = {0};
    if (fread(magic, 1, 4, f) != 4 || magic[0] != 'C' || magic[1] != 'D' || magic[2] != 'F' ||
        !(magic[3] == 1 || magic[3] == 2 || magic[3] == 5)) {
        fclose(f);
        return SL_OK; /* netCDF-4/HDF5 or not netCDF at all: the library says */
    }
    /* The header is at the start; 1 MiB is plenty for any file we read,
     * and a header running past what we read is refused as damaged only
     * when the file itself ends there. */
    size_t want = (size_t)(st.st_size < (1 << 20) ? st.st_size : (1 << 20));
    unsigned char *b = malloc(want ? want : 1);
    if (b == NULL) {
        fclose(f);
        SL_FAIL_RETURN(e, SL_ENOMEM, "%s: out of memory", path);
    }
    memcpy(b, magic, 4);
    size_t got = 4 + fread(b + 4, 1, want - 4, f);
    fclose(f);
    nc_walk w = {b, got, 0, magic[3], NULL};
    uint64_t *dimlen = NULL;
    int bad = walk_header(&w, (uint64_t)st.st_size, &dimlen);
    free(dimlen);
    free(b);
    if (bad && got < (size_t)st.st_size)
        return SL_OK; /* a header longer than 1 MiB: leave it to the library */
    if (bad)
        SL_FAIL_RETURN(e, SL_EDATA,
                       "%s: damaged netCDF file (%s at byte %zu of %lld); not read", path, w.why,
                       w.pos, (long long)st.st_size);
    return SL_OK;
}
