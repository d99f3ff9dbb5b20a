/*
 * sol.c - box-integration assembly on the tensor grid and the UMFPACK solve.
 *
 * Discretisation (vertex-centred finite volumes).  Integrate
 *
 *     div(-nu grad A + c A e_x) = J_s + d/dx(nu Br_y) - d/dy(nu Br_x),
 *     c = sigma v  (constant along x in a moving region, zero elsewhere)
 *
 * over the dual cell of each node (the four quarter cells around it).  Since
 * c is constant along x in each row of cells, c dA/dx = d(cA)/dx, so the
 * convective term is a flux too.  Each dual face is split into the two half
 * faces that lie in different primal cells; each half face uses its own
 * cell's nu and c, so material interfaces need no special treatment.
 *
 * Flux from node L to its right neighbour R through an x half face of width
 * w (cell size h = x_R - x_L), exponentially fitted (Scharfetter and Gummel,
 * IEEE Trans. Electron Devices 16, 1969; Il'in 1969; Allen and Southwell,
 * Q. J. Mech. Appl. Math. 8, 1955):
 *
 *     F = w (nu / h) [ B(-Pe) A_L - B(Pe) A_R ],  Pe = c h / nu,
 *     B(z) = z / (e^z - 1).
 *
 * F is the exact flux of the 1D problem -nu A'' + c A' = 0 on the edge, so the
 * scheme is free of wiggles at any Pe (the matrix is an M-matrix) and equals
 * central differencing, second order, as Pe -> 0.  y half faces carry only
 * diffusion: F = w nu (A_a - A_b) / h.
 *
 * Sources: the coil current J_s times each quarter-cell area; the
 * magnetisation as the boundary flux of nu Br over the dual cell: the
 * integral of d/dx(nu Br_y) - d/dy(nu Br_x) over the dual cell equals the sum
 * over its half faces of w (nu Br_y n_x - nu Br_x n_y), n the outward normal.
 *
 * Boundaries: A = 0 on the y sides and, unless periodic, on the x sides
 * (those nodes are not unknowns); periodic x sides identify node nx-1 with
 * node 0.
 *
 * The pattern (five-point, structurally symmetric) is built once; every
 * assembly writes values straight into the CSC arrays through precomputed
 * positions.  The symbolic factorisation is computed once per system and
 * reused for every speed.
 */
#define _GNU_SOURCE /* RTLD_DEFAULT */
#include "solver/sol.h"

#include <dlfcn.h>

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <amd.h>
#include <umfpack.h>

enum { DIR_C = 0, DIR_W, DIR_E, DIR_S, DIR_N, NDIR };
/* Diagonal neighbours, coupled only through saturable cells (Newton). */
enum { DG_SW = 0, DG_SE, DG_NW, DG_NE, NDIAG };

/* Values and workspaces of one solve: one per thread, allocated once. */
struct sol_work {
    double *Ax;      /* matrix values in the system's fixed CSC pattern */
    double *rhs, *sol;
    long *Wi;        /* UMFPACK solve workspaces */
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
};

double sol_bernoulli(double z)
{
    if (fabs(z) < 1e-8)
        return 1.0 - 0.5 * z;
    if (z > 700.0)
        return z * exp(-z);
    return z / expm1(z);
}

