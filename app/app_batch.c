/*
 * app_batch.c - what every batch file shares: the content hash, the state
 * names, freeing cases and plans, and the private helpers of
 * app/app_batch_int.h (paths, files, the JSON of variants, quoting).
 */
#include "app/app_batch_int.h"

#include <errno.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

uint64_t app_fnv1a64(const void *data, size_t size, uint64_t h)
{
    const unsigned char *p = data;
    for (size_t k = 0; k < size; k++) {
        h ^= p[k];
        h *= 0x100000001b3ULL; /* the 64-bit FNV prime, 2^40 + 2^8 + 0xb3 */
    }
    return h;
}

const char *app_case_state_name(app_case_state s)
{
    switch (s) {
    case APP_CASE_NOT_RUN: return "not run";
    case APP_CASE_OK: return "ok";
    case APP_CASE_INVALID: return "invalid";
    case APP_CASE_FAILED: return "failed";
    case APP_CASE_TIMEOUT: return "timeout";
    case APP_CASE_CRASHED: return "crashed";
    }
    return "unknown";
}

static void case_clear(app_batch_case *c)
{
    free(c->source);
    free(c->text);
    for (int k = 0; k < c->nvalue; k++) {
        free(c->paths != NULL ? c->paths[k] : NULL);
        free(c->values != NULL ? c->values[k] : NULL);
    }
    free(c->paths);
    free(c->values);
    free(c->warnings);
    memset(c, 0, sizeof *c);
}

void app_batch_cases_free(app_batch_case *cases, int n)
{
    if (cases == NULL)
        return;
    for (int k = 0; k < n; k++)
        case_clear(&cases[k]);
    free(cases);
}

void app_batch_plan_free(app_batch_plan *p)
{
    if (p == NULL)
        return;
    app_batch_cases_free(p->cases, p->ncase);
    for (int k = 0; k < p->nkey; k++)
        free(p->keys[k]);
    free(p->keys);
    free(p);
}

/* ------------------------------------------------------------------------ */
/* Private helpers of the batch files (app/app_batch_int.h)                  */
/* ------------------------------------------------------------------------ */

char *app_batch_strdup(const char *s)
{
    size_t n = strlen(s) + 1;
    char *d = malloc(n);
    if (d != NULL)
        memcpy(d, s, n);
    return d;
}

int app_batch_join(char *dst, size_t size, const char *dir, const char *a, const char *b)
{
    int n = b != NULL ? snprintf(dst, size, "%s/%s/%s", dir, a, b)
                      : snprintf(dst, size, "%s/%s", dir, a);
    return n >= 0 && (size_t)n < size;
}

/* 1 if path holds exactly data (size bytes). */
int app_batch_same_content(const char *path, const char *data, size_t size)
{
    struct stat st;
    if (stat(path, &st) != 0 || !S_ISREG(st.st_mode) || (size_t)st.st_size != size)
        return 0;
    char *old = NULL;
    size_t len = 0;
    if (eddy_read_file(path, (long)size + 1, &old, &len, NULL) != EDDY_OK)
        return 0;
    int same = len == size && memcmp(old, data, size) == 0;
    free(old);
    return same;
}

/* Remove a file; a missing file is fine. */
eddy_status app_batch_remove_file(const char *path, eddy_error *err)
{
    if (unlink(path) != 0 && errno != ENOENT)
        return EDDY_RAISE(err, EDDY_ERR_IO, "%s: cannot remove: %s", path, strerror(errno));
    return EDDY_OK;
}

/* The hash of an expanded case: tool version, output options, text. */
void app_batch_text_hash(const char *text, int images, char out[17])
{
    char head[128];
    int n = snprintf(head, sizeof head, "eddy2d %s\nimages=%d\n", EDDY_VERSION, images ? 1 : 0);
    uint64_t h = app_fnv1a64(head, (size_t)n, APP_FNV1A64_BASIS);
    h = app_fnv1a64(text, strlen(text), h);
    snprintf(out, 17, "%016llx", (unsigned long long)h);
}

/* The value of case c for a variant path, or NULL. */
const char *app_batch_variant_value(const app_batch_case *c, const char *path)
{
    for (int q = 0; q < c->nvalue; q++)
        if (strcmp(c->paths[q], path) == 0)
            return c->values[q];
    return NULL;
}

eddy_status app_batch_write_json(const char *path, cJSON *root, eddy_error *err)
{
    char *text = root != NULL ? cJSON_Print(root) : NULL;
    if (text == NULL)
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory writing %s", path);
    size_t len = strlen(text);
    eddy_status s = EDDY_OK;
    if (!app_batch_same_content(path, text, len))
        s = eddy_write_atomic(path, text, len, err);
    cJSON_free(text);
    return s;
}

/* Add a variant object {"path": value} for case c; 0 on failure. */
int app_batch_json_variant(cJSON *obj, const char *key, const app_batch_case *c)
{
    cJSON *v = cJSON_AddObjectToObject(obj, key);
    if (v == NULL)
        return 0;
    for (int q = 0; q < c->nvalue; q++) {
        cJSON *x = cJSON_Parse(c->values[q]);
        if (x == NULL || !cJSON_AddItemToObject(v, c->paths[q], x)) {
            cJSON_Delete(x);
            return 0;
        }
    }
    return 1;
}

/* root.variant_keys = the plan's variant paths; 0 on an allocation failure. */
int app_batch_json_variant_keys(cJSON *root, const app_batch_plan *p)
{
    cJSON *keys = cJSON_AddArrayToObject(root, "variant_keys");
    int ok = keys != NULL;
    for (int k = 0; ok && k < p->nkey; k++) {
        cJSON *x = cJSON_CreateString(p->keys[k]);
        ok = x != NULL && cJSON_AddItemToArray(keys, x);
        if (!ok)
            cJSON_Delete(x);
    }
    return ok;
}

void app_batch_quote(eddy_text *b, const char *s, char q, const char *escaped)
{
    eddy_text_put(b, &q, 1);
    for (const char *c = s; *c != '\0'; c++) {
        if (*c == q)
            eddy_text_str(b, escaped);
        else
            eddy_text_put(b, c, 1);
    }
    eddy_text_put(b, &q, 1);
}
