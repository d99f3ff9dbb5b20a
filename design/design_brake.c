/*
 * design_brake.c - the finite-width end-effect factor and disc-brake
 * conversions (design/design.h, sections 5 and 6).
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
#include "design/design_int.h"

#include <float.h>
#include <math.h>
#include <stddef.h>
#include <stdlib.h>
#include <string.h>

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
    if (!design_positive(active_width) || !design_positive(plate_width) || !design_positive(pole_pitch))
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

