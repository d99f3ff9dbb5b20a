/*
 * mesh_case_regions.c - the materials of a case (with B-H curves) and the
 * regions that use them: boxes with material, motion, magnetisation and
 * source current.  Messages name the file and the JSON path.
 */
#include "mesh/mesh_case_int.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define MAX_REGIONS 10000
#define MAX_MATERIALS 1000
/* Relative tolerance (of the domain size) for "on the domain edge". */
#define EDGE_TOL 1e-9

/* Bounds of single values, far outside any brake or damper (this project's
 * choice): they keep every product finite downstream. */
#define MAX_CURRENT 1e9          /* A */
#define MAX_CURRENT_DENSITY 1e12 /* A/m^2 */
#define MAX_BH_H 1e9             /* A/m */
#define MAX_BH_B 100.0           /* T */

/* "bh_curve": [[H, B], ...] in A/m and T: at least 3 points counting the
 * origin, which is added when the curve does not start there; H and B finite
 * and strictly increasing (a curve that is not monotone has no unique
 * solution).  path names the key in messages. */
static eddy_status read_bh_curve(mesh_reader *r, const cJSON *item, const char *path,
                                 mesh_bh_curve *out)
{
    if (!cJSON_IsArray(item))
        return mesh_json_bad(r, path, "must be an array of [H in A/m, B in T] pairs");
    int len = cJSON_GetArraySize(item), k = 0;
    const cJSON *e = item->child;
    out->n = 0;
    out->h[0] = out->b[0] = 0.0;
    int n = 1; /* the origin */
    for (; e != NULL; e = e->next, k++) {
        char p[360];
        snprintf(p, sizeof p, "%s[%d]", path, k);
        double hb[2];
        MESH_TRY(mesh_json_numbers(r, e, p, 2, hb));
        if (k == 0 && hb[0] == 0.0 && hb[1] == 0.0)
            continue; /* the origin, given */
        if (hb[0] < 0.0 || hb[1] < 0.0)
            return mesh_json_bad(r, p, "H and B must not be negative (got %g A/m, %g T)", hb[0],
                                 hb[1]);
        if (hb[0] > MAX_BH_H || hb[1] > MAX_BH_B)
            return mesh_json_bad(r, p, "[%g A/m, %g T] is beyond any measured B-H curve (at most "
                                       "%g A/m and %g T)", hb[0], hb[1], MAX_BH_H, MAX_BH_B);
        if (n >= MESH_BH_MAX)
            return mesh_json_bad(r, path, "too many points (%d given, at most %d counting the "
                                          "origin)", len, MESH_BH_MAX);
        if (!(hb[0] > out->h[n - 1]) || !(hb[1] > out->b[n - 1]))
            return mesh_json_bad(r, p, "H and B must both increase strictly along the curve "
                                       "(got [%g, %g] after [%g, %g]); a curve that is not "
                                       "monotone is rejected",
                                 hb[0], hb[1], out->h[n - 1], out->b[n - 1]);
        out->h[n] = hb[0];
        out->b[n] = hb[1];
        n++;
    }
    if (n < 3)
        return mesh_json_bad(r, path, "needs at least 3 points counting (0, 0) (got %d)", n);
    out->n = n;
    return EDDY_OK;
}

/* The material m (an object at path p, named m->string) into mat: its
 * numbers, checked, and its B-H curve. */
