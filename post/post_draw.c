/*
 * post_draw.c - drawing primitives of the pictures: tick values and number
 * formats, text and rich text (sub- and superscripts), the canvas, frames
 * and titles.  Private to post/; interface in post/post_draw.h.
 */
#include "post/post_draw.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* ================================================================== */
/* Ticks                                                               */
/* ================================================================== */

/* "Nice numbers" for graph labels (Heckbert, Graphics Gems, 1990): a number
 * 1, 2 or 5 times a power of ten close to x (round) or not below it. */
static double nicenum(double x, int round_it)
{
    double e = floor(log10(x));
    double p = pow(10.0, e);
    double f = x / p, nf;
    if (round_it)
        nf = f < 1.5 ? 1.0 : (f < 3.0 ? 2.0 : (f < 7.0 ? 5.0 : 10.0));
    else
        nf = f <= 1.0 ? 1.0 : (f <= 2.0 ? 2.0 : (f <= 5.0 ? 5.0 : 10.0));
    return nf * p;
}

/* Decimals that show every multiple of step d exactly (d = 2.5 needs one). */
static int step_decimals(double d)
{
    int dec = -(int)floor(log10(d) + 1e-9);
    if (dec < 0)
        dec = 0;
    while (dec < 12) {
        double m = d * pow(10.0, dec);
        if (fabs(m - round(m)) <= 1e-6 * m)
            break;
        dec++;
    }
    return dec;
}

void post_ticks_make(double lo, double hi, int target, post_ticks *t)
{
    t->n = 0;
    t->step = 1.0;
    t->decimals = 0;
    if (!(hi > lo) || !isfinite(hi - lo))
        return;
    if (target < 2)
        target = 2;
    double d = nicenum((hi - lo) / (target - 1), 1);
    t->step = d;
    t->decimals = step_decimals(d);
    double k0 = ceil(lo / d - 1e-9);
    for (int k = 0; t->n < POST_MAX_TICKS; k++) {
        double v = (k0 + k) * d;
        if (v > hi + 1e-9 * d)
            break;
        if (fabs(v) < 1e-9 * d)
            v = 0.0;
        t->v[t->n++] = v;
    }
}

void post_ticks_every(double alo, double ahi, double d, post_ticks *t)
{
    t->n = 0;
    t->step = d;
    t->decimals = step_decimals(d);
    for (int k = 0; t->n < POST_MAX_TICKS; k++) {
        double v = alo + k * d;
        if (v > ahi + 1e-9 * d)
            break;
        t->v[t->n++] = fabs(v) < 1e-9 * d ? 0.0 : v;
    }
}

/* ================================================================== */
/* Number formats                                                      */
/* ================================================================== */

/* Replace a leading ASCII '-' with the Unicode minus sign. */
static void typographic_minus(char *buf, size_t size)
{
    if (buf[0] != '-')
        return;
    size_t len = strlen(buf);
    if (len + 3 > size)
        return;
    memmove(buf + 3, buf + 1, len); /* includes the NUL */
    memcpy(buf, "\xe2\x88\x92", 3);
}

void post_fmt_tick(char *buf, size_t size, double v, int decimals)
{
    if (fabs(v) >= 1e6 || decimals > 6)
        snprintf(buf, size, "%.4g", v);
    else
        snprintf(buf, size, "%.*f", decimals, v);
    if (strcmp(buf, "-0") == 0 || (buf[0] == '-' && strspn(buf + 1, "0.") == strlen(buf + 1)))
        memmove(buf, buf + 1, strlen(buf));
    typographic_minus(buf, size);
}

void post_fmt_sig3(char *buf, size_t size, double v)
{
    double a = fabs(v);
    if (a == 0.0) {
        snprintf(buf, size, "0");
    } else if (a >= 1e-3 && a < 1e6) {
        int dec = 2 - (int)floor(log10(a));
        if (dec < 0)
            dec = 0;
        snprintf(buf, size, "%.*f", dec, v);
        /* rounding may have added a digit (e.g. 9.995 -> 10.00) */
        if (dec > 0 && fabs(atof(buf)) >= pow(10.0, 3 - dec))
            snprintf(buf, size, "%.*f", dec - 1, v);
    } else {
        snprintf(buf, size, "%.3g", v);
    }
    typographic_minus(buf, size);
}

