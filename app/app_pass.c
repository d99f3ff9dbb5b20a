/*
 * app_pass.c - the time-stepped pass of the moving regions through the fixed
 * ones (case key "pass"): the loop over the steps (mesh -> solver -> post,
 * one grid, one symbolic analysis), the coupled vehicle, the steady model
 * of a coupled pass, and the pass's outputs (pass.csv, pass.png, the J_z and
 * |B| pictures during the pass, the "pass" object of result.json).
 */
#include "app/app.h"
#include "app/app_out.h"

#include <cjson/cJSON.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

void app_pass_result_free(app_pass_result *r)
{
    if (r == NULL)
        return;
    free(r->position);
    free(r->time);
    free(r->speed);
    free(r->drag);
    free(r->force_y);
    free(r->drag_stress);
    free(r->loss);
    free(r->energy);
    free(r);
}

static app_pass_result *result_alloc(long cap)
{
    app_pass_result *r = calloc(1, sizeof *r);
    if (r == NULL)
        return NULL;
    size_t n = (size_t)cap;
    r->position = malloc(n * sizeof *r->position);
    r->time = malloc(n * sizeof *r->time);
    r->speed = malloc(n * sizeof *r->speed);
    r->drag = malloc(n * sizeof *r->drag);
    r->force_y = malloc(n * sizeof *r->force_y);
    r->drag_stress = malloc(n * sizeof *r->drag_stress);
    r->loss = malloc(n * sizeof *r->loss);
    r->energy = malloc(n * sizeof *r->energy);
    if (!r->position || !r->time || !r->speed || !r->drag || !r->force_y || !r->drag_stress ||
        !r->loss || !r->energy) {
        app_pass_result_free(r);
        return NULL;
    }
    r->steady_speed = r->steady_drag = r->steady_force_y = r->steady_exit_speed = NAN;
    r->exit_speed = NAN;
    return r;
}

/* The retarding force on the whole vehicle, N: the drag per metre times
 * depth and repeat, plus the constant extra force, minus the weight when it
 * falls. */
static double vehicle_force(const mesh_vehicle *h, double drag)
{
    double f = drag * h->depth * h->repeat + h->extra_force;
    if (h->gravity)
        f -= h->mass * DESIGN_STANDARD_GRAVITY;
    return f;
}

/* The speed after travelling dx at constant retarding force f from v:
 * m v dv/dx = -f, so v'^2 = v^2 - 2 f dx / m; 0 if the load stops. */
static double speed_after(const mesh_vehicle *h, double v, double f, double dx)
{
    double v2 = v * v - 2.0 * f * dx / h->mass;
    return v2 > 0.0 ? sqrt(v2) : 0.0;
}

double app_pass_steady_model(const mesh_case *c, int n, const double *speed, const double *drag)
{
    const mesh_vehicle *h = &c->vehicle;
    if (!h->present || n < 1)
        return NAN;
    double v = c->pass.speed, x = 0.0, L = c->pass.distance;
    /* small steps of the same exact-per-step rule as the coupled pass, with
     * the force at the step's start speed (midpoint corrected) */
    double dx = L / 20000.0;
    while (x < L * (1.0 - 1e-12) && v > 0.0) {
        double step = fmin(dx, L - x);
        double f0 = 0.0;
        for (int pass = 0; pass < 2; pass++) { /* predictor, then midpoint */
            double vm = pass == 0 ? v : 0.5 * (v + speed_after(h, v, f0, step));
            double fd; /* drag at vm, linear in speed with F(0) = 0 */
            int k = 0;
            while (k < n && speed[k] < vm)
                k++;
            if (k == n)
                fd = drag[n - 1];
            else if (k == 0)
                fd = speed[0] > 0 ? drag[0] * vm / speed[0] : drag[0];
            else
                fd = drag[k - 1] + (drag[k] - drag[k - 1]) * (vm - speed[k - 1]) /
                                       (speed[k] - speed[k - 1]);
            f0 = vehicle_force(h, fd);
        }
        v = speed_after(h, v, f0, step);
        x += step;
    }
    return v;
}

