/*
 * post_cmap.c - the colours of the pictures, all in one place:
 *   - the sequential map of the field maps: batlow, one of the "Scientific
 *     colour maps" of F. Crameri (Crameri, Shephard & Heron, "The misuse of
 *     colour in science communication", Nature Communications 11, 5444,
 *     2020; tables: Crameri, Scientific colour maps, Zenodo,
 *     doi:10.5281/zenodo.1243862), its published 256-entry table;
 *   - the diverging map of the field maps, constructed here in CIELAB by the
 *     design rules of P. Kovesi, "Good colour maps: how to design them",
 *     arXiv:1509.03700 (2015): lightness linear in the value on each half,
 *     the two halves equal in lightness and chroma and apart only in hue;
 *   - the series colours of every line plot (one palette, post_series_rgb);
 * and lookup tables of ARGB32 pixels for colouring many pixels.
 * Interface: post_cmap_rgb and post_series_rgb in post/post_img.h, the
 * tables in post/post_draw.h.
 *
 * Licence of the batlow table: MIT (the Scientific colour maps README,
 * version 7.0.1: "License: MIT License"):
 *   Copyright (c) 2018 Fabio Crameri, colour map values.
 *   Permission is hereby granted, free of charge, to any person obtaining a
 *   copy of this software and associated documentation files (the
 *   "Software"), to deal in the Software without restriction, including
 *   without limitation the rights to use, copy, modify, merge, publish,
 *   distribute, sublicense, and/or sell copies of the Software, and to
 *   permit persons to whom the Software is furnished to do so, subject to
 *   the following conditions: The above copyright notice and this
 *   permission notice shall be included in all copies or substantial
 *   portions of the Software.  THE SOFTWARE IS PROVIDED "AS IS", WITHOUT
 *   WARRANTY OF ANY KIND, EXPRESS OR IMPLIED, INCLUDING BUT NOT LIMITED TO
 *   THE WARRANTIES OF MERCHANTABILITY, FITNESS FOR A PARTICULAR PURPOSE AND
 *   NONINFRINGEMENT.  IN NO EVENT SHALL THE AUTHORS OR COPYRIGHT HOLDERS BE
 *   LIABLE FOR ANY CLAIM, DAMAGES OR OTHER LIABILITY, WHETHER IN AN ACTION
 *   OF CONTRACT, TORT OR OTHERWISE, ARISING FROM, OUT OF OR IN CONNECTION
 *   WITH THE SOFTWARE OR THE USE OR OTHER DEALINGS IN THE SOFTWARE.
 */
#include "post/post_draw.h"
#include "post/post_img.h"

#include <math.h>
#include <stdint.h>

/* batlow: the 256 sRGB entries (0..1) of the published table, 6 decimals,
 * as redistributed with the MIT licence above. */
