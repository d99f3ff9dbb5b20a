/*
 * test_post_img.c - field maps and force-speed plots as PNG pictures.
 *
 * The pictures are written, decoded again with libpng and measured.
 * Reference values and their sources:
 *   - Moreland's "cool to warm" diverging map: the 33-entry 8-bit table of
 *     K. Moreland, "Diverging Color Maps for Scientific Visualization" (2009),
 *     quoted from memory of the published table; tolerance MORELAND_TOL
 *     levels covers rounding and the reference white chosen.
 *   - viridis (van der Walt & Smith, 2015): the common 5-colour hex sample
 *     #440154 #3B528B #21918C #5EC962 #FDE725 (start, quarters, end), from
 *     memory; tolerance VIRIDIS_TOL levels.
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

#define MORELAND_TOL 3   /* 8-bit levels */
#define VIRIDIS_TOL 3    /* 8-bit levels */
#define POS_TOL_PX 1.5   /* hot-spot and contour positions */
#define MIRROR_TOL 0.008 /* |t(x) + t(-x) - 1| of decoded values: 2 table steps of
                            1/1023 plus 8-bit plateaus near the neutral centre */
#define NEUTRAL_TOL 2    /* levels from (221,221,221) */
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

/* CIELAB L* of an sRGB colour (D65), for the equal-lightness check. */
static double lightness(const unsigned char *c)
{
    double lin[3];
    for (int k = 0; k < 3; k++) {
        double v = c[k] / 255.0;
        lin[k] = v <= 0.04045 ? v / 12.92 : pow((v + 0.055) / 1.055, 2.4);
    }
    double Y = 0.2126 * lin[0] + 0.7152 * lin[1] + 0.0722 * lin[2];
    return Y > 0.008856 ? 116.0 * cbrt(Y) - 16.0 : 903.3 * Y;
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
    /* Moreland 2009, table of the cool-to-warm map, 33 entries (from memory) */
    static const unsigned char moreland[33][3] = {
        {59, 76, 192},   {68, 90, 204},   {77, 104, 215},  {87, 117, 225},  {98, 130, 234},
        {108, 142, 241}, {119, 154, 247}, {130, 165, 251}, {141, 176, 254}, {152, 185, 255},
        {163, 194, 255}, {174, 201, 253}, {184, 208, 249}, {194, 213, 244}, {204, 217, 238},
        {213, 219, 230}, {221, 221, 221}, {229, 216, 209}, {236, 211, 197}, {241, 204, 185},
        {245, 196, 173}, {247, 187, 160}, {247, 177, 148}, {247, 166, 135}, {244, 154, 123},
        {241, 141, 111}, {236, 127, 99},  {229, 112, 88},  {222, 96, 77},   {213, 80, 66},
        {203, 62, 56},   {192, 40, 47},   {180, 4, 38}};
    int worst = 0, worst_k = 0;
    for (int k = 0; k < 33; k++) {
        unsigned char c[3];
        post_cmap_rgb(1, k / 32.0, c);
        for (int q = 0; q < 3; q++) {
            int d = abs(c[q] - moreland[k][q]);
            if (d > worst) {
                worst = d;
                worst_k = k;
            }
        }
    }
    check(worst <= MORELAND_TOL, "cmap_moreland_table_33",
          "largest difference %d levels at entry %d (tol %d)", worst, worst_k, MORELAND_TOL);

    static const double vt[5] = {0.0, 0.25, 0.5, 0.75, 1.0};
    static const unsigned char vref[5][3] = {
        {0x44, 0x01, 0x54}, {0x3b, 0x52, 0x8b}, {0x21, 0x91, 0x8c}, {0x5e, 0xc9, 0x62}, {0xfd, 0xe7, 0x25}};
    worst = 0;
    for (int k = 0; k < 5; k++) {
        unsigned char c[3];
        post_cmap_rgb(0, vt[k], c);
        for (int q = 0; q < 3; q++) {
            int d = abs(c[q] - vref[k][q]);
            if (d > worst) {
                worst = d;
                worst_k = k;
            }
        }
    }
    check(worst <= VIRIDIS_TOL, "cmap_viridis_5_hex", "largest difference %d levels at t=%.2f",
          worst, vt[worst_k]);

    /* viridis lightness grows monotonically (its design property) */
    double prev = -1.0;
    int mono = 1;
    for (int k = 0; k <= 64; k++) {
        unsigned char c[3];
        post_cmap_rgb(0, k / 64.0, c);
        double L = lightness(c);
        if (L < prev - 0.3)
            mono = 0;
        prev = L;
    }
    check(mono, "cmap_viridis_lightness_monotonic", "%s", "");
    unsigned char lo[3], hi[3], nanc[3];
    post_cmap_rgb(0, -5.0, lo);
    post_cmap_rgb(0, 7.0, hi);
    post_cmap_rgb(1, NAN, nanc);
    check(lo[0] == 0x44 && hi[0] == 0xfd && abs(nanc[0] - 221) <= 1, "cmap_clamps_out_of_range",
          "t=-5 -> %d, t=7 -> %d, NaN -> %d", lo[0], hi[0], nanc[0]);
}

