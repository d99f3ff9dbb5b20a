/*
 * post_plot.c - line plots: drag and normal force against speed (with the
 * low-speed slope, reference curves and the drag peak the caller reports),
 * and two curves against a common x (the stop of a load).  Interface in
 * post/post_img.h; axes, series and legend come from post_chart.c.
 */
#include "post/post_draw.h"
#include "post/post_img.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* Series colours come from the one palette (post_series_rgb): drag is
 * series 0 of 2, normal force series 1; the low-speed slope is ink grey.
 * Markers: drag diamonds, normal-force triangles. */
static const double col_slope[3] = {0.42, 0.45, 0.52};
#define MARK_DRAG 1
#define MARK_NORMAL 2

/* ================================================================== */
/* Force-speed plot                                                    */
/* ================================================================== */

void post_plot_opts_defaults(post_plot_opts *o)
{
    if (o == NULL)
        return;
    memset(o, 0, sizeof *o);
    o->peak_speed = NAN;
    o->peak_drag = NAN;
}

/* Everything one force plot needs while it is drawn. */
typedef struct {
    /* the arguments (ref_n is 0 when neither reference curve is given) */
    int n;
    const double *speed, *drag, *normal;
    double slope;
    int ref_n;
    const double *ref_speed, *ref_drag, *ref_normal;
    const post_plot_opts *o;
    char ref_drag_label[128], ref_normal_label[128]; /* legend names of the reference */
    int W, H;
    /* the speed axis */
    double amin, amax, smin, smax; /* |v| and v over all points           */
    int all_neg;                   /* every speed < 0                     */
    double *xs, *rxs;              /* abscissae (|v| on a log axis) of the
                                      points and the reference; one block */
    int *order, *rorder;           /* drawing order by abscissa           */
    /* layout */
    post_chart_style ps;
    post_axes ax;
    post_ticks yt, xt;             /* xt: linear speed axis only          */
    post_log_ticks lt;             /* log speed axis only                 */
    /* series colours and the legend strip under the title */
    double col_drag[3], col_normal[3];
    post_legend_entry leg[6];
    int nleg;
    char slope_label[128];
    double title_y, legend_y, legend_h;
} forces_plot;

/* Sort indices by x (insertion sort; n is small). */
static void sort_by(const double *xv, int n, int *idx)
{
    for (int k = 0; k < n; k++)
        idx[k] = k;
    for (int k = 1; k < n; k++) {
        int v = idx[k], m = k - 1;
        while (m >= 0 && xv[idx[m]] > xv[v]) {
            idx[m + 1] = idx[m];
            m--;
        }
        idx[m + 1] = v;
    }
}

/* The arguments: points, reference, size, finite values. */
static eddy_status forces_check(const char *path, forces_plot *F, eddy_error *err)
{
    static const char *plot = "force plot";
    if (path == NULL || F->speed == NULL || F->drag == NULL || F->n < 1)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "force plot: no points to plot");
    if (F->ref_n < 0 || (F->ref_n > 0 && F->ref_speed == NULL))
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "force plot: %d reference points without speeds",
                          F->ref_n);
    if (F->ref_n > 0 && F->ref_drag == NULL && F->ref_normal == NULL)
        F->ref_n = 0;
    int n = F->n, rn = F->ref_n;
    eddy_status st = post_chart_size(plot, F->o->width_px, F->o->height_px, &F->W, &F->H, err);
    if (st == EDDY_OK)
        st = post_chart_check_series(plot, "speed", n, F->speed, EDDY_ERR_NUMERIC, err);
    if (st == EDDY_OK)
        st = post_chart_check_series(plot, "drag", n, F->drag, EDDY_ERR_NUMERIC, err);
    if (st == EDDY_OK)
        st = post_chart_check_series(plot, "normal", n, F->normal, EDDY_ERR_NUMERIC, err);
    if (st == EDDY_OK && rn > 0)
        st = post_chart_check_series(plot, "ref_speed", rn, F->ref_speed, EDDY_ERR_NUMERIC, err);
    if (st == EDDY_OK && rn > 0)
        st = post_chart_check_series(plot, "ref_drag", rn, F->ref_drag, EDDY_ERR_NUMERIC, err);
    if (st == EDDY_OK && rn > 0)
        st = post_chart_check_series(plot, "ref_normal", rn, F->ref_normal, EDDY_ERR_NUMERIC,
                                     err);
    if (st == EDDY_OK && isinf(F->slope))
        st = EDDY_RAISE(err, EDDY_ERR_NUMERIC, "force plot: low-speed slope is infinite");
    return st;
}

