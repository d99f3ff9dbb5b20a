/*
 * post_overlay.c - many curves on one pair of axes (the drag curves of
 * every case of a batch): one colour per curve from the house palette, or
 * a ramp of colours in curve order beyond it, keyed by a legend strip or a
 * labelled colour strip.  Interface in post/post_img.h; axes, series and
 * legend come from post_chart.c.
 */
#include "post/post_draw.h"
#include "post/post_img.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

void post_overlay_opts_defaults(post_overlay_opts *o)
{
    if (o != NULL)
        memset(o, 0, sizeof *o);
}

/* Everything one overlay plot needs while it is drawn. */
typedef struct {
    int ncurve;
    const int *npt;
    const double *const *x, *const *y;
    const char *const *names;
    const post_overlay_opts *o;
    int W, H;
    double xmin, xmax, ymin, ymax; /* data ranges                           */
    int **order;                   /* per curve: points in x order          */
    double (*col)[3];              /* per curve: its colour                 */
    post_legend_entry *leg;        /* per curve (palette case only)         */
    post_chart_style ps;
    post_axes ax;
    post_ticks yt, xt;
    post_log_ticks lt;
    double title_y, key_y, key_h;
    int ramp;                      /* more curves than the palette          */
} overlay_plot;

static eddy_status overlay_check(const char *path, overlay_plot *P, eddy_error *err)
{
    static const char *plot = "overlay plot";
    if (path == NULL || P->npt == NULL || P->x == NULL || P->y == NULL || P->names == NULL ||
        P->ncurve < 1)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "overlay plot: no curves to plot");
    eddy_status st = post_chart_size(plot, P->o->width_px, P->o->height_px, &P->W, &P->H, err);
    P->xmin = P->ymin = INFINITY;
    P->xmax = P->ymax = -INFINITY;
    for (int c = 0; st == EDDY_OK && c < P->ncurve; c++) {
        if (P->npt[c] < 1 || P->x[c] == NULL || P->y[c] == NULL || P->names[c] == NULL)
            return EDDY_RAISE(err, EDDY_ERR_INPUT, "overlay plot: curve %d has no points", c);
        st = post_chart_check_series(plot, "x", P->npt[c], P->x[c], EDDY_ERR_NUMERIC, err);
        if (st == EDDY_OK)
            st = post_chart_check_series(plot, "y", P->npt[c], P->y[c], EDDY_ERR_NUMERIC, err);
        for (int k = 0; st == EDDY_OK && k < P->npt[c]; k++) {
            P->xmin = fmin(P->xmin, P->x[c][k]);
            P->xmax = fmax(P->xmax, P->x[c][k]);
            P->ymin = fmin(P->ymin, P->y[c][k]);
            P->ymax = fmax(P->ymax, P->y[c][k]);
        }
    }
    if (st == EDDY_OK && (!isfinite(P->xmax - P->xmin) || !isfinite(P->ymax - P->ymin)))
        st = EDDY_RAISE(err, EDDY_ERR_INPUT, "overlay plot: values span too wide a range");
    return st;
}

/* Per-curve drawing order, colours and legend entries (one block each). */
static eddy_status overlay_alloc(overlay_plot *P, eddy_error *err)
{
    int n = P->ncurve;
    P->order = calloc((size_t)n, sizeof *P->order);
    P->col = malloc((size_t)n * sizeof *P->col);
    P->leg = malloc((size_t)n * sizeof *P->leg);
    if (P->order == NULL || P->col == NULL || P->leg == NULL)
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "overlay plot: out of memory");
    for (int c = 0; c < n; c++) {
        int m = P->npt[c];
        P->order[c] = malloc((size_t)m * sizeof **P->order);
        if (P->order[c] == NULL)
            return EDDY_RAISE(err, EDDY_ERR_NOMEM, "overlay plot: out of memory");
        int *idx = P->order[c];
        for (int k = 0; k < m; k++) /* insertion sort by x; curves are short */
            idx[k] = k;
        for (int k = 1; k < m; k++) {
            int v = idx[k], q = k - 1;
            while (q >= 0 && P->x[c][idx[q]] > P->x[c][v]) {
                idx[q + 1] = idx[q];
                q--;
            }
            idx[q + 1] = v;
        }
        post_series_col(c, n, P->col[c]);
    }
    P->ramp = n > POST_SERIES_N;
    return EDDY_OK;
}

/* Height of the colour strip that keys a ramp: the strip and one text row. */
static double ramp_key_height(const post_chart_style *ps)
{
    return 14.0 * ps->s + 1.9 * ps->f_leg;
}

