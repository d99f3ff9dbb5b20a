/*
 * test_rz.c - the axisymmetric (r-z) geometry against closed forms from
 * outside the project: the static field of a current loop and of an axially
 * magnetised cylinder (complete elliptic integrals), the thin-walled tube
 * around a small magnet (MacLatchy, Backman and Bogan 1993), a finite
 * magnet in a thick tube at low speed against an independent quadrature of
 * current loops, power balance and Maxwell stress against the Lorentz drag
 * over four decades of magnetic Reynolds number, second-order convergence,
 * the reversal of the drag with the speed, Newton-Raphson on a saturable
 * steel tube (energy conservation), and the reports of an r-z run (units of
 * the whole ring, the layered reference declined).
 *
 * Lengths in the cases are in mm; every closed form is evaluated in SI.
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "tests/check.h"
#include "tests/pipeline.h"

#define PI 3.14159265358979323846
#define MU0 EDDY_MU0

/* Tolerances (named here, as every test file does). */
#define TOL_LOOP 0.01        /* grid vs closed-form loop field, on and off the axis */
#define TOL_DIPOLE 0.01      /* grid vs MacLatchy-Backman-Bogan thin-tube coefficient */
#define TOL_THICK 0.01       /* grid F/v vs sigma integral B_r^2 dV of summed loops */
#define TOL_POWER 0.01       /* drag x speed = loss at every point */
#define TOL_STRESS 0.01      /* Maxwell-stress drag vs Lorentz drag at every point */
#define TOL_REVERSE 1e-3     /* F(-v) = -F(v) (the grid is not exactly mirror-symmetric) */
#define ORDER_MIN 1.6        /* observed order of the drag on three grids */
#define ORDER_MAX 2.6

/* ---------------------------------------------------------------------- */
/* Complete elliptic integrals by the arithmetic-geometric mean            */
/* (M. Abramowitz and I. A. Stegun, "Handbook of Mathematical Functions",  */
/* 1964, 17.6.1-17.6.4): with a0 = 1, b0 = sqrt(1 - m), c0 = sqrt(m),       */
/* K(m) = pi / (2 a_N), E(m) = K(m) (1 - sum_n 2^(n-1) c_n^2).  m = k^2.   */
/* ---------------------------------------------------------------------- */
static void ellip_ke(double m, double *kk, double *ee)
{
    double a = 1.0, b = sqrt(1.0 - m), c = sqrt(m), sum = 0.5 * m, pw = 0.5;
    for (int n = 0; n < 40 && fabs(c) > 1e-17; n++) {
        double an = 0.5 * (a + b);
        c = 0.5 * (a - b);
        b = sqrt(a * b);
        a = an;
        pw *= 2.0;
        sum += pw * c * c;
    }
    *kk = PI / (2.0 * a);
    *ee = *kk * (1.0 - sum);
}

/* Field of a circular loop of radius a carrying I (A) at (r, z), z from the
 * loop's plane: J. D. Jackson, "Classical Electrodynamics", 3rd ed., 1999,
 * section 5.5, eq. 5.37 for A_phi (with k^2 = 4 a r / ((a + r)^2 + z^2));
 * B_r and B_z from its derivatives in the usual closed form (e.g. Jackson
 * problem 5.x; Smythe, "Static and Dynamic Electricity", 1950, 7.10, from
 * memory).  psi = r A_phi (Wb per radian). */
static void loop_field(double a, double cur, double r, double z, double *psi, double *br,
                       double *bz)
{
    double s2 = (a + r) * (a + r) + z * z, d2 = (a - r) * (a - r) + z * z;
    double m = 4.0 * a * r / s2, kk, ee;
    ellip_ke(m, &kk, &ee);
    double c = MU0 * cur / (2.0 * PI * sqrt(s2));
    *bz = c * (kk + (a * a - r * r - z * z) / d2 * ee);
    *br = r > 0.0 ? c * z / r * (-kk + (a * a + r * r + z * z) / d2 * ee) : 0.0;
    if (r <= 0.0) {
        *psi = 0.0;
        return;
    }
    double k = sqrt(m);
    *psi = r * MU0 * cur / (PI * k) * sqrt(a / r) * ((1.0 - 0.5 * m) * kk - ee);
}

/* 4 x 4 Gauss-Legendre points on [-1, 1] (Abramowitz and Stegun 25.4.30). */
static const double gl4_x[4] = {-0.8611363115940526, -0.3399810435848563, 0.3399810435848563,
                                0.8611363115940526};
