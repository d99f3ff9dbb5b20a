/*
 * sol.h - public interface of the solver module (prefix sol_).
 *
 * Second stage of the pipeline: from a mesh_grid to the vector potential
 * A = A_z at the grid nodes, for the steady moving-conductor problem in the
 * magnet frame (every moving region moves at +v along x):
 *
 *   -div(nu grad A) + sigma v dA/dx = J_source + d/dx(nu Br_y) - d/dy(nu Br_x)
 *
 * discretised by vertex-centred finite volumes (box integration) with
 * exponentially fitted (Scharfetter-Gummel / Il'in-Allen-Southwell)
 * convective fluxes on the x-edges of moving cells.  See sol.c for the
 * derivation.
 *
 * Analysis is split from numbers, as in UMFPACK: sol_system_alloc builds the
 * fixed sparsity pattern once per mesh; sol_analyse runs the symbolic
 * factorisation once; each sol_solve only assembles values into the fixed
 * pattern, factorises numerically and solves.
 */
#ifndef EDDY_SOL_H
#define EDDY_SOL_H

#include "mesh/mesh.h"

typedef struct sol_system sol_system;

/* Statistics of the last call (all times in seconds, wall clock). */
typedef struct {
    long n;              /* unknowns */
    long nnz;            /* entries of the matrix pattern */
    double lnz, unz;     /* entries in L and U (fill), from UMFPACK */
    double flops;        /* floating-point operations of the numeric factorisation */
    double rcond;        /* reciprocal condition number estimate */
    double t_analyse;    /* symbolic factorisation (once per mesh) */
    double t_assemble;   /* assembly of values and right-hand side */
    double t_factor;     /* numeric factorisation */
    double t_solve;      /* triangular solves with iterative refinement */
    double peak_bytes;   /* UMFPACK's peak memory of the numeric phase */
} sol_info;

/*
 * Build the unknown numbering and the fixed CSC sparsity pattern for a grid.
 *   g:   the grid; borrowed, must outlive the system.
 *   out: receives the system (free with sol_system_free); NULL on error.
 * Returns EDDY_OK, EDDY_ERR_NOMEM, EDDY_ERR_INPUT (grid without unknowns).
 */
eddy_status sol_system_alloc(const mesh_grid *g, sol_system **out, eddy_error *err);

/* Free a system (pattern, symbolic and numeric factors); accepts NULL. */
void sol_system_free(sol_system *s);

/* Number of unknowns of a system. */
long sol_unknowns(const sol_system *s);

/*
 * Symbolic factorisation of the pattern (once per mesh).  Called by the
 * first sol_solve if not called before.  info may be NULL.
 * Returns EDDY_OK, EDDY_ERR_NOMEM, EDDY_ERR_SOLVER.
 */
eddy_status sol_analyse(sol_system *s, sol_info *info, eddy_error *err);

/*
 * Solve at speed v (m/s; moving regions move at +v along x).
 *   a:    output, nx*ny node values of A (Wb/m), index i + nx*j, including
 *         the boundary nodes (0 on zero boundaries; the periodic copy at
 *         i = nx-1 equals i = 0).  Caller-owned.
 *   info: optional statistics.
 * Not thread-safe on one system (it reuses the system's workspaces).
 * Returns EDDY_OK, EDDY_ERR_NOMEM, EDDY_ERR_SINGULAR, EDDY_ERR_SOLVER,
 * EDDY_ERR_NUMERIC.
 */
eddy_status sol_solve(sol_system *s, double v, double *a, sol_info *info, eddy_error *err);

/* Bernoulli function B(z) = z / (e^z - 1), B(0) = 1, accurate for all z. */
double sol_bernoulli(double z);

#endif
