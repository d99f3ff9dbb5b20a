/*
 * mesh_case.c - read and validate a case file (JSON, parsed with cJSON).
 *
 * Every message names the file and the JSON path of the offending value.
 * Lengths are converted to metres here, once; nothing downstream sees the
 * case file's unit except for display.
 */
#include "mesh/mesh.h"

#include "design/design.h"

#include <cJSON.h>
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define MAX_CASE_BYTES (16L * 1024 * 1024)
#define MAX_SPEEDS 100000
#define MAX_REGIONS 10000
#define MAX_MATERIALS 1000
/* Relative tolerance (of the domain size) for "on the domain edge". */
#define EDGE_TOL 1e-9

typedef struct {
    const char *fname;
    eddy_error *err;
    mesh_case *c;
} reader;

static eddy_status bad(reader *r, const char *path, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 3, 4)))
#endif
    ;
static eddy_status bad(reader *r, const char *path, const char *fmt, ...)
{
    char what[768];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(what, sizeof what, fmt, ap);
    va_end(ap);
    return EDDY_RAISE(r->err, EDDY_ERR_INPUT, "%s: %s: %s", r->fname, path, what);
}

static eddy_status warn(reader *r, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 2, 3)))
#endif
    ;
static eddy_status warn(reader *r, const char *fmt, ...)
{
    mesh_case *c = r->c;
    char(*w)[256] = realloc(c->warnings, (size_t)(c->nwarn + 1) * sizeof *w);
    if (w == NULL)
        return EDDY_RAISE(r->err, EDDY_ERR_NOMEM, "out of memory reading %s", r->fname);
    c->warnings = w;
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(c->warnings[c->nwarn], sizeof c->warnings[0], fmt, ap);
    va_end(ap);
    c->nwarn++;
    return EDDY_OK;
}

/* Check the keys of an object: duplicates are errors (ambiguous), unknown
 * keys are warnings.  allowed is NULL-terminated, or NULL to accept any key. */
static eddy_status check_keys(reader *r, const cJSON *obj, const char *path,
                              const char *const *allowed)
{
    for (const cJSON *a = obj->child; a != NULL; a = a->next) {
        for (const cJSON *b = a->next; b != NULL; b = b->next)
            if (strcmp(a->string, b->string) == 0)
                return bad(r, path, "key \"%s\" appears more than once", a->string);
        int known = allowed == NULL;
        for (int k = 0; allowed != NULL && allowed[k] != NULL; k++)
            if (strcmp(a->string, allowed[k]) == 0)
                known = 1;
        if (!known) {
            eddy_status s = warn(r, "%s: %s: unknown key \"%s\" ignored", r->fname, path,
                                 a->string);
            if (s != EDDY_OK)
                return s;
        }
    }
    return EDDY_OK;
}

/* A finite number at obj[key].  Returns EDDY_OK and sets *found = 0 if the key
 * is absent and not required. */
static eddy_status get_number(reader *r, const cJSON *obj, const char *key, const char *path,
                              int required, double *out, int *found)
{
    char p[300];
    snprintf(p, sizeof p, "%s%s%s", path, path[0] ? "." : "", key);
    const cJSON *item = cJSON_GetObjectItemCaseSensitive(obj, key);
    if (found != NULL)
        *found = item != NULL;
    if (item == NULL) {
        if (required)
            return bad(r, p, "missing (a number is required)");
        return EDDY_OK;
    }
    if (!cJSON_IsNumber(item))
        return bad(r, p, "must be a number");
    if (!isfinite(item->valuedouble))
        return bad(r, p, "must be a finite number");
    *out = item->valuedouble;
    return EDDY_OK;
}

/* An array of exactly n finite numbers (n > 0), or of at least one if n == 0
 * (then *count receives the length and *vals is malloc'ed). */
static eddy_status get_numbers(reader *r, const cJSON *item, const char *p, int n,
                               double *vals)
{
    if (!cJSON_IsArray(item))
        return bad(r, p, "must be an array of %d numbers", n);
    int len = cJSON_GetArraySize(item);
    if (len != n)
        return bad(r, p, "must have exactly %d numbers, found %d", n, len);
    int k = 0;
    for (const cJSON *e = item->child; e != NULL; e = e->next, k++) {
        if (!cJSON_IsNumber(e))
            return bad(r, p, "element %d must be a number", k);
        if (!isfinite(e->valuedouble))
            return bad(r, p, "element %d must be a finite number", k);
        vals[k] = e->valuedouble;
    }
    return EDDY_OK;
}

static eddy_status get_string(reader *r, const cJSON *obj, const char *key, const char *path,
                              int required, const char **out)
{
    char p[300];
    snprintf(p, sizeof p, "%s%s%s", path, path[0] ? "." : "", key);
    const cJSON *item = cJSON_GetObjectItemCaseSensitive(obj, key);
    *out = NULL;
    if (item == NULL) {
        if (required)
            return bad(r, p, "missing (a string is required)");
        return EDDY_OK;
    }
    if (!cJSON_IsString(item) || item->valuestring == NULL)
        return bad(r, p, "must be a string");
    *out = item->valuestring;
    return EDDY_OK;
}

#define TRY(expr)                                                                          \
    do {                                                                                   \
        eddy_status s_ = (expr);                                                           \
        if (s_ != EDDY_OK)                                                                 \
            return s_;                                                                     \
    } while (0)

