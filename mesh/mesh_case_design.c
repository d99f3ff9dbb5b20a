/*
 * mesh_case_design.c - the operating points and the brake-design blocks of a
 * case: speeds (a list, a log-spaced or an adaptive range), a rotating disc
 * (its rpm list gives the speeds), the braked vehicle, the end effect of a
 * finite plate width, and the temperature of the conductors.  Messages name
 * the file and the JSON path.
 */
#include "mesh/mesh_case_int.h"

#include "design/design.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define MAX_SPEEDS 100000

/* Log-spaced speeds from a to b (same sign, |a| < |b|), n points. */
static eddy_status log_speeds(mesh_reader *r, double a, double b, int n)
{
    mesh_case *c = r->c;
    c->speeds = malloc((size_t)n * sizeof *c->speeds);
    if (c->speeds == NULL)
        return EDDY_RAISE(r->err, EDDY_ERR_NOMEM, "out of memory");
    for (int k = 0; k < n; k++)
        c->speeds[k] = n == 1 ? a : a * pow(b / a, (double)k / (n - 1));
    c->nspeed = n;
    return EDDY_OK;
}

/* "speeds": {"from": a, "to": b, "points": n} (log-spaced) or
 * {"from": a, "to": b, "auto": true [, "points": n0, "max_points": m]}. */
static eddy_status read_speed_range(mesh_reader *r, const cJSON *sp)
{
    static const char *const keys[] = {"from", "to", "points", "auto", "max_points", NULL};
    mesh_case *c = r->c;
    MESH_TRY(mesh_json_check_keys(r, sp, "speeds", keys));
    double a = 0, b = 0, pts = 0, mx = 40;
    int has_pts = 0;
    MESH_TRY(mesh_json_number(r, sp, "from", "speeds", 1, &a, NULL));
    MESH_TRY(mesh_json_number(r, sp, "to", "speeds", 1, &b, NULL));
    MESH_TRY(mesh_json_number(r, sp, "points", "speeds", 0, &pts, &has_pts));
    MESH_TRY(mesh_json_number(r, sp, "max_points", "speeds", 0, &mx, NULL));
    const cJSON *au = cJSON_GetObjectItemCaseSensitive(sp, "auto");
    if (au != NULL && !cJSON_IsBool(au))
        return mesh_json_bad(r, "speeds.auto", "must be true or false");
    int is_auto = au != NULL && cJSON_IsTrue(au);
    if (!(a > 0 && b > a))
        return mesh_json_bad(r, "speeds", "a range needs 0 < from < to (m/s); give a list for "
                                          "other speeds");
    if (!has_pts)
        pts = is_auto ? 9 : 0;
    if (!(pts >= 2 && pts <= MAX_SPEEDS && pts == floor(pts)))
        return mesh_json_bad(r, "speeds.points", "must be a whole number from 2 to %d", MAX_SPEEDS);
    if (is_auto && !(mx >= pts && mx <= 1000 && mx == floor(mx)))
        return mesh_json_bad(r, "speeds.max_points", "must be a whole number from points to 1000");
    c->speed_mode = is_auto ? MESH_SPEEDS_AUTO : MESH_SPEEDS_LOG;
    c->speed_from = a;
    c->speed_to = b;
    c->max_points = (int)mx;
    return log_speeds(r, a, b, (int)pts);
}