static const double gl4_w[4] = {0.3478548451374538, 0.6521451548625461, 0.6521451548625461,
                                0.3478548451374538};

/* The field of a coil of rectangular cross-section r0..r1, z0..z1 with the
 * total current cur spread uniformly over it: loops summed over n x n
 * Gauss-Legendre points per axis on 4 x 4 point panels. */
static void coil_field(double r0, double r1, double z0, double z1, double cur, int panels,
                       double r, double z, double *psi, double *br, double *bz)
{
    *psi = *br = *bz = 0.0;
    double hr = (r1 - r0) / panels, hz = (z1 - z0) / panels;
    for (int pr = 0; pr < panels; pr++)
        for (int pz = 0; pz < panels; pz++)
            for (int u = 0; u < 4; u++)
                for (int w = 0; w < 4; w++) {
                    double a = r0 + hr * (pr + 0.5 + 0.5 * gl4_x[u]);
                    double zc = z0 + hz * (pz + 0.5 + 0.5 * gl4_x[w]);
                    double wt = 0.25 * gl4_w[u] * gl4_w[w] / ((double)panels * panels);
                    double p1, b1, b2;
                    loop_field(a, cur * wt, r, z - zc, &p1, &b1, &b2);
                    *psi += p1;
                    *br += b1;
                    *bz += b2;
                }
}

/* Index of the node of v[0..n-1] nearest to t. */
static int nearest(const double *v, int n, double t)
{
    int best = 0;
    for (int k = 1; k < n; k++)
        if (fabs(v[k] - t) < fabs(v[best] - t))
            best = k;
    return best;
}

/* ---------------------------------------------------------------------- */
/* A current ring (10 mm mean radius, 2 x 2 mm section, 1000 A) in a       */
/* zero box of 400 mm: psi and B at nodes on and off the axis against the   */
/* closed form summed over the section (2 x 2 panels of 4 x 4 Gauss loops). */
/* Measured while writing this test: worst B error 1.8 %, 0.42 %, 0.093 %   */
/* and psi error 0.60 %, 0.15 %, 0.048 % with the default grid refined 1, 2 */
/* and 4 times; the check runs the refine-2 grid.                           */
/* ---------------------------------------------------------------------- */
static const char *ring_case =
    "{\"name\":\"ring\",\"geometry\":\"axisymmetric\",\"length_unit\":\"mm\","
    "\"domain\":{\"r\":[0,400],\"z\":[-400,400],\"z_boundary\":\"zero\"},"
    "\"regions\":[{\"name\":\"coil\",\"box\":[9,-1,11,1],\"current\":1000}],"
    "\"speeds\":[0],\"mesh\":{\"max_size\":40%s}}";

static void test_ring(int refine)
{
    char json[1024], extra[64];
    snprintf(extra, sizeof extra, ",\"refine\":%d", refine);
    snprintf(json, sizeof json, ring_case, extra);
    pipe_run p;
    if (pipe_open(&p, json) != 0) {
        check(0, "ring: pipeline", "solve failed");
        return;
    }
    post_fields *pf = NULL;
    eddy_error err = {0};
    if (post_fields_alloc(p.g, &pf, &err) != EDDY_OK ||
        post_fields_compute(p.g, p.a, 0.0, pf, &err) != EDDY_OK) {
        check(0, "ring: node fields", "%s", err.msg);
        post_fields_free(pf);
        pipe_free(&p);
        return;
    }
    /* points (r, z) in m */
    static const double pts[][2] = {{0.0, 0.0}, {0.0, 0.005}, {0.0, 0.02}, {0.005, 0.005},
                                    {0.015, 0.004}, {0.02, -0.01}};
    double worst_b = 0.0, worst_psi = 0.0;
    for (size_t q = 0; q < sizeof pts / sizeof pts[0]; q++) {
        int i = nearest(p.g->x, p.g->nx, pts[q][1]), j = nearest(p.g->y, p.g->ny, pts[q][0]);
        double r = p.g->y[j], z = p.g->x[i], psi, br, bz;
        coil_field(0.009, 0.011, -0.001, 0.001, 1000.0, 2, r, z, &psi, &br, &bz);
        size_t k = (size_t)i + (size_t)p.g->nx * (size_t)j;
        double bmag = hypot(br, bz);
        double eb = hypot(pf->by[k] - br, pf->bx[k] - bz) / bmag;
        double ep = r > 0 ? fabs(p.a[k] - psi) / fabs(psi) : 0.0;
        printf("# ring (r %g mm, z %g mm): Br %.6g / %.6g T, Bz %.6g / %.6g T, psi %.6g / %.6g\n",
               r * 1e3, z * 1e3, pf->by[k], br, pf->bx[k], bz, p.a[k], psi);
        worst_b = fmax(worst_b, eb);
        worst_psi = fmax(worst_psi, ep);
    }
    check(worst_b < TOL_LOOP, "ring current, B on and off the axis vs the loop closed form "
          "(Jackson 3rd ed. 5.5)", "worst |dB|/|B| %.3g at 6 nodes (tol %.3g)", worst_b, TOL_LOOP);
    check(worst_psi < TOL_LOOP, "ring current, psi = r A_phi vs the loop closed form "
          "(Jackson 3rd ed. eq. 5.37)", "worst relative error %.3g (tol %.3g)", worst_psi, TOL_LOOP);
    post_fields_free(pf);
    pipe_free(&p);
}

