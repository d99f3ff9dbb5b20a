/*
 * sol_ref.c - layered Fourier reference solution of a conducting plate
 * moving under fixed sources (see sol_ref.h for the interface).
 *
 * Method: the harmonic (layer, transfer-relation) model used for linear
 * induction machines and linear eddy-current brakes, e.g. E. M. Freeman,
 * "Travelling waves in induction machines: input impedance and equivalent
 * circuits", Proc. IEE 115 (1968) 1772 (reference from memory); its thin-
 * sheet limit is the receding-image result of W. R. Reitz, "Forces on moving
 * magnets due to eddy currents", J. Appl. Phys. 41, 2067 (1970).
 *
 * ---------------------------------------------------------------------------
 * Derivation (all quantities per metre of depth, SI)
 * ---------------------------------------------------------------------------
 * Coordinates: y is measured from the plate top, so the plate is -d <= y <= 0
 * (d = y_top - y_bot), sources at y >= 0, the yoke plane at y = yb.
 * A = A_z, B = (dA/dy, -dA/dx).  Magnet frame, plate moving at +v:
 *     -(1/mu0) lap A + sigma v dA/dx = J_source,   J_induced = -sigma v dA/dx.
 * Fourier transform along x:  A^(k, y) = integral A e^{-ikx} dx, so that for
 * real f, g:  integral f g dx = (1/pi) Re integral_0^inf f^ conj(g^) dk.
 * A harmonic A^ = a(y) e^{ikx}, k > 0, satisfies
 *     air:    a'' = k^2 a
 *     plate:  a'' = gamma^2 a,  gamma^2 = k^2 + i k kappa,  kappa = mu0 sigma v,
 *             Re gamma > 0.
 * Incident field.  In free space a source J_z gives, below all sources,
 *     a_inc = S e^{ky},  S = mu0 P / (2k),  P(k) = iint J_z e^{-ikx} e^{-ky} dx dy,
 * and above all sources a = S' e^{-ky}, S' = mu0 P'/(2k), P' with e^{+ky}.
 * A +y magnet (remanence Br) is two current sheets K = Br/mu0: +z at x0 and
 * -z at x1, each over y0..y1.  For a rectangle x0..x1, y0..y1:
 *     coil:    P = jz e^{-ik xc} w sinc(k w/2) * Y,        w = x1 - x0
 *     magnet:  P = (Br/mu0) e^{-ik xc} 2i sin(k w/2) * Y,
 *     Y = e^{-k y0} (1 - e^{-kH})/k,  H = y1 - y0,  xc the centre.
 * Plate of relative permeability m = mu_r = 1 + chi (linear):
 *     -(1/(mu0 m)) a'' + ... gives a'' = gamma^2 a, gamma^2 = k^2 + i k m kappa.
 * Below it a = E e^{ky}; inside a = C e^{gamma y} + D e^{-gamma(y+d)} (both
 * exponentials bounded by 1 in the plate).  Continuity of a and of H_x =
 * a'/(mu0 mu_r) at y = -d gives D = C rho0 e^{-gamma d},
 * rho0 = (gamma - m k)/(gamma + m k).  Above it a = alpha (e^{ky} + R e^{-ky});
 * continuity at y = 0 of a and a'/mu_r gives
 *     R = (1 - eta)/(1 + eta),  eta = gamma (1 - rho)/(m k (1 + rho)),
 *     rho = rho0 e^{-2 gamma d},
 * the transfer relation of a magnetisable conducting layer (for m = 1 the
 * formula above; for v = 0 and d -> inf, R = (m - 1)/(m + 1), the image of a
 * line current in a permeable half-space, e.g. K. J. Binns, P. J. Lawrenson,
 * C. W. Trowbridge, "The Analytical and Numerical Solution of Electric and
 * Magnetic Fields", Wiley 1992, ch. 2 (reference from memory)).  Multiplying
 * through by (gamma + m k) and writing G = gamma^2 - m^2 k^2 = k^2 (1 - m^2)
 * + i k m kappa exactly (no cancellation), gamma - m k = G / (gamma + m k),
 * E2 = 1 - e^{-2 gamma d} evaluated as -expm1, the stable forms used below:
 *     Den = (gamma + m k)^2 - e^{-2 gamma d} (gamma - m k)^2
 *     R   = -G E2 / Den
 *     C   = alpha * 2 m k (gamma + m k) / Den    (= alpha (1+R)/(1+rho))
 *     D   = alpha * 2 m k (gamma - m k) e^{-gamma d} / Den.
 * For m = 1, R -> 0 for v -> 0; for a thin sheet (gamma d << 1)
 * R -> -i v/(w + i v), w = 2/(mu0 sigma d), Reitz's receding image.
 * Yoke (mu -> inf half space above y = yb): dA/dy = 0 there.  With the
 * homogeneous waves U e^{ky} + W e^{-ky} added to the free-space source field,
 * W = R (S + U), U = q (S' + W), q = e^{-2k yb}, so the wave hitting the plate
 * has amplitude
 *     alpha = (S + q S') / (1 - q R)    (alpha = S without a yoke),
 * q S' = mu0/(2k) iint J e^{-ikx} e^{k(y - 2 yb)} is formed as one exponential.
 * Write k alpha = (mu0/2) Qt, Qt = (P + q P')/(1 - q R).
 *
 * Force on the plate from the Maxwell stress on a line in the gap (the line
 * far below carries no stress for k > 0):
 *     F_x = (1/mu0) integral B_x B_y dx,  F_y = (1/(2 mu0)) integral (B_y^2 - B_x^2) dx.
 * With a = alpha (e^{ky} + R e^{-ky}):  Im(a' conj a) = -2 k |alpha|^2 Im R and
 * k^2 |a|^2 - |a'|^2 = 4 k^2 |alpha|^2 Re R, hence
 *     F_x = integral_0^inf g_x dk,  g_x = (2/(pi mu0)) k^2 |alpha|^2 Im R = (mu0/(2 pi)) |Qt|^2 Im R
 *     F_y = integral_0^inf g_y dk,  g_y = (mu0/(2 pi)) |Qt|^2 Re R.
 * Loss, from the field inside the plate: J^ = -i k sigma v a, so
 *     P_loss = integral_0^inf g_l dk,  g_l = (1/pi) sigma v^2 k^2 int_{-d}^0 |a|^2 dy
 *            = (mu0^2 sigma v^2 / (4 pi)) |Qt|^2 Ihat,
 *     Ihat = int |c e^{gamma y} + dd e^{-gamma(y+d)}|^2 dy   (c = C/alpha, dd = D/alpha)
 *          = (|c|^2 + |dd|^2) L1 + 2 Z Re(c conj dd),
 *     L1 = (1 - e^{-2 gr d})/(2 gr),  Z = e^{-gr d} d sinc(gi d),  gamma = gr + i gi.
 * Lift from the Lorentz force inside the plate, f_y = J_z B_x = J_z dA/dy:
 *     g_yl = (1/pi) sigma v k Im int a conj(a') dy
 *          = (mu0^2 sigma v / (4 pi k)) |Qt|^2 Im I2,
 *     I2 = conj(gamma) [ (|c|^2 - |dd|^2) L1 + 2 i Z Im(dd conj c) ].
 * (For m != 1 the lift g_yl is the force on the free currents only; the
 * whole normal force, with the force on the plate's magnetisation, is g_y.)
 * Bounds (used for the series tail): Green's identity on the plate,
 *     conj(a) a' |_{y=0} = m k |a(-d)|^2 + int |a'|^2 + gamma^2 int |a|^2,
 * with a(0) = 1 + R, a'(0) = m k (1 - R) (alpha = 1) gives
 *     real part:  m k (1 - |R|^2) = m k |a(-d)|^2 + int |a'|^2 + k^2 Ihat  => |R| < 1,
 *                 Ihat <= m/k, int |a'|^2 <= m k;
 *     imag part:  -Im R = kappa Ihat / 2 (any m), and for m = 1 likewise
 *                 Re R = kappa Im I2 / (2k) with |I2| <= 1 (Cauchy-Schwarz),
 * hence |Im R| <= min(1, m |kappa|/(2k)), and for m = 1 |Re R| <= min(1,
 * |kappa|/(2k)); for m != 1 only |Re R| < 1 (a static attraction remains).
 * Power balance -v g_x = g_l and g_y = g_yl hold harmonic by harmonic
 * (Green's identity on the plate); they are computed by different formulas,
 * so agreement checks R against the field inside the plate.
 * Periodic sources, period lambda, k_n = 2 pi n/lambda, P_n = P(k_n)/lambda:
 * by Parseval over one period, integral f g dx = 2 lambda Re sum_{n>=1} f_n conj g_n,
 * the per-period results are  F = dk sum_{n>=1} g(k_n),  dk = 2 pi/lambda
 * (n = 0 carries no B_y and no current).  For a wide period this is the
 * rectangle rule of the isolated integral, a built-in consistency check.
 *
 * Numerics.  Isolated: adaptive Gauss-Kronrod G7-K15 (QUADPACK error
 * heuristic) on k = kh u/(1-u), u in [0, 1), with initial breakpoints in
 * geometric progression (ratio 4) across all length scales of the problem
 * (gap, source sizes and span, d, 1/kappa, kappa d^2, yoke distances), global
 * bisection of the interval with the largest error relative to its target.
 * Periodic: direct summation until a rigorous upper bound of the remaining
 * tail (|R| < 1, |P| bounded by a decreasing envelope) is below the target.
 */
