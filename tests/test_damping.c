/*
 * test_damping.c - the damping coefficient, the linear range and the
 * terminal speed of a falling load, through the whole pipeline, and the
 * outputs that carry them.
 *
 * References of the checks:
 *   - Low-speed limit: a conductor moving slowly through the static field
 *     B0 carries J = sigma v x B0 (the reaction field is of higher order in
 *     v), so the drag is F = c v with c = sigma integral B0_y^2; the standard
 *     first-order (quasi-static) result, e.g. the low-speed branch of the
 *     thin-sheet drag of J. R. Reitz, "Forces on moving magnets due to eddy
 *     currents", J. Appl. Phys. 41 (1970) 2067 (cited from memory; its 2D
 *     form is in the project's physics notes): for a line current I at
 *     height h over a sheet of conductance sigma d, F = mu0^2 I^2 sigma d v
 *     / (8 pi h) at v << w = 2 / (mu0 sigma d).
 *   - The layered Fourier reference (solver/sol_ref.c, no grid): its drag at
 *     magnetic Reynolds number 1e-4 over the speed is its low-speed slope; its
 *     drag curve, evaluated by bisection, gives the 5 % crossing of the
 *     linear law and the speed where the drag x depth balances a weight m g
 *     (g = 9.80665 m/s^2, standard gravity, 3rd CGPM 1901).
 *   - The same crossings computed here from the run's own result.json
 *     points with linear interpolation in log drag against log speed (not
 *     the program's monotone cubic).
 */
#include <cJSON.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "post/post_img.h"
#include "solver/sol_ref.h"
#include "tests/check.h"
#include "tests/pipeline.h"
#include "tests/pngread.h"

#define MU0 EDDY_MU0
#define PI 3.14159265358979323846
#define G_STD 9.80665

#define TOL_C_SOLVER 0.005   /* c vs drag / v of the grid solve at Rm 1e-3 (issue 13) */
#define TOL_C_REFERENCE 0.01 /* c vs the layered reference's low-speed slope: the grid's
                                discretisation error (0.46 % for the drag at Rm 0.1, README) */
#define TOL_C_REITZ 0.02     /* c of the thin sheet vs Reitz's low-speed drag: the grid's
                                thin-sheet figure (README: 1.13 % in drag) */
#define TOL_LINEAR 0.03      /* linear_up_to_speed vs the reference's 5 % crossing: the
                                deviation grows like v^2, so a 0.3 % error in the ratio
                                moves the crossing by ~3 % */
#define TOL_TERMINAL_OWN 0.005 /* terminal speed vs the test's own straight-line log-log
                                  interpolation of the same points, 8 a decade: that line's
                                  own interpolation error (measured 0.23 %) */
#define TOL_TERMINAL_REF 0.01  /* terminal speed vs the reference curve's crossing */

static const char *DIR = "build/tests/damping";

/* An isolated block magnet (mu_r 1, so the reference is exact) 3 mm over a
 * 6 mm copper plate: the case of tests/test_validation.c. */
#define SIGMA_T (58.0e6 * 0.006)
static const char *ISO_FMT =
    "{\"name\":\"%s\",\"length_unit\":\"mm\",\"domain\":{\"x\":[-600,600],\"y\":[-600,600]},"
    "\"materials\":{\"mag\":{\"remanence\":1.2,\"relative_permeability\":1.0}},"
    "\"regions\":[{\"material\":\"copper_annealed\",\"box\":[-600,-6,600,0],\"moving\":true},"
    "{\"material\":\"mag\",\"box\":[-15,3,15,13],\"magnetization_angle\":-90}],"
    "\"speeds\":%s%s}";

/* Speeds at Rm = mu0 sigma t v from rm0 to rm1, n log-spaced, as a JSON list. */
static void speed_list(char *buf, size_t size, double rm0, double rm1, int n)
{
    size_t len = 0;
    len += (size_t)snprintf(buf + len, size - len, "[");
    for (int k = 0; k < n; k++) {
        double rm = rm0 * pow(rm1 / rm0, (double)k / (n - 1));
        len += (size_t)snprintf(buf + len, size - len, "%s%.12g", k ? "," : "",
                                rm / (MU0 * SIGMA_T));
    }
    snprintf(buf + len, size - len, "]");
}

