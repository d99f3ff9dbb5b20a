/*
 * sol_pattern.c - the unknowns of a grid and the fixed sparsity pattern of
 * its system matrix; the geometric nested-dissection ordering; system and
 * workspace alloc/free.
 *
 * Unknowns are the nodes off the zero boundaries (A = 0 on the y sides and,
 * unless periodic, on the x sides), numbered row by row, x fastest; on a
 * periodic grid node nx-1 is node 0.  The pattern is the five-point stencil
 * (structurally symmetric), plus the two diagonal couplings of every
 * saturable cell (Newton's Jacobian couples a cell's four corners).  It is
 * built once per grid in CSC form; pos and posd give, for every unknown and
 * direction, the place of its entry in the value array, so that every
 * assembly writes values straight into the CSC arrays.
 */
#include "solver/sol_int.h"

#include <stdlib.h>

long sol_unknowns(const sol_system *s) { return s != NULL ? s->n : 0; }

void sol_work_free(sol_work *w)
{
    if (w == NULL)
        return;
    free(w->Ax);
    free(w->rhs);
    free(w->sol);
    free(w->Wi);
    free(w->W);
    free(w->x);
    free(w->dx);
    free(w->res);
    free(w->xt);
    free(w->nu);
    free(w->dnu);
    free(w);
}

eddy_status sol_work_alloc(const sol_system *s, sol_work **out, eddy_error *err)
{
    *out = NULL;
    sol_work *w = calloc(1, sizeof *w);
    if (w == NULL)
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
    long n = s->n;
    w->Ax = calloc((size_t)s->Ap[n], sizeof *w->Ax);
    w->rhs = malloc((size_t)n * sizeof *w->rhs);
    w->sol = malloc((size_t)n * sizeof *w->sol);
    w->Wi = malloc((size_t)n * sizeof *w->Wi);
    w->W = malloc((size_t)n * 5 * sizeof *w->W);
    if (!w->Ax || !w->rhs || !w->sol || !w->Wi || !w->W) {
        sol_work_free(w);
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory for the workspace of %ld unknowns",
                          n);
    }
    if (s->bh != NULL) {
        size_t nc = (size_t)s->g->ncx * (size_t)s->g->ncy;
        w->x = malloc((size_t)n * sizeof *w->x);
        w->dx = malloc((size_t)n * sizeof *w->dx);
        w->res = malloc((size_t)n * sizeof *w->res);
        w->xt = malloc((size_t)n * sizeof *w->xt);
        w->nu = malloc(nc * sizeof *w->nu);
        w->dnu = malloc(nc * sizeof *w->dnu);
        if (!w->x || !w->dx || !w->res || !w->xt || !w->nu || !w->dnu) {
            sol_work_free(w);
            return EDDY_RAISE(err, EDDY_ERR_NOMEM,
                              "out of memory for the Newton workspace of %ld unknowns", n);
        }
    }
    *out = w;
    return EDDY_OK;
}

void sol_system_free(sol_system *s)
{
    if (s == NULL)
        return;
    if (s->symbolic != NULL)
        umfpack_dl_free_symbolic(&s->symbolic);
    sol_chol_free(s);
    free(s->unk);
    free(s->Ap);
    free(s->Ai);
    free(s->pos);
    free(s->posd);
    free(s->bh);
    sol_work_free(s->work);
    free(s);
}

static int cmp_long(const void *pa, const void *pb)
{
    long a = *(const long *)pa, b = *(const long *)pb;
    return (a > b) - (a < b);
}

/* The arrays of a system of s->n unknowns on s->g, and the interpolants of
 * its B-H curves if sat (the grid has saturable cells). */
static eddy_status alloc_arrays(sol_system *s, int sat, eddy_error *err)
{
    const mesh_grid *g = s->g;
    long n = s->n;
    size_t nn = (size_t)g->nx * (size_t)g->ny;
    s->unk = malloc(nn * sizeof *s->unk);
    s->Ap = malloc((size_t)(n + 1) * sizeof *s->Ap);
    s->Ai = malloc((size_t)n * (sat ? NDIR + NDIAG : NDIR) * sizeof *s->Ai);
    s->pos = malloc((size_t)n * NDIR * sizeof *s->pos);
    if (sat) {
        s->posd = malloc((size_t)n * NDIAG * sizeof *s->posd);
        s->bh = malloc((size_t)g->nbh * sizeof *s->bh);
    }
    if (!s->unk || !s->Ap || !s->Ai || !s->pos || (sat && (!s->posd || !s->bh)))
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory for %ld unknowns", n);
    for (int k = 0; sat && k < g->nbh; k++) {
        eddy_status st = sol_bh_build(&g->bh[k], &s->bh[k], err);
        if (st != EDDY_OK)
            return st;
    }
    return EDDY_OK;
}