#include "solver/sol_ref.h"

#include <complex.h>
#include <float.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>


#define REF_MAX_INTERVALS 4000  /* adaptive quadrature budget (x 30 evaluations) */
#define REF_MAX_HARMONICS 4000000L
#define REF_NCOMP 4             /* force_x, force_y, loss, force_y_lorentz */

/* One source in plate coordinates (y from the plate top, x from a reference). */
typedef struct {
    int magnet;
    double xc, w;    /* m, centre and width */
    double y0, h;    /* m, bottom above plate top, height */
    double y1;       /* m, top above plate top */
    double amp;      /* coil: jz (A/m^2); magnet: Br/mu0 (A/m) */
} ref_src;

typedef struct {
    const ref_src *s;
    int ns;
    double d;        /* m, plate thickness */
    double sigma, v; /* S/m, m/s */
    double kappa;    /* 1/m, mu0 sigma v (signed) */
    double mur;      /* plate relative permeability m = 1 + chi */
    int yoke;
    double yb;       /* m, yoke plane above plate top */
    double y0min;    /* m, smallest gap between plate top and a source */
    double hmin;     /* m, smallest source height */
    long n_eval;
} ref_ctx;

/* sin(x)/x */
static double ref_sinc(double x)
{
    if (fabs(x) < 1e-4)
        return 1.0 - x * x / 6.0;
    return sin(x) / x;
}

