/*
 * design_peak.c - the peak of a sampled drag curve (design/design.h,
 * section 7): the largest |drag| sample, moved to the vertex of the
 * parabola through it and its two speed-neighbours when that parabola is
 * concave.
 *
 * The vertex.  With u the abscissa (log10 v with log_speed, else v) and
 * f = |drag| at u1 < u2 < u3, the divided differences d12 = (f2 - f1) /
 * (u2 - u1), d23 = (f3 - f2) / (u3 - u2) and A = (d23 - d12) / (u3 - u1)
 * give the parabola f = A u^2 + B u + C with B = d12 - A (u1 + u2); its
 * vertex u* = -B / (2A) is a maximum when A < 0, and f(u*) = f2 + d12 (u* -
 * u2) + A (u* - u1)(u* - u2) (Newton form).  The base of the logarithm only
 * scales u, so the vertex speed is the same in ln v.
 */
#include "design/design.h"

#include <math.h>
#include <stddef.h>

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
            return EDDY_RAISE(err, EDDY_ERR_INPUT, "peak drag: speed %g <= 0 in log speed",
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
