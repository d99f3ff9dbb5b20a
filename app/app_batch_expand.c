/*
 * app_batch_expand.c - variant expansion of one case file: dotted paths
 * into the parsed case, labels and names of the variants, the expanded case
 * texts, and their check with the case reader (app_batch_expand).
 */
#include "app/app_batch_int.h"

#include <cJSON.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "mesh/mesh.h"

static int name_char(char ch)
{
    return (ch >= 'a' && ch <= 'z') || (ch >= 'A' && ch <= 'Z') || (ch >= '0' && ch <= '9') ||
           ch == '-' || ch == '.';
}

/* ------------------------------------------------------------------------ */
/* Variant paths                                                             */
/* ------------------------------------------------------------------------ */

static int is_index(const char *s)
{
    size_t n = strlen(s);
    if (n == 0 || n > 9 || (n > 1 && s[0] == '0'))
        return 0;
    for (size_t k = 0; k < n; k++)
        if (s[k] < '0' || s[k] > '9')
            return 0;
    return 1;
}

static const char *type_name(const cJSON *x)
{
    if (cJSON_IsObject(x))
        return "an object";
    if (cJSON_IsArray(x))
        return "an array";
    if (cJSON_IsString(x))
        return "a string";
    if (cJSON_IsNumber(x))
        return "a number";
    if (cJSON_IsBool(x))
        return "true/false";
    return "null";
}

/*
 * Resolve a dotted path: segments separated by '.'; in an object a segment
 * is a key, in an array a 0-based index or the "name" of an element object.
 * On success *parent and *item are set; else why receives the reason.
 */
static int resolve_path(cJSON *root, const char *path, cJSON **parent, cJSON **item, char *why,
                        size_t whysize)
{
    cJSON *cur = root, *par = NULL;
    const char *s = path;
    char seg[256];
    size_t done = 0;
    for (;;) {
        const char *dot = strchr(s, '.');
        size_t n = dot != NULL ? (size_t)(dot - s) : strlen(s);
        if (n == 0) {
            snprintf(why, whysize, "empty segment (paths look like \"regions.1.box\")");
            return -1;
        }
        if (n >= sizeof seg) {
            snprintf(why, whysize, "segment %zu is longer than %zu characters", done + 1,
                     sizeof seg - 1);
            return -1;
        }
        memcpy(seg, s, n);
        seg[n] = '\0';
        int shown = (int)(s - path); /* the part of the path already resolved */
        cJSON *next = NULL;
        if (cJSON_IsObject(cur)) {
            next = cJSON_GetObjectItemCaseSensitive(cur, seg);
            if (next == NULL) {
                snprintf(why, whysize, "no key \"%.200s\" in %s%.*s (a variant may only change "
                                       "values the case already has)",
                         seg, shown > 0 ? "" : "the top level", shown > 0 ? shown - 1 : 0, path);
                return -1;
            }
        } else if (cJSON_IsArray(cur)) {
            int size = cJSON_GetArraySize(cur);
            if (is_index(seg)) {
                long k = strtol(seg, NULL, 10);
                if (k >= size) {
                    snprintf(why, whysize, "index %ld is out of range: %.*s has %d elements", k,
                             shown - 1, path, size);
                    return -1;
                }
                next = cJSON_GetArrayItem(cur, (int)k);
            } else {
                for (cJSON *e = cur->child; e != NULL && next == NULL; e = e->next) {
                    const cJSON *nm = cJSON_GetObjectItemCaseSensitive(e, "name");
                    if (cJSON_IsObject(e) && cJSON_IsString(nm) && nm->valuestring != NULL &&
                        strcmp(nm->valuestring, seg) == 0)
                        next = e;
                }
                if (next == NULL) {
                    snprintf(why, whysize, "%.*s has no element named \"%.200s\" (use an index "
                                           "or an element's \"name\")",
                             shown - 1, path, seg);
                    return -1;
                }
            }
        } else {
            snprintf(why, whysize, "%.*s is %s; only objects and arrays have members", shown - 1,
                     path, type_name(cur));
            return -1;
        }
        par = cur;
        cur = next;
        done++;
        if (dot == NULL)
            break;
        s = dot + 1;
    }
    *parent = par;
    *item = cur;
    return 0;
}

