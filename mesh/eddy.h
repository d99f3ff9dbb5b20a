/*
 * eddy.h - what every module of eddy2d shares (prefix eddy_): the one
 * project-wide status enum, the physical and numerical constants, and a few
 * small system helpers (clock, whole-file reading, atomic writing, a growing
 * text buffer, the memory limit).
 *
 * Every library function of every module (mesh_, sol_, post_) returns an
 * eddy_status.  EDDY_OK is zero; every other value is an error.  A function
 * that can fail also takes an optional `eddy_error *err` (may be NULL) that
 * receives a human-readable message and the source file and line where the
 * error was raised.  Library code never prints and never exits: only main()
 * decides what the user sees.
 *
 * This header lives in mesh/, the first module of the pipeline, and is
 * included by mesh/mesh.h; every module may include it, and it includes no
 * other header of the project.  Implementation: mesh/eddy.c (status) and
 * mesh/eddy_util.c (the helpers).
 */
#ifndef EDDY_EDDY_H
#define EDDY_EDDY_H

#include <stdarg.h>
#include <stddef.h>
#include <stdio.h>

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

/* ------------------------------------------------------------------------ */
/* Constants (SI)                                                            */
/* ------------------------------------------------------------------------ */

#define EDDY_VERSION "0.1.0"

/* pi to double precision. */
#define EDDY_PI 3.14159265358979323846

/* mu0 in H/m.  The exact pre-2019 value; the 2019 SI value differs by < 1e-9. */
#define EDDY_MU0 (4.0e-7 * EDDY_PI)

/* ------------------------------------------------------------------------ */
/* Small system helpers (mesh/eddy_util.c)                                   */
/* ------------------------------------------------------------------------ */

/* Monotonic wall clock in seconds (for timings only). */
double eddy_now(void);

/*
 * Read a whole file as a NUL-terminated text.
 *   path: the file.  max: the largest size accepted, bytes.
 *   out:  receives a malloc'ed text (caller frees); NULL on error.
 *   len:  optional, receives its length (bytes, without the NUL).
 * Returns EDDY_OK, EDDY_ERR_IO (cannot open or read), EDDY_ERR_INPUT
 * (larger than max, or holding a NUL byte: not a text), EDDY_ERR_NOMEM.
 */
eddy_status eddy_read_file(const char *path, long max, char **out, size_t *len,
                           eddy_error *err);

/*
 * An output file written atomically: opened as a new temporary file beside
 * its final name (path.tmp.<pid>.<serial>, created with O_EXCL | O_NOFOLLOW,
 * so neither an existing file nor a link planted there is ever written
 * through), and renamed over the final name only when complete and flushed
 * to disk.  A failed or interrupted write leaves the final name as it was.
 * Usage: eddy_atomic_open; write to af.f; eddy_atomic_commit (or
 * eddy_atomic_abort on any failure).  Not copyable while open.
 */
typedef struct {
    FILE *f;                 /* the stream to write to (owned; closed by commit/abort) */
    int fd;                  /* its descriptor */
    int slot;                /* entry in the list of live temporaries, -1 if none */
    char path[4096];         /* the final name */
    char tmp[4200];          /* the temporary name */
} eddy_atomic_file;

/* Create the temporary file for path.  Returns EDDY_OK or EDDY_ERR_IO (the
 * message names the temporary file). */
eddy_status eddy_atomic_open(eddy_atomic_file *af, const char *path, eddy_error *err);

/* Flush, fsync and close the temporary file and rename it to the final
 * name.  Returns EDDY_OK or EDDY_ERR_IO (the temporary file is removed and
 * the message names the final file). */
eddy_status eddy_atomic_commit(eddy_atomic_file *af, eddy_error *err);

/* Close and remove the temporary file; accepts NULL and an af already
 * committed or aborted. */
void eddy_atomic_abort(eddy_atomic_file *af);

/* Write size bytes to path through an eddy_atomic_file.  Returns EDDY_OK or
 * EDDY_ERR_IO. */
eddy_status eddy_write_atomic(const char *path, const char *data, size_t size,
                              eddy_error *err);

/* Remove every temporary file of this process that is open now.  Only
 * unlink() is called, so a signal handler may call it (the command line does,
 * on SIGINT, SIGTERM and SIGHUP, before it dies of the signal). */
void eddy_remove_temporaries(void);

/*
 * The memory one run may use, bytes: the hard limit of this process (the
 * smallest of the physical memory, RLIMIT_AS and the cgroup's memory.max)
 * or, with option_bytes > 0 (the user's --max-memory), the smaller of the
 * option and that limit; without an option, half of the hard limit, so that
 * the system and other programs keep room.  Every memory check of the
 * project compares an estimate with this one figure (or with a share of it:
 * a batch running N cases at once gives each 1/N).
 */
double eddy_memory_limit(double option_bytes);

/*
 * Check, before any work, that dir can become an output folder: a non-empty
 * name of an existing folder this process may write into, or of one that
 * eddy_make_dir can create (its nearest existing ancestor is a folder this
 * process may write into).  Returns EDDY_OK, or EDDY_ERR_INPUT with a
 * message naming dir and what is wrong (empty, a file, not writable).
 */
eddy_status eddy_check_output_dir(const char *dir, eddy_error *err);

/*
 * Take the advisory lock dir/.lock (an fcntl write lock, released when fd is
 * closed or the process ends; not inherited across fork), so that two runs
 * never write into one folder at once.
 *   fd: receives the lock's descriptor (close it with eddy_unlock_dir), or
 *       -1 when the folder does not allow a lock file (read-only): then the
 *       run goes on unlocked.
 * Returns EDDY_OK, or EDDY_ERR_INPUT when another process holds the lock
 * (the message names the folder).
 */
eddy_status eddy_lock_dir(const char *dir, int *fd, eddy_error *err);

/* Release a lock of eddy_lock_dir; accepts -1. */
void eddy_unlock_dir(int fd);

/* Create a directory and its parents (like mkdir -p).  Returns EDDY_OK or
 * EDDY_ERR_IO. */
eddy_status eddy_make_dir(const char *dir, eddy_error *err);

/* A case's default name from a file name: the base name up to its first
 * '.', every character outside [A-Za-z0-9_-] as '_'; "case" if empty.
 * name receives at most size - 1 characters and a NUL. */
void eddy_name_from_path(const char *fname, char *name, size_t size);

/*
 * A growing NUL-terminated text.  Start from {0}; after a failed allocation
 * it stays failed (oom = 1) and ignores further writes, so a writer checks
 * oom once at the end.  The caller owns p (free it; it may be NULL when
 * nothing was written).
 */
typedef struct {
    char *p;
    size_t len, cap;
    int oom;
} eddy_text;

/* Append n bytes of s. */
void eddy_text_put(eddy_text *b, const char *s, size_t n);

/* Append a NUL-terminated string. */
void eddy_text_str(eddy_text *b, const char *s);

/* Append printf-formatted text. */
void eddy_text_printf(eddy_text *b, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 2, 3)))
#endif
    ;

#endif
