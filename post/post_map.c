/*
 * post_map.c - field maps: a nodal field on a non-uniform tensor grid,
 * resampled bilinearly into the pixels of a view window, with flux lines
 * (contours of A), outlines of regions, axes in display length units and a
 * colour bar.  Interface in post/post_img.h.
 */
#include "post/post_draw.h"
#include "post/post_img.h"

#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

void post_map_opts_defaults(post_map_opts *o)
{
    if (o == NULL)
        return;
    memset(o, 0, sizeof *o);
    o->quantity = "value";
    o->unit_label = "";
    o->value_scale = 1.0;
    o->length_unit = "mm";
    o->length_scale = 1000.0;
    o->width_px = 1200;
    o->speed = NAN;
}

#define MAP_DEFAULT_W 1200

/* Everything the drawing needs beyond the public geometry. */
typedef struct {
    post_map_geom g;
    double s;                      /* size factor: width / 1200          */
    double f_tick, f_label, f_title, f_bar_label;
    double ticklen;
    post_ticks xt, yt, bt;         /* display units                      */
    char bar_label[300];
} map_layout;

static int strictly_increasing(const double *v, int n)
{
    for (int k = 0; k < n; k++)
        if (!isfinite(v[k]) || (k > 0 && !(v[k] > v[k - 1])))
            return 0;
    return 1;
}

/* Index i with g[i] <= v <= g[i+1], or -1 if v is outside [g[0], g[n-1]]. */
static int locate(const double *g, int n, double v)
{
    if (!(v >= g[0] && v <= g[n - 1]))
        return -1;
    int lo = 0, hi = n - 1;
    while (hi - lo > 1) {
        int mid = lo + (hi - lo) / 2;
        if (g[mid] <= v)
            lo = mid;
        else
            hi = mid;
    }
    return lo;
}

static eddy_status map_check(int nx, int ny, const double *x, const double *y, const double *field,
                             const post_map_opts *o, double view[4], eddy_error *err)
{
    if (o == NULL || x == NULL || y == NULL || field == NULL)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "field map: NULL argument");
    if (nx < 2 || ny < 2)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "field map: grid %d x %d is too small", nx, ny);
    if ((size_t)nx * (size_t)ny > (size_t)1 << 31)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "field map: grid %d x %d is too large", nx, ny);
    if (!strictly_increasing(x, nx) || !strictly_increasing(y, ny))
        return EDDY_RAISE(err, EDDY_ERR_INPUT,
                          "field map: grid coordinates must be finite and strictly increasing");
    if (!(o->value_scale > 0.0) || !isfinite(o->value_scale))
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "field map: value_scale %g must be > 0",
                          o->value_scale);
    if (!(o->length_scale > 0.0) || !isfinite(o->length_scale))
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "field map: length_scale %g must be > 0",
                          o->length_scale);
    int w = o->width_px == 0 ? MAP_DEFAULT_W : o->width_px;
    if (w < POST_IMG_MIN_PX || w > POST_IMG_MAX_PX)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "field map: width %d px outside %d..%d", w,
                          POST_IMG_MIN_PX, POST_IMG_MAX_PX);
    if (o->n_flux_lines < 0 || o->n_flux_lines > 1000)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "field map: %d flux lines (0..1000)",
                          o->n_flux_lines);
    if (o->n_outlines < 0 || (o->n_outlines > 0 && o->outlines == NULL))
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "field map: %d outlines but no rectangle array",
                          o->n_outlines);
    if (o->view[0] == 0.0 && o->view[1] == 0.0 && o->view[2] == 0.0 && o->view[3] == 0.0) {
        view[0] = x[0];
        view[1] = y[0];
        view[2] = x[nx - 1];
        view[3] = y[ny - 1];
    } else {
        memcpy(view, o->view, 4 * sizeof *view);
    }
    for (int k = 0; k < 4; k++)
        if (!isfinite(view[k]))
            return EDDY_RAISE(err, EDDY_ERR_INPUT, "field map: view is not finite");
    if (!(view[2] > view[0]) || !(view[3] > view[1]))
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "field map: empty view [%g, %g] x [%g, %g] m",
                          view[0], view[2], view[1], view[3]);
    double aspect = (view[3] - view[1]) / (view[2] - view[0]);
    if (!(aspect > 1e-4 && aspect < 1e4))
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "field map: view aspect ratio %g is extreme", aspect);
    for (size_t k = 0; k < (size_t)nx * ny; k++)
        if (!isfinite(field[k]))
            return EDDY_RAISE(err, EDDY_ERR_NUMERIC, "field map: field value %zu is not finite", k);
    return EDDY_OK;
}

