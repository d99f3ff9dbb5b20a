/*
 * post_img.c - field maps and force-speed plots as PNG pictures.
 *
 * Drawing goes through cairo into an ARGB32 image surface; the finished
 * surface is converted from cairo's premultiplied native-endian ARGB to
 * straight RGB(A) bytes and written with libpng, together with text chunks
 * that describe the picture.  See post/post.h for the interface.
 */
#include <png.h>

#include "post/post_img.h"

#include <cairo.h>
#include <errno.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>


/* ================================================================== */
/* Colour maps                                                         */
/* ================================================================== */

/* viridis (van der Walt & Smith, 2015): the published 256-entry table,
 * each float component rounded to 8 bits. */
static const unsigned char viridis_tab[256][3] = {
    { 68,  1, 84}, { 68,  2, 86}, { 69,  4, 87}, { 69,  5, 89}, { 70,  7, 90}, { 70,  8, 92},
    { 70, 10, 93}, { 70, 11, 94}, { 71, 13, 96}, { 71, 14, 97}, { 71, 16, 99}, { 71, 17,100},
    { 71, 19,101}, { 72, 20,103}, { 72, 22,104}, { 72, 23,105}, { 72, 24,106}, { 72, 26,108},
    { 72, 27,109}, { 72, 28,110}, { 72, 29,111}, { 72, 31,112}, { 72, 32,113}, { 72, 33,115},
    { 72, 35,116}, { 72, 36,117}, { 72, 37,118}, { 72, 38,119}, { 72, 40,120}, { 72, 41,121},
    { 71, 42,122}, { 71, 44,122}, { 71, 45,123}, { 71, 46,124}, { 71, 47,125}, { 70, 48,126},
    { 70, 50,126}, { 70, 51,127}, { 70, 52,128}, { 69, 53,129}, { 69, 55,129}, { 69, 56,130},
    { 68, 57,131}, { 68, 58,131}, { 68, 59,132}, { 67, 61,132}, { 67, 62,133}, { 66, 63,133},
    { 66, 64,134}, { 66, 65,134}, { 65, 66,135}, { 65, 68,135}, { 64, 69,136}, { 64, 70,136},
    { 63, 71,136}, { 63, 72,137}, { 62, 73,137}, { 62, 74,137}, { 62, 76,138}, { 61, 77,138},
    { 61, 78,138}, { 60, 79,138}, { 60, 80,139}, { 59, 81,139}, { 59, 82,139}, { 58, 83,139},
    { 58, 84,140}, { 57, 85,140}, { 57, 86,140}, { 56, 88,140}, { 56, 89,140}, { 55, 90,140},
    { 55, 91,141}, { 54, 92,141}, { 54, 93,141}, { 53, 94,141}, { 53, 95,141}, { 52, 96,141},
    { 52, 97,141}, { 51, 98,141}, { 51, 99,141}, { 50,100,142}, { 50,101,142}, { 49,102,142},
    { 49,103,142}, { 49,104,142}, { 48,105,142}, { 48,106,142}, { 47,107,142}, { 47,108,142},
    { 46,109,142}, { 46,110,142}, { 46,111,142}, { 45,112,142}, { 45,113,142}, { 44,113,142},
    { 44,114,142}, { 44,115,142}, { 43,116,142}, { 43,117,142}, { 42,118,142}, { 42,119,142},
    { 42,120,142}, { 41,121,142}, { 41,122,142}, { 41,123,142}, { 40,124,142}, { 40,125,142},
    { 39,126,142}, { 39,127,142}, { 39,128,142}, { 38,129,142}, { 38,130,142}, { 38,130,142},
    { 37,131,142}, { 37,132,142}, { 37,133,142}, { 36,134,142}, { 36,135,142}, { 35,136,142},
    { 35,137,142}, { 35,138,141}, { 34,139,141}, { 34,140,141}, { 34,141,141}, { 33,142,141},
    { 33,143,141}, { 33,144,141}, { 33,145,140}, { 32,146,140}, { 32,146,140}, { 32,147,140},
    { 31,148,140}, { 31,149,139}, { 31,150,139}, { 31,151,139}, { 31,152,139}, { 31,153,138},
    { 31,154,138}, { 30,155,138}, { 30,156,137}, { 30,157,137}, { 31,158,137}, { 31,159,136},
    { 31,160,136}, { 31,161,136}, { 31,161,135}, { 31,162,135}, { 32,163,134}, { 32,164,134},
    { 33,165,133}, { 33,166,133}, { 34,167,133}, { 34,168,132}, { 35,169,131}, { 36,170,131},
    { 37,171,130}, { 37,172,130}, { 38,173,129}, { 39,173,129}, { 40,174,128}, { 41,175,127},
    { 42,176,127}, { 44,177,126}, { 45,178,125}, { 46,179,124}, { 47,180,124}, { 49,181,123},
    { 50,182,122}, { 52,182,121}, { 53,183,121}, { 55,184,120}, { 56,185,119}, { 58,186,118},
    { 59,187,117}, { 61,188,116}, { 63,188,115}, { 64,189,114}, { 66,190,113}, { 68,191,112},
    { 70,192,111}, { 72,193,110}, { 74,193,109}, { 76,194,108}, { 78,195,107}, { 80,196,106},
    { 82,197,105}, { 84,197,104}, { 86,198,103}, { 88,199,101}, { 90,200,100}, { 92,200, 99},
    { 94,201, 98}, { 96,202, 96}, { 99,203, 95}, {101,203, 94}, {103,204, 92}, {105,205, 91},
    {108,205, 90}, {110,206, 88}, {112,207, 87}, {115,208, 86}, {117,208, 84}, {119,209, 83},
    {122,209, 81}, {124,210, 80}, {127,211, 78}, {129,211, 77}, {132,212, 75}, {134,213, 73},
    {137,213, 72}, {139,214, 70}, {142,214, 69}, {144,215, 67}, {147,215, 65}, {149,216, 64},
    {152,216, 62}, {155,217, 60}, {157,217, 59}, {160,218, 57}, {162,218, 55}, {165,219, 54},
    {168,219, 52}, {170,220, 50}, {173,220, 48}, {176,221, 47}, {178,221, 45}, {181,222, 43},
    {184,222, 41}, {186,222, 40}, {189,223, 38}, {192,223, 37}, {194,223, 35}, {197,224, 33},
    {200,224, 32}, {202,225, 31}, {205,225, 29}, {208,225, 28}, {210,226, 27}, {213,226, 26},
    {216,226, 25}, {218,227, 25}, {221,227, 24}, {223,227, 24}, {226,228, 24}, {229,228, 25},
    {231,228, 25}, {234,229, 26}, {236,229, 27}, {239,229, 28}, {241,229, 29}, {244,230, 30},
    {246,230, 32}, {248,230, 33}, {251,231, 35}, {253,231, 37},
};

/* --- Moreland's Msh space (Moreland 2009, "Diverging Color Maps for
 * Scientific Visualization"): sRGB -> linear RGB -> CIE XYZ (D65) ->
 * CIELAB -> polar (M, s, h).  The reference white is the one he uses. --- */
static const double ref_white[3] = {0.95047, 1.0, 1.08883};

static double srgb_to_lin(double c)
{
    return c <= 0.04045 ? c / 12.92 : pow((c + 0.055) / 1.055, 2.4);
}

static double lin_to_srgb(double c)
{
    return c <= 0.0031308 ? 12.92 * c : 1.055 * pow(c, 1.0 / 2.4) - 0.055;
}

static double lab_f(double t)
{
    return t > 0.008856 ? cbrt(t) : 7.787 * t + 16.0 / 116.0;
}

static double lab_finv(double t)
{
    return t > 0.20689 ? t * t * t : (t - 16.0 / 116.0) / 7.787;
}

static void rgb_to_msh(const double rgb[3], double msh[3])
{
    double r = srgb_to_lin(rgb[0]), g = srgb_to_lin(rgb[1]), b = srgb_to_lin(rgb[2]);
    double X = 0.4124 * r + 0.3576 * g + 0.1805 * b;
    double Y = 0.2126 * r + 0.7152 * g + 0.0722 * b;
    double Z = 0.0193 * r + 0.1192 * g + 0.9505 * b;
    double fx = lab_f(X / ref_white[0]), fy = lab_f(Y / ref_white[1]), fz = lab_f(Z / ref_white[2]);
    double L = 116.0 * fy - 16.0, a = 500.0 * (fx - fy), bb = 200.0 * (fy - fz);
    double M = sqrt(L * L + a * a + bb * bb);
    msh[0] = M;
    msh[1] = M > 0.0 ? acos(L / M) : 0.0;
    msh[2] = atan2(bb, a);
}

static void msh_to_rgb(const double msh[3], double rgb[3])
{
    double L = msh[0] * cos(msh[1]);
    double a = msh[0] * sin(msh[1]) * cos(msh[2]);
    double bb = msh[0] * sin(msh[1]) * sin(msh[2]);
    double fy = (L + 16.0) / 116.0, fx = fy + a / 500.0, fz = fy - bb / 200.0;
    double X = ref_white[0] * lab_finv(fx), Y = ref_white[1] * lab_finv(fy);
    double Z = ref_white[2] * lab_finv(fz);
    double lin[3] = {3.2406 * X - 1.5372 * Y - 0.4986 * Z, -0.9689 * X + 1.8758 * Y + 0.0415 * Z,
                     0.0557 * X - 0.2040 * Y + 1.0570 * Z};
    for (int k = 0; k < 3; k++) {
        double c = lin_to_srgb(lin[k] < 0.0 ? 0.0 : lin[k]);
        rgb[k] = c < 0.0 ? 0.0 : (c > 1.0 ? 1.0 : c);
    }
}

/* Hue spin for interpolating from a saturated to an unsaturated colour
 * (Moreland 2009, "AdjustHue"). */
static double adjust_hue(const double msh[3], double m_unsat)
{
    if (msh[0] >= m_unsat)
        return msh[2];
    double spin = msh[1] * sqrt(m_unsat * m_unsat - msh[0] * msh[0]) / (msh[0] * sin(msh[1]));
    return msh[2] > -EDDY_PI / 3.0 ? msh[2] + spin : msh[2] - spin;
}