/* s->unk: row by row, x fastest; -1 on the zero boundaries; on a periodic
 * grid the last column is the first. */
static void number_unknowns(sol_system *s)
{
    const mesh_grid *g = s->g;
    int nx = g->nx, ny = g->ny;
    for (int j = 0; j < ny; j++)
        for (int i = 0; i < nx; i++) {
            long u = -1;
            if (j > 0 && j < ny - 1) {
                if (g->x_periodic)
                    u = (long)(i == nx - 1 ? 0 : i) + s->nxu * (j - 1);
                else if (i > 0 && i < nx - 1)
                    u = (long)(i - 1) + s->nxu * (j - 1);
            }
            s->unk[(size_t)i + (size_t)nx * j] = u;
        }
}

/* nb[u*NDIR+d]: the neighbour unknown of u in direction d (-1 if fixed). */
static void five_point_neighbours(const sol_system *s, long *nb)
{
    const mesh_grid *g = s->g;
    int nx = g->nx, ny = g->ny;
    for (int j = 1; j < ny - 1; j++)
        for (int i = 0; i < nx - 1; i++) {
            long u = s->unk[(size_t)i + (size_t)nx * j];
            if (u < 0)
                continue;
            int iw = i - 1, ie = i + 1;
            if (g->x_periodic && iw < 0)
                iw = nx - 2;
            long *p = &nb[u * NDIR];
            p[DIR_C] = u;
            p[DIR_W] = iw >= 0 ? s->unk[(size_t)iw + (size_t)nx * j] : -1;
            p[DIR_E] = s->unk[(size_t)ie + (size_t)nx * j];
            p[DIR_S] = s->unk[(size_t)i + (size_t)nx * (j - 1)];
            p[DIR_N] = s->unk[(size_t)i + (size_t)nx * (j + 1)];
        }
}

/* nbd[u*NDIAG+d]: the diagonal neighbour of u through a saturable cell (-1
 * if none or fixed); counts the saturable cells into s->nsat.  Returns
 * EDDY_ERR_INPUT for a saturable cell with a remanence. */
static eddy_status diagonal_neighbours(sol_system *s, long *nbd, eddy_error *err)
{
    const mesh_grid *g = s->g;
    size_t nx = (size_t)g->nx;
    for (long q = 0; q < s->n * NDIAG; q++)
        nbd[q] = -1;
    for (int j = 0; j < g->ncy; j++)
        for (int i = 0; i < g->ncx; i++) {
            size_t k = (size_t)i + (size_t)g->ncx * (size_t)j;
            if (g->bh_cell[k] < 0)
                continue;
            if (g->brx[k] != 0.0 || g->bry[k] != 0.0)
                return EDDY_RAISE(err, EDDY_ERR_INPUT, "a cell with a B-H curve has a "
                                  "remanence (not supported)");
            s->nsat++;
            long u00 = s->unk[(size_t)i + nx * j];
            long u10 = s->unk[(size_t)i + 1 + nx * j];
            long u01 = s->unk[(size_t)i + nx * (j + 1)];
            long u11 = s->unk[(size_t)i + 1 + nx * (j + 1)];
            if (u00 >= 0 && u11 >= 0) {
                nbd[u00 * NDIAG + DG_NE] = u11;
                nbd[u11 * NDIAG + DG_SW] = u00;
            }
            if (u10 >= 0 && u01 >= 0) {
                nbd[u10 * NDIAG + DG_NW] = u01;
                nbd[u01 * NDIAG + DG_SE] = u10;
            }
        }
    return EDDY_OK;
}

/* CSC: the pattern is structurally symmetric, so column u holds the rows of
 * u's neighbours (nb, and nbd unless NULL); sorted in each column. */
static void build_csc(sol_system *s, const long *nb, const long *nbd)
{
    long nz = 0;
    for (long u = 0; u < s->n; u++) {
        s->Ap[u] = nz;
        long tmp[NDIR + NDIAG];
        int m = 0;
        for (int d = 0; d < NDIR; d++)
            if (nb[u * NDIR + d] >= 0)
                tmp[m++] = nb[u * NDIR + d];
        for (int d = 0; nbd != NULL && d < NDIAG; d++)
            if (nbd[u * NDIAG + d] >= 0)
                tmp[m++] = nbd[u * NDIAG + d];
        qsort(tmp, (size_t)m, sizeof *tmp, cmp_long);
        for (int k = 0; k < m; k++)
            s->Ai[nz++] = tmp[k];
    }
    s->Ap[s->n] = nz;
}