/* 1 if node lies inside the subtree of top (or is top). */
static int inside(const cJSON *top, const cJSON *node)
{
    if (top == node)
        return 1;
    for (const cJSON *e = top->child; e != NULL; e = e->next)
        if (inside(e, node))
            return 1;
    return 0;
}

/* Replace the item at path in root by a copy of value. */
static eddy_status set_path(cJSON *root, const char *path, const cJSON *value, eddy_error *err)
{
    cJSON *parent = NULL, *item = NULL;
    char why[512];
    if (resolve_path(root, path, &parent, &item, why, sizeof why) != 0)
        return EDDY_RAISE(err, EDDY_ERR_INTERNAL, "variant path %s vanished: %s", path, why);
    cJSON *copy = cJSON_Duplicate(value, 1);
    if (copy == NULL)
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory expanding variants");
    cJSON_bool ok;
    if (cJSON_IsObject(parent)) {
        ok = cJSON_ReplaceItemInObjectCaseSensitive(parent, item->string, copy);
    } else {
        int k = 0;
        for (cJSON *e = parent->child; e != NULL && e != item; e = e->next)
            k++;
        ok = cJSON_ReplaceItemInArray(parent, k, copy);
    }
    if (!ok) {
        cJSON_Delete(copy);
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory expanding variants");
    }
    return EDDY_OK;
}

/* The value part of a variant name: numbers and strings as written, arrays
 * of scalars joined with '_', characters outside [A-Za-z0-9.-] as '_'.
 * Returns 0 if the value cannot be shown (objects, nested arrays, too long). */
static int value_label(const cJSON *v, char *out, size_t size)
{
    char buf[256];
    buf[0] = '\0';
    if (cJSON_IsArray(v)) {
        size_t len = 0;
        for (const cJSON *e = v->child; e != NULL; e = e->next) {
            char one[128];
            if (cJSON_IsArray(e) || cJSON_IsObject(e) || !value_label(e, one, sizeof one))
                return 0;
            int n = snprintf(buf + len, sizeof buf - len, "%s%s", len > 0 ? "_" : "", one);
            if (n < 0 || (size_t)n >= sizeof buf - len)
                return 0;
            len += (size_t)n;
        }
    } else if (cJSON_IsObject(v)) {
        return 0;
    } else if (cJSON_IsString(v)) {
        if (v->valuestring == NULL || strlen(v->valuestring) >= sizeof buf)
            return 0;
        snprintf(buf, sizeof buf, "%s", v->valuestring);
    } else {
        char *t = cJSON_PrintUnformatted(v);
        if (t == NULL)
            return -1;
        int fits = strlen(t) < sizeof buf;
        if (fits)
            snprintf(buf, sizeof buf, "%s", t);
        cJSON_free(t);
        if (!fits)
            return 0;
    }
    size_t n = strlen(buf);
    if (n == 0 || n >= size)
        return 0;
    for (size_t k = 0; k <= n; k++)
        out[k] = k < n && !name_char(buf[k]) ? '_' : buf[k];
    return 1;
}

/* ------------------------------------------------------------------------ */
/* Expansion of one case file                                                */
/* ------------------------------------------------------------------------ */

/* The message the plain solve gives for a case that does not parse. */
static eddy_status parse_message(const char *text, const char *source, eddy_error *err)
{
    mesh_case *mc = NULL;
    eddy_status s = mesh_case_parse(text, source, &mc, err);
    mesh_case_free(mc);
    if (s == EDDY_OK)
        s = EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: not valid JSON", source);
    return s;
}

/* The JSON path (mesh style: regions[1].box) of the first number in x that
 * is not finite (1e999 reads as infinity and would print as null). */
