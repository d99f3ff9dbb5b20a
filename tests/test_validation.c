/*
 * test_validation.c - the grid solver against analytic limits across all
 * speeds: the thin-sheet closed form, and the layered Fourier reference
 * (solver/sol_ref.c, which shares no discretisation with the grid solver)
 * for a thick plate under an isolated magnet, a periodic alternating array,
 * and an array on a back iron; conservation checks at every point; the
 * low-speed limit; freedom from wiggles at cell Peclet numbers up to 1e3.
 *
 * Tolerances are those of issue 3 and are not to be loosened.
 */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "solver/sol_ref.h"
#include "tests/check.h"
#include "tests/pipeline.h"

#define PI 3.14159265358979323846
#define MU0 EDDY_MU0

#define TOL_THIN_SHEET 0.02   /* grid vs Reitz thin-sheet closed form, 0.01 w .. 10 w */
#define TOL_REFERENCE 0.02    /* grid vs layered reference, drag and normal force */
#define TOL_POWER 0.01        /* drag x speed = loss at every point */
#define TOL_STRESS 0.01       /* Lorentz vs Maxwell-stress drag at every point */
#define TOL_LOW_SPEED 0.005   /* drag / low_speed_drag at Rm = 0.01 */
#define MAX_EXTREMA 4         /* local extrema of A or J along a row downstream */

/* ---------------------------------------------------------------------- */
/* Thin sheet under a line current: W. R. Reitz, "Forces on moving magnets */
/* due to eddy currents", J. Appl. Phys. 41, 2067 (1970), in its 2D form   */
/* (receding images): F_drag = F0 v w / (v^2 + w^2), F_normal = F0 v^2 /    */
/* (v^2 + w^2), F0 = mu0 I^2 / (4 pi h), w = 2 / (mu0 sigma d).             */
/* The sheet is d = h/100 thick (finite-thickness effect ~ d/2h = 0.5 %);   */
/* the line current is a 1 mm square coil (its field outside equals a line */
/* current's up to octupole terms, ~(s/h)^4); the zero box is 2000 h wide. */
/* ---------------------------------------------------------------------- */
/* One thin-sheet sweep on a given mesh; returns the worst relative errors
 * of drag and repulsion over ratios[] (v / w) and where they occur. */
static int thin_sheet_sweep(const char *mesh, const double *ratios, int nr, double *wd,
                            double *at_d, double *wn, double *at_n)
{
    const double I = 2000.0, d = 0.0001, sigma = 35.4e6, h = 0.010;
    const double w = 2.0 / (MU0 * sigma * d), f0 = MU0 * I * I / (4.0 * PI * h);
    char json[2048];
    snprintf(json, sizeof json,
             "{\"name\":\"thin\",\"length_unit\":\"mm\","
             "\"domain\":{\"x\":[-20000,20000],\"y\":[-20000,20000]},"
             "\"materials\":{\"sheet\":{\"conductivity\":%.17g}},"
             "\"regions\":[{\"material\":\"sheet\",\"box\":[-20000,-0.1,20000,0],\"moving\":true},"
             "{\"box\":[-0.5,9.5,0.5,10.5],\"current\":%.17g}],"
             "\"speeds\":[%.17g],\"mesh\":%s}",
             sigma, I, ratios[nr - 1] * w, mesh);
    pipe_run p;
    if (pipe_open(&p, json) != 0)
        return -1;
    *wd = *wn = 0.0;
    for (int k = 0; k < nr; k++) {
        double v = ratios[k] * w;
        post_forces f;
        if (pipe_speed(&p, v, &f) != 0) {
            *wd = *wn = INFINITY;
            break;
        }
        double drag = f0 * v * w / (v * v + w * w), rep = f0 * v * v / (v * v + w * w);
        double ed = fabs(f.drag - drag) / drag, en = fabs(-f.force_y - rep) / rep;
        if (ed > *wd) {
            *wd = ed;
            *at_d = ratios[k];
        }
        if (en > *wn) {
            *wn = en;
            *at_n = ratios[k];
        }
    }
    pipe_free(&p);
    return 0;
}

