/*
 * bench.c - `make bench`: speed and memory of the solver on a ladder of grids
 * of one brake case (not part of `make test`).
 *
 * Prints, per grid (about 65k, 260k and 1M unknowns): the times to mesh,
 * assemble, analyse, factor, solve and post-process, the LU fill, flops and
 * GFLOP/s, and the peak memory; the three fill-reducing orderings side by
 * side; the ratio of a whole speed point to UMFPACK's bare analyse + factor +
 * solve of the same matrix; a 16-speed sweep against 16 independent
 * single-speed runs; and the fitted exponent of time against unknowns.
 * Times are medians of BENCH_REPEAT runs (default 3).  scipy's spsolve is
 * timed separately by tests/bench_scipy.py on the exported matrix.
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <time.h>
#include <umfpack.h>

#include "mesh/mesh.h"
#include "app/app.h"
#include "solver/sol.h"

static double now(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

static int cmp_d(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

static double median(double *v, int n)
{
    qsort(v, (size_t)n, sizeof *v, cmp_d);
    return n % 2 ? v[n / 2] : 0.5 * (v[n / 2 - 1] + v[n / 2]);
}

static double peak_rss_mib(void)
{
    struct rusage ru;
    getrusage(RUSAGE_SELF, &ru);
    return ru.ru_maxrss / 1024.0;
}

/* The bench case: the sled fin brake (cases/sled_fin.json) with a uniform
 * refinement factor to set the size. */
static const char *case_fmt =
    "{\"name\":\"bench\",\"length_unit\":\"mm\","
    "\"domain\":{\"x\":[0,60],\"y\":[-120,120],\"x_boundary\":\"periodic\"},"
    "\"materials\":{\"fin\":{\"conductivity\":2.46e7}},"
    "\"regions\":[{\"material\":\"fin\",\"box\":[0,-5,60,5],\"moving\":true},"
    "{\"material\":\"soft_iron_linear\",\"box\":[0,17,60,27]},"
    "{\"material\":\"soft_iron_linear\",\"box\":[0,-27,60,-17]},"
    "{\"material\":\"ndfeb_42\",\"box\":[2.5,7,27.5,17],\"magnetization_angle\":-90},"
    "{\"material\":\"ndfeb_42\",\"box\":[32.5,7,57.5,17],\"magnetization_angle\":90},"
    "{\"material\":\"ndfeb_42\",\"box\":[2.5,-17,27.5,-7],\"magnetization_angle\":-90},"
    "{\"material\":\"ndfeb_42\",\"box\":[32.5,-17,57.5,-7],\"magnetization_angle\":90}],"
    "\"speeds\":[%s],\"mesh\":{\"refine\":%d,\"design_speed\":%.6g}}";

typedef struct {
    mesh_case *c;
    mesh_grid *g;
    sol_system *s;
    double *a;
} setup;

static void setup_free(setup *b)
{
    free(b->a);
    sol_system_free(b->s);
    mesh_grid_free(b->g);
    mesh_case_free(b->c);
}

static int setup_open(setup *b, int refine, const char *speeds, double *t_mesh)
{
    char json[4096];
    snprintf(json, sizeof json, case_fmt, speeds, refine, 0.0);
    memset(b, 0, sizeof *b);
    double t0 = now();
    eddy_error err = {0};
    if (mesh_case_parse(json, "bench", &b->c, &err) != EDDY_OK ||
        mesh_grid_build(b->c, 0.0, &b->g, NULL, &err) != EDDY_OK ||
        sol_system_alloc(b->g, &b->s, &err) != EDDY_OK) {
        fprintf(stderr, "bench: %s\n", err.msg);
        return -1;
    }
    if (t_mesh != NULL)
        *t_mesh = now() - t0;
    b->a = malloc((size_t)b->g->nx * (size_t)b->g->ny * sizeof *b->a);
    return b->a != NULL ? 0 : -1;
}

/* Bare UMFPACK on the exported matrix: analyse (its default ordering
 * choice), factor, solve; returns the total seconds. */