/* Range of the values painted: node values of unmasked cells that overlap
 * the view, plus 0 when a masked cell overlaps it. */
static void map_value_range(int nx, int ny, const double *x, const double *y, const double *v,
                            const unsigned char *mask, const double view[4], double *lo,
                            double *hi)
{
    double vmin = INFINITY, vmax = -INFINITY;
    for (int j = 0; j + 1 < ny; j++) {
        if (y[j + 1] < view[1] || y[j] > view[3])
            continue;
        for (int i = 0; i + 1 < nx; i++) {
            if (x[i + 1] < view[0] || x[i] > view[2])
                continue;
            if (mask != NULL && mask[i + (size_t)(nx - 1) * j] == 0) {
                vmin = fmin(vmin, 0.0);
                vmax = fmax(vmax, 0.0);
                continue;
            }
            size_t k = (size_t)i + (size_t)nx * j;
            double c[4] = {v[k], v[k + 1], v[k + nx], v[k + nx + 1]};
            for (int q = 0; q < 4; q++) {
                vmin = fmin(vmin, c[q]);
                vmax = fmax(vmax, c[q]);
            }
        }
    }
    if (!(vmin <= vmax)) { /* no cell in view */
        vmin = 0.0;
        vmax = 0.0;
    }
    *lo = vmin;
    *hi = vmax;
}

/* The colour range g->vmin..g->vmax of the field over g->view: -m..m with
 * m = max |v| for a diverging map, else min(0, vmin)..vmax; an empty range
 * is widened by one display unit. */
static void map_colour_range(int nx, int ny, const double *x, const double *y,
                             const double *field, const unsigned char *mask,
                             const post_map_opts *o, post_map_geom *g)
{
    double lo, hi;
    map_value_range(nx, ny, x, y, field, mask, g->view, &lo, &hi);
    if (o->diverging) {
        double m = fmax(fabs(lo), fabs(hi));
        if (!(m > 0.0))
            m = 1.0 / o->value_scale;
        g->vmin = -m;
        g->vmax = m;
    } else {
        g->vmin = fmin(0.0, lo);
        g->vmax = hi;
        if (!(g->vmax > g->vmin))
            g->vmax = g->vmin + 1.0 / o->value_scale;
    }
}

/* Largest label width over the tick sets for targets 2..12. */
static double max_label_width(cairo_t *cr, double lo, double hi)
{
    double wmax = 0.0;
    for (int target = 2; target <= 12; target++) {
        post_ticks t;
        post_ticks_make(lo, hi, target, &t);
        wmax = fmax(wmax, post_ticks_label_width(cr, &t));
    }
    return wmax;
}

/* Ticks whose labels fit along an axis of len px: horizontal labels need
 * their width plus a gap, vertical ones a line height. */
static void fit_ticks(cairo_t *cr, double lo, double hi, double len, double px_per_tick,
                      int horizontal, double gap, post_ticks *t)
{
    int target = (int)(len / px_per_tick);
    if (target < 3)
        target = 3; /* short axes: try for two ticks at least */
    if (target > 10)
        target = 10;
    for (; target >= 2; target--) {
        post_ticks_make(lo, hi, target, t);
        if (t->n < 2)
            continue;
        double spacing = t->step / (hi - lo) * len, need = gap;
        if (horizontal)
            need += post_ticks_label_width(cr, t);
        if (spacing >= need)
            return;
    }
    post_ticks_make(lo, hi, 2, t);
}

