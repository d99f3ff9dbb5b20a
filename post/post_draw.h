/*
 * post_draw.h - PRIVATE to post/: the drawing pieces the pictures share.
 *
 * Only the .c files of post/ include this header; nothing outside post/
 * may (the public interface of the pictures is post/post_img.h, and
 * nothing here is part of it: names, types and behaviour may change with
 * the pictures).  Everything draws with cairo into an ARGB32 image surface.
 * Conventions: lengths in image pixels, origin top left, y down; font
 * sizes in px; colours are cairo RGB components 0..1; nothing prints,
 * nothing exits, failures return an eddy_status and fill err.
 *
 *   post_cmap.c   colour-map lookup tables (section 1)
 *   post_draw.c   ticks and numbers, text and rich text, canvas (2-4)
 *   post_png.c    the PNG writer with text chunks (5)
 *   post_chart.c  the furniture of the line plots: axes, grid, series,
 *                 legend (6)
 *   post_map.c    field maps;  post_plot.c  force-speed and two-curve plots
 */
#ifndef EDDY_POST_DRAW_H
#define EDDY_POST_DRAW_H

#include <stddef.h>
#include <stdint.h>

#include <cairo.h>

#include "mesh/eddy.h"

/* Picture sizes accepted by every renderer, px per side. */
#define POST_IMG_MIN_PX 300
#define POST_IMG_MAX_PX 10000

/* ------------------------------------------------------------------ */
/* 1. Colour-map lookup (post_cmap.c)                                  */
/* ------------------------------------------------------------------ */

/* Entries of a lookup table. */
#define POST_LUT_N 1024

/* Fill lut with POST_LUT_N opaque ARGB32 pixels of post_cmap_rgb(diverging,
 * k / (POST_LUT_N - 1)), k = 0 .. POST_LUT_N - 1. */
void post_cmap_lut(int diverging, uint32_t lut[POST_LUT_N]);

/* The entry nearest to t in [0, 1] (clamped; NaN gives entry 0). */
uint32_t post_cmap_lut_pick(const uint32_t lut[POST_LUT_N], double t);

/* post_series_rgb (post/post_img.h) as cairo components 0..1. */
void post_series_col(int k, int n, double col[3]);

/* ------------------------------------------------------------------ */
/* 2. Ticks and numbers (post_draw.c)                                  */
/* ------------------------------------------------------------------ */

#define POST_MAX_TICKS 64

/* Tick values of a linear axis: n values (display units), `step` apart,
 * each shown with `decimals` decimals. */
typedef struct {
    int n;
    double v[POST_MAX_TICKS];
    double step;
    int decimals;
} post_ticks;

/* Ticks at multiples of a "nice" step (1, 2 or 5 times a power of ten;
 * Heckbert, Graphics Gems 1990) about (hi - lo) / (target - 1), inside
 * [lo, hi].  t->n = 0 for an empty or non-finite range. */
void post_ticks_make(double lo, double hi, int target, post_ticks *t);

/* Ticks at alo, alo + d, alo + 2d, ... up to ahi (d > 0). */
void post_ticks_every(double alo, double ahi, double d, post_ticks *t);

/* A tick label of v with `decimals` decimals (%.4g beyond 1e6); "-0"
 * becomes "0" and a leading '-' the Unicode minus sign.  UTF-8 into buf. */
void post_fmt_tick(char *buf, size_t size, double v, int decimals);

/* v with 3 significant digits, without an exponent from 1e-3 to 1e6;
 * Unicode minus sign.  UTF-8 into buf. */
void post_fmt_sig3(char *buf, size_t size, double v);

/* ------------------------------------------------------------------ */
/* 3. Text (post_draw.c)                                               */
/* ------------------------------------------------------------------ */

/* Height of capitals as a fraction of the font size (to centre digits). */
#define POST_CAP_FRAC 0.72

/* Select the "sans-serif" toy font of `size` px, bold or not. */
void post_font(cairo_t *cr, double size, int bold);

/* Advance width of s in the current font, px. */
double post_text_width(cairo_t *cr, const char *s);

/* Width of the widest tick label of t in the current font, px. */
double post_ticks_label_width(cairo_t *cr, const post_ticks *t);

/* Draw s literally with its anchor at (x, y): ha 0 left, 0.5 centre,
 * 1 right; va 0 top of the capitals, 0.5 middle, 1 baseline. */
void post_text(cairo_t *cr, double x, double y, const char *s, double ha, double va);

/* Rich labels: "_x" or "_{abc}" is a subscript, "^2" or "^{-1}" a
 * superscript (drawn at 0.7 of the size), the rest is literal UTF-8; at
 * most 24 pieces of 127 bytes each are drawn.  Width of s at font size
 * `size`, px (the font size is left at `size`). */
double post_rich_width(cairo_t *cr, const char *s, double size);

