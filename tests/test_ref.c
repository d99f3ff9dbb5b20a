/*
 * test_ref.c - checks of the layered Fourier reference solver (solver/sol_ref.c)
 * against published analytic results and exact identities.
 *
 * Sources of the reference values:
 *  [R70]  W. R. Reitz, "Forces on moving magnets due to eddy currents",
 *         J. Appl. Phys. 41, 2067 (1970): thin conducting sheet, receding
 *         image; for a line current I at height h (2D form)
 *             drag = F0 v w/(v^2 + w^2), repulsion = F0 v^2/(v^2 + w^2),
 *             F0 = mu0 I^2/(4 pi h), w = 2/(mu0 sigma d).
 *  [POY]  Poynting's theorem in the steady moving frame: the mechanical
 *         power -F_x v equals the Joule loss (textbook, e.g. J. D. Jackson,
 *         "Classical Electrodynamics", 3rd ed., 1999, sec. 6.7; from memory).
 *  [LOW]  Low magnetic Reynolds number limit: J = sigma v B0_y, so
 *         drag = sigma v integral of B0_y^2 (first-order perturbation; the
 *         field B0 of a +y magnet is that of its two equivalent current
 *         sheets, the Biot-Savart law integrated in closed form; an
 *         infinitely permeable plane adds the mirror image with the same
 *         current direction: method of images, e.g. K. J. Binns,
 *         P. J. Lawrenson, C. W. Trowbridge, "The Analytical and Numerical
 *         Solution of Electric and Magnetic Fields", 1992, ch. 3; from memory).
 *  [EM]   Euler-Maclaurin summation formula: a periodic array of period
 *         lambda is the rectangle rule, step 2 pi/lambda, of the isolated
 *         wavenumber integral; for a magnet the integrand vanishes like k^2
 *         at k = 0, so the difference is O((2 pi a/lambda)^4).
 *  [SLAB] Line current I at height h over a slab of linear relative
 *         permeability m and thickness d, at rest: the classical multiple-
 *         image construction (reflection (m-1)/(m+1) at the top face, then
 *         repeated reflections inside the slab): images of strength
 *         c_0 = kappa I at depth h and c_n = -(1 - kappa^2) kappa^(2n-1) I at
 *         depth h + 2 n d below the top face, kappa = (m-1)/(m+1), each
 *         attracting the line by mu0 I c_n / (2 pi D_n), D_n = 2h + 2nd
 *         (method of images for permeable media, e.g. K. J. Binns,
 *         P. J. Lawrenson, C. W. Trowbridge, 1992, ch. 3; from memory; the
 *         series is re-derived in tests rather than taken from the solver).
 *  [IMG]  Line current above a perfectly conducting plane: repulsion
 *         mu0 I^2/(4 pi h) (image of opposite current at depth h; textbook
 *         method of images; the v -> inf limit of [R70]).
 */
#include "solver/sol_ref.h"
#include "tests/check.h"
#include "tests/quad.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

#define PI 3.14159265358979323846
#define MU0 (4.0e-7 * PI)

/* tolerances, next to their sources */
#define TOL_REITZ 1e-5      /* [R70]; residual expected O(d/h, (2v/w) d/h) <= 2e-5 */
#define TOL_POWER 1e-6      /* [POY] */
#define TOL_SYM 1e-9        /* exact symmetry, quadrature-level */
#define TOL_LIN 1e-9        /* exact linearity */
#define TOL_LOW 5e-3        /* [LOW] at Rm = 0.01; 1e-5 at Rm = 0.001 (error ~ Rm^2) */
#define TOL_PERIODIC 1e-6   /* [EM], lambda = 200 magnet widths: O((2 pi/200)^4) */
#define TOL_YOKE_FAR 1e-3   /* yoke 1000 magnet heights away */
#define TOL_IMG 5e-3        /* [IMG] at huge speed */
#define TOL_SLAB 1e-6       /* [SLAB]: square coil s = h/20, hexadecapole ~ (s/2h)^4 = 4e-7 */

