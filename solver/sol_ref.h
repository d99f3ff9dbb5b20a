/*
 * sol_ref.h - the layered Fourier reference of the solver module (prefix
 * sol_ref_): an independent analytic solution, sharing no discretisation
 * with the grid solver (solver/sol.h), against which it is validated.
 *
 * A conducting plate (conductivity sigma, linear relative permeability
 * mu_r = 1 + chi) fills y_bot <= y <= y_top,
 * infinite along x, moving at +v along x, with free space below and above.
 * Sources are rectangles above the plate: coils of uniform current density
 * along z, or magnets (mu_r = 1) magnetised along y.  An optional infinitely
 * permeable half-space (a yoke) may close the field above all sources.
 * Sources are isolated (an integral over the wavenumber k) or repeat with
 * period lambda (a sum over harmonics), both controlled to a relative
 * tolerance.  The derivation is at the top of sol_ref.c; sol_ref_case.c
 * decides whether a case fits this geometry.
 *
 * Units: SI (m, S/m, T, A/m^2, m/s; forces in N/m, loss in W/m, per metre
 * of depth).
 */
#ifndef EDDY_SOL_REF_H
#define EDDY_SOL_REF_H

#include <stddef.h>

#include "mesh/mesh.h"

/* Kind of a reference source. */
typedef enum {
    SOL_REF_COIL = 0,   /* uniform current density jz (A/m^2) along +z          */
    SOL_REF_MAGNET = 1  /* uniform remanence br_y (T) along y, mu_r = 1          */
} sol_ref_kind;

/* One rectangular source x0 <= x <= x1, y0 <= y <= y1 (m).  It must lie
 * entirely above the plate (y0 >= y_top) and, with a yoke, entirely below
 * the yoke plane (y1 <= y_yoke).  x1 > x0 and y1 > y0.  Only the field that
 * matches `kind` is used: jz for a coil, br_y for a magnet. */
typedef struct {
    sol_ref_kind kind;
    double x0, y0, x1, y1; /* m */
    double jz;             /* A/m^2, uniform current density along +z (coil)          */
    double br_y;           /* T, signed remanence along y (magnet): > 0 means +y      */
} sol_ref_source;

/* The layered problem. */
typedef struct {
    double sigma;        /* S/m, plate conductivity, >= 0                             */
    double chi;          /* plate magnetic susceptibility mu_r - 1, 0 <= chi <= 1e6
                            (0: non-magnetic; a zero-initialised problem is one)     */
    double y_bot, y_top; /* m, plate occupies y_bot <= y <= y_top; y_top > y_bot       */
    int periodic;        /* 0: isolated sources (integral over k);
                            1: sources repeat along x with period lambda            */
    double lambda;       /* m, period (> 0, periodic only); all sources must fit in
                            one period: max(x1) - min(x0) <= lambda                 */
    int has_yoke;        /* 1: infinitely permeable half-space above y = y_yoke      */
    double y_yoke;       /* m, yoke plane (has_yoke only); y_yoke >= every source y1 */
    double rel_tol;      /* target relative accuracy of the k quadrature or of the
                            harmonic series, 1e-11 <= rel_tol <= 0.1 (e.g. 1e-8)    */
} sol_ref_problem;

/* Results.  Forces are per metre of depth; per period when periodic. */
typedef struct {
    double force_x;  /* N/m, force ON THE PLATE along x; < 0 for v > 0 (drag)           */
    double force_y;  /* N/m, force ON THE PLATE along y (< 0: plate pushed away from
                        sources above it), from the Maxwell stress in the gap          */
    double loss;     /* W/m, integral over the plate of |J|^2 / sigma, computed from the
                        field inside the plate (not from the force): -force_x * v ==
                        loss is a real check of the solution                          */
    double force_y_lorentz; /* N/m, the integral of J_z B_x over the plate from the
                        field inside it: for chi = 0 it equals force_y to quadrature
                        accuracy (a second independent check); for chi > 0 it is the
                        force on the free currents only (force_y adds the force on the
                        magnetisation)                                                */
    double err_x, err_y, err_loss, err_y_lorentz; /* estimated absolute quadrature /
                        series-truncation error of force_x, force_y, loss,
                        force_y_lorentz                                               */
    long n_eval;     /* number of harmonic (wavenumber) evaluations used               */
} sol_ref_result;

/*
 * sol_ref_solve - forces and loss of the plate moving at speed v.
 *
 *   p     problem description (read only, not retained).
 *   src   array of nsrc sources (read only, not retained); nsrc >= 1.
 *   v     m/s, plate speed along +x (sources fixed); any sign.  v = 0 or
 *         sigma = 0 gives zero forces and loss (n_eval = 0) for chi = 0, and
 *         the static attraction of the magnetisable plate for chi > 0.
 *   out   receives the result; always fully written on EDDY_OK and on
 *         EDDY_ERR_NUMERIC, zeroed on EDDY_ERR_INPUT.
 *   err   optional error record (may be NULL).
 *
 * Returns
 *   EDDY_OK            the estimated errors meet rel_tol (relative to each
 *                      result, with a floor of 1e-14 of the force scale).
 *   EDDY_ERR_INPUT     a NULL pointer, a non-finite number, sigma < 0, chi
 *                      outside [0, 1e6], a plate
 *                      of thickness <= 0, a source not strictly a rectangle,
 *                      not above the plate or not below the yoke, a bad
 *                      kind/periodic/has_yoke flag, lambda <= 0 or sources
 *                      wider than one period, rel_tol out of range, nsrc < 1.
 *   EDDY_ERR_NOMEM     the adaptive interval list could not be allocated.
 *   EDDY_ERR_NUMERIC   the requested accuracy was not reached within the
 *                      evaluation budget (e.g. a magnet touching the plate,
 *                      whose spectrum decays only algebraically); *out holds
 *                      the best estimate and its error estimates.
 *
 * Thread safe; allocates only a temporary interval list.
 */
eddy_status sol_ref_solve(const sol_ref_problem *p, const sol_ref_source *src, int nsrc,
                          double v, sol_ref_result *out, eddy_error *err);

/*
 * sol_ref_from_case - does a case fit the layered reference geometry, and
 * with what problem?  See sol_ref_case.c for the rules (one moving
 * non-magnetic plate spanning the domain, sources along +-y or coils above
 * it, an optional permeable yoke above the sources, nothing else but air;
 * no saturable region; planar only: an axisymmetric case does not fit).
 *
 *   c            a validated case (mesh_case_load); read only, not retained.
 *   p            receives the problem (rel_tol 1e-7).
 *   src, nsrc    receive a malloc'ed array of *nsrc sources, owned by the
 *                caller (free()); *src is NULL unless EDDY_OK.
 *   approximate  set to 1 if a magnet's recoil mu_r (not 1) is taken as 1,
 *                else 0.
 *   why          receives the reason when the case does not fit, a
 *                NUL-terminated text of at most why_len bytes ("" when it
 *                fits); may be NULL (why_len is then ignored).
 *   err          optional error record (may be NULL); filled on
 *                EDDY_ERR_NOMEM only (the reason a case does not fit is in
 *                why).
 *
 * Returns EDDY_OK (fits), EDDY_ERR_NOT_APPLICABLE (does not fit; why says
 * why), EDDY_ERR_NOMEM.
 */
eddy_status sol_ref_from_case(const mesh_case *c, sol_ref_problem *p, sol_ref_source **src,
                              int *nsrc, int *approximate, char *why, size_t why_len,
                              eddy_error *err);

#endif
