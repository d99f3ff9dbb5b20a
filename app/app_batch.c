/*
 * app_batch.c - the library side of `eddy2d batch`: case discovery, variant
 * expansion, content hashes, resume decisions, per-case status files and
 * the batch summary (CSV, JSON, HTML).
 *
 * Layout of a batch folder OUT:
 *   OUT/batch.json              the plan: every case, its source and variant values
 *   OUT/<case>/case.json        the expanded case exactly as solved (input snapshot)
 *   OUT/<case>/result.json ...  the outputs of app_run_solve
 *   OUT/<case>/input.hash       completion marker, written after result.json
 *   OUT/<case>/error.json       a failed case: status, message, seconds
 *   OUT/summary.{csv,json,html} one row per case and speed
 *   OUT/batch.sbatch, summary.sbatch, submit.sh, slurm/   with --slurm
 * Every file is written to a temporary name and renamed (eddy_write_atomic).
 *
 * Nothing here prints, forks or exits; the front end (post/app_batch_main.c)
 * runs the cases.
 */
#include "app/app.h"

#include <cJSON.h>
#include <dirent.h>
#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

/* The same limit as mesh_case_load. */
#define MAX_CASE_BYTES (16L * 1024 * 1024)
#define HASH_FILE "input.hash"
#define HASH_TAG "fnv1a64"

/* ------------------------------------------------------------------------ */
/* Small helpers                                                             */
/* ------------------------------------------------------------------------ */

uint64_t app_fnv1a64(const void *data, size_t size, uint64_t h)
{
    const unsigned char *p = data;
    for (size_t k = 0; k < size; k++) {
        h ^= p[k];
        h *= 0x100000001b3ULL; /* the 64-bit FNV prime, 2^40 + 2^8 + 0xb3 */
    }
    return h;
}

static char *dup_str(const char *s)
{
    size_t n = strlen(s) + 1;
    char *d = malloc(n);
    if (d != NULL)
        memcpy(d, s, n);
    return d;
}

static int name_char(char ch)
{
    return (ch >= 'a' && ch <= 'z') || (ch >= 'A' && ch <= 'Z') || (ch >= '0' && ch <= '9') ||
           ch == '-' || ch == '.';
}

/* 1 if path holds exactly data (size bytes). */
static int same_content(const char *path, const char *data, size_t size)
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

static int join(char *dst, size_t size, const char *dir, const char *a, const char *b)
{
    int n = b != NULL ? snprintf(dst, size, "%s/%s/%s", dir, a, b)
                      : snprintf(dst, size, "%s/%s", dir, a);
    return n >= 0 && (size_t)n < size;
}

