/*
 * mesh_json.c - the case reader's cJSON helpers (private to mesh/, declared
 * in mesh/mesh_json.h): messages that name the file and the JSON path, the
 * warning list, key checks and typed getters.
 */
#include "mesh/mesh_json.h"

#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

eddy_status mesh_json_bad(mesh_reader *r, const char *path, const char *fmt, ...)
{
    char what[768];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(what, sizeof what, fmt, ap);
    va_end(ap);
    return EDDY_RAISE(r->err, EDDY_ERR_INPUT, "%s: %s: %s", r->fname, path, what);
}

eddy_status mesh_json_warn(mesh_reader *r, const char *fmt, ...)
{
    mesh_case *c = r->c;
    char(*w)[256] = realloc(c->warnings, (size_t)(c->nwarn + 1) * sizeof *w);
    if (w == NULL)
        return EDDY_RAISE(r->err, EDDY_ERR_NOMEM, "out of memory reading %s", r->fname);
    c->warnings = w;
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(c->warnings[c->nwarn], sizeof c->warnings[0], fmt, ap);
    va_end(ap);
    c->nwarn++;
    return EDDY_OK;
}

/* Duplicates are errors (ambiguous), unknown keys are warnings. */
eddy_status mesh_json_check_keys(mesh_reader *r, const cJSON *obj, const char *path,
                                 const char *const *allowed)
{
    for (const cJSON *a = obj->child; a != NULL; a = a->next) {
        for (const cJSON *b = a->next; b != NULL; b = b->next)
            if (strcmp(a->string, b->string) == 0)
                return mesh_json_bad(r, path, "key \"%s\" appears more than once", a->string);
        int known = allowed == NULL;
        for (int k = 0; allowed != NULL && allowed[k] != NULL; k++)
            if (strcmp(a->string, allowed[k]) == 0)
                known = 1;
        if (!known) {
            eddy_status s = mesh_json_warn(r, "%s: %s: unknown key \"%s\" ignored", r->fname,
                                           path, a->string);
            if (s != EDDY_OK)
                return s;
        }
    }
    return EDDY_OK;
}

eddy_status mesh_json_object(mesh_reader *r, const cJSON *obj, const char *path,
                             const char *const *allowed)
{
    if (!cJSON_IsObject(obj))
        return mesh_json_bad(r, path, "must be an object");
    return mesh_json_check_keys(r, obj, path, allowed);
}

eddy_status mesh_json_number(mesh_reader *r, const cJSON *obj, const char *key,
                             const char *path, int required, double *out, int *found)
{
    char p[300];
    snprintf(p, sizeof p, "%s%s%s", path, path[0] ? "." : "", key);
    const cJSON *item = cJSON_GetObjectItemCaseSensitive(obj, key);
    if (found != NULL)
        *found = item != NULL;
    if (item == NULL) {
        if (required)
            return mesh_json_bad(r, p, "missing (a number is required)");
        return EDDY_OK;
    }
    if (!cJSON_IsNumber(item))
        return mesh_json_bad(r, p, "must be a number");
    if (!isfinite(item->valuedouble))
        return mesh_json_bad(r, p, "must be a finite number");
    *out = item->valuedouble;
    return EDDY_OK;
}

eddy_status mesh_json_numbers(mesh_reader *r, const cJSON *item, const char *p, int n,
                              double *vals)
{
    if (!cJSON_IsArray(item))
        return mesh_json_bad(r, p, "must be an array of %d numbers", n);
    int len = cJSON_GetArraySize(item);
    if (len != n)
        return mesh_json_bad(r, p, "must have exactly %d numbers, found %d", n, len);
    int k = 0;
    for (const cJSON *e = item->child; e != NULL; e = e->next, k++) {
        if (!cJSON_IsNumber(e))
            return mesh_json_bad(r, p, "element %d must be a number", k);
        if (!isfinite(e->valuedouble))
            return mesh_json_bad(r, p, "element %d must be a finite number", k);
        vals[k] = e->valuedouble;
    }
    return EDDY_OK;
}

eddy_status mesh_json_string(mesh_reader *r, const cJSON *obj, const char *key,
                             const char *path, int required, const char **out)
{
    char p[300];
    snprintf(p, sizeof p, "%s%s%s", path, path[0] ? "." : "", key);
    const cJSON *item = cJSON_GetObjectItemCaseSensitive(obj, key);
    *out = NULL;
    if (item == NULL) {
        if (required)
            return mesh_json_bad(r, p, "missing (a string is required)");
        return EDDY_OK;
    }
    if (!cJSON_IsString(item) || item->valuestring == NULL)
        return mesh_json_bad(r, p, "must be a string");
    *out = item->valuestring;
    return EDDY_OK;
}

eddy_status mesh_json_positive(mesh_reader *r, const cJSON *obj, const char *key,
                               const char *path, double scale, double *out)
{
    MESH_TRY(mesh_json_number(r, obj, key, path, 1, out, NULL));
    if (!(*out > 0)) {
        char q[160];
        snprintf(q, sizeof q, "%s.%s", path, key);
        return mesh_json_bad(r, q, "must be positive");
    }
    *out *= scale;
    return EDDY_OK;
}

void mesh_json_line_col(const char *text, size_t off, int *line, int *col)
{
    *line = 1;
    *col = 1;
    for (size_t k = 0; k < off && text[k] != '\0'; k++) {
        if (text[k] == '\n') {
            (*line)++;
            *col = 1;
        } else {
            (*col)++;
        }
    }
}
