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
 * convective fluxes on the x-edges of moving cells.  See sol_assemble.c for
 * the derivation.
 *
 * Analysis is split from numbers, as in UMFPACK: sol_system_alloc builds the
 * fixed sparsity pattern once per mesh (sol_pattern.c); sol_analyse runs the
 * symbolic factorisation once; each sol_solve only assembles values into the
 * fixed pattern, factorises numerically and solves (sol_umf.c).  Saturable
 * materials are solved by Newton-Raphson (sol_newton.c, sol_bh.c).  The
 * layered Fourier reference, an independent analytic solution, has its own
 * header, solver/sol_ref.h.
 *
 * Conventions: SI units (m, m/s, Wb/m, m/H, T, A/m); every eddy_error *err
 * may be NULL, and on failure receives the message of the returned status;
 * nothing prints and nothing exits.
 */
#ifndef EDDY_SOL_H
#define EDDY_SOL_H

#include "mesh/mesh.h"

typedef struct sol_system sol_system;
typedef struct sol_work sol_work;

/* Fill-reducing orderings for the LU factorisation. */
typedef enum {
    SOL_ORDER_AMD = 0,   /* UMFPACK's AMD on A + A' */
    SOL_ORDER_METIS,     /* METIS nested dissection (through UMFPACK) */
    SOL_ORDER_GRID_ND,   /* nested dissection along the grid's diagonals (sol_pattern.c) */
    SOL_ORDER_COLAMD     /* COLAMD on A'A with UMFPACK's unsymmetric strategy (for
                          * comparison: make bench measured it slowest) */
} sol_ordering;

/* The default of a new system, and the runner's (app_run.c) for one speed
 * and for sweeps: on this project's matrices the grid's ordering fills
 * within 1.2 of SuperLU's least fill and less than METIS from 0.23M unknowns
 * on, and analyses 3 to 6 times faster than METIS (make bench, README: LU
 * entries 1.14 / 0.66 / 0.98 of SuperLU's least at 56k / 0.23M / 1.06M
 * unknowns; analysis 1.92 s against METIS's 5.50 s at 1.06M). */
#define SOL_ORDER_DEFAULT SOL_ORDER_GRID_ND

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
    double peak_bytes;   /* UMFPACK's peak memory of the numeric phase, bytes */
    double est_peak_bytes; /* its estimate from the symbolic analysis, bytes */
    const char *ordering;  /* name of the fill-reducing ordering (static) */
    int cholesky;        /* 1: the static field by Cholesky (CHOLMOD; lnz its L, unz 0),
                          * 0: LU (UMFPACK) */
} sol_info;

/* ------------------------------------------------------------------------ */
/* System: unknowns and the fixed pattern (sol_pattern.c)                    */
/* ------------------------------------------------------------------------ */

/*
 * Build the unknown numbering and the fixed CSC sparsity pattern for a grid,
 * with the interpolants of its B-H curves (the system's own workspace, for
 * sol_solve, comes with the first sol_solve: a program that solves with its
 * own workspaces never holds it).  The ordering is SOL_ORDER_DEFAULT,
 * without memory limit.
 *   g:   the grid; borrowed, must outlive the system.
 *   out: receives the system, owned by the caller (free with
 *        sol_system_free); NULL on error.
 * Returns EDDY_OK, EDDY_ERR_NOMEM, EDDY_ERR_INPUT (a grid without unknowns,
 * a B-H curve sol_bh_build rejects, a saturable cell with a remanence).
 */
eddy_status sol_system_alloc(const mesh_grid *g, sol_system **out, eddy_error *err);

/* Free a system (pattern, symbolic factorisation, its workspace); accepts
 * NULL.  Workspaces from sol_work_alloc are freed separately. */
void sol_system_free(sol_system *s);

/* Number of unknowns of a system (the grid nodes off the zero boundaries,
 * a periodic pair counted once); 0 for s = NULL. */
