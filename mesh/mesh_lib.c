/*
 * mesh_lib.c - the built-in material library.
 *
 * Each entry names where its values come from.  Conductivities are at 20 C.
 * Values marked "from memory" are typical handbook figures recalled by the
 * authors, not checked against a document: verify them for design work.
 */
#include "mesh/mesh.h"

#include <string.h>

static const mesh_material library[] = {
    {"air", 0.0, 1.0, 0.0, "vacuum values (mu_r = 1, sigma = 0); the deviation of air is below 1e-6"},
    {"copper_annealed", 58.0e6, 1.0, 0.0,
     "IEC 60028 (1925), International standard of resistance for copper: 58.0 MS/m at 20 C"},
    {"aluminium_1350", 35.4e6, 1.0, 0.0,
     "61.0 % IACS, the minimum for electrical-grade aluminium 1350 (from memory, ASTM B233); "
     "IACS = 58.0 MS/m (IEC 60028)"},
    {"aluminium_6061_t6", 24.6e6, 1.0, 0.0,
     "about 43 % IACS (typical handbook value, from memory)"},
    {"aluminium_6063_t5", 31.3e6, 1.0, 0.0,
     "about 54 % IACS (typical handbook value, from memory)"},
    {"stainless_austenitic", 1.39e6, 1.0, 0.0,
     "resistivity about 0.72 uOhm m, annealed austenitic (304-type) stainless (from memory); "
     "mu_r = 1 assumes the annealed, non-magnetic state"},
    {"ndfeb_35", 0.67e6, 1.05, 1.19,
     "sintered NdFeB, grade 35 class: Br about 1.17-1.22 T, recoil mu_r about 1.05, "
     "resistivity about 1.5 uOhm m (typical catalogue values, from memory)"},
    {"ndfeb_42", 0.67e6, 1.05, 1.30,
     "sintered NdFeB, grade 42 class: Br about 1.28-1.32 T, recoil mu_r about 1.05 (typical "
     "catalogue values, from memory)"},
    {"ndfeb_52", 0.67e6, 1.05, 1.45,
     "sintered NdFeB, grade 52 class: Br about 1.42-1.48 T, recoil mu_r about 1.05 (typical "
     "catalogue values, from memory)"},
    {"soft_iron_linear", 10.0e6, 1000.0, 0.0,
     "low-carbon soft iron as a linear material below saturation: mu_r 1000, about 10 MS/m "
     "(order-of-magnitude values, from memory); overstates force where the iron saturates"},
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
