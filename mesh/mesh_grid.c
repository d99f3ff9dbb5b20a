/*
 * mesh_grid.c - the graded tensor-product grid and its cell materials.
 *
 * Each axis is meshed on its own.  Grid lines lie on every region edge (the
 * "breakpoints").  A size function h(p) along the axis is the minimum over
 * "features" (the extent of a region or a surface, each with a fine size
 * h_f) of h_f + (growth - 1) * distance(p, feature), capped at max_size, so
 * that neighbouring cells differ by about the growth ratio.  Each interval
 * between breakpoints receives N = ceil(integral of dp / h(p)) cells placed
 * by equidistributing that integral, so the grading is smooth across
 * breakpoints.
 *
 * Fine sizes (named constants below):
 *  - every region: extent / CELLS_ACROSS_REGION across it (at least 4 cells);
 *  - every gap between two region edges: at least CELLS_ACROSS_GAP cells;
 *  - the field scale w the conductor sees: the narrowest source (magnet or
 *    coil) width, or twice the smallest source-to-conductor distance if
 *    larger; the dominant spatial harmonic is k = pi / w;
 *  - the surfaces of moving conductors, in y: skin depth / SKIN_CELLS, with
 *    the skin depth of that harmonic at the highest speed of the case:
 *    delta = sqrt(2 / (k |v| mu0 mu_r sigma))   (omega = k v);
 *  - in x, over the sources' x-range widened by that distance (the footprint
 *    of the field in the conductor): w / CELLS_PER_SOURCE_WIDTH, and smaller
 *    where needed to keep the cell Peclet number mu0 mu_r sigma |v| h below
 *    PECLET_TARGET, if that costs at most MAX_PECLET_REFINE times more.
 * These defaults were chosen from the refinement studies in tests/ (drag
 * within about 1 % of the converged value on the demo and test cases).
 * A saturable material (B-H curve) is meshed as a linear one with the
 * initial permeability of its curve; its cells record their curve (bh_cell)
 * for the nonlinear solve.
 */
#include "mesh/mesh.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#define CELLS_ACROSS_REGION 12.0
#define CELLS_ACROSS_GAP 6
#define CELLS_PER_SOURCE_WIDTH 20.0
#define MIN_CELLS_ACROSS 4
#define SKIN_CELLS 4.0
#define DEFAULT_GROWTH 1.2
#define DEFAULT_MAX_FRACTION 0.05 /* default max_size: 1/20 of the larger domain side */
#define PECLET_TARGET 2.0
#define MAX_PECLET_REFINE 4.0
#define MAX_AXIS_NODES 200000

double mesh_factor_bytes(double lu_entries, double n)
{
    if (lu_entries <= 0)
        lu_entries = n * 5.0 * log2(n + 2.0);
    return 1.25 * (16.0 * lu_entries + 200.0 * n);
}

typedef struct {
    double s, e; /* extent (s == e for a surface) */
    double h;    /* fine size there, m */
} feature;

typedef struct {
    feature *f;
    int n, cap;
    double *bp; /* breakpoints */
    int nbp, bcap;
} axis_spec;

static int push_feature(axis_spec *a, double s, double e, double h)
{
    if (!(h > 0) || !isfinite(h))
        return 0;
    if (a->n == a->cap) {
        int cap = a->cap ? 2 * a->cap : 16;
        feature *f = realloc(a->f, (size_t)cap * sizeof *f);
        if (f == NULL)
            return -1;
        a->f = f;
        a->cap = cap;
    }
    a->f[a->n++] = (feature){s, e, h};
    return 0;
}

static int push_bp(axis_spec *a, double p)
{
    if (a->nbp == a->bcap) {
        int cap = a->bcap ? 2 * a->bcap : 16;
        double *b = realloc(a->bp, (size_t)cap * sizeof *b);
        if (b == NULL)
            return -1;
        a->bp = b;
        a->bcap = cap;
    }
    a->bp[a->nbp++] = p;
    return 0;
}

static int cmp_double(const void *pa, const void *pb)
{
    double a = *(const double *)pa, b = *(const double *)pb;
    return (a > b) - (a < b);
}

static double size_at(const axis_spec *a, double p, double growth, double hmax)
{
    double h = hmax;
    for (int k = 0; k < a->n; k++) {
        const feature *f = &a->f[k];
        double d = p < f->s ? f->s - p : (p > f->e ? p - f->e : 0.0);
        double hf = f->h + (growth - 1.0) * d;
        if (hf < h)
            h = hf;
    }
    return h;
}

/* Mesh one axis.  lo, hi: domain; returns the node count (>= 2) in *n and a
 * malloc'ed array in *nodes (NULL if only counting).  Returns 0, or -1 on
 * allocation failure, -2 if more than MAX_AXIS_NODES would be needed. */
