/*
 * app_design.c - from the force-speed curve of a run to brake-design
 * answers: the drag peak, where to add speeds in an adaptive sweep, the
 * conductor heating per speed, the stop of a load, the finite-width (end
 * effect) correction, and the torque and power of a disc brake.
 */
#include "app/app.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* Tolerances of the adaptive sweep (issue text): interpolation between
 * neighbours off by more than ADAPT_TOL adds points; the drag peak is
 * refined until its neighbours predict it to PEAK_TOL. */
#define ADAPT_TOL 0.005
#define PEAK_TOL 0.001
#define STOP_TABLE_TOL 0.005

static int cmp_speed(const void *pa, const void *pb)
{
    double a = *(const double *)pa, b = *(const double *)pb;
    return (a > b) - (a < b);
}

/* Sort the points of a report by speed (forces, infos, speeds together). */
void app_design_sort(app_report *r)
{
    int n = r->npoint;
    for (int i = 1; i < n; i++)
        for (int j = i; j > 0 && r->f[j - 1].speed > r->f[j].speed; j--) {
            post_forces tf = r->f[j];
            r->f[j] = r->f[j - 1];
            r->f[j - 1] = tf;
            app_point_info ti = r->info[j];
            r->info[j] = r->info[j - 1];
            r->info[j - 1] = ti;
            double ts = r->c->speeds[j];
            r->c->speeds[j] = r->c->speeds[j - 1];
            r->c->speeds[j - 1] = ts;
        }
}

/* Relative error of predicting point i from the monotone cubic (in log v,
 * log F) through the others. */
static double leave_one_out(int n, const double *lv, const double *lf, int i, double *work)
{
    double *x = work, *y = work + n, *d = work + 2 * n;
    int m = 0;
    for (int k = 0; k < n; k++)
        if (k != i) {
            x[m] = lv[k];
            y[m] = lf[k];
            m++;
        }
    if (design_pchip_slopes(m, x, y, d, NULL) != EDDY_OK)
        return INFINITY;
    return fabs(expm1(design_pchip_eval(m, x, y, d, lv[i]) - lf[i]));
}

int app_design_refine(const app_report *r, double *speeds, int max_new)
{
    int n = r->npoint, nn = 0;
    if (n < 3 || max_new <= 0)
        return 0;
    double *lv = malloc((size_t)n * 5 * sizeof *lv);
    if (lv == NULL)
        return 0;
    double *lf = lv + n, *work = lv + 2 * n;
    for (int k = 0; k < n; k++) {
        if (!(r->f[k].speed > 0 && r->f[k].drag > 0)) {
            free(lv);
            return 0;
        }
        lv[k] = log(r->f[k].speed);
        lf[k] = log(r->f[k].drag);
    }
    int imax = 0;
    for (int k = 1; k < n; k++)
        if (lf[k] > lf[imax])
            imax = k;
    for (int i = 1; i + 1 < n && nn + 2 <= max_new; i++) {
        double e = leave_one_out(n, lv, lf, i, work);
        double tol = i == imax ? PEAK_TOL : ADAPT_TOL;
        if (e > tol) {
            speeds[nn++] = exp(0.5 * (lv[i - 1] + lv[i]));
            speeds[nn++] = exp(0.5 * (lv[i] + lv[i + 1]));
        }
    }
    free(lv);
    /* drop duplicates (a midpoint shared by two flagged points) */
    qsort(speeds, (size_t)nn, sizeof *speeds, cmp_speed);
    int m = 0;
    for (int k = 0; k < nn; k++)
        if (m == 0 || speeds[k] > speeds[m - 1] * (1 + 1e-9))
            speeds[m++] = speeds[k];
    return m;
}

/* Density x specific heat of the moving conductors, area-weighted (volume-
 * weighted in an axisymmetric case), J/(m^3 K); 0 if unknown. */
