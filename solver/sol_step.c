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
 * factorisation; each step factorises numerically, unless its matrix equals
 * the previous step's (then the factors are reused).
 *
 * Moving conductors (sol_stepper_advance_frame): the locked step.  The
 * moving cells travel whole cell columns per step over a band of uniform x
 * spacing, so the grid stays conforming and the pattern, hence the symbolic
 * analysis, never changes; only the cells' sigma (and nu) move.  The time
 * derivative is the material one of each conductor: at node u the moving
 * part of the lumped mass sees the history at the node the same material
 * occupied one (two) steps before, u - s_n (u - s_n - s_n-1) columns, the
 * fixed part the history at u itself.  This is the approach of the moving
 * band with a step locked to the cell size in electrical-machine analysis
 * (e.g. S. J. Salon, "Finite Element Analysis of Electrical Machines",
 * Kluwer 1995, ch. 8, moving meshes; cited from memory), written on the
 * tensor grid: the magnets' frame holds the grid, the conductors' own frame
 * holds the time derivative, so no convection term appears.
 */
#include "solver/sol_int.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

struct sol_stepper {
    const sol_system *s;
    sol_work *w;       /* matrix values, sources, solution, solve workspace */
    double *mf, *mm;   /* n: lumped sigma mass of the fixed and the moving conductors, S */
    double *sf, *sm;   /* ncx*ncy scratch: fixed and moving conductivity, S/m */
    double *a1, *a0;   /* nx*ny: the node values of x_n and x_n-1 */
    double *b;         /* n: right-hand side with the history terms */
    double *hf, *hm;   /* n: the history combinations of the last step (for the rates) */
    double *ax_last;   /* nnz: the matrix of the last factorisation */
    void *numeric;     /* its numeric factors (kept for reuse), or NULL */
    long *node_of;     /* n: the first node of each unknown */
    double c0_last;    /* c0 / dt of the last step, 1/s */
    double t;          /* s, time of x_n */
    double dt_last;    /* s, length of the last step (0 before the first) */
    int shift_last;    /* columns of the last step */
    long steps;        /* steps since the last start */
    long reused;       /* steps that reused the previous factors */
};

void sol_stepper_free(sol_stepper *t)
{
    if (t == NULL)
        return;
    sol_work_free(t->w);
    if (t->numeric != NULL)
        umfpack_dl_free_numeric(&t->numeric);
    free(t->mf);
    free(t->mm);
    free(t->sf);
    free(t->sm);
    free(t->a1);
    free(t->a0);
    free(t->b);
    free(t->hf);
    free(t->hm);
    free(t->ax_last);
    free(t->node_of);
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
    const mesh_grid *g = s->g;
    size_t n = (size_t)s->n, nn = (size_t)g->nx * (size_t)g->ny;
    size_t nc = (size_t)g->ncx * (size_t)g->ncy, nnz = (size_t)s->Ap[s->n];
    t->mf = malloc(n * sizeof *t->mf);
    t->mm = malloc(n * sizeof *t->mm);
    t->sf = malloc(nc * sizeof *t->sf);
    t->sm = malloc(nc * sizeof *t->sm);
    t->a1 = malloc(nn * sizeof *t->a1);
    t->a0 = malloc(nn * sizeof *t->a0);
    t->b = malloc(n * sizeof *t->b);
    t->hf = calloc(n, sizeof *t->hf);
    t->hm = calloc(n, sizeof *t->hm);
    t->ax_last = malloc(nnz * sizeof *t->ax_last);
    t->node_of = malloc(n * sizeof *t->node_of);
    if (!t->mf || !t->mm || !t->sf || !t->sm || !t->a1 || !t->a0 || !t->b || !t->hf ||
        !t->hm || !t->ax_last || !t->node_of) {
        sol_stepper_free(t);
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory for the time steps of %ld unknowns",
                          s->n);
    }
    for (long u = 0; u < s->n; u++)
        t->node_of[u] = -1;
    for (size_t k = 0; k < nn; k++) {
        long u = s->unk[k];
        if (u >= 0 && t->node_of[u] < 0)
            t->node_of[u] = (long)k;
    }
    memset(t->mf, 0, n * sizeof *t->mf);
    memset(t->mm, 0, n * sizeof *t->mm);
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
    for (size_t k = 0; k < nn; k++)
        t->a1[k] = a0 != NULL && s->unk[k] >= 0 ? a0[k] : 0.0;
    memcpy(t->a0, t->a1, nn * sizeof *t->a0);
    memset(t->hf, 0, (size_t)s->n * sizeof *t->hf);
    memset(t->hm, 0, (size_t)s->n * sizeof *t->hm);
    memset(t->mf, 0, (size_t)s->n * sizeof *t->mf);
    memset(t->mm, 0, (size_t)s->n * sizeof *t->mm);
    t->c0_last = 0.0;
    t->t = t0;
    t->dt_last = 0.0;
    t->shift_last = 0;
    t->steps = 0;
}

