/*
 * test_sweep.c - the speed machinery: concurrent speeds give the same
 * numbers as one at a time, every fill-reducing ordering gives the same
 * solution, the memory guard refuses before factorising, and the Matrix
 * Market export is the system that was solved (A x = b for the solution).
 */
#include <cJSON.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "tests/check.h"
#include "tests/pipeline.h"

static const char *case_text =
    "{\"name\":\"sweep\",\"length_unit\":\"mm\","
    "\"domain\":{\"x\":[0,50],\"y\":[-100,100],\"x_boundary\":\"periodic\"},"
    "\"regions\":[{\"material\":\"aluminium_6061_t6\",\"box\":[0,-8,50,0],\"moving\":true},"
    "{\"material\":\"soft_iron_linear\",\"box\":[0,14,50,24]},"
    "{\"material\":\"ndfeb_35\",\"box\":[2,4,23,14],\"magnetization_angle\":90},"
    "{\"material\":\"ndfeb_35\",\"box\":[27,4,48,14],\"magnetization_angle\":-90}],"
    "\"speeds\":[0.3,1,3,10,30,100,300]}";

static char dir[256];

static app_report *run_case(const char *name, int threads, double max_memory, eddy_status *s,
                            eddy_error *err)
{
    char casefile[300], out[300];
    snprintf(casefile, sizeof casefile, "%s/%s.json", dir, name);
    snprintf(out, sizeof out, "%s/out_%s%d_%g", dir, strcmp(name, "case") ? name : "", threads,
             max_memory);
    app_run_opts o;
    app_run_opts_defaults(&o);
    o.outdir = out;
    o.images = 0;
    o.threads = threads;
    o.max_memory = max_memory;
    app_report *r = NULL;
    *s = app_run_solve(casefile, &o, &r, err);
    return r;
}

static app_report *run(int threads, double max_memory, eddy_status *s, eddy_error *err)
{
    return run_case("case", threads, max_memory, s, err);
}

static void test_threads(void)
{
    eddy_error e1 = {0}, e2 = {0};
    eddy_status s1, s2;
    app_report *r1 = run(1, 0, &s1, &e1), *r2 = run(2, 0, &s2, &e2);
    check(s1 == EDDY_OK && s2 == EDDY_OK, "sweep on one and on two threads", "%s %s", e1.msg,
          e2.msg);
    if (s1 == EDDY_OK && s2 == EDDY_OK) {
        /* the same operations on the same data; only the memory alignment
         * of the BLAS kernels' operands may differ, which changes roundoff */
        double worst = 0.0;
        for (int k = 0; k < r1->npoint; k++) {
            worst = fmax(worst, fabs(r1->f[k].drag - r2->f[k].drag) / fabs(r1->f[k].drag));
            worst = fmax(worst, fabs(r1->f[k].force_y - r2->f[k].force_y) /
                                    fmax(fabs(r1->f[k].force_y), 1e-300));
            worst = fmax(worst, fabs(r1->f[k].loss - r2->f[k].loss) / fabs(r1->f[k].loss));
        }
        int want = sol_concurrency_safe() ? 2 : 1;
        if (want == 1)
            printf("# this BLAS is not safe for concurrent factorisations: one thread\n");
        check(r1->npoint == r2->npoint && r2->threads == want && worst < 1e-12,
              "two threads give the same numbers as one (to roundoff)",
              "%d points, %d threads, largest relative difference %.2g", r1->npoint,
              r2->threads, worst);
    }
    app_report_free(r1);
    app_report_free(r2);
}

/* One speed: on two cores the static field runs beside the LU analysis and
 * the error estimate (coarse grids, box truncation) beside the factorisation
 * (app_run.c, side work).  The numbers must be those of the same run on one
 * thread, where everything runs in sequence. */