static const float batlow_tab[256][3] = {
    {0.003596, 0.099991, 0.350104}, {0.005948, 0.104123, 0.350813}, {0.008241, 0.108211, 0.351502},
    {0.010454, 0.112354, 0.352200}, {0.012856, 0.116424, 0.352908}, {0.014995, 0.120438, 0.353596},
    {0.017080, 0.124486, 0.354297}, {0.019118, 0.128536, 0.355005}, {0.021113, 0.132572, 0.355694},
    {0.023067, 0.136563, 0.356383}, {0.024983, 0.140610, 0.357079}, {0.026865, 0.144618, 0.357770},
    {0.028714, 0.148590, 0.358445}, {0.030534, 0.152599, 0.359133}, {0.032329, 0.156636, 0.359828},
    {0.034083, 0.160615, 0.360505}, {0.036051, 0.164640, 0.361199}, {0.037779, 0.168656, 0.361895},
    {0.039498, 0.172658, 0.362576}, {0.041209, 0.176675, 0.363259}, {0.042752, 0.180700, 0.363944},
    {0.044421, 0.184755, 0.364629}, {0.045902, 0.188797, 0.365314}, {0.047477, 0.192838, 0.366003},
    {0.049077, 0.196914, 0.366684}, {0.050475, 0.200942, 0.367351}, {0.051912, 0.205037, 0.368032},
    {0.053357, 0.209120, 0.368713}, {0.054819, 0.213204, 0.369376}, {0.056316, 0.217328, 0.370037},
    {0.057649, 0.221440, 0.370696}, {0.059196, 0.225565, 0.371350}, {0.060593, 0.229676, 0.371998},
    {0.062035, 0.233826, 0.372640}, {0.063527, 0.237992, 0.373274}, {0.064987, 0.242150, 0.373901},
    {0.066494, 0.246311, 0.374510}, {0.068052, 0.250486, 0.375095}, {0.069648, 0.254696, 0.375674},
    {0.071235, 0.258881, 0.376245}, {0.072855, 0.263075, 0.376786}, {0.074530, 0.267253, 0.377298},
    {0.076235, 0.271463, 0.377788}, {0.078026, 0.275693, 0.378253}, {0.079917, 0.279885, 0.378688},
    {0.081925, 0.284081, 0.379089}, {0.083913, 0.288284, 0.379453}, {0.085920, 0.292481, 0.379778},
    {0.088158, 0.296681, 0.380059}, {0.090420, 0.300848, 0.380294}, {0.092737, 0.305030, 0.380477},
    {0.095262, 0.309199, 0.380605}, {0.097825, 0.313328, 0.380673}, {0.100462, 0.317448, 0.380678},
    {0.103292, 0.321545, 0.380615}, {0.106209, 0.325618, 0.380480}, {0.109231, 0.329692, 0.380270},
    {0.112380, 0.333710, 0.379982}, {0.115640, 0.337693, 0.379612}, {0.119046, 0.341651, 0.379158},
    {0.122527, 0.345562, 0.378614}, {0.126233, 0.349446, 0.377978}, {0.130032, 0.353278, 0.377251},
    {0.133912, 0.357075, 0.376429}, {0.137954, 0.360792, 0.375486}, {0.142079, 0.364487, 0.374467},
    {0.146330, 0.368125, 0.373325}, {0.150711, 0.371696, 0.372082}, {0.155200, 0.375219, 0.370739},
    {0.159768, 0.378685, 0.369297}, {0.164499, 0.382080, 0.367737}, {0.169305, 0.385417, 0.366090},
    {0.174164, 0.388703, 0.364318}, {0.179132, 0.391909, 0.362459}, {0.184176, 0.395055, 0.360484},
    {0.189307, 0.398139, 0.358428}, {0.194527, 0.401157, 0.356281}, {0.199746, 0.404100, 0.354021},
    {0.205088, 0.406986, 0.351681}, {0.210470, 0.409814, 0.349265}, {0.215918, 0.412578, 0.346762},
    {0.221386, 0.415267, 0.344165}, {0.226908, 0.417906, 0.341521}, {0.232462, 0.420485, 0.338795},
    {0.238054, 0.423007, 0.336000}, {0.243664, 0.425486, 0.333162}, {0.249328, 0.427907, 0.330248},
    {0.255026, 0.430272, 0.327280}, {0.260712, 0.432598, 0.324274}, {0.266437, 0.434872, 0.321231},
    {0.272158, 0.437104, 0.318144}, {0.277936, 0.439287, 0.315014}, {0.283702, 0.441445, 0.311851},
    {0.289496, 0.443565, 0.308693}, {0.295283, 0.445639, 0.305488}, {0.301092, 0.447691, 0.302238},
    {0.306926, 0.449724, 0.299011}, {0.312751, 0.451724, 0.295740}, {0.318604, 0.453690, 0.292469},
    {0.324451, 0.455642, 0.289199}, {0.330325, 0.457568, 0.285888}, {0.336195, 0.459485, 0.282621},
    {0.342093, 0.461377, 0.279322}, {0.347992, 0.463244, 0.276029}, {0.353894, 0.465113, 0.272709},
    {0.359826, 0.466973, 0.269431}, {0.365767, 0.468812, 0.266135}, {0.371712, 0.470643, 0.262845},
    {0.377691, 0.472465, 0.259574}, {0.383684, 0.474281, 0.256283}, {0.389685, 0.476091, 0.253037},
    {0.395726, 0.477893, 0.249771}, {0.401766, 0.479701, 0.246545}, {0.407851, 0.481493, 0.243320},
    {0.413958, 0.483287, 0.240121}, {0.420093, 0.485081, 0.236972}, {0.426256, 0.486883, 0.233782},
    {0.432473, 0.488679, 0.230657}, {0.438701, 0.490481, 0.227564}, {0.444991, 0.492275, 0.224463},
    {0.451315, 0.494081, 0.221451}, {0.457683, 0.495880, 0.218457}, {0.464119, 0.497704, 0.215499},
    {0.470592, 0.499503, 0.212598}, {0.477124, 0.501335, 0.209750}, {0.483718, 0.503148, 0.206986},
    {0.490390, 0.504986, 0.204279}, {0.497119, 0.506822, 0.201607}, {0.503925, 0.508674, 0.199059},
    {0.510799, 0.510514, 0.196645}, {0.517765, 0.512370, 0.194302}, {0.524800, 0.514240, 0.192042},
    {0.531925, 0.516093, 0.189943}, {0.539133, 0.517977, 0.188011}, {0.546437, 0.519844, 0.186186},
    {0.553814, 0.521722, 0.184533}, {0.561289, 0.523613, 0.183052}, {0.568850, 0.525495, 0.181775},
    {0.576513, 0.527379, 0.180711}, {0.584242, 0.529266, 0.179870}, {0.592071, 0.531140, 0.179261},
    {0.599969, 0.533016, 0.178895}, {0.607953, 0.534885, 0.178781}, {0.616001, 0.536753, 0.178925},
    {0.624125, 0.538604, 0.179340}, {0.632303, 0.540439, 0.180037}, {0.640539, 0.542267, 0.181021},
    {0.648824, 0.544078, 0.182304}, {0.657150, 0.545880, 0.183894}, {0.665502, 0.547652, 0.185797},
    {0.673883, 0.549415, 0.187967}, {0.682277, 0.551153, 0.190390}, {0.690681, 0.552869, 0.193140},
    {0.699086, 0.554570, 0.196174}, {0.707484, 0.556238, 0.199438}, {0.715871, 0.557897, 0.203015},
    {0.724221, 0.559534, 0.206856}, {0.732550, 0.561143, 0.210903}, {0.740830, 0.562746, 0.215195},
    {0.749071, 0.564317, 0.219744}, {0.757264, 0.565872, 0.224464}, {0.765402, 0.567423, 0.229434},
    {0.773466, 0.568950, 0.234622}, {0.781473, 0.570473, 0.239950}, {0.789403, 0.571995, 0.245479},
    {0.797250, 0.573509, 0.251216}, {0.805019, 0.575016, 0.257092}, {0.812698, 0.576542, 0.263141},
    {0.820286, 0.578050, 0.269350}, {0.827777, 0.579591, 0.275710}, {0.835167, 0.581127, 0.282209},
    {0.842450, 0.582684, 0.288850}, {0.849615, 0.584267, 0.295626}, {0.856658, 0.585875, 0.302542},
    {0.863584, 0.587496, 0.309618}, {0.870366, 0.589154, 0.316788}, {0.877016, 0.590850, 0.324081},
    {0.883526, 0.592587, 0.331497}, {0.889875, 0.594345, 0.339046}, {0.896068, 0.596152, 0.346680},
    {0.902091, 0.597997, 0.354425}, {0.907945, 0.599894, 0.362264}, {0.913611, 0.601828, 0.370186},
    {0.919085, 0.603817, 0.378206}, {0.924372, 0.605836, 0.386292}, {0.929456, 0.607922, 0.394462},
    {0.934335, 0.610037, 0.402689}, {0.939007, 0.612203, 0.410979}, {0.943463, 0.614413, 0.419312},
    {0.947702, 0.616678, 0.427687}, {0.951721, 0.618979, 0.436090}, {0.955527, 0.621309, 0.444526},
    {0.959108, 0.623692, 0.452973}, {0.962472, 0.626098, 0.461436}, {0.965622, 0.628550, 0.469910},
    {0.968564, 0.631029, 0.478373}, {0.971295, 0.633537, 0.486842}, {0.973824, 0.636073, 0.495300},
    {0.976156, 0.638632, 0.503743}, {0.978299, 0.641212, 0.512171}, {0.980263, 0.643818, 0.520581},
    {0.982051, 0.646446, 0.528982}, {0.983667, 0.649092, 0.537350}, {0.985131, 0.651749, 0.545695},
    {0.986442, 0.654414, 0.554015}, {0.987612, 0.657104, 0.562324}, {0.988649, 0.659797, 0.570592},
    {0.989567, 0.662506, 0.578856}, {0.990365, 0.665214, 0.587093}, {0.991060, 0.667944, 0.595317},
    {0.991656, 0.670676, 0.603529}, {0.992163, 0.673411, 0.611719}, {0.992587, 0.676156, 0.619906},
    {0.992936, 0.678906, 0.628077}, {0.993215, 0.681662, 0.636244}, {0.993430, 0.684427, 0.644396},
    {0.993589, 0.687202, 0.652555}, {0.993697, 0.689980, 0.660712}, {0.993759, 0.692768, 0.668876},
    {0.993779, 0.695553, 0.677040}, {0.993762, 0.698342, 0.685205}, {0.993712, 0.701146, 0.693378},
    {0.993633, 0.703953, 0.701556}, {0.993526, 0.706770, 0.709754}, {0.993395, 0.709588, 0.717957},
    {0.993243, 0.712407, 0.726173}, {0.993070, 0.715245, 0.734403}, {0.992880, 0.718081, 0.742649},
    {0.992673, 0.720922, 0.750909}, {0.992451, 0.723775, 0.759178}, {0.992216, 0.726634, 0.767469},
    {0.991967, 0.729500, 0.775780}, {0.991707, 0.732374, 0.784113}, {0.991434, 0.735249, 0.792453},
    {0.991150, 0.738129, 0.800816}, {0.990855, 0.741019, 0.809201}, {0.990547, 0.743921, 0.817596},
    {0.990229, 0.746826, 0.826015}, {0.989899, 0.749731, 0.834456}, {0.989556, 0.752649, 0.842910},
    {0.989198, 0.755579, 0.851379}, {0.988825, 0.758510, 0.859877}, {0.988437, 0.761443, 0.868391},
    {0.988035, 0.764387, 0.876910}, {0.987618, 0.767333, 0.885461}, {0.987183, 0.770290, 0.894024},
    {0.986726, 0.773249, 0.902604}, {0.986248, 0.776219, 0.911199}, {0.985748, 0.779189, 0.919810},
    {0.985226, 0.782170, 0.928436}, {0.984680, 0.785153, 0.937084}, {0.984104, 0.788138, 0.945739},
    {0.983498, 0.791132, 0.954413}, {0.982868, 0.794135, 0.963099}, {0.982206, 0.797132, 0.971799},
    {0.981508, 0.800145, 0.980512},
};

