/*
 * design.h - public interface of the design module (prefix design_).
 *
 * Brake-design numbers that need no grid and no files: the monotone cubic
 * through a force-speed table, the drag peak, stopping a load, heating,
 * conductivity at temperature, the finite-width end effect and disc-brake
 * conversions.  It depends only on the project-wide header mesh/eddy.h.
 */
#ifndef EDDY_DESIGN_H
#define EDDY_DESIGN_H

#include <stddef.h>

#include "mesh/eddy.h"

/*
 * Brake-design answers from a force-speed curve.
 *
 * Pure numerical functions: no grid, no files, no printing.  Input is a table
 * of braking force against speed, already scaled by the caller to the whole
 * brake (the 2D solver's N per metre of depth times the depth and the number
 * of repeats), so forces here are in N, not N/m, unless a function says so.
 * SI units throughout; temperatures in degrees Celsius where named temp_c.
 *
 * Contents
 *   1. Monotone piecewise cubic Hermite interpolation (Fritsch and Carlson).
 *   2. A braking-force curve F(v): the interpolant plus its low-speed limit.
 *   3. Stopping: distance, time, peak deceleration, energy, trajectory.
 *   4. Heating and conductivity at temperature.
 *   5. Finite plate width: the end-effect factor.
 *   6. Disc brakes: rpm, torque, power.
 *   7. The drag peak of a sampled curve: the project's one peak rule.
 *   8. Damping: the linear range of a drag curve and the terminal speed of
 *      a falling load.
 */

/* Standard acceleration of gravity, m/s^2 (3rd CGPM 1901; ISO 80000-3). */
#define DESIGN_STANDARD_GRAVITY 9.80665

/* Temperature coefficient of resistance at 20 C, 1/K.
 * Annealed copper: 0.00393 (IEC 60028, the International Annealed Copper
 * Standard).  Hard-drawn aluminium: 0.00403 (IEC 60889; from memory).  Alloys
 * have much smaller coefficients: use the supplier's value. */
#define DESIGN_ALPHA_COPPER 0.00393
#define DESIGN_ALPHA_ALUMINIUM 0.00403

/* ------------------------------------------------------------------------ */
/* 1. Monotone piecewise cubic Hermite interpolation                         */
/* ------------------------------------------------------------------------ */

/*
 * Node derivatives of the monotone piecewise cubic Hermite interpolant of
 * F. N. Fritsch and R. E. Carlson, "Monotone piecewise cubic interpolation",
 * SIAM J. Numer. Anal. 17 (1980) 238-246:
 *   1. initial derivatives from the parabola through three neighbouring
 *      points (centred inside, one-sided at the two ends);
 *   2. zero derivative where the neighbouring secant slopes differ in sign
 *      or one of them is zero, and at an end whose one-sided estimate has
 *      the wrong sign;
 *   3. on each interval with secant slope delta, alpha = d_k/delta and
 *      beta = d_{k+1}/delta are scaled back into the circle
 *      alpha^2 + beta^2 <= 9, the sufficient condition for monotonicity of
 *      the paper.
 * The interpolant is C1, passes through the data, is monotone on every
 * interval (so it never leaves [min(y_k, y_k+1), max(y_k, y_k+1)] there:
 * no overshoot), and reproduces linear data exactly, and quadratic data
 * too where they are monotone and step 3 stays inactive (e.g. y = c x^2
 * for x > 0): the three-point derivatives are exact for both.
 *   n     number of points, >= 2.
 *   x[n]  abscissae, finite, strictly increasing.
 *   y[n]  ordinates, finite.
 *   d[n]  output: dy/dx at the nodes, caller-owned.
 * Returns EDDY_OK or EDDY_ERR_INPUT (n < 2, NULL array, non-finite value,
 * x not strictly increasing).
 */
eddy_status design_pchip_slopes(int n, const double *x, const double *y, double *d,
                              eddy_error *err);

/*
 * Value of the interpolant at xq, given the n >= 2 nodes x, y and the
 * derivatives d from design_pchip_slopes (not re-validated).  Outside
 * [x[0], x[n-1]] the cubic of the first or last interval is continued
 * (extrapolation: no shape guarantee).  Interval found by bisection.
 * For data that are better behaved against log x (log-spaced speeds), pass
 * ln x to design_pchip_slopes and ln xq here.
 */
