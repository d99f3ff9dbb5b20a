/*
 * app_report.c - result.json and forces.csv, written atomically.
 */
#include "app/app.h"

#include <cJSON.h>
#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

const char *app_safety_notice(void)
{
    return "Engineering estimate for design studies (2D, steady state, per metre of depth). "
           "Brakes and dampers that carry or stop people must be designed "
           "and verified to the applicable local codes and standards by qualified, licensed "
           "engineers. Strong permanent magnets can pinch and crush and harm pacemakers and "
           "other implants; conductors heated by eddy currents can burn.";
}

const char *app_safety_notice_for(mesh_geometry g)
{
    if (g != MESH_AXISYMMETRIC)
        return app_safety_notice();
    return "Engineering estimate for design studies (axisymmetric, steady state, forces of the "
           "whole ring). Dampers and brakes in systems that carry or protect people must be "
           "designed and verified to the applicable local codes and standards by qualified, "
           "licensed engineers. Strong permanent magnets can pinch and crush fingers and disturb "
           "pacemakers and other implants; conductors heated by eddy currents can burn.";
}

const char *app_force_unit(mesh_geometry g) { return g == MESH_AXISYMMETRIC ? "N" : "N/m"; }

const char *app_loss_unit(mesh_geometry g) { return g == MESH_AXISYMMETRIC ? "W" : "W/m"; }

/* Every cJSON allocation of result.json goes through J(): a NULL result (an
 * allocation failure, or an object that a failed allocation left NULL)
 * marks the document failed, and app_write_results then writes nothing
 * and returns EDDY_ERR_NOMEM, never a partial result. */
static _Thread_local int json_failed;

static cJSON *json_checked(cJSON *x)
{
    if (x == NULL)
        json_failed = 1;
    return x;
}
#define J(x) json_checked(x)

/* Append item to array a; on failure free item and mark the document. */
static void json_push(cJSON *a, cJSON *item)
{
    if (a == NULL || item == NULL || !cJSON_AddItemToArray(a, item)) {
        cJSON_Delete(item);
        json_failed = 1;
    }
}

/* Add a number, or null where it is not finite. */
static void add_num(cJSON *o, const char *key, double v)
{
    if (!isfinite(v)) {
        J(cJSON_AddNullToObject(o, key));
        return;
    }
    /* the shortest of 15, 16 or 17 significant digits that reads back as v
     * exactly (cJSON 1.7.15 keeps 15 digits whenever they read back within
     * DBL_EPSILON of the value, one unit of roundoff off) */
    char text[32];
    if (v == 0.0)
        v = 0.0; /* never "-0" */
    for (int digits = 15; digits <= 17; digits++) {
        snprintf(text, sizeof text, "%.*g", digits, v);
        if (strtod(text, NULL) == v)
            break;
    }
    J(cJSON_AddRawToObject(o, key, text));
}