/* (1 - e^{-k h})/k for k > 0, h > 0 */
static double ref_phi(double k, double h)
{
    return -expm1(-k * h) / k;
}

/* e^z - 1 for complex z, accurate for small |z| */
static double complex ref_cexpm1(double complex z)
{
    double x = creal(z), y = cimag(z);
    double sh = sin(0.5 * y);
    double re = expm1(x) * cos(y) - 2.0 * sh * sh;
    double im = exp(x) * sin(y);
    return CMPLX(re, im);
}

/* Densities g[0..3] = (g_x, g_y, g_l, g_yl) per unit k at wavenumber k > 0
 * (isolated normalisation; see the derivation above). */
static void ref_eval(ref_ctx *c, double k, double g[REF_NCOMP])
{
    double complex P = 0.0, Pq = 0.0;
    double mu0 = EDDY_MU0;
    c->n_eval++;
    for (int i = 0; i < c->ns; i++) {
        const ref_src *s = &c->s[i];
        double complex ph = CMPLX(cos(k * s->xc), -sin(k * s->xc));
        double complex X;
        if (s->magnet)
            X = CMPLX(0.0, 2.0 * s->amp * sin(0.5 * k * s->w));
        else
            X = s->amp * s->w * ref_sinc(0.5 * k * s->w);
        double phi = ref_phi(k, s->h);
        P += ph * X * (exp(-k * s->y0) * phi);
        if (c->yoke)
            Pq += ph * X * (exp(k * (s->y1 - 2.0 * c->yb)) * phi);
    }

    double kappa = c->kappa, d = c->d;
    double m = c->mur, mk = m * k;
    /* G = gamma^2 - m^2 k^2, formed exactly */
    double complex G = CMPLX(k * k * (1.0 - m) * (1.0 + m), k * m * kappa);
    double complex gam = csqrt(CMPLX(k * k, k * m * kappa));
    double complex gpk = gam + mk;
    double complex gmk = G / gpk;                     /* gamma - m k */
    double complex e1 = cexp(-gam * d);               /* e^{-gamma d} */
    double complex e2 = e1 * e1;                      /* e^{-2 gamma d} */
    double complex E2 = -ref_cexpm1(-2.0 * gam * d);  /* 1 - e^{-2 gamma d} */
    double complex den = gpk * gpk - e2 * gmk * gmk;
    double complex R = -G * E2 / den;
    double complex cc = 2.0 * mk * gpk / den;
    double complex dd = 2.0 * mk * gmk * e1 / den;

    double complex Q = P;
    if (c->yoke) {
        double q = exp(-2.0 * k * c->yb);
        Q = (P + Pq) / (1.0 - q * R);
    }
    double q2 = creal(Q) * creal(Q) + cimag(Q) * cimag(Q);

    double gr = creal(gam), gi = cimag(gam);
    double L1 = -expm1(-2.0 * gr * d) / (2.0 * gr);
    double Z = exp(-gr * d) * d * ref_sinc(gi * d);
    double c2 = creal(cc * conj(cc)), d2 = creal(dd * conj(dd));
    double complex dcc = dd * conj(cc);
    double ihat = (c2 + d2) * L1 + 2.0 * Z * creal(dcc);
    double complex i2 = conj(gam) * CMPLX((c2 - d2) * L1, 2.0 * Z * cimag(dcc));

    g[0] = mu0 / (2.0 * EDDY_PI) * q2 * cimag(R);
    g[1] = mu0 / (2.0 * EDDY_PI) * q2 * creal(R);
    g[2] = mu0 * mu0 * c->sigma * c->v * c->v / (4.0 * EDDY_PI) * q2 * ihat;
    g[3] = mu0 * mu0 * c->sigma * c->v / (4.0 * EDDY_PI * k) * q2 * cimag(i2);
}