static eddy_status map_layout_compute(int nx, int ny, const double *x, const double *y,
                                      const double *field, const unsigned char *mask,
                                      const post_map_opts *o, map_layout *L, eddy_error *err)
{
    memset(L, 0, sizeof *L);
    post_map_geom *g = &L->g;
    eddy_status st = map_check(nx, ny, x, y, field, o, g->view, err);
    if (st != EDDY_OK)
        return st;
    const double *view = g->view;

    map_colour_range(nx, ny, x, y, field, mask, o, g);

    int W = o->width_px == 0 ? MAP_DEFAULT_W : o->width_px;
    double s = W / 1200.0;
    double ts = fmax(s, 0.8); /* text stays readable on small pictures */
    L->s = s;
    L->f_tick = 14.0 * ts;
    L->f_label = 16.0 * ts;
    L->f_title = 20.0 * ts;
    L->ticklen = 6.0 * s;
    double pad = 12.0 * s;
    double ls = o->length_scale, vs = o->value_scale;

    cairo_surface_t *scr_s;
    cairo_t *cr = post_canvas_scratch(&scr_s);
    post_font(cr, L->f_tick, 0);
    double xw = max_label_width(cr, view[0] * ls, view[2] * ls);
    double yw = max_label_width(cr, view[1] * ls, view[3] * ls);
    double bw = max_label_width(cr, g->vmin * vs, g->vmax * vs);

    /* colour-bar label: "quantity (unit)" */
    const char *q = o->quantity != NULL ? o->quantity : "";
    if (o->unit_label != NULL && o->unit_label[0] != '\0')
        snprintf(L->bar_label, sizeof L->bar_label, "%s (%s)", q, o->unit_label);
    else
        snprintf(L->bar_label, sizeof L->bar_label, "%s", q);

    double label_h = 1.25 * L->f_label;
    double left = pad + label_h + 8.0 * s + yw + 5.0 * s + L->ticklen;
    left = fmax(left, xw / 2.0 + pad);
    double gap_pb = fmax(22.0 * s, xw / 2.0 + 10.0 * s);
    int bar_w = (int)lround(22.0 * s);
    double right = gap_pb + bar_w + L->ticklen + 5.0 * s + bw + 10.0 * s + label_h + pad;
    double title_h = (o->title != NULL && o->title[0] != '\0') ? 1.6 * L->f_title : 0.0;
    double top = pad + title_h + 0.8 * L->f_tick;
    double bottom = L->ticklen + 5.0 * s + 1.2 * L->f_tick + 10.0 * s + label_h + pad;

    int il = (int)ceil(left), ir = (int)ceil(right), it = (int)ceil(top), ib = (int)ceil(bottom);
    int pw = W - il - ir;
    if (pw < 100) {
        cairo_destroy(cr);
        cairo_surface_destroy(scr_s);
        return EDDY_RAISE(err, EDDY_ERR_INPUT,
                          "field map: width %d px leaves no room for the map (labels need %d px)",
                          W, il + ir);
    }
    double aspect = (view[3] - view[1]) / (view[2] - view[0]);
    long ph = lround(pw * aspect);
    if (ph > 3L * W) { /* very tall view: keep the true geometry, narrow the map */
        ph = 3L * W;
        pw = (int)lround(ph / aspect);
        if (pw < 1)
            pw = 1;
    }
    if (ph < 1)
        ph = 1;
    int bar_h = (int)ph;
    int bar_min = (int)lround(220.0 * s);
    if (bar_h < bar_min)
        bar_h = bar_min;

    g->width = W;
    g->plot_x = il;
    g->plot_w = pw;
    g->plot_h = (int)ph;
    g->plot_y = it + (bar_h - (int)ph) / 2;
    g->bar_x = il + pw + (int)ceil(gap_pb);
    g->bar_y = it;
    g->bar_w = bar_w;
    g->bar_h = bar_h;
    g->height = it + bar_h + ib;

    /* the rotated bar label must not be longer than the bar */
    L->f_bar_label = L->f_label;
    double lw = post_rich_width(cr, L->bar_label, L->f_bar_label);
    if (lw > bar_h + 2.0 * pad)
        L->f_bar_label *= (bar_h + 2.0 * pad) / lw;

    fit_ticks(cr, view[0] * ls, view[2] * ls, pw, 60.0 * s, 1, 14.0 * s, &L->xt);
    fit_ticks(cr, view[1] * ls, view[3] * ls, (double)ph, 45.0 * s, 0, 2.0 * L->f_tick, &L->yt);
    fit_ticks(cr, g->vmin * vs, g->vmax * vs, bar_h, 45.0 * s, 0, 2.0 * L->f_tick, &L->bt);
    cairo_destroy(cr);
    cairo_surface_destroy(scr_s);
    return EDDY_OK;
}