/* The ramp key: "KEY:" then the first name, a strip of every curve's
 * colour in order, the last name, and "(N cases, in this order)". */
static void draw_ramp_key(overlay_plot *P, cairo_t *cr)
{
    const post_chart_style *ps = &P->ps;
    double s = ps->s, f = ps->f_leg, x = ps->pad, y = P->key_y, bar_h = 12.0 * s;
    double cy = y + 0.5 * bar_h;
    const char *key = P->o->key_label != NULL ? P->o->key_label : "case";
    char head[200], tail[64];
    snprintf(head, sizeof head, "colour by %s:", key);
    snprintf(tail, sizeof tail, "(%d cases, in this order)", P->ncurve);
    post_font(cr, f, 0);
    cairo_set_source_rgb(cr, POST_INK_RGB);
    post_text(cr, x, cy, head, 0.0, 0.5);
    x += post_text_width(cr, head) + 8.0 * s;
    const char *first = P->names[0], *last = P->names[P->ncurve - 1];
    post_text(cr, x, cy, first, 0.0, 0.5);
    x += post_text_width(cr, first) + 8.0 * s;
    double room = P->W - ps->pad - x - post_text_width(cr, last) - post_text_width(cr, tail) -
                  24.0 * s;
    double bar_w = fmin(fmax(room, 60.0 * s), 420.0 * s), cell = bar_w / P->ncurve;
    for (int c = 0; c < P->ncurve; c++) {
        cairo_set_source_rgb(cr, P->col[c][0], P->col[c][1], P->col[c][2]);
        cairo_rectangle(cr, x + c * cell, y, ceil(cell), bar_h);
        cairo_fill(cr);
    }
    x += bar_w + 8.0 * s;
    cairo_set_source_rgb(cr, POST_INK_RGB);
    post_text(cr, x, cy, last, 0.0, 0.5);
    x += post_text_width(cr, last) + 12.0 * s;
    post_text(cr, x, cy, tail, 0.0, 0.5);
}

/* Legend entries (palette case), the plot rectangle and both axes. */
static void overlay_layout(overlay_plot *P, cairo_t *cr)
{
    post_chart_style *ps = &P->ps;
    post_axes *ax = &P->ax;
    post_chart_style_init(P->W, P->H, ps);
    double s = ps->s;
    for (int c = 0; c < P->ncurve; c++)
        P->leg[c] = (post_legend_entry){P->names[c], P->col[c], 3, 2.0 * s, 1.0, 0, c};
    int has_title = P->o->title != NULL && P->o->title[0] != '\0';
    P->title_y = ps->pad;
    P->key_y = ps->pad + (has_title ? 1.75 * ps->f_title : 0.0);
    P->key_h = P->ramp ? ramp_key_height(ps)
                       : post_chart_legend_strip(cr, ps, P->leg, P->ncurve, ps->pad, P->key_y,
                                                 P->W - 2.0 * ps->pad, 0);
    double top = P->key_y + P->key_h + 0.6 * ps->f_tick;
    ax->py = ceil(top);
    ax->ph = floor(P->H - top - ps->bottom);
    double ylo = fmin(0.0, P->ymin), yhi = fmax(0.0, P->ymax);
    if (!(yhi > ylo))
        yhi = ylo + 1.0;
    yhi += 0.05 * (yhi - ylo);
    post_font(cr, ps->f_tick, 0);
    post_chart_value_axis(ylo, yhi, ax, ps, &ax->ylo, &ax->yhi, &P->yt);
    double left = post_chart_value_margin(ps, post_ticks_label_width(cr, &P->yt));
    ax->px = ceil(left);
    ax->pw = floor(P->W - left - ps->pad - 20.0 * s);
    /* the speed-axis rule of the force plot: logarithmic when every x is
     * positive and they span more than a decade */
    ax->xlog = P->xmin > 0.0 && P->xmax / P->xmin > 10.0;
    P->lt.n = 0;
    P->xt.n = 0;
    if (ax->xlog) {
        double span = log10(P->xmax) - log10(P->xmin), padl = fmax(0.04 * span, 0.03);
        ax->xlo = P->xmin / pow(10.0, padl);
        ax->xhi = P->xmax * pow(10.0, padl);
        post_chart_log_ticks(ax->xlo, ax->xhi, &P->lt);
    } else {
        double lo = fmin(0.0, P->xmin), hi = P->xmax + 0.03 * (P->xmax - fmin(0.0, P->xmin));
        post_chart_fit_loose_axis(cr, lo, hi, ax->pw, 20.0 * s, &ax->xlo, &ax->xhi, &P->xt);
    }
}