/* The field of a uniformly magnetised cylinder (remanence br along +z,
 * radius rm, from z0 to z1) with mu_r = 1: the solenoid sheet K = br / mu0
 * on its side (PHYSICS.md; e.g. Jackson 3rd ed. section 5.10), summed as
 * loops over n panels of 4 Gauss points along z. */
static void magnet_field(double br, double rm, double z0, double z1, int panels, double r,
                         double z, double *brr, double *bz)
{
    double hz = (z1 - z0) / panels, k = br / MU0;
    *brr = *bz = 0.0;
    for (int p = 0; p < panels; p++)
        for (int u = 0; u < 4; u++) {
            double zc = z0 + hz * (p + 0.5 + 0.5 * gl4_x[u]), psi, b1, b2;
            loop_field(rm, k * 0.5 * hz * gl4_w[u], r, z - zc, &psi, &b1, &b2);
            *brr += b1;
            *bz += b2;
        }
}

/* ---------------------------------------------------------------------- */
/* An axially magnetised cylinder magnet (10 mm radius, 20 mm long,         */
/* 1.2 T, mu_r = 1) in a 600 mm zero box: B_z on the axis against the       */
/* closed form of a finite solenoid, B_z(z) = (Br/2) [(z + L/2) /           */
/* sqrt((z + L/2)^2 + R^2) - (z - L/2) / sqrt((z - L/2)^2 + R^2)] (a        */
/* handbook formula, from memory), and B off the axis against the summed    */
/* loops.                                                                   */
/* ---------------------------------------------------------------------- */
static void test_magnet_static(void)
{
    const char *json =
        "{\"name\":\"mag\",\"geometry\":\"axisymmetric\",\"length_unit\":\"mm\","
        "\"domain\":{\"r\":[0,300],\"z\":[-300,300]},"
        "\"materials\":{\"pm\":{\"remanence\":1.2,\"relative_permeability\":1}},"
        "\"regions\":[{\"name\":\"magnet\",\"material\":\"pm\",\"box\":[0,-10,10,10],"
        "\"magnetization_angle\":90}],"
        "\"speeds\":[0],\"mesh\":{\"max_size\":30,\"refine\":2}}";
    pipe_run p;
    if (pipe_open(&p, json) != 0) {
        check(0, "magnet: pipeline", "solve failed");
        return;
    }
    post_fields *pf = NULL;
    eddy_error err = {0};
    if (post_fields_alloc(p.g, &pf, &err) != EDDY_OK ||
        post_fields_compute(p.g, p.a, 0.0, pf, &err) != EDDY_OK) {
        check(0, "magnet: node fields", "%s", err.msg);
        post_fields_free(pf);
        pipe_free(&p);
        return;
    }
    const double br = 1.2, rm = 0.01, half = 0.01;
    double worst_axis = 0.0, worst_off = 0.0;
    static const double zs[] = {0.0, 0.005, 0.015, 0.03};
    for (size_t q = 0; q < sizeof zs / sizeof zs[0]; q++) {
        int i = nearest(p.g->x, p.g->nx, zs[q]);
        double z = p.g->x[i];
        double want = 0.5 * br * ((z + half) / hypot(z + half, rm) - (z - half) / hypot(z - half, rm));
        /* inside the magnet B = mu0 H + Br: the node value is B */
        worst_axis = fmax(worst_axis, fabs(pf->bx[i] - want) / fabs(want));
        printf("# magnet axis z %g mm: Bz %.6g / %.6g T\n", z * 1e3, pf->bx[i], want);
    }
    static const double pts[][2] = {{0.015, 0.0}, {0.015, 0.012}, {0.005, 0.02}, {0.03, -0.02}};
    for (size_t q = 0; q < sizeof pts / sizeof pts[0]; q++) {
        int i = nearest(p.g->x, p.g->nx, pts[q][1]), j = nearest(p.g->y, p.g->ny, pts[q][0]);
        double r = p.g->y[j], z = p.g->x[i], brr, bz;
        magnet_field(br, rm, -half, half, 40, r, z, &brr, &bz);
        size_t k = (size_t)i + (size_t)p.g->nx * (size_t)j;
        double e = hypot(pf->by[k] - brr, pf->bx[k] - bz) / hypot(brr, bz);
        worst_off = fmax(worst_off, e);
        printf("# magnet (r %g mm, z %g mm): Br %.6g / %.6g T, Bz %.6g / %.6g T\n", r * 1e3,
               z * 1e3, pf->by[k], brr, pf->bx[k], bz);
    }
    check(worst_axis < TOL_LOOP, "axial magnet, B_z on the axis vs the finite-solenoid closed "
          "form", "worst relative error %.3g at 4 nodes (tol %.3g)", worst_axis, TOL_LOOP);
    check(worst_off < TOL_LOOP, "axial magnet, B off the axis vs the solenoid sheet K = Br/mu0 "
          "summed from loops (Jackson 3rd ed. 5.5)", "worst |dB|/|B| %.3g at 4 nodes (tol %.3g)",
          worst_off, TOL_LOOP);
    post_fields_free(pf);
    pipe_free(&p);
}

