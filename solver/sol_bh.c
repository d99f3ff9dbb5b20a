/*
 * sol_bh.c - the reluctivity nu(B^2) of a saturable material from its B-H
 * curve, smooth enough for Newton-Raphson.
 *
 * 2D magnetostatics with a saturable material is written with the
 * reluctivity as a function of the square of the flux density, H = nu(b) B,
 * b = |B|^2 (A. Marrocco, "Analyse numerique de problemes d'electrotechnique",
 * Ann. Sci. Math. Quebec 1, 1977).  Newton's Jacobian needs d nu / d b, so nu
 * must be C^1 in b, and the problem has one solution when the curve is
 * monotone: dH/dB = nu + 2 b dnu/db > 0.
 *
 * Construction, from the points (B_k, H_k), k = 0..n-1, (B_0, H_0) = (0, 0),
 * both strictly increasing (checked):
 *
 *  - H(B) is the monotone piecewise cubic Hermite interpolant of Fritsch and
 *    Carlson ("Monotone piecewise cubic interpolation", SIAM J. Numer. Anal.
 *    17, 1980): slopes m_k = mean of the neighbouring secants (the secant at
 *    the ends), then on each interval with secant d_k, if
 *    (m_k/d_k)^2 + (m_{k+1}/d_k)^2 > 9 both are scaled down onto that circle.
 *    All secants are positive, so every slope is positive and H strictly
 *    increases: dH/dB > 0 everywhere.  nu = H(B) / B.
 *
 *  - On the first interval [0, B_1] a cubic in B would make nu depend on
 *    sqrt(b) near b = 0 (no derivative in b there).  Instead
 *        nu(b) = d_0 + r b (b - b_1),   b_1 = B_1^2,  r = (m_1 - d_0) / (2 B_1^4),
 *    i.e. H = B (d_0 + r B^2 (B^2 - B_1^2)), a polynomial in b with
 *    nu(0) = d_0 = H_1 / B_1 (the initial permeability is the first secant),
 *    H(B_1) = H_1 and dH/dB(B_1) = m_1, so H and nu are C^1 at B_1.
 *    dH/dB = d_0 + (m_1 - d_0)(5 s^2 - 3 s)/2 with s = (B/B_1)^2, positive on
 *    [0, 1] when m_1 < 5.4 d_0, which the Fritsch-Carlson limit m_1 <= 3 d_0
 *    guarantees.
 *
 *  - Beyond the last point B_N the differential reluctivity relaxes
 *    exponentially from the last slope m_N to 1/mu0:
 *        dH/dB = nu0 + (m_N - nu0) e^{-(B - B_N)/beta},  beta = B_N - B_{N-1},
 *    so H stays C^1, strictly increasing, and the polarisation B - mu0 H
 *    saturates at (B_N - mu0 H_N) + beta (1 - mu0 m_N).
 *
 * Everywhere dnu/db = (dH/dB - nu) / (2 b) (b > 0), evaluated per interval in
 * closed form.
 */
#include "solver/sol.h"

#include <math.h>
#include <string.h>

/* Hermite basis on t in [0, 1] and its derivative. */
static void hermite(double t, double *h00, double *h10, double *h01, double *h11, double *d00,
                    double *d10, double *d01, double *d11)
{
    double t2 = t * t, t3 = t2 * t;
    *h00 = 2.0 * t3 - 3.0 * t2 + 1.0;
    *h10 = t3 - 2.0 * t2 + t;
    *h01 = -2.0 * t3 + 3.0 * t2;
    *h11 = t3 - t2;
    *d00 = 6.0 * t2 - 6.0 * t;
    *d10 = 3.0 * t2 - 4.0 * t + 1.0;
    *d01 = -6.0 * t2 + 6.0 * t;
    *d11 = 3.0 * t2 - 2.0 * t;
}

