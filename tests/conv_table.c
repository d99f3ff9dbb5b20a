/*
 * conv_table.c - `make convergence`: unknowns vs error against the layered
 * reference for one case, with the observed order, on the default graded
 * grid refined 1x, 2x, 4x, 8x, and on uniform grids of similar sizes.
 * Not a test (no pass/fail): a table for the README.
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "solver/sol_ref.h"
#include "tests/pipeline.h"

/* periodic alternating array over an 8 mm aluminium plate (the validation
 * case of tests/test_validation.c), at Rm = 10 (past the drag peak) */
static const char *case_fmt =
    "{\"name\":\"conv\",\"length_unit\":\"mm\",\"domain\":{\"x\":[0,50],\"y\":[-150,150],"
    "\"x_boundary\":\"periodic\"},"
    "\"materials\":{\"mag\":{\"remanence\":1.2,\"relative_permeability\":1.0}},"
    "\"regions\":[{\"material\":\"aluminium_6061_t6\",\"box\":[0,-8,50,0],\"moving\":true},"
    "{\"material\":\"mag\",\"box\":[2,4,23,14],\"magnetization_angle\":90},"
    "{\"material\":\"mag\",\"box\":[27,4,48,14],\"magnetization_angle\":-90}],"
    "\"speeds\":[%.10g],\"mesh\":%s}";

static double now(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

static int run(const char *mesh, double v, double ref_drag, double ref_fy, long *n, double *ed,
               double *en, double *secs)
{
    char json[2048];
    snprintf(json, sizeof json, case_fmt, v, mesh);
    double t0 = now();
    pipe_run p;
    if (pipe_open(&p, json) != 0)
        return -1;
    post_forces f;
    int rc = pipe_speed(&p, v, &f);
    *secs = now() - t0;
    *n = sol_unknowns(p.sys);
    *ed = (f.drag - ref_drag) / ref_drag;
    *en = (f.force_y - ref_fy) / ref_fy;
    pipe_free(&p);
    return rc;
}

/* One grid of the table; prev carries the previous drag error for the
 * observed order (log2 of the error ratio: the grids halve h). */
static int print_row(const char *label, const char *mesh, double v, double ref_drag,
                     double ref_fy, double *prev)
{
    long n;
    double ed, en, s;
    if (run(mesh, v, ref_drag, ref_fy, &n, &ed, &en, &s) != 0)
        return 0;
    char order[16] = "";
    if (isfinite(*prev))
        snprintf(order, sizeof order, "%.2f", log2(fabs(*prev) / fabs(ed)));
    printf("%-22s %10ld %+12.4f %+12.4f %8s %8.2f\n", label, n, 100 * ed, 100 * en, order, s);
    *prev = ed;
    return 1;
}

int main(void)
{
    const double sigma_t = 24.6e6 * 0.008, rm = 10.0;
    double v = rm / (EDDY_MU0 * sigma_t);
    /* the reference */
    char json[2048];
    snprintf(json, sizeof json, case_fmt, v, "{}");
    mesh_case *c = NULL;
    if (mesh_case_parse(json, "conv", &c, NULL) != EDDY_OK)
        return 1;
    sol_ref_problem prob;
    sol_ref_source *src = NULL;
    int nsrc = 0, approx = 0;
    sol_ref_result q;
    if (sol_ref_from_case(c, &prob, &src, &nsrc, &approx, NULL, 0, NULL) != EDDY_OK ||
        sol_ref_solve(&prob, src, nsrc, v, &q, NULL) != EDDY_OK)
        return 1;
    mesh_case_free(c);
    free(src);
    double ref_drag = -q.force_x, ref_fy = q.force_y;
    printf("convergence: periodic magnet array over 8 mm aluminium, Rm = %g (v = %.4g m/s)\n",
           rm, v);
    printf("reference (layered Fourier): drag %.6g N/m, normal force %.6g N/m\n\n", ref_drag,
           ref_fy);
    printf("%-22s %10s %12s %12s %8s %8s\n", "grid", "unknowns", "drag err %", "normal err %",
           "order", "seconds");
    /* graded: each cell split r x r (h halves); uniform: h halves */
    for (int family = 0; family < 2; family++) {
        double prev = NAN;
        for (int step = 0; step < 4; step++) {
            int refine = 1 << step;
            double h = 2.0 / refine;
            char mesh[96], label[32];
            if (family == 0) {
                snprintf(mesh, sizeof mesh, "{\"refine\":%d}", refine);
                snprintf(label, sizeof label, "graded, refine %d", refine);
            } else {
                snprintf(mesh, sizeof mesh, "{\"max_size\":%g,\"min_size\":%g}", h, h);
                snprintf(label, sizeof label, "uniform, h = %g mm", h);
            }
            if (!print_row(label, mesh, v, ref_drag, ref_fy, &prev))
                return 1;
        }
    }
    printf("\norder: log2 of the error ratio between successive grids (2 = second order)\n");
    return 0;
}