/* Area of the conducting part of every node's dual cell, m^2 (nx*ny). */
static void conductor_area(const mesh_grid *g, const double *sigma, double *area)
{
    size_t nx = (size_t)g->nx;
    memset(area, 0, nx * (size_t)g->ny * sizeof *area);
    for (int j = 0; j < g->ncy; j++)
        for (int i = 0; i < g->ncx; i++) {
            if (!(sigma[(size_t)i + (size_t)g->ncx * (size_t)j] > 0.0))
                continue;
            double q = 0.25 * mesh_edge_x(g, i) * mesh_edge_y(g, j);
            for (int c = 0; c < 4; c++) {
                int ii = i + (c & 1), jj = j + (c >> 1);
                area[(size_t)ii + nx * (size_t)jj] += q;
            }
        }
    if (g->x_periodic) /* node 0 and its copy share one dual cell */
        for (int j = 0; j < g->ny; j++) {
            size_t r = nx * (size_t)j;
            area[r] += area[r + nx - 1];
            area[r + nx - 1] = area[r];
        }
}

/* The J_z and |B| pictures at sample k (position x, m). */
static eddy_status pass_pictures(const mesh_case *c, const app_pass_opts *o,
                                 const mesh_grid *gv, const double *a, const double *jz,
                                 post_fields *pf, int index, double x, double v,
                                 eddy_error *err)
{
    eddy_status s = post_fields_compute(gv, a, 0.0, pf, err);
    if (s != EDDY_OK)
        return s;
    char stem[96], when[160];
    double xu = x / c->length_scale;
    snprintf(stem, sizeof stem, "pass_%03d_%.6g%s", index, xu, c->length_unit);
    snprintf(when, sizeof when, "after %.4g %s at %.4g m/s", xu, c->length_unit, v);
    return app_out_maps(c, gv, o->outdir, stem, a, jz, pf->bmag, 0, x, v, when, o->full_domain,
                        err);
}

/* Everything a pass allocates, freed in one place. */
typedef struct {
    mesh_grid *g;
    sol_system *sys;
    sol_stepper *st;
    post_fields *pf;
    double *a, *sigma, *nu, *im, *ifx, *area, *jz;
    unsigned char *moving;
    short *region;
} pass_work;

static void pass_work_free(pass_work *w)
{
    post_fields_free(w->pf);
    sol_stepper_free(w->st);
    sol_system_free(w->sys);
    mesh_grid_free(w->g);
    free(w->a);
    free(w->sigma);
    free(w->nu);
    free(w->im);
    free(w->ifx);
    free(w->area);
    free(w->jz);
    free(w->moving);
    free(w->region);
}

