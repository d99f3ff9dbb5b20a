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
 *
 * Axisymmetric grids (g->geometry, mesh/mesh.h: grid x is z, y is r, the node
 * values are psi = r A_phi in Wb per radian): every function here takes psi
 * where it says A.  B = (B_z, B_r) = ((1/r) dpsi/dr, -(1/r) dpsi/dz) in the
 * places of (B_x, B_y); J_phi = -(sigma v / r) dpsi/dz in the place of J_z;
 * forces (force_x = F_z along the axis, N) and losses (W) are of the whole
 * ring, force_y and the normal components are 0 (the net radial force on a
 * ring vanishes), conductor_area is the conductors' volume (m^3), and the
 * line-form stress is the ring integral of B_z B_r / mu0 over cylinders in
 * the air on both sides of the moving band (for a magnetised moving band
 * the reported force is this line form where it exists, else the nodal
 * form).  The weights come from
 * sol_row_metric_of (solver/sol.h), the one place of the geometry.
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
                                * "stress_tensor": Maxwell stress around the moving band,
                                * in its nodal form (nodal_x, nodal_y) where it exists, else
                                * the line form (a magnetised conductor: mu_r != 1 or a B-H
                                * curve, where J x B misses the force on the magnetisation); "lorentz_incomplete": a magnetised
                                * conductor without an air contour, J x B only;
                                * "reference": the layered reference */
    double lorentz_x, lorentz_y; /* N/m, the J x B integral, whatever force_method */
    int stress_ok;             /* 1 if the stress-tensor contour exists (air around the band) */
    double stress_x, stress_y; /* N/m, Maxwell stress tensor force on the moving band, line
                                * form (band average of line integrals in the air): an
                                * independent check of the drag; its normal component carries
                                * a bias of order the discretisation error of integral
                                * |B|^2 / (2 mu0) dx (use nodal_y for the normal force) */
    double drag_stress;        /* N/m, -stress_x * sign(speed) */
    int nodal_ok;              /* 1 if the nodal (total-current) form exists: an air row
                                * directly above and below the band */
    double nodal_x, nodal_y;   /* N/m, force on the moving band from its total (free +
                                * magnetisation) current, the volume form of the Maxwell
                                * stress on the discrete field (post_forces.c); NAN if
                                * !nodal_ok */
    double loss;               /* W/m, integral of J^2 / sigma */
    double low_speed_drag;     /* N/m, sigma |v| * integral of B0_y^2 (static field):
                                * |v| times the damping coefficient */
    double drag_per_speed;     /* N s/m^2, drag / |speed| (NAN at rest): the secant
                                * slope, which tends to the damping coefficient as
                                * v -> 0 */
    double magnetic_reynolds;  /* mu0 sigma |v| t of the moving band (t its thickness) */
    double magnetic_reynolds_wave; /* mu0 sigma |v| / k on the dominant wavenumber k of the
                                * sources (mesh_grid.k_dominant), sigma the band's mean
                                * conductivity; NAN without a grid.  The drag peaks near
                                * magnetic_reynolds = 2 for a thin plate (k t << 1: the
                                * thin-sheet law, Reitz 1970) and near
                                * magnetic_reynolds_wave ~ 1 for a thick one (k t >> 1) */
    double j_peak;             /* A/m^2, largest |J_z| of a node's dual cell */
    double loss_density_peak;  /* W/m^3, largest J^2/sigma of a node's dual cell */
    double loss_density_mean;  /* W/m^3, loss / conductor_area */
    double conductor_area;     /* m^2, cross-section of the moving conductors (r-z: their
                                * volume, m^3) */
    double heating_rate;       /* K/s, adiabatic: loss / (rho c_p area); NAN if unknown */
    double rpm;                /* disc brakes: revolutions per minute; NAN otherwise */
    double torque, power;      /* disc brakes: N m, W of the whole disc; NAN otherwise */
    double drag_end_corrected; /* N/m, drag x the end-effect factor; NAN if not asked */
    /* Estimated absolute discretisation errors of drag, force_y and loss
     * (same units), by Richardson extrapolation against the coarse grid of
     * the family (post_richardson); NAN when not estimated. */
    double drag_error, force_y_error, loss_error;
} post_forces;

/*
 * Error estimate of one point from the same speed solved on the grid (fine,
 * spacing h) and on the coarser grids of its family (mesh_grid_build_coarse:
 * coarse 2h, coarser 4h, or NULL), by Richardson extrapolation (L. F.
 * Richardson, Phil. Trans. R. Soc. A 210, 307, 1911, the "deferred approach
 * to the limit"; the observed order from three grids as in P. J. Roache,
 * Verification and Validation in Computational Science and Engineering,
 * Hermosa 1998, cited from memory).  Per quantity, with d1 = F_h - F_2h and
 * d2 = F_2h - F_4h: monotone (same signs): the observed order p =
 * log2(d2/d1) clamped to [1, 2] (the scheme is second order, first order
 * where the exponential fitting upwinds at high cell Peclet numbers) and the
 * larger of |d1|/(2^p - 1) and |d2|/(2^p (2^p - 1)); not monotone: the larger
 * of |d1| and |d2|/2 (first order); two grids only: |d1|/3.  Sets
 * fine->drag_error, force_y_error and loss_error; nothing else is touched.
 */