eddy_status post_map_geometry(int nx, int ny, const double *x, const double *y,
                              const double *field, const unsigned char *cell_mask,
                              const post_map_opts *o, post_map_geom *g, eddy_error *err)
{
    if (g == NULL)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "field map: NULL geometry output");
    map_layout *L = malloc(sizeof *L);
    if (L == NULL)
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "field map: out of memory");
    eddy_status st = map_layout_compute(nx, ny, x, y, field, cell_mask, o, L, err);
    if (st == EDDY_OK)
        *g = L->g;
    free(L);
    return st;
}

/*
 * Flux lines: the contours A = amin + k (amax - amin) / (n + 1), k = 1..n,
 * drawn into the map's pixels.  With t = (A - amin) / dA sampled at every
 * pixel centre (the map's bilinear interpolation), a pixel's distance to the
 * nearest level is |t - round t| / |grad t| in pixels (grad t by central
 * differences of the samples), and it takes the ink in proportion to the
 * part of a line of width w centred on the contour that covers it: clamp(w/2
 * + 1/2 - distance, 0, 1), at 75 % opacity.  The work is one pass over the
 * pixels whatever the number of grid cells in view (stroking the marching-
 * squares pieces of every cell cost 8 % of a 0.16M-unknown job, make bench
 * profile, 2026-12-04).
 */
static void ink_flux_lines(unsigned char *data, int stride, int pw, int ph, const float *t,
                           int n, double width)
{
    const double ink[3] = {POST_INK_RGB}, alpha = 0.75;
    for (int r = 0; r < ph; r++) {
        uint32_t *row = (uint32_t *)(void *)(data + (size_t)r * stride);
        const float *tr = t + (size_t)r * pw;
        const float *up = r > 0 ? tr - pw : tr, *dn = r + 1 < ph ? tr + pw : tr;
        double sy = r > 0 && r + 1 < ph ? 0.5 : 1.0;
        for (int c = 0; c < pw; c++) {
            double v = tr[c];
            if (!isfinite(v))
                continue; /* outside the grid */
            double k = floor(v + 0.5);
            if (k < 1.0 || k > (double)n)
                continue;
            int cl = c > 0 && isfinite(tr[c - 1]) ? c - 1 : c;
            int cr = c + 1 < pw && isfinite(tr[c + 1]) ? c + 1 : c;
            double gx = cr > cl ? ((double)tr[cr] - tr[cl]) / (cr - cl) : 0.0;
            double gy = isfinite(up[c]) && isfinite(dn[c]) ? sy * ((double)dn[c] - up[c]) : 0.0;
            double grad = sqrt(gx * gx + gy * gy);
            if (!(grad > 0.0))
                continue;
            double cover = 0.5 * width + 0.5 - fabs(v - k) / grad;
            if (cover <= 0.0)
                continue;
            double w = alpha * (cover < 1.0 ? cover : 1.0);
            uint32_t p = row[c];
            uint32_t out = p & 0xff000000u;
            for (int ch = 0; ch < 3; ch++) {
                int shift = 16 - 8 * ch;
                double old = (double)((p >> shift) & 0xffu);
                double mixed = old + w * (255.0 * ink[ch] - old);
                out |= (uint32_t)lround(mixed) << shift;
            }
            row[c] = out;
        }
    }
}