static eddy_status read_domain(reader *r, const cJSON *root)
{
    static const char *const keys[] = {"x", "y", "x_boundary", "y_boundary", NULL};
    mesh_case *c = r->c;
    const cJSON *dom = cJSON_GetObjectItemCaseSensitive(root, "domain");
    if (dom == NULL)
        return bad(r, "domain", "missing (an object with x, y and boundaries is required)");
    if (!cJSON_IsObject(dom))
        return bad(r, "domain", "must be an object");
    TRY(check_keys(r, dom, "domain", keys));
    double xs[2], ys[2];
    const cJSON *it = cJSON_GetObjectItemCaseSensitive(dom, "x");
    if (it == NULL)
        return bad(r, "domain.x", "missing ([x0, x1] is required)");
    TRY(get_numbers(r, it, "domain.x", 2, xs));
    it = cJSON_GetObjectItemCaseSensitive(dom, "y");
    if (it == NULL)
        return bad(r, "domain.y", "missing ([y0, y1] is required)");
    TRY(get_numbers(r, it, "domain.y", 2, ys));
    if (!(xs[1] > xs[0]))
        return bad(r, "domain.x", "x1 must be greater than x0");
    if (!(ys[1] > ys[0]))
        return bad(r, "domain.y", "y1 must be greater than y0");
    c->x0 = xs[0] * c->length_scale;
    c->x1 = xs[1] * c->length_scale;
    c->y0 = ys[0] * c->length_scale;
    c->y1 = ys[1] * c->length_scale;
    const char *xb = NULL, *yb = NULL;
    TRY(get_string(r, dom, "x_boundary", "domain", 0, &xb));
    TRY(get_string(r, dom, "y_boundary", "domain", 0, &yb));
    if (xb == NULL || strcmp(xb, "zero") == 0)
        c->x_periodic = 0;
    else if (strcmp(xb, "periodic") == 0)
        c->x_periodic = 1;
    else
        return bad(r, "domain.x_boundary", "unknown boundary \"%s\" (use \"zero\" or \"periodic\")",
                   xb);
    if (yb != NULL && strcmp(yb, "zero") != 0)
        return bad(r, "domain.y_boundary", "unknown boundary \"%s\" (only \"zero\" is supported)",
                   yb);
    return EDDY_OK;
}

/* "bh_curve": [[H, B], ...] in A/m and T: at least 3 points counting the
 * origin, which is added when the curve does not start there; H and B finite
 * and strictly increasing (a curve that is not monotone has no unique
 * solution).  path names the key in messages. */
static eddy_status read_bh_curve(reader *r, const cJSON *item, const char *path,
                                 mesh_bh_curve *out)
{
    if (!cJSON_IsArray(item))
        return bad(r, path, "must be an array of [H in A/m, B in T] pairs");
    int len = cJSON_GetArraySize(item), k = 0;
    const cJSON *e = item->child;
    out->n = 0;
    out->h[0] = out->b[0] = 0.0;
    int n = 1; /* the origin */
    for (; e != NULL; e = e->next, k++) {
        char p[360];
        snprintf(p, sizeof p, "%s[%d]", path, k);
        double hb[2];
        TRY(get_numbers(r, e, p, 2, hb));
        if (k == 0 && hb[0] == 0.0 && hb[1] == 0.0)
            continue; /* the origin, given */
        if (hb[0] < 0.0 || hb[1] < 0.0)
            return bad(r, p, "H and B must not be negative (got %g A/m, %g T)", hb[0], hb[1]);
        if (n >= MESH_BH_MAX)
            return bad(r, path, "too many points (%d given, at most %d counting the origin)",
                       len, MESH_BH_MAX);
        if (!(hb[0] > out->h[n - 1]) || !(hb[1] > out->b[n - 1]))
            return bad(r, p, "H and B must both increase strictly along the curve (got "
                             "[%g, %g] after [%g, %g]); a curve that is not monotone is "
                             "rejected", hb[0], hb[1], out->h[n - 1], out->b[n - 1]);
        out->h[n] = hb[0];
        out->b[n] = hb[1];
        n++;
    }
    if (n < 3)
        return bad(r, path, "needs at least 3 points counting (0, 0) (got %d)", n);
    out->n = n;
    return EDDY_OK;
}

