/*
 * test_post_img.c - field maps and force-speed plots as PNG pictures.
 *
 * The pictures are written, decoded again with libpng and measured.
 * Reference values and their sources:
 *   - batlow: entries of the published 256-entry table (F. Crameri,
 *     Scientific colour maps, doi:10.5281/zenodo.1243862, MIT licence;
 *     Crameri, Shephard & Heron, Nature Communications 11, 5444, 2020),
 *     the 6-decimal values of the table as redistributed, times 255;
 *     tolerance BATLOW_TOL levels (rounding).
 *   - CIELAB L* and Delta E*ab: CIE 15:2004 "Colorimetry", section 8.2.1
 *     (L* = 116 f(Y/Yn) - 16, Delta E*ab the Euclidean distance in L*a*b*),
 *     D65 white; sRGB decoding: IEC 61966-2-1:1999.  Written out here, not
 *     taken from the project's code.
 *   - Design properties checked: a sequential map strictly monotone in L*
 *     with roughly even steps (Kovesi, "Good colour maps: how to design
 *     them", arXiv:1509.03700, 2015: uniform perceptual contrast); a
 *     diverging map whose two halves have the same L* (ibid.); series
 *     colours pairwise at least SERIES_DE_MIN apart (a common threshold for
 *     colours told apart at a glance; common practice, no source).
 *   - Geometry: the position of a hot spot, the aspect ratio of the map and
 *     the spacing of contour lines of a linear potential follow from the
 *     stated mapping world -> pixel (plain arithmetic, no project code).
 *   - The drag peak of a force plot is the caller's (post_plot_opts): its
 *     text chunks must read back as exactly the numbers given, the ring must
 *     be drawn around the sample named (a dark circle of 8 px radius on a
 *     1000 x 650 plot, found by looking along RING_DIRS rays), and without a
 *     peak there is neither ring nor chunk.  The peak rule itself
 *     (design_peak) is tested in tests/test_brake.c.
 *
 * Set EDDY_IMG_SAMPLES=/some/dir to keep the pictures there; otherwise they
 * go to a fresh temporary directory that is removed at the end.
 */
#define _POSIX_C_SOURCE 200809L
#include <png.h>

#include "app/app.h"
#include "tests/check.h"

#include <cairo.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#ifndef M_PI
#define M_PI 3.14159265358979323846
#endif

#define BATLOW_TOL 1     /* 8-bit levels */
#define STEP_RATIO_MAX 2.0 /* largest / smallest L* step of SEQ_STEPS equal steps */
#define SEQ_STEPS 16     /* steps of 1/16 in t: 8-bit rounding (up to 0.4 L*)
                            stays small against a step of about 4.7 L* */
#define DIV_SYM_TOL 1.0  /* |L*(t) - L*(1 - t)| */
#define DIV_CENTRE_L 96.0 /* L* of the neutral centre of the diverging map */
#define SERIES_DE_MIN 20.0 /* Delta E*ab between any two series colours */
#define POS_TOL_PX 1.5   /* hot-spot and contour positions */
#define MIRROR_TOL 0.008 /* |t(x) + t(-x) - 1| of decoded values: 2 table steps of
                            1/1023 plus 8-bit plateaus near the neutral centre */
#define NEUTRAL_TOL 2    /* levels from the grey of L* = DIV_CENTRE_L */
#define RING_DIRS 16     /* rays looked along for the peak ring */
#define RING_HITS 14     /* rays that must cross it */
#define RING_MISS 4      /* at most this many around an unmarked sample */
#define RING_DARK 150    /* 8-bit level: antialiased ring pixels measured <= 107;
                            grid lines are 229 */

static char out_dir[512];
static int keep_files;
static char written[32][600];
static int n_written;

static const char *out_path(const char *name)
{
    static char buf[8][600];
    static int slot;
    char *p = buf[slot++ & 7];
    snprintf(p, 600, "%s/%s", out_dir, name);
    if (n_written < 32)
        snprintf(written[n_written++], 600, "%s", p);
    return p;
}
#include "tests/pngread.h"

/* Decode a colour back to the normalised value of a colour map: nearest of
 * 1024 samples; *dist gets the largest channel difference. */
#define NS 1024
static unsigned char samples[2][NS][3];
static void init_samples(void)
{
    for (int m = 0; m < 2; m++)
        for (int k = 0; k < NS; k++)
            post_cmap_rgb(m, (double)k / (NS - 1), samples[m][k]);
}

static double decode_t(int diverging, const unsigned char *c, int *dist)
{
    int best = -1, bd = 1 << 30;
    for (int k = 0; k < NS; k++) {
        const unsigned char *s = samples[diverging][k];
        int d = abs(c[0] - s[0]) + abs(c[1] - s[1]) + abs(c[2] - s[2]);
        if (d < bd) {
            bd = d;
            best = k;
        }
    }
    if (dist != NULL) {
        const unsigned char *s = samples[diverging][best];
        int d = abs(c[0] - s[0]);
        d = abs(c[1] - s[1]) > d ? abs(c[1] - s[1]) : d;
        d = abs(c[2] - s[2]) > d ? abs(c[2] - s[2]) : d;
        *dist = d;
    }
    return (double)best / (NS - 1);
}

/* CIELAB (CIE 15:2004, D65 white) of an 8-bit sRGB colour (IEC 61966-2-1). */
static double lab_f(double t)
{
    const double d = 6.0 / 29.0;
    return t > d * d * d ? cbrt(t) : t / (3.0 * d * d) + 4.0 / 29.0;
}

static void srgb_to_lab(const unsigned char *c, double lab[3])
{
    double lin[3];
    for (int k = 0; k < 3; k++) {
        double v = c[k] / 255.0;
        lin[k] = v <= 0.04045 ? v / 12.92 : pow((v + 0.055) / 1.055, 2.4);
    }
    double X = 0.4124 * lin[0] + 0.3576 * lin[1] + 0.1805 * lin[2];
    double Y = 0.2126 * lin[0] + 0.7152 * lin[1] + 0.0722 * lin[2];
    double Z = 0.0193 * lin[0] + 0.1192 * lin[1] + 0.9505 * lin[2];
    double fx = lab_f(X / 0.95047), fy = lab_f(Y), fz = lab_f(Z / 1.08883);
    lab[0] = 116.0 * fy - 16.0;
    lab[1] = 500.0 * (fx - fy);
    lab[2] = 200.0 * (fy - fz);
}

static double lightness(const unsigned char *c)
{
    double lab[3];
    srgb_to_lab(c, lab);
    return lab[0];
}

/* The 8-bit grey of CIELAB lightness L (a* = b* = 0). */
static int grey_of_lightness(double L)
{
    double fy = (L + 16.0) / 116.0, Y = fy * fy * fy;
    double v = Y <= 0.0031308 ? 12.92 * Y : 1.055 * pow(Y, 1.0 / 2.4) - 0.055;
    return (int)lround(255.0 * v);
}

/* ------------------------------------------------------------------ */
/* Grids                                                               */
/* ------------------------------------------------------------------ */

/* n nodes on [-h, h], graded: dense at 0, coarse at the ends (sinh map). */
static void graded(double *v, int n, double h, double a)
{
    for (int k = 0; k < n; k++) {
        double u = -1.0 + 2.0 * k / (n - 1);
        v[k] = h * sinh(a * u) / sinh(a);
    }
}

/* n nodes on [lo, hi] with geometric growth ratio r. */
static void geometric(double *v, int n, double lo, double hi, double r)
{
    double sum = 0.0, d = 1.0;
    for (int k = 0; k + 1 < n; k++, d *= r)
        sum += d;
    v[0] = lo;
    d = (hi - lo) / sum;
    for (int k = 1; k < n; k++, d *= r)
        v[k] = v[k - 1] + d;
    v[n - 1] = hi;
}

