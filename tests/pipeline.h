/*
 * pipeline.h - the test programs' shared helpers: run the mesh -> solver ->
 * post pipeline on a case given as JSON text, the way the command-line front
 * end does (pipe_open / pipe_speed), or the whole job of `eddy2d solve` on a
 * case text written to a file (pipe_write_case / pipe_solve_text), and read
 * an output file back (pipe_read_text).
 */
#ifndef EDDY_TEST_PIPELINE_H
#define EDDY_TEST_PIPELINE_H

#include <stdio.h>
#include <stdlib.h>

#include "mesh/mesh.h"
#include "app/app.h"
#include "solver/sol.h"
#include "solver/sol_ref.h"

typedef struct {
    mesh_case *c;
    mesh_grid *g;
    sol_system *sys;
    double *a;         /* field of the last solve, nx*ny */
    double slope;      /* low-speed drag per m/s */
} pipe_run;

static inline void pipe_free(pipe_run *p)
{
    free(p->a);
    sol_system_free(p->sys);
    mesh_grid_free(p->g);
    mesh_case_free(p->c);
}

/* Parse, mesh, build the system and solve the static field.  Returns 0 on
 * success; prints the error and returns -1 otherwise. */
static inline int pipe_open(pipe_run *p, const char *json)
{
    eddy_error err = {0};
    p->c = NULL;
    p->g = NULL;
    p->sys = NULL;
    p->a = NULL;
    eddy_status s = mesh_case_parse(json, "test-case", &p->c, &err);
    if (s == EDDY_OK)
        s = mesh_grid_build(p->c, 0.0, &p->g, NULL, &err);
    if (s == EDDY_OK)
        s = sol_system_alloc(p->g, &p->sys, &err);
    if (s == EDDY_OK) {
        p->a = malloc((size_t)p->g->nx * (size_t)p->g->ny * sizeof *p->a);
        if (p->a == NULL)
            s = EDDY_ERR_NOMEM;
    }
    if (s == EDDY_OK)
        s = sol_solve(p->sys, 0.0, p->a, NULL, &err);
    if (s == EDDY_OK)
        p->slope = post_damping_coefficient(p->g, p->a, NULL);
    if (s != EDDY_OK) {
        printf("# pipeline error: %s (%s)\n", err.msg, eddy_strerror(s));
        pipe_free(p);
        return -1;
    }
    return 0;
}

/* The layered reference (solver/sol_ref.h) of the run's case at speed v
 * into *q.  Returns 0; -1 (with a line saying why) when the case does not
 * fit it, fits only approximately and allow_approx is 0, or it fails. */
static inline int pipe_reference(const pipe_run *p, double v, int allow_approx,
                                 sol_ref_result *q)
{
    sol_ref_problem prob;
    sol_ref_source *src = NULL;
    int nsrc = 0, approx = 0;
    char why[256];
    if (sol_ref_from_case(p->c, &prob, &src, &nsrc, &approx, why, sizeof why, NULL) != EDDY_OK) {
        printf("# the case does not fit the reference: %s\n", why);
        return -1;
    }
    eddy_status s = sol_ref_solve(&prob, src, nsrc, v, q, NULL);
    free(src);
    return s == EDDY_OK && (allow_approx || !approx) ? 0 : -1;
}

/* Solve at speed v and compute forces.  Returns 0 on success. */
static inline int pipe_speed(pipe_run *p, double v, post_forces *f)
{
    eddy_error err = {0};
    eddy_status s = sol_solve(p->sys, v, p->a, NULL, &err);
    if (s == EDDY_OK)
        s = post_forces_compute(p->g, p->a, v, p->slope, f, &err);
    if (s != EDDY_OK) {
        printf("# solve error at %g m/s: %s\n", v, err.msg);
        return -1;
    }
    return 0;
}

/* Write text to path.  Returns 0 on success, -1 (with a "#" line) otherwise. */
static inline int pipe_write_case(const char *path, const char *text)
{
    FILE *f = fopen(path, "w");
    int ok = f != NULL && fputs(text, f) >= 0;
    if (f != NULL && fclose(f) != 0)
        ok = 0;
    if (!ok)
        printf("# cannot write %s\n", path);
    return ok ? 0 : -1;
}

/* The whole job (app_run_solve) on a case text: written to dir/name.json,
 * solved into dir/name/ with the options o (NULL: the defaults with the
 * layered reference off), the outdir of o replaced.  *s receives the status
 * (EDDY_ERR_IO when the case file cannot be written); returns the report
 * (caller frees with app_report_free; NULL before the case was read). */
static inline app_report *pipe_solve_text(const char *dir, const char *name, const char *json,
                                          const app_run_opts *o, eddy_status *s,
                                          eddy_error *err)
{
    char path[1024], out[1024];
    snprintf(path, sizeof path, "%s/%s.json", dir, name);
    snprintf(out, sizeof out, "%s/%s", dir, name);
    if (pipe_write_case(path, json) != 0) {
        *s = EDDY_ERR_IO;
        return NULL;
    }
    app_run_opts opts;
    if (o != NULL) {
        opts = *o;
    } else {
        app_run_opts_defaults(&opts);
        opts.reference = 0;
    }
    opts.outdir = out;
    app_report *r = NULL;
    *s = app_run_solve(path, &opts, &r, err);
    return r;
}

/* Read at most size - 1 bytes of a file into buf (NUL-terminated; empty if
 * the file cannot be read).  Returns the length read. */
static inline size_t pipe_read_text(const char *path, char *buf, size_t size)
{
    buf[0] = '\0';
    FILE *f = fopen(path, "r");
    if (f == NULL)
        return 0;
    size_t n = fread(buf, 1, size - 1, f);
    buf[n] = '\0';
    fclose(f);
    return n;
}

#endif