/* Moreland's interpolation between two colours, t in [0, 1]. */
static void diverging_rgb(const double c1[3], const double c2[3], double t, double out[3])
{
    double m1[3], m2[3], m[3];
    rgb_to_msh(c1, m1);
    rgb_to_msh(c2, m2);
    if (m1[1] > 0.05 && m2[1] > 0.05 && fabs(m1[2] - m2[2]) > EDDY_PI / 3.0) {
        /* two saturated, distinct colours: pass through an unsaturated white */
        double mmid = fmax(fmax(m1[0], m2[0]), 88.0);
        if (t < 0.5) {
            m2[0] = mmid;
            m2[1] = 0.0;
            m2[2] = 0.0;
            t = 2.0 * t;
        } else {
            m1[0] = mmid;
            m1[1] = 0.0;
            m1[2] = 0.0;
            t = 2.0 * t - 1.0;
        }
    }
    if (m1[1] < 0.05 && m2[1] > 0.05)
        m1[2] = adjust_hue(m2, m1[0]);
    else if (m2[1] < 0.05 && m1[1] > 0.05)
        m2[2] = adjust_hue(m1, m2[0]);
    for (int k = 0; k < 3; k++)
        m[k] = (1.0 - t) * m1[k] + t * m2[k];
    msh_to_rgb(m, out);
}

void post_cmap_rgb(int diverging, double t, unsigned char rgb[3])
{
    if (isnan(t))
        t = 0.5;
    t = t < 0.0 ? 0.0 : (t > 1.0 ? 1.0 : t);
    if (diverging) {
        static const double cool[3] = {59 / 255.0, 76 / 255.0, 192 / 255.0};
        static const double warm[3] = {180 / 255.0, 4 / 255.0, 38 / 255.0};
        double c[3];
        diverging_rgb(cool, warm, t, c);
        for (int k = 0; k < 3; k++)
            rgb[k] = (unsigned char)lround(c[k] * 255.0);
    } else {
        double u = t * 255.0;
        int i = (int)u;
        if (i > 254)
            i = 254;
        double f = u - i;
        for (int k = 0; k < 3; k++)
            rgb[k] = (unsigned char)lround((1.0 - f) * viridis_tab[i][k] + f * viridis_tab[i + 1][k]);
    }
}

/* A lookup table of opaque ARGB32 pixels for fast per-pixel colouring. */
#define LUT_N 1024
static void make_lut(int diverging, uint32_t lut[LUT_N])
{
    for (int k = 0; k < LUT_N; k++) {
        unsigned char c[3];
        post_cmap_rgb(diverging, (double)k / (LUT_N - 1), c);
        lut[k] = 0xff000000u | ((uint32_t)c[0] << 16) | ((uint32_t)c[1] << 8) | c[2];
    }
}

static uint32_t lut_pick(const uint32_t lut[LUT_N], double t)
{
    if (!(t > 0.0))
        t = 0.0;
    if (t > 1.0)
        t = 1.0;
    return lut[(int)(t * (LUT_N - 1) + 0.5)];
}

/* ================================================================== */
/* Small helpers: numbers, ticks, text                                 */
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

#define MAX_TICKS 64
typedef struct {
    int n;
    double v[MAX_TICKS];
    double step;
    int decimals;
} ticks_t;

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

/* Ticks at multiples of a nice step about target apart, inside [lo, hi]. */
static void make_ticks(double lo, double hi, int target, ticks_t *t)
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
    for (int k = 0; t->n < MAX_TICKS; k++) {
        double v = (k0 + k) * d;
        if (v > hi + 1e-9 * d)
            break;
        if (fabs(v) < 1e-9 * d)
            v = 0.0;
        t->v[t->n++] = v;
    }
}

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

/* A tick label with a fixed number of decimals. */
static void fmt_tick(char *buf, size_t size, double v, int decimals)
{
    if (fabs(v) >= 1e6 || decimals > 6)
        snprintf(buf, size, "%.4g", v);
    else
        snprintf(buf, size, "%.*f", decimals, v);
    if (strcmp(buf, "-0") == 0 || (buf[0] == '-' && strspn(buf + 1, "0.") == strlen(buf + 1)))
        memmove(buf, buf + 1, strlen(buf));
    typographic_minus(buf, size);
}

/* A number with 3 significant digits, without exponent where sensible. */
static void fmt_sig3(char *buf, size_t size, double v)
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

static void set_font(cairo_t *cr, double size, int bold)
{
    cairo_select_font_face(cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL,
                           bold ? CAIRO_FONT_WEIGHT_BOLD : CAIRO_FONT_WEIGHT_NORMAL);
    cairo_set_font_size(cr, size);
}

static double text_width(cairo_t *cr, const char *s)
{
    cairo_text_extents_t e;
    cairo_text_extents(cr, s, &e);
    return e.x_advance;
}

/* Width of the widest label of a tick set, in the current font. */
static double ticks_label_width(cairo_t *cr, const ticks_t *t)
{
    double wmax = 0.0;
    for (int k = 0; k < t->n; k++) {
        char buf[64];
        fmt_tick(buf, sizeof buf, t->v[k], t->decimals);
        wmax = fmax(wmax, text_width(cr, buf));
    }
    return wmax;
}

/* Height of capitals as a fraction of the font size (for centring digits). */
#define CAP_FRAC 0.72

/* Draw s with its anchor at (x, y): ha 0 left / 0.5 centre / 1 right;
 * va 0 top of capitals / 0.5 middle / 1 baseline. */
static void draw_text(cairo_t *cr, double x, double y, const char *s, double ha, double va)
{
    cairo_matrix_t m;
    cairo_get_font_matrix(cr, &m);
    double w = text_width(cr, s), cap = CAP_FRAC * m.yy;
    cairo_move_to(cr, x - ha * w, y + (1.0 - va) * cap);
    cairo_show_text(cr, s);
}

/* --- Labels with sub- and superscripts ("J_z", "MA/m^2", "m^{-1}") --- */
#define RICH_MAX_SEG 24
#define RICH_SEG_LEN 128
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

#define RICH_SCALE 0.7
static double rich_width(cairo_t *cr, const rich_t *r, double size)
{
    double w = 0.0;
    for (int k = 0; k < r->n; k++) {
        cairo_set_font_size(cr, r->level[k] ? RICH_SCALE * size : size);
        w += text_width(cr, r->txt[k]);
    }
    cairo_set_font_size(cr, size);
    return w;
}

/* Draw a rich label with its anchor at (x, y) (as draw_text), turned by
 * angle radians about the anchor (cairo's sense: -pi/2 reads bottom to top). */
static void draw_rich(cairo_t *cr, double x, double y, const char *s, double size, double ha,
                      double va, double angle)
{
    rich_t r;
    rich_parse(s, &r);
    double w = rich_width(cr, &r, size), cap = CAP_FRAC * size;
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
        px += text_width(cr, r.txt[k]);
    }
    cairo_restore(cr);
}

/* ================================================================== */
/* PNG output                                                          */
/* ================================================================== */

typedef struct {
    const char *key;
    const char *value;
} png_kv;

typedef struct {
    char msg[256];
} png_err_ctx;

static void png_error_cb(png_structp png, png_const_charp msg)
{
    png_err_ctx *ctx = (png_err_ctx *)png_get_error_ptr(png);
    if (ctx != NULL)
        snprintf(ctx->msg, sizeof ctx->msg, "%s", msg != NULL ? msg : "libpng error");
    png_longjmp(png, 1);
}

static void png_warning_cb(png_structp png, png_const_charp msg)
{
    (void)png;
    (void)msg; /* library code never prints; warnings are not errors */
}

static int is_ascii(const char *s)
{
    for (; *s != '\0'; s++)
        if ((unsigned char)*s >= 0x80)
            return 0;
    return 1;
}

/* Write the cairo image surface to path as 8-bit RGB (or RGBA if any pixel
 * is not opaque), un-premultiplying cairo's ARGB32, with text chunks. */