/* ------------------------------------------------------------------ */
/* Tests                                                               */
/* ------------------------------------------------------------------ */

static void test_colour_maps(void)
{
    /* batlow: published entries k = 0, 51, 102, 153, 204, 255 (sRGB 0..1) */
    static const int bk[6] = {0, 51, 102, 153, 204, 255};
    int worst = 0, worst_k = 0;
    static const double bt[6][3] = {
        {0.003596, 0.099991, 0.350104}, {0.095262, 0.309199, 0.380605},
        {0.342093, 0.461377, 0.279322}, {0.699086, 0.554570, 0.196174},
        {0.986442, 0.654414, 0.554015}, {0.981508, 0.800145, 0.980512}};
    for (int k = 0; k < 6; k++) {
        unsigned char c[3];
        post_cmap_rgb(0, bk[k] / 255.0, c);
        for (int q = 0; q < 3; q++) {
            int d = abs(c[q] - (int)lround(255.0 * bt[k][q]));
            if (d > worst) {
                worst = d;
                worst_k = bk[k];
            }
        }
    }
    check(worst <= BATLOW_TOL, "cmap_batlow_published_entries",
          "6 entries, largest difference %d levels at entry %d (tol %d)", worst, worst_k,
          BATLOW_TOL);

    /* sequential map: L* strictly increasing over steps of 1/64 (each about
     * 1.2 L*, the 8-bit output rounds by up to 0.4), and the steps of
     * SEQ_STEPS equal t steps even */
    double prev = -1.0, dmin = INFINITY, dmax = 0.0, L0 = 0.0, L1 = 0.0;
    int mono = 1;
    for (int k = 0; k <= 64; k++) {
        unsigned char c[3];
        post_cmap_rgb(0, k / 64.0, c);
        double L = lightness(c);
        mono = mono && L > prev;
        prev = L;
    }
    int mono256 = mono;
    prev = -1.0;
    for (int k = 0; k <= SEQ_STEPS; k++) {
        unsigned char c[3];
        post_cmap_rgb(0, (double)k / SEQ_STEPS, c);
        double L = lightness(c);
        if (k > 0) {
            mono = mono && L > prev;
            dmin = fmin(dmin, L - prev);
            dmax = fmax(dmax, L - prev);
        } else {
            L0 = L;
        }
        L1 = L;
        prev = L;
    }
    check(mono256 && mono && dmax / dmin <= STEP_RATIO_MAX,
          "cmap_sequential_lightness_monotone_even",
          "L* strictly increasing in steps of 1/64: %d; L* %.2f -> %.2f in %d steps of "
          "%.3f..%.3f, max/min step %.2f (tol %.1f)",
          mono256, L0, L1, SEQ_STEPS, dmin, dmax, dmax / dmin, STEP_RATIO_MAX);

    /* diverging map: the halves equal in L*, L* rising to the centre */
    double worst_sym = 0.0, dmin_half = INFINITY, dmax_half = 0.0;
    int rising = 1;
    prev = -1.0;
    for (int k = 0; k <= 64; k++) {
        unsigned char a[3], b[3];
        post_cmap_rgb(1, k / 128.0, a);
        post_cmap_rgb(1, 1.0 - k / 128.0, b);
        double La = lightness(a), Lb = lightness(b);
        worst_sym = fmax(worst_sym, fabs(La - Lb));
        if (k > 0) {
            rising = rising && La > prev;
            dmin_half = fmin(dmin_half, La - prev);
            dmax_half = fmax(dmax_half, La - prev);
        }
        prev = La;
    }
    check(worst_sym <= DIV_SYM_TOL, "cmap_diverging_lightness_symmetric",
          "max |L*(t) - L*(1-t)| = %.3f over 65 pairs (tol %.1f)", worst_sym, DIV_SYM_TOL);
    check(rising && dmax_half / dmin_half <= STEP_RATIO_MAX, "cmap_diverging_halves_monotone",
          "L* rises to the centre in 64 steps of %.3f..%.3f, max/min %.2f, centre L* %.2f", dmin_half,
          dmax_half, dmax_half / dmin_half, prev);

    /* series colours: pairwise Delta E*ab */
    double demin = INFINITY;
    int di = 0, dj = 0;
    for (int i = 0; i < POST_SERIES_N; i++)
        for (int j = i + 1; j < POST_SERIES_N; j++) {
            unsigned char ci[3], cj[3];
            double li[3], lj[3];
            post_series_rgb(i, POST_SERIES_N, ci);
            post_series_rgb(j, POST_SERIES_N, cj);
            srgb_to_lab(ci, li);
            srgb_to_lab(cj, lj);
            double de = sqrt((li[0] - lj[0]) * (li[0] - lj[0]) + (li[1] - lj[1]) * (li[1] - lj[1]) +
                             (li[2] - lj[2]) * (li[2] - lj[2]));
            if (de < demin) {
                demin = de;
                di = i;
                dj = j;
            }
        }
    check(demin >= SERIES_DE_MIN, "series_colours_delta_e",
          "%d colours, smallest Delta E*ab %.1f between %d and %d (threshold %.0f)", POST_SERIES_N,
          demin, di, dj, SERIES_DE_MIN);
    /* more series than the palette: a ramp whose lightness follows the order */
    int ramp_ok = 1;
    prev = -1.0;
    for (int k = 0; k < 12; k++) {
        unsigned char c[3];
        post_series_rgb(k, 12, c);
        ramp_ok = ramp_ok && lightness(c) > prev;
        prev = lightness(c);
    }
    check(ramp_ok, "series_ramp_beyond_palette_ordered", "12 series, last L* %.1f", prev);

    unsigned char lo[3], hi[3], nanc[3];
    post_cmap_rgb(0, -5.0, lo);
    post_cmap_rgb(0, 7.0, hi);
    post_cmap_rgb(1, NAN, nanc);
    int grey = grey_of_lightness(DIV_CENTRE_L);
    check(lo[2] == lround(255.0 * bt[0][2]) && hi[0] == lround(255.0 * bt[5][0]) &&
              abs(nanc[0] - grey) <= 1 && abs(nanc[2] - grey) <= 1,
          "cmap_clamps_out_of_range", "t=-5 -> %d, t=7 -> %d, NaN -> %d,%d,%d (grey %d)", lo[2],
          hi[0], nanc[0], nanc[1], nanc[2], grey);
}

/* A Gaussian hot spot on a graded grid, batlow: size, aspect, position,
 * orientation, colour bar, text chunks. */
