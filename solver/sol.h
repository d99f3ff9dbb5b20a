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
typedef struct sol_work sol_work;

/* Fill-reducing orderings for the LU factorisation. */
typedef enum {
    SOL_ORDER_AMD = 0,   /* UMFPACK's AMD on A + A' */
    SOL_ORDER_METIS,     /* METIS nested dissection (through UMFPACK) */
    SOL_ORDER_GRID_ND    /* geometric nested dissection of the tensor grid (sol.c) */
} sol_ordering;

/* The default of a new system (cheapest analysis); the runner (app_run.c)
 * picks METIS for sweeps, from the measurements of `make bench` (README). */
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

/* Choose the fill-reducing ordering (before sol_analyse; discards an earlier
 * symbolic factorisation). */
void sol_set_ordering(sol_system *s, sol_ordering o);

/* Name of an ordering ("amd", "metis", "grid-nd"); static storage. */
const char *sol_ordering_name(sol_ordering o);

/* Refuse factorisations whose estimated peak memory (sol_factor_bytes)
 * exceeds bytes (checked by sol_analyse); <= 0: no limit (default). */
void sol_set_memory_limit(sol_system *s, double bytes);

/*
 * Symbolic factorisation of the pattern (once per mesh).  Called by the
 * first sol_solve if not called before.  info may be NULL.
 * Returns EDDY_OK, EDDY_ERR_NOMEM, EDDY_ERR_SOLVER, EDDY_ERR_TOO_LARGE (the
 * estimated peak memory of one numeric factorisation exceeds the limit).
 */
eddy_status sol_analyse(sol_system *s, sol_info *info, eddy_error *err);

/* Estimated peak memory of one numeric factorisation, bytes (after
 * sol_analyse; 0 before): mesh_factor_bytes of the smaller of UMFPACK's fill
 * estimate and the typical fill; near the memory limit, of the fill of an
 * AMD Cholesky analysis of A + A' instead.  0 for s = NULL. */
double sol_factor_bytes(const sol_system *s);

/*
 * Workspace of one concurrent solve (matrix values, right-hand side,
 * solution, UMFPACK solve workspaces), sized for system s.  Several
 * workspaces may solve different speeds on one analysed system at the same
 * time, from different threads.  Free with sol_work_free (accepts NULL).
 */
eddy_status sol_work_alloc(const sol_system *s, sol_work **out, eddy_error *err);
void sol_work_free(sol_work *w);

/* 1 if several numeric factorisations may run at once in this process: the
 * BLAS under UMFPACK is reentrant (not a sequential OpenBLAS build, which is
 * detected at run time). */
int sol_concurrency_safe(void);

/* Ask a threaded OpenBLAS for n threads per call (no effect on other BLAS);
 * used so that concurrent speeds do not oversubscribe the cores. */
void sol_blas_threads(int n);

/* As sol_solve, with the caller's workspace; s must be analysed already.
 * Thread-safe for distinct workspaces. */
eddy_status sol_solve_work(const sol_system *s, sol_work *w, double v, double *a,
                           sol_info *info, eddy_error *err);

/*
 * Write the system matrix and right-hand side at speed v in Matrix Market
 * format (coordinate real general; array real general), so the solve can be
 * checked with another library.  Returns EDDY_OK, EDDY_ERR_IO, EDDY_ERR_NOMEM.
 */
eddy_status sol_export(const sol_system *s, double v, const char *matrix_path,
                       const char *rhs_path, eddy_error *err);

/*
 * Solve at speed v (m/s; moving regions move at +v along x).
 *   a:    output, nx*ny node values of A (Wb/m), index i + nx*j, including
 *         the boundary nodes (0 on zero boundaries; the periodic copy at
 *         i = nx-1 equals i = 0).  Caller-owned.
 *   info: optional statistics.
 * Not thread-safe on one system (it uses the system's own workspace; see
 * sol_work_alloc and sol_solve_work for concurrent speeds).
 * Returns EDDY_OK, EDDY_ERR_NOMEM, EDDY_ERR_SINGULAR, EDDY_ERR_SOLVER,
 * EDDY_ERR_NUMERIC.
 */
eddy_status sol_solve(sol_system *s, double v, double *a, sol_info *info, eddy_error *err);

/* Bernoulli function B(z) = z / (e^z - 1), B(0) = 1, accurate for all z. */
double sol_bernoulli(double z);

/* ------------------------------------------------------------------------ */
/* Saturable materials: B-H curves (sol_bh.c) and Newton-Raphson (sol.c)     */
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

/* nu (m/H) and d nu / d b (m/H per T^2) at b = |B|^2 (T^2; negative taken as
 * 0).  The field strength is H = nu |B|, and dH/d|B| = nu + 2 b dnu/db > 0. */
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
 * permeability only. */
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
/* Layered Fourier reference (sol_ref.c)                                     */
/*                                                                           */
/* An independent analytic solution, sharing no discretisation with the grid */
/* solver: a conducting plate (conductivity sigma, mu_r = 1) fills           */
/* y_bot <= y <= y_top, infinite along x, moving at +v along x, with free    */
/* space below and above.  Sources are rectangles above the plate: coils of  */
/* uniform current density along z, or magnets (mu_r = 1) magnetised along  */
/* y.  An optional infinitely permeable half-space (a yoke) may close the    */
/* field above all sources.  Sources are isolated (an integral over the      */
/* wavenumber k) or repeat with period lambda (a sum over harmonics), both   */
/* controlled to a relative tolerance.  The derivation is at the top of      */
/* sol_ref.c.                                                                */
/* ------------------------------------------------------------------------ */

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
    double sigma;        /* S/m, plate conductivity, >= 0 (mu_r = 1)                  */
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
    double force_y_lorentz; /* N/m, force_y recomputed as the integral of J_z B_x over
                        the plate from the field inside it; equals force_y to quadrature
                        accuracy (a second independent check)                         */
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
 *         sigma = 0 gives zero forces and loss (n_eval = 0).
 *   out   receives the result; always fully written on EDDY_OK and on
 *         EDDY_ERR_NUMERIC, zeroed on EDDY_ERR_INPUT.
 *   err   optional error record (may be NULL).
 *
 * Returns
 *   EDDY_OK            the estimated errors meet rel_tol (relative to each
 *                      result, with a floor of 1e-14 of the force scale).
 *   EDDY_ERR_INPUT     a NULL pointer, a non-finite number, sigma < 0, a plate
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
 * Does a case fit the layered reference geometry, and with what problem?
 * See sol_ref_case.c for the rules (one moving non-magnetic plate spanning
 * the domain, sources along +-y or coils above it, an optional permeable
 * yoke above the sources, nothing else but air; no saturable region).
 *   c:           a validated case.
 *   p:           receives the problem (rel_tol 1e-7).
 *   src, nsrc:   receive a malloc'ed array of sources (caller frees; NULL
 *                unless EDDY_OK).
 *   approximate: set to 1 if a magnet's recoil mu_r (not 1) is taken as 1.
 *   why:         receives the reason when the case does not fit (may be NULL).
 * Returns EDDY_OK (fits), EDDY_ERR_NOT_APPLICABLE (does not fit; why says
 * why), EDDY_ERR_NOMEM.
 */
eddy_status sol_ref_from_case(const mesh_case *c, sol_ref_problem *p, sol_ref_source **src,
                              int *nsrc, int *approximate, char *why, size_t why_len,
                              eddy_error *err);

#endif
