/*
 * test_pass.c - the implicit time steps of the solver (sol_stepper,
 * solver/sol_step.c) against the diffusion of a field into a conductor.
 *
 * The problem: a periodic strip 0 <= x < lambda, 0 <= y <= L, filled with a
 * conductor (sigma, mu_r = 1), A = 0 on y = 0 and y = L, and a source
 * current J_z = J0 cos(k x), k = 2 pi / lambda, switched on at t = 0 against
 * A = 0.  Then
 *
 *     sigma dA/dt - nu (A_xx + A_yy) = J0 cos(k x)
 *
 * has the solution (separation of variables, the sine series of 1 on
 * 0 < y < L)
 *
 *     A = cos(k x) sum_{n odd} b_n (1 - exp(-t / tau_n)) sin(n pi y / L),
 *     b_n = 4 J0 / (n pi nu (k_n^2 + k^2)),  k_n = n pi / L,
 *     tau_n = sigma / (nu (k_n^2 + k^2)),
 *
 * the slab with uniform heat production and zero surface temperature of
 * H. S. Carslaw and J. C. Jaeger, Conduction of Heat in Solids, 2nd ed.,
 * Oxford 1959, ch. III (the Fourier series solution of the slab), with the
 * extra k^2 of the cos(k x) dependence; cited from memory and re-derived
 * here.  tau_1 = mu0 sigma / (k_1^2 + k^2) is the diffusion time of the
 * order mu0 sigma L^2 (PHYSICS.md).
 *
 * Checks: the field against the series at several times (space and time
 * errors together), the steady limit against the solver's own v = 0 solve,
 * the observed order of backward Euler (1) and BDF2 (2) under step
 * refinement against a fine-step solution on the same grid, and stability
 * (monotone decay to the steady field) at steps of 100 tau_1.
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "tests/check.h"
#include "tests/pipeline.h"

#define PI 3.14159265358979323846
#define MU0 EDDY_MU0

#define SIGMA 3.0e7       /* S/m, a round value of a good conductor (demo data) */
#define J0 1.0e6          /* A/m^2 */
#define LAMBDA 0.040      /* m, period along x */
#define THICK 0.010       /* m, L */

#define TOL_SERIES 0.005  /* field vs the series, relative to its largest value at that time:
                           * the grid's second-order error (h = 0.25 mm, (k_1 h)^2 / 12 ~ 5e-4,
                           * larger at 0.1 tau_1 while the diffusion layer is ~1 mm thick)
                           * and BDF2's at dt = tau_1 / 100 */
#define TOL_STEADY 1e-9   /* steady limit vs the v = 0 solve (round-off of 1e-9 relative) */
#define ORDER_BE_LO 0.9   /* observed orders, common practice for an asymptotic range */
#define ORDER_BE_HI 1.1
#define ORDER_BDF2_LO 1.85
#define ORDER_BDF2_HI 2.15
#define TOL_STABLE 1e-6   /* error left after 12 steps of 100 tau_1 */
#define TOL_ROUNDOFF 1e-13 /* relative changes below this are round-off, not growth */

static const char *strip_case(const char *size)
{
    static char buf[512];
    snprintf(buf, sizeof buf,
             "{\"name\":\"strip\",\"length_unit\":\"mm\","
             "\"domain\":{\"x\":[0,40],\"y\":[0,10],\"x_boundary\":\"periodic\"},"
             "\"regions\":[{\"material\":\"aluminium_6061_t6\",\"box\":[0,0,40,10]}],"
             "\"speeds\":[0],\"mesh\":{\"max_size\":%s}}",
             size);
    return buf;
}

/* Uniform sigma and the source J0 cos(k x) as each cell's mean. */
static void set_strip(mesh_grid *g)
{
    double k = 2.0 * PI / LAMBDA;
    for (int j = 0; j < g->ncy; j++)
        for (int i = 0; i < g->ncx; i++) {
            size_t c = (size_t)i + (size_t)g->ncx * j;
            double x0 = g->x[i], x1 = g->x[i + 1];
            g->sigma[c] = SIGMA;
            g->nu[c] = 1.0 / MU0;
            g->jz[c] = J0 * (sin(k * x1) - sin(k * x0)) / (k * (x1 - x0));
        }
}

static double tau1(void)
{
    double k = 2.0 * PI / LAMBDA, k1 = PI / THICK;
    return MU0 * SIGMA / (k1 * k1 + k * k);
}

/* The series at (x, y), time t. */
static double series(double x, double y, double t)
{
    double k = 2.0 * PI / LAMBDA, nu = 1.0 / MU0, sum = 0.0;
    for (int n = 1; n < 4000; n += 2) {
        double kn = n * PI / THICK, q = kn * kn + k * k;
        double bn = 4.0 * J0 / (n * PI * nu * q);
        sum += bn * -expm1(-t * nu * q / SIGMA) * sin(kn * y);
    }
    return cos(k * x) * sum;
}