static void test_thin_sheet(void)
{
    /* all speeds on the default grid (with the gentle grading a net-current
     * source needs); the repulsion at v << w is a second-order effect
     * (1e-4 F0 at 0.01 w) whose discretisation error on that grid is
     * 2.5-12 % below v = w (measured), so the low-speed end is also checked on a grid
     * refined 3x, where it converges at second order */
    const double all[] = {0.01, 0.03, 0.1, 0.3, 1.0, 3.0, 10.0};
    const double high[] = {1.0, 3.0, 10.0};
    const double low[] = {0.01, 0.03, 0.1, 0.3};
    double wd, wn, ad = 0, an = 0;
    if (thin_sheet_sweep("{\"growth\":1.1}", all, 7, &wd, &ad, &wn, &an) != 0) {
        check(0, "thin sheet: pipeline", "failed");
        return;
    }
    check(wd <= TOL_THIN_SHEET, "thin sheet drag vs Reitz F0 v w/(v^2+w^2), v = 0.01w..10w",
          "worst error %.3g %% at v = %g w (tol %g %%)", 100 * wd, ad, 100 * TOL_THIN_SHEET);
    printf("# thin sheet repulsion on the default grid: worst error %.3g %% at v = %g w\n",
           100 * wn, an);
    thin_sheet_sweep("{\"growth\":1.1}", high, 3, &wd, &ad, &wn, &an);
    check(wn <= TOL_THIN_SHEET,
          "thin sheet repulsion vs Reitz F0 v^2/(v^2+w^2), v = w..10w, default grid",
          "worst error %.3g %% at v = %g w (tol %g %%)", 100 * wn, an, 100 * TOL_THIN_SHEET);
    thin_sheet_sweep("{\"growth\":1.1,\"refine\":3}", low, 4, &wd, &ad, &wn, &an);
    check(wn <= TOL_THIN_SHEET,
          "thin sheet repulsion vs Reitz, v = 0.01w..0.3w, grid refined 3x",
          "worst error %.3g %% at v = %g w (tol %g %%)", 100 * wn, an, 100 * TOL_THIN_SHEET);
}

/* ---------------------------------------------------------------------- */
/* Grid vs layered reference from Rm = 0.1 to 100 (past the drag peak).    */
/* ---------------------------------------------------------------------- */
typedef struct {
    const char *label;
    const char *json_fmt; /* %s: the speed list */
    double sigma_t;       /* sigma * thickness of the plate, S */
} ref_case;

static const ref_case ref_cases[] = {
    {"isolated block magnet over a 6 mm copper plate",
     "{\"name\":\"iso\",\"length_unit\":\"mm\",\"domain\":{\"x\":[-600,600],\"y\":[-600,600]},"
     "\"materials\":{\"mag\":{\"remanence\":1.2,\"relative_permeability\":1.0}},"
     "\"regions\":[{\"material\":\"copper_annealed\",\"box\":[-600,-6,600,0],\"moving\":true},"
     "{\"material\":\"mag\",\"box\":[-15,3,15,13],\"magnetization_angle\":-90}],"
     "\"speeds\":[%s]}",
     58.0e6 * 0.006},
    {"periodic alternating array over an 8 mm aluminium plate",
     "{\"name\":\"per\",\"length_unit\":\"mm\",\"domain\":{\"x\":[0,50],\"y\":[-150,150],"
     "\"x_boundary\":\"periodic\"},"
     "\"materials\":{\"mag\":{\"remanence\":1.2,\"relative_permeability\":1.0}},"
     "\"regions\":[{\"material\":\"aluminium_6061_t6\",\"box\":[0,-8,50,0],\"moving\":true},"
     "{\"material\":\"mag\",\"box\":[2,4,23,14],\"magnetization_angle\":90},"
     "{\"material\":\"mag\",\"box\":[27,4,48,14],\"magnetization_angle\":-90}],"
     "\"speeds\":[%s]}",
     24.6e6 * 0.008},
    {"array on a back iron (mu_r 1e5) over an 8 mm aluminium plate",
     "{\"name\":\"yoke\",\"length_unit\":\"mm\",\"domain\":{\"x\":[0,50],\"y\":[-150,150],"
     "\"x_boundary\":\"periodic\"},"
     "\"materials\":{\"mag\":{\"remanence\":1.2,\"relative_permeability\":1.0},"
     "\"iron\":{\"relative_permeability\":1e5}},"
     "\"regions\":[{\"material\":\"aluminium_6061_t6\",\"box\":[0,-8,50,0],\"moving\":true},"
     "{\"material\":\"iron\",\"box\":[0,14,50,30]},"
     "{\"material\":\"mag\",\"box\":[2,4,23,14],\"magnetization_angle\":90},"
     "{\"material\":\"mag\",\"box\":[27,4,48,14],\"magnetization_angle\":-90}],"
     "\"speeds\":[%s]}",
     24.6e6 * 0.008},
};