double design_pchip_eval(int n, const double *x, const double *y, const double *d, double xq);

/* Derivative dy/dx of the interpolant at xq (same arguments and conventions
 * as design_pchip_eval). */
double design_pchip_deriv(int n, const double *x, const double *y, const double *d, double xq);

/* ------------------------------------------------------------------------ */
/* 2. Braking-force curve                                                    */
/* ------------------------------------------------------------------------ */

/* What the monotone cubic interpolates (section 1).  Every choice keeps the
 * interpolant monotone on each table interval (the maps v -> ln v and
 * ln F -> F are monotone), so it never overshoots the table. */
typedef enum {
    DESIGN_INTERP_LIN = 0, /* F against v: exact for F = a + b v                */
    DESIGN_INTERP_LOGV,    /* F against ln v                                     */
    DESIGN_INTERP_LOGLOG   /* ln F against ln v: exact for any power law c v^p,
                            so for the linear low-speed and the falling
                            high-speed branches of a drag curve; needs F > 0 */
} design_interp;

/*
 * A braking force F(v) >= 0 (N) tabulated at speeds v[0] < ... < v[n-1]
 * (m/s, v[0] > 0), and its interpolant:
 *   v >= v[0]: monotone cubic (design_pchip_*) as chosen by design_interp;
 *              above v[n-1] the last cubic is continued (callers stay inside);
 *   0 < v < v[0]: F = F(v[0]) v / v[0], the linear law that every eddy-
 *              current drag follows at low speed (induced current
 *              proportional to v while the reaction field is negligible);
 *   v <= 0:    0.
 * All arrays are owned by the curve (copies of the caller's table).
 */
typedef struct {
    int n;
    design_interp interp;
    double *speed; /* n, m/s                                         */
    double *force; /* n, N                                           */
    double *knot;  /* n, abscissae of the interpolant (v or ln v)    */
    double *value; /* n, ordinates of the interpolant (F or ln F)    */
    double *slope; /* n, d(value)/d(knot) at the nodes               */
} design_force_curve;

/*
 * Build a force curve from a table (copied).  n >= 2; speeds finite,
 * positive, strictly increasing; forces finite and >= 0 (> 0 for
 * DESIGN_INTERP_LOGLOG).
 *   interp: see design_interp.
 *   out: receives the curve; free it with design_force_curve_free.
 * Returns EDDY_OK, EDDY_ERR_INPUT (the message names the bad entry) or
 * EDDY_ERR_NOMEM.  On error *out is NULL.
 */
eddy_status design_force_curve_build(int n, const double *speed, const double *force,
                                   design_interp interp, design_force_curve **out,
                                   eddy_error *err);

/* Free a curve; NULL is allowed. */
void design_force_curve_free(design_force_curve *c);

/* F(v) in N as described above. */
double design_force_curve_eval(const design_force_curve *c, double v);

/* ------------------------------------------------------------------------ */
/* 3. Stopping                                                               */
/* ------------------------------------------------------------------------ */

/* What to stop and how far. */
typedef struct {
    double mass;        /* kg, > 0: the moving mass                           */
    double extra_force; /* N, >= 0: constant retarding force added to the
                           brake (friction, a slope's weight component);
                           its work is not dissipated in the conductor       */
    double driving_force; /* N, >= 0: constant force along the motion (the
                           weight m g of a falling load): the net retarding
                           force is F(v) + extra_force - driving_force, and it
                           must stay > 0 over [to_speed, from_speed], else the
                           load never slows to to_speed (EDDY_ERR_NOT_APPLICABLE) */
    double from_speed;  /* m/s, v0: 0 < v0 <= highest tabulated speed         */
    double to_speed;    /* m/s, v1: 0 < v1 < v0; v1 = 0 only if extra_force > 0 */
    double rel_tol;     /* relative accuracy of the quadrature; 0: 1e-9;
                           otherwise in [1e-13, 1e-3]                          */
    design_interp interp; /* how the table is interpolated; DESIGN_INTERP_LOGLOG is
                           the most accurate for log-spaced speed lists (see
                           design_stop_compute)                                  */
    int n_samples;      /* trajectory points: 0 (none) or >= 2, <= 10^7       */
    /* The drag peak the caller reports (design_peak on the same table, scaled
     * like the forces), so that the peak deceleration uses that one peak and
     * not the largest sample: peak_force N at peak_speed m/s; peak_speed 0
     * (the default): none, the largest of the ends and the samples is used.
     * A peak outside (to_speed, from_speed) does not count. */
    double peak_speed, peak_force;
} design_stop_input;

