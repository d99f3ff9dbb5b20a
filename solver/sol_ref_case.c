/*
 * sol_ref_case.c - decide whether a case fits the layered reference geometry
 * and translate it into a sol_ref_problem.
 *
 * A case fits when it is planar (the reference has no axisymmetric form) and:
 *  - exactly one moving region with conductivity > 0 and a constant mu_r >= 1
 *    (no B-H curve) spans the domain (the plate);
 *  - every source (magnet with remanence along +y or -y, or coil) lies
 *    entirely above the plate, and sources do not overlap each other;
 *  - any permeable region (mu_r != 1, not a magnet) is a yoke: it spans the
 *    domain in x, lies above every source, and is treated as an infinitely
 *    permeable half-space from its lower face up (a good model for mu_r of
 *    several hundred or more and a thick yoke);
 *  - nothing but air, or stationary non-magnetic conductors (which carry no
 *    current in this steady problem), lies elsewhere.
 * Magnets with a recoil permeability other than 1 are accepted but marked
 * approximate: the reference takes mu_r = 1 for them.  A periodic domain is
 * one period; a zero box is treated as free space (its truncation error is
 * not in the reference).
 */
#include "solver/sol_ref.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define YOKE_MIN_MU_R 100.0
#define ANGLE_TOL 1e-9

static const mesh_material *mat_of(const mesh_case *c, const mesh_region *r)
{
    return r->material >= 0 ? &c->materials[r->material] : NULL;
}

static int fits_not(char *why, size_t n, const char *fmt, const char *name)
{
    if (why != NULL)
        snprintf(why, n, fmt, name);
    return 0;
}