static void test_against_reference(const ref_case *rc)
{
    /* Rm = mu0 sigma t v from 0.1 to 100, 3 points a decade */
    const int nrm = 10;
    double speeds[10];
    char list[512] = "";
    for (int k = 0; k < nrm; k++) {
        double rm = 0.1 * pow(10.0, k / 3.0);
        speeds[k] = rm / (MU0 * rc->sigma_t);
        char one[32];
        snprintf(one, sizeof one, "%s%.10g", k ? "," : "", speeds[k]);
        strcat(list, one);
    }
    char json[4096];
    snprintf(json, sizeof json, rc->json_fmt, list);
    pipe_run p;
    if (pipe_open(&p, json) != 0) {
        check(0, rc->label, "pipeline failed");
        return;
    }
    sol_ref_problem prob;
    sol_ref_source *src = NULL;
    int nsrc = 0, approx = 0;
    char why[256];
    eddy_status s = sol_ref_from_case(p.c, &prob, &src, &nsrc, &approx, why, sizeof why, NULL);
    char name[256];
    snprintf(name, sizeof name, "%s: fits the layered reference", rc->label);
    check(s == EDDY_OK && approx == 0, name, "%s", s == EDDY_OK ? "exact" : why);
    if (s != EDDY_OK) {
        pipe_free(&p);
        return;
    }
    double wd = 0, wn = 0, wp = 0, ws = 0, rd = 0, rn = 0, peak_ref = 0, peak_v = 0;
    int peak_k = -1;
    for (int k = 0; k < nrm; k++) {
        post_forces f;
        sol_ref_result q;
        if (pipe_speed(&p, speeds[k], &f) != 0 ||
            sol_ref_solve(&prob, src, nsrc, speeds[k], &q, NULL) != EDDY_OK)
            continue;
        double ed = fabs(f.drag + q.force_x) / fabs(q.force_x);
        double en = fabs(f.force_y - q.force_y) / fabs(q.force_y);
        double ep = fabs(f.drag * speeds[k] - f.loss) / f.loss;
        double es = fabs(f.drag_stress - f.drag) / f.drag;
        if (ed > wd) {
            wd = ed;
            rd = f.magnetic_reynolds;
        }
        if (en > wn) {
            wn = en;
            rn = f.magnetic_reynolds;
        }
        wp = fmax(wp, ep);
        ws = fmax(ws, es);
        if (-q.force_x > peak_ref) {
            peak_ref = -q.force_x;
            peak_v = speeds[k];
            peak_k = k;
        }
    }
    snprintf(name, sizeof name, "%s: drag within 2 %% of the reference, Rm 0.1..100", rc->label);
    check(wd <= TOL_REFERENCE, name, "worst %.3g %% at Rm %.3g", 100 * wd, rd);
    snprintf(name, sizeof name, "%s: normal force within 2 %% of the reference, Rm 0.1..100",
             rc->label);
    check(wn <= TOL_REFERENCE, name, "worst %.3g %% at Rm %.3g", 100 * wn, rn);
    snprintf(name, sizeof name, "%s: the sweep brackets the drag peak", rc->label);
    check(peak_k > 0 && peak_k < nrm - 1, name, "reference peak %.4g N/m at %.3g m/s", peak_ref,
          peak_v);
    snprintf(name, sizeof name, "%s: drag x speed = loss at every point", rc->label);
    check(wp <= TOL_POWER, name, "worst %.3g %%", 100 * wp);
    snprintf(name, sizeof name, "%s: stress-tensor drag = Lorentz drag at every point",
             rc->label);
    check(ws <= TOL_STRESS, name, "worst %.3g %%", 100 * ws);
    free(src);
    pipe_free(&p);
}

/* ---------------------------------------------------------------------- */
/* Low speed: drag / low_speed_drag -> 1 as v -> 0 (the first-order limit  */
/* F = sigma v integral B0_y^2, common practice; see PHYSICS notes).       */
/* ---------------------------------------------------------------------- */
static void test_low_speed_ratio(void)
{
    char json[4096];
    double v = 0.01 / (MU0 * ref_cases[1].sigma_t); /* Rm = 0.01 */
    char sp[64];
    snprintf(sp, sizeof sp, "%.10g", v);
    snprintf(json, sizeof json, ref_cases[1].json_fmt, sp);
    pipe_run p;
    if (pipe_open(&p, json) != 0) {
        check(0, "low speed ratio: pipeline", "failed");
        return;
    }
    post_forces f;
    pipe_speed(&p, v, &f);
    check_close("drag / low_speed_drag at Rm = 0.01", f.drag / f.low_speed_drag, 1.0,
                TOL_LOW_SPEED, 0);
    pipe_free(&p);
}

/* Local extrema of values[0..n-1] (node-to-node wiggles make many). */
static int count_extrema(const double *v, int n, double floor)
{
    int m = 0;
    for (int k = 1; k + 1 < n; k++) {
        double a = v[k] - v[k - 1], b = v[k + 1] - v[k];
        if (a * b < 0 && (fabs(a) > floor || fabs(b) > floor))
            m++;
    }
    return m;
}