static void overlay_draw(overlay_plot *P, cairo_t *cr)
{
    const post_axes *ax = &P->ax;
    const post_chart_style *ps = &P->ps;
    double s = ps->s, lw = fmax(1.0, round(s));
    post_chart_grid(cr, ax, ps, &P->yt);
    cairo_save(cr);
    cairo_rectangle(cr, ax->px, ax->py, ax->pw, ax->ph);
    cairo_clip(cr);
    for (int c = 0; c < P->ncurve; c++)
        post_chart_series(cr, ax, P->npt[c], P->x[c], P->y[c], P->order[c], P->col[c], 2.0 * s,
                          1.0, 3, 3.2 * s);
    cairo_restore(cr);
    post_chart_axis_lines(cr, ax, lw, 0);
    post_chart_value_ticks(cr, ax, &P->yt, 0, ps, lw);
    if (ax->xlog)
        post_chart_log_x_ticks(cr, ax, &P->lt, ps, lw);
    else
        post_chart_x_ticks(cr, ax, &P->xt, ps, lw);
    cairo_set_source_rgb(cr, POST_INK_RGB);
    post_chart_x_title(cr, ax, ps, lw, P->o->x_label);
    post_chart_value_title(cr, ax, ps, ps->pad + POST_CAP_FRAC * ps->f_label, P->o->y_label);
    if (P->ramp)
        draw_ramp_key(P, cr);
    else
        post_chart_legend_strip(cr, ps, P->leg, P->ncurve, ps->pad, P->key_y,
                                P->W - 2.0 * ps->pad, 1);
    post_title(cr, P->o->title, ps->f_title, ps->pad, P->title_y, P->W, ps->pad);
}

/* "name<TAB>#rrggbb" per curve, one a line, for the PNG text chunk. */
static char *series_text(const overlay_plot *P)
{
    size_t len = 1;
    for (int c = 0; c < P->ncurve; c++)
        len += strlen(P->names[c]) + 10;
    char *t = malloc(len), *q = t;
    if (t == NULL)
        return NULL;
    for (int c = 0; c < P->ncurve; c++) {
        unsigned char rgb[3];
        post_series_rgb(c, P->ncurve, rgb);
        q += sprintf(q, "%s\t#%02x%02x%02x\n", P->names[c], rgb[0], rgb[1], rgb[2]);
    }
    *q = '\0';
    return t;
}

eddy_status post_plot_overlay_png(const char *path, int ncurve, const int *npt,
                                  const double *const *x, const double *const *y,
                                  const char *const *names, const post_overlay_opts *o,
                                  eddy_error *err)
{
    post_overlay_opts def;
    post_overlay_opts_defaults(&def);
    overlay_plot P;
    memset(&P, 0, sizeof P);
    P.ncurve = ncurve;
    P.npt = npt;
    P.x = x;
    P.y = y;
    P.names = names;
    P.o = o != NULL ? o : &def;
    eddy_status st = overlay_check(path, &P, err);
    if (st == EDDY_OK)
        st = overlay_alloc(&P, err);
    cairo_surface_t *surf = NULL;
    cairo_t *cr = NULL;
    if (st == EDDY_OK)
        st = post_canvas_new(P.W, P.H, &surf, &cr, err);
    char *series = NULL;
    if (st == EDDY_OK) {
        overlay_layout(&P, cr);
        overlay_draw(&P, cr);
        st = post_canvas_status(cr, err);
    }
    if (st == EDDY_OK && (series = series_text(&P)) == NULL)
        st = EDDY_RAISE(err, EDDY_ERR_NOMEM, "overlay plot: out of memory");
    if (st == EDDY_OK) {
        char software[160];
        post_png_text kv[] = {{"Title", P.o->title},
                              {"Software", post_png_software(software, sizeof software,
                                                             P.o->version)},
                              {"eddy2d:x", P.o->x_label},
                              {"eddy2d:y", P.o->y_label},
                              {"eddy2d:key", P.o->key_label},
                              {"eddy2d:series", series}};
        st = post_png_write(path, surf, kv, (int)(sizeof kv / sizeof kv[0]), err);
    }
    free(series);
    if (cr != NULL)
        cairo_destroy(cr);
    if (surf != NULL)
        cairo_surface_destroy(surf);
    if (P.order != NULL)
        for (int c = 0; c < ncurve; c++)
            free(P.order[c]);
    free(P.order);
    free(P.col);
    free(P.leg);
    return st;
}
