/*
 * app_batch_summary.c - the summary of a batch from its case folders:
 * OUT/summary.csv, summary.json, summary.png (every ok case's drag curve, or
 * a disc's torque against rpm, on one pair of axes) and summary.html
 * (app_batch_write_summary).
 */
#include "app/app_batch_int.h"

#include <cJSON.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <errno.h>
#include <unistd.h>

#include "app/app.h"
#include "design/design.h"
#include "post/post_img.h"

typedef struct {
    app_case_state state;
    double seconds;
    char error[1024];
    int npoint;
    double *speed, *drag, *force_y, *loss; /* one allocation, 8 * npoint */
    double *drag_err, *force_y_err;        /* estimated errors, NaN where absent */
    double *rpm, *torque;                  /* NaN where the case is no disc */
    double peak_drag, peak_speed;
    double damping, linear_speed, terminal_speed; /* result.json's, NaN if null/absent */
    int png_w, png_h;                      /* forces.png size, 0 if none */
    int axisymmetric;                      /* result.json's "geometry" is "axisymmetric":
                                            * forces of the whole ring (N), loss W */
} case_result;

/* The labels of the summary's forces and losses: per metre of depth (planar
 * cases), of the whole ring (every ok case axisymmetric), or both named when
 * a batch mixes the two. */
typedef struct {
    const char *force, *loss;   /* units: "N/m", "W/m" / "N", "W" / both */
    const char *drag_title;     /* the overlay's axis title */
    const char *note;           /* the last line of summary.html */
    const char *csv_columns;    /* summary.csv's force and loss columns */
    const char *damp_csv, *damp_json, *damp_html; /* the damping coefficient's unit */
    const char *err_csv;        /* summary.csv's error-estimate columns */
} summary_units;

