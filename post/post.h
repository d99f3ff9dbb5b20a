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

#include <stdio.h>

#include "mesh/mesh.h"

/* Forces and losses at one speed. */
typedef struct {
    double speed;              /* m/s */
    double force_x, force_y;   /* N/m, Lorentz force (J x B integral) on the moving regions */
    double drag;               /* N/m, -force_x * sign(speed): braking is positive */
    int stress_ok;             /* 1 if the stress-tensor contour exists (air around the band) */
    double stress_x, stress_y; /* N/m, Maxwell stress tensor force on the moving band */
    double drag_stress;        /* N/m, -stress_x * sign(speed) */
    double loss;               /* W/m, integral of J^2 / sigma */
    double low_speed_drag;     /* N/m, sigma |v| * integral of B0_y^2 (static field) */
    double magnetic_reynolds;  /* mu0 sigma |v| t of the moving band */
    double j_peak;             /* A/m^2, largest |J_z| at the quadrature points */
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
 * Returns EDDY_OK or EDDY_ERR_NUMERIC (non-finite result).
 */
eddy_status post_forces_compute(const mesh_grid *g, const double *a, double v,
                                double lowspeed_slope, post_forces *f, eddy_error *err);

/*
 * Flux density at a point (m): the derivative of the bilinear interpolant
 * of A in the cell holding (x, y).  Returns EDDY_ERR_INPUT outside the grid.
 */
eddy_status post_field_at(const mesh_grid *g, const double *a, double x, double y, double *bx,
                          double *by);

/* ------------------------------------------------------------------------ */
/* Reports                                                                   */
/* ------------------------------------------------------------------------ */

/* Solver statistics of one speed, as reported (seconds). */
typedef struct {
    double t_assemble, t_factor, t_solve, t_post;
    double lnz, unz, flops;
} post_point_info;

/* Everything the reports of one solve need.  All arrays have npoint entries. */
typedef struct {
    const mesh_case *c;
    const mesh_grid *g;
    long unknowns;
    double t_mesh, t_analyse;  /* s */
    int npoint;
    const post_forces *f;
    const post_point_info *info;
} post_report;

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

#endif
