/*
 * design.c - brake-design answers from a force-speed curve.
 *
 * Monotone cubic interpolation (Fritsch and Carlson 1980), stopping
 * integrals, heating, conductivity at temperature, the finite-width
 * end-effect factor and disc-brake conversions.  See post/post.h for the
 * interface; the derivations that are not in the header follow.
 *
 * Stopping.  m dv/dt = -F_tot(v), F_tot = F(v) + F_extra > 0.  With
 * dx = v dt: dt = -m dv / F_tot and dx = -m v dv / F_tot, so from v0 down to
 * v1 the time and distance are integrals over v of m / F_tot and m v / F_tot.
 * The work done on the conductor is integral F dx = integral m v F / F_tot dv,
 * computed with its own integrand so that E_brake + F_extra x = m (v0^2 -
 * v1^2) / 2 is a genuine check of the quadrature, not an identity.
 * The interpolant is a cubic in v (or in ln v, or the exponential of one)
 * on each table interval and linear below the table, so the integrands are
 * smooth between the table speeds; the quadrature splits there.
 *
 * End-effect factor, derived (low magnetic Reynolds number, thin plate).
 * Coordinates: x along the motion, z across it (the depth of the 2D model),
 * plate -b <= z <= b, field B_y = B0 e^{ikx} for |z| < a and 0 beyond,
 * k = pi / tau.  In the magnet frame the fields are steady, so E = -grad phi
 * and J = sigma (E + v x B): J_x = -sigma dphi/dx, J_z = sigma (v B_y -
 * dphi/dz).  div J = 0 with phi = Phi(z) e^{ikx} gives
 *   k^2 Phi + d/dz (v B_y - Phi') = 0,
 * so Phi'' = k^2 Phi in each region; Phi is odd in z, J_z = 0 at z = b, and
 * Phi and J_z are continuous at z = a.  Hence Phi = A sinh(kz) inside and
 * C cosh(k(b - z)) outside, A sinh(ka) = C cosh(kc) with c = b - a, and
 *   v B0 - k A cosh(ka) = k C sinh(kc)  =>  k A = v B0 / (cosh(ka) [1 + tanh(ka) tanh(kc)]).
 * The drag is proportional to integral J_z B0 dz over |z| < a, equal to
 * sigma B0 (2 a v B0 - 2 A sinh(ka)); the endless-plate value is
 * sigma 2 a v B0^2, so the ratio is
 *   k_e = 1 - tanh(ka) / (ka [1 + tanh(ka) tanh(kc)]),
 * with ka = pi w_a / (2 tau) and kc = pi (w_p - w_a) / (2 tau).
 * Written as [(p - tanh p) + p tanh p tanh q] / (p [1 + tanh p tanh q]) it
 * is evaluated without cancellation, p - tanh p by its series for small p.
 */
#include "design/design.h"

#include <float.h>
#include <math.h>
#include <stddef.h>
#include <stdlib.h>
#include <string.h>


#define DEFAULT_REL_TOL 1e-9
#define MIN_REL_TOL 1e-13
#define MAX_REL_TOL 1e-3
#define MAX_BISECT 60       /* depth limit of the adaptive quadrature */
#define GL_N 10             /* Gauss-Legendre points per panel        */
#define MAX_SAMPLES 10000000

/* ------------------------------------------------------------------------ */
/* 1. Monotone cubic interpolation                                           */
/* ------------------------------------------------------------------------ */