static eddy_status write_surface_png(const char *path, cairo_surface_t *surf, const png_kv *kv,
                                     int nkv, eddy_error *err)
{
    cairo_surface_flush(surf);
    int w = cairo_image_surface_get_width(surf), h = cairo_image_surface_get_height(surf);
    int stride = cairo_image_surface_get_stride(surf);
    const unsigned char *data = cairo_image_surface_get_data(surf);
    if (data == NULL || w <= 0 || h <= 0)
        return EDDY_RAISE(err, EDDY_ERR_INTERNAL, "%s: no image data to write", path);

    int opaque = 1;
    for (int j = 0; j < h && opaque; j++) {
        const uint32_t *row = (const uint32_t *)(const void *)(data + (size_t)j * stride);
        for (int i = 0; i < w; i++)
            if ((row[i] >> 24) != 0xffu) {
                opaque = 0;
                break;
            }
    }
    int ch = opaque ? 3 : 4;
    unsigned char *pix = malloc((size_t)w * h * ch);
    png_bytep *rows = malloc((size_t)h * sizeof *rows);
    png_text *text = calloc((size_t)(nkv > 0 ? nkv : 1), sizeof *text);
    if (pix == NULL || rows == NULL || text == NULL) {
        free(pix);
        free(rows);
        free(text);
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "%s: out of memory for a %dx%d image", path, w, h);
    }
    for (int j = 0; j < h; j++) {
        const uint32_t *src = (const uint32_t *)(const void *)(data + (size_t)j * stride);
        unsigned char *dst = pix + (size_t)j * w * ch;
        rows[j] = dst;
        for (int i = 0; i < w; i++) {
            uint32_t p = src[i];
            unsigned a = p >> 24, r = (p >> 16) & 0xffu, g = (p >> 8) & 0xffu, b = p & 0xffu;
            if (a != 0xffu) {
                /* cairo stores premultiplied colour: c_stored = c * a / 255 */
                if (a == 0) {
                    r = g = b = 0;
                } else {
                    r = (r * 255u + a / 2) / a;
                    g = (g * 255u + a / 2) / a;
                    b = (b * 255u + a / 2) / a;
                }
            }
            dst[0] = (unsigned char)r;
            dst[1] = (unsigned char)g;
            dst[2] = (unsigned char)b;
            if (ch == 4)
                dst[3] = (unsigned char)a;
            dst += ch;
        }
    }
    int nt = 0;
    for (int k = 0; k < nkv; k++) {
        if (kv[k].value == NULL)
            continue;
        text[nt].key = (png_charp)kv[k].key;
        text[nt].text = (png_charp)kv[k].value;
        text[nt].text_length = strlen(kv[k].value);
        if (is_ascii(kv[k].value)) {
            text[nt].compression = PNG_TEXT_COMPRESSION_NONE;
        } else { /* tEXt is Latin-1; UTF-8 goes into iTXt */
            text[nt].compression = PNG_ITXT_COMPRESSION_NONE;
            text[nt].lang = (png_charp) "";
            text[nt].lang_key = (png_charp) "";
            text[nt].itxt_length = text[nt].text_length;
            text[nt].text_length = 0;
        }
        nt++;
    }

    FILE *f = fopen(path, "wb");
    if (f == NULL) {
        int e = errno;
        free(pix);
        free(rows);
        free(text);
        return EDDY_RAISE(err, EDDY_ERR_IO, "%s: cannot open for writing: %s", path, strerror(e));
    }
    png_err_ctx ctx;
    ctx.msg[0] = '\0';
    png_structp png = png_create_write_struct(PNG_LIBPNG_VER_STRING, &ctx, png_error_cb,
                                              png_warning_cb);
    png_infop info = png != NULL ? png_create_info_struct(png) : NULL;
    if (png == NULL || info == NULL) {
        png_destroy_write_struct(&png, &info);
        fclose(f);
        free(pix);
        free(rows);
        free(text);
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "%s: cannot set up the PNG writer", path);
    }
    if (setjmp(png_jmpbuf(png))) {
        png_destroy_write_struct(&png, &info);
        fclose(f);
        free(pix);
        free(rows);
        free(text);
        return EDDY_RAISE(err, EDDY_ERR_IO, "%s: PNG write failed: %s", path, ctx.msg);
    }
    png_init_io(png, f);
    png_set_IHDR(png, info, (png_uint_32)w, (png_uint_32)h, 8,
                 ch == 3 ? PNG_COLOR_TYPE_RGB : PNG_COLOR_TYPE_RGB_ALPHA, PNG_INTERLACE_NONE,
                 PNG_COMPRESSION_TYPE_DEFAULT, PNG_FILTER_TYPE_DEFAULT);
    if (nt > 0)
        png_set_text(png, info, text, nt);
    png_write_info(png, info);
    png_write_image(png, rows);
    png_write_end(png, info);
    png_destroy_write_struct(&png, &info);
    free(pix);
    free(rows);
    free(text);
    if (ferror(f)) {
        fclose(f);
        return EDDY_RAISE(err, EDDY_ERR_IO, "%s: write error", path);
    }
    if (fclose(f) != 0) {
        int e = errno;
        return EDDY_RAISE(err, EDDY_ERR_IO, "%s: cannot close: %s", path, strerror(e));
    }
    return EDDY_OK;
}

/* The PNG "Software" text for a tool version in buf, or NULL without one. */
static const char *software_text(char *buf, size_t size, const char *version)
{
    if (version == NULL)
        return NULL;
    snprintf(buf, size, "eddy2d %s", version);
    return buf;
}

/* A white ARGB32 surface and its context, or an error. */
static eddy_status new_canvas(int w, int h, cairo_surface_t **surf, cairo_t **cr, eddy_error *err)
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

/* Check the context after drawing; return its error if any. */
static eddy_status canvas_status(cairo_t *cr, eddy_error *err)
{
    cairo_status_t st = cairo_status(cr);
    if (st == CAIRO_STATUS_SUCCESS)
        return EDDY_OK;
    return EDDY_RAISE(err, st == CAIRO_STATUS_NO_MEMORY ? EDDY_ERR_NOMEM : EDDY_ERR_INTERNAL,
                      "drawing failed: %s", cairo_status_to_string(st));
}

/* A scratch context for measuring text before the image size is known. */
static cairo_t *scratch_context(cairo_surface_t **surf)
{
    *surf = cairo_image_surface_create(CAIRO_FORMAT_ARGB32, 4, 4);
    return cairo_create(*surf);
}

/* ================================================================== */
/* Field map                                                           */
/* ================================================================== */

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
#define IMG_MIN_PX 300
#define IMG_MAX_PX 10000

/* Everything the drawing needs beyond the public geometry. */
typedef struct {
    post_map_geom g;
    double s;                      /* size factor: width / 1200          */
    double f_tick, f_label, f_title, f_bar_label;
    double ticklen;
    ticks_t xt, yt, bt;            /* display units                      */
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
    if (w < IMG_MIN_PX || w > IMG_MAX_PX)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "field map: width %d px outside %d..%d", w,
                          IMG_MIN_PX, IMG_MAX_PX);
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

/* Largest label width over the tick sets for targets 2..12. */
static double max_label_width(cairo_t *cr, double lo, double hi)
{
    double wmax = 0.0;
    for (int target = 2; target <= 12; target++) {
        ticks_t t;
        make_ticks(lo, hi, target, &t);
        wmax = fmax(wmax, ticks_label_width(cr, &t));
    }
    return wmax;
}

/* Ticks whose labels fit along an axis of len px: horizontal labels need
 * their width plus a gap, vertical ones a line height. */
static void fit_ticks(cairo_t *cr, double lo, double hi, double len, double px_per_tick,
                      int horizontal, double gap, ticks_t *t)
{
    int target = (int)(len / px_per_tick);
    if (target < 3)
        target = 3; /* short axes: try for two ticks at least */
    if (target > 10)
        target = 10;
    for (; target >= 2; target--) {
        make_ticks(lo, hi, target, t);
        if (t->n < 2)
            continue;
        double spacing = t->step / (hi - lo) * len, need = gap;
        if (horizontal)
            need += ticks_label_width(cr, t);
        if (spacing >= need)
            return;
    }
    make_ticks(lo, hi, 2, t);
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

    double lo, hi;
    map_value_range(nx, ny, x, y, field, mask, view, &lo, &hi);
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
    cairo_t *cr = scratch_context(&scr_s);
    set_font(cr, L->f_tick, 0);
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
    {
        rich_t r;
        rich_parse(L->bar_label, &r);
        double lw = rich_width(cr, &r, L->f_bar_label);
        if (lw > bar_h + 2.0 * pad)
            L->f_bar_label *= (bar_h + 2.0 * pad) / lw;
    }

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

/* Paint the resampled field into a pw x ph surface. */
static eddy_status paint_field(cairo_t *cr, const map_layout *L, int nx, int ny, const double *x,
                               const double *y, const double *field, const unsigned char *mask,
                               int diverging, eddy_error *err)
{
    const post_map_geom *g = &L->g;
    int pw = g->plot_w, ph = g->plot_h;
    int *ix = malloc((size_t)pw * sizeof *ix), *iy = malloc((size_t)ph * sizeof *iy);
    double *fx = malloc((size_t)pw * sizeof *fx), *fy = malloc((size_t)ph * sizeof *fy);
    uint32_t *lut = malloc(LUT_N * sizeof *lut);
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
    make_lut(diverging, lut);
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
                size_t k = (size_t)i + (size_t)nx * j;
                double tx = fx[c];
                v = (1.0 - ty) * ((1.0 - tx) * field[k] + tx * field[k + 1]) +
                    ty * ((1.0 - tx) * field[k + nx] + tx * field[k + nx + 1]);
            }
            row[c] = lut_pick(lut, (v - lo) / span);
        }
    }
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
    return EDDY_OK;
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

/* Flux lines: contours of A by marching squares on the grid cells in view,
 * at n equally spaced levels strictly between min A and max A. */
static eddy_status draw_flux_lines(cairo_t *cr, const map_layout *L, int nx, int ny,
                                   const double *x, const double *y, const double *a, int n,
                                   eddy_error *err)
{
    const post_map_geom *g = &L->g;
    const double *view = g->view;
    for (size_t k = 0; k < (size_t)nx * ny; k++)
        if (!isfinite(a[k]))
            return EDDY_RAISE(err, EDDY_ERR_NUMERIC, "field map: A value %zu is not finite", k);
    double amin, amax;
    map_value_range(nx, ny, x, y, a, NULL, view, &amin, &amax);
    if (!(amax > amin))
        return EDDY_OK; /* uniform A: no lines */
    double da = (amax - amin) / (n + 1);

    cairo_save(cr);
    cairo_rectangle(cr, g->plot_x, g->plot_y, g->plot_w, g->plot_h);
    cairo_clip(cr);
    cairo_new_path(cr);
    for (int j = 0; j + 1 < ny; j++) {
        if (y[j + 1] < view[1] || y[j] > view[3])
            continue;
        for (int i = 0; i + 1 < nx; i++) {
            if (x[i + 1] < view[0] || x[i] > view[2])
                continue;
            size_t k = (size_t)i + (size_t)nx * j;
            /* corners counter-clockwise: (i,j) (i+1,j) (i+1,j+1) (i,j+1) */
            double cv[4] = {a[k], a[k + 1], a[k + nx + 1], a[k + nx]};
            double cx[4] = {x[i], x[i + 1], x[i + 1], x[i]};
            double cy[4] = {y[j], y[j], y[j + 1], y[j + 1]};
            double cmin = fmin(fmin(cv[0], cv[1]), fmin(cv[2], cv[3]));
            double cmax = fmax(fmax(cv[0], cv[1]), fmax(cv[2], cv[3]));
            int k0 = (int)ceil((cmin - amin) / da), k1 = (int)floor((cmax - amin) / da);
            if (k0 < 1)
                k0 = 1;
            if (k1 > n)
                k1 = n;
            for (int lv = k0; lv <= k1; lv++) {
                double level = amin + lv * da;
                /* crossing points on the 4 edges (edge e joins corner e and e+1) */
                double px[4], py[4];
                int has[4], nc = 0;
                for (int e = 0; e < 4; e++) {
                    int e2 = (e + 1) & 3;
                    int above1 = cv[e] >= level, above2 = cv[e2] >= level;
                    has[e] = above1 != above2;
                    if (has[e]) {
                        double t = (level - cv[e]) / (cv[e2] - cv[e]);
                        px[e] = map_X(g, cx[e] + t * (cx[e2] - cx[e]));
                        py[e] = map_Y(g, cy[e] + t * (cy[e2] - cy[e]));
                        nc++;
                    }
                }
                if (nc == 2) {
                    int first = 1;
                    for (int e = 0; e < 4; e++) {
                        if (!has[e])
                            continue;
                        if (first)
                            cairo_move_to(cr, px[e], py[e]);
                        else
                            cairo_line_to(cr, px[e], py[e]);
                        first = 0;
                    }
                } else if (nc == 4) {
                    /* saddle: decide by the cell-centre value which corners
                     * are joined; edges e-1 and e surround corner e */
                    double centre = 0.25 * (cv[0] + cv[1] + cv[2] + cv[3]);
                    int c0_above = cv[0] >= level, centre_above = centre >= level;
                    /* cut off the two corners on the other side than the centre */
                    int cut = (c0_above == centre_above) ? 1 : 0; /* corners cut, 1&3 or 0&2 */
                    for (int corner = cut; corner < 4; corner += 2) {
                        int ea = (corner + 3) & 3, eb = corner;
                        cairo_move_to(cr, px[ea], py[ea]);
                        cairo_line_to(cr, px[eb], py[eb]);
                    }
                }
            }
        }
    }
    cairo_set_source_rgba(cr, 0.06, 0.06, 0.06, 0.85);
    cairo_set_line_width(cr, fmax(0.8, 1.0 * L->s));
    cairo_set_line_cap(cr, CAIRO_LINE_CAP_ROUND);
    cairo_set_line_join(cr, CAIRO_LINE_JOIN_ROUND);
    cairo_stroke(cr);
    cairo_restore(cr);
    return EDDY_OK;
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
    cairo_set_source_rgba(cr, 0.0, 0.0, 0.0, 0.75);
    cairo_set_line_width(cr, fmax(1.0, 1.2 * L->s));
    cairo_set_line_join(cr, CAIRO_LINE_JOIN_MITER);
    cairo_stroke(cr);
    cairo_restore(cr);
}