static sol_ref_result solve(const sol_ref_problem *p, const sol_ref_source *s, int n, double v,
                            eddy_status *st)
{
    sol_ref_result r;
    eddy_error e;
    memset(&e, 0, sizeof e);
    *st = sol_ref_solve(p, s, n, v, &r, &e);
    if (*st != EDDY_OK)
        printf("# solve status %d: %s\n", (int)*st, e.msg);
    return r;
}


/* B_y at (x, y) of a current sheet K (A/m, +z) at x = xs over a <= y' <= b,
 * for y < a (below the sheet): mu0 K/(2 pi) [atan((b-y)/X) - atan((a-y)/X)]. */
static double sheet_by(double k_sheet, double xs, double a, double b, double x, double y)
{
    double X = x - xs;
    return MU0 * k_sheet / (2.0 * PI) * atan2(X * (b - a), X * X + (b - y) * (a - y));
}

/* static B_y of a +y magnet (br, rectangle) plus, if yoke, its image in the
 * plane y = yb (same current directions) */
static double magnet_by(const sol_ref_source *m, int yoke, double yb, double x, double y)
{
    double K = m->br_y / MU0;
    double by = sheet_by(K, m->x0, m->y0, m->y1, x, y) - sheet_by(K, m->x1, m->y0, m->y1, x, y);
    if (yoke) {
        double a = 2.0 * yb - m->y1, b = 2.0 * yb - m->y0;
        by += sheet_by(K, m->x0, a, b, x, y) - sheet_by(K, m->x1, a, b, x, y);
    }
    return by;
}

/* integral over the plate (all x, y_bot..y_top) of B0_y^2, x = xc + a tan(theta) */
static double int_by2(const sol_ref_problem *p, const sol_ref_source *m)
{
    enum { NG = 10, NTH = 400, NY = 40 };
    double gx[NG], gw[NG];
    quad_gauss_legendre(NG, gx, gw); /* the independent B0 integral */
    double xc = 0.5 * (m->x0 + m->x1), a = m->x1 - m->x0;
    double sum = 0.0;
    double dth = PI / NTH, dy = (p->y_top - p->y_bot) / NY;
    for (int it = 0; it < NTH; it++)
        for (int ig = 0; ig < NG; ig++) {
            double th = -0.5 * PI + dth * (it + 0.5 * (1.0 + gx[ig]));
            double x = xc + a * tan(th), jac = a / (cos(th) * cos(th)) * 0.5 * dth * gw[ig];
            double sy = 0.0;
            for (int iy = 0; iy < NY; iy++)
                for (int jg = 0; jg < NG; jg++) {
                    double y = p->y_bot + dy * (iy + 0.5 * (1.0 + gx[jg]));
                    double by = magnet_by(m, p->has_yoke, p->y_yoke, x, y);
                    sy += 0.5 * dy * gw[jg] * by * by;
                }
            sum += jac * sy;
        }
    return sum;
}

/* ------------------------------------------------------------------ tests */

static void test_reitz(void)
{
    /* [R70]: line current I = 100 A at h = 10 mm over a sheet with w = 1 m/s.
     * The line is a square coil of side s = h/100: a square's spectrum equals
     * the line's to O((k s)^4) (its quadrupole moment vanishes), < 1e-8 here.
     * The finite thickness d = 1e-9 m adds corrections O(kd) and
     * O(kappa k d^2) = O((2v/w)(d/h)) <= 2e-5 at v = 100 w. */
    const double I = 100.0, h = 0.01, s = h / 100.0, wr = 1.0, d = 1e-9;
    sol_ref_problem p = {.sigma = 2.0 / (MU0 * wr * d), .y_bot = -d, .y_top = 0.0,
                         .rel_tol = 1e-9};
    sol_ref_source c = {.kind = SOL_REF_COIL, .x0 = -0.5 * s, .x1 = 0.5 * s,
                        .y0 = h - 0.5 * s, .y1 = h + 0.5 * s, .jz = I / (s * s)};
    double F0 = MU0 * I * I / (4.0 * PI * h);
    const double ratio[] = {0.01, 0.1, 1.0, 10.0, 100.0};
    for (int i = 0; i < 5; i++) {
        double v = ratio[i] * wr;
        eddy_status st;
        sol_ref_result r = solve(&p, &c, 1, v, &st);
        char name[96];
        snprintf(name, sizeof name, "Reitz thin sheet drag, v = %g w [R70]", ratio[i]);
        check_close(name, r.force_x, -F0 * v * wr / (v * v + wr * wr), TOL_REITZ, 0.0);
        snprintf(name, sizeof name, "Reitz thin sheet repulsion, v = %g w [R70]", ratio[i]);
        check_close(name, r.force_y, -F0 * v * v / (v * v + wr * wr), TOL_REITZ, 0.0);
        check(st == EDDY_OK, "Reitz case solved within rel_tol", "status %d, n_eval %ld", (int)st,
              r.n_eval);
    }
}