long sol_unknowns(const sol_system *s);

/*
 * Workspace of one concurrent solve (matrix values, right-hand side,
 * solution, UMFPACK solve workspaces, and the Newton iterates when the grid
 * has saturable cells), sized for system s.  Several workspaces may solve
 * different speeds on one analysed system at the same time, from different
 * threads.
 *   s:   the system (borrowed; the workspace is used only with it).
 *   out: receives the workspace, owned by the caller (free with
 *        sol_work_free, before or after s); NULL on error.
 * Returns EDDY_OK or EDDY_ERR_NOMEM.
 */
eddy_status sol_work_alloc(const sol_system *s, sol_work **out, eddy_error *err);

/* Free a workspace; accepts NULL. */
void sol_work_free(sol_work *w);

/* ------------------------------------------------------------------------ */
/* Analysis, factorisation and solve with UMFPACK (sol_umf.c)                */
/* ------------------------------------------------------------------------ */

/* Choose the fill-reducing ordering o of system s (before sol_analyse;
 * discards an earlier symbolic factorisation). */
void sol_set_ordering(sol_system *s, sol_ordering o);

/* Name of an ordering ("amd", "metis", "grid-nd", "colamd"; "unknown" for another
 * value); static storage, not to be freed. */
const char *sol_ordering_name(sol_ordering o);

/* Refuse factorisations of system s whose estimated peak memory
 * (sol_factor_bytes) exceeds bytes (checked by sol_analyse); <= 0: no limit
 * (default). */
void sol_set_memory_limit(sol_system *s, double bytes);

/*
 * Symbolic factorisation of the pattern of s (once per mesh; a second call
 * does nothing).  Called by the first sol_solve if not called before.
 *   info: optional (NULL); receives n, nnz, t_analyse, est_peak_bytes and
 *         ordering.
 * Returns EDDY_OK, EDDY_ERR_NOMEM, EDDY_ERR_SOLVER, EDDY_ERR_TOO_LARGE (the
 * estimated peak memory of one numeric factorisation exceeds the limit of
 * sol_set_memory_limit; s is then left without factorisation).
 */
eddy_status sol_analyse(sol_system *s, sol_info *info, eddy_error *err);

/* Estimated peak memory of one numeric factorisation, bytes (after
 * sol_analyse; 0 before): mesh_factor_bytes of the smaller of UMFPACK's fill
 * estimate and the typical fill; near the memory limit, of the fill of an
 * AMD Cholesky analysis of A + A' instead.  0 for s = NULL. */
double sol_factor_bytes(const sol_system *s);

/* The BLAS under UMFPACK and CHOLMOD is the library that defines dgemm_ in
 * this process (on Debian the libblas.so.3 alternative), found at run time
 * (dladdr) and asked through its own exported symbols; nothing links to a
 * particular BLAS.  The functions below are thread-safe. */

/* 1 if several numeric factorisations may run at once in this process: the
 * BLAS is reentrant (not a sequential OpenBLAS build, which gave wrong
 * numbers for concurrent callers); else 0. */
int sol_concurrency_safe(void);

/* 1 if the BLAS is a threaded OpenBLAS, whose threads per call
 * sol_blas_threads sets; else 0. */
int sol_blas_threaded(void);

/* Ask a threaded OpenBLAS for n >= 1 threads per call (process-wide; no
 * effect on other BLAS, nor for n < 1); the runner sets it so that the
 * speeds solved at once times the BLAS threads never exceed the cores. */
void sol_blas_threads(int n);

/* Threads per call the BLAS uses now: openblas_get_num_threads of a
 * threaded OpenBLAS, else 1. */
int sol_blas_get_threads(void);

/* The BLAS as detected, for reports: "OpenBLAS <version and build
 * configuration> (<file>)", "BLIS <version> (<file>)", "ATLAS (<file>)",
 * "reference BLAS (<file>)" (Debian's netlib build, recognised by its
 * folder) or "BLAS (<file>)"; <file> is the resolved path of the library of
 * dgemm_.  Written into buf (size bytes, truncated, NUL-terminated; nothing
 * for size 0 or buf NULL). */
