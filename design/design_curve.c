/*
 * design_curve.c - the monotone cubic (Fritsch and Carlson 1980) and the
 * braking-force curve F(v) built on it (design/design.h, sections 1 and 2).
 */
#include "design/design.h"
#include "design/design_int.h"

#include <float.h>
#include <math.h>
#include <stddef.h>
#include <stdlib.h>
#include <string.h>

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

eddy_status design_check_table(int n, const double *speed, const double *force, eddy_error *err)
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
    st = design_check_table(n, speed, force, err);
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

