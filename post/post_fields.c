/*
 * post_fields.c - node fields of a solution, VTK XML RectilinearGrid output
 * and line profiles.
 *
 * Node B: along a grid line through a node the bilinear interpolant of A is
 * linear on each edge, so the corner derivative of every cell at the node is
 * a one-sided difference along an edge: dA/dy from the cells above the node
 * is D+ = (A[j+1] - A[j]) / h+, from the cells below D- = (A[j] - A[j-1]) / h-
 * (the same for the cells left and right of the node).  The weighted mean
 * (h- D+ + h+ D-) / (h- + h+) is the derivative of the parabola through the
 * three nodes, so it is exact for quadratic A: second order on graded grids
 * (the plain mean of D+ and D- is only first order when h+ != h-).
 *
 * The VTK layout follows the "XML File Formats" section of the VTK
 * file-format documentation (docs.vtk.org, "VTK File Formats"), dataset type
 * RectilinearGrid.
 */
#include "post/post.h"
#include "post/post.h"

#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define PROFILE_MAX_POINTS 10000000

/* ------------------------------------------------------------------------ */
/* Allocation                                                                */
/* ------------------------------------------------------------------------ */

eddy_status post_fields_alloc(const mesh_grid *g, post_fields **out, eddy_error *err)
{
    if (out == NULL)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "post_fields_alloc: no output pointer");
    *out = NULL;
    if (g == NULL || g->nx < 2 || g->ny < 2)
        return EDDY_RAISE(err, EDDY_ERR_INPUT,
                          "post_fields_alloc: no grid, or fewer than 2 x 2 nodes");
    post_fields *f = calloc(1, sizeof *f);
    if (f == NULL)
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
    size_t nn = (size_t)g->nx * (size_t)g->ny, nc = (size_t)g->ncx * (size_t)g->ncy;
    f->nx = g->nx;
    f->ny = g->ny;
    f->ncx = g->ncx;
    f->ncy = g->ncy;
    f->bx = calloc(nn, sizeof *f->bx);
    f->by = calloc(nn, sizeof *f->by);
    f->bmag = calloc(nn, sizeof *f->bmag);
    f->jz = calloc(nn, sizeof *f->jz);
    f->loss = calloc(nn, sizeof *f->loss);
    f->region = calloc(nc, sizeof *f->region);
    if (f->bx == NULL || f->by == NULL || f->bmag == NULL || f->jz == NULL || f->loss == NULL ||
        f->region == NULL) {
        post_fields_free(f);
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory for the node fields (%zu nodes)", nn);
    }
    *out = f;
    return EDDY_OK;
}

void post_fields_free(post_fields *f)
{
    if (f == NULL)
        return;
    free(f->bx);
    free(f->by);
    free(f->bmag);
    free(f->jz);
    free(f->loss);
    free(f->region);
    free(f);
}

static int same_size(const mesh_grid *g, const post_fields *f)
{
    return f->nx == g->nx && f->ny == g->ny && f->ncx == g->ncx && f->ncy == g->ncy;
}

/* ------------------------------------------------------------------------ */
/* Node fields                                                               */
/* ------------------------------------------------------------------------ */

/* Derivative at the middle node from the one-sided differences dp (over the
 * step hp after the node) and dm (over hm before it); has_p / has_m say
 * which exist. */
static double node_derivative(int has_m, double dm, double hm, int has_p, double dp, double hp)
{
    if (has_m && has_p)
        return (hm * dp + hp * dm) / (hm + hp);
    return has_p ? dp : (has_m ? dm : 0.0);
}

/* Is cell k a moving conductor (where the solver has an induced current)? */
static int moving_conductor(const mesh_grid *g, size_t k)
{
    return g->moving[k] && g->sigma[k] > 0.0;
}