static double bare_umfpack(const char *mtx, const char *rhs, double *t_parts)
{
    FILE *f = fopen(mtx, "r"), *g = fopen(rhs, "r");
    if (f == NULL || g == NULL)
        return NAN;
    char line[256];
    long n = 0, m = 0, nz = 0;
    while (fgets(line, sizeof line, f) != NULL && line[0] == '%')
        ;
    sscanf(line, "%ld %ld %ld", &n, &m, &nz);
    long *ti = malloc((size_t)nz * sizeof *ti), *tj = malloc((size_t)nz * sizeof *tj);
    double *tx = malloc((size_t)nz * sizeof *tx), *b = malloc((size_t)n * sizeof *b);
    double *x = malloc((size_t)n * sizeof *x);
    long *Ap = malloc((size_t)(n + 1) * sizeof *Ap), *Ai = malloc((size_t)nz * sizeof *Ai);
    double *Ax = malloc((size_t)nz * sizeof *Ax);
    for (long k = 0; k < nz; k++) {
        if (fscanf(f, "%ld %ld %lf", &ti[k], &tj[k], &tx[k]) != 3)
            return NAN;
        ti[k]--;
        tj[k]--;
    }
    while (fgets(line, sizeof line, g) != NULL && line[0] == '%')
        ;
    for (long k = 0; k < n; k++)
        if (fscanf(g, "%lf", &b[k]) != 1)
            return NAN;
    fclose(f);
    fclose(g);
    umfpack_dl_triplet_to_col(n, n, nz, ti, tj, tx, Ap, Ai, Ax, NULL);
    void *sym = NULL, *num = NULL;
    double t0 = now();
    umfpack_dl_symbolic(n, n, Ap, Ai, Ax, &sym, NULL, NULL);
    double t1 = now();
    umfpack_dl_numeric(Ap, Ai, Ax, sym, &num, NULL, NULL);
    double t2 = now();
    umfpack_dl_solve(UMFPACK_A, Ap, Ai, Ax, x, b, num, NULL, NULL);
    double t3 = now();
    umfpack_dl_free_symbolic(&sym);
    umfpack_dl_free_numeric(&num);
    free(ti);
    free(tj);
    free(tx);
    free(b);
    free(x);
    free(Ap);
    free(Ai);
    free(Ax);
    t_parts[0] = t1 - t0;
    t_parts[1] = t2 - t1;
    t_parts[2] = t3 - t2;
    return t3 - t0;
}