eddy_status design_pchip_slopes(int n, const double *x, const double *y, double *d,
                              eddy_error *err)
{
    if (n < 2)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "monotone interpolation: need at least 2 points, got %d", n);
    if (x == NULL || y == NULL || d == NULL)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "monotone interpolation: NULL array");
    for (int i = 0; i < n; i++) {
        if (!isfinite(x[i]) || !isfinite(y[i]))
            return EDDY_RAISE(err, EDDY_ERR_INPUT,
                              "monotone interpolation: point %d (%g, %g) is not finite", i, x[i], y[i]);
        if (i > 0 && !(x[i] > x[i - 1]))
            return EDDY_RAISE(err, EDDY_ERR_INPUT,
                              "monotone interpolation: abscissae must increase strictly, but x[%d] = %g "
                              "follows x[%d] = %g", i, x[i], i - 1, x[i - 1]);
    }
    if (n == 2) {
        d[0] = d[1] = (y[1] - y[0]) / (x[1] - x[0]);
        return EDDY_OK;
    }
    /* Step 1 and 2: three-point derivatives, zero at a change of sign. */
    for (int k = 1; k < n - 1; k++) {
        double h0 = x[k] - x[k - 1], h1 = x[k + 1] - x[k];
        double s0 = (y[k] - y[k - 1]) / h0, s1 = (y[k + 1] - y[k]) / h1;
        if (s0 * s1 <= 0.0)
            d[k] = 0.0;
        else
            d[k] = (h1 * s0 + h0 * s1) / (h0 + h1);
    }
    {
        double h0 = x[1] - x[0], h1 = x[2] - x[1];
        double s0 = (y[1] - y[0]) / h0, s1 = (y[2] - y[1]) / h1;
        double e = ((2.0 * h0 + h1) * s0 - h0 * s1) / (h0 + h1);
        d[0] = (e * s0 > 0.0) ? e : 0.0;
    }
    {
        double h0 = x[n - 1] - x[n - 2], h1 = x[n - 2] - x[n - 3];
        double s0 = (y[n - 1] - y[n - 2]) / h0, s1 = (y[n - 2] - y[n - 3]) / h1;
        double e = ((2.0 * h0 + h1) * s0 - h0 * s1) / (h0 + h1);
        d[n - 1] = (e * s0 > 0.0) ? e : 0.0;
    }
    /* Step 3: the circle alpha^2 + beta^2 <= 9.  Shrinking a derivative
     * towards zero keeps the neighbouring interval inside the circle too,
     * so one pass suffices. */
    for (int k = 0; k < n - 1; k++) {
        double delta = (y[k + 1] - y[k]) / (x[k + 1] - x[k]);
        if (delta == 0.0) {
            d[k] = d[k + 1] = 0.0;
            continue;
        }
        double alpha = d[k] / delta, beta = d[k + 1] / delta;
        double s = alpha * alpha + beta * beta;
        if (s > 9.0) {
            double tau = 3.0 / sqrt(s);
            d[k] = tau * alpha * delta;
            d[k + 1] = tau * beta * delta;
        }
    }
    return EDDY_OK;
}

/* Interval k with x[k] <= xq < x[k+1], clamped to [0, n-2]. */
static int find_interval(int n, const double *x, double xq)
{
    int lo = 0, hi = n - 1;
    if (!(xq > x[0]))
        return 0;
    if (xq >= x[n - 1])
        return n - 2;
    while (hi - lo > 1) {
        int mid = lo + (hi - lo) / 2;
        if (x[mid] <= xq)
            lo = mid;
        else
            hi = mid;
    }
    return lo;
}

double design_pchip_eval(int n, const double *x, const double *y, const double *d, double xq)
{
    int k = find_interval(n, x, xq);
    double h = x[k + 1] - x[k];
    double t = (xq - x[k]) / h, u = 1.0 - t;
    /* Cubic Hermite basis on [0, 1]. */
    double h00 = (1.0 + 2.0 * t) * u * u, h10 = t * u * u;
    double h01 = t * t * (3.0 - 2.0 * t), h11 = -t * t * u;
    return h00 * y[k] + h01 * y[k + 1] + h * (h10 * d[k] + h11 * d[k + 1]);
}

double design_pchip_deriv(int n, const double *x, const double *y, const double *d, double xq)
{
    int k = find_interval(n, x, xq);
    double h = x[k + 1] - x[k];
    double t = (xq - x[k]) / h, u = 1.0 - t;
    double delta = (y[k + 1] - y[k]) / h;
    /* d/dx of the basis: h00' = -6 t u / h, h01' = +6 t u / h,
     * h10' = u (1 - 3t) (per unit of h d), h11' = t (3t - 2). */
    return 6.0 * t * u * delta + u * (1.0 - 3.0 * t) * d[k] + t * (3.0 * t - 2.0) * d[k + 1];
}

/* ------------------------------------------------------------------------ */
/* 2. Force curve                                                            */
/* ------------------------------------------------------------------------ */

