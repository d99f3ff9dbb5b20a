/*
 * bench.c - `make bench`: speed and memory of the whole job on a ladder of
 * grids of one brake case (not part of `make test`).
 *
 * Prints, in one run:
 *   1. the machine: cores, memory, the BLAS as detected (sol_blas_name) and
 *      its own dgemm rate on one thread and on all cores (the ceiling of a
 *      factorisation's dense kernels);
 *   2. per grid (about 56k, 225k and 1.06M unknowns): the whole single-speed
 *      job (app_run_solve with every default output: mesh, analysis, static
 *      field, the speed, the error estimate's coarse grids, pictures,
 *      result.json), each stage, the factorisation's GFLOP/s against dgemm,
 *      the peak resident memory against the LU's own peak;
 *   3. beside it, scipy's SuperLU (splu, best of its column orderings) on
 *      the same matrix exported (tests/bench_scipy.py through
 *      /usr/bin/python3; skipped without scipy): factor + solve time and fill;
 *   4. the fill-reducing orderings (AMD, COLAMD, METIS, the grid's nested
 *      dissection) per size: analysis and factor times and LU entries, and
 *      the one the runner picks against SuperLU's best fill;
 *   5. a 16-speed sweep of the whole job (median of BENCH_REPEAT) against 16
 *      single-speed jobs (once: the sum of 16 runs).
 * Times are medians of BENCH_REPEAT runs (default 3); BENCH_MAX_REFINE (13)
 * caps the ladder.
 */
#define _GNU_SOURCE /* RTLD_DEFAULT */
#include <dlfcn.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <time.h>
#include <unistd.h>

#include <cJSON.h>

#include "app/app.h"
#include "mesh/mesh.h"
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

/* ------------------------------------------------------------------------ */
/* dgemm: the BLAS's own rate                                                */
/* ------------------------------------------------------------------------ */

typedef void (*dgemm_fn)(const char *, const char *, const int *, const int *, const int *,
                         const double *, const double *, const int *, const double *,
                         const int *, const double *, double *, const int *);

/* GFLOP/s of C = A B (n x n, 2 n^3 flop), median of repeat calls; NAN
 * without dgemm_. */
static double dgemm_rate(int n, int repeat)
{
    void *sym = dlsym(RTLD_DEFAULT, "dgemm_");
    dgemm_fn dgemm = NULL;
    memcpy(&dgemm, &sym, sizeof dgemm);
    if (dgemm == NULL)
        return NAN;
    size_t nn = (size_t)n * (size_t)n;
    double *a = malloc(nn * sizeof *a), *b = malloc(nn * sizeof *b), *c = calloc(nn, sizeof *c);
    if (a == NULL || b == NULL || c == NULL)
        return NAN;
    for (size_t k = 0; k < nn; k++) {
        a[k] = 1.0 / (double)(k % 97 + 1);
        b[k] = 1.0 / (double)(k % 89 + 2);
    }
    const double one = 1.0, zero = 0.0;
    double t[9];
    dgemm("N", "N", &n, &n, &n, &one, a, &n, b, &n, &zero, c, &n); /* warm up */
    for (int r = 0; r < repeat; r++) {
        double t0 = now();
        dgemm("N", "N", &n, &n, &n, &one, a, &n, b, &n, &zero, c, &n);
        t[r] = now() - t0;
    }
    free(a);
    free(b);
    free(c);
    return 2.0 * (double)n * n * n * 1e-9 / median(t, repeat);
}

/* ------------------------------------------------------------------------ */
/* scipy on an exported matrix                                               */
/* ------------------------------------------------------------------------ */

typedef struct {
    int ok;
    char best_time[32], best_fill[32];
    double t_best;     /* factor + solve of the fastest ordering, s */
    double fill_best;  /* L + U entries of the least-filling ordering */
} scipy_result;