/* Remove a file; a missing file is fine. */
static eddy_status remove_file(const char *path, eddy_error *err)
{
    if (unlink(path) != 0 && errno != ENOENT)
        return EDDY_RAISE(err, EDDY_ERR_IO, "%s: cannot remove: %s", path, strerror(errno));
    return EDDY_OK;
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

static app_case_state state_from_name(const char *s)
{
    for (int k = APP_CASE_NOT_RUN; k <= APP_CASE_CRASHED; k++)
        if (strcmp(s, app_case_state_name((app_case_state)k)) == 0)
            return (app_case_state)k;
    return APP_CASE_FAILED;
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

/* The hash of an expanded case: tool version, output options, text. */
static void case_hash(const char *text, int images, char out[17])
{
    char head[128];
    int n = snprintf(head, sizeof head, "eddy2d %s\nimages=%d\n", EDDY_VERSION, images ? 1 : 0);
    uint64_t h = app_fnv1a64(head, (size_t)n, APP_FNV1A64_BASIS);
    h = app_fnv1a64(text, strlen(text), h);
    snprintf(out, 17, "%016llx", (unsigned long long)h);
}

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

#define FAIL_INPUT(...)                                                                        \
    do {                                                                                       \
        s = EDDY_RAISE(err, EDDY_ERR_INPUT, __VA_ARGS__);                                     \
        goto done;                                                                             \
    } while (0)
#define FAIL_NOMEM()                                                                           \
    do {                                                                                       \
        s = EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory expanding %s", source);            \
        goto done;                                                                             \
    } while (0)

eddy_status app_batch_expand(const char *text, const char *source, int images,
                              app_batch_case **cases, int *ncase, eddy_error *err)
{
    *cases = NULL;
    *ncase = 0;
    if (source == NULL)
        source = "(case)";
    eddy_status s = EDDY_OK;
    cJSON *root = NULL, *base = NULL;
    vkey *keys = NULL;
    int nkey = 0;
    char (*names)[APP_BATCH_NAME_MAX] = NULL;
    app_batch_case *out = NULL;
    long total = 1;

    const char *end = NULL;
    root = cJSON_ParseWithOpts(text, &end, 1);
    if (root == NULL || !cJSON_IsObject(root)) {
        /* the plain solve's message (line and column, or the top level) */
        s = parse_message(text, source, err);
        goto done;
    }
    char where[512] = "";
    if (find_nonfinite(root, where, sizeof where, 0))
        FAIL_INPUT("%s: %s: must be a finite number", source, where[0] ? where : "(top level)");
    /* the base name */
    char basename[APP_BATCH_NAME_MAX];
    const cJSON *nm = cJSON_GetObjectItemCaseSensitive(root, "name");
    if (nm != NULL) {
        if (!cJSON_IsString(nm) || nm->valuestring == NULL || !mesh_name_is_safe(nm->valuestring))
            FAIL_INPUT("%s: name: must have 1 to 63 characters, only letters, digits, '_', '-' "
                       "and '.' (it names the result folder), and not start with '.'",
                       source);
        snprintf(basename, sizeof basename, "%s", nm->valuestring);
    } else {
        eddy_name_from_path(source, basename, sizeof basename);
    }
    /* the case without "variants" and "name": the base of every variant */
    base = cJSON_CreateObject();
    if (base == NULL)
        FAIL_NOMEM();
    const cJSON *variants = NULL;
    int nvariants_key = 0;
    for (const cJSON *e = root->child; e != NULL; e = e->next) {
        if (strcmp(e->string, "variants") == 0) {
            variants = e;
            nvariants_key++;
            continue;
        }
        if (strcmp(e->string, "name") == 0)
            continue;
        cJSON *d = cJSON_Duplicate(e, 1);
        if (d == NULL)
            FAIL_NOMEM();
        if (!cJSON_AddItemToObject(base, e->string, d)) {
            cJSON_Delete(d);
            FAIL_NOMEM();
        }
    }
    if (nvariants_key > 1)
        FAIL_INPUT("%s: variants: key \"variants\" appears more than once", source);
    if (variants != NULL && !cJSON_IsObject(variants))
        FAIL_INPUT("%s: variants: must be an object {\"path.to.key\": [value, ...], ...}",
                   source);
    nkey = variants != NULL ? cJSON_GetArraySize(variants) : 0;
    if (nkey > APP_BATCH_MAX_KEYS)
        FAIL_INPUT("%s: variants: %d keys, at most %d", source, nkey, APP_BATCH_MAX_KEYS);
    if (nkey > 0) {
        keys = calloc((size_t)nkey, sizeof *keys);
        if (keys == NULL)
            FAIL_NOMEM();
    }
    int k = 0;
    for (cJSON *e = variants != NULL ? variants->child : NULL; e != NULL; e = e->next, k++) {
        keys[k].path = e->string;
        keys[k].values = e;
        if (strcmp(e->string, "name") == 0)
            FAIL_INPUT("%s: variants.name: the name cannot vary (each variant is named "
                       "<name>__<key>-<value>)", source);
        if (strcmp(e->string, "variants") == 0 || strncmp(e->string, "variants.", 9) == 0)
            FAIL_INPUT("%s: variants.%.300s: variants cannot vary themselves", source, e->string);
        for (int q = 0; q < k; q++)
            if (strcmp(keys[q].path, e->string) == 0)
                FAIL_INPUT("%s: variants: key \"%.300s\" appears more than once", source,
                           e->string);
        if (!cJSON_IsArray(e))
            FAIL_INPUT("%s: variants.%.300s: must be an array of values", source, e->string);
        keys[k].n = cJSON_GetArraySize(e);
        if (keys[k].n == 0)
            FAIL_INPUT("%s: variants.%.300s: must not be empty", source, e->string);
        if (keys[k].n > APP_BATCH_MAX_VALUES)
            FAIL_INPUT("%s: variants.%.300s: %d values, at most %d", source, e->string,
                       keys[k].n, APP_BATCH_MAX_VALUES);
        cJSON *parent = NULL, *item = NULL;
        char why[768];
        if (resolve_path(base, e->string, &parent, &item, why, sizeof why) != 0)
            FAIL_INPUT("%s: variants.%.300s: %s", source, e->string, why);
        total *= keys[k].n;
        if (total > APP_BATCH_MAX_VARIANTS)
            FAIL_INPUT("%s: variants: more than %d combinations", source,
                       APP_BATCH_MAX_VARIANTS);
    }
    /* no two paths may name the same value or one inside another */
    for (int a = 0; a < nkey; a++)
        for (int b = 0; b < nkey; b++) {
            if (a == b)
                continue;
            cJSON *pa, *ia, *pb, *ib;
            char why[8];
            resolve_path(base, keys[a].path, &pa, &ia, why, sizeof why);
            resolve_path(base, keys[b].path, &pb, &ib, why, sizeof why);
            if (inside(ia, ib))
                FAIL_INPUT("%s: variants: \"%.300s\" and \"%.300s\" change the same value",
                           source, keys[a].path, keys[b].path);
        }
    make_labels(keys, nkey);
    names = calloc((size_t)total, sizeof *names);
    out = calloc((size_t)total, sizeof *out);
    if (names == NULL || out == NULL)
        FAIL_NOMEM();
    if (nkey == 0 || !variant_names(basename, keys, nkey, total, names)) {
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
    for (long t = 0; t < total; t++) {
        app_batch_case *c = &out[t];
        snprintf(c->name, sizeof c->name, "%s", names[t]);
        c->source = dup_str(source);
        if (c->source == NULL)
            FAIL_NOMEM();
        if (nkey > 0) {
            c->paths = calloc((size_t)nkey, sizeof *c->paths);
            c->values = calloc((size_t)nkey, sizeof *c->values);
            if (c->paths == NULL || c->values == NULL)
                FAIL_NOMEM();
            c->nvalue = nkey;
        }
        /* the expanded case: "name" first, then the base with the values set */
        cJSON *one = cJSON_CreateObject();
        if (one == NULL || cJSON_AddStringToObject(one, "name", c->name) == NULL) {
            cJSON_Delete(one);
            FAIL_NOMEM();
        }
        for (const cJSON *e = base->child; e != NULL; e = e->next) {
            cJSON *d = cJSON_Duplicate(e, 1);
            if (d == NULL || !cJSON_AddItemToObject(one, e->string, d)) {
                cJSON_Delete(d);
                cJSON_Delete(one);
                FAIL_NOMEM();
            }
        }
        long rest = t, stride = total;
        for (int q = 0; q < nkey; q++) {
            stride /= keys[q].n;
            int idx = (int)(rest / stride);
            rest %= stride;
            const cJSON *v = cJSON_GetArrayItem(keys[q].values, idx);
            s = set_path(one, keys[q].path, v, err);
            if (s != EDDY_OK) {
                cJSON_Delete(one);
                goto done;
            }
            c->paths[q] = dup_str(keys[q].path);
            c->values[q] = cJSON_PrintUnformatted(v);
            if (c->paths[q] == NULL || c->values[q] == NULL) {
                cJSON_Delete(one);
                FAIL_NOMEM();
            }
        }
        char *printed = cJSON_Print(one);
        cJSON_Delete(one);
        if (printed == NULL)
            FAIL_NOMEM();
        size_t plen = strlen(printed);
        c->text = malloc(plen + 2);
        if (c->text == NULL) {
            cJSON_free(printed);
            FAIL_NOMEM();
        }
        memcpy(c->text, printed, plen);
        c->text[plen] = '\n';
        c->text[plen + 1] = '\0';
        cJSON_free(printed);
        case_hash(c->text, images, c->hash);
        if (validate_case(c) != EDDY_OK)
            FAIL_NOMEM();
    }
done:
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

/* ------------------------------------------------------------------------ */
/* The plan                                                                  */
/* ------------------------------------------------------------------------ */

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

static int cmp_str(const void *a, const void *b)
{
    return strcmp(*(char *const *)a, *(char *const *)b);
}

static void free_list(char **list, int n)
{
    for (int k = 0; k < n; k++)
        free(list[k]);
    free(list);
}

/* Append a path to a list. */
static eddy_status list_add(char ***list, int *n, int *cap, const char *s)
{
    if (*n == *cap) {
        int nc = *cap ? 2 * *cap : 16;
        char **q = realloc(*list, (size_t)nc * sizeof *q);
        if (q == NULL)
            return EDDY_ERR_NOMEM;
        *list = q;
        *cap = nc;
    }
    char *d = dup_str(s);
    if (d == NULL)
        return EDDY_ERR_NOMEM;
    (*list)[(*n)++] = d;
    return EDDY_OK;
}

eddy_status app_batch_collect(int nargs, const char *const *args, char ***files, int *nfiles,
                               eddy_error *err)
{
    *files = NULL;
    *nfiles = 0;
    char **list = NULL;
    int n = 0, cap = 0;
    eddy_status s = EDDY_OK;
    if (nargs < 1)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "no case files or folders given");
    for (int a = 0; a < nargs && s == EDDY_OK; a++) {
        struct stat st;
        if (stat(args[a], &st) != 0) {
            s = EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: %s", args[a], strerror(errno));
            break;
        }
        if (!S_ISDIR(st.st_mode)) {
            if (list_add(&list, &n, &cap, args[a]) != EDDY_OK)
                s = EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
            continue;
        }
        DIR *d = opendir(args[a]);
        if (d == NULL) {
            s = EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: cannot list the folder: %s", args[a],
                           strerror(errno));
            break;
        }
        int first = n;
        struct dirent *de;
        size_t alen = strlen(args[a]);
        int slash = alen > 0 && args[a][alen - 1] == '/';
        while ((de = readdir(d)) != NULL) {
            size_t len = strlen(de->d_name);
            if (de->d_name[0] == '.' || len < 6 || strcmp(de->d_name + len - 5, ".json") != 0)
                continue;
            char path[4096];
            int w = snprintf(path, sizeof path, "%s%s%s", args[a], slash ? "" : "/", de->d_name);
            if (w < 0 || (size_t)w >= sizeof path) {
                s = EDDY_RAISE(err, EDDY_ERR_INPUT, "%s/%s: path too long", args[a], de->d_name);
                break;
            }
            if (list_add(&list, &n, &cap, path) != EDDY_OK) {
                s = EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
                break;
            }
        }
        closedir(d);
        if (s != EDDY_OK)
            break;
        if (n == first)
            s = EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: no case files (*.json) in this folder",
                           args[a]);
        else
            qsort(list + first, (size_t)(n - first), sizeof *list, cmp_str);
    }
    if (s != EDDY_OK) {
        free_list(list, n);
        return s;
    }
    *files = list;
    *nfiles = n;
    return EDDY_OK;
}

/* Names that the batch folder uses for its own files. */
static int reserved_name(const char *name)
{
    static const char *const reserved[] = {"batch.json", "batch.sbatch", "summary.sbatch",
                                           "submit.sh", "summary.csv", "summary.json",
                                           "summary.html", "slurm", NULL};
    for (int k = 0; reserved[k] != NULL; k++)
        if (strcmp(name, reserved[k]) == 0)
            return 1;
    return 0;
}

/* One invalid case for a source that cannot be read or expanded. */
static eddy_status invalid_source(const char *path, const char *text, size_t len,
                                  eddy_status why, const char *msg, int images,
                                  app_batch_case **cases, int *ncase)
{
    app_batch_case *c = calloc(1, sizeof *c);
    if (c == NULL)
        return EDDY_ERR_NOMEM;
    c->source = dup_str(path);
    if (c->source == NULL) {
        free(c);
        return EDDY_ERR_NOMEM;
    }
    /* its name: the case's own "name" if it has a good one, else the file's stem */
    c->name[0] = '\0';
    if (text != NULL) {
        cJSON *root = cJSON_Parse(text);
        const cJSON *nm = cJSON_GetObjectItemCaseSensitive(root, "name");
        if (cJSON_IsObject(root) && cJSON_IsString(nm) && nm->valuestring != NULL &&
            mesh_name_is_safe(nm->valuestring))
            snprintf(c->name, sizeof c->name, "%s", nm->valuestring);
        cJSON_Delete(root);
    }
    if (c->name[0] == '\0')
        eddy_name_from_path(path, c->name, sizeof c->name);
    c->invalid = 1;
    c->error_status = why;
    snprintf(c->error, sizeof c->error, "%s", msg);
    /* the hash of what was read, so a changed file is looked at again */
    char head[64];
    int n = snprintf(head, sizeof head, "invalid\neddy2d %s\n", EDDY_VERSION);
    uint64_t h = app_fnv1a64(head, (size_t)n, APP_FNV1A64_BASIS);
    h = text != NULL ? app_fnv1a64(text, len, h) : app_fnv1a64(msg, strlen(msg), h);
    h = app_fnv1a64(images ? "1" : "0", 1, h);
    snprintf(c->hash, sizeof c->hash, "%016llx", (unsigned long long)h);
    *cases = c;
    *ncase = 1;
    return EDDY_OK;
}

eddy_status app_batch_plan_build(int nargs, const char *const *args, int images,
                                  app_batch_plan **out, eddy_error *err)
{
    *out = NULL;
    char **files = NULL;
    int nfiles = 0;
    eddy_status s = app_batch_collect(nargs, args, &files, &nfiles, err);
    if (s != EDDY_OK)
        return s;
    app_batch_plan *p = calloc(1, sizeof *p);
    if (p == NULL) {
        free_list(files, nfiles);
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
    }
    p->images = images ? 1 : 0;
    int cap = 0;
    for (int f = 0; f < nfiles && s == EDDY_OK; f++) {
        char *text = NULL;
        size_t len = 0;
        eddy_error e = {0};
        app_batch_case *cs = NULL;
        int nc = 0;
        eddy_status r = eddy_read_file(files[f], MAX_CASE_BYTES, &text, &len, &e);
        if (r == EDDY_OK)
            r = app_batch_expand(text, files[f], p->images, &cs, &nc, &e);
        if (r != EDDY_OK && r != EDDY_ERR_NOMEM) {
            /* the reading error as the plain solve words it (e.g. a folder) */
            if (text == NULL) {
                mesh_case *mc = NULL;
                eddy_error e2 = {0};
                if (mesh_case_load(files[f], &mc, &e2) != EDDY_OK && e2.msg[0] != '\0')
                    e = e2;
                mesh_case_free(mc);
            }
            r = invalid_source(files[f], text, len, r == EDDY_ERR_IO ? EDDY_ERR_INPUT : r,
                               e.msg[0] ? e.msg : eddy_strerror(r), p->images, &cs, &nc);
        }
        free(text);
        if (r != EDDY_OK) {
            s = EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory planning the batch");
            break;
        }
        if (p->ncase + nc > cap) {
            int ncap = cap ? 2 * cap : 16;
            while (ncap < p->ncase + nc)
                ncap *= 2;
            app_batch_case *q = realloc(p->cases, (size_t)ncap * sizeof *q);
            if (q == NULL) {
                app_batch_cases_free(cs, nc);
                s = EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory planning the batch");
                break;
            }
            p->cases = q;
            cap = ncap;
        }
        memcpy(p->cases + p->ncase, cs, (size_t)nc * sizeof *cs);
        p->ncase += nc;
        free(cs); /* the members now belong to the plan */
    }
    free_list(files, nfiles);
    /* every case needs its own folder */
    for (int a = 0; a < p->ncase && s == EDDY_OK; a++) {
        const app_batch_case *c = &p->cases[a];
        if (reserved_name(c->name))
            s = EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: the case name \"%s\" is the name of a "
                           "file of the batch folder; rename the case", c->source, c->name);
        for (int b = 0; b < a && s == EDDY_OK; b++)
            if (strcmp(c->name, p->cases[b].name) == 0)
                s = EDDY_RAISE(err, EDDY_ERR_INPUT, "%s and %s: two cases named \"%s\" would "
                               "write to the same folder; give them different names",
                               p->cases[b].source, c->source, c->name);
    }
    /* the distinct variant paths, in order of first appearance */
    for (int a = 0; a < p->ncase && s == EDDY_OK; a++)
        for (int q = 0; q < p->cases[a].nvalue && s == EDDY_OK; q++) {
            const char *path = p->cases[a].paths[q];
            int seen = 0;
            for (int k = 0; k < p->nkey && !seen; k++)
                seen = strcmp(p->keys[k], path) == 0;
            if (seen)
                continue;
            char **nk = realloc(p->keys, (size_t)(p->nkey + 1) * sizeof *nk);
            if (nk == NULL) {
                s = EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
                break;
            }
            p->keys = nk;
            p->keys[p->nkey] = dup_str(path);
            if (p->keys[p->nkey] == NULL)
                s = EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
            else
                p->nkey++;
        }
    if (s != EDDY_OK) {
        app_batch_plan_free(p);
        return s;
    }
    *out = p;
    return EDDY_OK;
}

/* The value of case c for a variant path, or NULL. */
static const char *case_value(const app_batch_case *c, const char *path)
{
    for (int q = 0; q < c->nvalue; q++)
        if (strcmp(c->paths[q], path) == 0)
            return c->values[q];
    return NULL;
}

/* ------------------------------------------------------------------------ */
/* Saving and loading the plan                                               */
/* ------------------------------------------------------------------------ */

static eddy_status write_json(const char *path, cJSON *root, eddy_error *err)
{
    char *text = root != NULL ? cJSON_Print(root) : NULL;
    if (text == NULL)
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory writing %s", path);
    size_t len = strlen(text);
    eddy_status s = EDDY_OK;
    if (!same_content(path, text, len))
        s = eddy_write_atomic(path, text, len, err);
    cJSON_free(text);
    return s;
}

/* Add a variant object {"path": value} for case c; 0 on failure. */
static int add_variant_object(cJSON *obj, const char *key, const app_batch_case *c)
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
static int add_variant_keys(cJSON *root, const app_batch_plan *p)
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

eddy_status app_batch_plan_save(const app_batch_plan *p, const char *outdir, eddy_error *err)
{
    eddy_status s = eddy_make_dir(outdir, err);
    if (s != EDDY_OK)
        return s;
    char path[4200];
    for (int k = 0; k < p->ncase && s == EDDY_OK; k++) {
        const app_batch_case *c = &p->cases[k];
        if (c->invalid)
            continue;
        char dir[4200];
        if (!join(dir, sizeof dir, outdir, c->name, NULL) ||
            !join(path, sizeof path, outdir, c->name, "case.json"))
            return EDDY_RAISE(err, EDDY_ERR_IO, "%s/%s: path too long", outdir, c->name);
        size_t len = strlen(c->text);
        if (same_content(path, c->text, len))
            continue;
        s = eddy_make_dir(dir, err);
        if (s != EDDY_OK)
            break;
        /* a new input: first invalidate any old completion marker */
        join(path, sizeof path, outdir, c->name, HASH_FILE);
        s = remove_file(path, err);
        join(path, sizeof path, outdir, c->name, "case.json");
        if (s == EDDY_OK)
            s = eddy_write_atomic(path, c->text, len, err);
    }
    if (s != EDDY_OK)
        return s;
    cJSON *root = cJSON_CreateObject();
    int ok = root != NULL;
    ok = ok && cJSON_AddStringToObject(root, "tool", "eddy2d " EDDY_VERSION) != NULL;
    ok = ok && cJSON_AddNumberToObject(root, "format", 1) != NULL;
    ok = ok && cJSON_AddBoolToObject(root, "images", p->images) != NULL;
    ok = ok && add_variant_keys(root, p);
    cJSON *cases = ok ? cJSON_AddArrayToObject(root, "cases") : NULL;
    ok = cases != NULL;
    for (int k = 0; ok && k < p->ncase; k++) {
        const app_batch_case *c = &p->cases[k];
        cJSON *o = cJSON_CreateObject();
        ok = o != NULL && cJSON_AddItemToArray(cases, o);
        if (!ok) {
            cJSON_Delete(o);
            break;
        }
        ok = cJSON_AddStringToObject(o, "name", c->name) != NULL &&
             cJSON_AddStringToObject(o, "source", c->source) != NULL &&
             add_variant_object(o, "variant", c) &&
             cJSON_AddStringToObject(o, "hash", c->hash) != NULL &&
             cJSON_AddBoolToObject(o, "invalid", c->invalid) != NULL;
        if (ok && c->invalid)
            ok = cJSON_AddStringToObject(o, "error", c->error) != NULL;
    }
    if (!ok) {
        cJSON_Delete(root);
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory writing the batch plan");
    }
    join(path, sizeof path, outdir, "batch.json", NULL);
    s = write_json(path, root, err);
    cJSON_Delete(root);
    return s;
}

eddy_status app_batch_plan_load(const char *outdir, app_batch_plan **out, eddy_error *err)
{
    *out = NULL;
    char path[4200];
    if (!join(path, sizeof path, outdir, "batch.json", NULL))
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: path too long", outdir);
    char *text = NULL;
    eddy_status s = eddy_read_file(path, 1L << 30, &text, NULL, err);
    if (s != EDDY_OK)
        return s == EDDY_ERR_NOMEM ? s : EDDY_ERR_INPUT;
    cJSON *root = cJSON_Parse(text);
    free(text);
    app_batch_plan *p = NULL;
    const cJSON *tool = cJSON_GetObjectItemCaseSensitive(root, "tool");
    const cJSON *cases = cJSON_GetObjectItemCaseSensitive(root, "cases");
    const cJSON *keys = cJSON_GetObjectItemCaseSensitive(root, "variant_keys");
    if (!cJSON_IsObject(root) || !cJSON_IsString(tool) || !cJSON_IsArray(cases) ||
        !cJSON_IsArray(keys)) {
        s = EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: not a batch plan written by eddy2d", path);
        goto fail;
    }
    if (strcmp(tool->valuestring, "eddy2d " EDDY_VERSION) != 0) {
        s = EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: written by %s, this is eddy2d %s; plan the "
                       "batch again", path, tool->valuestring, EDDY_VERSION);
        goto fail;
    }
    p = calloc(1, sizeof *p);
    int n = cJSON_GetArraySize(cases), nk = cJSON_GetArraySize(keys);
    if (p == NULL || (n > 0 && (p->cases = calloc((size_t)n, sizeof *p->cases)) == NULL) ||
        (nk > 0 && (p->keys = calloc((size_t)nk, sizeof *p->keys)) == NULL)) {
        s = EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
        goto fail;
    }
    p->images = cJSON_IsTrue(cJSON_GetObjectItemCaseSensitive(root, "images"));
    for (const cJSON *e = keys->child; e != NULL; e = e->next) {
        if (!cJSON_IsString(e)) {
            s = EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: variant_keys: must be strings", path);
            goto fail;
        }
        if ((p->keys[p->nkey] = dup_str(e->valuestring)) == NULL) {
            s = EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
            goto fail;
        }
        p->nkey++;
    }
    int k = 0;
    for (const cJSON *e = cases->child; e != NULL; e = e->next, k++) {
        app_batch_case *c = &p->cases[k];
        p->ncase = k + 1;
        const cJSON *nm = cJSON_GetObjectItemCaseSensitive(e, "name");
        const cJSON *src = cJSON_GetObjectItemCaseSensitive(e, "source");
        const cJSON *hash = cJSON_GetObjectItemCaseSensitive(e, "hash");
        const cJSON *var = cJSON_GetObjectItemCaseSensitive(e, "variant");
        const cJSON *inv = cJSON_GetObjectItemCaseSensitive(e, "invalid");
        const cJSON *msg = cJSON_GetObjectItemCaseSensitive(e, "error");
        if (!cJSON_IsString(nm) || !mesh_name_is_safe(nm->valuestring) || !cJSON_IsString(src) ||
            !cJSON_IsString(hash) || strlen(hash->valuestring) != 16 || !cJSON_IsObject(var) ||
            !cJSON_IsBool(inv)) {
            s = EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: cases[%d]: damaged entry", path, k);
            goto fail;
        }
        snprintf(c->name, sizeof c->name, "%s", nm->valuestring);
        snprintf(c->hash, sizeof c->hash, "%s", hash->valuestring);
        c->invalid = cJSON_IsTrue(inv);
        if ((c->source = dup_str(src->valuestring)) == NULL) {
            s = EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
            goto fail;
        }
        int nv = cJSON_GetArraySize(var);
        if (nv > 0) {
            c->paths = calloc((size_t)nv, sizeof *c->paths);
            c->values = calloc((size_t)nv, sizeof *c->values);
            if (c->paths == NULL || c->values == NULL) {
                s = EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
                goto fail;
            }
        }
        for (const cJSON *v = var->child; v != NULL; v = v->next) {
            c->paths[c->nvalue] = dup_str(v->string);
            c->values[c->nvalue] = cJSON_PrintUnformatted(v);
            c->nvalue++;
            if (c->paths[c->nvalue - 1] == NULL || c->values[c->nvalue - 1] == NULL) {
                s = EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
                goto fail;
            }
        }
        if (c->invalid) {
            c->error_status = EDDY_ERR_INPUT;
            snprintf(c->error, sizeof c->error, "%s",
                     cJSON_IsString(msg) ? msg->valuestring : "invalid case");
            continue;
        }
        char cpath[4200];
        if (!join(cpath, sizeof cpath, outdir, c->name, "case.json")) {
            s = EDDY_RAISE(err, EDDY_ERR_INPUT, "%s/%s: path too long", outdir, c->name);
            goto fail;
        }
        s = eddy_read_file(cpath, MAX_CASE_BYTES, &c->text, NULL, err);
        if (s != EDDY_OK)
            goto fail;
        char h[17];
        case_hash(c->text, p->images, h);
        if (strcmp(h, c->hash) != 0) {
            s = EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: changed since the batch was planned "
                           "(hash %s, planned %s); plan the batch again", cpath, h, c->hash);
            goto fail;
        }
    }
    cJSON_Delete(root);
    *out = p;
    return EDDY_OK;
