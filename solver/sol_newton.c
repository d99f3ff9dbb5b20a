/*
 * sol_newton.c - Newton-Raphson for grids with saturable cells.
 *
 * The discrete equations are R(x) = K(nu(x)) x - f = 0, x the unknown node
 * values, K the box-integration matrix (sol_assemble.c) with nu_c in cell c,
 * f the sources (saturable cells carry no remanence, so f does not depend on
 * x).
 *
 * The reluctivity of a saturable cell is nu_c = nu(b_c) from its B-H curve
 * (solver/sol_bh.c), with b_c the mean square flux density the scheme sees
 * on the cell's edges:
 *     b = (p_x^2 + q_x^2) / (2 hx^2) + (p_y^2 + q_y^2) / (2 hy^2),
 * p_x, q_x the differences of A along the bottom and top edges (B_y there),
 * p_y, q_y along the left and right edges (B_x).  Then x_c' K_c x_c =
 * area * b exactly for the cell's diffusion part, so without motion the
 * equations are the stationarity conditions of the convex energy
 * sum_c area W(b_c), W(b) = 1/2 integral_0^b nu (Marrocco's formulation);
 * dH/dB > 0 on the curve makes it strictly convex, with one solution.
 *
 * Jacobian: J = K(nu(x)) + sum_c (dR/dnu_c) (dnu/db)_c (db_c/dx)'.  In dR/dnu_c
 * the diffusion fluxes contribute their own derivative (w/h)(A_a - A_b); a
 * fitted x flux  (w/h) nu [B(-Pe) A_L - B(Pe) A_R],  Pe = sigma v h / nu,
 * contributes (w/h) G(Pe) (A_L - A_R) with
 *     G = d/dnu [nu B(Pe)] = B(Pe) - Pe B'(Pe) = B(Pe) B(-Pe)
 * (using B'(z) = B(z)(1 - B(z))/z - B(z)); G = 1 at Pe = 0 and G -> 0 for
 * large Pe, where the upwind flux no longer depends on nu.  The rank-one
 * term of a cell couples its four corners, so a saturable cell adds the two
 * diagonal couplings to the five-point pattern (posd).
 *
 * Steps: solve J dx = R with the system's symbolic factorisation, then
 * backtrack x - t dx, t = 1, 1/2, 1/4, ... until the Armijo condition
 * ||R(x - t dx)|| <= (1 - c t) ||R(x)||, c = 1e-4 (J. E. Dennis and R. B.
 * Schnabel, "Numerical Methods for Unconstrained Optimization and Nonlinear
 * Equations", 1983, section 6.3); dx is a descent direction of ||R||^2.
 */
#include "solver/sol_int.h"

#include <math.h>
#include <string.h>

#define ARMIJO_C 1e-4
#define MAX_HALVINGS 30

int sol_is_nonlinear(const sol_system *s) { return s != NULL && s->bh != NULL && s->nsat > 0; }

/* The four corner values of cell (i, j) from the unknown vector x (0 on the
 * fixed nodes) and the corners' unknowns (-1 if fixed). */
static void cell_corners(const sol_system *s, const double *x, int i, int j, double c[4],
                         long u[4])
{
    size_t nx = (size_t)s->g->nx;
    size_t node[4] = {(size_t)i + nx * (size_t)j, (size_t)i + 1 + nx * (size_t)j,
                      (size_t)i + nx * (size_t)(j + 1), (size_t)i + 1 + nx * (size_t)(j + 1)};
    for (int q = 0; q < 4; q++) {
        u[q] = s->unk[node[q]];
        c[q] = u[q] >= 0 ? x[u[q]] : 0.0;
    }
}

/* The metric of row j (sol_row_metric_of) relative to the planar one: the
 * x half-face widths over hy/2 (sx) and hy over the edge length ey (sy), all
 * exactly 1 in a planar grid, so that planar numbers keep every bit; m
 * (optional) receives the metric itself.  With them the cell's energy
 * x_c' K_c x_c / nu over its volume hx ey is
 *   b = (sx0 px^2 + sx1 qx^2) sy / (2 hx^2) + (py^2 + qy^2) sy^2 / (2 hy^2),
 * the planar b with the r weights: (dpsi/dz / r)^2 = B_r^2 and
 * (dpsi/dr / r)^2 = B_z^2 in an axisymmetric cell. */
static void metric_factors(const mesh_grid *g, int j, double sx[2], double *sy,
                           sol_row_metric *m)
{
    sol_row_metric local;
    if (m == NULL)
        m = &local;
    sol_row_metric_of(g, j, m);
    double hy = g->y[j + 1] - g->y[j];
    sx[0] = m->wx[0] / (0.5 * hy);
    sx[1] = m->wx[1] / (0.5 * hy);
    *sy = hy / m->ey;
}