eddy_status app_pass_run(const mesh_case *c, const app_pass_opts *o, app_pass_result **out,
                         eddy_error *err)
{
    *out = NULL;
    if (!c->pass.present)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: the case has no pass", c->path);
    app_pass_opts none = {0};
    if (o == NULL)
        o = &none;
    double t_start = eddy_now();
    const mesh_pass *ps = &c->pass;
    pass_work w = {0};
    eddy_status s = mesh_grid_build(c, o->memory_limit, &w.g, NULL, err);
    if (s != EDDY_OK)
        return s;
    const mesh_grid *g = w.g;
    size_t nn = (size_t)g->nx * (size_t)g->ny, nc = (size_t)g->ncx * (size_t)g->ncy;
    s = sol_system_alloc(g, &w.sys, err);
    if (s == EDDY_OK) /* the steps' LU (a static start alone would analyse for Cholesky only) */
        s = sol_analyse(w.sys, NULL, err);
    if (s == EDDY_OK)
        s = sol_stepper_alloc(w.sys, &w.st, err);
    if (s == EDDY_OK && o->images && o->outdir != NULL)
        s = post_fields_alloc(g, &w.pf, err);
    if (s != EDDY_OK) {
        pass_work_free(&w);
        return s;
    }
    w.a = malloc(nn * sizeof *w.a);
    w.im = malloc(nn * sizeof *w.im);
    w.ifx = malloc(nn * sizeof *w.ifx);
    w.area = malloc(nn * sizeof *w.area);
    w.jz = malloc(nn * sizeof *w.jz);
    w.sigma = malloc(nc * sizeof *w.sigma);
    w.nu = malloc(nc * sizeof *w.nu);
    w.moving = malloc(nc);
    w.region = malloc(nc * sizeof *w.region);
    int cells = g->pass_cells;
    double step = cells * g->pass_h;
    long nstep = (long)ceil(ps->distance / step - 1e-9);
    if (nstep < 1)
        nstep = 1;
    app_pass_result *r = result_alloc(nstep + 1);
    if (!w.a || !w.im || !w.ifx || !w.area || !w.jz || !w.sigma || !w.nu || !w.moving ||
        !w.region || r == NULL) {
        app_pass_result_free(r);
        pass_work_free(&w);
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory for a pass of %ld steps", nstep);
    }
    r->step = step;
    r->band_h = g->pass_h;
    r->cells_per_step = cells;
    r->nx = g->nx;
    r->ny = g->ny;
    r->unknowns = sol_unknowns(w.sys);
    r->force_method = "lorentz";
    /* the grid with the cells of the current step */
    mesh_grid view = *g;
    view.sigma = w.sigma;
    view.nu = w.nu;
    view.moving = w.moving;
    view.region = w.region;
    mesh_grid_pass_cells(g, 0, w.sigma, w.nu, w.moving, w.region);
    /* the starting state */
    double v = ps->speed;
    s = sol_solve(w.sys, ps->start_steady ? v : 0.0, w.a, NULL, err);
    post_forces f;
    if (s == EDDY_OK && ps->start_steady) {
        s = post_forces_compute(g, w.a, v, 0.0, &f, err);
        if (s == EDDY_OK)
            s = post_current_density(g, w.a, v, w.jz, err);
    } else if (s == EDDY_OK) {
        memset(&f, 0, sizeof f);
        f.drag_stress = 0.0;
        memset(w.jz, 0, nn * sizeof *w.jz);
    }
    if (s == EDDY_OK)
        s = sol_stepper_energy(w.st, w.a, w.nu, &r->energy[0], err);
    r->position[0] = 0.0;
    r->time[0] = 0.0;
    r->speed[0] = v;
    r->drag[0] = f.drag;
    r->force_y[0] = f.force_y;
    r->drag_stress[0] = f.drag_stress;
    r->loss[0] = f.loss;
    r->n = 1;
    double every = ps->pictures_every;
    int want_pics = every > 0 && o->images && o->outdir != NULL;
    long next_pic = 0; /* index of the next picture position, k * every */
    if (s == EDDY_OK && want_pics) {
        s = pass_pictures(c, o, &view, w.a, w.jz, w.pf, r->npicture++, 0.0, v, err);
        next_pic = 1;
    }
    if (s == EDDY_OK)
        sol_stepper_start(w.st, 0.0, w.a);
    long shift = 0;
    double t = 0.0;
    for (long k = 1; s == EDDY_OK && k <= nstep; k++) {
        double dt = step / v;
        shift += cells;
        mesh_grid_pass_cells(g, shift, w.sigma, w.nu, w.moving, w.region);
        sol_step_frame fr = {w.sigma, w.moving, w.nu, cells};
        sol_info info;
        s = sol_stepper_advance_frame(w.st, dt, ps->order, &fr, w.a, &info, err);
        if (s != EDDY_OK)
            break;
        if (info.t_factor > 0.0)
            r->factorisations++;
        else
            r->reused++;
        double pm = 0.0, pfx = 0.0;
        sol_stepper_currents(w.st, w.im, w.ifx, &pm, &pfx);
        s = post_forces_pass(&view, w.a, w.im, v, pm + pfx, &f, err);
        if (s == EDDY_OK)
            s = sol_stepper_energy(w.st, w.a, w.nu, &r->energy[k], err);
        if (s != EDDY_OK)
            break;
        t += dt;
        r->force_method = f.force_method;
        r->position[k] = shift * g->pass_h;
        r->time[k] = t;
        r->speed[k] = v;
        r->drag[k] = f.drag;
        r->force_y[k] = f.force_y;
        r->drag_stress[k] = f.drag_stress;
        r->loss[k] = f.loss;
        r->n = k + 1;
        r->work += f.drag * step;
        r->heat += f.loss * dt;
        if (want_pics && r->position[k] >= next_pic * every * (1.0 - 1e-9)) {
            conductor_area(&view, w.sigma, w.area);
            for (size_t q = 0; q < nn; q++)
                w.jz[q] = w.area[q] > 0.0 ? (w.im[q] + w.ifx[q]) / w.area[q] : 0.0;
            s = pass_pictures(c, o, &view, w.a, w.jz, w.pf, r->npicture++, r->position[k], v,
                              err);
            while (next_pic * every <= r->position[k] * (1.0 + 1e-9))
                next_pic++;
        }
        if (ps->coupled) { /* the vehicle: exact for the step's constant force */
            v = speed_after(&c->vehicle, v, vehicle_force(&c->vehicle, f.drag), step);
            if (v < 1e-9 * ps->speed) {
                r->stopped = 1;
                v = 0.0;
                break;
            }
        }
    }
    if (s == EDDY_OK) {
        r->exit_speed = v;
        r->energy_change = r->energy[r->n - 1] - r->energy[0];
        r->t_total = eddy_now() - t_start;
        *out = r;
    } else {
        app_pass_result_free(r);
    }
    pass_work_free(&w);
    return s;
}