/* The speed axis: logarithmic over |v| when all speeds (points and
 * reference) are of one sign and span more than a decade; the abscissae
 * and the drawing order of the points. */
static eddy_status forces_abscissae(forces_plot *F, eddy_error *err)
{
    int n = F->n, nall = F->n + F->ref_n, npos = 0, nneg = 0;
    F->amin = INFINITY;
    F->amax = 0.0;
    F->smin = INFINITY;
    F->smax = -INFINITY;
    for (int k = 0; k < nall; k++) {
        double v = k < n ? F->speed[k] : F->ref_speed[k - n];
        F->amin = fmin(F->amin, fabs(v));
        F->amax = fmax(F->amax, fabs(v));
        F->smin = fmin(F->smin, v);
        F->smax = fmax(F->smax, v);
        npos += v > 0.0;
        nneg += v < 0.0;
    }
    F->all_neg = nneg == nall;
    F->ax.xlog = F->amin > 0.0 && (npos == nall || nneg == nall) && F->amax / F->amin > 10.0;
    F->xs = malloc((size_t)nall * sizeof *F->xs);
    F->order = malloc((size_t)nall * sizeof *F->order);
    if (F->xs == NULL || F->order == NULL)
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "force plot: out of memory");
    for (int k = 0; k < nall; k++) {
        double v = k < n ? F->speed[k] : F->ref_speed[k - n];
        F->xs[k] = F->ax.xlog ? fabs(v) : v;
    }
    F->rxs = F->xs + n;
    F->rorder = F->order + n;
    sort_by(F->xs, n, F->order);
    if (F->ref_n > 0)
        sort_by(F->rxs, F->ref_n, F->rorder);
    return EDDY_OK;
}

/* The peak of the options: finite and inside the speed range of the
 * points (to rounding), on a log axis of the speeds' sign. */
static eddy_status forces_check_peak(const forces_plot *F, eddy_error *err)
{
    const post_plot_opts *o = F->o;
    if (!o->has_peak)
        return EDDY_OK;
    if (!isfinite(o->peak_speed) || !isfinite(o->peak_drag))
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "force plot: peak (%g m/s, %g N/m) is not finite",
                          o->peak_speed, o->peak_drag);
    double lo = INFINITY, hi = -INFINITY;
    for (int k = 0; k < F->n; k++) {
        lo = fmin(lo, F->speed[k]);
        hi = fmax(hi, F->speed[k]);
    }
    double tol = 1e-9 * fmax(fabs(lo), fabs(hi)), v = o->peak_speed;
    if (v < lo - tol || v > hi + tol || (F->ax.xlog && !(v * lo > 0.0)))
        return EDDY_RAISE(err, EDDY_ERR_INPUT,
                          "force plot: peak speed %g m/s outside the speeds plotted (%g..%g m/s)",
                          v, lo, hi);
    return EDDY_OK;
}

/* Force range: 0, every force and the peak, with headroom for the peak
 * label. */
static void forces_value_range(const forces_plot *F, double *lo, double *hi)
{
    double ylo = 0.0, yhi = 0.0;
    for (int k = 0; k < F->n; k++) {
        ylo = fmin(ylo, F->drag[k]);
        yhi = fmax(yhi, F->drag[k]);
        if (F->normal != NULL) {
            ylo = fmin(ylo, F->normal[k]);
            yhi = fmax(yhi, F->normal[k]);
        }
    }
    for (int k = 0; k < F->ref_n; k++) {
        if (F->ref_drag != NULL) {
            ylo = fmin(ylo, F->ref_drag[k]);
            yhi = fmax(yhi, F->ref_drag[k]);
        }
        if (F->ref_normal != NULL) {
            ylo = fmin(ylo, F->ref_normal[k]);
            yhi = fmax(yhi, F->ref_normal[k]);
        }
    }
    if (F->o->has_peak) {
        yhi = fmax(yhi, F->o->peak_drag);
        ylo = fmin(ylo, F->o->peak_drag);
    }
    if (!(yhi > ylo))
        yhi = ylo + 1.0;
    yhi += 0.12 * (yhi - ylo);
    *lo = ylo;
    *hi = yhi;
}