fail:
    cJSON_Delete(root);
    app_batch_plan_free(p);
    return s;
}

/* ------------------------------------------------------------------------ */
/* Per-case state on disk                                                    */
/* ------------------------------------------------------------------------ */

/* Seconds recorded in input.hash or error.json; NAN if none. */
static app_case_state disk_state(const char *outdir, const app_batch_case *c, double *seconds,
                                  char *msg, size_t msgsize)
{
    char path[4200];
    char *text = NULL;
    *seconds = NAN;
    if (msg != NULL && msgsize > 0)
        msg[0] = '\0';
    struct stat st;
    if (join(path, sizeof path, outdir, c->name, "result.json") && stat(path, &st) == 0 &&
        S_ISREG(st.st_mode) && join(path, sizeof path, outdir, c->name, HASH_FILE) &&
        eddy_read_file(path, 4096, &text, NULL, NULL) == EDDY_OK) {
        char want[64];
        snprintf(want, sizeof want, HASH_TAG " %s\n", c->hash);
        int match = strncmp(text, want, strlen(want)) == 0;
        if (match) {
            const char *sec = strstr(text, "\nseconds ");
            if (sec != NULL)
                *seconds = strtod(sec + 9, NULL);
        }
        free(text);
        if (match)
            return APP_CASE_OK;
    }
    text = NULL;
    if (!join(path, sizeof path, outdir, c->name, "error.json") ||
        eddy_read_file(path, 1 << 20, &text, NULL, NULL) != EDDY_OK)
        return APP_CASE_NOT_RUN;
    cJSON *root = cJSON_Parse(text);
    free(text);
    const cJSON *hash = cJSON_GetObjectItemCaseSensitive(root, "hash");
    const cJSON *status = cJSON_GetObjectItemCaseSensitive(root, "status");
    const cJSON *message = cJSON_GetObjectItemCaseSensitive(root, "message");
    const cJSON *secs = cJSON_GetObjectItemCaseSensitive(root, "seconds");
    app_case_state st_ = APP_CASE_NOT_RUN;
    if (cJSON_IsString(hash) && strcmp(hash->valuestring, c->hash) == 0 &&
        cJSON_IsString(status)) {
        st_ = state_from_name(status->valuestring);
        if (st_ == APP_CASE_OK || st_ == APP_CASE_NOT_RUN)
            st_ = APP_CASE_FAILED;
        if (cJSON_IsNumber(secs))
            *seconds = secs->valuedouble;
        if (msg != NULL && cJSON_IsString(message))
            snprintf(msg, msgsize, "%s", message->valuestring);
    }
    cJSON_Delete(root);
    return st_;
}