void sol_blas_name(char *buf, size_t size);

/* ------------------------------------------------------------------------ */
/* The static field by Cholesky with CHOLMOD (sol_chol.c)                    */
/* ------------------------------------------------------------------------ */

/* At v = 0 the matrix of a linear system is symmetric positive definite:
 * sol_solve and sol_solve_work then factorise it by supernodal Cholesky
 * (CHOLMOD) with a symbolic analysis of its own, once per system, always in
 * the grid's nested-dissection ordering (given as a permutation: the
 * fastest analysis and factorisation measured, sol_chol.c), whatever
 * sol_set_ordering chose for the LU.  Speeds v != 0 and saturable systems (Newton)
 * keep UMFPACK's LU. */

/* Choose Cholesky (on != 0, the default of a new system) or LU (0) for the
 * static field of s. */
void sol_set_cholesky(sol_system *s, int on);

/* 1 if the static field of s is solved by Cholesky: on, and no saturable
 * cells; 0 otherwise and for s = NULL. */
int sol_uses_cholesky(const sol_system *s);

/*
 * CHOLMOD's symbolic analysis of the v = 0 matrix of s (once; a second call
 * only fills info).  sol_solve at v = 0 calls it; call it before
 * sol_solve_work at v = 0 to get Cholesky there (without it sol_solve_work
 * uses the LU analysis).
 *   info: optional; receives n, nnz, t_analyse (the Cholesky analysis),
 *         est_peak_bytes (mesh_factor_bytes of L's entries), ordering
 *         ("grid-nd"), cholesky = 1.
 * Returns EDDY_OK, EDDY_ERR_NOMEM, EDDY_ERR_SOLVER, EDDY_ERR_TOO_LARGE (above
 * the limit of sol_set_memory_limit), EDDY_ERR_INTERNAL (!sol_uses_cholesky).
 */
eddy_status sol_analyse_static(sol_system *s, sol_info *info, eddy_error *err);

/* The analysis a solve of s at speed v (m/s) uses: sol_analyse_static at
 * v = 0 when sol_uses_cholesky(s), sol_analyse otherwise (what sol_solve
 * runs first; call it before sol_solve_work with a workspace of one's own).
 * info and returns as those two. */
eddy_status sol_analyse_for_speed(sol_system *s, double v, sol_info *info, eddy_error *err);

/*
 * Solve at speed v (m/s; moving regions move at +v along x) with the
 * reluctivities of the grid (the initial permeability of saturable cells:
 * see sol_solve_newton).
 *   s:    the system; analysed on the first call (sol_analyse).
 *   a:    output, nx*ny node values of A (Wb/m), index i + nx*j, including
 *         the boundary nodes (0 on zero boundaries; the periodic copy at
 *         i = nx-1 equals i = 0).  Caller-owned.
 *   info: optional statistics (NULL).
 * At v = 0 with sol_uses_cholesky(s), by Cholesky (sol_analyse_static; the
 * LU analysis is then not made), else by LU (sol_analyse).
 * Not thread-safe on one system (it uses the system's own workspace,
 * allocated on the first call; see sol_work_alloc and sol_solve_work for
 * concurrent speeds).
 * Returns EDDY_OK, EDDY_ERR_INPUT (a non-finite speed), EDDY_ERR_NOMEM,
 * EDDY_ERR_SINGULAR, EDDY_ERR_SOLVER, EDDY_ERR_NUMERIC (non-finite values in
 * the solution), and the errors of sol_analyse.
 */
eddy_status sol_solve(sol_system *s, double v, double *a, sol_info *info, eddy_error *err);

