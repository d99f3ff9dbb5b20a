/*
 * mesh_lib.c - the built-in material library.
 *
 * Each entry names where its values come from.  Conductivities are at 20 C;
 * density (kg/m^3), specific heat (J/(kg K)) and the temperature coefficient
 * of resistivity (1/K) follow.  IEC 60028 gives annealed copper 58.0 MS/m,
 * 8.89 g/cm^3 and 0.00393 /K at 20 C; the specific heats, densities and the
 * other coefficients are typical handbook values quoted from memory.
 * Values marked "from memory" are typical handbook figures recalled by the
 * authors, not checked against a document: verify them for design work.
 */
#include "mesh/mesh.h"

#include <string.h>

/* The B-H curve of a linear material: none. */
#define LINEAR {0, {0.0}, {0.0}}

static const mesh_material library[] = {
    {"air", 0.0, 1.0, 0.0, 1.204, 1005.0, 0.0, 0.0, "vacuum values (mu_r = 1, sigma = 0); the deviation of air is below 1e-6", LINEAR},
    {"copper_annealed", 58.0e6, 1.0, 0.0, 8890.0, 385.0, 0.00393, 58.0e6,
     "IEC 60028 (1925), International standard of resistance for copper: 58.0 MS/m, "
     "8.89 g/cm^3, 0.00393 /K at 20 C; specific heat 385 J/(kg K) from memory", LINEAR},
    {"aluminium_1350", 35.4e6, 1.0, 0.0, 2705.0, 900.0, 0.00403, 35.4e6,
     "61.0 % IACS, the minimum for electrical-grade aluminium 1350 (from memory, ASTM B233); "
     "IACS = 58.0 MS/m (IEC 60028)", LINEAR},
    {"aluminium_6061_t6", 24.6e6, 1.0, 0.0, 2700.0, 896.0, 0.0033, 24.6e6,
     "about 43 % IACS (typical handbook value, from memory)", LINEAR},
    {"aluminium_6063_t5", 31.3e6, 1.0, 0.0, 2690.0, 900.0, 0.0035, 31.3e6,
     "about 54 % IACS (typical handbook value, from memory)", LINEAR},
    {"stainless_austenitic", 1.39e6, 1.0, 0.0, 8000.0, 500.0, 0.0010, 1.39e6,
     "resistivity about 0.72 uOhm m, annealed austenitic (304-type) stainless (from memory); "
     "mu_r = 1 assumes the annealed, non-magnetic state", LINEAR},
    {"ndfeb_35", 0.67e6, 1.05, 1.19, 7500.0, 440.0, 0.0, 0.67e6,
     "sintered NdFeB, grade 35 class: Br about 1.17-1.22 T, recoil mu_r about 1.05, "
     "resistivity about 1.5 uOhm m (typical catalogue values, from memory)", LINEAR},
    {"ndfeb_42", 0.67e6, 1.05, 1.30, 7500.0, 440.0, 0.0, 0.67e6,
     "sintered NdFeB, grade 42 class: Br about 1.28-1.32 T, recoil mu_r about 1.05 (typical "
     "catalogue values, from memory)", LINEAR},
    {"ndfeb_52", 0.67e6, 1.05, 1.45, 7500.0, 440.0, 0.0, 0.67e6,
     "sintered NdFeB, grade 52 class: Br about 1.42-1.48 T, recoil mu_r about 1.05 (typical "
     "catalogue values, from memory)", LINEAR},
    {"soft_iron_linear", 10.0e6, 1000.0, 0.0, 7870.0, 450.0, 0.0050, 10.0e6,
     "low-carbon soft iron as a linear material below saturation: mu_r 1000, about 10 MS/m "
     "(order-of-magnitude values, from memory); overstates force where the iron saturates", LINEAR},
    /* Saturable steels: mu_r is the initial permeability of the curve, B_1 / (mu0 H_1). */
    {"steel_low_carbon", 7.0e6, 0.25 / (EDDY_MU0 * 100.0), 0.0, 7870.0, 450.0, 0.0050, 7.0e6,
     "annealed low-carbon (1010-type) steel: B-H curve of typical shape, about 1.45 T at "
     "1 kA/m, 1.8 T at 10 kA/m, polarisation saturating near 2.0 T; resistivity about "
     "0.14 uOhm m (all from memory, not from a data sheet: use a measured curve for design "
     "work)",
     .bh = {12,
            {0.0, 100.0, 200.0, 300.0, 500.0, 1000.0, 2000.0, 5000.0, 10000.0, 20000.0, 50000.0,
             100000.0},
            {0.0, 0.25, 0.70, 1.00, 1.25, 1.45, 1.58, 1.70, 1.80, 1.92, 2.05, 2.15}}},
    {"steel_silicon_nonoriented", 2.1e6, 0.10 / (EDDY_MU0 * 20.0), 0.0, 7650.0, 490.0, 0.0,
     2.1e6,
     "non-oriented electrical steel, about 3 % Si: B-H curve of typical shape, about 1.48 T "
     "at 1 kA/m, 1.76 T at 10 kA/m, polarisation saturating near 1.9 T; resistivity about "
     "0.48 uOhm m (all from memory, not from a data sheet: use a measured curve for design "
     "work)",
     .bh = {13,
            {0.0, 20.0, 40.0, 60.0, 100.0, 200.0, 500.0, 1000.0, 2500.0, 5000.0, 10000.0,
             50000.0, 100000.0},
            {0.0, 0.10, 0.40, 0.80, 1.10, 1.28, 1.40, 1.48, 1.57, 1.65, 1.76, 1.95, 2.02}}},
};

int mesh_library_count(void) { return (int)(sizeof library / sizeof library[0]); }

const mesh_material *mesh_library_entry(int k)
{
    if (k < 0 || k >= mesh_library_count())
        return NULL;
    return &library[k];
}

const mesh_material *mesh_library_find(const char *name)
{
    if (name == NULL)
        return NULL;
    for (int k = 0; k < mesh_library_count(); k++)
        if (strcmp(library[k].name, name) == 0)
            return &library[k];
    return NULL;
}
