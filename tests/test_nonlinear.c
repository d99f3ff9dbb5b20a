/*
 * test_nonlinear.c - saturable materials: B-H curves, Newton-Raphson and
 * forces on magnetised conductors.
 *
 * Each check names its source.  Tolerances are named below.
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "tests/check.h"
#include "tests/pipeline.h"

#define MU0 EDDY_MU0

#define TOL_INTERP 1e-12      /* the interpolant passes through its points (definition) */
#define TOL_DERIV 1e-6        /* dnu/db against a central difference (C^1 interpolant) */
#define TOL_SLOPE_MU0 1e-6    /* dB/dH -> mu0 far beyond the last point */
#define TOL_STRAIGHT 1e-9     /* issue 8: a straight B-H line gives the linear answer */
#define TOL_NEWTON 1e-8       /* issue 8: Newton stops at this relative residual */
#define QUAD_MIN_ORDER 1.7    /* measured order of the last step: 2 for Newton, 1 for a
                               * linear iteration, 1.62 for the secant method */
#define TOL_POWER 0.01        /* issue 8: stress-tensor drag x speed = loss, 1 % */
#define TOL_STRESS 0.01       /* issue 2: Lorentz vs stress-tensor drag, 1 % */
#define TOL_LOW_FIELD 0.01    /* saturable -> linear result at low remanence, 1 % */

/* ---------------------------------------------------------------------- */
/* Geometry shared by the cases: one period (40 mm) of an array of         */
/* alternating magnets, 16 mm x 5 mm, 2 mm above a plate (y < 0) that      */
/* moves along x; periodic in x, A = 0 at y = +-40 mm.                      */
/* ---------------------------------------------------------------------- */

#define MAGNETS                                                                        \
    "{\"material\":\"mag\",\"box\":[-18,2,-2,7],\"magnetization_angle\":90},"              \
    "{\"material\":\"mag\",\"box\":[2,2,18,7],\"magnetization_angle\":270}"

/* A case text: plate material JSON (object), plate thickness (mm, below
 * y = 0), optional yoke material JSON (NULL: no yoke; a 2 mm yoke on the
 * magnets' backs), remanence, speeds. */
static void make_case(char *buf, size_t len, const char *plate_mat, double plate_t,
                      const char *yoke_mat, double br, const char *speeds)
{
    char yoke_mat_json[4096] = "", yoke_reg[256] = "";
    if (yoke_mat != NULL) {
        snprintf(yoke_mat_json, sizeof yoke_mat_json, ",\"yoke\":%s", yoke_mat);
        snprintf(yoke_reg, sizeof yoke_reg,
                 ",{\"name\":\"yoke\",\"material\":\"yoke\",\"box\":[-20,7,20,9]}");
    }
    snprintf(buf, len,
             "{\"name\":\"nl\",\"length_unit\":\"mm\","
             "\"domain\":{\"x\":[-20,20],\"y\":[-40,40],\"x_boundary\":\"periodic\"},"
             "\"materials\":{\"mag\":{\"remanence\":%.17g,\"relative_permeability\":1.0},"
             "\"plate\":%s%s},"
             "\"regions\":[{\"name\":\"plate\",\"material\":\"plate\",\"box\":[-20,%.17g,20,0],"
             "\"moving\":true}," MAGNETS "%s],"
             "\"speeds\":%s}",
             br, plate_mat, yoke_mat_json, -plate_t, yoke_reg, speeds);
}

/* One saturable-capable solve: mesh, system, analysis, a workspace. */
typedef struct {
    mesh_case *c;
    mesh_grid *g;
    sol_system *sys;
    sol_work *w;
    double *a, *nu;
    mesh_grid gsol; /* the grid with the converged reluctivities */
} nl_run;

static void nl_free(nl_run *p)
{
    free(p->a);
    free(p->nu);
    sol_work_free(p->w);
    sol_system_free(p->sys);
    mesh_grid_free(p->g);
    mesh_case_free(p->c);
    memset(p, 0, sizeof *p);
}