/* Upper bound of every force density at k (|g_x|, |g_y|, |g_yl|; g_l <= |v| times
 * it), non-increasing in k: |P + q P'| / (1 - q) bounded per source, squared,
 * times the prefactor, times the bound of |Im R| and |Re R|, min(1, |kappa|/(2k))
 * (see the derivation: |R| < 1, Ihat <= 1/k, |I2| <= 1). */
static double ref_envelope(const ref_ctx *c, double k)
{
    double pb = 0.0;
    for (int i = 0; i < c->ns; i++) {
        const ref_src *s = &c->s[i];
        double xb = s->magnet ? 2.0 * fabs(s->amp) : fabs(s->amp) * fmin(s->w, 2.0 / k);
        pb += xb * exp(-k * s->y0) * fmin(s->h, 1.0 / k);
    }
    double fac = 1.0;
    if (c->yoke) {
        double omq = -expm1(-2.0 * k * c->yb);
        fac = 2.0 / omq;
    }
    pb *= fac;
    double rbound = c->mur == 1.0 ? fmin(1.0, fabs(c->kappa) / (2.0 * k)) : 1.0;
    return EDDY_MU0 / (2.0 * EDDY_PI) * pb * pb * rbound;
}

/* ---------------------------------------------------------------- quadrature */

static const double gk_x[8] = {
    0.991455371120812639206854697526329, 0.949107912342758524526189684047851,
    0.864864423359769072789712788640926, 0.741531185599394439863864773280788,
    0.586087235467691130294144845693013, 0.405845151377397166906606412076961,
    0.207784955007898467600689403773245, 0.000000000000000000000000000000000};
static const double gk_wk[8] = {
    0.022935322010529224963732008058970, 0.063092092629978553290700663189204,
    0.104790010322250183839876322541518, 0.140653259715525918745189590510238,
    0.169004726639267902826583426598550, 0.190350578064785409913256402421014,
    0.204432940075298892414161999234649, 0.209482141084727828012999174891714};
static const double gk_wg[4] = {
    0.129484966168869693270611432679082, 0.279705391489276667901467771423780,
    0.381830050505118944950369775488975, 0.417959183673469387755102040816327};

typedef struct {
    double a, b;
    double r[REF_NCOMP], e[REF_NCOMP];
    int tiny; /* too narrow to split further */
} ref_iv;

/* integrand in u: g(k(u)) dk/du, k = kh u/(1-u) */
static void ref_f_u(ref_ctx *c, double kh, double u, double f[REF_NCOMP])
{
    double om = 1.0 - u;
    double k = kh * u / om;
    double jac = kh / (om * om);
    ref_eval(c, k, f);
    for (int j = 0; j < REF_NCOMP; j++)
        f[j] *= jac;
}

