/*
 * app_out.c - the outputs of one run beside result.json (app_report.c):
 * the field pictures, VTK fields and line profiles of each speed, the force
 * plot, the stop's CSV and plot, their numbering in speed order, and the
 * output folder (created, locked, cleared of a previous run's files).
 * Declared in app/app_out.h (private to app/) and app/app.h.
 */
#include "app/app.h"
#include "app/app_out.h"

#include <dirent.h>
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

int app_run_is_output(const char *f)
{
    size_t n = strlen(f);
    static const char *const fixed[] = {"result.json", "forces.csv", "stopping.csv",
                                        "forces.png",  "stopping.png", "pass.csv",
                                        "pass.png",    NULL};
    for (int k = 0; fixed[k] != NULL; k++)
        if (strcmp(f, fixed[k]) == 0)
            return 1;
    if (strstr(f, ".tmp.") != NULL || (n > 4 && strcmp(f + n - 4, ".tmp") == 0))
        return 1; /* temporaries, also of earlier versions */
    int png = n > 4 && strcmp(f + n - 4, ".png") == 0;
    int csv = n > 4 && strcmp(f + n - 4, ".csv") == 0;
    int vtr = n > 4 && strcmp(f + n - 4, ".vtr") == 0;
    return (png && (strncmp(f, "jz_", 3) == 0 || strncmp(f, "b_", 2) == 0)) ||
           (vtr && strncmp(f, "field_", 6) == 0) || (csv && strncmp(f, "profile_", 8) == 0);
}

eddy_status app_run_clear_outputs(const char *dir, eddy_error *err)
{
    DIR *d = opendir(dir);
    if (d == NULL)
        return EDDY_RAISE(err, EDDY_ERR_IO, "%s: cannot list: %s", dir, strerror(errno));
    eddy_status s = EDDY_OK;
    struct dirent *de;
    while (s == EDDY_OK && (de = readdir(d)) != NULL) {
        if (de->d_name[0] == '.' || !app_run_is_output(de->d_name))
            continue;
        char path[4600];
        snprintf(path, sizeof path, "%s/%s", dir, de->d_name);
        if (unlink(path) != 0 && errno != ENOENT)
            s = EDDY_RAISE(err, EDDY_ERR_IO, "%s: cannot remove the previous run's file: %s",
                           path, strerror(errno));
    }
    closedir(d);
    return s;
}

/* Picture, field and profile files carry the number of their point: an
 * adaptive sweep solves out of speed order, so once the points are sorted
 * the files of point q, written under its solve index, are renamed to q
 * (the speed in each name keeps old and new names distinct). */
eddy_status app_out_renumber(app_report *r, eddy_error *err)
{
    const mesh_case *c = r->c;
    for (int q = 0; q < r->npoint; q++) {
        int k = r->info[q].file_index;
        if (k == q)
            continue;
        double v = r->f[q].speed;
        char from[64], to[64];
        snprintf(from, sizeof from, "_%02d_%.6gmps.", k, v);
        snprintf(to, sizeof to, "_%02d_%.6gmps.", q, v);
        const char *kinds[] = {"jz%spng", "b%spng", "field%svtr"};
        for (int m = 0; m < 3 + c->nprofile; m++) {
            char fmt[160], a[4400], b[4400], name[200];
            if (m < 3)
                snprintf(fmt, sizeof fmt, "%s", kinds[m]);
            else
                snprintf(fmt, sizeof fmt, "profile_%s%%scsv", c->profiles[m - 3].name);
            snprintf(name, sizeof name, fmt, from);
            snprintf(a, sizeof a, "%s/%s", r->outdir, name);
            snprintf(name, sizeof name, fmt, to);
            snprintf(b, sizeof b, "%s/%s", r->outdir, name);
            if (rename(a, b) != 0 && errno != ENOENT)
                return EDDY_RAISE(err, EDDY_ERR_IO, "%s: cannot rename to %s: %s", a, b,
                                  strerror(errno));
        }
        r->info[q].file_index = q;
    }
    return EDDY_OK;
}

/* The output folder of a run: created, locked (*lock, eddy_unlock_dir) and
 * cleared of a previous run's outputs. */
eddy_status app_out_open_dir(const app_report *r, int *lock, eddy_error *err)
{
    *lock = -1;
    eddy_status s = eddy_make_dir(r->outdir, err);
    if (s == EDDY_OK)
        s = eddy_lock_dir(r->outdir, lock, err);
    if (s == EDDY_OK)
        s = app_run_clear_outputs(r->outdir, err);
    return s;
}

/* The region of interest: every non-air region, moving conductors only
 * over the sources' x-range, plus a margin; the whole domain on request. */