/* nu and d nu / d b of every cell at the iterate x into w->nu, w->dnu;
 * returns the largest b of a saturable cell (T^2). */
static double update_nu(const sol_system *s, sol_work *w, const double *x)
{
    const mesh_grid *g = s->g;
    double bmax = 0.0;
    for (int j = 0; j < g->ncy; j++) {
        double hy = g->y[j + 1] - g->y[j];
        double sx[2], sy;
        metric_factors(g, j, sx, &sy, NULL);
        for (int i = 0; i < g->ncx; i++) {
            size_t k = (size_t)i + (size_t)g->ncx * (size_t)j;
            int curve = g->bh_cell[k];
            if (curve < 0) {
                w->nu[k] = g->nu[k];
                w->dnu[k] = 0.0;
                continue;
            }
            double hx = g->x[i + 1] - g->x[i], c[4];
            long u[4];
            cell_corners(s, x, i, j, c, u);
            double px = c[1] - c[0], qx = c[3] - c[2], py = c[2] - c[0], qy = c[3] - c[1];
            double b2 = 0.5 * (sx[0] * px * px + sx[1] * qx * qx) / (hx * hx) * sy +
                        0.5 * (py * py + qy * qy) / (hy * hy) * (sy * sy);
            if (b2 > bmax)
                bmax = b2;
            sol_bh_eval(&s->bh[curve], b2, &w->nu[k], &w->dnu[k]);
        }
    }
    return bmax;
}

/* Assemble K(nu(x)) and f into w->Ax, w->rhs and write R = K x - f into
 * res; returns ||R||_2 and the largest saturable b in *bmax. */
static double residual(const sol_system *s, sol_work *w, double v, const double *x, double *res,
                       double *bmax)
{
    *bmax = update_nu(s, w, x);
    sol_assemble(s, w, v, w->nu);
    for (long r = 0; r < s->n; r++)
        res[r] = -w->rhs[r];
    for (long c = 0; c < s->n; c++)
        for (long q = s->Ap[c]; q < s->Ap[c + 1]; q++)
            res[s->Ai[q]] += w->Ax[q] * x[c];
    double sum = 0.0;
    for (long r = 0; r < s->n; r++)
        sum += res[r] * res[r];
    return sqrt(sum);
}

/* Direction from corner r to corner t of a cell (corners 0: (i, j), 1:
 * (i+1, j), 2: (i, j+1), 3: (i+1, j+1)): NDIR + DG_* for the diagonals. */
static const int corner_dir[4][4] = {
    {DIR_C, DIR_E, DIR_N, NDIR + DG_NE},
    {DIR_W, DIR_C, NDIR + DG_NW, DIR_N},
    {DIR_S, NDIR + DG_SE, DIR_C, DIR_E},
    {NDIR + DG_SW, DIR_S, DIR_W, DIR_C},
};

/* Add the d nu / d b terms of the saturable cells to w->Ax (which holds
 * K(nu(x)), with w->nu, w->dnu at x): the Jacobian at x. */
static void add_jacobian(const sol_system *s, sol_work *w, double v, const double *x)
{
    const mesh_grid *g = s->g;
    for (int j = 0; j < g->ncy; j++) {
        double hy = g->y[j + 1] - g->y[j];
        double sx[2], sy;
        sol_row_metric m;
        metric_factors(g, j, sx, &sy, &m);
        for (int i = 0; i < g->ncx; i++) {
            size_t k = (size_t)i + (size_t)g->ncx * (size_t)j;
            if (g->bh_cell[k] < 0 || w->dnu[k] == 0.0)
                continue;
            double hx = g->x[i + 1] - g->x[i], c[4];
            long u[4];
            cell_corners(s, x, i, j, c, u);
            double gfit = 1.0;
            if (g->moving[k] && g->sigma[k] > 0.0 && v != 0.0) {
                double pe = g->sigma[k] * v * hx / w->nu[k], bp = sol_bernoulli(pe);
                gfit = bp * (bp + pe); /* B(Pe) B(-Pe) */
            }
            /* the geometric parts of the fluxes (K_c / nu, fitted) */
            double ax0 = m.wx[0] / hx * gfit, ax1 = m.wx[1] / hx * gfit, ay = 0.5 * hx / m.ey;
            double gnu[4] = {ax0 * (c[0] - c[1]) + ay * (c[0] - c[2]),
                             -ax0 * (c[0] - c[1]) + ay * (c[1] - c[3]),
                             ax1 * (c[2] - c[3]) + ay * (c[2] - c[0]),
                             -ax1 * (c[2] - c[3]) + ay * (c[3] - c[1])};
            double px = c[1] - c[0], qx = c[3] - c[2], py = c[2] - c[0], qy = c[3] - c[1];
            /* d b / d corner (metric_factors) */
            double ix0 = sx[0] * sy / (hx * hx), ix1 = sx[1] * sy / (hx * hx);
            double iy2 = sy * sy / (hy * hy);
            double db[4] = {-px * ix0 - py * iy2, px * ix0 - qy * iy2, -qx * ix1 + py * iy2,
                            qx * ix1 + qy * iy2};
            for (int r = 0; r < 4; r++) {
                if (u[r] < 0)
                    continue;
                double gr = gnu[r] * w->dnu[k];
                for (int t = 0; t < 4; t++) {
                    int d = corner_dir[r][t];
                    long p = d < NDIR ? s->pos[u[r] * NDIR + d] : s->posd[u[r] * NDIAG + d - NDIR];
                    if (p >= 0)
                        w->Ax[p] += gr * db[t];
                }
            }
        }
    }
}


