/*
 * post_chart.c - the furniture of the line plots (post_plot.c): axes with
 * loose, aligned and logarithmic ticks, grid, tick labels and axis titles,
 * series with markers, and a legend placed off the curves.  Private to
 * post/; interface in post/post_draw.h.
 */
#include "post/post_draw.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

#define PLOT_DEFAULT_W 1000
#define PLOT_DEFAULT_H 650

/* ------------------------------------------------------------------ */
/* Axes                                                                */
/* ------------------------------------------------------------------ */

double post_axes_x(const post_axes *a, double v)
{
    double t = a->xlog ? (log10(v) - log10(a->xlo)) / (log10(a->xhi) - log10(a->xlo))
                       : (v - a->xlo) / (a->xhi - a->xlo);
    return a->px + t * a->pw;
}

double post_axes_y(const post_axes *a, double v)
{
    return a->py + a->ph - (v - a->ylo) / (a->yhi - a->ylo) * a->ph;
}

/* An empty range [lo, hi] widened around its value. */
static void widen_empty(double *lo, double *hi)
{
    if (!(*hi > *lo)) {
        double m = fmax(fabs(*lo), 1e-12);
        *lo -= 0.5 * m;
        *hi += 0.5 * m;
    }
}

/* Ticks on a loose axis: the axis is extended to whole steps around [lo, hi]. */
static void loose_axis(double lo, double hi, int target, double *alo, double *ahi, post_ticks *t)
{
    widen_empty(&lo, &hi);
    post_ticks_make(lo, hi, target, t);
    double d = t->step;
    *alo = floor(lo / d + 1e-9) * d;
    *ahi = ceil(hi / d - 1e-9) * d;
    post_ticks_make(*alo, *ahi, target, t);
    if (t->step != d) /* keep the same step on the extended range */
        post_ticks_every(*alo, *ahi, d, t);
}

void post_chart_fit_loose_axis(cairo_t *cr, double lo, double hi, double len, double gap,
                               double *alo, double *ahi, post_ticks *t)
{
    for (int target = 10; target >= 2; target--) {
        loose_axis(lo, hi, target, alo, ahi, t);
        if (t->n < 2 || t->step / (*ahi - *alo) * len >= post_ticks_label_width(cr, t) + gap)
            return;
    }
}

/* The smallest step that covers the range is taken; whole steps left over
 * are split between the ends. */
void post_chart_aligned_axis(double lo, double hi, int nint, double *alo, double *ahi,
                             post_ticks *t)
{
    static const double mult[4] = {1.0, 2.0, 2.5, 5.0};
    if (nint < 1)
        nint = 1;
    widen_empty(&lo, &hi);
    double want = (hi - lo) / nint, p = pow(10.0, floor(log10(want)));
    double d = want, a0 = lo;
    for (int k = 0; k < 64; k++) {
        d = mult[k % 4] * p * pow(10.0, k / 4);
        if (d < want * (1.0 - 1e-12))
            continue;
        a0 = floor(lo / d + 1e-9) * d;
        if (a0 + nint * d >= hi - 1e-9 * d)
            break;
    }
    int spare = (int)floor((a0 + nint * d - hi) / d + 1e-9), down = spare / 2;
    if (lo >= 0.0 && down > (int)floor(a0 / d + 1e-9))
        down = (int)floor(a0 / d + 1e-9);
    if (down < 0)
        down = 0;
    *alo = a0 - down * d;
    *ahi = *alo + nint * d;
    post_ticks_every(*alo, *ahi, d, t);
}

void post_chart_log_ticks(double lo, double hi, post_log_ticks *t)
{
    t->n = 0;
    int k0 = (int)floor(log10(lo)), k1 = (int)ceil(log10(hi));
    double decades = log10(hi) - log10(lo);
    int every = decades > 8.0 ? 2 : 1;
    for (int k = k0; k <= k1; k++) {
        for (int m = 1; m <= 9; m++) {
            double v = m * pow(10.0, k);
            if (v < lo * (1 - 1e-9) || v > hi * (1 + 1e-9) || t->n >= 160)
                continue;
            t->v[t->n] = v;
            t->major[t->n] = (m == 1 && (k % every) == 0) || (decades < 2.0 && (m == 2 || m == 5));
            if (m != 1 && decades > 5.0)
                continue; /* many decades: decade marks only */
            t->n++;
        }
    }
}

/* A label of a log-axis tick: plain from 1e-3 to 1e5, else 10^{k} or
 * m x 10^{k} (a rich label). */
static void fmt_log_label(char *buf, size_t size, double v)
{
    int k = (int)floor(log10(v) + 1e-9);
    double m = v / pow(10.0, k);
    if (k >= -3 && k <= 5) {
        snprintf(buf, size, "%.*f", k < 0 ? -k : 0, v);
    } else if (fabs(m - 1.0) < 1e-6) {
        snprintf(buf, size, "10^{%d}", k);
    } else {
        snprintf(buf, size, "%.0f\xc3\x97" "10^{%d}", m, k);
    }
}