static eddy_status check_table(int n, const double *speed, const double *force, eddy_error *err)
{
    if (n < 2)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "force table: need at least 2 speeds, got %d", n);
    if (speed == NULL || force == NULL)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "force table: NULL array");
    for (int i = 0; i < n; i++) {
        if (!isfinite(speed[i]) || !(speed[i] > 0.0))
            return EDDY_RAISE(err, EDDY_ERR_INPUT,
                              "force table: speed[%d] = %g m/s must be finite and positive", i, speed[i]);
        if (i > 0 && !(speed[i] > speed[i - 1]))
            return EDDY_RAISE(err, EDDY_ERR_INPUT,
                              "force table: speeds must increase strictly, but speed[%d] = %g m/s "
                              "follows speed[%d] = %g m/s", i, speed[i], i - 1, speed[i - 1]);
        if (!isfinite(force[i]) || force[i] < 0.0)
            return EDDY_RAISE(err, EDDY_ERR_INPUT,
                              "force table: force[%d] = %g N (at %g m/s) must be finite and >= 0", i,
                              force[i], speed[i]);
    }
    return EDDY_OK;
}

eddy_status design_force_curve_build(int n, const double *speed, const double *force,
                                   design_interp interp, design_force_curve **out,
                                   eddy_error *err)
{
    eddy_status st;
    design_force_curve *c;
    if (out == NULL)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "force curve: NULL output");
    *out = NULL;
    st = check_table(n, speed, force, err);
    if (st != EDDY_OK)
        return st;
    if (interp != DESIGN_INTERP_LIN && interp != DESIGN_INTERP_LOGV && interp != DESIGN_INTERP_LOGLOG)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "force curve: unknown interpolation %d", (int)interp);
    if (interp == DESIGN_INTERP_LOGLOG)
        for (int i = 0; i < n; i++)
            if (!(force[i] > 0.0))
                return EDDY_RAISE(err, EDDY_ERR_INPUT,
                                  "force table: force[%d] = %g N at %g m/s: log-log interpolation "
                                  "needs positive forces", i, force[i], speed[i]);
    c = calloc(1, sizeof *c);
    double *block = malloc(5 * (size_t)n * sizeof *block);
    if (c == NULL || block == NULL) {
        free(c);
        free(block);
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "force curve: out of memory for %d points", n);
    }
    c->n = n;
    c->interp = interp;
    c->speed = block;
    c->force = block + n;
    c->knot = block + 2 * (size_t)n;
    c->value = block + 3 * (size_t)n;
    c->slope = block + 4 * (size_t)n;
    memcpy(c->speed, speed, (size_t)n * sizeof *speed);
    memcpy(c->force, force, (size_t)n * sizeof *force);
    for (int i = 0; i < n; i++) {
        c->knot[i] = interp == DESIGN_INTERP_LIN ? speed[i] : log(speed[i]);
        c->value[i] = interp == DESIGN_INTERP_LOGLOG ? log(force[i]) : force[i];
    }
    st = design_pchip_slopes(n, c->knot, c->value, c->slope, err);
    if (st != EDDY_OK) {
        design_force_curve_free(c);
        return st;
    }
    *out = c;
    return EDDY_OK;
}

void design_force_curve_free(design_force_curve *c)
{
    if (c == NULL)
        return;
    free(c->speed); /* the block holding all five arrays */
    free(c);
}

double design_force_curve_eval(const design_force_curve *c, double v)
{
    if (!(v > 0.0))
        return 0.0;
    if (v < c->speed[0])
        return c->force[0] * (v / c->speed[0]);
    if (c->interp == DESIGN_INTERP_LIN)
        return design_pchip_eval(c->n, c->knot, c->value, c->slope, v);
    double y = design_pchip_eval(c->n, c->knot, c->value, c->slope, log(v));
    return c->interp == DESIGN_INTERP_LOGLOG ? exp(y) : y;
}

/* ------------------------------------------------------------------------ */
/* 3. Stopping                                                               */
/* ------------------------------------------------------------------------ */

void design_stop_defaults(design_stop_input *in)
{
    if (in == NULL)
        return;
    memset(in, 0, sizeof *in);
    in->mass = 1.0;
}