/* ---------------------------------------------------------------------- */
/* Thin-walled tube around a small magnet (point-dipole limit):             */
/* c = 45 mu0^2 m^2 sigma w / (1024 a^4), W. M. Saslow's problem as solved   */
/* by C. S. MacLatchy, P. Backman and L. Bogan, "A quantitative magnetic    */
/* braking experiment", Am. J. Phys. 61, 1096 (1993).  The magnet: radius   */
/* a/10, length sqrt(3)/2 of its diameter (a cylinder of that aspect has    */
/* no octupole moment, so its field at the wall is a dipole's to           */
/* (rm/a)^4); the wall: w = a/25 (finite-wall correction ~ (5/6)(w/a)^2 =   */
/* 0.13 %); the speed: mu0 sigma w v = 3.5e-4.                              */
/* ---------------------------------------------------------------------- */
static void test_thin_tube(void)
{
    const double a = 0.020, w = 0.0008, rm = 0.002, lm = sqrt(3.0) * rm, br = 1.2;
    const double sigma = 3.5e7, v = 0.01;
    char json[2048];
    snprintf(json, sizeof json,
             "{\"name\":\"thin-tube\",\"geometry\":\"axisymmetric\",\"length_unit\":\"m\","
             "\"domain\":{\"r\":[0,0.4],\"z\":[-0.4,0.4]},"
             "\"materials\":{\"pm\":{\"remanence\":%.17g,\"relative_permeability\":1},"
             "\"wall\":{\"conductivity\":%.17g}},"
             "\"regions\":[{\"name\":\"magnet\",\"material\":\"pm\","
             "\"box\":[0,%.17g,%.17g,%.17g],\"magnetization_angle\":90},"
             "{\"name\":\"tube\",\"material\":\"wall\",\"box\":[%.17g,-0.4,%.17g,0.4],"
             "\"moving\":true}],"
             "\"speeds\":[%.17g],\"mesh\":{\"max_size\":0.02}}",
             br, sigma, -0.5 * lm, rm, 0.5 * lm, a - 0.5 * w, a + 0.5 * w, v);
    pipe_run p;
    if (pipe_open(&p, json) != 0) {
        check(0, "thin tube: pipeline", "solve failed");
        return;
    }
    post_forces f;
    if (pipe_speed(&p, v, &f) != 0) {
        check(0, "thin tube: solve", "failed");
        pipe_free(&p);
        return;
    }
    double m = br / MU0 * PI * rm * rm * lm; /* A m^2 */
    double c_ref = 45.0 * MU0 * MU0 * m * m * sigma * w / (1024.0 * pow(a, 4));
    printf("# thin tube: %ld unknowns, drag %.6g N at %g m/s, low-speed slope %.6g N s/m\n",
           sol_unknowns(p.sys), f.drag, v, p.slope);
    check_close("thin tube around a small magnet: c = F/v vs 45 mu0^2 m^2 sigma w / (1024 a^4) "
                "(MacLatchy, Backman and Bogan, Am. J. Phys. 61, 1096, 1993)",
                f.drag / v, c_ref, TOL_DIPOLE, 0.0);
    /* the reported damping coefficient (sigma integral B_r^2 dV of the static
     * field, post_damping_coefficient) against the same closed form */
    check_close("thin tube: damping coefficient of the static field vs MacLatchy, Backman and "
                "Bogan (1993)", p.slope, c_ref, TOL_DIPOLE, 0.0);
    pipe_free(&p);
}