/* Grids without saturable cells: one linear solve (nu_cells: g->nu). */
static eddy_status solve_linear(const sol_system *s, sol_work *w, double v, double *a,
                                double *nu_cells, sol_newton_info *nli, sol_info *info,
                                eddy_error *err)
{
    const mesh_grid *g = s->g;
    size_t nc = (size_t)g->ncx * (size_t)g->ncy;
    eddy_status st = sol_solve_work(s, w, v, a, info, err);
    if (st == EDDY_OK && nu_cells != NULL)
        memcpy(nu_cells, g->nu, nc * sizeof *nu_cells);
    nli->converged = st == EDDY_OK;
    return st;
}

/* The starting iterate w->x (a if warm, else 0), its residual norm *rn and
 * the norm of the sources *fn (1 without sources, where the iterate is 0);
 * *bmax: the largest saturable b (T^2). */
static void newton_start(const sol_system *s, sol_work *w, double v, const double *a, int warm,
                         double *rn, double *fn, double *bmax)
{
    const mesh_grid *g = s->g;
    size_t nn = (size_t)g->nx * (size_t)g->ny;
    if (warm)
        for (size_t k = 0; k < nn; k++) {
            if (s->unk[k] >= 0)
                w->x[s->unk[k]] = a[k];
        }
    else
        memset(w->x, 0, (size_t)s->n * sizeof *w->x);
    *rn = residual(s, w, v, w->x, w->res, bmax);
    double sum = 0.0;
    for (long r = 0; r < s->n; r++)
        sum += w->rhs[r] * w->rhs[r];
    *fn = sqrt(sum);
    if (*fn == 0.0) { /* no sources: A = 0 */
        memset(w->x, 0, (size_t)s->n * sizeof *w->x);
        *rn = residual(s, w, v, w->x, w->res, bmax);
        *fn = 1.0;
    }
}

/* The Newton step w->dx = J^-1 R at w->x (w->Ax holds K(nu(x)), w->res R(x));
 * adds the times to *t_asm, *t_fac, *t_sol. */
static eddy_status newton_direction(const sol_system *s, sol_work *w, double v, sol_info *info,
                                    double *t_asm, double *t_fac, double *t_sol, eddy_error *err)
{
    double t0 = eddy_now();
    add_jacobian(s, w, v, w->x);
    *t_asm += eddy_now() - t0;
    double tf = 0.0, ts = 0.0;
    eddy_status st = sol_umf_factor_solve(s, w, w->res, w->dx,
                                          "numeric factorisation of the Newton Jacobian",
                                          "solve with the Newton Jacobian", info, &tf, &ts, err);
    *t_fac += tf;
    *t_sol += ts;
    return st;
}

/* Backtracking line search on ||R|| along -w->dx from w->x (residual norm
 * rn): the trial iterate w->xt = x - t dx with t = 1, 1/2, ... until the
 * Armijo condition holds; *rt, *bt: its residual norm and largest saturable
 * b; w->res, w->Ax, w->nu are at w->xt.  Returns 0 if MAX_HALVINGS halvings
 * did not reduce the residual. */
static int line_search(const sol_system *s, sol_work *w, double v, double rn, double *t,
                       double *rt, double *bt)
{
    *t = 1.0;
    for (int cuts = 0;; *t *= 0.5) {
        for (long r = 0; r < s->n; r++)
            w->xt[r] = w->x[r] - *t * w->dx[r];
        *rt = residual(s, w, v, w->xt, w->res, bt);
        if (isfinite(*rt) && *rt <= (1.0 - ARMIJO_C * *t) * rn)
            return 1;
        if (++cuts > MAX_HALVINGS)
            return 0;
    }
}

