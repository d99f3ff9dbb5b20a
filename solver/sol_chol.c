/*
 * sol_chol.c - the static field (v = 0, linear materials) by sparse
 * Cholesky with CHOLMOD (supernodal, its dense kernels in the BLAS and
 * LAPACK): the symbolic analysis once per system, a numeric factorisation
 * per static solve.
 *
 * Why Cholesky: at v = 0 the box-integration matrix is symmetric (every half
 * face adds the same conductance to the two off-diagonal entries of its
 * corners and to their diagonals; the fitted factors B(0) = 1 make the x
 * faces symmetric too; sources only enter the right-hand side) and positive
 * definite (a diagonally dominant M-matrix with at least one zero boundary
 * node, hence nonsingular; tests/test_solver.c checks the exact symmetry of
 * the assembled values).  LL' needs half the flops and the memory of LU.
 * The lower triangle of the system's full CSC pattern is read in place
 * (stype = -1): no copy of the matrix.
 */
#include "solver/sol_int.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

/* A CHOLMOD workspace with nothing printed (library code never prints),
 * supernodal, with a given ordering: always the grid's nested dissection,
 * whatever the LU's ordering.  Measured (make bench, 2026-12-03, OpenBLAS on
 * 2 cores; analyse + factor s, entries of L): at 1.06M unknowns grid-nd
 * 0.27 + 2.74 s, 6.0e7; METIS 5.28 + 2.56 s, 4.1e7; AMD 0.89 + 3.22 s,
 * 4.8e7.  At 0.23M: grid-nd 0.04 + 0.46 s, METIS 0.85 + 0.54 s, AMD
 * 0.19 + 0.77 s.  The grid's ordering fills more but its large separators
 * make dense supernodes the BLAS runs fast, and its analysis costs nothing. */
static void chol_start(cholmod_common *cc)
{
    cholmod_l_start(cc);
    cc->print = 0;
    cc->error_handler = NULL;
    cc->supernodal = CHOLMOD_SUPERNODAL;
    cc->final_ll = 1;
    cc->nmethods = 1;
    cc->method[0].ordering = CHOLMOD_GIVEN;
    cc->postorder = 1;
}

/* The system's matrix w->Ax as a CHOLMOD matrix of which only the lower
 * triangle is read (no copy; the arrays stay the system's). */
static cholmod_sparse chol_view(const sol_system *s, double *ax)
{
    cholmod_sparse a;
    memset(&a, 0, sizeof a);
    a.nrow = a.ncol = (size_t)s->n;
    a.nzmax = (size_t)s->Ap[s->n];
    a.p = s->Ap;
    a.i = s->Ai;
    a.x = ax;
    a.stype = -1;
    a.itype = CHOLMOD_LONG;
    a.xtype = ax != NULL ? CHOLMOD_REAL : CHOLMOD_PATTERN;
    a.dtype = CHOLMOD_DOUBLE;
    a.sorted = 1;
    a.packed = 1;
    return a;
}

static eddy_status chol_status(const cholmod_common *cc, const char *what, eddy_error *err)
{
    if (cc->status == CHOLMOD_OUT_OF_MEMORY)
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "%s: CHOLMOD ran out of memory", what);
    if (cc->status == CHOLMOD_NOT_POSDEF)
        return EDDY_RAISE(err, EDDY_ERR_SINGULAR,
                          "%s: the static matrix is not positive definite (is every part of "
                          "the domain connected to a zero boundary?)", what);
    if (cc->status < CHOLMOD_OK)
        return EDDY_RAISE(err, EDDY_ERR_SOLVER, "%s: CHOLMOD failed with status %d", what,
                          cc->status);
    return EDDY_OK;
}

void sol_set_cholesky(sol_system *s, int on) { s->cholesky = on != 0; }

int sol_uses_cholesky(const sol_system *s)
{
    return s != NULL && s->cholesky && s->nsat == 0;
}

eddy_status sol_analyse_static(sol_system *s, sol_info *info, eddy_error *err)
{
    if (!sol_uses_cholesky(s))
        return EDDY_RAISE(err, EDDY_ERR_INTERNAL,
                          "sol_analyse_static on a saturable system or with Cholesky off");
    if (s->chol_symbolic == NULL) {
        double t0 = eddy_now();
        cholmod_common cc;
        chol_start(&cc);
        cholmod_sparse a = chol_view(s, NULL);
        long *perm = malloc((size_t)s->n * sizeof *perm);
        if (perm == NULL) {
            cholmod_l_finish(&cc);
            return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory for the ordering");
        }
        eddy_status ost = sol_grid_nd_order(s, perm, err);
        if (ost != EDDY_OK) {
            free(perm);
            cholmod_l_finish(&cc);
            return ost;
        }
        cholmod_factor *l = cholmod_l_analyze_p(&a, perm, NULL, 0, &cc);
        free(perm);
        eddy_status st = l == NULL ? chol_status(&cc, "Cholesky analysis", err) : EDDY_OK;
        if (l == NULL && st == EDDY_OK)
            st = EDDY_RAISE(err, EDDY_ERR_SOLVER, "Cholesky analysis failed");
        if (st == EDDY_OK) {
            s->chol_lnz = cc.lnz;
            s->chol_flops = cc.fl;
            s->chol_bytes = mesh_factor_bytes(cc.lnz, (double)s->n);
            if (s->memory_limit > 0 && s->chol_bytes > s->memory_limit) {
                cholmod_l_free_factor(&l, &cc);
                st = EDDY_RAISE(err, EDDY_ERR_TOO_LARGE,
                                "the Cholesky factorisation of %ld unknowns would need about "
                                "%.2f GiB, more than the %.2f GiB allowed; coarsen the mesh or "
                                "raise the limit (--max-memory)",
                                s->n, s->chol_bytes / 1073741824.0,
                                s->memory_limit / 1073741824.0);
            }
        }
        cholmod_l_finish(&cc);
        if (st != EDDY_OK)
            return st;
        s->chol_symbolic = l;
        s->t_chol_analyse = eddy_now() - t0;
    }
    if (info != NULL) {
        info->n = s->n;
        info->nnz = s->Ap[s->n];
        info->t_analyse = s->t_chol_analyse;
        info->est_peak_bytes = s->chol_bytes;
        info->ordering = sol_ordering_name(SOL_ORDER_GRID_ND);
        info->cholesky = 1;
    }
    return EDDY_OK;
}