/* Turn a neighbour table tab[u*ndir+d] (ndir directions) into positions in
 * place: the entry (row u, column tab(u,d)) lives in that column, at the
 * place of row u (-1 where there is no neighbour). */
static void neighbours_to_positions(const sol_system *s, long *tab, int ndir)
{
    for (long u = 0; u < s->n; u++)
        for (int d = 0; d < ndir; d++) {
            long col = tab[u * ndir + d];
            long where = -1;
            if (col >= 0)
                for (long q = s->Ap[col]; q < s->Ap[col + 1]; q++)
                    if (s->Ai[q] == u)
                        where = q;
            tab[u * ndir + d] = where;
        }
}

/* The numbering, the pattern and its positions of s (arrays allocated). */
static eddy_status build_pattern(sol_system *s, int sat, eddy_error *err)
{
    number_unknowns(s);
    /* the neighbour tables are built in pos and posd, then become positions */
    five_point_neighbours(s, s->pos);
    if (sat) {
        eddy_status st = diagonal_neighbours(s, s->posd, err);
        if (st != EDDY_OK)
            return st;
    }
    build_csc(s, s->pos, sat ? s->posd : NULL);
    neighbours_to_positions(s, s->pos, NDIR);
    if (sat)
        neighbours_to_positions(s, s->posd, NDIAG);
    return EDDY_OK;
}

eddy_status sol_system_alloc(const mesh_grid *g, sol_system **out, eddy_error *err)
{
    *out = NULL;
    int nx = g->nx, ny = g->ny;
    long nxu = g->x_periodic ? nx - 1 : nx - 2, nyu = ny - 2;
    if (nxu < 1 || nyu < 1 || (g->x_periodic && nxu < 3))
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "grid of %d x %d nodes has no unknowns", nx, ny);
    sol_system *s = calloc(1, sizeof *s);
    if (s == NULL)
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
    s->g = g;
    s->nxu = nxu;
    s->n = nxu * nyu;
    int sat = g->nbh > 0 && g->bh_cell != NULL; /* saturable cells: wider pattern */
    eddy_status st = alloc_arrays(s, sat, err);
    if (st == EDDY_OK)
        st = build_pattern(s, sat, err);
    if (st == EDDY_OK) {
        sol_umf_defaults(s);
        s->ordering = SOL_ORDER_DEFAULT;
        s->cholesky = 1;
        st = sol_work_alloc(s, &s->work, err);
    }
    if (st != EDDY_OK) {
        sol_system_free(s);
        return st;
    }
    *out = s;
    return EDDY_OK;
}

/* ------------------------------------------------------------------------ */
/* Geometric nested dissection of the tensor grid                            */
/* ------------------------------------------------------------------------ */

/* Order the unknowns of the index box [i0, i1) x [j0, j1) (unknown columns,
 * unknown rows) by nested dissection: split the longer side at its middle
 * line, order the two halves recursively, the separator line last (George,
 * "Nested dissection of a regular finite element mesh", SIAM J. Numer.
 * Anal. 10, 1973).  Small boxes keep the natural order. */
static void nd_box(const sol_system *s, long i0, long i1, long j0, long j1, long *perm,
                   long *k)
{
    long ni = i1 - i0, nj = j1 - j0;
    if (ni <= 0 || nj <= 0)
        return;
    if (ni * nj <= 16 || (ni < 3 && nj < 3)) {
        for (long j = j0; j < j1; j++)
            for (long i = i0; i < i1; i++)
                perm[(*k)++] = i + s->nxu * j;
        return;
    }
    if (ni >= nj) {
        long m = i0 + ni / 2;
        nd_box(s, i0, m, j0, j1, perm, k);
        nd_box(s, m + 1, i1, j0, j1, perm, k);
        for (long j = j0; j < j1; j++)
            perm[(*k)++] = m + s->nxu * j;
    } else {
        long m = j0 + nj / 2;
        nd_box(s, i0, i1, j0, m, perm, k);
        nd_box(s, i0, i1, m + 1, j1, perm, k);
        for (long i = i0; i < i1; i++)
            perm[(*k)++] = i + s->nxu * m;
    }
}

/* The whole grid; a periodic grid is a cylinder, cut open first by the
 * unknown column 0 (ordered last), which leaves an ordinary box. */
void sol_grid_nd_order(const sol_system *s, long *perm)
{
    long k = 0, nyu = s->n / s->nxu;
    if (s->g->x_periodic) {
        nd_box(s, 1, s->nxu, 0, nyu, perm, &k);
        for (long j = 0; j < nyu; j++)
            perm[k++] = s->nxu * j;
    } else {
        nd_box(s, 0, s->nxu, 0, nyu, perm, &k);
    }
}