eddy_status post_fields_compute(const mesh_grid *g, const double *a, double v, post_fields *f,
                                eddy_error *err)
{
    if (g == NULL || a == NULL || f == NULL)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "post_fields_compute: NULL argument");
    if (!same_size(g, f))
        return EDDY_RAISE(err, EDDY_ERR_INPUT,
                          "post_fields_compute: fields for %d x %d nodes, grid has %d x %d",
                          f->nx, f->ny, g->nx, g->ny);
    const int nx = g->nx, ny = g->ny, ncx = g->ncx, per = g->x_periodic != 0;
    const int rz = g->geometry == MESH_AXISYMMETRIC;
    const size_t snx = (size_t)nx;
    f->speed = v;

    /* B.  With periodic x sides, node 0's left neighbour is node nx-2 (node
     * nx-1 is the copy of node 0), over the step of cell ncx-1. */
    int i_last = per ? nx - 2 : nx - 1;
    for (int j = 0; j < ny; j++) {
        size_t row = snx * (size_t)j;
        for (int i = 0; i <= i_last; i++) {
            size_t k = (size_t)i + row;
            /* dA/dy along the column (axisymmetric: dpsi/ds, s = r^2 / 2,
             * the steps being the rows' metric ey = s_j+1 - s_j) */
            int has_m = j > 0, has_p = j < ny - 1;
            double hm = has_m ? g->y[j] - g->y[j - 1] : 0.0;
            double hp = has_p ? g->y[j + 1] - g->y[j] : 0.0;
            if (rz) {
                sol_row_metric mm, mp;
                if (has_m) {
                    sol_row_metric_of(g, j - 1, &mm);
                    hm = mm.ey;
                }
                if (has_p) {
                    sol_row_metric_of(g, j, &mp);
                    hp = mp.ey;
                }
            }
            double dm = has_m ? (a[k] - a[k - snx]) / hm : 0.0;
            double dp = has_p ? (a[k + snx] - a[k]) / hp : 0.0;
            double dady = node_derivative(has_m, dm, hm, has_p, dp, hp);
            /* dA/dx along the row */
            int il = i > 0 ? i - 1 : (per ? nx - 2 : -1);  /* left node  */
            int ir = i < nx - 1 ? i + 1 : -1;              /* right node */
            double hxm = 0.0, hxp = 0.0, dxm = 0.0, dxp = 0.0;
            if (il >= 0) {
                hxm = i > 0 ? g->x[i] - g->x[i - 1] : g->x[ncx] - g->x[ncx - 1];
                dxm = (a[k] - a[(size_t)il + row]) / hxm;
            }
            if (ir >= 0) {
                hxp = g->x[i + 1] - g->x[i];
                dxp = (a[(size_t)ir + row] - a[k]) / hxp;
            }
            double dadx = node_derivative(il >= 0, dxm, hxm, ir >= 0, dxp, hxp);
            if (rz) /* B_z = dpsi/ds, B_r = -(1/r) dpsi/dz (0 on the axis) */
                dadx = g->y[j] > 0.0 ? dadx / g->y[j] : 0.0;
            f->bx[k] = dady;
            f->by[k] = -dadx;
            f->bmag[k] = hypot(dady, dadx);
        }
        if (per) {
            size_t k0 = row, kc = row + snx - 1;
            f->bx[kc] = f->bx[k0];
            f->by[kc] = f->by[k0];
            f->bmag[kc] = f->bmag[k0];
        }
    }

    /* J */
    eddy_status s = post_current_density(g, a, v, f->jz, err);
    if (s != EDDY_OK)
        return s;

    /* Loss density: J^2 times the quarter-area-weighted mean of 1/sigma over
     * the moving conductor cells touching the node. */
    for (int j = 0; j < ny; j++) {
        size_t row = snx * (size_t)j;
        for (int i = 0; i < nx; i++) {
            size_t k = (size_t)i + row;
            double area = 0.0, rho_area = 0.0;
            for (int dj = -1; dj <= 0; dj++) {
                int cj = j + dj;
                if (cj < 0 || cj >= g->ncy)
                    continue;
                for (int di = -1; di <= 0; di++) {
                    int ci = i + di;
                    if (per) { /* cells across the periodic sides */
                        if (ci < 0)
                            ci = ncx - 1;
                        else if (ci >= ncx)
                            ci = 0;
                    } else if (ci < 0 || ci >= ncx) {
                        continue;
                    }
                    size_t kc = (size_t)ci + (size_t)ncx * (size_t)cj;
                    if (!moving_conductor(g, kc))
                        continue;
                    double q = 0.25 * (g->x[ci + 1] - g->x[ci]) * (g->y[cj + 1] - g->y[cj]);
                    area += q;
                    rho_area += q / g->sigma[kc];
                }
            }
            f->loss[k] = area > 0.0 ? f->jz[k] * f->jz[k] * (rho_area / area) : 0.0;
        }
    }

    size_t nc = (size_t)g->ncx * (size_t)g->ncy;
    for (size_t k = 0; k < nc; k++)
        f->region[k] = g->region[k];

    size_t nn = snx * (size_t)ny;
    for (size_t k = 0; k < nn; k++)
        if (!isfinite(f->bmag[k]) || !isfinite(f->jz[k]) || !isfinite(f->loss[k]))
            return EDDY_RAISE(err, EDDY_ERR_NUMERIC,
                              "non-finite field at node (%zu, %zu) at %g m/s", k % snx, k / snx, v);
    return EDDY_OK;
}