/* result.json "error_estimate" and, with mesh.tolerance, "tolerance". */
static void add_error_estimate(cJSON *root, const app_report *r)
{
    cJSON *e = J(cJSON_AddObjectToObject(root, "error_estimate"));
    if (!r->estimated) {
        J(cJSON_AddStringToObject(e, "method", "none (mesh.error_estimate is false)"));
        return;
    }
    J(cJSON_AddStringToObject(e, "method",
                              "Richardson extrapolation over the grid and its two coarser grids "
                              "(every other line, twice): the observed order p from 1 to 2 and "
                              "|F(h) - F(2h)| / (2^p - 1), or a first-order bound where the three "
                              "are not monotone (README: Error estimate and tolerance)"));
    J(cJSON_AddStringToObject(e, "covers",
                              r->c->geometry == MESH_PLANAR
                                  ? "the discretisation error of the grid, plus the truncation by "
                                    "zero (A = 0) sides: box_truncation_relative (the change of "
                                    "the damping coefficient with those sides open) times each "
                                    "value"
                                  : "the discretisation error of the grid"));
    J(cJSON_AddStringToObject(e, "does_not_cover",
                              r->c->geometry == MESH_PLANAR
                                  ? "the 2D model itself (end effects, finite width) and the "
                                    "material data; the box estimate is a low-speed proxy"
                                  : "the 2D model itself, the material data, and the truncation "
                                    "by the outer zero sides (draw the box large)"));
    J(cJSON_AddNumberToObject(e, "coarse_unknowns", (double)r->coarse_unknowns));
    add_num(e, "box_truncation_relative", r->box_truncation);
    if (r->box_grid != NULL) /* "h", or "2h" where the box is negligible there */
        J(cJSON_AddStringToObject(e, "box_truncation_grid", r->box_grid));
    add_num(e, "seconds", r->t_estimate);
    if (r->c->mesh.tolerance > 0) {
        cJSON *t = J(cJSON_AddObjectToObject(root, "tolerance"));
        add_num(t, "requested", r->c->mesh.tolerance);
        J(cJSON_AddBoolToObject(t, "met", r->tol_met));
        J(cJSON_AddNumberToObject(t, "final_refine", r->tol_refine));
        J(cJSON_AddNumberToObject(t, "fine_grids_solved", r->tol_rounds));
        add_num(t, "drag_estimate_relative", r->est_worst_drag);
        add_num(t, "force_y_estimate_relative", r->est_worst_fy);
        J(cJSON_AddStringToObject(t, "relative_to", "the largest |drag| and |force_y| of the sweep"));
        if (r->tol_note[0] != '\0')
            J(cJSON_AddStringToObject(t, "note", r->tol_note));
    }
}

static void add_mesh(cJSON *root, const app_report *r);

static void add_reference(cJSON *root, const app_report *r)
{
    cJSON *ref = J(cJSON_AddObjectToObject(root, "reference"));
    const char *state = "not evaluated";
    switch (r->ref_state) {
    case APP_REF_NONE: state = "not evaluated"; break;
    case APP_REF_NOT_APPLICABLE: state = "does not fit this case"; break;
    case APP_REF_OK: state = "fits"; break;
    case APP_REF_APPROXIMATE: state = "fits approximately"; break;
    case APP_REF_FAILED: state = "failed"; break;
    }
    J(cJSON_AddBoolToObject(ref, "applicable",
                          r->ref_state == APP_REF_OK || r->ref_state == APP_REF_APPROXIMATE));
    J(cJSON_AddStringToObject(ref, "state", state));
    J(cJSON_AddStringToObject(ref, "note", r->ref_note));
    if (r->ref_state == APP_REF_APPROXIMATE) {
        /* the reference takes the magnets at mu_r = 1: say so with every
         * reference number, and give the offset that brings at low speed,
         * measured on the grid (app_report.ref_mu1_offset) */
        J(cJSON_AddStringToObject(ref, "label", "reference (mu_r = 1 magnets)"));
        add_num(ref, "expected_offset_low_speed", r->ref_mu1_offset);
        J(cJSON_AddStringToObject(ref, "expected_offset_note",
                                  "reference_drag / drag_force - 1 expected at low speed from the "
                                  "magnets' recoil permeability alone: the grid's low-speed drag "
                                  "with the magnets at mu_r = 1 over the real one, minus 1"));
    }
}

/* The damping coefficient, its linear range, and what follows from it for
 * a disc, an end-corrected plate and a vehicle (falling or not). */