eddy_status sol_ref_from_case(const mesh_case *c, sol_ref_problem *p, sol_ref_source **src,
                              int *nsrc, int *approximate, char *why, size_t why_len,
                              eddy_error *err)
{
    *src = NULL;
    *nsrc = 0;
    *approximate = 0;
    if (why != NULL && why_len > 0)
        why[0] = '\0';
    memset(p, 0, sizeof *p);
    if (c->geometry == MESH_AXISYMMETRIC) {
        fits_not(why, why_len, "%s", "the layered Fourier reference is a planar solution; it is "
                                     "not evaluated for an axisymmetric case");
        return EDDY_ERR_NOT_APPLICABLE;
    }
    int plate = -1;
    for (int k = 0; k < c->nreg; k++) {
        const mesh_region *r = &c->regions[k];
        const mesh_material *m = mat_of(c, r);
        if (!r->moving)
            continue;
        if (m == NULL || m->sigma <= 0.0)
            continue;
        if (plate >= 0) {
            fits_not(why, why_len, "more than one moving conductor (\"%s\" and another)", r->name);
            return EDDY_ERR_NOT_APPLICABLE;
        }
        plate = k;
    }
    if (plate < 0) {
        fits_not(why, why_len, "%s", "no moving conductor");
        return EDDY_ERR_NOT_APPLICABLE;
    }
    const mesh_region *pl = &c->regions[plate];
    const mesh_material *pm = mat_of(c, pl);
    if (pm->bh.n > 0) {
        fits_not(why, why_len, "the moving conductor \"%s\" is saturable (B-H curve)", pl->name);
        return EDDY_ERR_NOT_APPLICABLE;
    }
    if (pm->br != 0.0) {
        fits_not(why, why_len, "the moving conductor \"%s\" is a magnet", pl->name);
        return EDDY_ERR_NOT_APPLICABLE;
    }
    if (pm->mu_r < 1.0 || pm->mu_r - 1.0 > 1e6) {
        fits_not(why, why_len, "the moving conductor \"%s\" has mu_r below 1 or above 1e6",
                 pl->name);
        return EDDY_ERR_NOT_APPLICABLE;
    }
    sol_ref_source *s = calloc((size_t)c->nreg, sizeof *s);
    if (s == NULL)
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
    int ns = 0, yoke = -1;
    double top_src = -INFINITY;
    int ok = 1;
    for (int k = 0; k < c->nreg && ok; k++) {
        const mesh_region *r = &c->regions[k];
        const mesh_material *m = mat_of(c, r);
        if (k == plate)
            continue;
        if (m != NULL && m->bh.n > 0) { /* the reference has no saturation */
            ok = fits_not(why, why_len, "region \"%s\" is saturable (B-H curve)", r->name);
            break;
        }
        int magnet = m != NULL && m->br > 0.0;
        int coil = r->jz != 0.0;
        if (magnet || coil) {
            if (r->box[1] < pl->box[3]) {
                ok = fits_not(why, why_len, "source \"%s\" is not above the moving conductor",
                              r->name);
                break;
            }
            if (magnet && coil) {
                ok = fits_not(why, why_len, "region \"%s\" is both a magnet and a coil", r->name);
                break;
            }
            sol_ref_source *q = &s[ns++];
            q->x0 = r->box[0];
            q->y0 = r->box[1];
            q->x1 = r->box[2];
            q->y1 = r->box[3];
            if (magnet) {
                double cy = sin(r->mag_angle), cx = cos(r->mag_angle);
                if (fabs(cx) > ANGLE_TOL) {
                    ok = fits_not(why, why_len,
                                  "magnet \"%s\" is not magnetised along +y or -y", r->name);
                    break;
                }
                q->kind = SOL_REF_MAGNET;
                q->br_y = cy > 0 ? m->br : -m->br;
                if (fabs(m->mu_r - 1.0) > 1e-12)
                    *approximate = 1;
            } else {
                if (m != NULL && fabs(m->mu_r - 1.0) > 1e-12) {
                    ok = fits_not(why, why_len, "coil \"%s\" is permeable", r->name);
                    break;
                }
                q->kind = SOL_REF_COIL;
                q->jz = r->jz;
            }
            if (r->box[3] > top_src)
                top_src = r->box[3];
            continue;
        }
        if (m == NULL || fabs(m->mu_r - 1.0) <= 1e-12) {
            /* air, or a stationary non-magnetic conductor: no current here */
            if (r->moving) {
                ok = fits_not(why, why_len, "moving region \"%s\" is not the plate", r->name);
                break;
            }
            continue;
        }
        /* a permeable region: only a yoke above everything fits */
        if (m->mu_r < YOKE_MIN_MU_R) {
            ok = fits_not(why, why_len, "permeable region \"%s\" (mu_r below 100) is not a yoke",
                          r->name);
            break;
        }
        if (yoke >= 0 && r->box[1] < c->regions[yoke].box[1])
            yoke = k;
        else if (yoke < 0)
            yoke = k;
    }
    if (ok && ns == 0)
        ok = fits_not(why, why_len, "%s", "no source (magnet or coil)");
    if (ok && yoke >= 0) {
        const mesh_region *y = &c->regions[yoke];
        double tol = 1e-9 * (c->x1 - c->x0);
        if (fabs(y->box[0] - c->x0) > tol || fabs(y->box[2] - c->x1) > tol)
            ok = fits_not(why, why_len, "permeable region \"%s\" does not span the domain in x",
                          y->name);
        else if (y->box[1] < top_src)
            ok = fits_not(why, why_len, "permeable region \"%s\" is not above every source",
                          y->name);
        /* every other permeable region must lie above the yoke face */
        for (int k = 0; ok && k < c->nreg; k++) {
            const mesh_material *m = mat_of(c, &c->regions[k]);
            if (k != yoke && m != NULL && m->br == 0.0 && fabs(m->mu_r - 1.0) > 1e-12 &&
                c->regions[k].box[1] < y->box[1])
                ok = fits_not(why, why_len, "permeable region \"%s\" lies below the yoke face",
                              c->regions[k].name);
        }
    }
    for (int a = 0; ok && a < ns; a++)
        for (int b = a + 1; b < ns; b++)
            if (s[a].x0 < s[b].x1 && s[b].x0 < s[a].x1 && s[a].y0 < s[b].y1 && s[b].y0 < s[a].y1)
                ok = fits_not(why, why_len, "%s", "sources overlap each other");
    if (!ok) {
        free(s);
        return EDDY_ERR_NOT_APPLICABLE;
    }
    p->sigma = pm->sigma;
    p->chi = pm->mu_r - 1.0;
    p->y_bot = pl->box[1];
    p->y_top = pl->box[3];
    p->periodic = c->x_periodic;
    p->lambda = c->x_periodic ? c->x1 - c->x0 : 0.0;
    p->has_yoke = yoke >= 0;
    p->y_yoke = yoke >= 0 ? c->regions[yoke].box[1] : 0.0;
    p->rel_tol = 1e-7;
    *src = s;
    *nsrc = ns;
    return EDDY_OK;
}