/* The node field f (nx per row) interpolated bilinearly in cell (i, j) at
 * the fractions tx, ty of its width and height. */
static double bilinear(const double *f, int nx, int i, int j, double tx, double ty)
{
    size_t k = (size_t)i + (size_t)nx * j;
    return (1.0 - ty) * ((1.0 - tx) * f[k] + tx * f[k + 1]) +
           ty * ((1.0 - tx) * f[k + nx] + tx * f[k + nx + 1]);
}

/* Sample t = (A - amin) / dA at the pixel centres (cells ix, iy and
 * fractions fx, fy of paint_field; NAN outside the grid) and ink the n
 * lines into the map's pixels. */
static eddy_status flux_lines(const map_layout *L, int nx, int ny, const double *x,
                              const double *y, const double *a, int n, const int *ix,
                              const int *iy, const double *fx, const double *fy,
                              unsigned char *data, int stride, eddy_error *err)
{
    const post_map_geom *g = &L->g;
    for (size_t k = 0; k < (size_t)nx * ny; k++)
        if (!isfinite(a[k]))
            return EDDY_RAISE(err, EDDY_ERR_NUMERIC, "field map: A value %zu is not finite", k);
    double amin, amax;
    map_value_range(nx, ny, x, y, a, NULL, g->view, &amin, &amax);
    if (!(amax > amin))
        return EDDY_OK; /* uniform A: no lines */
    double da = (amax - amin) / (n + 1);
    int pw = g->plot_w, ph = g->plot_h;
    float *t = malloc((size_t)pw * (size_t)ph * sizeof *t);
    if (t == NULL)
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "field map: out of memory for the flux lines");
    for (int r = 0; r < ph; r++) {
        int j = iy[r];
        double ty = fy[r];
        for (int c = 0; c < pw; c++) {
            int i = ix[c];
            float *out = t + (size_t)r * pw + c;
            if (i < 0 || j < 0) {
                *out = NAN;
                continue;
            }
            *out = (float)((bilinear(a, nx, i, j, fx[c], ty) - amin) / da);
        }
    }
    ink_flux_lines(data, stride, pw, ph, t, n, fmax(1.0, 0.9 * L->s));
    free(t);
    return EDDY_OK;
}

/* Paint the resampled field into a pw x ph surface placed on the plot
 * area, with a_nodes the flux lines too (n_lines of them, ink_flux_lines). */
