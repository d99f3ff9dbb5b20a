/*
 * post_img.h - pictures of the post-processing module (prefix post_): field
 * maps, force-speed plots and two-curve plots as PNG, drawn with cairo into
 * an image buffer and written with libpng.
 *
 * Where they live: colour maps in post/post_cmap.c, field maps in
 * post/post_map.c, the force-speed and two-curve plots in post/post_plot.c.
 * The drawing pieces they share (ticks, number formats, text, canvas, the
 * PNG writer, the axes and legend of the line plots: post_draw.c,
 * post_png.c, post_chart.c) are private to post/ and declared in
 * post/post_draw.h, which nothing outside post/ includes.
 */
#ifndef EDDY_POST_IMG_H
#define EDDY_POST_IMG_H

#include "mesh/eddy.h"

/*
 * Pictures of the post-processing module: field maps and
 * force-speed plots, drawn with cairo into an image buffer and written as
 * PNG with libpng.
 *
 * Conventions shared by every function here:
 *   - all inputs are in SI units (m, T, Wb/m, A/m^2, N/m, m/s); the scale
 *     factors in the option structs convert to display units for labels only;
 *   - nothing is printed and nothing exits: every function that can fail
 *     returns an eddy_status (EDDY_OK on success) and, if err is non-NULL,
 *     fills it with a message;
 *   - the caller keeps ownership of every array and string passed in; none
 *     is retained after the call returns;
 *   - pictures are written as 8-bit RGB PNG files (RGBA only if a pixel is
 *     not opaque, which the renderers here never produce) with text chunks
 *     describing the content (tEXt, or iTXt when a value is not plain ASCII).
 *
 * Text is drawn with cairo's "sans-serif" toy font.  In the quantity and
 * unit labels of a field map, "_x" / "_{abc}" draw a subscript and "^2" /
 * "^{-1}" a superscript ("J_z", "MA/m^2"); titles and case names are drawn
 * literally.
 */

/* ------------------------------------------------------------------ */
/* Colour maps                                                         */
/* ------------------------------------------------------------------ */

/* Colour of a normalised value t in [0, 1] (clamped; NaN gives 0.5).
 *   diverging != 0: the project's diverging map, constructed in CIELAB by
 *                   the design rules of Kovesi, "Good colour maps: how to
 *                   design them", arXiv:1509.03700 (2015): ink blue (t = 0,
 *                   L* 24) through a neutral light grey (t = 0.5, L* 96,
 *                   no chroma) to burnt orange (t = 1, L* 24); lightness
 *                   linear in |2t - 1| and the two halves equal in L* and
 *                   C*, so t and 1 - t have the same lightness;
 *   diverging == 0: batlow (Crameri, Scientific colour maps, MIT licence;
 *                   Crameri, Shephard & Heron, Nature Communications 11,
 *                   5444, 2020), its 256-entry table interpolated linearly:
 *                   dark blue (L* 12) through green and ochre to pale pink
 *                   (L* 87), lightness increasing throughout.
 * rgb receives sRGB components 0..255 (rounded).  Never fails. */
void post_cmap_rgb(int diverging, double t, unsigned char rgb[3]);

/* Size of the house palette of line series. */
#define POST_SERIES_N 8

/* Colour of series k (0-based) of n in every line plot of the project:
 * for n <= POST_SERIES_N the house palette (ink blue, amber, sea green,
 * plum, umber, pale sky, terracotta, moss; pairwise CIELAB Delta E*ab >= 36);
 * for more series a ramp along the sequential map (post_cmap_rgb(0, .))
 * from t = 0 to 0.8, series k at 0.8 k / (n - 1), so colour follows the
 * order of the series.  k is clamped to 0..n-1, n to >= 1.  rgb receives
 * sRGB 0..255.  The force plot draws drag as series 0 and normal force as
 * series 1 (of 2).  Never fails. */
void post_series_rgb(int k, int n, unsigned char rgb[3]);

/* ------------------------------------------------------------------ */
/* Field map                                                           */
/* ------------------------------------------------------------------ */