/* The legend entries of the curves the plot will draw (before the layout,
 * which makes room for the strip). */
static void forces_legend_entries(forces_plot *F)
{
    double s = F->ps.s;
    post_series_col(0, 2, F->col_drag);
    post_series_col(1, 2, F->col_normal);
    F->nleg = 0;
    F->leg[F->nleg++] = (post_legend_entry){"drag", F->col_drag, MARK_DRAG, 2.0 * s, 1.0, 0, 0};
    if (F->normal != NULL)
        F->leg[F->nleg++] =
            (post_legend_entry){"normal force", F->col_normal, MARK_NORMAL, 2.0 * s, 1.0, 0, 1};
    const char *rl = F->o != NULL && F->o->ref_label != NULL ? F->o->ref_label : "reference";
    snprintf(F->ref_drag_label, sizeof F->ref_drag_label, "drag, %s", rl);
    snprintf(F->ref_normal_label, sizeof F->ref_normal_label, "normal force, %s", rl);
    if (F->ref_n > 0 && F->ref_drag != NULL)
        F->leg[F->nleg++] =
            (post_legend_entry){F->ref_drag_label, F->col_drag, 0, 1.4 * s, 0.55, 0, 2};
    if (F->ref_n > 0 && F->ref_normal != NULL)
        F->leg[F->nleg++] =
            (post_legend_entry){F->ref_normal_label, F->col_normal, 0, 1.4 * s, 0.55, 0, 3};
    if (isfinite(F->slope)) {
        char num[48];
        post_fmt_sig3(num, sizeof num, F->slope);
        snprintf(F->slope_label, sizeof F->slope_label, "F = c v, c = %s %s", num,
                 F->o->whole_ring ? "N s/m" : "N s/m^2");
        F->leg[F->nleg++] = (post_legend_entry){F->slope_label, col_slope, 0, 1.5 * s, 1.0, 1, 4};
    }
}

/* The plot rectangle and both axes (tick labels measured with cr). */
static void forces_layout(forces_plot *F, cairo_t *cr)
{
    post_chart_style *ps = &F->ps;
    post_axes *ax = &F->ax;
    post_chart_style_init(F->W, F->H, ps);
    forces_legend_entries(F);
    double s = ps->s, ylo, yhi;
    forces_value_range(F, &ylo, &yhi);
    F->title_y = ps->pad;
    F->legend_y = ps->pad + 1.75 * ps->f_title;
    F->legend_h = post_chart_legend_strip(cr, ps, F->leg, F->nleg, ps->pad, F->legend_y,
                                          F->W - 2.0 * ps->pad, 0);
    double top = F->legend_y + F->legend_h + 0.6 * ps->f_tick;
    double right = ps->pad + 20.0 * s;
    ax->py = ceil(top);
    ax->ph = floor(F->H - top - ps->bottom);
    post_font(cr, ps->f_tick, 0);
    post_chart_value_axis(ylo, yhi, ax, ps, &ax->ylo, &ax->yhi, &F->yt);
    double left = post_chart_value_margin(ps, post_ticks_label_width(cr, &F->yt));
    ax->px = ceil(left);
    ax->pw = floor(F->W - left - right);
    F->lt.n = 0;
    F->xt.n = 0;
    if (ax->xlog) {
        double span = log10(F->amax) - log10(F->amin), padl = fmax(0.04 * span, 0.03);
        ax->xlo = F->amin / pow(10.0, padl);
        ax->xhi = F->amax * pow(10.0, padl);
        post_chart_log_ticks(ax->xlo, ax->xhi, &F->lt);
    } else {
        double lo = fmin(0.0, F->smin), hi = fmax(0.0, F->smax);
        /* keep end markers off the frame */
        if (F->smax > 0.0)
            hi += 0.03 * (hi - lo);
        if (F->smin < 0.0)
            lo -= 0.03 * (hi - lo);
        post_chart_fit_loose_axis(cr, lo, hi, ax->pw, 20.0 * s, &ax->xlo, &ax->xhi, &F->xt);
    }
}

/* The low-speed slope drag = k v as a dashed line, sampled so that it is
 * straight or curved as the speed axis needs. */