app_case_state app_batch_case_state(const char *outdir, const app_batch_case *c)
{
    double sec;
    return disk_state(outdir, c, &sec, NULL, 0);
}

/* Does a file name look like an output of a run (or its temporary)? */
static int run_output(const char *f)
{
    size_t n = strlen(f);
    if (strcmp(f, "case.json") == 0)
        return 0;
    if (strcmp(f, HASH_FILE) == 0 || strcmp(f, "error.json") == 0 ||
        strcmp(f, "result.json") == 0 || strcmp(f, "forces.csv") == 0)
        return 1;
    if (strstr(f, ".tmp.") != NULL || (n > 4 && strcmp(f + n - 4, ".tmp") == 0))
        return 1;
    if (n > 4 && (strcmp(f + n - 4, ".png") == 0 || strcmp(f + n - 4, ".vtr") == 0))
        return 1;
    if (strncmp(f, "profile_", 8) == 0 && n > 4 && strcmp(f + n - 4, ".csv") == 0)
        return 1;
    return 0;
}

/* Create OUTDIR/<case>/ (its path into dir) and remove its completion
 * marker, so that whatever happens next leaves an unfinished case. */
static eddy_status case_dir_unmark(const char *outdir, const app_batch_case *c, char *dir,
                                   size_t dir_size, eddy_error *err)
{
    char path[4600];
    if (!join(dir, dir_size, outdir, c->name, NULL))
        return EDDY_RAISE(err, EDDY_ERR_IO, "%s/%s: path too long", outdir, c->name);
    eddy_status s = eddy_make_dir(dir, err);
    if (s != EDDY_OK)
        return s;
    snprintf(path, sizeof path, "%s/%s", dir, HASH_FILE);
    return remove_file(path, err);
}