/* The one place where UMFPACK status codes become eddy_status. */
static eddy_status umf_status(long st, const char *what, eddy_error *err)
{
    switch (st) {
    case UMFPACK_OK:
        return EDDY_OK;
    case UMFPACK_WARNING_singular_matrix:
        return EDDY_RAISE(err, EDDY_ERR_SINGULAR,
                          "%s: the system matrix is singular (is every part of the domain "
                          "connected to a zero boundary?)", what);
    case UMFPACK_WARNING_determinant_underflow:
    case UMFPACK_WARNING_determinant_overflow:
        return EDDY_OK; /* only the determinant, which is not used */
    case UMFPACK_ERROR_out_of_memory:
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "%s: UMFPACK ran out of memory", what);
    default:
        return EDDY_RAISE(err, EDDY_ERR_SOLVER, "%s: UMFPACK failed with status %ld", what, st);
    }
}

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
    long n = s->n;
    size_t nn = (size_t)nx * (size_t)ny;
    int sat = g->nbh > 0 && g->bh_cell != NULL; /* saturable cells: wider pattern */
    s->unk = malloc(nn * sizeof *s->unk);
    s->Ap = malloc((size_t)(n + 1) * sizeof *s->Ap);
    s->Ai = malloc((size_t)n * (sat ? NDIR + NDIAG : NDIR) * sizeof *s->Ai);
    s->pos = malloc((size_t)n * NDIR * sizeof *s->pos);
    if (sat) {
        s->posd = malloc((size_t)n * NDIAG * sizeof *s->posd);
        s->bh = malloc((size_t)g->nbh * sizeof *s->bh);
    }
    if (!s->unk || !s->Ap || !s->Ai || !s->pos || (sat && (!s->posd || !s->bh))) {
        sol_system_free(s);
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory for %ld unknowns", n);
    }
    for (int k = 0; sat && k < g->nbh; k++) {
        eddy_status st = sol_bh_build(&g->bh[k], &s->bh[k], err);
        if (st != EDDY_OK) {
            sol_system_free(s);
            return st;
        }
    }
    /* numbering: row by row, x fastest */
    for (int j = 0; j < ny; j++)
        for (int i = 0; i < nx; i++) {
            long u = -1;
            if (j > 0 && j < ny - 1) {
                if (g->x_periodic)
                    u = (long)(i == nx - 1 ? 0 : i) + nxu * (j - 1);
                else if (i > 0 && i < nx - 1)
                    u = (long)(i - 1) + nxu * (j - 1);
            }
            s->unk[(size_t)i + (size_t)nx * j] = u;
        }
    /* neighbours of each unknown, by direction (-1 if fixed) */
    long *nb = s->pos; /* reuse as scratch: nb[u*NDIR+d] = neighbour unknown */
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
    /* diagonal neighbours through saturable cells (scratch in posd, as nb) */
    long *nbd = s->posd;
    if (sat) {
        for (long q = 0; q < n * NDIAG; q++)
            nbd[q] = -1;
        for (int j = 0; j < g->ncy; j++)
            for (int i = 0; i < g->ncx; i++) {
                size_t k = (size_t)i + (size_t)g->ncx * (size_t)j;
                if (g->bh_cell[k] < 0)
                    continue;
                if (g->brx[k] != 0.0 || g->bry[k] != 0.0) {
                    sol_system_free(s);
                    return EDDY_RAISE(err, EDDY_ERR_INPUT, "a cell with a B-H curve has a "
                                      "remanence (not supported)");
                }
                s->nsat++;
                long u00 = s->unk[(size_t)i + (size_t)nx * j];
                long u10 = s->unk[(size_t)i + 1 + (size_t)nx * j];
                long u01 = s->unk[(size_t)i + (size_t)nx * (j + 1)];
                long u11 = s->unk[(size_t)i + 1 + (size_t)nx * (j + 1)];
                if (u00 >= 0 && u11 >= 0) {
                    nbd[u00 * NDIAG + DG_NE] = u11;
                    nbd[u11 * NDIAG + DG_SW] = u00;
                }
                if (u10 >= 0 && u01 >= 0) {
                    nbd[u10 * NDIAG + DG_NW] = u01;
                    nbd[u01 * NDIAG + DG_SE] = u10;
                }
            }
    }
    /* CSC: the pattern is structurally symmetric, so column u holds the rows
     * of u's neighbours; sort each column. */
    long nz = 0;
    for (long u = 0; u < n; u++) {
        s->Ap[u] = nz;
        long tmp[NDIR + NDIAG];
        int m = 0;
        for (int d = 0; d < NDIR; d++)
            if (nb[u * NDIR + d] >= 0)
                tmp[m++] = nb[u * NDIR + d];
        for (int d = 0; sat && d < NDIAG; d++)
            if (nbd[u * NDIAG + d] >= 0)
                tmp[m++] = nbd[u * NDIAG + d];
        qsort(tmp, (size_t)m, sizeof *tmp, cmp_long);
        for (int k = 0; k < m; k++)
            s->Ai[nz++] = tmp[k];
    }
    s->Ap[n] = nz;
    /* pos[u*NDIR+d]: entry (row u, column nb(u,d)) lives in column nb, at the
     * place of row u.  Computed in place over the neighbour table. */
    for (long u = 0; u < n; u++)
        for (int d = 0; d < NDIR; d++) {
            long col = nb[u * NDIR + d];
            long where = -1;
            if (col >= 0)
                for (long q = s->Ap[col]; q < s->Ap[col + 1]; q++)
                    if (s->Ai[q] == u)
                        where = q;
            nb[u * NDIR + d] = where;
        }
    for (long u = 0; sat && u < n; u++)
        for (int d = 0; d < NDIAG; d++) {
            long col = nbd[u * NDIAG + d];
            long where = -1;
            if (col >= 0)
                for (long q = s->Ap[col]; q < s->Ap[col + 1]; q++)
                    if (s->Ai[q] == u)
                        where = q;
            nbd[u * NDIAG + d] = where;
        }
    umfpack_dl_defaults(s->control);
    s->control[UMFPACK_STRATEGY] = UMFPACK_STRATEGY_SYMMETRIC;
    /* Initial size of the numeric factorisation's variable part, in Units
     * (8 bytes): with a given or METIS ordering UMFPACK would start from 0.7
     * of its worst-case estimate (27 GiB for 0.78M unknowns, which a
     * sanitizer or a machine without overcommit refuses); start instead near
     * the measured fill of these matrices (make bench: 60-110 LU entries per
     * unknown from 53k to 1M unknowns) and let UMFPACK grow the space. */
    s->control[UMFPACK_ALLOC_INIT] = -(double)n * (8.0 * log2((double)n + 2.0) + 20.0);
    s->ordering = SOL_ORDER_DEFAULT;
    eddy_status st = sol_work_alloc(s, &s->work, err);
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
static void nd_order(const sol_system *s, long *perm)
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