static double rho_cp(const app_report *r)
{
    const mesh_case *c = r->c;
    double sum = 0.0, area = 0.0;
    for (int k = 0; k < c->nreg; k++) {
        const mesh_region *g = &c->regions[k];
        if (!g->moving || g->material < 0)
            continue;
        const mesh_material *m = &c->materials[g->material];
        if (m->sigma <= 0)
            continue;
        double a = (g->box[2] - g->box[0]) * (g->box[3] - g->box[1]);
        if (c->geometry == MESH_AXISYMMETRIC) /* weighted by the ring's volume */
            a = (g->box[2] - g->box[0]) * EDDY_PI *
                (g->box[3] * g->box[3] - g->box[1] * g->box[1]);
        if (m->density <= 0 || m->specific_heat <= 0)
            return 0.0;
        sum += a * m->density * m->specific_heat;
        area += a;
    }
    return area > 0 ? sum / area : 0.0;
}

/* The drag peak of the report (has_peak, peak_speed, peak_drag,
 * peak_refined, peak_at_end) from the m positive speeds sp[] and their drags
 * dr[]: the one rule of design_peak, a parabola in log speed (all speeds
 * are > 0), whose numbers result.json reports and forces.png marks.  No
 * peak (has_peak 0) without positive speeds or with a non-finite drag. */
static void report_peak(app_report *r, int m, const double *sp, const double *dr)
{
    r->has_peak = 0;
    r->peak_at_end = 0;
    if (m < 1 || design_peak(m, sp, dr, 1, &r->peak_speed, &r->peak_drag, &r->peak_refined,
                             NULL) != EDDY_OK)
        return;
    r->has_peak = 1;
    /* the largest |drag| sample (design_peak's step 1) and whether a speed
     * lies on both sides of it */
    int imax = 0, below = 0, above = 0;
    for (int k = 1; k < m; k++)
        if (fabs(dr[k]) > fabs(dr[imax]))
            imax = k;
    for (int k = 0; k < m; k++) {
        below += sp[k] < sp[imax];
        above += sp[k] > sp[imax];
    }
    r->peak_at_end = below == 0 || above == 0;
}

/* Where the drag of the m positive speeds sp[] (drags dr[]) leaves the
 * linear law r->damping x speed by DESIGN_LINEAR_TOL (design_linear_range). */
static void report_linear_range(app_report *r, int m, const double *sp, const double *dr)
{
    r->linear_speed = NAN;
    r->linear_state = DESIGN_LINEAR_STARTS_ABOVE;
    if (m < 1 || !(r->damping > 0)) {
        snprintf(r->linear_note, sizeof r->linear_note, "%s",
                 m < 1 ? "no positive speed in the sweep"
                       : "no damping coefficient (no field in the moving conductors)");
        return;
    }
    if (design_linear_range(m, sp, dr, r->damping, DESIGN_LINEAR_TOL, &r->linear_speed,
                            &r->linear_state, NULL) != EDDY_OK) {
        snprintf(r->linear_note, sizeof r->linear_note, "the drags are not a usable table");
        return;
    }
    switch (r->linear_state) {
    case DESIGN_LINEAR_CROSSED:
        snprintf(r->linear_note, sizeof r->linear_note,
                 "first speed where drag / (damping_coefficient x speed) - 1 reaches 5 %% in "
                 "magnitude, interpolated between the two sweep points around it (log of the "
                 "deviation against log speed)");
        break;
    case DESIGN_LINEAR_NEVER_LEAVES:
        snprintf(r->linear_note, sizeof r->linear_note,
                 "the drag stays within 5 %% of damping_coefficient x speed up to the highest "
                 "speed solved (%.6g m/s): the linear range extends at least that far",
                 sp[m - 1]);
        break;
    case DESIGN_LINEAR_STARTS_ABOVE:
        snprintf(r->linear_note, sizeof r->linear_note,
                 "the drag at the lowest speed solved (%.6g m/s) already differs from "
                 "damping_coefficient x speed by more than 5 %%: add lower speeds",
                 sp[0]);
        break;
    }
}