static scipy_result run_scipy(const char *mtx, const char *rhs, int repeat, const char *specs)
{
    scipy_result out = {0};
    char cmd[2000];
    const char *py = access("/usr/bin/python3", X_OK) == 0 ? "/usr/bin/python3" : "python3";
    snprintf(cmd, sizeof cmd, "%s tests/bench_scipy.py '%s' '%s' %d %s", py, mtx, rhs, repeat,
             specs);
    FILE *p = popen(cmd, "r");
    if (p == NULL)
        return out;
    static char line[1 << 16];
    size_t len = fread(line, 1, sizeof line - 1, p);
    line[len] = '\0';
    pclose(p);
    cJSON *j = cJSON_Parse(line);
    const cJSON *o = cJSON_GetObjectItemCaseSensitive(j, "orderings");
    const cJSON *bt = cJSON_GetObjectItemCaseSensitive(j, "best_time");
    const cJSON *bf = cJSON_GetObjectItemCaseSensitive(j, "best_fill");
    if (cJSON_IsObject(o) && cJSON_IsString(bt) && cJSON_IsString(bf)) {
        const cJSON *t = cJSON_GetObjectItemCaseSensitive(o, bt->valuestring);
        const cJSON *f = cJSON_GetObjectItemCaseSensitive(o, bf->valuestring);
        out.t_best = cJSON_GetNumberValue(cJSON_GetObjectItemCaseSensitive(t, "factor_s")) +
                     cJSON_GetNumberValue(cJSON_GetObjectItemCaseSensitive(t, "solve_s"));
        out.fill_best = cJSON_GetNumberValue(cJSON_GetObjectItemCaseSensitive(f, "fill"));
        snprintf(out.best_time, sizeof out.best_time, "%s", bt->valuestring);
        snprintf(out.best_fill, sizeof out.best_fill, "%s", bf->valuestring);
        out.ok = 1;
    } else {
        const cJSON *sk = cJSON_GetObjectItemCaseSensitive(j, "skipped");
        printf("  scipy: %s\n", cJSON_IsString(sk) ? sk->valuestring : "no answer");
    }
    cJSON_Delete(j);
    return out;
}

/* ------------------------------------------------------------------------ */
/* The whole job                                                             */
/* ------------------------------------------------------------------------ */

static int write_case(const char *path, const char *speeds, int refine, double design_speed)
{
    char json[4096];
    snprintf(json, sizeof json, case_fmt, speeds, refine, design_speed);
    FILE *f = fopen(path, "w");
    if (f == NULL || fputs(json, f) < 0) {
        if (f != NULL)
            fclose(f);
        return -1;
    }
    return fclose(f) == 0 ? 0 : -1;
}

/* One whole job: its wall time and the report's stages. */
typedef struct {
    double wall, mesh, analyse, stat, assemble, factor, solve, post, estimate, outputs;
    double flops, lu, lu_peak;
    long n;
    int workers, blas_threads;
    int beside; /* the static field and the estimate ran beside the LU */
} job;

static int run_job(const char *casefile, const char *outdir, int threads, job *jb)
{
    app_run_opts o;
    app_run_opts_defaults(&o);
    o.outdir = outdir;
    o.threads = threads;
    app_report *r = NULL;
    eddy_error err = {0};
    double t0 = now();
    if (app_run_solve(casefile, &o, &r, &err) != EDDY_OK) {
        fprintf(stderr, "bench: %s\n", err.msg);
        app_report_free(r);
        return -1;
    }
    memset(jb, 0, sizeof *jb);
    jb->wall = now() - t0;
    jb->mesh = r->t_mesh;
    jb->analyse = r->t_analyse;
    jb->stat = r->t_static;
    jb->estimate = r->t_estimate;
    for (int k = 0; k < r->npoint; k++) {
        jb->assemble += r->info[k].t_assemble;
        jb->factor += r->info[k].t_factor;
        jb->solve += r->info[k].t_solve;
        jb->post += r->info[k].t_post;
        jb->flops = r->info[k].flops;
        jb->lu = r->info[k].lnz + r->info[k].unz;
    }
    jb->outputs = jb->wall - (jb->mesh + jb->analyse + jb->stat + jb->estimate);
    jb->n = r->unknowns;
    jb->workers = r->threads;
    jb->blas_threads = r->blas_threads;
    jb->beside = r->overlapped == 1;
    app_report_free(r);
    return 0;
}