/* A Gaussian hot spot on a graded grid, viridis: size, aspect, position,
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
     * that decode as viridis colours through the middle row and column */
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
    check(abs(bt[0] - 253) <= 2 && abs(bt[1] - 231) <= 2 && abs(bt[2] - 37) <= 2 &&
              abs(bb[0] - 68) <= 2 && abs(bb[1] - 1) <= 2 && abs(bb[2] - 84) <= 2,
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

/* f(-x, y) = -f(x, y) on a symmetric graded grid, Moreland map: mirror
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
    /* masked band at the top: neutral grey-white (Moreland's midpoint) */
    int rr = g.plot_y + 2, worst_n = 0;
    for (int c = g.plot_x; c < g.plot_x + g.plot_w; c++) {
        const unsigned char *p = px(&im, c, rr);
        for (int q = 0; q < 3; q++)
            worst_n = abs(p[q] - 221) > worst_n ? abs(p[q] - 221) : worst_n;
    }
    check(worst_n <= NEUTRAL_TOL, "anti_zero_is_neutral", "largest deviation from 221 %d levels",
          worst_n);
    const unsigned char *bm = px(&im, g.bar_x + g.bar_w / 2, g.bar_y + g.bar_h / 2);
    check(abs(bm[0] - 221) <= 3 && abs(bm[1] - 221) <= 3 && abs(bm[2] - 221) <= 3,
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
                double wgt = 221.0 - px(&im, c, r)[1];
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
                core = abs(p[0] - 0) <= 6 && abs(p[1] - 114) <= 6 && abs(p[2] - 178) <= 6;
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
        int nblue = count_colour(&im, 0, 114, 178, 6), nverm = count_colour(&im, 213, 94, 0, 6);
        check(nblue > 300 && nverm > 300, "plot_series_drawn",
              "%d drag-blue px, %d vermillion px", nblue, nverm);
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
        int nblue = count_colour(&im, 0, 114, 178, 6);
        check(im.w == 800 && im.h == 500 && nblue > 150, "plot_linear_size_and_points",
              "%dx%d, %d blue px", im.w, im.h, nblue);
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
        int nblue = count_colour(&im, 0, 114, 178, 6), nverm = count_colour(&im, 213, 94, 0, 6);
        check(nblue > 600 && nverm > 600, "xy_both_curves_drawn",
              "%d speed-blue px, %d deceleration-vermillion px", nblue, nverm);
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
        int nblue = count_colour(&im, 0, 114, 178, 6), nverm = count_colour(&im, 213, 94, 0, 6);
        /* a 1.5 px line about 700 px long: its core keeps the exact colour
         * over roughly half its length in pixels */
        check(im.w == 700 && im.h == 450 && nblue > 200 && nverm == 0, "xy_one_curve_drawn",
              "%dx%d, %d blue px, %d vermillion px", im.w, im.h, nblue, nverm);
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
