/*
 * sol_metric.c - the one place where the geometry enters the box
 * integration: the weights of the half faces of a cell row.
 *
 * Planar: the half faces have their plain widths (hy/2 for the x half faces,
 * hx/2 for the y half faces) and the differences across a row are over its
 * height hy; on a grid with open y sides, the rows mapped to infinity take
 * the mapping's widths and edge lengths (mesh_grid wyl, wyr, ey; the x
 * direction's mapping is per column, mesh_edge_x and mesh_dual_x).
 *
 * Axisymmetric (r-z, motion along z; grid x is z, grid y is r).  With
 * psi = r A_phi, B_r = -(1/r) dpsi/dz and B_z = (1/r) dpsi/dr, and Ampere's
 * law curl H = J in the meridian half-plane (Stokes over a dual cell: the
 * circulation of H along its boundary is the ring current through it,
 * integrated over dr dz, not r dr dz) becomes
 *
 *   -d/dz((nu/r) dpsi/dz) - d/dr((nu/r) dpsi/dr) + (sigma v / r) dpsi/dz
 *       = J_phi + d/dz(nu Br_r) - d/dr(nu Br_z),
 *
 * the planar equation with nu/r and sigma v/r in place of nu and sigma v and
 * the same sources.  Box integration over the same dual cells:
 *   - a z half face (normal z) spanning r_a..r_b inside one cell carries
 *     integral (nu/r) dpsi/dz dr = nu (dpsi/dz) ln(r_b / r_a), i.e. the planar
 *     flux with the width r_b - r_a replaced by ln(r_b / r_a) (dpsi/dz taken
 *     constant across the half face, as the planar scheme takes dA/dx);
 *   - an r half face (normal r) of length hz/2 carries the radial flux
 *     q = (nu/r) dpsi/dr, taken constant across the row (the 1D conservative
 *     solution of d/dr((nu/r) dpsi/dr) = 0): psi_j+1 - psi_j =
 *     q integral r dr / nu, so the flux is (hz/2) nu (psi_j - psi_j+1) / ey with
 *     ey = integral r dr = (r_j+1^2 - r_j^2) / 2 = hr r_m, finite on the axis
 *     row (ey = r_1^2 / 2) and exact for psi = r^2 (a uniform B_z);
 *   - convection: (sigma v/r) dpsi/dz = d/dz((sigma v/r) psi) in a row of a
 *     moving region, with the same 1/r as the diffusion, so the cell Peclet
 *     number (sigma v/r) hz / (nu/r) = sigma v hz / nu is the planar one and
 *     the exponentially fitted flux is the planar one times the same
 *     ln(r_b / r_a);
 *   - sources (J_phi on the quarter cells, the magnetisation as the boundary
 *     flux of nu Br) are the planar ones: Stokes in the meridian plane.
 * On the axis psi = 0 (regularity: A_phi is odd in r), a Dirichlet side like
 * the planar zero box, so nothing divides by r = 0: the lower half of the
 * axis row only joins the two axis corners, which are not unknowns, and gets
 * the width 0.  Integrals per radian times 2 pi give the whole ring.
 */
#include "solver/sol.h"

#include <math.h>

void sol_row_metric_of(const mesh_grid *g, int j, sol_row_metric *m)
{
    double r0 = g->y[j], r1 = g->y[j + 1], hy = r1 - r0;
    if (g->geometry != MESH_AXISYMMETRIC) {
        if (g->ey != NULL) { /* open y sides: the mapping's metric (mesh_grid) */
            m->wx[0] = g->wyl[j];
            m->wx[1] = g->wyr[j];
            m->ey = g->ey[j];
        } else {
            m->wx[0] = m->wx[1] = 0.5 * hy;
            m->ey = hy;
        }
        m->ring = 1.0;
        return;
    }
    double rm = 0.5 * (r0 + r1);
    m->wx[0] = r0 > 0.0 ? log(rm / r0) : 0.0;
    m->wx[1] = log(r1 / rm);
    m->ey = hy * rm; /* (r1^2 - r0^2) / 2 without cancellation */
    m->ring = 2.0 * EDDY_PI;
}