static void test_hot_spot(void)
{
    enum { NX = 61, NY = 41 };
    double x[NX], y[NY], f[NX * NY];
    graded(x, NX, 0.10, 2.5);      /* -100..100 mm, dense at the middle */
    geometric(y, NY, -0.03, 0.05, 1.06); /* -30..50 mm, dense at the bottom */
    const double xc = 0.021, yc = 0.013, sig = 0.006; /* right of and above the centre */
    /* a bilinear interpolant peaks at a node: put node lines through the
     * spot centre (moving the nearest nodes keeps the grids increasing) */
    int in = 0, jn = 0;
    for (int i = 0; i < NX; i++)
        if (fabs(x[i] - xc) < fabs(x[in] - xc))
            in = i;
    for (int j = 0; j < NY; j++)
        if (fabs(y[j] - yc) < fabs(y[jn] - yc))
            jn = j;
    x[in] = xc;
    y[jn] = yc;
    for (int j = 0; j < NY; j++)
        for (int i = 0; i < NX; i++) {
            double r2 = (x[i] - xc) * (x[i] - xc) + (y[j] - yc) * (y[j] - yc);
            f[i + NX * j] = 0.8 * exp(-r2 / (2 * sig * sig));
        }
    post_map_opts o;
    post_map_opts_defaults(&o);
    o.title = "hot spot \xe2\x80\x93 12.5 m/s"; /* en dash: UTF-8 title */
    o.quantity = "|B|";
    o.unit_label = "T";
    o.case_name = "hot-spot test";
    o.speed = 12.5;
    o.version = "0.1-test";
    o.view[0] = -0.06;
    o.view[1] = -0.02;
    o.view[2] = 0.06;
    o.view[3] = 0.04;
    const char *path = out_path("hot_spot.png");
    eddy_error err = {0};
    post_map_geom g;
    eddy_status st = post_map_geometry(NX, NY, x, y, f, NULL, &o, &g, &err);
    check(st == EDDY_OK, "map_geometry_ok", "%s", err.msg);
    st = post_map_png(path, NX, NY, x, y, f, NULL, NULL, &o, &err);
    check(st == EDDY_OK, "map_png_written", "%s", err.msg);
    image im;
    if (read_png(path, &im) != 0) {
        check(0, "map_png_decodes", "cannot decode %s", path);
        return;
    }
    check(im.w == 1200 && im.w == g.width && im.h == g.height, "map_default_size",
          "%dx%d, geometry %dx%d", im.w, im.h, g.width, g.height);
    check(im.color_type == PNG_COLOR_TYPE_RGB && im.bit_depth == 8, "map_rgb8",
          "colour type %d depth %d", im.color_type, im.bit_depth);
    double aspect = (o.view[3] - o.view[1]) / (o.view[2] - o.view[0]);
    check(abs(g.plot_h - (int)lround(g.plot_w * aspect)) <= 1, "map_plot_true_aspect",
          "plot %dx%d, view aspect %.4f", g.plot_w, g.plot_h, aspect);

    /* measure the map rectangle on the picture itself: the run of pixels
     * that decode as batlow colours through the middle row and column */
    int midr = g.plot_y + g.plot_h / 2, midc = g.plot_x + g.plot_w / 2, d;
    int c0 = midc, c1 = midc, r0 = midr, r1 = midr;
    while (c0 > 0 && (decode_t(0, px(&im, c0 - 1, midr), &d), d <= 2))
        c0--;
    while (c1 < im.w - 1 && (decode_t(0, px(&im, c1 + 1, midr), &d), d <= 2))
        c1++;
    while (r0 > 0 && (decode_t(0, px(&im, midc, r0 - 1), &d), d <= 2))
        r0--;
    while (r1 < im.h - 1 && (decode_t(0, px(&im, midc, r1 + 1), &d), d <= 2))
        r1++;
    int mw = c1 - c0 + 1, mh = r1 - r0 + 1;
    check(abs(mw - g.plot_w) <= 1 && abs(mh - g.plot_h) <= 1 && abs(c0 - g.plot_x) <= 1 &&
              abs(r0 - g.plot_y) <= 1,
          "map_rectangle_on_picture", "measured %dx%d at (%d,%d), geometry %dx%d at (%d,%d)", mw,
          mh, c0, r0, g.plot_w, g.plot_h, g.plot_x, g.plot_y);
    check(fabs((double)mh / mw - aspect) <= 2.0 / mw, "map_height_matches_aspect",
          "measured %d/%d = %.4f, view %.4f", mh, mw, (double)mh / mw, aspect);
    check(im.h > mh && im.h - mh < 260, "map_height_is_map_plus_margins",
          "image height %d, map %d", im.h, mh);

    /* hottest pixel: centroid of the pixels with the highest decoded value */
    double tmax = -1.0;
    for (int r = g.plot_y; r < g.plot_y + g.plot_h; r++)
        for (int c = g.plot_x; c < g.plot_x + g.plot_w; c++) {
            double t = decode_t(0, px(&im, c, r), &d);
            if (d <= 2 && t > tmax)
                tmax = t;
        }
    double sc = 0.0, sr = 0.0;
    int cnt = 0;
    for (int r = g.plot_y; r < g.plot_y + g.plot_h; r++)
        for (int c = g.plot_x; c < g.plot_x + g.plot_w; c++) {
            double t = decode_t(0, px(&im, c, r), &d);
            if (d <= 2 && t >= tmax - 1.5 / (NS - 1)) {
                sc += c + 0.5;
                sr += r + 0.5;
                cnt++;
            }
        }
    double ex = g.plot_x + (xc - o.view[0]) / (o.view[2] - o.view[0]) * g.plot_w;
    double ey = g.plot_y + (o.view[3] - yc) / (o.view[3] - o.view[1]) * g.plot_h;
    double hx = sc / cnt, hy = sr / cnt;
    check(hypot(hx - ex, hy - ey) <= POS_TOL_PX, "map_hot_spot_position",
          "hottest (%.2f, %.2f) px over %d px, spot centre (%.2f, %.2f) px", hx, hy, cnt, ex, ey);
    check(hy < g.plot_y + g.plot_h / 2.0 && hx > g.plot_x + g.plot_w / 2.0, "map_y_points_up",
          "spot at y=+13 mm drawn at row %.1f (middle %.1f)", hy, g.plot_y + g.plot_h / 2.0);

    /* colour bar: top = maximum colour, bottom = minimum */
    const unsigned char *bt = px(&im, g.bar_x + g.bar_w / 2, g.bar_y);
    const unsigned char *bb = px(&im, g.bar_x + g.bar_w / 2, g.bar_y + g.bar_h - 1);
    /* batlow's published end entries, times 255 */
    check(abs(bt[0] - 250) <= 2 && abs(bt[1] - 204) <= 2 && abs(bt[2] - 250) <= 2 &&
              abs(bb[0] - 1) <= 2 && abs(bb[1] - 25) <= 2 && abs(bb[2] - 89) <= 2,
          "map_colour_bar_ends", "top (%d,%d,%d) bottom (%d,%d,%d)", bt[0], bt[1], bt[2], bb[0],
          bb[1], bb[2]);
    check(fabs(g.vmin) < 1e-15 && fabs(g.vmax - 0.8) < 0.01, "map_range_zero_to_max",
          "%g .. %g", g.vmin, g.vmax);

    /* text chunks */
    const char *t;
    t = text_of(&im, "Title");
    check(t != NULL && strcmp(t, o.title) == 0, "png_text_title_utf8", "%s", t ? t : "(none)");
    t = text_of(&im, "Software");
    check(t != NULL && strcmp(t, "eddy2d 0.1-test") == 0, "png_text_software", "%s",
          t ? t : "(none)");
    t = text_of(&im, "eddy2d:case");
    check(t != NULL && strcmp(t, "hot-spot test") == 0, "png_text_case", "%s", t ? t : "(none)");
    t = text_of(&im, "eddy2d:speed_m_per_s");
    check(t != NULL && atof(t) == 12.5, "png_text_speed", "%s", t ? t : "(none)");
    t = text_of(&im, "eddy2d:quantity");
    check(t != NULL && strcmp(t, "|B|") == 0, "png_text_quantity", "%s", t ? t : "(none)");
    t = text_of(&im, "eddy2d:unit");
    check(t != NULL && strcmp(t, "T") == 0, "png_text_unit", "%s", t ? t : "(none)");
    image_free(&im);
}

/* f(-x, y) = -f(x, y) on a symmetric graded grid, diverging map: mirror
 * pixels decode to t and 1 - t, have equal lightness, are warm on the
 * positive side and cool on the negative; masked cells are neutral. */