/* ---------------------------------------------------------------------- */
/* A finite cylinder magnet (10 mm radius, 20 mm long, 1.2 T, mu_r = 1) in  */
/* a thick tube (12 to 18 mm radius, 35 MS/m) in a 300 mm zero box.         */
/* ---------------------------------------------------------------------- */
#define THICK_SIGMA 3.5e7
#define THICK_T 0.006 /* wall thickness, m */

static void thick_case(char *json, size_t size, const char *speeds, const char *mesh)
{
    snprintf(json, size,
             "{\"name\":\"thick-tube\",\"geometry\":\"axisymmetric\",\"length_unit\":\"mm\","
             "\"domain\":{\"r\":[0,300],\"z\":[-300,300],\"z_boundary\":\"zero\"},"
             "\"materials\":{\"pm\":{\"remanence\":1.2,\"relative_permeability\":1},"
             "\"wall\":{\"conductivity\":%.17g}},"
             "\"regions\":[{\"name\":\"magnet\",\"material\":\"pm\",\"box\":[0,-10,10,10],"
             "\"magnetization_angle\":90},"
             "{\"name\":\"tube\",\"material\":\"wall\",\"box\":[12,-300,18,300],\"moving\":true}],"
             "\"speeds\":[%s],\"mesh\":{%s}}",
             THICK_SIGMA, speeds, mesh);
}

/* sigma * integral over the tube of B_r^2 2 pi r dr dz for the magnet's
 * field from the summed loops (magnet_field): 4-point Gauss-Legendre on
 * 3 panels across the wall and on panels along z of 1 mm within 60 mm of
 * the magnet and 20 mm beyond, out to the box's ends. */
static double thick_quadrature_slope(void)
{
    const double r0 = 0.012, r1 = 0.018, zend = 0.3, zin = 0.06;
    double sum = 0.0;
    int nzp_in = 120, nzp_out = 12;
    for (int side = 0; side < 3; side++) {
        /* side 0: |z| < zin; 1: z > zin; 2: z < -zin */
        int np = side == 0 ? nzp_in : nzp_out;
        double za = side == 0 ? -zin : (side == 1 ? zin : -zend);
        double zb = side == 0 ? zin : (side == 1 ? zend : -zin);
        double hz = (zb - za) / np;
        for (int pz = 0; pz < np; pz++)
            for (int w = 0; w < 4; w++) {
                double z = za + hz * (pz + 0.5 + 0.5 * gl4_x[w]);
                for (int pr = 0; pr < 3; pr++)
                    for (int u = 0; u < 4; u++) {
                        double hr = (r1 - r0) / 3.0;
                        double r = r0 + hr * (pr + 0.5 + 0.5 * gl4_x[u]), brr, bz;
                        magnet_field(1.2, 0.01, -0.01, 0.01, 40, r, z, &brr, &bz);
                        sum += 0.25 * hr * hz * gl4_w[u] * gl4_w[w] * 2.0 * PI * r * brr * brr;
                    }
            }
    }
    return THICK_SIGMA * sum;
}