/* ------------------------------------------------------------------------ */
/* Concurrent factorisations and the BLAS underneath UMFPACK                 */
/* ------------------------------------------------------------------------ */

/* UMFPACK calls the system's BLAS.  The reference BLAS is reentrant; a
 * sequential ("serial") OpenBLAS build is not safe for concurrent callers
 * (measured here: two speeds factorised at once on Debian's
 * libopenblas0-serial gave drag values off by up to 1.6 %), and a threaded
 * OpenBLAS would oversubscribe the cores.  OpenBLAS is recognised at run
 * time by its exported symbols, without linking to it. */
typedef int (*blas_get_fn)(void);
typedef void (*blas_set_fn)(int);

int sol_concurrency_safe(void)
{
    blas_get_fn get_parallel = NULL;
    void *sym = dlsym(RTLD_DEFAULT, "openblas_get_parallel");
    memcpy(&get_parallel, &sym, sizeof get_parallel);
    if (get_parallel == NULL)
        return 1;                /* not OpenBLAS */
    return get_parallel() != 0; /* 0: sequential build */
}

void sol_blas_threads(int n)
{
    blas_set_fn set_threads = NULL;
    void *sym = dlsym(RTLD_DEFAULT, "openblas_set_num_threads");
    memcpy(&set_threads, &sym, sizeof set_threads);
    if (set_threads != NULL && n >= 1)
        set_threads(n);
}

const char *sol_ordering_name(sol_ordering o)
{
    switch (o) {
    case SOL_ORDER_AMD: return "amd";
    case SOL_ORDER_METIS: return "metis";
    case SOL_ORDER_GRID_ND: return "grid-nd";
    }
    return "unknown";
}

void sol_set_ordering(sol_system *s, sol_ordering o)
{
    if (s->symbolic != NULL)
        umfpack_dl_free_symbolic(&s->symbolic);
    s->ordering = o;
}

void sol_set_memory_limit(sol_system *s, double bytes) { s->memory_limit = bytes; }