double sol_stepper_time(const sol_stepper *t) { return t != NULL ? t->t : 0.0; }

long sol_stepper_steps(const sol_stepper *t) { return t != NULL ? t->steps : 0; }

/* The node `shift` columns upstream (towards -x) of node k: wrapped on
 * periodic sides, the side's own column beyond a left side. */
static size_t upstream(const mesh_grid *g, size_t k, long shift)
{
    if (shift == 0)
        return k;
    long nx = g->nx, i = (long)(k % (size_t)nx), j = (long)(k / (size_t)nx);
    long src = i - shift;
    if (g->x_periodic) {
        long ncx = g->ncx;
        src = ((src % ncx) + ncx) % ncx;
    } else if (src < 0) {
        src = 0;
    }
    return (size_t)src + (size_t)nx * (size_t)j;
}

eddy_status sol_stepper_advance(sol_stepper *t, double dt, int order, const double *sigma_cells,
                                double *a, sol_info *info, eddy_error *err)
{
    sol_step_frame fr = {sigma_cells != NULL ? sigma_cells : t->s->g->sigma, NULL, NULL, 0};
    return sol_stepper_advance_frame(t, dt, order, &fr, a, info, err);
}

eddy_status sol_stepper_advance_frame(sol_stepper *t, double dt, int order,
                                      const sol_step_frame *fr, double *a, sol_info *info,
                                      eddy_error *err)
{
    const sol_system *s = t->s;
    const mesh_grid *g = s->g;
    if (!(isfinite(dt) && dt > 0.0))
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "time step must be finite and positive (got %g s)",
                          dt);
    if (order != 1 && order != 2)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "time-step order must be 1 or 2 (got %d)", order);
    if (fr->shift < 0)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "a pass moves along +x only (shift %d)",
                          fr->shift);
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
    size_t nc = (size_t)g->ncx * (size_t)g->ncy;
    for (size_t k = 0; k < nc; k++) {
        int mv = fr->moving != NULL && fr->moving[k];
        t->sf[k] = mv ? 0.0 : fr->sigma[k];
        t->sm[k] = mv ? fr->sigma[k] : 0.0;
    }
    sol_assemble(s, w, 0.0, fr->nu != NULL ? fr->nu : g->nu);
    sol_mass(s, t->sf, t->mf);
    if (fr->moving != NULL)
        sol_mass(s, t->sm, t->mm);
    else
        memset(t->mm, 0, (size_t)n * sizeof *t->mm);
    long s1 = fr->shift, s2 = fr->shift + t->shift_last;
    for (long u = 0; u < n; u++) {
        size_t k = (size_t)t->node_of[u];
        double hf = c1 * t->a1[k] - c2 * t->a0[k];
        double hm = t->mm[u] > 0.0 ? c1 * t->a1[upstream(g, k, s1)] - c2 * t->a0[upstream(g, k, s2)]
                                   : 0.0;
        w->Ax[s->pos[u * NDIR + DIR_C]] += c0 * (t->mf[u] + t->mm[u]) / dt;
        t->b[u] = w->rhs[u] + (t->mf[u] * hf + t->mm[u] * hm) / dt;
        t->hf[u] = hf;
        t->hm[u] = hm;
    }
    double t_asm = eddy_now() - t0, t_fac = 0.0, t_sol = 0.0;
    long nnz = s->Ap[n];
    eddy_status st = EDDY_OK;
    if (t->numeric != NULL && memcmp(t->ax_last, w->Ax, (size_t)nnz * sizeof *w->Ax) == 0) {
        t->reused++; /* the same matrix as the last step: its factors */
    } else {
        if (t->numeric != NULL)
            umfpack_dl_free_numeric(&t->numeric);
        st = sol_umf_numeric(s, w, &t->numeric, "numeric factorisation of a time step", info,
                             &t_fac, err);
        if (st == EDDY_OK)
            memcpy(t->ax_last, w->Ax, (size_t)nnz * sizeof *w->Ax);
    }
    if (st == EDDY_OK) {
        double t2 = eddy_now();
        st = sol_umf_solve(s, w, t->numeric, t->b, w->sol, "solve of a time step", err);
        t_sol = eddy_now() - t2;
    }
    sol_fill_info(s, info, 0, t_asm, t_fac, t_sol);
    if (st == EDDY_OK)
        st = sol_scatter_solution(s, w->sol, a, err);
    if (st != EDDY_OK)
        return st;
    /* rotate the history: x_n-1 <- x_n, x_n <- x_n+1 */
    double *old = t->a0;
    t->a0 = t->a1;
    t->a1 = old;
    memcpy(t->a1, a, (size_t)g->nx * (size_t)g->ny * sizeof *t->a1);
    t->c0_last = c0 / dt;
    t->t += dt;
    t->dt_last = dt;
    t->shift_last = fr->shift;
    t->steps++;
    return EDDY_OK;
}