/* The terminal speed of a load falling under weight (N) along the motion,
 * against the whole brake's force table force[] (N) at the m positive
 * speeds sp[]. */
static void report_terminal(app_report *r, int m, const double *sp, const double *force,
                            double weight)
{
    const mesh_vehicle *h = &r->c->vehicle;
    double net = weight - h->extra_force, total_c = r->damping * h->depth * h->repeat;
    r->has_terminal = 1;
    r->terminal_speed = NAN;
    r->terminal_linear = net > 0 && total_c > 0 ? net / total_c : NAN;
    if (!(net > 0)) {
        snprintf(r->terminal_note, sizeof r->terminal_note,
                 "extra_force (%.6g N) is not less than the weight (%.6g N): a falling load "
                 "does not keep moving, so there is no terminal speed",
                 h->extra_force, weight);
        return;
    }
    design_terminal_state st = DESIGN_TERMINAL_NONE;
    eddy_error e = {0};
    if (m < 2 || design_terminal_speed(m, sp, force, net, DESIGN_INTERP_LOGLOG,
                                       &r->terminal_speed, &st, &e) != EDDY_OK) {
        snprintf(r->terminal_note, sizeof r->terminal_note, "no terminal speed from this sweep: %.400s",
                 m < 2 ? "fewer than two positive speeds" : e.msg);
        return;
    }
    switch (st) {
    case DESIGN_TERMINAL_FOUND:
        snprintf(r->terminal_note, sizeof r->terminal_note,
                 "where drag x depth x repeat + extra_force equals the weight m g (g = 9.80665 "
                 "m/s^2): the lowest crossing on the swept drag curve, monotone cubic in log "
                 "speed and log drag between the two points around it");
        break;
    case DESIGN_TERMINAL_BELOW_SWEEP:
        snprintf(r->terminal_note, sizeof r->terminal_note,
                 "not bracketed: the drag at the lowest speed solved (%.6g m/s) already exceeds "
                 "the weight less extra_force (%.6g N); add lower speeds (the linear law gives "
                 "terminal_speed_linear)", sp[0], net);
        break;
    case DESIGN_TERMINAL_ABOVE_SWEEP:
        snprintf(r->terminal_note, sizeof r->terminal_note,
                 "not bracketed: the drag stays below the weight less extra_force (%.6g N) up "
                 "to the highest speed solved (%.6g m/s) and is still rising; add higher speeds",
                 net, sp[m - 1]);
        break;
    case DESIGN_TERMINAL_NONE:
        snprintf(r->terminal_note, sizeof r->terminal_note,
                 "none: the drag peaks within the sweep below the weight less extra_force "
                 "(%.6g N), so the brake cannot hold the load at any speed and it keeps "
                 "speeding up", net);
        break;
    }
}