static int mesh_axis(axis_spec *a, double lo, double hi, double growth, double hmax,
                     double hmin, double **nodes, int *n)
{
    double len = hi - lo, tol = 1e-9 * len;
    if (push_bp(a, lo) || push_bp(a, hi))
        return -1;
    qsort(a->bp, (size_t)a->nbp, sizeof *a->bp, cmp_double);
    /* clip to the domain, merge near-coincident breakpoints */
    int m = 0;
    for (int k = 0; k < a->nbp; k++) {
        double p = a->bp[k] < lo ? lo : (a->bp[k] > hi ? hi : a->bp[k]);
        if (m > 0 && p - a->bp[m - 1] <= tol)
            continue;
        a->bp[m++] = p;
    }
    a->bp[m - 1] = hi; /* the last one merged into hi */
    a->bp[0] = lo;
    a->nbp = m;
    /* every interval between two region edges (a region, or a gap between
     * regions) gets CELLS_ACROSS_GAP cells at least, through the size
     * function so that the grading stays smooth around it */
    for (int k = 1; k + 2 < m; k++)
        if (push_feature(a, a->bp[k], a->bp[k + 1], (a->bp[k + 1] - a->bp[k]) / CELLS_ACROSS_GAP))
            return -1;
    if (hmin > 0)
        for (int k = 0; k < a->n; k++)
            if (a->f[k].h < hmin)
                a->f[k].h = hmin;

    /* pass 1: counts per interval */
    int total = 1;
    int *cnt = malloc((size_t)(m - 1) * sizeof *cnt);
    if (cnt == NULL)
        return -1;
    for (int k = 0; k + 1 < m; k++) {
        double s = a->bp[k], e = a->bp[k + 1], phi = 0.0, p = s;
        while (p < e) {
            double h = size_at(a, p, growth, hmax);
            double step = h / 8.0;
            if (p + step > e)
                step = e - p;
            double hm = size_at(a, p + 0.5 * step, growth, hmax);
            phi += step / hm;
            p += step;
            if (phi > MAX_AXIS_NODES)
                break;
        }
        int interior = k > 0 && k + 2 < m;
        long nc = (long)ceil(phi * (1.0 - 1e-9));
        if (nc < 1)
            nc = 1;
        if (interior && nc < CELLS_ACROSS_GAP)
            nc = CELLS_ACROSS_GAP;
        if (nc % 2 != 0) /* even: the coarse grid of the family (every other
                          * line, mesh_grid_build_coarse) keeps every region edge */
            nc++;
        if (nc > MAX_AXIS_NODES || total + nc > MAX_AXIS_NODES) {
            free(cnt);
            return -2;
        }
        cnt[k] = (int)nc;
        total += (int)nc;
    }
    *n = total;
    if (nodes == NULL) {
        free(cnt);
        return 0;
    }
    double *x = malloc((size_t)total * sizeof *x);
    if (x == NULL) {
        free(cnt);
        return -1;
    }
    /* pass 2: equidistribute the integral of 1/h in each interval */
    int idx = 0;
    for (int k = 0; k + 1 < m; k++) {
        double s = a->bp[k], e = a->bp[k + 1];
        x[idx++] = s;
        int nc = cnt[k];
        if (nc == 1)
            continue;
        /* integrate again, emitting nodes as the integral passes targets */
        double phi_tot = 0.0, p = s;
        while (p < e) {
            double step = size_at(a, p, growth, hmax) / 8.0;
            if (p + step > e)
                step = e - p;
            phi_tot += step / size_at(a, p + 0.5 * step, growth, hmax);
            p += step;
        }
        double phi = 0.0;
        p = s;
        int emitted = 1;
        while (p < e && emitted < nc) {
            double step = size_at(a, p, growth, hmax) / 8.0;
            if (p + step > e)
                step = e - p;
            double dphi = step / size_at(a, p + 0.5 * step, growth, hmax);
            while (emitted < nc && phi + dphi >= phi_tot * emitted / nc) {
                double t = (phi_tot * emitted / nc - phi) / dphi;
                x[idx++] = p + t * step;
                emitted++;
            }
            phi += dphi;
            p += step;
        }
        while (emitted < nc) { /* rounding at the end: spread what is left */
            x[idx] = x[idx - 1] + 0.5 * (e - x[idx - 1]);
            idx++;
            emitted++;
        }
    }
    x[idx++] = hi;
    free(cnt);
    *nodes = x;
    *n = idx;
    return 0;
}

/* Split every interval of x[0..n-1] into r equal parts. */
static int subdivide(double **nodes, int *n, int r)
{
    if (r <= 1)
        return 0;
    int m = (*n - 1) * r + 1;
    if (m > MAX_AXIS_NODES)
        return -2;
    if (nodes == NULL) {
        *n = m;
        return 0;
    }
    double *x = malloc((size_t)m * sizeof *x), *o = *nodes;
    if (x == NULL)
        return -1;
    for (int k = 0; k + 1 < *n; k++)
        for (int q = 0; q < r; q++)
            x[k * r + q] = o[k] + (o[k + 1] - o[k]) * q / r;
    x[m - 1] = o[*n - 1];
    free(o);
    *nodes = x;
    *n = m;
    return 0;
}

