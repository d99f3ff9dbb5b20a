/*
 * post.h - public interface of the post-processing module (prefix post_).
 *
 * Last stage of the pipeline: from the node values of A on a mesh_grid to
 * forces, losses, field values and reports.  Nothing here changes the grid
 * or the solution.
 *
 * Conventions: forces are per metre of out-of-plane depth (per period and
 * metre for a periodic domain), on the moving regions.  B = (dA/dy, -dA/dx);
 * J_z = -sigma v dA/dx in moving cells.
 */
#ifndef EDDY_POST_H
#define EDDY_POST_H

#include <stddef.h>
#include <stdio.h>

#include "mesh/mesh.h"
#include "solver/sol.h"

/* Forces and losses at one speed. */
typedef struct {
    double speed;              /* m/s */
    double force_x, force_y;   /* N/m, force on the moving regions, by force_method */
    double drag;               /* N/m, -force_x * sign(speed): braking is positive */
    const char *force_method;  /* static text, how force_x, force_y, drag were obtained:
                                * "lorentz": J x B integral (non-magnetic conductors);
                                * "stress_tensor": Maxwell stress on a contour in air
                                * around the moving band (a magnetised conductor: mu_r != 1
                                * or a B-H curve, where J x B misses the force on the
                                * magnetisation); "lorentz_incomplete": a magnetised
                                * conductor without an air contour, J x B only;
                                * "reference": the layered reference */
    double lorentz_x, lorentz_y; /* N/m, the J x B integral, whatever force_method */
    int stress_ok;             /* 1 if the stress-tensor contour exists (air around the band) */
    double stress_x, stress_y; /* N/m, Maxwell stress tensor force on the moving band */
    double drag_stress;        /* N/m, -stress_x * sign(speed) */
    double loss;               /* W/m, integral of J^2 / sigma */
    double low_speed_drag;     /* N/m, sigma |v| * integral of B0_y^2 (static field) */
    double magnetic_reynolds;  /* mu0 sigma |v| t of the moving band */
    double j_peak;             /* A/m^2, largest |J_z| of a node's dual cell */
    double loss_density_peak;  /* W/m^3, largest J^2/sigma of a node's dual cell */
    double loss_density_mean;  /* W/m^3, loss / conductor_area */
    double conductor_area;     /* m^2, cross-section of the moving conductors */
    double heating_rate;       /* K/s, adiabatic: loss / (rho c_p area); NAN if unknown */
    double rpm;                /* disc brakes: revolutions per minute; NAN otherwise */
    double torque, power;      /* disc brakes: N m, W of the whole disc; NAN otherwise */
    double drag_end_corrected; /* N/m, drag x the end-effect factor; NAN if not asked */
} post_forces;

/*
 * Integral over the moving cells of sigma * B_y^2 for the static field
 * a_static (nx*ny node values, Wb/m): the low-speed drag per unit speed,
 * low_speed_drag = |v| * post_lowspeed_slope(g, a_static).
 * Units: N s/m^2 (N per metre of depth, per m/s).
 */
double post_lowspeed_slope(const mesh_grid *g, const double *a_static);

/*
 * Forces, loss and checks at speed v for the solution a (nx*ny, Wb/m).
 *   lowspeed_slope: from post_lowspeed_slope of the static field (N s/m^2).
 *   f:   output.
 * The Lorentz force and the loss use 2 x 2 Gauss points per moving cell
 * (exact for the bilinear interpolant of A).  The stress-tensor force is the
 * average over the rows of air cells directly above and below the moving
 * band (a band average of the line integral; equal to the line integral
 * for an exact field, less sensitive to discretisation error); it is not
 * available (stress_ok = 0) when no air row touches the band or a
 * stationary non-air cell lies inside it.  On a zero (A = 0) boundary that
 * bounds the band the normal field is zero, and its pressure is included.
 * When a moving conductor is magnetised (reluctivity g->nu != 1/mu0 in a
 * moving cell) and the stress contour exists, force_x, force_y and drag are
 * the stress-tensor values (force_method "stress_tensor"); otherwise the
 * J x B values.  With saturable materials pass a copy of the grid whose nu
 * holds the converged cell reluctivities (sol_solve_newton's nu_cells), so
 * that the induced current uses the solver's fluxes.
 * Returns EDDY_OK or EDDY_ERR_NUMERIC (non-finite result).
 */
eddy_status post_forces_compute(const mesh_grid *g, const double *a, double v,
                                double lowspeed_slope, post_forces *f, eddy_error *err);

/*
 * Induced current density J_z at the nodes (A/m^2), consistent with the
 * solver's fitted fluxes (the current used for the forces): the current of
 * the part of each node's dual cell inside moving conductors divided by that
 * part's area; 0 at nodes not touching a moving conductor.  At a conductor
 * surface the value is the mean over the conductor side only.
 *   jz: output, nx*ny, caller-owned.
 * Returns EDDY_OK or EDDY_ERR_NOMEM.
 */
eddy_status post_current_density(const mesh_grid *g, const double *a, double v, double *jz,
                                 eddy_error *err);

/*
 * Flux density at a point (m): the derivative of the bilinear interpolant
 * of A in the cell holding (x, y).  Returns EDDY_ERR_INPUT outside the grid.
 */
eddy_status post_field_at(const mesh_grid *g, const double *a, double x, double y, double *bx,
                          double *by);

/* ------------------------------------------------------------------------ */
/* Brake design (post_brake.c)                                               */
/* ------------------------------------------------------------------------ */
/*
 * Brake-design answers from a force-speed curve (prefix post_).
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
 */

/* Standard acceleration of gravity, m/s^2 (3rd CGPM 1901; ISO 80000-3). */
#define POST_STANDARD_GRAVITY 9.80665

/* Temperature coefficient of resistance at 20 C, 1/K.
 * Annealed copper: 0.00393 (IEC 60028, the International Annealed Copper
 * Standard).  Hard-drawn aluminium: 0.00403 (IEC 60889; from memory).  Alloys
 * have much smaller coefficients: use the supplier's value. */
#define POST_ALPHA_COPPER 0.00393
#define POST_ALPHA_ALUMINIUM 0.00403

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
eddy_status post_pchip_slopes(int n, const double *x, const double *y, double *d,
                              eddy_error *err);

/*
 * Value of the interpolant at xq, given the n >= 2 nodes x, y and the
 * derivatives d from post_pchip_slopes (not re-validated).  Outside
 * [x[0], x[n-1]] the cubic of the first or last interval is continued
 * (extrapolation: no shape guarantee).  Interval found by bisection.
 * For data that are better behaved against log x (log-spaced speeds), pass
 * ln x to post_pchip_slopes and ln xq here.
 */
double post_pchip_eval(int n, const double *x, const double *y, const double *d, double xq);

/* Derivative dy/dx of the interpolant at xq (same arguments and conventions
 * as post_pchip_eval). */
double post_pchip_deriv(int n, const double *x, const double *y, const double *d, double xq);