static eddy_status paint_field(cairo_t *cr, const map_layout *L, int nx, int ny, const double *x,
                               const double *y, const double *field, const unsigned char *mask,
                               int diverging, const double *a_nodes, int n_lines,
                               eddy_error *err)
{
    const post_map_geom *g = &L->g;
    int pw = g->plot_w, ph = g->plot_h;
    int *ix = malloc((size_t)pw * sizeof *ix), *iy = malloc((size_t)ph * sizeof *iy);
    double *fx = malloc((size_t)pw * sizeof *fx), *fy = malloc((size_t)ph * sizeof *fy);
    uint32_t *lut = malloc(POST_LUT_N * sizeof *lut);
    cairo_surface_t *fs = cairo_image_surface_create(CAIRO_FORMAT_ARGB32, pw, ph);
    if (ix == NULL || iy == NULL || fx == NULL || fy == NULL || lut == NULL ||
        cairo_surface_status(fs) != CAIRO_STATUS_SUCCESS) {
        free(ix);
        free(iy);
        free(fx);
        free(fy);
        free(lut);
        cairo_surface_destroy(fs);
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "field map: out of memory for %dx%d px", pw, ph);
    }
    post_cmap_lut(diverging, lut);
    const double *view = g->view;
    /* pixel centres -> cells, once per column and once per row */
    for (int c = 0; c < pw; c++) {
        double xw = view[0] + (c + 0.5) / pw * (view[2] - view[0]);
        ix[c] = locate(x, nx, xw);
        fx[c] = ix[c] < 0 ? 0.0 : (xw - x[ix[c]]) / (x[ix[c] + 1] - x[ix[c]]);
    }
    for (int r = 0; r < ph; r++) {
        double yw = view[3] - (r + 0.5) / ph * (view[3] - view[1]); /* y up */
        iy[r] = locate(y, ny, yw);
        fy[r] = iy[r] < 0 ? 0.0 : (yw - y[iy[r]]) / (y[iy[r] + 1] - y[iy[r]]);
    }
    cairo_surface_flush(fs);
    unsigned char *data = cairo_image_surface_get_data(fs);
    int stride = cairo_image_surface_get_stride(fs);
    double lo = g->vmin, span = g->vmax - g->vmin;
    for (int r = 0; r < ph; r++) {
        uint32_t *row = (uint32_t *)(void *)(data + (size_t)r * stride);
        int j = iy[r];
        double ty = fy[r];
        for (int c = 0; c < pw; c++) {
            int i = ix[c];
            if (i < 0 || j < 0) {
                row[c] = 0xffffffffu; /* outside the grid: white */
                continue;
            }
            double v = 0.0;
            if (mask == NULL || mask[i + (size_t)(nx - 1) * j] != 0) {
                v = bilinear(field, nx, i, j, fx[c], ty);
            }
            row[c] = post_cmap_lut_pick(lut, (v - lo) / span);
        }
    }
    eddy_status st = EDDY_OK;
    if (a_nodes != NULL && n_lines > 0)
        st = flux_lines(L, nx, ny, x, y, a_nodes, n_lines, ix, iy, fx, fy, data, stride, err);
    cairo_surface_mark_dirty(fs);
    cairo_save(cr);
    cairo_set_source_surface(cr, fs, g->plot_x, g->plot_y);
    cairo_pattern_set_filter(cairo_get_source(cr), CAIRO_FILTER_NEAREST);
    cairo_rectangle(cr, g->plot_x, g->plot_y, pw, ph);
    cairo_fill(cr);
    cairo_restore(cr);
    cairo_surface_destroy(fs);
    free(ix);
    free(iy);
    free(fx);
    free(fy);
    free(lut);
    return st;
}

/* World (m) to image px. */
static double map_X(const post_map_geom *g, double xw)
{
    return g->plot_x + (xw - g->view[0]) / (g->view[2] - g->view[0]) * g->plot_w;
}

static double map_Y(const post_map_geom *g, double yw)
{
    return g->plot_y + (g->view[3] - yw) / (g->view[3] - g->view[1]) * g->plot_h;
}

static void draw_outlines(cairo_t *cr, const map_layout *L, const double *rects, int n)
{
    const post_map_geom *g = &L->g;
    cairo_save(cr);
    cairo_rectangle(cr, g->plot_x, g->plot_y, g->plot_w, g->plot_h);
    cairo_clip(cr);
    for (int k = 0; k < n; k++) {
        const double *r = rects + 4 * (size_t)k;
        if (!isfinite(r[0]) || !isfinite(r[1]) || !isfinite(r[2]) || !isfinite(r[3]))
            continue;
        double X0 = map_X(g, fmin(r[0], r[2])), X1 = map_X(g, fmax(r[0], r[2]));
        double Y0 = map_Y(g, fmax(r[1], r[3])), Y1 = map_Y(g, fmin(r[1], r[3]));
        cairo_rectangle(cr, X0, Y0, X1 - X0, Y1 - Y0);
    }
    /* house outlines: a light halo, then a dashed ink line on it, so they
     * read on the dark and on the light end of either map */
    double s = fmax(1.0, L->s), dash[2] = {5.0 * s, 3.0 * s};
    cairo_set_line_join(cr, CAIRO_LINE_JOIN_MITER);
    cairo_set_source_rgba(cr, 1.0, 1.0, 1.0, 0.7);
    cairo_set_line_width(cr, 2.8 * s);
    cairo_stroke_preserve(cr);
    cairo_set_dash(cr, dash, 2, 0.0);
    cairo_set_source_rgb(cr, POST_INK_RGB);
    cairo_set_line_width(cr, 1.2 * s);
    cairo_stroke(cr);
    cairo_restore(cr);
}