static eddy_status read_material(mesh_reader *r, const cJSON *m, const char *p,
                                 mesh_material *mat)
{
    static const char *const keys[] = {"conductivity", "relative_permeability", "remanence",
                                       "density", "specific_heat", "temperature_coefficient",
                                       "bh_curve", "description", "source", NULL};
    MESH_TRY(mesh_json_object(r, m, p, keys));
    snprintf(mat->name, sizeof mat->name, "%s", m->string);
    mat->sigma = 0.0;
    mat->mu_r = 1.0;
    mat->br = 0.0;
    mat->source = NULL;
    MESH_TRY(mesh_json_number(r, m, "conductivity", p, 0, &mat->sigma, NULL));
    MESH_TRY(mesh_json_number(r, m, "relative_permeability", p, 0, &mat->mu_r, NULL));
    MESH_TRY(mesh_json_number(r, m, "remanence", p, 0, &mat->br, NULL));
    mat->density = mat->specific_heat = mat->alpha = 0.0;
    MESH_TRY(mesh_json_number(r, m, "density", p, 0, &mat->density, NULL));
    MESH_TRY(mesh_json_number(r, m, "specific_heat", p, 0, &mat->specific_heat, NULL));
    MESH_TRY(mesh_json_number(r, m, "temperature_coefficient", p, 0, &mat->alpha, NULL));
    char q[340];
    if (mat->density < 0 || mat->specific_heat < 0) {
        snprintf(q, sizeof q, "%s.%s", p, mat->density < 0 ? "density" : "specific_heat");
        return mesh_json_bad(r, q, "must not be negative");
    }
    if (mat->sigma < 0.0) {
        snprintf(q, sizeof q, "%s.conductivity", p);
        return mesh_json_bad(r, q, "must not be negative (got %g S/m)", mat->sigma);
    }
    if (!(mat->mu_r > 0.0)) {
        snprintf(q, sizeof q, "%s.relative_permeability", p);
        return mesh_json_bad(r, q, "must be positive (got %g)", mat->mu_r);
    }
    if (mat->br < 0.0) {
        snprintf(q, sizeof q, "%s.remanence", p);
        return mesh_json_bad(r, q, "must not be negative (got %g T); give the direction "
                                   "with the region's magnetization_angle", mat->br);
    }
    mat->bh.n = 0;
    const cJSON *bh = cJSON_GetObjectItemCaseSensitive(m, "bh_curve");
    if (bh != NULL) {
        snprintf(q, sizeof q, "%s.bh_curve", p);
        if (cJSON_GetObjectItemCaseSensitive(m, "relative_permeability") != NULL)
            return mesh_json_bad(r, q, "give either \"bh_curve\" or "
                                       "\"relative_permeability\", not both");
        if (mat->br > 0.0)
            return mesh_json_bad(r, q, "a material with a B-H curve cannot have a remanence");
        MESH_TRY(read_bh_curve(r, bh, q, &mat->bh));
        mat->mu_r = mat->bh.b[1] / (EDDY_MU0 * mat->bh.h[1]);
    }
    mat->sigma_20 = mat->sigma;
    return EDDY_OK;
}

eddy_status mesh_case_read_materials(mesh_reader *r, const cJSON *root)
{
    mesh_case *c = r->c;
    const cJSON *mats = cJSON_GetObjectItemCaseSensitive(root, "materials");
    if (mats == NULL)
        return EDDY_OK;
    if (!cJSON_IsObject(mats))
        return mesh_json_bad(r, "materials", "must be an object of named materials");
    MESH_TRY(mesh_json_check_keys(r, mats, "materials", NULL)); /* any name; duplicates only */
    int n = cJSON_GetArraySize(mats);
    if (n > MAX_MATERIALS)
        return mesh_json_bad(r, "materials", "too many materials (%d, at most %d)", n,
                             MAX_MATERIALS);
    c->materials = calloc((size_t)(n > 0 ? n : 1), sizeof *c->materials);
    if (c->materials == NULL)
        return EDDY_RAISE(r->err, EDDY_ERR_NOMEM, "out of memory");
    for (const cJSON *m = mats->child; m != NULL; m = m->next) {
        char p[300];
        snprintf(p, sizeof p, "materials.%s", m->string);
        if (m->string[0] == '\0' || strlen(m->string) >= sizeof c->materials[0].name)
            return mesh_json_bad(r, p, "material name must have 1 to %d characters",
                                 (int)sizeof c->materials[0].name - 1);
        MESH_TRY(read_material(r, m, p, &c->materials[c->nmat]));
        c->nmat++;
    }
    return EDDY_OK;
}

/* Index of a material by name: case materials first, then the library (the
 * library entry is copied into the case).  -1 for air, -2 if unknown. */
static int find_material(mesh_case *c, const char *name)
{
    for (int k = 0; k < c->nmat; k++)
        if (strcmp(c->materials[k].name, name) == 0)
            return k;
    const mesh_material *lib = mesh_library_find(name);
    if (lib == NULL)
        return -2;
    mesh_material *m = realloc(c->materials, (size_t)(c->nmat + 1) * sizeof *m);
    if (m == NULL)
        return -3;
    c->materials = m;
    c->materials[c->nmat] = *lib;
    return c->nmat++;
}