static int find_nonfinite(const cJSON *x, char *path, size_t size, size_t len)
{
    if (cJSON_IsNumber(x))
        return !isfinite(x->valuedouble);
    int k = 0;
    for (const cJSON *e = x->child; e != NULL; e = e->next, k++) {
        int n = cJSON_IsArray(x) ? snprintf(path + len, size - len, "[%d]", k)
                                 : snprintf(path + len, size - len, "%s%s", len > 0 ? "." : "",
                                            e->string != NULL ? e->string : "");
        size_t add = n > 0 && (size_t)n < size - len ? (size_t)n : 0;
        if (find_nonfinite(e, path, size, len + add))
            return 1;
        path[len] = '\0';
    }
    return 0;
}

/* Validate an expanded case with the case reader; record the outcome. */
static eddy_status validate_case(app_batch_case *c)
{
    char label[4200];
    if (c->nvalue > 0)
        snprintf(label, sizeof label, "%s (variant %s)", c->source, c->name);
    else
        snprintf(label, sizeof label, "%s", c->source);
    eddy_error e = {0};
    mesh_case *mc = NULL;
    eddy_status s = mesh_case_parse(c->text, label, &mc, &e);
    if (s == EDDY_ERR_NOMEM)
        return s;
    if (s == EDDY_OK) { /* a mesh far too large is an input error too */
        mesh_estimate est;
        s = mesh_grid_estimate(mc, 0.0, &est, &e);
        if (s == EDDY_ERR_NOMEM) {
            mesh_case_free(mc);
            return s;
        }
    }
    if (s != EDDY_OK) {
        c->invalid = 1;
        c->error_status = s;
        snprintf(c->error, sizeof c->error, "%s", e.msg[0] ? e.msg : eddy_strerror(s));
        mesh_case_free(mc);
        return EDDY_OK;
    }
    c->speed_max = 0.0;
    for (int k = 0; k < mc->nspeed; k++)
        c->speed_max = fmax(c->speed_max, fabs(mc->speeds[k]));
    c->design_speed = mc->mesh.design_speed;
    if (mc->nwarn > 0) {
        eddy_text b = {0};
        for (int k = 0; k < mc->nwarn; k++) {
            eddy_text_str(&b, mc->warnings[k]);
            eddy_text_str(&b, "\n");
        }
        if (b.oom) {
            free(b.p);
            mesh_case_free(mc);
            return EDDY_ERR_NOMEM;
        }
        c->warnings = b.p;
    }
    mesh_case_free(mc);
    return EDDY_OK;
}

typedef struct {
    char *path;          /* as written in "variants" */
    cJSON *values;       /* the array (owned by the parsed root) */
    int n;
    int label_from;      /* offset of the label in path (shortest unique suffix) */
} vkey;

/* Where the label of a path starts: its last `depth` segments, extended
 * until they hold a segment that is not an index ("box.1", not "1"). */
static int label_start(const char *p, int depth)
{
    int from = (int)strlen(p), seen = 0, named = 0;
    while (from > 0) {
        int end = from;
        while (from > 0 && p[from - 1] != '.')
            from--;
        char seg[16];
        int n = end - from;
        snprintf(seg, sizeof seg, "%.*s", n < 15 ? n : 15, p + from);
        named = named || !(n < 15 && is_index(seg));
        seen++;
        if (seen >= depth && named)
            break;
        if (from > 0)
            from--; /* skip the '.' */
    }
    return from;
}

/* Labels: the shortest suffix of whole segments that tells the paths apart. */
static void make_labels(vkey *keys, int nkey)
{
    for (int depth = 1; depth <= 64; depth++) {
        for (int k = 0; k < nkey; k++)
            keys[k].label_from = label_start(keys[k].path, depth);
        int unique = 1;
        for (int a = 0; a < nkey && unique; a++)
            for (int b = a + 1; b < nkey && unique; b++)
                unique = strcmp(keys[a].path + keys[a].label_from,
                                keys[b].path + keys[b].label_from) != 0;
        if (unique)
            return;
    }
    for (int k = 0; k < nkey; k++)
        keys[k].label_from = 0;
}