static int nl_open(nl_run *p, const char *json)
{
    eddy_error err = {0};
    memset(p, 0, sizeof *p);
    eddy_status s = mesh_case_parse(json, "test-case", &p->c, &err);
    if (s == EDDY_OK)
        s = mesh_grid_build(p->c, 0.0, &p->g, NULL, &err);
    if (s == EDDY_OK)
        s = sol_system_alloc(p->g, &p->sys, &err);
    if (s == EDDY_OK)
        s = sol_analyse(p->sys, NULL, &err);
    if (s == EDDY_OK)
        s = sol_work_alloc(p->sys, &p->w, &err);
    if (s == EDDY_OK) {
        p->a = calloc((size_t)p->g->nx * (size_t)p->g->ny, sizeof *p->a);
        p->nu = malloc((size_t)p->g->ncx * (size_t)p->g->ncy * sizeof *p->nu);
        if (p->a == NULL || p->nu == NULL)
            s = EDDY_ERR_NOMEM;
    }
    if (s != EDDY_OK) {
        printf("# pipeline error: %s (%s)\n", err.msg, eddy_strerror(s));
        nl_free(p);
        return -1;
    }
    p->gsol = *p->g;
    p->gsol.nu = p->nu;
    return 0;
}

/* Solve at v (warm: from the field in p->a) and compute the forces. */
static int nl_speed(nl_run *p, double v, int warm, sol_newton_info *nli, post_forces *f)
{
    eddy_error err = {0};
    eddy_status s = sol_solve_newton(p->sys, p->w, v, p->a, warm, p->nu, 0, nli, NULL, &err);
    if (s == EDDY_OK && f != NULL)
        s = post_forces_compute(&p->gsol, p->a, v, 0.0, f, &err);
    if (s != EDDY_OK) {
        printf("# solve error at %g m/s: %s\n", v, err.msg);
        return -1;
    }
    return 0;
}

static void print_history(const char *what, const sol_newton_info *n)
{
    printf("# %s: %d Newton steps, relative residuals", what, n->iterations);
    for (int k = 0; k < n->n_residual; k++)
        printf(" %.3e", n->residual[k]);
    printf("; damping");
    for (int k = 0; k < n->iterations; k++)
        printf(" %g", n->damping[k]);
    printf("; max |B| in iron %.3f T\n", n->b_max);
}