void app_view_window(const mesh_case *c, int full, double view[4])
{
    view[0] = c->x0;
    view[1] = c->y0;
    view[2] = c->x1;
    view[3] = c->y1;
    if (full)
        return;
    double x0 = INFINITY, x1 = -INFINITY, y0 = INFINITY, y1 = -INFINITY;
    for (int k = 0; k < c->nreg; k++) {
        const mesh_region *g = &c->regions[k];
        if (g->material < 0 && g->jz == 0.0)
            continue;
        y0 = fmin(y0, g->box[1]);
        y1 = fmax(y1, g->box[3]);
        if (g->moving)
            continue;
        x0 = fmin(x0, g->box[0]);
        x1 = fmax(x1, g->box[2]);
    }
    if (!(x1 > x0)) { /* nothing stationary: the whole width */
        x0 = c->x0;
        x1 = c->x1;
    }
    if (!(y1 > y0)) {
        y0 = c->y0;
        y1 = c->y1;
    }
    double m = 0.25 * fmax(x1 - x0, y1 - y0);
    if (c->x_periodic) { /* one period is the natural picture */
        x0 = c->x0;
        x1 = c->x1;
    } else {
        x0 -= m;
        x1 += m;
    }
    y0 -= 0.5 * m;
    y1 += 0.5 * m;
    view[0] = fmax(x0, c->x0);
    view[1] = fmax(y0, c->y0);
    view[2] = fmin(x1, c->x1);
    view[3] = fmin(y1, c->y1);
}

eddy_status app_out_maps(const mesh_case *c, const mesh_grid *g, const char *dir,
                         const char *stem, const double *a, const double *jz,
                         const double *bmag, int moving_only, double shift_x, double v,
                         const char *when, int full_domain, eddy_error *err)
{
    size_t nc = (size_t)g->ncx * (size_t)g->ncy;
    unsigned char *mask = malloc(nc);
    double *boxes = malloc((size_t)(c->nreg > 0 ? c->nreg : 1) * 4 * sizeof *boxes);
    if (mask == NULL || boxes == NULL) {
        free(mask);
        free(boxes);
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
    }
    for (size_t q = 0; q < nc; q++)
        mask[q] = (!moving_only || g->moving[q]) && g->sigma[q] > 0.0;
    int nb = 0;
    for (int q = 0; q < c->nreg; q++) {
        const mesh_region *rg = &c->regions[q];
        if (rg->material < 0 && rg->jz == 0.0)
            continue;
        memcpy(&boxes[4 * nb], rg->box, 4 * sizeof *boxes);
        if (rg->moving) { /* where it is now */
            boxes[4 * nb] += shift_x;
            boxes[4 * nb + 2] += shift_x;
        }
        nb++;
    }
    post_map_opts mo;
    post_map_opts_defaults(&mo);
    char title[320], path[4400];
    mo.title = title;
    mo.length_unit = c->length_unit;
    mo.length_scale = 1.0 / c->length_scale;
    app_view_window(c, full_domain, mo.view);
    int rz = c->geometry == MESH_AXISYMMETRIC;
    if (rz) { /* z horizontal, r up; a holds psi = r A_phi, whose contours are
               * the field lines */
        mo.x_name = "z";
        mo.y_name = "r";
    }
    mo.n_flux_lines = 24;
    mo.outlines = boxes;
    mo.n_outlines = nb;
    mo.case_name = c->name;
    mo.speed = v;
    mo.version = EDDY_VERSION;
    /* induced current density, diverging map symmetric about zero */
    snprintf(title, sizeof title, "%s: induced current density %s", c->name, when);
    mo.quantity = rz ? "J_phi" : "J_z";
    mo.unit_label = "MA/m^2";
    mo.value_scale = 1e-6;
    mo.diverging = 1;
    snprintf(path, sizeof path, "%s/jz_%s.png", dir, stem);
    eddy_status s = post_map_png(path, g->nx, g->ny, g->x, g->y, jz, mask, a, &mo, err);
    /* flux density magnitude, sequential map */
    if (s == EDDY_OK) {
        snprintf(title, sizeof title, "%s: flux density %s", c->name, when);
        mo.quantity = "|B|";
        mo.unit_label = "T";
        mo.value_scale = 1.0;
        mo.diverging = 0;
        snprintf(path, sizeof path, "%s/b_%s.png", dir, stem);
        s = post_map_png(path, g->nx, g->ny, g->x, g->y, bmag, NULL, a, &mo, err);
    }
    free(mask);
    free(boxes);
    return s;
}

/* g: the report's grid, or its copy with the converged reluctivities of a
 * saturable case. */