static void forces_slope_line(forces_plot *F, cairo_t *cr)
{
    const post_axes *ax = &F->ax;
    double s = F->ps.s, dash[2] = {6.0 * s, 4.0 * s};
    cairo_set_dash(cr, dash, 2, 0.0);
    cairo_set_source_rgb(cr, col_slope[0], col_slope[1], col_slope[2]);
    for (int k = 0; k <= 200; k++) {
        double t = k / 200.0;
        double v = ax->xlog ? ax->xlo * pow(ax->xhi / ax->xlo, t)
                            : ax->xlo + t * (ax->xhi - ax->xlo);
        double v_signed = (ax->xlog && F->all_neg) ? -v : v;
        double Y = post_axes_y(ax, F->slope * v_signed);
        if (Y < -10.0 * F->H)
            Y = -10.0 * F->H;
        if (Y > 10.0 * F->H)
            Y = 10.0 * F->H;
        if (k == 0)
            cairo_move_to(cr, post_axes_x(ax, v), Y);
        else
            cairo_line_to(cr, post_axes_x(ax, v), Y);
    }
    cairo_set_line_width(cr, 1.5 * s);
    cairo_stroke(cr);
    cairo_set_dash(cr, NULL, 0, 0.0);
}

/* Inside the plot rectangle: the slope, the reference curves (thin and
 * pale), the computed points. */
/* Error bars +-err[k] at the points (x xs[k], value y[k]), capped. */
static void forces_error_bars(const forces_plot *F, cairo_t *cr, const double *y,
                              const double *err, const double *rgb)
{
    const post_axes *ax = &F->ax;
    double s = F->ps.s, cap = 3.0 * s;
    cairo_set_source_rgb(cr, rgb[0], rgb[1], rgb[2]);
    cairo_set_line_width(cr, 1.2 * s);
    for (int k = 0; k < F->n; k++) {
        if (!isfinite(err[k]) || err[k] <= 0.0)
            continue;
        double X = post_axes_x(ax, F->xs[k]);
        double y0 = post_axes_y(ax, y[k] - err[k]), y1 = post_axes_y(ax, y[k] + err[k]);
        cairo_move_to(cr, X, y0);
        cairo_line_to(cr, X, y1);
        cairo_move_to(cr, X - cap, y0);
        cairo_line_to(cr, X + cap, y0);
        cairo_move_to(cr, X - cap, y1);
        cairo_line_to(cr, X + cap, y1);
    }
    cairo_stroke(cr);
}

static void forces_curves(forces_plot *F, cairo_t *cr)
{
    const post_axes *ax = &F->ax;
    double s = F->ps.s;
    int rn = F->ref_n;
    cairo_save(cr);
    cairo_rectangle(cr, ax->px, ax->py, ax->pw, ax->ph);
    cairo_clip(cr);
    if (isfinite(F->slope))
        forces_slope_line(F, cr);
    if (rn > 0 && F->ref_drag != NULL)
        post_chart_series(cr, ax, rn, F->rxs, F->ref_drag, F->rorder, F->col_drag, 1.4 * s, 0.55,
                          0, 0.0);
    if (rn > 0 && F->ref_normal != NULL)
        post_chart_series(cr, ax, rn, F->rxs, F->ref_normal, F->rorder, F->col_normal, 1.4 * s,
                          0.55, 0, 0.0);
    if (F->normal != NULL)
        post_chart_series(cr, ax, F->n, F->xs, F->normal, F->order, F->col_normal, 2.0 * s, 1.0,
                          MARK_NORMAL, 4.0 * s);
    post_chart_series(cr, ax, F->n, F->xs, F->drag, F->order, F->col_drag, 2.0 * s, 1.0,
                      MARK_DRAG, 4.2 * s);
    if (F->o->normal_error != NULL && F->normal != NULL)
        forces_error_bars(F, cr, F->normal, F->o->normal_error, F->col_normal);
    if (F->o->drag_error != NULL)
        forces_error_bars(F, cr, F->drag, F->o->drag_error, F->col_drag);
    cairo_restore(cr);
}

/* The peak of the options: a ring at (peak speed, peak drag) and the label
 * "peak drag F N/m at v m/s" (U+2248 before F when interpolated) on a white
 * box beside it. */