/* Fill *in with: mass 1 kg, extra_force 0, driving_force 0, from_speed and to_speed 0 (the
 * caller must set them), rel_tol 0 (1e-9), interp DESIGN_INTERP_LIN, n_samples 0. */
void design_stop_defaults(design_stop_input *in);

/* Results of one stop.  The sampled trajectory is owned by the result
 * (one allocation); release it with design_stop_result_free. */
typedef struct {
    double distance;        /* m, x = integral_{v1}^{v0} m v / F_tot(v) dv      */
    double time;            /* s, t = integral_{v1}^{v0} m / F_tot(v) dv        */
    double peak_decel;      /* m/s^2, max of F_tot(v) / m over [v1, v0]          */
    double peak_decel_g;    /* peak_decel / DESIGN_STANDARD_GRAVITY                */
    double speed_at_peak;   /* m/s, where the peak occurs                         */
    double kinetic_energy;  /* J, m (v0^2 - v1^2) / 2                            */
    double brake_energy;    /* J, dissipated in the conductor: integral F dx,
                               computed as integral m v F / F_tot dv            */
    double extra_work;      /* J, extra_force * distance                          */
    double driving_work;    /* J, driving_force * distance (work put in, e.g. by
                               gravity): brake_energy + extra_work =
                               kinetic_energy + driving_work                      */
    int n_samples;          /* length of the arrays below (0: none)               */
    double *s_speed;        /* m/s, v0 down to v1, equal steps in speed           */
    double *s_distance;     /* m, travelled since v0                              */
    double *s_time;         /* s, since v0                                        */
    double *s_decel;        /* m/s^2, F_tot(v) / m                                */
} design_stop_result;

/*
 * Stop a mass m from v0 to v1 under m dv/dt = -(F(v) + F_extra - F_drive)
 * (F_drive = in->driving_force, 0 unless a weight pulls along the motion), with F the
 * force curve of the table (section 2: monotone cubic as in->interp says,
 * linear below the lowest tabulated speed).  With dx = v dt:
 *   x = integral m v dv / F_tot,  t = integral m dv / F_tot,
 *   E_brake = integral F dx = integral m v F / F_tot dv,
 * integrated over v between the trajectory samples, each piece split at the
 * table speeds and at v[0] (where the integrands are smooth), by adaptive
 * bisection with 10-point Gauss-Legendre rules until, on every piece, two
 * halves and the whole agree to rel_tol relative for all three integrals.
 * The integrands are positive, so the totals meet rel_tol too.  Energy
 * check for the caller: brake_energy + extra_work = kinetic_energy.
 * Peak deceleration: the interpolant is monotone on every interval, so its
 * maximum lies at a table speed or at v0 or v1; those are compared.
 *
 * Accuracy of the interpolation (thin-sheet drag F0 v w/(v^2 + w^2) from
 * 10 log-spaced points over w/10 .. 10 w, stop from 10 w to w/10; error of
 * the distance): F(v) 3.5 %, F(ln v) 0.17 %, ln F(ln v) 0.09 %.  For the
 * usual log-spaced speed lists choose DESIGN_INTERP_LOGLOG (exact for the
 * linear low-speed branch and for power-law high-speed branches).
 *
 * Why v1 > 0 without an extra force: the drag falls to zero with speed
 * (linearly), so with nothing else acting the load never comes to rest: the
 * time to v1 grows like ln(1/v1) (the distance stays finite).  With
 * extra_force > 0 the net force stays positive and v1 = 0 is allowed.
 * Without an extra force every tabulated force must be > 0 (a zero force
 * would make the time and distance infinite).
 *
 *   n, speed[n], force[n]  the table (N, m/s; see design_force_curve_build).
 *   in                     the stop (see design_stop_input).
 *   res                    output; on error it holds no allocation.
 * With a driving force the net force F_tot = F + F_extra - F_drive must be
 * > 0 at v1, at v0 and at every table speed between them (the interpolant
 * is monotone on each interval, so that is > 0 on all of [v1, v0]); else
 * the load approaches a terminal speed at or above v1 and never reaches v1
 * (or speeds up from v0), and the stop is undefined: EDDY_ERR_NOT_APPLICABLE
 * with the speed where the net force fails.  v1 = 0 then needs F_extra >
 * F_drive.
 * Returns EDDY_OK, EDDY_ERR_INPUT (message names the problem),
 * EDDY_ERR_NOT_APPLICABLE (see above), EDDY_ERR_NOMEM or EDDY_ERR_NUMERIC
 * (non-finite result, or the quadrature did not reach rel_tol within 60
 * bisections).
 */
