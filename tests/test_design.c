/*
 * test_design.c - from forces to a brake design, end to end through the case
 * file: the adaptive sweep finds the drag peak of the thin-sheet law, a
 * vehicle's stop matches the integral of the closed-form force, the drag at
 * the low-speed limit follows sigma(T), and the disc and end-effect outputs.
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "tests/check.h"
#include "tests/pipeline.h"

#define PI 3.14159265358979323846
#define MU0 EDDY_MU0

#define TOL_PEAK_SPEED 0.01  /* issue 7: the peak lands within 1 % of v = w */
#define TOL_STOP 0.02        /* grid drag accuracy on this case (about 1 %, see test_validation) */
#define TOL_TEMPERATURE 1e-9 /* linear in sigma at the low-speed limit */

static char dir[256];

static app_report *solve_text(const char *name, const char *json, eddy_status *s,
                               eddy_error *err)
{
    return pipe_solve_text(dir, name, json, NULL, s, err);
}

/* Thin sheet under a line current (Reitz 1970, 2D): drag F0 v w/(v^2+w^2),
 * peak F0/2 at v = w, w = 2/(mu0 sigma d).  Stopping a mass m from v0 to
 * v1 with that force: x = integral m v dv / F = (m / (F0 w)) [ (v^2 + w^2)
 * integrated ] = (m / (F0 w)) ((v0^2 - v1^2)/2 * ... ); done below by
 * direct numerical integration of the closed form (composite Simpson). */
static const double I_LINE = 2000.0, H = 0.010, D = 0.0001, SIGMA = 35.4e6;

static double thin_drag(double v)
{
    double w = 2.0 / (MU0 * SIGMA * D), f0 = MU0 * I_LINE * I_LINE / (4.0 * PI * H);
    return f0 * v * w / (v * v + w * w);
}