/* ------------------------------------------------------------------------ */
/* 2. Braking-force curve                                                    */
/* ------------------------------------------------------------------------ */

/* What the monotone cubic interpolates (section 1).  Every choice keeps the
 * interpolant monotone on each table interval (the maps v -> ln v and
 * ln F -> F are monotone), so it never overshoots the table. */
typedef enum {
    POST_INTERP_LIN = 0, /* F against v: exact for F = a + b v                */
    POST_INTERP_LOGV,    /* F against ln v                                     */
    POST_INTERP_LOGLOG   /* ln F against ln v: exact for any power law c v^p,
                            so for the linear low-speed and the falling
                            high-speed branches of a drag curve; needs F > 0 */
} post_interp;

/*
 * A braking force F(v) >= 0 (N) tabulated at speeds v[0] < ... < v[n-1]
 * (m/s, v[0] > 0), and its interpolant:
 *   v >= v[0]: monotone cubic (post_pchip_*) as chosen by post_interp;
 *              above v[n-1] the last cubic is continued (callers stay inside);
 *   0 < v < v[0]: F = F(v[0]) v / v[0], the linear law that every eddy-
 *              current drag follows at low speed (induced current
 *              proportional to v while the reaction field is negligible);
 *   v <= 0:    0.
 * All arrays are owned by the curve (copies of the caller's table).
 */
typedef struct {
    int n;
    post_interp interp;
    double *speed; /* n, m/s                                         */
    double *force; /* n, N                                           */
    double *knot;  /* n, abscissae of the interpolant (v or ln v)    */
    double *value; /* n, ordinates of the interpolant (F or ln F)    */
    double *slope; /* n, d(value)/d(knot) at the nodes               */
} post_force_curve;

/*
 * Build a force curve from a table (copied).  n >= 2; speeds finite,
 * positive, strictly increasing; forces finite and >= 0 (> 0 for
 * POST_INTERP_LOGLOG).
 *   interp: see post_interp.
 *   out: receives the curve; free it with post_force_curve_free.
 * Returns EDDY_OK, EDDY_ERR_INPUT (the message names the bad entry) or
 * EDDY_ERR_NOMEM.  On error *out is NULL.
 */
eddy_status post_force_curve_build(int n, const double *speed, const double *force,
                                   post_interp interp, post_force_curve **out,
                                   eddy_error *err);

/* Free a curve; NULL is allowed. */
void post_force_curve_free(post_force_curve *c);

/* F(v) in N as described above. */
double post_force_curve_eval(const post_force_curve *c, double v);

/* ------------------------------------------------------------------------ */
/* 3. Stopping                                                               */
/* ------------------------------------------------------------------------ */

/* What to stop and how far. */
typedef struct {
    double mass;        /* kg, > 0: the moving mass                           */
    double extra_force; /* N, >= 0: constant retarding force added to the
                           brake (friction, a slope's weight component);
                           its work is not dissipated in the conductor       */
    double from_speed;  /* m/s, v0: 0 < v0 <= highest tabulated speed         */
    double to_speed;    /* m/s, v1: 0 < v1 < v0; v1 = 0 only if extra_force > 0 */
    double rel_tol;     /* relative accuracy of the quadrature; 0: 1e-9;
                           otherwise in [1e-13, 1e-3]                          */
    post_interp interp; /* how the table is interpolated; POST_INTERP_LOGLOG is
                           the most accurate for log-spaced speed lists (see
                           post_stop_compute)                                  */
    int n_samples;      /* trajectory points: 0 (none) or >= 2, <= 10^7       */
} post_stop_input;

/* Fill *in with: mass 1 kg, extra_force 0, from_speed and to_speed 0 (the
 * caller must set them), rel_tol 0 (1e-9), interp POST_INTERP_LIN, n_samples 0. */
void post_stop_defaults(post_stop_input *in);

/* Results of one stop.  The sampled trajectory is owned by the result
 * (one allocation); release it with post_stop_result_free. */
typedef struct {
    double distance;        /* m, x = integral_{v1}^{v0} m v / F_tot(v) dv      */
    double time;            /* s, t = integral_{v1}^{v0} m / F_tot(v) dv        */
    double peak_decel;      /* m/s^2, max of F_tot(v) / m over [v1, v0]          */
    double peak_decel_g;    /* peak_decel / POST_STANDARD_GRAVITY                */
    double speed_at_peak;   /* m/s, where the peak occurs                         */
    double kinetic_energy;  /* J, m (v0^2 - v1^2) / 2                            */
    double brake_energy;    /* J, dissipated in the conductor: integral F dx,
                               computed as integral m v F / F_tot dv            */
    double extra_work;      /* J, extra_force * distance                          */
    int n_samples;          /* length of the arrays below (0: none)               */
    double *s_speed;        /* m/s, v0 down to v1, equal steps in speed           */
    double *s_distance;     /* m, travelled since v0                              */
    double *s_time;         /* s, since v0                                        */
    double *s_decel;        /* m/s^2, F_tot(v) / m                                */
} post_stop_result;

/*
 * Stop a mass m from v0 to v1 under m dv/dt = -(F(v) + F_extra), with F the
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
 * usual log-spaced speed lists choose POST_INTERP_LOGLOG (exact for the
 * linear low-speed branch and for power-law high-speed branches).
 *
 * Why v1 > 0 without an extra force: the drag falls to zero with speed
 * (linearly), so with nothing else acting the load never comes to rest: the
 * time to v1 grows like ln(1/v1) (the distance stays finite).  With
 * extra_force > 0 the net force stays positive and v1 = 0 is allowed.
 * Without an extra force every tabulated force must be > 0 (a zero force
 * would make the time and distance infinite).
 *
 *   n, speed[n], force[n]  the table (N, m/s; see post_force_curve_build).
 *   in                     the stop (see post_stop_input).
 *   res                    output; on error it holds no allocation.
 * Returns EDDY_OK, EDDY_ERR_INPUT (message names the problem), EDDY_ERR_NOMEM
 * or EDDY_ERR_NUMERIC (non-finite result, or the quadrature did not reach
 * rel_tol within 60 bisections).
 */
eddy_status post_stop_compute(int n, const double *speed, const double *force,
                              const post_stop_input *in, post_stop_result *res,
                              eddy_error *err);

/* Free the trajectory of a result and zero its array fields; NULL allowed. */
void post_stop_result_free(post_stop_result *res);

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
 * n >= 3.  Returns as post_stop_compute.
 */