typedef struct {
    const char *title;       /* UTF-8 title drawn above the map; NULL: none      */
    const char *quantity;    /* e.g. "J_z" or "|B|": colour-bar label, PNG text  */
    const char *unit_label;  /* display unit, e.g. "MA/m^2" or "T"               */
    double value_scale;      /* display value = SI value * value_scale           */
    int diverging;           /* 1: diverging map, range -m..m with m = max |v|;
                                0: batlow, range min(0, vmin)..vmax              */
    const char *length_unit; /* axis unit label, e.g. "mm" or "m"                */
    const char *x_name;      /* horizontal axis name; NULL: "x" ("z" in r-z)     */
    const char *y_name;      /* vertical axis name; NULL: "y" ("r" in r-z)       */
    double length_scale;     /* display length = metres * length_scale           */
    int width_px;            /* image width in px (0: 1200; 300..10000)          */
    double view[4];          /* x0, y0, x1, y1 in m: the window drawn (crop)      */
    int n_flux_lines;        /* contours of A at equal steps (0..1000); 0: none;
                                in r-z pass psi = r A_phi: its contours are the
                                field lines                                      */
    const double *outlines;  /* n_outlines rectangles x0,y0,x1,y1 (m), may be NULL
                                when n_outlines == 0                             */
    int n_outlines;
    const char *case_name;   /* PNG text "eddy2d:case"; NULL: omitted            */
    double speed;            /* m/s, PNG text "eddy2d:speed_m_per_s"; NaN: omitted */
    const char *version;     /* tool version for PNG text "Software"; NULL: none */
} post_map_opts;

/* Fill *o with defaults: no title, quantity "value", unit "", value_scale 1,
 * batlow, axes in mm (length_scale 1000), width 1200 px, view all zero
 * (meaning: the whole grid), no flux lines, no outlines, speed NaN. */
void post_map_opts_defaults(post_map_opts *o);

/* Where things go in a field-map image (all in px, origin top-left, y down).
 * The plot rectangle holds exactly plot_w x plot_h resampled field pixels;
 * plot_h = round(plot_w * view height / view width) (true geometry). */
typedef struct {
    int width, height;        /* image size                                  */
    int plot_x, plot_y;       /* top-left pixel of the field rectangle        */
    int plot_w, plot_h;       /* its size                                    */
    int bar_x, bar_y;         /* top-left pixel of the colour-bar gradient    */
    int bar_w, bar_h;         /* its size (top row = vmax)                   */
    double vmin, vmax;        /* colour range, SI units of the field          */
    double view[4];           /* the view actually drawn, m                   */
} post_map_geom;

/* Compute the layout post_map_png would use for the same arguments, without
 * drawing.  Arguments as for post_map_png (a_nodes is not needed); g is the
 * output, written only on success.
 * Returns EDDY_OK, EDDY_ERR_INPUT (bad argument), EDDY_ERR_NUMERIC
 * (non-finite field value) or EDDY_ERR_NOMEM. */
eddy_status post_map_geometry(int nx, int ny, const double *x, const double *y,
                              const double *field, const unsigned char *cell_mask,
                              const post_map_opts *o, post_map_geom *g, eddy_error *err);

/* Draw a colour map of a nodal field and write it as a PNG file.
 *   path       output file, replaced atomically (written to a new temporary file
 *              beside it and renamed when complete; see eddy_atomic_open).
 *   nx, ny     grid size, both >= 2.
 *   x[nx], y[ny] node coordinates in m, finite and strictly increasing
 *              (non-uniform tensor grid).
 *   field      node values (SI), nx*ny, index i + nx*j.  Each pixel of the
 *              map is located on the grid by binary search and the field is
 *              interpolated bilinearly inside its cell.
 *   cell_mask  optional, (nx-1)*(ny-1) bytes, index i + (nx-1)*j: cells with
 *              0 are painted as the value 0 (e.g. J outside conductors) and
 *              do not count for the colour range; NULL: all cells count.
 *   a_nodes    optional node values of the vector potential A_z (Wb/m),
 *              nx*ny, for o->n_flux_lines contour lines at equal steps of A
 *              between min and max A over the cells in view (so their
 *              density shows |B|); NULL: no flux lines.
 *   o          options (see post_map_opts), required; view all zero = whole
 *              grid.
 * Pixels of the view outside the grid are left white.  y points up.
 * Returns EDDY_OK; EDDY_ERR_INPUT for a bad argument; EDDY_ERR_NUMERIC for a
 * non-finite field or A value; EDDY_ERR_NOMEM; EDDY_ERR_IO when the file
 * cannot be written. */