/* ------------------------------------------------------------------ */
/* sRGB and CIELAB                                                     */
/* ------------------------------------------------------------------ */

/* sRGB transfer function and primaries (IEC 61966-2-1:1999); CIELAB with
 * the D65 white (CIE 15:2004, section 8.2.1). */
static const double white_d65[3] = {0.95047, 1.0, 1.08883};

static double lin_to_srgb(double c)
{
    return c <= 0.0031308 ? 12.92 * c : 1.055 * pow(c, 1.0 / 2.4) - 0.055;
}

static double lab_finv(double t)
{
    const double d = 6.0 / 29.0;
    return t > d ? t * t * t : 3.0 * d * d * (t - 4.0 / 29.0);
}

/* Linear RGB (not clipped) of the CIELAB colour (L, a, b). */
static void lab_to_linear(double L, double a, double b, double lin[3])
{
    double fy = (L + 16.0) / 116.0, fx = fy + a / 500.0, fz = fy - b / 200.0;
    double X = white_d65[0] * lab_finv(fx), Y = white_d65[1] * lab_finv(fy);
    double Z = white_d65[2] * lab_finv(fz);
    lin[0] = 3.2406 * X - 1.5372 * Y - 0.4986 * Z;
    lin[1] = -0.9689 * X + 1.8758 * Y + 0.0415 * Z;
    lin[2] = 0.0557 * X - 0.2040 * Y + 1.0570 * Z;
}

