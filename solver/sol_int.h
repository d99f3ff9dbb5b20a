/*
 * sol_int.h - PRIVATE to solver/: the layout of a system and of a solve
 * workspace, and the pieces the solver's files share.  Nothing outside
 * solver/ includes this header; the module's manual is solver/sol.h.
 *
 *   sol_pattern.c   unknown numbering, the fixed CSC pattern and its
 *                   positions, the grid nested-dissection ordering, system
 *                   and workspace alloc/free
 *   sol_assemble.c  box integration: the stencil of one cell, the planar
 *                   assembly, the Bernoulli function
 *   sol_umf.c       UMFPACK: analysis, numeric factorisation and solve,
 *                   Matrix Market export, BLAS threads, status translation
 *   sol_newton.c    Newton-Raphson for saturable cells, with its Jacobian
 *   sol_step.c      implicit time steps (backward Euler, BDF2) in the
 *                   conductor's frame
 *   sol_bh.c        B-H curve interpolation
 */
#ifndef EDDY_SOL_INT_H
#define EDDY_SOL_INT_H

#include "solver/sol.h"

#include <cholmod.h>
#include <umfpack.h>

/* The five-point neighbours of an unknown, by direction: itself (centre),
 * west (-x), east (+x), south (-y), north (+y). */
enum { DIR_C = 0, DIR_W, DIR_E, DIR_S, DIR_N, NDIR };
/* Diagonal neighbours, coupled only through saturable cells (Newton). */
enum { DG_SW = 0, DG_SE, DG_NW, DG_NE, NDIAG };

/* Values and workspaces of one solve: one per thread, allocated once. */
struct sol_work {
    double *Ax;      /* matrix values in the system's fixed CSC pattern */
    double *rhs, *sol;
    long *Wi;        /* UMFPACK solve workspaces: n of Wi; 3n of W (wsolve without
                      * refinement uses n, sol_umf_solve's residual and row sums 2n) */
    double *W;
    /* Newton-Raphson (systems with saturable cells only, else NULL): the
     * iterate, the step, the residual, a trial iterate (n each), and per
     * cell nu and d nu / d b at the last evaluated iterate */
    double *x, *dx, *res, *xt, *nu, *dnu;
};

struct sol_system {
    const mesh_grid *g;
    long n;          /* unknowns */
    long nxu;        /* unknown columns per grid row */
    long *unk;       /* nx*ny: unknown index of each node, -1 if fixed */
    long *Ap, *Ai;   /* CSC pattern */
    long *pos;       /* n*NDIR: position in Ax of (row u, column neighbour dir) or -1 */
    long *posd;      /* n*NDIAG: the same for diagonal neighbours; NULL unless the grid
                      * has saturable cells (their Jacobian couples all four corners) */
    sol_bh *bh;      /* the grid's B-H curves, interpolated (g->nbh), or NULL */
    long nsat;       /* saturable cells */
    sol_work *work;  /* the workspace of sol_solve */
    void *symbolic;
    double control[UMFPACK_CONTROL];
    sol_ordering ordering;
    double t_analyse;
    double est_peak_bytes, est_flops, est_lu;  /* from the symbolic analysis */
    double memory_limit;                       /* bytes; <= 0: no limit */
    /* the static field by Cholesky (sol_chol.c) */
    int cholesky;                  /* 1: v = 0 of a linear system by CHOLMOD (default) */
    cholmod_factor *chol_symbolic; /* CHOLMOD's symbolic analysis, or NULL */
    double chol_lnz, chol_flops;   /* entries of L, flops of LL' (from the analysis) */
    double chol_bytes;             /* estimated memory of one Cholesky factorisation */
    double t_chol_analyse;         /* s */
};

/* ------------------------------------------------------------------------ */
/* Box integration (sol_assemble.c)                                          */
/* ------------------------------------------------------------------------ */

/*
 * The contribution of one primal cell (i, j) to the box-integration
 * equations of its four corners, numbered 0: (i, j), 1: (i+1, j),
 * 2: (i, j+1), 3: (i+1, j+1).  A cell holds four half faces of the dual
 * cells of its corners:
 *   - two x half faces, on the bottom edge (corners 0 -> 1) and on the top
 *     edge (2 -> 3), each carrying the flux from its left corner L to its
 *     right corner R, exponentially fitted:
 *         F = gx [ bm A_L - bp A_R ]
 *   - two y half faces, on the left edge (0 -> 2) and on the right edge
 *     (1 -> 3), carrying diffusion only:  F = gy (A_lower - A_upper).
 * A geometry supplies the face conductances (w nu / h: the half face's width
 * w, the edge length h and the cell's reluctivity, with any metric weight of
 * its own), the fitted factors and the corners' sources.
 */
typedef struct {
    double gx[2];        /* x half faces, bottom and top edge: w nu / h, m/H */
    double bm[2], bp[2]; /* B(-Pe), B(Pe) of those faces (1, 1 without motion) */
    double gy[2];        /* y half faces, left and right edge: w nu / h, m/H */
    double f[4];         /* right-hand side of each corner's equation, A/m */
} sol_cell;

/* Add the fluxes of cell (i, j) (0 <= i < ncx, 0 <= j < ncy of s->g) to the
 * rows of its corners that are unknowns: matrix values into w->Ax through
 * s->pos, sources into w->rhs.  Within a cell the x half faces are added
 * before the y half faces, the order of the planar assembly. */
void sol_assemble_cell(const sol_system *s, sol_work *w, int i, int j, const sol_cell *c);