/* ================================================================== */
/* Text                                                                */
/* ================================================================== */

void post_font(cairo_t *cr, double size, int bold)
{
    cairo_select_font_face(cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL,
                           bold ? CAIRO_FONT_WEIGHT_BOLD : CAIRO_FONT_WEIGHT_NORMAL);
    cairo_set_font_size(cr, size);
}

double post_text_width(cairo_t *cr, const char *s)
{
    cairo_text_extents_t e;
    cairo_text_extents(cr, s, &e);
    return e.x_advance;
}

double post_ticks_label_width(cairo_t *cr, const post_ticks *t)
{
    double wmax = 0.0;
    for (int k = 0; k < t->n; k++) {
        char buf[64];
        post_fmt_tick(buf, sizeof buf, t->v[k], t->decimals);
        wmax = fmax(wmax, post_text_width(cr, buf));
    }
    return wmax;
}

void post_text(cairo_t *cr, double x, double y, const char *s, double ha, double va)
{
    cairo_matrix_t m;
    cairo_get_font_matrix(cr, &m);
    double w = post_text_width(cr, s), cap = POST_CAP_FRAC * m.yy;
    cairo_move_to(cr, x - ha * w, y + (1.0 - va) * cap);
    cairo_show_text(cr, s);
}

/* --- Labels with sub- and superscripts ("J_z", "MA/m^2", "m^{-1}") --- */
#define RICH_MAX_SEG 24
#define RICH_SEG_LEN 128
#define RICH_SCALE 0.7
typedef struct {
    int n;
    int level[RICH_MAX_SEG]; /* -1 subscript, 0 normal, +1 superscript */
    char txt[RICH_MAX_SEG][RICH_SEG_LEN];
} rich_t;

/* Length of the UTF-8 sequence starting at p (1 for a broken byte). */
static size_t utf8_len(const char *p)
{
    unsigned char c = (unsigned char)p[0];
    size_t n = c < 0x80 ? 1 : (c >> 5) == 6 ? 2 : (c >> 4) == 14 ? 3 : (c >> 3) == 30 ? 4 : 1;
    for (size_t k = 1; k < n; k++)
        if (p[k] == '\0')
            return k;
    return n;
}

static void rich_add(rich_t *r, int level, const char *p, size_t len)
{
    if (len == 0 || r->n >= RICH_MAX_SEG)
        return;
    if (len >= RICH_SEG_LEN)
        len = RICH_SEG_LEN - 1;
    r->level[r->n] = level;
    memcpy(r->txt[r->n], p, len);
    r->txt[r->n][len] = '\0';
    r->n++;
}

static void rich_parse(const char *s, rich_t *r)
{
    r->n = 0;
    if (s == NULL)
        return;
    const char *p = s;
    while (*p != '\0') {
        if ((*p == '_' || *p == '^') && p[1] != '\0') {
            int level = *p == '_' ? -1 : 1;
            p++;
            const char *q = p;
            if (*p == '{') {
                q = strchr(p + 1, '}');
                if (q == NULL)
                    q = p + strlen(p);
                rich_add(r, level, p + 1, (size_t)(q - p - 1));
                p = *q == '}' ? q + 1 : q;
                continue;
            }
            if (*q == '-' || *q == '+')
                q++;
            while ((*q >= '0' && *q <= '9') || (*q >= 'a' && *q <= 'z') || (*q >= 'A' && *q <= 'Z'))
                q++;
            if (q == p)
                q = p + utf8_len(p);
            rich_add(r, level, p, (size_t)(q - p));
            p = q;
        } else {
            const char *q = p + 1;
            while (*q != '\0' && *q != '_' && *q != '^')
                q++;
            rich_add(r, 0, p, (size_t)(q - p));
            p = q;
        }
    }
}

static double rich_parsed_width(cairo_t *cr, const rich_t *r, double size)
{
    double w = 0.0;
    for (int k = 0; k < r->n; k++) {
        cairo_set_font_size(cr, r->level[k] ? RICH_SCALE * size : size);
        w += post_text_width(cr, r->txt[k]);
    }
    cairo_set_font_size(cr, size);
    return w;
}