static void test_antisymmetric(void)
{
    enum { NX = 48, NY = 30 };
    double x[NX], y[NY], f[NX * NY];
    unsigned char mask[(NX - 1) * (NY - 1)];
    graded(x, NX, 0.08, 2.0);
    graded(y, NY, 0.03, 1.5);
    for (int j = 0; j < NY; j++)
        for (int i = 0; i < NX; i++)
            f[i + NX * j] = 3e7 * (x[i] / 0.02) * exp(-(x[i] * x[i] + y[j] * y[j]) / (0.02 * 0.02));
    memset(mask, 1, sizeof mask);
    /* mask a band of cells at the top (symmetric in x) */
    for (int j = NY - 5; j < NY - 1; j++)
        for (int i = 0; i < NX - 1; i++)
            mask[i + (NX - 1) * j] = 0;
    post_map_opts o;
    post_map_opts_defaults(&o);
    o.title = "antisymmetric J_z";
    o.quantity = "J_z";
    o.unit_label = "MA/m^2";
    o.value_scale = 1e-6;
    o.diverging = 1;
    const char *path = out_path("antisymmetric.png");
    eddy_error err = {0};
    post_map_geom g;
    eddy_status st = post_map_geometry(NX, NY, x, y, f, mask, &o, &g, &err);
    st = st == EDDY_OK ? post_map_png(path, NX, NY, x, y, f, mask, NULL, &o, &err) : st;
    check(st == EDDY_OK, "anti_png_written", "%s", err.msg);
    image im;
    if (read_png(path, &im) != 0) {
        check(0, "anti_png_decodes", "%s", path);
        return;
    }
    check(fabs(g.vmin + g.vmax) < 1e-9 * g.vmax && g.vmax > 0.0, "anti_range_symmetric",
          "%g .. %g", g.vmin, g.vmax);
    double worst_t = 0.0, worst_L = 0.0;
    int warm_ok = 1, cool_ok = 1, nfit = 0, dmax = 0;
    for (int r = g.plot_y; r < g.plot_y + g.plot_h; r++)
        for (int c = g.plot_x; c < g.plot_x + g.plot_w / 2; c++) {
            int cm = 2 * g.plot_x + g.plot_w - 1 - c; /* mirror column */
            const unsigned char *pl = px(&im, c, r), *pr = px(&im, cm, r);
            int d1, d2;
            double tl = decode_t(1, pl, &d1), tr = decode_t(1, pr, &d2);
            dmax = d1 > dmax ? d1 : dmax;
            dmax = d2 > dmax ? d2 : dmax;
            worst_t = fmax(worst_t, fabs(tl + tr - 1.0));
            worst_L = fmax(worst_L, fabs(lightness(pl) - lightness(pr)));
            if (tr > 0.55) { /* clearly positive on the right */
                nfit++;
                if (!(pr[0] > pr[2]))
                    warm_ok = 0;
                if (!(pl[2] > pl[0]))
                    cool_ok = 0;
            }
        }
    check(dmax <= 2, "anti_pixels_are_map_colours", "largest distance to the map %d levels", dmax);
    check(worst_t <= MIRROR_TOL, "anti_mirror_values", "max |t(x)+t(-x)-1| = %.4f (tol %.4f)",
          worst_t, MIRROR_TOL);
    check(worst_L <= 1.0, "anti_mirror_equal_lightness", "max |dL*| = %.2f", worst_L);
    check(nfit > 1000 && warm_ok && cool_ok, "anti_warm_right_cool_left",
          "%d pixel pairs, warm %d cool %d", nfit, warm_ok, cool_ok);
    /* masked band at the top: the neutral grey of the map's centre */
    int rr = g.plot_y + 2, worst_n = 0, grey = grey_of_lightness(DIV_CENTRE_L);
    for (int c = g.plot_x; c < g.plot_x + g.plot_w; c++) {
        const unsigned char *p = px(&im, c, rr);
        for (int q = 0; q < 3; q++)
            worst_n = abs(p[q] - grey) > worst_n ? abs(p[q] - grey) : worst_n;
    }
    check(worst_n <= NEUTRAL_TOL, "anti_zero_is_neutral", "largest deviation from %d %d levels",
          grey, worst_n);
    const unsigned char *bm = px(&im, g.bar_x + g.bar_w / 2, g.bar_y + g.bar_h / 2);
    check(abs(bm[0] - grey) <= 3 && abs(bm[1] - grey) <= 3 && abs(bm[2] - grey) <= 3,
          "anti_colour_bar_middle_neutral", "(%d,%d,%d)", bm[0], bm[1], bm[2]);
    image_free(&im);
}

/* A = c x on a graded grid: contours are vertical lines at equal steps. */
static void test_flux_lines(void)
{
    enum { NX = 37, NY = 9, NL = 7 };
    double x[NX], y[NY], f[NX * NY], a[NX * NY];
    geometric(x, NX, -0.05, 0.05, 1.08);
    geometric(y, NY, 0.0, 0.03, 1.0);
    for (int j = 0; j < NY; j++)
        for (int i = 0; i < NX; i++) {
            f[i + NX * j] = 0.0;
            a[i + NX * j] = 0.01 * x[i];
        }
    post_map_opts o;
    post_map_opts_defaults(&o);
    o.diverging = 1; /* zero field: neutral background, lines show */
    o.n_flux_lines = NL;
    o.width_px = 900;
    const char *path = out_path("flux_lines.png");
    eddy_error err = {0};
    post_map_geom g;
    eddy_status st = post_map_geometry(NX, NY, x, y, f, NULL, &o, &g, &err);
    st = st == EDDY_OK ? post_map_png(path, NX, NY, x, y, f, NULL, a, &o, &err) : st;
    check(st == EDDY_OK, "flux_png_written", "%s", err.msg);
    image im;
    if (read_png(path, &im) != 0) {
        check(0, "flux_png_decodes", "%s", path);
        return;
    }
    check(im.w == 900 && g.width == 900, "flux_width_option", "%d", im.w);
    int r = g.plot_y + g.plot_h / 2, nrun = 0;
    double centre[32];
    for (int c = g.plot_x; c < g.plot_x + g.plot_w && nrun < 32;) {
        if (px(&im, c, r)[1] < 180) {
            double s = 0.0, wsum = 0.0;
            while (c < g.plot_x + g.plot_w && px(&im, c, r)[1] < 215) {
                double wgt = 230.0 - px(&im, c, r)[1];
                s += wgt * (c + 0.5);
                wsum += wgt;
                c++;
            }
            centre[nrun++] = s / wsum;
        } else {
            c++;
        }
    }
    double worst = 0.0;
    for (int k = 0; k < nrun && k < NL; k++) {
        double want = g.plot_x + (k + 1.0) / (NL + 1.0) * g.plot_w;
        worst = fmax(worst, fabs(centre[k] - want));
    }
    check(nrun == NL, "flux_line_count", "%d lines crossed, want %d", nrun, NL);
    check(nrun == NL && worst <= POS_TOL_PX, "flux_lines_equal_steps",
          "largest offset from equal spacing %.2f px", worst);
    image_free(&im);
}

