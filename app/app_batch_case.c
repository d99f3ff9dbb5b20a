/*
 * app_batch_case.c - one case of a batch on disk: the resume decision from
 * input.hash and error.json, making its folder ready, solving it, and
 * recording its end (input.hash or error.json).
 */
#include "app/app_batch_int.h"

#include <cJSON.h>
#include <dirent.h>
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "app/app.h"

#define HASH_TAG "fnv1a64" /* the first word of input.hash */

static app_case_state state_from_name(const char *s)
{
    for (int k = APP_CASE_NOT_RUN; k <= APP_CASE_CRASHED; k++)
        if (strcmp(s, app_case_state_name((app_case_state)k)) == 0)
            return (app_case_state)k;
    return APP_CASE_FAILED;
}

app_case_state app_batch_disk_state(const char *outdir, const app_batch_case *c,
                                    double *seconds, char *msg, size_t msgsize)
{
    char path[4200];
    char *text = NULL;
    *seconds = NAN;
    if (msg != NULL && msgsize > 0)
        msg[0] = '\0';
    struct stat st;
    if (app_batch_join(path, sizeof path, outdir, c->name, "result.json") &&
        stat(path, &st) == 0 && S_ISREG(st.st_mode) &&
        app_batch_join(path, sizeof path, outdir, c->name, APP_BATCH_HASH_FILE) &&
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
    if (!app_batch_join(path, sizeof path, outdir, c->name, "error.json") ||
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
    return app_batch_disk_state(outdir, c, &sec, NULL, 0);
}

/* Does a file name look like an output of a run (or its temporary)? The
 * run's own rule, plus the batch's status files. */
static int run_output(const char *f)
{
    return strcmp(f, APP_BATCH_HASH_FILE) == 0 || strcmp(f, "error.json") == 0 ||
           app_run_is_output(f);
}

/* Create OUTDIR/<case>/ (its path into dir) and remove its completion
 * marker, so that whatever happens next leaves an unfinished case. */
static eddy_status case_dir_unmark(const char *outdir, const app_batch_case *c, char *dir,
                                   size_t dir_size, eddy_error *err)
{
    char path[4600];
    if (!app_batch_join(dir, dir_size, outdir, c->name, NULL))
        return EDDY_RAISE(err, EDDY_ERR_IO, "%s/%s: path too long", outdir, c->name);
    eddy_status s = eddy_make_dir(dir, err);
    if (s != EDDY_OK)
        return s;
    snprintf(path, sizeof path, "%s/%s", dir, APP_BATCH_HASH_FILE);
    return app_batch_remove_file(path, err);
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
        s = app_batch_remove_file(path, err);
    }
    closedir(d);
    if (s != EDDY_OK || c->invalid)
        return s;
    snprintf(path, sizeof path, "%s/case.json", dir);
    size_t len = strlen(c->text);
    if (!app_batch_same_content(path, c->text, len))
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
    if (!app_batch_join(dir, sizeof dir, outdir, c->name, NULL))
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
    if (!app_batch_join(path, sizeof path, outdir, c->name, "result.json"))
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
    app_batch_join(path, sizeof path, outdir, c->name, "error.json");
    s = app_batch_remove_file(path, err);
    app_batch_join(path, sizeof path, outdir, c->name, APP_BATCH_HASH_FILE);
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
    s = app_batch_write_json(path, root, err);
    cJSON_Delete(root);
    return s;
}