static void test_adaptive_peak_and_stop(void)
{
    double w = 2.0 / (MU0 * SIGMA * D);
    double mass = 50.0, depth = 0.1, v0 = 2.0 * w, v1 = 0.1 * w;
    char json[2048];
    snprintf(json, sizeof json,
             "{\"name\":\"thin_auto\",\"length_unit\":\"mm\","
             "\"domain\":{\"x\":[-20000,20000],\"y\":[-20000,20000]},"
             "\"materials\":{\"sheet\":{\"conductivity\":%.17g}},"
             "\"regions\":[{\"material\":\"sheet\",\"box\":[-20000,-0.1,20000,0],"
             "\"moving\":true},{\"box\":[-0.5,9.5,0.5,10.5],\"current\":%.17g}],"
             "\"speeds\":{\"from\":%.10g,\"to\":%.10g,\"auto\":true,\"points\":7},"
             "\"vehicle\":{\"mass\":%g,\"depth\":%g,\"from_speed\":%.10g,\"to_speed\":%.10g},"
             "\"mesh\":{\"growth\":1.1}}",
             SIGMA, I_LINE, 0.05 * w, 5.0 * w, mass, depth / 1e-3, v0, v1);
    eddy_error err = {0};
    eddy_status s;
    app_report *r = solve_text("thin_auto", json, &s, &err);
    check(s == EDDY_OK, "adaptive sweep with a vehicle solves", "%s", err.msg);
    if (s == EDDY_OK) {
        /* the pictures are numbered in speed order, though the adaptive sweep
         * solved the added speeds last */
        int in_order = r->npoint > 7;
        for (int k = 0; in_order && k < r->npoint; k++) {
            char path[600];
            snprintf(path, sizeof path, "%s/thin_auto/jz_%02d_%.6gmps.png", dir, k, r->f[k].speed);
            in_order = access(path, F_OK) == 0 && (k == 0 || r->f[k].speed > r->f[k - 1].speed);
        }
        check(in_order, "adaptive sweep: picture k is the k-th speed in increasing order",
              "%d points", r->npoint);
    }
    if (s != EDDY_OK) {
        app_report_free(r);
        return;
    }
    check(r->npoint > 7 && r->adapt_rounds >= 1, "the adaptive sweep added speeds",
          "%d points after %d rounds (from 7)", r->npoint, r->adapt_rounds);
    check(r->has_peak && fabs(r->peak_speed / w - 1.0) <= TOL_PEAK_SPEED,
          "adaptive sweep: the drag peak lands at v = w (Reitz 1970)",
          "peak at %.5g w, %.6g N/m (closed form F0/2 = %.6g N/m)", r->peak_speed / w,
          r->peak_drag, thin_drag(w));
    /* the stop against direct integration of the closed-form force */
    double x = 0.0, t = 0.0;
    int nsteps = 20000;
    double hv = (v0 - v1) / nsteps;
    for (int k = 0; k <= nsteps; k++) {
        double v = v1 + k * hv, wgt = (k == 0 || k == nsteps) ? 1 : (k % 2 ? 4 : 2);
        double fz = thin_drag(v) * depth;
        x += wgt * mass * v / fz;
        t += wgt * mass / fz;
    }
    x *= hv / 3.0;
    t *= hv / 3.0;
    /* one peak: the stop's peak deceleration is at the reported drag peak
     * (inside the stop's speeds here), with its force, not at the largest
     * sample; the closed form puts it at F0/2 at v = w */
    double f0 = MU0 * I_LINE * I_LINE / (4.0 * PI * H);
    check(r->has_stop && r->has_peak && r->stop.speed_at_peak == r->peak_speed &&
              fabs(r->stop.peak_decel - r->peak_drag * depth / mass) <= 1e-12 * r->stop.peak_decel &&
              fabs(r->stop.peak_decel * mass / depth - 0.5 * f0) <= TOL_STOP * 0.5 * f0,
          "stop: peak deceleration at the reported peak (F0/2 depth / m at v = w)",
          "%.6g m/s^2 at %.5g w; peak drag %.6g N/m at %.5g w; closed form %.6g m/s^2",
          r->has_stop ? r->stop.peak_decel : NAN, r->has_stop ? r->stop.speed_at_peak / w : NAN,
          r->peak_drag, r->peak_speed / w, 0.5 * f0 * depth / mass);
    check(r->has_stop && fabs(r->stop.distance - x) <= TOL_STOP * x,
          "stopping distance vs the integral of the closed-form thin-sheet force",
          "%.6g m vs %.6g m", r->has_stop ? r->stop.distance : NAN, x);
    check(r->has_stop && fabs(r->stop.time - t) <= TOL_STOP * t,
          "stopping time vs the integral of the closed-form thin-sheet force",
          "%.6g s vs %.6g s", r->has_stop ? r->stop.time : NAN, t);
    check(r->has_stop && fabs(r->stop.brake_energy + r->stop.extra_work -
                              r->stop.kinetic_energy) <= 1e-6 * r->stop.kinetic_energy,
          "the stop's energy balance: conductor energy + extra work = kinetic energy",
          "%.6g + %.6g vs %.6g J", r->stop.brake_energy, r->stop.extra_work,
          r->stop.kinetic_energy);
    char path[400];
    struct stat st;
    snprintf(path, sizeof path, "%s/thin_auto/stopping.csv", dir);
    int csv = stat(path, &st) == 0 && st.st_size > 1000;
    snprintf(path, sizeof path, "%s/thin_auto/stopping.png", dir);
    check(csv && stat(path, &st) == 0, "stopping.csv and stopping.png written", "%s", path);
    app_report_free(r);
}

/* sigma(T) = sigma_20 / (1 + alpha (T - 20)) (IEC 60028 form, alpha of
 * annealed copper 0.00393 /K): the drag at the low-speed limit is linear in
 * sigma, so its ratio between 80 C and 20 C is 1 / (1 + 0.00393 x 60). */