static void forces_peak_marker(forces_plot *F, cairo_t *cr)
{
    const post_plot_opts *o = F->o;
    const post_axes *ax = &F->ax;
    double s = F->ps.s, f_leg = F->ps.f_leg;
    double PX = post_axes_x(ax, ax->xlog ? fabs(o->peak_speed) : o->peak_speed);
    double PY = post_axes_y(ax, o->peak_drag);
    char fnum[48], vnum[48], ann[160];
    post_fmt_sig3(fnum, sizeof fnum, o->peak_drag);
    post_fmt_sig3(vnum, sizeof vnum, o->peak_speed);
    snprintf(ann, sizeof ann, "peak drag %s%s %s at %s m/s",
             o->peak_interpolated ? "\xe2\x89\x88 " : "", fnum, o->whole_ring ? "N" : "N/m",
             vnum);
    cairo_set_source_rgb(cr, POST_INK_RGB);
    cairo_new_sub_path(cr);
    cairo_arc(cr, PX, PY, 8.0 * s, 0.0, 2.0 * EDDY_PI);
    cairo_set_line_width(cr, 1.3 * s);
    cairo_stroke(cr);
    post_font(cr, f_leg, 0);
    double aw = post_text_width(cr, ann), ah = POST_CAP_FRAC * f_leg, boxpad = 4.0 * s;
    double axx = PX + 12.0 * s, ayy = PY - 14.0 * s - ah; /* top of text */
    if (axx + aw + boxpad > ax->px + ax->pw - 4.0 * s)
        axx = PX - 12.0 * s - aw;
    if (axx - boxpad < ax->px + 4.0 * s)
        axx = ax->px + 4.0 * s + boxpad;
    if (ayy - boxpad < ax->py + 4.0 * s)
        ayy = PY + 14.0 * s;
    cairo_set_source_rgba(cr, 1.0, 1.0, 1.0, 0.85);
    cairo_rectangle(cr, axx - boxpad, ayy - boxpad, aw + 2.0 * boxpad, ah + 2.0 * boxpad);
    cairo_fill(cr);
    cairo_set_source_rgb(cr, POST_INK_RGB);
    post_text(cr, axx, ayy, ann, 0.0, 0.0);
}

/* Frame, tick marks and labels, axis titles. */
static void forces_axes(const forces_plot *F, cairo_t *cr)
{
    const post_axes *ax = &F->ax;
    const post_chart_style *ps = &F->ps;
    double lw = fmax(1.0, round(ps->s));
    post_chart_axis_lines(cr, ax, lw, 0);
    post_chart_value_ticks(cr, ax, &F->yt, 0, ps, lw);
    if (ax->xlog)
        post_chart_log_x_ticks(cr, ax, &F->lt, ps, lw);
    else
        post_chart_x_ticks(cr, ax, &F->xt, ps, lw);
    post_chart_x_title(cr, ax, ps, lw, ax->xlog && F->all_neg ? "|speed| (m/s)" : "speed (m/s)");
    post_chart_value_title(cr, ax, ps, ps->pad + POST_CAP_FRAC * ps->f_label,
                           F->o->whole_ring ? "force on the whole ring (N)"
                                            : "force per unit length (N/m)");
}

/* The legend strip under the title. */
static void forces_legend(forces_plot *F, cairo_t *cr)
{
    post_chart_legend_strip(cr, &F->ps, F->leg, F->nleg, F->ps.pad, F->legend_y,
                            F->W - 2.0 * F->ps.pad, 1);
}

/* The title, then the PNG with its text chunks (the peak's numbers with
 * 17 significant digits, so they read back exactly). */
static eddy_status forces_write(const forces_plot *F, const char *path, cairo_surface_t *surf,
                                cairo_t *cr, eddy_error *err)
{
    const post_plot_opts *o = F->o;
    const char *title = o->title != NULL ? o->title : "Forces vs speed";
    post_title(cr, title, F->ps.f_title, F->ps.pad, F->title_y, F->W, F->ps.pad);
    eddy_status st = post_canvas_status(cr, err);
    if (st != EDDY_OK)
        return st;
    char software[160], pv[40], pf[40];
    snprintf(pv, sizeof pv, "%.17g", o->peak_speed);
    snprintf(pf, sizeof pf, "%.17g", o->peak_drag);
    post_png_text kv[] = {
        {"Title", title},
        {"Software", post_png_software(software, sizeof software, o->version)},
        {"eddy2d:case", o->case_name},
        {"eddy2d:quantity", F->normal != NULL ? "drag, normal force" : "drag"},
        {"eddy2d:unit", o->whole_ring ? "N" : "N/m"},
        {"eddy2d:peak_speed_m_per_s", o->has_peak ? pv : NULL},
        {"eddy2d:peak_drag_N_per_m", o->has_peak ? pf : NULL}};
    return post_png_write(path, surf, kv, (int)(sizeof kv / sizeof kv[0]), err);
}