/*
 * As sol_solve, with the caller's workspace w (sol_work_alloc on s); s must
 * be analysed already (sol_analyse; at v = 0 sol_analyse_static instead
 * gives Cholesky), and is only read.  Thread-safe for
 * distinct workspaces.  a, info as sol_solve.
 * Returns as sol_solve, and EDDY_ERR_INTERNAL when s is not analysed.
 */
eddy_status sol_solve_work(const sol_system *s, sol_work *w, double v, double *a,
                           sol_info *info, eddy_error *err);

/*
 * As sol_solve_work, with the cell reluctivities nu (ncx*ncy, m/H;
 * caller-owned, read only) in place of the grid's: a what-if solve of a
 * linear system that leaves the shared grid alone (for example magnets at
 * mu_r = 1 while another thread assembles the real system).  The pattern is
 * the system's, so nu may change values, not which cells are saturable.
 * Returns as sol_solve_work.
 */
eddy_status sol_solve_work_nu(const sol_system *s, sol_work *w, double v, const double *nu,
                              double *a, sol_info *info, eddy_error *err);

/*
 * Write the system matrix and right-hand side of s at speed v (m/s) in
 * Matrix Market format (coordinate real general; array real general), so
 * the solve can be checked with another library.  Uses a temporary
 * workspace; s need not be analysed.
 *   matrix_path, rhs_path: the files to create (overwritten).
 * Returns EDDY_OK, EDDY_ERR_IO, EDDY_ERR_NOMEM.
 */
eddy_status sol_export(const sol_system *s, double v, const char *matrix_path,
                       const char *rhs_path, eddy_error *err);

/* Bernoulli function B(z) = z / (e^z - 1), B(0) = 1, accurate for all finite
 * z (sol_assemble.c): the weight of the fitted convective fluxes. */
double sol_bernoulli(double z);

/* ------------------------------------------------------------------------ */
/* The geometry's weights of the box integration (sol_metric.c)              */
/* ------------------------------------------------------------------------ */

/*
 * The metric of cell row j (0 <= j < ncy) of a grid: what the geometry
 * changes in the box integration, the force and the loss integrals.  A
 * planar row (height hy) has wx = {hy/2, hy/2}, ey = hy, ring = 1, i.e. the
 * plain widths of the half faces (a row mapped to infinity beyond an open y
 * side: the mapping's wyl, wyr and ey of mesh_grid).  An axisymmetric row, r_j <= r <= r_j+1
 * (grid y is r, the unknown psi = r A_phi; see sol_metric.c):
 *   wx[0], wx[1]: integral of dr / r over the lower and the upper half of the
 *                 row, ln(r_m / r_j) and ln(r_j+1 / r_m), r_m the middle
 *                 (dimensionless; wx[0] = 0 on the axis row, whose lower
 *                 corners are the axis, psi = 0, and never unknowns);
 *   ey:           integral of r dr over the row, (r_j+1^2 - r_j^2) / 2, m^2;
 *   ring:         2 pi (integrals per radian times 2 pi give the whole ring).
 * The x half faces of a cell carry the conductance wx[e] nu / hx, its y half
 * faces (hx / 2) nu / ey; the cell's volume per unit of ring is hx ey.
 */
typedef struct {
    double wx[2];  /* widths of the x half faces, lower and upper half: m (planar), 1 (r-z) */
    double ey;     /* edge length of the differences across the row: m (planar), m^2 (r-z) */
    double ring;   /* 1 (planar, per metre of depth), 2 pi (the whole ring) */
} sol_row_metric;

/* The metric of row j of g into *m (no allocation, cannot fail). */
void sol_row_metric_of(const mesh_grid *g, int j, sol_row_metric *m);

/* ------------------------------------------------------------------------ */
/* Saturable materials: B-H curves (sol_bh.c), Newton-Raphson (sol_newton.c) */
/* ------------------------------------------------------------------------ */

/* The reluctivity nu(b), b = |B|^2, of a B-H curve: monotone cubic H(B)
 * (Fritsch-Carlson), a polynomial in b below the first point, the slope
 * relaxing to mu0 beyond the last; C^1 in b everywhere.  See sol_bh.c.
 * Plain data: copy freely. */
