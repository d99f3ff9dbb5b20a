/*
 * sol_step.c - implicit time steps of the eddy-current equation in the
 * conductors' own frame (no convection):
 *
 *     sigma dA/dt - div(nu grad A) = f   (f: coil currents, magnetisation).
 *
 * Space: the box integration of the steady problem at v = 0 (sol_assemble,
 * the matrix K and the sources f, unchanged) and the lumped conductivity
 * mass M of each dual cell (sol_mass), so that the semi-discrete system is
 *
 *     M dx/dt + K x = f.
 *
 * Time: the backward differentiation formulas of orders 1 and 2 (e.g.
 * E. Hairer and G. Wanner, Solving Ordinary Differential Equations II,
 * 2nd ed., Springer 1996, section III.1 and V.1; the variable-step
 * coefficients as in section III.5; cited from memory).  With the step
 * dt = t_n+1 - t_n and the ratio w = dt / (t_n - t_n-1),
 *
 *     BDF2:  (M / dt) [ c0 x_n+1 - (1 + w) x_n + (w^2 / (1 + w)) x_n-1 ]
 *                + K x_n+1 = f,      c0 = (1 + 2 w) / (1 + w)
 *            (w = 1: the familiar 3/2, -2, 1/2),
 *     Euler: (M / dt) (x_n+1 - x_n) + K x_n+1 = f,
 *
 * i.e. one linear system ((c0 / dt) M + K) x_n+1 = f + (M / dt) h per step,
 * h the history combination.  Both are A-stable and L-stable (large steps
 * damp every mode, without oscillation for Euler), so the step is set by
 * accuracy alone.  (c0 / dt) M only adds to the diagonal: the matrix keeps
 * the five-point pattern, its M-matrix property and the system's symbolic
 * factorisation; each step factorises numerically (sol_umf_factor_solve).
 */
#include "solver/sol_int.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

struct sol_stepper {
    const sol_system *s;
    sol_work *w;      /* matrix values, sources, solution, solve workspace */
    double *mass;     /* n: lumped sigma mass of the last step, S */
    double *x1, *x0;  /* n: the state x_n and the one before, x_n-1 */
    double *b;        /* n: right-hand side with the history terms */
    double t;         /* s, time of x_n */
    double dt_last;   /* s, length of the last step (0 before the first) */
    long steps;       /* steps since the last start */
};

void sol_stepper_free(sol_stepper *t)
{
    if (t == NULL)
        return;
    sol_work_free(t->w);
    free(t->mass);
    free(t->x1);
    free(t->x0);
    free(t->b);
    free(t);
}

eddy_status sol_stepper_alloc(const sol_system *s, sol_stepper **out, eddy_error *err)
{
    *out = NULL;
    if (sol_is_nonlinear(s))
        return EDDY_RAISE(err, EDDY_ERR_INPUT,
                          "time steps need linear materials (this grid has saturable cells)");
    sol_stepper *t = calloc(1, sizeof *t);
    if (t == NULL)
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
    t->s = s;
    size_t n = (size_t)s->n;
    t->mass = malloc(n * sizeof *t->mass);
    t->x1 = malloc(n * sizeof *t->x1);
    t->x0 = malloc(n * sizeof *t->x0);
    t->b = malloc(n * sizeof *t->b);
    if (!t->mass || !t->x1 || !t->x0 || !t->b) {
        sol_stepper_free(t);
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory for the time steps of %ld unknowns",
                          s->n);
    }
    eddy_status st = sol_work_alloc(s, &t->w, err);
    if (st != EDDY_OK) {
        sol_stepper_free(t);
        return st;
    }
    sol_stepper_start(t, 0.0, NULL);
    *out = t;
    return EDDY_OK;
}

void sol_stepper_start(sol_stepper *t, double t0, const double *a0)
{
    const sol_system *s = t->s;
    size_t nn = (size_t)s->g->nx * (size_t)s->g->ny;
    memset(t->x1, 0, (size_t)s->n * sizeof *t->x1);
    if (a0 != NULL)
        for (size_t k = 0; k < nn; k++)
            if (s->unk[k] >= 0)
                t->x1[s->unk[k]] = a0[k];
    memcpy(t->x0, t->x1, (size_t)s->n * sizeof *t->x0);
    t->t = t0;
    t->dt_last = 0.0;
    t->steps = 0;
}

double sol_stepper_time(const sol_stepper *t) { return t != NULL ? t->t : 0.0; }

long sol_stepper_steps(const sol_stepper *t) { return t != NULL ? t->steps : 0; }

eddy_status sol_stepper_advance(sol_stepper *t, double dt, int order, const double *sigma_cells,
                                double *a, sol_info *info, eddy_error *err)
{
    const sol_system *s = t->s;
    if (!(isfinite(dt) && dt > 0.0))
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "time step must be finite and positive (got %g s)",
                          dt);
    if (order != 1 && order != 2)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "time-step order must be 1 or 2 (got %d)", order);
    if (s->symbolic == NULL)
        return EDDY_RAISE(err, EDDY_ERR_INTERNAL, "sol_stepper_advance before sol_analyse");
    double t0 = eddy_now();
    sol_work *w = t->w;
    long n = s->n;
    /* coefficients: (M / dt)(c0 x_n+1 - c1 x_n + c2 x_n-1) */
    double c0 = 1.0, c1 = 1.0, c2 = 0.0;
    if (order == 2 && t->steps > 0) {
        double r = dt / t->dt_last;
        c0 = (1.0 + 2.0 * r) / (1.0 + r);
        c1 = 1.0 + r;
        c2 = r * r / (1.0 + r);
    }
    sol_assemble(s, w, 0.0, s->g->nu);
    sol_mass(s, sigma_cells != NULL ? sigma_cells : s->g->sigma, t->mass);
    for (long u = 0; u < n; u++) {
        double mdt = t->mass[u] / dt;
        w->Ax[s->pos[u * NDIR + DIR_C]] += c0 * mdt;
        t->b[u] = w->rhs[u] + mdt * (c1 * t->x1[u] - c2 * t->x0[u]);
    }
    double t_asm = eddy_now() - t0, t_fac = 0.0, t_sol = 0.0;
    eddy_status st = sol_umf_factor_solve(s, w, t->b, w->sol, "numeric factorisation of a time step",
                                          "solve of a time step", info, &t_fac, &t_sol, err);
    sol_fill_info(s, info, t_asm, t_fac, t_sol);
    if (st == EDDY_OK)
        st = sol_scatter_solution(s, w->sol, a, err);
    if (st != EDDY_OK)
        return st;
    /* rotate the history: x_n-1 <- x_n, x_n <- x_n+1 */
    double *old = t->x0;
    t->x0 = t->x1;
    t->x1 = old;
    memcpy(t->x1, w->sol, (size_t)n * sizeof *t->x1);
    t->t += dt;
    t->dt_last = dt;
    t->steps++;
    return EDDY_OK;
}