eddy_status sol_analyse(sol_system *s, sol_info *info, eddy_error *err)
{
    if (s->symbolic != NULL)
        return EDDY_OK;
    double t0 = eddy_now(), uinfo[UMFPACK_INFO];
    long st;
    if (s->ordering == SOL_ORDER_GRID_ND) {
        long *perm = malloc((size_t)s->n * sizeof *perm);
        if (perm == NULL)
            return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory for the ordering");
        nd_order(s, perm);
        s->control[UMFPACK_ORDERING] = UMFPACK_ORDERING_GIVEN;
        st = umfpack_dl_qsymbolic(s->n, s->n, s->Ap, s->Ai, NULL, perm, &s->symbolic, s->control,
                                  uinfo);
        free(perm);
    } else {
        s->control[UMFPACK_ORDERING] =
            s->ordering == SOL_ORDER_METIS ? UMFPACK_ORDERING_METIS : UMFPACK_ORDERING_AMD;
        st = umfpack_dl_symbolic(s->n, s->n, s->Ap, s->Ai, NULL, &s->symbolic, s->control, uinfo);
    }
    s->t_analyse = eddy_now() - t0;
    /* Memory of one numeric factorisation: the L and U entries the symbolic
     * analysis predicts for diagonal pivoting (which the fitted scheme's
     * M-matrix allows), at a value and an index each, plus workspace.
     * UMFPACK's own peak estimate (UMFPACK_PEAK_MEMORY_ESTIMATE) assumes
     * worst-case pivoting: 64 GiB for 0.83M unknowns whose measured peak was
     * under 2 GiB, so it would refuse every large mesh. */
    s->est_flops = uinfo[UMFPACK_FLOPS_ESTIMATE];
    s->est_lu = uinfo[UMFPACK_LNZ_ESTIMATE] + uinfo[UMFPACK_UNZ_ESTIMATE];
    s->est_peak_bytes = mesh_factor_bytes(s->est_lu, (double)s->n);
    /* UMFPACK's fill estimate is an upper bound that can be far off (5 GiB
     * for 0.15M unknowns): take the typical fill of these matrices where it
     * is smaller (mesh_factor_bytes) */
    double typical = mesh_factor_bytes(0.0, (double)s->n);
    if (typical < s->est_peak_bytes) {
        s->est_lu = (double)s->n * 5.0 * log2((double)s->n + 2.0);
        s->est_peak_bytes = typical;
    }
    if (s->memory_limit > 0 && s->est_peak_bytes > s->memory_limit) {
        /* a second opinion: the Cholesky fill of A + A' under AMD, which
         * the measured LU fill of these matrices tracks within 15 % (make
         * bench: 2.5e7 and 2.9e7 LU entries for AMD and grid-nd at 0.29M
         * unknowns) */
        long *perm = malloc((size_t)s->n * sizeof *perm);
        double ainfo[AMD_INFO];
        if (perm != NULL &&
            amd_l_order(s->n, s->Ap, s->Ai, perm, NULL, ainfo) >= AMD_OK) {
            s->est_lu = 2.0 * ainfo[AMD_LNZ] + (double)s->n;
            s->est_peak_bytes = mesh_factor_bytes(s->est_lu, (double)s->n);
        }
        free(perm);
    }
    if (info != NULL) {
        info->n = s->n;
        info->nnz = s->Ap[s->n];
        info->t_analyse = s->t_analyse;
        info->est_peak_bytes = s->est_peak_bytes;
        info->ordering = sol_ordering_name(s->ordering);
    }
    if (st != UMFPACK_OK) {
        s->symbolic = NULL;
        return umf_status(st, "symbolic factorisation", err);
    }
    if (s->memory_limit > 0 && s->est_peak_bytes > s->memory_limit) {
        umfpack_dl_free_symbolic(&s->symbolic);
        return EDDY_RAISE(err, EDDY_ERR_TOO_LARGE,
                          "the factorisation of %ld unknowns would need about %.2f GiB (from "
                          "UMFPACK's fill estimate), more than the %.2f GiB allowed; coarsen the "
                          "mesh or raise the limit (--max-memory)",
                          s->n, s->est_peak_bytes / 1073741824.0, s->memory_limit / 1073741824.0);
    }
    return EDDY_OK;
}

double sol_factor_bytes(const sol_system *s) { return s != NULL ? s->est_peak_bytes : 0.0; }

/* Add val to the entry (row ua, column: ua's neighbour in direction dir). */
static inline void add_entry(const sol_system *s, double *Ax, long ua, int dir, double val)
{
    long p = s->pos[ua * NDIR + dir];
    if (p >= 0)
        Ax[p] += val;
}