static void add_damping(cJSON *root, const app_report *r)
{
    const mesh_case *c = r->c;
    add_num(root, "damping_coefficient", r->damping);
    int rz = c->geometry == MESH_AXISYMMETRIC;
    J(cJSON_AddStringToObject(root, "damping_coefficient_unit",
                              rz ? (c->x_periodic ? "N s/m of the whole ring, per period"
                                                  : "N s/m of the whole ring")
                                 : (c->x_periodic ? "N s/m per m of depth, per period"
                                                  : "N s/m per m of depth")));
    J(cJSON_AddStringToObject(
        root, "damping_coefficient_note",
        rz  ? "low-speed slope dF/dv: sigma times the integral of B_r^2 over the volume of the "
              "moving conductors, static (v = 0) field (first-order induced current J_phi = "
              "sigma v B_r); low_speed_drag = damping_coefficient x speed"
        : r->g != NULL
            ? "low-speed slope dF/dv: sigma times the integral of B_y^2 of the static (v = 0) "
              "field over the moving conductors (first-order induced current J_z = sigma v "
              "B_y); low_speed_drag = damping_coefficient x speed"
            : "low-speed slope dF/dv of the layered reference (its drag at magnetic Reynolds "
              "number 1e-4 over the speed)"));
    add_num(root, "linear_up_to_speed", r->linear_speed);
    J(cJSON_AddStringToObject(root, "linear_up_to_speed_note", r->linear_note));
    if (c->end_effect.present)
        add_num(root, "damping_coefficient_end_corrected", r->damping * r->end_factor);
    if (c->disc.present) {
        /* torque T = drag L N r at v = omega r: dT/domega = c L N r^2 */
        double rr = c->disc.mean_radius;
        double per_omega = r->damping * c->disc.active_length * c->disc.periods * rr * rr;
        cJSON *d = J(cJSON_AddObjectToObject(root, "disc_damping"));
        add_num(d, "torque_per_angular_speed", per_omega);
        J(cJSON_AddStringToObject(d, "torque_per_angular_speed_unit", "N m s/rad"));
        add_num(d, "torque_per_rpm", per_omega * 2.0 * EDDY_PI / 60.0);
        J(cJSON_AddStringToObject(d, "torque_per_rpm_unit", "N m/rpm"));
        add_num(d, "linear_up_to_rpm", isfinite(r->linear_speed)
                                           ? design_disc_rpm(rr, r->linear_speed)
                                           : NAN);
        J(cJSON_AddStringToObject(d, "note",
                                  "the whole disc at low speed, from the same mean-radius model "
                                  "as its torque: damping_coefficient x active_length x periods "
                                  "x mean_radius^2"));
    }
    if (c->vehicle.present) {
        const mesh_vehicle *h = &c->vehicle;
        cJSON *v = J(cJSON_AddObjectToObject(root, "vehicle"));
        add_num(v, "damping_coefficient", r->damping * h->depth * h->repeat);
        J(cJSON_AddStringToObject(v, "damping_coefficient_unit", "N s/m"));
        J(cJSON_AddBoolToObject(v, "gravity", h->gravity));
        if (h->gravity) {
            add_num(v, "standard_gravity", DESIGN_STANDARD_GRAVITY);
            add_num(v, "weight", h->mass * DESIGN_STANDARD_GRAVITY);
            add_num(v, "terminal_speed_linear", r->terminal_linear);
            J(cJSON_AddStringToObject(v, "terminal_speed_linear_note",
                                      "(m g - extra_force) / vehicle damping_coefficient: the "
                                      "linear law's terminal speed, to be trusted below "
                                      "linear_up_to_speed"));
        }
        J(cJSON_AddStringToObject(v, "note",
                                  rz ? "vehicle damping_coefficient = damping_coefficient x "
                                       "repeat, every damper together"
                                     : "vehicle damping_coefficient = damping_coefficient x depth x "
                                       "repeat, the whole brake"));
    }
    if (r->has_terminal) {
        add_num(root, "terminal_speed", r->terminal_speed);
        J(cJSON_AddStringToObject(root, "terminal_speed_note", r->terminal_note));
    }
}

