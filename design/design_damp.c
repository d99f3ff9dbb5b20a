/*
 * design_damp.c - the linear range of a drag curve and the terminal speed
 * of a falling load (design/design.h, section 8).
 *
 * At low speed every eddy-current drag follows F = c v: the induced current
 * is sigma v B0_y of the static field B0 (J = sigma v x B, the reaction
 * field negligible), so F = sigma v integral B0_y^2 (first order in v).
 * The next term of the expansion is of relative order Rm^2 for a
 * symmetric field: the thin-sheet drag F0 v w / (v^2 + w^2) of J. R. Reitz,
 * "Forces on moving magnets due to eddy currents", J. Appl. Phys. 41 (1970)
 * 2067 (from memory; also the project's physics notes) has
 * F / (c v) - 1 = -(v/w)^2 / (1 + (v/w)^2).  That power law is why the
 * crossing of the tolerance is interpolated in ln |e| against ln v.
 */
#include "design/design.h"
#include "design/design_int.h"

#include <math.h>
#include <stddef.h>

#define ROOT_STEPS 200 /* bisection steps: far more than a double needs */

eddy_status design_linear_range(int n, const double *speed, const double *drag, double c,
                                double tol, double *v_lin, design_linear_state *state,
                                eddy_error *err)
{
    if (n < 1 || speed == NULL || drag == NULL || v_lin == NULL || state == NULL)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "linear range: need at least one sample and "
                                               "non-NULL arrays");
    if (!design_positive(c))
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "linear range: damping coefficient %g must be "
                                               "finite and positive", c);
    if (!(tol > 0.0 && tol < 1.0))
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "linear range: tolerance %g must lie in (0, 1)",
                          tol);
    for (int k = 0; k < n; k++) {
        if (!design_positive(speed[k]) || !isfinite(drag[k]))
            return EDDY_RAISE(err, EDDY_ERR_INPUT, "linear range: sample %d (%g m/s, %g) must "
                                                   "have a finite positive speed and a finite "
                                                   "drag", k, speed[k], drag[k]);
        if (k > 0 && !(speed[k] > speed[k - 1]))
            return EDDY_RAISE(err, EDDY_ERR_INPUT, "linear range: speeds must increase "
                                                   "strictly (sample %d)", k);
    }
    double e_prev = 0.0;
    for (int k = 0; k < n; k++) {
        double e = drag[k] / (c * speed[k]) - 1.0;
        if (fabs(e) <= tol) {
            e_prev = e;
            continue;
        }
        if (k == 0) {
            *v_lin = NAN;
            *state = DESIGN_LINEAR_STARTS_ABOVE;
            return EDDY_OK;
        }
        double l0 = log(speed[k - 1]), l1 = log(speed[k]), t;
        if (e_prev != 0.0 && (e_prev > 0) == (e > 0))
            t = (log(tol) - log(fabs(e_prev))) / (log(fabs(e)) - log(fabs(e_prev)));
        else
            t = (copysign(tol, e) - e_prev) / (e - e_prev);
        t = t < 0.0 ? 0.0 : (t > 1.0 ? 1.0 : t);
        *v_lin = exp(l0 + t * (l1 - l0));
        *state = DESIGN_LINEAR_CROSSED;
        return EDDY_OK;
    }
    *v_lin = NAN;
    *state = DESIGN_LINEAR_NEVER_LEAVES;
    return EDDY_OK;
}

eddy_status design_terminal_speed(int n, const double *speed, const double *force, double weight,
                                  design_interp interp, double *v_t, design_terminal_state *state,
                                  eddy_error *err)
{
    if (v_t == NULL || state == NULL)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "terminal speed: NULL output");
    if (!design_positive(weight))
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "terminal speed: weight %g N must be finite and "
                                               "positive", weight);
    design_force_curve *curve = NULL;
    eddy_status s = design_force_curve_build(n, speed, force, interp, &curve, err);
    if (s != EDDY_OK)
        return s;
    int k = 0, kmax = 0;
    while (k < n && force[k] < weight)
        k++;
    for (int q = 1; q < n; q++)
        if (force[q] > force[kmax])
            kmax = q;
    *v_t = NAN;
    if (k == 0) {
        *state = DESIGN_TERMINAL_BELOW_SWEEP;
    } else if (k == n) {
        *state = kmax == n - 1 ? DESIGN_TERMINAL_ABOVE_SWEEP : DESIGN_TERMINAL_NONE;
    } else {
        /* F(lo) < W <= F(hi), F monotone on the interval */
        double lo = speed[k - 1], hi = speed[k];
        for (int it = 0; it < ROOT_STEPS && hi - lo > 1e-15 * hi; it++) {
            double mid = 0.5 * (lo + hi);
            if (design_force_curve_eval(curve, mid) < weight)
                lo = mid;
            else
                hi = mid;
        }
        *v_t = 0.5 * (lo + hi);
        *state = DESIGN_TERMINAL_FOUND;
    }
    design_force_curve_free(curve);
    return EDDY_OK;
}