/* ---------------------------------------------------------------------- */
/* The interpolant of a curve.                                              */
/* ---------------------------------------------------------------------- */
static void test_interpolant(void)
{
    const char *names[] = {"steel_low_carbon", "steel_silicon_nonoriented"};
    for (int q = 0; q < 2; q++) {
        const mesh_material *m = mesh_library_find(names[q]);
        if (m == NULL || m->bh.n < 3) {
            check(0, "library curve", "%s missing", names[q]);
            continue;
        }
        sol_bh c;
        eddy_error err = {0};
        if (sol_bh_build(&m->bh, &c, &err) != EDDY_OK) {
            check(0, "library curve builds", "%s: %s", names[q], err.msg);
            continue;
        }
        char name[160];
        /* through the points: H(B_k) = nu(B_k^2) B_k (definition of an interpolant) */
        double worst = 0.0;
        for (int k = 1; k < m->bh.n; k++) {
            double nu, dnu;
            sol_bh_eval(&c, m->bh.b[k] * m->bh.b[k], &nu, &dnu);
            worst = fmax(worst, fabs(nu * m->bh.b[k] - m->bh.h[k]) / m->bh.h[k]);
        }
        snprintf(name, sizeof name, "%s: the interpolant passes through the curve's points",
                 names[q]);
        check(worst <= TOL_INTERP, name, "max rel. error of H %.3g (tol %.3g)", worst,
              TOL_INTERP);
        /* monotone H(B) and consistent derivative: dH/dB = nu + 2 b dnu/db > 0
         * (Fritsch and Carlson, SIAM J. Numer. Anal. 17, 1980, theorem 2), and
         * dnu/db equals the central difference of nu (C^1 in b, Marrocco 1977) */
        double min_dh = INFINITY, worst_d = 0.0, bend = m->bh.b[m->bh.n - 1];
        for (int k = 1; k <= 4000; k++) {
            double b = 1.3 * bend * k / 4000.0, b2 = b * b, nu, dnu, nup, num, d1, d2;
            sol_bh_eval(&c, b2, &nu, &dnu);
            min_dh = fmin(min_dh, (nu + 2.0 * b2 * dnu) * MU0); /* relative to 1/mu0 */
            double hstep = 1e-6 * b2;
            sol_bh_eval(&c, b2 + hstep, &nup, &d1);
            sol_bh_eval(&c, b2 - hstep, &num, &d2);
            double fd = (nup - num) / (2.0 * hstep);
            worst_d = fmax(worst_d, fabs(fd - dnu) / fmax(fabs(dnu), 1e-3 * nu / b2));
        }
        snprintf(name, sizeof name, "%s: H(B) strictly increasing up to 1.3 x the last point",
                 names[q]);
        check(min_dh > 0.0, name, "min mu0 dH/dB = %.3g", min_dh);
        snprintf(name, sizeof name, "%s: d nu / d B^2 matches a central difference", names[q]);
        check(worst_d <= TOL_DERIV, name, "max rel. difference %.3g (tol %.3g)", worst_d,
              TOL_DERIV);
        /* far beyond the last point the differential permeability is mu0
         * (a fully saturated material, common practice) */
        double b = bend + 40.0 * c.beta, nu, dnu;
        sol_bh_eval(&c, b * b, &nu, &dnu);
        double mu_diff = 1.0 / ((nu + 2.0 * b * b * dnu) * MU0);
        snprintf(name, sizeof name, "%s: dB/dH -> mu0 beyond the last point", names[q]);
        check(fabs(mu_diff - 1.0) <= TOL_SLOPE_MU0, name, "dB/dH / mu0 = %.9f at %.2f T", mu_diff,
              b);
        /* the initial permeability the mesher uses is the curve's nu(0) */
        sol_bh_eval(&c, 0.0, &nu, &dnu);
        snprintf(name, sizeof name, "%s: mu_r is the curve's initial permeability", names[q]);
        check_close(name, m->mu_r, 1.0 / (MU0 * nu), 1e-12, 0.0);
    }
    /* a straight line B = mu0 mu_r H gives a constant nu (Fritsch-Carlson
     * reproduces linear data exactly) */
    mesh_bh_curve line = {4, {0.0, 1e3, 1e4, 1e5}, {0.0, 0.0, 0.0, 0.0}};
    for (int k = 1; k < 4; k++)
        line.b[k] = MU0 * 50.0 * line.h[k];
    sol_bh c;
    sol_bh_build(&line, &c, NULL);
    double worst = 0.0;
    for (int k = 0; k <= 100; k++) {
        double b = line.b[3] * k / 100.0, nu, dnu;
        sol_bh_eval(&c, b * b, &nu, &dnu);
        worst = fmax(worst, fabs(nu * MU0 * 50.0 - 1.0));
    }
    check(worst <= TOL_INTERP, "straight B-H line: constant reluctivity", "max |nu mu0 mu_r - 1| "
          "= %.3g", worst);
    /* a curve that is not monotone is rejected by the builder too */
    mesh_bh_curve bad = {3, {0.0, 100.0, 50.0}, {0.0, 1.0, 1.5}};
    eddy_error err = {0};
    eddy_status s = sol_bh_build(&bad, &c, &err);
    check(s == EDDY_ERR_INPUT && strstr(err.msg, "not monotone") != NULL,
          "sol_bh_build rejects a non-monotone curve", "%s", err.msg);
}

