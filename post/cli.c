/*
 * cli.c - the eddy2d command-line front end: the only place that prints to
 * the user or chooses an exit status.  It calls the three modules in turn:
 * mesh (case -> grid), solver (grid -> A per speed), post (A -> forces,
 * reports).
 *
 * Exit status: 0 success, 2 invalid input (or a mesh too large), 1 failure
 * during computation.
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "mesh/mesh.h"
#include "post/post.h"
#include "solver/sol.h"

static double now(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

static void usage(FILE *out)
{
    fprintf(out,
            "eddy2d %s - 2D eddy-current solver for permanent-magnet brakes and dampers\n"
            "\n"
            "usage:\n"
            "  eddy2d solve CASE.json [-o DIR] [-q]   solve every speed; write DIR/result.json\n"
            "                                         and DIR/forces.csv (default DIR:\n"
            "                                         results/<case name>)\n"
            "  eddy2d check CASE.json                 validate the case and print the mesh\n"
            "                                         summary without solving\n"
            "  eddy2d materials                       list the built-in material library\n"
            "  eddy2d --help | --version\n"
            "\n"
            "options:\n"
            "  -o DIR   output directory\n"
            "  -q       quiet: no table on stdout, no progress on stderr\n"
            "\n"
            "exit status: 0 success, 2 invalid input, 1 failure during computation\n",
            EDDY_VERSION);
}

static int fail(eddy_status s, const eddy_error *err)
{
    fprintf(stderr, "eddy2d: error: %s\n", err->msg[0] ? err->msg : eddy_strerror(s));
    return eddy_exit_code(s);
}

/* A case file that cannot be read is the user's input problem: exit 2. */
static int fail_load(eddy_status s, const eddy_error *err)
{
    fail(s, err);
    return 2;
}

static void print_warnings(const mesh_case *c)
{
    for (int k = 0; k < c->nwarn; k++)
        fprintf(stderr, "eddy2d: warning: %s\n", c->warnings[k]);
}

static int cmd_materials(void)
{
    printf("%-22s %12s %8s %7s  source\n", "name", "sigma (MS/m)", "mu_r", "Br (T)");
    for (int k = 0; k < mesh_library_count(); k++) {
        const mesh_material *m = mesh_library_entry(k);
        printf("%-22s %12.3f %8.4g %7.3f  %s\n", m->name, m->sigma * 1e-6, m->mu_r, m->br,
               m->source);
    }
    return 0;
}

static int cmd_check(const char *path)
{
    eddy_error err = {0};
    mesh_case *c = NULL;
    eddy_status s = mesh_case_load(path, &c, &err);
    if (s != EDDY_OK)
        return fail_load(s, &err);
    print_warnings(c);
    mesh_estimate est;
    s = mesh_grid_estimate(c, &est, &err);
    if (s != EDDY_OK && s != EDDY_ERR_TOO_LARGE) {
        mesh_case_free(c);
        return fail(s, &err);
    }
    printf("case        %s\n", c->name);
    if (c->description[0])
        printf("description %s\n", c->description);
    printf("domain      x %g to %g %s, y %g to %g %s, x sides %s, y sides zero\n",
           c->x0 / c->length_scale, c->x1 / c->length_scale, c->length_unit,
           c->y0 / c->length_scale, c->y1 / c->length_scale, c->length_unit,
           c->x_periodic ? "periodic" : "zero");
    printf("regions     %d (%d materials), speeds %d\n", c->nreg, c->nmat, c->nspeed);
    printf("mesh        %d x %d nodes, %ld unknowns\n", est.nx, est.ny, est.unknowns);
    printf("memory      about %.1f MiB estimated (limit %.1f GiB)\n",
           est.memory_bytes / 1048576.0, est.memory_limit / 1073741824.0);
    mesh_case_free(c);
    if (s != EDDY_OK)
        return fail(s, &err);
    printf("ok\n");
    return 0;
}