eddy_status app_batch_case_prepare(const char *outdir, const app_batch_case *c,
                                    eddy_error *err)
{
    char dir[4200], path[4600];
    /* the completion marker first, so that an interruption leaves an unfinished case */
    eddy_status s = case_dir_unmark(outdir, c, dir, sizeof dir, err);
    if (s != EDDY_OK)
        return s;
    DIR *d = opendir(dir);
    if (d == NULL)
        return EDDY_RAISE(err, EDDY_ERR_IO, "%s: cannot list: %s", dir, strerror(errno));
    struct dirent *de;
    while (s == EDDY_OK && (de = readdir(d)) != NULL) {
        if (de->d_name[0] == '.' || !run_output(de->d_name))
            continue;
        snprintf(path, sizeof path, "%s/%s", dir, de->d_name);
        s = remove_file(path, err);
    }
    closedir(d);
    if (s != EDDY_OK || c->invalid)
        return s;
    snprintf(path, sizeof path, "%s/case.json", dir);
    size_t len = strlen(c->text);
    if (!same_content(path, c->text, len))
        s = eddy_write_atomic(path, c->text, len, err);
    return s;
}

eddy_status app_batch_case_solve(const char *outdir, const app_batch_case *c, int images,
                                  int threads, double max_memory, eddy_error *err)
{
    if (c->invalid)
        return EDDY_RAISE(err, c->error_status ? c->error_status : EDDY_ERR_INPUT, "%s",
                          c->error);
    char dir[4200], path[4400];
    if (!join(dir, sizeof dir, outdir, c->name, NULL))
        return EDDY_RAISE(err, EDDY_ERR_IO, "%s/%s: path too long", outdir, c->name);
    snprintf(path, sizeof path, "%s/case.json", dir);
    app_run_opts o;
    app_run_opts_defaults(&o);
    o.outdir = dir;
    o.images = images;
    o.threads = threads;
    o.max_memory = max_memory;
    app_report *r = NULL;
    eddy_status s = app_run_solve(path, &o, &r, err);
    app_report_free(r);
    return s;
}

eddy_status app_batch_case_done(const char *outdir, const app_batch_case *c, double seconds,
                                 eddy_error *err)
{
    char path[4200];
    struct stat st;
    if (!join(path, sizeof path, outdir, c->name, "result.json"))
        return EDDY_RAISE(err, EDDY_ERR_IO, "%s/%s: path too long", outdir, c->name);
    if (stat(path, &st) != 0 || !S_ISREG(st.st_mode))
        return EDDY_RAISE(err, EDDY_ERR_IO, "%s: missing after the run", path);
    /* whole: a points array with a force at every point, and the notice at the end */
    char *json = NULL;
    eddy_status s = eddy_read_file(path, 1L << 30, &json, NULL, err);
    if (s != EDDY_OK)
        return s;
    cJSON *root = cJSON_Parse(json);
    free(json);
    const cJSON *pts = cJSON_GetObjectItemCaseSensitive(root, "points");
    int whole = cJSON_IsArray(pts) && cJSON_GetArraySize(pts) > 0 &&
                cJSON_GetObjectItemCaseSensitive(root, "notice") != NULL;
    for (const cJSON *q = whole ? pts->child : NULL; q != NULL; q = q->next)
        whole = whole && cJSON_GetObjectItemCaseSensitive(q, "speed") != NULL &&
                cJSON_GetObjectItemCaseSensitive(q, "drag_force") != NULL &&
                cJSON_GetObjectItemCaseSensitive(q, "force_y") != NULL &&
                cJSON_GetObjectItemCaseSensitive(q, "loss") != NULL;
    cJSON_Delete(root);
    if (!whole)
        return EDDY_RAISE(err, EDDY_ERR_IO, "%s: incomplete (no points, a force or the notice "
                          "missing)", path);
    char text[128];
    int n = snprintf(text, sizeof text, HASH_TAG " %s\nseconds %.3f\n", c->hash,
                     isfinite(seconds) ? seconds : 0.0);
    join(path, sizeof path, outdir, c->name, "error.json");
    s = remove_file(path, err);
    join(path, sizeof path, outdir, c->name, HASH_FILE);
    if (s == EDDY_OK)
        s = eddy_write_atomic(path, text, (size_t)n, err);
    return s;
}

eddy_status app_batch_case_failed(const char *outdir, const app_batch_case *c,
                                   app_case_state state, const char *message, double seconds,
                                   eddy_error *err)
{
    char dir[4200], path[4400];
    eddy_status s = case_dir_unmark(outdir, c, dir, sizeof dir, err);
    if (s != EDDY_OK)
        return s;
    if (state == APP_CASE_OK || state == APP_CASE_NOT_RUN)
        state = APP_CASE_FAILED;
    cJSON *root = cJSON_CreateObject();
    int ok = root != NULL && cJSON_AddStringToObject(root, "case", c->name) != NULL &&
             cJSON_AddStringToObject(root, "source", c->source) != NULL &&
             cJSON_AddStringToObject(root, "status", app_case_state_name(state)) != NULL &&
             cJSON_AddStringToObject(root, "message", message != NULL ? message : "") != NULL &&
             (isfinite(seconds) ? cJSON_AddNumberToObject(root, "seconds", seconds)
                                : cJSON_AddNullToObject(root, "seconds")) != NULL &&
             cJSON_AddStringToObject(root, "hash", c->hash) != NULL &&
             cJSON_AddStringToObject(root, "tool", "eddy2d " EDDY_VERSION) != NULL;
    if (!ok) {
        cJSON_Delete(root);
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory writing error.json");
    }
    snprintf(path, sizeof path, "%s/error.json", dir);
    s = write_json(path, root, err);
    cJSON_Delete(root);
    return s;
}

/* ------------------------------------------------------------------------ */
/* Summary                                                                   */
/* ------------------------------------------------------------------------ */

typedef struct {
    app_case_state state;
    double seconds;
    char error[1024];
    int npoint;
    double *speed, *drag, *force_y, *loss; /* one allocation, 4 * npoint */
    double peak_drag, peak_speed;
    int png_w, png_h;                      /* forces.png size, 0 if none */
} case_result;

static double json_num(const cJSON *o, const char *key)
{
    const cJSON *x = cJSON_GetObjectItemCaseSensitive(o, key);
    return cJSON_IsNumber(x) ? x->valuedouble : NAN;
}

/* Width and height of a PNG from its IHDR chunk; 0 if it is not a PNG. */
static void png_size(const char *path, int *w, int *h)
{
    *w = *h = 0;
    FILE *f = fopen(path, "rb");
    if (f == NULL)
        return;
    unsigned char b[24];
    size_t n = fread(b, 1, sizeof b, f);
    fclose(f);
    static const unsigned char sig[8] = {137, 80, 78, 71, 13, 10, 26, 10};
    if (n < 24 || memcmp(b, sig, 8) != 0 || memcmp(b + 12, "IHDR", 4) != 0)
        return;
    unsigned long ww = ((unsigned long)b[16] << 24) | ((unsigned long)b[17] << 16) |
                       ((unsigned long)b[18] << 8) | b[19];
    unsigned long hh = ((unsigned long)b[20] << 24) | ((unsigned long)b[21] << 16) |
                       ((unsigned long)b[22] << 8) | b[23];
    if (ww > 0 && ww < 100000 && hh > 0 && hh < 100000) {
        *w = (int)ww;
        *h = (int)hh;
    }
}