/* Frame just outside the rectangle (x, y, w, h) of whole pixels. */
static void frame_outside(cairo_t *cr, double x, double y, double w, double h, double lw)
{
    cairo_rectangle(cr, x - lw / 2.0, y - lw / 2.0, w + lw, h + lw);
    cairo_set_line_width(cr, lw);
    cairo_set_line_join(cr, CAIRO_LINE_JOIN_MITER);
    cairo_stroke(cr);
}

static void draw_map_axes(cairo_t *cr, const map_layout *L, const post_map_opts *o)
{
    const post_map_geom *g = &L->g;
    double s = L->s, lw = fmax(1.0, round(s)), ls = o->length_scale;
    cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
    frame_outside(cr, g->plot_x, g->plot_y, g->plot_w, g->plot_h, lw);
    set_font(cr, L->f_tick, 0);
    double bottom = g->plot_y + g->plot_h + lw, left = g->plot_x - lw;
    char buf[64];
    for (int k = 0; k < L->xt.n; k++) {
        double X = map_X(g, L->xt.v[k] / ls);
        cairo_move_to(cr, X, bottom);
        cairo_line_to(cr, X, bottom + L->ticklen);
        fmt_tick(buf, sizeof buf, L->xt.v[k], L->xt.decimals);
        draw_text(cr, X, bottom + L->ticklen + 5.0 * s, buf, 0.5, 0.0);
    }
    for (int k = 0; k < L->yt.n; k++) {
        double Y = map_Y(g, L->yt.v[k] / ls);
        cairo_move_to(cr, left, Y);
        cairo_line_to(cr, left - L->ticklen, Y);
        fmt_tick(buf, sizeof buf, L->yt.v[k], L->yt.decimals);
        draw_text(cr, left - L->ticklen - 5.0 * s, Y, buf, 1.0, 0.5);
    }
    cairo_set_line_width(cr, lw);
    cairo_stroke(cr);

    const char *lu = o->length_unit != NULL ? o->length_unit : "m";
    char lab[96];
    set_font(cr, L->f_label, 0);
    snprintf(lab, sizeof lab, "x (%s)", lu);
    double xlab_y = bottom + L->ticklen + 5.0 * s + 1.2 * L->f_tick + 10.0 * s;
    draw_text(cr, g->plot_x + g->plot_w / 2.0, xlab_y, lab, 0.5, 0.0);
    snprintf(lab, sizeof lab, "y (%s)", lu);
    double ylab_x = 12.0 * s + CAP_FRAC * L->f_label;
    cairo_save(cr);
    cairo_translate(cr, ylab_x, g->plot_y + g->plot_h / 2.0);
    cairo_rotate(cr, -EDDY_PI / 2.0);
    draw_text(cr, 0.0, 0.0, lab, 0.5, 1.0);
    cairo_restore(cr);
}

static eddy_status draw_colour_bar(cairo_t *cr, const map_layout *L, const post_map_opts *o,
                                   eddy_error *err)
{
    const post_map_geom *g = &L->g;
    double s = L->s, lw = fmax(1.0, round(s)), vs = o->value_scale;
    uint32_t *lut = malloc(LUT_N * sizeof *lut);
    cairo_surface_t *bs = cairo_image_surface_create(CAIRO_FORMAT_ARGB32, g->bar_w, g->bar_h);
    if (lut == NULL || cairo_surface_status(bs) != CAIRO_STATUS_SUCCESS) {
        free(lut);
        cairo_surface_destroy(bs);
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "field map: out of memory for the colour bar");
    }
    make_lut(o->diverging, lut);
    cairo_surface_flush(bs);
    unsigned char *data = cairo_image_surface_get_data(bs);
    int stride = cairo_image_surface_get_stride(bs);
    for (int r = 0; r < g->bar_h; r++) {
        uint32_t *row = (uint32_t *)(void *)(data + (size_t)r * stride);
        uint32_t c = lut_pick(lut, g->bar_h > 1 ? 1.0 - (double)r / (g->bar_h - 1) : 1.0);
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

    cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
    frame_outside(cr, g->bar_x, g->bar_y, g->bar_w, g->bar_h, lw);
    set_font(cr, L->f_tick, 0);
    double right = g->bar_x + g->bar_w + lw, lo = g->vmin * vs, hi = g->vmax * vs;
    double label_x = right + L->ticklen + 5.0 * s, wmax = 0.0;
    char buf[64];
    for (int k = 0; k < L->bt.n; k++) {
        double Y = g->bar_y + (hi - L->bt.v[k]) / (hi - lo) * (g->bar_h - 1) + 0.5;
        cairo_move_to(cr, right, Y);
        cairo_line_to(cr, right + L->ticklen, Y);
        fmt_tick(buf, sizeof buf, L->bt.v[k], L->bt.decimals);
        draw_text(cr, label_x, Y, buf, 0.0, 0.5);
        wmax = fmax(wmax, text_width(cr, buf));
    }
    cairo_set_line_width(cr, lw);
    cairo_stroke(cr);
    set_font(cr, L->f_bar_label, 0);
    draw_rich(cr, label_x + wmax + 10.0 * s + CAP_FRAC * L->f_bar_label,
              g->bar_y + g->bar_h / 2.0, L->bar_label, L->f_bar_label, 0.5, 1.0, -EDDY_PI / 2.0);
    return EDDY_OK;
}

static void draw_title(cairo_t *cr, const char *title, double size, double cx, double y, double W,
                       double pad)
{
    if (title == NULL || title[0] == '\0')
        return;
    set_font(cr, size, 1);
    double w = text_width(cr, title);
    if (w > W - 2.0 * pad) { /* shrink a long title to fit */
        size *= (W - 2.0 * pad) / w;
        set_font(cr, size, 1);
        w = text_width(cr, title);
    }
    double x = cx - w / 2.0;
    if (x < pad)
        x = pad;
    if (x + w > W - pad)
        x = W - pad - w;
    cairo_set_source_rgb(cr, 0.0, 0.0, 0.0);
    draw_text(cr, x, y, title, 0.0, 0.0);
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
    st = new_canvas(g->width, g->height, &surf, &cr, err);
    if (st != EDDY_OK) {
        free(L);
        return st;
    }
    st = paint_field(cr, L, nx, ny, x, y, field, cell_mask, o->diverging, err);
    if (st == EDDY_OK && o->n_outlines > 0)
        draw_outlines(cr, L, o->outlines, o->n_outlines);
    if (st == EDDY_OK && a_nodes != NULL && o->n_flux_lines > 0)
        st = draw_flux_lines(cr, L, nx, ny, x, y, a_nodes, o->n_flux_lines, err);
    if (st == EDDY_OK) {
        draw_map_axes(cr, L, o);
        st = draw_colour_bar(cr, L, o, err);
    }
    if (st == EDDY_OK) {
        draw_title(cr, o->title, L->f_title, g->plot_x + g->plot_w / 2.0, 12.0 * L->s,
                   g->width, 12.0 * L->s);
        st = canvas_status(cr, err);
    }
    if (st == EDDY_OK) {
        char speed[64], software[160];
        const char *speed_p = NULL;
        if (isfinite(o->speed)) {
            snprintf(speed, sizeof speed, "%.9g", o->speed);
            speed_p = speed;
        }
        png_kv kv[] = {{"Title", o->title},
                       {"Software", software_text(software, sizeof software, o->version)},
                       {"eddy2d:case", o->case_name},
                       {"eddy2d:speed_m_per_s", speed_p},
                       {"eddy2d:quantity", o->quantity},
                       {"eddy2d:unit", o->unit_label}};
        st = write_surface_png(path, surf, kv, (int)(sizeof kv / sizeof kv[0]), err);
    }
    cairo_destroy(cr);
    cairo_surface_destroy(surf);
    free(L);
    return st;
}

/* ================================================================== */
/* Force-speed plot                                                    */
/* ================================================================== */

void post_plot_opts_defaults(post_plot_opts *o)
{
    if (o != NULL)
        memset(o, 0, sizeof *o);
}