/* ---------------------------------------------------------------------- */
/* The case reader.                                                         */
/* ---------------------------------------------------------------------- */
#define PLATE_DOM "\"domain\":{\"x\":[0,10],\"y\":[-5,5]}"
#define PLATE_REG "\"regions\":[{\"material\":\"s\",\"box\":[0,-1,10,0],\"moving\":true}],\"speeds\":[1]"

static void test_reader(void)
{
    static const struct {
        const char *what, *bh, *expect;
    } bad[] = {
        {"a B-H curve with H decreasing", "\"bh_curve\":[[0,0],[100,1],[50,1.2]]",
         "materials.s.bh_curve[2]: H and B must both increase strictly"},
        {"a B-H curve with B decreasing", "\"bh_curve\":[[100,1],[200,0.9],[300,1.3]]",
         "materials.s.bh_curve[1]: H and B must both increase strictly"},
        {"a B-H curve with too few points", "\"bh_curve\":[[0,0],[100,1]]",
         "materials.s.bh_curve: needs at least 3 points"},
        {"a B-H curve and a permeability", "\"bh_curve\":[[100,1],[200,1.3]],"
                                           "\"relative_permeability\":100",
         "materials.s.bh_curve: give either \"bh_curve\" or \"relative_permeability\""},
        {"a B-H curve with remanence", "\"bh_curve\":[[100,1],[200,1.3]],\"remanence\":1",
         "materials.s.bh_curve: a material with a B-H curve cannot have a remanence"},
        {"a B-H curve point that is not a pair", "\"bh_curve\":[[100,1],[200]]",
         "materials.s.bh_curve[1]: must have exactly 2 numbers"},
        {"a B-H curve that is not an array", "\"bh_curve\":3",
         "materials.s.bh_curve: must be an array"},
        {"a B-H curve with a negative point", "\"bh_curve\":[[-100,-1],[200,1.3],[300,1.4]]",
         "materials.s.bh_curve[0]: H and B must not be negative"},
    };
    for (size_t k = 0; k < sizeof bad / sizeof bad[0]; k++) {
        char json[1024], name[160];
        snprintf(json, sizeof json,
                 "{" PLATE_DOM ",\"materials\":{\"s\":{\"conductivity\":1e6,%s}}," PLATE_REG "}",
                 bad[k].bh);
        mesh_case *c = NULL;
        eddy_error err = {0};
        eddy_status s = mesh_case_parse(json, "bad.json", &c, &err);
        snprintf(name, sizeof name, "rejects %s", bad[k].what);
        check(s == EDDY_ERR_INPUT && c == NULL && strstr(err.msg, bad[k].expect) != NULL, name,
              "%s", err.msg);
        mesh_case_free(c);
    }
    /* a curve without the origin gets it; mu_r = B_1 / (mu0 H_1) */
    const char *good = "{" PLATE_DOM ",\"materials\":{\"s\":{\"conductivity\":1e6,"
                       "\"bh_curve\":[[100,0.5],[1000,1.4],[10000,1.8]]}}," PLATE_REG "}";
    mesh_case *c = NULL;
    eddy_error err = {0};
    eddy_status s = mesh_case_parse(good, "good.json", &c, &err);
    int ok = s == EDDY_OK && c->nmat >= 1 && c->materials[0].bh.n == 4 &&
             c->materials[0].bh.h[0] == 0.0 && c->materials[0].bh.b[0] == 0.0 &&
             fabs(c->materials[0].mu_r - 0.5 / (MU0 * 100.0)) <= 1e-12 * c->materials[0].mu_r;
    check(ok, "reads a B-H curve, adds (0, 0), mu_r from the first point", "%s",
          s == EDDY_OK ? "" : err.msg);
    mesh_case_free(c);
}