void design_stop_result_free(design_stop_result *res)
{
    if (res == NULL)
        return;
    free(res->s_speed); /* the block holding all four arrays */
    res->s_speed = res->s_distance = res->s_time = res->s_decel = NULL;
    res->n_samples = 0;
}

/* Gauss-Legendre nodes and weights on [-1, 1], by Newton's method on the
 * Legendre polynomial (three-term recurrence); exact for degree 2 GL_N - 1. */
typedef struct {
    double node[GL_N], weight[GL_N];
} gauss_rule;

static void gauss_rule_init(gauss_rule *g)
{
    for (int i = 0; i < GL_N; i++) {
        double z = cos(EDDY_PI * (i + 0.75) / (GL_N + 0.5)), dp = 1.0;
        for (int it = 0; it < 100; it++) {
            double p0 = 1.0, p1 = z;
            for (int j = 2; j <= GL_N; j++) {
                double p2 = ((2.0 * j - 1.0) * z * p1 - (j - 1.0) * p0) / j;
                p0 = p1;
                p1 = p2;
            }
            dp = GL_N * (z * p1 - p0) / (z * z - 1.0);
            double dz = p1 / dp;
            z -= dz;
            if (fabs(dz) < 1e-16)
                break;
        }
        /* recompute P_n' at the converged node */
        double p0 = 1.0, p1 = z;
        for (int j = 2; j <= GL_N; j++) {
            double p2 = ((2.0 * j - 1.0) * z * p1 - (j - 1.0) * p0) / j;
            p0 = p1;
            p1 = p2;
        }
        dp = GL_N * (z * p1 - p0) / (z * z - 1.0);
        g->node[i] = z;
        g->weight[i] = 2.0 / ((1.0 - z * z) * dp * dp);
    }
}

typedef struct {
    const design_force_curve *curve;
    double mass, extra, rel_tol;
    gauss_rule g;
    int evaluations;
} stop_ctx;

/* The three integrands at speed v: [0] distance m v / F_tot, [1] time
 * m / F_tot, [2] brake energy m v F / F_tot. */
static void integrands(const stop_ctx *s, double v, double f[3])
{
    double fb = design_force_curve_eval(s->curve, v);
    double ft = fb + s->extra;
    f[0] = s->mass * v / ft;
    f[1] = s->mass / ft;
    f[2] = s->mass * v * fb / ft;
}

static void gauss_panel(stop_ctx *s, double a, double b, double q[3])
{
    double c = 0.5 * (a + b), h = 0.5 * (b - a);
    q[0] = q[1] = q[2] = 0.0;
    for (int i = 0; i < GL_N; i++) {
        double f[3];
        integrands(s, c + h * s->g.node[i], f);
        for (int j = 0; j < 3; j++)
            q[j] += s->g.weight[i] * f[j];
    }
    for (int j = 0; j < 3; j++)
        q[j] *= h;
    s->evaluations += GL_N;
}

/* Adaptive bisection on [a, b] (a < b) given the whole-panel estimate;
 * adds the integrals to acc.  Returns 0, or -1 if the depth ran out. */
static int adapt(stop_ctx *s, double a, double b, const double whole[3], int depth, double acc[3])
{
    double m = 0.5 * (a + b), ql[3], qr[3];
    gauss_panel(s, a, m, ql);
    gauss_panel(s, m, b, qr);
    int ok = 1;
    /* The energy integrand is bounded by m v, so m b (b - a) bounds the
     * panel's energy; a tiny fraction of it is the floor for a zero force. */
    double floor_e = 1e-15 * s->mass * fabs(b) * (b - a);
    for (int j = 0; j < 3; j++) {
        double q2 = ql[j] + qr[j];
        double tol = s->rel_tol * fabs(q2) + (j == 2 ? floor_e : 0.0);
        if (!(fabs(q2 - whole[j]) <= tol))
            ok = 0;
    }
    if (ok) {
        for (int j = 0; j < 3; j++)
            acc[j] += ql[j] + qr[j];
        return 0;
    }
    if (depth >= MAX_BISECT || !(m > a && m < b))
        return -1;
    if (adapt(s, a, m, ql, depth + 1, acc) != 0)
        return -1;
    return adapt(s, m, b, qr, depth + 1, acc);
}