/* Brake-design answers: peak, stop, end effect, temperature, disc. */
static void add_design(cJSON *root, const app_report *r)
{
    const mesh_case *c = r->c;
    add_damping(root, r);
    if (r->has_peak) {
        cJSON *pk = J(cJSON_AddObjectToObject(root, "peak"));
        add_num(pk, "drag_force", r->peak_drag);
        add_num(pk, "speed", r->peak_speed);
        J(cJSON_AddBoolToObject(pk, "interpolated", r->peak_refined));
        J(cJSON_AddStringToObject(
            pk, "note",
            r->peak_at_end ? "the largest drag is at an end of the speed range: the true peak "
                             "may lie outside it"
                           : "parabola in log speed through the largest drag and its neighbours"));
    }
    if (c->speed_mode == MESH_SPEEDS_AUTO) {
        cJSON *ad = J(cJSON_AddObjectToObject(root, "adaptive_speeds"));
        J(cJSON_AddNumberToObject(ad, "points", r->npoint));
        J(cJSON_AddNumberToObject(ad, "rounds", r->adapt_rounds));
        J(cJSON_AddStringToObject(ad, "rule", "points added where a monotone cubic through the "
                                            "neighbours misses by more than 0.5 % (0.1 % at the "
                                            "peak)"));
    }
    if (c->has_temperature) {
        cJSON *t = J(cJSON_AddObjectToObject(root, "temperature"));
        add_num(t, "celsius", c->temperature);
        cJSON *m = J(cJSON_AddArrayToObject(t, "conductivities"));
        for (int k = 0; k < c->nmat; k++) {
            if (c->materials[k].sigma_20 <= 0)
                continue;
            cJSON *e = J(cJSON_CreateObject());
            J(cJSON_AddStringToObject(e, "material", c->materials[k].name));
            add_num(e, "sigma_20", c->materials[k].sigma_20);
            add_num(e, "sigma", c->materials[k].sigma);
            add_num(e, "alpha", c->materials[k].alpha);
            json_push(m, e);
        }
    }
    if (c->end_effect.present) {
        cJSON *e = J(cJSON_AddObjectToObject(root, "end_effect"));
        add_num(e, "factor", r->end_factor);
        add_num(e, "plate_width", c->end_effect.plate_width);
        add_num(e, "active_width", c->end_effect.active_width);
        add_num(e, "pole_pitch", c->end_effect.pole_pitch);
        J(cJSON_AddStringToObject(e, "assumptions",
                                "Russell-Norsworthy factor (Proc. IEE 105A, 1958) for a plate of "
                                "finite width: low magnetic Reynolds number, thin plate centred "
                                "under the magnets, fundamental harmonic; it multiplies the "
                                "conductivity, i.e. the low-speed drag"));
    }
    if (c->disc.present) {
        cJSON *d = J(cJSON_AddObjectToObject(root, "disc"));
        add_num(d, "mean_radius", c->disc.mean_radius);
        add_num(d, "active_length", c->disc.active_length);
        add_num(d, "periods", c->disc.periods);
        J(cJSON_AddStringToObject(d, "note", "torque and power are of the whole disc: drag x "
                                           "active_length x periods at the mean radius"));
    }
    if (r->has_stop) {
        const design_stop_result *st = &r->stop;
        cJSON *s = J(cJSON_AddObjectToObject(root, "stopping"));
        add_num(s, "distance", st->distance);
        add_num(s, "time", st->time);
        add_num(s, "peak_deceleration", st->peak_decel);
        add_num(s, "peak_deceleration_g", st->peak_decel_g);
        add_num(s, "speed_at_peak_deceleration", st->speed_at_peak);
        add_num(s, "kinetic_energy", st->kinetic_energy);
        add_num(s, "energy_in_conductor", st->brake_energy);
        add_num(s, "extra_force_work", st->extra_work);
        if (c->vehicle.gravity)
            add_num(s, "gravity_work", st->driving_work);
        add_num(s, "conductor_temperature_rise", r->stop_temperature_rise);
        add_num(s, "distance_change_on_half_the_points", r->stop_table_change);
        J(cJSON_AddBoolToObject(s, "enough_points",
                              app_design_stop_enough_points(r->stop_table_change)));
        J(cJSON_AddStringToObject(
            s, "note",
            c->geometry == MESH_AXISYMMETRIC && c->vehicle.gravity
                ? "m dv/dt = m g - (drag x repeat + extra_force) (the load falls along the "
                  "motion), drag of the whole ring interpolated by a monotone cubic (Fritsch and "
                  "Carlson 1980) in log speed and log drag, linear below the lowest speed; energy "
                  "in the conductor + extra_force_work = kinetic_energy + gravity_work. A falling "
                  "load only slows towards its terminal speed. Engineering estimate; dampers in "
                  "systems that carry or protect people must be designed and verified to the "
                  "applicable codes by qualified engineers."
            : c->geometry == MESH_AXISYMMETRIC
                ? "m dv/dt = -(drag x repeat + extra_force), drag of the whole ring interpolated "
                  "by a monotone cubic (Fritsch and Carlson 1980) in log speed and log drag, "
                  "linear below the lowest speed. An eddy-current damper alone never brings a "
                  "load to rest: its drag falls to zero with speed. Engineering estimate; dampers "
                  "in systems that carry or protect people must be designed and verified to the "
                  "applicable codes by qualified engineers."
            : c->vehicle.gravity
                ? "m dv/dt = m g - (drag x depth x repeat + extra_force) (the load falls along "
                  "the motion), drag interpolated by a monotone cubic (Fritsch and Carlson 1980) "
                  "in log speed and log drag, linear below the lowest speed; energy in the "
                  "conductor + extra_force_work = kinetic_energy + gravity_work. A falling load "
                  "only slows towards its terminal speed. Engineering estimate; brakes that "
                  "carry or stop people must be designed and verified to the applicable codes "
                  "by qualified engineers."
                : "m dv/dt = -(drag x depth x repeat + extra_force), drag interpolated by a "
                  "monotone cubic (Fritsch and Carlson 1980) in log speed and log drag, linear "
                  "below the lowest speed. An eddy-current brake alone never brings a load to "
                  "rest: its drag falls to zero with speed. Engineering estimate; brakes that "
                  "carry or stop people must be designed and verified to the applicable codes "
                  "by qualified engineers."));
    } else if (c->vehicle.present) {
        J(cJSON_AddNullToObject(root, "stopping"));
        J(cJSON_AddStringToObject(root, "stopping_note", r->stop_note));
    }
}