static void test_errors(void)
{
    double x[3] = {0.0, 0.01, 0.02}, xb[3] = {0.0, 0.02, 0.01}, y[2] = {0.0, 0.01};
    double f[6] = {0, 1, 2, 3, 4, 5}, fn[6] = {0, 1, NAN, 3, 4, 5};
    post_map_opts o;
    post_map_opts_defaults(&o);
    eddy_error err = {0};
    eddy_status st = post_map_png("/nonexistent-dir/x.png", 3, 2, x, y, f, NULL, NULL, &o, &err);
    check(st == EDDY_ERR_IO && strstr(err.msg, "/nonexistent-dir/x.png") != NULL,
          "err_unwritable_path", "status %d: %s", st, err.msg);
    memset(&err, 0, sizeof err);
    st = post_map_png(out_path("bad.png"), 3, 2, xb, y, f, NULL, NULL, &o, &err);
    check(st == EDDY_ERR_INPUT, "err_grid_not_increasing", "status %d: %s", st, err.msg);
    st = post_map_png(out_path("bad.png"), 3, 2, x, y, fn, NULL, NULL, &o, NULL);
    check(st == EDDY_ERR_NUMERIC, "err_nan_field_null_err", "status %d", st);
    o.width_px = 50;
    st = post_map_png(out_path("bad.png"), 3, 2, x, y, f, NULL, NULL, &o, NULL);
    check(st == EDDY_ERR_INPUT, "err_width_too_small", "status %d", st);
    double sp[2] = {1.0, 2.0}, dr[2] = {1.0, INFINITY};
    st = post_plot_forces_png(out_path("bad.png"), 2, sp, dr, NULL, NAN, 0, NULL, NULL, NULL,
                              NULL, NULL);
    check(st == EDDY_ERR_NUMERIC, "err_plot_inf_drag", "status %d", st);
    st = post_plot_forces_png(out_path("bad.png"), 0, sp, dr, NULL, NAN, 0, NULL, NULL, NULL,
                              NULL, NULL);
    check(st == EDDY_ERR_INPUT, "err_plot_no_points", "status %d", st);
    /* a peak to mark must be finite and among the speeds plotted */
    double sp3[3] = {1.0, 2.0, 30.0}, dr3[3] = {1.0, 3.0, 2.0};
    post_plot_opts po;
    post_plot_opts_defaults(&po);
    po.has_peak = 1;
    memset(&err, 0, sizeof err);
    st = post_plot_forces_png(out_path("bad.png"), 3, sp3, dr3, NULL, NAN, 0, NULL, NULL, NULL,
                              &po, &err);
    check(st == EDDY_ERR_INPUT, "err_plot_peak_not_set", "status %d: %s", st, err.msg);
    po.peak_speed = 40.0;
    po.peak_drag = 3.0;
    memset(&err, 0, sizeof err);
    st = post_plot_forces_png(out_path("bad.png"), 3, sp3, dr3, NULL, NAN, 0, NULL, NULL, NULL,
                              &po, &err);
    check(st == EDDY_ERR_INPUT && strstr(err.msg, "outside") != NULL,
          "err_plot_peak_outside_speeds", "status %d: %s", st, err.msg);
    po.peak_speed = 2.0;
    po.peak_drag = INFINITY;
    st = post_plot_forces_png(out_path("bad.png"), 3, sp3, dr3, NULL, NAN, 0, NULL, NULL, NULL,
                              &po, NULL);
    check(st == EDDY_ERR_INPUT, "err_plot_peak_drag_infinite", "status %d", st);
    double spn[3] = {-30.0, -2.0, -1.0};
    po.peak_speed = 2.0; /* the wrong sign for these speeds, on a log axis of |v| */
    po.peak_drag = 3.0;
    st = post_plot_forces_png(out_path("bad.png"), 3, spn, dr3, NULL, NAN, 0, NULL, NULL, NULL,
                              &po, NULL);
    check(st == EDDY_ERR_INPUT, "err_plot_peak_wrong_sign", "status %d", st);
    po.peak_speed = -2.0;
    st = post_plot_forces_png(out_path("bad.png"), 3, spn, dr3, NULL, NAN, 0, NULL, NULL, NULL,
                              &po, NULL);
    check(st == EDDY_OK, "plot_peak_negative_speeds", "status %d", st);
}

/* Drag of the shape f = 2 F0 x / (1 + x^2), x = v / vc (maximum F0 at vc). */
static double model_drag(double v, double vc, double f0)
{
    double u = v / vc;
    return 2.0 * f0 * u / (1.0 + u * u);
}

/* The series colours of the plots: drag (and y1) series 0, normal force (and
 * y2) series 1 of 2. */
static unsigned char drag_rgb[3], normal_rgb[3];

static int count_colour(const image *im, int r, int g, int b, int tol)
{
    int n = 0;
    for (size_t k = 0; k < (size_t)im->w * im->h; k++) {
        const unsigned char *p = im->rgb + 3 * k;
        n += abs(p[0] - r) <= tol && abs(p[1] - g) <= tol && abs(p[2] - b) <= tol;
    }
    return n;
}

static int distinct_colours(const image *im)
{
    unsigned char *seen = calloc(1u << 21, 1); /* 2^24 bits */
    int n = 0;
    for (size_t k = 0; k < (size_t)im->w * im->h; k++) {
        const unsigned char *p = im->rgb + 3 * k;
        unsigned v = ((unsigned)p[0] << 16) | ((unsigned)p[1] << 8) | p[2];
        if (!(seen[v >> 3] & (1u << (v & 7)))) {
            seen[v >> 3] |= (unsigned char)(1u << (v & 7));
            n++;
        }
    }
    free(seen);
    return n;
}

/* 1 if the text chunk `key` of im reads back as exactly v (NULL: absent). */
static int text_is(const image *im, const char *key, double v)
{
    const char *t = text_of(im, key);
    return t != NULL && strtod(t, NULL) == v;
}

/* Centres of the drag markers (filled circles of 4.2 px radius in the drag
 * blue): pixels whose neighbours 2 px away on both axes are that blue too
 * (on the 1.8 px polyline, at any angle, one of them is off the line),
 * grouped within 6 px.  Returns how many, at most max. */
static int drag_markers(const image *im, double *cx, double *cy, int max)
{
    int nc = 0, cnt[64] = {0};
    double sx[64] = {0}, sy[64] = {0};
    for (int j = 2; j + 2 < im->h; j++)
        for (int i = 2; i + 2 < im->w; i++) {
            int core = 1;
            const int di[5] = {0, 2, -2, 0, 0}, dj[5] = {0, 0, 0, 2, -2};
            for (int q = 0; q < 5 && core; q++) {
                const unsigned char *p = px(im, i + di[q], j + dj[q]);
                core = abs(p[0] - drag_rgb[0]) <= 6 && abs(p[1] - drag_rgb[1]) <= 6 &&
                       abs(p[2] - drag_rgb[2]) <= 6;
            }
            if (!core)
                continue;
            int c = 0;
            while (c < nc && hypot(i - sx[c] / cnt[c], j - sy[c] / cnt[c]) > 6.0)
                c++;
            if (c == nc) {
                if (nc == 64)
                    continue;
                nc++;
            }
            sx[c] += i;
            sy[c] += j;
            cnt[c]++;
        }
    for (int c = 0; c < nc && c < max; c++) {
        cx[c] = sx[c] / cnt[c];
        cy[c] = sy[c] / cnt[c];
    }
    return nc < max ? nc : max;
}

/* Of RING_DIRS rays from (x, y), how many cross a dark neutral pixel
 * between 7 and 9 px out (the peak ring, 8 px radius, 1.3 px wide, colour
 * 26,26,26 where it covers a whole pixel). */
static int ring_score(const image *im, double x, double y)
{
    int hits = 0;
    for (int d = 0; d < RING_DIRS; d++) {
        double a = 2.0 * M_PI * d / RING_DIRS;
        int hit = 0;
        for (double r = 7.0; r <= 9.0 && !hit; r += 0.5) {
            const unsigned char *p =
                px(im, (int)lround(x + r * cos(a)), (int)lround(y + r * sin(a)));
            hit = p[0] <= RING_DARK && p[1] <= RING_DARK && p[2] <= RING_DARK &&
                  abs(p[0] - p[1]) <= 40 && abs(p[1] - p[2]) <= 40;
        }
        hits += hit;
    }
    return hits;
}

/* The peak ring is drawn where the options put it, around the named sample,
 * and nowhere without a peak; the text chunks echo the options. */