/* Integrals over [a, b], split at the table speeds inside (a, b). */
static int integrate_split(stop_ctx *s, double a, double b, double q[3])
{
    const design_force_curve *c = s->curve;
    q[0] = q[1] = q[2] = 0.0;
    if (!(b > a))
        return 0;
    double lo = a;
    int k = 0;
    while (k < c->n && c->speed[k] <= a)
        k++;
    for (;; k++) {
        double hi = (k < c->n && c->speed[k] < b) ? c->speed[k] : b;
        if (hi > lo) {
            double whole[3];
            gauss_panel(s, lo, hi, whole);
            if (adapt(s, lo, hi, whole, 0, q) != 0)
                return -1;
        }
        lo = hi;
        if (hi >= b)
            break;
    }
    return 0;
}

static eddy_status check_stop_input(int n, const double *speed, const double *force,
                                    const design_stop_input *in, eddy_error *err)
{
    eddy_status st = check_table(n, speed, force, err);
    if (st != EDDY_OK)
        return st;
    if (in == NULL)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "stop: NULL input");
    if (!isfinite(in->mass) || !(in->mass > 0.0))
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "stop: mass = %g kg must be finite and positive", in->mass);
    if (!isfinite(in->extra_force) || in->extra_force < 0.0)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "stop: extra_force = %g N must be finite and >= 0",
                          in->extra_force);
    if (!isfinite(in->from_speed) || !(in->from_speed > 0.0))
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "stop: from_speed = %g m/s must be finite and positive",
                          in->from_speed);
    if (in->from_speed > speed[n - 1])
        return EDDY_RAISE(err, EDDY_ERR_INPUT,
                          "stop: from_speed = %g m/s is above the highest tabulated speed %g m/s "
                          "(the force there is unknown; extend the speed list)",
                          in->from_speed, speed[n - 1]);
    if (!isfinite(in->to_speed) || in->to_speed < 0.0)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "stop: to_speed = %g m/s must be finite and >= 0",
                          in->to_speed);
    if (!(in->to_speed < in->from_speed))
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "stop: to_speed = %g m/s must be below from_speed = %g m/s",
                          in->to_speed, in->from_speed);
    if (in->to_speed == 0.0 && in->extra_force == 0.0)
        return EDDY_RAISE(err, EDDY_ERR_INPUT,
                          "stop: to_speed = 0 needs extra_force > 0: an eddy-current brake alone never "
                          "brings a load to rest, because its drag falls to zero with speed (the time "
                          "to reach speed v grows like ln(1/v)); give a small positive to_speed");
    if (in->extra_force == 0.0) {
        for (int i = 0; i < n; i++)
            if (!(force[i] > 0.0))
                return EDDY_RAISE(err, EDDY_ERR_INPUT,
                                  "stop: force[%d] = 0 N at %g m/s with no extra_force: the load would "
                                  "never slow down there", i, speed[i]);
    }
    if (in->rel_tol != 0.0 &&
        !(in->rel_tol >= MIN_REL_TOL && in->rel_tol <= MAX_REL_TOL))
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "stop: rel_tol = %g must be 0 (default %g) or in [%g, %g]",
                          in->rel_tol, DEFAULT_REL_TOL, MIN_REL_TOL, MAX_REL_TOL);
    if (in->n_samples != 0 && (in->n_samples < 2 || in->n_samples > MAX_SAMPLES))
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "stop: n_samples = %d must be 0 or in [2, %d]",
                          in->n_samples, MAX_SAMPLES);
    return EDDY_OK;
}