static void draw_map_axes(cairo_t *cr, const map_layout *L, const post_map_opts *o)
{
    const post_map_geom *g = &L->g;
    double s = L->s, lw = fmax(1.0, round(s)), ls = o->length_scale;
    cairo_set_source_rgb(cr, POST_INK_RGB);
    post_frame_outside(cr, g->plot_x, g->plot_y, g->plot_w, g->plot_h, lw);
    post_font(cr, L->f_tick, 0);
    double bottom = g->plot_y + g->plot_h + lw, left = g->plot_x - lw;
    char buf[64];
    for (int k = 0; k < L->xt.n; k++) {
        double X = map_X(g, L->xt.v[k] / ls);
        cairo_move_to(cr, X, bottom);
        cairo_line_to(cr, X, bottom + L->ticklen);
        post_fmt_tick(buf, sizeof buf, L->xt.v[k], L->xt.decimals);
        post_text(cr, X, bottom + L->ticklen + 5.0 * s, buf, 0.5, 0.0);
    }
    for (int k = 0; k < L->yt.n; k++) {
        double Y = map_Y(g, L->yt.v[k] / ls);
        cairo_move_to(cr, left, Y);
        cairo_line_to(cr, left - L->ticklen, Y);
        post_fmt_tick(buf, sizeof buf, L->yt.v[k], L->yt.decimals);
        post_text(cr, left - L->ticklen - 5.0 * s, Y, buf, 1.0, 0.5);
    }
    cairo_set_line_width(cr, lw);
    cairo_stroke(cr);

    const char *lu = o->length_unit != NULL ? o->length_unit : "m";
    char lab[96];
    post_font(cr, L->f_label, 0);
    snprintf(lab, sizeof lab, "%s (%s)", o->x_name != NULL ? o->x_name : "x", lu);
    double xlab_y = bottom + L->ticklen + 5.0 * s + 1.2 * L->f_tick + 10.0 * s;
    post_text(cr, g->plot_x + g->plot_w / 2.0, xlab_y, lab, 0.5, 0.0);
    snprintf(lab, sizeof lab, "%s (%s)", o->y_name != NULL ? o->y_name : "y", lu);
    double ylab_x = 12.0 * s + POST_CAP_FRAC * L->f_label;
    cairo_save(cr);
    cairo_translate(cr, ylab_x, g->plot_y + g->plot_h / 2.0);
    cairo_rotate(cr, -EDDY_PI / 2.0);
    post_text(cr, 0.0, 0.0, lab, 0.5, 1.0);
    cairo_restore(cr);
}

