/*
 * mesh_case_pass.c - the "pass" block of a case (a time-stepped pass of the
 * moving regions through the fixed ones), its checks against the rest of the
 * case, and the case copies the pass needs: a deep copy and the steady
 * counterpart (the moving regions stretched over the domain).
 */
#include "mesh/mesh_case_int.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

eddy_status mesh_case_read_pass(mesh_reader *r, const cJSON *root)
{
    static const char *const keys[] = {"speed", "distance", "step", "coupled", "pictures_every",
                                       "start", "order", NULL};
    mesh_case *c = r->c;
    const cJSON *p = cJSON_GetObjectItemCaseSensitive(root, "pass");
    if (p == NULL)
        return EDDY_OK;
    MESH_TRY(mesh_json_object(r, p, "pass", keys));
    if (c->geometry == MESH_AXISYMMETRIC)
        return mesh_json_bad(r, "pass", "a pass needs the planar geometry (the axisymmetric "
                                        "pass is not implemented)");
    mesh_pass *h = &c->pass;
    h->present = 1;
    h->order = 2;
    MESH_TRY(mesh_json_positive(r, p, "speed", "pass", 1.0, &h->speed));
    MESH_TRY(mesh_json_positive(r, p, "distance", "pass", c->length_scale, &h->distance));
    MESH_TRY(mesh_json_positive(r, p, "step", "pass", c->length_scale, &h->step));
    if (h->step > h->distance)
        return mesh_json_bad(r, "pass.step", "must not exceed pass.distance");
    if (h->distance / h->step > 1e6)
        return mesh_json_bad(r, "pass.step", "gives more than 1e6 steps over pass.distance");
    const cJSON *cp = cJSON_GetObjectItemCaseSensitive(p, "coupled");
    if (cp != NULL && !cJSON_IsBool(cp))
        return mesh_json_bad(r, "pass.coupled", "must be true or false");
    h->coupled = cp != NULL && cJSON_IsTrue(cp);
    int found = 0;
    MESH_TRY(mesh_json_number(r, p, "pictures_every", "pass", 0, &h->pictures_every, &found));
    if (found && !(h->pictures_every > 0))
        return mesh_json_bad(r, "pass.pictures_every", "must be positive (a length)");
    h->pictures_every *= c->length_scale;
    const char *st = NULL;
    MESH_TRY(mesh_json_string(r, p, "start", "pass", 0, &st));
    if (st != NULL && strcmp(st, "static") != 0 && strcmp(st, "steady") != 0)
        return mesh_json_bad(r, "pass.start", "must be \"static\" (the field with the "
                                              "conductors at rest) or \"steady\" (the steady "
                                              "moving solution at pass.speed)");
    h->start_steady = st != NULL && strcmp(st, "steady") == 0;
    double order = 2;
    MESH_TRY(mesh_json_number(r, p, "order", "pass", 0, &order, NULL));
    if (order != 1 && order != 2)
        return mesh_json_bad(r, "pass.order", "must be 1 (backward Euler) or 2 (BDF2)");
    h->order = (int)order;
    return EDDY_OK;
}

eddy_status mesh_case_check_pass(mesh_reader *r)
{
    const mesh_case *c = r->c;
    if (!c->pass.present)
        return EDDY_OK;
    if (c->pass.coupled && !c->vehicle.present)
        return mesh_json_bad(r, "pass.coupled", "needs a \"vehicle\" (its mass and depth)");
    if (c->mesh.tolerance > 0)
        return mesh_json_bad(r, "mesh.tolerance", "is not available in a pass (refine with "
                                                  "mesh.refine)");
    int moving = 0;
    double tol = 1e-9 * (c->x1 - c->x0);
    for (int k = 0; k < c->nreg; k++) {
        const mesh_region *g = &c->regions[k];
        if (!g->moving)
            continue;
        moving++;
        if (c->x_open && (g->box[0] < c->x0 - tol || g->box[2] + c->pass.distance > c->x1 + tol)) {
            char q[96];
            snprintf(q, sizeof q, "regions[%d].box", k);
            return mesh_json_bad(r, q, "on open x sides a moving region must stay inside the "
                                       "domain for the whole pass (it ends at %g %s after "
                                       "pass.distance; the domain at %g %s)",
                                 (g->box[2] + c->pass.distance) / c->length_scale,
                                 c->length_unit, c->x1 / c->length_scale, c->length_unit);
        }
        if (!c->x_periodic && g->box[0] > c->x1 - tol) {
            char q[96];
            snprintf(q, sizeof q, "regions[%d].box", k);
            return mesh_json_bad(r, q, "starts beyond the domain");
        }
    }
    if (moving == 0)
        return mesh_json_bad(r, "pass", "needs at least one moving region");
    return EDDY_OK;
}

/* Duplicate n items of size sz at *p (NULL stays NULL). */
static int dup_array(void **p, size_t n, size_t sz)
{
    if (*p == NULL || n == 0) {
        *p = NULL;
        return 0;
    }
    void *q = malloc(n * sz);
    if (q == NULL) {
        *p = NULL;
        return -1;
    }
    memcpy(q, *p, n * sz);
    *p = q;
    return 0;
}

eddy_status mesh_case_clone(const mesh_case *c, mesh_case **out, eddy_error *err)
{
    *out = NULL;
    mesh_case *d = malloc(sizeof *d);
    if (d == NULL)
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
    *d = *c;
    int bad = 0;
    bad |= dup_array((void **)&d->materials, (size_t)c->nmat, sizeof *c->materials);
    bad |= dup_array((void **)&d->regions, (size_t)c->nreg, sizeof *c->regions);
    bad |= dup_array((void **)&d->speeds, (size_t)c->nspeed, sizeof *c->speeds);
    bad |= dup_array((void **)&d->profiles, (size_t)c->nprofile, sizeof *c->profiles);
    bad |= dup_array((void **)&d->warnings, (size_t)c->nwarn, sizeof *c->warnings);
    bad |= dup_array((void **)&d->disc.rpm, c->disc.rpm != NULL ? (size_t)c->nspeed : 0,
                     sizeof *c->disc.rpm);
    if (bad) {
        mesh_case_free(d);
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
    }
    *out = d;
    return EDDY_OK;
}

eddy_status mesh_case_steady_of_pass(const mesh_case *c, mesh_case **out, eddy_error *err)
{
    *out = NULL;
    if (!c->pass.present)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: the case has no pass", c->path);
    mesh_case *d = NULL;
    eddy_status s = mesh_case_clone(c, &d, err);
    if (s != EDDY_OK)
        return s;
    memset(&d->pass, 0, sizeof d->pass);
    for (int k = 0; k < d->nreg; k++) {
        mesh_region *g = &d->regions[k];
        if (!g->moving)
            continue;
        g->box[0] = d->x0;
        g->box[2] = d->x1;
        for (int q = 0; q < d->nreg; q++) {
            const mesh_region *o = &d->regions[q];
            if (q == k || o->moving)
                continue;
            if (o->box[1] < g->box[3] && g->box[1] < o->box[3]) {
                mesh_case_free(d);
                return EDDY_RAISE(err, EDDY_ERR_INPUT,
                                  "%s: moving region \"%s\" stretched over the domain would "
                                  "overlap region \"%s\": no steady counterpart",
                                  c->path, g->name, o->name);
            }
        }
    }
    *out = d;
    return EDDY_OK;
}
