/*
 * design_int.h - helpers shared by the files of design/; private to that
 * folder (nothing outside design/ includes it).
 */
#ifndef EDDY_DESIGN_INT_H
#define EDDY_DESIGN_INT_H

#include <math.h>

#include "mesh/eddy.h"

/* 1 if a is finite and > 0. */
static inline int design_positive(double a) { return isfinite(a) && a > 0.0; }

/* Check a force table: n >= 2, speed and force non-NULL, speeds finite,
 * positive and strictly increasing, forces finite and >= 0.  Returns
 * EDDY_OK or EDDY_ERR_INPUT with a message naming the bad entry. */
eddy_status design_check_table(int n, const double *speed, const double *force,
                               eddy_error *err);

#endif