/* G7-K15 on [iv->a, iv->b] with the QUADPACK error heuristic. */
static void ref_gk15(ref_ctx *c, double kh, ref_iv *iv)
{
    double centr = 0.5 * (iv->a + iv->b), hl = 0.5 * (iv->b - iv->a);
    double fv[15][REF_NCOMP];
    ref_f_u(c, kh, centr, fv[14]);
    for (int j = 0; j < 7; j++) {
        ref_f_u(c, kh, centr - hl * gk_x[j], fv[2 * j]);
        ref_f_u(c, kh, centr + hl * gk_x[j], fv[2 * j + 1]);
    }
    for (int m = 0; m < REF_NCOMP; m++) {
        double fc = fv[14][m];
        double resk = gk_wk[7] * fc, resg = gk_wg[3] * fc, resabs = fabs(resk);
        for (int j = 0; j < 7; j++) {
            double f1 = fv[2 * j][m], f2 = fv[2 * j + 1][m];
            resk += gk_wk[j] * (f1 + f2);
            resabs += gk_wk[j] * (fabs(f1) + fabs(f2));
            if (j % 2 == 1)
                resg += gk_wg[j / 2] * (f1 + f2);
        }
        double reskh = 0.5 * resk;
        double resasc = gk_wk[7] * fabs(fc - reskh);
        for (int j = 0; j < 7; j++)
            resasc += gk_wk[j] * (fabs(fv[2 * j][m] - reskh) + fabs(fv[2 * j + 1][m] - reskh));
        double res = resk * hl;
        resabs *= fabs(hl);
        resasc *= fabs(hl);
        double abserr = fabs((resk - resg) * hl);
        if (resasc != 0.0 && abserr != 0.0)
            abserr = resasc * fmin(1.0, pow(200.0 * abserr / resasc, 1.5));
        if (resabs > DBL_MIN / (50.0 * DBL_EPSILON))
            abserr = fmax(50.0 * DBL_EPSILON * resabs, abserr);
        iv->r[m] = res;
        iv->e[m] = abserr;
    }
}

static void ref_targets(double rel_tol, const double tot[REF_NCOMP], double tol[REF_NCOMP])
{
    double fscale = fabs(tot[0]) + fabs(tot[1]);
    tol[0] = rel_tol * fabs(tot[0]) + 1e-14 * fscale;
    tol[1] = rel_tol * fabs(tot[1]) + 1e-14 * fscale;
    tol[2] = rel_tol * fabs(tot[2]) + 1e-14 * fabs(tot[2]);
    tol[3] = rel_tol * fabs(tot[3]) + 1e-14 * fscale;
    for (int m = 0; m < REF_NCOMP; m++)
        if (!(tol[m] > 0.0))
            tol[m] = DBL_MIN;
}

