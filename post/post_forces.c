/*
 * post_forces.c - Lorentz force, Maxwell stress, loss and the low-speed limit.
 *
 * On each cell A is bilinear, so B_x = dA/dy is linear in x and constant in
 * y, and B_y = -dA/dx linear in y, constant in x.  Products of two such
 * factors are bilinear, and 2 x 2 Gauss points integrate them exactly.
 *
 * Lorentz force density f = J x B with J = J_z e_z:
 *   f_x = -J_z B_y = J_z dA/dx,   f_y = J_z B_x = J_z dA/dy,
 * and J_z = -sigma v dA/dx, so F_x = -sigma v * integral (dA/dx)^2 opposes v.
 * Loss P = integral J_z^2 / sigma.
 *
 * The induced current is taken per dual cell (per node), consistent with the
 * solver's exponentially fitted flux: the fitted x-flux equals central
 * diffusion plus c * A_f, with the face value
 *   A_f = [(B(-Pe) - 1) A_L - (B(Pe) - 1) A_R] / Pe
 * (the mean of A_L and A_R as Pe -> 0, A_L as Pe -> inf), so the current in
 * the dual cell of node i, per unit height, is -c (A_f(i+1/2) - A_f(i-1/2)).
 * It is paired with the central difference dA/dx at the node.  Evaluating
 * J = -sigma v dA/dx from the bilinear field instead converges only at first
 * order once the cell Peclet number is large (measured: -3.4 % at Pe ~ 20 on
 * the sled_fin demo), whereas this form agrees with the Maxwell stress in the
 * air to about 1e-5 at every speed.
 *
 * Maxwell stress, two forms.  The nodal (total-current) form (see
 * total_current_force) is the one reported for magnetised conductors and
 * for the normal force check; the line form below, averaged over the air
 * rows next to the band, is the drag check independent of the induced
 * current.  Measured on an NdFeB block 30 x 10 mm, 3 mm over a 6 mm copper
 * plate at rest (true force 0): line form +18 N/m on the default grid,
 * nodal form 5e-12 N/m; on a 6 mm steel plate (mu_r 100, 5 MS/m) at rest
 * against the layered reference's 1871.2 N/m: line form +1.0 / +0.5 N/m,
 * nodal form -4.0 / -1.0 N/m (second order) on the default / 2x grid.
 * Line form: T_ij = (B_i B_j - delta_ij |B|^2 / 2) / mu0 on a line
 * y = const in air, normal n = +y (above the band) or -y (below):
 *   F_x = n_y * integral B_x B_y / mu0 dx,
 *   F_y = n_y * integral (B_y^2 - B_x^2) / (2 mu0) dx.
 * The x sides of the contour lie on the domain boundary: periodic sides
 * cancel exactly; on zero sides the field is assumed negligible (the domain
 * is large), which the stress-vs-Lorentz check then tests.
 */
#include "post/post.h"

#include <math.h>
#include <string.h>
#include <stddef.h>
#include <stdlib.h>

#define GAUSS_LO (0.5 - 0.5 / 1.7320508075688772)
#define GAUSS_HI (0.5 + 0.5 / 1.7320508075688772)

static const double gauss_pts[2] = {GAUSS_LO, GAUSS_HI};

/* Corner values of cell (i, j). */
static void corners(const mesh_grid *g, const double *a, int i, int j, double c[4])
{
    size_t nx = (size_t)g->nx;
    c[0] = a[(size_t)i + nx * (size_t)j];
    c[1] = a[(size_t)i + 1 + nx * (size_t)j];
    c[2] = a[(size_t)i + nx * (size_t)(j + 1)];
    c[3] = a[(size_t)i + 1 + nx * (size_t)(j + 1)];
}

/* dA/dx and dA/dy of the bilinear interpolant at local (xi, eta) in [0,1]^2. */
static void grad_local(const double c[4], double hx, double hy, double xi, double eta,
                       double *dadx, double *dady)
{
    *dadx = ((c[1] - c[0]) * (1.0 - eta) + (c[3] - c[2]) * eta) / hx;
    *dady = ((c[2] - c[0]) * (1.0 - xi) + (c[3] - c[1]) * xi) / hy;
}

