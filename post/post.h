/*
 * post.h - public interface of the post-processing module (prefix post_).
 *
 * Last stage of the pipeline: from the node values of A on a mesh_grid to
 * forces, losses, field values and reports.  Nothing here changes the grid
 * or the solution.
 *
 * Conventions: forces are per metre of out-of-plane depth (per period and
 * metre for a periodic domain), on the moving regions.  B = (dA/dy, -dA/dx);
 * J_z = -sigma v dA/dx in moving cells.
 */
#ifndef EDDY_POST_H
#define EDDY_POST_H

#include <stdio.h>

#include "mesh/mesh.h"

/* Forces and losses at one speed. */
typedef struct {
    double speed;              /* m/s */
    double force_x, force_y;   /* N/m, Lorentz force (J x B integral) on the moving regions */
    double drag;               /* N/m, -force_x * sign(speed): braking is positive */
    int stress_ok;             /* 1 if the stress-tensor contour exists (air around the band) */
    double stress_x, stress_y; /* N/m, Maxwell stress tensor force on the moving band */
    double drag_stress;        /* N/m, -stress_x * sign(speed) */
    double loss;               /* W/m, integral of J^2 / sigma */
    double low_speed_drag;     /* N/m, sigma |v| * integral of B0_y^2 (static field) */
    double magnetic_reynolds;  /* mu0 sigma |v| t of the moving band */
    double j_peak;             /* A/m^2, largest |J_z| at the quadrature points */
} post_forces;

/*
 * Integral over the moving cells of sigma * B_y^2 for the static field
 * a_static (nx*ny node values, Wb/m): the low-speed drag per unit speed,
 * low_speed_drag = |v| * post_lowspeed_slope(g, a_static).
 * Units: N s/m^2 (N per metre of depth, per m/s).
 */
double post_lowspeed_slope(const mesh_grid *g, const double *a_static);

/*
 * Forces, loss and checks at speed v for the solution a (nx*ny, Wb/m).
 *   lowspeed_slope: from post_lowspeed_slope of the static field (N s/m^2).
 *   f:   output.
 * The Lorentz force and the loss use 2 x 2 Gauss points per moving cell
 * (exact for the bilinear interpolant of A).  The stress-tensor force is the
 * average over the rows of air cells directly above and below the moving
 * band (a band average of the line integral; equal to the line integral
 * for an exact field, less sensitive to discretisation error); it is not
 * available (stress_ok = 0) when no air row touches the band or a
 * stationary non-air cell lies inside it.  On a zero (A = 0) boundary that
 * bounds the band the normal field is zero, and its pressure is included.
 * Returns EDDY_OK or EDDY_ERR_NUMERIC (non-finite result).
 */
eddy_status post_forces_compute(const mesh_grid *g, const double *a, double v,
                                double lowspeed_slope, post_forces *f, eddy_error *err);

/*
 * Flux density at a point (m): the derivative of the bilinear interpolant
 * of A in the cell holding (x, y).  Returns EDDY_ERR_INPUT outside the grid.
 */
eddy_status post_field_at(const mesh_grid *g, const double *a, double x, double y, double *bx,
                          double *by);

/* ------------------------------------------------------------------------ */
/* Reports                                                                   */
/* ------------------------------------------------------------------------ */

/* Solver statistics of one speed, as reported (seconds). */
typedef struct {
    double t_assemble, t_factor, t_solve, t_post;
    double lnz, unz, flops;
} post_point_info;

/* Everything the reports of one solve need.  All arrays have npoint entries. */
typedef struct {
    const mesh_case *c;
    const mesh_grid *g;
    long unknowns;
    double t_mesh, t_analyse;  /* s */
    int npoint;
    const post_forces *f;
    const post_point_info *info;
} post_report;

/*
 * Write DIR/result.json and DIR/forces.csv.  Each file is written to a
 * temporary name in DIR and renamed when complete, so an interrupted run
 * never leaves a half-written result.  dir must exist.
 * Returns EDDY_OK, EDDY_ERR_IO, EDDY_ERR_NOMEM.
 */
eddy_status post_write_results(const char *dir, const post_report *r, eddy_error *err);

/*
 * Create a directory and its parents (like mkdir -p).  Returns EDDY_OK or
 * EDDY_ERR_IO.
 */
eddy_status post_make_dir(const char *dir, eddy_error *err);

/*
 * Write `size` bytes to path atomically: to a temporary file in the same
 * directory, flushed to disk, then renamed over path.
 */
eddy_status post_write_atomic(const char *path, const char *data, size_t size,
                              eddy_error *err);

/* The safety notice printed by the tool and written into result.json. */
const char *post_safety_notice(void);

/* ------------------------------------------------------------------------ */
/* Pictures (post_img.c): field maps and force-speed plots as PNG, drawn    */
/* with cairo into an image buffer and written with libpng.                  */
/* ------------------------------------------------------------------------ */
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
 *   diverging != 0: Moreland's diverging "cool to warm" map (2009),
 *                   interpolated in his Msh colour space between the end
 *                   colours (59,76,192) and (180,4,38); t = 0.5 is the
 *                   neutral grey-white (221,221,221);
 *   diverging == 0: viridis (van der Walt & Smith, 2015), 256-entry table
 *                   interpolated linearly.
 * rgb receives sRGB components 0..255 (rounded).  Never fails. */