static cJSON *build_json(const app_report *r)
{
    const mesh_case *c = r->c;
    const mesh_grid *g = r->g;
    cJSON *root = J(cJSON_CreateObject());
    if (root == NULL)
        return NULL;
    J(cJSON_AddStringToObject(root, "name", c->name));
    J(cJSON_AddStringToObject(root, "description", c->description));
    J(cJSON_AddStringToObject(root, "case_file", c->path));
    J(cJSON_AddStringToObject(root, "tool", "eddy2d " EDDY_VERSION));
    int rz = c->geometry == MESH_AXISYMMETRIC;
    J(cJSON_AddStringToObject(root, "geometry", rz ? "axisymmetric" : "planar"));
    cJSON *units = J(cJSON_AddObjectToObject(root, "units"));
    J(cJSON_AddStringToObject(units, "speed", "m/s"));
    if (rz) {
        J(cJSON_AddStringToObject(units, "force", "N (the whole ring; force_x is along the "
                                                  "axis z, force_y the net radial force, zero "
                                                  "for a ring)"));
        J(cJSON_AddStringToObject(units, "loss", "W (the whole ring)"));
    } else {
        J(cJSON_AddStringToObject(units, "force", "N/m (per metre of depth; per period for a periodic domain)"));
        J(cJSON_AddStringToObject(units, "loss", "W/m"));
    }
    J(cJSON_AddStringToObject(units, "current_density", "A/m^2"));
    J(cJSON_AddStringToObject(units, "drag_per_speed",
                              rz ? "N s/m (N per m/s, the whole ring)" : "N s/m^2 (N/m per m/s)"));
    J(cJSON_AddStringToObject(root, "method", r->method != NULL ? r->method : ""));
    if (g != NULL) {
        add_mesh(root, r);
        add_error_estimate(root, r);
    }
    add_reference(root, r);
    cJSON *pts = J(cJSON_AddArrayToObject(root, "points"));
    for (int k = 0; k < r->npoint; k++) {
        const post_forces *f = &r->f[k];
        const app_point_info *in = &r->info[k];
        cJSON *p = J(cJSON_CreateObject());
        json_push(pts, p);
        if (json_failed)
            break;
        add_num(p, "speed", f->speed);
        add_num(p, "drag_force", f->drag);
        add_num(p, "force_x", f->force_x);
        add_num(p, "force_y", f->force_y);
        if (f->force_method != NULL)
            J(cJSON_AddStringToObject(p, "force_method", f->force_method));
        if (g != NULL) {
            add_num(p, "force_x_lorentz", f->lorentz_x);
            add_num(p, "force_y_lorentz", f->lorentz_y);
        }
        add_num(p, "drag_force_stress", f->drag_stress);
        add_num(p, "force_y_stress", f->nodal_ok ? f->nodal_y : f->stress_y);
        add_num(p, "loss", f->loss);
        if (g != NULL) {
            add_num(p, "drag_force_error", f->drag_error);
            add_num(p, "force_y_error", f->force_y_error);
            add_num(p, "loss_error", f->loss_error);
            if (isfinite(f->force_y_error)) /* a normal force smaller than its estimated
                                              * error is below what the grid resolves */
                J(cJSON_AddBoolToObject(p, "force_y_resolved",
                                        fabs(f->force_y) > f->force_y_error));
        }
        add_num(p, "low_speed_drag", f->low_speed_drag);
        add_num(p, "drag_per_speed", f->drag_per_speed);
        add_num(p, "magnetic_reynolds", f->magnetic_reynolds);
        if (g != NULL)
            add_num(p, "magnetic_reynolds_wavelength", f->magnetic_reynolds_wave);
        add_num(p, "peak_current_density", f->j_peak);
        if (g != NULL) {
            add_num(p, "loss_density_peak", f->loss_density_peak);
            add_num(p, "loss_density_mean", f->loss_density_mean);
            add_num(p, "heating_rate", f->heating_rate);
        }
        if (c->disc.present) {
            add_num(p, "rpm", f->rpm);
            add_num(p, "torque", f->torque);
            add_num(p, "power", f->power);
        }
        if (c->end_effect.present)
            add_num(p, "drag_force_end_corrected", f->drag_end_corrected);
        if (r->ref_drag != NULL && g != NULL) {
            add_num(p, "reference_drag", r->ref_drag[k]);
            add_num(p, "reference_force_y", r->ref_force_y[k]);
        }
        add_num(p, "solve_seconds", in->t_assemble + in->t_factor + in->t_solve + in->t_post);
        if (g == NULL)
            continue;
        cJSON *si = J(cJSON_AddObjectToObject(p, "solver_info"));
        add_num(si, "assemble_seconds", in->t_assemble);
        add_num(si, "factor_seconds", in->t_factor);
        add_num(si, "solve_seconds", in->t_solve);
        add_num(si, "post_seconds", in->t_post);
        add_num(si, "lu_entries", in->lnz + in->unz);
        add_num(si, "flops", in->flops);
        if (in->newton.n_residual > 0) { /* saturable materials */
            cJSON *nw = J(cJSON_AddObjectToObject(si, "newton"));
            J(cJSON_AddNumberToObject(nw, "iterations", in->newton.iterations));
            J(cJSON_AddBoolToObject(nw, "converged", in->newton.converged));
            cJSON *h = J(cJSON_AddArrayToObject(nw, "residual_history"));
            for (int q = 0; q < in->newton.n_residual; q++)
                json_push(h, J(cJSON_CreateNumber(in->newton.residual[q])));
            cJSON *d = J(cJSON_AddArrayToObject(nw, "damping"));
            for (int q = 0; q < in->newton.iterations; q++)
                json_push(d, J(cJSON_CreateNumber(in->newton.damping[q])));
            add_num(nw, "max_flux_density_saturable", in->newton.b_max);
        }
    }
    add_design(root, r);
    if (r->pass != NULL && r->pass_case != NULL) {
        cJSON *ps = J(app_pass_json(r->pass_case, r->pass));
        if (ps != NULL)
            cJSON_AddItemToObject(root, "pass", ps);
    }
    cJSON *w = J(cJSON_AddArrayToObject(root, "warnings"));
    for (int k = 0; k < c->nwarn; k++) {
        json_push(w, J(cJSON_CreateString(c->warnings[k])));
    }
    J(cJSON_AddStringToObject(root, "notice", app_safety_notice_for(c->geometry)));
    return root;
}