eddy_status design_peak(int n, const double *speed, const double *drag, int log_speed,
                            double *v_peak, double *f_peak, int *refined, eddy_error *err)
{
    if (n < 1 || speed == NULL || drag == NULL)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "peak drag: no points");
    int imax = -1;
    for (int k = 0; k < n; k++) {
        if (!isfinite(speed[k]) || !isfinite(drag[k]))
            return EDDY_RAISE(err, EDDY_ERR_INPUT, "peak drag: point %d is not finite", k);
        if (log_speed && !(speed[k] > 0.0))
            return EDDY_RAISE(err, EDDY_ERR_INPUT, "peak drag: speed %g <= 0 on a log axis",
                              speed[k]);
        if (imax < 0 || fabs(drag[k]) > fabs(drag[imax]))
            imax = k;
    }
    /* work on |drag| so either sign convention gives the extreme; the sign
     * of the largest sample is put back at the end */
    double sgn = drag[imax] < 0.0 ? -1.0 : 1.0;
    double vp = speed[imax], fp = fabs(drag[imax]);
    int ref = 0;
    /* neighbours in speed order: the next lower and next higher speed */
    int lo = -1, hi = -1;
    for (int k = 0; k < n; k++) {
        if (speed[k] < speed[imax] && (lo < 0 || speed[k] > speed[lo]))
            lo = k;
        if (speed[k] > speed[imax] && (hi < 0 || speed[k] < speed[hi]))
            hi = k;
    }
    if (lo >= 0 && hi >= 0) {
        /* The largest sample lies between two others.  A parabola through the
         * three (in log speed on a log axis, where a drag maximum is close to
         * symmetric) has its vertex nearer the true maximum than the sample
         * itself when it is concave; use it then. */
        double u1 = log_speed ? log10(speed[lo]) : speed[lo];
        double u2 = log_speed ? log10(vp) : vp;
        double u3 = log_speed ? log10(speed[hi]) : speed[hi];
        double f1 = fabs(drag[lo]), f2 = fp, f3 = fabs(drag[hi]);
        double d12 = (f2 - f1) / (u2 - u1), d23 = (f3 - f2) / (u3 - u2);
        double A = (d23 - d12) / (u3 - u1); /* second divided difference */
        if (A < 0.0 && isfinite(A)) {
            double B = d12 - A * (u1 + u2); /* f = A u^2 + B u + C */
            double us = -B / (2.0 * A);
            if (us > u1 && us < u3) {
                double fs = f2 + d12 * (us - u2) + A * (us - u1) * (us - u2);
                if (isfinite(fs) && fs >= fp) {
                    vp = log_speed ? pow(10.0, us) : us;
                    fp = fs;
                    ref = 1;
                }
            }
        }
    }
    if (v_peak != NULL)
        *v_peak = vp;
    if (f_peak != NULL)
        *f_peak = sgn * fp;
    if (refined != NULL)
        *refined = ref;
    return EDDY_OK;
}

#define PLOT_DEFAULT_W 1000
#define PLOT_DEFAULT_H 650

typedef struct {
    double px, py, pw, ph;    /* plot rectangle, px                 */
    double xlo, xhi, ylo, yhi; /* axis ranges (x in |v| if xlog)    */
    int xlog;
} plot_axes;

static double ax_X(const plot_axes *a, double v)
{
    double t = a->xlog ? (log10(v) - log10(a->xlo)) / (log10(a->xhi) - log10(a->xlo))
                       : (v - a->xlo) / (a->xhi - a->xlo);
    return a->px + t * a->pw;
}

static double ax_Y(const plot_axes *a, double v)
{
    return a->py + a->ph - (v - a->ylo) / (a->yhi - a->ylo) * a->ph;
}

/* Ticks at alo, alo + d, ... up to ahi. */
static void ticks_every(double alo, double ahi, double d, ticks_t *t)
{
    t->n = 0;
    t->step = d;
    t->decimals = step_decimals(d);
    for (int k = 0; t->n < MAX_TICKS; k++) {
        double v = alo + k * d;
        if (v > ahi + 1e-9 * d)
            break;
        t->v[t->n++] = fabs(v) < 1e-9 * d ? 0.0 : v;
    }
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
static void loose_axis(double lo, double hi, int target, double *alo, double *ahi, ticks_t *t)
{
    widen_empty(&lo, &hi);
    make_ticks(lo, hi, target, t);
    double d = t->step;
    *alo = floor(lo / d + 1e-9) * d;
    *ahi = ceil(hi / d - 1e-9) * d;
    make_ticks(*alo, *ahi, target, t);
    if (t->step != d) /* keep the same step on the extended range */
        ticks_every(*alo, *ahi, d, t);
}

/* A loose axis with the most ticks (10 at most) whose horizontal labels,
 * in the current font, fit along len px with gap px between them. */
static void fit_loose_axis(cairo_t *cr, double lo, double hi, double len, double gap,
                           double *alo, double *ahi, ticks_t *t)
{
    for (int target = 10; target >= 2; target--) {
        loose_axis(lo, hi, target, alo, ahi, t);
        if (t->n < 2 || t->step / (*ahi - *alo) * len >= ticks_label_width(cr, t) + gap)
            return;
    }
}

/* An axis over [lo, hi] cut into exactly nint steps of 1, 2, 2.5 or 5 times
 * a power of ten, so that its ticks fall on the grid lines of another axis
 * with nint steps.  The smallest such step that covers the range is taken;
 * whole steps left over are split between the ends, except that an axis of
 * values >= 0 does not go below zero. */
static void aligned_axis(double lo, double hi, int nint, double *alo, double *ahi, ticks_t *t)
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
    ticks_every(*alo, *ahi, d, t);
}

/* Log-axis ticks: majors at decades, minors at 2..9; labelled marks. */
typedef struct {
    int n;
    double v[160];
    int major[160]; /* 1: labelled */
} logticks_t;

static void make_log_ticks(double lo, double hi, logticks_t *t)
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

static const double col_drag[3] = {0.0, 0.447, 0.698};     /* Okabe-Ito blue       */
static const double col_normal[3] = {0.835, 0.369, 0.0};   /* Okabe-Ito vermillion */
static const double col_slope[3] = {0.25, 0.25, 0.25};

static void draw_marker(cairo_t *cr, double X, double Y, int square, double r)
{
    if (square)
        cairo_rectangle(cr, X - r, Y - r, 2.0 * r, 2.0 * r);
    else {
        cairo_new_sub_path(cr);
        cairo_arc(cr, X, Y, r, 0.0, 2.0 * EDDY_PI);
    }
}

/* Polyline of (xs[k], ys[k]) in the order order[] (NULL: as given), plus
 * optional markers. */
static void draw_series(cairo_t *cr, const plot_axes *ax, int n, const double *xs,
                        const double *ys, const int *order, const double col[3], double lw,
                        double alpha, int marker, double mr)
{
    cairo_set_source_rgba(cr, col[0], col[1], col[2], alpha);
    for (int k = 0; k < n; k++) {
        int i = order != NULL ? order[k] : k;
        if (k == 0)
            cairo_move_to(cr, ax_X(ax, xs[i]), ax_Y(ax, ys[i]));
        else
            cairo_line_to(cr, ax_X(ax, xs[i]), ax_Y(ax, ys[i]));
    }
    cairo_set_line_width(cr, lw);
    cairo_set_line_join(cr, CAIRO_LINE_JOIN_ROUND);
    cairo_stroke(cr);
    if (marker) {
        for (int k = 0; k < n; k++)
            draw_marker(cr, ax_X(ax, xs[k]), ax_Y(ax, ys[k]), marker == 2, mr);
        cairo_fill_preserve(cr);
        cairo_set_source_rgb(cr, 1.0, 1.0, 1.0);
        cairo_set_line_width(cr, 0.8 * lw / 1.8);
        cairo_stroke(cr);
    }
}

typedef struct {
    const char *label;
    const double *col;
    int marker;   /* 0 none, 1 circle, 2 square */
    double lw;
    double alpha;
    int dashed;
    int rank;     /* order in the legend */
} legend_entry;

/* A non-finite value of series `what` (NULL: not given) is an error `code`
 * of the plot called `plot`. */
static eddy_status check_series(const char *plot, const char *what, int n, const double *v,
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
/* Pieces shared by the line plots                                     */
/* ------------------------------------------------------------------ */

/* Picture size from the options (0: the default), checked. */
static eddy_status plot_size(const char *plot, int w, int h, int *W, int *H, eddy_error *err)
{
    *W = w == 0 ? PLOT_DEFAULT_W : w;
    *H = h == 0 ? PLOT_DEFAULT_H : h;
    if (*W < IMG_MIN_PX || *W > IMG_MAX_PX || *H < IMG_MIN_PX || *H > IMG_MAX_PX)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: size %dx%d px outside %d..%d", plot, *W, *H,
                          IMG_MIN_PX, IMG_MAX_PX);
    return EDDY_OK;
}

/* Sizes in a line plot of W x H px (all in px). */
typedef struct {
    double s;                              /* scale against 1000 x 650 px      */
    double f_tick, f_label, f_title, f_leg; /* font sizes                      */
    double pad, ticklen, label_h;
    double bottom;                         /* plot rectangle to the lower edge */
} plot_style;

static void plot_style_init(int W, int H, plot_style *ps)
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

/* Width of a side margin holding a value axis: axis title, tick labels of
 * width label_w, tick marks. */
static double value_margin(const plot_style *ps, double label_w)
{
    return ps->pad + ps->label_h + 8.0 * ps->s + label_w + 5.0 * ps->s + ps->ticklen;
}

/* A loose value axis over [lo, hi] with ticks about 45 px apart (10 at most). */
static void value_axis(double lo, double hi, const plot_axes *ax, const plot_style *ps,
                       double *alo, double *ahi, ticks_t *t)
{
    int target = (int)(ax->ph / (45.0 * ps->s));
    if (target > 10)
        target = 10;
    loose_axis(lo, hi, target, alo, ahi, t);
}

/* Light grid lines at xv[nxv] and at the value ticks, and a darker line at
 * zero when the value range holds it. */