static int boxes_overlap(const double *a, const double *b, double tol)
{
    return a[0] < b[2] - tol && b[0] < a[2] - tol && a[1] < b[3] - tol && b[1] < a[3] - tol;
}

/* "name" and "material" of the region at path p: g->material is the index of
 * its material in c->materials, -1 for air. */
static eddy_status read_region_material(mesh_reader *r, const cJSON *e, const char *p,
                                        mesh_region *g)
{
    char q[128];
    const char *s = NULL;
    MESH_TRY(mesh_json_string(r, e, "name", p, 0, &s));
    if (s != NULL && (s[0] == '\0' || strlen(s) >= sizeof g->name)) {
        snprintf(q, sizeof q, "%s.name", p);
        return mesh_json_bad(r, q, "must have 1 to %d characters", (int)sizeof g->name - 1);
    }
    snprintf(g->name, sizeof g->name, "%s", s != NULL ? s : p);
    MESH_TRY(mesh_json_string(r, e, "material", p, 0, &s));
    g->material = -1;
    if (s != NULL && strcmp(s, "air") != 0) {
        g->material = find_material(r->c, s);
        snprintf(q, sizeof q, "%s.material", p);
        if (g->material == -3)
            return EDDY_RAISE(r->err, EDDY_ERR_NOMEM, "out of memory");
        if (g->material == -2)
            return mesh_json_bad(r, q, "unknown material \"%s\" (not in \"materials\" nor in "
                                       "the built-in library; `eddy2d materials` lists it)", s);
    }
    return EDDY_OK;
}

/* "box" of the region at path p, in metres, inside the domain (to tol). */
static eddy_status read_region_box(mesh_reader *r, const cJSON *e, const char *p, double tol,
                                   mesh_region *g)
{
    const mesh_case *c = r->c;
    char q[128];
    const cJSON *box = cJSON_GetObjectItemCaseSensitive(e, "box");
    snprintf(q, sizeof q, "%s.box", p);
    int rz = c->geometry == MESH_AXISYMMETRIC;
    if (box == NULL)
        return mesh_json_bad(r, q, "missing (%s is required)",
                             rz ? "[r0, z0, r1, z1]" : "[x0, y0, x1, y1]");
    MESH_TRY(mesh_json_numbers(r, box, q, 4, g->box));
    for (int t = 0; t < 4; t++)
        g->box[t] *= c->length_scale;
    if (rz) {
        double given[4] = {g->box[0], g->box[1], g->box[2], g->box[3]};
        MESH_TRY(mesh_case_rz_box(r, q, given, g->box));
    }
    if (!(g->box[2] > g->box[0]))
        return mesh_json_bad(r, q, "x1 must be greater than x0");
    if (!(g->box[3] > g->box[1]))
        return mesh_json_bad(r, q, "y1 must be greater than y0");
    if (g->box[0] < c->x0 - tol || g->box[2] > c->x1 + tol || g->box[1] < c->y0 - tol ||
        g->box[3] > c->y1 + tol)
        return mesh_json_bad(r, q, "lies (partly) outside the domain");
    return EDDY_OK;
}

/* "magnetization_angle" (degrees from +x, default 90; axisymmetric: from
 * +r towards +z) of the region at path p into g->mag_angle (radians, from
 * the grid's +x): required for a material with a remanence, ignored with a
 * warning otherwise.  mat: the region's material, NULL for air. */
static eddy_status read_region_angle(mesh_reader *r, const cJSON *e, const char *p,
                                     const mesh_material *mat, mesh_region *g)
{
    const char *from = r->c->geometry == MESH_AXISYMMETRIC ? "+r towards +z" : "+x";
    double deg = 90.0;
    int has_angle = 0;
    MESH_TRY(mesh_json_number(r, e, "magnetization_angle", p, 0, &deg, &has_angle));
    if (!(fabs(deg) <= 360.0)) {
        char q[128];
        snprintf(q, sizeof q, "%s.magnetization_angle", p);
        return mesh_json_bad(r, q, "%g degrees: give the direction between -360 and 360 degrees "
                                   "from %s", deg, from);
    }
    g->mag_angle = deg * EDDY_PI / 180.0;
    if (r->c->geometry == MESH_AXISYMMETRIC)
        g->mag_angle = mesh_case_rz_angle(g->mag_angle);
    if (mat != NULL && mat->br > 0.0 && !has_angle) {
        char q[128];
        snprintf(q, sizeof q, "%s.magnetization_angle", p);
        return mesh_json_bad(r, q, "missing: material \"%s\" has a remanence, so the direction "
                                   "(degrees from %s) is required", mat->name, from);
    }
    if (has_angle && (mat == NULL || mat->br == 0.0))
        MESH_TRY(mesh_json_warn(r, "%s: %s.magnetization_angle: ignored, the material has no "
                                   "remanence", r->fname, p));
    return EDDY_OK;
}