/* Axisymmetric cells (grid x is z, y is r, the node values are psi =
 * r A_phi): psi is interpolated bilinearly in z and s = r^2 / 2, the
 * variable in which it is smooth on the axis (psi ~ r^2 there) and in which
 * the solver's radial flux (nu / r) dpsi/dr = nu dpsi/ds is constant across
 * a cell row (solver/sol_metric.c).  At local (xi, eta), eta = (s - s_j) /
 * (s_j+1 - s_j), hs = s_j+1 - s_j (the row metric's ey) and radius r:
 * B_z = dpsi/ds, B_r = -(1/r) dpsi/dz (0 on the axis, where dpsi/dz
 * vanishes like r^2). */
static void field_rz_local(const double c[4], double hx, double hs, double xi, double eta,
                           double r, double *bz, double *br)
{
    double dpdz = ((c[1] - c[0]) * (1.0 - eta) + (c[3] - c[2]) * eta) / hx;
    *bz = ((c[2] - c[0]) * (1.0 - xi) + (c[3] - c[1]) * xi) / hs;
    *br = r > 0.0 ? -dpdz / r : 0.0;
}

static int is_air(const mesh_grid *g, size_t k)
{
    return g->sigma[k] == 0.0 && g->brx[k] == 0.0 && g->bry[k] == 0.0 && g->jz[k] == 0.0 &&
           fabs(g->nu[k] * EDDY_MU0 - 1.0) < 1e-12;
}

static int row_is_air(const mesh_grid *g, int j)
{
    for (int i = 0; i < g->ncx; i++)
        if (!is_air(g, (size_t)i + (size_t)g->ncx * (size_t)j))
            return 0;
    return 1;
}

/* Average over rows j0 <= j < j1 of the line integrals of the stress
 * (T_xy, T_yy) along x; added to *fx, *fy with the sign of the normal. */
static void band_stress(const mesh_grid *g, const double *a, int j0, int j1, double ny_sign,
                        double *fx, double *fy)
{
    double sx = 0.0, sy = 0.0, height = 0.0;
    if (g->geometry == MESH_AXISYMMETRIC) {
        /* the ring integral of T_zr = B_z B_r / mu0 over a cylinder r = const
         * in air, 2 pi r integral T_zr dz, is the same on every cylinder
         * between the band and the sources; its mean over the rows is
         * 2 pi integral T_zr ds dz / (r_j1 - r_j0), s = r^2 / 2, on the
         * Gauss points in (z, s) */
        for (int j = j0; j < j1; j++) {
            sol_row_metric m;
            sol_row_metric_of(g, j, &m);
            double s0 = 0.5 * g->y[j] * g->y[j];
            height += g->y[j + 1] - g->y[j];
            for (int i = 0; i < g->ncx; i++) {
                double hx = g->x[i + 1] - g->x[i], c[4];
                corners(g, a, i, j, c);
                for (int p = 0; p < 2; p++)
                    for (int q = 0; q < 2; q++) {
                        double bz, br, r = sqrt(2.0 * (s0 + gauss_pts[q] * m.ey));
                        field_rz_local(c, hx, m.ey, gauss_pts[p], gauss_pts[q], r, &bz, &br);
                        sx += 0.25 * hx * m.ey * bz * br / EDDY_MU0;
                    }
            }
        }
        *fx += ny_sign * 2.0 * EDDY_PI * sx / height;
        return; /* the net radial force on a whole ring is zero */
    }
    for (int j = j0; j < j1; j++) {
        double hy = g->y[j + 1] - g->y[j];
        height += hy;
        for (int i = 0; i < g->ncx; i++) {
            double hx = g->x[i + 1] - g->x[i], c[4];
            corners(g, a, i, j, c);
            for (int p = 0; p < 2; p++)
                for (int q = 0; q < 2; q++) {
                    double dadx, dady;
                    grad_local(c, hx, hy, gauss_pts[p], gauss_pts[q], &dadx, &dady);
                    double bx = dady, by = -dadx, w = 0.25 * hx * hy;
                    sx += w * bx * by / EDDY_MU0;
                    sy += w * (by * by - bx * bx) / (2.0 * EDDY_MU0);
                }
        }
    }
    *fx += ny_sign * sx / height;
    *fy += ny_sign * sy / height;
}

/* Stress on a zero (A = 0) boundary row: B_y = 0 there, so T_xy = 0 and
 * T_yy = -B_x^2 / (2 mu0); B_x = dA/dy of the adjacent cell row j. */