eddy_status design_stop_compute(int n, const double *speed, const double *force,
                              const design_stop_input *in, design_stop_result *res,
                              eddy_error *err)
{
    eddy_status st;
    design_force_curve *curve = NULL;
    stop_ctx s;
    if (res == NULL)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "stop: NULL result");
    memset(res, 0, sizeof *res);
    st = check_stop_input(n, speed, force, in, err);
    if (st != EDDY_OK)
        return st;
    st = design_force_curve_build(n, speed, force, in->interp, &curve, err);
    if (st != EDDY_OK)
        return st;

    memset(&s, 0, sizeof s);
    s.curve = curve;
    s.mass = in->mass;
    s.extra = in->extra_force;
    s.rel_tol = in->rel_tol != 0.0 ? in->rel_tol : DEFAULT_REL_TOL;
    gauss_rule_init(&s.g);

    const double v0 = in->from_speed, v1 = in->to_speed;
    const int ns = in->n_samples;
    double *block = NULL;
    if (ns > 0) {
        block = malloc(4 * (size_t)ns * sizeof *block);
        if (block == NULL) {
            design_force_curve_free(curve);
            return EDDY_RAISE(err, EDDY_ERR_NOMEM, "stop: out of memory for %d samples", ns);
        }
        res->s_speed = block;
        res->s_distance = block + ns;
        res->s_time = block + 2 * (size_t)ns;
        res->s_decel = block + 3 * (size_t)ns;
        res->n_samples = ns;
    }

    /* Integrate from sample to sample (v0 down to v1); without samples in
     * one stretch.  Sample speeds v_j = v0 - j (v0 - v1) / (ns - 1). */
    const int nseg = ns > 1 ? ns - 1 : 1;
    double tot[3] = {0.0, 0.0, 0.0};
    double v_hi = v0;
    if (ns > 0) {
        res->s_speed[0] = v0;
        res->s_distance[0] = 0.0;
        res->s_time[0] = 0.0;
        res->s_decel[0] = (design_force_curve_eval(curve, v0) + s.extra) / s.mass;
    }
    for (int j = 1; j <= nseg; j++) {
        double v_lo = (j == nseg) ? v1 : v0 - (double)j * (v0 - v1) / (double)nseg;
        double q[3];
        if (integrate_split(&s, v_lo, v_hi, q) != 0) {
            design_force_curve_free(curve);
            design_stop_result_free(res);
            return EDDY_RAISE(err, EDDY_ERR_NUMERIC,
                              "stop: the quadrature did not reach rel_tol = %g between %g and %g m/s",
                              s.rel_tol, v_lo, v_hi);
        }
        for (int k = 0; k < 3; k++)
            tot[k] += q[k];
        if (ns > 0) {
            res->s_speed[j] = v_lo;
            res->s_distance[j] = tot[0];
            res->s_time[j] = tot[1];
            res->s_decel[j] = (design_force_curve_eval(curve, v_lo) + s.extra) / s.mass;
        }
        v_hi = v_lo;
    }

    /* Peak deceleration: ends and table speeds in between. */
    double f_peak = design_force_curve_eval(curve, v0), v_peak = v0;
    double f1 = design_force_curve_eval(curve, v1);
    if (f1 > f_peak) {
        f_peak = f1;
        v_peak = v1;
    }
    for (int i = 0; i < n; i++)
        if (speed[i] > v1 && speed[i] < v0 && force[i] > f_peak) {
            f_peak = force[i];
            v_peak = speed[i];
        }

    res->distance = tot[0];
    res->time = tot[1];
    res->brake_energy = tot[2];
    res->peak_decel = (f_peak + s.extra) / s.mass;
    res->peak_decel_g = res->peak_decel / DESIGN_STANDARD_GRAVITY;
    res->speed_at_peak = v_peak;
    res->kinetic_energy = 0.5 * s.mass * (v0 - v1) * (v0 + v1);
    res->extra_work = s.extra * res->distance;
    design_force_curve_free(curve);

    if (!isfinite(res->distance) || !isfinite(res->time) || !isfinite(res->brake_energy) ||
        !isfinite(res->peak_decel)) {
        design_stop_result_free(res);
        return EDDY_RAISE(err, EDDY_ERR_NUMERIC, "stop: non-finite result (distance %g m, time %g s)",
                          res->distance, res->time);
    }
    return EDDY_OK;
}

/* Stop with the sub-table of the indices i0, i0 + 2, ... (plus 0 and n-1). */
static eddy_status stop_subtable(int n, const double *speed, const double *force,
                                 const design_stop_input *in, int i0, double *sv, double *sf,
                                 design_stop_result *res, eddy_error *err)
{
    int m = 0;
    if (i0 != 0) {
        sv[m] = speed[0];
        sf[m++] = force[0];
    }
    for (int i = i0; i < n; i += 2) {
        sv[m] = speed[i];
        sf[m++] = force[i];
    }
    if (sv[m - 1] != speed[n - 1]) {
        sv[m] = speed[n - 1];
        sf[m++] = force[n - 1];
    }
    return design_stop_compute(m, sv, sf, in, res, err);
}