static void test_peak_marker(void)
{
    enum { N = 13, K = 11 }; /* mark sample K, not the largest drag (sample 6) */
    double v[N], fd[N];
    for (int k = 0; k < N; k++) {
        v[k] = 0.1 * pow(10.0, k / 4.0);
        fd[k] = model_drag(v[k], 7.3, 250.0);
    }
    for (int marked = 1; marked >= 0; marked--) {
        post_plot_opts po;
        post_plot_opts_defaults(&po);
        po.has_peak = marked;
        po.peak_speed = v[K];
        po.peak_drag = fd[K];
        const char *path = out_path(marked ? "forces_peak_marked.png" : "forces_peak_none.png");
        eddy_error err = {0};
        eddy_status st = post_plot_forces_png(path, N, v, fd, NULL, NAN, 0, NULL, NULL, NULL, &po,
                                              &err);
        image im;
        if (st != EDDY_OK || read_png(path, &im) != 0) {
            check(0, marked ? "peak_marker_plot" : "no_peak_plot", "%s", err.msg);
            continue;
        }
        double cx[64], cy[64];
        int nm = drag_markers(&im, cx, cy, 64), ringed = -1, nringed = 0, worst_other = 0;
        int ring_hits = 0;
        for (int c = 0; c < nm; c++) {
            int sc = ring_score(&im, cx[c], cy[c]);
            if (sc >= RING_HITS) {
                ringed = c;
                nringed++;
                ring_hits = sc;
            } else if (sc > worst_other) {
                worst_other = sc;
            }
        }
        if (marked) {
            /* the samples run left to right in speed: sample K has N-1-K markers right of it */
            int right_of = 0;
            for (int c = 0; ringed >= 0 && c < nm; c++)
                right_of += cx[c] > cx[ringed] + 3.0;
            check(nm >= N && nringed == 1 && right_of == N - 1 - K && worst_other <= RING_MISS,
                  "plot_rings_the_peak_given_not_its_own",
                  "%d markers found, %d ringed (%d of %d rays), %d markers right of it (want %d), "
                  "the others score <= %d",
                  nm, nringed, ring_hits, RING_DIRS, right_of, N - 1 - K, worst_other);
            check(text_is(&im, "eddy2d:peak_speed_m_per_s", v[K]) &&
                      text_is(&im, "eddy2d:peak_drag_N_per_m", fd[K]),
                  "plot_peak_text_is_the_peak_given", "%s m/s, %s N/m",
                  text_of(&im, "eddy2d:peak_speed_m_per_s"),
                  text_of(&im, "eddy2d:peak_drag_N_per_m"));
        } else {
            check(nm >= N && nringed == 0 && worst_other <= RING_MISS, "plot_without_peak_no_ring",
                  "%d markers, %d ringed (largest score %d of %d)", nm, nringed, worst_other,
                  RING_DIRS);
            check(text_of(&im, "eddy2d:peak_speed_m_per_s") == NULL &&
                      text_of(&im, "eddy2d:peak_drag_N_per_m") == NULL,
                  "plot_without_peak_no_peak_text", "%d text chunks", im.ntext);
        }
        image_free(&im);
    }
}

static void test_force_plots(void)
{
    enum { N = 13, NR = 61 };
    double v[N], fd[N], fn[N], rv[NR], rd[NR], rn[NR];
    const double vc = 7.3, f0 = 250.0;
    for (int k = 0; k < N; k++) {
        v[k] = 0.1 * pow(10.0, k / 4.0);
        fd[k] = model_drag(v[k], vc, f0);
        fn[k] = -120.0 + 300.0 * (v[k] / vc) * (v[k] / vc) / (1.0 + (v[k] / vc) * (v[k] / vc));
    }
    for (int k = 0; k < NR; k++) {
        rv[k] = 0.1 * pow(10.0, k / 20.0);
        rd[k] = 1.04 * model_drag(rv[k], vc * 1.1, f0);
        rn[k] = -125.0 + 310.0 * (rv[k] / vc) * (rv[k] / vc) / (1.0 + (rv[k] / vc) * (rv[k] / vc));
    }
    post_plot_opts po;
    post_plot_opts_defaults(&po);
    po.title = "synthetic sweep \xe2\x80\x93 forces per unit length";
    po.case_name = "synthetic";
    po.version = "0.1-test";
    /* the peak the plot marks is the caller's: here the project's rule */
    po.has_peak = design_peak(N, v, fd, 1, &po.peak_speed, &po.peak_drag,
                              &po.peak_interpolated, NULL) == EDDY_OK;
    const char *path = out_path("forces_log.png");
    eddy_error err = {0};
    eddy_status st = post_plot_forces_png(path, N, v, fd, fn, 2.0 * f0 / vc, NR, rv, rd, rn, &po,
                                          &err);
    check(st == EDDY_OK, "plot_log_written", "%s", err.msg);
    image im;
    if (read_png(path, &im) == 0) {
        check(im.w == 1000 && im.h == 650, "plot_default_size", "%dx%d", im.w, im.h);
        int nd = distinct_colours(&im);
        check(nd > 100, "plot_not_blank", "%d distinct colours", nd);
        int n_s0 = count_colour(&im, drag_rgb[0], drag_rgb[1], drag_rgb[2], 6);
        int n_s1 = count_colour(&im, normal_rgb[0], normal_rgb[1], normal_rgb[2], 6);
        check(n_s0 > 300 && n_s1 > 300, "plot_series_drawn",
              "%d drag-colour px, %d normal-colour px", n_s0, n_s1);
        const char *t = text_of(&im, "eddy2d:case");
        check(t != NULL && strcmp(t, "synthetic") == 0, "plot_text_case", "%s", t ? t : "(none)");
        t = text_of(&im, "eddy2d:unit");
        check(t != NULL && strcmp(t, "N/m") == 0, "plot_text_unit", "%s", t ? t : "(none)");
        check(po.has_peak && po.peak_interpolated &&
                  text_is(&im, "eddy2d:peak_speed_m_per_s", po.peak_speed) &&
                  text_is(&im, "eddy2d:peak_drag_N_per_m", po.peak_drag),
              "plot_text_peak_interpolated", "%.17g m/s, %.17g N/m: %s, %s", po.peak_speed,
              po.peak_drag, text_of(&im, "eddy2d:peak_speed_m_per_s"),
              text_of(&im, "eddy2d:peak_drag_N_per_m"));
        image_free(&im);
    } else {
        check(0, "plot_log_decodes", "%s", path);
    }

    /* linear speed axis (less than a decade), drag only, no reference */
    double lv[8], ld[8];
    for (int k = 0; k < 8; k++) {
        lv[k] = 2.0 + 2.0 * k;
        ld[k] = model_drag(lv[k], 9.0, 40.0);
    }
    post_plot_opts_defaults(&po);
    po.width_px = 800;
    po.height_px = 500;
    po.has_peak = design_peak(8, lv, ld, 1, &po.peak_speed, &po.peak_drag,
                              &po.peak_interpolated, NULL) == EDDY_OK;
    path = out_path("forces_linear.png");
    st = post_plot_forces_png(path, 8, lv, ld, NULL, NAN, 0, NULL, NULL, NULL, &po, &err);
    check(st == EDDY_OK, "plot_linear_written", "%s", err.msg);
    if (read_png(path, &im) == 0) {
        int n_s0 = count_colour(&im, drag_rgb[0], drag_rgb[1], drag_rgb[2], 6);
        check(im.w == 800 && im.h == 500 && n_s0 > 150, "plot_linear_size_and_points",
              "%dx%d, %d drag-colour px", im.w, im.h, n_s0);
        image_free(&im);
    } else {
        check(0, "plot_linear_decodes", "%s", path);
    }
}