/* "current" (A, over the box) or "current_density" (A/m^2) of the region at
 * path p into g->jz (after the box); *given: 1 if either key is present. */
static eddy_status read_region_current(mesh_reader *r, const cJSON *e, const char *p,
                                       mesh_region *g, int *given)
{
    double cur = 0.0, cd = 0.0;
    int has_cur = 0, has_cd = 0;
    MESH_TRY(mesh_json_number(r, e, "current", p, 0, &cur, &has_cur));
    MESH_TRY(mesh_json_number(r, e, "current_density", p, 0, &cd, &has_cd));
    if (has_cur && has_cd)
        return mesh_json_bad(r, p, "give either \"current\" or \"current_density\", not both");
    /* bounds far beyond any coil of a brake or damper (this project's
     * choice), so that every later product stays finite: a megaampere-scale
     * coil is at most 1e9 A, a superconducting winding about 1e9 A/m^2 */
    if (!(fabs(cur) <= MAX_CURRENT) || !(fabs(cd) <= MAX_CURRENT_DENSITY)) {
        char q[128];
        snprintf(q, sizeof q, "%s.%s", p, has_cur ? "current" : "current_density");
        return mesh_json_bad(r, q, "%g %s is beyond any coil (at most %g A or %g A/m^2)",
                             has_cur ? cur : cd, has_cur ? "A" : "A/m^2", MAX_CURRENT,
                             MAX_CURRENT_DENSITY);
    }
    g->jz = has_cd ? cd : has_cur ? cur / ((g->box[2] - g->box[0]) * (g->box[3] - g->box[1]))
                                  : 0.0;
    if (!(fabs(g->jz) <= MAX_CURRENT_DENSITY)) {
        char q[128];
        snprintf(q, sizeof q, "%s.current", p);
        return mesh_json_bad(r, q, "%g A over this box is %g A/m^2, beyond any coil (at most "
                                   "%g A/m^2)", cur, g->jz, MAX_CURRENT_DENSITY);
    }
    *given = has_cur || has_cd;
    return EDDY_OK;
}

/* A moving region (at path p, material mat or NULL for air) carries no
 * source current, is no magnet and spans the domain along x (to tol), so
 * that the field is steady in the magnet frame; it should conduct. */
static eddy_status check_moving_region(mesh_reader *r, const char *p, const mesh_material *mat,
                                       int current_given, double tol, const mesh_region *g)
{
    const mesh_case *c = r->c;
    if (current_given && g->jz != 0.0)
        return mesh_json_bad(r, p, "a moving region cannot carry a source current");
    if (mat != NULL && mat->br > 0.0)
        return mesh_json_bad(r, p, "a moving region cannot be a magnet (the field must be "
                                   "steady in the magnet frame)");
    if (!c->pass.present && (fabs(g->box[0] - c->x0) > tol || fabs(g->box[2] - c->x1) > tol)) {
        char q[128];
        snprintf(q, sizeof q, "%s.box", p);
        return mesh_json_bad(r, q, "a moving region must span the whole %s-extent of the "
                                   "domain (%g to %g %s) so that the field is steady in the "
                                   "magnet frame (or give a \"pass\")", c->geometry == MESH_AXISYMMETRIC ? "z" : "x",
                             c->x0 / c->length_scale, c->x1 / c->length_scale, c->length_unit);
    }
    if (mat == NULL || mat->sigma == 0.0)
        MESH_TRY(mesh_json_warn(r, "%s: %s: moving region has no conductivity; it carries no "
                                   "eddy current", r->fname, p));
    return EDDY_OK;
}

/* A region that touches an open side continues to infinity beyond it
 * (mesh_grid); a source would then be infinite, so magnets and coils must
 * stay off the open sides. */