/* Largest chroma C at lightness L and hue h (radians) that sRGB can show. */
static double gamut_chroma(double L, double h)
{
    double lo = 0.0, hi = 150.0;
    for (int it = 0; it < 30; it++) {
        double C = 0.5 * (lo + hi), lin[3];
        lab_to_linear(L, C * cos(h), C * sin(h), lin);
        int in = 1;
        for (int k = 0; k < 3; k++)
            in = in && lin[k] >= -1e-9 && lin[k] <= 1.0 + 1e-9;
        if (in)
            lo = C;
        else
            hi = C;
    }
    return lo;
}

/* ------------------------------------------------------------------ */
/* The diverging map                                                   */
/* ------------------------------------------------------------------ */

/* Design numbers (CIELAB): lightness from DIV_L_END at both ends to
 * DIV_L_CENTRE at the centre, linear in |2t - 1| (Kovesi 2015, section 3:
 * lightness carries the form of the data, so its slope is constant); the
 * chroma of both halves is the smaller of DIV_C_CAP and DIV_GAMUT_FRAC of
 * the sRGB gamut of either hue at that lightness, so the halves are equal
 * in L* and C* and differ in hue only: ink blue below zero, burnt orange
 * above (the blue-yellow axis that the red-green colour deficiencies keep). */