/* A written picture decodes at the requested width, is not blank (many
 * distinct colours: the map, its colour bar and the text) and holds both a
 * warm and a cool map colour where the field has both signs. */
static void check_showcase(const char *name, eddy_status st, const eddy_error *err,
                           int want_w, int diverging)
{
    image im;
    char what[160];
    snprintf(what, sizeof what, "%s: written, decodes at %d px, not blank", name, want_w);
    if (st != EDDY_OK || read_png(out_path(name), &im) != 0) {
        check(0, what, "%s", st != EDDY_OK ? err->msg : "cannot decode");
        return;
    }
    /* distinct colours, counted on a 32-level-per-channel lattice */
    static unsigned char seen[32 * 32 * 32];
    memset(seen, 0, sizeof seen);
    int ncol = 0, warm = 0, cool = 0;
    for (long k = 0; k < (long)im.w * im.h; k++) {
        const unsigned char *c = im.rgb + 3 * k;
        int q = (c[0] >> 3) * 1024 + (c[1] >> 3) * 32 + (c[2] >> 3);
        ncol += !seen[q];
        seen[q] = 1;
        warm += c[0] > c[2] + 60;
        cool += c[2] > c[0] + 60;
    }
    check(im.w == want_w && im.h > 100 && ncol >= 50 && (!diverging || (warm > 100 && cool > 100)),
          what, "%d x %d px, %d colours, %d warm and %d cool pixels", im.w, im.h, ncol, warm,
          cool);
    image_free(&im);
}

/* A showcase picture: a moving conducting strip under a magnet (synthetic
 * fields, not a solution), J_z masked to the strip, flux lines, outlines. */
static void render_showcase(void)
{
    enum { NX = 161, NY = 91 };
    static double x[NX], y[NY], a[NX * NY], jz[NX * NY], bm[NX * NY];
    static unsigned char mask[(NX - 1) * (NY - 1)];
    graded(x, NX, 0.15, 2.2);
    for (int j = 0; j < NY; j++)
        y[j] = -0.04 + 0.1 * j / (NY - 1.0);
    /* magnet block 40 x 20 mm at y 8..28 mm as two opposite current sheets */
    const double mu0i = 4e-7 * M_PI * 2.0e4;
    for (int j = 0; j < NY; j++)
        for (int i = 0; i < NX; i++) {
            double s = 0.0;
            for (int k = 0; k < 20; k++) {
                double ys = 0.008 + 0.02 * (k + 0.5) / 20.0;
                double r1 = (x[i] + 0.02) * (x[i] + 0.02) + (y[j] - ys) * (y[j] - ys) + 1e-6;
                double r2 = (x[i] - 0.02) * (x[i] - 0.02) + (y[j] - ys) * (y[j] - ys) + 1e-6;
                s += 0.5 * log(r1 / r2);
            }
            a[i + NX * j] = mu0i / (2.0 * M_PI) * s / 20.0;
        }
    for (int j = 0; j < NY; j++)
        for (int i = 0; i < NX; i++) {
            int i0 = i > 0 ? i - 1 : i, i1 = i < NX - 1 ? i + 1 : i;
            int j0 = j > 0 ? j - 1 : j, j1 = j < NY - 1 ? j + 1 : j;
            double by = -(a[i1 + NX * j] - a[i0 + NX * j]) / (x[i1] - x[i0]);
            double bx = (a[i + NX * j1] - a[i + NX * j0]) / (y[j1] - y[j0]);
            bm[i + NX * j] = hypot(bx, by);
            jz[i + NX * j] = 3.5e7 * 10.0 * by * exp(-fabs(y[j]) / 0.004);
        }
    for (int j = 0; j + 1 < NY; j++)
        for (int i = 0; i + 1 < NX; i++)
            mask[i + (NX - 1) * j] = (y[j] >= -0.005 - 1e-12 && y[j + 1] <= 0.005 + 1e-12);
    double outl[8] = {-0.15, -0.005, 0.15, 0.005, -0.02, 0.008, 0.02, 0.028};
    post_map_opts o;
    post_map_opts_defaults(&o);
    o.title = "showcase \xe2\x80\x93 current density, 12.5 m/s";
    o.quantity = "J_z";
    o.unit_label = "MA/m^2";
    o.value_scale = 1e-6;
    o.diverging = 1;
    o.view[0] = -0.1;
    o.view[1] = -0.03;
    o.view[2] = 0.1;
    o.view[3] = 0.045;
    o.n_flux_lines = 24;
    o.outlines = outl;
    o.n_outlines = 2;
    o.case_name = "showcase";
    o.speed = 12.5;
    o.version = "0.1-test";
    eddy_error err = {0};
    eddy_status st = post_map_png(out_path("showcase_jz.png"), NX, NY, x, y, jz, mask, a, &o, &err);
    check_showcase("showcase_jz.png", st, &err, o.width_px > 0 ? o.width_px : 1200, 1);
    o.title = "showcase \xe2\x80\x93 flux density";
    o.quantity = "|B|";
    o.unit_label = "T";
    o.value_scale = 1.0;
    o.diverging = 0;
    st = post_map_png(out_path("showcase_b.png"), NX, NY, x, y, bm, NULL, a, &o, &err);
    check_showcase("showcase_b.png", st, &err, o.width_px > 0 ? o.width_px : 1200, 0);
    /* a small, flat picture: labels must still fit */
    o.width_px = 600;
    o.view[1] = -0.01;
    o.view[3] = 0.01;
    o.title = "narrow strip, 600 px";
    st = post_map_png(out_path("showcase_small.png"), NX, NY, x, y, bm, NULL, a, &o, &err);
    check_showcase("showcase_small.png", st, &err, 600, 0);
    /* a tall view reaching past the grid (white there), in metres */
    o.width_px = 700;
    o.view[0] = -0.03;
    o.view[1] = -0.06;
    o.view[2] = 0.03;
    o.view[3] = 0.07;
    o.length_unit = "m";
    o.length_scale = 1.0;
    o.title = "tall view past the grid edge";
    st = post_map_png(out_path("showcase_tall.png"), NX, NY, x, y, bm, NULL, a, &o, &err);
    check_showcase("showcase_tall.png", st, &err, 700, 0);
}

/* Braking by a drag force of the eddy-current shape F(v) = 2 F0 u/(1 + u^2),
 * u = v/vc: from m v dv/dx = -F(v), the distance to slow from v0 to v is
 * x(v) = (m vc / 2 F0) [(v0 - v) + (v0^3 - v^3) / (3 vc^2)] (calculus),
 * and the deceleration is F(v)/m.  Speed and deceleration against distance. */