static int open_strip(pipe_run *p, const char *size)
{
    if (pipe_open(p, strip_case(size)) != 0)
        return -1;
    set_strip(p->g);
    eddy_error err = {0};
    if (sol_analyse(p->sys, NULL, &err) != EDDY_OK) {
        printf("# %s\n", err.msg);
        pipe_free(p);
        return -1;
    }
    return 0;
}

/* Integrate from A = 0 to t_end in nsteps equal steps of the given order;
 * the field at t_end into a.  Returns 0 or -1. */
static int integrate(const pipe_run *p, int order, long nsteps, double t_end, double *a)
{
    sol_stepper *st = NULL;
    eddy_error err = {0};
    eddy_status s = sol_stepper_alloc(p->sys, &st, &err);
    for (long k = 0; k < nsteps && s == EDDY_OK; k++)
        s = sol_stepper_advance(st, t_end / (double)nsteps, order, NULL, a, NULL, &err);
    sol_stepper_free(st);
    if (s != EDDY_OK) {
        printf("# stepper: %s\n", err.msg);
        return -1;
    }
    return 0;
}

static double max_abs(const double *a, size_t n)
{
    double m = 0.0;
    for (size_t k = 0; k < n; k++)
        m = fmax(m, fabs(a[k]));
    return m;
}

static double max_diff(const double *a, const double *b, size_t n)
{
    double m = 0.0;
    for (size_t k = 0; k < n; k++)
        m = fmax(m, fabs(a[k] - b[k]));
    return m;
}

static void test_series(void)
{
    pipe_run p;
    if (open_strip(&p, "0.25") != 0) {
        check(0, "diffusion into the strip: pipeline", "failed");
        return;
    }
    const mesh_grid *g = p.g;
    size_t nn = (size_t)g->nx * (size_t)g->ny;
    double *a = malloc(nn * sizeof *a);
    sol_stepper *st = NULL;
    eddy_error err = {0};
    eddy_status s = a != NULL ? sol_stepper_alloc(p.sys, &st, &err) : EDDY_ERR_NOMEM;
    double tau = tau1(), dt = tau / 100.0;
    const long at[] = {10, 50, 100, 300}; /* t = 0.1, 0.5, 1, 3 tau_1 */
    long done = 0;
    for (size_t q = 0; q < sizeof at / sizeof at[0] && s == EDDY_OK; q++) {
        while (done < at[q] && s == EDDY_OK) {
            s = sol_stepper_advance(st, dt, 2, NULL, a, NULL, &err);
            done++;
        }
        if (s != EDDY_OK)
            break;
        double t = sol_stepper_time(st), worst = 0.0, peak = 0.0;
        for (int j = 0; j < g->ny; j++)
            for (int i = 0; i < g->nx; i++) {
                double want = series(g->x[i], g->y[j], t);
                worst = fmax(worst, fabs(a[(size_t)i + (size_t)g->nx * j] - want));
                peak = fmax(peak, fabs(want));
            }
        char name[128];
        snprintf(name, sizeof name,
                 "field diffusing into a strip vs the slab series (Carslaw and Jaeger 1959, "
                 "from memory) at t = %.2f tau_1", t / tau);
        check(worst <= TOL_SERIES * peak, name,
              "max |A - series| %.3e of peak %.3e Wb/m (rel %.2e, tol %.1e), %d x %d nodes, "
              "dt = tau_1/100",
              worst, peak, worst / peak, TOL_SERIES, g->nx, g->ny);
    }
    if (s != EDDY_OK)
        check(0, "field diffusing into a strip", "stepper failed: %s", err.msg);
    sol_stepper_free(st);
    free(a);
    pipe_free(&p);
}

static void test_orders(void)
{
    pipe_run p;
    if (open_strip(&p, "1") != 0) {
        check(0, "time-step refinement: pipeline", "failed");
        return;
    }
    size_t nn = (size_t)p.g->nx * (size_t)p.g->ny;
    double *ref = malloc(nn * sizeof *ref), *a = malloc(nn * sizeof *a);
    double t_end = tau1();
    int ok = ref != NULL && a != NULL && integrate(&p, 2, 4096, t_end, ref) == 0;
    double scale = ok ? max_abs(ref, nn) : 1.0;
    for (int order = 1; order <= 2 && ok; order++) {
        const long steps[] = {8, 16, 32, 64};
        double e[4];
        for (int q = 0; q < 4 && ok; q++) {
            ok = integrate(&p, order, steps[q], t_end, a) == 0;
            e[q] = max_diff(a, ref, nn) / scale;
        }
        if (!ok)
            break;
        double o1 = log2(e[0] / e[1]), o2 = log2(e[1] / e[2]), o3 = log2(e[2] / e[3]);
        double lo = order == 1 ? ORDER_BE_LO : ORDER_BDF2_LO;
        double hi = order == 1 ? ORDER_BE_HI : ORDER_BDF2_HI;
        char name[160];
        snprintf(name, sizeof name,
                 "%s: observed order under step halving (Hairer and Wanner 1996, order %d)",
                 order == 1 ? "backward Euler" : "BDF2 (Euler first step)", order);
        check(o3 >= lo && o3 <= hi, name,
              "errors at t = tau_1 with 8/16/32/64 steps %.3e %.3e %.3e %.3e (vs 4096 BDF2 "
              "steps), orders %.3f %.3f %.3f (last in [%.2f, %.2f])",
              e[0], e[1], e[2], e[3], o1, o2, o3, lo, hi);
    }
    if (!ok)
        check(0, "time-step refinement", "failed");
    free(ref);
    free(a);
    pipe_free(&p);
}

