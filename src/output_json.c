/* output_json: the one JSON writer (see include/steamloft/json.h). */
#include "steamloft/json.h"

#include <errno.h>
#include <math.h>
#include <string.h>

/* Length of the valid UTF-8 sequence at P (1-4), or 0 when it is not one
 * (overlong forms, surrogates and code points above U+10FFFF refused). */
static int utf8_length(const unsigned char *p)
{
    int n = p[0] >= 0xf0 && p[0] <= 0xf4 ? 4 : p[0] >= 0xe0 ? 3 : p[0] >= 0xc2 && p[0] < 0xe0 ? 2 : 0;
    for (int i = 1; i < n; i++)
        if ((p[i] & 0xc0) != 0x80)
            return 0;
    if ((n == 3 && p[0] == 0xe0 && p[1] < 0xa0) || (n == 3 && p[0] == 0xed && p[1] >= 0xa0) ||
        (n == 4 && p[0] == 0xf0 && p[1] < 0x90) || (n == 4 && p[0] == 0xf4 && p[1] >= 0x90))
        return 0;
    return n;
}

void sl_json_write_string(FILE *out, const char *s)
{
    fputc('"', out);
    for (const unsigned char *p = (const unsigned char *)s; *p;) {
        unsigned char c = *p;
        if (c == '"' || c == '\\')
            fprintf(out, "\\%c", c);
        else if (c == '\n')
            fputs("\\n", out);
        else if (c == '\t')
            fputs("\\t", out);
        else if (c == '\r')
            fputs("\\r", out);
        else if (c < 0x20)
            fprintf(out, "\\u%04x", c);
        else if (c < 0x80)
            fputc(c, out);
        else {
            int n = utf8_length(p);
            if (n == 0) {
                fputs("\\ufffd", out);
                p++;
            } else {
                fwrite(p, 1, (size_t)n, out);
                p += n;
            }
            continue;
        }
        p++;
    }
    fputc('"', out);
}

/* Separator, line break and indentation, and the key of the next member. */
static void member(sl_json *j, const char *key)
{
    int d = j->depth;
    if (j->count[d]++ > 0)
        fputc(',', j->out);
    if (j->inline_[d]) {
        if (j->count[d] > 1)
            fputc(' ', j->out);
    } else {
        fputc('\n', j->out);
        for (int i = 0; i <= d; i++)
            fputs("  ", j->out);
    }
    if (!j->array[d] && key == NULL)
        j->misuse = 1;
    if (key && !j->array[d]) {
        sl_json_write_string(j->out, key);
        fputs(": ", j->out);
    }
}

void sl_json_begin(sl_json *j, FILE *out)
{
    memset(j, 0, sizeof *j);
    j->out = out;
    fputc('{', out);
}

void sl_json_number(sl_json *j, const char *key, double value)
{
    member(j, key);
    if (isfinite(value))
        fprintf(j->out, "%.10g", value);
    else
        fputs("null", j->out);
}

void sl_json_integer(sl_json *j, const char *key, long long value)
{
    member(j, key);
    fprintf(j->out, "%lld", value);
}

void sl_json_bool(sl_json *j, const char *key, int value)
{
    member(j, key);
    fputs(value ? "true" : "false", j->out);
}

void sl_json_string(sl_json *j, const char *key, const char *value)
{
    member(j, key);
    if (value)
        sl_json_write_string(j->out, value);
    else
        fputs("null", j->out);
}

void sl_json_null(sl_json *j, const char *key)
{
    member(j, key);
    fputs("null", j->out);
}

static void open_container(sl_json *j, const char *key, int array, sl_json_layout layout)
{
    member(j, key);
    fputc(array ? '[' : '{', j->out);
    if (j->depth + 1 >= SL_JSON_MAX_DEPTH) {
        j->misuse = 1; /* the text stays balanced: the close below still writes */
        return;
    }
    j->depth++;
    j->count[j->depth] = 0;
    j->array[j->depth] = (unsigned char)array;
    j->inline_[j->depth] = (unsigned char)(layout == SL_JSON_INLINE || j->inline_[j->depth - 1]);
}

static void close_container(sl_json *j, int array)
{
    if (j->depth == 0 || j->array[j->depth] != array) {
        j->misuse = 1;
        if (j->depth == 0)
            return;
    }
    int had = j->count[j->depth] > 0, was_inline = j->inline_[j->depth];
    j->depth--;
    if (had && !was_inline) {
        fputc('\n', j->out);
        for (int i = 0; i <= j->depth; i++)
            fputs("  ", j->out);
    }
    fputc(j->array[j->depth + 1] ? ']' : '}', j->out);
}

void sl_json_begin_object(sl_json *j, const char *key, sl_json_layout layout) { open_container(j, key, 0, layout); }
void sl_json_end_object(sl_json *j) { close_container(j, 0); }
void sl_json_begin_array(sl_json *j, const char *key, sl_json_layout layout) { open_container(j, key, 1, layout); }
void sl_json_end_array(sl_json *j) { close_container(j, 1); }

int sl_json_end(sl_json *j, sl_err *e)
{
    if (j->depth > 0)
        j->misuse = 1;
    while (j->depth > 0)
        close_container(j, j->array[j->depth]);
    fputs(j->count[0] > 0 ? "\n}\n" : "}\n", j->out);
    errno = 0;
    if (fflush(j->out) != 0 || ferror(j->out))
        SL_FAIL_RETURN(e, SL_EIO, "cannot write the JSON output: %s", strerror(errno ? errno : EIO));
    if (j->misuse)
        SL_FAIL_RETURN(e, SL_EINTERNAL, "JSON writer: containers opened and closed out of order");
    return SL_OK;
}