static void choose_units(const case_result *res, int n, summary_units *u)
{
    int rz = 0, planar = 0;
    for (int c = 0; c < n; c++)
        if (res[c].state == APP_CASE_OK) {
            rz += res[c].axisymmetric;
            planar += !res[c].axisymmetric;
        }
    if (rz > 0 && planar == 0) {
        *u = (summary_units){"N", "W", "drag on the whole ring (N)",
                             "Forces and losses of the whole ring (axisymmetric cases); the "
                             "same numbers are in summary.csv and summary.json.",
                             "drag_force_N,force_y_N,loss_W,peak_drag_N",
                             "damping_coefficient_N_s_per_m", "N s/m of the whole ring",
                             "N s/m", "drag_force_error_N,force_y_error_N"};
    } else if (rz > 0) {
        *u = (summary_units){"N/m or N", "W/m or W", "drag (N/m planar, N axisymmetric)",
                             "Forces per metre of depth for planar cases (per period for a "
                             "periodic domain), of the whole ring for axisymmetric ones (each "
                             "case's result.json names its geometry); the same numbers are in "
                             "summary.csv and summary.json.",
                             "drag_force_N_per_m_or_N,force_y_N_per_m_or_N,loss_W_per_m_or_W,"
                             "peak_drag_N_per_m_or_N",
                             "damping_coefficient_N_s_per_m2_or_N_s_per_m",
                             "N s/m per m of depth (planar cases) or N s/m of the whole ring "
                             "(axisymmetric cases)",
                             "N s/m<sup>2</sup> or N s/m",
                             "drag_force_error_N_per_m_or_N,force_y_error_N_per_m_or_N"};
    } else {
        *u = (summary_units){"N/m", "W/m", "drag per unit length (N/m)",
                             "Forces per metre of depth (per period for a periodic domain); the "
                             "same numbers are in summary.csv and summary.json.",
                             "drag_force_N_per_m,force_y_N_per_m,loss_W_per_m,peak_drag_N_per_m",
                             "damping_coefficient_N_s_per_m2",
                             "N s/m per m of depth (per period for a periodic domain)",
                             "N s/m<sup>2</sup>", "drag_force_error_N_per_m,force_y_error_N_per_m"};
    }
}

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
    r->damping = r->linear_speed = r->terminal_speed = NAN;
    r->state = app_batch_disk_state(outdir, c, &r->seconds, r->error, sizeof r->error);
    if (r->state != APP_CASE_OK) {
        if (r->state == APP_CASE_NOT_RUN && c->invalid) { /* planned invalid, not yet recorded */
            r->state = APP_CASE_INVALID;
            snprintf(r->error, sizeof r->error, "%s", c->error);
        }
        return EDDY_OK;
    }
    char path[4200];
    app_batch_join(path, sizeof path, outdir, c->name, "forces.png");
    png_size(path, &r->png_w, &r->png_h);
    app_batch_join(path, sizeof path, outdir, c->name, "result.json");
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
    r->speed = n > 0 ? malloc((size_t)n * 8 * sizeof *r->speed) : NULL;
    if (n > 0 && r->speed == NULL) {
        cJSON_Delete(root);
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory reading %s", path);
    }
    r->drag = r->speed + n;
    r->force_y = r->speed + 2 * n;
    r->loss = r->speed + 3 * n;
    r->rpm = r->speed + 4 * n;
    r->torque = r->speed + 5 * n;
    r->drag_err = r->speed + 6 * n;
    r->force_y_err = r->speed + 7 * n;
    int k = 0;
    for (const cJSON *p = pts->child; p != NULL; p = p->next, k++) {
        r->speed[k] = json_num(p, "speed");
        r->drag[k] = json_num(p, "drag_force");
        r->force_y[k] = json_num(p, "force_y");
        r->drag_err[k] = json_num(p, "drag_force_error");
        r->force_y_err[k] = json_num(p, "force_y_error");
        r->loss[k] = json_num(p, "loss");
        r->rpm[k] = json_num(p, "rpm");
        r->torque[k] = json_num(p, "torque");
    }
    r->npoint = n;
    const cJSON *geo = cJSON_GetObjectItemCaseSensitive(root, "geometry");
    r->axisymmetric = cJSON_IsString(geo) && strcmp(geo->valuestring, "axisymmetric") == 0;
    /* the peak is the one result.json reports (design_peak, evaluated once
     * by the run), not found again here */
    const cJSON *pk = cJSON_GetObjectItemCaseSensitive(root, "peak");
    if (cJSON_IsObject(pk)) {
        r->peak_drag = json_num(pk, "drag_force");
        r->peak_speed = json_num(pk, "speed");
    }
    r->damping = json_num(root, "damping_coefficient");
    r->linear_speed = json_num(root, "linear_up_to_speed");
    r->terminal_speed = json_num(root, "terminal_speed");
    cJSON_Delete(root);
    return EDDY_OK;
}