static void test_large_steps(void)
{
    pipe_run p;
    if (open_strip(&p, "1") != 0) {
        check(0, "large steps: pipeline", "failed");
        return;
    }
    size_t nn = (size_t)p.g->nx * (size_t)p.g->ny;
    double *steady = malloc(nn * sizeof *steady), *a = malloc(nn * sizeof *a);
    eddy_error err = {0};
    /* the steady field of the same sources (the grid's sources were changed
     * after pipe_open's solve) */
    int ok = steady != NULL && a != NULL &&
             sol_solve(p.sys, 0.0, steady, NULL, &err) == EDDY_OK;
    double scale = ok ? max_abs(steady, nn) : 1.0;
    for (int order = 1; order <= 2 && ok; order++) {
        sol_stepper *st = NULL;
        ok = sol_stepper_alloc(p.sys, &st, &err) == EDDY_OK;
        double e_first = 0.0, e_max_later = 0.0, e = 1.0;
        int monotone = 1;
        for (int k = 0; k < 12 && ok; k++) {
            ok = sol_stepper_advance(st, 100.0 * tau1(), order, NULL, a, NULL, &err) == EDDY_OK;
            double en = max_diff(a, steady, nn) / scale;
            if (k == 0)
                e_first = en;
            else
                e_max_later = fmax(e_max_later, en);
            if (en > e * (1.0 + 1e-9) + TOL_ROUNDOFF) /* growth beyond round-off */
                monotone = 0;
            e = en;
        }
        sol_stepper_free(st);
        if (!ok)
            break;
        char name[160];
        snprintf(name, sizeof name,
                 "%s at steps of 100 tau_1: stable, decays to the v = 0 solve (L-stability, "
                 "Hairer and Wanner 1996)",
                 order == 1 ? "backward Euler" : "BDF2");
        check(e <= TOL_STABLE && e_max_later <= e_first && (order == 2 || monotone), name,
              "error after step 1 %.3e, largest later %.3e, after 12 steps %.3e (tol %.0e)%s",
              e_first, e_max_later, e, TOL_STABLE, monotone ? ", monotone" : "");
    }
    /* a long integration at ordinary steps ends on the steady field */
    if (ok) {
        ok = integrate(&p, 2, 400, 40.0 * tau1(), a) == 0;
        double d = ok ? max_diff(a, steady, nn) / scale : 1.0;
        check(ok && d <= TOL_STEADY, "BDF2 after 40 tau_1 equals the steady v = 0 solve",
              "max difference %.3e of the peak (tol %.0e; exp(-40) = 4e-18)", d, TOL_STEADY);
    }
    if (!ok)
        check(0, "large steps", "failed: %s", err.msg);
    free(steady);
    free(a);
    pipe_free(&p);
}

static void test_bad_input(void)
{
    pipe_run p;
    if (open_strip(&p, "1") != 0) {
        check(0, "stepper input checks: pipeline", "failed");
        return;
    }
    size_t nn = (size_t)p.g->nx * (size_t)p.g->ny;
    double *a = malloc(nn * sizeof *a);
    sol_stepper *st = NULL;
    eddy_error err = {0};
    int ok = a != NULL && sol_stepper_alloc(p.sys, &st, &err) == EDDY_OK;
    if (ok) {
        int r0 = sol_stepper_advance(st, 0.0, 2, NULL, a, NULL, &err) == EDDY_ERR_INPUT;
        int r1 = sol_stepper_advance(st, NAN, 2, NULL, a, NULL, &err) == EDDY_ERR_INPUT;
        int r2 = sol_stepper_advance(st, 1e-3, 3, NULL, a, NULL, &err) == EDDY_ERR_INPUT;
        check(r0 && r1 && r2 && sol_stepper_steps(st) == 0 && sol_stepper_time(st) == 0.0,
              "stepper refuses dt = 0, dt = NaN and order 3 and keeps its state",
              "dt=0 %d, NaN %d, order 3 %d, steps %ld", r0, r1, r2, sol_stepper_steps(st));
    } else {
        check(0, "stepper input checks", "alloc failed");
    }
    sol_stepper_free(st);
    sol_stepper_free(NULL);
    free(a);
    pipe_free(&p);
}

int main(void)
{
    test_series();
    test_orders();
    test_large_steps();
    test_bad_input();
    return check_summary();
}