static void test_xy_plot(void)
{
    enum { N = 401 };
    static double x[N], v[N], a[N];
    const double m = 1000.0, v0 = 30.0, vc = 8.0, f0 = 6000.0;
    for (int k = 0; k < N; k++) {
        v[k] = v0 * (1.0 - (double)k / (N - 1));
        x[k] = m * vc / (2.0 * f0) * ((v0 - v[k]) + (v0 * v0 * v0 - v[k] * v[k] * v[k]) /
                                                        (3.0 * vc * vc));
        a[k] = model_drag(v[k], vc, f0) / m;
    }
    post_xy_opts o;
    post_xy_opts_defaults(&o);
    o.title = "synthetic stop \xe2\x80\x93 30 m/s to rest";
    o.case_name = "synthetic-stop";
    o.version = "0.1-test";
    o.x_label = "distance (m)";
    o.y1_label = "speed (m/s)";
    o.y2_label = "deceleration (m/s^2)";
    o.y1_name = "speed";
    o.y2_name = "deceleration";
    const char *path = out_path("xy_stop.png");
    eddy_error err = {0};
    eddy_status st = post_plot_xy_png(path, N, x, v, a, &o, &err);
    check(st == EDDY_OK, "xy_written", "%s", err.msg);
    image im;
    if (read_png(path, &im) == 0) {
        check(im.w == 1000 && im.h == 650, "xy_default_size", "%dx%d", im.w, im.h);
        int n_s0 = count_colour(&im, drag_rgb[0], drag_rgb[1], drag_rgb[2], 6);
        int n_s1 = count_colour(&im, normal_rgb[0], normal_rgb[1], normal_rgb[2], 6);
        check(n_s0 > 600 && n_s1 > 600, "xy_both_curves_drawn",
              "%d speed-colour px, %d deceleration-colour px", n_s0, n_s1);
        const char *t = text_of(&im, "eddy2d:case");
        check(t != NULL && strcmp(t, "synthetic-stop") == 0, "xy_text_case", "%s",
              t ? t : "(none)");
        t = text_of(&im, "Title");
        check(t != NULL && strcmp(t, o.title) == 0, "xy_text_title_utf8", "%s", t ? t : "(none)");
        t = text_of(&im, "Software");
        check(t != NULL && strcmp(t, "eddy2d 0.1-test") == 0, "xy_text_software", "%s",
              t ? t : "(none)");
        const char *tx = text_of(&im, "eddy2d:x"), *t1 = text_of(&im, "eddy2d:y1");
        const char *t2 = text_of(&im, "eddy2d:y2");
        check(tx != NULL && t1 != NULL && t2 != NULL && strcmp(tx, "distance (m)") == 0 &&
                  strcmp(t1, "speed (m/s)") == 0 && strcmp(t2, "deceleration (m/s^2)") == 0,
              "xy_text_axes", "x %s, y1 %s, y2 %s", tx ? tx : "(none)", t1 ? t1 : "(none)",
              t2 ? t2 : "(none)");
        image_free(&im);
    } else {
        check(0, "xy_decodes", "%s", path);
    }

    /* one curve (linear drag: v = v0 - (b/m) x), stated size, no title */
    double lx[50], lv[50];
    for (int k = 0; k < 50; k++) {
        lx[k] = 60.0 * k / 49.0;
        lv[k] = v0 - 0.5 * lx[k];
    }
    post_xy_opts_defaults(&o);
    o.x_label = "distance (m)";
    o.y1_label = "speed (m/s)";
    o.width_px = 700;
    o.height_px = 450;
    path = out_path("xy_one_curve.png");
    st = post_plot_xy_png(path, 50, lx, lv, NULL, &o, &err);
    check(st == EDDY_OK, "xy_one_curve_written", "%s", err.msg);
    if (read_png(path, &im) == 0) {
        int n_s0 = count_colour(&im, drag_rgb[0], drag_rgb[1], drag_rgb[2], 6);
        int n_s1 = count_colour(&im, normal_rgb[0], normal_rgb[1], normal_rgb[2], 6);
        /* a 1.5 px line about 700 px long: its core keeps the exact colour
         * over roughly half its length in pixels */
        check(im.w == 700 && im.h == 450 && n_s0 > 200 && n_s1 == 0, "xy_one_curve_drawn",
              "%dx%d, %d y1-colour px, %d y2-colour px", im.w, im.h, n_s0, n_s1);
        check(text_of(&im, "eddy2d:y2") == NULL && text_of(&im, "Title") == NULL,
              "xy_one_curve_text", "y2 or title text present");
        image_free(&im);
    } else {
        check(0, "xy_one_curve_decodes", "%s", path);
    }

    /* x need not be monotonic: a closed loop, and a constant y2 */
    double cx[73], cy[73], cz[73];
    for (int k = 0; k < 73; k++) {
        cx[k] = cos(2.0 * M_PI * k / 72.0);
        cy[k] = sin(2.0 * M_PI * k / 72.0);
        cz[k] = 4.0;
    }
    st = post_plot_xy_png(out_path("xy_loop.png"), 73, cx, cy, cz, NULL, &err);
    check(st == EDDY_OK, "xy_loop_and_constant", "%s", err.msg);

    /* bad input (a raised error keeps its first message: clear it each time) */
    double bad[3] = {0.0, NAN, 2.0}, inf[3] = {0.0, 1.0, INFINITY}, ok3[3] = {0.0, 1.0, 2.0};
    memset(&err, 0, sizeof err);
    st = post_plot_xy_png(out_path("bad.png"), 1, ok3, ok3, NULL, NULL, &err);
    check(st == EDDY_ERR_INPUT, "xy_err_one_point", "status %d: %s", st, err.msg);
    memset(&err, 0, sizeof err);
    st = post_plot_xy_png(out_path("bad.png"), 0, ok3, ok3, NULL, NULL, NULL);
    check(st == EDDY_ERR_INPUT, "xy_err_no_points", "status %d", st);
    memset(&err, 0, sizeof err);
    st = post_plot_xy_png(out_path("bad.png"), 3, bad, ok3, NULL, NULL, &err);
    check(st == EDDY_ERR_INPUT && strstr(err.msg, "x[1]") != NULL, "xy_err_nan_x", "status %d: %s",
          st, err.msg);
    memset(&err, 0, sizeof err);
    st = post_plot_xy_png(out_path("bad.png"), 3, ok3, inf, NULL, NULL, &err);
    check(st == EDDY_ERR_INPUT, "xy_err_inf_y1", "status %d: %s", st, err.msg);
    memset(&err, 0, sizeof err);
    st = post_plot_xy_png(out_path("bad.png"), 3, ok3, ok3, bad, NULL, &err);
    check(st == EDDY_ERR_INPUT && strstr(err.msg, "y2[1]") != NULL, "xy_err_nan_y2",
          "status %d: %s", st, err.msg);
    memset(&err, 0, sizeof err);
    st = post_plot_xy_png(out_path("bad.png"), 3, NULL, ok3, NULL, NULL, &err);
    check(st == EDDY_ERR_INPUT, "xy_err_null_x", "status %d", st);
    post_xy_opts_defaults(&o);
    o.width_px = 100;
    memset(&err, 0, sizeof err);
    st = post_plot_xy_png(out_path("bad.png"), 3, ok3, ok3, NULL, &o, &err);
    check(st == EDDY_ERR_INPUT, "xy_err_too_small", "status %d", st);
    memset(&err, 0, sizeof err);
    st = post_plot_xy_png("/nonexistent-dir/xy.png", 3, ok3, ok3, NULL, NULL, &err);
    check(st == EDDY_ERR_IO, "xy_err_unwritable", "status %d: %s", st, err.msg);
}

int main(void)
{
    const char *keep = getenv("EDDY_IMG_SAMPLES");
    if (keep != NULL && keep[0] != '\0') {
        snprintf(out_dir, sizeof out_dir, "%s", keep);
        mkdir(out_dir, 0755);
        keep_files = 1;
    } else {
        snprintf(out_dir, sizeof out_dir, "/tmp/eddy_post_img.XXXXXX");
        if (mkdtemp(out_dir) == NULL) {
            check(0, "temp_dir", "cannot create %s", out_dir);
            return check_summary();
        }
    }
    init_samples();
    post_series_rgb(0, 2, drag_rgb);
    post_series_rgb(1, 2, normal_rgb);
    test_colour_maps();
    test_hot_spot();
    test_antisymmetric();
    test_flux_lines();
    test_force_plots();
    test_peak_marker();
    test_errors();
    test_xy_plot();
    render_showcase();
    if (!keep_files) {
        for (int k = 0; k < n_written; k++)
            remove(written[k]);
        rmdir(out_dir);
    }
    cairo_debug_reset_static_data();
    return check_summary();
}
