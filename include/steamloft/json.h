/* json: the one JSON writer of steamloft (src/output_json.c).  Every JSON a
 * command prints (run, decay, atmos, tabulate, ensemble summaries) is written
 * through it, so escaping, number format and the closing of what was opened
 * live in one place (tests/cli/test_json_writers.sh checks that the output of
 * every command parses and that no other writer exists).
 *
 * Usage:
 *     sl_json j;
 *     sl_json_begin(&j, stdout);              // the top-level object
 *     sl_json_string(&j, "name", "demo");
 *     sl_json_number(&j, "energy_J", 4.2e15);
 *     sl_json_begin_array(&j, "rows", SL_JSON_LINES);
 *     sl_json_begin_object(&j, NULL, SL_JSON_INLINE);  // array elements: key NULL
 *     sl_json_integer(&j, "exit", 0);
 *     sl_json_end_object(&j);
 *     sl_json_end_array(&j);
 *     if (sl_json_end(&j, &e) != SL_OK) ...  // closes, flushes, SL_EIO on a write error
 *
 * Layout: a container opened SL_JSON_LINES puts each member on its own line,
 * indented two spaces a level; SL_JSON_INLINE keeps its members on one line
 * (table rows, lists of numbers).  The top level is SL_JSON_LINES.
 * Numbers: %.10g; NaN and infinities (which JSON lacks) are written as null.
 * Strings: quotes, backslashes and control characters escaped; a byte that
 * is not part of valid UTF-8 becomes U+FFFD, so the output is always valid
 * JSON text (RFC 8259).  A NULL string is written as null.  KEY is the member
 * name inside an object (NULL there is a misuse, reported by sl_json_end); it
 * is ignored inside an array.
 * No allocation; the writer keeps no state outside the struct. */
#ifndef STEAMLOFT_JSON_H
#define STEAMLOFT_JSON_H

#include <stdio.h>

#include "steamloft/err.h"

enum { SL_JSON_MAX_DEPTH = 16 };
typedef enum sl_json_layout { SL_JSON_LINES = 0, SL_JSON_INLINE = 1 } sl_json_layout;

typedef struct sl_json {
    FILE *out;
    int depth;                           /* open containers above the top level */
    int count[SL_JSON_MAX_DEPTH];        /* members written at each depth */
    unsigned char array[SL_JSON_MAX_DEPTH];
    unsigned char inline_[SL_JSON_MAX_DEPTH];
    int misuse;                          /* nesting too deep or an end without a begin */
} sl_json;

/* Start on OUT with the top-level object open. */
void sl_json_begin(sl_json *j, FILE *out);
/* Close what is still open and the top-level object, end the line, flush.
 * SL_EIO when writing failed, SL_EINTERNAL when the nesting was misused. */
int sl_json_end(sl_json *j, sl_err *e);

void sl_json_number(sl_json *j, const char *key, double value);
void sl_json_integer(sl_json *j, const char *key, long long value);
void sl_json_bool(sl_json *j, const char *key, int value);
void sl_json_string(sl_json *j, const char *key, const char *value);
void sl_json_null(sl_json *j, const char *key);

void sl_json_begin_object(sl_json *j, const char *key, sl_json_layout layout);
void sl_json_end_object(sl_json *j);
void sl_json_begin_array(sl_json *j, const char *key, sl_json_layout layout);
void sl_json_end_array(sl_json *j);

/* Write S as one quoted, escaped JSON string (no separator): for callers that
 * put a JSON string inside other text. */
void sl_json_write_string(FILE *out, const char *s);

#endif