eddy_status mesh_case_read_speeds(mesh_reader *r, const cJSON *root)
{
    mesh_case *c = r->c;
    const cJSON *sp = cJSON_GetObjectItemCaseSensitive(root, "speeds");
    if (sp == NULL && c->disc.present && c->disc.rpm != NULL)
        return EDDY_OK; /* the disc's rpm list gave them */
    if (sp == NULL && c->pass.present) { /* the steady comparison at the pass's speed */
        c->speeds = malloc(sizeof *c->speeds);
        if (c->speeds == NULL)
            return EDDY_RAISE(r->err, EDDY_ERR_NOMEM, "out of memory");
        c->speeds[0] = c->pass.speed;
        c->nspeed = 1;
        return EDDY_OK;
    }
    if (sp == NULL)
        return mesh_json_bad(r, "speeds", "missing (a list of speeds in m/s is required)");
    if (c->disc.present && c->disc.rpm != NULL)
        return mesh_json_bad(r, "speeds", "give either speeds or disc.rpm, not both");
    if (cJSON_IsObject(sp))
        return read_speed_range(r, sp);
    if (!cJSON_IsArray(sp))
        return mesh_json_bad(r, "speeds", "must be an array of speeds in m/s, or {\"from\", "
                                          "\"to\", \"points\"} or {\"from\", \"to\", \"auto\": "
                                          "true}");
    int n = cJSON_GetArraySize(sp);
    if (n == 0)
        return mesh_json_bad(r, "speeds", "must not be empty");
    if (n > MAX_SPEEDS)
        return mesh_json_bad(r, "speeds", "too many speeds (%d, at most %d)", n, MAX_SPEEDS);
    c->speeds = malloc((size_t)n * sizeof *c->speeds);
    if (c->speeds == NULL)
        return EDDY_RAISE(r->err, EDDY_ERR_NOMEM, "out of memory");
    int k = 0;
    for (const cJSON *e = sp->child; e != NULL; e = e->next, k++) {
        char p[64];
        snprintf(p, sizeof p, "speeds[%d]", k);
        if (!cJSON_IsNumber(e))
            return mesh_json_bad(r, p, "must be a number (m/s)");
        if (!isfinite(e->valuedouble))
            return mesh_json_bad(r, p, "must be a finite number");
        c->speeds[k] = e->valuedouble;
    }
    c->nspeed = n;
    return EDDY_OK;
}

eddy_status mesh_case_read_vehicle(mesh_reader *r, const cJSON *root)
{
    static const char *const keys[] = {"mass",           "depth",       "repeat",
                                       "from_speed",     "to_speed",    "extra_force",
                                       "conductor_mass", "gravity",     NULL};
    mesh_case *c = r->c;
    const cJSON *v = cJSON_GetObjectItemCaseSensitive(root, "vehicle");
    if (v == NULL)
        return EDDY_OK;
    MESH_TRY(mesh_json_object(r, v, "vehicle", keys));
    mesh_vehicle *h = &c->vehicle;
    h->present = 1;
    h->repeat = 1.0;
    const cJSON *gr = cJSON_GetObjectItemCaseSensitive(v, "gravity");
    if (gr != NULL && !cJSON_IsBool(gr))
        return mesh_json_bad(r, "vehicle.gravity", "must be true or false");
    h->gravity = gr != NULL && cJSON_IsTrue(gr);
    MESH_TRY(mesh_json_positive(r, v, "mass", "vehicle", 1.0, &h->mass));
    if (c->geometry == MESH_AXISYMMETRIC)
        h->depth = 1.0; /* the forces are of the whole ring already */
    else
        MESH_TRY(mesh_json_positive(r, v, "depth", "vehicle", c->length_scale, &h->depth));
    /* a falling load needs no stop: its terminal speed is the answer */
    /* nor does a coupled pass (it starts at pass.speed) */
    h->has_from_speed = (!h->gravity && !(c->pass.present && c->pass.coupled)) ||
                        cJSON_GetObjectItemCaseSensitive(v, "from_speed") != NULL;
    if (h->has_from_speed)
        MESH_TRY(mesh_json_positive(r, v, "from_speed", "vehicle", 1.0, &h->from_speed));
    MESH_TRY(mesh_json_number(r, v, "to_speed", "vehicle", h->has_from_speed, &h->to_speed,
                              NULL));
    MESH_TRY(mesh_json_number(r, v, "repeat", "vehicle", 0, &h->repeat, NULL));
    MESH_TRY(mesh_json_number(r, v, "extra_force", "vehicle", 0, &h->extra_force, NULL));
    MESH_TRY(mesh_json_number(r, v, "conductor_mass", "vehicle", 0, &h->conductor_mass, NULL));
    if (!(h->repeat > 0))
        return mesh_json_bad(r, "vehicle.repeat", "must be positive");
    if (h->extra_force < 0 || h->conductor_mass < 0)
        return mesh_json_bad(r,
                             h->extra_force < 0 ? "vehicle.extra_force" : "vehicle.conductor_mass",
                             "must not be negative");
    if (!h->has_from_speed) {
        if (cJSON_GetObjectItemCaseSensitive(v, "to_speed") != NULL)
            return mesh_json_bad(r, "vehicle.to_speed", "needs a from_speed");
        return EDDY_OK;
    }
    if (!(h->to_speed >= 0 && h->to_speed < h->from_speed))
        return mesh_json_bad(r, "vehicle.to_speed", "must lie in [0, from_speed)");
    /* with gravity a stop that cannot happen is reported as such (result.json
     * "stopping": null with the reason), not refused */
    if (h->to_speed == 0 && h->extra_force == 0 && !h->gravity)
        return mesh_json_bad(r, "vehicle.to_speed",
                             "must be above 0: an eddy-current brake alone never brings a load "
                             "to rest (its drag falls to zero with speed); give a final speed, "
                             "or an extra_force");
    return EDDY_OK;
}