/* Cells of the layer mapped to infinity beyond each open side (times
 * mesh.refine).  Chosen from tests/test_open.c (2026-12-03): with 12, 24, 48
 * and 96 cells the free coil's field error is 0.309, 0.263, 0.255 and
 * 0.254 % (the grid's own error is 0.25 %), the thin-sheet drag against
 * Reitz 1.96, 0.92, 0.67 and 0.61 %; 48 costs 2 x 48 x (nodes along the
 * side) unknowns per open side. */
#define MAP_CELLS 48

/* The metric of one axis (mesh_grid ex, wl, wr), malloc'ed, or NULL. */
typedef struct {
    double *e, *wl, *wr;
    int lo, hi; /* mapped cells below and above the domain */
} axis_map;

static double map_phi(double s) { return s / (1.0 - s); }

/* Add the layers mapped to infinity to the nodes x[0..n-1] of one axis:
 * lo_open, hi_open say which ends are open; m cells each.  The mapping
 * beyond the upper end X is x = X + L s / (1 - s), s = k / m, L = m times the
 * last cell of the domain (so the first mapped cell continues the grading);
 * the lower end is its mirror image.  Fills map (the metric of every cell
 * of the new axis).  With nodes == NULL only counts.  Returns 0 or -1. */
static int add_open_layers(double **nodes, int *n, int lo_open, int hi_open, int m,
                           axis_map *map)
{
    int add_lo = lo_open ? m : 0, add_hi = hi_open ? m : 0;
    int nn = *n + add_lo + add_hi;
    map->lo = add_lo;
    map->hi = add_hi;
    if (nodes == NULL || (add_lo == 0 && add_hi == 0)) {
        *n = nn;
        return 0;
    }
    double *o = *nodes, *x = malloc((size_t)nn * sizeof *x);
    int nc = nn - 1;
    map->e = malloc((size_t)nc * sizeof *map->e);
    map->wl = malloc((size_t)nc * sizeof *map->wl);
    map->wr = malloc((size_t)nc * sizeof *map->wr);
    if (x == NULL || map->e == NULL || map->wl == NULL || map->wr == NULL) {
        free(x);
        return -1;
    }
    for (int k = 0; k < *n; k++)
        x[add_lo + k] = o[k];
    for (int c = 0; c < nc; c++) { /* the domain's own cells */
        map->e[c] = x[c + 1] - x[c];
        map->wl[c] = map->wr[c] = 0.5 * map->e[c];
    }
    double h = 1.0 / m;
    for (int side = 0; side < 2; side++) {
        int add = side == 0 ? add_lo : add_hi;
        if (add == 0)
            continue;
        double X = side == 0 ? o[0] : o[*n - 1];
        double L = m * (side == 0 ? o[1] - o[0] : o[*n - 1] - o[*n - 2]);
        for (int q = 0; q < m; q++) { /* mapped cell q: s from q h (near) to (q+1) h (far) */
            double sn = q * h, sf = (q + 1) * h, sm = (q + 0.5) * h;
            double e = h * L / ((1.0 - sm) * (1.0 - sm));
            double wnear = L * (map_phi(sm) - map_phi(sn));
            double wfar = q + 1 < m ? L * (map_phi(sf) - map_phi(sm)) : 0.0;
            int c = side == 0 ? add_lo - 1 - q : add_lo + *n - 1 + q; /* cell index */
            map->e[c] = e;
            if (side == 0) { /* the far node is the left one */
                map->wl[c] = wfar;
                map->wr[c] = wnear;
                x[c] = q + 1 < m ? X - L * map_phi(sf) : x[c + 1] - e;
            } else {
                map->wl[c] = wnear;
                map->wr[c] = wfar;
                x[c + 1] = q + 1 < m ? X + L * map_phi(sf) : x[c] + e;
            }
        }
    }
    free(o);
    *nodes = x;
    *n = nn;
    return 0;
}

typedef struct {
    axis_spec ax, ay;
    double k_dominant, h_skin;
} grid_plan;

static void plan_free(grid_plan *p)
{
    free(p->ax.f);
    free(p->ax.bp);
    free(p->ay.f);
    free(p->ay.bp);
}

static const mesh_material *region_material(const mesh_case *c, const mesh_region *r)
{
    return r->material >= 0 ? &c->materials[r->material] : NULL;
}

static int is_source(const mesh_case *c, const mesh_region *r)
{
    const mesh_material *m = region_material(c, r);
    return r->jz != 0.0 || (m != NULL && m->br > 0.0);
}