static void job_median(job *runs, int n, job *m)
{
    double v[9];
#define MED(field)                                                                           \
    do {                                                                                     \
        for (int k = 0; k < n; k++)                                                          \
            v[k] = runs[k].field;                                                            \
        m->field = median(v, n);                                                             \
    } while (0)
    *m = runs[0];
    MED(wall);
    MED(mesh);
    MED(analyse);
    MED(stat);
    MED(assemble);
    MED(factor);
    MED(solve);
    MED(post);
    MED(estimate);
#undef MED
    m->outputs = m->wall - (m->mesh + m->analyse + m->stat + m->estimate);
}

/* The LU of the matrix at speed v on grid refine under ordering o: analysis
 * and factor times, entries, UMFPACK's numeric peak (bytes), GFLOP/s. */
static int one_ordering(int refine, sol_ordering o, double v, double *tan, double *tf, double *lu,
                        double *peak, double *flops)
{
    char json[4096];
    snprintf(json, sizeof json, case_fmt, "20", refine, 0.0);
    mesh_case *c = NULL;
    mesh_grid *g = NULL;
    sol_system *s = NULL;
    eddy_error err = {0};
    int rc = -1;
    if (mesh_case_parse(json, "bench", &c, &err) == EDDY_OK &&
        mesh_grid_build(c, 0.0, &g, NULL, &err) == EDDY_OK &&
        sol_system_alloc(g, &s, &err) == EDDY_OK) {
        sol_set_ordering(s, o);
        double *a = malloc((size_t)g->nx * (size_t)g->ny * sizeof *a);
        sol_info in = {0};
        if (a != NULL && sol_solve(s, v, a, &in, &err) == EDDY_OK) {
            *tan = in.t_analyse;
            *tf = in.t_factor;
            *lu = in.lnz + in.unz;
            *peak = in.peak_bytes;
            *flops = in.flops;
            rc = 0;
        }
        free(a);
    }
    if (rc != 0)
        fprintf(stderr, "bench: %s\n", err.msg);
    sol_system_free(s);
    mesh_grid_free(g);
    mesh_case_free(c);
    return rc;
}

static double mem_total_gib(void)
{
    long pages = sysconf(_SC_PHYS_PAGES), size = sysconf(_SC_PAGE_SIZE);
    return pages > 0 && size > 0 ? (double)pages * (double)size / 1073741824.0 : NAN;
}

