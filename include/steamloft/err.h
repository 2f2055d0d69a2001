/* err: status codes, a caller-owned error record with a short call trace, and
 * the mapping from status codes to the exit codes of <sysexits.h>.
 *
 * Every fallible function in steamloft returns an int status (SL_OK == 0) and
 * fills a caller-owned sl_err when it fails.  Two macros propagate failures;
 * both RETURN from the calling function, which their names say:
 *
 *   SL_FAIL_RETURN(e, code, fmt, ...)  set the message and return code
 *   SL_TRY_RETURN(e, call)             run call; on failure add this frame to
 *                                      the trace and return its status
 *
 * The trace reads innermost-first, e.g. "sl_atmosphere_at:210 <- sl_plume_solve:88".
 * No function in the project calls exit() or abort() outside main(). */
#ifndef STEAMLOFT_ERR_H
#define STEAMLOFT_ERR_H

#include <stddef.h>

typedef enum sl_status {
    SL_OK = 0,
    SL_EUSAGE,     /* wrong command-line use                  -> 64 EX_USAGE    */
    SL_EDATA,      /* input value or file content is invalid  -> 65 EX_DATAERR  */
    SL_ENOINPUT,   /* an input file is missing or unreadable  -> 66 EX_NOINPUT  */
    SL_ENUMERIC,   /* a solver failed or produced non-finite  -> 70 EX_SOFTWARE */
    SL_EINTERNAL,  /* a bug: an invariant of our own broke    -> 70 EX_SOFTWARE */
    SL_ENOMEM,     /* allocation failed                       -> 71 EX_OSERR    */
    SL_ECANTCREAT, /* an output cannot be created             -> 73 EX_CANTCREAT*/
    SL_EIO,        /* read or write error on an open file     -> 74 EX_IOERR    */
    SL_ECONFIG     /* scenario file syntax                    -> 78 EX_CONFIG   */
} sl_status;

enum { SL_ERR_MSG_LEN = 768, SL_ERR_TRACE_LEN = 256 };

typedef struct sl_err {
    sl_status code;
    char msg[SL_ERR_MSG_LEN];     /* one line, no trailing newline */
    char trace[SL_ERR_TRACE_LEN]; /* "func:line <- func:line ..." (truncated) */
} sl_err;

/* Record a failure in e (may be NULL) and return code.  The message is
 * printf-formatted; the frame func:line starts a fresh trace. */
int sl_err_set(sl_err *e, int code, const char *func, int line, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 5, 6)))
#endif
    ;

/* Append the frame func:line to e's trace and return code unchanged. */
int sl_err_push(sl_err *e, int code, const char *func, int line);

/* Reset e to SL_OK with empty message and trace. */
void sl_err_clear(sl_err *e);

/* sysexits.h exit code for a status (0 for SL_OK). */
int sl_err_exit_code(int code);

/* Short lower-case name of a status ("bad data", "cannot create", ...). */
const char *sl_err_name(int code);

/* Switch GSL's abort-on-error handler off.  Call once from main() before any
 * thread starts; every GSL status is then checked by the caller. */
void sl_err_gsl_handler_off(void);

#define SL_FAIL_RETURN(e, code, ...) \
    return sl_err_set((e), (code), __func__, __LINE__, __VA_ARGS__)

#define SL_TRY_RETURN(e, call)                                         \
    do {                                                               \
        int sl_try_rc_ = (call);                                       \
        if (sl_try_rc_ != SL_OK)                                       \
            return sl_err_push((e), sl_try_rc_, __func__, __LINE__);   \
    } while (0)

#endif