eddy_status design_stop_compute(int n, const double *speed, const double *force,
                              const design_stop_input *in, design_stop_result *res,
                              eddy_error *err);

/* Free the trajectory of a result and zero its array fields; NULL allowed. */
void design_stop_result_free(design_stop_result *res);

/*
 * Is the force table fine enough?  Computes the stop (in->n_samples is
 * ignored) from the full table and from its two halves: the points
 * 0, 2, 4, ... and the points 0, 1, 3, 5, ... (each half keeps the first and
 * the last point, so both cover the same speeds), and returns the larger
 * relative change of each quantity:
 *   rel_change_distance = (x_half - x_full) / x_full,
 *   rel_change_time     = (t_half - t_full) / t_full   (either may be NULL).
 * How a caller uses it: halving the points raises the interpolation error
 * by 2^p (p >= 1), so the error of the full table is about |change| /
 * (2^p - 1) <= |change|; accept the table when |rel_change_distance| <
 * 0.005 (0.5 %), else add speed points where the curve bends most (around
 * the peak of the drag).  It is an estimate, not a bound: measured on the
 * thin-sheet drag curve (7 to 25 log-spaced points, all three
 * interpolations) the true distance error was at most 0.43 of the change.
 * Using both halves guards against one half's errors cancelling by chance.
 * n >= 3.  Returns as design_stop_compute.
 */
eddy_status design_stop_table_change(int n, const double *speed, const double *force,
                                   const design_stop_input *in, double *rel_change_distance,
                                   double *rel_change_time, eddy_error *err);

/* ------------------------------------------------------------------------ */
/* 4. Heating                                                                */
/* ------------------------------------------------------------------------ */

/*
 * Adiabatic heating rate of the conductor in the 2D section, dT/dt in K/s:
 *   dT/dt = P / (rho c_p A)
 *   loss           P, W per metre of depth (post_forces.loss at one speed);
 *   area           A, m^2: cross-section of the conductor that shares the
 *                  heat, in the plane of the 2D model; per metre of depth
 *                  it is a volume of A m^3, so P/A is in W/m^3;
 *   density        rho, kg/m^3;  heat_capacity  c_p, J/(kg K).
 * Meaning: the heat spreads instantly over A and none leaves (no
 * conduction, convection or radiation): an upper bound for a rotor or disc
 * whose whole conducting ring passes the magnets again and again.  A long
 * rail or fin that passes the magnets once: see design_heating_per_pass.
 * loss >= 0, the others > 0, all finite; else EDDY_ERR_INPUT.
 */
eddy_status design_heating_rate(double loss, double area, double density, double heat_capacity,
                              double *dtemp_dt, eddy_error *err);

/*
 * Temperature rise, in K, of conductor material that passes the magnets
 * once at speed v (a fin or rail moving through the field, adiabatic):
 *   dT = P / (rho c_p t v)
 *   loss       P, W per metre of depth, at speed v;
 *   thickness  t, m: conductor thickness across the gap (the band whose
 *              material flows through the field at rho t v kg/s per metre);
 *   speed      v, m/s, > 0.
 * Arguments as design_heating_rate; EDDY_ERR_INPUT if not finite or out of range.
 */