static void test_temperature(void)
{
    const char *fmt =
        "{\"name\":\"temp\",\"length_unit\":\"mm\","
        "\"domain\":{\"x\":[0,50],\"y\":[-100,100],\"x_boundary\":\"periodic\"},"
        "\"regions\":[{\"material\":\"copper_annealed\",\"box\":[0,-6,50,0],\"moving\":true},"
        "{\"material\":\"ndfeb_35\",\"box\":[2,3,23,13],\"magnetization_angle\":90},"
        "{\"material\":\"ndfeb_35\",\"box\":[27,3,48,13],\"magnetization_angle\":-90}],"
        "\"speeds\":[0.01, 1],\"temperature\":%g,"
        "\"end_effect\":{\"plate_width\":80,\"active_width\":50},"
        "\"disc\":{\"mean_radius\":200,\"active_length\":40}}";
    char j20[1024], j80[1024];
    snprintf(j20, sizeof j20, fmt, 20.0);
    snprintf(j80, sizeof j80, fmt, 80.0);
    eddy_error err = {0};
    eddy_status s1, s2;
    app_report *a = solve_text("t20", j20, &s1, &err), *b = solve_text("t80", j80, &s2, &err);
    if (s1 != EDDY_OK || s2 != EDDY_OK) {
        check(0, "temperature cases solve", "%s", err.msg);
        app_report_free(a);
        app_report_free(b);
        return;
    }
    double want = 1.0 / (1.0 + 0.00393 * 60.0);
    check_close("low-speed drag at 80 C / at 20 C = sigma(80)/sigma(20) (IEC 60028 alpha)",
                b->f[0].low_speed_drag / a->f[0].low_speed_drag, want, TOL_TEMPERATURE, 0);
    check(a->f[0].drag > 0 && fabs(b->f[0].drag / a->f[0].drag - want) < 1e-3,
          "drag at Rm ~ 1e-5 follows sigma(T) too", "ratio %.6f, want %.6f",
          b->f[0].drag / a->f[0].drag, want);
    /* disc: v = omega r; torque = F r; power = F v (definitions) */
    const post_forces *f = &a->f[1];
    double total = f->drag * 0.040 * a->c->disc.periods;
    check(fabs(f->rpm - 60.0 * 1.0 / (2 * PI * 0.2)) < 1e-9 && fabs(f->torque - total * 0.2) <
                                                                  1e-9 * fabs(total) &&
              fabs(f->power - total * 1.0) < 1e-9 * fabs(total) &&
              fabs(a->c->disc.periods - 2 * PI * 0.2 / 0.05) < 1e-9,
          "disc: rpm, torque and power at the mean radius", "rpm %.4f, torque %.4g N m, "
          "power %.4g W, %.4f periods", f->rpm, f->torque, f->power, a->c->disc.periods);
    check(isfinite(a->end_factor) && a->end_factor > 0 && a->end_factor < 1 &&
              fabs(f->drag_end_corrected - f->drag * a->end_factor) < 1e-12 * f->drag,
          "end effect: factor in (0, 1) applied to the drag", "factor %.4f", a->end_factor);
    /* forces.csv carries what the case asked for: the disc's rpm, torque and
     * power and the end-corrected drag, equal to the report's numbers (to
     * the CSV's 10 significant digits) */
    {
        char path[600], text[8192];
        snprintf(path, sizeof path, "%s/t20/forces.csv", dir);
        pipe_read_text(path, text, sizeof text);
        const char *row = strchr(text, '\n');
        row = row != NULL ? strchr(row + 1, '\n') : NULL; /* the second point */
        double v[12] = {0};
        int nv = row != NULL ? sscanf(row + 1, "%lf,%lf,%lf,%lf,%lf,%lf,%lf,%lf,%lf,%lf,%lf,%lf",
                                      &v[0], &v[1], &v[2], &v[3], &v[4], &v[5], &v[6], &v[7],
                                      &v[8], &v[9], &v[10], &v[11])
                                : 0;
        check(strstr(text, ",magnetic_reynolds,rpm,torque_N_m,power_W,"
                           "drag_force_end_corrected_N_per_m,drag_per_speed_N_s_per_m2,"
                           "deviation_from_linear,drag_force_error_N_per_m,"
                           "force_y_error_N_per_m,loss_error_W_per_m\n") != NULL &&
                  nv == 12 && fabs(v[8] - f->rpm) <= 1e-9 * f->rpm &&
                  fabs(v[9] - f->torque) <= 1e-9 * f->torque &&
                  fabs(v[10] - f->power) <= 1e-9 * f->power &&
                  fabs(v[11] - f->drag_end_corrected) <= 1e-9 * f->drag_end_corrected,
              "forces.csv: rpm, torque, power and end-corrected drag columns of the disc case",
              "%d values read", nv);
    }
    check(isfinite(f->heating_rate) && f->heating_rate > 0 &&
              fabs(f->heating_rate - f->loss / (8890.0 * 385.0 * f->conductor_area)) <
                  1e-9 * f->heating_rate,
          "adiabatic heating rate = loss / (rho c_p A)", "%.4g K/s", f->heating_rate);
    app_report_free(a);
    app_report_free(b);
}