static eddy_status load_result(const char *outdir, const app_batch_case *c, case_result *r,
                               eddy_error *err)
{
    memset(r, 0, sizeof *r);
    r->peak_drag = r->peak_speed = NAN;
    r->state = disk_state(outdir, c, &r->seconds, r->error, sizeof r->error);
    if (r->state != APP_CASE_OK) {
        if (r->state == APP_CASE_NOT_RUN && c->invalid) { /* planned invalid, not yet recorded */
            r->state = APP_CASE_INVALID;
            snprintf(r->error, sizeof r->error, "%s", c->error);
        }
        return EDDY_OK;
    }
    char path[4200];
    join(path, sizeof path, outdir, c->name, "forces.png");
    png_size(path, &r->png_w, &r->png_h);
    join(path, sizeof path, outdir, c->name, "result.json");
    char *text = NULL;
    eddy_status s = eddy_read_file(path, 1L << 30, &text, NULL, err);
    if (s != EDDY_OK)
        return s == EDDY_ERR_NOMEM ? s : EDDY_RAISE(err, EDDY_ERR_IO, "%s: cannot read", path);
    cJSON *root = cJSON_Parse(text);
    free(text);
    const cJSON *pts = cJSON_GetObjectItemCaseSensitive(root, "points");
    if (!cJSON_IsArray(pts)) {
        cJSON_Delete(root);
        r->state = APP_CASE_FAILED;
        snprintf(r->error, sizeof r->error, "%.900s: no points in the result", path);
        return EDDY_OK;
    }
    int n = cJSON_GetArraySize(pts);
    r->speed = n > 0 ? malloc((size_t)n * 4 * sizeof *r->speed) : NULL;
    if (n > 0 && r->speed == NULL) {
        cJSON_Delete(root);
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory reading %s", path);
    }
    r->drag = r->speed + n;
    r->force_y = r->speed + 2 * n;
    r->loss = r->speed + 3 * n;
    int k = 0;
    for (const cJSON *p = pts->child; p != NULL; p = p->next, k++) {
        r->speed[k] = json_num(p, "speed");
        r->drag[k] = json_num(p, "drag_force");
        r->force_y[k] = json_num(p, "force_y");
        r->loss[k] = json_num(p, "loss");
    }
    r->npoint = n;
    cJSON_Delete(root);
    int all_pos = n > 0, finite = n > 0;
    for (k = 0; k < n; k++) {
        all_pos = all_pos && r->speed[k] > 0;
        finite = finite && isfinite(r->speed[k]) && isfinite(r->drag[k]);
    }
    if (finite) {
        double v = NAN, f = NAN;
        if (design_peak(n, r->speed, r->drag, all_pos, &v, &f, NULL, NULL) == EDDY_OK) {
            r->peak_drag = f;
            r->peak_speed = v;
        }
    }
    return EDDY_OK;
}

/* CSV field: quoted when it holds a comma, quote or line break (RFC 4180). */
static void csv_field(eddy_text *b, const char *s)
{
    if (strpbrk(s, ",\"\r\n") == NULL) {
        eddy_text_str(b, s);
        return;
    }
    eddy_text_str(b, "\"");
    for (const char *q = s; *q != '\0'; q++) {
        if (*q == '"')
            eddy_text_str(b, "\"\"");
        else
            eddy_text_put(b, q, 1);
    }
    eddy_text_str(b, "\"");
}

static void csv_num(eddy_text *b, double v)
{
    if (isfinite(v))
        eddy_text_printf(b, ",%.10g", v);
    else
        eddy_text_str(b, ",");
}

static void html_text(eddy_text *b, const char *s)
{
    for (const char *q = s; *q != '\0'; q++) {
        switch (*q) {
        case '&': eddy_text_str(b, "&amp;"); break;
        case '<': eddy_text_str(b, "&lt;"); break;
        case '>': eddy_text_str(b, "&gt;"); break;
        case '"': eddy_text_str(b, "&quot;"); break;
        default: eddy_text_put(b, q, 1);
        }
    }
}

static void html_num(eddy_text *b, double v, const char *cls)
{
    eddy_text_printf(b, "<td class=\"%s\">", cls);
    if (isfinite(v))
        eddy_text_printf(b, "%.5g", v);
    else
        eddy_text_str(b, "&ndash;");
    eddy_text_str(b, "</td>");
}

/* "path=value; path=value" (compact JSON values). */
static void variant_text(eddy_text *b, const app_batch_case *c)
{
    for (int q = 0; q < c->nvalue; q++)
        eddy_text_printf(b, "%s%s=%s", q > 0 ? "; " : "", c->paths[q], c->values[q]);
}

static cJSON *json_num_or_null(double v)
{
    return isfinite(v) ? cJSON_CreateNumber(v) : cJSON_CreateNull();
}

static int json_add(cJSON *o, const char *key, cJSON *x)
{
    if (x == NULL || !cJSON_AddItemToObject(o, key, x)) {
        cJSON_Delete(x);
        return 0;
    }
    return 1;
}

static eddy_status write_csv(const char *outdir, const app_batch_plan *p,
                             const case_result *res, eddy_error *err)
{
    eddy_text b = {0};
    eddy_text_str(&b, "case,source");
    for (int k = 0; k < p->nkey; k++) {
        eddy_text_str(&b, ",");
        csv_field(&b, p->keys[k]);
    }
    eddy_text_str(&b, ",speed_m_per_s,drag_force_N_per_m,force_y_N_per_m,loss_W_per_m,"
               "peak_drag_N_per_m,peak_drag_speed_m_per_s,status,error,seconds\n");
    for (int c = 0; c < p->ncase; c++) {
        const app_batch_case *pc = &p->cases[c];
        const case_result *r = &res[c];
        int rows = r->npoint > 0 ? r->npoint : 1;
        for (int k = 0; k < rows; k++) {
            csv_field(&b, pc->name);
            eddy_text_str(&b, ",");
            csv_field(&b, pc->source);
            for (int q = 0; q < p->nkey; q++) {
                const char *v = case_value(pc, p->keys[q]);
                eddy_text_str(&b, ",");
                csv_field(&b, v != NULL ? v : "");
            }
            int has = k < r->npoint;
            csv_num(&b, has ? r->speed[k] : NAN);
            csv_num(&b, has ? r->drag[k] : NAN);
            csv_num(&b, has ? r->force_y[k] : NAN);
            csv_num(&b, has ? r->loss[k] : NAN);
            csv_num(&b, r->peak_drag);
            csv_num(&b, r->peak_speed);
            eddy_text_str(&b, ",");
            csv_field(&b, app_case_state_name(r->state));
            eddy_text_str(&b, ",");
            csv_field(&b, r->error);
            csv_num(&b, r->seconds);
            eddy_text_str(&b, "\n");
        }
    }
    if (b.oom) {
        free(b.p);
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory writing summary.csv");
    }
    char path[4200];
    join(path, sizeof path, outdir, "summary.csv", NULL);
    eddy_status s = eddy_write_atomic(path, b.p, b.len, err);
    free(b.p);
    return s;
}

static eddy_status write_summary_json(const char *outdir, const app_batch_plan *p,
                                      const case_result *res, const app_batch_counts *n,
                                      const char *when, eddy_error *err)
{
    cJSON *root = cJSON_CreateObject();
    int ok = root != NULL;
    ok = ok && cJSON_AddStringToObject(root, "tool", "eddy2d " EDDY_VERSION) != NULL;
    ok = ok && cJSON_AddStringToObject(root, "written", when) != NULL;
    cJSON *units = ok ? cJSON_AddObjectToObject(root, "units") : NULL;
    ok = units != NULL && cJSON_AddStringToObject(units, "speed", "m/s") != NULL &&
         cJSON_AddStringToObject(units, "drag_force", "N/m") != NULL &&
         cJSON_AddStringToObject(units, "force_y", "N/m") != NULL &&
         cJSON_AddStringToObject(units, "loss", "W/m") != NULL &&
         cJSON_AddStringToObject(units, "seconds", "s (wall time of the case)") != NULL;
    cJSON *cnt = ok ? cJSON_AddObjectToObject(root, "counts") : NULL;
    ok = cnt != NULL && cJSON_AddNumberToObject(cnt, "cases", n->cases) != NULL &&
         cJSON_AddNumberToObject(cnt, "ok", n->ok) != NULL &&
         cJSON_AddNumberToObject(cnt, "failed", n->failed) != NULL &&
         cJSON_AddNumberToObject(cnt, "not_run", n->not_run) != NULL;
    ok = ok && add_variant_keys(root, p);
    cJSON *rows = ok ? cJSON_AddArrayToObject(root, "rows") : NULL;
    ok = rows != NULL;
    for (int c = 0; ok && c < p->ncase; c++) {
        const app_batch_case *pc = &p->cases[c];
        const case_result *r = &res[c];
        int nrow = r->npoint > 0 ? r->npoint : 1;
        for (int k = 0; ok && k < nrow; k++) {
            cJSON *o = cJSON_CreateObject();
            ok = o != NULL && cJSON_AddItemToArray(rows, o);
            if (!ok) {
                cJSON_Delete(o);
                break;
            }
            int has = k < r->npoint;
            ok = cJSON_AddStringToObject(o, "case", pc->name) != NULL &&
                 cJSON_AddStringToObject(o, "source", pc->source) != NULL &&
                 add_variant_object(o, "variant", pc) &&
                 json_add(o, "speed", json_num_or_null(has ? r->speed[k] : NAN)) &&
                 json_add(o, "drag_force", json_num_or_null(has ? r->drag[k] : NAN)) &&
                 json_add(o, "force_y", json_num_or_null(has ? r->force_y[k] : NAN)) &&
                 json_add(o, "loss", json_num_or_null(has ? r->loss[k] : NAN)) &&
                 json_add(o, "peak_drag", json_num_or_null(r->peak_drag)) &&
                 json_add(o, "peak_drag_speed", json_num_or_null(r->peak_speed)) &&
                 cJSON_AddStringToObject(o, "status", app_case_state_name(r->state)) != NULL &&
                 json_add(o, "error", r->error[0] ? cJSON_CreateString(r->error)
                                                  : cJSON_CreateNull()) &&
                 json_add(o, "seconds", json_num_or_null(r->seconds));
        }
    }
    ok = ok && cJSON_AddStringToObject(root, "notice", app_safety_notice()) != NULL;
    if (!ok) {
        cJSON_Delete(root);
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory writing summary.json");
    }
    char path[4200];
    join(path, sizeof path, outdir, "summary.json", NULL);
    eddy_status s = write_json(path, root, err);
    cJSON_Delete(root);
    return s;
}