eddy_status design_heating_per_pass(double loss, double thickness, double speed, double density,
                                  double heat_capacity, double *dtemp, eddy_error *err);

/*
 * Temperature rise, in K, of a conductor of mass M (kg) that absorbs the
 * energy E (J) of one stop (design_stop_result.brake_energy) adiabatically:
 *   dT = E / (M c_p).
 * c_p is taken constant (its rise with temperature, some percent per 100 K
 * for copper and aluminium, is ignored); so is the fall of conductivity
 * during the stop, which lowers the drag at low Rm (use
 * design_sigma_at_temperature and solve again at the hot conductivity for a
 * bound).  energy >= 0, mass and heat_capacity > 0; else EDDY_ERR_INPUT.
 */
eddy_status design_stop_temperature_rise(double energy, double mass, double heat_capacity,
                                       double *dtemp, eddy_error *err);

/* The range of temperatures, degrees C, of the linear resistivity model
 * (the one rule, used by the case reader for "temperature" too): below
 * -200 C resistivity levels off at its residual value; 1000 C is above the
 * melting point of aluminium and far beyond any brake conductor. */
#define DESIGN_TEMP_MIN_C (-200.0)
#define DESIGN_TEMP_MAX_C 1000.0

/* The smallest 1 + alpha (T - 20 C) accepted: a resistivity below 5 % of
 * its 20 C value is outside the linear law. */
#define DESIGN_RESISTIVITY_RATIO_MIN 0.05

/*
 * Conductivity at temperature, linear resistivity model:
 *   sigma(T) = sigma_20 / (1 + alpha (T - 20 C)).
 *   sigma_20  S/m at 20 C, > 0;  alpha  1/K at 20 C (DESIGN_ALPHA_*), finite;
 *   temp_c    degrees C in [DESIGN_TEMP_MIN_C, DESIGN_TEMP_MAX_C] (the linear
 *             model is poor at cryogenic temperatures, where resistivity
 *             levels off at its residual value).
 * Returns EDDY_ERR_INPUT for bad arguments or 1 + alpha (T - 20) below
 * DESIGN_RESISTIVITY_RATIO_MIN; the message says which.
 */
eddy_status design_sigma_at_temperature(double sigma_20, double alpha, double temp_c,
                                      double *sigma, eddy_error *err);

/* ------------------------------------------------------------------------ */
/* 5. Finite plate width                                                     */
/* ------------------------------------------------------------------------ */

/*
 * End-effect factor for a conducting plate of finite width under a magnet
 * array of finite width (the Russell-Norsworthy factor: R. L. Russell and
 * K. H. Norsworthy, "Eddy currents and wall losses in screened-rotor
 * induction motors", Proc. IEE 105A (1958); the attribution is from memory
 * and could not be checked against the paper, so the form below is derived
 * afresh in design.c and tested against a numerical solution):
 *
 *   k = 1 - tanh(p) / ( p [1 + tanh(p) tanh(q)] ),
 *   p = pi w_a / (2 tau),   q = pi (w_p - w_a) / (2 tau),
 *
 *   active_width  w_a, m: width of the magnets (the field region) across the
 *                 motion, i.e. along the 2D model's depth;
 *   plate_width   w_p, m: plate width, >= w_a, the plate centred on the
 *                 magnets, so it overhangs by (w_p - w_a)/2 on each side;
 *   pole_pitch    tau, m: distance between neighbouring opposite poles along
 *                 the motion (the field repeats every 2 tau).
 *
 * Use: force of the real brake ~= k * (2D force per metre) * w_a.
 * Assumptions: low magnetic Reynolds number (the induced currents do not
 * alter the field), a thin plate, a field uniform across w_a and zero
 * outside it, fundamental spatial harmonic only.  The factor stands for the
 * extra resistance of the return paths of the current at the plate edges;
 * it multiplies the conductivity (sigma_eff = k sigma), which at low Rm
 * is the same as multiplying the force; at higher speed solving again
 * with sigma_eff is the usual practice (from memory).
 * Limits: 0 < k < 1; k rises with the overhang; k -> 1 as w_a / tau -> inf;
 * no overhang: k = 1 - tanh(p)/p; endless overhang: 1 - tanh(p)/(p (1 + tanh p)).
 * Returns EDDY_ERR_INPUT for non-finite or non-positive widths or pitch, or
 * plate_width < active_width.
 */
