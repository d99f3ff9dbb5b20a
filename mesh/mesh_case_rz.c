/*
 * mesh_case_rz.c - the case keys of the axisymmetric (r-z) geometry:
 * "geometry", the r-z domain, region boxes and profile points given as
 * (r, z), the magnetisation angle from +r towards +z, and the keys that have
 * no meaning for a ring (errors that name the key).
 *
 * The reader maps z onto the grid's x axis and r onto its y axis (see
 * mesh/mesh.h, mesh_geometry): a box [r0, z0, r1, z1] is stored as
 * [z0, r0, z1, r1], a point [r, z] as (z, r), and an angle a from +r towards
 * +z as pi/2 - a from +z towards +r.  (z, r, phi) is a right-handed frame
 * like (x, y, z), so A_phi takes the place of A_z with every sign kept.
 */
#include "mesh/mesh_case_int.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

eddy_status mesh_case_read_geometry(mesh_reader *r, const cJSON *root)
{
    const char *s = NULL;
    MESH_TRY(mesh_json_string(r, root, "geometry", "", 0, &s));
    if (s == NULL || strcmp(s, "planar") == 0)
        r->c->geometry = MESH_PLANAR;
    else if (strcmp(s, "axisymmetric") == 0)
        r->c->geometry = MESH_AXISYMMETRIC;
    else
        return mesh_json_bad(r, "geometry", "unknown geometry \"%s\" (use \"planar\" or "
                                            "\"axisymmetric\")", s);
    return EDDY_OK;
}

/* Keys of a planar case that mean nothing for a ring: an error naming the
 * key, whatever its value. */
static eddy_status reject_key(mesh_reader *r, const cJSON *obj, const char *key,
                              const char *path, const char *why)
{
    if (cJSON_GetObjectItemCaseSensitive(obj, key) == NULL)
        return EDDY_OK;
    char p[128];
    snprintf(p, sizeof p, "%s%s%s", path, path[0] != '\0' ? "." : "", key);
    return mesh_json_bad(r, p, "has no meaning in an axisymmetric case: %s", why);
}

eddy_status mesh_case_read_domain_rz(mesh_reader *r, const cJSON *root)
{
    static const char *const keys[] = {"r", "z", "z_boundary", NULL};
    mesh_case *c = r->c;
    const cJSON *dom = cJSON_GetObjectItemCaseSensitive(root, "domain");
    if (dom == NULL)
        return mesh_json_bad(r, "domain", "missing (an object with r, z and z_boundary is "
                                          "required)");
    if (!cJSON_IsObject(dom))
        return mesh_json_bad(r, "domain", "must be an object");
    static const char *const planar[] = {"x", "y", "x_boundary", "y_boundary", NULL};
    for (int k = 0; planar[k] != NULL; k++)
        MESH_TRY(reject_key(r, dom, planar[k], "domain",
                            "give \"r\": [0, R], \"z\": [z0, z1] and \"z_boundary\""));
    MESH_TRY(mesh_json_object(r, dom, "domain", keys));
    double rs[2], zs[2];
    MESH_TRY(mesh_json_numbers_at(r, dom, "r", "domain.r", "[0, R]", 2, rs));
    MESH_TRY(mesh_json_numbers_at(r, dom, "z", "domain.z", "[z0, z1]", 2, zs));
    if (rs[0] != 0.0)
        return mesh_json_bad(r, "domain.r", "must start on the axis, r = 0 (got %g)", rs[0]);
    if (!(rs[1] > 0.0))
        return mesh_json_bad(r, "domain.r", "R must be greater than 0");
    if (!(zs[1] > zs[0]))
        return mesh_json_bad(r, "domain.z", "z1 must be greater than z0");
    c->x0 = zs[0] * c->length_scale;
    c->x1 = zs[1] * c->length_scale;
    c->y0 = 0.0;
    c->y1 = rs[1] * c->length_scale;
    const char *zb = NULL;
    MESH_TRY(mesh_json_string(r, dom, "z_boundary", "domain", 0, &zb));
    if (zb == NULL || strcmp(zb, "zero") == 0)
        c->x_periodic = 0;
    else if (strcmp(zb, "periodic") == 0)
        c->x_periodic = 1;
    else if (strcmp(zb, "open") == 0)
        return mesh_json_bad(r, "domain.z_boundary",
                             "\"open\" is not supported in an axisymmetric case (use \"zero\" "
                             "with a domain 20-40 times the magnets' size, or \"periodic\")");
    else
        return mesh_json_bad(r, "domain.z_boundary",
                             "unknown boundary \"%s\" (use \"zero\" or \"periodic\")", zb);
    return EDDY_OK;
}

eddy_status mesh_case_rz_box(mesh_reader *r, const char *path, const double in[4], double out[4])
{
    if (!(in[0] >= 0.0))
        return mesh_json_bad(r, path, "r0 must not be negative (r = 0 is the axis)");
    if (!(in[2] > in[0]))
        return mesh_json_bad(r, path, "r1 must be greater than r0");
    if (!(in[3] > in[1]))
        return mesh_json_bad(r, path, "z1 must be greater than z0");
    double r0 = in[0], z0 = in[1], r1 = in[2], z1 = in[3];
    out[0] = z0;
    out[1] = r0;
    out[2] = z1;
    out[3] = r1;
    return EDDY_OK;
}

void mesh_case_rz_point(double p[2])
{
    double rr = p[0];
    p[0] = p[1];
    p[1] = rr;
}

double mesh_case_rz_angle(double from_r)
{
    return 0.5 * EDDY_PI - from_r;
}

eddy_status mesh_case_check_rz_keys(mesh_reader *r, const cJSON *root)
{
    if (r->c->geometry != MESH_AXISYMMETRIC)
        return EDDY_OK;
    MESH_TRY(reject_key(r, root, "disc", "", "a disc brake is planar at its mean radius"));
    MESH_TRY(reject_key(r, root, "end_effect", "",
                        "a ring has no finite width across the motion"));
    const cJSON *v = cJSON_GetObjectItemCaseSensitive(root, "vehicle");
    if (v != NULL && cJSON_IsObject(v))
        MESH_TRY(reject_key(r, v, "depth", "vehicle",
                            "the forces are of the whole ring (N); use \"repeat\" for several "
                            "identical units"));
    return EDDY_OK;
}
