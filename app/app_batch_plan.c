/*
 * app_batch_plan.c - the plan of a batch: the case files of the arguments
 * (app_batch_collect), every case of them (app_batch_plan_build), and
 * OUT/batch.json with the cases' case.json (app_batch_plan_save, _load).
 */
#include "app/app_batch_int.h"

#include <cJSON.h>
#include <dirent.h>
#include <errno.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "mesh/mesh.h"

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
    char *d = app_batch_strdup(s);
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
                                           "summary.html", "summary.png", "slurm", NULL};
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
    c->source = app_batch_strdup(path);
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

/* The cases of one case file, appended to the plan (*cap: the size of
 * p->cases); a file that cannot be read or expanded gives one invalid
 * case.  Fails only for lack of memory. */
static eddy_status add_file(app_batch_plan *p, int *cap, const char *file, eddy_error *err)
{
    char *text = NULL;
    size_t len = 0;
    eddy_error e = {0};
    app_batch_case *cs = NULL;
    int nc = 0;
    eddy_status r = eddy_read_file(file, APP_BATCH_CASE_BYTES, &text, &len, &e);
    if (r == EDDY_OK)
        r = app_batch_expand(text, file, p->images, &cs, &nc, &e);
    if (r != EDDY_OK && r != EDDY_ERR_NOMEM) {
        /* the reading error as the plain solve words it (e.g. a folder) */
        if (text == NULL) {
            mesh_case *mc = NULL;
            eddy_error e2 = {0};
            if (mesh_case_load(file, &mc, &e2) != EDDY_OK && e2.msg[0] != '\0')
                e = e2;
            mesh_case_free(mc);
        }
        r = invalid_source(file, text, len, r == EDDY_ERR_IO ? EDDY_ERR_INPUT : r,
                           e.msg[0] ? e.msg : eddy_strerror(r), p->images, &cs, &nc);
    }
    free(text);
    if (r != EDDY_OK)
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory planning the batch");
    if (p->ncase + nc > *cap) {
        int ncap = *cap ? 2 * *cap : 16;
        while (ncap < p->ncase + nc)
            ncap *= 2;
        app_batch_case *q = realloc(p->cases, (size_t)ncap * sizeof *q);
        if (q == NULL) {
            app_batch_cases_free(cs, nc);
            return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory planning the batch");
        }
        p->cases = q;
        *cap = ncap;
    }
    memcpy(p->cases + p->ncase, cs, (size_t)nc * sizeof *cs);
    p->ncase += nc;
    free(cs); /* the members now belong to the plan */
    return EDDY_OK;
}

/* Every case needs its own folder: no two cases with one name, and none
 * named like a file of the batch folder. */
static eddy_status check_names(const app_batch_plan *p, eddy_error *err)
{
    eddy_status s = EDDY_OK;
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
    return s;
}

/* p->keys: the distinct variant paths of the cases, in order of first
 * appearance. */
static eddy_status collect_keys(app_batch_plan *p, eddy_error *err)
{
    for (int a = 0; a < p->ncase; a++)
        for (int q = 0; q < p->cases[a].nvalue; q++) {
            const char *path = p->cases[a].paths[q];
            int seen = 0;
            for (int k = 0; k < p->nkey && !seen; k++)
                seen = strcmp(p->keys[k], path) == 0;
            if (seen)
                continue;
            char **nk = realloc(p->keys, (size_t)(p->nkey + 1) * sizeof *nk);
            if (nk == NULL)
                return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
            p->keys = nk;
            p->keys[p->nkey] = app_batch_strdup(path);
            if (p->keys[p->nkey] == NULL)
                return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
            p->nkey++;
        }
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
    for (int f = 0; f < nfiles && s == EDDY_OK; f++)
        s = add_file(p, &cap, files[f], err);
    free_list(files, nfiles);
    if (s == EDDY_OK)
        s = check_names(p, err);
    if (s == EDDY_OK)
        s = collect_keys(p, err);
    if (s != EDDY_OK) {
        app_batch_plan_free(p);
        return s;
    }
    *out = p;
    return EDDY_OK;
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
        if (!app_batch_join(dir, sizeof dir, outdir, c->name, NULL) ||
            !app_batch_join(path, sizeof path, outdir, c->name, "case.json"))
            return EDDY_RAISE(err, EDDY_ERR_IO, "%s/%s: path too long", outdir, c->name);
        size_t len = strlen(c->text);
        if (app_batch_same_content(path, c->text, len))
            continue;
        s = eddy_make_dir(dir, err);
        if (s != EDDY_OK)
            break;
        /* a new input: first invalidate any old completion marker */
        app_batch_join(path, sizeof path, outdir, c->name, APP_BATCH_HASH_FILE);
        s = app_batch_remove_file(path, err);
        app_batch_join(path, sizeof path, outdir, c->name, "case.json");
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
    ok = ok && app_batch_json_variant_keys(root, p);
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
             app_batch_json_variant(o, "variant", c) &&
             cJSON_AddStringToObject(o, "hash", c->hash) != NULL &&
             cJSON_AddBoolToObject(o, "invalid", c->invalid) != NULL;
        if (ok && c->invalid)
            ok = cJSON_AddStringToObject(o, "error", c->error) != NULL;
    }
    if (!ok) {
        cJSON_Delete(root);
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory writing the batch plan");
    }
    app_batch_join(path, sizeof path, outdir, "batch.json", NULL);
    s = app_batch_write_json(path, root, err);
    cJSON_Delete(root);
    return s;
}