static void draw_grid(cairo_t *cr, const plot_axes *ax, const plot_style *ps, int nxv,
                      const double *xv, const ticks_t *yt)
{
    cairo_set_line_width(cr, fmax(1.0, ps->s));
    cairo_set_source_rgb(cr, 0.9, 0.9, 0.9);
    for (int k = 0; k < yt->n; k++) {
        double Y = round(ax_Y(ax, yt->v[k])) + 0.5;
        cairo_move_to(cr, ax->px, Y);
        cairo_line_to(cr, ax->px + ax->pw, Y);
    }
    for (int k = 0; k < nxv; k++) {
        double X = round(ax_X(ax, xv[k])) + 0.5;
        cairo_move_to(cr, X, ax->py);
        cairo_line_to(cr, X, ax->py + ax->ph);
    }
    cairo_stroke(cr);
    if (ax->ylo < 0.0 && ax->yhi > 0.0) {
        double Y = round(ax_Y(ax, 0.0)) + 0.5;
        cairo_set_source_rgb(cr, 0.55, 0.55, 0.55);
        cairo_move_to(cr, ax->px, Y);
        cairo_line_to(cr, ax->px + ax->pw, Y);
        cairo_stroke(cr);
    }
}

/* Tick marks and labels of a value axis on the left (right == 0) or the
 * right side of the frame (line width lw); ax gives that axis's range. */
static void draw_value_ticks(cairo_t *cr, const plot_axes *ax, const ticks_t *t, int right,
                             const plot_style *ps, double lw)
{
    double edge = right ? ax->px + ax->pw + lw : ax->px - lw, dir = right ? 1.0 : -1.0;
    cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
    for (int k = 0; k < t->n; k++) {
        double Y = ax_Y(ax, t->v[k]);
        cairo_move_to(cr, edge, Y);
        cairo_line_to(cr, edge + dir * ps->ticklen, Y);
    }
    cairo_set_line_width(cr, lw);
    cairo_stroke(cr);
    set_font(cr, ps->f_tick, 0);
    char buf[64];
    for (int k = 0; k < t->n; k++) {
        fmt_tick(buf, sizeof buf, t->v[k], t->decimals);
        draw_text(cr, edge + dir * (ps->ticklen + 5.0 * ps->s), ax_Y(ax, t->v[k]), buf,
                  right ? 0.0 : 1.0, 0.5);
    }
}

/* Tick marks and labels of a linear x axis below the frame. */
static void draw_x_ticks(cairo_t *cr, const plot_axes *ax, const ticks_t *t, const plot_style *ps,
                         double lw)
{
    double bot = ax->py + ax->ph + lw;
    cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
    for (int k = 0; k < t->n; k++) {
        cairo_move_to(cr, ax_X(ax, t->v[k]), bot);
        cairo_line_to(cr, ax_X(ax, t->v[k]), bot + ps->ticklen);
    }
    cairo_set_line_width(cr, lw);
    cairo_stroke(cr);
    set_font(cr, ps->f_tick, 0);
    char buf[64];
    for (int k = 0; k < t->n; k++) {
        fmt_tick(buf, sizeof buf, t->v[k], t->decimals);
        draw_text(cr, ax_X(ax, t->v[k]), bot + ps->ticklen + 5.0 * ps->s, buf, 0.5, 0.0);
    }
}

/* Axis titles in the current colour ("_" and "^" mark sub- and
 * superscripts).  The x title goes below the tick labels; a value-axis
 * title reads upwards with its baseline at x = base_x, centred on the plot. */
static void draw_x_title(cairo_t *cr, const plot_axes *ax, const plot_style *ps, double lw,
                         const char *label)
{
    if (label == NULL)
        return;
    set_font(cr, ps->f_label, 0);
    draw_rich(cr, ax->px + ax->pw / 2.0,
              ax->py + ax->ph + lw + ps->ticklen + 5.0 * ps->s + 1.4 * ps->f_tick + 10.0 * ps->s,
              label, ps->f_label, 0.5, 0.0, 0.0);
}

static void draw_value_title(cairo_t *cr, const plot_axes *ax, const plot_style *ps, double base_x,
                             const char *label)
{
    if (label == NULL)
        return;
    set_font(cr, ps->f_label, 0);
    draw_rich(cr, base_x, ax->py + ax->ph / 2.0, label, ps->f_label, 0.5, 1.0, -EDDY_PI / 2.0);
}

/* A drawn curve, for keeping the legend off it. */
typedef struct {
    const plot_axes *ax; /* the axes it is drawn on */
    int n;
    const double *x, *y;
    const int *order;    /* drawing order; NULL: as given */
} plot_curve;

/* Points of the curves inside box (x, y, w, h) grown by margin px: the
 * vertices and points every 4 px along the segments between them. */
static long curve_hits(const plot_curve *c, int nc, const double box[4], double margin)
{
    double x0 = box[0] - margin, x1 = box[0] + box[2] + margin;
    double y0 = box[1] - margin, y1 = box[1] + box[3] + margin;
    long hits = 0;
    for (int q = 0; q < nc; q++) {
        double PX = 0.0, PY = 0.0;
        for (int k = 0; k < c[q].n; k++) {
            int i = c[q].order != NULL ? c[q].order[k] : k;
            double X = ax_X(c[q].ax, c[q].x[i]), Y = ax_Y(c[q].ax, c[q].y[i]);
            int steps = 1;
            if (k > 0) {
                double len = hypot(X - PX, Y - PY);
                steps = len < 4.0e4 ? (int)ceil(len / 4.0) : 10000;
                if (steps < 1)
                    steps = 1;
            }
            for (int m = k > 0 ? 1 : steps; m <= steps; m++) {
                double t = (double)m / steps;
                double SX = PX + t * (X - PX), SY = PY + t * (Y - PY);
                hits += SX > x0 && SX < x1 && SY > y0 && SY < y1;
            }
            PX = X;
            PY = Y;
        }
    }
    return hits;
}

/* The legend, in the inner corner of the plot over the fewest curve points
 * that does not cover the box avoid (x, y, w, h; NULL: none), preferring
 * top left, top right, bottom right, bottom left on a tie.  Entries are
 * listed by rank (leg is reordered); "_" and "^" in labels mark sub- and
 * superscripts. */
static void draw_legend(cairo_t *cr, const plot_axes *ax, const plot_style *ps,
                        legend_entry *leg, int nleg, const plot_curve *curves, int ncurves,
                        const double *avoid)
{
    if (nleg < 1)
        return;
    double s = ps->s, f = ps->f_leg;
    set_font(cr, f, 0);
    double lwid = 0.0, row_h = 1.6 * f, sw = 30.0 * s;
    for (int k = 0; k < nleg; k++) {
        rich_t r;
        rich_parse(leg[k].label, &r);
        lwid = fmax(lwid, rich_width(cr, &r, f));
    }
    double bw = 10.0 * s + sw + 8.0 * s + lwid + 10.0 * s, bh = nleg * row_h + 10.0 * s;
    double inset = 10.0 * s, best_bx = 0.0, best_by = 0.0;
    long best = -1;
    for (int corner = 0; corner < 4; corner++) {
        double box[4] = {(corner == 0 || corner == 3) ? ax->px + inset : ax->px + ax->pw - inset - bw,
                         corner < 2 ? ax->py + inset : ax->py + ax->ph - inset - bh, bw, bh};
        long hits = curve_hits(curves, ncurves, box, 6.0 * s);
        if (avoid != NULL && avoid[0] < box[0] + bw && avoid[0] + avoid[2] > box[0] &&
            avoid[1] < box[1] + bh && avoid[1] + avoid[3] > box[1])
            hits += 1000000;
        if (best < 0 || hits < best) {
            best = hits;
            best_bx = box[0];
            best_by = box[1];
        }
    }
    cairo_set_source_rgba(cr, 1.0, 1.0, 1.0, 0.9);
    cairo_rectangle(cr, best_bx, best_by, bw, bh);
    cairo_fill_preserve(cr);
    cairo_set_source_rgb(cr, 0.6, 0.6, 0.6);
    cairo_set_line_width(cr, 1.0);
    cairo_stroke(cr);
    for (int k = 1; k < nleg; k++) { /* sort by rank */
        legend_entry e = leg[k];
        int m = k - 1;
        while (m >= 0 && leg[m].rank > e.rank) {
            leg[m + 1] = leg[m];
            m--;
        }
        leg[m + 1] = e;
    }
    for (int k = 0; k < nleg; k++) {
        const legend_entry *e = &leg[k];
        double cy = best_by + 5.0 * s + (k + 0.5) * row_h;
        double x0 = best_bx + 10.0 * s;
        cairo_set_source_rgba(cr, e->col[0], e->col[1], e->col[2], e->alpha);
        if (e->dashed) {
            double dash[2] = {7.0 * s, 5.0 * s};
            cairo_set_dash(cr, dash, 2, 0.0);
        }
        cairo_move_to(cr, x0, cy);
        cairo_line_to(cr, x0 + sw, cy);
        cairo_set_line_width(cr, e->lw);
        cairo_stroke(cr);
        cairo_set_dash(cr, NULL, 0, 0.0);
        if (e->marker) {
            draw_marker(cr, x0 + sw / 2.0, cy, e->marker == 2, e->marker == 2 ? 3.6 * s : 4.2 * s);
            cairo_fill(cr);
        }
        cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
        draw_rich(cr, x0 + sw + 8.0 * s, cy, e->label, f, 0.0, 0.5, 0.0);
    }
}