static eddy_status ref_isolated(ref_ctx *c, const ref_src *s, double rel_tol,
                                double res[REF_NCOMP], double errs[REF_NCOMP], eddy_error *err)
{
    /* length scales -> wavenumber scales */
    double kmin = INFINITY, kmax = 0.0;
    double xlo = INFINITY, xhi = -INFINITY, wmin = INFINITY, y1max = 0.0;
    for (int i = 0; i < c->ns; i++) {
        xlo = fmin(xlo, s[i].xc - 0.5 * s[i].w);
        xhi = fmax(xhi, s[i].xc + 0.5 * s[i].w);
        wmin = fmin(wmin, s[i].w);
        y1max = fmax(y1max, s[i].y1);
    }
    double scales[10];
    int ns = 0;
    if (c->y0min > 0.0)
        scales[ns++] = 1.0 / c->y0min;
    scales[ns++] = 1.0 / c->hmin;
    scales[ns++] = 1.0 / wmin;
    scales[ns++] = 1.0 / (xhi - xlo);
    scales[ns++] = 1.0 / c->d;
    scales[ns++] = c->mur * fabs(c->kappa);
    scales[ns++] = 1.0 / (c->mur * fabs(c->kappa) * c->d * c->d);
    if (c->yoke) {
        scales[ns++] = 1.0 / c->yb;
        if (c->yb > y1max)
            scales[ns++] = 1.0 / (c->yb - y1max);
    }
    for (int i = 0; i < ns; i++) {
        if (isfinite(scales[i]) && scales[i] > 0.0) {
            kmin = fmin(kmin, scales[i]);
            kmax = fmax(kmax, scales[i]);
        }
    }
    if (c->y0min > 0.0)
        kmax = fmin(kmax, 40.0 / c->y0min); /* e^{-2 k y0} < 2e-35 beyond */
    double klo = 1e-3 * kmin;
    if (!(kmax > 4.0 * klo))
        kmax = 4.0 * klo;
    double kh = kmax;

    ref_iv *iv = malloc(REF_MAX_INTERVALS * sizeof *iv);
    if (iv == NULL)
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "reference solver: cannot allocate %d intervals",
                          REF_MAX_INTERVALS);
    int n = 0;
    /* [0, klo], geometric panels klo..kh, then [kh, inf) = u in [0.5, 1) */
    double ka = 0.0, kb = klo;
    for (;;) {
        iv[n].a = ka / (ka + kh);
        iv[n].b = kb / (kb + kh);
        iv[n].tiny = 0;
        ref_gk15(c, kh, &iv[n]);
        n++;
        if (kb >= kh)
            break;
        ka = kb;
        kb = fmin(4.0 * kb, kh);
        if (kh - kb < 1e-9 * kh)
            kb = kh;
    }
    iv[n].a = 0.5;
    iv[n].b = 1.0;
    iv[n].tiny = 0;
    ref_gk15(c, kh, &iv[n]);
    n++;

    eddy_status st = EDDY_OK;
    double tot[REF_NCOMP], etot[REF_NCOMP], tol[REF_NCOMP];
    for (;;) {
        for (int m = 0; m < REF_NCOMP; m++)
            tot[m] = etot[m] = 0.0;
        for (int i = 0; i < n; i++)
            for (int m = 0; m < REF_NCOMP; m++) {
                tot[m] += iv[i].r[m];
                etot[m] += iv[i].e[m];
            }
        ref_targets(rel_tol, tot, tol);
        int done = 1;
        for (int m = 0; m < REF_NCOMP; m++)
            if (etot[m] > tol[m])
                done = 0;
        if (done)
            break;
        int worst = -1;
        double wval = 0.0;
        for (int i = 0; i < n; i++) {
            if (iv[i].tiny)
                continue;
            double val = 0.0;
            for (int m = 0; m < REF_NCOMP; m++)
                val = fmax(val, iv[i].e[m] / tol[m]);
            if (val > wval) {
                wval = val;
                worst = i;
            }
        }
        if (worst < 0 || n + 1 > REF_MAX_INTERVALS) {
            st = EDDY_RAISE(err, EDDY_ERR_NUMERIC,
                            "reference solver: k integral did not reach rel_tol %.3g within %d "
                            "intervals (estimated rel. error of force_x %.3g)",
                            rel_tol, n, etot[0] / fmax(fabs(tot[0]), DBL_MIN));
            break;
        }
        double a = iv[worst].a, b = iv[worst].b, mid = 0.5 * (a + b);
        if (!(mid > a && mid < b) || (b - a) < 8.0 * DBL_EPSILON * fmax(fabs(a), fabs(b))) {
            iv[worst].tiny = 1;
            continue;
        }
        iv[worst].b = mid;
        ref_gk15(c, kh, &iv[worst]);
        iv[n].a = mid;
        iv[n].b = b;
        iv[n].tiny = 0;
        ref_gk15(c, kh, &iv[n]);
        n++;
    }
    for (int m = 0; m < REF_NCOMP; m++) {
        res[m] = tot[m];
        errs[m] = etot[m];
    }
    free(iv);
    return st;
}

