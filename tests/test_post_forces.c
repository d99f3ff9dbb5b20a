/*
 * test_post_forces.c - the normal force of the moving band from the Maxwell
 * stress in its nodal (total-current) form (post/post_forces.c), against
 * sources outside the grid solver.
 *
 * Sources of the reference values:
 *  [LAY]  The layered Fourier reference (solver/sol_ref.c), sharing no
 *         discretisation with the grid: the transfer relation of a
 *         conducting, linearly magnetisable layer (derivation in sol_ref.c;
 *         method after E. M. Freeman, Proc. IEE 115 (1968) 1772 and, for a
 *         thin sheet, W. R. Reitz, J. Appl. Phys. 41, 2067 (1970)); its
 *         permeable slab at rest is checked against the image series in
 *         tests/test_ref.c.
 *  [NEW]  A plate at rest carries no current (J = sigma (v x B) = 0) and a
 *         non-magnetic one no magnetisation: the force on it is zero
 *         (Lorentz force law; a physical property, no source needed).
 *  [ORD]  The box-integration scheme is second order (common practice for
 *         vertex-centred finite volumes on smoothly graded grids; shown by
 *         `make convergence`): halving every cell divides the error by ~4.
 */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "post/post.h"
#include "solver/sol_ref.h"
#include "tests/check.h"
#include "tests/pipeline.h"

#define MU0 EDDY_MU0

#define TOL_REF_NONMAG 0.01  /* [LAY] non-magnetic plate, normal force per point */
#define TOL_LORENTZ 1e-6     /* nodal stress vs Lorentz normal force, non-magnetic: the same
                                current (the vacuum residual = the fitted induced current), so
                                they differ by the solve's round-off only (measured 5e-8 at
                                Rm 0.001 where the force is 1e-9 of the drag) */
#define TOL_REF_MAG 0.01     /* [LAY] steel plate, normal force / largest |F_y| of the sweep */
#define TOL_REF_DRAG 0.02    /* [LAY] steel plate, drag per point */
#define TOL_REST 1e-12       /* [NEW] relative to the normal force at Rm = 1 */
#define MIN_ORDER 1.7        /* [ORD] */

/* An NdFeB-like block 30 x 10 mm magnetised along -y, 3 mm over a 6 mm plate
 * of material %s in a 1.2 m zero box; %s: mesh block. */
static const char *case_fmt =
    "{\"name\":\"nf\",\"length_unit\":\"mm\",\"domain\":{\"x\":[-600,600],\"y\":[-600,600]},"
    "\"materials\":{\"mag\":{\"remanence\":1.2,\"relative_permeability\":1.0},"
    "\"steel\":{\"conductivity\":5e6,\"relative_permeability\":100}},"
    "\"mesh\":%s,"
    "\"regions\":[{\"material\":\"%s\",\"box\":[-600,-6,600,0],\"moving\":true},"
    "{\"material\":\"mag\",\"box\":[-15,3,15,13],\"magnetization_angle\":-90}],"
    "\"speeds\":[1]}";

static const double rm_list[] = {0.001, 0.01, 0.1, 1.0, 10.0, 100.0};
#define NRM ((int)(sizeof rm_list / sizeof rm_list[0]))

/* Open the case; its grid is designed for the highest speed of the sweep. */
static int open_case(pipe_run *p, const char *material, double sigma_t, int refine)
{
    char mesh[128], json[2048];
    double vmax = rm_list[NRM - 1] / (MU0 * sigma_t);
    snprintf(mesh, sizeof mesh, "{\"design_speed\":%.10g,\"refine\":%d}", vmax, refine);
    snprintf(json, sizeof json, case_fmt, mesh, material);
    return pipe_open(p, json);
}


/* Copper plate: nodal normal force = 0 at rest, = Lorentz and = [LAY] at
 * Rm 0.001..100 (the line form of the stress carries a bias of ~18 N/m here). */