eddy_status app_out_fields(app_report *r, const mesh_grid *g, const app_run_opts *o, int k,
                            const double *a, post_fields *pf, eddy_error *err)
{
    const mesh_case *c = r->c;
    double v = c->speeds[k];
    eddy_status s = post_fields_compute(g, a, v, pf, err);
    if (s != EDDY_OK)
        return s;
    char path[4400], stem[64];
    snprintf(stem, sizeof stem, "%02d_%.6gmps", k, v);
    if (o->images) {
        char when[64];
        snprintf(when, sizeof when, "at %.4g m/s", v);
        s = app_out_maps(c, g, r->outdir, stem, a, pf->jz, pf->bmag, 1, 0.0, v, when,
                         o->full_domain, err);
        if (s != EDDY_OK)
            return s;
    }
    if (o->vtk) {
        snprintf(path, sizeof path, "%s/field_%s.vtr", r->outdir, stem);
        s = post_write_vtr(path, g, a, pf, v, c->length_unit, err);
        if (s != EDDY_OK)
            return s;
    }
    for (int q = 0; q < c->nprofile; q++) {
        const mesh_profile *pr = &c->profiles[q];
        char *csv = NULL;
        size_t len = 0;
        s = post_line_profile(g, a, v, pr->p0, pr->p1, pr->points, &csv, &len, err);
        if (s != EDDY_OK)
            return s;
        snprintf(path, sizeof path, "%s/profile_%s_%s.csv", r->outdir, pr->name, stem);
        s = eddy_write_atomic(path, csv, len, err);
        free(csv);
        if (s != EDDY_OK)
            return s;
    }
    return EDDY_OK;
}

/* The force-speed plot after the sweep. */
eddy_status app_out_force_plot(app_report *r, eddy_error *err)
{
    int n = r->npoint;
    double *sp = malloc((size_t)n * 5 * sizeof *sp);
    if (sp == NULL)
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
    double *dr = sp + n, *fy = sp + 2 * n, *dre = sp + 3 * n, *fye = sp + 4 * n;
    double slope = r->damping; /* the dashed asymptote F = c v */
    for (int q = 0; q < n; q++) {
        sp[q] = r->f[q].speed;
        dr[q] = r->f[q].drag;
        fy[q] = r->f[q].force_y;
        dre[q] = r->f[q].drag_error;
        fye[q] = r->f[q].force_y_error;
    }
    post_plot_opts po;
    post_plot_opts_defaults(&po);
    char title[160];
    int rz = r->c->geometry == MESH_AXISYMMETRIC;
    snprintf(title, sizeof title, rz ? "%s: drag on the whole ring" : "%s: drag and normal force",
             r->c->name);
    po.title = title;
    po.whole_ring = rz;
    po.case_name = r->c->name;
    po.version = EDDY_VERSION;
    if (r->estimated) { /* error bars: the estimated discretisation error */
        po.drag_error = dre;
        po.normal_error = fye;
    }
    /* the peak result.json reports (app_design_evaluate), not one of the plot's */
    po.has_peak = r->has_peak;
    po.peak_speed = r->peak_speed;
    po.peak_drag = r->peak_drag;
    po.peak_interpolated = r->peak_refined;
    if (r->ref_state == APP_REF_APPROXIMATE)
        po.ref_label = "reference (mu_r = 1 magnets)";
    char path[4200];
    snprintf(path, sizeof path, "%s/forces.png", r->outdir); /* written atomically */
    int nref = r->ref_drag != NULL && r->g != NULL ? n : 0;
    /* r-z: no normal-force curve (the net radial force on a ring is zero) */
    eddy_status s = post_plot_forces_png(path, n, sp, dr, rz ? NULL : fy, slope, nref, sp,
                                         r->ref_drag,
                                         r->ref_force_y, &po, err);
    free(sp);
    return s;
}

/* The stop of the case's vehicle: stopping.csv (and stopping.png). */
eddy_status app_out_stop(app_report *r, const app_run_opts *o, eddy_error *err)
{
    const design_stop_result *st = &r->stop;
    size_t cap = 256 + (size_t)st->n_samples * 96, len = 0;
    char *buf = malloc(cap);
    if (buf == NULL)
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
    len += (size_t)snprintf(buf + len, cap - len,
                            "distance_m,time_s,speed_m_per_s,deceleration_m_per_s2\n");
    for (int k = 0; k < st->n_samples; k++)
        len += (size_t)snprintf(buf + len, cap - len, "%.9g,%.9g,%.9g,%.9g\n", st->s_distance[k],
                                st->s_time[k], st->s_speed[k], st->s_decel[k]);
    char path[4400];
    snprintf(path, sizeof path, "%s/stopping.csv", r->outdir);
    eddy_status s = eddy_write_atomic(path, buf, len, err);
    free(buf);
    if (s != EDDY_OK || !o->images)
        return s;
    post_xy_opts xo;
    post_xy_opts_defaults(&xo);
    char title[200];
    snprintf(title, sizeof title, "%s: %s from %.4g to %.4g m/s", r->c->name,
             r->c->vehicle.gravity ? "falling load slowed" : "stop", r->c->vehicle.from_speed,
             r->c->vehicle.to_speed);
    xo.title = title;
    xo.case_name = r->c->name;
    xo.version = EDDY_VERSION;
    xo.x_label = "distance (m)";
    xo.y1_label = "speed (m/s)";
    xo.y2_label = "deceleration (m/s^2)";
    xo.y1_name = "speed";
    xo.y2_name = "deceleration";
    snprintf(path, sizeof path, "%s/stopping.png", r->outdir); /* written atomically */
    return post_plot_xy_png(path, st->n_samples, st->s_distance, st->s_speed, st->s_decel, &xo,
                            err);
}