eddy_status post_plot_forces_png(const char *path, int n, const double *speed,
                                 const double *drag, const double *normal,
                                 double low_speed_slope, int ref_n, const double *ref_speed,
                                 const double *ref_drag, const double *ref_normal,
                                 const post_plot_opts *o, eddy_error *err)
{
    post_plot_opts def;
    post_plot_opts_defaults(&def);
    forces_plot F;
    memset(&F, 0, sizeof F);
    F.n = n;
    F.speed = speed;
    F.drag = drag;
    F.normal = normal;
    F.slope = low_speed_slope;
    F.ref_n = ref_n;
    F.ref_speed = ref_speed;
    F.ref_drag = ref_drag;
    F.ref_normal = ref_normal;
    F.o = o != NULL ? o : &def;
    eddy_status st = forces_check(path, &F, err);
    if (st == EDDY_OK)
        st = forces_abscissae(&F, err);
    if (st == EDDY_OK)
        st = forces_check_peak(&F, err);
    cairo_surface_t *surf = NULL;
    cairo_t *cr = NULL;
    if (st == EDDY_OK)
        st = post_canvas_new(F.W, F.H, &surf, &cr, err);
    if (st == EDDY_OK) {
        forces_layout(&F, cr);
        post_chart_grid(cr, &F.ax, &F.ps, &F.yt);
        forces_curves(&F, cr);
        if (F.o->has_peak)
            forces_peak_marker(&F, cr);
        forces_axes(&F, cr);
        forces_legend(&F, cr);
        st = forces_write(&F, path, surf, cr, err);
    }
    if (cr != NULL)
        cairo_destroy(cr);
    if (surf != NULL)
        cairo_surface_destroy(surf);
    free(F.xs);
    free(F.order);
    return st;
}

/* ================================================================== */
/* Two curves against a common x                                       */
/* ================================================================== */

void post_xy_opts_defaults(post_xy_opts *o)
{
    if (o != NULL)
        memset(o, 0, sizeof *o);
}

/* Everything one two-curve plot needs while it is drawn. */
typedef struct {
    int n;
    const double *x, *y1, *y2;
    const post_xy_opts *o;
    int W, H;
    double xmin, xmax, lo1, hi1, lo2, hi2; /* data ranges                      */
    post_chart_style ps;
    double lw, curve_lw;                   /* frame and curve line widths, px */
    post_axes ax, ax2;                     /* ax2: y2's scale, same rectangle */
    post_ticks yt, y2t, xt;
    double col1[3], col2[3];               /* series 0 and 1 of 2             */
    post_legend_entry leg[2];
    int nleg;
    double title_y, legend_y, legend_h;
} xy_plot;

/* Smallest and largest of v[n]. */
static void value_span(int n, const double *v, double *lo, double *hi)
{
    *lo = *hi = v[0];
    for (int k = 1; k < n; k++) {
        *lo = fmin(*lo, v[k]);
        *hi = fmax(*hi, v[k]);
    }
}

/* The range of v[n] with 3 % of it added at each end that is not zero, so
 * the curve keeps off the frame but a curve that ends at 0 ends on the axis. */
static void curve_range(int n, const double *v, double *lo, double *hi)
{
    value_span(n, v, lo, hi);
    double span = *hi - *lo;
    if (*lo != 0.0)
        *lo -= 0.03 * span;
    if (*hi != 0.0)
        *hi += 0.03 * span;
}

