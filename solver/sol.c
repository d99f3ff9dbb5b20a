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
#include <umfpack.h>

enum { DIR_C = 0, DIR_W, DIR_E, DIR_S, DIR_N, NDIR };

/* Values and workspaces of one solve: one per thread, allocated once. */
struct sol_work {
    double *Ax;      /* matrix values in the system's fixed CSC pattern */
    double *rhs, *sol;
    long *Wi;        /* UMFPACK solve workspaces */
    double *W;
};

struct sol_system {
    const mesh_grid *g;
    long n;          /* unknowns */
    long nxu;        /* unknown columns per grid row */
    long *unk;       /* nx*ny: unknown index of each node, -1 if fixed */
    long *Ap, *Ai;   /* CSC pattern */
    long *pos;       /* n*NDIR: position in Ax of (row u, column neighbour dir) or -1 */
    sol_work *work;  /* the workspace of sol_solve */
    void *symbolic;
    double control[UMFPACK_CONTROL];
    sol_ordering ordering;
    double t_analyse;
    double est_peak_bytes, est_flops, est_lu;  /* from the symbolic analysis */
    double memory_limit;                       /* bytes; <= 0: no limit */
};

static double now(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

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
    s->unk = malloc(nn * sizeof *s->unk);
    s->Ap = malloc((size_t)(n + 1) * sizeof *s->Ap);
    s->Ai = malloc((size_t)n * NDIR * sizeof *s->Ai);
    s->pos = malloc((size_t)n * NDIR * sizeof *s->pos);
    if (!s->unk || !s->Ap || !s->Ai || !s->pos) {
        sol_system_free(s);
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory for %ld unknowns", n);
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
    /* CSC: the pattern is structurally symmetric, so column u holds the rows
     * of u's neighbours; sort each column. */
    long nz = 0;
    for (long u = 0; u < n; u++) {
        s->Ap[u] = nz;
        long tmp[NDIR];
        int m = 0;
        for (int d = 0; d < NDIR; d++)
            if (nb[u * NDIR + d] >= 0)
                tmp[m++] = nb[u * NDIR + d];
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
    umfpack_dl_defaults(s->control);
    s->control[UMFPACK_STRATEGY] = UMFPACK_STRATEGY_SYMMETRIC;
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
    double t0 = now(), uinfo[UMFPACK_INFO];
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
    s->t_analyse = now() - t0;
    s->est_peak_bytes = uinfo[UMFPACK_PEAK_MEMORY_ESTIMATE] * uinfo[UMFPACK_SIZE_OF_UNIT];
    s->est_flops = uinfo[UMFPACK_FLOPS_ESTIMATE];
    s->est_lu = uinfo[UMFPACK_LNZ_ESTIMATE] + uinfo[UMFPACK_UNZ_ESTIMATE];
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
                          "the factorisation of %ld unknowns would need about %.2f GiB (UMFPACK's "
                          "estimate), more than the %.2f GiB allowed; coarsen the mesh or raise "
                          "the limit",
                          s->n, s->est_peak_bytes / 1073741824.0, s->memory_limit / 1073741824.0);
    }
    return EDDY_OK;
}

double sol_factor_bytes(const sol_system *s) { return s->est_peak_bytes; }

/* Add val to the entry (row ua, column: ua's neighbour in direction dir). */
static inline void add_entry(const sol_system *s, double *Ax, long ua, int dir, double val)
{
    long p = s->pos[ua * NDIR + dir];
    if (p >= 0)
        Ax[p] += val;
}

/* Write the matrix values and right-hand side for speed v into the fixed
 * pattern (see the comment at the top of this file). */
static void assemble(const sol_system *s, sol_work *w, double v)
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
            double nu = g->nu[k];
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

eddy_status sol_solve_work(const sol_system *s, sol_work *w, double v, double *a,
                           sol_info *info, eddy_error *err)
{
    if (!isfinite(v))
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "speed must be finite");
    if (s->symbolic == NULL)
        return EDDY_RAISE(err, EDDY_ERR_INTERNAL, "sol_solve_work before sol_analyse");
    double t0 = now();
    assemble(s, w, v);
    double t1 = now();
    void *numeric = NULL;
    double uinfo[UMFPACK_INFO];
    long ust = umfpack_dl_numeric(s->Ap, s->Ai, w->Ax, s->symbolic, &numeric, s->control, uinfo);
    double t2 = now();
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
        info->t_solve = now() - t2;
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