/* ---------------------------------------------------------------------- */
/* A straight B-H line gives the linear answer (issue 8).                   */
/* ---------------------------------------------------------------------- */
static void test_straight_line(void)
{
    const double mu_r = 50.0, v = 2.0;
    char lin_mat[256], bh_mat[1024], json[8192];
    snprintf(lin_mat, sizeof lin_mat, "{\"conductivity\":2e6,\"relative_permeability\":%.17g}",
             mu_r);
    /* points far beyond the largest flux density of the solution (< 3 T) */
    snprintf(bh_mat, sizeof bh_mat,
             "{\"conductivity\":2e6,\"bh_curve\":[[0,0],[1000,%.17g],[10000,%.17g],"
             "[100000,%.17g],[1000000,%.17g]]}",
             MU0 * mu_r * 1e3, MU0 * mu_r * 1e4, MU0 * mu_r * 1e5, MU0 * mu_r * 1e6);
    nl_run lin, nl;
    make_case(json, sizeof json, lin_mat, 6.0, NULL, 1.2, "[2]");
    if (nl_open(&lin, json) != 0) {
        check(0, "straight line: linear pipeline", "failed");
        return;
    }
    make_case(json, sizeof json, bh_mat, 6.0, NULL, 1.2, "[2]");
    if (nl_open(&nl, json) != 0) {
        check(0, "straight line: saturable pipeline", "failed");
        nl_free(&lin);
        return;
    }
    check(lin.g->nx == nl.g->nx && lin.g->ny == nl.g->ny && sol_is_nonlinear(nl.sys) &&
              !sol_is_nonlinear(lin.sys),
          "straight line: same grid, one case linear and one saturable", "%d x %d",
          nl.g->nx, nl.g->ny);
    for (int pass = 0; pass < 2; pass++) {
        double vv = pass == 0 ? 0.0 : v;
        post_forces fl, fn;
        sol_newton_info nli;
        if (nl_speed(&lin, vv, 0, NULL, &fl) != 0 || nl_speed(&nl, vv, 0, &nli, &fn) != 0) {
            check(0, "straight line: solves", "failed");
            break;
        }
        size_t nn = (size_t)nl.g->nx * (size_t)nl.g->ny;
        double amax = 0.0, diff = 0.0;
        for (size_t k = 0; k < nn; k++) {
            amax = fmax(amax, fabs(lin.a[k]));
            diff = fmax(diff, fabs(lin.a[k] - nl.a[k]));
        }
        char name[160];
        snprintf(name, sizeof name, "straight B-H line = linear mu_r %.0f at %g m/s: field", mu_r,
                 vv);
        check(diff <= TOL_STRAIGHT * amax && nli.converged, name,
              "max |A - A_linear| / max |A| = %.3g (tol %.3g), %d Newton steps", diff / amax,
              TOL_STRAIGHT, nli.iterations);
        snprintf(name, sizeof name, "straight B-H line = linear at %g m/s: normal force", vv);
        check_close(name, fn.force_y, fl.force_y, TOL_STRAIGHT, 0.0);
        if (vv != 0.0) {
            snprintf(name, sizeof name, "straight B-H line = linear at %g m/s: drag", vv);
            check_close(name, fn.drag, fl.drag, TOL_STRAIGHT, 0.0);
            snprintf(name, sizeof name, "straight B-H line = linear at %g m/s: loss", vv);
            check_close(name, fn.loss, fl.loss, TOL_STRAIGHT, 0.0);
        }
    }
    /* a linear system through sol_solve_newton is the linear solve, bit for bit */
    double *a2 = malloc((size_t)lin.g->nx * (size_t)lin.g->ny * sizeof *a2);
    eddy_error err = {0};
    if (a2 != NULL && sol_solve(lin.sys, v, a2, NULL, &err) == EDDY_OK &&
        sol_solve_newton(lin.sys, lin.w, v, lin.a, 0, NULL, 0, NULL, NULL, &err) == EDDY_OK)
        check(memcmp(a2, lin.a, (size_t)lin.g->nx * (size_t)lin.g->ny * sizeof *a2) == 0,
              "linear case: sol_solve_newton is the linear solve bit for bit", "%s", "");
    else
        check(0, "linear case: solves", "%s", err.msg);
    free(a2);
    nl_free(&lin);
    nl_free(&nl);
}

