/*
 * pipeline.h - test helper: run the mesh -> solver -> post pipeline on a case
 * given as JSON text, the way the command-line front end does.
 */
#ifndef EDDY_TEST_PIPELINE_H
#define EDDY_TEST_PIPELINE_H

#include <stdio.h>
#include <stdlib.h>

#include "mesh/mesh.h"
#include "app/app.h"
#include "solver/sol.h"

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
        p->slope = post_lowspeed_slope(p->g, p->a);
    if (s != EDDY_OK) {
        printf("# pipeline error: %s (%s)\n", err.msg, eddy_strerror(s));
        pipe_free(p);
        return -1;
    }
    return 0;
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

#endif
