/*
 * quad.h - the test programs' shared quadrature: Gauss-Legendre nodes and
 * weights (Newton iteration on the Legendre polynomial P_n from the usual
 * cosine first guess; e.g. Abramowitz and Stegun, Handbook of Mathematical
 * Functions, 1964, 25.4.29, cited from memory), for the independent
 * integrals the tests compare the solver against.
 */
#ifndef EDDY_TEST_QUAD_H
#define EDDY_TEST_QUAD_H

#include <math.h>

/* n nodes x[] on [-1, 1] and their weights w[] (n >= 1). */
static inline void quad_gauss_legendre(int n, double *x, double *w)
{
    const double pi = 3.14159265358979323846;
    for (int i = 0; i < n; i++) {
        double z = cos(pi * (i + 0.75) / (n + 0.5)), dp = 1.0;
        for (int it = 0; it < 100; it++) {
            double p0 = 1.0, p1 = z;
            for (int j = 2; j <= n; j++) {
                double p2 = ((2.0 * j - 1.0) * z * p1 - (j - 1.0) * p0) / j;
                p0 = p1;
                p1 = p2;
            }
            dp = n * (z * p1 - p0) / (z * z - 1.0);
            double dz = p1 / dp;
            z -= dz;
            if (fabs(dz) < 1e-16)
                break;
        }
        x[i] = z;
        w[i] = 2.0 / ((1.0 - z * z) * dp * dp);
    }
}

#endif