static eddy_status draw_colour_bar(cairo_t *cr, const map_layout *L, const post_map_opts *o,
                                   eddy_error *err)
{
    const post_map_geom *g = &L->g;
    double s = L->s, lw = fmax(1.0, round(s)), vs = o->value_scale;
    uint32_t *lut = malloc(POST_LUT_N * sizeof *lut);
    cairo_surface_t *bs = cairo_image_surface_create(CAIRO_FORMAT_ARGB32, g->bar_w, g->bar_h);
    if (lut == NULL || cairo_surface_status(bs) != CAIRO_STATUS_SUCCESS) {
        free(lut);
        cairo_surface_destroy(bs);
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "field map: out of memory for the colour bar");
    }
    post_cmap_lut(o->diverging, lut);
    cairo_surface_flush(bs);
    unsigned char *data = cairo_image_surface_get_data(bs);
    int stride = cairo_image_surface_get_stride(bs);
    for (int r = 0; r < g->bar_h; r++) {
        uint32_t *row = (uint32_t *)(void *)(data + (size_t)r * stride);
        uint32_t c = post_cmap_lut_pick(lut, g->bar_h > 1 ? 1.0 - (double)r / (g->bar_h - 1) : 1.0);
        for (int i = 0; i < g->bar_w; i++)
            row[i] = c;
    }
    cairo_surface_mark_dirty(bs);
    cairo_save(cr);
    cairo_set_source_surface(cr, bs, g->bar_x, g->bar_y);
    cairo_pattern_set_filter(cairo_get_source(cr), CAIRO_FILTER_NEAREST);
    cairo_rectangle(cr, g->bar_x, g->bar_y, g->bar_w, g->bar_h);
    cairo_fill(cr);
    cairo_restore(cr);
    cairo_surface_destroy(bs);
    free(lut);

    cairo_set_source_rgb(cr, POST_INK_RGB);
    post_frame_outside(cr, g->bar_x, g->bar_y, g->bar_w, g->bar_h, lw);
    post_font(cr, L->f_tick, 0);
    double right = g->bar_x + g->bar_w + lw, lo = g->vmin * vs, hi = g->vmax * vs;
    double label_x = right + L->ticklen + 5.0 * s, wmax = 0.0;
    char buf[64];
    for (int k = 0; k < L->bt.n; k++) {
        double Y = g->bar_y + (hi - L->bt.v[k]) / (hi - lo) * (g->bar_h - 1) + 0.5;
        cairo_move_to(cr, right, Y);
        cairo_line_to(cr, right + L->ticklen, Y);
        post_fmt_tick(buf, sizeof buf, L->bt.v[k], L->bt.decimals);
        post_text(cr, label_x, Y, buf, 0.0, 0.5);
        wmax = fmax(wmax, post_text_width(cr, buf));
    }
    cairo_set_line_width(cr, lw);
    cairo_stroke(cr);
    post_font(cr, L->f_bar_label, 0);
    post_rich_text(cr, label_x + wmax + 10.0 * s + POST_CAP_FRAC * L->f_bar_label,
                   g->bar_y + g->bar_h / 2.0, L->bar_label, L->f_bar_label, 0.5, 1.0, -EDDY_PI / 2.0);
    return EDDY_OK;
}

eddy_status post_map_png(const char *path, int nx, int ny, const double *x, const double *y,
                         const double *field, const unsigned char *cell_mask,
                         const double *a_nodes, const post_map_opts *o, eddy_error *err)
{
    if (path == NULL)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "field map: NULL output path");
    map_layout *L = malloc(sizeof *L);
    if (L == NULL)
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "field map: out of memory");
    eddy_status st = map_layout_compute(nx, ny, x, y, field, cell_mask, o, L, err);
    if (st != EDDY_OK) {
        free(L);
        return st;
    }
    const post_map_geom *g = &L->g;
    cairo_surface_t *surf;
    cairo_t *cr;
    st = post_canvas_new(g->width, g->height, &surf, &cr, err);
    if (st != EDDY_OK) {
        free(L);
        return st;
    }
    st = paint_field(cr, L, nx, ny, x, y, field, cell_mask, o->diverging, a_nodes,
                     o->n_flux_lines, err);
    if (st == EDDY_OK && o->n_outlines > 0)
        draw_outlines(cr, L, o->outlines, o->n_outlines);
    if (st == EDDY_OK) {
        draw_map_axes(cr, L, o);
        st = draw_colour_bar(cr, L, o, err);
    }
    if (st == EDDY_OK) {
        post_title(cr, o->title, L->f_title, g->plot_x, 12.0 * L->s, g->width, 12.0 * L->s);
        st = post_canvas_status(cr, err);
    }
    if (st == EDDY_OK) {
        char speed[64], software[160];
        const char *speed_p = NULL;
        if (isfinite(o->speed)) {
            snprintf(speed, sizeof speed, "%.9g", o->speed);
            speed_p = speed;
        }
        post_png_text kv[] = {{"Title", o->title},
                       {"Software", post_png_software(software, sizeof software, o->version)},
                       {"eddy2d:case", o->case_name},
                       {"eddy2d:speed_m_per_s", speed_p},
                       {"eddy2d:quantity", o->quantity},
                       {"eddy2d:unit", o->unit_label}};
        st = post_png_write(path, surf, kv, (int)(sizeof kv / sizeof kv[0]), err);
    }
    cairo_destroy(cr);
    cairo_surface_destroy(surf);
    free(L);
    return st;
}