static eddy_status check_open_sides(mesh_reader *r, const char *p, const mesh_material *mat,
                                    double tol, const mesh_region *g)
{
    const mesh_case *c = r->c;
    int src = g->jz != 0.0 || (mat != NULL && mat->br > 0.0);
    int on_x = c->x_open && (g->box[0] <= c->x0 + tol || g->box[2] >= c->x1 - tol);
    int on_y = c->y_open && (g->box[1] <= c->y0 + tol || g->box[3] >= c->y1 - tol);
    if (src && (on_x || on_y)) {
        char q[128];
        snprintf(q, sizeof q, "%s.box", p);
        return mesh_json_bad(r, q, "a magnet or coil touches an open %s side of the domain: a "
                                   "region on an open side continues to infinity beyond it; "
                                   "keep sources inside the domain",
                             on_x ? "x" : "y");
    }
    return EDDY_OK;
}

/* Region k (the JSON value e) into g; tol: the tolerance of the domain
 * edges (m). */
static eddy_status read_region(mesh_reader *r, const cJSON *e, int k, double tol,
                               mesh_region *g)
{
    static const char *const keys[] = {"name",    "material",           "box",
                                       "moving",  "magnetization_angle", "current",
                                       "current_density", "description", NULL};
    char p[64];
    snprintf(p, sizeof p, "regions[%d]", k);
    MESH_TRY(mesh_json_object(r, e, p, keys));
    MESH_TRY(read_region_material(r, e, p, g));
    MESH_TRY(read_region_box(r, e, p, tol, g));
    const cJSON *mv = cJSON_GetObjectItemCaseSensitive(e, "moving");
    if (mv != NULL && !cJSON_IsBool(mv)) {
        char q[128];
        snprintf(q, sizeof q, "%s.moving", p);
        return mesh_json_bad(r, q, "must be true or false");
    }
    g->moving = mv != NULL && cJSON_IsTrue(mv);
    const mesh_material *mat = g->material >= 0 ? &r->c->materials[g->material] : NULL;
    MESH_TRY(read_region_angle(r, e, p, mat, g));
    int current_given = 0;
    MESH_TRY(read_region_current(r, e, p, g, &current_given));
    if (g->moving)
        MESH_TRY(check_moving_region(r, p, mat, current_given, tol, g));
    MESH_TRY(check_open_sides(r, p, mat, tol, g));
    return EDDY_OK;
}

/* A moving region may not overlap any other region. */
static eddy_status check_moving_overlaps(mesh_reader *r, double tol)
{
    const mesh_case *c = r->c;
    for (int a = 0; a < c->nreg; a++)
        for (int b = 0; b < c->nreg; b++) {
            if (a == b || !c->regions[a].moving)
                continue;
            if (boxes_overlap(c->regions[a].box, c->regions[b].box, tol)) {
                char p[64];
                snprintf(p, sizeof p, "regions[%d]", b);
                return mesh_json_bad(r, p, "overlaps moving region \"%s\" (regions[%d]); moving "
                                           "regions may not overlap other regions",
                                     c->regions[a].name, a);
            }
        }
    return EDDY_OK;
}

eddy_status mesh_case_read_regions(mesh_reader *r, const cJSON *root)
{
    mesh_case *c = r->c;
    const cJSON *regs = cJSON_GetObjectItemCaseSensitive(root, "regions");
    if (regs == NULL)
        return mesh_json_bad(r, "regions", "missing (an array of regions is required)");
    if (!cJSON_IsArray(regs))
        return mesh_json_bad(r, "regions", "must be an array");
    int n = cJSON_GetArraySize(regs);
    if (n == 0)
        return mesh_json_bad(r, "regions", "must not be empty");
    if (n > MAX_REGIONS)
        return mesh_json_bad(r, "regions", "too many regions (%d, at most %d)", n, MAX_REGIONS);
    c->regions = calloc((size_t)n, sizeof *c->regions);
    if (c->regions == NULL)
        return EDDY_RAISE(r->err, EDDY_ERR_NOMEM, "out of memory");
    double lx = c->x1 - c->x0, ly = c->y1 - c->y0;
    double tol = EDGE_TOL * (lx > ly ? lx : ly);
    int k = 0;
    for (const cJSON *e = regs->child; e != NULL; e = e->next, k++)
        MESH_TRY(read_region(r, e, k, tol, &c->regions[k]));
    c->nreg = n;
    return check_moving_overlaps(r, tol);
}