/* Build the names of all combinations; 0 if they must fall back to vNNN. */
static int variant_names(const char *base, vkey *keys, int nkey, long total,
                         char (*names)[APP_BATCH_NAME_MAX])
{
    for (long t = 0; t < total; t++) {
        char name[APP_BATCH_NAME_MAX * 2];
        size_t len = (size_t)snprintf(name, sizeof name, "%s", base);
        long rest = t;
        long stride = total;
        for (int k = 0; k < nkey; k++) {
            stride /= keys[k].n;
            int idx = (int)(rest / stride);
            rest %= stride;
            char lab[APP_BATCH_NAME_MAX * 2], val[APP_BATCH_NAME_MAX * 2];
            if (value_label(cJSON_GetArrayItem(keys[k].values, idx), val, sizeof val) != 1)
                return 0;
            int m = snprintf(lab, sizeof lab, "%s", keys[k].path + keys[k].label_from);
            if (m < 0 || (size_t)m >= sizeof lab)
                return 0;
            for (int q = 0; lab[q] != '\0'; q++)
                if (!name_char(lab[q]) && lab[q] != '_')
                    lab[q] = '_';
            int w = snprintf(name + len, sizeof name - len, "__%s-%s", lab, val);
            if (w < 0 || (size_t)w >= sizeof name - len)
                return 0;
            len += (size_t)w;
        }
        if (len >= APP_BATCH_NAME_MAX || !mesh_name_is_safe(name))
            return 0;
        memcpy(names[t], name, len + 1);
    }
    for (long a = 0; a < total; a++) /* sanitising may have merged two values */
        for (long b = a + 1; b < total; b++)
            if (strcmp(names[a], names[b]) == 0)
                return 0;
    return 1;
}

static eddy_status no_memory(const char *source, eddy_error *err)
{
    return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory expanding %s", source);
}

/* The base name of the variants: the case's "name", else the file's stem. */
static eddy_status base_name(const cJSON *root, const char *source, char *name, size_t size,
                             eddy_error *err)
{
    const cJSON *nm = cJSON_GetObjectItemCaseSensitive(root, "name");
    if (nm == NULL) {
        eddy_name_from_path(source, name, size);
        return EDDY_OK;
    }
    if (!cJSON_IsString(nm) || nm->valuestring == NULL || !mesh_name_is_safe(nm->valuestring))
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: name: must have 1 to 63 characters, only "
                          "letters, digits, '_', '-' and '.' (it names the result folder), and "
                          "not start with '.'", source);
    snprintf(name, size, "%s", nm->valuestring);
    return EDDY_OK;
}

/* The case without "variants" and "name" (*base, the base of every variant;
 * the caller deletes it, also on error) and its "variants" object
 * (*variants, inside root; NULL if there is none). */
static eddy_status split_variants(const cJSON *root, const char *source, cJSON **base,
                                  const cJSON **variants, eddy_error *err)
{
    *variants = NULL;
    *base = cJSON_CreateObject();
    if (*base == NULL)
        return no_memory(source, err);
    int nvariants_key = 0;
    for (const cJSON *e = root->child; e != NULL; e = e->next) {
        if (strcmp(e->string, "variants") == 0) {
            *variants = e;
            nvariants_key++;
            continue;
        }
        if (strcmp(e->string, "name") == 0)
            continue;
        cJSON *d = cJSON_Duplicate(e, 1);
        if (d == NULL)
            return no_memory(source, err);
        if (!cJSON_AddItemToObject(*base, e->string, d)) {
            cJSON_Delete(d);
            return no_memory(source, err);
        }
    }
    if (nvariants_key > 1)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: variants: key \"variants\" appears more "
                          "than once", source);
    if (*variants != NULL && !cJSON_IsObject(*variants))
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: variants: must be an object "
                          "{\"path.to.key\": [value, ...], ...}", source);
    return EDDY_OK;
}

/* Check key k of "variants" (e, its value list) against the keys before it
 * and the base case; multiply *total by its number of values. */