eddy_status mesh_case_read_end_effect(mesh_reader *r, const cJSON *root)
{
    static const char *const keys[] = {"plate_width", "active_width", "pole_pitch", NULL};
    mesh_case *c = r->c;
    const cJSON *e = cJSON_GetObjectItemCaseSensitive(root, "end_effect");
    if (e == NULL)
        return EDDY_OK;
    MESH_TRY(mesh_json_object(r, e, "end_effect", keys));
    mesh_end_effect *h = &c->end_effect;
    h->present = 1;
    MESH_TRY(mesh_json_positive(r, e, "plate_width", "end_effect", c->length_scale,
                                &h->plate_width));
    MESH_TRY(mesh_json_positive(r, e, "active_width", "end_effect", c->length_scale,
                                &h->active_width));
    if (h->active_width > h->plate_width)
        return mesh_json_bad(r, "end_effect.active_width", "must not exceed plate_width");
    int has = 0;
    MESH_TRY(mesh_json_number(r, e, "pole_pitch", "end_effect", 0, &h->pole_pitch, &has));
    if (has && !(h->pole_pitch > 0))
        return mesh_json_bad(r, "end_effect.pole_pitch", "must be positive");
    h->pole_pitch *= c->length_scale;
    if (!has) {
        if (!c->x_periodic)
            return mesh_json_bad(r, "end_effect.pole_pitch",
                                 "missing: required unless the domain is periodic (one period = "
                                 "two poles)");
        h->pole_pitch = 0.5 * (c->x1 - c->x0);
    }
    return EDDY_OK;
}