typedef struct {
    int n;                     /* points */
    double bb[MESH_BH_MAX];    /* B_k, T */
    double hh[MESH_BH_MAX];    /* H_k, A/m */
    double m[MESH_BH_MAX];     /* dH/dB at the points (limited slopes), m/H */
    double nu_init;            /* nu(0) = H_1 / B_1, m/H */
    double r;                  /* nu = nu_init + r b (b - B_1^2) below B_1, m/H / T^4 */
    double beta;               /* T, width of the relaxation to mu0 beyond the last point */
} sol_bh;

/*
 * Build the interpolant of a curve (mesh_bh_curve: (0, 0) first, H and B
 * strictly increasing, 3 <= n <= MESH_BH_MAX).
 *   out: receives it (no allocation).
 * Returns EDDY_OK, or EDDY_ERR_INPUT for a curve that is not of that form
 * (e.g. not monotone), with a message.
 */
eddy_status sol_bh_build(const mesh_bh_curve *c, sol_bh *out, eddy_error *err);

/* nu (m/H) and d nu / d b (m/H per T^2) of the curve c (from sol_bh_build)
 * into *nu and *dnu_db2, at b2 = |B|^2 (T^2; negative taken as 0).  The field
 * strength is H = nu |B|, and dH/d|B| = nu + 2 b dnu/db > 0. */
void sol_bh_eval(const sol_bh *c, double b2, double *nu, double *dnu_db2);

/* Newton-Raphson defaults: stop at ||R|| <= SOL_NEWTON_TOL ||f|| (R the
 * residual of the discrete equations, f their right-hand side, Euclidean
 * norms); fail after SOL_NEWTON_MAX_ITER steps. */
#define SOL_NEWTON_TOL 1e-8
#define SOL_NEWTON_MAX_ITER 40

/* What one nonlinear solve did. */
typedef struct {
    int iterations;            /* Newton steps taken (= numeric factorisations) */
    int converged;             /* 1 if ||R|| <= tol ||f|| */
    int n_residual;            /* entries of residual[] (iterations + 1) */
    double residual[SOL_NEWTON_MAX_ITER + 1]; /* ||R|| / ||f|| at the start and after
                                                 each step */
    double damping[SOL_NEWTON_MAX_ITER];      /* step length accepted by the line
                                                 search at each step (1: full step) */
    long saturable_cells;      /* cells with a B-H curve */
    double b_max;              /* T, largest |B| (cell r.m.s.) in a saturable cell */
} sol_newton_info;

/* 1 if the grid of s has saturable cells (a B-H curve): solve with
 * sol_solve_newton; sol_solve / sol_solve_work would use the initial
 * permeability only.  0 otherwise and for s = NULL. */
int sol_is_nonlinear(const sol_system *s);

/*
 * Solve at speed v (m/s) a system with saturable cells, by Newton-Raphson on
 * the box-integration equations with the reluctivity of each saturable cell
 * taken from its B-H curve at the cell's mean square flux density, and the
 * exact Jacobian (including the d nu / d B^2 term and the dependence of the
 * fitted convective fluxes on nu), a backtracking (Armijo) line search on
 * ||R||, and the system's symbolic factorisation (s analysed already).
 * A linear system (no saturable cell) is solved directly in one step.
 *   w:        workspace (sol_work_alloc on s); thread-safe for distinct w.
 *   a:        nx*ny node values of A (Wb/m), as sol_solve.  On entry the
 *             starting guess if warm != 0 (e.g. the previous speed's
 *             solution), ignored otherwise (start from A = 0, whose first
 *             step is the linear solve with the initial permeabilities).
 *             On exit the solution.
 *   nu_cells: optional (NULL), ncx*ncy: receives the reluctivity of every
 *             cell at the solution (m/H; g->nu in linear cells), for the
 *             forces and fields of the converged state.
 *   max_iter: Newton steps allowed, 1..SOL_NEWTON_MAX_ITER (0: the maximum).
 *   nli:      optional; receives the iteration count and residual history
 *             (also on failure).
 *   info:     optional; times are summed over the steps, the factor figures
 *             are those of the last step.
 * Returns EDDY_OK, EDDY_ERR_NUMERIC when Newton does not converge within
 * max_iter steps or the line search cannot reduce the residual (the message
 * gives the speed, the steps and the residual reached), EDDY_ERR_INPUT (a
 * non-finite speed, a saturable cell with remanence or a bad curve), and the
 * errors of sol_solve_work.
 */