/* ------------------------------------------------------------------------ */
/* VTK XML RectilinearGrid                                                   */
/* ------------------------------------------------------------------------ */

#define VTR_PER_LINE 6

/* <DataArray> of n tuples of ncomp components; value(k, c) via the getter. */
typedef double (*vtr_getter)(const void *ctx, size_t k, int c);

static void vtr_array(eddy_text *b, const char *indent, const char *name, int ncomp, size_t n,
                      const char *fmt, vtr_getter get, const void *ctx)
{
    eddy_text_printf(b, "%s<DataArray type=\"Float64\" Name=\"%s\"", indent, name);
    if (ncomp > 1)
        eddy_text_printf(b, " NumberOfComponents=\"%d\"", ncomp);
    eddy_text_printf(b, " format=\"ascii\">\n");
    size_t total = n * (size_t)ncomp;
    for (size_t m = 0; m < total; m++) {
        if (m % VTR_PER_LINE == 0)
            eddy_text_printf(b, "%s  ", indent);
        eddy_text_printf(b, fmt, get(ctx, m / (size_t)ncomp, (int)(m % (size_t)ncomp)));
        eddy_text_printf(b, (m % VTR_PER_LINE == VTR_PER_LINE - 1 || m + 1 == total) ? "\n" : " ");
    }
    eddy_text_printf(b, "%s</DataArray>\n", indent);
}

static double get_plain(const void *ctx, size_t k, int c)
{
    (void)c;
    return ((const double *)ctx)[k];
}

static double get_b(const void *ctx, size_t k, int c)
{
    const post_fields *f = ctx;
    return c == 0 ? f->bx[k] : (c == 1 ? f->by[k] : 0.0);
}

static double get_zero(const void *ctx, size_t k, int c)
{
    (void)ctx;
    (void)k;
    (void)c;
    return 0.0;
}

/* Metres per display length unit, or 0 when the label is not known. */
static double unit_metres(const char *label)
{
    static const struct {
        const char *name;
        double m;
    } units[] = {{"m", 1.0}, {"cm", 1e-2}, {"mm", 1e-3}, {"um", 1e-6}};
    for (size_t k = 0; k < sizeof units / sizeof units[0]; k++)
        if (strcmp(label, units[k].name) == 0)
            return units[k].m;
    return 0.0;
}