static void boundary_stress(const mesh_grid *g, const double *a, int j, double ny_sign,
                            double *fy)
{
    if (g->geometry == MESH_AXISYMMETRIC)
        return; /* psi = 0 there: B_r = 0, T_zr = 0, and no net radial force */
    double hy = g->y[j + 1] - g->y[j], s = 0.0;
    for (int i = 0; i < g->ncx; i++) {
        double hx = g->x[i + 1] - g->x[i], c[4];
        corners(g, a, i, j, c);
        for (int p = 0; p < 2; p++) {
            double dadx, dady;
            grad_local(c, hx, hy, gauss_pts[p], ny_sign > 0 ? 1.0 : 0.0, &dadx, &dady);
            s += 0.5 * hx * (-dady * dady) / (2.0 * EDDY_MU0);
        }
    }
    *fy += ny_sign * s;
}

static int stress_force(const mesh_grid *g, const double *a, double *fx, double *fy)
{
    *fx = *fy = 0.0;
    if (g->jm1 <= g->jm0)
        return 0;
    for (int j = g->jm0; j < g->jm1; j++)
        for (int i = 0; i < g->ncx; i++) {
            size_t k = (size_t)i + (size_t)g->ncx * (size_t)j;
            if (!g->moving[k] && !is_air(g, k))
                return 0;
        }
    /* above */
    if (g->jm1 == g->ncy) {
        boundary_stress(g, a, g->ncy - 1, 1.0, fy);
    } else {
        int j1 = g->jm1;
        while (j1 < g->ncy && row_is_air(g, j1))
            j1++;
        if (j1 == g->jm1)
            return 0;
        band_stress(g, a, g->jm1, j1, 1.0, fx, fy);
    }
    /* below */
    if (g->jm0 == 0) {
        boundary_stress(g, a, 0, -1.0, fy);
    } else {
        int j0 = g->jm0;
        while (j0 > 0 && row_is_air(g, j0 - 1))
            j0--;
        if (j0 == g->jm0)
            return 0;
        band_stress(g, a, j0, g->jm0, -1.0, fx, fy);
    }
    return 1;
}

/* 1 for a planar grid, 2 pi for an axisymmetric one (the whole ring). */
static double ma_ring(const mesh_grid *g)
{
    return g->geometry == MESH_AXISYMMETRIC ? 2.0 * EDDY_PI : 1.0;
}

/* dA/dy at node (i, jn): the mean of the two one-sided differences across
 * the node (the mean field on a sheet at an interface), one-sided on the
 * outer box.  Shared by the nodal stress and the Lorentz force. */
static double node_dady(const mesh_grid *g, const double *a, int i, int jn)
{
    size_t nx = (size_t)g->nx, row = nx * (size_t)jn;
    if (jn > 0 && jn + 1 < g->ny)
        return 0.5 * ((a[(size_t)i + nx * (size_t)(jn + 1)] - a[(size_t)i + row]) /
                          (g->y[jn + 1] - g->y[jn]) +
                      (a[(size_t)i + row] - a[(size_t)i + nx * (size_t)(jn - 1)]) /
                          (g->y[jn] - g->y[jn - 1]));
    int jlo = jn > 0 ? jn - 1 : jn, jhi = jn + 1 < g->ny ? jn + 1 : jn;
    return (a[(size_t)i + nx * (size_t)jhi] - a[(size_t)i + nx * (size_t)jlo]) /
           (g->y[jhi] - g->y[jlo]);
}