void post_richardson(post_forces *fine, const post_forces *coarse, const post_forces *coarser);

/*
 * The damping coefficient c = dF/dv at v = 0 from the static field: the
 * integral over the moving conductors of sigma * B_y^2 (B_y = -dA/dx, the
 * flux density across the motion; the first-order induced current is
 * J_z = sigma v B_y, and -integral J_z B_y is the force along +x), so that
 * low_speed_drag = |v| * c.  It is the scheme's own low-speed drag per unit
 * speed (post_forces_compute's J x B sum with the convective face values
 * at Peclet 0), so the drag / |v| of a solve tends to it as v -> 0 (to
 * rounding, not only to the discretisation error).
 *   g:          the grid (its sigma and moving flags; nu is not used).
 *   a_static:   the field at v = 0, nx*ny node values of the potential
 *               (Wb/m), not modified.
 *   row_weight: the geometry's weight of node row j (ny entries), the only
 *               part that depends on the geometry: NULL for the planar
 *               model (weight 1: c per metre of depth, N s/m^2, per period
 *               and metre for a periodic domain); for an axisymmetric grid
 *               whose x is the axis z and whose y is the radius r, with the
 *               potential A_phi, 2 pi r_j (then c is N s/m of the whole ring:
 *               sigma integral B_r^2 dV); with the flux function psi = r A_phi
 *               as the field, 2 pi / r_j (conductors off the axis).
 * Returns c (>= 0 up to rounding); NAN-free for finite input.
 */
double post_damping_coefficient(const mesh_grid *g, const double *a_static,
                                const double *row_weight);

/*
 * Forces, loss and checks at speed v for the solution a (nx*ny, Wb/m).
 *   lowspeed_slope: post_damping_coefficient of the static field (N s/m^2).
 *   f:   output.
 * The Lorentz force and the loss use the induced current of each node's dual
 * cell taken from the solver's fitted convective fluxes.  The stress-tensor
 * force comes in two forms: the line form (stress_x, stress_y), the average
 * over the rows of air cells directly above and below the moving band of
 * the line integral of the stress, not available (stress_ok = 0) when no air
 * row touches the band or a stationary non-air cell lies inside it (on a
 * zero (A = 0) boundary that bounds the band the normal field is zero, and
 * its pressure is included); and the nodal form (nodal_x, nodal_y), the
 * total current of the band's nodes (the residual of the vacuum operator)
 * times the node field, which needs an air row directly above and below
 * the band (nodal_ok).  When a moving conductor is magnetised (reluctivity
 * g->nu != 1/mu0 in a moving cell), force_x, force_y and drag are the nodal
 * stress values, else the line form where only it exists (force_method
 * "stress_tensor"); otherwise the
 * J x B values.  With saturable materials pass a copy of the grid whose nu
 * holds the converged cell reluctivities (sol_solve_newton's nu_cells), so
 * that the induced current uses the solver's fluxes.
 * Returns EDDY_OK or EDDY_ERR_NUMERIC (non-finite result).
 */
eddy_status post_forces_compute(const mesh_grid *g, const double *a, double v,
                                double lowspeed_slope, post_forces *f, eddy_error *err);

/*
 * Forces on the moving conductors of one time step of a pass, from a given
 * induced current (sol_stepper_currents: the current of every node's dual
 * cell in the moving conductors, A/m, nx*ny):
 *     F_x = sum I (dA/dx),  F_y = sum I (dA/dy)
 * at the nodes, with the derivatives of the steady nodal force (dA/dx central
 * across the node, dA/dy the mean of the two one-sided differences), and the
 * stress-tensor checks and force_method exactly as post_forces_compute.
 *   g:    the grid with the cells of the step (a copy of the pass grid whose
 *         sigma, nu, moving and region arrays are mesh_grid_pass_cells'); its
 *         moving band rows jm0..jm1 are the pass grid's.
 *   a:    nx*ny, Wb/m, the field at the end of the step.
 *   v:    m/s, the speed (sign of the drag).
 *   loss: W/m, the step's Joule power (sol_stepper_currents), stored in f.
 *   f:    output; the speed-sweep fields that have no meaning for a step
 *         (low_speed_drag, magnetic_reynolds, the estimates, ...) are NAN.
 * Returns EDDY_OK or EDDY_ERR_NUMERIC.
 */
eddy_status post_forces_pass(const mesh_grid *g, const double *a, const double *i_node,
                             double v, double loss, post_forces *f, eddy_error *err);

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
 * complete (eddy_write_atomic); the directory must exist.
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


#endif