/* p->keys from the "variant_keys" array of batch.json (path names it). */
static eddy_status load_keys(const cJSON *keys, app_batch_plan *p, const char *path,
                             eddy_error *err)
{
    for (const cJSON *e = keys->child; e != NULL; e = e->next) {
        if (!cJSON_IsString(e))
            return EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: variant_keys: must be strings", path);
        if ((p->keys[p->nkey] = app_batch_strdup(e->valuestring)) == NULL)
            return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
        p->nkey++;
    }
    return EDDY_OK;
}

/* c from entry e (index k) of the "cases" of batch.json (path names it);
 * for a valid case also its text from OUT/<case>/case.json, which must
 * still have the planned hash. */
static eddy_status load_case(const cJSON *e, int k, const char *path, const char *outdir,
                             int images, app_batch_case *c, eddy_error *err)
{
    const cJSON *nm = cJSON_GetObjectItemCaseSensitive(e, "name");
    const cJSON *src = cJSON_GetObjectItemCaseSensitive(e, "source");
    const cJSON *hash = cJSON_GetObjectItemCaseSensitive(e, "hash");
    const cJSON *var = cJSON_GetObjectItemCaseSensitive(e, "variant");
    const cJSON *inv = cJSON_GetObjectItemCaseSensitive(e, "invalid");
    const cJSON *msg = cJSON_GetObjectItemCaseSensitive(e, "error");
    if (!cJSON_IsString(nm) || !mesh_name_is_safe(nm->valuestring) || !cJSON_IsString(src) ||
        !cJSON_IsString(hash) || strlen(hash->valuestring) != 16 || !cJSON_IsObject(var) ||
        !cJSON_IsBool(inv))
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: cases[%d]: damaged entry", path, k);
    snprintf(c->name, sizeof c->name, "%s", nm->valuestring);
    snprintf(c->hash, sizeof c->hash, "%s", hash->valuestring);
    c->invalid = cJSON_IsTrue(inv);
    if ((c->source = app_batch_strdup(src->valuestring)) == NULL)
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
    int nv = cJSON_GetArraySize(var);
    if (nv > 0) {
        c->paths = calloc((size_t)nv, sizeof *c->paths);
        c->values = calloc((size_t)nv, sizeof *c->values);
        if (c->paths == NULL || c->values == NULL)
            return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
    }
    for (const cJSON *v = var->child; v != NULL; v = v->next) {
        c->paths[c->nvalue] = app_batch_strdup(v->string);
        c->values[c->nvalue] = cJSON_PrintUnformatted(v);
        c->nvalue++;
        if (c->paths[c->nvalue - 1] == NULL || c->values[c->nvalue - 1] == NULL)
            return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
    }
    if (c->invalid) {
        c->error_status = EDDY_ERR_INPUT;
        snprintf(c->error, sizeof c->error, "%s",
                 cJSON_IsString(msg) ? msg->valuestring : "invalid case");
        return EDDY_OK;
    }
    char cpath[4200];
    if (!app_batch_join(cpath, sizeof cpath, outdir, c->name, "case.json"))
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "%s/%s: path too long", outdir, c->name);
    eddy_status s = eddy_read_file(cpath, APP_BATCH_CASE_BYTES, &c->text, NULL, err);
    if (s != EDDY_OK)
        return s;
    char h[17];
    app_batch_text_hash(c->text, images, h);
    if (strcmp(h, c->hash) != 0)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: changed since the batch was planned "
                          "(hash %s, planned %s); plan the batch again", cpath, h, c->hash);
    return EDDY_OK;
}

eddy_status app_batch_plan_load(const char *outdir, app_batch_plan **out, eddy_error *err)
{
    *out = NULL;
    char path[4200];
    if (!app_batch_join(path, sizeof path, outdir, "batch.json", NULL))
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
        !cJSON_IsArray(keys))
        s = EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: not a batch plan written by eddy2d", path);
    else if (strcmp(tool->valuestring, "eddy2d " EDDY_VERSION) != 0)
        s = EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: written by %s, this is eddy2d %s; plan the "
                       "batch again", path, tool->valuestring, EDDY_VERSION);
    if (s == EDDY_OK) {
        p = calloc(1, sizeof *p);
        int n = cJSON_GetArraySize(cases), nk = cJSON_GetArraySize(keys);
        if (p == NULL || (n > 0 && (p->cases = calloc((size_t)n, sizeof *p->cases)) == NULL) ||
            (nk > 0 && (p->keys = calloc((size_t)nk, sizeof *p->keys)) == NULL))
            s = EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
    }
    if (s == EDDY_OK) {
        p->images = cJSON_IsTrue(cJSON_GetObjectItemCaseSensitive(root, "images"));
        s = load_keys(keys, p, path, err);
    }
    int k = 0;
    for (const cJSON *e = s == EDDY_OK ? cases->child : NULL; e != NULL && s == EDDY_OK;
         e = e->next, k++) {
        p->ncase = k + 1;
        s = load_case(e, k, path, outdir, p->images, &p->cases[k], err);
    }
    cJSON_Delete(root);
    if (s != EDDY_OK) {
        app_batch_plan_free(p);
        return s;
    }
    *out = p;
    return EDDY_OK;
}