/* Force on the moving band from the total current, the volume form of the
 * Maxwell stress on the discrete field.  By Ampere's law curl(B / mu0) =
 * J_free + J_mag, so the vacuum stress on any contour in air around a body
 * equals the integral over the body of (curl B / mu0) x B, the Lorentz force
 * on its free and magnetisation currents together (Jackson, "Classical
 * Electrodynamics", 3rd ed., 1999, section 6.7; on a magnetised body's
 * surface the sheet current sees the mean of the fields on its two sides).
 * On the grid the total current of the dual cell of node i is the box
 * integration of -div(nu0 grad A) applied to the solution,
 *     I_i = nu0 * sum over the four dual faces of w (A_i - A_nb) / h   (A/m),
 * i.e. the residual of the vacuum operator: it is zero at every air node, so
 * the sum below does not depend on where the contour runs in the air, and
 * for a non-magnetic plate it is exactly the induced current of the scheme
 * (the plate's own operator is the vacuum one).  This is the nodal form of
 * the virtual-work force (J. L. Coulomb, "A methodology for the determination
 * of global electromechanical quantities from a finite element analysis and
 * its application to the evaluation of magnetic forces, torques and
 * stiffness", IEEE Trans. Magn. 19(6), 1983, 2514-2519; F. Henrotte, G.
 * Deliege, K. Hameyer, "The eggshell approach for the computation of
 * electromagnetic forces in 2D and 3D", COMPEL 23(4), 2004, 996-1005: the
 * force as a weighted residual with weight 1 on the body's nodes; both
 * references from memory).  Unlike the line integral of the stress across
 * the whole domain width, it carries no discretisation bias of order
 * integral |B|^2 / (2 mu0) dx of the sources' field, so a non-magnetic plate
 * at rest feels exactly zero and the small low-speed repulsion is resolved.
 *     F_x = sum_i I_i (dA/dx)_i,  F_y = sum_i I_i (dA/dy)_i,
 * dA/dx central across the node, dA/dy the mean of the two one-sided
 * differences (the mean field on a sheet at an interface).
 * Needs an air row above and below the band (else returns 0). */
static int total_current_force(const mesh_grid *g, const double *a, double *fx, double *fy)
{
    *fx = *fy = 0.0;
    if (g->jm1 <= g->jm0 || g->jm0 == 0 || g->jm1 == g->ncy)
        return 0;
    if (!row_is_air(g, g->jm0 - 1) || !row_is_air(g, g->jm1))
        return 0;
    size_t nx = (size_t)g->nx;
    int ncx = g->ncx, i0 = g->x_periodic ? 0 : 1, i1 = ncx; /* unknown node columns */
    double nu0 = 1.0 / EDDY_MU0, sx = 0.0, sy = 0.0;
    for (int jn = g->jm0; jn <= g->jm1; jn++) {
        sol_row_metric mb, ma; /* the rows below and above the node row */
        sol_row_metric_of(g, jn - 1, &mb);
        sol_row_metric_of(g, jn, &ma);
        double hb = mb.ey, ha = ma.ey; /* planar: mesh_edge_y, the row heights */
        double wy = mb.wx[1] + ma.wx[0]; /* planar: mesh_dual_y */
        for (int i = i0; i < i1; i++) {
            int il = i > 0 ? i - 1 : ncx - 1, ir = i + 1; /* node ncx is node 0 when periodic */
            double hl = mesh_edge_x(g, il), hr = mesh_edge_x(g, i);
            size_t row = nx * (size_t)jn;
            double ai = a[(size_t)i + row], aw = a[(size_t)il + row], ae = a[(size_t)ir + row];
            double as = a[(size_t)i + row - nx], an = a[(size_t)i + row + nx];
            double wx = mesh_dual_x(g, il, i);
            double cur = nu0 * (wy * ((ai - aw) / hl + (ai - ae) / hr) +
                                wx * ((ai - as) / hb + (ai - an) / ha));
            double dadx = (ae - aw) / (hl + hr);
            double dady = node_dady(g, a, i, jn);
            sx += cur * dadx;
            sy += cur * dady;
        }
    }
    /* axisymmetric: F_z = 2 pi sum I_i dpsi/dz (J_phi B_r r = -J_phi dpsi/dz
     * per radian); the net radial force on a whole ring is zero */
    *fx = ma_ring(g) * sx;
    *fy = g->geometry == MESH_AXISYMMETRIC ? 0.0 : sy;
    return 1;
}

/* Convective face value of A on the x-edge from node L to R in a cell with
 * Peclet number pe: the exponentially fitted flux written as central
 * diffusion plus c * A_f (see solver/sol.c). */
static double face_value(double al, double ar, double pe)
{
    if (fabs(pe) < 1e-6)
        return 0.5 * (al + ar) + pe * (al - ar) / 12.0;
    double bp = sol_bernoulli(pe), bm = bp + pe; /* the solver's own B(z) */
    return ((bm - 1.0) * al - (bp - 1.0) * ar) / pe;
}