int main(int argc, char **argv)
{
    int repeat = getenv("BENCH_REPEAT") ? atoi(getenv("BENCH_REPEAT")) : 3;
    int max_refine = getenv("BENCH_MAX_REFINE") ? atoi(getenv("BENCH_MAX_REFINE")) : 13;
    const char *export_dir = argc > 1 ? argv[1] : "build/bench";
    if (repeat < 1)
        repeat = 1;
    setvbuf(stdout, NULL, _IOLBF, 0);
    /* the sled fin at 20 m/s (past its drag peak) */
    const double v = 20.0;
    int refines[3] = {3, 7, 13}; /* about 53k, 290k, 1M unknowns */
    double ladder_n[3], ladder_t[3];
    int nl = 0;
    printf("eddy2d bench: sled fin brake (cases/sled_fin.json), one period, %g m/s; medians of %d\n\n",
           v, repeat);
    printf("%9s %8s %8s %8s %8s %8s %8s %11s %10s %7s %9s\n", "unknowns", "mesh s", "assem s",
           "analyse s", "factor s", "solve s", "post s", "LU entries", "Gflop", "GF/s",
           "peak MiB");
    for (int li = 0; li < 3 && refines[li] <= max_refine; li++) {
        double tm[9], ta[9], tan[9], tf[9], ts[9], tp[9], lu = 0, fl = 0;
        long n = 0;
        for (int rep = 0; rep < repeat; rep++) {
            setup b;
            if (setup_open(&b, refines[li], "20", &tm[rep]) != 0)
                return 1;
            sol_info info = {0};
            eddy_error err = {0};
            if (sol_solve(b.s, v, b.a, &info, &err) != EDDY_OK) {
                fprintf(stderr, "bench: %s\n", err.msg);
                return 1;
            }
            double t0 = now();
            post_forces f;
            post_forces_compute(b.g, b.a, v, 0.0, &f, NULL);
            tp[rep] = now() - t0;
            ta[rep] = info.t_assemble;
            tan[rep] = info.t_analyse;
            tf[rep] = info.t_factor;
            ts[rep] = info.t_solve;
            lu = info.lnz + info.unz;
            fl = info.flops;
            n = info.n;
            setup_free(&b);
        }
        double mf = median(tf, repeat);
        printf("%9ld %8.3f %8.3f %8.3f %8.3f %8.3f %8.3f %11.3g %10.3g %7.2f %9.0f\n", n,
               median(tm, repeat), median(ta, repeat), median(tan, repeat), mf,
               median(ts, repeat), median(tp, repeat), lu, fl * 1e-9, fl * 1e-9 / mf,
               peak_rss_mib());
        ladder_n[nl] = (double)n;
        ladder_t[nl] = median(ta, repeat) + median(tan, repeat) + mf + median(ts, repeat) +
                       median(tp, repeat);
        nl++;
    }
    if (nl >= 2) {
        double sx = 0, sy = 0, sxx = 0, sxy = 0;
        for (int k = 0; k < nl; k++) {
            double x = log(ladder_n[k]), y = log(ladder_t[k]);
            sx += x;
            sy += y;
            sxx += x * x;
            sxy += x * y;
        }
        double slope = (nl * sxy - sx * sy) / (nl * sxx - sx * sx);
        printf("\nfitted exponent of (assemble + analyse + factor + solve + post) time against "
               "unknowns: %.2f\n", slope);
    }

    /* orderings at the middle size */
    int ro = max_refine >= 7 ? 7 : 3;
    printf("\norderings at refine %d (analyse + factor, medians of %d):\n", ro, repeat);
    printf("%9s %10s %10s %12s %10s\n", "ordering", "analyse s", "factor s", "LU entries",
           "Gflop");
    sol_ordering ords[3] = {SOL_ORDER_AMD, SOL_ORDER_METIS, SOL_ORDER_GRID_ND};
    for (int o = 0; o < 3; o++) {
        double tan[9], tf[9], lu = 0, fl = 0;
        for (int rep = 0; rep < repeat; rep++) {
            setup b;
            if (setup_open(&b, ro, "20", NULL) != 0)
                return 1;
            sol_set_ordering(b.s, ords[o]);
            sol_info info = {0};
            if (sol_solve(b.s, v, b.a, &info, NULL) != EDDY_OK)
                return 1;
            tan[rep] = info.t_analyse;
            tf[rep] = info.t_factor;
            lu = info.lnz + info.unz;
            fl = info.flops;
            setup_free(&b);
        }
        printf("%9s %10.3f %10.3f %12.4g %10.3g\n", sol_ordering_name(ords[o]),
               median(tan, repeat), median(tf, repeat), lu, fl * 1e-9);
    }

    /* whole speed point vs bare UMFPACK on the same matrix, largest size */
    int rb = refines[nl - 1];
    {
        setup b;
        if (setup_open(&b, rb, "20", NULL) != 0)
            return 1;
        char mtx[512], rhs[512], cmd[600];
        snprintf(cmd, sizeof cmd, "mkdir -p %s", export_dir);
        if (system(cmd) != 0)
            return 1;
        snprintf(mtx, sizeof mtx, "%s/matrix.mtx", export_dir);
        snprintf(rhs, sizeof rhs, "%s/rhs.mtx", export_dir);
        sol_export(b.s, v, mtx, rhs, NULL);
        double whole[9], bare[9], parts[3];
        for (int rep = 0; rep < repeat; rep++) {
            sol_set_ordering(b.s, SOL_ORDER_DEFAULT);
            double t0 = now();
            sol_solve(b.s, v, b.a, NULL, NULL);
            post_forces f;
            post_forces_compute(b.g, b.a, v, 0.0, &f, NULL);
            whole[rep] = now() - t0;
            bare[rep] = bare_umfpack(mtx, rhs, parts);
        }
        double mw = median(whole, repeat), mb = median(bare, repeat);
        printf("\nwhole speed point (analyse + assemble + factor + solve + forces) at %ld "
               "unknowns: %.3f s\n", sol_unknowns(b.s), mw);
        printf("bare UMFPACK (its own default ordering) analyse + factor + solve, same matrix: "
               "%.3f s\n", mb);
        printf("ratio eddy2d / bare UMFPACK: %.2f (goal <= 1.15)\n", mw / mb);
        printf("matrix exported to %s for tests/bench_scipy.py\n", mtx);
        char pj[600];
        snprintf(pj, sizeof pj, "%s/bench_point.json", export_dir);
        FILE *fj = fopen(pj, "w");
        if (fj != NULL) {
            fprintf(fj, "{\"unknowns\": %ld, \"whole_seconds\": %.6f, \"repeat\": %d}\n",
                    sol_unknowns(b.s), mw, repeat);
            fclose(fj);
        }
        setup_free(&b);
    }

    /* 16-speed sweep vs 16 single-speed runs of the whole job (app_run_solve:
     * mesh, analysis, static field, speeds, forces, result.json), middle
     * size, the same mesh (each single run lists all 16 speeds for the
     * mesher but solves one); the sweep uses both cores */
    {
        /* refine 3 (meshed for 158 m/s: about 0.13M unknowns) */
        const int rs = 3;
        char speeds[512] = "";
        for (int k = 0; k < 16; k++) {
            char one[32];
            snprintf(one, sizeof one, "%s%.4g", k ? "," : "", 0.5 * pow(10.0, k / 6.0));
            strcat(speeds, one);
        }
        char path[600], spath[600], out[600], json[4096];
        snprintf(path, sizeof path, "%s/sweep.json", export_dir);
        snprintf(spath, sizeof spath, "%s/single.json", export_dir);
        snprintf(out, sizeof out, "%s/sweep_out", export_dir);
        snprintf(json, sizeof json, case_fmt, speeds, rs, 0.0);
        FILE *f = fopen(path, "w");
        if (f == NULL || fputs(json, f) < 0)
            return 1;
        fclose(f);
        app_run_opts o;
        app_run_opts_defaults(&o);
        o.images = 0;
        o.reference = 0;
        o.outdir = out;
        double tsw[9], tsi[9];
        int threads = 0;
        for (int rep = 0; rep < repeat; rep++) {
            double t0 = now();
            app_report *r = NULL;
            if (app_run_solve(path, &o, &r, NULL) != EDDY_OK)
                return 1;
            threads = r->threads;
            app_report_free(r);
            tsw[rep] = now() - t0;
            t0 = now();
            for (int k = 0; k < 16; k++) {
                /* one speed; mesh.design_speed gives the sweep's mesh */
                char one[4096], sp[32];
                snprintf(sp, sizeof sp, "%.4g", 0.5 * pow(10.0, k / 6.0));
                snprintf(one, sizeof one, case_fmt, sp, rs, 0.5 * pow(10.0, 15 / 6.0));
                f = fopen(spath, "w");
                if (f == NULL || fputs(one, f) < 0)
                    return 1;
                fclose(f);
                app_run_opts o1 = o;
                o1.threads = 1;
                r = NULL;
                if (app_run_solve(spath, &o1, &r, NULL) != EDDY_OK)
                    return 1;
                app_report_free(r);
            }
            tsi[rep] = now() - t0;
        }
        double ta = median(tsw, repeat), tb = median(tsi, repeat);
        printf("\n16-speed sweep of the whole job at refine %d (%d threads): %.3f s; 16 "
               "single-speed runs: %.3f s; ratio %.2f (goal <= 0.55)\n", rs, threads, ta, tb,
               ta / tb);
    }
    return 0;
}
