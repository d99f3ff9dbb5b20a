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
#include "solver/sol.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <umfpack.h>

enum { DIR_C = 0, DIR_W, DIR_E, DIR_S, DIR_N, NDIR };

struct sol_system {
    const mesh_grid *g;
    long n;          /* unknowns */
    long nxu;        /* unknown columns per grid row */
    long *unk;       /* nx*ny: unknown index of each node, -1 if fixed */
    long *Ap, *Ai;   /* CSC pattern */
    double *Ax;      /* values */
    long *pos;       /* n*NDIR: position in Ax of (row u, column neighbour dir) or -1 */
    double *rhs, *sol;
    long *Wi;        /* UMFPACK workspaces, allocated once */
    double *W;
    void *symbolic;
    double control[UMFPACK_CONTROL];
    double t_analyse;
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

void sol_system_free(sol_system *s)
{
    if (s == NULL)
        return;
    if (s->symbolic != NULL)
        umfpack_dl_free_symbolic(&s->symbolic);
    free(s->unk);
    free(s->Ap);
    free(s->Ai);
    free(s->Ax);
    free(s->pos);
    free(s->rhs);
    free(s->sol);
    free(s->Wi);
    free(s->W);
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
    s->rhs = malloc((size_t)n * sizeof *s->rhs);
    s->sol = malloc((size_t)n * sizeof *s->sol);
    s->Wi = malloc((size_t)n * sizeof *s->Wi);
    s->W = malloc((size_t)n * 5 * sizeof *s->W);
    if (!s->unk || !s->Ap || !s->Ai || !s->pos || !s->rhs || !s->sol || !s->Wi || !s->W) {
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
    s->Ax = calloc((size_t)nz, sizeof *s->Ax);
    if (s->Ax == NULL) {
        sol_system_free(s);
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
    }
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
    *out = s;
    return EDDY_OK;
}

eddy_status sol_analyse(sol_system *s, sol_info *info, eddy_error *err)
{
    if (s->symbolic != NULL)
        return EDDY_OK;
    double t0 = now(), uinfo[UMFPACK_INFO];
    long st = umfpack_dl_symbolic(s->n, s->n, s->Ap, s->Ai, NULL, &s->symbolic, s->control, uinfo);
    s->t_analyse = now() - t0;
    if (info != NULL) {
        info->n = s->n;
        info->nnz = s->Ap[s->n];
        info->t_analyse = s->t_analyse;
    }
    if (st != UMFPACK_OK) {
        s->symbolic = NULL;
        return umf_status(st, "symbolic factorisation", err);
    }
    return EDDY_OK;
}

/* Add val to the entry (row ua, column: ua's neighbour in direction dir). */
static inline void add_entry(sol_system *s, long ua, int dir, double val)
{
    long p = s->pos[ua * NDIR + dir];
    if (p >= 0)
        s->Ax[p] += val;
}

/* Write the matrix values and right-hand side for speed v into the fixed
 * pattern (see the comment at the top of this file). */
static void assemble(sol_system *s, double v)
{
    const mesh_grid *g = s->g;
    int nx = g->nx, ncx = g->ncx, ncy = g->ncy;
    memset(s->Ax, 0, (size_t)s->Ap[s->n] * sizeof *s->Ax);
    memset(s->rhs, 0, (size_t)s->n * sizeof *s->rhs);
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
                add_entry(s, u00, DIR_C, gx * bm);
                add_entry(s, u00, DIR_E, -gx * bp);
            }
            if (u10 >= 0) {
                add_entry(s, u10, DIR_W, -gx * bm);
                add_entry(s, u10, DIR_C, gx * bp);
            }
            if (u01 >= 0) {
                add_entry(s, u01, DIR_C, gx * bm);
                add_entry(s, u01, DIR_E, -gx * bp);
            }
            if (u11 >= 0) {
                add_entry(s, u11, DIR_W, -gx * bm);
                add_entry(s, u11, DIR_C, gx * bp);
            }
            /* y half faces (left and right edges), width hx/2 each */
            double gy = 0.5 * hx * nu / hy;
            if (u00 >= 0) {
                add_entry(s, u00, DIR_C, gy);
                add_entry(s, u00, DIR_N, -gy);
            }
            if (u01 >= 0) {
                add_entry(s, u01, DIR_C, gy);
                add_entry(s, u01, DIR_S, -gy);
            }
            if (u10 >= 0) {
                add_entry(s, u10, DIR_C, gy);
                add_entry(s, u10, DIR_N, -gy);
            }
            if (u11 >= 0) {
                add_entry(s, u11, DIR_C, gy);
                add_entry(s, u11, DIR_S, -gy);
            }
            /* sources: coil current on the quarter cells, magnetisation as
             * the flux of nu Br through the half faces inside this cell */
            double q = 0.25 * hx * hy * g->jz[k];
            double my = 0.5 * hy * nu * g->bry[k], mx = 0.5 * hx * nu * g->brx[k];
            if (u00 >= 0)
                s->rhs[u00] += q + my - mx;
            if (u10 >= 0)
                s->rhs[u10] += q - my - mx;
            if (u01 >= 0)
                s->rhs[u01] += q + my + mx;
            if (u11 >= 0)
                s->rhs[u11] += q - my + mx;
        }
    }
}

eddy_status sol_solve(sol_system *s, double v, double *a, sol_info *info, eddy_error *err)
{
    if (!isfinite(v))
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "speed must be finite");
    eddy_status st = sol_analyse(s, info, err);
    if (st != EDDY_OK)
        return st;
    double t0 = now();
    assemble(s, v);
    double t1 = now();
    void *numeric = NULL;
    double uinfo[UMFPACK_INFO];
    long ust = umfpack_dl_numeric(s->Ap, s->Ai, s->Ax, s->symbolic, &numeric, s->control, uinfo);
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
    }
    st = umf_status(ust, "numeric factorisation", err);
    if (st != EDDY_OK) {
        umfpack_dl_free_numeric(&numeric);
        return st;
    }
    ust = umfpack_dl_wsolve(UMFPACK_A, s->Ap, s->Ai, s->Ax, s->sol, s->rhs, numeric, s->control,
                            uinfo, s->Wi, s->W);
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
        a[k] = u >= 0 ? s->sol[u] : 0.0;
        if (!isfinite(a[k]))
            return EDDY_RAISE(err, EDDY_ERR_NUMERIC, "the solution holds non-finite values");
    }
    return EDDY_OK;
}