typedef struct {
    double fx, fy, loss, j_peak, q_peak; /* q_peak: largest loss density, W/m^3 */
} nodal_sums;

/* Induced current, force and loss on the dual cells of the nodes of the
 * moving cells, with the current taken from the solver's own convective
 * fluxes (fitted = 1) or from central face values (fitted = 0, the v -> 0
 * limit used for the low-speed slope). */
static void nodal_forces(const mesh_grid *g, const double *a, double v, int fitted,
                         const double *row_weight, nodal_sums *out, double *node_current,
                         double *node_area)
{
    size_t nx = (size_t)g->nx;
    int ncx = g->ncx, i_end = g->x_periodic ? ncx : ncx + 1;
    double fx = 0.0, fy = 0.0, loss = 0.0, jpk = 0.0, qpk = 0.0;
    double ring = ma_ring(g);
    for (int j = g->jm0; j < g->jm1; j++) {
        double hy = g->y[j + 1] - g->y[j];
        sol_row_metric m;
        sol_row_metric_of(g, j, &m);
        for (int jn = j; jn <= j + 1; jn++) { /* node rows on the two sides of the cell row */
            double w = m.wx[jn - j]; /* planar: hy / 2 */
            for (int i = 0; i < i_end; i++) {
                /* cells left (il) and right (ir) of node i in this row */
                int ir = i < ncx ? i : (g->x_periodic ? 0 : -1);
                int il = i > 0 ? i - 1 : (g->x_periodic ? ncx - 1 : -1);
                if (ir < 0 || il < 0)
                    continue;
                size_t kr = (size_t)ir + (size_t)ncx * (size_t)j;
                if (!g->moving[kr] || g->sigma[kr] == 0.0)
                    continue;
                double sigma = g->sigma[kr], c = sigma * v, nu = g->nu[kr];
                double hl = mesh_edge_x(g, il), hr = mesh_edge_x(g, ir);
                size_t row = nx * (size_t)jn;
                double ai = a[(size_t)i + row];
                double aw = a[(size_t)il + row], ae = a[(size_t)ir + 1 + row];
                double pr = fitted ? c * hr / nu : 0.0, pl = fitted ? c * hl / nu : 0.0;
                double afr = face_value(ai, ae, pr), afl = face_value(aw, ai, pl);
                double dual = mesh_dual_x(g, il, ir), area = 0.5 * hy * dual; /* plain */
                /* A per metre of depth; axisymmetric: the ring current through
                 * this part of the dual cell, A (J_phi = -(sigma v / r) dpsi/dz
                 * integrated over dr dz) */
                double cur = -c * w * (afr - afl);
                double dadx = (ae - aw) / (hl + hr);
                /* the mean of the two one-sided differences in y across the
                 * node (one-sided on the outer box), as in the nodal stress:
                 * on a graded grid the weighted central difference was 1.4 %
                 * off the layered reference's repulsion at Rm 100 where this
                 * is 0.15 % (NdFeB block over 6 mm copper, default grid) */
                double dady = node_dady(g, a, i, jn);
                if (node_current != NULL) {
                    node_current[(size_t)i + row] += cur;
                    node_area[(size_t)i + row] += area;
                }
                /* row_weight: an extra weight of the caller (NULL: 1); the
                 * geometry's own weights are in the metric (w, ring) */
                double wt = row_weight != NULL ? row_weight[jn] : 1.0;
                fx += wt * ring * cur * dadx;
                fy += wt * cur * dady;
                /* planar: w dual = area; axisymmetric: J_phi^2 r = sigma^2 v^2
                 * (dpsi/dz)^2 / r integrates to cur^2 / (sigma w dual) per
                 * radian */
                loss += wt * ring * cur * cur / (sigma * (w * dual));
                if (fabs(cur) / area > jpk)
                    jpk = fabs(cur) / area;
                if (cur * cur / (sigma * area * area) > qpk)
                    qpk = cur * cur / (sigma * area * area);
            }
        }
    }
    out->fx = fx;
    out->fy = g->geometry == MESH_AXISYMMETRIC ? 0.0 : fy; /* no net radial force on a ring */
    out->loss = loss;
    out->j_peak = jpk;
    out->q_peak = qpk;
}