/* Draw the rich label s (NULL: nothing) at font size `size`, anchored at
 * (x, y) as post_text, turned by `angle` radians about the anchor
 * (cairo's sense: -pi/2 reads from bottom to top). */
void post_rich_text(cairo_t *cr, double x, double y, const char *s, double size, double ha,
                    double va, double angle);

/* The house title (NULL or "": nothing): regular weight, in the ink
 * colour, left-aligned at x with the top of its capitals at y, and a short
 * amber rule (series colour 1 of 2) under its first letters; shrunk to fit
 * between x and the image width W less pad. */
void post_title(cairo_t *cr, const char *title, double size, double x, double y, double W,
                double pad);

/* ------------------------------------------------------------------ */
/* 4. Canvas (post_draw.c)                                             */
/* ------------------------------------------------------------------ */

/* A white w x h ARGB32 surface and a context on it.  On failure both are
 * NULL and the status is EDDY_ERR_NOMEM (or EDDY_ERR_INPUT for a size cairo
 * rejects).  The caller destroys both with cairo_destroy and
 * cairo_surface_destroy. */
eddy_status post_canvas_new(int w, int h, cairo_surface_t **surf, cairo_t **cr, eddy_error *err);

/* The context's error after drawing, as an eddy_status (EDDY_OK if none). */
eddy_status post_canvas_status(cairo_t *cr, eddy_error *err);

/* A 4 x 4 scratch surface (*surf) and its context, for measuring text
 * before the picture size is known; the caller destroys both.  A cairo
 * "nil" object on failure, which measures as zero and is safe to use. */
cairo_t *post_canvas_scratch(cairo_surface_t **surf);

/* Stroke a frame of line width lw just outside the pixel rectangle
 * (x, y, w, h), in the current colour. */
void post_frame_outside(cairo_t *cr, double x, double y, double w, double h, double lw);

/* ------------------------------------------------------------------ */
/* 5. PNG writer (post_png.c)                                          */
/* ------------------------------------------------------------------ */

/* One text chunk: key (Latin-1 keyword, 1..79 bytes) and value (UTF-8;
 * NULL: the chunk is left out). */
typedef struct {
    const char *key;
    const char *value;
} post_png_text;

/* Write the surface to path (overwritten) as 8-bit RGB, or RGBA if a
 * pixel is not opaque, undoing cairo's premultiplied alpha, with the text
 * chunks text[ntext] (tEXt for ASCII values, iTXt otherwise).  The surface
 * is only read.  Returns EDDY_OK, EDDY_ERR_NOMEM, EDDY_ERR_IO (the message
 * names path) or EDDY_ERR_INTERNAL for a surface without data. */
eddy_status post_png_write(const char *path, cairo_surface_t *surf, const post_png_text *text,
                           int ntext, eddy_error *err);

/* The PNG "Software" text "eddy2d VERSION" in buf, or NULL for a NULL
 * version (the chunk is then left out). */
const char *post_png_software(char *buf, size_t size, const char *version);

/* ------------------------------------------------------------------ */
/* 6. Line plots: axes, grid, series, legend (post_chart.c)            */
/* ------------------------------------------------------------------ */

/* The plot rectangle and the ranges of its two axes. */
typedef struct {
    double px, py, pw, ph;     /* plot rectangle, px                        */
    double xlo, xhi, ylo, yhi; /* axis ranges (xlo > 0 when xlog)            */
    int xlog;                  /* 1: the x axis is logarithmic               */
} post_axes;

/* Image x of the abscissa v, image y of the ordinate v (px). */
double post_axes_x(const post_axes *a, double v);
double post_axes_y(const post_axes *a, double v);

/* Sizes in a line plot of W x H px (all px). */
typedef struct {
    double s;                               /* scale against 1000 x 650 px      */
    double f_tick, f_label, f_title, f_leg; /* font sizes                       */
    double pad, ticklen, label_h;
    double bottom;                          /* plot rectangle to the lower edge */
} post_chart_style;

/* Picture size from the options w, h (0: 1000 x 650), checked against
 * POST_IMG_MIN_PX..POST_IMG_MAX_PX; EDDY_ERR_INPUT names `plot`. */
eddy_status post_chart_size(const char *plot, int w, int h, int *W, int *H, eddy_error *err);

/* The sizes of a W x H plot; text keeps at least 0.8 of its full size. */
void post_chart_style_init(int W, int H, post_chart_style *ps);

/* Width of a side margin holding a value axis whose widest tick label is
 * label_w px: axis title, labels, tick marks. */
double post_chart_value_margin(const post_chart_style *ps, double label_w);

/* A loose value axis over [lo, hi] (extended to whole tick steps) with
 * ticks about 45 px apart on the plot height ax->ph (10 at most). */