/* Collect breakpoints and features of both axes. */
static int plan_build(const mesh_case *c, grid_plan *p)
{
    memset(p, 0, sizeof *p);
    double vmax = c->mesh.design_speed;
    if (c->pass.present && c->pass.speed > vmax)
        vmax = c->pass.speed;
    for (int k = 0; k < c->nspeed; k++)
        if (fabs(c->speeds[k]) > vmax)
            vmax = fabs(c->speeds[k]);
    /* The field scale the conductor sees: the narrowest source width, or
     * twice the smallest source-to-conductor distance if that is larger
     * (the footprint of a source widens with distance). */
    double wsrc = c->x1 - c->x0, sx0 = INFINITY, sx1 = -INFINITY, gap = INFINITY;
    for (int k = 0; k < c->nreg; k++) {
        const mesh_region *r = &c->regions[k];
        if (!is_source(c, r))
            continue;
        double w = r->box[2] - r->box[0];
        if (w < wsrc)
            wsrc = w;
        if (r->box[0] < sx0)
            sx0 = r->box[0];
        if (r->box[2] > sx1)
            sx1 = r->box[2];
        for (int q = 0; q < c->nreg; q++) {
            const mesh_region *m = &c->regions[q];
            if (!m->moving)
                continue;
            double d = fmax(0.0, fmax(r->box[1] - m->box[3], m->box[1] - r->box[3]));
            if (d < gap)
                gap = d;
        }
    }
    if (isfinite(gap) && 2.0 * gap > wsrc)
        wsrc = fmin(2.0 * gap, c->x1 - c->x0);
    if (!isfinite(gap))
        gap = 0.0;
    p->k_dominant = EDDY_PI / wsrc;
    p->h_skin = INFINITY;
    for (int k = 0; k < c->nreg; k++) {
        const mesh_region *r = &c->regions[k];
        const mesh_material *m = region_material(c, r);
        double w = r->box[2] - r->box[0], h = r->box[3] - r->box[1];
        if (push_bp(&p->ay, r->box[1]) || push_bp(&p->ay, r->box[3]))
            return -1;
        if (m == NULL && r->jz == 0.0) /* air region: only its edges */
        {
            if (push_bp(&p->ax, r->box[0]) || push_bp(&p->ax, r->box[2]))
                return -1;
            continue;
        }
        if (push_feature(&p->ay, r->box[1], r->box[3], h / CELLS_ACROSS_REGION))
            return -1;
        if (r->moving) {
            double sigma = m != NULL ? m->sigma : 0.0, mu_r = m != NULL ? m->mu_r : 1.0;
            if (sigma > 0 && vmax > 0) {
                double delta = sqrt(2.0 / (p->k_dominant * vmax * EDDY_MU0 * mu_r * sigma));
                double hs = delta / SKIN_CELLS;
                if (hs < h / CELLS_ACROSS_REGION) {
                    if (push_feature(&p->ay, r->box[1] - hs, r->box[1] + hs, hs) ||
                        push_feature(&p->ay, r->box[3] - hs, r->box[3] + hs, hs))
                        return -1;
                }
                if (hs < p->h_skin)
                    p->h_skin = hs;
                /* x-size over the source range: resolve the dominant
                 * wavelength of the induced current, and limit the cell
                 * Peclet number where that is affordable */
                if (sx1 > sx0) {
                    double hpe = PECLET_TARGET / (EDDY_MU0 * mu_r * sigma * vmax);
                    double hgeo = wsrc / CELLS_PER_SOURCE_WIDTH;
                    if (hpe < hgeo / MAX_PECLET_REFINE)
                        hpe = hgeo / MAX_PECLET_REFINE;
                    if (push_feature(&p->ax, sx0 - gap, sx1 + gap, hpe < hgeo ? hpe : hgeo))
                        return -1;
                }
            }
            continue; /* spans the domain in x: no x feature */
        }
        if (push_bp(&p->ax, r->box[0]) || push_bp(&p->ax, r->box[2]) ||
            push_feature(&p->ax, r->box[0], r->box[2], w / CELLS_ACROSS_REGION))
            return -1;
    }
    return 0;
}

static eddy_status estimate_from_axes(const mesh_case *c, int nx, int ny, double memory_limit,
                                      mesh_estimate *est,
                                      eddy_error *err)
{
    long nxu = c->x_periodic ? nx - 1 : nx - 2, nyu = ny - 2;
    est->nx = nx;
    est->ny = ny;
    est->nodes = (long)nx * ny;
    est->unknowns = nxu * nyu;
    double n = (double)est->unknowns;
    /* LU fill of a 2D five-point matrix under a fill-reducing ordering grows
     * like n log2 n (mesh_factor_bytes), plus ~300 bytes per node for the
     * grid, fields and workspaces. */
    est->memory_bytes = mesh_factor_bytes(0.0, n) + 300.0 * (double)est->nodes;
    est->memory_limit = memory_limit > 0 ? memory_limit : eddy_memory_limit(0.0);
    if (est->memory_bytes > est->memory_limit)
        return EDDY_RAISE(err, EDDY_ERR_TOO_LARGE,
                          "%s: mesh: %d x %d nodes (%ld unknowns) would need an estimated "
                          "%.1f GiB, more than the %.1f GiB allowed on this machine; raise "
                          "mesh.min_size or mesh.max_size, or shrink the domain",
                          c->path, nx, ny, est->unknowns, est->memory_bytes / 1073741824.0,
                          est->memory_limit / 1073741824.0);
    return EDDY_OK;
}