static const sol_ref_problem thick = {.sigma = 3.0e7, .y_bot = -0.005, .y_top = 0.0,
                                      .periodic = 0, .lambda = 0.04, .has_yoke = 0,
                                      .y_yoke = 0.02, .rel_tol = 1e-9};
static const sol_ref_source magnet = {.kind = SOL_REF_MAGNET, .x0 = -0.005, .x1 = 0.005,
                                      .y0 = 0.002, .y1 = 0.012, .br_y = 1.2};

static void test_power_balance(void)
{
    /* [POY]: -F_x v = loss, loss from the field inside the plate.  Also the
     * lift from the Lorentz force in the plate equals the Maxwell-stress lift. */
    sol_ref_source two[2] = {magnet, magnet};
    two[1].x0 = 0.012;
    two[1].x1 = 0.022;
    two[1].br_y = -1.2;
    for (int per = 0; per < 2; per++)
        for (int yk = 0; yk < 2; yk++) {
            sol_ref_problem p = thick;
            p.periodic = per;
            p.has_yoke = yk;
            eddy_status st;
            double v = 20.0;
            sol_ref_result r = solve(&p, two, 2, v, &st);
            char name[96];
            snprintf(name, sizeof name, "power balance, %s, %s yoke [POY]",
                     per ? "periodic" : "isolated", yk ? "with" : "no");
            check_close(name, -r.force_x * v, r.loss, TOL_POWER, 0.0);
            snprintf(name, sizeof name, "Lorentz lift = stress lift, %s, %s yoke",
                     per ? "periodic" : "isolated", yk ? "with" : "no");
            check_close(name, r.force_y_lorentz, r.force_y, TOL_POWER, 0.0);
            check(st == EDDY_OK && r.force_x < 0.0 && r.force_y < 0.0,
                  "drag opposes motion, plate repelled", "fx %g fy %g", r.force_x, r.force_y);
        }
}

static void test_symmetry_linearity(void)
{
    eddy_status st1, st2, st3;
    sol_ref_source m2 = magnet;
    m2.x0 += 0.02; /* asymmetric pair: a magnet and a coil */
    m2.x1 += 0.03;
    m2.kind = SOL_REF_COIL;
    m2.jz = 5e6;
    sol_ref_source pair[2] = {magnet, m2};
    sol_ref_result a = solve(&thick, pair, 2, 7.0, &st1);
    sol_ref_result b = solve(&thick, pair, 2, -7.0, &st2);
    check_close("v -> -v flips force_x", b.force_x, -a.force_x, TOL_SYM, 0.0);
    check_close("v -> -v keeps force_y", b.force_y, a.force_y, TOL_SYM, 0.0);
    check_close("v -> -v keeps loss", b.loss, a.loss, TOL_SYM, 0.0);
    pair[0].br_y *= 2.0;
    pair[1].jz *= 2.0;
    sol_ref_result c = solve(&thick, pair, 2, 7.0, &st3);
    check_close("doubling sources quadruples force_x", c.force_x, 4.0 * a.force_x, TOL_LIN, 0.0);
    check_close("doubling sources quadruples force_y", c.force_y, 4.0 * a.force_y, TOL_LIN, 0.0);
    check_close("doubling sources quadruples loss", c.loss, 4.0 * a.loss, TOL_LIN, 0.0);
    check(st1 == EDDY_OK && st2 == EDDY_OK && st3 == EDDY_OK, "symmetry cases solved", "%d %d %d",
          (int)st1, (int)st2, (int)st3);
}