/* ---------------------------------------------------------------------- */
/* Quadratic convergence of Newton-Raphson (issue 8): with the exact        */
/* Jacobian the residual obeys r_{k+1} ~ C r_k^2 near the solution (J. E.   */
/* Dennis and R. B. Schnabel, "Numerical Methods for Unconstrained          */
/* Optimization and Nonlinear Equations", 1983, theorem 5.2.1), so the      */
/* ratios rho_k = r_{k+1} / r_k satisfy rho_{k+1} ~ rho_k^2: the order      */
/* estimate log(rho_{k+1}) / log(rho_k) of the last full step is near 2     */
/* (1 for a linearly convergent iteration).                                 */
/* ---------------------------------------------------------------------- */
static void check_quadratic(const char *what, const sol_newton_info *n)
{
    print_history(what, n);
    char name[200];
    int m = n->n_residual;
    snprintf(name, sizeof name, "%s: Newton converges to %.0e", what, TOL_NEWTON);
    check(n->converged && n->residual[m - 1] <= TOL_NEWTON, name, "%d steps, final %.3g",
          n->iterations, n->residual[m - 1]);
    if (m < 4) {
        check(0, name, "too few steps to measure the order (%d)", n->iterations);
        return;
    }
    const double *r = n->residual;
    double rho1 = r[m - 2] / r[m - 3], rho2 = r[m - 1] / r[m - 2];
    double order = log(rho2) / log(rho1);
    printf("# %s: last ratios r_k+1/r_k = %.3g, %.3g; r_k+1/r_k^2 = %.3g, %.3g\n", what, rho1,
           rho2, rho1 / r[m - 3], rho2 / r[m - 2]);
    snprintf(name, sizeof name, "%s: quadratic convergence in the last steps", what);
    check(rho1 < 1.0 && order >= QUAD_MIN_ORDER && n->damping[n->iterations - 1] == 1.0 &&
              n->damping[n->iterations - 2] == 1.0,
          name, "order log(rho_k+1)/log(rho_k) = %.2f (min %.2f), full steps", order,
          QUAD_MIN_ORDER);
}

/* ---------------------------------------------------------------------- */
/* A steel plate moving under the magnets (issue 8): power balance with the */
/* stress-tensor drag, -F_x v = P (Poynting's theorem in the steady state;  */
/* PHYSICS.md), and the force method reported.                              */
/* ---------------------------------------------------------------------- */
static char steel_json[8192];

static void test_steel_plate(void)
{
    make_case(steel_json, sizeof steel_json, "{\"conductivity\":7e6,\"bh_curve\":"
              "[[100,0.25],[200,0.70],[300,1.00],[500,1.25],[1000,1.45],[2000,1.58],"
              "[5000,1.70],[10000,1.80],[20000,1.92],[50000,2.05],[100000,2.15]]}",
              10.0, NULL, 1.2, "[0.1, 0.3]");
    nl_run p;
    if (nl_open(&p, steel_json) != 0) {
        check(0, "steel plate: pipeline", "failed");
        return;
    }
    printf("# steel plate: grid %d x %d, %ld unknowns\n", p.g->nx, p.g->ny, sol_unknowns(p.sys));
    sol_newton_info nli;
    if (nl_speed(&p, 0.0, 0, &nli, NULL) == 0)
        check_quadratic("steel plate, static field from A = 0", &nli);
    const double speeds[] = {0.1, 0.3};
    for (int k = 0; k < 2; k++) {
        post_forces f;
        char name[160], what[80];
        if (nl_speed(&p, speeds[k], 1, &nli, &f) != 0) {
            check(0, "steel plate: solve", "failed at %g m/s", speeds[k]);
            continue;
        }
        snprintf(what, sizeof what, "steel plate at %g m/s (from the previous speed)", speeds[k]);
        check_quadratic(what, &nli);
        /* which method is reported (a magnetised conductor needs the stress
         * tensor); its numbers are checked against independent quantities
         * next: the Joule loss and the J x B integral */
        snprintf(name, sizeof name, "steel plate at %g m/s: the stress tensor is the method",
                 speeds[k]);
        check(f.stress_ok && f.force_method != NULL &&
                  strcmp(f.force_method, "stress_tensor") == 0,
              name, "method %s", f.force_method != NULL ? f.force_method : "(none)");
        snprintf(name, sizeof name, "steel plate at %g m/s: stress drag x speed = loss",
                 speeds[k]);
        check_close(name, f.drag_stress * speeds[k], f.loss, TOL_POWER, 0.0);
        /* uniform along x, the plate's magnetisation feels no x force (the
         * stress T_xy = H_x B_y is continuous across y = const faces), so the
         * J x B drag is the whole drag (derived here) */
        snprintf(name, sizeof name, "steel plate at %g m/s: J x B drag = stress drag",
                 speeds[k]);
        check_close(name, -f.lorentz_x, f.drag_stress, TOL_STRESS, 0.0);
    }
    nl_free(&p);
}