/* Which magnetic Reynolds number the drag peak follows: the thickness one
 * for a thin plate (k t < 1; the thin-sheet law puts the peak at
 * mu0 sigma t v = 2, Reitz 1970), the wavelength one for a thick plate
 * (k t > 1; the peak near mu0 sigma v / k of order 1, from the layered
 * solution's gamma = sqrt(k^2 + i k mu0 sigma v)). */
static void add_reynolds_rule(cJSON *root, const app_report *r)
{
    const mesh_grid *g = r->g;
    double t = g->jm1 > g->jm0 ? g->y[g->jm1] - g->y[g->jm0] : 0.0;
    double kt = g->k_dominant * t;
    cJSON *m = J(cJSON_AddObjectToObject(root, "magnetic_reynolds_rule"));
    add_num(m, "wavenumber_times_thickness", kt);
    J(cJSON_AddStringToObject(
        m, "peak_follows",
        kt < 1.0 ? "magnetic_reynolds (thickness): a thin plate, k t < 1; the thin-sheet drag "
                   "peaks at mu0 sigma t v = 2"
                 : "magnetic_reynolds_wavelength (mu0 sigma v / k): a thick plate, k t > 1; the "
                   "drag peaks where it is of order 1"));
}

static void add_mesh(cJSON *root, const app_report *r)
{
    const mesh_grid *g = r->g;
    add_reynolds_rule(root, r);
    cJSON *mesh = J(cJSON_AddObjectToObject(root, "mesh"));
    J(cJSON_AddNumberToObject(mesh, "nodes_x", g->nx));
    J(cJSON_AddNumberToObject(mesh, "nodes_y", g->ny));
    J(cJSON_AddNumberToObject(mesh, "unknowns", (double)r->unknowns));
    double hmin_x = INFINITY, hmin_y = INFINITY;
    for (int i = 0; i + 1 < g->nx; i++)
        hmin_x = fmin(hmin_x, g->x[i + 1] - g->x[i]);
    for (int j = 0; j + 1 < g->ny; j++)
        hmin_y = fmin(hmin_y, g->y[j + 1] - g->y[j]);
    add_num(mesh, "min_cell_x", hmin_x);
    add_num(mesh, "min_cell_y", hmin_y);
    add_num(mesh, "skin_cell_size", g->h_skin);
    add_num(mesh, "dominant_wavenumber", g->k_dominant);
    J(cJSON_AddStringToObject(mesh, g->geometry == MESH_AXISYMMETRIC ? "z_boundary" : "x_boundary",
                              g->x_periodic ? "periodic" : (g->ex != NULL ? "open" : "zero")));
    if (g->ex != NULL || g->ey != NULL) {
        J(cJSON_AddStringToObject(mesh, "y_boundary", g->ey != NULL ? "open" : "zero"));
        add_num(mesh, "mapped_cells_per_open_side",
                g->ex != NULL ? (double)g->ix0 : (double)g->iy0);
    }
    cJSON *solver = J(cJSON_AddObjectToObject(root, "solver"));
    J(cJSON_AddStringToObject(solver, "scheme",
                            "box integration, exponentially fitted convection (Scharfetter-Gummel)"));
    J(cJSON_AddStringToObject(solver, "linear_solver", "UMFPACK (symbolic once, numeric per speed)"));
    J(cJSON_AddStringToObject(solver, "static_solver",
                              r->static_cholesky
                                  ? "CHOLMOD supernodal Cholesky (symbolic once, grid-nd ordering)"
                                  : "UMFPACK (as the speeds)"));
    add_num(solver, "mesh_seconds", r->t_mesh);
    add_num(solver, "analyse_seconds", r->t_analyse);
    J(cJSON_AddStringToObject(solver, "ordering", r->ordering != NULL ? r->ordering : ""));
    J(cJSON_AddNumberToObject(solver, "speed_workers", r->threads));
    J(cJSON_AddStringToObject(solver, "blas", r->blas));
    J(cJSON_AddNumberToObject(solver, "blas_threads", r->blas_threads));
    /* one-speed cases: the estimate (and the static field) on a second thread */
    J(cJSON_AddBoolToObject(solver, "estimate_beside_speed", r->overlapped == 1));
    add_num(solver, "factor_memory_estimate_bytes", r->factor_bytes);
}