static void test_low_speed(void)
{
    /* [LOW]: drag -> sigma v int B0_y^2 at Rm = mu0 sigma v d = 0.01, with and
     * without a yoke touching the magnet top (image magnet). */
    for (int yk = 0; yk < 2; yk++) {
        sol_ref_problem p = thick;
        p.has_yoke = yk;
        p.y_yoke = magnet.y1 + 0.003;
        double d = p.y_top - p.y_bot;
        double ib2 = int_by2(&p, &magnet);
        const double rm[] = {0.01, 0.001};
        for (int i = 0; i < 2; i++) {
            double v = rm[i] / (MU0 * p.sigma * d);
            eddy_status st;
            sol_ref_result r = solve(&p, &magnet, 1, v, &st);
            char name[96];
            snprintf(name, sizeof name, "low-speed drag, Rm = %g, %s yoke [LOW]", rm[i],
                     yk ? "with" : "no");
            check_close(name, -r.force_x, p.sigma * v * ib2, i == 0 ? TOL_LOW : 1e-5,
                        0.0);
        }
    }
}

static void test_periodic_limit(void)
{
    /* [EM]: a period of 200 magnet widths reproduces the isolated result. */
    for (int yk = 0; yk < 2; yk++) {
        sol_ref_problem pi = thick, pp = thick;
        pi.has_yoke = pp.has_yoke = yk;
        pp.periodic = 1;
        pp.lambda = 200.0 * (magnet.x1 - magnet.x0);
        eddy_status s1, s2;
        sol_ref_result a = solve(&pi, &magnet, 1, 15.0, &s1);
        sol_ref_result b = solve(&pp, &magnet, 1, 15.0, &s2);
        char name[96];
        snprintf(name, sizeof name, "periodic lambda = 200 a -> isolated, force_x, %s yoke [EM]",
                 yk ? "with" : "no");
        check_close(name, b.force_x, a.force_x, TOL_PERIODIC, 0.0);
        snprintf(name, sizeof name, "periodic lambda = 200 a -> isolated, force_y, %s yoke [EM]",
                 yk ? "with" : "no");
        check_close(name, b.force_y, a.force_y, TOL_PERIODIC, 0.0);
        snprintf(name, sizeof name, "periodic lambda = 200 a -> isolated, loss, %s yoke [EM]",
                 yk ? "with" : "no");
        check_close(name, b.loss, a.loss, TOL_PERIODIC, 0.0);
    }
}

static void test_yoke(void)
{
    eddy_status s1, s2, s3;
    sol_ref_problem p = thick;
    sol_ref_result free_r = solve(&p, &magnet, 1, 15.0, &s1);
    p.has_yoke = 1;
    p.y_yoke = 10.0; /* 1000 magnet heights: image effect ~ (0.01/20)^2 */
    sol_ref_result far = solve(&p, &magnet, 1, 15.0, &s2);
    check_close("far yoke -> no yoke, force_x", far.force_x, free_r.force_x, TOL_YOKE_FAR, 0.0);
    check_close("far yoke -> no yoke, force_y", far.force_y, free_r.force_y, TOL_YOKE_FAR, 0.0);
    p.y_yoke = magnet.y1;
    sol_ref_result close = solve(&p, &magnet, 1, 15.0, &s3);
    check(close.force_x < free_r.force_x && close.force_y < free_r.force_y,
          "yoke on the magnet increases drag and repulsion (image)",
          "fx %g vs %g, fy %g vs %g", close.force_x, free_r.force_x, close.force_y,
          free_r.force_y);
}