eddy_status post_plot_forces_png(const char *path, int n, const double *speed,
                                 const double *drag, const double *normal,
                                 double low_speed_slope, int ref_n, const double *ref_speed,
                                 const double *ref_drag, const double *ref_normal,
                                 const post_plot_opts *o, eddy_error *err)
{
    static const char *plot = "force plot";
    post_plot_opts def;
    post_plot_opts_defaults(&def);
    if (o == NULL)
        o = &def;
    if (path == NULL || speed == NULL || drag == NULL || n < 1)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "force plot: no points to plot");
    if (ref_n < 0 || (ref_n > 0 && ref_speed == NULL))
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "force plot: %d reference points without speeds",
                          ref_n);
    if (ref_n > 0 && ref_drag == NULL && ref_normal == NULL)
        ref_n = 0;
    int W, H;
    eddy_status st = plot_size(plot, o->width_px, o->height_px, &W, &H, err);
    if (st == EDDY_OK)
        st = check_series(plot, "speed", n, speed, EDDY_ERR_NUMERIC, err);
    if (st == EDDY_OK)
        st = check_series(plot, "drag", n, drag, EDDY_ERR_NUMERIC, err);
    if (st == EDDY_OK)
        st = check_series(plot, "normal", n, normal, EDDY_ERR_NUMERIC, err);
    if (st == EDDY_OK && ref_n > 0)
        st = check_series(plot, "ref_speed", ref_n, ref_speed, EDDY_ERR_NUMERIC, err);
    if (st == EDDY_OK && ref_n > 0)
        st = check_series(plot, "ref_drag", ref_n, ref_drag, EDDY_ERR_NUMERIC, err);
    if (st == EDDY_OK && ref_n > 0)
        st = check_series(plot, "ref_normal", ref_n, ref_normal, EDDY_ERR_NUMERIC, err);
    if (st != EDDY_OK)
        return st;
    if (isinf(low_speed_slope))
        return EDDY_RAISE(err, EDDY_ERR_NUMERIC, "force plot: low-speed slope is infinite");

    /* --- speed axis: logarithmic over |v| when it spans more than a decade --- */
    int nall = n + ref_n;
    double amin = INFINITY, amax = 0.0, smin = INFINITY, smax = -INFINITY;
    int npos = 0, nneg = 0;
    for (int k = 0; k < nall; k++) {
        double v = k < n ? speed[k] : ref_speed[k - n];
        amin = fmin(amin, fabs(v));
        amax = fmax(amax, fabs(v));
        smin = fmin(smin, v);
        smax = fmax(smax, v);
        npos += v > 0.0;
        nneg += v < 0.0;
    }
    plot_axes ax;
    memset(&ax, 0, sizeof ax);
    ax.xlog = amin > 0.0 && (npos == nall || nneg == nall) && amax / amin > 10.0;

    size_t nbuf = (size_t)nall;
    double *xs = malloc(nbuf * sizeof *xs);
    int *order = malloc(nbuf * sizeof *order);
    if (xs == NULL || order == NULL) {
        free(xs);
        free(order);
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "force plot: out of memory");
    }
    for (int k = 0; k < nall; k++) {
        double v = k < n ? speed[k] : ref_speed[k - n];
        xs[k] = ax.xlog ? fabs(v) : v;
    }
    double *rxs = xs + n;
    int *rorder = order + n;
    sort_by(xs, n, order);
    if (ref_n > 0)
        sort_by(rxs, ref_n, rorder);

    double vpk, fpk;
    int refined;
    st = design_peak(n, xs, drag, ax.xlog, &vpk, &fpk, &refined, err);
    if (st != EDDY_OK) {
        free(xs);
        free(order);
        return st;
    }

    plot_style ps;
    plot_style_init(W, H, &ps);
    double s = ps.s;

    /* --- force range: 0, all forces, headroom for the peak label --- */
    double ylo = 0.0, yhi = 0.0;
    for (int k = 0; k < n; k++) {
        ylo = fmin(ylo, drag[k]);
        yhi = fmax(yhi, drag[k]);
        if (normal != NULL) {
            ylo = fmin(ylo, normal[k]);
            yhi = fmax(yhi, normal[k]);
        }
    }
    for (int k = 0; k < ref_n; k++) {
        if (ref_drag != NULL) {
            ylo = fmin(ylo, ref_drag[k]);
            yhi = fmax(yhi, ref_drag[k]);
        }
        if (ref_normal != NULL) {
            ylo = fmin(ylo, ref_normal[k]);
            yhi = fmax(yhi, ref_normal[k]);
        }
    }
    yhi = fmax(yhi, fpk);
    ylo = fmin(ylo, fpk);
    if (!(yhi > ylo))
        yhi = ylo + 1.0;
    yhi += 0.12 * (yhi - ylo);

    const char *title = o->title != NULL ? o->title : "Forces vs speed";
    double top = ps.pad + 1.6 * ps.f_title + 0.6 * ps.f_tick;
    double right = ps.pad + 20.0 * s;
    ax.py = ceil(top);
    ax.ph = floor(H - top - ps.bottom);

    cairo_surface_t *surf = NULL;
    cairo_t *cr = NULL;
    st = new_canvas(W, H, &surf, &cr, err);
    if (st != EDDY_OK) {
        free(xs);
        free(order);
        return st;
    }
    set_font(cr, ps.f_tick, 0);
    ticks_t yt, xt;
    value_axis(ylo, yhi, &ax, &ps, &ax.ylo, &ax.yhi, &yt);
    double left = value_margin(&ps, ticks_label_width(cr, &yt));
    ax.px = ceil(left);
    ax.pw = floor(W - left - right);

    logticks_t lt;
    lt.n = 0;
    xt.n = 0;
    if (ax.xlog) {
        double span = log10(amax) - log10(amin), padl = fmax(0.04 * span, 0.03);
        ax.xlo = amin / pow(10.0, padl);
        ax.xhi = amax * pow(10.0, padl);
        make_log_ticks(ax.xlo, ax.xhi, &lt);
    } else {
        double lo = fmin(0.0, smin), hi = fmax(0.0, smax);
        /* keep end markers off the frame */
        if (smax > 0.0)
            hi += 0.03 * (hi - lo);
        if (smin < 0.0)
            lo -= 0.03 * (hi - lo);
        fit_loose_axis(cr, lo, hi, ax.pw, 20.0 * s, &ax.xlo, &ax.xhi, &xt);
    }

    draw_grid(cr, &ax, &ps, ax.xlog ? lt.n : xt.n, ax.xlog ? lt.v : xt.v, &yt);

    cairo_save(cr);
    cairo_rectangle(cr, ax.px, ax.py, ax.pw, ax.ph);
    cairo_clip(cr);
    /* --- low-speed slope: drag = k v, sampled so it is straight or curved as the axis needs --- */
    legend_entry leg[6];
    int nleg = 0;
    char slope_label[128];
    if (isfinite(low_speed_slope)) {
        double dash[2] = {7.0 * s, 5.0 * s};
        cairo_set_dash(cr, dash, 2, 0.0);
        cairo_set_source_rgb(cr, col_slope[0], col_slope[1], col_slope[2]);
        for (int k = 0; k <= 200; k++) {
            double t = k / 200.0;
            double v = ax.xlog ? ax.xlo * pow(ax.xhi / ax.xlo, t) : ax.xlo + t * (ax.xhi - ax.xlo);
            double v_signed = (ax.xlog && nneg == nall) ? -v : v;
            double f = low_speed_slope * v_signed;
            double Y = ax_Y(&ax, f);
            if (Y < -10.0 * H)
                Y = -10.0 * H;
            if (Y > 10.0 * H)
                Y = 10.0 * H;
            if (k == 0)
                cairo_move_to(cr, ax_X(&ax, v), Y);
            else
                cairo_line_to(cr, ax_X(&ax, v), Y);
        }
        cairo_set_line_width(cr, 1.5 * s);
        cairo_stroke(cr);
        cairo_set_dash(cr, NULL, 0, 0.0);
        char num[48];
        fmt_sig3(num, sizeof num, low_speed_slope);
        snprintf(slope_label, sizeof slope_label, "low-speed slope %s N/m per m/s", num);
        leg[nleg++] = (legend_entry){slope_label, col_slope, 0, 1.5 * s, 1.0, 1, 4};
    }
    /* --- reference curves, thin and pale --- */
    if (ref_n > 0 && ref_drag != NULL) {
        draw_series(cr, &ax, ref_n, rxs, ref_drag, rorder, col_drag, 1.4 * s, 0.55, 0, 0.0);
        leg[nleg++] = (legend_entry){"drag, reference", col_drag, 0, 1.4 * s, 0.55, 0, 2};
    }
    if (ref_n > 0 && ref_normal != NULL) {
        draw_series(cr, &ax, ref_n, rxs, ref_normal, rorder, col_normal, 1.4 * s, 0.55, 0, 0.0);
        leg[nleg++] = (legend_entry){"normal force, reference", col_normal, 0, 1.4 * s,
                                     0.55, 0, 3};
    }
    /* --- computed points --- */
    if (normal != NULL) {
        draw_series(cr, &ax, n, xs, normal, order, col_normal, 1.8 * s, 1.0, 2, 3.6 * s);
        leg[nleg++] = (legend_entry){"normal force", col_normal, 2, 1.8 * s, 1.0, 0, 1};
    }
    draw_series(cr, &ax, n, xs, drag, order, col_drag, 1.8 * s, 1.0, 1, 4.2 * s);
    leg[nleg++] = (legend_entry){"drag", col_drag, 1, 1.8 * s, 1.0, 0, 0};
    cairo_restore(cr);

    /* --- peak drag annotation --- */
    double PX = ax_X(&ax, vpk), PY = ax_Y(&ax, fpk);
    char fnum[48], vnum[48], ann[160];
    fmt_sig3(fnum, sizeof fnum, fpk);
    fmt_sig3(vnum, sizeof vnum, (ax.xlog && nneg == nall) ? -vpk : vpk);
    snprintf(ann, sizeof ann, "peak drag %s%s N/m at %s m/s", refined ? "\xe2\x89\x88 " : "", fnum,
             vnum);
    cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
    cairo_new_sub_path(cr);
    cairo_arc(cr, PX, PY, 8.0 * s, 0.0, 2.0 * EDDY_PI);
    cairo_set_line_width(cr, 1.3 * s);
    cairo_stroke(cr);
    set_font(cr, ps.f_leg, 0);
    double aw = text_width(cr, ann), ah = CAP_FRAC * ps.f_leg;
    double boxpad = 4.0 * s;
    double axx = PX + 12.0 * s, ayy = PY - 14.0 * s - ah; /* top of text */
    if (axx + aw + boxpad > ax.px + ax.pw - 4.0 * s)
        axx = PX - 12.0 * s - aw;
    if (axx - boxpad < ax.px + 4.0 * s)
        axx = ax.px + 4.0 * s + boxpad;
    if (ayy - boxpad < ax.py + 4.0 * s)
        ayy = PY + 14.0 * s;
    double ann_box[4] = {axx - boxpad, ayy - boxpad, aw + 2.0 * boxpad, ah + 2.0 * boxpad};
    cairo_set_source_rgba(cr, 1.0, 1.0, 1.0, 0.85);
    cairo_rectangle(cr, ann_box[0], ann_box[1], ann_box[2], ann_box[3]);
    cairo_fill(cr);
    cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
    draw_text(cr, axx, ayy, ann, 0.0, 0.0);

    /* --- axes frame, ticks, labels --- */
    double lw = fmax(1.0, round(s));
    cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
    frame_outside(cr, ax.px, ax.py, ax.pw, ax.ph, lw);
    draw_value_ticks(cr, &ax, &yt, 0, &ps, lw);
    if (ax.xlog) {
        double bot = ax.py + ax.ph + lw, ticklen = ps.ticklen, f_tick = ps.f_tick;
        char buf[96];
        double last_right = -INFINITY;
        for (int k = 0; k < lt.n; k++) {
            double X = ax_X(&ax, lt.v[k]);
            cairo_move_to(cr, X, bot);
            cairo_line_to(cr, X, bot + (lt.major[k] ? ticklen : 0.55 * ticklen));
            if (!lt.major[k])
                continue;
            fmt_log_label(buf, sizeof buf, lt.v[k]);
            rich_t r;
            rich_parse(buf, &r);
            double w = rich_width(cr, &r, f_tick);
            if (X - w / 2.0 < last_right + 8.0 * s)
                continue; /* would overlap its left neighbour */
            draw_rich(cr, X, bot + ticklen + 5.0 * s + (strchr(buf, '^') ? 0.3 * f_tick : 0.0),
                      buf, f_tick, 0.5, 0.0, 0.0);
            last_right = X + w / 2.0;
        }
        cairo_set_line_width(cr, lw);
        cairo_stroke(cr);
    } else {
        draw_x_ticks(cr, &ax, &xt, &ps, lw);
    }
    draw_x_title(cr, &ax, &ps, lw, ax.xlog && nneg == nall ? "|speed| (m/s)" : "speed (m/s)");
    draw_value_title(cr, &ax, &ps, ps.pad + CAP_FRAC * ps.f_label, "force per unit length (N/m)");

    /* --- legend in the corner with the fewest data points under it --- */
    plot_curve curves[4] = {{&ax, n, xs, drag, order},
                            {&ax, normal != NULL ? n : 0, xs, normal, order},
                            {&ax, ref_drag != NULL ? ref_n : 0, rxs, ref_drag, rorder},
                            {&ax, ref_normal != NULL ? ref_n : 0, rxs, ref_normal, rorder}};
    draw_legend(cr, &ax, &ps, leg, nleg, curves, 4, ann_box);

    draw_title(cr, title, ps.f_title, ax.px + ax.pw / 2.0, ps.pad, W, ps.pad);
    st = canvas_status(cr, err);
    if (st == EDDY_OK) {
        char software[160];
        png_kv kv[] = {{"Title", title},
                       {"Software", software_text(software, sizeof software, o->version)},
                       {"eddy2d:case", o->case_name},
                       {"eddy2d:quantity", normal != NULL ? "drag, normal force" : "drag"},
                       {"eddy2d:unit", "N/m"}};
        st = write_surface_png(path, surf, kv, (int)(sizeof kv / sizeof kv[0]), err);
    }
    cairo_destroy(cr);
    cairo_surface_destroy(surf);
    free(xs);
    free(order);
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