static void map_free(axis_map *m)
{
    free(m->e);
    free(m->wl);
    free(m->wr);
    memset(m, 0, sizeof *m);
}

/* Drop every other node of x[0..n-1] inside each interval between two
 * breakpoints bp[0..nbp-1] (region edges, kept).  An interval of an odd
 * number c >= 3 of cells (the second level under an odd mesh.refine) becomes
 * (c + 1) / 2 cells: pairs of cells merge except one cell near the middle,
 * where a graded interval's cells are largest, so that the level still
 * coarsens the interval about twofold (it kept all c cells before: at
 * mesh.refine 13 the 4h grid had 220k unknowns against 266k for the 2h). */
static void coarsen(double *x, int *n, const double *bp, int nbp)
{
    if (x == NULL) { /* counting only: the intervals are even on the first level */
        *n = (*n - 1) / 2 + 1;
        return;
    }
    double tol = 1e-9 * (x[*n - 1] - x[0]);
    int m = 1, i0 = 0, k = 1;
    for (int i = 1; i < *n; i++) {
        while (k < nbp - 1 && bp[k] < x[i] - tol)
            k++;
        int edge = i == *n - 1 || fabs(x[i] - bp[k]) <= tol;
        if (!edge)
            continue;
        int cells = i - i0;
        /* the single cell [i0 + single, i0 + single + 1] of an odd interval
         * (an even offset, so that pairs line up on both sides of it) */
        int single = cells % 2 == 0 ? cells : 2 * ((cells - 1) / 4);
        for (int q = i0 + 2; q <= i0 + single; q += 2)
            x[m++] = x[q];
        if (cells % 2 != 0)
            for (int q = i0 + single + 1; q <= i; q += 2)
                x[m++] = x[q];
        i0 = i;
    }
    *n = m;
}

/* The x-range a pass's moving regions cover, clipped to the domain (the
 * whole domain on periodic sides), into [*xa, *xb]. */
static void pass_range(const mesh_case *c, double *xa, double *xb)
{
    *xa = c->x1;
    *xb = c->x0;
    for (int k = 0; k < c->nreg; k++) {
        const mesh_region *r = &c->regions[k];
        if (!r->moving)
            continue;
        *xa = fmin(*xa, r->box[0]);
        *xb = fmax(*xb, r->box[2] + c->pass.distance);
    }
    if (c->x_periodic || *xa < c->x0)
        *xa = c->x0;
    if (c->x_periodic || *xb > c->x1)
        *xb = c->x1;
}

/* Plan the pass band on the x axis: no breakpoint inside [xa, xb], and one
 * uniform size h there, the finest the size function asks for in the band
 * (or the step, if finer), so that the band has an even number N of cells
 * (the interval counts stay even).  Returns N (0 without a pass, -1 on
 * allocation failure). */
static int plan_pass_band(const mesh_case *c, axis_spec *a, double growth, double hmax,
                          double *xa_out, double *xb_out)
{
    if (!c->pass.present)
        return 0;
    double xa, xb;
    pass_range(c, &xa, &xb);
    double len = xb - xa, tol = 1e-9 * (c->x1 - c->x0);
    double h0 = fmin(c->pass.step, fmin(size_at(a, xa, growth, hmax), size_at(a, xb, growth, hmax)));
    for (int k = 0; k < a->n; k++) {
        double s = fmin(fmax(a->f[k].s, xa), xb), e = fmin(fmax(a->f[k].e, xa), xb);
        h0 = fmin(h0, fmin(size_at(a, s, growth, hmax), size_at(a, e, growth, hmax)));
    }
    if (c->mesh.min_size > 0 && h0 < c->mesh.min_size)
        h0 = c->mesh.min_size;
    if (c->pass.band_cell > 0) /* asked for: the refine factor still divides it */
        h0 = c->pass.band_cell;
    double half = ceil(len / (2.0 * h0) - 1e-9);
    if (half < 1)
        half = 1;
    if (2.0 * half > MAX_AXIS_NODES)
        return -2;
    int m = 0;
    for (int k = 0; k < a->nbp; k++)
        if (!(a->bp[k] > xa + tol && a->bp[k] < xb - tol))
            a->bp[m++] = a->bp[k];
    a->nbp = m;
    if (push_bp(a, xa) || push_bp(a, xb) || push_feature(a, xa, xb, len / (2.0 * half)))
        return -1;
    *xa_out = xa;
    *xb_out = xb;
    return (int)(2.0 * half);
}