/* ------------------------------------------------------------------ */
/* Series                                                              */
/* ------------------------------------------------------------------ */

/* A marker path of half-size r px centred on (X, Y): 1 a diamond (corners
 * r * DIAMOND_REACH from the centre), 2 a triangle standing on its base,
 * 3 a dot. */
#define DIAMOND_REACH 1.3
static void draw_marker(cairo_t *cr, double X, double Y, int marker, double r)
{
    if (marker == 1) {
        double d = DIAMOND_REACH * r;
        cairo_move_to(cr, X, Y - d);
        cairo_line_to(cr, X + d, Y);
        cairo_line_to(cr, X, Y + d);
        cairo_line_to(cr, X - d, Y);
        cairo_close_path(cr);
    } else if (marker == 2) {
        double h = 1.25 * r;
        cairo_move_to(cr, X, Y - h);
        cairo_line_to(cr, X + 1.15 * h, Y + 0.8 * h);
        cairo_line_to(cr, X - 1.15 * h, Y + 0.8 * h);
        cairo_close_path(cr);
    } else {
        cairo_new_sub_path(cr);
        cairo_arc(cr, X, Y, r, 0.0, 2.0 * EDDY_PI);
    }
}

void post_chart_series(cairo_t *cr, const post_axes *ax, int n, const double *xs,
                       const double *ys, const int *order, const double col[3], double lw,
                       double alpha, int marker, double mr)
{
    cairo_set_source_rgba(cr, col[0], col[1], col[2], alpha);
    for (int k = 0; k < n; k++) {
        int i = order != NULL ? order[k] : k;
        if (k == 0)
            cairo_move_to(cr, post_axes_x(ax, xs[i]), post_axes_y(ax, ys[i]));
        else
            cairo_line_to(cr, post_axes_x(ax, xs[i]), post_axes_y(ax, ys[i]));
    }
    cairo_set_line_width(cr, lw);
    cairo_set_line_join(cr, CAIRO_LINE_JOIN_ROUND);
    cairo_stroke(cr);
    if (marker) {
        /* a white ring under each marker keeps it apart from the lines */
        cairo_set_source_rgb(cr, 1.0, 1.0, 1.0);
        for (int k = 0; k < n; k++)
            draw_marker(cr, post_axes_x(ax, xs[k]), post_axes_y(ax, ys[k]), marker, mr + 1.2);
        cairo_fill(cr);
        cairo_set_source_rgba(cr, col[0], col[1], col[2], alpha);
        for (int k = 0; k < n; k++)
            draw_marker(cr, post_axes_x(ax, xs[k]), post_axes_y(ax, ys[k]), marker, mr);
        cairo_fill(cr);
    }
}

eddy_status post_chart_check_series(const char *plot, const char *what, int n, const double *v,
                                    eddy_status code, eddy_error *err)
{
    if (v == NULL)
        return EDDY_OK;
    for (int k = 0; k < n; k++)
        if (!isfinite(v[k]))
            return EDDY_RAISE(err, code, "%s: %s[%d] is not finite", plot, what, k);
    return EDDY_OK;
}

/* ------------------------------------------------------------------ */
/* Size and style                                                      */
/* ------------------------------------------------------------------ */

eddy_status post_chart_size(const char *plot, int w, int h, int *W, int *H, eddy_error *err)
{
    *W = w == 0 ? PLOT_DEFAULT_W : w;
    *H = h == 0 ? PLOT_DEFAULT_H : h;
    if (*W < POST_IMG_MIN_PX || *W > POST_IMG_MAX_PX || *H < POST_IMG_MIN_PX ||
        *H > POST_IMG_MAX_PX)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: size %dx%d px outside %d..%d", plot, *W, *H,
                          POST_IMG_MIN_PX, POST_IMG_MAX_PX);
    return EDDY_OK;
}

void post_chart_style_init(int W, int H, post_chart_style *ps)
{
    double s = fmin(W / 1000.0, H / 650.0);
    double ts = fmax(s, 0.8); /* text stays readable on small pictures */
    ps->s = s;
    ps->f_tick = 14.0 * ts;
    ps->f_label = 16.0 * ts;
    ps->f_title = 19.0 * ts;
    ps->f_leg = 13.5 * ts;
    ps->pad = 14.0 * s;
    ps->ticklen = 6.0 * s;
    ps->label_h = 1.25 * ps->f_label;
    ps->bottom = ps->ticklen + 5.0 * s + 1.4 * ps->f_tick + 10.0 * s + ps->label_h + ps->pad;
}