double post_rich_width(cairo_t *cr, const char *s, double size)
{
    rich_t r;
    rich_parse(s, &r);
    return rich_parsed_width(cr, &r, size);
}

void post_rich_text(cairo_t *cr, double x, double y, const char *s, double size, double ha,
                    double va, double angle)
{
    rich_t r;
    rich_parse(s, &r);
    double w = rich_parsed_width(cr, &r, size), cap = POST_CAP_FRAC * size;
    cairo_save(cr);
    cairo_translate(cr, x, y);
    cairo_rotate(cr, angle);
    double px = -ha * w, base = (1.0 - va) * cap;
    for (int k = 0; k < r.n; k++) {
        double fs = r.level[k] ? RICH_SCALE * size : size;
        double dy = r.level[k] < 0 ? 0.22 * size : (r.level[k] > 0 ? -0.38 * size : 0.0);
        cairo_set_font_size(cr, fs);
        cairo_move_to(cr, px, base + dy);
        cairo_show_text(cr, r.txt[k]);
        px += post_text_width(cr, r.txt[k]);
    }
    cairo_restore(cr);
}

void post_title(cairo_t *cr, const char *title, double size, double x, double y, double W,
                double pad)
{
    if (title == NULL || title[0] == '\0')
        return;
    post_font(cr, size, 0);
    double w = post_text_width(cr, title), room = W - pad - x;
    if (w > room && room > 0.0) { /* shrink a long title to fit */
        size *= room / w;
        post_font(cr, size, 0);
    }
    cairo_set_source_rgb(cr, POST_INK_RGB);
    post_text(cr, x, y, title, 0.0, 0.0);
    /* the house mark: a short amber rule under the first letters */
    double amber[3];
    post_series_col(1, 2, amber);
    cairo_set_source_rgb(cr, amber[0], amber[1], amber[2]);
    cairo_rectangle(cr, x, y + 1.05 * size, 2.2 * size, fmax(2.0, 0.14 * size));
    cairo_fill(cr);
}

/* ================================================================== */
/* Canvas                                                              */
/* ================================================================== */

eddy_status post_canvas_new(int w, int h, cairo_surface_t **surf, cairo_t **cr, eddy_error *err)
{
    *surf = cairo_image_surface_create(CAIRO_FORMAT_ARGB32, w, h);
    if (cairo_surface_status(*surf) != CAIRO_STATUS_SUCCESS) {
        cairo_status_t st = cairo_surface_status(*surf);
        cairo_surface_destroy(*surf);
        *surf = NULL;
        *cr = NULL;
        return EDDY_RAISE(err, st == CAIRO_STATUS_NO_MEMORY ? EDDY_ERR_NOMEM : EDDY_ERR_INPUT,
                          "cannot create a %dx%d image: %s", w, h, cairo_status_to_string(st));
    }
    *cr = cairo_create(*surf);
    if (cairo_status(*cr) != CAIRO_STATUS_SUCCESS) {
        cairo_destroy(*cr);
        cairo_surface_destroy(*surf);
        *surf = NULL;
        *cr = NULL;
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "cannot create a cairo context");
    }
    cairo_set_source_rgb(*cr, 1.0, 1.0, 1.0);
    cairo_paint(*cr);
    return EDDY_OK;
}

eddy_status post_canvas_status(cairo_t *cr, eddy_error *err)
{
    cairo_status_t st = cairo_status(cr);
    if (st == CAIRO_STATUS_SUCCESS)
        return EDDY_OK;
    return EDDY_RAISE(err, st == CAIRO_STATUS_NO_MEMORY ? EDDY_ERR_NOMEM : EDDY_ERR_INTERNAL,
                      "drawing failed: %s", cairo_status_to_string(st));
}

cairo_t *post_canvas_scratch(cairo_surface_t **surf)
{
    *surf = cairo_image_surface_create(CAIRO_FORMAT_ARGB32, 4, 4);
    return cairo_create(*surf);
}

void post_frame_outside(cairo_t *cr, double x, double y, double w, double h, double lw)
{
    cairo_rectangle(cr, x - lw / 2.0, y - lw / 2.0, w + lw, h + lw);
    cairo_set_line_width(cr, lw);
    cairo_set_line_join(cr, CAIRO_LINE_JOIN_MITER);
    cairo_stroke(cr);
}