eddy_status sol_solve_newton(const sol_system *s, sol_work *w, double v, double *a, int warm,
                             double *nu_cells, int max_iter, sol_newton_info *nli,
                             sol_info *info, eddy_error *err);

/* ------------------------------------------------------------------------ */
/* Implicit time steps in the conductors' own frame (sol_step.c)             */
/* ------------------------------------------------------------------------ */

/*
 * A time integration of
 *
 *     sigma dA/dt - div(nu grad A) = J_source + d/dx(nu Br_y) - d/dy(nu Br_x)
 *
 * (the conductors at rest in the frame of the grid, no convection term),
 * discretised in space by the box integration of the steady problem at
 * v = 0 (the same stencil, sources and boundaries) plus the lumped
 * conductivity mass of each node's dual cell, and in time by backward Euler
 * (the first step, or every step with order 1) and the variable-step BDF2
 * (second order; both A-stable and L-stable).  Each step assembles
 * (c0 / dt) M + K into the system's fixed pattern, factorises it numerically
 * with the system's symbolic analysis, and solves with the history terms on
 * the right-hand side.  Linear materials only (the initial permeability of
 * the grid's nu).  Used through sol_stepper_alloc / _start / _advance.
 */
typedef struct sol_stepper sol_stepper;

/*
 * A time integrator for system s (its own workspace, history and mass).
 *   s:   the system, analysed (sol_analyse) before the first step; borrowed,
 *        must outlive the stepper.  The grid's sources are read at every
 *        step, so a caller may change g->jz, g->brx, g->bry between steps
 *        (they act at the end of the step: implicit).
 *   out: receives the stepper, owned by the caller (sol_stepper_free); NULL
 *        on error.  Its state is A = 0 at t = 0 without history.
 * Returns EDDY_OK, EDDY_ERR_NOMEM, EDDY_ERR_INPUT (a grid with saturable
 * cells: not supported by the time steps yet).
 */
eddy_status sol_stepper_alloc(const sol_system *s, sol_stepper **out, eddy_error *err);

/* Free a stepper; accepts NULL. */
void sol_stepper_free(sol_stepper *t);

/*
 * Restart the integration at time t0 (s) from the node values a0 (nx*ny,
 * Wb/m, as sol_solve's output; NULL: A = 0 everywhere), forgetting the
 * history: the next step is a backward Euler step.
 */
void sol_stepper_start(sol_stepper *t, double t0, const double *a0);

/*
 * One implicit step of length dt (s, finite, > 0) from the current state.
 *   order:       1: backward Euler; 2: BDF2 with the variable-step
 *                coefficients (ratio dt / previous dt), backward Euler when
 *                there is no previous step yet.
 *   sigma_cells: conductivity of each cell during the step, S/m (ncx*ncy);
 *                NULL: the grid's sigma.
 *   a:           output, nx*ny node values of A at the end of the step
 *                (Wb/m; layout as sol_solve).  Caller-owned.
 *   info:        optional statistics of the step (NULL).
 * The state (time, the last two solutions) advances only on success.
 * Returns EDDY_OK, EDDY_ERR_INPUT (dt not finite and positive, order not 1
 * or 2), EDDY_ERR_INTERNAL (s not analysed), EDDY_ERR_SINGULAR,
 * EDDY_ERR_SOLVER, EDDY_ERR_NOMEM, EDDY_ERR_NUMERIC (non-finite values).
 */