eddy_status design_end_effect_factor(double active_width, double plate_width, double pole_pitch,
                                   double *factor, eddy_error *err);

/* ------------------------------------------------------------------------ */
/* 6. Disc brakes                                                            */
/* ------------------------------------------------------------------------ */

/* Speed in m/s of the mean radius r (m) of a disc turning at rpm rev/min:
 * v = 2 pi r rpm / 60. */
double design_disc_speed(double radius, double rpm);

/* The inverse: rpm of a disc whose mean radius r (m) moves at v (m/s). */
double design_disc_rpm(double radius, double speed);

/* Braking torque in N m from the tangential force F (N) at mean radius r (m):
 * T = F r. */
double design_disc_torque(double force, double radius);

/* Braking power in W: P = F v (force in N, speed in m/s).  In steady state it
 * equals the loss in the conductor. */
double design_brake_power(double force, double speed);



/* ------------------------------------------------------------------------ */
/* 7. Drag peak                                                              */
/* ------------------------------------------------------------------------ */

/*
 * The peak of a drag curve sampled at n speeds: the one peak rule of the
 * project.  result.json's "peak" is app_design_evaluate's call of it (over
 * the positive speeds of a sweep, log_speed = 1), and forces.png marks
 * exactly those numbers (post_plot_opts.has_peak, peak_speed, peak_drag)
 * without looking for a peak itself; the peak columns of a batch summary
 * (app_batch.c) call it on the points of each result.json, log_speed = 1
 * when all of them are > 0.
 *
 * The rule:
 *   1. take the sample with the largest |drag| (the first of equal ones),
 *      so either sign convention works;
 *   2. when samples lie on both sides of it in speed, fit the parabola
 *      through |drag| there and at the nearest lower and the nearest
 *      higher speed, in u = log(speed) when every speed is > 0 (pass
 *      log_speed = 1 then, as every caller in the project does), else in
 *      u = speed (log_speed = 0);
 *   3. when that parabola is concave and its vertex lies strictly between
 *      the two neighbours and not below the sample, the vertex is the peak
 *      (*refined = 1); otherwise the sample is (*refined = 0; it is at an
 *      end of the speed range when it has no neighbour on one side).
 * Why log speed: speed lists are usually spaced in ratios (0.1, 0.3, 1,
 * 3, ...) and a brake's drag peak is close to symmetric in log speed - the
 * thin-sheet drag F0 v w / (v^2 + w^2) = F0 / (2 cosh ln(v/w)) exactly - so
 * the parabola in log speed lands near the true maximum: on the thin-sheet
 * shape sampled 4 per decade (any offset of the samples) its vertex is
 * within 0.007 decades and 1 % of the maximum, the one in speed up to 0.075
 * decades and 3 % off (computed for this note; tests/test_brake.c checks
 * 0.02 decades and 1 %, and that the vertex in log speed is the closer).  The base of the logarithm does not move the
 * vertex (log10 is used), and the rule does not depend on how a plot
 * scales its speed axis.
 *   n          number of samples, >= 1.
 *   speed[n]   m/s, any order, finite; all > 0 when log_speed != 0.
 *   drag[n]    finite, any unit (N/m from the solver; kept in *f_peak).
 *   log_speed  1: parabola in log speed; 0: in speed.
 * Outputs (any may be NULL): *v_peak (m/s), *f_peak (the unit of drag,
 * with the sign of the largest sample), *refined (1 if the vertex was
 * taken, else 0).
 * Returns EDDY_OK or EDDY_ERR_INPUT (n < 1, NULL arrays, a non-finite
 * value, a speed <= 0 with log_speed); the outputs are then unchanged.
 */
eddy_status design_peak(int n, const double *speed, const double *drag, int log_speed,
                        double *v_peak, double *f_peak, int *refined, eddy_error *err);

/* ------------------------------------------------------------------------ */
/* 8. Damping: linear range and terminal speed (design_damp.c)               */
/* ------------------------------------------------------------------------ */