eddy_status sol_chol_factor_solve(const sol_system *s, sol_work *w, const double *b, double *x,
                                  sol_info *info, double *t_factor, double *t_solve,
                                  eddy_error *err)
{
    cholmod_common cc;
    chol_start(&cc);
    cholmod_sparse a = chol_view(s, w->Ax);
    double t1 = eddy_now();
    /* a copy of the symbolic analysis, numbered by this call only: the
     * system's stays symbolic and shared */
    cholmod_factor *l = cholmod_l_copy_factor(s->chol_symbolic, &cc);
    eddy_status st = l == NULL ? chol_status(&cc, "Cholesky factorisation", err) : EDDY_OK;
    if (l == NULL && st == EDDY_OK)
        st = EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory for the Cholesky factor");
    if (st == EDDY_OK) {
        int ok = cholmod_l_factorize(&a, l, &cc);
        st = chol_status(&cc, "Cholesky factorisation", err);
        /* a factor that is not complete (a failed allocation inside CHOLMOD
         * can leave it symbolic with an OK status) is never solved with */
        if (st == EDDY_OK && (!ok || l->xtype != CHOLMOD_REAL || l->minor < l->n))
            st = l->minor < l->n && l->xtype == CHOLMOD_REAL
                     ? EDDY_RAISE(err, EDDY_ERR_SINGULAR,
                                  "Cholesky factorisation: the static matrix is not positive "
                                  "definite")
                     : EDDY_RAISE(err, EDDY_ERR_NOMEM, "Cholesky factorisation: out of memory");
    }
    double t2 = eddy_now();
    *t_factor = t2 - t1;
    if (st == EDDY_OK) {
        /* the solution and the two workspaces of the supernodal solve,
         * allocated here at the sizes cholmod_l_solve2 wants, so that it
         * allocates nothing itself: CHOLMOD 3.0.14 (Debian's SuiteSparse
         * 5.12) crashes in cholmod_l_solve when its third or fourth internal
         * allocation fails (measured with a failing allocator, the way
         * tests/test_batch_alloc.c drives every failure path) */
        size_t n = (size_t)s->n;
        cholmod_dense bd, *xd = cholmod_l_allocate_dense(n, 1, n, CHOLMOD_REAL, &cc);
        cholmod_dense *yd = cholmod_l_allocate_dense(n, 1, n, CHOLMOD_REAL, &cc);
        cholmod_dense *ed = cholmod_l_allocate_dense(1, l->maxesize > 0 ? l->maxesize : 1, 1,
                                                     CHOLMOD_REAL, &cc);
        memset(&bd, 0, sizeof bd);
        bd.nrow = n;
        bd.ncol = 1;
        bd.nzmax = n;
        bd.d = n;
        bd.x = (void *)b; /* read only by the solve */
        bd.xtype = CHOLMOD_REAL;
        bd.dtype = CHOLMOD_DOUBLE;
        if (xd == NULL || yd == NULL || ed == NULL)
            st = EDDY_RAISE(err, EDDY_ERR_NOMEM, "Cholesky solve: out of memory");
        else if (!cholmod_l_solve2(CHOLMOD_A, l, &bd, NULL, &xd, NULL, &yd, &ed, &cc) ||
                 xd == NULL) {
            st = chol_status(&cc, "Cholesky solve", err);
            if (st == EDDY_OK)
                st = EDDY_RAISE(err, EDDY_ERR_SOLVER, "Cholesky solve failed");
        } else {
            memcpy(x, xd->x, n * sizeof *x);
        }
        cholmod_l_free_dense(&xd, &cc);
        cholmod_l_free_dense(&yd, &cc);
        cholmod_l_free_dense(&ed, &cc);
    }
    if (info != NULL) {
        info->lnz = s->chol_lnz;
        info->unz = 0.0;
        info->flops = s->chol_flops;
        info->rcond = cc.status == CHOLMOD_OK ? cholmod_l_rcond(l, &cc) : NAN;
        info->peak_bytes = (double)cc.memory_usage;
        info->cholesky = 1;
    }
    cholmod_l_free_factor(&l, &cc);
    cholmod_l_finish(&cc);
    *t_solve = eddy_now() - t2;
    return st;
}

void sol_chol_free(sol_system *s)
{
    if (s->chol_symbolic == NULL)
        return;
    cholmod_common cc;
    cholmod_l_start(&cc);
    cc.print = 0;
    cholmod_factor *l = s->chol_symbolic;
    cholmod_l_free_factor(&l, &cc);
    cholmod_l_finish(&cc);
    s->chol_symbolic = NULL;
}