/* Newton's iterations from w->x (residual norm rn, sources fn, saturable
 * b_max^2 *bmax) until ||R|| <= SOL_NEWTON_TOL fn or max_iter steps; the
 * history into nli; times added to t[0..2] (assembly, factor, solve). */
static eddy_status newton_iterate(const sol_system *s, sol_work *w, double v, double rn,
                                  double fn, double *bmax, int max_iter, sol_newton_info *nli,
                                  sol_info *info, double t[3], eddy_error *err)
{
    for (;;) {
        if (!isfinite(rn))
            return EDDY_RAISE(err, EDDY_ERR_NUMERIC,
                              "Newton-Raphson at %g m/s: the residual became non-finite at "
                              "step %d", v, nli->iterations);
        if (rn <= SOL_NEWTON_TOL * fn) {
            nli->converged = 1;
            return EDDY_OK;
        }
        if (nli->iterations == max_iter)
            return EDDY_RAISE(err, EDDY_ERR_NUMERIC,
                              "Newton-Raphson did not converge at %g m/s: relative residual "
                              "%.3g after %d steps (tolerance %.0e); the B-H curve may be too "
                              "steep or the field too far beyond its last point",
                              v, rn / fn, nli->iterations, SOL_NEWTON_TOL);
        eddy_status st = newton_direction(s, w, v, info, &t[0], &t[1], &t[2], err);
        if (st != EDDY_OK)
            return st;
        double t0 = eddy_now(), step = 1.0, rt = 0.0, bt = 0.0;
        int ok = line_search(s, w, v, rn, &step, &rt, &bt);
        t[0] += eddy_now() - t0;
        if (!ok)
            return EDDY_RAISE(err, EDDY_ERR_NUMERIC,
                              "Newton-Raphson did not converge at %g m/s: the line search "
                              "could not reduce the residual at step %d (relative residual "
                              "%.3g)", v, nli->iterations + 1, rn / fn);
        double *tmp = w->x;
        w->x = w->xt;
        w->xt = tmp;
        rn = rt;
        *bmax = bt;
        nli->damping[nli->iterations++] = step;
        nli->residual[nli->n_residual++] = rn / fn;
    }
}

eddy_status sol_solve_newton(const sol_system *s, sol_work *w, double v, double *a, int warm,
                             double *nu_cells, int max_iter, sol_newton_info *nli,
                             sol_info *info, eddy_error *err)
{
    sol_newton_info local;
    if (nli == NULL)
        nli = &local;
    memset(nli, 0, sizeof *nli);
    if (!sol_is_nonlinear(s))
        return solve_linear(s, w, v, a, nu_cells, nli, info, err);
    if (!isfinite(v))
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "speed must be finite");
    if (s->symbolic == NULL || w->x == NULL)
        return EDDY_RAISE(err, EDDY_ERR_INTERNAL,
                          "sol_solve_newton before sol_analyse, or with a workspace of another "
                          "system");
    if (max_iter <= 0 || max_iter > SOL_NEWTON_MAX_ITER)
        max_iter = SOL_NEWTON_MAX_ITER;
    nli->saturable_cells = s->nsat;
    double t[3] = {0.0, 0.0, 0.0}, t0 = eddy_now(), rn = 0.0, fn = 0.0, bmax = 0.0;
    newton_start(s, w, v, a, warm, &rn, &fn, &bmax);
    t[0] += eddy_now() - t0;
    nli->residual[nli->n_residual++] = rn / fn;
    eddy_status st = newton_iterate(s, w, v, rn, fn, &bmax, max_iter, nli, info, t, err);
    nli->b_max = sqrt(bmax);
    if (info != NULL) {
        info->n = s->n;
        info->nnz = s->Ap[s->n];
        info->t_analyse = s->t_analyse;
        info->t_assemble = t[0];
        info->t_factor = t[1];
        info->t_solve = t[2];
        info->est_peak_bytes = s->est_peak_bytes;
        info->ordering = sol_ordering_name(s->ordering);
    }
    /* the last iterate, also after a failure (w->nu is at that iterate) */
    const mesh_grid *g = s->g;
    size_t nn = (size_t)g->nx * (size_t)g->ny, nc = (size_t)g->ncx * (size_t)g->ncy;
    for (size_t k = 0; k < nn; k++) {
        long u = s->unk[k];
        a[k] = u >= 0 ? w->x[u] : 0.0;
    }
    if (nu_cells != NULL)
        memcpy(nu_cells, w->nu, nc * sizeof *nu_cells);
    if (st == EDDY_OK)
        for (size_t k = 0; k < nn; k++)
            if (!isfinite(a[k]))
                return EDDY_RAISE(err, EDDY_ERR_NUMERIC, "the solution holds non-finite values");
    return st;
}