/* Write the matrix values and right-hand side for speed v into the fixed
 * pattern (see the comment at the top of this file), with the reluctivity
 * nuc[k] in cell k (the grid's g->nu for a linear system). */
static void assemble_nu(const sol_system *s, sol_work *w, double v, const double *nuc)
{
    const mesh_grid *g = s->g;
    int nx = g->nx, ncx = g->ncx, ncy = g->ncy;
    double *Ax = w->Ax, *rhs = w->rhs;
    memset(Ax, 0, (size_t)s->Ap[s->n] * sizeof *Ax);
    memset(rhs, 0, (size_t)s->n * sizeof *rhs);
    for (int j = 0; j < ncy; j++) {
        double hy = g->y[j + 1] - g->y[j];
        for (int i = 0; i < ncx; i++) {
            size_t k = (size_t)i + (size_t)ncx * j;
            double hx = g->x[i + 1] - g->x[i];
            double nu = nuc[k];
            long u00 = s->unk[(size_t)i + (size_t)nx * j];
            long u10 = s->unk[(size_t)i + 1 + (size_t)nx * j];
            long u01 = s->unk[(size_t)i + (size_t)nx * (j + 1)];
            long u11 = s->unk[(size_t)i + 1 + (size_t)nx * (j + 1)];
            /* x half faces (bottom and top edges), width hy/2 each */
            double gx = 0.5 * hy * nu / hx, bm = 1.0, bp = 1.0;
            if (g->moving[k] && g->sigma[k] > 0.0 && v != 0.0) {
                double pe = g->sigma[k] * v * hx / nu;
                bp = sol_bernoulli(pe);
                bm = bp + pe; /* B(-z) = B(z) + z */
            }
            /* edge (L, R) = (u00, u10) and (u01, u11): row L gets
             * +gx bm A_L - gx bp A_R, row R the opposite */
            if (u00 >= 0) {
                add_entry(s, Ax, u00, DIR_C, gx * bm);
                add_entry(s, Ax, u00, DIR_E, -gx * bp);
            }
            if (u10 >= 0) {
                add_entry(s, Ax, u10, DIR_W, -gx * bm);
                add_entry(s, Ax, u10, DIR_C, gx * bp);
            }
            if (u01 >= 0) {
                add_entry(s, Ax, u01, DIR_C, gx * bm);
                add_entry(s, Ax, u01, DIR_E, -gx * bp);
            }
            if (u11 >= 0) {
                add_entry(s, Ax, u11, DIR_W, -gx * bm);
                add_entry(s, Ax, u11, DIR_C, gx * bp);
            }
            /* y half faces (left and right edges), width hx/2 each */
            double gy = 0.5 * hx * nu / hy;
            if (u00 >= 0) {
                add_entry(s, Ax, u00, DIR_C, gy);
                add_entry(s, Ax, u00, DIR_N, -gy);
            }
            if (u01 >= 0) {
                add_entry(s, Ax, u01, DIR_C, gy);
                add_entry(s, Ax, u01, DIR_S, -gy);
            }
            if (u10 >= 0) {
                add_entry(s, Ax, u10, DIR_C, gy);
                add_entry(s, Ax, u10, DIR_N, -gy);
            }
            if (u11 >= 0) {
                add_entry(s, Ax, u11, DIR_C, gy);
                add_entry(s, Ax, u11, DIR_S, -gy);
            }
            /* sources: coil current on the quarter cells, magnetisation as
             * the flux of nu Br through the half faces inside this cell */
            double q = 0.25 * hx * hy * g->jz[k];
            double my = 0.5 * hy * nu * g->bry[k], mx = 0.5 * hx * nu * g->brx[k];
            if (u00 >= 0)
                rhs[u00] += q + my - mx;
            if (u10 >= 0)
                rhs[u10] += q - my - mx;
            if (u01 >= 0)
                rhs[u01] += q + my + mx;
            if (u11 >= 0)
                rhs[u11] += q - my + mx;
        }
    }
}

static void assemble(const sol_system *s, sol_work *w, double v)
{
    assemble_nu(s, w, v, s->g->nu);
}