/* The arguments, the size and the data ranges. */
static eddy_status xy_check(const char *path, xy_plot *P, eddy_error *err)
{
    static const char *plot = "xy plot";
    int n = P->n;
    if (path == NULL || P->x == NULL || P->y1 == NULL)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "xy plot: NULL path or array");
    if (n < 2)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "xy plot: %d points, at least 2 needed", n);
    eddy_status st = post_chart_size(plot, P->o->width_px, P->o->height_px, &P->W, &P->H, err);
    if (st == EDDY_OK)
        st = post_chart_check_series(plot, "x", n, P->x, EDDY_ERR_INPUT, err);
    if (st == EDDY_OK)
        st = post_chart_check_series(plot, "y1", n, P->y1, EDDY_ERR_INPUT, err);
    if (st == EDDY_OK)
        st = post_chart_check_series(plot, "y2", n, P->y2, EDDY_ERR_INPUT, err);
    if (st != EDDY_OK)
        return st;
    value_span(n, P->x, &P->xmin, &P->xmax);
    curve_range(n, P->y1, &P->lo1, &P->hi1);
    if (P->y2 != NULL)
        curve_range(n, P->y2, &P->lo2, &P->hi2);
    if (!isfinite(P->xmax - P->xmin) || !isfinite(P->hi1 - P->lo1) ||
        !isfinite(P->hi2 - P->lo2))
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "xy plot: values span too wide a range");
    return EDDY_OK;
}

/* The legend: both curves, or the one curve when it is named. */
static void xy_legend_entries(xy_plot *P)
{
    const post_xy_opts *o = P->o;
    post_series_col(0, 2, P->col1);
    post_series_col(1, 2, P->col2);
    P->nleg = 0;
    if (P->y2 != NULL || o->y1_name != NULL) {
        const char *name = o->y1_name != NULL ? o->y1_name : o->y1_label;
        P->leg[P->nleg++] = (post_legend_entry){name != NULL ? name : "y1", P->col1, 0,
                                                P->curve_lw, 1.0, 0, 0};
    }
    if (P->y2 != NULL) {
        const char *name = o->y2_name != NULL ? o->y2_name : o->y2_label;
        P->leg[P->nleg++] = (post_legend_entry){name != NULL ? name : "y2", P->col2, 0,
                                                P->curve_lw, 1.0, 0, 1};
    }
}

/* The plot rectangle and the axes; y2's ticks fall on y1's grid lines. */
static void xy_layout(xy_plot *P, cairo_t *cr)
{
    post_chart_style *ps = &P->ps;
    post_axes *ax = &P->ax, *ax2 = &P->ax2;
    post_chart_style_init(P->W, P->H, ps);
    double s = ps->s;
    P->lw = fmax(1.0, round(s));
    P->curve_lw = fmax(2.0 * s, 1.5);
    int has_title = P->o->title != NULL && P->o->title[0] != '\0';
    xy_legend_entries(P);
    P->title_y = ps->pad;
    P->legend_y = ps->pad + (has_title ? 1.75 * ps->f_title : 0.0);
    P->legend_h = post_chart_legend_strip(cr, ps, P->leg, P->nleg, ps->pad, P->legend_y,
                                          P->W - 2.0 * ps->pad, 0);
    double top = P->legend_y + P->legend_h + 0.6 * ps->f_tick;
    ax->py = ceil(top);
    ax->ph = floor(P->H - top - ps->bottom);
    post_font(cr, ps->f_tick, 0);
    post_chart_value_axis(P->lo1, P->hi1, ax, ps, &ax->ylo, &ax->yhi, &P->yt);
    *ax2 = *ax;
    P->y2t.n = 0;
    if (P->y2 != NULL)
        post_chart_aligned_axis(P->lo2, P->hi2, P->yt.n - 1, &ax2->ylo, &ax2->yhi, &P->y2t);
    double left = post_chart_value_margin(ps, post_ticks_label_width(cr, &P->yt));
    double right = P->y2 != NULL ? post_chart_value_margin(ps, post_ticks_label_width(cr, &P->y2t))
                                 : ps->pad + 20.0 * s;
    ax->px = ceil(left);
    ax->pw = floor(P->W - left - right);
    post_chart_fit_loose_axis(cr, P->xmin, P->xmax, ax->pw, 20.0 * s, &ax->xlo, &ax->xhi, &P->xt);
    ax2->px = ax->px;
    ax2->pw = ax->pw;
    ax2->xlo = ax->xlo;
    ax2->xhi = ax->xhi;
}