/* Write the matrix values and right-hand side of the planar problem at speed
 * v (m/s) into w->Ax and w->rhs (zeroed first), with the reluctivity nuc[k]
 * (m/H, ncx*ncy) in cell k: g->nu for a linear system, the Newton iterate's
 * otherwise. */
void sol_assemble(const sol_system *s, sol_work *w, double v, const double *nuc);

/* The lumped conductivity mass of every unknown into mass[s->n] (S, planar
 * per metre of depth: sigma times the dual cell's area; S/m times the
 * metric's measure in r-z), with the conductivity sigma_cells[k] (S/m,
 * ncx*ncy) in cell k: the box integral of sigma dA/dt is mass[u] dA_u/dt
 * (sol_assemble.c, derivation there). */
void sol_mass(const sol_system *s, const double *sigma_cells, double *mass);

/* ------------------------------------------------------------------------ */
/* Pattern (sol_pattern.c) and UMFPACK (sol_umf.c)                           */
/* ------------------------------------------------------------------------ */

/* The grid's nested-dissection order of the unknowns (along the grid's
 * diagonals, sol_pattern.c) into perm[s->n] (perm[k] = the unknown
 * eliminated k-th).  Returns EDDY_OK, or EDDY_ERR_NOMEM for its scratch
 * (about 9 bytes per unknown); perm is then undefined. */
eddy_status sol_grid_nd_order(const sol_system *s, long *perm, eddy_error *err);

/* The UMFPACK control parameters of a new system into s->control (after
 * s->n is set). */
void sol_umf_defaults(sol_system *s);

/* The one place where UMFPACK status codes become eddy_status; what names
 * the step in the message.  Returns EDDY_OK for success and for the
 * determinant warnings (the determinant is not used), EDDY_ERR_SINGULAR,
 * EDDY_ERR_NOMEM, EDDY_ERR_SOLVER. */
eddy_status sol_umf_status(long st, const char *what, eddy_error *err);

/*
 * Numeric factorisation of the matrix w->Ax (s analysed) into *numeric
 * (UMFPACK's, freed by the caller with umfpack_dl_free_numeric; NULL on
 * error).  what names the step in messages; info (may be NULL) receives
 * lnz, unz, flops, rcond and peak_bytes; *t_factor the time (s).
 * Returns EDDY_OK or the status of sol_umf_status.
 */
eddy_status sol_umf_numeric(const sol_system *s, sol_work *w, void **numeric, const char *what,
                            sol_info *info, double *t_factor, eddy_error *err);

/*
 * The solve A x = b (b, x: s->n entries; x may not alias b) with the factors
 * numeric of w->Ax: one solve, and one step of iterative refinement where
 * the normwise backward error exceeds SOL_BACKWARD_TOL (sol_umf.c).  Uses
 * w->W and w->Wi.  what names the step in messages.
 * Returns EDDY_OK or the status of sol_umf_status.
 */
eddy_status sol_umf_solve(const sol_system *s, sol_work *w, void *numeric, const double *b,
                          double *x, const char *what, eddy_error *err);

/*
 * Numeric factorisation of the matrix w->Ax (s analysed) and the solve
 * A x = b (b, x: s->n entries; x may not alias b), freeing the factors.
 *   what_factor, what_solve: the steps' names in messages.
 *   info:      optional; receives lnz, unz, flops, rcond and peak_bytes.
 *   t_factor, t_solve: receive the two times (s).
 * Returns EDDY_OK or the status of sol_umf_status.
 */
eddy_status sol_umf_factor_solve(const sol_system *s, sol_work *w, const double *b, double *x,
                                 const char *what_factor, const char *what_solve,
                                 sol_info *info, double *t_factor, double *t_solve,
                                 eddy_error *err);

/*
 * Cholesky factorisation of the v = 0 matrix w->Ax (s analysed by
 * sol_analyse_static; only its lower triangle is read) and the solve
 * A x = b (b, x: s->n entries, x may not alias b), freeing the factor; the
 * system's symbolic analysis is copied, so distinct workspaces may call this
 * at once.
 *   info:  optional; receives lnz (entries of L), unz = 0, flops, rcond,
 *          peak_bytes (CHOLMOD's peak of the call) and cholesky = 1.
 *   t_factor, t_solve: receive the two times (s).
 * Returns EDDY_OK, EDDY_ERR_SINGULAR (not positive definite),
 * EDDY_ERR_NOMEM, EDDY_ERR_SOLVER.
 */
eddy_status sol_chol_factor_solve(const sol_system *s, sol_work *w, const double *b, double *x,
                                  sol_info *info, double *t_factor, double *t_solve,
                                  eddy_error *err);

/* Free the Cholesky analysis of s (none: nothing). */
void sol_chol_free(sol_system *s);

/* The statistics of one numeric factorisation and solve of s into info
 * (may be NULL): sizes, the analysis time, memory estimate and ordering of
 * the factorisation that ran (chol: the static field's Cholesky, else the
 * LU), the given assembly, factor and solve times (s). */
void sol_fill_info(const sol_system *s, sol_info *info, int chol, double t_asm, double t_fac,
                   double t_sol);

/* The node values a (nx*ny) from the unknowns x (s->n): 0 on the fixed
 * nodes.  Returns EDDY_OK, or EDDY_ERR_NUMERIC for a non-finite value. */
eddy_status sol_scatter_solution(const sol_system *s, const double *x, double *a,
                                 eddy_error *err);

#endif