/* Make the nodes of x[0..n-1] in [xa, xb] exactly N uniform cells (the
 * equidistribution gives them to rounding, or a neighbouring size may have
 * pulled a few). */
static int impose_band(double **nodes, int *n, double xa, double xb, int N)
{
    double *x = *nodes, tol = 1e-9 * (x[*n - 1] - x[0]);
    int ia = 0, ib = 0;
    while (ia < *n && x[ia] < xa - tol)
        ia++;
    ib = ia;
    while (ib < *n && x[ib] < xb - tol)
        ib++;
    if (ia >= *n || ib >= *n)
        return -1;
    int nn = ia + (N + 1) + (*n - ib - 1);
    double *y = malloc((size_t)nn * sizeof *y);
    if (y == NULL)
        return -1;
    memcpy(y, x, (size_t)ia * sizeof *y);
    for (int k = 0; k <= N; k++)
        y[ia + k] = k == N ? xb : xa + (xb - xa) * k / N;
    memcpy(y + ia + N + 1, x + ib + 1, (size_t)(*n - ib - 1) * sizeof *y);
    free(x);
    *nodes = y;
    *n = nn;
    return 0;
}

static eddy_status build_axes(const mesh_case *c, int coarse, grid_plan *p, double **x, int *nx,
                              double **y, int *ny, axis_map *mx, axis_map *my, eddy_error *err)
{
    memset(mx, 0, sizeof *mx);
    memset(my, 0, sizeof *my);
    if (plan_build(c, p) != 0)
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory planning the mesh");
    double lx = c->x1 - c->x0, ly = c->y1 - c->y0;
    double growth = c->mesh.growth > 0 ? c->mesh.growth : DEFAULT_GROWTH;
    double hmax = c->mesh.max_size > 0 ? c->mesh.max_size
                                       : DEFAULT_MAX_FRACTION * (lx > ly ? lx : ly);
    double xa = 0, xb = 0;
    int nband = plan_pass_band(c, &p->ax, growth, hmax, &xa, &xb);
    if (nband == -1)
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory planning the mesh");
    int rx = nband == -2 ? -2 : mesh_axis(&p->ax, c->x0, c->x1, growth, hmax, c->mesh.min_size, x, nx);
    if (rx == 0 && nband > 0) {
        if (x != NULL)
            rx = impose_band(x, nx, xa, xb, nband) != 0 ? -1 : 0;
        /* counting only: the count of the interval is nband to rounding */
    }
    int ry = rx == 0 ? mesh_axis(&p->ay, c->y0, c->y1, growth, hmax, c->mesh.min_size, y, ny)
                     : 0;
    if (rx == 0 && ry == 0 && c->mesh.refine > 1) {
        rx = subdivide(x, nx, c->mesh.refine);
        if (rx == 0)
            ry = subdivide(y, ny, c->mesh.refine);
    }
    if (rx == 0 && ry == 0 && coarse) {
        for (int l = 0; l < coarse; l++) {
            coarsen(x != NULL ? *x : NULL, nx, p->ax.bp, p->ax.nbp);
            coarsen(y != NULL ? *y : NULL, ny, p->ay.bp, p->ay.nbp);
        }
    }
    /* the coarse grid's layer: half the cells over the same map (L is m times
     * the last inside cell, which doubles) */
    int mcells = (c->mesh.layer_cells > 0 ? c->mesh.layer_cells
                                          : MAP_CELLS * (c->mesh.refine > 1 ? c->mesh.refine : 1)) >>
                 coarse;
    if (mcells < 6)
        mcells = 6;
    if (rx == 0 && ry == 0)
        rx = add_open_layers(x, nx, c->x_open, c->x_open, mcells, mx);
    if (rx == 0 && ry == 0)
        ry = add_open_layers(y, ny, c->y_open, c->y_open, mcells, my);
    if (rx == -1 || ry == -1)
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory meshing");
    if (rx == -2 || ry == -2)
        return EDDY_RAISE(err, EDDY_ERR_TOO_LARGE,
                          "%s: mesh: more than %d grid lines along %s would be needed; raise "
                          "mesh.min_size or reduce the highest speed",
                          c->path, MAX_AXIS_NODES, rx == -2 ? "x" : "y");
    if (c->x_periodic && *nx < 4)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: mesh: a periodic domain needs at least 3 "
                          "cells in x", c->path);
    return EDDY_OK;
}