/* ---------------------------------------------------------------------- */
/* A magnet array on a thin saturating yoke over an aluminium plate: the    */
/* drag lies between the air-backed result and the result with a linear     */
/* yoke of the curve's initial permeability, and tends to the linear one as */
/* the remanence falls (below the knee the material is linear).  The yoke   */
/* follows the Frolich-Kennelly law B = mu0 H + H / (alpha + H / J_s)       */
/* (Frolich 1881, Kennelly 1891), whose permeability falls monotonically.   */
/* ---------------------------------------------------------------------- */
static void test_saturating_yoke(void)
{
    const double mu_i = 1000.0, js = 2.0, alpha = 1.0 / ((mu_i - 1.0) * MU0), v = 5.0;
    const double hs[] = {10, 20, 50, 100, 200, 500, 1e3, 2e3, 5e3, 1e4, 2e4, 5e4, 1e5, 2e5, 5e5};
    char curve[4096] = "{\"bh_curve\":[", lin[256], json[8192];
    size_t len = strlen(curve);
    double b1 = 0.0;
    for (size_t k = 0; k < sizeof hs / sizeof hs[0]; k++) {
        double b = MU0 * hs[k] + hs[k] / (alpha + hs[k] / js);
        if (k == 0)
            b1 = b;
        len += (size_t)snprintf(curve + len, sizeof curve - len, "%s[%.17g,%.17g]",
                                k ? "," : "", hs[k], b);
    }
    snprintf(curve + len, sizeof curve - len, "]}");
    snprintf(lin, sizeof lin, "{\"relative_permeability\":%.17g}", b1 / (MU0 * hs[0]));
    const char *plate = "{\"conductivity\":3e7}";
    const double brs[] = {1.2, 0.3, 0.05, 0.01};
    double prev_ratio = -1.0;
    for (size_t q = 0; q < sizeof brs / sizeof brs[0]; q++) {
        double drag[3] = {NAN, NAN, NAN};
        sol_newton_info nli = {0};
        for (int kind = 0; kind < 3; kind++) { /* air-backed, linear yoke, saturable yoke */
            make_case(json, sizeof json, plate, 4.0, kind == 0 ? NULL : kind == 1 ? lin : curve,
                      brs[q], "[5]");
            nl_run p;
            post_forces f;
            if (nl_open(&p, json) != 0)
                continue;
            if (nl_speed(&p, 0.0, 0, NULL, NULL) == 0 && nl_speed(&p, v, 1, &nli, &f) == 0)
                drag[kind] = f.drag;
            nl_free(&p);
        }
        double ratio = (drag[2] - drag[0]) / (drag[1] - drag[0]);
        printf("# yoke, Br %.2f T: drag air-backed %.6g, saturable %.6g, linear %.6g N/m; "
               "(sat - air) / (lin - air) = %.5f; %d Newton steps, max |B| in the yoke %.2f T\n",
               brs[q], drag[0], drag[2], drag[1], ratio, nli.iterations, nli.b_max);
        char name[160];
        snprintf(name, sizeof name, "saturating yoke, Br %.2f T: air-backed < saturable < linear",
                 brs[q]);
        check(drag[0] < drag[2] && drag[2] < drag[1], name, "%.6g < %.6g < %.6g N/m", drag[0],
              drag[2], drag[1]);
        if (q > 0) {
            snprintf(name, sizeof name, "saturating yoke: closer to linear at Br %.2f T than "
                     "at %.2f T", brs[q], brs[q - 1]);
            check(ratio > prev_ratio, name, "%.5f > %.5f", ratio, prev_ratio);
        }
        prev_ratio = ratio;
        if (q + 1 == sizeof brs / sizeof brs[0]) {
            snprintf(name, sizeof name, "saturating yoke at Br %.2f T: the linear result",
                     brs[q]);
            check_close(name, drag[2], drag[1], TOL_LOW_FIELD, 0.0);
        }
    }
}