/* The reference problem of a case text. */
typedef struct {
    mesh_case *c;
    sol_ref_problem prob;
    sol_ref_source *src;
    int nsrc;
} ref_run;

static int ref_open(ref_run *q, const char *json)
{
    memset(q, 0, sizeof *q);
    int approx = 0;
    char why[256];
    if (mesh_case_parse(json, "ref-case", &q->c, NULL) != EDDY_OK)
        return -1;
    if (sol_ref_from_case(q->c, &q->prob, &q->src, &q->nsrc, &approx, why, sizeof why, NULL) !=
            EDDY_OK ||
        approx) {
        mesh_case_free(q->c);
        return -1;
    }
    return 0;
}

static void ref_close(ref_run *q)
{
    free(q->src);
    mesh_case_free(q->c);
}

static double ref_drag(const ref_run *q, double v)
{
    sol_ref_result r;
    if (sol_ref_solve(&q->prob, q->src, q->nsrc, v, &r, NULL) != EDDY_OK)
        return NAN;
    return -r.force_x;
}

/* Bisection in log speed on [lo, hi] for f(v) = target, f(lo) < target < f(hi)
 * or the reverse (f continuous). */
static double bisect(const ref_run *q, double (*f)(const ref_run *, double, double), double arg,
                     double lo, double hi, double target)
{
    double flo = f(q, lo, arg) - target;
    for (int it = 0; it < 60; it++) {
        double mid = sqrt(lo * hi), fm = f(q, mid, arg) - target;
        if ((fm < 0) == (flo < 0)) {
            lo = mid;
            flo = fm;
        } else {
            hi = mid;
        }
    }
    return sqrt(lo * hi);
}

/* drag / (c v) - 1 of the reference (arg: its slope c) */
static double ref_deviation(const ref_run *q, double v, double c) { return ref_drag(q, v) / (c * v) - 1.0; }
/* drag x depth of the reference (arg: the depth) */
static double ref_force(const ref_run *q, double v, double depth) { return ref_drag(q, v) * depth; }

/* result.json of a run folder, parsed (caller deletes). */
static cJSON *read_result(const char *name)
{
    char path[512];
    static char text[1 << 20];
    snprintf(path, sizeof path, "%s/%s/result.json", DIR, name);
    pipe_read_text(path, text, sizeof text);
    return cJSON_Parse(text);
}

static double jnum(const cJSON *o, const char *key)
{
    const cJSON *x = cJSON_GetObjectItemCaseSensitive(o, key);
    return cJSON_IsNumber(x) ? x->valuedouble : NAN;
}

static int jnull(const cJSON *o, const char *key)
{
    return cJSON_IsNull(cJSON_GetObjectItemCaseSensitive(o, key));
}

static const char *jstr(const cJSON *o, const char *key)
{
    const cJSON *x = cJSON_GetObjectItemCaseSensitive(o, key);
    return cJSON_IsString(x) ? x->valuestring : "";
}

/* ---------------------------------------------------------------------- */
/* (a) the damping coefficient                                             */
/* ---------------------------------------------------------------------- */

