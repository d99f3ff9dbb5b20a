/* eddy.c - status strings and the error-recording helper. */
#include "mesh/eddy.h"

#include <stdio.h>
#include <string.h>

const char *eddy_strerror(eddy_status s)
{
    switch (s) {
    case EDDY_OK: return "success";
    case EDDY_ERR_NOMEM: return "out of memory";
    case EDDY_ERR_IO: return "input/output error";
    case EDDY_ERR_INPUT: return "invalid input";
    case EDDY_ERR_TOO_LARGE: return "problem too large for this machine";
    case EDDY_ERR_SINGULAR: return "singular system matrix";
    case EDDY_ERR_SOLVER: return "sparse solver failure";
    case EDDY_ERR_NUMERIC: return "non-finite result";
    case EDDY_ERR_NOT_APPLICABLE: return "not applicable to this case";
    case EDDY_ERR_INTERNAL: return "internal error";
    }
    return "unknown status";
}

eddy_status eddy_raise(eddy_error *err, eddy_status s, const char *file, int line,
                       const char *fmt, ...)
{
    if (err == NULL || s == EDDY_OK)
        return s;
    if (err->status != EDDY_OK && err->msg[0] != '\0')
        return s; /* keep the first, most specific message */
    err->status = s;
    err->file = file;
    err->line = line;
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(err->msg, sizeof err->msg, fmt, ap);
    va_end(ap);
    return s;
}

int eddy_exit_code(eddy_status s)
{
    if (s == EDDY_OK)
        return 0;
    if (s == EDDY_ERR_INPUT || s == EDDY_ERR_TOO_LARGE)
        return 2;
    return 1;
}