eddy_status design_stop_table_change(int n, const double *speed, const double *force,
                                   const design_stop_input *in, double *rel_change_distance,
                                   double *rel_change_time, eddy_error *err)
{
    eddy_status st;
    design_stop_input one;
    design_stop_result full, half;
    double dx = 0.0, dt = 0.0;
    if (n < 3)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "table check: need at least 3 speeds, got %d", n);
    st = check_stop_input(n, speed, force, in, err);
    if (st != EDDY_OK)
        return st;
    one = *in;
    one.n_samples = 0;
    st = design_stop_compute(n, speed, force, &one, &full, err);
    if (st != EDDY_OK)
        return st;
    double *sv = malloc(2 * (size_t)(n + 2) * sizeof *sv);
    if (sv == NULL)
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "table check: out of memory");
    double *sf = sv + n + 2;
    for (int i0 = 0; i0 <= 1; i0++) {
        st = stop_subtable(n, speed, force, &one, i0, sv, sf, &half, err);
        if (st != EDDY_OK)
            break;
        double cx = (half.distance - full.distance) / full.distance;
        double ct = (half.time - full.time) / full.time;
        if (fabs(cx) > fabs(dx))
            dx = cx;
        if (fabs(ct) > fabs(dt))
            dt = ct;
    }
    free(sv);
    if (st != EDDY_OK)
        return st;
    if (rel_change_distance != NULL)
        *rel_change_distance = dx;
    if (rel_change_time != NULL)
        *rel_change_time = dt;
    return EDDY_OK;
}

/* ------------------------------------------------------------------------ */
/* 4. Heating                                                                */
/* ------------------------------------------------------------------------ */

static int positive(double a)
{
    return isfinite(a) && a > 0.0;
}

eddy_status design_heating_rate(double loss, double area, double density, double heat_capacity,
                              double *dtemp_dt, eddy_error *err)
{
    if (dtemp_dt == NULL)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "heating rate: NULL output");
    if (!isfinite(loss) || loss < 0.0)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "heating rate: loss = %g W/m must be finite and >= 0", loss);
    if (!positive(area) || !positive(density) || !positive(heat_capacity))
        return EDDY_RAISE(err, EDDY_ERR_INPUT,
                          "heating rate: area = %g m^2, density = %g kg/m^3 and heat capacity = %g "
                          "J/(kg K) must be finite and positive", area, density, heat_capacity);
    *dtemp_dt = loss / (density * heat_capacity * area);
    return EDDY_OK;
}

eddy_status design_heating_per_pass(double loss, double thickness, double speed, double density,
                                  double heat_capacity, double *dtemp, eddy_error *err)
{
    if (dtemp == NULL)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "heating per pass: NULL output");
    if (!isfinite(loss) || loss < 0.0)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "heating per pass: loss = %g W/m must be finite and >= 0",
                          loss);
    if (!positive(thickness) || !positive(speed) || !positive(density) || !positive(heat_capacity))
        return EDDY_RAISE(err, EDDY_ERR_INPUT,
                          "heating per pass: thickness = %g m, speed = %g m/s, density = %g kg/m^3 and "
                          "heat capacity = %g J/(kg K) must be finite and positive",
                          thickness, speed, density, heat_capacity);
    *dtemp = loss / (density * heat_capacity * thickness * speed);
    return EDDY_OK;
}

eddy_status design_stop_temperature_rise(double energy, double mass, double heat_capacity,
                                       double *dtemp, eddy_error *err)
{
    if (dtemp == NULL)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "temperature rise: NULL output");
    if (!isfinite(energy) || energy < 0.0)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "temperature rise: energy = %g J must be finite and >= 0",
                          energy);
    if (!positive(mass) || !positive(heat_capacity))
        return EDDY_RAISE(err, EDDY_ERR_INPUT,
                          "temperature rise: mass = %g kg and heat capacity = %g J/(kg K) must be finite "
                          "and positive", mass, heat_capacity);
    *dtemp = energy / (mass * heat_capacity);
    return EDDY_OK;
}

