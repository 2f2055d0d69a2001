/* err: see include/steamloft/err.h. */
#include "steamloft/err.h"

#include <gsl/gsl_errno.h>
#include <stdarg.h>
#include <stdio.h>
#include <string.h>
#include <sysexits.h>

int sl_err_set(sl_err *e, int code, const char *func, int line, const char *fmt, ...)
{
    if (e == NULL)
        return code;
    e->code = (sl_status)code;
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(e->msg, sizeof e->msg, fmt, ap);
    va_end(ap);
    snprintf(e->trace, sizeof e->trace, "%s:%d", func, line);
    return code;
}

int sl_err_push(sl_err *e, int code, const char *func, int line)
{
    if (e == NULL)
        return code;
    if (e->code == SL_OK)
        e->code = (sl_status)code;
    size_t used = strlen(e->trace);
    if (used + 8 < sizeof e->trace)
        snprintf(e->trace + used, sizeof e->trace - used, " <- %s:%d", func, line);
    return code;
}

void sl_err_clear(sl_err *e)
{
    if (e == NULL)
        return;
    e->code = SL_OK;
    e->msg[0] = '\0';
    e->trace[0] = '\0';
}

int sl_err_exit_code(int code)
{
    switch (code) {
    case SL_OK: return EX_OK;
    case SL_EUSAGE: return EX_USAGE;
    case SL_EDATA: return EX_DATAERR;
    case SL_ENOINPUT: return EX_NOINPUT;
    case SL_ENUMERIC: return EX_SOFTWARE;
    case SL_EINTERNAL: return EX_SOFTWARE;
    case SL_ENOMEM: return EX_OSERR;
    case SL_ECANTCREAT: return EX_CANTCREAT;
    case SL_EIO: return EX_IOERR;
    case SL_ECONFIG: return EX_CONFIG;
    default: return EX_SOFTWARE;
    }
}

const char *sl_err_name(int code)
{
    switch (code) {
    case SL_OK: return "ok";
    case SL_EUSAGE: return "usage error";
    case SL_EDATA: return "bad data";
    case SL_ENOINPUT: return "no input";
    case SL_ENUMERIC: return "numerical failure";
    case SL_EINTERNAL: return "internal error";
    case SL_ENOMEM: return "out of memory";
    case SL_ECANTCREAT: return "cannot create output";
    case SL_EIO: return "input/output error";
    case SL_ECONFIG: return "configuration syntax error";
    default: return "unknown status";
    }
}

void sl_err_gsl_handler_off(void)
{
    gsl_set_error_handler_off();
}
