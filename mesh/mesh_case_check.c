/*
 * mesh_case_check.c - plausibility of a case that reads correctly: values
 * no physical device has (errors, exit 2, with the JSON path) and values
 * that are legal but usually a slip (warnings, with the numbers, printed by
 * the tool and kept in result.json).  Called last by the top level
 * (mesh_case.c), when every section has been read.
 *
 * The bounds are this project's choices, far outside any brake or damper:
 *   - speeds below the speed of light (c = 299 792 458 m/s, exact by the SI
 *     definition of the metre): the model is non-relativistic, and the tool
 *     warns above 1000 m/s, beyond any braked vehicle or disc rim;
 *   - remanence up to 3 T (the strongest permanent magnets reach about
 *     1.5 T: typical catalogue values, from memory), a warning above 1.6 T.
 * The bounds of single values (angles, currents, B-H points) are checked
 * where those are read (mesh_case_regions.c).
 */
#include "mesh/mesh_case_int.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

#define SPEED_OF_LIGHT 299792458.0   /* m/s */
#define SPEED_WARN 1000.0            /* m/s */
#define BR_MAX 3.0                   /* T */
#define BR_WARN 1.6                  /* T */
#define DOMAIN_WARN_M 10.0           /* a domain side above this in metres, without a unit */
#define DEPTH_WARN_M 1e-3            /* a vehicle depth below this */

static eddy_status check_speeds(mesh_reader *r)
{
    const mesh_case *c = r->c;
    double vmax = 0.0;
    for (int k = 0; k < c->nspeed; k++) {
        if (fabs(c->speeds[k]) >= SPEED_OF_LIGHT) {
            char p[64];
            snprintf(p, sizeof p, "speeds[%d]", k);
            return mesh_json_bad(r, p, "%g m/s is not below the speed of light; the model is "
                                       "non-relativistic (speeds are in m/s)", c->speeds[k]);
        }
        vmax = fmax(vmax, fabs(c->speeds[k]));
    }
    if (vmax > SPEED_WARN)
        MESH_TRY(mesh_json_warn(r, "%s: speeds: %g m/s is faster than any braked vehicle or "
                                   "disc rim; speeds are in m/s, not in the length unit",
                                r->fname, vmax));
    return EDDY_OK;
}

static eddy_status check_remanence(mesh_reader *r)
{
    const mesh_case *c = r->c;
    for (int k = 0; k < c->nmat; k++) {
        const mesh_material *m = &c->materials[k];
        if (m->br > BR_MAX) {
            char p[128];
            snprintf(p, sizeof p, "materials.%s.remanence", m->name);
            return mesh_json_bad(r, p, "%g T: no permanent magnet comes near this (the "
                                       "strongest reach about 1.5 T); at most %g T", m->br, BR_MAX);
        }
        if (m->br > BR_WARN)
            MESH_TRY(mesh_json_warn(r, "%s: materials.%s.remanence: %g T is above the "
                                       "remanence of any permanent magnet (about 1.5 T at most)",
                                    r->fname, m->name, m->br));
    }
    return EDDY_OK;
}

/* Sizes that look like a slip of the unit. */
static eddy_status check_sizes(mesh_reader *r, const cJSON *root)
{
    const mesh_case *c = r->c;
    double side = fmax(c->x1 - c->x0, c->y1 - c->y0);
    if (cJSON_GetObjectItemCaseSensitive(root, "length_unit") == NULL && side > DOMAIN_WARN_M)
        MESH_TRY(mesh_json_warn(r, "%s: domain: %g m across with no length_unit (metres are the "
                                   "default); if the lengths are millimetres, add "
                                   "\"length_unit\": \"mm\"", r->fname, side));
    if (c->vehicle.present && c->geometry == MESH_PLANAR && c->vehicle.depth < DEPTH_WARN_M)
        MESH_TRY(mesh_json_warn(r, "%s: vehicle.depth: %g %s is %.3g mm of magnet overlap, so the "
                                   "braking force is tiny and the stop long; depth is in the "
                                   "case length unit (%s)",
                                r->fname, c->vehicle.depth / c->length_scale, c->length_unit,
                                c->vehicle.depth * 1e3, c->length_unit));
    return EDDY_OK;
}

/* A net source current in a zero box: its potential is logarithmic, and a
 * zero boundary at a distance R changes the field near it by roughly h / R
 * (h the distance from the sources to the moving conductor), several per
 * cent for R = 50 h (PHYSICS.md, "Domain truncation"). */
static eddy_status check_net_current(mesh_reader *r)
{
    const mesh_case *c = r->c;
    if (c->geometry == MESH_AXISYMMETRIC)
        return EDDY_OK; /* a ring current's far field is a dipole's */
    double net = 0.0, total = 0.0, h = INFINITY;
    for (int k = 0; k < c->nreg; k++) {
        const mesh_region *g = &c->regions[k];
        double area = (g->box[2] - g->box[0]) * (g->box[3] - g->box[1]);
        net += g->jz * area;
        total += fabs(g->jz * area);
        if (g->jz == 0.0)
            continue;
        for (int q = 0; q < c->nreg; q++) {
            const mesh_region *m = &c->regions[q];
            if (!m->moving)
                continue;
            double gap = fmax(fmax(m->box[1] - g->box[3], g->box[1] - m->box[3]), 0.0);
            h = fmin(h, gap + 0.5 * (g->box[3] - g->box[1]));
        }
    }
    if (total == 0.0 || fabs(net) <= 1e-9 * total)
        return EDDY_OK;
    double half = 0.5 * fmin(c->x_periodic ? INFINITY : c->x1 - c->x0, c->y1 - c->y0);
    if (isfinite(h))
        return mesh_json_warn(r, "%s: regions: net source current %g A, zero sides %g %s away: "
                                 "its field decays only logarithmically, forces may be off by "
                                 "about h/R = %.2g %% (h = %g %s); add the return conductor or "
                                 "enlarge the box",
                              r->fname, net, half / c->length_scale, c->length_unit,
                              100.0 * h / half, h / c->length_scale, c->length_unit);
    return mesh_json_warn(r, "%s: regions: net source current %g A in a box with zero sides: "
                             "its field decays only logarithmically; add the return conductor "
                             "or enlarge the box", r->fname, net);
}

/* Region names must tell the regions apart: batch variants address them as
 * regions.<name>. */
static eddy_status check_region_names(mesh_reader *r)
{
    const mesh_case *c = r->c;
    for (int a = 0; a < c->nreg; a++)
        for (int b = a + 1; b < c->nreg; b++)
            if (strcmp(c->regions[a].name, c->regions[b].name) == 0) {
                char p[64];
                snprintf(p, sizeof p, "regions[%d].name", b);
                return mesh_json_bad(r, p, "\"%s\" is also the name of regions[%d]; region "
                                           "names must be unique", c->regions[b].name, a);
            }
    return EDDY_OK;
}

eddy_status mesh_case_check_plausible(mesh_reader *r, const cJSON *root)
{
    MESH_TRY(check_region_names(r));
    MESH_TRY(check_speeds(r));
    MESH_TRY(check_remanence(r));
    MESH_TRY(check_sizes(r, root));
    return check_net_current(r);
}