eddy_status post_stop_table_change(int n, const double *speed, const double *force,
                                   const post_stop_input *in, double *rel_change_distance,
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
 * rail or fin that passes the magnets once: see post_heating_per_pass.
 * loss >= 0, the others > 0, all finite; else EDDY_ERR_INPUT.
 */
eddy_status post_heating_rate(double loss, double area, double density, double heat_capacity,
                              double *dtemp_dt, eddy_error *err);

/*
 * Temperature rise, in K, of conductor material that passes the magnets
 * once at speed v (a fin or rail moving through the field, adiabatic):
 *   dT = P / (rho c_p t v)
 *   loss       P, W per metre of depth, at speed v;
 *   thickness  t, m: conductor thickness across the gap (the band whose
 *              material flows through the field at rho t v kg/s per metre);
 *   speed      v, m/s, > 0.
 * Arguments as post_heating_rate; EDDY_ERR_INPUT if not finite or out of range.
 */
eddy_status post_heating_per_pass(double loss, double thickness, double speed, double density,
                                  double heat_capacity, double *dtemp, eddy_error *err);

/*
 * Temperature rise, in K, of a conductor of mass M (kg) that absorbs the
 * energy E (J) of one stop (post_stop_result.brake_energy) adiabatically:
 *   dT = E / (M c_p).
 * c_p is taken constant (its rise with temperature, some percent per 100 K
 * for copper and aluminium, is ignored); so is the fall of conductivity
 * during the stop, which lowers the drag at low Rm (use
 * post_sigma_at_temperature and solve again at the hot conductivity for a
 * bound).  energy >= 0, mass and heat_capacity > 0; else EDDY_ERR_INPUT.
 */
eddy_status post_stop_temperature_rise(double energy, double mass, double heat_capacity,
                                       double *dtemp, eddy_error *err);

/*
 * Conductivity at temperature, linear resistivity model:
 *   sigma(T) = sigma_20 / (1 + alpha (T - 20 C)).
 *   sigma_20  S/m at 20 C, > 0;  alpha  1/K at 20 C (POST_ALPHA_*), finite;
 *   temp_c    degrees C, >= -200 (the linear model is poor at cryogenic
 *             temperatures, where resistivity levels off at its residual value).
 * Returns EDDY_ERR_INPUT for bad arguments or 1 + alpha (T - 20) <= 0.
 */
eddy_status post_sigma_at_temperature(double sigma_20, double alpha, double temp_c,
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
 * afresh in post_brake.c and tested against a numerical solution):
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
eddy_status post_end_effect_factor(double active_width, double plate_width, double pole_pitch,
                                   double *factor, eddy_error *err);

/* ------------------------------------------------------------------------ */
/* 6. Disc brakes                                                            */
/* ------------------------------------------------------------------------ */

/* Speed in m/s of the mean radius r (m) of a disc turning at rpm rev/min:
 * v = 2 pi r rpm / 60. */
double post_disc_speed(double radius, double rpm);

/* Braking torque in N m from the tangential force F (N) at mean radius r (m):
 * T = F r. */
double post_disc_torque(double force, double radius);

/* Braking power in W: P = F v (force in N, speed in m/s).  In steady state it
 * equals the loss in the conductor. */
double post_brake_power(double force, double speed);


/* ------------------------------------------------------------------------ */
/* Reports                                                                   */
/* ------------------------------------------------------------------------ */

/* Solver statistics of one speed, as reported (seconds). */
typedef struct {
    double t_assemble, t_factor, t_solve, t_post;
    double lnz, unz, flops;
    /* saturable materials: the Newton-Raphson solve (newton.iterations = 0
     * and newton.n_residual = 0 for a linear case) */
    sol_newton_info newton;
} post_point_info;

/* Whether the layered Fourier reference applies to a case. */
typedef enum {
    POST_REF_NONE = 0,          /* not asked for */
    POST_REF_NOT_APPLICABLE,    /* the case does not fit; ref_note says why */
    POST_REF_OK,                /* fits exactly */
    POST_REF_APPROXIMATE,       /* fits with magnets' recoil mu_r taken as 1 */
    POST_REF_FAILED             /* fits, but the quadrature failed; ref_note says why */
} post_ref_state;

/* The result of one run (a solve, or a reference evaluation): everything
 * the reports need.  Owns all its members; free with post_report_free.
 * Arrays have npoint entries. */
typedef struct {
    mesh_case *c;
    mesh_grid *g;               /* NULL for a reference-only run */
    const char *method;         /* static text: how the forces were computed */
    long unknowns;              /* 0 for a reference-only run */
    double t_mesh, t_analyse;   /* s */
    int npoint;
    post_forces *f;
    post_point_info *info;
    post_ref_state ref_state;
    char ref_note[512];
    double *ref_drag, *ref_force_y; /* N/m from the reference, NULL unless it applies */
    const char *ordering;       /* fill-reducing ordering used (static text) */
    double factor_bytes;        /* UMFPACK's estimated peak memory of one factorisation */
    int threads;                /* speeds solved at once */
    /* brake design (post_design.c) */
    int has_peak;
    double peak_drag, peak_speed; /* N/m, m/s (interpolated when peak_refined) */
    int peak_refined, peak_at_end; /* refined by a parabola; the largest drag is at an end */
    double end_factor;          /* Russell-Norsworthy factor, NAN if not asked */
    int has_stop;
    post_stop_result stop;      /* the vehicle's stop (has_stop) */
    double stop_table_change;   /* relative change of the distance on half tables */
    double stop_temperature_rise; /* K, NAN if no conductor mass */
    int adapt_rounds;           /* adaptive sweep: refinement rounds done */
    char outdir[4096];          /* where the outputs went */
} post_report;

/* Free a report and everything it owns; accepts NULL. */
void post_report_free(post_report *r);

/* ------------------------------------------------------------------------ */
/* Brake-design answers of a run (post_design.c)                             */
/* ------------------------------------------------------------------------ */

/* Sort a report's points (forces, infos, the case's speeds) by speed. */
void post_design_sort(post_report *r);

/*
 * Speeds to add to an adaptive sweep (the report's points sorted by speed,
 * all speeds and drags positive): where the monotone cubic (Fritsch and
 * Carlson 1980) in log speed and log drag through the other points misses
 * a point by more than 0.5 % (0.1 % at the drag peak), the midpoints (in
 * log speed) of its two intervals.  Writes at most max_new speeds (m/s) into
 * speeds and returns how many.
 */
int post_design_refine(const post_report *r, double *speeds, int max_new);

/*
 * Fill the design answers of a finished run: per point the adiabatic
 * heating rate (from the moving materials' density and specific heat), disc
 * torque and power (case "disc"), the end-corrected drag (case
 * "end_effect", Russell-Norsworthy factor); the drag peak (parabola in log
 * speed through the largest sampled drag and its neighbours); the stop of
 * the case's "vehicle" (force = drag x depth x repeat, monotone cubic in
 * log-log, post_stop_compute), the change of its distance when half the
 * points are used, and the conductor's temperature rise.
 * Returns EDDY_OK, EDDY_ERR_INPUT (e.g. the stop's speeds outside the
 * sweep), EDDY_ERR_NOMEM.
 */
eddy_status post_design_evaluate(post_report *r, eddy_error *err);

/* The largest acceptable relative change of the stopping distance when the
 * speed table is halved (0.005). */
double post_design_stop_tolerance(void);

/* Options of a run. */
typedef struct {
    const char *outdir;         /* output folder; NULL: results/<case name> */
    int images;                 /* 1: write the PNG pictures */
    int vtk;                    /* 1: write a VTK .vtr field file per speed */
    int full_domain;            /* 1: pictures of the whole domain, 0: cropped */
    int reference;              /* 1: add the layered reference where it fits */
    int threads;                /* speeds solved at once (0: the machine's cores); fewer
                                 * when their factorisations would not fit in memory */
    double max_memory;          /* bytes allowed for one factorisation (0: no limit
                                 * beyond the machine's) */
    int max_newton;             /* Newton-Raphson steps allowed per speed with saturable
                                 * materials, 1..SOL_NEWTON_MAX_ITER (0: the maximum) */
    /* optional progress callback after each speed k (0-based) of n */
    void (*progress)(void *ctx, int k, int n, const post_forces *f);
    void *progress_ctx;
} post_run_opts;

/* Defaults: outdir NULL, images 1, vtk 0, full_domain 0, reference 1, no
 * progress callback. */
void post_run_opts_defaults(post_run_opts *o);

/*
 * The whole job for one case file: read and validate it, mesh, solve the
 * static field and every speed (one symbolic analysis, one numeric
 * factorisation per speed), compute forces and losses, evaluate the layered
 * reference where the case fits, and write result.json, forces.csv and the
 * pictures into the output folder (created only after the case and the mesh
 * are valid, so bad input writes nothing).
 *   out: receives the report (caller frees with post_report_free); it is
 *        also returned on a failure after the case was read, so the caller
 *        can name the case; NULL otherwise.
 * Returns EDDY_OK or the first error (EDDY_ERR_INPUT / EDDY_ERR_TOO_LARGE /
 * EDDY_ERR_IO for the input; others during computation).
 */
eddy_status post_run_solve(const char *case_path, const post_run_opts *o, post_report **out,
                           eddy_error *err);

/*
 * The window the field pictures show (m): every non-air region (moving
 * conductors only over the x-range of the stationary parts; a periodic
 * domain's full period), with a margin, clipped to the domain; the whole
 * domain if full is non-zero.
 */
void post_view_window(const mesh_case *c, int full, double view[4]);

/*
 * The layered Fourier reference alone for a case that fits it: the same
 * result.json fields (drag_force, force_x, force_y, loss, low_speed_drag,
 * magnetic_reynolds) from the reference solver.  Returns
 * EDDY_ERR_NOT_APPLICABLE with the reason when the case does not fit.
 */
eddy_status post_run_reference(const char *case_path, const post_run_opts *o,
                               post_report **out, eddy_error *err);

/*
 * Write DIR/result.json and DIR/forces.csv.  Each file is written to a
 * temporary name in DIR and renamed when complete, so an interrupted run
 * never leaves a half-written result.  dir must exist.
 * Returns EDDY_OK, EDDY_ERR_IO, EDDY_ERR_NOMEM.
 */
eddy_status post_write_results(const char *dir, const post_report *r, eddy_error *err);

/*
 * Create a directory and its parents (like mkdir -p).  Returns EDDY_OK or
 * EDDY_ERR_IO.
 */
eddy_status post_make_dir(const char *dir, eddy_error *err);

/*
 * Write `size` bytes to path atomically: to a temporary file in the same
 * directory, flushed to disk, then renamed over path.
 */
eddy_status post_write_atomic(const char *path, const char *data, size_t size,
                              eddy_error *err);

/* The safety notice printed by the tool and written into result.json. */
const char *post_safety_notice(void);

/* ------------------------------------------------------------------------ */
/* Pictures (post_img.c): field maps and force-speed plots as PNG, drawn    */
/* with cairo into an image buffer and written with libpng.                  */
/* ------------------------------------------------------------------------ */
/*
 * Pictures of the post-processing module: field maps and
 * force-speed plots, drawn with cairo into an image buffer and written as
 * PNG with libpng.
 *
 * Conventions shared by every function here:
 *   - all inputs are in SI units (m, T, Wb/m, A/m^2, N/m, m/s); the scale
 *     factors in the option structs convert to display units for labels only;
 *   - nothing is printed and nothing exits: every function that can fail
 *     returns an eddy_status (EDDY_OK on success) and, if err is non-NULL,
 *     fills it with a message;
 *   - the caller keeps ownership of every array and string passed in; none
 *     is retained after the call returns;
 *   - pictures are written as 8-bit RGB PNG files (RGBA only if a pixel is
 *     not opaque, which the renderers here never produce) with text chunks
 *     describing the content (tEXt, or iTXt when a value is not plain ASCII).
 *
 * Text is drawn with cairo's "sans-serif" toy font.  In the quantity and
 * unit labels of a field map, "_x" / "_{abc}" draw a subscript and "^2" /
 * "^{-1}" a superscript ("J_z", "MA/m^2"); titles and case names are drawn
 * literally.
 */

/* ------------------------------------------------------------------ */
/* Colour maps                                                         */
/* ------------------------------------------------------------------ */

/* Colour of a normalised value t in [0, 1] (clamped; NaN gives 0.5).
 *   diverging != 0: Moreland's diverging "cool to warm" map (2009),
 *                   interpolated in his Msh colour space between the end
 *                   colours (59,76,192) and (180,4,38); t = 0.5 is the
 *                   neutral grey-white (221,221,221);
 *   diverging == 0: viridis (van der Walt & Smith, 2015), 256-entry table
 *                   interpolated linearly.
 * rgb receives sRGB components 0..255 (rounded).  Never fails. */
void post_cmap_rgb(int diverging, double t, unsigned char rgb[3]);

/* ------------------------------------------------------------------ */
/* Field map                                                           */
/* ------------------------------------------------------------------ */

typedef struct {
    const char *title;       /* UTF-8 title drawn above the map; NULL: none      */
    const char *quantity;    /* e.g. "J_z" or "|B|": colour-bar label, PNG text  */
    const char *unit_label;  /* display unit, e.g. "MA/m^2" or "T"               */
    double value_scale;      /* display value = SI value * value_scale           */
    int diverging;           /* 1: cool-warm, range -m..m with m = max |v|;
                                0: viridis, range min(0, vmin)..vmax             */
    const char *length_unit; /* axis unit label, e.g. "mm" or "m"                */
    double length_scale;     /* display length = metres * length_scale           */
    int width_px;            /* image width in px (0: 1200; 300..10000)          */
    double view[4];          /* x0, y0, x1, y1 in m: the window drawn (crop)      */
    int n_flux_lines;        /* contours of A at equal steps (0..1000); 0: none  */
    const double *outlines;  /* n_outlines rectangles x0,y0,x1,y1 (m), may be NULL
                                when n_outlines == 0                             */
    int n_outlines;
    const char *case_name;   /* PNG text "eddy2d:case"; NULL: omitted            */
    double speed;            /* m/s, PNG text "eddy2d:speed_m_per_s"; NaN: omitted */
    const char *version;     /* tool version for PNG text "Software"; NULL: none */
} post_map_opts;

/* Fill *o with defaults: no title, quantity "value", unit "", value_scale 1,
 * viridis, axes in mm (length_scale 1000), width 1200 px, view all zero
 * (meaning: the whole grid), no flux lines, no outlines, speed NaN. */
void post_map_opts_defaults(post_map_opts *o);

/* Where things go in a field-map image (all in px, origin top-left, y down).
 * The plot rectangle holds exactly plot_w x plot_h resampled field pixels;
 * plot_h = round(plot_w * view height / view width) (true geometry). */
typedef struct {
    int width, height;        /* image size                                  */
    int plot_x, plot_y;       /* top-left pixel of the field rectangle        */
    int plot_w, plot_h;       /* its size                                    */
    int bar_x, bar_y;         /* top-left pixel of the colour-bar gradient    */
    int bar_w, bar_h;         /* its size (top row = vmax)                   */
    double vmin, vmax;        /* colour range, SI units of the field          */
    double view[4];           /* the view actually drawn, m                   */
} post_map_geom;

/* Compute the layout post_map_png would use for the same arguments, without
 * drawing.  Arguments as for post_map_png (a_nodes is not needed).
 * Returns EDDY_OK, EDDY_ERR_INPUT (bad argument), EDDY_ERR_NUMERIC
 * (non-finite field value) or EDDY_ERR_NOMEM. */
eddy_status post_map_geometry(int nx, int ny, const double *x, const double *y,
                              const double *field, const unsigned char *cell_mask,
                              const post_map_opts *o, post_map_geom *g, eddy_error *err);

/* Draw a colour map of a nodal field and write it as a PNG file.
 *   path       output file (overwritten).
 *   nx, ny     grid size, both >= 2.
 *   x[nx], y[ny] node coordinates in m, finite and strictly increasing
 *              (non-uniform tensor grid).
 *   field      node values (SI), nx*ny, index i + nx*j.  Each pixel of the
 *              map is located on the grid by binary search and the field is
 *              interpolated bilinearly inside its cell.
 *   cell_mask  optional, (nx-1)*(ny-1) bytes, index i + (nx-1)*j: cells with
 *              0 are painted as the value 0 (e.g. J outside conductors) and
 *              do not count for the colour range; NULL: all cells count.
 *   a_nodes    optional node values of the vector potential A_z (Wb/m),
 *              nx*ny, for o->n_flux_lines contour lines at equal steps of A
 *              between min and max A over the cells in view (so their
 *              density shows |B|); NULL: no flux lines.
 *   o          options (see post_map_opts); view all zero = whole grid.
 * Pixels of the view outside the grid are left white.  y points up.
 * Returns EDDY_OK; EDDY_ERR_INPUT for a bad argument; EDDY_ERR_NUMERIC for a
 * non-finite field or A value; EDDY_ERR_NOMEM; EDDY_ERR_IO when the file
 * cannot be written. */
eddy_status post_map_png(const char *path, int nx, int ny, const double *x, const double *y,
                         const double *field, const unsigned char *cell_mask,
                         const double *a_nodes, const post_map_opts *o, eddy_error *err);

/* ------------------------------------------------------------------ */
/* Force-speed plot                                                    */
/* ------------------------------------------------------------------ */

typedef struct {
    const char *title;     /* UTF-8; NULL: "Forces vs speed"                */
    const char *case_name; /* PNG text "eddy2d:case"; NULL: omitted         */
    const char *version;   /* PNG text "Software"; NULL: omitted            */
    int width_px, height_px; /* 0: 1000 x 650; each 300..10000              */
} post_plot_opts;

/* Fill *o with the defaults above (all NULL, sizes 0 = default). */
void post_plot_opts_defaults(post_plot_opts *o);

/* Peak of a drag curve.  speed[n] (m/s, any order, n >= 1), drag[n] (N/m).
 * The sample with the largest |drag| is taken (so either sign convention
 * works); when it is not at either end of the speed range, a parabola
 * through |drag| there and at its two speed-neighbours - in log10(speed) if
 * log_speed (all speeds must then be > 0), else in speed - is used instead
 * when it is concave, since its vertex is a better estimate of the true
 * maximum between samples.  Outputs (any may be NULL): *v_peak (m/s),
 * *f_peak (N/m, with the sign of the largest sample), *refined (1 if the
 * parabola was used, else 0).
 * Returns EDDY_OK or EDDY_ERR_INPUT (n < 1, NULL arrays, non-finite values,
 * speed <= 0 with log_speed). */
eddy_status post_force_peak(int n, const double *speed, const double *drag, int log_speed,
                            double *v_peak, double *f_peak, int *refined, eddy_error *err);

/* Plot drag and normal force per unit length against speed and write a PNG.
 *   speed[n]   m/s (n >= 1); drag[n], normal[n] N/m (normal may be NULL).
 *              Computed points are marked and joined in speed order.
 *   low_speed_slope  drag/speed at low speed (N/m per m/s), drawn as the
 *              dashed line drag = slope * v; NAN: not drawn.
 *   ref_n, ref_speed, ref_drag, ref_normal  reference curve(s) drawn as thin
 *              lines without markers; ref_n may be 0 (arrays then unused);
 *              with ref_n > 0 ref_speed is required and either of ref_drag /
 *              ref_normal may be NULL.
 *   o          options; may be NULL for defaults.
 * The speed axis is logarithmic when all |speeds| are > 0, of one sign and
 * span more than a decade (|v| is then plotted), else linear.  The peak drag
 * (see post_force_peak) is marked and labelled with its speed.
 * Returns EDDY_OK; EDDY_ERR_INPUT for bad arguments; EDDY_ERR_NUMERIC for a
 * non-finite value; EDDY_ERR_NOMEM; EDDY_ERR_IO when the file cannot be
 * written. */
eddy_status post_plot_forces_png(const char *path, int n, const double *speed,
                                 const double *drag, const double *normal,
                                 double low_speed_slope, int ref_n, const double *ref_speed,
                                 const double *ref_drag, const double *ref_normal,
                                 const post_plot_opts *o, eddy_error *err);

/* ------------------------------------------------------------------ */
/* Two curves against a common x                                       */
/* ------------------------------------------------------------------ */

typedef struct {
    const char *title;     /* drawn above the plot (NULL: none) and PNG text "Title" */
    const char *case_name; /* PNG text "eddy2d:case"; NULL: omitted                 */
    const char *version;   /* tool version for PNG text "Software"; NULL: none      */
    const char *x_label;   /* x-axis title, e.g. "distance (m)"; PNG "eddy2d:x"     */
    const char *y1_label;  /* left axis, e.g. "speed (m/s)"; PNG "eddy2d:y1"        */
    const char *y2_label;  /* right axis, e.g. "deceleration (m/s^2)"; PNG
                              "eddy2d:y2"; unused without y2                        */
    const char *y1_name, *y2_name; /* legend entries (NULL: the axis label)         */
    int width_px, height_px;       /* 0: 1000 x 650; each 300..10000               */
} post_xy_opts;

/* Fill *o with defaults: everything NULL / 0. */
void post_xy_opts_defaults(post_xy_opts *o);

/* Plot y1 (and y2) against x and write a PNG.
 *   x[n], y1[n]  n >= 2 finite values; the curve joins the points in the
 *                given order (x need not be monotonic).
 *   y2[n]        a second curve on a right-hand axis with its own scale, its
 *                ticks on the grid lines of y1's; NULL: none.
 *   o            options; may be NULL for defaults.
 * Linear axes with nice ticks; y1 is drawn in blue, y2 in vermillion (with
 * axis titles in the same colours).  A legend is drawn for two curves, or
 * for one when y1_name is set.  In axis titles and legend names "_x" /
 * "_{abc}" draw a subscript and "^2" / "^{-1}" a superscript.
 * Returns EDDY_OK; EDDY_ERR_INPUT for n < 2, a NULL path or array, a
 * non-finite value or a bad size; EDDY_ERR_NOMEM; EDDY_ERR_IO when the file
 * cannot be written. */
eddy_status post_plot_xy_png(const char *path, int n, const double *x, const double *y1,
                             const double *y2, const post_xy_opts *o, eddy_error *err);




/* ------------------------------------------------------------------------ */
/* Node fields (post_fields.c)                                               */
/* ------------------------------------------------------------------------ */

/*
 * Field quantities of one solution on the grid.  Node arrays have nx*ny
 * entries, index i + nx*j; cell arrays ncx*ncy entries, index i + ncx*j.
 * Allocated by post_fields_alloc for one grid; filled by post_fields_compute.
 */
typedef struct {
    int nx, ny, ncx, ncy;  /* the grid's sizes, fixed at allocation          */
    double speed;          /* m/s of the last post_fields_compute            */
    double *bx, *by;       /* flux density at the nodes, T                   */
    double *bmag;          /* |B| = hypot(bx, by), T                         */
    double *jz;            /* induced current density J_z, A/m^2 (as
                              post_current_density; 0 away from moving
                              conductors)                                     */
    double *loss;          /* Joule loss density J_z^2 / sigma, W/m^3;
                              0 at nodes touching no moving conductor         */
    int *region;           /* per cell: region index owning it, -1 for air  */
} post_fields;

/*
 * Allocate the arrays of a post_fields for grid g (zero-filled).
 *   out: receives the new struct, owned by the caller (post_fields_free);
 *        NULL on error.
 * Returns EDDY_OK, EDDY_ERR_INPUT (g NULL or smaller than 2 x 2 nodes),
 * EDDY_ERR_NOMEM.
 */
eddy_status post_fields_alloc(const mesh_grid *g, post_fields **out, eddy_error *err);

/* Free a post_fields and its arrays; accepts NULL. */
void post_fields_free(post_fields *f);

/*
 * Fill f from the solution a (nx*ny node values of A_z, Wb/m) at speed v (m/s).
 *
 * B = (dA/dy, -dA/dx) at a node is the weighted mean of the corner values of
 * the derivative of the bilinear interpolant of A in the (up to four) cells
 * around the node.  Those corner values are the one-sided differences along
 * the grid edges through the node; they are weighted by the size of the cell
 * on the other side (h_- D_+ + h_+ D_-) / (h_- + h_+), which is exact for a
 * quadratic A and so second-order at interior nodes of a smooth field, also on
 * the graded grid.  On a zero (Dirichlet) boundary only the inner side exists
 * and the value is first-order; on periodic x sides the cells across the side
 * are used and the copy node i = nx-1 gets the values of node 0.
 * Material interfaces get no special treatment: the normal component of B is
 * continuous and its node value is unaffected, but where the permeability
 * jumps the tangential component is discontinuous and the node value is the
 * weighted mean of the two one-sided values (for the value on one side, use
 * post_field_at at a point inside a cell of that side).
 *
 * J_z is post_current_density (consistent with the forces).  The loss density
 * is J_z^2 times the mean resistivity 1/sigma of the moving conductor cells
 * touching the node, weighted by the quarter-cell areas at the node (the same
 * part of the dual cell over which the node's J_z is the mean); 0 at nodes
 * touching no moving conductor.  Its trapezoid integral over the moving cells
 * (cell area x mean of the four corners) equals post_forces.loss to rounding
 * where the moving cells at each node share one sigma and nu (measured
 * 1e-15 on the test cases); elsewhere it is an approximation of it.
 *   g:   the grid of the solution.
 *   a:   nx*ny, Wb/m, not modified.
 *   v:   speed, m/s (recorded in f->speed).
 *   f:   from post_fields_alloc for a grid of the same size.
 * Returns EDDY_OK, EDDY_ERR_INPUT (NULL argument, or f allocated for another
 * grid size), EDDY_ERR_NOMEM, EDDY_ERR_NUMERIC (a non-finite value).
 */
eddy_status post_fields_compute(const mesh_grid *g, const double *a, double v, post_fields *f,
                                eddy_error *err);

/*
 * Write one solution as a VTK XML RectilinearGrid file (.vtr, ASCII data),
 * following the "XML File Formats" section of the VTK file-format
 * documentation: VTKFile type="RectilinearGrid" > RectilinearGrid
 * WholeExtent="0 nx-1 0 ny-1 0 0" > FieldData, then one Piece with the same
 * Extent > PointData, CellData, Coordinates (three DataArrays x, y, z; z is
 * the single value 0).  Point order is x fastest (index i + nx*j), as the
 * grid's own arrays.  Array names carry their SI units:
 *   FieldData: speed_m_per_s (1 value); metres_per_case_length_unit (1 value,
 *              only when length_unit_label is "m", "cm", "mm" or "um": divide
 *              coordinates by it to show case units).
 *   PointData: A_Wb_per_m, B_T (3 components, z = 0; the Vectors attribute),
 *              B_magnitude_T (the Scalars attribute), Jz_A_per_m2,
 *              loss_density_W_per_m3.
 *   CellData:  region_id (Int32: region index, -1 for air).
 *   Coordinates: x_m, y_m, z_m (metres).
 * Doubles are written with 9 significant digits (coordinates with 15).  The
 * file is written to a temporary name in the same directory and renamed when
 * complete (post_write_atomic); the directory must exist.
 *   path:  output file name (conventionally ending in .vtr).
 *   g, a:  the grid and the solution (nx*ny, Wb/m).
 *   f:     fields of a, from post_fields_compute (same grid size).
 *   speed: m/s, written to FieldData.
 *   length_unit_label: the case's display length unit (e.g. "mm"), written
 *          in an XML comment (characters outside [A-Za-z0-9._/ ] replaced by
 *          '_'); NULL: omitted.  Coordinates stay in metres.
 * Returns EDDY_OK, EDDY_ERR_INPUT (NULL argument or size mismatch),
 * EDDY_ERR_NUMERIC (a non-finite value), EDDY_ERR_NOMEM, EDDY_ERR_IO.
 */
eddy_status post_write_vtr(const char *path, const mesh_grid *g, const double *a,
                           const post_fields *f, double speed, const char *length_unit_label,
                           eddy_error *err);

/*
 * Sample B_x, B_y and J_z at npts equally spaced points along the segment
 * p0 -> p1 (metres, both ends included), which must be horizontal or vertical
 * and lie inside the grid.
 *   B: post_field_at (derivative of the bilinear interpolant of A in the
 *      cell holding the point; on a grid line, the cell above / to the right,
 *      except on the top / right edge of the grid).  Exact per cell, so it
 *      keeps the jump of tangential B at a permeability interface, but only
 *      first-order accurate away from cell centres (B_y is constant across a
 *      cell in x, B_x in y).
 *   J: J_z is discontinuous at a conductor surface, so it is interpolated
 *      bilinearly from the node values of post_current_density within one
 *      moving conductor cell that holds the point (on a cell edge, a moving
 *      conductor cell is preferred to a stationary neighbour); 0 when no cell
 *      holding the point is a moving conductor.  Within conductors J is
 *      continuous from cell to cell, as the node values are shared.
 *   npts: 2 .. 10000000.
 *   csv:  receives a malloc'ed NUL-terminated text (caller frees): the header
 *         line "s_m,x_m,y_m,Bx_T,By_T,Jz_A_per_m2" then one line per point,
 *         s = distance from p0 in m; values with 9 significant digits.
 *   len:  optional, receives strlen(*csv).
 * Returns EDDY_OK, EDDY_ERR_INPUT (NULL argument, npts out of range,
 * non-finite or zero-length segment, a segment neither horizontal nor
 * vertical, an end outside the grid), EDDY_ERR_NOMEM.  *csv is NULL on error.
 */
eddy_status post_line_profile(const mesh_grid *g, const double *a, double v, const double p0[2],
                              const double p1[2], int npts, char **csv, size_t *len,
                              eddy_error *err);


/* ------------------------------------------------------------------------ */
/* Batch runs (post_batch.c): case discovery, variant expansion, content     */
/* hashes, resume decisions, per-case status files and the batch summary.    */
/* The front end (post/cli_batch.c) runs each case in a child process.       */
/* ------------------------------------------------------------------------ */
/*
 * A batch folder OUT holds OUT/batch.json (the plan), one folder per case
 * OUT/<case>/ with case.json (the expanded case as solved), the outputs of
 * post_run_solve, input.hash (the completion marker, written after
 * result.json) or error.json (a failed case), and OUT/summary.csv,
 * summary.json and summary.html.  Every file is written through
 * post_write_atomic.  Nothing here prints, forks or exits.
 *
 * Variants: a case may hold "variants": {"PATH": [value, ...], ...}.  PATH
 * is a dotted path into the case: segments separated by '.'; in an object a
 * segment is a key, in an array a 0-based index or the "name" of an element
 * object (an index wins if a name is all digits); keys holding a '.' cannot
 * be addressed.  Each PATH must already exist in the case (a variant changes
 * a value, it does not add one); "name" and "variants" cannot vary; no PATH
 * may lie inside another.  The cartesian product of the value lists (the
 * first key varying slowest) gives the cases.  A case is named
 * <name>__<label>-<value>[__<label>-<value>...], label being the shortest
 * trailing part of the path (whole segments) that tells the paths apart, a
 * value shown as written (array elements joined with '_'), any character
 * outside [A-Za-z0-9._-] as '_'; if any such name would be longer than 63
 * characters, not unique, or show an object, every variant of the case is
 * named <name>__v001, <name>__v002, ... instead.  The values of each case
 * are recorded in batch.json and in the summary.  The expanded case text
 * has "name" first and no "variants".
 */
#include <stdint.h>

#define POST_BATCH_NAME_MAX 64       /* case names: 1..63 characters, as mesh_case.name */
#define POST_BATCH_MAX_KEYS 32       /* variant paths per case file */
#define POST_BATCH_MAX_VALUES 1000   /* values per variant path */
#define POST_BATCH_MAX_VARIANTS 10000 /* combinations per case file */

/* FNV-1a 64-bit hash (Fowler, Noll, Vo) of size bytes, continuing from h
 * (start with POST_FNV1A64_BASIS).  For change detection, not security. */
#define POST_FNV1A64_BASIS 0xcbf29ce484222325ULL
uint64_t post_fnv1a64(const void *data, size_t size, uint64_t h);

/* What a case folder holds for the case's current input. */
typedef enum {
    POST_CASE_NOT_RUN = 0, /* no complete result and no recorded failure   */
    POST_CASE_OK,          /* result.json and a matching input.hash        */
    POST_CASE_INVALID,     /* error.json: invalid input                    */
    POST_CASE_FAILED,      /* error.json: failure during computation       */
    POST_CASE_TIMEOUT,     /* error.json: exceeded the case time limit     */
    POST_CASE_CRASHED      /* error.json: the case's process died          */
} post_case_state;

/* "not run", "ok", "invalid", "failed", "timeout", "crashed" (static). */
const char *post_case_state_name(post_case_state s);

/* One case of a batch (after variant expansion).  Owns its strings. */
typedef struct {
    char name[POST_BATCH_NAME_MAX]; /* folder under OUT and the case's "name"    */
    char *source;        /* the case file it came from, as given               */
    char *text;          /* expanded case (JSON text, ends in a newline); NULL
                            when the source itself is invalid                   */
    int nvalue;          /* variant values of this case (0: no variants)        */
    char **paths;        /* nvalue dotted paths                                 */
    char **values;       /* nvalue values as compact JSON text                  */
    char hash[17];       /* 16 hex digits: FNV-1a 64 of the tool version, the
                            output options and text (of the source for an
                            invalid source)                                     */
    int invalid;         /* 1: the case cannot be solved (error says why)      */
    eddy_status error_status;
    char error[1024];    /* names the file, the variant and the JSON path      */
    char *warnings;      /* NULL, or the reader's warnings, one per line        */
} post_batch_case;

/*
 * Expand one case text into its variants and check each with the case
 * reader (mesh_case_parse).
 *   text    NUL-terminated case file content; source names it in messages.
 *   images  1 if pictures will be written (enters the hash).
 *   cases   receives ncase cases (free with post_batch_cases_free); a case
 *           the reader rejects has invalid = 1 and the message in error.
 * Returns EDDY_OK; EDDY_ERR_INPUT when the text is not a JSON object, has a
 * bad "name" or a bad "variants" object (the message names the source and
 * the JSON path); EDDY_ERR_NOMEM.  On error *cases is NULL.
 */
eddy_status post_batch_expand(const char *text, const char *source, int images,
                              post_batch_case **cases, int *ncase, eddy_error *err);

/* Free n cases and the array; accepts NULL. */
void post_batch_cases_free(post_batch_case *cases, int n);

/*
 * The case files named by the arguments: a file as given (in the order
 * given); a folder: its *.json entries not starting with '.' (not its
 * sub-folders' contents), sorted by name (strcmp).
 *   files  receives nfiles malloc'ed paths in a malloc'ed array (the caller
 *          frees each and the array).
 * Returns EDDY_OK; EDDY_ERR_INPUT when nargs < 1, an argument does not
 * exist, or a folder holds no *.json; EDDY_ERR_NOMEM.
 */
eddy_status post_batch_collect(int nargs, const char *const *args, char ***files, int *nfiles,
                               eddy_error *err);

/* Every case of a batch, in order: files as post_batch_collect lists them,
 * each file's variants in expansion order. */
typedef struct {
    int ncase;
    post_batch_case *cases;
    int nkey;            /* distinct variant paths over all cases, in order of
                            first appearance (the summary's columns)           */
    char **keys;
    int images;          /* 1: the cases write pictures                        */
} post_batch_plan;

/*
 * Plan a batch: collect the case files, read and expand each.  A file that
 * cannot be read or expanded becomes one invalid case (named after its
 * "name" if it has a good one, else its file name's stem) - a bad case does
 * not stop the batch.
 *   out  receives the plan (free with post_batch_plan_free).
 * Returns EDDY_OK; EDDY_ERR_INPUT for the errors of post_batch_collect, and
 * when two cases have the same name or a case is named like a file of the
 * batch folder (batch.json, summary.csv, ...): the message names both files;
 * EDDY_ERR_NOMEM.
 */
eddy_status post_batch_plan_build(int nargs, const char *const *args, int images,
                                  post_batch_plan **out, eddy_error *err);

/* Free a plan; accepts NULL. */
void post_batch_plan_free(post_batch_plan *p);

/*
 * Write the plan: create outdir, write OUT/<case>/case.json for every valid
 * case whose file differs (first removing that case's input.hash, so a
 * changed input is never taken as finished) and OUT/batch.json.  Files whose
 * content is unchanged are not touched.
 * Returns EDDY_OK, EDDY_ERR_IO, EDDY_ERR_NOMEM.
 */
eddy_status post_batch_plan_save(const post_batch_plan *p, const char *outdir, eddy_error *err);

/*
 * Read OUT/batch.json and every case.json it names (what a Slurm array task
 * does).  Returns EDDY_OK; EDDY_ERR_INPUT when the plan is missing, damaged,
 * written by another tool version, or a case.json no longer matches its
 * hash; EDDY_ERR_NOMEM.  out receives a plan owned by the caller.
 */
eddy_status post_batch_plan_load(const char *outdir, post_batch_plan **out, eddy_error *err);

/*
 * The resume decision, from the files in OUT/<case>/: POST_CASE_OK when
 * result.json exists and input.hash holds c->hash; else the status recorded
 * in error.json if that names c->hash; else POST_CASE_NOT_RUN.  Never fails.
 */
post_case_state post_batch_case_state(const char *outdir, const post_batch_case *c);

/*
 * Make OUT/<case>/ ready for a run: create it, remove input.hash first, then
 * every earlier output (result.json, forces.csv, *.png, *.vtr,
 * profile_*.csv, error.json, temporaries), and write case.json if it
 * differs.  Other files are left alone.  Returns EDDY_OK or EDDY_ERR_IO.
 */
eddy_status post_batch_case_prepare(const char *outdir, const post_batch_case *c,
                                    eddy_error *err);

/*
 * Solve OUT/<case>/case.json into OUT/<case>/ with post_run_solve (pictures
 * if images, threads as post_run_opts.threads).  Meant for a child process.
 * Returns what post_run_solve returns (c->error_status for an invalid case).
 */
eddy_status post_batch_case_solve(const char *outdir, const post_batch_case *c, int images,
                                  int threads, eddy_error *err);

/*
 * Record a finished case: check that result.json exists, remove error.json,
 * and write input.hash ("fnv1a64 <hash>\nseconds <s>\n") atomically.
 *   seconds  wall time of the run, s.
 * Returns EDDY_OK or EDDY_ERR_IO (result.json missing, or a write failed).
 */
eddy_status post_batch_case_done(const char *outdir, const post_batch_case *c, double seconds,
                                 eddy_error *err);

/*
 * Record a failed case: remove input.hash and write OUT/<case>/error.json
 * {case, source, status, message, seconds, hash, tool} atomically (creating
 * the folder).  state: POST_CASE_INVALID, _FAILED, _TIMEOUT or _CRASHED
 * (others are recorded as "failed").  seconds may be NAN.
 * Returns EDDY_OK, EDDY_ERR_IO or EDDY_ERR_NOMEM.
 */
eddy_status post_batch_case_failed(const char *outdir, const post_batch_case *c,
                                   post_case_state state, const char *message, double seconds,
                                   eddy_error *err);

/* Counts over the cases of a summary. */
typedef struct {
    int cases, ok, failed, not_run;
} post_batch_counts;

/*
 * Write OUT/summary.csv, summary.json and summary.html from the case folders
 * (the state of each case as post_batch_case_state decides it).  One row per
 * case and speed (one row with empty numbers for a case without result):
 * case, source, one column per variant path, speed (m/s), drag and normal
 * force (N/m), loss (W/m), the case's peak drag (N/m) and its speed (m/s)
 * from post_force_peak, status, error, seconds.  The HTML page is
 * self-contained apart from the plots, which it links relatively
 * (<case>/forces.png): a table of the cases, the plots side by side, and a
 * table of every speed; it needs no script.
 *   counts  optional; receives the counts.
 * Returns EDDY_OK, EDDY_ERR_IO or EDDY_ERR_NOMEM.
 */
eddy_status post_batch_write_summary(const char *outdir, const post_batch_plan *p,
                                     post_batch_counts *counts, eddy_error *err);

/* Options of the Slurm scripts. */
typedef struct {
    const char *exe;        /* absolute path of the eddy2d program           */
    int ntask;              /* cases to run: increasing indices into the plan */
    const int *tasks;
    int cpus_per_task;      /* #SBATCH --cpus-per-task, and --threads per case */
    double case_timeout;    /* s; > 0 adds --case-timeout and #SBATCH --time  */
    int nextra;             /* extra "#SBATCH <option>" lines (each one line
                               starting with '-', e.g. "--partition=short")   */
    const char *const *extra;
} post_batch_slurm_opts;

/* Defaults: nothing set, cpus_per_task 1. */
void post_batch_slurm_opts_defaults(post_batch_slurm_opts *o);

/*
 * Write the Slurm scripts for a planned batch (the plan must be saved in
 * outdir, which must be absolute): OUT/batch.sbatch, a job array with one
 * task per listed case running `eddy2d batch --run-one INDEX -o OUT`;
 * OUT/summary.sbatch running `eddy2d batch --summary-only -o OUT`; and
 * OUT/submit.sh, which submits the array and then the summary job with
 * --dependency=afterany on it.  Task logs go to OUT/slurm/ (created).
 * Returns EDDY_OK, EDDY_ERR_INPUT (bad options), EDDY_ERR_IO, EDDY_ERR_NOMEM.
 */
eddy_status post_batch_write_slurm(const char *outdir, const post_batch_plan *p,
                                   const post_batch_slurm_opts *o, eddy_error *err);

#endif