static void test_thick_tube_low_speed(void)
{
    char json[2048];
    thick_case(json, sizeof json, "0.001", "\"max_size\":20,\"refine\":2");
    pipe_run p;
    if (pipe_open(&p, json) != 0) {
        check(0, "thick tube: pipeline", "solve failed");
        return;
    }
    post_forces f;
    double v = 0.001; /* mu0 sigma t v = 2.6e-4 */
    if (pipe_speed(&p, v, &f) != 0) {
        check(0, "thick tube: solve", "failed");
        pipe_free(&p);
        return;
    }
    double c_ref = thick_quadrature_slope();
    printf("# thick tube: %ld unknowns, F/v %.6g N s/m, solver's own static slope %.6g\n",
           sol_unknowns(p.sys), f.drag / v, p.slope);
    check_close("finite magnet in a thick tube at low speed: F/v vs sigma integral B_r^2 dV, "
                "B_r from loops summed over the solenoid sheet (Jackson 3rd ed. 5.5)",
                f.drag / v, c_ref, TOL_THICK, 0.0);
    pipe_free(&p);
}

/* Power balance (drag x speed = loss) and the Maxwell stress on cylinders
 * in the air on both sides of the wall against the Lorentz drag, at
 * mu0 sigma t v = 0.01, 0.1, 1, 10, 100; and the drag with the speed
 * reversed. */
static void test_thick_tube_sweep(void)
{
    const double rm_unit = EDDY_MU0 * THICK_SIGMA * THICK_T; /* Rm per m/s */
    double v[5];
    char speeds[256] = "";
    for (int k = 0; k < 5; k++) {
        v[k] = pow(10.0, k - 2) / rm_unit;
        char one[40];
        snprintf(one, sizeof one, "%s%.10g", k ? "," : "", v[k]);
        strcat(speeds, one);
    }
    char json[2048];
    thick_case(json, sizeof json, speeds, "\"max_size\":20,\"refine\":2");
    pipe_run p;
    if (pipe_open(&p, json) != 0) {
        check(0, "thick tube sweep: pipeline", "solve failed");
        return;
    }
    double worst_p = 0.0, worst_s = 0.0, at_p = 0.0, at_s = 0.0;
    int ok = 1;
    for (int k = 0; k < 5 && ok; k++) {
        post_forces f;
        if (pipe_speed(&p, v[k], &f) != 0) {
            ok = 0;
            break;
        }
        double ep = fabs(f.drag * v[k] - f.loss) / f.loss;
        double es = f.stress_ok ? fabs(f.drag_stress - f.drag) / f.drag : INFINITY;
        printf("# thick tube Rm %g: drag %.6g N, stress %.6g N, loss/v %.6g N, method %s\n",
               v[k] * rm_unit, f.drag, f.drag_stress, f.loss / v[k], f.force_method);
        if (ep > worst_p) {
            worst_p = ep;
            at_p = v[k] * rm_unit;
        }
        if (!(es <= worst_s)) {
            worst_s = es;
            at_s = v[k] * rm_unit;
        }
    }
    check(ok && worst_p < TOL_POWER, "thick tube: drag x speed = loss, Rm 0.01..100 (energy "
          "conservation)", "worst %.3g at Rm %g (tol %.3g)", worst_p, at_p, TOL_POWER);
    check(ok && worst_s < TOL_STRESS, "thick tube: Maxwell-stress drag on air cylinders vs "
          "Lorentz drag, Rm 0.01..100", "worst %.3g at Rm %g (tol %.3g)", worst_s, at_s,
          TOL_STRESS);
    post_forces fp, fm;
    if (pipe_speed(&p, v[2], &fp) == 0 && pipe_speed(&p, -v[2], &fm) == 0) {
        double e = fabs(fp.force_x + fm.force_x) / fabs(fp.force_x);
        check(e < TOL_REVERSE && fp.force_x < 0 && fm.force_x > 0,
              "thick tube: reversing the speed reverses the drag (mirror symmetry z -> -z)",
              "F_z(+v) %.6g N, F_z(-v) %.6g N, mismatch %.3g (tol %.3g)", fp.force_x, fm.force_x,
              e, TOL_REVERSE);
    } else {
        check(0, "thick tube: reversed speed", "solve failed");
    }
    pipe_free(&p);
}

/* The drag at Rm = 1 on three grids (refine 1, 2, 4 of a coarse base grid):
 * observed order log2((F1 - F2) / (F2 - F4)) near 2 (box integration and
 * the fitted fluxes are second order where Pe is small). */