static eddy_status read_key(cJSON *e, vkey *keys, int k, cJSON *base, const char *source,
                            long *total, eddy_error *err)
{
    keys[k].path = e->string;
    keys[k].values = e;
    if (strcmp(e->string, "name") == 0)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: variants.name: the name cannot vary (each "
                          "variant is named <name>__<key>-<value>)", source);
    if (strcmp(e->string, "variants") == 0 || strncmp(e->string, "variants.", 9) == 0)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: variants.%.300s: variants cannot vary "
                          "themselves", source, e->string);
    for (int q = 0; q < k; q++)
        if (strcmp(keys[q].path, e->string) == 0)
            return EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: variants: key \"%.300s\" appears more "
                              "than once", source, e->string);
    if (!cJSON_IsArray(e))
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: variants.%.300s: must be an array of "
                          "values", source, e->string);
    keys[k].n = cJSON_GetArraySize(e);
    if (keys[k].n == 0)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: variants.%.300s: must not be empty", source,
                          e->string);
    if (keys[k].n > APP_BATCH_MAX_VALUES)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: variants.%.300s: %d values, at most %d",
                          source, e->string, keys[k].n, APP_BATCH_MAX_VALUES);
    cJSON *parent = NULL, *item = NULL;
    char why[768];
    if (resolve_path(base, e->string, &parent, &item, why, sizeof why) != 0)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: variants.%.300s: %s", source, e->string,
                          why);
    *total *= keys[k].n;
    if (*total > APP_BATCH_MAX_VARIANTS)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: variants: more than %d combinations",
                          source, APP_BATCH_MAX_VARIANTS);
    return EDDY_OK;
}

/* The keys of a "variants" object (NULL: none), each checked against the
 * base case: *keys (*nkey entries; the caller frees the array, also on
 * error) and the number of combinations *total. */
static eddy_status read_keys(const cJSON *variants, cJSON *base, const char *source,
                             vkey **keys, int *nkey, long *total, eddy_error *err)
{
    *keys = NULL;
    *total = 1;
    *nkey = variants != NULL ? cJSON_GetArraySize(variants) : 0;
    if (*nkey > APP_BATCH_MAX_KEYS)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: variants: %d keys, at most %d", source,
                          *nkey, APP_BATCH_MAX_KEYS);
    if (*nkey == 0)
        return EDDY_OK;
    vkey *ks = calloc((size_t)*nkey, sizeof *ks);
    *keys = ks;
    if (ks == NULL)
        return no_memory(source, err);
    int k = 0;
    for (cJSON *e = variants->child; e != NULL; e = e->next, k++) {
        eddy_status s = read_key(e, ks, k, base, source, total, err);
        if (s != EDDY_OK)
            return s;
    }
    /* no two paths may name the same value or one inside another */
    for (int a = 0; a < *nkey; a++)
        for (int b = 0; b < *nkey; b++) {
            if (a == b)
                continue;
            cJSON *pa, *ia, *pb, *ib;
            char why[8];
            resolve_path(base, ks[a].path, &pa, &ia, why, sizeof why);
            resolve_path(base, ks[b].path, &pb, &ib, why, sizeof why);
            if (inside(ia, ib))
                return EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: variants: \"%.300s\" and \"%.300s\" "
                                  "change the same value", source, ks[a].path, ks[b].path);
        }
    return EDDY_OK;
}

/* The names of the total cases: the base name alone without variants, else
 * <name>__<label>-<value>..., or <name>__vNNN when those will not do. */
static void case_names(const char *basename, vkey *keys, int nkey, long total,
                       char (*names)[APP_BATCH_NAME_MAX])
{
    if (nkey > 0 && variant_names(basename, keys, nkey, total, names))
        return;
    int width = 3;
    for (long t = 1000; t <= total; t *= 10)
        width++;
    for (long t = 0; t < total; t++) {
        if (nkey == 0) {
            snprintf(names[t], sizeof names[t], "%s", basename);
            continue;
        }
        char tail[32];
        int tl = snprintf(tail, sizeof tail, "__v%0*ld", width, t + 1);
        int keep = (int)strlen(basename);
        if (keep + tl >= APP_BATCH_NAME_MAX)
            keep = APP_BATCH_NAME_MAX - 1 - tl;
        snprintf(names[t], sizeof names[t], "%.*s%s", keep, basename, tail);
    }
}