void sol_stepper_currents(const sol_stepper *t, double *i_moving, double *i_fixed,
                          double *p_moving, double *p_fixed)
{
    const sol_system *s = t->s;
    const mesh_grid *g = s->g;
    size_t nn = (size_t)g->nx * (size_t)g->ny;
    double pm = 0.0, pf = 0.0;
    if (i_moving != NULL)
        memset(i_moving, 0, nn * sizeof *i_moving);
    if (i_fixed != NULL)
        memset(i_fixed, 0, nn * sizeof *i_fixed);
    if (t->steps > 0) {
        double inv_dt = 1.0 / t->dt_last;
        for (long u = 0; u < s->n; u++) {
            size_t k = (size_t)t->node_of[u];
            double x = t->a1[k];
            /* the step's derivative: (c0 x_n+1 - h) / dt, c0/dt kept as c0_last */
            double df = t->c0_last * x - t->hf[u] * inv_dt;
            double dm = t->c0_last * x - t->hm[u] * inv_dt;
            double cf = t->mf[u] > 0.0 ? -t->mf[u] * df : 0.0;
            double cm = t->mm[u] > 0.0 ? -t->mm[u] * dm : 0.0;
            pf += t->mf[u] * df * df;
            pm += t->mm[u] * dm * dm;
            for (size_t q = k; q < nn; q += (size_t)g->nx - 1) {
                /* node k and, on periodic sides, its copy at i = nx - 1 */
                if (i_moving != NULL)
                    i_moving[q] = cm;
                if (i_fixed != NULL)
                    i_fixed[q] = cf;
                if (!(g->x_periodic && q % (size_t)g->nx == 0))
                    break;
            }
        }
    }
    if (p_moving != NULL)
        *p_moving = pm;
    if (p_fixed != NULL)
        *p_fixed = pf;
}

eddy_status sol_stepper_energy(sol_stepper *t, const double *a, const double *nu_cells,
                               double *energy, eddy_error *err)
{
    (void)err;
    const sol_system *s = t->s;
    sol_work *w = t->w;
    sol_assemble(s, w, 0.0, nu_cells != NULL ? nu_cells : s->g->nu);
    double e = 0.0;
    /* (1/2) x^T K x - f^T x, K in CSC: column c holds K[Ai[p]][c] */
    for (long c = 0; c < s->n; c++) {
        double xc = a[t->node_of[c]];
        double kx = 0.0;
        for (long p = s->Ap[c]; p < s->Ap[c + 1]; p++)
            kx += w->Ax[p] * a[t->node_of[s->Ai[p]]];
        e += 0.5 * xc * kx - w->rhs[c] * xc;
    }
    *energy = e;
    return EDDY_OK;
}