eddy_status post_plot_xy_png(const char *path, int n, const double *x, const double *y1,
                             const double *y2, const post_xy_opts *o, eddy_error *err)
{
    static const char *plot = "xy plot";
    post_xy_opts def;
    post_xy_opts_defaults(&def);
    if (o == NULL)
        o = &def;
    if (path == NULL || x == NULL || y1 == NULL)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "xy plot: NULL path or array");
    if (n < 2)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "xy plot: %d points, at least 2 needed", n);
    int W, H;
    eddy_status st = plot_size(plot, o->width_px, o->height_px, &W, &H, err);
    if (st == EDDY_OK)
        st = check_series(plot, "x", n, x, EDDY_ERR_INPUT, err);
    if (st == EDDY_OK)
        st = check_series(plot, "y1", n, y1, EDDY_ERR_INPUT, err);
    if (st == EDDY_OK)
        st = check_series(plot, "y2", n, y2, EDDY_ERR_INPUT, err);
    if (st != EDDY_OK)
        return st;
    double xmin, xmax, lo1, hi1, lo2 = 0.0, hi2 = 0.0;
    value_span(n, x, &xmin, &xmax);
    curve_range(n, y1, &lo1, &hi1);
    if (y2 != NULL)
        curve_range(n, y2, &lo2, &hi2);
    if (!isfinite(xmax - xmin) || !isfinite(hi1 - lo1) || !isfinite(hi2 - lo2))
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "xy plot: values span too wide a range");

    plot_style ps;
    plot_style_init(W, H, &ps);
    double s = ps.s, lw = fmax(1.0, round(s)), curve_lw = fmax(2.0 * s, 1.5);
    const char *title = o->title;
    int has_title = title != NULL && title[0] != '\0';
    double top = ps.pad + (has_title ? 1.6 * ps.f_title : 0.0) + 0.6 * ps.f_tick;
    plot_axes ax;
    memset(&ax, 0, sizeof ax);
    ax.py = ceil(top);
    ax.ph = floor(H - top - ps.bottom);

    cairo_surface_t *surf = NULL;
    cairo_t *cr = NULL;
    st = new_canvas(W, H, &surf, &cr, err);
    if (st != EDDY_OK)
        return st;
    /* --- value axes: y2's ticks fall on y1's grid lines --- */
    set_font(cr, ps.f_tick, 0);
    ticks_t yt, y2t, xt;
    value_axis(lo1, hi1, &ax, &ps, &ax.ylo, &ax.yhi, &yt);
    plot_axes ax2 = ax;
    y2t.n = 0;
    if (y2 != NULL)
        aligned_axis(lo2, hi2, yt.n - 1, &ax2.ylo, &ax2.yhi, &y2t);
    double left = value_margin(&ps, ticks_label_width(cr, &yt));
    double right = y2 != NULL ? value_margin(&ps, ticks_label_width(cr, &y2t)) : ps.pad + 20.0 * s;
    ax.px = ceil(left);
    ax.pw = floor(W - left - right);
    fit_loose_axis(cr, xmin, xmax, ax.pw, 20.0 * s, &ax.xlo, &ax.xhi, &xt);
    ax2.px = ax.px;
    ax2.pw = ax.pw;
    ax2.xlo = ax.xlo;
    ax2.xhi = ax.xhi;

    draw_grid(cr, &ax, &ps, xt.n, xt.v, &yt);

    /* --- curves: y1 over y2 --- */
    cairo_save(cr);
    cairo_rectangle(cr, ax.px, ax.py, ax.pw, ax.ph);
    cairo_clip(cr);
    if (y2 != NULL)
        draw_series(cr, &ax2, n, x, y2, NULL, col_normal, curve_lw, 1.0, 0, 0.0);
    draw_series(cr, &ax, n, x, y1, NULL, col_drag, curve_lw, 1.0, 0, 0.0);
    cairo_restore(cr);

    /* --- frame, ticks, axis titles (coloured as their curves when there are two) --- */
    cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
    frame_outside(cr, ax.px, ax.py, ax.pw, ax.ph, lw);
    draw_value_ticks(cr, &ax, &yt, 0, &ps, lw);
    if (y2 != NULL)
        draw_value_ticks(cr, &ax2, &y2t, 1, &ps, lw);
    draw_x_ticks(cr, &ax, &xt, &ps, lw);
    draw_x_title(cr, &ax, &ps, lw, o->x_label);
    if (y2 != NULL)
        cairo_set_source_rgb(cr, col_drag[0], col_drag[1], col_drag[2]);
    draw_value_title(cr, &ax, &ps, ps.pad + CAP_FRAC * ps.f_label, o->y1_label);
    if (y2 != NULL) {
        cairo_set_source_rgb(cr, col_normal[0], col_normal[1], col_normal[2]);
        draw_value_title(cr, &ax, &ps, W - ps.pad - 0.3 * ps.f_label, o->y2_label);
    }

    /* --- legend: both curves, or the one curve when it is named --- */
    legend_entry leg[2];
    int nleg = 0;
    if (y2 != NULL || o->y1_name != NULL) {
        const char *name = o->y1_name != NULL ? o->y1_name : o->y1_label;
        leg[nleg++] = (legend_entry){name != NULL ? name : "y1", col_drag, 0, curve_lw, 1.0, 0, 0};
    }
    if (y2 != NULL) {
        const char *name = o->y2_name != NULL ? o->y2_name : o->y2_label;
        leg[nleg++] = (legend_entry){name != NULL ? name : "y2", col_normal, 0, curve_lw, 1.0, 0,
                                     1};
    }
    plot_curve curves[2] = {{&ax, n, x, y1, NULL}, {&ax2, y2 != NULL ? n : 0, x, y2, NULL}};
    draw_legend(cr, &ax, &ps, leg, nleg, curves, 2, NULL);

    if (has_title)
        draw_title(cr, title, ps.f_title, ax.px + ax.pw / 2.0, ps.pad, W, ps.pad);
    st = canvas_status(cr, err);
    if (st == EDDY_OK) {
        char software[160];
        png_kv kv[] = {{"Title", title},
                       {"Software", software_text(software, sizeof software, o->version)},
                       {"eddy2d:case", o->case_name},
                       {"eddy2d:x", o->x_label},
                       {"eddy2d:y1", o->y1_label},
                       {"eddy2d:y2", y2 != NULL ? o->y2_label : NULL}};
        st = write_surface_png(path, surf, kv, (int)(sizeof kv / sizeof kv[0]), err);
    }
    cairo_destroy(cr);
    cairo_surface_destroy(surf);
    return st;
}