double post_chart_value_margin(const post_chart_style *ps, double label_w)
{
    return ps->pad + ps->label_h + 8.0 * ps->s + label_w + 5.0 * ps->s + ps->ticklen;
}

void post_chart_value_axis(double lo, double hi, const post_axes *ax, const post_chart_style *ps,
                           double *alo, double *ahi, post_ticks *t)
{
    int target = (int)(ax->ph / (45.0 * ps->s));
    if (target > 10)
        target = 10;
    loose_axis(lo, hi, target, alo, ahi, t);
}

/* ------------------------------------------------------------------ */
/* Grid, ticks, titles                                                 */
/* ------------------------------------------------------------------ */

void post_chart_grid(cairo_t *cr, const post_axes *ax, const post_chart_style *ps,
                     const post_ticks *yt)
{
    /* dotted rules at the value ticks only, in a blue-grey; none along x */
    double s = ps->s, dots[2] = {1.2 * fmax(s, 1.0), 3.2 * fmax(s, 1.0)};
    cairo_save(cr);
    cairo_set_line_width(cr, 1.2 * fmax(1.0, s));
    cairo_set_line_cap(cr, CAIRO_LINE_CAP_ROUND);
    cairo_set_dash(cr, dots, 2, 0.0);
    cairo_set_source_rgb(cr, POST_GRID_RGB);
    for (int k = 0; k < yt->n; k++) {
        double Y = round(post_axes_y(ax, yt->v[k])) + 0.5;
        cairo_move_to(cr, ax->px, Y);
        cairo_line_to(cr, ax->px + ax->pw, Y);
    }
    cairo_stroke(cr);
    cairo_restore(cr);
    if (ax->ylo < 0.0 && ax->yhi > 0.0) {
        double Y = round(post_axes_y(ax, 0.0)) + 0.5;
        cairo_set_source_rgb(cr, POST_INK_RGB);
        cairo_set_line_width(cr, fmax(1.0, s));
        cairo_move_to(cr, ax->px, Y);
        cairo_line_to(cr, ax->px + ax->pw, Y);
        cairo_stroke(cr);
    }
}

void post_chart_axis_lines(cairo_t *cr, const post_axes *ax, double lw, int right)
{
    double x0 = ax->px - lw / 2.0, y1 = ax->py + ax->ph + lw / 2.0;
    cairo_set_source_rgb(cr, POST_INK_RGB);
    cairo_set_line_width(cr, lw);
    cairo_set_line_cap(cr, CAIRO_LINE_CAP_SQUARE);
    cairo_move_to(cr, x0, ax->py);
    cairo_line_to(cr, x0, y1);
    cairo_line_to(cr, ax->px + ax->pw, y1);
    if (right)
        cairo_line_to(cr, ax->px + ax->pw + lw / 2.0, ax->py);
    cairo_stroke(cr);
    cairo_set_line_cap(cr, CAIRO_LINE_CAP_BUTT);
}

void post_chart_value_ticks(cairo_t *cr, const post_axes *ax, const post_ticks *t, int right,
                            const post_chart_style *ps, double lw)
{
    double edge = right ? ax->px + ax->pw + lw : ax->px - lw, dir = right ? 1.0 : -1.0;
    cairo_set_source_rgb(cr, POST_INK_RGB);
    for (int k = 0; k < t->n; k++) {
        double Y = post_axes_y(ax, t->v[k]);
        cairo_move_to(cr, edge, Y);
        cairo_line_to(cr, edge + dir * ps->ticklen, Y);
    }
    cairo_set_line_width(cr, lw);
    cairo_stroke(cr);
    post_font(cr, ps->f_tick, 0);
    char buf[64];
    for (int k = 0; k < t->n; k++) {
        post_fmt_tick(buf, sizeof buf, t->v[k], t->decimals);
        post_text(cr, edge + dir * (ps->ticklen + 5.0 * ps->s), post_axes_y(ax, t->v[k]), buf,
                  right ? 0.0 : 1.0, 0.5);
    }
}

void post_chart_x_ticks(cairo_t *cr, const post_axes *ax, const post_ticks *t,
                        const post_chart_style *ps, double lw)
{
    double bot = ax->py + ax->ph + lw;
    cairo_set_source_rgb(cr, POST_INK_RGB);
    for (int k = 0; k < t->n; k++) {
        cairo_move_to(cr, post_axes_x(ax, t->v[k]), bot);
        cairo_line_to(cr, post_axes_x(ax, t->v[k]), bot + ps->ticklen);
    }
    cairo_set_line_width(cr, lw);
    cairo_stroke(cr);
    post_font(cr, ps->f_tick, 0);
    char buf[64];
    for (int k = 0; k < t->n; k++) {
        post_fmt_tick(buf, sizeof buf, t->v[k], t->decimals);
        post_text(cr, post_axes_x(ax, t->v[k]), bot + ps->ticklen + 5.0 * ps->s, buf, 0.5, 0.0);
    }
}