static void test_permeable_slab(void)
{
    /* [SLAB] at rest for three permeabilities and two thicknesses; then, at
     * speed, [POY] for a magnetisable conductor (the loss is computed from
     * the field inside the slab, the drag from the reflection). */
    const double I = 100.0, h = 0.01, s = h / 20.0;
    sol_ref_source c = {.kind = SOL_REF_COIL, .x0 = -0.5 * s, .x1 = 0.5 * s,
                        .y0 = h - 0.5 * s, .y1 = h + 0.5 * s, .jz = I / (s * s)};
    const double mur[3] = {2.0, 100.0, 5000.0}, dd[2] = {0.002, 0.05};
    for (int a = 0; a < 3; a++)
        for (int b = 0; b < 2; b++) {
            sol_ref_problem p = {.sigma = 5e6, .chi = mur[a] - 1.0, .y_bot = -dd[b],
                                 .y_top = 0.0, .rel_tol = 1e-10};
            double kap = (mur[a] - 1.0) / (mur[a] + 1.0), sum = kap / (2.0 * h);
            double cn = (1.0 - kap * kap) * kap; /* magnitude of c_1 / I */
            for (int n = 1; n < 200000 && cn > 1e-18; n++) {
                sum -= cn / (2.0 * h + 2.0 * n * dd[b]);
                cn *= kap * kap;
            }
            double want = MU0 * I * I / (2.0 * PI) * sum; /* plate pulled up, +y */
            eddy_status st;
            sol_ref_result r = solve(&p, &c, 1, 0.0, &st);
            char name[128];
            snprintf(name, sizeof name,
                     "permeable slab at rest, mu_r %g, d = %g h: attraction = image series [SLAB]",
                     mur[a], dd[b] / h);
            check_close(name, r.force_y, want, TOL_SLAB, 0.0);
            check(st == EDDY_OK && r.force_x == 0.0 && r.loss == 0.0,
                  "permeable slab at rest: no drag, no loss", "fx %g loss %g", r.force_x, r.loss);
            double v = 5.0;
            r = solve(&p, &c, 1, v, &st);
            snprintf(name, sizeof name, "power balance, permeable slab mu_r %g, d = %g h [POY]",
                     mur[a], dd[b] / h);
            check_close(name, -r.force_x * v, r.loss, TOL_POWER, 0.0);
        }
    /* the permeable form at chi -> 0 joins the non-magnetic one smoothly */
    sol_ref_problem p0 = thick, p1 = thick;
    p1.chi = 1e-7;
    eddy_status s0, s1;
    sol_ref_result r0 = solve(&p0, &magnet, 1, 20.0, &s0), r1 = solve(&p1, &magnet, 1, 20.0, &s1);
    check_close("chi = 1e-7 drag joins chi = 0 within 1e-6", r1.force_x, r0.force_x, 1e-6, 0.0);
    check_close("chi = 1e-7 lift joins chi = 0 within 1e-6", r1.force_y, r0.force_y, 1e-6, 0.0);
}

static void test_image_limit(void)
{
    /* [IMG]: thick plate at very high speed is a perfect conductor for the
     * wavenumbers that matter: repulsion -> mu0 I^2/(4 pi h), drag -> 0.
     * Residual ~ 2 sqrt(k/kappa) with k ~ 1/(2h): about 2e-3 at kappa = 3.8e7/m. */
    const double I = 100.0, h = 0.01, s = h / 100.0;
    sol_ref_source c = {.kind = SOL_REF_COIL, .x0 = -0.5 * s, .x1 = 0.5 * s,
                        .y0 = h - 0.5 * s, .y1 = h + 0.5 * s, .jz = I / (s * s)};
    eddy_status st;
    sol_ref_result r = solve(&thick, &c, 1, 1.0e6, &st);
    double F0 = MU0 * I * I / (4.0 * PI * h);
    check_close("perfect-conductor image repulsion [IMG]", r.force_y, -F0, TOL_IMG, 0.0);
    check(fabs(r.force_x) < TOL_IMG * F0, "perfect-conductor limit has ~no drag [IMG]",
          "|fx|/F0 = %.3g", fabs(r.force_x) / F0);
}