/* ---------------------------------------------------------------------- */
/* High speed: at cell Peclet numbers up to 1e3, no wiggles downstream in  */
/* A or J (exponential fitting gives an M-matrix: discrete maximum         */
/* principle; central differences would oscillate once Pe > 2), and the    */
/* drag still converges to the reference.                                  */
/* ---------------------------------------------------------------------- */
static void test_high_peclet(void)
{
    const double v = 3000.0; /* copper: mu0 sigma v = 2.2e5 /m, Pe ~ 1e3 on 5 mm cells */
    double drag[2] = {0, 0}, ref = 0;
    for (int r = 1; r <= 2; r++) {
        char json[2048];
        snprintf(json, sizeof json,
                 "{\"name\":\"fast\",\"length_unit\":\"mm\","
                 "\"domain\":{\"x\":[-600,600],\"y\":[-600,600]},"
                 "\"materials\":{\"mag\":{\"remanence\":1.2,\"relative_permeability\":1.0}},"
                 "\"regions\":[{\"material\":\"copper_annealed\",\"box\":[-600,-6,600,0],"
                 "\"moving\":true},"
                 "{\"material\":\"mag\",\"box\":[-15,3,15,13],\"magnetization_angle\":-90}],"
                 "\"speeds\":[%g],\"mesh\":{\"refine\":%d}}",
                 v, r);
        pipe_run p;
        if (pipe_open(&p, json) != 0) {
            check(0, "high Peclet: pipeline", "failed");
            return;
        }
        post_forces f;
        pipe_speed(&p, v, &f);
        drag[r - 1] = f.drag;
        const mesh_grid *g = p.g;
        double pe_max = 0.0;
        for (int i = 0; i < g->ncx; i++)
            pe_max = fmax(pe_max, MU0 * 58.0e6 * v * (g->x[i + 1] - g->x[i]));
        if (r == 1) {
            /* the top row of the plate, downstream of the magnet */
            int j = g->jm1; /* node row on the plate's top surface */
            int i0 = 0;
            while (i0 < g->nx && g->x[i0] < 0.015)
                i0++;
            int n = g->nx - i0;
            double *row = malloc((size_t)n * sizeof *row), *jrow = malloc((size_t)n * sizeof *jrow);
            double *jz = malloc((size_t)g->nx * (size_t)g->ny * sizeof *jz);
            post_current_density(g, p.a, v, jz, NULL);
            double amax = 0.0, jmax = 0.0;
            for (int k = 0; k < n; k++) {
                row[k] = p.a[(size_t)(i0 + k) + (size_t)g->nx * (size_t)j];
                jrow[k] = jz[(size_t)(i0 + k) + (size_t)g->nx * (size_t)(j - 1)];
                amax = fmax(amax, fabs(row[k]));
                jmax = fmax(jmax, fabs(jrow[k]));
            }
            int ea = count_extrema(row, n, 1e-9 * amax), ej = count_extrema(jrow, n, 1e-9 * jmax);
            check(ea <= MAX_EXTREMA && ej <= MAX_EXTREMA,
                  "no wiggles downstream in A or J at cell Peclet numbers up to 1e3",
                  "largest cell Peclet %.3g; extrema along the plate: A %d, J %d (of %d nodes)",
                  pe_max, ea, ej, n);
            free(row);
            free(jrow);
            free(jz);
            sol_ref_problem prob;
            sol_ref_source *src = NULL;
            int nsrc = 0, approx = 0;
            if (sol_ref_from_case(p.c, &prob, &src, &nsrc, &approx, NULL, 0, NULL) == EDDY_OK) {
                sol_ref_result q;
                if (sol_ref_solve(&prob, src, nsrc, v, &q, NULL) == EDDY_OK)
                    ref = -q.force_x;
            }
            free(src);
        }
        pipe_free(&p);
    }
    /* the remaining ~0.45 % is the zero box (the same offset appears at low
     * speed for this case), so refinement changes the drag only slightly */
    double e1 = fabs(drag[0] - ref) / ref, e2 = fabs(drag[1] - ref) / ref;
    double change = fabs(drag[1] - drag[0]) / drag[1];
    check(e1 <= TOL_REFERENCE && e2 <= TOL_REFERENCE && change <= 0.005,
          "drag at Rm ~ 1300 agrees with the reference and is settled under refinement",
          "error %.3g %% (default grid), %.3g %% (refined 2x); change %.3g %%", 100 * e1,
          100 * e2, 100 * change);
}

int main(void)
{
    test_thin_sheet();
    for (size_t k = 0; k < sizeof ref_cases / sizeof ref_cases[0]; k++)
        test_against_reference(&ref_cases[k]);
    test_low_speed_ratio();
    test_high_peclet();
    return check_summary();
}