eddy_status post_map_png(const char *path, int nx, int ny, const double *x, const double *y,
                         const double *field, const unsigned char *cell_mask,
                         const double *a_nodes, const post_map_opts *o, eddy_error *err);

/* ------------------------------------------------------------------ */
/* Force-speed plot                                                    */
/* ------------------------------------------------------------------ */

typedef struct {
    const char *title;     /* UTF-8; NULL: "Forces vs speed"                */
    const char *case_name; /* PNG text "eddy2d:case"; NULL: omitted         */
    const char *version;   /* PNG text "Software"; NULL: omitted            */
    int width_px, height_px; /* 0: 1000 x 650; each 300..10000              */
    /* The drag peak to mark.  The plot does not look for a peak itself: it
     * draws the one the caller reports (the application passes result.json's
     * "peak", found by design_peak, design/design.h section 7).             */
    const char *ref_label; /* legend name of the reference curves; NULL:
                              "reference"                                    */
    int has_peak;          /* 1: mark the peak below; 0: no peak marker       */
    double peak_speed;     /* m/s, signed like the speeds; finite, inside the
                              range of speed[] (to 1e-9 relative) and, on a
                              log axis, of the speeds' sign                  */
    double peak_drag;      /* N/m, finite                                     */
    int peak_interpolated; /* 1: an estimate between the samples (the label
                              puts U+2248 "almost equal to" before F); 0: a
                              sample                                         */
    int whole_ring;        /* 1: forces of a whole ring (axisymmetric case): the
                              unit is N, not N/m (axis title, legend, peak label,
                              PNG text "eddy2d:unit"); 0: per unit length     */
    const double *drag_error;   /* n estimated absolute errors of drag[] (N/m),
                                   drawn as error bars; NULL: none            */
    const double *normal_error; /* the same for normal[]; NULL: none          */
} post_plot_opts;

/* Fill *o with the defaults above: strings NULL, sizes 0 (default), no
 * peak (has_peak 0, peak_speed and peak_drag NaN, peak_interpolated 0). */
void post_plot_opts_defaults(post_plot_opts *o);


/* Plot drag and normal force per unit length against speed and write a PNG.
 *   speed[n]   m/s (n >= 1); drag[n], normal[n] N/m (normal may be NULL).
 *              Computed points are marked and joined in speed order.
 *   low_speed_slope  the damping coefficient c (N s/m^2: drag per unit
 *              speed at low speed, post_damping_coefficient), drawn as the
 *              dashed asymptote drag = c v, clipped to the plot, and keyed
 *              "F = c v, c = ... N s/m^2"; NAN: not drawn.
 *   ref_n, ref_speed, ref_drag, ref_normal  reference curve(s) drawn as thin
 *              lines without markers; ref_n may be 0 (arrays then unused);
 *              with ref_n > 0 ref_speed is required and either of ref_drag /
 *              ref_normal may be NULL.
 *   o          options; may be NULL for defaults (no peak marker).
 * The speed axis is logarithmic when all |speeds| (points and reference)
 * are > 0, of one sign and span more than a decade (|v| is then plotted),
 * else linear.  With o->has_peak the point (peak_speed, peak_drag) is
 * ringed and labelled "peak drag F N/m at v m/s", and the PNG gets the
 * text chunks "eddy2d:peak_speed_m_per_s" and "eddy2d:peak_drag_N_per_m"
 * (the two numbers with 17 significant digits, so they read back exactly);
 * without it there is neither marker nor chunk.
 * Returns EDDY_OK; EDDY_ERR_INPUT for bad arguments (among them a peak that
 * is not finite or outside the plotted speeds); EDDY_ERR_NUMERIC for a
 * non-finite value; EDDY_ERR_NOMEM; EDDY_ERR_IO when the file cannot be
 * written. */
eddy_status post_plot_forces_png(const char *path, int n, const double *speed,
                                 const double *drag, const double *normal,
                                 double low_speed_slope, int ref_n, const double *ref_speed,
                                 const double *ref_drag, const double *ref_normal,
                                 const post_plot_opts *o, eddy_error *err);

/* ------------------------------------------------------------------ */
/* Two curves against a common x                                       */
/* ------------------------------------------------------------------ */