eddy_status mesh_grid_estimate(const mesh_case *c, double memory_limit, mesh_estimate *est,
                               eddy_error *err)
{
    grid_plan p;
    int nx = 0, ny = 0;
    axis_map mx, my;
    eddy_status s = build_axes(c, 0, &p, NULL, &nx, NULL, &ny, &mx, &my, err);
    plan_free(&p);
    if (s != EDDY_OK)
        return s;
    return estimate_from_axes(c, nx, ny, memory_limit, est, err);
}

/* First index k with v[k] >= t - tol (v increasing, n entries). */
static int lower_index(const double *v, int n, double t, double tol)
{
    int lo = 0, hi = n;
    while (lo < hi) {
        int mid = (lo + hi) / 2;
        if (v[mid] < t - tol)
            lo = mid + 1;
        else
            hi = mid;
    }
    return lo;
}

static eddy_status grid_build(const mesh_case *c, int coarse, double memory_limit,
                              mesh_grid **out, mesh_estimate *est, eddy_error *err);

eddy_status mesh_grid_build(const mesh_case *c, double memory_limit, mesh_grid **out,
                            mesh_estimate *est, eddy_error *err)
{
    return grid_build(c, 0, memory_limit, out, est, err);
}

eddy_status mesh_grid_build_coarse(const mesh_case *c, int level, double memory_limit,
                                   mesh_grid **out, eddy_error *err)
{
    if (level < 1 || level > 2)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "mesh_grid_build_coarse: level %d (1 or 2)",
                          level);
    return grid_build(c, level, memory_limit, out, NULL, err);
}

static eddy_status grid_build(const mesh_case *c, int coarse, double memory_limit,
                              mesh_grid **out, mesh_estimate *est, eddy_error *err)
{
    *out = NULL;
    grid_plan p;
    mesh_estimate local;
    if (est == NULL)
        est = &local;
    memset(est, 0, sizeof *est);
    double *x = NULL, *y = NULL;
    int nx = 0, ny = 0;
    axis_map mx, my;
    eddy_status s = build_axes(c, coarse, &p, &x, &nx, &y, &ny, &mx, &my, err);
    double k_dom = p.k_dominant, h_skin = p.h_skin;
    plan_free(&p);
    if (s == EDDY_OK)
        s = estimate_from_axes(c, nx, ny, memory_limit, est, err);
    mesh_grid *g = s == EDDY_OK ? calloc(1, sizeof *g) : NULL;
    if (g == NULL) {
        free(x);
        free(y);
        map_free(&mx);
        map_free(&my);
        return s != EDDY_OK ? s : EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
    }
    g->ex = mx.e;
    g->wxl = mx.wl;
    g->wxr = mx.wr;
    g->ey = my.e;
    g->wyl = my.wl;
    g->wyr = my.wr;
    g->ix0 = mx.lo;
    g->ix1 = nx - 1 - mx.hi;
    g->iy0 = my.lo;
    g->iy1 = ny - 1 - my.hi;
    g->nx = nx;
    g->ny = ny;
    g->ncx = nx - 1;
    g->ncy = ny - 1;
    g->x = x;
    g->y = y;
    g->x_periodic = c->x_periodic;
    g->geometry = c->geometry;
    g->k_dominant = k_dom;
    g->h_skin = h_skin;
    if (s == EDDY_OK && c->pass.present) {
        double xa, xb, tol = 1e-9 * (c->x1 - c->x0);
        pass_range(c, &xa, &xb);
        g->pb0 = lower_index(x, nx, xa, tol);
        g->pb1 = lower_index(x, nx, xb, tol);
        g->pass_h = (xb - xa) / (g->pb1 - g->pb0);
        /* the band is uniform to rounding: the node spacing is the band's */
        double step_cells = c->pass.step / g->pass_h;
        g->pass_cells = (int)lround(step_cells);
        if (g->pass_cells < 1)
            g->pass_cells = 1;
    }
    size_t nc = (size_t)g->ncx * (size_t)g->ncy;
    g->nu = malloc(nc * sizeof *g->nu);
    g->sigma = calloc(nc, sizeof *g->sigma);
    g->brx = calloc(nc, sizeof *g->brx);
    g->bry = calloc(nc, sizeof *g->bry);
    g->jz = calloc(nc, sizeof *g->jz);
    g->moving = calloc(nc, 1);
    g->region = malloc(nc * sizeof *g->region);
    if (!g->nu || !g->sigma || !g->brx || !g->bry || !g->jz || !g->moving || !g->region) {
        mesh_grid_free(g);
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory for %zu cells", nc);
    }
    double nu0 = 1.0 / EDDY_MU0;
    for (size_t k = 0; k < nc; k++) {
        g->nu[k] = nu0;
        g->region[k] = -1;
    }
    /* saturable materials: one curve per material used by a region */
    int *curve_of = NULL;
    for (int r = 0; r < c->nreg; r++) {
        const mesh_material *m = region_material(c, &c->regions[r]);
        if (m != NULL && m->bh.n > 0 && g->bh == NULL) {
            g->bh = malloc((size_t)c->nmat * sizeof *g->bh);
            g->bh_cell = malloc(nc * sizeof *g->bh_cell);
            curve_of = malloc((size_t)c->nmat * sizeof *curve_of);
            if (g->bh == NULL || g->bh_cell == NULL || curve_of == NULL) {
                free(curve_of);
                mesh_grid_free(g);
                return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory for %zu cells", nc);
            }
            for (size_t k = 0; k < nc; k++)
                g->bh_cell[k] = -1;
            for (int q = 0; q < c->nmat; q++)
                curve_of[q] = -1;
        }
    }
    double tolx = 1e-9 * (c->x1 - c->x0), toly = 1e-9 * (c->y1 - c->y0);
    g->jm0 = g->ncy;
    g->jm1 = 0;
    for (int r = 0; r < c->nreg; r++) {
        const mesh_region *rg = &c->regions[r];
        const mesh_material *m = region_material(c, rg);
        int i0 = lower_index(x, nx, rg->box[0], tolx), i1 = lower_index(x, nx, rg->box[2], tolx);
        int j0 = lower_index(y, ny, rg->box[1], toly), j1 = lower_index(y, ny, rg->box[3], toly);
        /* a region on an open side continues to infinity beyond it */
        if (i0 == g->ix0)
            i0 = 0;
        if (i1 == g->ix1)
            i1 = g->ncx;
        if (j0 == g->iy0)
            j0 = 0;
        if (j1 == g->iy1)
            j1 = g->ncy;
        double nu = m != NULL ? nu0 / m->mu_r : nu0;
        double br = m != NULL ? m->br : 0.0;
        short curve = -1;
        if (m != NULL && m->bh.n > 0) { /* initial reluctivity H_1 / B_1 of the curve */
            nu = m->bh.h[1] / m->bh.b[1];
            if (curve_of[rg->material] < 0) {
                curve_of[rg->material] = g->nbh;
                g->bh[g->nbh++] = m->bh;
            }
            curve = (short)curve_of[rg->material];
        }
        for (int j = j0; j < j1 && j < g->ncy; j++)
            for (int i = i0; i < i1 && i < g->ncx; i++) {
                size_t k = (size_t)i + (size_t)g->ncx * (size_t)j;
                g->nu[k] = nu;
                g->sigma[k] = m != NULL ? m->sigma : 0.0;
                g->brx[k] = br * cos(rg->mag_angle);
                g->bry[k] = br * sin(rg->mag_angle);
                g->jz[k] = rg->jz;
                g->moving[k] = (unsigned char)rg->moving;
                g->region[k] = (short)r;
                if (g->bh_cell != NULL)
                    g->bh_cell[k] = curve;
            }
        if (rg->moving) {
            if (j0 < g->jm0)
                g->jm0 = j0;
            if (j1 > g->jm1)
                g->jm1 = j1;
        }
    }
    free(curve_of);
    if (g->jm1 <= g->jm0)
        g->jm0 = g->jm1 = 0;
    *out = g;
    return EDDY_OK;
}