static int cmd_solve(const char *path, const char *outdir, int quiet)
{
    eddy_error err = {0};
    mesh_case *c = NULL;
    mesh_grid *g = NULL;
    sol_system *sys = NULL;
    double *a = NULL;
    post_forces *forces = NULL;
    post_point_info *pinfo = NULL;
    int progress = !quiet && isatty(2);

    double t0 = now();
    eddy_status s = mesh_case_load(path, &c, &err);
    if (s != EDDY_OK)
        return fail_load(s, &err);
    print_warnings(c);
    mesh_estimate est;
    s = mesh_grid_build(c, &g, &est, &err);
    double t_mesh = now() - t0;
    if (s == EDDY_OK)
        s = sol_system_alloc(g, &sys, &err);
    size_t nn = g != NULL ? (size_t)g->nx * (size_t)g->ny : 0;
    if (s == EDDY_OK) {
        a = malloc(nn * sizeof *a);
        forces = calloc((size_t)c->nspeed, sizeof *forces);
        pinfo = calloc((size_t)c->nspeed, sizeof *pinfo);
        if (a == NULL || forces == NULL || pinfo == NULL)
            s = EDDY_RAISE(&err, EDDY_ERR_NOMEM, "out of memory");
    }
    sol_info info = {0};
    if (s == EDDY_OK)
        s = sol_analyse(sys, &info, &err);
    double slope = 0.0;
    if (s == EDDY_OK) { /* the static field, for the low-speed limit */
        s = sol_solve(sys, 0.0, a, &info, &err);
        if (s == EDDY_OK)
            slope = post_lowspeed_slope(g, a);
    }
    if (s == EDDY_OK && !quiet)
        fprintf(stderr, "eddy2d: %s: %d x %d nodes, %ld unknowns, %d speeds\n", c->name, g->nx,
                g->ny, sol_unknowns(sys), c->nspeed);
    for (int k = 0; s == EDDY_OK && k < c->nspeed; k++) {
        double v = c->speeds[k];
        s = sol_solve(sys, v, a, &info, &err);
        if (s != EDDY_OK)
            break;
        double tp = now();
        s = post_forces_compute(g, a, v, slope, &forces[k], &err);
        pinfo[k] = (post_point_info){info.t_assemble, info.t_factor, info.t_solve, now() - tp,
                                     info.lnz, info.unz, info.flops};
        if (progress)
            fprintf(stderr, "\r  [%d/%d] %10.4g m/s   drag %12.5g N/m   ", k + 1, c->nspeed, v,
                    forces[k].drag);
    }
    if (progress)
        fprintf(stderr, "\n");
    if (s == EDDY_OK) {
        char dir[4096];
        if (outdir != NULL)
            snprintf(dir, sizeof dir, "%s", outdir);
        else
            snprintf(dir, sizeof dir, "results/%s", c->name);
        post_report rep = {c, g, sol_unknowns(sys), t_mesh, info.t_analyse, c->nspeed, forces,
                           pinfo};
        s = post_make_dir(dir, &err);
        if (s == EDDY_OK)
            s = post_write_results(dir, &rep, &err);
        if (s == EDDY_OK && !quiet) {
            printf("%12s %14s %14s %14s %14s %10s\n", "speed m/s", "drag N/m", "normal N/m",
                   "loss W/m", "stress drag", "Rm");
            for (int k = 0; k < c->nspeed; k++) {
                const post_forces *f = &forces[k];
                printf("%12.5g %14.6g %14.6g %14.6g %14.6g %10.4g\n", f->speed, f->drag,
                       f->force_y, f->loss, f->drag_stress, f->magnetic_reynolds);
            }
            printf("results in %s/ (result.json, forces.csv)\n", dir);
            printf("note: %s\n", post_safety_notice());
        }
    }
    free(a);
    free(forces);
    free(pinfo);
    sol_system_free(sys);
    mesh_grid_free(g);
    mesh_case_free(c);
    return s == EDDY_OK ? 0 : fail(s, &err);
}

int main(int argc, char **argv)
{
    if (argc < 2) {
        usage(stderr);
        return 2;
    }
    const char *cmd = argv[1];
    if (strcmp(cmd, "--help") == 0 || strcmp(cmd, "-h") == 0 || strcmp(cmd, "help") == 0) {
        usage(stdout);
        return 0;
    }
    if (strcmp(cmd, "--version") == 0) {
        printf("eddy2d %s\n", EDDY_VERSION);
        return 0;
    }
    if (strcmp(cmd, "materials") == 0)
        return cmd_materials();
    if (strcmp(cmd, "solve") != 0 && strcmp(cmd, "check") != 0) {
        fprintf(stderr, "eddy2d: error: unknown command \"%s\" (try eddy2d --help)\n", cmd);
        return 2;
    }
    const char *casefile = NULL, *outdir = NULL;
    int quiet = 0;
    for (int k = 2; k < argc; k++) {
        if (strcmp(argv[k], "-o") == 0 && k + 1 < argc && strcmp(cmd, "solve") == 0) {
            outdir = argv[++k];
        } else if (strcmp(argv[k], "-q") == 0) {
            quiet = 1;
        } else if (strcmp(argv[k], "--help") == 0) {
            usage(stdout);
            return 0;
        } else if (argv[k][0] == '-' && argv[k][1] != '\0') {
            fprintf(stderr, "eddy2d: error: unknown or incomplete option \"%s\"\n", argv[k]);
            return 2;
        } else if (casefile == NULL) {
            casefile = argv[k];
        } else {
            fprintf(stderr, "eddy2d: error: more than one case file given\n");
            return 2;
        }
    }
    if (casefile == NULL) {
        fprintf(stderr, "eddy2d: error: %s needs a case file (eddy2d %s CASE.json)\n", cmd, cmd);
        return 2;
    }
    if (strcmp(cmd, "check") == 0)
        return cmd_check(casefile);
    return cmd_solve(casefile, outdir, quiet);
}