static void test_coefficient(void)
{
    char json[4096], sp[64];
    double v = 1e-3 / (MU0 * SIGMA_T); /* Rm = 1e-3 */
    snprintf(sp, sizeof sp, "[%.12g]", v);
    snprintf(json, sizeof json, ISO_FMT, "iso", sp, "");
    pipe_run p;
    if (pipe_open(&p, json) != 0) {
        check(0, "damping coefficient: pipeline", "failed");
        return;
    }
    post_forces f;
    if (pipe_speed(&p, v, &f) == 0)
        check_close("damping coefficient from the static field = drag / v at Rm 1e-3", p.slope,
                    f.drag / v, TOL_C_SOLVER, 0.0);
    check_close("drag_per_speed of the point = drag / v", f.drag_per_speed, f.drag / v, 1e-15,
                0.0);
    ref_run q;
    if (ref_open(&q, json) != 0) {
        check(0, "damping coefficient: the case fits the layered reference", "no");
    } else {
        double vs = 1e-4 / (MU0 * SIGMA_T), c_ref = ref_drag(&q, vs) / vs;
        check_close("damping coefficient vs the layered reference's drag / v at Rm 1e-4", p.slope,
                    c_ref, TOL_C_REFERENCE, 0.0);
        ref_close(&q);
    }
    pipe_free(&p);

    /* thin sheet under a line current (the case of test_validation.c) */
    const double I = 2000.0, d = 0.0001, sigma = 35.4e6, h = 0.010;
    snprintf(json, sizeof json,
             "{\"name\":\"thin\",\"length_unit\":\"mm\","
             "\"domain\":{\"x\":[-20000,20000],\"y\":[-20000,20000]},"
             "\"materials\":{\"sheet\":{\"conductivity\":%.17g}},"
             "\"regions\":[{\"material\":\"sheet\",\"box\":[-20000,-0.1,20000,0],\"moving\":true},"
             "{\"box\":[-0.5,9.5,0.5,10.5],\"current\":%.17g}],"
             "\"speeds\":[1],\"mesh\":{\"growth\":1.1}}",
             sigma, I);
    if (pipe_open(&p, json) != 0) {
        check(0, "damping coefficient, thin sheet: pipeline", "failed");
        return;
    }
    check_close("damping coefficient of a thin sheet vs Reitz mu0^2 I^2 sigma d / (8 pi h)",
                p.slope, MU0 * MU0 * I * I * sigma * d / (8.0 * PI * h), TOL_C_REITZ, 0.0);
    pipe_free(&p);
}

/* ---------------------------------------------------------------------- */
/* (b) linear range, (d) the outputs                                       */
/* ---------------------------------------------------------------------- */

