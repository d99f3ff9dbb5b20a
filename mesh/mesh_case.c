/*
 * mesh_case.c - read and validate a case file (JSON, parsed with cJSON): the
 * top level, the domain, the mesh parameters and the line profiles.  The
 * other sections have their own files: materials and regions
 * (mesh_case_regions.c), speeds and the brake-design blocks
 * (mesh_case_design.c); the cJSON helpers are in mesh_json.c.
 *
 * Every message names the file and the JSON path of the offending value.
 * Lengths are converted to metres here, once; nothing downstream sees the
 * case file's unit except for display.
 */
#include "mesh/mesh_case_int.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define MAX_CASE_BYTES (16L * 1024 * 1024)

static eddy_status read_domain(mesh_reader *r, const cJSON *root)
{
    static const char *const keys[] = {"x", "y", "x_boundary", "y_boundary", NULL};
    mesh_case *c = r->c;
    if (c->geometry == MESH_AXISYMMETRIC)
        return mesh_case_read_domain_rz(r, root);
    const cJSON *dom = cJSON_GetObjectItemCaseSensitive(root, "domain");
    if (dom == NULL)
        return mesh_json_bad(r, "domain",
                             "missing (an object with x, y and boundaries is required)");
    MESH_TRY(mesh_json_object(r, dom, "domain", keys));
    double xs[2], ys[2];
    MESH_TRY(mesh_json_numbers_at(r, dom, "x", "domain.x", "[x0, x1]", 2, xs));
    MESH_TRY(mesh_json_numbers_at(r, dom, "y", "domain.y", "[y0, y1]", 2, ys));
    if (!(xs[1] > xs[0]))
        return mesh_json_bad(r, "domain.x", "x1 must be greater than x0");
    if (!(ys[1] > ys[0]))
        return mesh_json_bad(r, "domain.y", "y1 must be greater than y0");
    c->x0 = xs[0] * c->length_scale;
    c->x1 = xs[1] * c->length_scale;
    c->y0 = ys[0] * c->length_scale;
    c->y1 = ys[1] * c->length_scale;
    const char *xb = NULL, *yb = NULL;
    MESH_TRY(mesh_json_string(r, dom, "x_boundary", "domain", 0, &xb));
    MESH_TRY(mesh_json_string(r, dom, "y_boundary", "domain", 0, &yb));
    c->x_periodic = c->x_open = c->y_open = 0;
    if (xb == NULL || strcmp(xb, "zero") == 0)
        c->x_periodic = 0;
    else if (strcmp(xb, "periodic") == 0)
        c->x_periodic = 1;
    else if (strcmp(xb, "open") == 0)
        c->x_open = 1;
    else
        return mesh_json_bad(r, "domain.x_boundary",
                             "unknown boundary \"%s\" (use \"zero\", \"periodic\" or \"open\")",
                             xb);
    if (yb == NULL || strcmp(yb, "zero") == 0)
        c->y_open = 0;
    else if (strcmp(yb, "open") == 0)
        c->y_open = 1;
    else
        return mesh_json_bad(r, "domain.y_boundary",
                             "unknown boundary \"%s\" (use \"zero\" or \"open\")", yb);
    return EDDY_OK;
}