void post_cmap_rgb(int diverging, double t, unsigned char rgb[3]);

/* ------------------------------------------------------------------ */
/* Field map                                                           */
/* ------------------------------------------------------------------ */

typedef struct {
    const char *title;       /* UTF-8 title drawn above the map; NULL: none      */
    const char *quantity;    /* e.g. "J_z" or "|B|": colour-bar label, PNG text  */
    const char *unit_label;  /* display unit, e.g. "MA/m^2" or "T"               */
    double value_scale;      /* display value = SI value * value_scale           */
    int diverging;           /* 1: cool-warm, range -m..m with m = max |v|;
                                0: viridis, range min(0, vmin)..vmax             */
    const char *length_unit; /* axis unit label, e.g. "mm" or "m"                */
    double length_scale;     /* display length = metres * length_scale           */
    int width_px;            /* image width in px (0: 1200; 300..10000)          */
    double view[4];          /* x0, y0, x1, y1 in m: the window drawn (crop)      */
    int n_flux_lines;        /* contours of A at equal steps (0..1000); 0: none  */
    const double *outlines;  /* n_outlines rectangles x0,y0,x1,y1 (m), may be NULL
                                when n_outlines == 0                             */
    int n_outlines;
    const char *case_name;   /* PNG text "eddy2d:case"; NULL: omitted            */
    double speed;            /* m/s, PNG text "eddy2d:speed_m_per_s"; NaN: omitted */
    const char *version;     /* tool version for PNG text "Software"; NULL: none */
} post_map_opts;

/* Fill *o with defaults: no title, quantity "value", unit "", value_scale 1,
 * viridis, axes in mm (length_scale 1000), width 1200 px, view all zero
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
 * drawing.  Arguments as for post_map_png (a_nodes is not needed).
 * Returns EDDY_OK, EDDY_ERR_INPUT (bad argument), EDDY_ERR_NUMERIC
 * (non-finite field value) or EDDY_ERR_NOMEM. */
eddy_status post_map_geometry(int nx, int ny, const double *x, const double *y,
                              const double *field, const unsigned char *cell_mask,
                              const post_map_opts *o, post_map_geom *g, eddy_error *err);

/* Draw a colour map of a nodal field and write it as a PNG file.
 *   path       output file (overwritten).
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
 *   o          options (see post_map_opts); view all zero = whole grid.
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
} post_plot_opts;

/* Fill *o with the defaults above (all NULL, sizes 0 = default). */
void post_plot_opts_defaults(post_plot_opts *o);

/* Peak of a drag curve.  speed[n] (m/s, any order, n >= 1), drag[n] (N/m).
 * The sample with the largest |drag| is taken (so either sign convention
 * works); when it is not at either end of the speed range, a parabola
 * through |drag| there and at its two speed-neighbours - in log10(speed) if
 * log_speed (all speeds must then be > 0), else in speed - is used instead
 * when it is concave, since its vertex is a better estimate of the true
 * maximum between samples.  Outputs (any may be NULL): *v_peak (m/s),
 * *f_peak (N/m, with the sign of the largest sample), *refined (1 if the
 * parabola was used, else 0).
 * Returns EDDY_OK or EDDY_ERR_INPUT (n < 1, NULL arrays, non-finite values,
 * speed <= 0 with log_speed). */
eddy_status post_force_peak(int n, const double *speed, const double *drag, int log_speed,
                            double *v_peak, double *f_peak, int *refined, eddy_error *err);

/* Plot drag and normal force per unit length against speed and write a PNG.
 *   speed[n]   m/s (n >= 1); drag[n], normal[n] N/m (normal may be NULL).
 *              Computed points are marked and joined in speed order.
 *   low_speed_slope  drag/speed at low speed (N/m per m/s), drawn as the
 *              dashed line drag = slope * v; NAN: not drawn.
 *   ref_n, ref_speed, ref_drag, ref_normal  reference curve(s) drawn as thin
 *              lines without markers; ref_n may be 0 (arrays then unused);
 *              with ref_n > 0 ref_speed is required and either of ref_drag /
 *              ref_normal may be NULL.
 *   o          options; may be NULL for defaults.
 * The speed axis is logarithmic when all |speeds| are > 0, of one sign and
 * span more than a decade (|v| is then plotted), else linear.  The peak drag
 * (see post_force_peak) is marked and labelled with its speed.
 * Returns EDDY_OK; EDDY_ERR_INPUT for bad arguments; EDDY_ERR_NUMERIC for a
 * non-finite value; EDDY_ERR_NOMEM; EDDY_ERR_IO when the file cannot be
 * written. */
eddy_status post_plot_forces_png(const char *path, int n, const double *speed,
                                 const double *drag, const double *normal,
                                 double low_speed_slope, int ref_n, const double *ref_speed,
                                 const double *ref_drag, const double *ref_normal,
                                 const post_plot_opts *o, eddy_error *err);


#endif