void mesh_grid_free(mesh_grid *g)
{
    if (g == NULL)
        return;
    free(g->x);
    free(g->y);
    free(g->nu);
    free(g->sigma);
    free(g->brx);
    free(g->bry);
    free(g->jz);
    free(g->moving);
    free(g->region);
    free(g->bh);
    free(g->bh_cell);
    free(g->ex);
    free(g->wxl);
    free(g->wxr);
    free(g->ey);
    free(g->wyl);
    free(g->wyr);
    free(g);
}

void mesh_grid_pass_cells(const mesh_grid *g, long shift, double *sigma, double *nu,
                          unsigned char *moving, short *region)
{
    int ncx = g->ncx;
    double nu0 = 1.0 / EDDY_MU0;
    for (int j = 0; j < g->ncy; j++)
        for (int i = 0; i < ncx; i++) {
            size_t k = (size_t)i + (size_t)ncx * (size_t)j;
            /* the column the material now at i came from */
            long src = (long)i - shift;
            if (g->x_periodic)
                src = ((src % ncx) + ncx) % ncx;
            else if (src < 0)
                src = 0;
            size_t ks = (size_t)src + (size_t)ncx * (size_t)j;
            if (g->moving[ks]) {
                sigma[k] = g->sigma[ks];
                nu[k] = g->nu[ks];
                moving[k] = 1;
                if (region != NULL)
                    region[k] = g->region[ks];
            } else if (g->moving[k]) { /* left behind: air */
                sigma[k] = 0.0;
                nu[k] = nu0;
                moving[k] = 0;
                if (region != NULL)
                    region[k] = -1;
            } else {
                sigma[k] = g->sigma[k];
                nu[k] = g->nu[k];
                moving[k] = 0;
                if (region != NULL)
                    region[k] = g->region[k];
            }
        }
}