eddy_status post_write_vtr(const char *path, const mesh_grid *g, const double *a,
                           const post_fields *f, double speed, const char *length_unit_label,
                           eddy_error *err)
{
    if (path == NULL || g == NULL || a == NULL || f == NULL)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "post_write_vtr: NULL argument");
    if (!same_size(g, f))
        return EDDY_RAISE(err, EDDY_ERR_INPUT,
                          "post_write_vtr: fields of %d x %d nodes for a grid of %d x %d", f->nx,
                          f->ny, g->nx, g->ny);
    size_t nn = (size_t)g->nx * (size_t)g->ny, nc = (size_t)g->ncx * (size_t)g->ncy;
    if (!isfinite(speed))
        return EDDY_RAISE(err, EDDY_ERR_NUMERIC, "%s: non-finite speed", path);
    for (size_t k = 0; k < nn; k++)
        if (!isfinite(a[k]) || !isfinite(f->bx[k]) || !isfinite(f->by[k]) ||
            !isfinite(f->bmag[k]) || !isfinite(f->jz[k]) || !isfinite(f->loss[k]))
            return EDDY_RAISE(err, EDDY_ERR_NUMERIC, "%s: non-finite value at node %zu", path, k);

    eddy_text b = {0};
    int ext_x = g->nx - 1, ext_y = g->ny - 1;
    eddy_text_printf(&b, "<?xml version=\"1.0\"?>\n");
    if (length_unit_label != NULL) {
        /* keep the comment text to a safe set (no "--" inside a comment) */
        char safe[64];
        size_t n = 0;
        for (const char *c = length_unit_label; *c != '\0' && n + 1 < sizeof safe; c++, n++) {
            int ok = (*c >= 'A' && *c <= 'Z') || (*c >= 'a' && *c <= 'z') ||
                     (*c >= '0' && *c <= '9') || *c == '.' || *c == '_' || *c == '/' || *c == ' ';
            safe[n] = ok ? *c : '_';
        }
        safe[n] = '\0';
        eddy_text_printf(&b, "<!-- eddy2d %s: coordinates in metres; case length unit: %s -->\n",
                  EDDY_VERSION, safe);
    }
    eddy_text_printf(&b, "<VTKFile type=\"RectilinearGrid\" version=\"0.1\" "
                  "byte_order=\"LittleEndian\">\n");
    eddy_text_printf(&b, "  <RectilinearGrid WholeExtent=\"0 %d 0 %d 0 0\">\n", ext_x, ext_y);
    eddy_text_printf(&b, "    <FieldData>\n");
    eddy_text_printf(&b,
              "      <DataArray type=\"Float64\" Name=\"speed_m_per_s\" NumberOfTuples=\"1\" "
              "format=\"ascii\">\n        %.17g\n      </DataArray>\n",
              speed);
    double um = length_unit_label != NULL ? unit_metres(length_unit_label) : 0.0;
    if (um > 0.0)
        eddy_text_printf(&b,
                  "      <DataArray type=\"Float64\" Name=\"metres_per_case_length_unit\" "
                  "NumberOfTuples=\"1\" format=\"ascii\">\n        %.17g\n      </DataArray>\n",
                  um);
    eddy_text_printf(&b, "    </FieldData>\n");
    eddy_text_printf(&b, "    <Piece Extent=\"0 %d 0 %d 0 0\">\n", ext_x, ext_y);

    const char *in = "        ";
    /* axisymmetric: the file's x is z and its y is r; B_T holds (B_z, B_r, 0) */
    int rz = g->geometry == MESH_AXISYMMETRIC;
    eddy_text_printf(&b, "      <PointData Scalars=\"B_magnitude_T\" Vectors=\"B_T\">\n");
    vtr_array(&b, in, rz ? "psi_Wb_per_rad" : "A_Wb_per_m", 1, nn, "%.9g", get_plain, a);
    vtr_array(&b, in, "B_T", 3, nn, "%.9g", get_b, f);
    vtr_array(&b, in, "B_magnitude_T", 1, nn, "%.9g", get_plain, f->bmag);
    vtr_array(&b, in, rz ? "Jphi_A_per_m2" : "Jz_A_per_m2", 1, nn, "%.9g", get_plain, f->jz);
    vtr_array(&b, in, "loss_density_W_per_m3", 1, nn, "%.9g", get_plain, f->loss);
    eddy_text_printf(&b, "      </PointData>\n");

    eddy_text_printf(&b, "      <CellData Scalars=\"region_id\">\n");
    eddy_text_printf(&b, "%s<DataArray type=\"Int32\" Name=\"region_id\" format=\"ascii\">\n", in);
    for (size_t k = 0; k < nc; k++) {
        if (k % 20 == 0)
            eddy_text_printf(&b, "%s  ", in);
        eddy_text_printf(&b, "%d%s", f->region[k], (k % 20 == 19 || k + 1 == nc) ? "\n" : " ");
    }
    eddy_text_printf(&b, "%s</DataArray>\n", in);
    eddy_text_printf(&b, "      </CellData>\n");

    eddy_text_printf(&b, "      <Coordinates>\n");
    vtr_array(&b, in, rz ? "axial_z_m" : "x_m", 1, (size_t)g->nx, "%.15g", get_plain, g->x);
    vtr_array(&b, in, rz ? "radius_r_m" : "y_m", 1, (size_t)g->ny, "%.15g", get_plain, g->y);
    vtr_array(&b, in, rz ? "unused_m" : "z_m", 1, 1, "%.15g", get_zero, NULL);
    eddy_text_printf(&b, "      </Coordinates>\n");
    eddy_text_printf(&b, "    </Piece>\n");
    eddy_text_printf(&b, "  </RectilinearGrid>\n");
    eddy_text_printf(&b, "</VTKFile>\n");

    if (b.oom) {
        free(b.p);
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "%s: out of memory building the file", path);
    }
    eddy_status s = eddy_write_atomic(path, b.p, b.len, err);
    free(b.p);
    return s;
}