static eddy_status read_mesh(mesh_reader *r, const cJSON *root)
{
    static const char *const keys[] = {"max_size", "min_size",       "growth",    "refine",
                                       "design_speed", "error_estimate", "tolerance", NULL};
    mesh_case *c = r->c;
    const cJSON *m = cJSON_GetObjectItemCaseSensitive(root, "mesh");
    if (m == NULL)
        return EDDY_OK;
    MESH_TRY(mesh_json_object(r, m, "mesh", keys));
    int f1 = 0, f2 = 0, f3 = 0;
    double mx = 0, mn = 0, gr = 0;
    MESH_TRY(mesh_json_number(r, m, "max_size", "mesh", 0, &mx, &f1));
    MESH_TRY(mesh_json_number(r, m, "min_size", "mesh", 0, &mn, &f2));
    MESH_TRY(mesh_json_number(r, m, "growth", "mesh", 0, &gr, &f3));
    if (f1 && !(mx > 0))
        return mesh_json_bad(r, "mesh.max_size", "must be positive");
    if (f2 && !(mn > 0))
        return mesh_json_bad(r, "mesh.min_size", "must be positive");
    if (f1 && f2 && mn > mx)
        return mesh_json_bad(r, "mesh.min_size", "must not exceed mesh.max_size");
    if (f3 && !(gr > 1.0 && gr <= 2.0))
        return mesh_json_bad(r, "mesh.growth", "must lie in (1, 2] (got %g)", gr);
    double refine = 1;
    int f4 = 0;
    MESH_TRY(mesh_json_number(r, m, "refine", "mesh", 0, &refine, &f4));
    if (f4 && !(refine >= 1 && refine <= 64 && refine == floor(refine)))
        return mesh_json_bad(r, "mesh.refine", "must be a whole number from 1 to 64 (got %g)",
                             refine);
    c->mesh.refine = (int)refine;
    double ds = 0;
    int f5 = 0;
    MESH_TRY(mesh_json_number(r, m, "design_speed", "mesh", 0, &ds, &f5));
    if (f5 && !(ds >= 0))
        return mesh_json_bad(r, "mesh.design_speed", "must not be negative (m/s)");
    c->mesh.design_speed = ds;
    const cJSON *ee = cJSON_GetObjectItemCaseSensitive(m, "error_estimate");
    if (ee != NULL && !cJSON_IsBool(ee))
        return mesh_json_bad(r, "mesh.error_estimate", "must be true or false");
    c->mesh.no_error_estimate = ee != NULL && cJSON_IsFalse(ee);
    double tol = 0;
    int f6 = 0;
    MESH_TRY(mesh_json_number(r, m, "tolerance", "mesh", 0, &tol, &f6));
    if (f6 && !(tol >= 1e-5 && tol <= 0.2))
        return mesh_json_bad(r, "mesh.tolerance",
                             "must lie from 1e-5 to 0.2 (a fraction, e.g. 0.002; got %g)", tol);
    if (f6 && c->mesh.no_error_estimate)
        return mesh_json_bad(r, "mesh.tolerance", "needs the error estimate (mesh.error_estimate "
                                                  "is false)");
    c->mesh.tolerance = tol;
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

static eddy_status read_profiles(mesh_reader *r, const cJSON *root)
{
    static const char *const keys[] = {"name", "from", "to", "points", NULL};
    mesh_case *c = r->c;
    const cJSON *pr = cJSON_GetObjectItemCaseSensitive(root, "profiles");
    if (pr == NULL)
        return EDDY_OK;
    if (!cJSON_IsArray(pr))
        return mesh_json_bad(r, "profiles", "must be an array of line profiles");
    int n = cJSON_GetArraySize(pr);
    if (n > 100)
        return mesh_json_bad(r, "profiles", "too many profiles (%d, at most 100)", n);
    c->profiles = calloc((size_t)(n > 0 ? n : 1), sizeof *c->profiles);
    if (c->profiles == NULL)
        return EDDY_RAISE(r->err, EDDY_ERR_NOMEM, "out of memory");
    int k = 0;
    double tol = 1e-9 * fmax(c->x1 - c->x0, c->y1 - c->y0);
    for (const cJSON *e = pr->child; e != NULL; e = e->next, k++) {
        char p[64], q[96];
        snprintf(p, sizeof p, "profiles[%d]", k);
        MESH_TRY(mesh_json_object(r, e, p, keys));
        mesh_profile *m = &c->profiles[k];
        const char *s = NULL;
        MESH_TRY(mesh_json_string(r, e, "name", p, 0, &s));
        snprintf(q, sizeof q, "%s.name", p);
        if (s != NULL && !mesh_name_is_safe(s))
            return mesh_json_bad(r, q, "may hold only letters, digits, '_', '-' and '.' (it "
                                       "names a file)");
        snprintf(m->name, sizeof m->name, "%s", s != NULL ? s : "profile");
        if (s == NULL)
            snprintf(m->name, sizeof m->name, "profile%d", k);
        const cJSON *it = cJSON_GetObjectItemCaseSensitive(e, "from");
        snprintf(q, sizeof q, "%s.from", p);
        if (it == NULL)
            return mesh_json_bad(r, q, "missing (%s is required)",
                                 c->geometry == MESH_AXISYMMETRIC ? "[r, z]" : "[x, y]");
        MESH_TRY(mesh_json_numbers(r, it, q, 2, m->p0));
        it = cJSON_GetObjectItemCaseSensitive(e, "to");
        snprintf(q, sizeof q, "%s.to", p);
        if (it == NULL)
            return mesh_json_bad(r, q, "missing (%s is required)",
                                 c->geometry == MESH_AXISYMMETRIC ? "[r, z]" : "[x, y]");
        MESH_TRY(mesh_json_numbers(r, it, q, 2, m->p1));
        for (int t = 0; t < 2; t++) {
            m->p0[t] *= c->length_scale;
            m->p1[t] *= c->length_scale;
        }
        if (c->geometry == MESH_AXISYMMETRIC) { /* given as [r, z] */
            mesh_case_rz_point(m->p0);
            mesh_case_rz_point(m->p1);
        }
        if (!(fabs(m->p0[0] - m->p1[0]) <= tol) == !(fabs(m->p0[1] - m->p1[1]) <= tol))
            return mesh_json_bad(r, p, "the line must be horizontal or vertical and not a point");
        for (int t = 0; t < 2; t++) {
            const double *pt = t == 0 ? m->p0 : m->p1;
            if (pt[0] < c->x0 - tol || pt[0] > c->x1 + tol || pt[1] < c->y0 - tol ||
                pt[1] > c->y1 + tol) {
                snprintf(q, sizeof q, "%s.%s", p, t == 0 ? "from" : "to");
                return mesh_json_bad(r, q, "lies outside the domain");
            }
        }
        double pts = 201;
        int found = 0;
        MESH_TRY(mesh_json_number(r, e, "points", p, 0, &pts, &found));
        snprintf(q, sizeof q, "%s.points", p);
        if (!(pts >= 2 && pts <= 1e6 && pts == floor(pts)))
            return mesh_json_bad(r, q, "must be a whole number from 2 to 1000000");
        m->points = (int)pts;
    }
    c->nprofile = n;
    return EDDY_OK;
}

/* "name", "description" and "length_unit" (m or mm: the scale of every
 * length that follows). */
static eddy_status read_names_and_unit(mesh_reader *r, const cJSON *root)
{
    mesh_case *c = r->c;
    const char *s = NULL;
    MESH_TRY(mesh_json_string(r, root, "name", "", 0, &s));
    if (s != NULL) {
        if (!mesh_name_is_safe(s))
            return mesh_json_bad(r, "name", "must have 1 to 63 characters, only letters, digits, "
                                            "'_', '-' and '.' (it names the result folder), and "
                                            "not start with '.'");
        snprintf(c->name, sizeof c->name, "%s", s);
    }
    MESH_TRY(mesh_json_string(r, root, "description", "", 0, &s));
    if (s != NULL)
        snprintf(c->description, sizeof c->description, "%s", s);
    MESH_TRY(mesh_json_string(r, root, "length_unit", "", 0, &s));
    if (s == NULL || strcmp(s, "m") == 0) {
        snprintf(c->length_unit, sizeof c->length_unit, "m");
        c->length_scale = 1.0;
    } else if (strcmp(s, "mm") == 0) {
        snprintf(c->length_unit, sizeof c->length_unit, "mm");
        c->length_scale = 1e-3;
    } else {
        return mesh_json_bad(r, "length_unit", "unknown unit \"%s\" (use \"m\" or \"mm\")", s);
    }
    return EDDY_OK;
}

/* The whole case, section by section; the order matters where a section
 * uses another (see mesh/mesh_case_int.h). */
static eddy_status parse_root(mesh_reader *r, const cJSON *root)
{
    static const char *const keys[] = {"name",    "description", "length_unit", "domain",
                                       "materials", "regions",   "speeds",      "mesh",
                                       "profiles", "variants", "temperature", "vehicle",
                                       "end_effect", "disc", "geometry", "pass", NULL};
    if (!cJSON_IsObject(root))
        return mesh_json_bad(r, "(top level)", "must be a JSON object");
    MESH_TRY(mesh_json_check_keys(r, root, "(top level)", keys));
    MESH_TRY(read_names_and_unit(r, root));
    MESH_TRY(mesh_case_read_geometry(r, root));
    MESH_TRY(mesh_case_check_rz_keys(r, root));
    MESH_TRY(read_domain(r, root));
    MESH_TRY(mesh_case_read_pass(r, root));
    MESH_TRY(mesh_case_read_materials(r, root));
    MESH_TRY(mesh_case_read_regions(r, root));
    MESH_TRY(mesh_case_read_disc(r, root));
    MESH_TRY(mesh_case_read_speeds(r, root));
    MESH_TRY(read_mesh(r, root));
    MESH_TRY(read_profiles(r, root));
    MESH_TRY(mesh_case_read_vehicle(r, root));
    MESH_TRY(mesh_case_read_end_effect(r, root));
    MESH_TRY(mesh_case_apply_temperature(r, root));
    MESH_TRY(mesh_case_check_vehicle_speed(r));
    MESH_TRY(mesh_case_check_pass(r));
    MESH_TRY(mesh_case_check_plausible(r, root));
    if (cJSON_GetObjectItemCaseSensitive(root, "variants") != NULL)
        MESH_TRY(mesh_json_warn(r, "%s: variants: ignored here; `eddy2d batch` expands them into "
                                   "cases", r->fname));
    return EDDY_OK;
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
    mesh_reader r = {fname, err, c};
    const char *end = NULL;
    cJSON *root = cJSON_ParseWithOpts(text, &end, 1);
    if (root == NULL) {
        const char *at = cJSON_GetErrorPtr();
        eddy_status s;
        if (at != NULL && at >= text && at <= text + strlen(text)) {
            int line, col;
            mesh_json_line_col(text, (size_t)(at - text), &line, &col);
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
