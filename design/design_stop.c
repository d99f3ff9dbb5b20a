/*
 * design_stop.c - stopping a load with a braking-force curve
 * (design/design.h, section 3).
 *
 * Stopping.  m dv/dt = -F_tot(v), F_tot = F(v) + F_extra - F_drive > 0
 * (F_drive: a weight along the motion; 0 for a level track).  With
 * dx = v dt: dt = -m dv / F_tot and dx = -m v dv / F_tot, so from v0 down to
 * v1 the time and distance are integrals over v of m / F_tot and m v / F_tot.
 * The work done on the conductor is integral F dx = integral m v F / F_tot dv,
 * computed with its own integrand so that E_brake + F_extra x = m (v0^2 -
 * v1^2) / 2 is a genuine check of the quadrature, not an identity.
 * The interpolant is a cubic in v (or in ln v, or the exponential of one)
 * on each table interval and linear below the table, so the integrands are
 * smooth between the table speeds; the quadrature splits there.
 */
#include "design/design.h"
#include "design/design_int.h"

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

/* The Legendre polynomial P_n(z), n = GL_N, by its three-term recurrence,
 * and its derivative P_n'(z) into *dp. */
static double legendre(double z, double *dp)
{
    double p0 = 1.0, p1 = z;
    for (int j = 2; j <= GL_N; j++) {
        double p2 = ((2.0 * j - 1.0) * z * p1 - (j - 1.0) * p0) / j;
        p0 = p1;
        p1 = p2;
    }
    *dp = GL_N * (z * p1 - p0) / (z * z - 1.0);
    return p1;
}

static void gauss_rule_init(gauss_rule *g)
{
    for (int i = 0; i < GL_N; i++) {
        double z = cos(EDDY_PI * (i + 0.75) / (GL_N + 0.5)), dp = 1.0;
        for (int it = 0; it < 100; it++) { /* Newton on P_n */
            double dz = legendre(z, &dp) / dp;
            z -= dz;
            if (fabs(dz) < 1e-16)
                break;
        }
        legendre(z, &dp); /* P_n' at the converged node */
        g->node[i] = z;
        g->weight[i] = 2.0 / ((1.0 - z * z) * dp * dp);
    }
}

typedef struct {
    const design_force_curve *curve;
    double mass, extra, rel_tol; /* extra: F_extra - F_drive, N (may be < 0) */
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
    eddy_status st = design_check_table(n, speed, force, err);
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
    if (!isfinite(in->driving_force) || in->driving_force < 0.0)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "stop: driving_force = %g N must be finite and >= 0",
                          in->driving_force);
    if (in->to_speed == 0.0 && in->driving_force > 0.0 && !(in->extra_force > in->driving_force))
        return EDDY_RAISE(err, EDDY_ERR_NOT_APPLICABLE,
                          "stop: to_speed = 0 needs extra_force > driving_force (%g N): the drag "
                          "falls to zero with speed, so the load never comes to rest",
                          in->driving_force);
    if (in->to_speed == 0.0 && in->extra_force == 0.0)
        return EDDY_RAISE(err, EDDY_ERR_INPUT,
                          "stop: to_speed = 0 needs extra_force > 0: an eddy-current brake alone never "
                          "brings a load to rest, because its drag falls to zero with speed (the time "
                          "to reach speed v grows like ln(1/v)); give a small positive to_speed");
    if (in->extra_force == 0.0 && in->driving_force == 0.0) {
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
    s.extra = in->extra_force - in->driving_force;
    if (in->driving_force > 0.0) {
        /* the net force at v1, v0 and the table speeds between them (the
         * interpolant is monotone in between, so these are its minima) */
        double vbad = NAN, fbad = 0.0;
        for (int i = -1; i <= n && isnan(vbad); i++) {
            double v = i < 0 ? in->to_speed : (i == n ? in->from_speed : speed[i]);
            if (v < in->to_speed || v > in->from_speed)
                continue;
            double ft = design_force_curve_eval(curve, v) + s.extra;
            if (!(ft > 0.0)) {
                vbad = v;
                fbad = ft;
            }
        }
        if (!isnan(vbad)) {
            design_force_curve_free(curve);
            return EDDY_RAISE(err, EDDY_ERR_NOT_APPLICABLE,
                              "stop: at %g m/s the retarding force falls short of the driving "
                              "force %g N by %g N, so the load does not slow from %g to %g m/s "
                              "(it tends to a terminal speed at or above %g m/s, or speeds up)",
                              vbad, in->driving_force, -fbad, in->from_speed, in->to_speed,
                              in->to_speed);
        }
    }
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
    /* the caller's peak (one rule with result.json's "peak") where it lies
     * within the stop */
    if (in->peak_speed > v1 && in->peak_speed < v0 && isfinite(in->peak_force) &&
        in->peak_force > f_peak) {
        f_peak = in->peak_force;
        v_peak = in->peak_speed;
    }

    res->distance = tot[0];
    res->time = tot[1];
    res->brake_energy = tot[2];
    res->peak_decel = (f_peak + s.extra) / s.mass;
    res->peak_decel_g = res->peak_decel / DESIGN_STANDARD_GRAVITY;
    res->speed_at_peak = v_peak;
    res->kinetic_energy = 0.5 * s.mass * (v0 - v1) * (v0 + v1);
    res->extra_work = in->extra_force * res->distance;
    res->driving_work = in->driving_force * res->distance;
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