/* stopping.enough_points: the distance must move by less than 0.5 % either
 * way when the speed table is halved (the tolerance is this project's rule;
 * a distance that falls by 2.3 % is as unresolved as one that rises). */
static void test_enough_points_rule(void)
{
    double tol = app_design_stop_tolerance();
    check(app_design_stop_enough_points(0.1 * tol) && app_design_stop_enough_points(-0.1 * tol),
          "enough_points: a change of +-0.1 x tolerance is enough", "tol %g", tol);
    check(!app_design_stop_enough_points(-0.023) && !app_design_stop_enough_points(0.023),
          "enough_points: a change of -2.3 % or +2.3 % is not enough", "tol %g", tol);
    check(!app_design_stop_enough_points(NAN), "enough_points: an unknown change is not enough",
          "NaN");
}

/* The layered reference takes magnets at mu_r = 1; with NdFeB's recoil
 * permeability 1.05 the reference drag sits several per cent above the grid.
 * The run labels it and measures the expected offset on the grid itself
 * (magnets at mu_r = 1): the reference, an independent solution, must then
 * agree with that expectation to the grid's own accuracy at low speed (1 %:
 * the isolated-magnet drag error of the default grid is 0.46 %, README). */
static void test_reference_mu_offset(void)
{
    const char *json =
        "{\"name\":\"murec\",\"length_unit\":\"mm\","
        "\"domain\":{\"x\":[-400,400],\"y\":[-300,300]},"
        "\"regions\":[{\"material\":\"aluminium_6061_t6\",\"box\":[-400,-5,400,0],"
        "\"moving\":true},{\"material\":\"ndfeb_35\",\"box\":[-10,2,10,12],"
        "\"magnetization_angle\":90}],\"speeds\":[0.01]}";
    app_run_opts o;
    app_run_opts_defaults(&o);
    o.images = 0;
    eddy_error err = {0};
    eddy_status s;
    app_report *r = pipe_solve_text(dir, "murec", json, &o, &s, &err);
    int ok = s == EDDY_OK && r->ref_state == APP_REF_APPROXIMATE && r->ref_drag != NULL &&
             isfinite(r->ref_mu1_offset);
    double seen = ok ? r->ref_drag[0] / r->f[0].drag - 1.0 : NAN;
    check(ok && r->ref_mu1_offset > 0.02 && fabs(seen - r->ref_mu1_offset) < 0.01,
          "reference with mu_r = 1.05 magnets: labelled, offset explained by the expected one",
          "reference / grid - 1 = %+.4f, expected from mu_r alone %+.4f (%s)", seen,
          ok ? r->ref_mu1_offset : NAN, s == EDDY_OK ? "" : err.msg);
    char path[600], text[65536];
    snprintf(path, sizeof path, "%s/murec/result.json", dir);
    pipe_read_text(path, text, sizeof text);
    check(strstr(text, "\"label\":\t\"reference (mu_r = 1 magnets)\"") != NULL &&
              strstr(text, "\"expected_offset_low_speed\":") != NULL,
          "result.json labels the reference and gives the expected offset", "%s", path);
    app_report_free(r);
}

static void test_bad_vehicle(void)
{
    const char *json =
        "{\"domain\":{\"x\":[0,1],\"y\":[-1,1]},\"regions\":[{\"material\":\"copper_annealed\","
        "\"box\":[0,-0.1,1,0],\"moving\":true}],\"speeds\":[1,2],"
        "\"vehicle\":{\"mass\":100,\"depth\":0.1,\"from_speed\":2,\"to_speed\":0}}";
    eddy_error err = {0};
    mesh_case *c = NULL;
    eddy_status s = mesh_case_parse(json, "v.json", &c, &err);
    check(s == EDDY_ERR_INPUT && strstr(err.msg, "never brings a load to rest") != NULL,
          "a stop to rest without an extra force is refused, with the reason", "%s", err.msg);
    mesh_case_free(c);
}

int main(void)
{
    snprintf(dir, sizeof dir, "/tmp/eddy2d_test_design_%ld", (long)getpid());
    mkdir(dir, 0777);
    test_bad_vehicle();
    test_enough_points_rule();
    test_reference_mu_offset();
    test_temperature();
    test_adaptive_peak_and_stop();
    char cmd[400];
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", dir);
    if (system(cmd) != 0)
        printf("# could not remove %s\n", dir);
    return check_summary();
}