#define DIV_L_END 24.0
#define DIV_L_CENTRE 96.0
#define DIV_C_CAP 46.0
#define DIV_GAMUT_FRAC 0.95
#define DIV_HUE_NEG 282.0 /* degrees, CIELAB h_ab */
#define DIV_HUE_POS 58.0

static void diverging_rgb(double t, double rgb[3])
{
    double u = fabs(2.0 * t - 1.0);
    double L = DIV_L_CENTRE - (DIV_L_CENTRE - DIV_L_END) * u;
    double hn = DIV_HUE_NEG * EDDY_PI / 180.0, hp = DIV_HUE_POS * EDDY_PI / 180.0;
    double C = fmin(DIV_C_CAP, DIV_GAMUT_FRAC * fmin(gamut_chroma(L, hn), gamut_chroma(L, hp)));
    C = fmin(C, DIV_C_CAP * u / 0.05); /* no hue at all at the centre */
    double h = t < 0.5 ? hn : hp, lin[3];
    lab_to_linear(L, C * cos(h), C * sin(h), lin);
    for (int k = 0; k < 3; k++) {
        double c = lin_to_srgb(lin[k] < 0.0 ? 0.0 : (lin[k] > 1.0 ? 1.0 : lin[k]));
        rgb[k] = c < 0.0 ? 0.0 : (c > 1.0 ? 1.0 : c);
    }
}

void post_cmap_rgb(int diverging, double t, unsigned char rgb[3])
{
    if (isnan(t))
        t = 0.5;
    t = t < 0.0 ? 0.0 : (t > 1.0 ? 1.0 : t);
    if (diverging) {
        double c[3];
        diverging_rgb(t, c);
        for (int k = 0; k < 3; k++)
            rgb[k] = (unsigned char)lround(c[k] * 255.0);
    } else {
        double u = t * 255.0;
        int i = (int)u;
        if (i > 254)
            i = 254;
        double f = u - i;
        for (int k = 0; k < 3; k++)
            rgb[k] = (unsigned char)lround(
                255.0 * ((1.0 - f) * batlow_tab[i][k] + f * batlow_tab[i + 1][k]));
    }
}

/* ------------------------------------------------------------------ */
/* Series colours                                                      */
/* ------------------------------------------------------------------ */

/* The house palette, in the order the plots use it (drag, normal force,
 * then further cases of a batch).  Chosen for this project: lightness
 * from L* 33 to 76, pairwise Delta E*ab at least 36 (CIE 15:2004), the
 * first two (ink blue, amber) apart in lightness and on the blue-yellow
 * axis, so they stay apart for red-green colour deficiencies. */
static const unsigned char palette[POST_SERIES_N][3] = {
    {0x1f, 0x4e, 0x8c}, /* ink blue     */
    {0xe0, 0xa0, 0x20}, /* amber        */
    {0x23, 0x97, 0x7f}, /* sea green    */
    {0xa8, 0x33, 0x6f}, /* plum         */
    {0x6b, 0x4a, 0x1f}, /* umber        */
    {0x8c, 0xc0, 0xea}, /* pale sky     */
    {0xd8, 0x60, 0x4a}, /* terracotta   */
    {0x8a, 0x8f, 0x2a}, /* moss         */
};

/* Beyond POST_SERIES_N series: batlow from its dark end to t = RAMP_END
 * (its last fifth is too pale to read as a line on white). */
#define RAMP_END 0.8

void post_series_rgb(int k, int n, unsigned char rgb[3])
{
    if (n < 1)
        n = 1;
    k = k < 0 ? 0 : (k >= n ? n - 1 : k);
    if (n <= POST_SERIES_N) {
        for (int q = 0; q < 3; q++)
            rgb[q] = palette[k][q];
        return;
    }
    post_cmap_rgb(0, n > 1 ? RAMP_END * k / (n - 1) : 0.0, rgb);
}

void post_series_col(int k, int n, double col[3])
{
    unsigned char c[3];
    post_series_rgb(k, n, c);
    for (int q = 0; q < 3; q++)
        col[q] = c[q] / 255.0;
}

/* ------------------------------------------------------------------ */
/* Lookup tables                                                       */
/* ------------------------------------------------------------------ */

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