/* ------------------------------------------------------------------------ */
/* Line profile                                                              */
/* ------------------------------------------------------------------------ */

/* Index of the cell interval holding t in v[0..n-1] (the one starting at t on
 * a node, the last one at v[n-1]), or -1 outside. */
static int cell_interval(const double *v, int n, double t)
{
    if (!(t >= v[0] && t <= v[n - 1]))
        return -1;
    int lo = 0, hi = n - 1;
    while (hi - lo > 1) {
        int mid = lo + (hi - lo) / 2;
        if (v[mid] <= t)
            lo = mid;
        else
            hi = mid;
    }
    return lo;
}

/* J_z at (x, y) from the node values jz, within a moving conductor cell
 * holding the point (see post_line_profile). */
static double profile_current(const mesh_grid *g, const double *jz, double x, double y)
{
    int i = cell_interval(g->x, g->nx, x), j = cell_interval(g->y, g->ny, y);
    if (i < 0 || j < 0)
        return 0.0;
    /* candidate cells: the one found first, then neighbours sharing the point
     * when it lies on a grid line */
    int ci[2] = {i, -1}, cj[2] = {j, -1};
    if (x == g->x[i] && i > 0)
        ci[1] = i - 1;
    else if (x == g->x[i + 1] && i + 1 < g->ncx)
        ci[1] = i + 1;
    if (y == g->y[j] && j > 0)
        cj[1] = j - 1;
    else if (y == g->y[j + 1] && j + 1 < g->ncy)
        cj[1] = j + 1;
    for (int q = 0; q < 2; q++)
        for (int p = 0; p < 2; p++) {
            int ii = ci[p], jj = cj[q];
            if (ii < 0 || jj < 0)
                continue;
            size_t kc = (size_t)ii + (size_t)g->ncx * (size_t)jj;
            if (!moving_conductor(g, kc))
                continue;
            double hx = g->x[ii + 1] - g->x[ii], hy = g->y[jj + 1] - g->y[jj];
            double s = (x - g->x[ii]) / hx, t = (y - g->y[jj]) / hy;
            size_t nx = (size_t)g->nx, k00 = (size_t)ii + nx * (size_t)jj;
            return (1.0 - s) * (1.0 - t) * jz[k00] + s * (1.0 - t) * jz[k00 + 1] +
                   (1.0 - s) * t * jz[k00 + nx] + s * t * jz[k00 + nx + 1];
        }
    return 0.0;
}