static void test_linear_range_and_outputs(void)
{
    char json[8192], sp[4096];
    speed_list(sp, sizeof sp, 1e-3, 10.0, 25); /* 6 points a decade */
    snprintf(json, sizeof json, ISO_FMT, "iso_dense", sp, "");
    app_run_opts o;
    app_run_opts_defaults(&o);
    o.reference = 0;
    o.threads = 1;
    eddy_status s;
    eddy_error err = {0};
    app_report *r = pipe_solve_text(DIR, "iso_dense", json, &o, &s, &err);
    if (s != EDDY_OK) {
        check(0, "linear range: the dense sweep solves", "%s", err.msg);
        app_report_free(r);
        return;
    }
    ref_run q;
    if (ref_open(&q, json) == 0) {
        double vs = 1e-4 / (MU0 * SIGMA_T), c_ref = ref_drag(&q, vs) / vs;
        double lo = 1e-3 / (MU0 * SIGMA_T), hi = 10.0 / (MU0 * SIGMA_T);
        double v5 = bisect(&q, ref_deviation, c_ref, lo, hi, -DESIGN_LINEAR_TOL);
        check(r->linear_state == DESIGN_LINEAR_CROSSED, "linear range: the sweep crosses 5 %",
              "state %d", (int)r->linear_state);
        check_close("linear_up_to_speed vs the layered reference's 5 % crossing (bisection)",
                    r->linear_speed, v5, TOL_LINEAR, 0.0);
        ref_close(&q);
    } else {
        check(0, "linear range: the case fits the layered reference", "no");
    }

    /* (d) result.json */
    cJSON *root = read_result("iso_dense");
    check(root != NULL, "result.json parses", "%s", root != NULL ? "yes" : "no");
    if (root != NULL) {
        check_close("result.json damping_coefficient = the run's", jnum(root, "damping_coefficient"),
                    r->damping, 1e-14, 0.0);
        check(strstr(jstr(root, "damping_coefficient_unit"), "N s/m per m of depth") != NULL,
              "result.json damping_coefficient_unit", "\"%s\"",
              jstr(root, "damping_coefficient_unit"));
        check_close("result.json linear_up_to_speed = the run's", jnum(root, "linear_up_to_speed"),
                    r->linear_speed, 1e-14, 0.0);
        check(jstr(root, "linear_up_to_speed_note")[0] != '\0', "result.json says how the linear "
              "range was found", "\"%.60s...\"", jstr(root, "linear_up_to_speed_note"));
        const cJSON *pts = cJSON_GetObjectItemCaseSensitive(root, "points"), *pt;
        int n = 0, good = 0;
        cJSON_ArrayForEach(pt, pts)
        {
            n++;
            double want = jnum(pt, "drag_force") / jnum(pt, "speed");
            good += fabs(jnum(pt, "drag_per_speed") - want) <= 1e-12 * fabs(want);
        }
        check(n == 25 && good == n, "result.json: every point has drag_per_speed = drag / speed",
              "%d of %d", good, n);
        cJSON_Delete(root);
    }
    /* (d) forces.csv */
    char path[512];
    static char csv[1 << 16];
    snprintf(path, sizeof path, "%s/iso_dense/forces.csv", DIR);
    pipe_read_text(path, csv, sizeof csv);
    char *nl = strchr(csv, '\n');
    if (nl != NULL)
        *nl = '\0';
    int col_dps = -1, col_dev = -1, col = 0;
    for (char *tok = strtok(csv, ","); tok != NULL; tok = strtok(NULL, ","), col++) {
        if (strcmp(tok, "drag_per_speed_N_s_per_m2") == 0)
            col_dps = col;
        if (strcmp(tok, "deviation_from_linear") == 0)
            col_dev = col;
    }
    check(col_dps > 0 && col_dev > 0, "forces.csv has drag_per_speed_N_s_per_m2 and "
                                      "deviation_from_linear", "columns %d, %d", col_dps, col_dev);
    if (nl != NULL && col_dev > 0) { /* the first row: deviation = drag / (c v) - 1 */
        char *row = nl + 1, *end = strchr(row, '\n');
        if (end != NULL)
            *end = '\0';
        double vals[32] = {0};
        int m = 0;
        for (char *tok = strtok(row, ","); tok != NULL && m < 32; tok = strtok(NULL, ","))
            vals[m++] = atof(tok);
        double want = vals[1] / (r->damping * vals[0]) - 1.0;
        check(m > col_dev && fabs(vals[col_dev] - want) < 1e-8 &&
                  fabs(vals[col_dps] / (vals[1] / vals[0]) - 1.0) < 1e-9,
              "forces.csv: deviation_from_linear = drag / (c v) - 1, drag_per_speed = drag / v",
              "%.6g want %.6g", m > col_dev ? vals[col_dev] : NAN, want);
    }
    /* (d) forces.png carries the asymptote F = c v: the run's picture against
     * the same plot drawn without it */
    image with = {0}, without = {0};
    snprintf(path, sizeof path, "%s/iso_dense/forces.png", DIR);
    int ok = read_png(path, &with) == 0;
    int n = r->npoint;
    double *sp_ = malloc((size_t)n * 3 * sizeof *sp_);
    if (ok && sp_ != NULL) {
        double *dr = sp_ + n, *fy = sp_ + 2 * n;
        for (int k = 0; k < n; k++) {
            sp_[k] = r->f[k].speed;
            dr[k] = r->f[k].drag;
            fy[k] = r->f[k].force_y;
        }
        post_plot_opts po;
        post_plot_opts_defaults(&po);
        char title[160];
        snprintf(title, sizeof title, "%s: drag and normal force", r->c->name);
        po.title = title;
        po.case_name = r->c->name;
        po.version = EDDY_VERSION;
        po.has_peak = r->has_peak;
        po.peak_speed = r->peak_speed;
        po.peak_drag = r->peak_drag;
        po.peak_interpolated = r->peak_refined;
        snprintf(path, sizeof path, "%s/no_asymptote.png", DIR);
        ok = post_plot_forces_png(path, n, sp_, dr, fy, NAN, 0, NULL, NULL, NULL, &po, NULL) ==
                 EDDY_OK &&
             read_png(path, &without) == 0 && with.w == without.w && with.h == without.h;
    }
    free(sp_);
    long grey = 0;
    if (ok) /* pixels near the asymptote's grey (0.42, 0.45, 0.52) that differ, below
             * the title and the legend strip (the top eighth) */
        for (int j = with.h / 8; j < with.h; j++)
            for (int i = 0; i < with.w; i++) {
                const unsigned char *a = px(&with, i, j), *b = px(&without, i, j);
                if (memcmp(a, b, 3) != 0 && abs(a[0] - 107) < 25 && abs(a[1] - 115) < 25 &&
                    abs(a[2] - 133) < 25)
                    grey++;
            }
    check(ok && grey > 100, "forces.png draws the dashed asymptote F = c v in the plot",
          "%ld grey pixels that the plot without it lacks", grey);
    const char *cs = ok ? text_of(&with, "eddy2d:case") : NULL;
    check(cs != NULL && strcmp(cs, "iso_dense") == 0, "forces.png names its case", "\"%s\"",
          cs != NULL ? cs : "(none)");
    image_free(&with);
    image_free(&without);
    app_report_free(r);
}