eddy_status app_design_evaluate(app_report *r, eddy_error *err)
{
    const mesh_case *c = r->c;
    int n = r->npoint;
    double rc = rho_cp(r);
    /* per point: heating, disc, end effect */
    r->end_factor = NAN;
    if (c->end_effect.present) {
        eddy_status s = design_end_effect_factor(c->end_effect.active_width,
                                               c->end_effect.plate_width,
                                               c->end_effect.pole_pitch, &r->end_factor, err);
        if (s != EDDY_OK)
            return s;
    }
    for (int k = 0; k < n; k++) {
        post_forces *f = &r->f[k];
        f->heating_rate = NAN;
        if (rc > 0 && f->conductor_area > 0)
            f->heating_rate = f->loss / (rc * f->conductor_area);
        f->rpm = f->torque = f->power = NAN;
        if (c->disc.present) {
            double total = f->drag * c->disc.active_length * c->disc.periods; /* N */
            f->rpm = design_disc_rpm(c->disc.mean_radius, f->speed);
            f->torque = design_disc_torque(total, c->disc.mean_radius);
            f->power = design_brake_power(total, fabs(f->speed));
        }
        f->drag_end_corrected = isfinite(r->end_factor) ? f->drag * r->end_factor : NAN;
    }
    /* the positive speeds: the table of the drag peak and of the stop */
    double *sp = malloc((size_t)(n > 0 ? n : 1) * 2 * sizeof *sp);
    if (sp == NULL)
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
    double *dr = sp + n;
    int m = 0;
    for (int k = 0; k < n; k++)
        if (r->f[k].speed > 0) {
            sp[m] = r->f[k].speed;
            dr[m] = r->f[k].drag;
            m++;
        }
    report_peak(r, m, sp, dr);
    report_linear_range(r, m, sp, dr);
    /* the stop of a load */
    r->has_stop = 0;
    r->has_terminal = 0;
    r->stop_temperature_rise = NAN;
    r->stop_note[0] = '\0';
    eddy_status s = EDDY_OK;
    if (c->vehicle.present) {
        const mesh_vehicle *h = &c->vehicle;
        double *force = malloc((size_t)(m > 0 ? m : 1) * sizeof *force);
        if (force == NULL) {
            free(sp);
            return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
        }
        for (int k = 0; k < m; k++)
            force[k] = fmax(dr[k], 0.0) * h->depth * h->repeat;
        double weight = h->gravity ? h->mass * DESIGN_STANDARD_GRAVITY : 0.0;
        if (h->gravity)
            report_terminal(r, m, sp, force, weight);
        if (!h->has_from_speed) {
            snprintf(r->stop_note, sizeof r->stop_note,
                     "no vehicle.from_speed: a falling load is described by its terminal speed");
            free(force);
            free(sp);
            return EDDY_OK;
        }
        design_stop_input in;
        design_stop_defaults(&in);
        in.mass = h->mass;
        in.extra_force = h->extra_force;
        in.driving_force = weight;
        in.from_speed = h->from_speed;
        in.to_speed = h->to_speed;
        in.interp = DESIGN_INTERP_LOGLOG;
        in.n_samples = 201;
        if (r->has_peak) { /* the peak deceleration at result.json's peak */
            in.peak_speed = r->peak_speed;
            in.peak_force = fmax(r->peak_drag, 0.0) * h->depth * h->repeat;
        }
        eddy_error stop_err = {0};
        s = design_stop_compute(m, sp, force, &in, &r->stop, &stop_err);
        if (s == EDDY_ERR_NOT_APPLICABLE) { /* a falling load that never slows to to_speed */
            snprintf(r->stop_note, sizeof r->stop_note, "%.500s", stop_err.msg);
            s = EDDY_OK;
        } else if (s != EDDY_OK && err != NULL) {
            *err = stop_err;
        } else if (s == EDDY_OK) {
            r->has_stop = 1;
            double dt = 0.0;
            if (design_stop_table_change(m, sp, force, &in, &dt, NULL, NULL) != EDDY_OK)
                r->stop_table_change = NAN;
            else
                r->stop_table_change = dt;
            double cp = 0.0;
            for (int k = 0; k < c->nreg; k++)
                if (c->regions[k].moving && c->regions[k].material >= 0)
                    cp = c->materials[c->regions[k].material].specific_heat;
            if (h->conductor_mass > 0 && cp > 0)
                design_stop_temperature_rise(r->stop.brake_energy, h->conductor_mass, cp,
                                           &r->stop_temperature_rise, NULL);
        }
        free(force);
    }
    free(sp);
    return s;
}

double app_design_stop_tolerance(void) { return STOP_TABLE_TOL; }

int app_design_stop_enough_points(double table_change)
{
    return isfinite(table_change) && fabs(table_change) < STOP_TABLE_TOL;
}