static eddy_status ref_periodic(ref_ctx *c, double lambda, double rel_tol,
                                double res[REF_NCOMP], double errs[REF_NCOMP], eddy_error *err)
{
    double dk = 2.0 * EDDY_PI / lambda;
    double ratio = c->y0min > 0.0 ? exp(-2.0 * dk * c->y0min) : 1.0;
    double geo = ratio < 1.0 ? ratio / (1.0 - ratio) : INFINITY;
    double kpow = 1.0 / c->hmin, kcut = c->mur == 1.0 ? 0.5 * fabs(c->kappa) : INFINITY;
    double sum[REF_NCOMP] = {0.0, 0.0, 0.0, 0.0}, tol[REF_NCOMP];
    double envsum = 0.0, tail = INFINITY;
    double absv = fabs(c->v);
    eddy_status st = EDDY_OK;
    for (long n = 1;; n++) {
        double k = dk * (double)n, g[REF_NCOMP];
        ref_eval(c, k, g);
        for (int m = 0; m < REF_NCOMP; m++)
            sum[m] += dk * g[m];
        double env = dk * ref_envelope(c, k);
        envsum += env;
        /* bound of sum_{m > n} env_m: env decays at least like e^{-2 dk y0min} per
         * term; once k >= 1/hmin at least like k^-2 (sum_{m>n} (n/m)^2 <= n), and
         * once also k >= |kappa|/2 like k^-3 (sum_{m>n} (n/m)^3 <= n/2) */
        double mult = geo;
        if (k >= kpow)
            mult = fmin(mult, k >= kcut ? 0.5 * (double)n : (double)n);
        tail = env > 0.0 ? env * mult : 0.0;
        ref_targets(rel_tol, sum, tol);
        double floor_f = 1e-16 * envsum; /* ends an (exactly) zero sum */
        if (tail <= tol[0] + floor_f && tail <= tol[1] + floor_f && tail <= tol[3] + floor_f &&
            absv * tail <= tol[2] + absv * floor_f)
            break;
        if (n >= REF_MAX_HARMONICS) {
            st = EDDY_RAISE(err, EDDY_ERR_NUMERIC,
                            "reference solver: harmonic series did not reach rel_tol %.3g in %ld "
                            "terms (tail bound %.3g of force_x %.3g)",
                            rel_tol, n, tail, sum[0]);
            break;
        }
    }
    for (int m = 0; m < REF_NCOMP; m++) {
        res[m] = sum[m];
        errs[m] = (m == 2 ? absv : 1.0) * tail + 1e-15 * fabs(sum[m]);
    }
    return st;
}

/* ---------------------------------------------------------------- driver */