eddy_status app_pass_write(const char *dir, const mesh_case *c, const app_pass_result *p,
                           int images, eddy_error *err)
{
    char path[4400];
    eddy_text b = {0};
    const char *u = c->length_unit;
    eddy_text_printf(&b, "# %s: pass of the moving regions, %ld steps of %.6g %s "
                         "(%d band cells of %.6g %s)\n",
                     c->name, p->n - 1, p->step / c->length_scale, u, p->cells_per_step,
                     p->band_h / c->length_scale, u);
    eddy_text_printf(&b, "position_%s,time_s,speed_m_per_s,drag_force_N_per_m,force_y_N_per_m,"
                         "drag_stress_N_per_m,loss_W_per_m,magnetic_energy_J_per_m\n", u);
    for (long k = 0; k < p->n; k++)
        eddy_text_printf(&b, "%.9g,%.9g,%.9g,%.9g,%.9g,%.9g,%.9g,%.9g\n",
                         p->position[k] / c->length_scale, p->time[k], p->speed[k], p->drag[k],
                         p->force_y[k], p->drag_stress[k], p->loss[k],
                         p->energy[k] - p->energy[0]);
    if (b.oom) {
        free(b.p);
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
    }
    snprintf(path, sizeof path, "%s/pass.csv", dir);
    eddy_status s = eddy_write_atomic(path, b.p, b.len, err);
    free(b.p);
    if (s != EDDY_OK || !images || p->n < 2)
        return s;
    /* pass.png: forces and loss / speed (N/m, equal to the drag in steady
     * motion) against the position; the steady drag as a flat line */
    int np = (int)p->n;
    double *xs = malloc((size_t)np * 2 * sizeof *xs);
    double *lv = xs != NULL ? xs + np : NULL;
    if (xs == NULL)
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
    for (int k = 0; k < np; k++) {
        xs[k] = p->position[k] / c->length_scale;
        lv[k] = p->speed[k] > 0 ? p->loss[k] / p->speed[k] : 0.0;
    }
    const double *xx[4] = {xs, xs, xs, NULL}, *yy[4] = {p->drag, p->force_y, lv, NULL};
    int npt[4] = {np, np, np, 2};
    const char *names[4] = {"drag", "normal force", "loss / speed", "steady drag, infinite plate"};
    double sx[2] = {xs[0], xs[np - 1]}, sy[2] = {p->steady_drag, p->steady_drag};
    int ncurve = 3;
    if (isfinite(p->steady_drag) && !c->pass.coupled) {
        xx[3] = sx;
        yy[3] = sy;
        ncurve = 4;
    }
    post_overlay_opts po;
    post_overlay_opts_defaults(&po);
    char title[256], xl[64];
    snprintf(title, sizeof title, "%s: pass at %.4g m/s%s", c->name, c->pass.speed,
             c->pass.coupled ? " (coupled vehicle, start speed)" : "");
    snprintf(xl, sizeof xl, "position (%s)", u);
    po.title = title;
    po.version = EDDY_VERSION;
    po.x_label = xl;
    po.y_label = "force (N/m)";
    po.key_label = "quantity";
    snprintf(path, sizeof path, "%s/pass.png", dir);
    s = post_plot_overlay_png(path, ncurve, npt, xx, yy, names, &po, err);
    free(xs);
    return s;
}

