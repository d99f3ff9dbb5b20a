/*
 * sol_assemble.c - box-integration assembly on the tensor grid.
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
 * node 0 (sol_pattern.c).  An open side is a layer of cells mapped to
 * infinity (mesh_grid), its outermost node the point at infinity (A = 0,
 * the free field's limit for sources of zero net current; a net current's
 * logarithm only shifts A by a constant near the device): the box
 * integration of the mapped equation uses the mapping's metric (edge
 * lengths h_s dx/ds at the cell middle, the exact widths of the half
 * cells), which is the infinite-domain problem discretised, not a large box
 * (the mapped-coordinate treatment of unbounded domains, after O. C.
 * Zienkiewicz, C. Emson and P. Bettess, "A novel boundary infinite element",
 * Int. J. Numer. Meth. Eng. 19 (1983) 393-404, cited from memory).
 *
 * The stencil of one cell (sol_assemble_cell) takes the face conductances
 * and the corners' sources from its caller; the geometry enters only
 * through the metric of each cell row (sol_row_metric_of, sol_metric.c:
 * the planar widths, or the r weights of the axisymmetric geometry, where
 * the unknown is psi = r A_phi).  Values go straight into the fixed CSC
 * arrays through precomputed positions.
 */
#include "solver/sol_int.h"

#include <math.h>
#include <string.h>

double sol_bernoulli(double z)
{
    if (fabs(z) < 1e-8)
        return 1.0 - 0.5 * z;
    if (z > 700.0)
        return z * exp(-z);
    return z / expm1(z);
}

/* Add val to the entry (row ua, column: ua's neighbour in direction dir). */
static inline void add_entry(const sol_system *s, double *Ax, long ua, int dir, double val)
{
    long p = s->pos[ua * NDIR + dir];
    if (p >= 0)
        Ax[p] += val;
}

void sol_assemble_cell(const sol_system *s, sol_work *w, int i, int j, const sol_cell *c)
{
    size_t nx = (size_t)s->g->nx;
    double *Ax = w->Ax;
    long u[4] = {s->unk[(size_t)i + nx * (size_t)j], s->unk[(size_t)i + 1 + nx * (size_t)j],
                 s->unk[(size_t)i + nx * (size_t)(j + 1)],
                 s->unk[(size_t)i + 1 + nx * (size_t)(j + 1)]};
    /* x half faces (L, R) = corners (0, 1) and (2, 3): row L gets
     * +gx bm A_L - gx bp A_R, row R the opposite */
    for (int e = 0; e < 2; e++) {
        long ul = u[2 * e], ur = u[2 * e + 1];
        if (ul >= 0) {
            add_entry(s, Ax, ul, DIR_C, c->gx[e] * c->bm[e]);
            add_entry(s, Ax, ul, DIR_E, -c->gx[e] * c->bp[e]);
        }
        if (ur >= 0) {
            add_entry(s, Ax, ur, DIR_W, -c->gx[e] * c->bm[e]);
            add_entry(s, Ax, ur, DIR_C, c->gx[e] * c->bp[e]);
        }
    }
    /* y half faces (lower, upper) = corners (0, 2) and (1, 3) */
    for (int e = 0; e < 2; e++) {
        long ud = u[e], uu = u[e + 2];
        if (ud >= 0) {
            add_entry(s, Ax, ud, DIR_C, c->gy[e]);
            add_entry(s, Ax, ud, DIR_N, -c->gy[e]);
        }
        if (uu >= 0) {
            add_entry(s, Ax, uu, DIR_C, c->gy[e]);
            add_entry(s, Ax, uu, DIR_S, -c->gy[e]);
        }
    }
    for (int q = 0; q < 4; q++)
        if (u[q] >= 0)
            w->rhs[u[q]] += c->f[q];
}

/* The stencil of cell k = (i, j) of size hx by hy at speed v, with
 * reluctivity nu and the metric m of its row (sol_metric.c): x half faces
 * of width m->wx[0], m->wx[1] (planar: hy/2), y half faces of width hx/2 over
 * the edge length m->ey (planar: hy); coil current on the quarter cells,
 * magnetisation as the flux of nu Br through the half faces inside the cell
 * (both in the plain x-y, or z-r, plane whatever the geometry). */
static void metric_cell(const mesh_grid *g, size_t k, double hx, double hy,
                        const sol_row_metric *m, double nu, double v, sol_cell *c)
{
    double bm = 1.0, bp = 1.0;
    if (g->moving[k] && g->sigma[k] > 0.0 && v != 0.0) {
        double pe = g->sigma[k] * v * hx / nu;
        bp = sol_bernoulli(pe);
        bm = bp + pe; /* B(-z) = B(z) + z */
    }
    double gy = 0.5 * hx * nu / m->ey;
    double q = 0.25 * hx * hy * g->jz[k];
    double my = 0.5 * hy * nu * g->bry[k], mx = 0.5 * hx * nu * g->brx[k];
    *c = (sol_cell){.gx = {m->wx[0] * nu / hx, m->wx[1] * nu / hx},
                    .bm = {bm, bm},
                    .bp = {bp, bp},
                    .gy = {gy, gy},
                    .f = {q + my - mx, q - my - mx, q + my + mx, q - my + mx}};
}

/* The stencil of cell k = (i, j) on a grid with open sides (mesh_grid ex,
 * wxl, ...): the same fluxes with the metric of the mapping, i.e. the half
 * faces' widths and the edge lengths of the mapped coordinate. */