eddy_status sol_ref_solve(const sol_ref_problem *p, const sol_ref_source *src, int nsrc,
                          double v, sol_ref_result *out, eddy_error *err)
{
    if (out != NULL)
        memset(out, 0, sizeof *out);
    if (p == NULL || out == NULL)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "reference solver: NULL problem or result");
    if (nsrc < 1 || src == NULL)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "reference solver: need at least one source (nsrc = %d)",
                          nsrc);
    if (!isfinite(v))
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "reference solver: speed v is not finite");
    if (!isfinite(p->sigma) || p->sigma < 0.0)
        return EDDY_RAISE(err, EDDY_ERR_INPUT,
                          "reference solver: plate conductivity sigma = %g S/m must be finite and >= 0",
                          p->sigma);
    if (!isfinite(p->chi) || p->chi < 0.0 || p->chi > 1e6)
        return EDDY_RAISE(err, EDDY_ERR_INPUT,
                          "reference solver: plate susceptibility chi = %g must lie in [0, 1e6]",
                          p->chi);
    if (!isfinite(p->y_bot) || !isfinite(p->y_top) || !(p->y_top > p->y_bot))
        return EDDY_RAISE(err, EDDY_ERR_INPUT,
                          "reference solver: plate y_bot = %g m, y_top = %g m: need finite y_top > y_bot",
                          p->y_bot, p->y_top);
    if (p->periodic != 0 && p->periodic != 1)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "reference solver: periodic must be 0 or 1 (got %d)",
                          p->periodic);
    if (p->has_yoke != 0 && p->has_yoke != 1)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "reference solver: has_yoke must be 0 or 1 (got %d)",
                          p->has_yoke);
    if (p->periodic && (!isfinite(p->lambda) || !(p->lambda > 0.0)))
        return EDDY_RAISE(err, EDDY_ERR_INPUT,
                          "reference solver: period lambda = %g m must be finite and > 0", p->lambda);
    if (p->has_yoke && (!isfinite(p->y_yoke) || !(p->y_yoke > p->y_top)))
        return EDDY_RAISE(err, EDDY_ERR_INPUT,
                          "reference solver: yoke plane y_yoke = %g m must be finite and above the "
                          "plate top %g m",
                          p->y_yoke, p->y_top);
    if (!isfinite(p->rel_tol) || p->rel_tol < 1e-11 || p->rel_tol > 0.1)
        return EDDY_RAISE(err, EDDY_ERR_INPUT,
                          "reference solver: rel_tol = %g must lie in [1e-11, 0.1]", p->rel_tol);

    double xlo = INFINITY, xhi = -INFINITY;
    int any = 0;
    for (int i = 0; i < nsrc; i++) {
        const sol_ref_source *s = &src[i];
        if (s->kind != SOL_REF_COIL && s->kind != SOL_REF_MAGNET)
            return EDDY_RAISE(err, EDDY_ERR_INPUT, "reference solver: source %d: unknown kind %d", i,
                              (int)s->kind);
        if (!isfinite(s->x0) || !isfinite(s->x1) || !isfinite(s->y0) || !isfinite(s->y1))
            return EDDY_RAISE(err, EDDY_ERR_INPUT,
                              "reference solver: source %d: non-finite coordinates", i);
        if (!(s->x1 > s->x0) || !(s->y1 > s->y0))
            return EDDY_RAISE(err, EDDY_ERR_INPUT,
                              "reference solver: source %d: need x1 > x0 and y1 > y0 "
                              "(got x %g..%g m, y %g..%g m)",
                              i, s->x0, s->x1, s->y0, s->y1);
        if (!(s->y0 >= p->y_top))
            return EDDY_RAISE(err, EDDY_ERR_INPUT,
                              "reference solver: source %d: bottom y0 = %g m is below the plate top "
                              "%g m",
                              i, s->y0, p->y_top);
        if (p->has_yoke && !(s->y1 <= p->y_yoke))
            return EDDY_RAISE(err, EDDY_ERR_INPUT,
                              "reference solver: source %d: top y1 = %g m is above the yoke plane "
                              "%g m",
                              i, s->y1, p->y_yoke);
        double strength = s->kind == SOL_REF_COIL ? s->jz : s->br_y;
        if (!isfinite(strength))
            return EDDY_RAISE(err, EDDY_ERR_INPUT,
                              "reference solver: source %d: %s is not finite", i,
                              s->kind == SOL_REF_COIL ? "jz" : "br_y");
        if (strength != 0.0)
            any = 1;
        xlo = fmin(xlo, s->x0);
        xhi = fmax(xhi, s->x1);
    }
    if (p->periodic && xhi - xlo > p->lambda * (1.0 + 1e-12))
        return EDDY_RAISE(err, EDDY_ERR_INPUT,
                          "reference solver: sources span %g m along x, more than one period %g m",
                          xhi - xlo, p->lambda);

    if (!any || ((v == 0.0 || p->sigma == 0.0) && p->chi == 0.0))
        return EDDY_OK; /* no induced current and no magnetisation: all zero */

    ref_src *rs = malloc((size_t)nsrc * sizeof *rs);
    if (rs == NULL)
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "reference solver: cannot allocate %d sources", nsrc);
    double xref = 0.5 * (xlo + xhi);
    ref_ctx c;
    memset(&c, 0, sizeof c);
    c.s = rs;
    c.ns = nsrc;
    c.d = p->y_top - p->y_bot;
    c.sigma = p->sigma;
    c.v = v;
    c.kappa = EDDY_MU0 * p->sigma * v;
    c.mur = 1.0 + p->chi;
    c.yoke = p->has_yoke;
    c.yb = p->has_yoke ? p->y_yoke - p->y_top : 0.0;
    c.y0min = INFINITY;
    c.hmin = INFINITY;
    for (int i = 0; i < nsrc; i++) {
        const sol_ref_source *s = &src[i];
        rs[i].magnet = s->kind == SOL_REF_MAGNET;
        rs[i].xc = 0.5 * (s->x0 + s->x1) - xref;
        rs[i].w = s->x1 - s->x0;
        rs[i].y0 = s->y0 - p->y_top;
        rs[i].y1 = s->y1 - p->y_top;
        rs[i].h = s->y1 - s->y0;
        rs[i].amp = rs[i].magnet ? s->br_y / EDDY_MU0 : s->jz;
        c.y0min = fmin(c.y0min, rs[i].y0);
        c.hmin = fmin(c.hmin, rs[i].h);
    }

    double res[REF_NCOMP], errs[REF_NCOMP];
    eddy_status st = p->periodic ? ref_periodic(&c, p->lambda, p->rel_tol, res, errs, err)
                                 : ref_isolated(&c, rs, p->rel_tol, res, errs, err);
    free(rs);
    if (st != EDDY_OK && st != EDDY_ERR_NUMERIC)
        return st;
    for (int m = 0; m < REF_NCOMP; m++)
        if (!isfinite(res[m]))
            return EDDY_RAISE(err, EDDY_ERR_NUMERIC, "reference solver: non-finite result");
    out->force_x = res[0];
    out->force_y = res[1];
    out->loss = res[2];
    out->force_y_lorentz = res[3];
    out->err_x = errs[0];
    out->err_y = errs[1];
    out->err_loss = errs[2];
    out->err_y_lorentz = errs[3];
    out->n_eval = c.n_eval;
    return st;
}