static void test_beside(void)
{
    eddy_error e1 = {0}, e2 = {0};
    eddy_status s1, s2;
    app_report *r1 = run_case("one", 1, 0, &s1, &e1), *r2 = run_case("one", 2, 0, &s2, &e2);
    check(s1 == EDDY_OK && s2 == EDDY_OK, "one speed on one and on two threads", "%s %s", e1.msg,
          e2.msg);
    if (s1 == EDDY_OK && s2 == EDDY_OK) {
        const post_forces *a = &r1->f[0], *b = &r2->f[0];
        double v1[] = {a->drag, a->force_y, a->loss, a->drag_error, a->force_y_error,
                       r1->damping, r1->box_truncation, (double)r1->coarse_unknowns};
        double v2[] = {b->drag, b->force_y, b->loss, b->drag_error, b->force_y_error,
                       r2->damping, r2->box_truncation, (double)r2->coarse_unknowns};
        double worst = 0.0;
        for (int k = 0; k < 8; k++)
            worst = fmax(worst, fabs(v1[k] - v2[k]) / fmax(fabs(v1[k]), 1e-300));
        int want = sol_concurrency_safe();
        /* y sides zero 100 mm from a 14 mm gap: the box changes the damping
         * coefficient by about 1e-10, negligible on the 2h grid already */
        check(r1->box_grid != NULL && strcmp(r1->box_grid, "2h") == 0 &&
                  r1->box_truncation < 1e-6,
              "one speed: a negligible box is not solved again on the fine grid",
              "box_truncation_relative %.3g on grid %s", r1->box_truncation,
              r1->box_grid != NULL ? r1->box_grid : "(none)");
        check(r1->overlapped == 0 && r2->overlapped == want && r2->estimated &&
                  r1->box_truncation > 0 && worst < 1e-12,
              "one speed: the static field and the estimate beside the speed give the numbers "
              "of the run in sequence",
              "beside %d (want %d), in sequence %d; box truncation %.4g; largest relative "
              "difference of forces, estimates, damping, box, coarse unknowns %.2g",
              r2->overlapped, want, r1->overlapped, r1->box_truncation, worst);
    }
    app_report_free(r1);
    app_report_free(r2);
}

/* The solver block of a run's result.json: the BLAS as detected, its
 * threads and the speed workers; their product never exceeds the cores the
 * run was given (one BLAS thread per worker when two speeds run at once;
 * the policy of app_run.c, which measured it). */
static void check_solver_block(int threads)
{
    char path[400];
    snprintf(path, sizeof path, "%s/out_%d_0/result.json", dir, threads);
    char *text = NULL;
    cJSON *root = NULL;
    if (eddy_read_file(path, 1L << 26, &text, NULL, NULL) == EDDY_OK)
        root = cJSON_Parse(text);
    free(text);
    const cJSON *sv = cJSON_GetObjectItemCaseSensitive(root, "solver");
    const cJSON *blas = cJSON_GetObjectItemCaseSensitive(sv, "blas");
    const cJSON *bt = cJSON_GetObjectItemCaseSensitive(sv, "blas_threads");
    const cJSON *sw = cJSON_GetObjectItemCaseSensitive(sv, "speed_workers");
    char expect[256];
    sol_blas_name(expect, sizeof expect);
    int want_workers = threads > 1 && sol_concurrency_safe() ? threads : 1;
    char name[120];
    snprintf(name, sizeof name, "result.json names the BLAS and its threads (--threads %d)",
             threads);
    check(cJSON_IsString(blas) && strcmp(blas->valuestring, expect) == 0 &&
              strstr(expect, "(/") != NULL && cJSON_IsNumber(bt) && cJSON_IsNumber(sw) &&
              sw->valueint == want_workers && bt->valueint == 1 &&
              sw->valueint * bt->valueint <= threads,
          name, "blas \"%s\" (detected \"%s\"), blas_threads %d, speed_workers %d (want %d)",
          cJSON_IsString(blas) ? blas->valuestring : "(missing)", expect,
          cJSON_IsNumber(bt) ? bt->valueint : -1, cJSON_IsNumber(sw) ? sw->valueint : -1,
          want_workers);
    cJSON_Delete(root);
}

static void test_memory_guard(void)
{
    eddy_error err = {0};
    eddy_status s;
    app_report *r = run(1, 1024.0, &s, &err);
    char res[400];
    snprintf(res, sizeof res, "%s/out_1_1024/result.json", dir);
    struct stat st;
    check(s == EDDY_ERR_TOO_LARGE && strstr(err.msg, "GiB") != NULL && stat(res, &st) != 0,
          "the memory guard refuses a factorisation above --max-memory, writing nothing", "%s",
          err.msg);
    app_report_free(r);
}