eddy_status sol_stepper_advance(sol_stepper *t, double dt, int order, const double *sigma_cells,
                                double *a, sol_info *info, eddy_error *err);

/*
 * The cells during one step of a pass (sol_stepper_advance_frame): the
 * conductors at rest in the grid's frame and the moving ones, displaced by
 * whole cell columns (the locked step: a uniform x spacing over the band
 * they travel in, mesh_grid.pb0..pb1, so that moving and fixed cells stay
 * conforming).
 */
typedef struct {
    const double *sigma;          /* ncx*ncy, S/m: conductivity at the end of the step */
    const unsigned char *moving;  /* ncx*ncy: 1 in moving cells at the end of the step;
                                   * NULL: none move */
    const double *nu;             /* ncx*ncy, m/H: reluctivity at the end of the step;
                                   * NULL: the grid's nu */
    int shift;                    /* >= 0: cell columns the moving cells travelled
                                   * during this step */
} sol_step_frame;

/*
 * One implicit step with moving conductors.  The time derivative of A is
 * taken in each conductor's own frame (Lagrangian): at a node of the moving
 * conductors' mass, x_n is read `shift` columns upstream (x_n-1 the previous
 * step's shift further), at a node of the fixed conductors' mass where it
 * is; a node touching both carries both parts of its lumped mass.  Columns
 * upstream of the left side repeat the side's value (A = 0 on a zero side);
 * periodic sides wrap around.  In steady motion at speed v = shift h / dt
 * the step is the upwind difference v dA/dx of first (Euler) or second
 * (BDF2) order along the band, so the scheme stays stable at any cell
 * Peclet number.  When the matrix of a step equals the previous one (same
 * dt, same cells), its numeric factorisation is reused.
 * Arguments as sol_stepper_advance; fr the cells (not NULL).  Returns as
 * sol_stepper_advance, and EDDY_ERR_INPUT for a negative shift.
 */
eddy_status sol_stepper_advance_frame(sol_stepper *t, double dt, int order,
                                      const sol_step_frame *fr, double *a, sol_info *info,
                                      eddy_error *err);

/*
 * After a successful step: the induced current of every node's dual cell,
 * I = -M dA/dt with the step's own BDF derivative in each conductor's frame
 * (A per metre of depth, nx*ny node arrays; the periodic copy node holds
 * node 0's value), split into the part in moving conductors (i_moving) and
 * in fixed ones (i_fixed); either may be NULL.  Returns the Joule power of
 * the step's currents, W/m: sum over nodes of M (dA/dt)^2 for the moving
 * part into *p_moving and the fixed part into *p_fixed (either may be NULL).
 * All zero before the first step.
 */
void sol_stepper_currents(const sol_stepper *t, double *i_moving, double *i_fixed,
                          double *p_moving, double *p_fixed);

/*
 * The discrete magnetic energy of the node values a (nx*ny) on system s,
 * J/m: (1/2) a^T K a - f^T a with K and f the v = 0 box-integration matrix
 * and sources (nu the grid's, or nu_cells when not NULL).  For fixed sources
 * its change between two fields is the change of the stored energy
 * (1/2) integral nu |B - B_r|^2 (a constant apart), the term of the energy
 * balance  work = heat + change of magnetic energy.  Uses the stepper's
 * workspace.  Returns EDDY_OK, EDDY_ERR_NOMEM.
 */
eddy_status sol_stepper_energy(sol_stepper *t, const double *a, const double *nu_cells,
                               double *energy, eddy_error *err);

/* Time of the current state, s (t0 plus the steps taken); 0 for NULL. */
double sol_stepper_time(const sol_stepper *t);

/* Steps taken since the last start; 0 for NULL. */
long sol_stepper_steps(const sol_stepper *t);

#endif