eddy_status design_sigma_at_temperature(double sigma_20, double alpha, double temp_c,
                                      double *sigma, eddy_error *err)
{
    if (sigma == NULL)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "conductivity at temperature: NULL output");
    if (!positive(sigma_20))
        return EDDY_RAISE(err, EDDY_ERR_INPUT,
                          "conductivity at temperature: sigma_20 = %g S/m must be finite and positive",
                          sigma_20);
    if (!isfinite(alpha))
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "conductivity at temperature: alpha = %g 1/K is not finite",
                          alpha);
    if (!isfinite(temp_c) || temp_c < DESIGN_TEMP_MIN_C || temp_c > DESIGN_TEMP_MAX_C)
        return EDDY_RAISE(err, EDDY_ERR_INPUT,
                          "%g C is outside the linear resistivity model (%g to %g C)", temp_c,
                          DESIGN_TEMP_MIN_C, DESIGN_TEMP_MAX_C);
    double den = 1.0 + alpha * (temp_c - 20.0);
    if (!(den >= DESIGN_RESISTIVITY_RATIO_MIN))
        return EDDY_RAISE(err, EDDY_ERR_INPUT,
                          "1 + alpha (T - 20 C) = %g for alpha = %g 1/K at %g C: outside the "
                          "range of the linear resistivity law (>= %g)",
                          den, alpha, temp_c, DESIGN_RESISTIVITY_RATIO_MIN);
    *sigma = sigma_20 / den;
    return EDDY_OK;
}

/* ------------------------------------------------------------------------ */
/* 5. End-effect factor                                                      */
/* ------------------------------------------------------------------------ */

/* p - tanh(p) for p >= 0 without cancellation at small p. */
static double p_minus_tanh(double p)
{
    if (p < 0.05) {
        /* tanh p = p - p^3/3 + 2 p^5/15 - 17 p^7/315 + 62 p^9/2835
         *          - 1382 p^11/155925 + ...; the first term left out is
         * below 1e-15 of the sum for p < 0.05, and the direct difference
         * loses at most about 1e-13 relative for p >= 0.05. */
        double p2 = p * p;
        return p * p2 *
               (1.0 / 3.0 -
                p2 * (2.0 / 15.0 - p2 * (17.0 / 315.0 - p2 * (62.0 / 2835.0 - p2 * (1382.0 / 155925.0)))));
    }
    return p - tanh(p);
}

eddy_status design_end_effect_factor(double active_width, double plate_width, double pole_pitch,
                                   double *factor, eddy_error *err)
{
    if (factor == NULL)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "end-effect factor: NULL output");
    if (!positive(active_width) || !positive(plate_width) || !positive(pole_pitch))
        return EDDY_RAISE(err, EDDY_ERR_INPUT,
                          "end-effect factor: active width %g m, plate width %g m and pole pitch %g m "
                          "must be finite and positive", active_width, plate_width, pole_pitch);
    if (plate_width < active_width)
        return EDDY_RAISE(err, EDDY_ERR_INPUT,
                          "end-effect factor: plate width %g m is narrower than the active (magnet) "
                          "width %g m", plate_width, active_width);
    double p = EDDY_PI * active_width / (2.0 * pole_pitch);
    double q = EDDY_PI * (plate_width - active_width) / (2.0 * pole_pitch);
    double tp = tanh(p), tq = tanh(q);
    double den = 1.0 + tp * tq;
    *factor = (p_minus_tanh(p) + p * tp * tq) / (p * den);
    return EDDY_OK;
}

/* ------------------------------------------------------------------------ */
/* 6. Disc brakes                                                            */
/* ------------------------------------------------------------------------ */

double design_disc_speed(double radius, double rpm)
{
    return 2.0 * EDDY_PI * radius * rpm / 60.0;
}

double design_disc_rpm(double radius, double speed)
{
    return 60.0 * speed / (2.0 * EDDY_PI * radius);
}

double design_disc_torque(double force, double radius)
{
    return force * radius;
}

double design_brake_power(double force, double speed)
{
    return force * speed;
}
