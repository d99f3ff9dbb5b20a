/*
 * design_heat.c - heating of the conductor and conductivity at temperature
 * (design/design.h, section 4).
 */
#include "design/design.h"
#include "design/design_int.h"

#include <float.h>
#include <math.h>
#include <stddef.h>
#include <stdlib.h>
#include <string.h>

/* ------------------------------------------------------------------------ */
/* 4. Heating                                                                */
/* ------------------------------------------------------------------------ */

eddy_status design_heating_rate(double loss, double area, double density, double heat_capacity,
                              double *dtemp_dt, eddy_error *err)
{
    if (dtemp_dt == NULL)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "heating rate: NULL output");
    if (!isfinite(loss) || loss < 0.0)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "heating rate: loss = %g W/m must be finite and >= 0", loss);
    if (!design_positive(area) || !design_positive(density) || !design_positive(heat_capacity))
        return EDDY_RAISE(err, EDDY_ERR_INPUT,
                          "heating rate: area = %g m^2, density = %g kg/m^3 and heat capacity = %g "
                          "J/(kg K) must be finite and positive", area, density, heat_capacity);
    *dtemp_dt = loss / (density * heat_capacity * area);
    return EDDY_OK;
}

eddy_status design_heating_per_pass(double loss, double thickness, double speed, double density,
                                  double heat_capacity, double *dtemp, eddy_error *err)
{
    if (dtemp == NULL)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "heating per pass: NULL output");
    if (!isfinite(loss) || loss < 0.0)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "heating per pass: loss = %g W/m must be finite and >= 0",
                          loss);
    if (!design_positive(thickness) || !design_positive(speed) || !design_positive(density) || !design_positive(heat_capacity))
        return EDDY_RAISE(err, EDDY_ERR_INPUT,
                          "heating per pass: thickness = %g m, speed = %g m/s, density = %g kg/m^3 and "
                          "heat capacity = %g J/(kg K) must be finite and positive",
                          thickness, speed, density, heat_capacity);
    *dtemp = loss / (density * heat_capacity * thickness * speed);
    return EDDY_OK;
}

eddy_status design_stop_temperature_rise(double energy, double mass, double heat_capacity,
                                       double *dtemp, eddy_error *err)
{
    if (dtemp == NULL)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "temperature rise: NULL output");
    if (!isfinite(energy) || energy < 0.0)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "temperature rise: energy = %g J must be finite and >= 0",
                          energy);
    if (!design_positive(mass) || !design_positive(heat_capacity))
        return EDDY_RAISE(err, EDDY_ERR_INPUT,
                          "temperature rise: mass = %g kg and heat capacity = %g J/(kg K) must be finite "
                          "and positive", mass, heat_capacity);
    *dtemp = energy / (mass * heat_capacity);
    return EDDY_OK;
}

eddy_status design_sigma_at_temperature(double sigma_20, double alpha, double temp_c,
                                      double *sigma, eddy_error *err)
{
    if (sigma == NULL)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "conductivity at temperature: NULL output");
    if (!design_positive(sigma_20))
        return EDDY_RAISE(err, EDDY_ERR_INPUT,
                          "conductivity at temperature: sigma_20 = %g S/m must be finite and positive",
                          sigma_20);
    if (!isfinite(alpha))
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "conductivity at temperature: alpha = %g 1/K is not finite",
                          alpha);
    if (!isfinite(temp_c) || temp_c < DESIGN_TEMP_MIN_C || temp_c > DESIGN_TEMP_MAX_C)
        return EDDY_RAISE(err, EDDY_ERR_INPUT,
                          "%g C is outside the linear resistivity model (%g to %g C)", temp_c,
                          DESIGN_TEMP_MIN_C, DESIGN_TEMP_MAX_C);
    double den = 1.0 + alpha * (temp_c - 20.0);
    if (!(den >= DESIGN_RESISTIVITY_RATIO_MIN))
        return EDDY_RAISE(err, EDDY_ERR_INPUT,
                          "1 + alpha (T - 20 C) = %g for alpha = %g 1/K at %g C: outside the "
                          "range of the linear resistivity law (>= %g)",
                          den, alpha, temp_c, DESIGN_RESISTIVITY_RATIO_MIN);
    *sigma = sigma_20 / den;
    return EDDY_OK;
}