static void test_thick_tube_order(void)
{
    const double v = 1.0 / (EDDY_MU0 * THICK_SIGMA * THICK_T);
    double drag[3];
    for (int q = 0; q < 3; q++) {
        char json[2048], mesh[128], sp[40];
        snprintf(mesh, sizeof mesh, "\"max_size\":40,\"growth\":1.4,\"refine\":%d", 1 << q);
        snprintf(sp, sizeof sp, "%.10g", v);
        thick_case(json, sizeof json, sp, mesh);
        pipe_run p;
        post_forces f;
        if (pipe_open(&p, json) != 0 || pipe_speed(&p, v, &f) != 0) {
            check(0, "thick tube order: solve", "failed");
            return;
        }
        drag[q] = f.drag;
        printf("# order: refine %d, %ld unknowns, drag %.9g N\n", 1 << q, sol_unknowns(p.sys),
               f.drag);
        pipe_free(&p);
    }
    double order = log2((drag[0] - drag[1]) / (drag[1] - drag[2]));
    check(order > ORDER_MIN && order < ORDER_MAX, "thick tube: observed order of the drag on "
          "three grids (second-order box integration)",
          "drags %.7g, %.7g, %.7g N: order %.3g (want %.1f..%.1f)", drag[0], drag[1], drag[2],
          order, ORDER_MIN, ORDER_MAX);
}

/* ---------------------------------------------------------------------- */
/* Saturable steel in r-z: the magnet stack of the thick-tube case inside a */
/* moving low-carbon steel tube (the library's B-H curve), solved by        */
/* Newton-Raphson.  The force on a magnetised conductor is the nodal        */
/* (total-current) stress; energy conservation (drag x speed = Joule loss   */
/* in steady state, no hysteresis in the model) checks it and the Newton    */
/* fields together.                                                          */
/* ---------------------------------------------------------------------- */
static void test_saturable_tube(void)
{
    const char *json =
        "{\"name\":\"steel-tube\",\"geometry\":\"axisymmetric\",\"length_unit\":\"mm\","
        "\"domain\":{\"r\":[0,300],\"z\":[-300,300]},"
        "\"materials\":{\"pm\":{\"remanence\":1.2,\"relative_permeability\":1}},"
        "\"regions\":[{\"name\":\"magnet\",\"material\":\"pm\",\"box\":[0,-10,10,10],"
        "\"magnetization_angle\":90},"
        "{\"name\":\"tube\",\"material\":\"steel_low_carbon\",\"box\":[12,-300,15,300],"
        "\"moving\":true}],"
        "\"speeds\":[0.5],\"mesh\":{\"max_size\":20,\"refine\":2}}";
    eddy_error err = {0};
    mesh_case *c = NULL;
    mesh_grid *g = NULL;
    sol_system *sys = NULL;
    sol_work *w = NULL;
    double *a = NULL, *nu = NULL;
    eddy_status s = mesh_case_parse(json, "steel-tube", &c, &err);
    if (s == EDDY_OK)
        s = mesh_grid_build(c, 0.0, &g, NULL, &err);
    if (s == EDDY_OK)
        s = sol_system_alloc(g, &sys, &err);
    if (s == EDDY_OK)
        s = sol_analyse(sys, NULL, &err);
    if (s == EDDY_OK)
        s = sol_work_alloc(sys, &w, &err);
    size_t nn = g != NULL ? (size_t)g->nx * (size_t)g->ny : 1;
    size_t nc = g != NULL ? (size_t)g->ncx * (size_t)g->ncy : 1;
    a = malloc(nn * sizeof *a);
    nu = malloc(nc * sizeof *nu);
    sol_newton_info nli;
    const double v = 0.5;
    if (s == EDDY_OK && (a == NULL || nu == NULL))
        s = EDDY_ERR_NOMEM;
    if (s == EDDY_OK)
        s = sol_solve_newton(sys, w, v, a, 0, nu, 0, &nli, NULL, &err);
    check(s == EDDY_OK && sol_is_nonlinear(sys) && nli.converged,
          "saturable steel tube in r-z: Newton-Raphson converges",
          "%d steps, residual %.3g, largest |B| in steel %.3g T (%s)", nli.iterations,
          nli.n_residual > 0 ? nli.residual[nli.n_residual - 1] : NAN, nli.b_max,
          s == EDDY_OK ? "ok" : err.msg);
    if (s == EDDY_OK) {
        mesh_grid gs = *g;
        gs.nu = nu;
        post_forces f;
        s = post_forces_compute(&gs, a, v, 0.0, &f, &err);
        double e = s == EDDY_OK ? fabs(f.drag * v - f.loss) / f.loss : INFINITY;
        printf("# steel tube: drag %.6g N (%s), line stress %.6g N, nodal %.6g N, J x B %.6g N, "
               "loss / v %.6g N\n", f.drag, f.force_method, f.drag_stress, -f.nodal_x,
               -f.lorentz_x, f.loss / v);
        check(s == EDDY_OK && strcmp(f.force_method, "stress_tensor") == 0 && e < TOL_POWER,
              "saturable steel tube in r-z: stress drag x speed = loss (energy conservation)",
              "drag %.6g N, loss / v %.6g N, mismatch %.3g (tol %.3g)", f.drag, f.loss / v, e,
              TOL_POWER);
    }
    free(a);
    free(nu);
    sol_work_free(w);
    sol_system_free(sys);
    mesh_grid_free(g);
    mesh_case_free(c);
}