/* The damping coefficient.  A conductor moving at +v along x in the static
 * field B0 carries, to first order in v, J_z = sigma (v x B0)_z =
 * sigma v B0_y = -sigma v dA0/dx (PHYSICS.md), and feels
 * F_x = integral (J x B0)_x = -integral J_z B0_y = -sigma v integral B0_y^2,
 * a drag c v with c = sigma integral B0_y^2 = sigma integral (dA0/dx)^2 >= 0.
 * It is evaluated as the v -> 0 limit of the drag of the scheme itself:
 * the nodal current with central face values (the Peclet -> 0 limit of the
 * fitted fluxes) at v = 1 m/s, times dA/dx at the node, so that c v is the
 * solver's own drag at low speed and not another discretisation of the same
 * integral.  row_weight multiplies each node row (the geometry). */
double post_damping_coefficient(const mesh_grid *g, const double *a_static,
                                const double *row_weight)
{
    nodal_sums n;
    nodal_forces(g, a_static, 1.0, 0, row_weight, &n, NULL, NULL);
    return -n.fx;
}

/* The stress-tensor forces of f (nodal and line form) from the field a, and
 * the choice of force_method: J x B (lorentz_x, lorentz_y, already in f) for
 * non-magnetic conductors, the stress for magnetised ones. */
static void stress_and_method(const mesh_grid *g, const double *a, double sgn, post_forces *f)
{
    f->nodal_ok = total_current_force(g, a, &f->nodal_x, &f->nodal_y);
    if (!f->nodal_ok)
        f->nodal_x = f->nodal_y = NAN;
    f->stress_ok = stress_force(g, a, &f->stress_x, &f->stress_y);
    f->drag_stress = f->stress_ok ? -f->stress_x * sgn : NAN;
    if (!f->stress_ok)
        f->stress_x = f->stress_y = NAN;
    /* A magnetised moving region (mu_r != 1, or saturable: g->nu holds the
     * solution's reluctivities) also feels the force on its magnetisation,
     * which J x B misses; the stress in the air around the band is the
     * whole force (e.g. J. D. Jackson, "Classical Electrodynamics", 3rd ed.,
     * 1999, section 6.7; Maxwell stress in the vacuum surrounding a body),
     * taken in its nodal (total-current) form, which is free of the line
     * integral's bias; the line form remains only for a band that lies on
     * a zero boundary. */
    f->force_method = "lorentz";
    int magnetised = 0;
    for (int j = g->jm0; j < g->jm1 && !magnetised; j++)
        for (int i = 0; i < g->ncx; i++) {
            size_t k = (size_t)i + (size_t)g->ncx * (size_t)j;
            if (g->moving[k] && fabs(g->nu[k] * EDDY_MU0 - 1.0) > 1e-12) {
                magnetised = 1;
                break;
            }
        }
    /* axisymmetric: the line form first where it exists.  Measured on a
     * moving low-carbon steel tube (tests/test_rz.c): line form 0.4 % and
     * J x B 0.3 % from the Joule loss / v, nodal form 2.2 %; a ring has no
     * normal force for which the nodal form would be needed */
    int rz_line = g->geometry == MESH_AXISYMMETRIC && f->stress_ok;
    if (magnetised && f->nodal_ok && !rz_line) {
        f->force_x = f->nodal_x;
        f->force_y = f->nodal_y;
        f->drag = -f->nodal_x * sgn;
        f->force_method = "stress_tensor";
    } else if (magnetised && f->stress_ok) { /* band on a zero boundary */
        f->force_x = f->stress_x;
        f->force_y = f->stress_y;
        f->drag = f->drag_stress;
        f->force_method = "stress_tensor";
    } else if (magnetised) {
        f->force_method = "lorentz_incomplete";
    }
}