/* A CSV number: %.10g, NaN and infinities as empty fields, -0 as 0. */
static void csv_num(eddy_text *b, double v)
{
    if (isfinite(v))
        eddy_text_printf(b, ",%.10g", v == 0.0 ? 0.0 : v);
    else
        eddy_text_str(b, ",");
}

/* forces.csv: the columns every case has, then what the case asked for: a
 * disc's rpm, torque and power, the end-corrected drag, the reference; then
 * drag / speed and the deviation from the linear law c v. */
static eddy_status write_csv(const char *dir, const app_report *r, eddy_error *err)
{
    const mesh_case *c = r->c;
    int disc = c->disc.present, end = c->end_effect.present;
    int ref = r->ref_drag != NULL && r->g != NULL;
    eddy_text b = {0};
    if (c->geometry == MESH_AXISYMMETRIC) /* forces and loss of the whole ring */
        eddy_text_str(&b, "speed_m_per_s,drag_force_N,force_z_N,force_r_N,"
                          "drag_force_stress_N,loss_W,low_speed_drag_N,magnetic_reynolds");
    else
        eddy_text_str(&b, "speed_m_per_s,drag_force_N_per_m,force_x_N_per_m,force_y_N_per_m,"
                          "drag_force_stress_N_per_m,loss_W_per_m,low_speed_drag_N_per_m,"
                          "magnetic_reynolds");
    if (disc)
        eddy_text_str(&b, ",rpm,torque_N_m,power_W");
    if (end)
        eddy_text_str(&b, ",drag_force_end_corrected_N_per_m");
    if (ref)
        eddy_text_str(&b, ",reference_drag_N_per_m,reference_force_y_N_per_m");
    /* last, so that the columns before keep their places */
    eddy_text_str(&b, c->geometry == MESH_AXISYMMETRIC
                          ? ",drag_per_speed_N_s_per_m,deviation_from_linear"
                          : ",drag_per_speed_N_s_per_m2,deviation_from_linear");
    eddy_text_str(&b, c->geometry == MESH_AXISYMMETRIC
                          ? ",drag_force_error_N,force_y_error_N,loss_error_W\n"
                          : ",drag_force_error_N_per_m,force_y_error_N_per_m,loss_error_W_per_m\n");
    for (int k = 0; k < r->npoint; k++) {
        const post_forces *f = &r->f[k];
        eddy_text_printf(&b, "%.10g", f->speed == 0.0 ? 0.0 : f->speed);
        csv_num(&b, f->drag);
        csv_num(&b, f->force_x);
        csv_num(&b, f->force_y);
        csv_num(&b, f->drag_stress);
        csv_num(&b, f->loss);
        csv_num(&b, f->low_speed_drag);
        eddy_text_printf(&b, ",%.6g", f->magnetic_reynolds);
        if (disc) {
            csv_num(&b, f->rpm);
            csv_num(&b, f->torque);
            csv_num(&b, f->power);
        }
        if (end)
            csv_num(&b, f->drag_end_corrected);
        if (ref) {
            csv_num(&b, r->ref_drag[k]);
            csv_num(&b, r->ref_force_y[k]);
        }
        csv_num(&b, f->drag_per_speed);
        csv_num(&b, f->low_speed_drag > 0 ? f->drag / f->low_speed_drag - 1.0 : NAN);
        csv_num(&b, f->drag_error);
        csv_num(&b, f->force_y_error);
        csv_num(&b, f->loss_error);
        eddy_text_str(&b, "\n");
    }
    if (b.oom) {
        free(b.p);
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory writing forces.csv");
    }
    char path[4096];
    snprintf(path, sizeof path, "%s/forces.csv", dir);
    eddy_status s = eddy_write_atomic(path, b.p, b.len, err);
    free(b.p);
    return s;
}

eddy_status app_write_results(const char *dir, const app_report *r, eddy_error *err)
{
    json_failed = 0;
    cJSON *root = build_json(r);
    char *text = root != NULL && !json_failed ? cJSON_Print(root) : NULL;
    cJSON_Delete(root);
    if (text == NULL)
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory writing result.json");
    char path[4096];
    snprintf(path, sizeof path, "%s/result.json", dir);
    size_t len = strlen(text);
    text[len] = '\0';
    eddy_status s = eddy_write_atomic(path, text, len, err);
    cJSON_free(text);
    if (s != EDDY_OK)
        return s;
    return write_csv(dir, r, err);
}