eddy_status sol_bh_build(const mesh_bh_curve *c, sol_bh *out, eddy_error *err)
{
    memset(out, 0, sizeof *out);
    int n = c->n;
    if (n < 3 || n > MESH_BH_MAX)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "B-H curve: needs 3 to %d points, got %d",
                          MESH_BH_MAX, n);
    if (c->h[0] != 0.0 || c->b[0] != 0.0)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "B-H curve: must start at (0, 0)");
    for (int k = 1; k < n; k++)
        if (!isfinite(c->h[k]) || !isfinite(c->b[k]) || !(c->h[k] > c->h[k - 1]) ||
            !(c->b[k] > c->b[k - 1]))
            return EDDY_RAISE(err, EDDY_ERR_INPUT,
                              "B-H curve: point %d ([%g A/m, %g T]) does not increase strictly "
                              "in H and B; the curve is not monotone",
                              k, c->h[k], c->b[k]);
    out->n = n;
    double d[MESH_BH_MAX];
    for (int k = 0; k < n; k++) {
        out->bb[k] = c->b[k];
        out->hh[k] = c->h[k];
    }
    for (int k = 0; k + 1 < n; k++)
        d[k] = (c->h[k + 1] - c->h[k]) / (c->b[k + 1] - c->b[k]);
    out->m[0] = d[0];
    out->m[n - 1] = d[n - 2];
    for (int k = 1; k + 1 < n; k++)
        out->m[k] = 0.5 * (d[k - 1] + d[k]);
    for (int k = 0; k + 1 < n; k++) {
        double a = out->m[k] / d[k], b = out->m[k + 1] / d[k], s = a * a + b * b;
        if (s > 9.0) {
            double tau = 3.0 / sqrt(s);
            out->m[k] = tau * a * d[k];
            out->m[k + 1] = tau * b * d[k];
        }
    }
    double b1 = c->b[1];
    out->nu_init = d[0];
    out->r = (out->m[1] - d[0]) / (2.0 * b1 * b1 * b1 * b1);
    out->beta = c->b[n - 1] - c->b[n - 2];
    return EDDY_OK;
}

void sol_bh_eval(const sol_bh *c, double b2, double *nu, double *dnu_db2)
{
    const double nu0 = 1.0 / EDDY_MU0;
    double b1 = c->bb[1] * c->bb[1];
    if (!(b2 > 0.0))
        b2 = 0.0;
    if (b2 <= b1) { /* first interval: a polynomial in b */
        *nu = c->nu_init + c->r * b2 * (b2 - b1);
        *dnu_db2 = c->r * (2.0 * b2 - b1);
        return;
    }
    double bm = sqrt(b2), h, dh;
    int n = c->n;
    if (bm >= c->bb[n - 1]) { /* beyond the last point: slope relaxes to mu0 */
        double s = bm - c->bb[n - 1], e = exp(-s / c->beta), mN = c->m[n - 1];
        h = c->hh[n - 1] + nu0 * s - (mN - nu0) * c->beta * expm1(-s / c->beta);
        dh = nu0 + (mN - nu0) * e;
    } else {
        int lo = 1, hi = n - 1; /* bb[lo] <= bm < bb[hi] */
        while (hi - lo > 1) {
            int mid = (lo + hi) / 2;
            if (c->bb[mid] <= bm)
                lo = mid;
            else
                hi = mid;
        }
        double w = c->bb[hi] - c->bb[lo], t = (bm - c->bb[lo]) / w;
        double h00, h10, h01, h11, d00, d10, d01, d11;
        hermite(t, &h00, &h10, &h01, &h11, &d00, &d10, &d01, &d11);
        h = h00 * c->hh[lo] + h10 * w * c->m[lo] + h01 * c->hh[hi] + h11 * w * c->m[hi];
        dh = (d00 * c->hh[lo] + d01 * c->hh[hi]) / w + d10 * c->m[lo] + d11 * c->m[hi];
    }
    *nu = h / bm;
    *dnu_db2 = (dh - *nu) / (2.0 * b2);
}