static void html_status(eddy_text *b, app_case_state st)
{
    eddy_text_printf(b, "<td class=\"st %s\">%s</td>",
              st == APP_CASE_OK ? "ok" : st == APP_CASE_NOT_RUN ? "notrun" : "bad",
              app_case_state_name(st));
}

static eddy_status write_html(const char *outdir, const app_batch_plan *p,
                              const case_result *res, const app_batch_counts *n,
                              const char *when, eddy_error *err)
{
    eddy_text b = {0};
    eddy_text_str(&b,
           "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
           "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n"
           "<title>eddy2d batch summary</title>\n<style>\n"
           "body{font-family:sans-serif;margin:1.2em;color:#111;background:#fff}\n"
           "h1{font-size:1.5em;margin:0 0 .3em}h2{font-size:1.2em;margin:1.2em 0 .4em}\n"
           "table{border-collapse:collapse;font-size:.9em}\n"
           "th,td{border:1px solid #bbb;padding:.2em .5em;text-align:left;vertical-align:top}\n"
           "th{background:#eee}td.num{text-align:right;font-variant-numeric:tabular-nums}\n"
           "td.st.ok{font-weight:bold}td.st.bad{font-weight:bold;text-decoration:underline}\n"
           "td.err{max-width:40em;font-size:.9em}\n"
           ".plots{display:grid;grid-template-columns:repeat(auto-fill,minmax(420px,1fr));"
           "gap:1em}\n"
           "figure{margin:0;border:1px solid #bbb;padding:.4em}"
           "figure img{width:100%;height:auto;display:block}\n"
           "figcaption{font-size:.85em;margin-top:.3em}.missing{padding:2em 1em;color:#444}\n"
           ".notice{border:1px solid #888;padding:.5em;font-size:.85em;max-width:70em}\n"
           "</style>\n</head>\n<body>\n<h1>eddy2d batch summary</h1>\n");
    eddy_text_printf(&b, "<p id=\"counts\">%d cases: %d ok, %d failed, %d not run. Written %s by "
                  "eddy2d %s.</p>\n",
              n->cases, n->ok, n->failed, n->not_run, when, EDDY_VERSION);
    eddy_text_str(&b, "<p class=\"notice\"><strong>Caution.</strong> ");
    html_text(&b, app_safety_notice());
    eddy_text_str(&b, "</p>\n<h2>Cases</h2>\n<table id=\"cases\">\n<thead><tr><th>case</th>");
    for (int k = 0; k < p->nkey; k++) {
        eddy_text_str(&b, "<th>");
        html_text(&b, p->keys[k]);
        eddy_text_str(&b, "</th>");
    }
    eddy_text_str(&b, "<th>status</th><th>peak drag (N/m)</th><th>at speed (m/s)</th>"
               "<th>seconds</th><th>error</th></tr></thead>\n<tbody>\n");
    for (int c = 0; c < p->ncase; c++) {
        const app_batch_case *pc = &p->cases[c];
        const case_result *r = &res[c];
        eddy_text_str(&b, "<tr><td><a href=\"#fig-");
        html_text(&b, pc->name);
        eddy_text_str(&b, "\">");
        html_text(&b, pc->name);
        eddy_text_str(&b, "</a></td>");
        for (int q = 0; q < p->nkey; q++) {
            const char *v = case_value(pc, p->keys[q]);
            eddy_text_str(&b, "<td>");
            html_text(&b, v != NULL ? v : "");
            eddy_text_str(&b, "</td>");
        }
        html_status(&b, r->state);
        html_num(&b, r->peak_drag, "num");
        html_num(&b, r->peak_speed, "num");
        html_num(&b, r->seconds, "num");
        eddy_text_str(&b, "<td class=\"err\">");
        html_text(&b, r->error);
        eddy_text_str(&b, "</td></tr>\n");
    }
    eddy_text_str(&b, "</tbody>\n</table>\n<h2>Force-speed plots</h2>\n<div class=\"plots\">\n");
    for (int c = 0; c < p->ncase; c++) {
        const app_batch_case *pc = &p->cases[c];
        const case_result *r = &res[c];
        eddy_text_str(&b, "<figure id=\"fig-");
        html_text(&b, pc->name);
        eddy_text_str(&b, "\">");
        if (r->png_w > 0) {
            eddy_text_str(&b, "<a href=\"");
            html_text(&b, pc->name);
            eddy_text_str(&b, "/forces.png\"><img src=\"");
            html_text(&b, pc->name);
            eddy_text_printf(&b, "/forces.png\" width=\"%d\" height=\"%d\" alt=\"drag and normal force "
                          "against speed, ", r->png_w, r->png_h);
            html_text(&b, pc->name);
            eddy_text_str(&b, "\"></a>");
        } else {
            eddy_text_str(&b, "<div class=\"missing\">");
            if (r->state == APP_CASE_OK)
                eddy_text_str(&b, "no plot (run without pictures)");
            else {
                html_text(&b, app_case_state_name(r->state));
                if (r->error[0]) {
                    eddy_text_str(&b, ": ");
                    html_text(&b, r->error);
                }
            }
            eddy_text_str(&b, "</div>");
        }
        eddy_text_str(&b, "<figcaption><strong>");
        html_text(&b, pc->name);
        eddy_text_str(&b, "</strong>");
        if (pc->nvalue > 0) {
            eddy_text_str(&b, "<br>");
            eddy_text v = {0};
            variant_text(&v, pc);
            html_text(&b, v.p != NULL ? v.p : "");
            if (v.oom)
                b.oom = 1;
            free(v.p);
        }
        eddy_text_str(&b, "</figcaption></figure>\n");
    }
    eddy_text_str(&b, "</div>\n<h2>Every speed</h2>\n<table id=\"points\">\n<thead><tr><th>case</th>"
               "<th>speed (m/s)</th><th>drag (N/m)</th><th>normal force (N/m)</th>"
               "<th>loss (W/m)</th><th>status</th></tr></thead>\n<tbody>\n");
    for (int c = 0; c < p->ncase; c++) {
        const app_batch_case *pc = &p->cases[c];
        const case_result *r = &res[c];
        int rows = r->npoint > 0 ? r->npoint : 1;
        for (int k = 0; k < rows; k++) {
            int has = k < r->npoint;
            eddy_text_str(&b, "<tr><td>");
            html_text(&b, pc->name);
            eddy_text_str(&b, "</td>");
            html_num(&b, has ? r->speed[k] : NAN, "num");
            html_num(&b, has ? r->drag[k] : NAN, "num");
            html_num(&b, has ? r->force_y[k] : NAN, "num");
            html_num(&b, has ? r->loss[k] : NAN, "num");
            html_status(&b, r->state);
            eddy_text_str(&b, "</tr>\n");
        }
    }
    eddy_text_str(&b, "</tbody>\n</table>\n<p>Forces per metre of depth (per period for a periodic "
               "domain); the same numbers are in summary.csv and summary.json.</p>\n"
               "</body>\n</html>\n");
    if (b.oom) {
        free(b.p);
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory writing summary.html");
    }
    char path[4200];
    join(path, sizeof path, outdir, "summary.html", NULL);
    eddy_status s = eddy_write_atomic(path, b.p, b.len, err);
    free(b.p);
    return s;
}