static eddy_status read_materials(reader *r, const cJSON *root)
{
    static const char *const keys[] = {"conductivity", "relative_permeability", "remanence",
                                       "density", "specific_heat", "temperature_coefficient",
                                       "bh_curve", "description", "source", NULL};
    mesh_case *c = r->c;
    const cJSON *mats = cJSON_GetObjectItemCaseSensitive(root, "materials");
    if (mats == NULL)
        return EDDY_OK;
    if (!cJSON_IsObject(mats))
        return bad(r, "materials", "must be an object of named materials");
    TRY(check_keys(r, mats, "materials", NULL)); /* any name; duplicates only */
    int n = cJSON_GetArraySize(mats);
    if (n > MAX_MATERIALS)
        return bad(r, "materials", "too many materials (%d, at most %d)", n, MAX_MATERIALS);
    c->materials = calloc((size_t)(n > 0 ? n : 1), sizeof *c->materials);
    if (c->materials == NULL)
        return EDDY_RAISE(r->err, EDDY_ERR_NOMEM, "out of memory");
    for (const cJSON *m = mats->child; m != NULL; m = m->next) {
        char p[300];
        snprintf(p, sizeof p, "materials.%s", m->string);
        if (m->string[0] == '\0' || strlen(m->string) >= sizeof c->materials[0].name)
            return bad(r, p, "material name must have 1 to %d characters",
                       (int)sizeof c->materials[0].name - 1);
        if (!cJSON_IsObject(m))
            return bad(r, p, "must be an object");
        TRY(check_keys(r, m, p, keys));
        mesh_material *mat = &c->materials[c->nmat];
        snprintf(mat->name, sizeof mat->name, "%s", m->string);
        mat->sigma = 0.0;
        mat->mu_r = 1.0;
        mat->br = 0.0;
        mat->source = NULL;
        TRY(get_number(r, m, "conductivity", p, 0, &mat->sigma, NULL));
        TRY(get_number(r, m, "relative_permeability", p, 0, &mat->mu_r, NULL));
        TRY(get_number(r, m, "remanence", p, 0, &mat->br, NULL));
        mat->density = mat->specific_heat = mat->alpha = 0.0;
        TRY(get_number(r, m, "density", p, 0, &mat->density, NULL));
        TRY(get_number(r, m, "specific_heat", p, 0, &mat->specific_heat, NULL));
        TRY(get_number(r, m, "temperature_coefficient", p, 0, &mat->alpha, NULL));
        char q[340];
        if (mat->density < 0 || mat->specific_heat < 0) {
            snprintf(q, sizeof q, "%s.%s", p, mat->density < 0 ? "density" : "specific_heat");
            return bad(r, q, "must not be negative");
        }
        if (mat->sigma < 0.0) {
            snprintf(q, sizeof q, "%s.conductivity", p);
            return bad(r, q, "must not be negative (got %g S/m)", mat->sigma);
        }
        if (!(mat->mu_r > 0.0)) {
            snprintf(q, sizeof q, "%s.relative_permeability", p);
            return bad(r, q, "must be positive (got %g)", mat->mu_r);
        }
        if (mat->br < 0.0) {
            snprintf(q, sizeof q, "%s.remanence", p);
            return bad(r, q, "must not be negative (got %g T); give the direction with the "
                             "region's magnetization_angle", mat->br);
        }
        mat->bh.n = 0;
        const cJSON *bh = cJSON_GetObjectItemCaseSensitive(m, "bh_curve");
        if (bh != NULL) {
            snprintf(q, sizeof q, "%s.bh_curve", p);
            if (cJSON_GetObjectItemCaseSensitive(m, "relative_permeability") != NULL)
                return bad(r, q, "give either \"bh_curve\" or \"relative_permeability\", "
                                 "not both");
            if (mat->br > 0.0)
                return bad(r, q, "a material with a B-H curve cannot have a remanence");
            TRY(read_bh_curve(r, bh, q, &mat->bh));
            mat->mu_r = mat->bh.b[1] / (EDDY_MU0 * mat->bh.h[1]);
        }
        mat->sigma_20 = mat->sigma;
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

static eddy_status read_regions(reader *r, const cJSON *root)
{
    static const char *const keys[] = {"name",    "material",           "box",
                                       "moving",  "magnetization_angle", "current",
                                       "current_density", "description", NULL};
    mesh_case *c = r->c;
    const cJSON *regs = cJSON_GetObjectItemCaseSensitive(root, "regions");
    if (regs == NULL)
        return bad(r, "regions", "missing (an array of regions is required)");
    if (!cJSON_IsArray(regs))
        return bad(r, "regions", "must be an array");
    int n = cJSON_GetArraySize(regs);
    if (n == 0)
        return bad(r, "regions", "must not be empty");
    if (n > MAX_REGIONS)
        return bad(r, "regions", "too many regions (%d, at most %d)", n, MAX_REGIONS);
    c->regions = calloc((size_t)n, sizeof *c->regions);
    if (c->regions == NULL)
        return EDDY_RAISE(r->err, EDDY_ERR_NOMEM, "out of memory");
    double lx = c->x1 - c->x0, ly = c->y1 - c->y0;
    double tol = EDGE_TOL * (lx > ly ? lx : ly);
    int k = 0;
    for (const cJSON *e = regs->child; e != NULL; e = e->next, k++) {
        char p[64], q[128];
        snprintf(p, sizeof p, "regions[%d]", k);
        if (!cJSON_IsObject(e))
            return bad(r, p, "must be an object");
        TRY(check_keys(r, e, p, keys));
        mesh_region *g = &c->regions[k];
        const char *s = NULL;
        TRY(get_string(r, e, "name", p, 0, &s));
        if (s != NULL && (s[0] == '\0' || strlen(s) >= sizeof g->name)) {
            snprintf(q, sizeof q, "%s.name", p);
            return bad(r, q, "must have 1 to %d characters", (int)sizeof g->name - 1);
        }
        snprintf(g->name, sizeof g->name, "%s", s != NULL ? s : p);
        TRY(get_string(r, e, "material", p, 0, &s));
        g->material = -1;
        if (s != NULL && strcmp(s, "air") != 0) {
            g->material = find_material(c, s);
            snprintf(q, sizeof q, "%s.material", p);
            if (g->material == -3)
                return EDDY_RAISE(r->err, EDDY_ERR_NOMEM, "out of memory");
            if (g->material == -2)
                return bad(r, q, "unknown material \"%s\" (not in \"materials\" nor in the "
                                 "built-in library; `eddy2d materials` lists it)", s);
        }
        const cJSON *box = cJSON_GetObjectItemCaseSensitive(e, "box");
        snprintf(q, sizeof q, "%s.box", p);
        if (box == NULL)
            return bad(r, q, "missing ([x0, y0, x1, y1] is required)");
        TRY(get_numbers(r, box, q, 4, g->box));
        for (int t = 0; t < 4; t++)
            g->box[t] *= c->length_scale;
        if (!(g->box[2] > g->box[0]))
            return bad(r, q, "x1 must be greater than x0");
        if (!(g->box[3] > g->box[1]))
            return bad(r, q, "y1 must be greater than y0");
        if (g->box[0] < c->x0 - tol || g->box[2] > c->x1 + tol || g->box[1] < c->y0 - tol ||
            g->box[3] > c->y1 + tol)
            return bad(r, q, "lies (partly) outside the domain");
        const cJSON *mv = cJSON_GetObjectItemCaseSensitive(e, "moving");
        if (mv != NULL && !cJSON_IsBool(mv)) {
            snprintf(q, sizeof q, "%s.moving", p);
            return bad(r, q, "must be true or false");
        }
        g->moving = mv != NULL && cJSON_IsTrue(mv);
        const mesh_material *mat = g->material >= 0 ? &c->materials[g->material] : NULL;
        double deg = 90.0;
        int has_angle = 0;
        TRY(get_number(r, e, "magnetization_angle", p, 0, &deg, &has_angle));
        g->mag_angle = deg * EDDY_PI / 180.0;
        if (mat != NULL && mat->br > 0.0 && !has_angle) {
            snprintf(q, sizeof q, "%s.magnetization_angle", p);
            return bad(r, q, "missing: material \"%s\" has a remanence, so the direction "
                             "(degrees from +x) is required", mat->name);
        }
        if (has_angle && (mat == NULL || mat->br == 0.0))
            TRY(warn(r, "%s: %s.magnetization_angle: ignored, the material has no remanence",
                     r->fname, p));
        double cur = 0.0, cd = 0.0;
        int has_cur = 0, has_cd = 0;
        TRY(get_number(r, e, "current", p, 0, &cur, &has_cur));
        TRY(get_number(r, e, "current_density", p, 0, &cd, &has_cd));
        if (has_cur && has_cd)
            return bad(r, p, "give either \"current\" or \"current_density\", not both");
        g->jz = has_cd ? cd : has_cur ? cur / ((g->box[2] - g->box[0]) * (g->box[3] - g->box[1]))
                                      : 0.0;
        if (g->moving) {
            if ((has_cur || has_cd) && g->jz != 0.0)
                return bad(r, p, "a moving region cannot carry a source current");
            if (mat != NULL && mat->br > 0.0)
                return bad(r, p, "a moving region cannot be a magnet (the field must be "
                                 "steady in the magnet frame)");
            if (fabs(g->box[0] - c->x0) > tol || fabs(g->box[2] - c->x1) > tol)
                return bad(r, q, "a moving region must span the whole x-extent of the domain "
                                 "(%g to %g %s) so that the field is steady in the magnet frame",
                           c->x0 / c->length_scale, c->x1 / c->length_scale, c->length_unit);
            if (mat == NULL || mat->sigma == 0.0)
                TRY(warn(r, "%s: %s: moving region has no conductivity; it carries no eddy "
                            "current", r->fname, p));
        }
    }
    c->nreg = n;
    /* A moving region may not overlap any other region. */
    for (int a = 0; a < n; a++)
        for (int b = 0; b < n; b++) {
            if (a == b || !c->regions[a].moving)
                continue;
            if (boxes_overlap(c->regions[a].box, c->regions[b].box, tol)) {
                char p[64];
                snprintf(p, sizeof p, "regions[%d]", b);
                return bad(r, p, "overlaps moving region \"%s\" (regions[%d]); moving regions "
                                 "may not overlap other regions", c->regions[a].name, a);
            }
        }
    return EDDY_OK;
}

/* Log-spaced speeds from a to b (same sign, |a| < |b|), n points. */
static eddy_status log_speeds(reader *r, double a, double b, int n)
{
    mesh_case *c = r->c;
    c->speeds = malloc((size_t)n * sizeof *c->speeds);
    if (c->speeds == NULL)
        return EDDY_RAISE(r->err, EDDY_ERR_NOMEM, "out of memory");
    for (int k = 0; k < n; k++)
        c->speeds[k] = n == 1 ? a : a * pow(b / a, (double)k / (n - 1));
    c->nspeed = n;
    return EDDY_OK;
}

/* "speeds": {"from": a, "to": b, "points": n} (log-spaced) or
 * {"from": a, "to": b, "auto": true [, "points": n0, "max_points": m]}. */
static eddy_status read_speed_range(reader *r, const cJSON *sp)
{
    static const char *const keys[] = {"from", "to", "points", "auto", "max_points", NULL};
    mesh_case *c = r->c;
    TRY(check_keys(r, sp, "speeds", keys));
    double a = 0, b = 0, pts = 0, mx = 40;
    int has_pts = 0;
    TRY(get_number(r, sp, "from", "speeds", 1, &a, NULL));
    TRY(get_number(r, sp, "to", "speeds", 1, &b, NULL));
    TRY(get_number(r, sp, "points", "speeds", 0, &pts, &has_pts));
    TRY(get_number(r, sp, "max_points", "speeds", 0, &mx, NULL));
    const cJSON *au = cJSON_GetObjectItemCaseSensitive(sp, "auto");
    if (au != NULL && !cJSON_IsBool(au))
        return bad(r, "speeds.auto", "must be true or false");
    int is_auto = au != NULL && cJSON_IsTrue(au);
    if (!(a > 0 && b > a))
        return bad(r, "speeds", "a range needs 0 < from < to (m/s); give a list for other speeds");
    if (!has_pts)
        pts = is_auto ? 9 : 0;
    if (!(pts >= 2 && pts <= MAX_SPEEDS && pts == floor(pts)))
        return bad(r, "speeds.points", "must be a whole number from 2 to %d", MAX_SPEEDS);
    if (is_auto && !(mx >= pts && mx <= 1000 && mx == floor(mx)))
        return bad(r, "speeds.max_points", "must be a whole number from points to 1000");
    c->speed_mode = is_auto ? MESH_SPEEDS_AUTO : MESH_SPEEDS_LOG;
    c->speed_from = a;
    c->speed_to = b;
    c->max_points = (int)mx;
    return log_speeds(r, a, b, (int)pts);
}

static eddy_status read_speeds(reader *r, const cJSON *root)
{
    mesh_case *c = r->c;
    const cJSON *sp = cJSON_GetObjectItemCaseSensitive(root, "speeds");
    if (sp == NULL && c->disc.present && c->disc.rpm != NULL)
        return EDDY_OK; /* the disc's rpm list gave them */
    if (sp == NULL)
        return bad(r, "speeds", "missing (a list of speeds in m/s is required)");
    if (c->disc.present && c->disc.rpm != NULL)
        return bad(r, "speeds", "give either speeds or disc.rpm, not both");
    if (cJSON_IsObject(sp))
        return read_speed_range(r, sp);
    if (!cJSON_IsArray(sp))
        return bad(r, "speeds", "must be an array of speeds in m/s, or {\"from\", \"to\", "
                                "\"points\"} or {\"from\", \"to\", \"auto\": true}");
    int n = cJSON_GetArraySize(sp);
    if (n == 0)
        return bad(r, "speeds", "must not be empty");
    if (n > MAX_SPEEDS)
        return bad(r, "speeds", "too many speeds (%d, at most %d)", n, MAX_SPEEDS);
    c->speeds = malloc((size_t)n * sizeof *c->speeds);
    if (c->speeds == NULL)
        return EDDY_RAISE(r->err, EDDY_ERR_NOMEM, "out of memory");
    int k = 0;
    for (const cJSON *e = sp->child; e != NULL; e = e->next, k++) {
        char p[64];
        snprintf(p, sizeof p, "speeds[%d]", k);
        if (!cJSON_IsNumber(e))
            return bad(r, p, "must be a number (m/s)");
        if (!isfinite(e->valuedouble))
            return bad(r, p, "must be a finite number");
        c->speeds[k] = e->valuedouble;
    }
    c->nspeed = n;
    return EDDY_OK;
}

static eddy_status read_mesh(reader *r, const cJSON *root)
{
    static const char *const keys[] = {"max_size", "min_size", "growth", "refine", "design_speed",
                                       NULL};
    mesh_case *c = r->c;
    const cJSON *m = cJSON_GetObjectItemCaseSensitive(root, "mesh");
    if (m == NULL)
        return EDDY_OK;
    if (!cJSON_IsObject(m))
        return bad(r, "mesh", "must be an object");
    TRY(check_keys(r, m, "mesh", keys));
    int f1 = 0, f2 = 0, f3 = 0;
    double mx = 0, mn = 0, gr = 0;
    TRY(get_number(r, m, "max_size", "mesh", 0, &mx, &f1));
    TRY(get_number(r, m, "min_size", "mesh", 0, &mn, &f2));
    TRY(get_number(r, m, "growth", "mesh", 0, &gr, &f3));
    if (f1 && !(mx > 0))
        return bad(r, "mesh.max_size", "must be positive");
    if (f2 && !(mn > 0))
        return bad(r, "mesh.min_size", "must be positive");
    if (f1 && f2 && mn > mx)
        return bad(r, "mesh.min_size", "must not exceed mesh.max_size");
    if (f3 && !(gr > 1.0 && gr <= 2.0))
        return bad(r, "mesh.growth", "must lie in (1, 2] (got %g)", gr);
    double refine = 1;
    int f4 = 0;
    TRY(get_number(r, m, "refine", "mesh", 0, &refine, &f4));
    if (f4 && !(refine >= 1 && refine <= 64 && refine == floor(refine)))
        return bad(r, "mesh.refine", "must be a whole number from 1 to 64 (got %g)", refine);
    c->mesh.refine = (int)refine;
    double ds = 0;
    int f5 = 0;
    TRY(get_number(r, m, "design_speed", "mesh", 0, &ds, &f5));
    if (f5 && !(ds >= 0))
        return bad(r, "mesh.design_speed", "must not be negative (m/s)");
    c->mesh.design_speed = ds;
    c->mesh.max_size = mx * c->length_scale;
    c->mesh.min_size = mn * c->length_scale;
    c->mesh.growth = gr;
    return EDDY_OK;
}

int mesh_name_is_safe(const char *s)
{
    size_t len = strlen(s);
    if (len == 0 || len >= 64 || s[0] == '.')
        return 0;
    for (size_t k = 0; k < len; k++) {
        char ch = s[k];
        if (!((ch >= 'a' && ch <= 'z') || (ch >= 'A' && ch <= 'Z') || (ch >= '0' && ch <= '9') ||
              ch == '_' || ch == '-' || ch == '.'))
            return 0;
    }
    return 1;
}

static eddy_status read_profiles(reader *r, const cJSON *root)
{
    static const char *const keys[] = {"name", "from", "to", "points", NULL};
    mesh_case *c = r->c;
    const cJSON *pr = cJSON_GetObjectItemCaseSensitive(root, "profiles");
    if (pr == NULL)
        return EDDY_OK;
    if (!cJSON_IsArray(pr))
        return bad(r, "profiles", "must be an array of line profiles");
    int n = cJSON_GetArraySize(pr);
    if (n > 100)
        return bad(r, "profiles", "too many profiles (%d, at most 100)", n);
    c->profiles = calloc((size_t)(n > 0 ? n : 1), sizeof *c->profiles);
    if (c->profiles == NULL)
        return EDDY_RAISE(r->err, EDDY_ERR_NOMEM, "out of memory");
    int k = 0;
    double tol = 1e-9 * fmax(c->x1 - c->x0, c->y1 - c->y0);
    for (const cJSON *e = pr->child; e != NULL; e = e->next, k++) {
        char p[64], q[96];
        snprintf(p, sizeof p, "profiles[%d]", k);
        if (!cJSON_IsObject(e))
            return bad(r, p, "must be an object");
        TRY(check_keys(r, e, p, keys));
        mesh_profile *m = &c->profiles[k];
        const char *s = NULL;
        TRY(get_string(r, e, "name", p, 0, &s));
        snprintf(q, sizeof q, "%s.name", p);
        if (s != NULL && !mesh_name_is_safe(s))
            return bad(r, q, "may hold only letters, digits, '_', '-' and '.' (it names a file)");
        snprintf(m->name, sizeof m->name, "%s", s != NULL ? s : "profile");
        if (s == NULL)
            snprintf(m->name, sizeof m->name, "profile%d", k);
        const cJSON *it = cJSON_GetObjectItemCaseSensitive(e, "from");
        snprintf(q, sizeof q, "%s.from", p);
        if (it == NULL)
            return bad(r, q, "missing ([x, y] is required)");
        TRY(get_numbers(r, it, q, 2, m->p0));
        it = cJSON_GetObjectItemCaseSensitive(e, "to");
        snprintf(q, sizeof q, "%s.to", p);
        if (it == NULL)
            return bad(r, q, "missing ([x, y] is required)");
        TRY(get_numbers(r, it, q, 2, m->p1));
        for (int t = 0; t < 2; t++) {
            m->p0[t] *= c->length_scale;
            m->p1[t] *= c->length_scale;
        }
        if (!(fabs(m->p0[0] - m->p1[0]) <= tol) == !(fabs(m->p0[1] - m->p1[1]) <= tol))
            return bad(r, p, "the line must be horizontal or vertical and not a point");
        for (int t = 0; t < 2; t++) {
            const double *pt = t == 0 ? m->p0 : m->p1;
            if (pt[0] < c->x0 - tol || pt[0] > c->x1 + tol || pt[1] < c->y0 - tol ||
                pt[1] > c->y1 + tol) {
                snprintf(q, sizeof q, "%s.%s", p, t == 0 ? "from" : "to");
                return bad(r, q, "lies outside the domain");
            }
        }
        double pts = 201;
        int found = 0;
        TRY(get_number(r, e, "points", p, 0, &pts, &found));
        snprintf(q, sizeof q, "%s.points", p);
        if (!(pts >= 2 && pts <= 1e6 && pts == floor(pts)))
            return bad(r, q, "must be a whole number from 2 to 1000000");
        m->points = (int)pts;
    }
    c->nprofile = n;
    return EDDY_OK;
}

/* A positive number at obj[key] (required), scaled by scale. */
static eddy_status positive(reader *r, const cJSON *obj, const char *key, const char *path,
                            double scale, double *out)
{
    TRY(get_number(r, obj, key, path, 1, out, NULL));
    if (!(*out > 0)) {
        char q[160];
        snprintf(q, sizeof q, "%s.%s", path, key);
        return bad(r, q, "must be positive");
    }
    *out *= scale;
    return EDDY_OK;
}

static eddy_status read_vehicle(reader *r, const cJSON *root)
{
    static const char *const keys[] = {"mass",       "depth",       "repeat",         "from_speed",
                                       "to_speed",   "extra_force", "conductor_mass", NULL};
    mesh_case *c = r->c;
    const cJSON *v = cJSON_GetObjectItemCaseSensitive(root, "vehicle");
    if (v == NULL)
        return EDDY_OK;
    if (!cJSON_IsObject(v))
        return bad(r, "vehicle", "must be an object");
    TRY(check_keys(r, v, "vehicle", keys));
    mesh_vehicle *h = &c->vehicle;
    h->present = 1;
    h->repeat = 1.0;
    TRY(positive(r, v, "mass", "vehicle", 1.0, &h->mass));
    TRY(positive(r, v, "depth", "vehicle", c->length_scale, &h->depth));
    TRY(positive(r, v, "from_speed", "vehicle", 1.0, &h->from_speed));
    TRY(get_number(r, v, "to_speed", "vehicle", 1, &h->to_speed, NULL));
    TRY(get_number(r, v, "repeat", "vehicle", 0, &h->repeat, NULL));
    TRY(get_number(r, v, "extra_force", "vehicle", 0, &h->extra_force, NULL));
    TRY(get_number(r, v, "conductor_mass", "vehicle", 0, &h->conductor_mass, NULL));
    if (!(h->repeat > 0))
        return bad(r, "vehicle.repeat", "must be positive");
    if (h->extra_force < 0 || h->conductor_mass < 0)
        return bad(r, h->extra_force < 0 ? "vehicle.extra_force" : "vehicle.conductor_mass",
                   "must not be negative");
    if (!(h->to_speed >= 0 && h->to_speed < h->from_speed))
        return bad(r, "vehicle.to_speed", "must lie in [0, from_speed)");
    if (h->to_speed == 0 && h->extra_force == 0)
        return bad(r, "vehicle.to_speed",
                   "must be above 0: an eddy-current brake alone never brings a load to rest "
                   "(its drag falls to zero with speed); give a final speed, or an extra_force");
    return EDDY_OK;
}

static eddy_status read_end_effect(reader *r, const cJSON *root)
{
    static const char *const keys[] = {"plate_width", "active_width", "pole_pitch", NULL};
    mesh_case *c = r->c;
    const cJSON *e = cJSON_GetObjectItemCaseSensitive(root, "end_effect");
    if (e == NULL)
        return EDDY_OK;
    if (!cJSON_IsObject(e))
        return bad(r, "end_effect", "must be an object");
    TRY(check_keys(r, e, "end_effect", keys));
    mesh_end_effect *h = &c->end_effect;
    h->present = 1;
    TRY(positive(r, e, "plate_width", "end_effect", c->length_scale, &h->plate_width));
    TRY(positive(r, e, "active_width", "end_effect", c->length_scale, &h->active_width));
    if (h->active_width > h->plate_width)
        return bad(r, "end_effect.active_width", "must not exceed plate_width");
    int has = 0;
    TRY(get_number(r, e, "pole_pitch", "end_effect", 0, &h->pole_pitch, &has));
    if (has && !(h->pole_pitch > 0))
        return bad(r, "end_effect.pole_pitch", "must be positive");
    h->pole_pitch *= c->length_scale;
    if (!has) {
        if (!c->x_periodic)
            return bad(r, "end_effect.pole_pitch",
                       "missing: required unless the domain is periodic (one period = two "
                       "poles)");
        h->pole_pitch = 0.5 * (c->x1 - c->x0);
    }
    return EDDY_OK;
}

static eddy_status read_disc(reader *r, const cJSON *root)
{
    static const char *const keys[] = {"mean_radius", "active_length", "periods", "rpm", NULL};
    mesh_case *c = r->c;
    const cJSON *d = cJSON_GetObjectItemCaseSensitive(root, "disc");
    if (d == NULL)
        return EDDY_OK;
    if (!cJSON_IsObject(d))
        return bad(r, "disc", "must be an object");
    TRY(check_keys(r, d, "disc", keys));
    mesh_disc *h = &c->disc;
    h->present = 1;
    TRY(positive(r, d, "mean_radius", "disc", c->length_scale, &h->mean_radius));
    TRY(positive(r, d, "active_length", "disc", c->length_scale, &h->active_length));
    int has = 0;
    TRY(get_number(r, d, "periods", "disc", 0, &h->periods, &has));
    if (has && !(h->periods > 0))
        return bad(r, "disc.periods", "must be positive");
    if (!has) {
        if (!c->x_periodic)
            return bad(r, "disc.periods", "missing: required unless the domain is periodic");
        h->periods = 2.0 * EDDY_PI * h->mean_radius / (c->x1 - c->x0);
    }
    const cJSON *rpm = cJSON_GetObjectItemCaseSensitive(d, "rpm");
    if (rpm == NULL)
        return EDDY_OK;
    if (!cJSON_IsArray(rpm) || cJSON_GetArraySize(rpm) == 0 ||
        cJSON_GetArraySize(rpm) > MAX_SPEEDS)
        return bad(r, "disc.rpm", "must be a non-empty array of rotational speeds (rpm)");
    int n = cJSON_GetArraySize(rpm), k = 0;
    h->rpm = malloc((size_t)n * sizeof *h->rpm);
    c->speeds = malloc((size_t)n * sizeof *c->speeds);
    if (h->rpm == NULL || c->speeds == NULL)
        return EDDY_RAISE(r->err, EDDY_ERR_NOMEM, "out of memory");
    for (const cJSON *e = rpm->child; e != NULL; e = e->next, k++) {
        char p[64];
        snprintf(p, sizeof p, "disc.rpm[%d]", k);
        if (!cJSON_IsNumber(e) || !isfinite(e->valuedouble))
            return bad(r, p, "must be a finite number");
        h->rpm[k] = e->valuedouble;
        c->speeds[k] = design_disc_speed(h->mean_radius, h->rpm[k]);
    }
    c->nspeed = n;
    return EDDY_OK;
}

/* Conductivities at the case temperature: sigma = sigma_20 / (1 + alpha (T - 20)). */
static eddy_status apply_temperature(reader *r, const cJSON *root)
{
    mesh_case *c = r->c;
    int has = 0;
    TRY(get_number(r, root, "temperature", "", 0, &c->temperature, &has));
    if (!has)
        return EDDY_OK;
    /* the one sigma(T) rule (design/design.h) decides the range */
    eddy_error e = {0};
    double sig = 0.0;
    if (design_sigma_at_temperature(1.0, 0.0, c->temperature, &sig, &e) != EDDY_OK)
        return bad(r, "temperature", "%s", e.msg);
    c->has_temperature = 1;
    for (int k = 0; k < c->nmat; k++) {
        mesh_material *m = &c->materials[k];
        if (m->sigma_20 <= 0.0)
            continue;
        if (m->alpha == 0.0) {
            TRY(warn(r, "%s: temperature: material \"%s\" has no temperature_coefficient; its "
                        "conductivity at 20 C is used", r->fname, m->name));
            continue;
        }
        if (design_sigma_at_temperature(m->sigma_20, m->alpha, c->temperature, &m->sigma, &e) !=
            EDDY_OK)
            return bad(r, "temperature", "material \"%s\": %s", m->name, e.msg);
    }
    return EDDY_OK;
}

static eddy_status parse_root(reader *r, const cJSON *root)
{
    static const char *const keys[] = {"name",    "description", "length_unit", "domain",
                                       "materials", "regions",   "speeds",      "mesh",
                                       "profiles", "variants", "temperature", "vehicle",
                                       "end_effect", "disc", NULL};
    mesh_case *c = r->c;
    if (!cJSON_IsObject(root))
        return bad(r, "(top level)", "must be a JSON object");
    TRY(check_keys(r, root, "(top level)", keys));
    const char *s = NULL;
    TRY(get_string(r, root, "name", "", 0, &s));
    if (s != NULL) {
        if (!mesh_name_is_safe(s))
            return bad(r, "name", "must have 1 to 63 characters, only letters, digits, '_', '-' "
                                  "and '.' (it names the result folder), and not start with '.'");
        snprintf(c->name, sizeof c->name, "%s", s);
    }
    TRY(get_string(r, root, "description", "", 0, &s));
    if (s != NULL)
        snprintf(c->description, sizeof c->description, "%s", s);
    TRY(get_string(r, root, "length_unit", "", 0, &s));
    if (s == NULL || strcmp(s, "m") == 0) {
        snprintf(c->length_unit, sizeof c->length_unit, "m");
        c->length_scale = 1.0;
    } else if (strcmp(s, "mm") == 0) {
        snprintf(c->length_unit, sizeof c->length_unit, "mm");
        c->length_scale = 1e-3;
    } else {
        return bad(r, "length_unit", "unknown unit \"%s\" (use \"m\" or \"mm\")", s);
    }
    TRY(read_domain(r, root));
    TRY(read_materials(r, root));
    TRY(read_regions(r, root));
    TRY(read_disc(r, root));
    TRY(read_speeds(r, root));
    TRY(read_mesh(r, root));
    TRY(read_profiles(r, root));
    TRY(read_vehicle(r, root));
    TRY(read_end_effect(r, root));
    TRY(apply_temperature(r, root));
    if (c->vehicle.present) {
        double vmax = 0.0;
        for (int k = 0; k < c->nspeed; k++)
            vmax = fmax(vmax, fabs(c->speeds[k]));
        if (c->vehicle.from_speed > vmax * (1 + 1e-12))
            return bad(r, "vehicle.from_speed", "%g m/s lies above the highest speed solved "
                                                "(%g m/s); extend the speeds",
                       c->vehicle.from_speed, vmax);
    }
    if (cJSON_GetObjectItemCaseSensitive(root, "variants") != NULL)
        TRY(warn(r, "%s: variants: ignored here; `eddy2d batch` expands them into cases",
                 r->fname));
    return EDDY_OK;
}

/* Line and column (1-based) of a byte offset in text. */
static void line_col(const char *text, size_t off, int *line, int *col)
{
    *line = 1;
    *col = 1;
    for (size_t k = 0; k < off && text[k] != '\0'; k++) {
        if (text[k] == '\n') {
            (*line)++;
            *col = 1;
        } else {
            (*col)++;
        }
    }
}

eddy_status mesh_case_parse(const char *text, const char *fname, mesh_case **out,
                            eddy_error *err)
{
    *out = NULL;
    if (fname == NULL)
        fname = "(case)";
    mesh_case *c = calloc(1, sizeof *c);
    if (c == NULL)
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
    snprintf(c->path, sizeof c->path, "%s", fname);
    eddy_name_from_path(fname, c->name, sizeof c->name);
    reader r = {fname, err, c};
    const char *end = NULL;
    cJSON *root = cJSON_ParseWithOpts(text, &end, 1);
    if (root == NULL) {
        const char *at = cJSON_GetErrorPtr();
        eddy_status s;
        if (at != NULL && at >= text && at <= text + strlen(text)) {
            int line, col;
            line_col(text, (size_t)(at - text), &line, &col);
            s = EDDY_RAISE(err, EDDY_ERR_INPUT,
                           "%s: line %d, column %d: not valid JSON (malformed or truncated)",
                           fname, line, col);
        } else {
            s = EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: not valid JSON (malformed or truncated)",
                           fname);
        }
        mesh_case_free(c);
        return s;
    }
    eddy_status s = parse_root(&r, root);
    cJSON_Delete(root);
    if (s != EDDY_OK) {
        mesh_case_free(c);
        return s;
    }
    *out = c;
    return EDDY_OK;
}

eddy_status mesh_case_load(const char *path, mesh_case **out, eddy_error *err)
{
    *out = NULL;
    char *text = NULL;
    eddy_status s = eddy_read_file(path, MAX_CASE_BYTES, &text, NULL, err);
    if (s != EDDY_OK)
        return s;
    s = mesh_case_parse(text, path, out, err);
    free(text);
    return s;
}

void mesh_case_free(mesh_case *c)
{
    if (c == NULL)
        return;
    free(c->materials);
    free(c->regions);
    free(c->speeds);
    free(c->warnings);
    free(c->profiles);
    free(c->disc.rpm);
    free(c);
}