static void test_nonmagnetic(void)
{
    const double sigma_t = 58.0e6 * 0.006;
    pipe_run p;
    if (open_case(&p, "copper_annealed", sigma_t, 1) != 0) {
        check(0, "copper plate: pipeline", "failed");
        return;
    }
    post_forces f0, f;
    double worst_ref = 0.0, worst_lor = 0.0, rm_ref = 0.0, rm_lor = 0.0, scale = 0.0;
    int ok = pipe_speed(&p, 0.0, &f0) == 0 && f0.nodal_ok;
    for (int k = 0; ok && k < NRM; k++) {
        double v = rm_list[k] / (MU0 * sigma_t);
        sol_ref_result q;
        if (pipe_speed(&p, v, &f) != 0 || pipe_reference(&p, v, 0, &q) != 0 || !f.nodal_ok) {
            ok = 0;
            break;
        }
        if (rm_list[k] == 1.0)
            scale = fabs(q.force_y);
        double er = fabs(f.nodal_y - q.force_y) / fabs(q.force_y);
        double el = fabs(f.nodal_y - f.lorentz_y) / fabs(f.lorentz_y);
        if (er > worst_ref) {
            worst_ref = er;
            rm_ref = rm_list[k];
        }
        if (el > worst_lor) {
            worst_lor = el;
            rm_lor = rm_list[k];
        }
        printf("# copper Rm %-6g F_y: nodal %.6g lorentz %.6g line %.6g reference %.6g N/m\n",
               rm_list[k], f.nodal_y, f.lorentz_y, f.stress_y, q.force_y);
    }
    check(ok, "copper plate: every point solved with a nodal stress", "%s", ok ? "yes" : "no");
    check(ok && fabs(f0.nodal_y) <= TOL_REST * scale && fabs(f0.nodal_x) <= TOL_REST * scale,
          "copper plate at rest: nodal stress force is zero [NEW]",
          "F = (%.3g, %.3g) N/m against %.4g N/m at Rm 1 (tol %g)", f0.nodal_x, f0.nodal_y, scale,
          TOL_REST);
    check(ok && worst_ref <= TOL_REF_NONMAG,
          "copper plate: nodal stress normal force vs layered reference, Rm 0.001..100 [LAY]",
          "worst %.3g %% at Rm %g (tol %g %%)", 100 * worst_ref, rm_ref, 100 * TOL_REF_NONMAG);
    check(ok && worst_lor <= TOL_LORENTZ,
          "copper plate: nodal stress normal force = Lorentz normal force, Rm 0.001..100",
          "worst %.3g %% at Rm %g (tol %g %%)", 100 * worst_lor, rm_lor, 100 * TOL_LORENTZ);
    pipe_free(&p);
}

/* Steel plate (mu_r 100, 5 MS/m): the reported force is the nodal stress;
 * against [LAY] from rest (static attraction) through Rm 100 (repulsion). */
static void test_magnetic(void)
{
    const double sigma_t = 5e6 * 0.006;
    pipe_run p;
    if (open_case(&p, "steel", sigma_t, 1) != 0) {
        check(0, "steel plate: pipeline", "failed");
        return;
    }
    double fy[NRM + 1], ry[NRM + 1], drag[NRM + 1], rdrag[NRM + 1], scale = 0.0;
    int ok = 1;
    for (int k = 0; k <= NRM && ok; k++) {
        double v = k == 0 ? 0.0 : rm_list[k - 1] / (MU0 * sigma_t);
        post_forces f;
        sol_ref_result q;
        if (pipe_speed(&p, v, &f) != 0 || pipe_reference(&p, v, 0, &q) != 0 ||
            strcmp(f.force_method, "stress_tensor") != 0 || f.force_y != f.nodal_y) {
            ok = 0;
            break;
        }
        fy[k] = f.force_y;
        ry[k] = q.force_y;
        drag[k] = f.drag;
        rdrag[k] = -q.force_x;
        scale = fmax(scale, fabs(q.force_y));
        printf("# steel Rm %-6g F_y: nodal %.6g line %.6g reference %.6g; drag %.6g "
               "reference %.6g N/m\n",
               k ? rm_list[k - 1] : 0.0, f.nodal_y, f.stress_y, q.force_y, f.drag, -q.force_x);
    }
    check(ok, "steel plate: reported force is the nodal stress at every point", "%s",
          ok ? "yes" : "no");
    double wy = 0.0, wd = 0.0;
    for (int k = 0; ok && k <= NRM; k++) {
        wy = fmax(wy, fabs(fy[k] - ry[k]) / scale);
        if (k > 0)
            wd = fmax(wd, fabs(drag[k] - rdrag[k]) / rdrag[k]);
    }
    check(ok && wy <= TOL_REF_MAG,
          "steel plate: normal force vs layered reference, rest and Rm 0.001..100 [LAY]",
          "worst %.3g %% of the largest |F_y| %.4g N/m (tol %g %%)", 100 * wy, scale,
          100 * TOL_REF_MAG);
    check(ok && wd <= TOL_REF_DRAG, "steel plate: drag vs layered reference, Rm 0.001..100 [LAY]",
          "worst %.3g %% (tol %g %%)", 100 * wd, 100 * TOL_REF_DRAG);
    pipe_free(&p);

    /* [ORD] at rest: the static attraction on the default and the 2x grid */
    double err[2] = {NAN, NAN};
    for (int r = 1; r <= 2 && ok; r++) {
        post_forces f;
        sol_ref_result q;
        if (open_case(&p, "steel", sigma_t, r) != 0)
            break;
        if (pipe_speed(&p, 0.0, &f) == 0 && pipe_reference(&p, 0.0, 0, &q) == 0)
            err[r - 1] = fabs(f.force_y - q.force_y);
        printf("# steel at rest, refine %d: nodal %.8g line %.8g reference %.8g N/m\n", r,
               f.nodal_y, f.stress_y, q.force_y);
        pipe_free(&p);
    }
    double order = log(err[0] / err[1]) / log(2.0);
    check(isfinite(order) && order >= MIN_ORDER,
          "steel plate at rest: nodal stress attraction converges at second order [ORD]",
          "errors %.3g, %.3g N/m, order %.2f (min %g)", err[0], err[1], order, MIN_ORDER);
}

int main(void)
{
    test_nonmagnetic();
    test_magnetic();
    return check_summary();
}
