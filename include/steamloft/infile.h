/* infile: the rules every input reader shares (scenario INI, atmosphere text
 * and netCDF, injection CSV and netCDF).
 *
 * Text files:
 *   - at most SL_INFILE_MAX_BYTES bytes (16 MiB; a scenario at most 1 MiB),
 *     read whole; a larger file, a NUL byte or a directory is refused;
 *   - a UTF-8 byte-order mark at the start is skipped; lines end in LF or
 *     CRLF (a CR before the LF is not part of the line);
 *   - a line may hold at most SL_INFILE_MAX_LINE characters of content:
 *     comments and the line end do not count, so a long comment is fine;
 *   - numbers are decimal only: an optional sign, digits with an optional
 *     decimal point, an optional exponent (1500, -2.5, 3e-6, .5).  No hex
 *     (0x...), no inf or nan spellings, no empty field, nothing after it.
 * netCDF files: sl_infile_nc_precheck walks the header of a classic,
 * 64-bit-offset or CDF-5 file and refuses it when a declared count or size
 * cannot fit in the file (a damaged header would otherwise make the netCDF
 * library allocate gigabytes), or when a variable names a dimension that does
 * not exist.  HDF5-based (netCDF-4) files are left to the library. */
#ifndef STEAMLOFT_INFILE_H
#define STEAMLOFT_INFILE_H

#include <stddef.h>

#include "steamloft/err.h"

enum {
    SL_INFILE_MAX_BYTES = 16 << 20, /* text input cap, bytes */
    SL_INFILE_MAX_LINE = 4096       /* content characters per line */
};

/* Read the text file PATH (WHAT says what it is, e.g. "injection profile")
 * into a NUL-terminated buffer *TEXT (free() it), BOM removed; *LEN is its
 * length.  Fails with SL_ENOINPUT (missing, unreadable or a directory),
 * SL_EDATA (larger than MAX_BYTES, or a NUL byte, naming the line) or
 * SL_EIO (read error). */
int sl_infile_read_text(const char *path, const char *what, size_t max_bytes, char **text,
                        size_t *len, sl_err *e);

/* Cut the next line off *CURSOR (in place): *LINE is the line without its
 * LF or CRLF; *CURSOR moves past it.  Returns 0 at the end of the text. */
int sl_infile_next_line(char **cursor, char **line);

/* Number of content characters of LINE: everything before the first
 * character of COMMENT_CHARS that starts a comment (at the line start or,
 * when INLINE, after a blank), trailing blanks excluded. */
size_t sl_infile_content_len(const char *line, const char *comment_chars, int inline_comments);

/* Parse all of TEXT (leading and trailing blanks allowed) as a finite
 * decimal number; 0 on success, -1 otherwise. */
int sl_infile_parse_double(const char *text, double *out);

/* Refuse a classic netCDF file whose header cannot be right (see above).
 * SL_EDATA naming PATH and what is wrong; SL_OK for netCDF-4 files and for
 * headers that fit. */
int sl_infile_nc_precheck(const char *path, sl_err *e);

#endif