eddy_status post_line_profile(const mesh_grid *g, const double *a, double v, const double p0[2],
                              const double p1[2], int npts, char **csv, size_t *len,
                              eddy_error *err)
{
    if (csv == NULL)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "post_line_profile: no output pointer");
    *csv = NULL;
    if (len != NULL)
        *len = 0;
    if (g == NULL || a == NULL || p0 == NULL || p1 == NULL)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "post_line_profile: NULL argument");
    if (npts < 2 || npts > PROFILE_MAX_POINTS)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "line profile: %d points (need 2 to %d)", npts,
                          PROFILE_MAX_POINTS);
    if (!isfinite(p0[0]) || !isfinite(p0[1]) || !isfinite(p1[0]) || !isfinite(p1[1]))
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "line profile: non-finite end point");
    double dx = p1[0] - p0[0], dy = p1[1] - p0[1];
    if (dx == 0.0 && dy == 0.0)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "line profile: the segment has zero length");
    if (dx != 0.0 && dy != 0.0)
        return EDDY_RAISE(err, EDDY_ERR_INPUT,
                          "line profile: the segment (%g, %g) -> (%g, %g) m is neither "
                          "horizontal nor vertical",
                          p0[0], p0[1], p1[0], p1[1]);
    const double *ends[2] = {p0, p1};
    for (int e = 0; e < 2; e++)
        if (!(ends[e][0] >= g->x[0] && ends[e][0] <= g->x[g->nx - 1] && ends[e][1] >= g->y[0] &&
              ends[e][1] <= g->y[g->ny - 1]))
            return EDDY_RAISE(err, EDDY_ERR_INPUT,
                              "line profile: end point (%g, %g) m is outside the grid "
                              "[%g, %g] x [%g, %g] m",
                              ends[e][0], ends[e][1], g->x[0], g->x[g->nx - 1], g->y[0],
                              g->y[g->ny - 1]);

    size_t nn = (size_t)g->nx * (size_t)g->ny;
    double *jz = malloc(nn * sizeof *jz);
    if (jz == NULL)
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
    eddy_status s = post_current_density(g, a, v, jz, err);
    if (s != EDDY_OK) {
        free(jz);
        return s;
    }

    eddy_text b = {0};
    int rz = g->geometry == MESH_AXISYMMETRIC;
    eddy_text_printf(&b, rz ? "s_m,r_m,z_m,Br_T,Bz_T,Jphi_A_per_m2\n"
                            : "s_m,x_m,y_m,Bx_T,By_T,Jz_A_per_m2\n");
    double length = fabs(dx) + fabs(dy); /* one of them is 0 */
    double lo_x = fmin(p0[0], p1[0]), hi_x = fmax(p0[0], p1[0]);
    double lo_y = fmin(p0[1], p1[1]), hi_y = fmax(p0[1], p1[1]);
    for (int k = 0; k < npts && s == EDDY_OK; k++) {
        double t = (double)k / (double)(npts - 1), x, y;
        if (k == npts - 1) {
            x = p1[0];
            y = p1[1];
        } else { /* stay on the segment despite rounding */
            x = fmin(fmax(p0[0] + t * dx, lo_x), hi_x);
            y = fmin(fmax(p0[1] + t * dy, lo_y), hi_y);
        }
        double bx, by;
        s = post_field_at(g, a, x, y, &bx, &by);
        if (s != EDDY_OK) {
            s = EDDY_RAISE(err, s, "line profile: point (%g, %g) m outside the grid", x, y);
            break;
        }
        double j = profile_current(g, jz, x, y);
        if (rz) /* grid x is z, y is r; post_field_at gives (B_z, B_r) */
            eddy_text_printf(&b, "%.9g,%.9g,%.9g,%.9g,%.9g,%.9g\n", t * length, y, x, by, bx, j);
        else
            eddy_text_printf(&b, "%.9g,%.9g,%.9g,%.9g,%.9g,%.9g\n", t * length, x, y, bx, by, j);
    }
    free(jz);
    if (s == EDDY_OK && b.oom)
        s = EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory for the line profile");
    if (s != EDDY_OK) {
        free(b.p);
        return s;
    }
    *csv = b.p;
    if (len != NULL)
        *len = b.len;
    return EDDY_OK;
}