/* CSV field: quoted when it holds a comma, quote or line break (RFC 4180). */
static void csv_field(eddy_text *b, const char *s)
{
    if (strpbrk(s, ",\"\r\n") == NULL) {
        eddy_text_str(b, s);
        return;
    }
    app_batch_quote(b, s, '"', "\"\"");
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

/* Write b (then freed) to OUT/name atomically; out of memory if b is. */
static eddy_status write_text(const char *outdir, const char *name, eddy_text *b,
                              eddy_error *err)
{
    if (b->oom) {
        free(b->p);
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory writing %s", name);
    }
    char path[4200];
    app_batch_join(path, sizeof path, outdir, name, NULL);
    eddy_status s = eddy_write_atomic(path, b->p, b->len, err);
    free(b->p);
    return s;
}

static eddy_status write_csv(const char *outdir, const app_batch_plan *p,
                             const case_result *res, const summary_units *u, eddy_error *err)
{
    eddy_text b = {0};
    eddy_text_str(&b, "case,source");
    for (int k = 0; k < p->nkey; k++) {
        eddy_text_str(&b, ",");
        csv_field(&b, p->keys[k]);
    }
    eddy_text_printf(&b, ",speed_m_per_s,%s,peak_drag_speed_m_per_s,%s,"
                     "linear_up_to_speed_m_per_s,terminal_speed_m_per_s,%s,status,error,"
                     "seconds\n",
                     u->csv_columns, u->damp_csv, u->err_csv);
    for (int c = 0; c < p->ncase; c++) {
        const app_batch_case *pc = &p->cases[c];
        const case_result *r = &res[c];
        int rows = r->npoint > 0 ? r->npoint : 1;
        for (int k = 0; k < rows; k++) {
            csv_field(&b, pc->name);
            eddy_text_str(&b, ",");
            csv_field(&b, pc->source);
            for (int q = 0; q < p->nkey; q++) {
                const char *v = app_batch_variant_value(pc, p->keys[q]);
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
            csv_num(&b, r->damping);
            csv_num(&b, r->linear_speed);
            csv_num(&b, r->terminal_speed);
            csv_num(&b, has ? r->drag_err[k] : NAN);
            csv_num(&b, has ? r->force_y_err[k] : NAN);
            eddy_text_str(&b, ",");
            csv_field(&b, app_case_state_name(r->state));
            eddy_text_str(&b, ",");
            csv_field(&b, r->error);
            csv_num(&b, r->seconds);
            eddy_text_str(&b, "\n");
        }
    }
    return write_text(outdir, "summary.csv", &b, err);
}

static eddy_status write_summary_json(const char *outdir, const app_batch_plan *p,
                                      const case_result *res, const app_batch_counts *n,
                                      const summary_units *u, const char *when,
                                      eddy_error *err)
{
    cJSON *root = cJSON_CreateObject();
    int ok = root != NULL;
    ok = ok && cJSON_AddStringToObject(root, "tool", "eddy2d " EDDY_VERSION) != NULL;
    ok = ok && cJSON_AddStringToObject(root, "written", when) != NULL;
    cJSON *units = ok ? cJSON_AddObjectToObject(root, "units") : NULL;
    ok = units != NULL && cJSON_AddStringToObject(units, "speed", "m/s") != NULL &&
         cJSON_AddStringToObject(units, "drag_force", u->force) != NULL &&
         cJSON_AddStringToObject(units, "force_y", u->force) != NULL &&
         cJSON_AddStringToObject(units, "loss", u->loss) != NULL &&
         cJSON_AddStringToObject(units, "damping_coefficient", u->damp_json) != NULL &&
         cJSON_AddStringToObject(units, "linear_up_to_speed", "m/s") != NULL &&
         cJSON_AddStringToObject(units, "terminal_speed", "m/s") != NULL &&
         cJSON_AddStringToObject(units, "seconds", "s (wall time of the case)") != NULL;
    cJSON *cnt = ok ? cJSON_AddObjectToObject(root, "counts") : NULL;
    ok = cnt != NULL && cJSON_AddNumberToObject(cnt, "cases", n->cases) != NULL &&
         cJSON_AddNumberToObject(cnt, "ok", n->ok) != NULL &&
         cJSON_AddNumberToObject(cnt, "failed", n->failed) != NULL &&
         cJSON_AddNumberToObject(cnt, "not_run", n->not_run) != NULL;
    ok = ok && app_batch_json_variant_keys(root, p);
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
                 app_batch_json_variant(o, "variant", pc) &&
                 json_add(o, "speed", json_num_or_null(has ? r->speed[k] : NAN)) &&
                 json_add(o, "drag_force", json_num_or_null(has ? r->drag[k] : NAN)) &&
                 json_add(o, "force_y", json_num_or_null(has ? r->force_y[k] : NAN)) &&
                 json_add(o, "drag_force_error", json_num_or_null(has ? r->drag_err[k] : NAN)) &&
                 json_add(o, "force_y_error",
                          json_num_or_null(has ? r->force_y_err[k] : NAN)) &&
                 json_add(o, "loss", json_num_or_null(has ? r->loss[k] : NAN)) &&
                 json_add(o, "peak_drag", json_num_or_null(r->peak_drag)) &&
                 json_add(o, "peak_drag_speed", json_num_or_null(r->peak_speed)) &&
                 json_add(o, "damping_coefficient", json_num_or_null(r->damping)) &&
                 json_add(o, "linear_up_to_speed", json_num_or_null(r->linear_speed)) &&
                 json_add(o, "terminal_speed", json_num_or_null(r->terminal_speed)) &&
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
    app_batch_join(path, sizeof path, outdir, "summary.json", NULL);
    eddy_status s = app_batch_write_json(path, root, err);
    cJSON_Delete(root);
    return s;
}

/* ------------------------------------------------------------------ */
/* summary.png: every ok case on one pair of axes                      */
/* ------------------------------------------------------------------ */

/* Size of summary.png, px. */
#define OVERLAY_W 1100
#define OVERLAY_H 700

/* What summary.png shows (filled by write_overlay). */
typedef struct {
    int written;   /* 1: summary.png was written                       */
    int disc;      /* 1: torque against rpm (every ok case is a disc)  */
    int ncurve, w, h;
} overlay_info;

/* 1 if every point of r has a finite rpm and torque (a disc case). */
static int is_disc(const case_result *r)
{
    for (int k = 0; k < r->npoint; k++)
        if (!isfinite(r->rpm[k]) || !isfinite(r->torque[k]))
            return 0;
    return r->npoint > 0;
}

/* The number a variant value stands for, or NaN if it is not one number. */
static double variant_number(const app_batch_case *c, const char *key)
{
    const char *v = key != NULL ? app_batch_variant_value(c, key) : NULL;
    if (v == NULL || v[0] == '\0')
        return NAN;
    char *end;
    double x = strtod(v, &end);
    return *end == '\0' ? x : NAN;
}

/* The legend label of a case: its variant values ("a; b"), or its name. */
static void overlay_label(eddy_text *b, const app_batch_case *c)
{
    if (c->nvalue == 0) {
        eddy_text_str(b, c->name);
        return;
    }
    for (int q = 0; q < c->nvalue; q++)
        eddy_text_printf(b, "%s%s", q > 0 ? "; " : "", c->values[q]);
}

/* OUT/summary.png: the drag against speed of every ok case (torque against
 * rpm when every ok case is a disc), in the order of the first variant's
 * value when every case's value is a number, else in plan order.  Without
 * pictures, or without an ok case, there is none (an old one is removed);
 * on failure the file is removed too. */
static eddy_status write_overlay(const char *outdir, const app_batch_plan *p,
                                 const case_result *res, const summary_units *u,
                                 overlay_info *ov, eddy_error *err)
{
    memset(ov, 0, sizeof *ov);
    char path[4200];
    app_batch_join(path, sizeof path, outdir, "summary.png", NULL);
    int n = 0, disc = 1;
    for (int c = 0; c < p->ncase; c++)
        if (res[c].state == APP_CASE_OK && res[c].npoint > 0) {
            n++;
            disc = disc && is_disc(&res[c]);
        }
    if (!p->images || n == 0) {
        if (unlink(path) != 0 && errno != ENOENT)
            return EDDY_RAISE(err, EDDY_ERR_IO, "%s: cannot remove the old overlay", path);
        return EDDY_OK;
    }
    int *idx = malloc((size_t)n * sizeof *idx), *npt = malloc((size_t)n * sizeof *npt);
    const double **xs = malloc((size_t)n * sizeof *xs), **ys = malloc((size_t)n * sizeof *ys);
    char **names = calloc((size_t)n, sizeof *names);
    eddy_status st = EDDY_OK;
    if (idx == NULL || npt == NULL || xs == NULL || ys == NULL || names == NULL)
        st = EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory writing summary.png");
    const char *key0 = p->nkey > 0 ? p->keys[0] : NULL;
    int m = 0, numeric = key0 != NULL;
    for (int c = 0; st == EDDY_OK && c < p->ncase; c++)
        if (res[c].state == APP_CASE_OK && res[c].npoint > 0) {
            idx[m++] = c;
            numeric = numeric && isfinite(variant_number(&p->cases[c], key0));
        }
    for (int k = 1; st == EDDY_OK && numeric && k < n; k++) { /* stable insertion sort */
        int v = idx[k], q = k - 1;
        double xv = variant_number(&p->cases[v], key0);
        while (q >= 0 && variant_number(&p->cases[idx[q]], key0) > xv) {
            idx[q + 1] = idx[q];
            q--;
        }
        idx[q + 1] = v;
    }
    for (int k = 0; st == EDDY_OK && k < n; k++) {
        const case_result *r = &res[idx[k]];
        npt[k] = r->npoint;
        xs[k] = disc ? r->rpm : r->speed;
        ys[k] = disc ? r->torque : r->drag;
        eddy_text b = {0};
        overlay_label(&b, &p->cases[idx[k]]);
        if (b.oom || b.p == NULL) {
            free(b.p);
            st = EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory writing summary.png");
        }
        names[k] = b.p;
    }
    eddy_text key = {0};
    for (int q = 0; q < p->nkey; q++)
        eddy_text_printf(&key, "%s%s", q > 0 ? "; " : "", p->keys[q]);
    if (st == EDDY_OK && key.oom)
        st = EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory writing summary.png");
    if (st == EDDY_OK) {
        post_overlay_opts o;
        post_overlay_opts_defaults(&o);
        o.title = disc ? "batch: torque of every case against rpm"
                       : "batch: drag of every case against speed";
        o.version = EDDY_VERSION;
        o.x_label = disc ? "speed (rpm)" : "speed (m/s)";
        o.y_label = disc ? "torque of the disc (N m)" : u->drag_title;
        o.key_label = key.p;
        o.width_px = OVERLAY_W;
        o.height_px = OVERLAY_H;
        st = post_plot_overlay_png(path, n, npt, xs, ys, (const char *const *)names, &o, err);
    }
    if (st == EDDY_OK) {
        ov->written = 1;
        ov->disc = disc;
        ov->ncurve = n;
        ov->w = OVERLAY_W;
        ov->h = OVERLAY_H;
    } else {
        unlink(path); /* never leave an old overlay beside a failed summary */
    }
    for (int k = 0; names != NULL && k < n; k++)
        free(names[k]);
    free(key.p);
    free(names);
    free(idx);
    free(npt);
    free(xs);
    free(ys);
    return st;
}

/* The overlay figure of summary.html (nothing without summary.png). */
static void html_overlay(eddy_text *b, const overlay_info *ov, const summary_units *u)
{
    if (!ov->written)
        return;
    char drag_what[160];
    snprintf(drag_what, sizeof drag_what, "%s against speed (m/s)", u->drag_title);
    const char *what = ov->disc ? "torque of the whole disc (N m) against rpm" : drag_what;
    eddy_text_printf(b, "<h2>All cases overlaid</h2>\n<figure id=\"overlay\" class=\"overlay\">"
                     "<a href=\"summary.png\"><img src=\"summary.png\" width=\"%d\" "
                     "height=\"%d\" alt=\"%s, every ok case\"></a><figcaption>%s, %d ok "
                     "case%s, one colour each (keyed above the plot by variant values)"
                     "</figcaption></figure>\n",
                     ov->w, ov->h, what, what, ov->ncurve, ov->ncurve == 1 ? "" : "s");
}

static void html_status(eddy_text *b, app_case_state st)
{
    eddy_text_printf(b, "<td class=\"st %s\">%s</td>",
              st == APP_CASE_OK ? "ok" : st == APP_CASE_NOT_RUN ? "notrun" : "bad",
              app_case_state_name(st));
}

/* The page's head, its style, the title, the counts and the notice. */
static void html_head(eddy_text *b, const app_batch_counts *n, const char *when)
{
    eddy_text_str(b,
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
           "figure.overlay{max-width:1000px}"
           "figure img{width:100%;height:auto;display:block}\n"
           "figcaption{font-size:.85em;margin-top:.3em}.missing{padding:2em 1em;color:#444}\n"
           ".notice{border:1px solid #888;padding:.5em;font-size:.85em;max-width:70em}\n"
           "</style>\n</head>\n<body>\n<h1>eddy2d batch summary</h1>\n");
    eddy_text_printf(b, "<p id=\"counts\">%d cases: %d ok, %d failed, %d not run. Written %s by "
                     "eddy2d %s.</p>\n",
                     n->cases, n->ok, n->failed, n->not_run, when, EDDY_VERSION);
    eddy_text_str(b, "<p class=\"notice\"><strong>Caution.</strong> ");
    html_text(b, app_safety_notice());
    eddy_text_str(b, "</p>\n");
}

/* The table of the cases: variant values, status, peak drag, error. */
static void html_cases(eddy_text *b, const app_batch_plan *p, const case_result *res,
                       const summary_units *u)
{
    eddy_text_str(b, "<h2>Cases</h2>\n<table id=\"cases\">\n<thead><tr><th>case</th>");
    for (int k = 0; k < p->nkey; k++) {
        eddy_text_str(b, "<th>");
        html_text(b, p->keys[k]);
        eddy_text_str(b, "</th>");
    }
    eddy_text_printf(b, "<th>status</th><th>peak drag (%s)</th><th>at speed (m/s)</th>"
                     "<th>damping coefficient (%s)</th><th>linear up to (m/s)"
                     "</th><th>terminal speed (m/s)</th>"
                     "<th>largest drag error estimate (%% of the largest drag)</th>"
                     "<th>seconds</th><th>error</th></tr></thead>\n<tbody>\n", u->force,
                     u->damp_html);
    for (int c = 0; c < p->ncase; c++) {
        const app_batch_case *pc = &p->cases[c];
        const case_result *r = &res[c];
        eddy_text_str(b, "<tr><td><a href=\"#fig-");
        html_text(b, pc->name);
        eddy_text_str(b, "\">");
        html_text(b, pc->name);
        eddy_text_str(b, "</a></td>");
        for (int q = 0; q < p->nkey; q++) {
            const char *v = app_batch_variant_value(pc, p->keys[q]);
            eddy_text_str(b, "<td>");
            html_text(b, v != NULL ? v : "");
            eddy_text_str(b, "</td>");
        }
        html_status(b, r->state);
        html_num(b, r->peak_drag, "num");
        html_num(b, r->peak_speed, "num");
        html_num(b, r->damping, "num");
        html_num(b, r->linear_speed, "num");
        html_num(b, r->terminal_speed, "num");
        double dmax = 0.0, emax = NAN;
        for (int k = 0; k < r->npoint; k++) {
            dmax = fmax(dmax, fabs(r->drag[k]));
            if (isfinite(r->drag_err[k]))
                emax = isfinite(emax) ? fmax(emax, r->drag_err[k]) : r->drag_err[k];
        }
        html_num(b, dmax > 0 ? 100.0 * emax / dmax : NAN, "num");
        html_num(b, r->seconds, "num");
        eddy_text_str(b, "<td class=\"err\">");
        html_text(b, r->error);
        eddy_text_str(b, "</td></tr>\n");
    }
    eddy_text_str(b, "</tbody>\n</table>\n");
}

/* One case's figure: its forces.png linked, or why there is none. */
static void html_figure(eddy_text *b, const app_batch_case *pc, const case_result *r)
{
    eddy_text_str(b, "<figure id=\"fig-");
    html_text(b, pc->name);
    eddy_text_str(b, "\">");
    if (r->png_w > 0) {
        eddy_text_str(b, "<a href=\"");
        html_text(b, pc->name);
        eddy_text_str(b, "/forces.png\"><img src=\"");
        html_text(b, pc->name);
        eddy_text_printf(b, "/forces.png\" width=\"%d\" height=\"%d\" alt=\"drag and normal "
                         "force against speed, ", r->png_w, r->png_h);
        html_text(b, pc->name);
        eddy_text_str(b, "\"></a>");
    } else {
        eddy_text_str(b, "<div class=\"missing\">");
        if (r->state == APP_CASE_OK)
            eddy_text_str(b, "no plot (run without pictures)");
        else {
            html_text(b, app_case_state_name(r->state));
            if (r->error[0]) {
                eddy_text_str(b, ": ");
                html_text(b, r->error);
            }
        }
        eddy_text_str(b, "</div>");
    }
    eddy_text_str(b, "<figcaption><strong>");
    html_text(b, pc->name);
    eddy_text_str(b, "</strong>");
    if (pc->nvalue > 0) {
        eddy_text_str(b, "<br>");
        eddy_text v = {0};
        variant_text(&v, pc);
        html_text(b, v.p != NULL ? v.p : "");
        if (v.oom)
            b->oom = 1;
        free(v.p);
    }
    eddy_text_str(b, "</figcaption></figure>\n");
}

/* The table of every case and speed. */
static void html_points(eddy_text *b, const app_batch_plan *p, const case_result *res,
                        const summary_units *u)
{
    eddy_text_printf(b, "<h2>Every speed</h2>\n<table id=\"points\">\n<thead><tr><th>case</th>"
                     "<th>speed (m/s)</th><th>drag (%s)</th><th>normal force (%s)</th>"
                     "<th>loss (%s)</th><th>status</th></tr></thead>\n<tbody>\n", u->force,
                     u->force, u->loss);
    for (int c = 0; c < p->ncase; c++) {
        const app_batch_case *pc = &p->cases[c];
        const case_result *r = &res[c];
        int rows = r->npoint > 0 ? r->npoint : 1;
        for (int k = 0; k < rows; k++) {
            int has = k < r->npoint;
            eddy_text_str(b, "<tr><td>");
            html_text(b, pc->name);
            eddy_text_str(b, "</td>");
            html_num(b, has ? r->speed[k] : NAN, "num");
            html_num(b, has ? r->drag[k] : NAN, "num");
            html_num(b, has ? r->force_y[k] : NAN, "num");
            html_num(b, has ? r->loss[k] : NAN, "num");
            html_status(b, r->state);
            eddy_text_str(b, "</tr>\n");
        }
    }
    eddy_text_str(b, "</tbody>\n</table>\n");
}

static eddy_status write_html(const char *outdir, const app_batch_plan *p,
                              const case_result *res, const app_batch_counts *n,
                              const overlay_info *ov, const summary_units *u, const char *when,
                              eddy_error *err)
{
    eddy_text b = {0};
    html_head(&b, n, when);
    html_cases(&b, p, res, u);
    html_overlay(&b, ov, u);
    eddy_text_str(&b, "<h2>Force-speed plots</h2>\n<div class=\"plots\">\n");
    for (int c = 0; c < p->ncase; c++)
        html_figure(&b, &p->cases[c], &res[c]);
    eddy_text_str(&b, "</div>\n");
    html_points(&b, p, res, u);
    eddy_text_printf(&b, "<p>%s</p>\n</body>\n</html>\n", u->note);
    return write_text(outdir, "summary.html", &b, err);
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
    summary_units u;
    choose_units(res, p->ncase, &u);
    if (s == EDDY_OK)
        s = write_csv(outdir, p, res, &u, err);
    if (s == EDDY_OK)
        s = write_summary_json(outdir, p, res, &n, &u, when, err);
    overlay_info ov;
    memset(&ov, 0, sizeof ov);
    if (s == EDDY_OK)
        s = write_overlay(outdir, p, res, &u, &ov, err);
    if (s == EDDY_OK)
        s = write_html(outdir, p, res, &n, &ov, &u, when, err);
    for (int c = 0; c < p->ncase; c++)
        free(res[c].speed);
    free(res);
    if (s == EDDY_OK && counts != NULL)
        *counts = n;
    return s;
}