eddy_status app_batch_write_summary(const char *outdir, const app_batch_plan *p,
                                     app_batch_counts *counts, eddy_error *err)
{
    app_batch_counts n = {0};
    n.cases = p->ncase;
    case_result *res = calloc((size_t)(p->ncase > 0 ? p->ncase : 1), sizeof *res);
    if (res == NULL)
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory writing the summary");
    eddy_status s = EDDY_OK;
    for (int c = 0; c < p->ncase && s == EDDY_OK; c++) {
        s = load_result(outdir, &p->cases[c], &res[c], err);
        if (s != EDDY_OK)
            break;
        if (res[c].state == APP_CASE_OK)
            n.ok++;
        else if (res[c].state == APP_CASE_NOT_RUN)
            n.not_run++;
        else
            n.failed++;
    }
    char when[64] = "";
    time_t now = time(NULL);
    struct tm tm;
    if (gmtime_r(&now, &tm) != NULL)
        strftime(when, sizeof when, "%Y-%m-%d %H:%M:%S UTC", &tm);
    if (s == EDDY_OK)
        s = eddy_make_dir(outdir, err);
    if (s == EDDY_OK)
        s = write_csv(outdir, p, res, err);
    if (s == EDDY_OK)
        s = write_summary_json(outdir, p, res, &n, when, err);
    if (s == EDDY_OK)
        s = write_html(outdir, p, res, &n, when, err);
    for (int c = 0; c < p->ncase; c++)
        free(res[c].speed);
    free(res);
    if (s == EDDY_OK && counts != NULL)
        *counts = n;
    return s;
}

/* ------------------------------------------------------------------------ */
/* Slurm job scripts                                                         */
/* ------------------------------------------------------------------------ */

/* A word quoted for sh: '...' with ' as '\''. */
static void sh_quote(eddy_text *b, const char *s)
{
    eddy_text_str(b, "'");
    for (const char *q = s; *q != '\0'; q++) {
        if (*q == '\'')
            eddy_text_str(b, "'\\''");
        else
            eddy_text_put(b, q, 1);
    }
    eddy_text_str(b, "'");
}

void app_batch_slurm_opts_defaults(app_batch_slurm_opts *o)
{
    memset(o, 0, sizeof *o);
    o->cpus_per_task = 1;
}

static eddy_status write_script(const char *path, eddy_text *b, eddy_error *err)
{
    if (b->oom) {
        free(b->p);
        b->p = NULL;
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory writing %s", path);
    }
    eddy_status s = eddy_write_atomic(path, b->p, b->len, err);
    free(b->p);
    b->p = NULL;
    b->len = b->cap = 0;
    if (s == EDDY_OK && chmod(path, 0755) != 0)
        s = EDDY_RAISE(err, EDDY_ERR_IO, "%s: cannot make executable: %s", path,
                       strerror(errno));
    return s;
}

eddy_status app_batch_write_slurm(const char *outdir, const app_batch_plan *p,
                                   const app_batch_slurm_opts *o, eddy_error *err)
{
    if (o->exe == NULL || o->exe[0] != '/' || outdir[0] != '/')
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "the Slurm scripts need absolute paths");
    if (o->ntask < 1 || o->tasks == NULL)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "no case to run under Slurm");
    if (o->cpus_per_task < 1 || o->cpus_per_task > 4096)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "cpus per task must lie in 1..4096");
    for (int k = 0; k < o->nextra; k++)
        if (strpbrk(o->extra[k], "\r\n") != NULL || o->extra[k][0] != '-')
            return EDDY_RAISE(err, EDDY_ERR_INPUT, "Slurm option \"%s\": must be one line "
                              "starting with '-'", o->extra[k]);
    for (int k = 0; k < o->ntask; k++)
        if (o->tasks[k] < 0 || o->tasks[k] >= p->ncase || (k > 0 && o->tasks[k] <= o->tasks[k - 1]))
            return EDDY_RAISE(err, EDDY_ERR_INPUT, "task list must be increasing case indices");
    char path[4200];
    if (!join(path, sizeof path, outdir, "slurm", NULL))
        return EDDY_RAISE(err, EDDY_ERR_IO, "%s: path too long", outdir);
    eddy_status s = eddy_make_dir(path, err);
    if (s != EDDY_OK)
        return s;
    /* the array: ranges of consecutive indices, "0-3,7,9-12" */
    eddy_text arr = {0};
    for (int k = 0; k < o->ntask;) {
        int j = k;
        while (j + 1 < o->ntask && o->tasks[j + 1] == o->tasks[j] + 1)
            j++;
        if (j > k)
            eddy_text_printf(&arr, "%s%d-%d", k > 0 ? "," : "", o->tasks[k], o->tasks[j]);
        else
            eddy_text_printf(&arr, "%s%d", k > 0 ? "," : "", o->tasks[k]);
        k = j + 1;
    }
    eddy_text b = {0};
    eddy_text_printf(&b,
              "#!/bin/sh\n"
              "# eddy2d %s batch: one Slurm array task per case; each task solves its case\n"
              "# into %s/<case>/ with the same resume and atomic-write rules as a local batch.\n"
              "# Submit with submit.sh beside this file (it also queues the summary job).\n",
              EDDY_VERSION, outdir);
    eddy_text_str(&b, "#SBATCH --job-name=eddy2d-batch\n");
    eddy_text_printf(&b, "#SBATCH --array=%s\n", arr.p != NULL ? arr.p : "");
    eddy_text_printf(&b, "#SBATCH --cpus-per-task=%d\n", o->cpus_per_task);
    eddy_text_printf(&b, "#SBATCH --output=%s/slurm/case_%%a.out\n", outdir);
    if (o->case_timeout > 0)
        eddy_text_printf(&b, "#SBATCH --time=%d\n", (int)ceil(o->case_timeout / 60.0) + 2);
    for (int k = 0; k < o->nextra; k++)
        eddy_text_printf(&b, "#SBATCH %s\n", o->extra[k]);
    eddy_text_str(&b, "exec ");
    sh_quote(&b, o->exe);
    eddy_text_str(&b, " batch --run-one \"$SLURM_ARRAY_TASK_ID\" -o ");
    sh_quote(&b, outdir);
    if (o->case_timeout > 0)
        eddy_text_printf(&b, " --case-timeout %g", o->case_timeout);
    eddy_text_printf(&b, " --threads %d\n", o->cpus_per_task);
    free(arr.p);
    join(path, sizeof path, outdir, "batch.sbatch", NULL);
    s = write_script(path, &b, err);
    if (s != EDDY_OK)
        return s;

    eddy_text_printf(&b, "#!/bin/sh\n"
                  "# eddy2d %s batch: the final step, after every array task has ended (ok or\n"
                  "# not): summary.csv, summary.json and summary.html from the case folders.\n",
              EDDY_VERSION);
    eddy_text_str(&b, "#SBATCH --job-name=eddy2d-summary\n");
    eddy_text_printf(&b, "#SBATCH --output=%s/slurm/summary.out\n", outdir);
    for (int k = 0; k < o->nextra; k++)
        eddy_text_printf(&b, "#SBATCH %s\n", o->extra[k]);
    eddy_text_str(&b, "exec ");
    sh_quote(&b, o->exe);
    eddy_text_str(&b, " batch --summary-only -o ");
    sh_quote(&b, outdir);
    eddy_text_str(&b, "\n");
    join(path, sizeof path, outdir, "summary.sbatch", NULL);
    s = write_script(path, &b, err);
    if (s != EDDY_OK)
        return s;

    eddy_text_printf(&b, "#!/bin/sh\n"
                  "# Queue the eddy2d batch in %s: the case array, then the summary job\n"
                  "# once every task has ended.  Prints the two job ids.\n"
                  "set -eu\n",
              outdir);
    eddy_text_str(&b, "array=$(sbatch --parsable ");
    sh_quote(&b, outdir);
    eddy_text_str(&b, "/batch.sbatch)\narray=${array%%;*}\n"
               "summary=$(sbatch --parsable --dependency=afterany:\"$array\" ");
    sh_quote(&b, outdir);
    eddy_text_str(&b, "/summary.sbatch)\nsummary=${summary%%;*}\n"
               "echo \"array job $array, summary job $summary\"\n");
    join(path, sizeof path, outdir, "submit.sh", NULL);
    return write_script(path, &b, err);
}