int main(int argc, char **argv)
{
    int repeat = getenv("BENCH_REPEAT") ? atoi(getenv("BENCH_REPEAT")) : 3;
    int max_refine = getenv("BENCH_MAX_REFINE") ? atoi(getenv("BENCH_MAX_REFINE")) : 13;
    const char *dir = argc > 1 ? argv[1] : "build/bench";
    if (repeat < 1 || repeat > 9)
        repeat = 3;
    setvbuf(stdout, NULL, _IOLBF, 0);
    char cmd[700];
    snprintf(cmd, sizeof cmd, "mkdir -p '%s'", dir);
    if (system(cmd) != 0)
        return 1;
    const double v = 20.0; /* the sled fin at 20 m/s, past its drag peak */
    long cores = sysconf(_SC_NPROCESSORS_ONLN);
    char blas[256];
    sol_blas_name(blas, sizeof blas);
    time_t tt = time(NULL);
    char date[32];
    strftime(date, sizeof date, "%Y-%m-%d", gmtime(&tt));
    printf("eddy2d bench, %s: sled fin brake (cases/sled_fin.json), one period, %g m/s; medians "
           "of %d (the other cores may be busy)\n", date, v, repeat);
    printf("machine: %ld cores, %.1f GiB; BLAS: %s\n", cores, mem_total_gib(), blas);
    int ncore = cores > 0 ? (int)cores : 1;
    sol_blas_threads(1);
    double dg1 = dgemm_rate(1500, repeat);
    sol_blas_threads(ncore);
    double dgn = dgemm_rate(1500, repeat);
    printf("dgemm 1500 x 1500: %.2f GFLOP/s on 1 thread, %.2f on %d (the ceiling)\n\n", dg1, dgn,
           ncore);

    /* 2 + 3: the whole single-speed job per size, and scipy beside it */
    int refines[3] = {3, 6, 13};
    double n_of[3] = {0, 0, 0}, fill_of[3] = {0, 0, 0};
    int nl = 0;
    printf("whole single-speed job (every default output) against scipy's splu on the same "
           "matrix:\n");
    printf("%9s %7s %7s %7s %7s %7s %7s %7s %7s  | %6s %6s %6s | %7s %8s %8s | %8s %8s %6s\n",
           "unknowns", "mesh", "analyse", "static", "factor", "solve", "post", "estim", "whole",
           "Gflop", "GF/s", "%dgemm", "scipy s", "ours/sp", "sp order", "peak MiB", "LU MiB",
           "ratio");
    for (int li = 0; li < 3 && refines[li] <= max_refine; li++) {
        char casefile[800], outdir[800], mtx[800], rhs[800];
        snprintf(casefile, sizeof casefile, "%s/single_%d.json", dir, refines[li]);
        snprintf(outdir, sizeof outdir, "%s/single_%d", dir, refines[li]);
        if (write_case(casefile, "20", refines[li], 0.0) != 0)
            return 1;
        job runs[9], m;
        for (int rep = 0; rep < repeat; rep++)
            if (run_job(casefile, outdir, 0, &runs[rep]) != 0)
                return 1;
        job_median(runs, repeat, &m);
        /* the LU's own peak, from UMFPACK, on the job's ordering (one speed:
         * the grid's) */
        double tan, tf, lu, peak, fl;
        if (one_ordering(refines[li], SOL_ORDER_GRID_ND, v, &tan, &tf, &lu, &peak, &fl) != 0)
            return 1;
        double rss = peak_rss_mib();
        /* the same matrix for scipy */
        snprintf(mtx, sizeof mtx, "%s/matrix_%d.mtx", dir, refines[li]);
        snprintf(rhs, sizeof rhs, "%s/rhs_%d.mtx", dir, refines[li]);
        {
            char json[4096];
            snprintf(json, sizeof json, case_fmt, "20", refines[li], 0.0);
            mesh_case *c = NULL;
            mesh_grid *g = NULL;
            sol_system *s = NULL;
            if (mesh_case_parse(json, "bench", &c, NULL) != EDDY_OK ||
                mesh_grid_build(c, 0.0, &g, NULL, NULL) != EDDY_OK ||
                sol_system_alloc(g, &s, NULL) != EDDY_OK ||
                sol_export(s, v, mtx, rhs, NULL) != EDDY_OK)
                return 1;
            sol_system_free(s);
            mesh_grid_free(g);
            mesh_case_free(c);
        }
        /* SuperLU at 1M unknowns takes about a minute per ordering: there
         * only its best ordering at the smaller sizes, once */
        int big = m.n > 600000;
        scipy_result sp = run_scipy(mtx, rhs, big ? 1 : repeat,
                                    big ? "MMD_AT_PLUS_A" : "COLAMD MMD_AT_PLUS_A MMD_ATA");
        remove(mtx);
        remove(rhs);
        printf("%9ld %7.3f %7.3f %7.3f %7.3f %7.3f %7.3f %7.3f %7.3f%s| %6.2f %6.2f %5.0f%% | ",
               m.n, m.mesh, m.analyse, m.stat, m.factor, m.solve, m.post, m.estimate, m.wall,
               m.beside ? "*" : " ",
               m.flops * 1e-9, m.flops * 1e-9 / m.factor,
               100.0 * m.flops * 1e-9 / m.factor / (m.blas_threads > 1 ? dgn : dg1));
        if (sp.ok)
            printf("%7.3f %8.2f %8s | ", sp.t_best, m.wall / sp.t_best, sp.best_time);
        else
            printf("%7s %8s %8s | ", "-", "-", "-");
        printf("%8.0f %8.0f %6.2f\n", rss, peak / 1048576.0, rss / (peak / 1048576.0));
        n_of[nl] = (double)m.n;
        fill_of[nl] = sp.ok ? sp.fill_best : NAN;
        nl++;
    }
    printf("(stages in s: static = the static field by Cholesky; estim = the error estimate's two\n"
           " coarse grids and the open box; whole = wall time of app_run_solve, pictures and\n"
           " result.json included; %%dgemm against dgemm on as many threads as the factorisation\n"
           " used; scipy s = splu factor + solve of its fastest ordering; peak = resident set of\n"
           " this process so far; LU = UMFPACK's own numeric peak of the grid ordering's LU;\n"
           " * = the static field and the estimate ran on a second thread beside the LU\n"
           " analysis and factorisation, so the stages add up to more than whole)\n");

    /* 4: orderings per size */
    printf("\nfill-reducing orderings of the LU at %g m/s (one run each; SuperLU's least fill "
           "from above):\n", v);
    printf("%9s %8s %10s %10s %12s %8s %10s\n", "unknowns", "ordering", "analyse s", "factor s",
           "LU entries", "GF/s", "/SuperLU");
    const sol_ordering ords[4] = {SOL_ORDER_AMD, SOL_ORDER_COLAMD, SOL_ORDER_METIS,
                                  SOL_ORDER_GRID_ND};
    sol_blas_threads(1);
    for (int li = 0; li < nl; li++) {
        for (int o = 0; o < 4; o++) {
            double tan, tf, lu, peak, fl;
            if (one_ordering(refines[li], ords[o], v, &tan, &tf, &lu, &peak, &fl) != 0)
                return 1;
            printf("%9.0f %8s %10.3f %10.3f %12.4g %8.2f %10.2f\n", n_of[li],
                   sol_ordering_name(ords[o]), tan, tf, lu, fl * 1e-9 / tf, lu / fill_of[li]);
        }
    }

    /* 5: a 16-speed sweep against 16 single-speed jobs of the same mesh
     * (each lists one speed and mesh.design_speed of the sweep's highest) */
    {
        const int rs = 3; /* meshed for 158 m/s: about 0.13M unknowns */
        char speeds[512] = "";
        for (int k = 0; k < 16; k++) {
            char one[32];
            snprintf(one, sizeof one, "%s%.4g", k ? "," : "", 0.5 * pow(10.0, k / 6.0));
            strcat(speeds, one);
        }
        char path[800], spath[800], out[800];
        snprintf(path, sizeof path, "%s/sweep.json", dir);
        snprintf(spath, sizeof spath, "%s/single.json", dir);
        snprintf(out, sizeof out, "%s/sweep_out", dir);
        if (write_case(path, speeds, rs, 0.0) != 0)
            return 1;
        double tsw[9], tsi[9];
        job js = {0};
        for (int rep = 0; rep < repeat; rep++) {
            if (run_job(path, out, 0, &js) != 0)
                return 1;
            tsw[rep] = js.wall;
            if (rep > 0)
                continue; /* the 16 single jobs once: their sum averages 16 runs */
            tsi[rep] = 0.0;
            for (int k = 0; k < 16; k++) {
                char sp[32];
                snprintf(sp, sizeof sp, "%.4g", 0.5 * pow(10.0, k / 6.0));
                job j1;
                if (write_case(spath, sp, rs, 0.5 * pow(10.0, 15 / 6.0)) != 0 ||
                    run_job(spath, out, 0, &j1) != 0)
                    return 1;
                tsi[rep] += j1.wall;
            }
        }
        double ta = median(tsw, repeat), tb = tsi[0];
        printf("\n16-speed sweep of the whole job at %ld unknowns (%d speed workers, %d BLAS "
               "thread(s) each): %.3f s; 16 single-speed jobs: %.3f s; ratio %.2f (goal <= "
               "0.25)\n", js.n, js.workers, js.blas_threads, ta, tb, ta / tb);
    }
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", dir);
    if (system(cmd) != 0)
        return 1;
    return 0;
}