static void test_orderings_and_export(void)
{
    pipe_run p;
    if (pipe_open(&p, case_text) != 0) {
        check(0, "orderings: pipeline", "failed");
        return;
    }
    const sol_ordering ords[3] = {SOL_ORDER_AMD, SOL_ORDER_METIS, SOL_ORDER_GRID_ND};
    double drag[3] = {0, 0, 0};
    for (int o = 0; o < 3; o++) {
        sol_set_ordering(p.sys, ords[o]);
        post_forces f;
        if (pipe_speed(&p, 30.0, &f) == 0)
            drag[o] = f.drag;
    }
    double spread = fmax(fabs(drag[0] - drag[2]), fabs(drag[1] - drag[2])) / drag[2];
    check(spread < 1e-9, "AMD, METIS and grid nested dissection give the same drag",
          "%.12g %.12g %.12g N/m", drag[0], drag[1], drag[2]);

    /* export at 30 m/s; the solution p.a (last solve, 30 m/s) must satisfy
     * the exported A x = b */
    char mp[300], rp[300];
    snprintf(mp, sizeof mp, "%s/m.mtx", dir);
    snprintf(rp, sizeof rp, "%s/b.mtx", dir);
    eddy_status s = sol_export(p.sys, 30.0, mp, rp, NULL);
    FILE *fm = fopen(mp, "r"), *fb = fopen(rp, "r");
    if (s != EDDY_OK || fm == NULL || fb == NULL) {
        check(0, "Matrix Market export written", "%s", eddy_strerror(s));
        pipe_free(&p);
        return;
    }
    char line[256];
    int banner = fgets(line, sizeof line, fm) != NULL &&
                 strncmp(line, "%%MatrixMarket matrix coordinate real general", 45) == 0;
    while (fgets(line, sizeof line, fm) != NULL && line[0] == '%')
        ;
    long n = 0, m = 0, nz = 0;
    sscanf(line, "%ld %ld %ld", &n, &m, &nz);
    /* unknown k <-> node: rebuild the map as the solver numbers them (row by
     * row, x fastest, periodic: i < nx-1; interior rows) */
    const mesh_grid *g = p.g;
    double *x = malloc((size_t)n * sizeof *x), *ax = calloc((size_t)n, sizeof *ax);
    long nxu = g->nx - 1;
    for (long u = 0; u < n; u++)
        x[u] = p.a[(size_t)(u % nxu) + (size_t)g->nx * (size_t)(u / nxu + 1)];
    for (long k = 0; k < nz; k++) {
        long i, j;
        double v;
        if (fscanf(fm, "%ld %ld %lf", &i, &j, &v) != 3)
            break;
        ax[i - 1] += v * x[j - 1];
    }
    while (fgets(line, sizeof line, fb) != NULL && line[0] == '%')
        ;
    double rn = 0.0, bn = 0.0;
    for (long r = 0; r < n; r++) {
        double b;
        if (fscanf(fb, "%lf", &b) != 1)
            break;
        rn += (ax[r] - b) * (ax[r] - b);
        bn += b * b;
    }
    fclose(fm);
    fclose(fb);
    check(banner && n == sol_unknowns(p.sys) && sqrt(rn / bn) < 1e-10,
          "the exported Matrix Market system is the one solved: |A x - b| / |b|",
          "%.3g for %ld unknowns, %ld entries", sqrt(rn / bn), n, nz);
    free(x);
    free(ax);
    pipe_free(&p);
}

int main(void)
{
    snprintf(dir, sizeof dir, "/tmp/eddy2d_test_sweep_%ld", (long)getpid());
    mkdir(dir, 0777);
    char casefile[300];
    snprintf(casefile, sizeof casefile, "%s/case.json", dir);
    if (pipe_write_case(casefile, case_text) != 0)
        return 1;
    /* the same case at one speed */
    char one[1024], *sp = strstr(case_text, "\"speeds\"");
    snprintf(one, sizeof one, "%.*s\"speeds\":[10]}", (int)(sp - case_text), case_text);
    snprintf(casefile, sizeof casefile, "%s/one.json", dir);
    if (pipe_write_case(casefile, one) != 0)
        return 1;
    test_threads();
    test_beside();
    check_solver_block(1);
    check_solver_block(2);
    test_memory_guard();
    test_orderings_and_export();
    char cmd[400];
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", dir);
    if (system(cmd) != 0)
        printf("# could not remove %s\n", dir);
    return check_summary();
}
