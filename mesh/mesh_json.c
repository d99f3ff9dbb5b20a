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

eddy_status mesh_json_bad_at(mesh_reader *r, const char *file, int line, const char *path,
                             const char *fmt, ...)
{
    char what[768];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(what, sizeof what, fmt, ap);
    va_end(ap);
    return eddy_raise(r->err, EDDY_ERR_INPUT, file, line, "%s: %s: %s", r->fname, path, what);
}

/* Edit distance (insertions, deletions, substitutions, and transpositions
 * of neighbours: the optimal string alignment distance) between a and b,
 * capped at 99 for strings longer than 63 characters. */
static int edit_distance(const char *a, const char *b)
{
    size_t la = strlen(a), lb = strlen(b);
    if (la > 63 || lb > 63)
        return 99;
    int d[64][64];
    for (size_t i = 0; i <= la; i++)
        d[i][0] = (int)i;
    for (size_t j = 0; j <= lb; j++)
        d[0][j] = (int)j;
    for (size_t i = 1; i <= la; i++)
        for (size_t j = 1; j <= lb; j++) {
            int cost = a[i - 1] != b[j - 1];
            int v = d[i - 1][j] + 1;
            if (d[i][j - 1] + 1 < v)
                v = d[i][j - 1] + 1;
            if (d[i - 1][j - 1] + cost < v)
                v = d[i - 1][j - 1] + cost;
            if (i > 1 && j > 1 && a[i - 1] == b[j - 2] && a[i - 2] == b[j - 1] &&
                d[i - 2][j - 2] + 1 < v)
                v = d[i - 2][j - 2] + 1;
            d[i][j] = v;
        }
    return d[la][lb];
}

/* The allowed key closest to key, if it is near enough to be a misspelling
 * (at most 2 edits, and fewer than a third of its letters), else NULL. */
static const char *closest_key(const char *key, const char *const *allowed)
{
    const char *best = NULL;
    int bestd = 99;
    for (int k = 0; allowed != NULL && allowed[k] != NULL; k++) {
        int dist = edit_distance(key, allowed[k]);
        if (dist < bestd) {
            bestd = dist;
            best = allowed[k];
        }
    }
    return best != NULL && bestd <= 2 && 3 * bestd < (int)strlen(best) ? best : NULL;
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
            const char *near = closest_key(a->string, allowed);
            eddy_status s = mesh_json_warn(r, "%s: %s%sunknown key \"%s\" ignored%s%s%s",
                                           r->fname, path, path[0] ? ": " : "", a->string,
                                           near != NULL ? " (did you mean \"" : "",
                                           near != NULL ? near : "", near != NULL ? "\"?)" : "");
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

eddy_status mesh_json_numbers_at(mesh_reader *r, const cJSON *obj, const char *key,
                                 const char *p, const char *shape, int n, double *vals)
{
    const cJSON *it = cJSON_GetObjectItemCaseSensitive(obj, key);
    if (it == NULL)
        return mesh_json_bad(r, p, "missing (%s is required)", shape);
    return mesh_json_numbers(r, it, p, n, vals);
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
