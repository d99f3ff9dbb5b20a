/*
 * mesh_json.h - PRIVATE to mesh/: the case reader's state and its cJSON
 * helpers (mesh_json.c), shared by the files that read the sections of a
 * case (mesh_case*.c).  Nothing outside mesh/ includes this header; the
 * module's manual is mesh/mesh.h.
 *
 * Conventions of every helper here:
 *   - a "path" names the JSON value in messages, e.g. "regions[2].box"
 *     ("" for the top level); a key is appended to it as "path.key";
 *   - an invalid value raises EDDY_ERR_INPUT through r->err with the message
 *     "<file>: <path>: <what is wrong>" (mesh_json_bad), and the helper
 *     returns that status; out of memory raises EDDY_ERR_NOMEM;
 *   - cJSON values are borrowed from the parsed tree and never retained;
 *     strings handed out point into that tree (valid until cJSON_Delete).
 */
#ifndef EDDY_MESH_JSON_H
#define EDDY_MESH_JSON_H

#include "mesh/mesh.h"

#include <cJSON.h>

/* The state of one reading: the file name for messages, the error record
 * (may be NULL) and the case being filled (owned by mesh_case_parse). */
typedef struct {
    const char *fname;
    eddy_error *err;
    mesh_case *c;
} mesh_reader;

/* Return the status of expr from the calling function unless it is EDDY_OK. */
#define MESH_TRY(expr)                                                                     \
    do {                                                                                   \
        eddy_status s_ = (expr);                                                           \
        if (s_ != EDDY_OK)                                                                 \
            return s_;                                                                     \
    } while (0)

/* Raise EDDY_ERR_INPUT with the message "<file>: <path>: <fmt ...>" (at most
 * 768 characters from fmt), recording the source file and line of the check
 * that called it (shown by `eddy2d ... --debug`).  Returns EDDY_ERR_INPUT. */
#define mesh_json_bad(r, path, ...) mesh_json_bad_at((r), __FILE__, __LINE__, (path), __VA_ARGS__)
eddy_status mesh_json_bad_at(mesh_reader *r, const char *file, int line, const char *path,
                             const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 5, 6)))
#endif
    ;

/* Append a warning (fmt ..., at most 255 characters; the caller names the
 * file and path in it) to r->c->warnings.  Returns EDDY_OK or
 * EDDY_ERR_NOMEM. */
eddy_status mesh_json_warn(mesh_reader *r, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 2, 3)))
#endif
    ;

/* Check the keys of the object obj at path: a key given twice is an error
 * (ambiguous), a key not in allowed a warning that names the closest allowed
 * key when one is near (a misspelling: "did you mean ...").  allowed: NULL-terminated list,
 * or NULL to accept any key.  Returns EDDY_OK, EDDY_ERR_INPUT, EDDY_ERR_NOMEM. */
eddy_status mesh_json_check_keys(mesh_reader *r, const cJSON *obj, const char *path,
                                 const char *const *allowed);

/* The value obj at path must be an object ("must be an object") whose keys
 * pass mesh_json_check_keys with allowed.  Returns EDDY_OK, EDDY_ERR_INPUT,
 * EDDY_ERR_NOMEM. */
eddy_status mesh_json_object(mesh_reader *r, const cJSON *obj, const char *path,
                             const char *const *allowed);

/* A finite number at obj[key] into *out.  An absent key is an error if
 * required, else leaves *out unchanged.  found (may be NULL) receives 1 if
 * the key is present, else 0.  Returns EDDY_OK or EDDY_ERR_INPUT. */
eddy_status mesh_json_number(mesh_reader *r, const cJSON *obj, const char *key,
                             const char *path, int required, double *out, int *found);

/* The array item (at path p) of exactly n > 0 finite numbers into vals[n].
 * Returns EDDY_OK or EDDY_ERR_INPUT. */
eddy_status mesh_json_numbers(mesh_reader *r, const cJSON *item, const char *p, int n,
                              double *vals);

/* The required array obj[key] (at path p) of exactly n finite numbers into
 * vals[n]; when it is absent the message is "missing (<shape> is
 * required)", shape e.g. "[x0, x1]".  Returns EDDY_OK or EDDY_ERR_INPUT. */
eddy_status mesh_json_numbers_at(mesh_reader *r, const cJSON *obj, const char *key,
                                 const char *p, const char *shape, int n, double *vals);

/* A string at obj[key]: *out points into the cJSON tree, or is NULL if the
 * key is absent (an error if required).  Returns EDDY_OK or EDDY_ERR_INPUT. */
eddy_status mesh_json_string(mesh_reader *r, const cJSON *obj, const char *key,
                             const char *path, int required, const char **out);

/* A positive number at obj[key] (required), multiplied by scale (e.g. the
 * case's length scale, or 1) into *out.  Returns EDDY_OK or EDDY_ERR_INPUT. */
eddy_status mesh_json_positive(mesh_reader *r, const cJSON *obj, const char *key,
                               const char *path, double scale, double *out);

/* Line and column (1-based) of the byte offset off in text. */
void mesh_json_line_col(const char *text, size_t off, int *line, int *col);

#endif