/* ---------------------------------------------------------------------- */
/* (c) terminal speed of a falling load                                    */
/* ---------------------------------------------------------------------- */

/* The test's own crossing: the first bracketing pair of points of
 * result.json where drag x depth reaches weight, log-log linear. */
static double own_crossing(const cJSON *root, double depth, double weight)
{
    const cJSON *pts = cJSON_GetObjectItemCaseSensitive(root, "points"), *pt;
    double v0 = NAN, f0 = NAN;
    cJSON_ArrayForEach(pt, pts)
    {
        double v = jnum(pt, "speed"), f = jnum(pt, "drag_force") * depth;
        if (f >= weight) {
            if (isnan(v0))
                return NAN;
            double t = (log(weight) - log(f0)) / (log(f) - log(f0));
            return exp(log(v0) + t * (log(v) - log(v0)));
        }
        v0 = v;
        f0 = f;
    }
    return NAN;
}

static cJSON *solve_vehicle(const char *name, const char *speeds, const char *vehicle)
{
    char json[8192], extra[512];
    snprintf(extra, sizeof extra, ",\"vehicle\":%s", vehicle);
    snprintf(json, sizeof json, ISO_FMT, name, speeds, extra);
    app_run_opts o;
    app_run_opts_defaults(&o);
    o.reference = 0;
    o.images = 0;
    o.threads = 1;
    eddy_status s;
    eddy_error err = {0};
    app_report *r = pipe_solve_text(DIR, name, json, &o, &s, &err);
    app_report_free(r);
    if (s != EDDY_OK) {
        printf("# %s: %s\n", name, err.msg);
        return NULL;
    }
    return read_result(name);
}