/* ---------------------------------------------------------------------- */
/* The pipeline: result.json fields, and a clear failure when Newton does   */
/* not converge (exit status 1 through eddy_exit_code).                     */
/* ---------------------------------------------------------------------- */
static void test_pipeline(void)
{
    char dir[200], casefile[300];
    snprintf(dir, sizeof dir, "/tmp/eddy2d_test_nonlinear_%ld", (long)getpid());
    snprintf(casefile, sizeof casefile, "%s.json", dir);
    if (pipe_write_case(casefile, steel_json) != 0) {
        check(0, "write the case file", "%s", casefile);
        return;
    }
    app_run_opts o;
    app_run_opts_defaults(&o);
    o.outdir = dir;
    o.images = 0;
    o.reference = 0;
    app_report *r = NULL;
    eddy_error err = {0};
    eddy_status s = app_run_solve(casefile, &o, &r, &err);
    int ok = s == EDDY_OK && r != NULL && r->npoint == 2;
    for (int k = 0; ok && k < r->npoint; k++)
        ok = r->info[k].newton.converged && r->info[k].newton.n_residual >= 1 &&
             r->f[k].force_method != NULL && strcmp(r->f[k].force_method, "stress_tensor") == 0;
    check(ok, "solve of a steel plate: every point converged, forces from the stress tensor",
          "%s", s == EDDY_OK ? "" : err.msg);
    app_report_free(r);
    char path[400], text[65536];
    snprintf(path, sizeof path, "%s/result.json", dir);
    pipe_read_text(path, text, sizeof text);
    check(strstr(text, "\"force_method\":\t\"stress_tensor\"") != NULL &&
              strstr(text, "\"newton\":") != NULL && strstr(text, "\"residual_history\":") != NULL,
          "result.json records the force method and the Newton history", "%s", path);
    /* Newton held to one step cannot converge from the static field */
    o.max_newton = 1;
    r = NULL;
    memset(&err, 0, sizeof err);
    s = app_run_solve(casefile, &o, &r, &err);
    check(s == EDDY_ERR_NUMERIC && strstr(err.msg, "Newton-Raphson did not converge") != NULL &&
              strstr(err.msg, "m/s") != NULL && eddy_exit_code(s) == 1,
          "a Newton failure is an error with a clear message and exit status 1", "%s (exit %d)",
          err.msg, eddy_exit_code(s));
    app_report_free(r);
    char cmd[700];
    snprintf(cmd, sizeof cmd, "rm -rf '%s' '%s'", dir, casefile);
    if (system(cmd) != 0)
        printf("# could not remove %s\n", dir);
}

int main(void)
{
    test_interpolant();
    test_reader();
    test_straight_line();
    test_steel_plate();
    test_saturating_yoke();
    test_pipeline();
    return check_summary();
}
