/*
 * app_batch_int.h - helpers shared by the batch files of the application
 * layer (app/app_batch*.c).  PRIVATE to app/: only app/app_batch*.c include
 * it; nothing here is part of the public interface (app/app_batch.h), and
 * nothing here prints or exits.
 *
 * Defined in app/app_batch.c, except app_batch_disk_state
 * (app/app_batch_case.c).
 */
#ifndef EDDY_APP_BATCH_INT_H
#define EDDY_APP_BATCH_INT_H

#include <stddef.h>

#include <cJSON.h>

#include "app/app_batch.h"

/* The largest case file read, bytes (the same limit as mesh_case_load). */
#define APP_BATCH_CASE_BYTES (16L * 1024 * 1024)

/* The completion marker in OUT/<case>/. */
#define APP_BATCH_HASH_FILE "input.hash"

/* A malloc'ed copy of s (the caller frees it); NULL if out of memory. */
char *app_batch_strdup(const char *s);

/* dst = "dir/a/b" (b NULL: "dir/a") in size bytes; 0 if it does not fit. */
int app_batch_join(char *dst, size_t size, const char *dir, const char *a, const char *b);

/* 1 if path is a regular file holding exactly data (size bytes). */
int app_batch_same_content(const char *path, const char *data, size_t size);

/* Remove a file; a missing file is fine.  EDDY_OK or EDDY_ERR_IO. */
eddy_status app_batch_remove_file(const char *path, eddy_error *err);

/* The hash of an expanded case text (tool version, images, text) as 16
 * hex digits and a NUL in out. */
void app_batch_text_hash(const char *text, int images, char out[17]);

/* The value (compact JSON text) of case c for a variant path, or NULL. */
const char *app_batch_variant_value(const app_batch_case *c, const char *path);

/* Print root (NULL: out of memory) and write it to path atomically unless
 * path already holds that text.  EDDY_OK, EDDY_ERR_IO, EDDY_ERR_NOMEM. */
eddy_status app_batch_write_json(const char *path, cJSON *root, eddy_error *err);

/* obj[key] = {"path": value, ...} of case c; 0 if out of memory. */
int app_batch_json_variant(cJSON *obj, const char *key, const app_batch_case *c);

/* root.variant_keys = the plan's variant paths; 0 if out of memory. */
int app_batch_json_variant_keys(cJSON *root, const app_batch_plan *p);

/* Append s to b between two q characters, each q inside s written as
 * escaped (CSV: '"' and "\"\"", sh: '\'' and "'\\''"). */
void app_batch_quote(eddy_text *b, const char *s, char q, const char *escaped);

/*
 * The state of case c from OUT/<case>/ (as app_batch_case_state) and what
 * was recorded with it: *seconds from input.hash or error.json (NAN if
 * none); msg (may be NULL) receives the message of error.json ("" if none)
 * in msgsize bytes.
 */
app_case_state app_batch_disk_state(const char *outdir, const app_batch_case *c,
                                    double *seconds, char *msg, size_t msgsize);

#endif