/* Grid and curves (y1 over y2), clipped to the plot rectangle. */
static void xy_curves(const xy_plot *P, cairo_t *cr)
{
    const post_axes *ax = &P->ax;
    post_chart_grid(cr, ax, &P->ps, &P->yt);
    cairo_save(cr);
    cairo_rectangle(cr, ax->px, ax->py, ax->pw, ax->ph);
    cairo_clip(cr);
    if (P->y2 != NULL)
        post_chart_series(cr, &P->ax2, P->n, P->x, P->y2, NULL, P->col2, P->curve_lw, 1.0, 0,
                          0.0);
    post_chart_series(cr, ax, P->n, P->x, P->y1, NULL, P->col1, P->curve_lw, 1.0, 0, 0.0);
    cairo_restore(cr);
}

/* Frame, ticks, axis titles (coloured as their curves when there are two). */
static void xy_axes(const xy_plot *P, cairo_t *cr)
{
    const post_axes *ax = &P->ax;
    const post_chart_style *ps = &P->ps;
    double lw = P->lw;
    post_chart_axis_lines(cr, ax, lw, P->y2 != NULL);
    post_chart_value_ticks(cr, ax, &P->yt, 0, ps, lw);
    if (P->y2 != NULL)
        post_chart_value_ticks(cr, &P->ax2, &P->y2t, 1, ps, lw);
    post_chart_x_ticks(cr, ax, &P->xt, ps, lw);
    post_chart_x_title(cr, ax, ps, lw, P->o->x_label);
    if (P->y2 != NULL)
        cairo_set_source_rgb(cr, P->col1[0], P->col1[1], P->col1[2]);
    post_chart_value_title(cr, ax, ps, ps->pad + POST_CAP_FRAC * ps->f_label, P->o->y1_label);
    if (P->y2 != NULL) {
        cairo_set_source_rgb(cr, P->col2[0], P->col2[1], P->col2[2]);
        post_chart_value_title(cr, ax, ps, P->W - ps->pad - 0.3 * ps->f_label, P->o->y2_label);
    }
}

/* The legend strip under the title. */
static void xy_legend(xy_plot *P, cairo_t *cr)
{
    post_chart_legend_strip(cr, &P->ps, P->leg, P->nleg, P->ps.pad, P->legend_y,
                            P->W - 2.0 * P->ps.pad, 1);
}

/* The title, then the PNG with its text chunks. */
static eddy_status xy_write(const xy_plot *P, const char *path, cairo_surface_t *surf,
                            cairo_t *cr, eddy_error *err)
{
    const post_xy_opts *o = P->o;
    post_title(cr, o->title, P->ps.f_title, P->ps.pad, P->title_y, P->W, P->ps.pad);
    eddy_status st = post_canvas_status(cr, err);
    if (st != EDDY_OK)
        return st;
    char software[160];
    post_png_text kv[] = {{"Title", o->title},
                          {"Software", post_png_software(software, sizeof software, o->version)},
                          {"eddy2d:case", o->case_name},
                          {"eddy2d:x", o->x_label},
                          {"eddy2d:y1", o->y1_label},
                          {"eddy2d:y2", P->y2 != NULL ? o->y2_label : NULL}};
    return post_png_write(path, surf, kv, (int)(sizeof kv / sizeof kv[0]), err);
}

eddy_status post_plot_xy_png(const char *path, int n, const double *x, const double *y1,
                             const double *y2, const post_xy_opts *o, eddy_error *err)
{
    post_xy_opts def;
    post_xy_opts_defaults(&def);
    xy_plot P;
    memset(&P, 0, sizeof P);
    P.n = n;
    P.x = x;
    P.y1 = y1;
    P.y2 = y2;
    P.o = o != NULL ? o : &def;
    eddy_status st = xy_check(path, &P, err);
    if (st != EDDY_OK)
        return st;
    cairo_surface_t *surf = NULL;
    cairo_t *cr = NULL;
    st = post_canvas_new(P.W, P.H, &surf, &cr, err);
    if (st != EDDY_OK)
        return st;
    xy_layout(&P, cr);
    xy_curves(&P, cr);
    xy_axes(&P, cr);
    xy_legend(&P, cr);
    st = xy_write(&P, path, surf, cr, err);
    cairo_destroy(cr);
    cairo_surface_destroy(surf);
    return st;
}