static void test_error_estimate(void)
{
    /* self-consistency: the reported error estimate at rel_tol 1e-6 bounds the
     * difference to a rel_tol 1e-8 solution (isolated and periodic, magnet
     * touching the plate: the slowest spectra) */
    sol_ref_source t = magnet;
    t.y0 = 0.0;
    for (int per = 0; per < 2; per++) {
        sol_ref_problem p = thick;
        p.periodic = per;
        p.rel_tol = 1e-6;
        eddy_status s1, s2;
        sol_ref_result a = solve(&p, &t, 1, 10.0, &s1);
        p.rel_tol = 1e-8;
        sol_ref_result b = solve(&p, &t, 1, 10.0, &s2);
        char name[96];
        snprintf(name, sizeof name, "error estimate bounds true error, %s",
                 per ? "periodic" : "isolated");
        check(s1 == EDDY_OK && s2 == EDDY_OK && fabs(a.force_x - b.force_x) <= a.err_x &&
                  fabs(a.force_y - b.force_y) <= a.err_y && fabs(a.loss - b.loss) <= a.err_loss &&
                  a.err_x <= 1e-6 * fabs(a.force_x),
              name, "force_x true rel. err %.2g, estimate %.2g; n_eval %ld / %ld",
              fabs(a.force_x - b.force_x) / fabs(b.force_x), a.err_x / fabs(a.force_x), a.n_eval,
              b.n_eval);
    }
}

static void test_zero_and_validation(void)
{
    eddy_status st;
    sol_ref_result r = solve(&thick, &magnet, 1, 0.0, &st);
    check(st == EDDY_OK && r.force_x == 0.0 && r.force_y == 0.0 && r.loss == 0.0,
          "v = 0 gives zero forces and loss", "fx %g fy %g loss %g", r.force_x, r.force_y, r.loss);

    struct {
        const char *what;
        sol_ref_problem p;
        sol_ref_source s;
        int n;
        double v;
    } bad[16];
    int nb = 0;
#define BAD(label, stmt)                                                                           \
    do {                                                                                           \
        bad[nb].what = label;                                                                      \
        bad[nb].p = thick;                                                                         \
        bad[nb].s = magnet;                                                                        \
        bad[nb].n = 1;                                                                             \
        bad[nb].v = 1.0;                                                                           \
        {                                                                                          \
            sol_ref_problem *P = &bad[nb].p;                                                       \
            sol_ref_source *S = &bad[nb].s;                                                        \
            (void)P;                                                                               \
            (void)S;                                                                               \
            stmt;                                                                                  \
        }                                                                                          \
        nb++;                                                                                      \
    } while (0)
    BAD("sigma < 0", P->sigma = -1.0);
    BAD("sigma NaN", P->sigma = NAN);
    BAD("thickness 0", P->y_bot = P->y_top);
    BAD("source below plate top", S->y0 = -0.001);
    BAD("x1 <= x0", S->x1 = S->x0);
    BAD("y1 <= y0", S->y1 = S->y0);
    BAD("source above yoke", (P->has_yoke = 1, P->y_yoke = 0.01));
    BAD("lambda <= 0", (P->periodic = 1, P->lambda = 0.0));
    BAD("sources wider than a period", (P->periodic = 1, P->lambda = 0.009));
    BAD("rel_tol 0", P->rel_tol = 0.0);
    BAD("v infinite", bad[nb].v = INFINITY);
    BAD("nsrc 0", bad[nb].n = 0);
    BAD("unknown kind", S->kind = (sol_ref_kind)7);
    BAD("br_y NaN", S->br_y = NAN);
    BAD("periodic flag 2", P->periodic = 2);
#undef BAD
    for (int i = 0; i < nb; i++) {
        eddy_error e;
        memset(&e, 0, sizeof e);
        sol_ref_result rr;
        eddy_status s = sol_ref_solve(&bad[i].p, &bad[i].s, bad[i].n, bad[i].v, &rr, &e);
        char name[96];
        snprintf(name, sizeof name, "input validation: %s", bad[i].what);
        check(s == EDDY_ERR_INPUT && e.msg[0] != '\0', name, "status %d, \"%s\"", (int)s, e.msg);
    }
    eddy_status s = sol_ref_solve(NULL, &magnet, 1, 1.0, &r, NULL);
    check(s == EDDY_ERR_INPUT, "input validation: NULL problem, NULL err", "status %d", (int)s);
}

int main(void)
{
    test_reitz();
    test_power_balance();
    test_symmetry_linearity();
    test_low_speed();
    test_periodic_limit();
    test_yoke();
    test_image_limit();
    test_permeable_slab();
    test_error_estimate();
    test_zero_and_validation();
    return check_summary();
}
