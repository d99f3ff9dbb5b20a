/*
 * post_cmap.c - colour maps of the field maps: viridis (a table) and
 * Moreland's diverging "cool to warm" map (computed in his Msh colour
 * space), and lookup tables of ARGB32 pixels for colouring many pixels.
 * Interface: post_cmap_rgb in post/post_img.h, the tables in
 * post/post_draw.h.
 */
#include "post/post_draw.h"
#include "post/post_img.h"

#include <math.h>
#include <stdint.h>

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

void post_cmap_lut(int diverging, uint32_t lut[POST_LUT_N])
{
    for (int k = 0; k < POST_LUT_N; k++) {
        unsigned char c[3];
        post_cmap_rgb(diverging, (double)k / (POST_LUT_N - 1), c);
        lut[k] = 0xff000000u | ((uint32_t)c[0] << 16) | ((uint32_t)c[1] << 8) | c[2];
    }
}

uint32_t post_cmap_lut_pick(const uint32_t lut[POST_LUT_N], double t)
{
    if (!(t > 0.0))
        t = 0.0;
    if (t > 1.0)
        t = 1.0;
    return lut[(int)(t * (POST_LUT_N - 1) + 0.5)];
}