eddy_status sol_solve_work(const sol_system *s, sol_work *w, double v, double *a,
                           sol_info *info, eddy_error *err)
{
    if (!isfinite(v))
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "speed must be finite");
    if (s->symbolic == NULL)
        return EDDY_RAISE(err, EDDY_ERR_INTERNAL, "sol_solve_work before sol_analyse");
    double t0 = eddy_now();
    assemble(s, w, v);
    double t1 = eddy_now();
    void *numeric = NULL;
    double uinfo[UMFPACK_INFO];
    long ust = umfpack_dl_numeric(s->Ap, s->Ai, w->Ax, s->symbolic, &numeric, s->control, uinfo);
    double t2 = eddy_now();
    if (info != NULL) {
        info->n = s->n;
        info->nnz = s->Ap[s->n];
        info->t_analyse = s->t_analyse;
        info->t_assemble = t1 - t0;
        info->t_factor = t2 - t1;
        info->lnz = uinfo[UMFPACK_LNZ];
        info->unz = uinfo[UMFPACK_UNZ];
        info->flops = uinfo[UMFPACK_FLOPS];
        info->rcond = uinfo[UMFPACK_RCOND];
        info->peak_bytes = uinfo[UMFPACK_PEAK_MEMORY] * uinfo[UMFPACK_SIZE_OF_UNIT];
        info->est_peak_bytes = s->est_peak_bytes;
        info->ordering = sol_ordering_name(s->ordering);
    }
    eddy_status st = umf_status(ust, "numeric factorisation", err);
    if (st != EDDY_OK) {
        umfpack_dl_free_numeric(&numeric);
        return st;
    }
    ust = umfpack_dl_wsolve(UMFPACK_A, s->Ap, s->Ai, w->Ax, w->sol, w->rhs, numeric, s->control,
                            uinfo, w->Wi, w->W);
    umfpack_dl_free_numeric(&numeric);
    if (info != NULL)
        info->t_solve = eddy_now() - t2;
    st = umf_status(ust, "solve", err);
    if (st != EDDY_OK)
        return st;
    const mesh_grid *g = s->g;
    size_t nn = (size_t)g->nx * (size_t)g->ny;
    for (size_t k = 0; k < nn; k++) {
        long u = s->unk[k];
        a[k] = u >= 0 ? w->sol[u] : 0.0;
        if (!isfinite(a[k]))
            return EDDY_RAISE(err, EDDY_ERR_NUMERIC, "the solution holds non-finite values");
    }
    return EDDY_OK;
}

eddy_status sol_solve(sol_system *s, double v, double *a, sol_info *info, eddy_error *err)
{
    eddy_status st = sol_analyse(s, info, err);
    if (st != EDDY_OK)
        return st;
    return sol_solve_work(s, s->work, v, a, info, err);
}

/* Write a CSC matrix or a vector in Matrix Market coordinate / array form. */
static eddy_status write_mm(const char *path, const sol_system *s, const sol_work *w, int matrix,
                            double v, eddy_error *err)
{
    FILE *f = fopen(path, "w");
    if (f == NULL)
        return EDDY_RAISE(err, EDDY_ERR_IO, "%s: cannot create", path);
    if (matrix) {
        fprintf(f, "%%%%MatrixMarket matrix coordinate real general\n"
                   "%% eddy2d %s system matrix at speed %.17g m/s (box integration, fitted "
                   "convection)\n%ld %ld %ld\n",
                EDDY_VERSION, v, s->n, s->n, s->Ap[s->n]);
        for (long c = 0; c < s->n; c++)
            for (long q = s->Ap[c]; q < s->Ap[c + 1]; q++)
                fprintf(f, "%ld %ld %.17g\n", s->Ai[q] + 1, c + 1, w->Ax[q]);
    } else {
        fprintf(f, "%%%%MatrixMarket matrix array real general\n"
                   "%% eddy2d %s right-hand side at speed %.17g m/s\n%ld 1\n",
                EDDY_VERSION, v, s->n);
        for (long r = 0; r < s->n; r++)
            fprintf(f, "%.17g\n", w->rhs[r]);
    }
    if (ferror(f) | (fclose(f) != 0))
        return EDDY_RAISE(err, EDDY_ERR_IO, "%s: write failed", path);
    return EDDY_OK;
}