/* The deviation from the linear law F = c v that still counts as linear
 * (5 %, the figure of the result's "linear_up_to_speed"). */
#define DESIGN_LINEAR_TOL 0.05

/* Where a sampled drag curve leaves the linear law. */
typedef enum {
    DESIGN_LINEAR_CROSSED = 0,  /* *v_lin is the interpolated first crossing       */
    DESIGN_LINEAR_NEVER_LEAVES, /* every sample lies within tol: linear at least up
                                 * to the highest speed (*v_lin NAN)               */
    DESIGN_LINEAR_STARTS_ABOVE  /* the lowest sample already deviates by more than
                                 * tol: the crossing lies below the sweep (NAN)    */
} design_linear_state;

/*
 * The speed up to which a drag curve stays within tol of the linear law
 * drag = c v (c the damping coefficient from the static field).
 * With e_k = drag_k / (c v_k) - 1 at the samples, k the first sample with
 * |e_k| > tol: the crossing |e| = tol lies between v_{k-1} and v_k and is
 * interpolated there, with ln |e| linear in ln v when e_{k-1} and e_k have
 * one sign and e_{k-1} != 0 (exact for the leading low-speed deviation, a
 * power of v: -(v/w)^2 for the thin-sheet drag of Reitz 1970), otherwise
 * with e linear in ln v.  Later samples are not looked at: the answer is
 * the first crossing.
 *   n          number of samples, >= 1.
 *   speed[n]   m/s, finite, > 0, strictly increasing.
 *   drag[n]    finite, the unit of c times m/s (N/m from the solver).
 *   c          damping coefficient, finite and > 0 (N s/m^2 from the solver).
 *   tol        relative deviation, 0 < tol < 1 (DESIGN_LINEAR_TOL).
 * Outputs: *v_lin (m/s; NAN unless DESIGN_LINEAR_CROSSED), *state.
 * Returns EDDY_OK or EDDY_ERR_INPUT (a bad argument; outputs unchanged).
 */
eddy_status design_linear_range(int n, const double *speed, const double *drag, double c,
                                double tol, double *v_lin, design_linear_state *state,
                                eddy_error *err);

/* Where a load that falls under a constant weight settles. */
typedef enum {
    DESIGN_TERMINAL_FOUND = 0,  /* *v_t: the crossing, interpolated             */
    DESIGN_TERMINAL_BELOW_SWEEP, /* the drag at the lowest speed already exceeds
                                  * the weight: the crossing lies below it       */
    DESIGN_TERMINAL_ABOVE_SWEEP, /* every drag is below the weight and the drag
                                  * is largest at the highest speed: the crossing
                                  * may lie above the sweep                      */
    DESIGN_TERMINAL_NONE         /* the drag peaks inside the sweep below the
                                  * weight: there is no terminal speed, the load
                                  * keeps speeding up                            */
} design_terminal_state;

/*
 * Terminal speed of a load pulled along the motion by a constant force W
 * (its weight m g less any constant retarding force): the lowest speed at
 * which the braking force F(v) of the table reaches W, where m dv/dt =
 * W - F(v) has its stable rest point (below it F < W and the load speeds
 * up, just above it F > W and it slows down).  k is the first sample with
 * force[k] >= W; the root of F(v) = W on [v_{k-1}, v_k] is found by
 * bisection on the force curve of the table (section 2, interpolation
 * interp, the one the stop uses), which is monotone on the interval, so
 * the root is unique.
 *   n, speed[n], force[n]  the table, as design_force_curve_build (N, m/s;
 *                          forces > 0 for DESIGN_INTERP_LOGLOG).
 *   weight                 W, N, finite and > 0.
 * Outputs: *v_t (m/s; NAN unless DESIGN_TERMINAL_FOUND), *state.
 * Returns EDDY_OK, EDDY_ERR_INPUT (bad table or weight; outputs unchanged),
 * EDDY_ERR_NOMEM.
 */
eddy_status design_terminal_speed(int n, const double *speed, const double *force, double weight,
                                  design_interp interp, double *v_t, design_terminal_state *state,
                                  eddy_error *err);

#endif