eddy_status mesh_case_read_disc(mesh_reader *r, const cJSON *root)
{
    static const char *const keys[] = {"mean_radius", "active_length", "periods", "rpm", NULL};
    mesh_case *c = r->c;
    const cJSON *d = cJSON_GetObjectItemCaseSensitive(root, "disc");
    if (d == NULL)
        return EDDY_OK;
    MESH_TRY(mesh_json_object(r, d, "disc", keys));
    mesh_disc *h = &c->disc;
    h->present = 1;
    MESH_TRY(mesh_json_positive(r, d, "mean_radius", "disc", c->length_scale, &h->mean_radius));
    MESH_TRY(mesh_json_positive(r, d, "active_length", "disc", c->length_scale,
                                &h->active_length));
    int has = 0;
    MESH_TRY(mesh_json_number(r, d, "periods", "disc", 0, &h->periods, &has));
    if (has && !(h->periods > 0))
        return mesh_json_bad(r, "disc.periods", "must be positive");
    if (!has) {
        if (!c->x_periodic)
            return mesh_json_bad(r, "disc.periods",
                                 "missing: required unless the domain is periodic");
        h->periods = 2.0 * EDDY_PI * h->mean_radius / (c->x1 - c->x0);
    }
    /* a real disc carries a whole number of pole pairs (periods) */
    if (fabs(h->periods - round(h->periods)) > 1e-6 * h->periods)
        MESH_TRY(mesh_json_warn(r, "%s: disc.periods: %.4g periods around the disc%s is not a "
                                   "whole number of pole pairs; give disc.periods (e.g. %.0f) or "
                                   "a period that divides the circumference 2 pi x %g %s",
                                r->fname, h->periods,
                                has ? "" : " (circumference / period of the domain)",
                                fmax(1.0, round(h->periods)), h->mean_radius / c->length_scale,
                                c->length_unit));
    const cJSON *rpm = cJSON_GetObjectItemCaseSensitive(d, "rpm");
    if (rpm == NULL)
        return EDDY_OK;
    if (!cJSON_IsArray(rpm) || cJSON_GetArraySize(rpm) == 0 ||
        cJSON_GetArraySize(rpm) > MAX_SPEEDS)
        return mesh_json_bad(r, "disc.rpm",
                             "must be a non-empty array of rotational speeds (rpm)");
    int n = cJSON_GetArraySize(rpm), k = 0;
    h->rpm = malloc((size_t)n * sizeof *h->rpm);
    c->speeds = malloc((size_t)n * sizeof *c->speeds);
    if (h->rpm == NULL || c->speeds == NULL)
        return EDDY_RAISE(r->err, EDDY_ERR_NOMEM, "out of memory");
    for (const cJSON *e = rpm->child; e != NULL; e = e->next, k++) {
        char p[64];
        snprintf(p, sizeof p, "disc.rpm[%d]", k);
        if (!cJSON_IsNumber(e) || !isfinite(e->valuedouble))
            return mesh_json_bad(r, p, "must be a finite number");
        h->rpm[k] = e->valuedouble;
        c->speeds[k] = design_disc_speed(h->mean_radius, h->rpm[k]);
    }
    c->nspeed = n;
    return EDDY_OK;
}

/* Conductivities at the case temperature: sigma = sigma_20 / (1 + alpha (T - 20)). */
eddy_status mesh_case_apply_temperature(mesh_reader *r, const cJSON *root)
{
    mesh_case *c = r->c;
    int has = 0;
    MESH_TRY(mesh_json_number(r, root, "temperature", "", 0, &c->temperature, &has));
    if (!has)
        return EDDY_OK;
    /* the one sigma(T) rule (design/design.h) decides the range */
    eddy_error e = {0};
    double sig = 0.0;
    if (design_sigma_at_temperature(1.0, 0.0, c->temperature, &sig, &e) != EDDY_OK)
        return mesh_json_bad(r, "temperature", "%s", e.msg);
    c->has_temperature = 1;
    for (int k = 0; k < c->nmat; k++) {
        mesh_material *m = &c->materials[k];
        if (m->sigma_20 <= 0.0)
            continue;
        if (m->alpha == 0.0) {
            MESH_TRY(mesh_json_warn(r, "%s: temperature: material \"%s\" has no "
                                       "temperature_coefficient; its conductivity at 20 C is used",
                                    r->fname, m->name));
            continue;
        }
        if (design_sigma_at_temperature(m->sigma_20, m->alpha, c->temperature, &m->sigma, &e) !=
            EDDY_OK)
            return mesh_json_bad(r, "temperature", "material \"%s\": %s", m->name, e.msg);
    }
    return EDDY_OK;
}


eddy_status mesh_case_check_vehicle_speed(mesh_reader *r)
{
    const mesh_case *c = r->c;
    if (!c->vehicle.present || !c->vehicle.has_from_speed || c->pass.present)
        return EDDY_OK; /* a pass runs its own speeds */
    double vmax = 0.0;
    for (int k = 0; k < c->nspeed; k++)
        vmax = fmax(vmax, fabs(c->speeds[k]));
    if (c->vehicle.from_speed > vmax * (1 + 1e-12))
        return mesh_json_bad(r, "vehicle.from_speed", "%g m/s lies above the highest speed "
                                                      "solved (%g m/s); extend the speeds",
                             c->vehicle.from_speed, vmax);
    return EDDY_OK;
}