static void mapped_cell(const mesh_grid *g, int i, int j, size_t k, double nu, double v,
                        sol_cell *c)
{
    double ex = mesh_edge_x(g, i), ey = mesh_edge_y(g, j);
    double xl = g->ex != NULL ? g->wxl[i] : 0.5 * ex, xr = g->ex != NULL ? g->wxr[i] : 0.5 * ex;
    double yl = g->ey != NULL ? g->wyl[j] : 0.5 * ey, yr = g->ey != NULL ? g->wyr[j] : 0.5 * ey;
    double bm = 1.0, bp = 1.0;
    if (g->moving[k] && g->sigma[k] > 0.0 && v != 0.0) {
        double pe = g->sigma[k] * v * ex / nu;
        bp = sol_bernoulli(pe);
        bm = bp + pe;
    }
    double jz = g->jz[k], mx = nu * g->brx[k], my = nu * g->bry[k];
    *c = (sol_cell){.gx = {yl * nu / ex, yr * nu / ex},
                    .bm = {bm, bm},
                    .bp = {bp, bp},
                    .gy = {xl * nu / ey, xr * nu / ey},
                    .f = {xl * yl * jz + yl * my - xl * mx, xr * yl * jz - yl * my - xr * mx,
                          xl * yr * jz + yr * my + xl * mx, xr * yr * jz - yr * my + xr * mx}};
}

void sol_assemble(const sol_system *s, sol_work *w, double v, const double *nuc)
{
    const mesh_grid *g = s->g;
    memset(w->Ax, 0, (size_t)s->Ap[s->n] * sizeof *w->Ax);
    memset(w->rhs, 0, (size_t)s->n * sizeof *w->rhs);
    int mapped = g->ex != NULL || g->ey != NULL;
    for (int j = 0; j < g->ncy; j++) {
        double hy = g->y[j + 1] - g->y[j];
        sol_row_metric m;
        sol_row_metric_of(g, j, &m);
        for (int i = 0; i < g->ncx; i++) {
            size_t k = (size_t)i + (size_t)g->ncx * j;
            sol_cell c;
            if (mapped) /* open sides (planar only: r-z rejects them) */
                mapped_cell(g, i, j, k, nuc[k], v, &c);
            else
                metric_cell(g, k, g->x[i + 1] - g->x[i], hy, &m, nuc[k], v, &c);
            sol_assemble_cell(s, w, i, j, &c);
        }
    }
}

/* ------------------------------------------------------------------------ */
/* The lumped conductivity mass of the time-stepping equation                */
/* ------------------------------------------------------------------------ */

/*
 * In a conductor at rest in its own frame the eddy current is
 * J_z = -sigma dA/dt, so the box integral of sigma dA/dt over the dual cell
 * of node a is lumped as
 *
 *     M_a dA_a/dt,   M_a = sum over the quarter cells q of the dual cell of
 *                          sigma_q |q|,
 *
 * with |q| the measure the steady fluxes use for that quarter: the width of
 * its x half face (the row metric's wx[0] or wx[1], i.e. hy/2 planar, the
 * integral of dr / r in r-z, where the term is (sigma / r) dpsi/dt) times
 * half the column's width (hx/2), or on a grid with open sides the parts of
 * the mapped widths (wxl/wxr times wyl/wyr) the mapped sources use.  Mass
 * lumping keeps the matrix (sigma / dt) M + K an M-matrix and its pattern
 * the five-point one; it is second order on smooth fields like the box
 * integration itself.
 */
void sol_mass(const sol_system *s, const double *sigma_cells, double *mass)
{
    const mesh_grid *g = s->g;
    size_t nx = (size_t)g->nx;
    memset(mass, 0, (size_t)s->n * sizeof *mass);
    int mapped = g->ex != NULL || g->ey != NULL;
    for (int j = 0; j < g->ncy; j++) {
        sol_row_metric m;
        sol_row_metric_of(g, j, &m);
        for (int i = 0; i < g->ncx; i++) {
            size_t k = (size_t)i + (size_t)g->ncx * j;
            double sigma = sigma_cells[k];
            if (!(sigma > 0.0))
                continue;
            double xl, xr, yl, yr;
            if (mapped) {
                double ex = mesh_edge_x(g, i), ey = mesh_edge_y(g, j);
                xl = g->ex != NULL ? g->wxl[i] : 0.5 * ex;
                xr = g->ex != NULL ? g->wxr[i] : 0.5 * ex;
                yl = g->ey != NULL ? g->wyl[j] : 0.5 * ey;
                yr = g->ey != NULL ? g->wyr[j] : 0.5 * ey;
            } else {
                xl = xr = 0.5 * (g->x[i + 1] - g->x[i]);
                yl = m.wx[0];
                yr = m.wx[1];
            }
            long u[4] = {s->unk[(size_t)i + nx * (size_t)j],
                         s->unk[(size_t)i + 1 + nx * (size_t)j],
                         s->unk[(size_t)i + nx * (size_t)(j + 1)],
                         s->unk[(size_t)i + 1 + nx * (size_t)(j + 1)]};
            double q[4] = {xl * yl, xr * yl, xl * yr, xr * yr};
            for (int c = 0; c < 4; c++)
                if (u[c] >= 0)
                    mass[u[c]] += sigma * q[c];
        }
    }
}