eddy_status post_forces_compute(const mesh_grid *g, const double *a, double v,
                                double lowspeed_slope, post_forces *f, eddy_error *err)
{
    nodal_sums n;
    nodal_forces(g, a, v, 1, NULL, &n, NULL, NULL);
    double sig_t = 0.0; /* integral of sigma over the band thickness, column 0 */
    double area = 0.0;  /* of the moving conductors, m^2 */
    for (int j = g->jm0; j < g->jm1; j++) {
        size_t k0 = (size_t)g->ncx * (size_t)j;
        double hy = g->y[j + 1] - g->y[j];
        sol_row_metric m;
        sol_row_metric_of(g, j, &m);
        if (g->moving[k0])
            sig_t += g->sigma[k0] * hy;
        /* planar: the cross-section (m^2); axisymmetric: the ring volume
         * 2 pi integral r dr dz (m^3) */
        for (int i = g->ix0; i < g->ix1; i++) /* within the domain */
            if (g->moving[k0 + (size_t)i] && g->sigma[k0 + (size_t)i] > 0.0)
                area += m.ring * m.ey * (g->x[i + 1] - g->x[i]);
    }
    double sgn = v > 0 ? 1.0 : (v < 0 ? -1.0 : 0.0);
    f->speed = v;
    f->force_x = n.fx;
    f->force_y = n.fy;
    f->drag = -n.fx * sgn;
    f->loss = n.loss;
    f->j_peak = n.j_peak;
    f->loss_density_peak = n.q_peak;
    f->loss_density_mean = area > 0 ? n.loss / area : 0.0;
    f->conductor_area = area;
    f->low_speed_drag = fabs(v) * lowspeed_slope;
    f->drag_per_speed = v != 0.0 ? f->drag / fabs(v) : NAN;
    f->drag_error = f->force_y_error = f->loss_error = NAN;
    f->magnetic_reynolds = EDDY_MU0 * sig_t * fabs(v);
    /* on the dominant wavelength of the sources: mu0 sigma |v| / k, with the
     * band's mean conductivity (sigma t / t) */
    double t_band = g->jm1 > g->jm0 ? g->y[g->jm1] - g->y[g->jm0] : 0.0;
    f->magnetic_reynolds_wave = t_band > 0 && g->k_dominant > 0
                                    ? EDDY_MU0 * (sig_t / t_band) * fabs(v) / g->k_dominant
                                    : NAN;
    f->lorentz_x = n.fx;
    f->lorentz_y = n.fy;
    stress_and_method(g, a, sgn, f);
    if (!isfinite(n.fx) || !isfinite(n.fy) || !isfinite(n.loss))
        return EDDY_RAISE(err, EDDY_ERR_NUMERIC, "non-finite force or loss at %g m/s", v);
    return EDDY_OK;
}

eddy_status post_current_density(const mesh_grid *g, const double *a, double v, double *jz,
                                 eddy_error *err)
{
    size_t nn = (size_t)g->nx * (size_t)g->ny;
    double *area = calloc(nn, sizeof *area);
    if (area == NULL)
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
    for (size_t k = 0; k < nn; k++)
        jz[k] = 0.0;
    nodal_sums n;
    nodal_forces(g, a, v, 1, NULL, &n, jz, area);
    for (int j = 0; j < g->ny; j++) {
        size_t row = (size_t)g->nx * (size_t)j;
        if (g->x_periodic) { /* the copy node i = nx-1 is node 0 */
            jz[row + (size_t)g->nx - 1] = jz[row];
            area[row + (size_t)g->nx - 1] = area[row];
        }
        for (int i = 0; i < g->nx; i++)
            if (area[row + (size_t)i] > 0.0)
                jz[row + (size_t)i] /= area[row + (size_t)i];
    }
    free(area);
    return EDDY_OK;
}

/* Index of the cell interval holding t in v[0..n-1] (clamped), or -1. */
static int find_interval(const double *v, int n, double t)
{
    if (!(t >= v[0] && t <= v[n - 1]))
        return -1;
    int lo = 0, hi = n - 1;
    while (hi - lo > 1) {
        int mid = (lo + hi) / 2;
        if (v[mid] <= t)
            lo = mid;
        else
            hi = mid;
    }
    return lo;
}

eddy_status post_field_at(const mesh_grid *g, const double *a, double x, double y, double *bx,
                          double *by)
{
    int i = find_interval(g->x, g->nx, x), j = find_interval(g->y, g->ny, y);
    if (i < 0 || j < 0)
        return EDDY_RAISE(NULL, EDDY_ERR_INPUT, "point outside the grid");
    double hx = g->x[i + 1] - g->x[i], hy = g->y[j + 1] - g->y[j], c[4], dadx, dady;
    corners(g, a, i, j, c);
    if (g->geometry == MESH_AXISYMMETRIC) { /* bx = B_z, by = B_r */
        sol_row_metric m;
        sol_row_metric_of(g, j, &m);
        double eta = 0.5 * (y * y - g->y[j] * g->y[j]) / m.ey;
        field_rz_local(c, hx, m.ey, (x - g->x[i]) / hx, eta, y, bx, by);
        return EDDY_OK;
    }
    grad_local(c, hx, hy, (x - g->x[i]) / hx, (y - g->y[j]) / hy, &dadx, &dady);
    *bx = dady;
    *by = -dadx;
    return EDDY_OK;
}