static void test_terminal(void)
{
    char sp[4096];
    speed_list(sp, sizeof sp, 1e-2, 10.0, 25); /* about 8 points a decade */
    const double depth = 0.5, mass = 20.0, weight = mass * G_STD;
    char veh[256];
    snprintf(veh, sizeof veh, "{\"mass\":%g,\"depth\":%g,\"gravity\":true}", mass, depth * 1e3);
    cJSON *root = solve_vehicle("fall", sp, veh);
    check(root != NULL, "terminal speed: the case with gravity solves", "%s", root ? "yes" : "no");
    if (root == NULL)
        return;
    double vt = jnum(root, "terminal_speed");
    double own = own_crossing(root, depth, weight);
    check(isfinite(own), "terminal speed: the sweep brackets m g", "crossing %.6g m/s", own);
    check_close("terminal_speed vs the test's own log-log crossing of drag x depth = m g", vt,
                own, TOL_TERMINAL_OWN, 0.0);
    char json[8192];
    snprintf(json, sizeof json, ISO_FMT, "fall", sp, "");
    ref_run q;
    if (ref_open(&q, json) == 0) {
        double lo = 1e-2 / (MU0 * SIGMA_T), hi = 10.0 / (MU0 * SIGMA_T);
        /* below the reference's drag peak: the lowest crossing */
        double vpk = lo, fpk = 0.0;
        for (int k = 0; k <= 60; k++) {
            double v = lo * pow(hi / lo, k / 60.0), f = ref_drag(&q, v);
            if (f > fpk) {
                fpk = f;
                vpk = v;
            }
        }
        double vref = bisect(&q, ref_force, depth, lo, vpk, weight);
        check_close("terminal_speed vs the layered reference's crossing of drag x depth = m g",
                    vt, vref, TOL_TERMINAL_REF, 0.0);
        ref_close(&q);
    }
    const cJSON *veh_o = cJSON_GetObjectItemCaseSensitive(root, "vehicle");
    check(veh_o != NULL && cJSON_IsTrue(cJSON_GetObjectItemCaseSensitive(veh_o, "gravity")) &&
              fabs(jnum(veh_o, "weight") / weight - 1.0) < 1e-14 &&
              fabs(jnum(veh_o, "damping_coefficient") /
                       (jnum(root, "damping_coefficient") * depth) - 1.0) < 1e-14,
          "result.json vehicle: gravity, weight m g, damping_coefficient x depth", "%s",
          veh_o != NULL ? "present" : "absent");
    check(jnull(root, "stopping") && strstr(jstr(root, "stopping_note"), "from_speed") != NULL,
          "without from_speed a falling load has no stop, and result.json says why", "\"%s\"",
          jstr(root, "stopping_note"));
    cJSON_Delete(root);

    /* a weight above the drag peak: no terminal speed */
    snprintf(veh, sizeof veh, "{\"mass\":%g,\"depth\":%g,\"gravity\":true}", 1e5, depth * 1e3);
    root = solve_vehicle("fall_heavy", sp, veh);
    check(root != NULL && jnull(root, "terminal_speed") &&
              strstr(jstr(root, "terminal_speed_note"), "peaks within the sweep") != NULL,
          "a weight above the peak drag: terminal_speed null, and why", "\"%s\"",
          root != NULL ? jstr(root, "terminal_speed_note") : "");
    cJSON_Delete(root);
    /* a light load whose terminal speed lies below the sweep */
    snprintf(veh, sizeof veh, "{\"mass\":%g,\"depth\":%g,\"gravity\":true}", 1e-3, depth * 1e3);
    root = solve_vehicle("fall_light", sp, veh);
    check(root != NULL && jnull(root, "terminal_speed") &&
              strstr(jstr(root, "terminal_speed_note"), "not bracketed") != NULL &&
              isfinite(jnum(cJSON_GetObjectItemCaseSensitive(root, "vehicle"),
                            "terminal_speed_linear")),
          "terminal speed below the sweep: null, why, and the linear law's value", "\"%s\"",
          root != NULL ? jstr(root, "terminal_speed_note") : "");
    cJSON_Delete(root);
    /* slowed from above the terminal speed to below it: the stop is undefined */
    double vhi = 10.0 / (MU0 * SIGMA_T);
    snprintf(veh, sizeof veh,
             "{\"mass\":%g,\"depth\":%g,\"gravity\":true,\"from_speed\":%.12g,\"to_speed\":%.12g}",
             mass, depth * 1e3, 0.5 * vhi, 0.5 * vt);
    root = solve_vehicle("fall_stop", sp, veh);
    check(root != NULL && jnull(root, "stopping") &&
              strstr(jstr(root, "stopping_note"), "does not slow") != NULL,
          "a falling load cannot slow below its terminal speed: stopping null, and why", "\"%s\"",
          root != NULL ? jstr(root, "stopping_note") : "");
    cJSON_Delete(root);
    /* to a speed above it: the stop exists and gravity's work is in its balance */
    snprintf(veh, sizeof veh,
             "{\"mass\":%g,\"depth\":%g,\"gravity\":true,\"from_speed\":%.12g,\"to_speed\":%.12g}",
             mass, depth * 1e3, 0.5 * vhi, 1.5 * vt);
    root = solve_vehicle("fall_slow", sp, veh);
    const cJSON *st = root != NULL ? cJSON_GetObjectItemCaseSensitive(root, "stopping") : NULL;
    double e_in = jnum(st, "kinetic_energy") + jnum(st, "gravity_work");
    double e_out = jnum(st, "energy_in_conductor") + jnum(st, "extra_force_work");
    check(cJSON_IsObject(st) && fabs(e_out / e_in - 1.0) < 1e-6,
          "a falling load slowed to 1.5 v_t: energy in the conductor = kinetic + gravity work",
          "%.9g J vs %.9g J", e_out, e_in);
    cJSON_Delete(root);
}

int main(void)
{
    mkdir("build", 0777);
    mkdir("build/tests", 0777);
    mkdir(DIR, 0777);
    test_coefficient();
    test_linear_range_and_outputs();
    test_terminal();
    return check_summary();
}