eddy_status sol_export(const sol_system *s, double v, const char *matrix_path,
                       const char *rhs_path, eddy_error *err)
{
    sol_work *w = NULL;
    eddy_status st = sol_work_alloc(s, &w, err);
    if (st != EDDY_OK)
        return st;
    assemble(s, w, v);
    st = write_mm(matrix_path, s, w, 1, v, err);
    if (st == EDDY_OK)
        st = write_mm(rhs_path, s, w, 0, v, err);
    sol_work_free(w);
    return st;
}

/* ------------------------------------------------------------------------ */
/* Saturable materials: Newton-Raphson                                       */
/* ------------------------------------------------------------------------ */
/*
 * The discrete equations are R(x) = K(nu(x)) x - f = 0, x the unknown node
 * values, K the box-integration matrix above with nu_c in cell c, f the
 * sources (saturable cells carry no remanence, so f does not depend on x).
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

/* nu and d nu / d b of every cell at the iterate x into w->nu, w->dnu;
 * returns the largest b of a saturable cell (T^2). */
static double update_nu(const sol_system *s, sol_work *w, const double *x)
{
    const mesh_grid *g = s->g;
    double bmax = 0.0;
    for (int j = 0; j < g->ncy; j++) {
        double hy = g->y[j + 1] - g->y[j];
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
            double b2 = 0.5 * (px * px + qx * qx) / (hx * hx) + 0.5 * (py * py + qy * qy) / (hy * hy);
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
    assemble_nu(s, w, v, w->nu);
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
            double ax = 0.5 * hy / hx * gfit, ay = 0.5 * hx / hy;
            double gnu[4] = {ax * (c[0] - c[1]) + ay * (c[0] - c[2]),
                             -ax * (c[0] - c[1]) + ay * (c[1] - c[3]),
                             ax * (c[2] - c[3]) + ay * (c[2] - c[0]),
                             -ax * (c[2] - c[3]) + ay * (c[3] - c[1])};
            double px = c[1] - c[0], qx = c[3] - c[2], py = c[2] - c[0], qy = c[3] - c[1];
            double ix2 = 1.0 / (hx * hx), iy2 = 1.0 / (hy * hy);
            double db[4] = {-px * ix2 - py * iy2, px * ix2 - qy * iy2, -qx * ix2 + py * iy2,
                            qx * ix2 + qy * iy2};
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

eddy_status sol_solve_newton(const sol_system *s, sol_work *w, double v, double *a, int warm,
                             double *nu_cells, int max_iter, sol_newton_info *nli,
                             sol_info *info, eddy_error *err)
{
    sol_newton_info local;
    if (nli == NULL)
        nli = &local;
    memset(nli, 0, sizeof *nli);
    const mesh_grid *g = s->g;
    size_t nn = (size_t)g->nx * (size_t)g->ny, nc = (size_t)g->ncx * (size_t)g->ncy;
    if (!sol_is_nonlinear(s)) {
        eddy_status st = sol_solve_work(s, w, v, a, info, err);
        if (st == EDDY_OK && nu_cells != NULL)
            memcpy(nu_cells, g->nu, nc * sizeof *nu_cells);
        nli->converged = st == EDDY_OK;
        return st;
    }
    if (!isfinite(v))
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "speed must be finite");
    if (s->symbolic == NULL || w->x == NULL)
        return EDDY_RAISE(err, EDDY_ERR_INTERNAL,
                          "sol_solve_newton before sol_analyse, or with a workspace of another "
                          "system");
    if (max_iter <= 0 || max_iter > SOL_NEWTON_MAX_ITER)
        max_iter = SOL_NEWTON_MAX_ITER;
    nli->saturable_cells = s->nsat;
    if (warm)
        for (size_t k = 0; k < nn; k++) {
            if (s->unk[k] >= 0)
                w->x[s->unk[k]] = a[k];
        }
    else
        memset(w->x, 0, (size_t)s->n * sizeof *w->x);
    double t_asm = 0.0, t_fac = 0.0, t_sol = 0.0, t0 = eddy_now(), bmax = 0.0;
    double rn = residual(s, w, v, w->x, w->res, &bmax), fn = 0.0;
    for (long r = 0; r < s->n; r++)
        fn += w->rhs[r] * w->rhs[r];
    fn = sqrt(fn);
    t_asm += eddy_now() - t0;
    eddy_status st = EDDY_OK;
    if (fn == 0.0) { /* no sources: A = 0 */
        memset(w->x, 0, (size_t)s->n * sizeof *w->x);
        rn = residual(s, w, v, w->x, w->res, &bmax);
        fn = 1.0;
    }
    nli->residual[nli->n_residual++] = rn / fn;
    double uinfo[UMFPACK_INFO];
    for (;;) {
        if (!isfinite(rn)) {
            st = EDDY_RAISE(err, EDDY_ERR_NUMERIC,
                            "Newton-Raphson at %g m/s: the residual became non-finite at step %d",
                            v, nli->iterations);
            break;
        }
        if (rn <= SOL_NEWTON_TOL * fn) {
            nli->converged = 1;
            break;
        }
        if (nli->iterations == max_iter) {
            st = EDDY_RAISE(err, EDDY_ERR_NUMERIC,
                            "Newton-Raphson did not converge at %g m/s: relative residual %.3g "
                            "after %d steps (tolerance %.0e); the B-H curve may be too steep "
                            "or the field too far beyond its last point",
                            v, rn / fn, nli->iterations, SOL_NEWTON_TOL);
            break;
        }
        t0 = eddy_now();
        add_jacobian(s, w, v, w->x);
        double t1 = eddy_now();
        t_asm += t1 - t0;
        void *numeric = NULL;
        long ust = umfpack_dl_numeric(s->Ap, s->Ai, w->Ax, s->symbolic, &numeric, s->control,
                                      uinfo);
        double t2 = eddy_now();
        t_fac += t2 - t1;
        if (info != NULL) {
            info->lnz = uinfo[UMFPACK_LNZ];
            info->unz = uinfo[UMFPACK_UNZ];
            info->flops = uinfo[UMFPACK_FLOPS];
            info->rcond = uinfo[UMFPACK_RCOND];
            info->peak_bytes = uinfo[UMFPACK_PEAK_MEMORY] * uinfo[UMFPACK_SIZE_OF_UNIT];
        }
        st = umf_status(ust, "numeric factorisation of the Newton Jacobian", err);
        if (st == EDDY_OK) {
            ust = umfpack_dl_wsolve(UMFPACK_A, s->Ap, s->Ai, w->Ax, w->dx, w->res, numeric,
                                    s->control, uinfo, w->Wi, w->W);
            st = umf_status(ust, "solve with the Newton Jacobian", err);
        }
        umfpack_dl_free_numeric(&numeric);
        t0 = eddy_now();
        t_sol += t0 - t2;
        if (st != EDDY_OK)
            break;
        /* backtracking line search on ||R|| */
        double t = 1.0, rt = 0.0, bt = 0.0;
        int cuts = 0;
        for (;;) {
            for (long r = 0; r < s->n; r++)
                w->xt[r] = w->x[r] - t * w->dx[r];
            rt = residual(s, w, v, w->xt, w->res, &bt);
            if (isfinite(rt) && rt <= (1.0 - ARMIJO_C * t) * rn)
                break;
            if (++cuts > MAX_HALVINGS)
                break;
            t *= 0.5;
        }
        t_asm += eddy_now() - t0;
        if (cuts > MAX_HALVINGS) {
            st = EDDY_RAISE(err, EDDY_ERR_NUMERIC,
                            "Newton-Raphson did not converge at %g m/s: the line search could "
                            "not reduce the residual at step %d (relative residual %.3g)",
                            v, nli->iterations + 1, rn / fn);
            break;
        }
        double *tmp = w->x;
        w->x = w->xt;
        w->xt = tmp;
        rn = rt;
        bmax = bt;
        nli->damping[nli->iterations++] = t;
        nli->residual[nli->n_residual++] = rn / fn;
    }
    nli->b_max = sqrt(bmax);
    if (info != NULL) {
        info->n = s->n;
        info->nnz = s->Ap[s->n];
        info->t_analyse = s->t_analyse;
        info->t_assemble = t_asm;
        info->t_factor = t_fac;
        info->t_solve = t_sol;
        info->est_peak_bytes = s->est_peak_bytes;
        info->ordering = sol_ordering_name(s->ordering);
    }
    /* the last iterate, also after a failure (w->nu is at that iterate) */
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