/* The estimated error of the finest of three values on grids h, 2h, 4h
 * (f0, f1, f2; f2 NAN when only two grids exist). */
static double richardson_one(double f0, double f1, double f2)
{
    double d1 = f0 - f1;
    if (!isfinite(f2))
        return fabs(d1) / 3.0; /* two grids: the scheme's order 2 */
    double d2 = f1 - f2;
    if (d1 == 0.0 && d2 == 0.0)
        return 0.0;
    if (d1 * d2 > 0.0) { /* monotone: the observed order, from 1 to 2 */
        double p = log2(d2 / d1);
        p = p < 1.0 ? 1.0 : (p > 2.0 ? 2.0 : p);
        double q = exp2(p) - 1.0;
        /* what the pair (h, 2h) and the pair (2h, 4h) say of the error at h */
        return fmax(fabs(d1) / q, fabs(d2) / (q * exp2(p)));
    }
    /* not monotone (two error terms of opposite signs): first order from
     * either pair, the larger */
    return fmax(fabs(d1), 0.5 * fabs(d2));
}

void post_richardson(post_forces *fine, const post_forces *coarse, const post_forces *coarser)
{
    double nan = NAN;
    fine->drag_error = richardson_one(fine->drag, coarse->drag, coarser ? coarser->drag : nan);
    fine->force_y_error =
        richardson_one(fine->force_y, coarse->force_y, coarser ? coarser->force_y : nan);
    fine->loss_error = richardson_one(fine->loss, coarse->loss, coarser ? coarser->loss : nan);
}

eddy_status post_forces_pass(const mesh_grid *g, const double *a, const double *i_node,
                             double v, double loss, post_forces *f, eddy_error *err)
{
    memset(f, 0, sizeof *f);
    size_t nx = (size_t)g->nx;
    int ncx = g->ncx, i_end = g->x_periodic ? ncx : ncx + 1;
    double fx = 0.0, fy = 0.0;
    for (int jn = 0; jn < g->ny; jn++)
        for (int i = 0; i < i_end; i++) {
            size_t k = (size_t)i + nx * (size_t)jn;
            if (i_node[k] == 0.0)
                continue;
            /* dA/dx central across the node, dA/dy the mean of the one-sided
             * differences: as for the steady current (nodal_forces) */
            int il = i > 0 ? i - 1 : (g->x_periodic ? ncx - 1 : 0);
            int ir = i < ncx ? i + 1 : ncx;
            double xl = i > 0 || g->x_periodic ? mesh_edge_x(g, il) : 0.0;
            double xr = i < ncx ? mesh_edge_x(g, i) : 0.0;
            size_t row = nx * (size_t)jn;
            double aw = i > 0 || g->x_periodic ? a[(size_t)il + row] : a[k];
            double ae = a[(size_t)ir + row];
            double dadx = xl + xr > 0 ? (ae - aw) / (xl + xr) : 0.0;
            fx += i_node[k] * dadx;
            fy += i_node[k] * node_dady(g, a, i, jn);
        }
    double sgn = v > 0 ? 1.0 : (v < 0 ? -1.0 : 0.0);
    f->speed = v;
    f->force_x = f->lorentz_x = fx;
    f->force_y = f->lorentz_y = fy;
    f->drag = -fx * sgn;
    f->loss = loss;
    f->low_speed_drag = f->drag_per_speed = NAN;
    f->drag_error = f->force_y_error = f->loss_error = NAN;
    f->magnetic_reynolds = f->magnetic_reynolds_wave = NAN;
    f->heating_rate = f->rpm = f->torque = f->power = f->drag_end_corrected = NAN;
    stress_and_method(g, a, sgn, f);
    if (!isfinite(fx) || !isfinite(fy) || !isfinite(loss))
        return EDDY_RAISE(err, EDDY_ERR_NUMERIC, "non-finite force or loss in a pass step");
    return EDDY_OK;
}