/* The marks are stroked together with the labels' path, as one stroke. */
void post_chart_log_x_ticks(cairo_t *cr, const post_axes *ax, const post_log_ticks *lt,
                            const post_chart_style *ps, double lw)
{
    double s = ps->s, bot = ax->py + ax->ph + lw, ticklen = ps->ticklen, f_tick = ps->f_tick;
    char buf[96];
    double last_right = -INFINITY;
    cairo_set_source_rgb(cr, POST_INK_RGB);
    post_font(cr, f_tick, 0);
    for (int k = 0; k < lt->n; k++) {
        double X = post_axes_x(ax, lt->v[k]);
        cairo_move_to(cr, X, bot);
        cairo_line_to(cr, X, bot + (lt->major[k] ? ticklen : 0.55 * ticklen));
        if (!lt->major[k])
            continue;
        fmt_log_label(buf, sizeof buf, lt->v[k]);
        double w = post_rich_width(cr, buf, f_tick);
        if (X - w / 2.0 < last_right + 8.0 * s)
            continue; /* would overlap its left neighbour */
        post_rich_text(cr, X, bot + ticklen + 5.0 * s + (strchr(buf, '^') ? 0.3 * f_tick : 0.0),
                       buf, f_tick, 0.5, 0.0, 0.0);
        last_right = X + w / 2.0;
    }
    cairo_set_line_width(cr, lw);
    cairo_stroke(cr);
}

void post_chart_x_title(cairo_t *cr, const post_axes *ax, const post_chart_style *ps, double lw,
                        const char *label)
{
    if (label == NULL)
        return;
    post_font(cr, ps->f_label, 0);
    post_rich_text(cr, ax->px + ax->pw / 2.0,
                   ax->py + ax->ph + lw + ps->ticklen + 5.0 * ps->s + 1.4 * ps->f_tick +
                       10.0 * ps->s,
                   label, ps->f_label, 0.5, 0.0, 0.0);
}

void post_chart_value_title(cairo_t *cr, const post_axes *ax, const post_chart_style *ps,
                            double base_x, const char *label)
{
    if (label == NULL)
        return;
    post_font(cr, ps->f_label, 0);
    post_rich_text(cr, base_x, ax->py + ax->ph / 2.0, label, ps->f_label, 0.5, 1.0,
                   -EDDY_PI / 2.0);
}

/* ------------------------------------------------------------------ */
/* Legend strip                                                        */
/* ------------------------------------------------------------------ */

/* The swatch of one entry: a short line (dashed if asked) with its marker
 * in the middle, sw px long, centred vertically on cy. */
static void legend_swatch(cairo_t *cr, const post_legend_entry *e, double x0, double cy,
                          double sw, double s)
{
    cairo_set_source_rgba(cr, e->col[0], e->col[1], e->col[2], e->alpha);
    if (e->dashed) {
        double dash[2] = {6.0 * s, 4.0 * s};
        cairo_set_dash(cr, dash, 2, 0.0);
    }
    cairo_move_to(cr, x0, cy);
    cairo_line_to(cr, x0 + sw, cy);
    cairo_set_line_width(cr, e->lw);
    cairo_stroke(cr);
    cairo_set_dash(cr, NULL, 0, 0.0);
    if (e->marker) {
        draw_marker(cr, x0 + sw / 2.0, cy, e->marker, 4.0 * s);
        cairo_fill(cr);
    }
}

double post_chart_legend_strip(cairo_t *cr, const post_chart_style *ps, post_legend_entry *leg,
                               int nleg, double x, double y, double maxw, int draw)
{
    if (nleg < 1)
        return 0.0;
    for (int k = 1; k < nleg; k++) { /* sort by rank */
        post_legend_entry e = leg[k];
        int m = k - 1;
        while (m >= 0 && leg[m].rank > e.rank) {
            leg[m + 1] = leg[m];
            m--;
        }
        leg[m + 1] = e;
    }
    double s = ps->s, f = ps->f_leg, sw = 26.0 * s, gap = 7.0 * s, sep = 22.0 * s;
    double row_h = 1.7 * f, X = x, Y = y;
    post_font(cr, f, 0);
    for (int k = 0; k < nleg; k++) {
        const post_legend_entry *e = &leg[k];
        double w = sw + gap + post_rich_width(cr, e->label, f);
        if (X > x && X + w > x + maxw) { /* wrap to a new row */
            X = x;
            Y += row_h;
        }
        if (draw) {
            double cy = Y + 0.5 * row_h;
            legend_swatch(cr, e, X, cy, sw, s);
            cairo_set_source_rgb(cr, POST_INK_RGB);
            post_rich_text(cr, X + sw + gap, cy, e->label, f, 0.0, 0.5, 0.0);
        }
        X += w + sep;
    }
    return Y - y + row_h;
}