typedef struct {
    const char *title;     /* drawn above the plot (NULL: none) and PNG text "Title" */
    const char *case_name; /* PNG text "eddy2d:case"; NULL: omitted                 */
    const char *version;   /* tool version for PNG text "Software"; NULL: none      */
    const char *x_label;   /* x-axis title, e.g. "distance (m)"; PNG "eddy2d:x"     */
    const char *y1_label;  /* left axis, e.g. "speed (m/s)"; PNG "eddy2d:y1"        */
    const char *y2_label;  /* right axis, e.g. "deceleration (m/s^2)"; PNG
                              "eddy2d:y2"; unused without y2                        */
    const char *y1_name, *y2_name; /* legend entries (NULL: the axis label)         */
    int width_px, height_px;       /* 0: 1000 x 650; each 300..10000               */
} post_xy_opts;

/* Fill *o with defaults: everything NULL / 0. */
void post_xy_opts_defaults(post_xy_opts *o);

/* Plot y1 (and y2) against x and write a PNG.
 *   x[n], y1[n]  n >= 2 finite values; the curve joins the points in the
 *                given order (x need not be monotonic).
 *   y2[n]        a second curve on a right-hand axis with its own scale, its
 *                ticks on the grid lines of y1's; NULL: none.
 *   o            options; may be NULL for defaults.
 * Linear axes with nice ticks; y1 is drawn in series colour 0, y2 in series
 * colour 1 of 2 (post_series_rgb; axis titles in the same colours).  A
 * legend strip under the title is drawn for two curves, or for one when
 * y1_name is set.  In axis titles and legend names "_x" /
 * "_{abc}" draw a subscript and "^2" / "^{-1}" a superscript.
 * Returns EDDY_OK; EDDY_ERR_INPUT for n < 2, a NULL path or array, a
 * non-finite value or a bad size; EDDY_ERR_NOMEM; EDDY_ERR_IO when the file
 * cannot be written. */
eddy_status post_plot_xy_png(const char *path, int n, const double *x, const double *y1,
                             const double *y2, const post_xy_opts *o, eddy_error *err);

/* ------------------------------------------------------------------ */
/* Many curves on one pair of axes                                     */
/* ------------------------------------------------------------------ */

typedef struct {
    const char *title;     /* drawn above the plot (NULL: none) and PNG text "Title"  */
    const char *version;   /* tool version for PNG text "Software"; NULL: none       */
    const char *x_label;   /* x-axis title, e.g. "speed (m/s)"; PNG "eddy2d:x"       */
    const char *y_label;   /* value-axis title; PNG "eddy2d:y"                       */
    const char *key_label; /* what tells the curves apart, e.g. a variant path; shown
                              with the colour ramp, PNG "eddy2d:key"; NULL: "case"  */
    int width_px, height_px; /* 0: 1000 x 650; each 300..10000                       */
} post_overlay_opts;

/* Fill *o with defaults: everything NULL / 0. */
void post_overlay_opts_defaults(post_overlay_opts *o);

/* Plot ncurve curves on one pair of axes and write a PNG.
 *   npt[c]        points of curve c (>= 1), c = 0 .. ncurve-1 (ncurve >= 1);
 *   x[c], y[c]    its npt[c] finite values (any units; the labels say which);
 *                 points are joined in x order and marked with dots;
 *   names[c]      its legend label (UTF-8).
 *   o             options; may be NULL for defaults.
 * Curve c is drawn in post_series_rgb(c, ncurve).  Up to POST_SERIES_N
 * curves are keyed by a legend strip under the title (one entry a curve);
 * beyond that the colours run along a ramp in curve order and are keyed by
 * a colour strip from names[0] to names[ncurve-1] with key_label and the
 * count, so the legend stays one line however many curves there are.  The
 * x axis is logarithmic when every x is > 0 and they span more than a
 * decade, else linear; the value axis holds 0.  PNG text "eddy2d:series"
 * lists every curve as "name<TAB>#rrggbb" lines (its colour).
 * The file is replaced atomically (eddy_atomic_open).  The caller keeps
 * every array.  Returns EDDY_OK; EDDY_ERR_INPUT for a NULL argument, a curve
 * without points or a bad size; EDDY_ERR_NUMERIC for a non-finite value;
 * EDDY_ERR_NOMEM; EDDY_ERR_IO when the file cannot be written. */
eddy_status post_plot_overlay_png(const char *path, int ncurve, const int *npt,
                                  const double *const *x, const double *const *y,
                                  const char *const *names, const post_overlay_opts *o,
                                  eddy_error *err);

#endif
