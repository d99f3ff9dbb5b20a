/*
 * eddy_status.h - the one project-wide status enum of eddy2d.
 *
 * Every library function of every module (mesh_, sol_, post_) returns an
 * eddy_status.  EDDY_OK is zero; every other value is an error.  A function
 * that can fail also takes an optional `eddy_error *err` (may be NULL) that
 * receives a human-readable message and the source file and line where the
 * error was raised.  Library code never prints and never exits: only main()
 * decides what the user sees.
 *
 * This header is included by mesh/mesh.h and is part of the mesh module's
 * public interface (mesh is the first module of the pipeline, so everything
 * downstream may include it).
 */
#ifndef EDDY_STATUS_H
#define EDDY_STATUS_H

#include <stdarg.h>

typedef enum {
    EDDY_OK = 0,
    EDDY_ERR_NOMEM,          /* an allocation failed                           */
    EDDY_ERR_IO,             /* a file could not be read or written            */
    EDDY_ERR_INPUT,          /* invalid case file or argument (exit status 2)  */
    EDDY_ERR_TOO_LARGE,      /* the mesh would not fit in memory (exit 2)      */
    EDDY_ERR_SINGULAR,       /* the system matrix is singular                  */
    EDDY_ERR_SOLVER,         /* any other failure of the sparse solver         */
    EDDY_ERR_NUMERIC,        /* a result is NaN or infinite                    */
    EDDY_ERR_NOT_APPLICABLE, /* the request does not fit this case             */
    EDDY_ERR_INTERNAL        /* a bug: an invariant of the program failed      */
} eddy_status;

/* Details of the last error.  msg is always NUL-terminated. */
typedef struct {
    eddy_status status;
    const char *file;        /* source file that raised it (static string) */
    int line;                /* source line that raised it                 */
    char msg[1024];
} eddy_error;

/* Short description of a status code; never NULL, static storage. */
const char *eddy_strerror(eddy_status s);

/* Fill *err (if non-NULL) and return s.  Use through EDDY_RAISE.  A second
 * raise on the same err keeps the first message unless it was empty. */
eddy_status eddy_raise(eddy_error *err, eddy_status s, const char *file, int line,
                       const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 5, 6)))
#endif
    ;

/* Record an error with file and line and return its status:
 *     return EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: must be positive", path); */
#define EDDY_RAISE(err, s, ...) eddy_raise((err), (s), __FILE__, __LINE__, __VA_ARGS__)

/* Exit status for a status: 0 OK, 2 invalid input / too large, 1 otherwise. */
int eddy_exit_code(eddy_status s);

#endif