cJSON *app_pass_json(const mesh_case *c, const app_pass_result *p)
{
    cJSON *o = cJSON_CreateObject();
    if (o == NULL)
        return NULL;
    int ok = 1;
#define NUM(obj, key, val)                                                                 \
    ok = ok && (isfinite(val) ? cJSON_AddNumberToObject(obj, key, val)                     \
                              : cJSON_AddNullToObject(obj, key)) != NULL
    double *pos = malloc((size_t)p->n * sizeof *pos);
    if (pos == NULL) {
        cJSON_Delete(o);
        return NULL;
    }
    for (long k = 0; k < p->n; k++)
        pos[k] = p->position[k] / c->length_scale;
    struct {
        const char *key;
        const double *v;
    } arr[] = {{"position", pos},         {"time", p->time},          {"speed", p->speed},
               {"drag_force", p->drag},   {"force_y", p->force_y},    {"loss", p->loss},
               {"drag_stress", p->drag_stress}};
    ok = ok && cJSON_AddStringToObject(o, "position_unit", c->length_unit) != NULL;
    for (size_t q = 0; ok && q < sizeof arr / sizeof arr[0]; q++) {
        cJSON *a = cJSON_AddArrayToObject(o, arr[q].key);
        ok = a != NULL;
        for (long k = 0; ok && k < p->n; k++) {
            double v = arr[q].v[k];
            ok = cJSON_AddItemToArray(a, isfinite(v) ? cJSON_CreateNumber(v) : cJSON_CreateNull());
        }
    }
    free(pos);
    cJSON *e = ok ? cJSON_AddObjectToObject(o, "energy") : NULL;
    ok = e != NULL;
    NUM(e, "work", p->work);
    NUM(e, "heat", p->heat);
    NUM(e, "magnetic_energy_change", p->energy_change);
    double bal = p->work != 0 ? (p->work - p->heat - p->energy_change) / fabs(p->work) : NAN;
    NUM(e, "balance_relative", bal);
    ok = ok && cJSON_AddStringToObject(e, "unit", "J/m") != NULL;
    NUM(o, "step", p->step / c->length_scale);
    NUM(o, "band_cell", p->band_h / c->length_scale);
    ok = ok && cJSON_AddNumberToObject(o, "cells_per_step", p->cells_per_step) != NULL;
    ok = ok && cJSON_AddNumberToObject(o, "steps", (double)(p->n - 1)) != NULL;
    ok = ok && cJSON_AddStringToObject(o, "scheme", c->pass.order == 1 ? "backward Euler"
                                                    : "BDF2 (first step backward Euler)") != NULL;
    ok = ok && cJSON_AddStringToObject(o, "start", c->pass.start_steady ? "steady" : "static") != NULL;
    ok = ok && cJSON_AddStringToObject(o, "force_method", p->force_method) != NULL;
    ok = ok && cJSON_AddBoolToObject(o, "coupled", c->pass.coupled) != NULL;
    NUM(o, "exit_speed", p->exit_speed);
    ok = ok && cJSON_AddBoolToObject(o, "stopped", p->stopped) != NULL;
    cJSON *st = ok ? cJSON_AddObjectToObject(o, "steady") : NULL;
    ok = st != NULL;
    NUM(st, "speed", p->steady_speed);
    NUM(st, "drag_force", p->steady_drag);
    NUM(st, "force_y", p->steady_force_y);
    NUM(st, "exit_speed", p->steady_exit_speed);
    ok = ok && cJSON_AddStringToObject(st, "note", "steady solver, the moving regions "
                                       "stretched over the domain (an infinitely long "
                                       "conductor); exit_speed: the vehicle integrated with "
                                       "that steady force curve over the same distance") != NULL;
    ok = ok && cJSON_AddNumberToObject(o, "unknowns", (double)p->unknowns) != NULL;
    ok = ok && cJSON_AddNumberToObject(o, "factorisations", (double)p->factorisations) != NULL;
    ok = ok && cJSON_AddNumberToObject(o, "factorisations_reused", (double)p->reused) != NULL;
    NUM(o, "wall_seconds", p->t_total); /* a timing: same_outputs.sh drops "seconds" */
#undef NUM
    if (!ok) {
        cJSON_Delete(o);
        return NULL;
    }
    return o;
}