void post_chart_value_axis(double lo, double hi, const post_axes *ax, const post_chart_style *ps,
                           double *alo, double *ahi, post_ticks *t);

/* A loose axis with the most ticks (10 at most) whose horizontal labels,
 * in the current font, fit along len px with gap px between them. */
void post_chart_fit_loose_axis(cairo_t *cr, double lo, double hi, double len, double gap,
                               double *alo, double *ahi, post_ticks *t);

/* An axis over [lo, hi] cut into exactly nint steps of 1, 2, 2.5 or 5 times
 * a power of ten, so its ticks fall on the grid lines of another axis with
 * nint steps; an axis of values >= 0 does not go below zero. */
void post_chart_aligned_axis(double lo, double hi, int nint, double *alo, double *ahi,
                             post_ticks *t);

/* Logarithmic-axis ticks: majors (labelled) at decades, minors at 2..9
 * times them (decade marks only beyond 5 decades). */
typedef struct {
    int n;
    double v[160];
    int major[160];
} post_log_ticks;

/* The ticks of a log axis over [lo, hi], 0 < lo < hi. */
void post_chart_log_ticks(double lo, double hi, post_log_ticks *t);

/* The ink of axes, ticks and text, and the dotted value rules (cairo RGB). */
#define POST_INK_RGB 0.16, 0.18, 0.23
#define POST_GRID_RGB 0.74, 0.78, 0.85

/* Dotted rules across the plot at the value ticks yt (none along x), and a
 * solid line at zero when the value range holds it. */
void post_chart_grid(cairo_t *cr, const post_axes *ax, const post_chart_style *ps,
                     const post_ticks *yt);

/* The open axes: a line of width lw along the left and the bottom of the
 * plot rectangle (and the right side when right != 0); no top line. */
void post_chart_axis_lines(cairo_t *cr, const post_axes *ax, double lw, int right);

/* Tick marks and labels of a value axis on the left (right == 0) or right
 * side of the frame of line width lw; ax gives that axis's range. */
void post_chart_value_ticks(cairo_t *cr, const post_axes *ax, const post_ticks *t, int right,
                            const post_chart_style *ps, double lw);

/* Tick marks and labels below the frame: a linear x axis (t), or a
 * logarithmic one (lt; labels that would overlap their left neighbour are
 * left out, powers of ten beyond 1e5 or below 1e-3 written 10^k). */
void post_chart_x_ticks(cairo_t *cr, const post_axes *ax, const post_ticks *t,
                        const post_chart_style *ps, double lw);
void post_chart_log_x_ticks(cairo_t *cr, const post_axes *ax, const post_log_ticks *lt,
                            const post_chart_style *ps, double lw);

/* Axis titles (rich labels; NULL: none) in the current colour: the x title
 * below the tick labels; a value-axis title reading upwards with its
 * baseline at x = base_x, centred on the plot height. */
void post_chart_x_title(cairo_t *cr, const post_axes *ax, const post_chart_style *ps, double lw,
                        const char *label);
void post_chart_value_title(cairo_t *cr, const post_axes *ax, const post_chart_style *ps,
                            double base_x, const char *label);

/* The polyline through (xs[k], ys[k]), k = 0 .. n-1 taken in the order
 * order[] (NULL: as given), colour col with opacity alpha, line width lw;
 * marker 0 none, 1 diamonds, 2 triangles, 3 dots of half-size mr px at the
 * points, each on a white ring 1.2 px wider. */
void post_chart_series(cairo_t *cr, const post_axes *ax, int n, const double *xs,
                       const double *ys, const int *order, const double col[3], double lw,
                       double alpha, int marker, double mr);

/* A legend entry. */
typedef struct {
    const char *label;   /* rich label                                  */
    const double *col;   /* RGB, 3 components                           */
    int marker;          /* 0 none, 1 diamond, 2 triangle, 3 dot        */
    double lw;           /* line width, px                              */
    double alpha;        /* line opacity                                */
    int dashed;
    int rank;            /* position in the legend, smallest first      */
} post_legend_entry;

/* The legend as an unboxed strip: entries (reordered by rank) side by side
 * from (x, y) (top left, px), each a short swatch of its line and marker
 * and its label, wrapped onto a new row before an entry that would pass
 * x + maxw.  draw == 0 only measures.  Returns the height of the strip, px
 * (0 for nleg < 1). */
double post_chart_legend_strip(cairo_t *cr, const post_chart_style *ps, post_legend_entry *leg,
                               int nleg, double x, double y, double maxw, int draw);

/* EDDY_OK if every v[k], k < n, is finite (v NULL: nothing to check), else
 * the status `code` with a message "PLOT: WHAT[k] is not finite". */
eddy_status post_chart_check_series(const char *plot, const char *what, int n, const double *v,
                                    eddy_status code, eddy_error *err);

#endif