/* The run's reports for an r-z case: the geometry and the units of the
 * whole ring in result.json, forces.csv and forces.png, the layered
 * reference skipped with its reason, the flux-line picture written. */
static int file_has(const char *path, const char *needle, size_t nlen)
{
    static char buf[1 << 20];
    FILE *f = fopen(path, "rb");
    if (f == NULL)
        return 0;
    size_t n = fread(buf, 1, sizeof buf, f);
    fclose(f);
    for (size_t k = 0; k + nlen <= n; k++)
        if (memcmp(buf + k, needle, nlen) == 0)
            return 1;
    return 0;
}

static void test_rz_reports(void)
{
    char dir[] = "/tmp/eddy2d-test-rz-XXXXXX";
    if (mkdtemp(dir) == NULL) {
        check(0, "r-z reports: temporary folder", "mkdtemp failed");
        return;
    }
    char json[2048];
    thick_case(json, sizeof json, "0.5, 5", "\"max_size\":20");
    app_run_opts o;
    app_run_opts_defaults(&o);
    o.reference = 1; /* asked for: must be skipped cleanly */
    eddy_status s;
    eddy_error err = {0};
    app_report *r = pipe_solve_text(dir, "tube", json, &o, &s, &err);
    check(s == EDDY_OK && r != NULL && r->ref_state == APP_REF_NOT_APPLICABLE &&
              strstr(r->ref_note, "planar") != NULL,
          "r-z run: the layered reference is skipped and says why", "%s",
          r != NULL ? r->ref_note : err.msg);
    char path[1200];
    snprintf(path, sizeof path, "%s/tube/result.json", dir);
    static const char *const want[] = {"\"geometry\":\t\"axisymmetric\"",
                                       "\"force\":\t\"N (the whole ring",
                                       "\"loss\":\t\"W (the whole ring)\"",
                                       "forces of the whole ring", "implants", NULL};
    int js = 1;
    for (int k = 0; want[k] != NULL; k++)
        js = js && file_has(path, want[k], strlen(want[k]));
    check(js, "r-z run: result.json states the geometry, N and W of the whole ring and the "
          "safety notice", "%s", path);
    snprintf(path, sizeof path, "%s/tube/forces.csv", dir);
    const char *hdr = "speed_m_per_s,drag_force_N,force_z_N,force_r_N,";
    check(file_has(path, hdr, strlen(hdr)),
          "r-z run: forces.csv columns in N and W", "%s", path);
    snprintf(path, sizeof path, "%s/tube/forces.png", dir);
    /* a tEXt chunk: keyword, NUL, text, then the chunk's CRC (4 bytes) */
    check(file_has(path, "eddy2d:unit\0N", 13) && !file_has(path, "eddy2d:unit\0N/m", 15),
          "r-z run: forces.png labelled in N (PNG text eddy2d:unit)", "%s", path);
    snprintf(path, sizeof path, "%s/tube/b_00_0.5mps.png", dir);
    check(file_has(path, "eddy2d:quantity", 15), "r-z run: the flux-density picture is written",
          "%s", path);
    app_report_free(r);
    char cmd[1200];
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", dir);
    if (system(cmd) != 0)
        printf("# could not remove %s\n", dir);
}

int main(void)
{
    test_ring(2);
    test_magnet_static();
    test_thin_tube();
    test_thick_tube_low_speed();
    test_thick_tube_sweep();
    test_thick_tube_order();
    test_saturable_tube();
    test_rz_reports();
    return check_summary();
}