/* Combination t of total as a case tree (*out, NULL on error): "name"
 * first, then the base with each key's value set; the paths and values go
 * into c (allocated by the caller with nkey entries). */
static eddy_status expanded_tree(app_batch_case *c, const cJSON *base, const vkey *keys,
                                 int nkey, long t, long total, const char *source, cJSON **out,
                                 eddy_error *err)
{
    *out = NULL;
    cJSON *one = cJSON_CreateObject();
    if (one == NULL || cJSON_AddStringToObject(one, "name", c->name) == NULL) {
        cJSON_Delete(one);
        return no_memory(source, err);
    }
    for (const cJSON *e = base->child; e != NULL; e = e->next) {
        cJSON *d = cJSON_Duplicate(e, 1);
        if (d == NULL || !cJSON_AddItemToObject(one, e->string, d)) {
            cJSON_Delete(d);
            cJSON_Delete(one);
            return no_memory(source, err);
        }
    }
    long rest = t, stride = total;
    for (int q = 0; q < nkey; q++) {
        stride /= keys[q].n;
        int idx = (int)(rest / stride);
        rest %= stride;
        const cJSON *v = cJSON_GetArrayItem(keys[q].values, idx);
        eddy_status s = set_path(one, keys[q].path, v, err);
        if (s != EDDY_OK) {
            cJSON_Delete(one);
            return s;
        }
        c->paths[q] = app_batch_strdup(keys[q].path);
        c->values[q] = cJSON_PrintUnformatted(v);
        if (c->paths[q] == NULL || c->values[q] == NULL) {
            cJSON_Delete(one);
            return no_memory(source, err);
        }
    }
    *out = one;
    return EDDY_OK;
}

/* Fill case c, combination t of total named name: its source, variant
 * values, expanded text (ending in a newline), hash, and the reader's
 * verdict. */
static eddy_status build_case(app_batch_case *c, const char *name, const char *source,
                              const cJSON *base, const vkey *keys, int nkey, long t, long total,
                              int images, eddy_error *err)
{
    snprintf(c->name, sizeof c->name, "%s", name);
    c->source = app_batch_strdup(source);
    if (c->source == NULL)
        return no_memory(source, err);
    if (nkey > 0) {
        c->paths = calloc((size_t)nkey, sizeof *c->paths);
        c->values = calloc((size_t)nkey, sizeof *c->values);
        if (c->paths == NULL || c->values == NULL)
            return no_memory(source, err);
        c->nvalue = nkey;
    }
    cJSON *one = NULL;
    eddy_status s = expanded_tree(c, base, keys, nkey, t, total, source, &one, err);
    if (s != EDDY_OK)
        return s;
    char *printed = cJSON_Print(one);
    cJSON_Delete(one);
    if (printed == NULL)
        return no_memory(source, err);
    size_t plen = strlen(printed);
    c->text = malloc(plen + 2);
    if (c->text == NULL) {
        cJSON_free(printed);
        return no_memory(source, err);
    }
    memcpy(c->text, printed, plen);
    c->text[plen] = '\n';
    c->text[plen + 1] = '\0';
    cJSON_free(printed);
    app_batch_text_hash(c->text, images, c->hash);
    if (validate_case(c) != EDDY_OK)
        return no_memory(source, err);
    return EDDY_OK;
}

/* Variants are compared like with like only on meshes made by the same
 * rules, and the mesher resolves the skin depth up to the highest speed
 * (or mesh.design_speed): where the variants of a file solve different
 * speed lists and none gives mesh.design_speed, every variant gets
 * "mesh": {"design_speed": the highest speed of them all}, written into its
 * expanded text (case.json shows it) and its hash. */
static eddy_status share_mesh_rules(app_batch_case *cs, long total, int images,
                                    const char *source, eddy_error *err)
{
    double lo = INFINITY, hi = 0.0;
    for (long t = 0; t < total; t++) {
        if (cs[t].invalid)
            continue;
        if (cs[t].design_speed > 0)
            return EDDY_OK; /* the user chose the rule */
        lo = fmin(lo, cs[t].speed_max);
        hi = fmax(hi, cs[t].speed_max);
    }
    if (!(hi > lo))
        return EDDY_OK;
    for (long t = 0; t < total; t++) {
        app_batch_case *c = &cs[t];
        if (c->invalid)
            continue;
        cJSON *root = cJSON_Parse(c->text);
        cJSON *mesh = root != NULL ? cJSON_GetObjectItemCaseSensitive(root, "mesh") : NULL;
        if (root != NULL && mesh == NULL)
            mesh = cJSON_AddObjectToObject(root, "mesh");
        cJSON *ds = mesh != NULL ? cJSON_GetObjectItemCaseSensitive(mesh, "design_speed") : NULL;
        if (cJSON_IsNumber(ds))
            cJSON_SetNumberValue(ds, hi); /* an explicit 0: off */
        else if (mesh == NULL || !cJSON_IsObject(mesh) || ds != NULL ||
                 cJSON_AddNumberToObject(mesh, "design_speed", hi) == NULL) {
            cJSON_Delete(root);
            return no_memory(source, err);
        }
        char *printed = cJSON_Print(root);
        cJSON_Delete(root);
        size_t plen = printed != NULL ? strlen(printed) : 0;
        char *text = printed != NULL ? malloc(plen + 2) : NULL;
        if (text == NULL) {
            cJSON_free(printed);
            return no_memory(source, err);
        }
        memcpy(text, printed, plen);
        text[plen] = '\n';
        text[plen + 1] = '\0';
        cJSON_free(printed);
        free(c->text);
        c->text = text;
        free(c->warnings);
        c->warnings = NULL;
        app_batch_text_hash(c->text, images, c->hash);
        if (validate_case(c) != EDDY_OK)
            return no_memory(source, err);
    }
    return EDDY_OK;
}

eddy_status app_batch_expand(const char *text, const char *source, int images,
                             app_batch_case **cases, int *ncase, eddy_error *err)
{
    *cases = NULL;
    *ncase = 0;
    if (source == NULL)
        source = "(case)";
    eddy_status s = EDDY_OK;
    cJSON *base = NULL;
    const cJSON *variants = NULL;
    vkey *keys = NULL;
    int nkey = 0;
    long total = 1;
    char (*names)[APP_BATCH_NAME_MAX] = NULL;
    app_batch_case *out = NULL;
    char basename[APP_BATCH_NAME_MAX];
    char where[512] = "";

    const char *end = NULL;
    cJSON *root = cJSON_ParseWithOpts(text, &end, 1);
    if (root == NULL || !cJSON_IsObject(root))
        /* the plain solve's message (line and column, or the top level) */
        s = parse_message(text, source, err);
    else if (find_nonfinite(root, where, sizeof where, 0))
        s = EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: %s: must be a finite number", source,
                       where[0] ? where : "(top level)");
    if (s == EDDY_OK)
        s = base_name(root, source, basename, sizeof basename, err);
    if (s == EDDY_OK)
        s = split_variants(root, source, &base, &variants, err);
    if (s == EDDY_OK)
        s = read_keys(variants, base, source, &keys, &nkey, &total, err);
    if (s == EDDY_OK) {
        make_labels(keys, nkey);
        names = calloc((size_t)total, sizeof *names);
        out = calloc((size_t)total, sizeof *out);
        if (names == NULL || out == NULL)
            s = no_memory(source, err);
    }
    if (s == EDDY_OK)
        case_names(basename, keys, nkey, total, names);
    for (long t = 0; t < total && s == EDDY_OK; t++)
        s = build_case(&out[t], names[t], source, base, keys, nkey, t, total, images, err);
    if (s == EDDY_OK && nkey > 0)
        s = share_mesh_rules(out, total, images, source, err);
    free(names);
    free(keys);
    cJSON_Delete(base);
    cJSON_Delete(root);
    if (s != EDDY_OK) {
        app_batch_cases_free(out, out != NULL ? (int)total : 0);
        return s;
    }
    *cases = out;
    *ncase = (int)total;
    return EDDY_OK;
}
