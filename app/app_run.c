/*
 * app_run.c - one case from file to reports: mesh -> solver -> post.
 *
 * This is the pipeline the command line and the batch runner call.  It
 * prints nothing; progress goes through an optional callback.  The files
 * beside result.json are written by app/app_out.c.
 */
#include "app/app.h"
#include "app/app_out.h"
#include "solver/sol_ref.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <pthread.h>
#include <time.h>
#include <unistd.h>

void app_run_opts_defaults(app_run_opts *o)
{
    memset(o, 0, sizeof *o);
    o->images = 1;
    o->vtk = 0;
    o->reference = 1;
}

void app_report_free(app_report *r)
{
    if (r == NULL)
        return;
    mesh_case_free(r->c);
    mesh_case_free(r->pass_case);
    app_pass_result_free(r->pass);
    mesh_grid_free(r->g);
    design_stop_result_free(&r->stop);
    free(r->f);
    free(r->info);
    free(r->ref_drag);
    free(r->ref_force_y);
    free(r);
}

/* Thickness-weighted conductivity of the moving regions, S (sigma * t). */
static double sigma_thickness(const mesh_case *c)
{
    double st = 0.0;
    for (int k = 0; k < c->nreg; k++) {
        const mesh_region *r = &c->regions[k];
        if (r->moving && r->material >= 0)
            st += c->materials[r->material].sigma * (r->box[3] - r->box[1]);
    }
    return st;
}

/* Evaluate the layered reference at every speed of r (where it fits). */
static eddy_status add_reference(app_report *r, int fill_forces, eddy_error *err)
{
    sol_ref_problem p;
    sol_ref_source *src = NULL;
    int nsrc = 0, approx = 0;
    eddy_status s = sol_ref_from_case(r->c, &p, &src, &nsrc, &approx, r->ref_note,
                                      sizeof r->ref_note, err);
    if (s == EDDY_ERR_NOT_APPLICABLE) {
        r->ref_state = APP_REF_NOT_APPLICABLE;
        return fill_forces ? EDDY_RAISE(err, s, "%s: the layered reference does not fit this "
                                                "case: %s", r->c->path, r->ref_note)
                           : EDDY_OK;
    }
    if (s != EDDY_OK)
        return s;
    r->ref_drag = malloc((size_t)r->npoint * sizeof *r->ref_drag);
    r->ref_force_y = malloc((size_t)r->npoint * sizeof *r->ref_force_y);
    if (r->ref_drag == NULL || r->ref_force_y == NULL) {
        free(src);
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
    }
    r->ref_state = approx ? APP_REF_APPROXIMATE : APP_REF_OK;
    snprintf(r->ref_note, sizeof r->ref_note, "%s",
             approx ? "layered Fourier reference; magnets' recoil permeability taken as 1"
                    : "layered Fourier reference; exact for this geometry in free space");
    /* low-speed slope of the reference from a speed at Rm = 1e-4 */
    double st = sigma_thickness(r->c);
    double v_small = st > 0 ? 1e-4 / (EDDY_MU0 * st) : 1e-6;
    double slope = 0.0;
    if (fill_forces) {
        sol_ref_result q;
        s = sol_ref_solve(&p, src, nsrc, v_small, &q, err);
        if (s != EDDY_OK) {
            free(src);
            return s;
        }
        slope = -q.force_x / v_small;
        r->damping = slope;
    }
    for (int k = 0; k < r->npoint; k++) {
        double v = r->c->speeds[k], sgn = v > 0 ? 1.0 : (v < 0 ? -1.0 : 0.0);
        sol_ref_result q;
        double t0 = eddy_now();
        s = sol_ref_solve(&p, src, nsrc, v, &q, err);
        if (s != EDDY_OK) {
            r->ref_state = APP_REF_FAILED;
            snprintf(r->ref_note, sizeof r->ref_note, "layered reference failed at %g m/s: %.400s",
                     v, err != NULL ? err->msg : eddy_strerror(s));
            free(r->ref_drag);
            free(r->ref_force_y);
            r->ref_drag = r->ref_force_y = NULL;
            free(src);
            return fill_forces ? s : EDDY_OK;
        }
        r->ref_drag[k] = -q.force_x * sgn;
        r->ref_force_y[k] = q.force_y;
        if (fill_forces) {
            post_forces *f = &r->f[k];
            f->speed = v;
            f->force_x = q.force_x;
            f->force_y = q.force_y;
            f->drag = -q.force_x * sgn;
            f->stress_ok = f->nodal_ok = 1;
            f->nodal_x = q.force_x;
            f->nodal_y = q.force_y;
            f->force_method = "reference";
            f->lorentz_x = f->lorentz_y = NAN;
            f->stress_x = q.force_x;
            f->stress_y = q.force_y;
            f->drag_stress = f->drag;
            f->loss = q.loss;
            f->low_speed_drag = slope * fabs(v);
            f->drag_per_speed = v != 0.0 ? f->drag / fabs(v) : NAN;
            f->magnetic_reynolds = EDDY_MU0 * st * fabs(v);
            f->magnetic_reynolds_wave = NAN;
            f->j_peak = NAN;
            r->info[k].t_post = eddy_now() - t0;
        }
    }
    free(src);
    return EDDY_OK;
}


/* The layered reference takes magnets at mu_r = 1.  Where the case's
 * magnets have another recoil permeability, the offset that brings is
 * measured on the grid itself: the low-speed drag of the static field with
 * every magnet cell at mu_r = 1, over the real one (r->ref_mu1_offset; the
 * same symbolic analysis, one more numeric factorisation), only when the
 * reference fits the case approximately.  The grid is only read. */
static eddy_status unit_mu_magnets_offset(app_report *r, const sol_system *sys, double slope,
                                          eddy_error *err)
{
    const mesh_grid *g = r->g;
    size_t nc = (size_t)g->ncx * (size_t)g->ncy;
    double nu0 = 1.0 / EDDY_MU0;
    r->ref_mu1_offset = NAN;
    /* only where the reference fits, approximately: otherwise nobody reads
     * it (the bench case, whose iron the reference does not model, paid two
     * factorisations for it at every run) */
    sol_ref_problem p;
    sol_ref_source *src = NULL;
    int nsrc = 0, approx = 0;
    eddy_status fit = sol_ref_from_case(r->c, &p, &src, &nsrc, &approx, NULL, 0, err);
    free(src);
    if (fit == EDDY_ERR_NOT_APPLICABLE || (fit == EDDY_OK && !approx))
        return EDDY_OK;
    if (fit != EDDY_OK)
        return fit;
    long nmag = 0;
    for (size_t k = 0; k < nc; k++)
        nmag += (g->brx[k] != 0.0 || g->bry[k] != 0.0) && g->nu[k] != nu0;
    if (nmag == 0 || !(slope > 0))
        return EDDY_OK;
    /* the magnets at mu_r = 1 in a copy of the reluctivities and a field and
     * workspace of its own: the grid and the static field a stay as they
     * are (the speed may be assembled from them meanwhile on another
     * thread: side work) */
    double *nu = malloc(nc * sizeof *nu);
    double *a1 = malloc((size_t)g->nx * (size_t)g->ny * sizeof *a1);
    sol_work *w = NULL;
    eddy_status s = nu == NULL || a1 == NULL ? EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory")
                                             : sol_work_alloc(sys, &w, err);
    if (s == EDDY_OK) {
        memcpy(nu, g->nu, nc * sizeof *nu);
        for (size_t k = 0; k < nc; k++)
            if (g->brx[k] != 0.0 || g->bry[k] != 0.0)
                nu[k] = nu0;
        s = sol_solve_work_nu(sys, w, 0.0, nu, a1, NULL, err);
    }
    if (s == EDDY_OK) {
        mesh_grid g1 = *g; /* the grid with those reluctivities, read only */
        g1.nu = nu;
        r->ref_mu1_offset = post_damping_coefficient(&g1, a1, NULL) / slope - 1.0;
    }
    sol_work_free(w);
    free(a1);
    free(nu);
    return s;
}


/* Defaults for a NULL *o; read the case into a new report.  On failure *out
 * keeps the report if the case was read (so the caller can name it), else
 * NULL. */
static eddy_status prepare(const char *case_path, const app_run_opts **o,
                           app_run_opts *defaults, app_report **out, eddy_error *err)
{
    if (*o == NULL) {
        app_run_opts_defaults(defaults);
        *o = defaults;
    }
    *out = NULL;
    app_report *r = calloc(1, sizeof *r);
    if (r == NULL)
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
    r->ref_mu1_offset = NAN;
    sol_blas_name(r->blas, sizeof r->blas);
    r->damping = r->linear_speed = r->terminal_speed = r->terminal_linear = NAN;
    eddy_status s = mesh_case_load(case_path, &r->c, err);
    if (s != EDDY_OK) {
        free(r);
        return s;
    }
    *out = r;
    if (r->c->pass.present) { /* the steady sweep runs on the steady counterpart */
        r->pass_case = r->c;
        r->c = NULL;
        s = mesh_case_steady_of_pass(r->pass_case, &r->c, err);
        if (s != EDDY_OK) {
            r->c = r->pass_case;
            r->pass_case = NULL;
            return s;
        }
        if (r->c->vehicle.present && !r->c->vehicle.has_from_speed && !r->c->vehicle.gravity)
            r->c->vehicle.present = 0; /* a coupled pass's load has no stop of its own */
    }
    r->npoint = r->c->nspeed;
    r->f = calloc((size_t)r->npoint, sizeof *r->f);
    r->info = calloc((size_t)r->npoint, sizeof *r->info);
    if (r->f == NULL || r->info == NULL)
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
    if ((*o)->outdir != NULL)
        snprintf(r->outdir, sizeof r->outdir, "%s", (*o)->outdir);
    else
        snprintf(r->outdir, sizeof r->outdir, "results/%s", r->c->name);
    /* a folder that cannot take the outputs is an input error, found before
     * the computation */
    return eddy_check_output_dir(r->outdir, err);
}


typedef struct side_work side_work;
static eddy_status side_wait_static(side_work *sd, double *slope, eddy_status s,
                                    eddy_error *err);

/* The speed sweep, shared by the worker threads. */
typedef struct {
    app_report *r;
    const app_run_opts *o;
    const sol_system *sys;
    const mesh_grid *g;  /* the grid of sys (the report's, or the coarse one) */
    post_forces *f;      /* results per speed index (the report's, or the coarse pass's) */
    app_point_info *info;
    int outputs;         /* 1: pictures, fields, profiles and progress of each point */
    double factor_bytes; /* one numeric factorisation of sys */
    double slope;
    side_work *await;    /* non-NULL: the static field runs beside; wait for it (its
                          * slope) before the first forces */
    const double *a_static; /* saturable materials: the static field, each worker's
                             * first starting point (NULL for a linear case) */
    pthread_mutex_t lock;
    int next;            /* next speed index to take */
    int done;            /* speeds finished, for progress */
    eddy_status status;  /* first error */
    eddy_error err;
} sweep;

/* One worker: its own workspace, field buffer and node fields. */
static void *sweep_worker(void *arg)
{
    sweep *sw = arg;
    app_report *r = sw->r;
    const mesh_grid *g = sw->g;
    sol_work *w = NULL;
    post_fields *pf = NULL;
    eddy_error err = {0};
    size_t nn = (size_t)g->nx * (size_t)g->ny;
    double *a = malloc(nn * sizeof *a);
    /* saturable materials: the converged cell reluctivities, seen by the
     * forces and fields through a copy of the grid */
    int nonlinear = sol_is_nonlinear(sw->sys);
    double *nu = nonlinear ? malloc((size_t)g->ncx * (size_t)g->ncy * sizeof *nu) : NULL;
    mesh_grid gsol = *g;
    if (nonlinear)
        gsol.nu = nu;
    eddy_status s = a == NULL || (nonlinear && nu == NULL)
                        ? EDDY_RAISE(&err, EDDY_ERR_NOMEM, "out of memory for the field")
                        : sol_work_alloc(sw->sys, &w, &err);
    if (s == EDDY_OK && nonlinear && sw->a_static != NULL)
        memcpy(a, sw->a_static, nn * sizeof *a);
    if (s == EDDY_OK && sw->outputs)
        s = post_fields_alloc(g, &pf, &err);
    for (;;) {
        pthread_mutex_lock(&sw->lock);
        if (s != EDDY_OK && sw->status == EDDY_OK) {
            sw->status = s;
            sw->err = err;
        }
        int k = sw->status == EDDY_OK && sw->next < r->npoint ? sw->next++ : -1;
        pthread_mutex_unlock(&sw->lock);
        if (k < 0)
            break;
        double v = r->c->speeds[k];
        sol_info info = {0};
        sol_newton_info nli = {0};
        if (nonlinear) /* from this worker's previous speed (first: the static field) */
            s = sol_solve_newton(sw->sys, w, v, a, sw->a_static != NULL, nu, sw->o->max_newton,
                                 &nli, &info, &err);
        else
            s = sol_solve_work(sw->sys, w, v, a, &info, &err);
        sw->info[k].newton = nli;
        if (s != EDDY_OK)
            continue;
        double tp = eddy_now();
        pthread_mutex_lock(&sw->lock);
        if (sw->await != NULL) { /* the factorisation ran while the static field did */
            s = side_wait_static(sw->await, &sw->slope, s, &err);
            sw->await = NULL;
        }
        double slope = sw->slope;
        pthread_mutex_unlock(&sw->lock);
        if (s != EDDY_OK)
            continue;
        s = post_forces_compute(&gsol, a, v, slope, &sw->f[k], &err);
        if (s == EDDY_OK && sw->outputs && (sw->o->images || sw->o->vtk || r->c->nprofile > 0))
            s = app_out_fields(r, &gsol, sw->o, k, a, pf, &err);
        sw->info[k] = (app_point_info){info.t_assemble, info.t_factor, info.t_solve,
                                        eddy_now() - tp, info.lnz,   info.unz,
                                        info.flops,      nli,         k};
        if (s == EDDY_OK && sw->outputs && sw->o->progress != NULL) {
            pthread_mutex_lock(&sw->lock);
            sw->o->progress(sw->o->progress_ctx, sw->done++, r->npoint, &sw->f[k]);
            pthread_mutex_unlock(&sw->lock);
        }
    }
    free(a);
    free(nu);
    post_fields_free(pf);
    sol_work_free(w);
    return NULL;
}

/* The cores this run may use: the request (a batch case's share, or
 * --threads), else the machine's. */
static int core_budget(const app_run_opts *o)
{
    long cores = sysconf(_SC_NPROCESSORS_ONLN);
    return o->threads > 0 ? o->threads : (int)(cores > 0 ? cores : 1);
}

/* How many speeds to solve at once: the cores, at most the number of
 * speeds, and only as many numeric factorisations as fit in the run's
 * memory limit by the solver's estimate. */
static int sweep_threads(const app_run_opts *o, int npoint, double factor_bytes,
                         double field_bytes)
{
    int n = core_budget(o);
    if (!sol_concurrency_safe())
        return 1; /* a BLAS that is not safe for concurrent factorisations */
    if (n > npoint)
        n = npoint;
    double avail = eddy_memory_limit(o->max_memory);
    double per = factor_bytes + 12.0 * field_bytes;
    if (per > 0 && n > 1 && n * per > avail)
        n = (int)(avail / per);
    return n < 1 ? 1 : n;
}

/* A numeric factorisation of this many unknowns or more runs faster on all the cores inside a threaded BLAS
 * when it is the only one running (measured with OpenBLAS 0.3.21 pthread on
 * 2 cores, make bench: 42.6 Gflop at 1.06M unknowns 6.66 s on one thread,
 * 4.98 s on two; 14.4 Gflop at 0.51M unknowns 1.71 s on one, 2.26 s on two;
 * 3.9 Gflop at 0.23M unknowns 0.83 s on one, 0.92 s on two; medians of 3).
 * Two or more factorisations at once always run one BLAS thread each: two
 * speeds at once took 3.6 s per speed at 1.06M unknowns, against 4.98 s one
 * at a time on two BLAS threads.  (UMFPACK's flop estimate is no guide:
 * 6.0e9 against 8.9e7 counted for cases/sled_fin.json.) */
#define APP_BLAS_THREADED_UNKNOWNS 800000

/* Set the BLAS threads of each of `workers` concurrent factorisations of
 * sys (the cores left over, or one when small) and note them in r. */
static void set_blas_threads(app_report *r, const app_run_opts *o, const sol_system *sys,
                             int workers)
{
    int bt = 1; /* any other BLAS: one thread of its own */
    if (r->blas_cap > 0) /* work runs beside: the threads were set before it started */
        return;
    if (sol_blas_threaded()) {
        if (workers <= 1 && sol_unknowns(sys) >= APP_BLAS_THREADED_UNKNOWNS)
            bt = core_budget(o);
        sol_blas_threads(bt);
    }
    if (bt > r->blas_threads)
        r->blas_threads = bt;
}

/* Solve the speeds from index k0 to the report's npoint, on as many threads
 * as the machine and memory allow. */
static eddy_status run_sweep(sweep *sw, int k0, size_t nn, eddy_error *err)
{
    app_report *r = sw->r;
    int nt = sweep_threads(sw->o, r->npoint - k0, sw->factor_bytes, (double)nn * sizeof(double));
    pthread_t tid[64];
    if (nt > 64)
        nt = 64;
    sw->next = k0;
    sw->done = k0;
    pthread_mutex_init(&sw->lock, NULL);
    set_blas_threads(r, sw->o, sw->sys, nt);
    int started = 0;
    for (int t = 1; t < nt; t++)
        if (pthread_create(&tid[started], NULL, sweep_worker, sw) == 0)
            started++;
    sweep_worker(sw); /* the calling thread works too */
    for (int t = 0; t < started; t++)
        pthread_join(tid[t], NULL);
    pthread_mutex_destroy(&sw->lock);
    if (started + 1 > r->threads)
        r->threads = started + 1;
    if (sw->status != EDDY_OK) {
        if (err != NULL)
            *err = sw->err;
        return sw->status;
    }
    return EDDY_OK;
}

/* Append na speeds to the case and room for their results to the report. */
static eddy_status grow_points(app_report *r, const double *add, int na, eddy_error *err)
{
    int n = r->npoint + na;
    double *sp = realloc(r->c->speeds, (size_t)n * sizeof *sp);
    if (sp == NULL)
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
    r->c->speeds = sp;
    post_forces *f = realloc(r->f, (size_t)n * sizeof *f);
    if (f == NULL)
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
    r->f = f;
    app_point_info *in = realloc(r->info, (size_t)n * sizeof *in);
    if (in == NULL)
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
    r->info = in;
    for (int k = 0; k < na; k++) {
        sp[r->npoint + k] = add[k];
        memset(&f[r->npoint + k], 0, sizeof *f);
        memset(&in[r->npoint + k], 0, sizeof *in);
    }
    r->npoint = n;
    r->c->nspeed = n;
    return EDDY_OK;
}

/* The system of grid g (the run's memory limit and the given ordering), a
 * field buffer of nx*ny into *a, and (analyse) its symbolic analysis into
 * *info: the LU's, or with static_only the static field's alone (Cholesky
 * where it applies: a system solved only at v = 0 needs no LU analysis). */
static eddy_status grid_system(const mesh_grid *g, double limit, sol_ordering ordering,
                               int static_only, int analyse, sol_system **sys, double **a,
                               sol_info *info, eddy_error *err)
{
    *a = NULL;
    eddy_status s = sol_system_alloc(g, sys, err);
    if (s == EDDY_OK) {
        /* memory guard: one factorisation must fit in the run's limit */
        sol_set_memory_limit(*sys, limit);
        sol_set_ordering(*sys, ordering);
        *a = malloc((size_t)g->nx * (size_t)g->ny * sizeof **a);
        if (*a == NULL)
            s = EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory for the field");
    }
    if (s == EDDY_OK && analyse)
        s = static_only && sol_uses_cholesky(*sys) ? sol_analyse_static(*sys, info, err)
                                                   : sol_analyse(*sys, info, err);
    return s;
}

/* The static field of sys on g into a (Newton for saturable materials) and
 * the damping coefficient from it into *slope. */
static eddy_status static_field(app_report *r, sol_system *sys, const mesh_grid *g,
                                const app_run_opts *o, double *a, double *slope, eddy_error *err)
{
    sol_info info = {0};
    eddy_status s;
    set_blas_threads(r, o, sys, 1);
    if (sol_is_nonlinear(sys)) {
        sol_work *w0 = NULL;
        s = sol_work_alloc(sys, &w0, err);
        if (s == EDDY_OK)
            s = sol_solve_newton(sys, w0, 0.0, a, 0, NULL, o->max_newton, NULL, &info, err);
        sol_work_free(w0);
    } else {
        /* a workspace of its own, freed at once: the system's (sol_solve)
         * would stay alive beside the speeds' workspaces and LU (110 MB at
         * 1.06M unknowns) */
        s = sol_analyse_for_speed(sys, 0.0, &info, err);
        sol_work *w0 = NULL;
        if (s == EDDY_OK)
            s = sol_work_alloc(sys, &w0, err);
        if (s == EDDY_OK)
            s = sol_solve_work(sys, w0, 0.0, a, &info, err);
        sol_work_free(w0);
    }
    if (s == EDDY_OK)
        *slope = post_damping_coefficient(g, a, NULL);
    return s;
}

/* The coarse pass of the error estimate: the coarse grid of the family
 * (mesh_grid_build_coarse) solved at every speed of the report, without
 * outputs, into fc (npoint entries); the damping coefficient of its static
 * field into *slope (N s/m^2; NULL: not wanted).  The static field is solved
 * only where it is wanted or is the saturable sweep's starting point: the
 * estimate reads drag, normal force and loss, not the low-speed slope (make
 * bench, 1.06M unknowns: the estimate took 3.7-3.9 s instead of 4.45 s). */
static eddy_status coarse_pass(app_report *r, const app_run_opts *o, double limit, int level,
                               post_forces *fc, double *slope, eddy_error *err)
{
    double t0 = eddy_now();
    mesh_grid *gc = NULL;
    sol_system *sc = NULL;
    double *ac = NULL;
    app_point_info *ic = calloc((size_t)r->npoint, sizeof *ic);
    eddy_status s = ic == NULL ? EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory")
                               : mesh_grid_build_coarse(r->c, level, limit, &gc, err);
    sol_info info = {0};
    if (s == EDDY_OK)
        s = grid_system(gc, limit, SOL_ORDER_DEFAULT, 0, 1, &sc, &ac, &info, err);
    size_t nn = gc != NULL ? (size_t)gc->nx * (size_t)gc->ny : 0;
    if (sc != NULL)
        r->coarse_unknowns += sol_unknowns(sc);
    sweep sw = {.r = r, .o = o, .sys = sc, .g = gc, .f = fc, .info = ic, .outputs = 0,
                .status = EDDY_OK};
    if (s == EDDY_OK)
        sw.factor_bytes = sol_factor_bytes(sc);
    if (s == EDDY_OK && (slope != NULL || sol_is_nonlinear(sc))) {
        s = static_field(r, sc, gc, o, ac, &sw.slope, err);
        sw.a_static = sol_is_nonlinear(sc) ? ac : NULL;
        if (slope != NULL)
            *slope = sw.slope;
    }
    if (s == EDDY_OK)
        s = run_sweep(&sw, 0, nn, err);
    free(ac);
    free(ic);
    sol_system_free(sc);
    mesh_grid_free(gc);
    r->t_estimate += eddy_now() - t0;
    return s;
}

/* The damping coefficient of the static field of case c with its zero sides
 * open (a layer of layer_cells mapped to infinity beyond each), on the grid
 * of the family at level (0: the case's grid) into *slope. */
static eddy_status open_box_slope(app_report *r, const app_run_opts *o, double limit,
                                  const mesh_case *c, int level, double *slope,
                                  eddy_error *err)
{
    mesh_case co = *c; /* a shallow copy: the grid builder only reads it */
    co.x_open = !c->x_periodic;
    co.y_open = 1;
    co.mesh.layer_cells = 48; /* an unrefined grid's layer (mesh/mesh_grid.c MAP_CELLS) */
    mesh_grid *g = NULL;
    sol_system *sys = NULL;
    double *a = NULL;
    *slope = NAN;
    eddy_status s = level == 0 ? mesh_grid_build(&co, limit, &g, NULL, err)
                               : mesh_grid_build_coarse(&co, level, limit, &g, err);
    sol_info info = {0};
    if (s == EDDY_OK) /* the static field only */
        s = grid_system(g, limit, SOL_ORDER_GRID_ND, 1, 1, &sys, &a, &info, err);
    if (s == EDDY_OK)
        s = static_field(r, sys, g, o, a, slope, err);
    free(a);
    sol_system_free(sys);
    mesh_grid_free(g);
    return s;
}

/* Whether case c has zero (A = 0) sides that could be open: planar, and a
 * side neither open nor periodic. */
static int has_zero_box(const mesh_case *c)
{
    return c->geometry == MESH_PLANAR && !((c->x_open || c->x_periodic) && c->y_open);
}

/* Below this relative change of the damping coefficient on the 2h grid, the
 * box estimate is taken from there (a change of 1e-4 of every value is a
 * twentieth of a mesh.tolerance of 0.002, the README's example; on the 2h
 * grid the estimate came out 1.3 times the fine grid's where it is 3.5 %). */
#define APP_BOX_NEGLIGIBLE 1e-4

/* The box-truncation estimate of a case with zero (A = 0) sides: the
 * damping coefficient of the static field with those sides open (a layer
 * mapped to infinity) against the one with them zero, relative.  First on
 * the 2h grid against its own zero box (zero_slope1, N s/m^2, from the
 * coarse pass): a change below APP_BOX_NEGLIGIBLE (or a twentieth of
 * mesh.tolerance) is the estimate.  Otherwise on the fine grid against
 * r->damping, so that the grid's own error cancels in the ratio (on the 2h
 * grid the estimate of tests/test_estimate.c's zero box is 4.53 % against
 * 3.47 % on the fine grid, where the box changes the drag by 3.8 %; measured
 * 2026-12-04).  The layers keep the cells of an unrefined grid (48): under
 * mesh.refine r they would have 48 r, the costliest solve of a run (1.93M
 * unknowns beside the grid's 1.06M in make bench's largest case, refine 13:
 * 9.7 of the estimate's 13.7 s), for an estimate that moves by 3e-4 of
 * itself (that zero box at refine 2: 2.9754 % against 2.9764 %, refine 4:
 * 2.7372 % against 2.7388 %, in 1/4 and 1/5 of the time; measured
 * 2026-12-04).  It is a low-speed proxy of how much the box changes every
 * force.  0 when no side is zero or the geometry has no open sides. */
static eddy_status box_truncation(app_report *r, const app_run_opts *o, double limit,
                                  double zero_slope1, eddy_error *err)
{
    const mesh_case *c = r->c;
    r->box_truncation = 0.0;
    r->box_grid = NULL;
    if (!has_zero_box(c) || !(r->damping > 0))
        return EDDY_OK;
    double t0 = eddy_now(), slope = NAN;
    double negligible = APP_BOX_NEGLIGIBLE;
    if (c->mesh.tolerance > 0 && 0.05 * c->mesh.tolerance < negligible)
        negligible = 0.05 * c->mesh.tolerance;
    eddy_status s = EDDY_OK;
    if (zero_slope1 > 0) {
        s = open_box_slope(r, o, limit, c, 1, &slope, err);
        if (s == EDDY_OK && slope > 0 && fabs(zero_slope1 / slope - 1.0) < negligible) {
            r->box_truncation = fabs(zero_slope1 / slope - 1.0);
            r->box_grid = "2h";
            r->t_estimate += eddy_now() - t0;
            return EDDY_OK;
        }
    }
    if (s == EDDY_OK)
        s = open_box_slope(r, o, limit, c, 0, &slope, err);
    if (s == EDDY_OK && slope > 0) {
        r->box_truncation = fabs(r->damping / slope - 1.0);
        r->box_grid = "h";
    }
    r->t_estimate += eddy_now() - t0;
    return s;
}

/* The error estimate's solves: the coarse passes at 2h and 4h into fc (2 x
 * npoint entries) and the box truncation into r->box_truncation (after the
 * fine static field: r->damping). */
static eddy_status estimate_passes(app_report *r, const app_run_opts *o, double limit,
                                   post_forces *fc, eddy_error *err)
{
    double slope1 = NAN; /* the 2h grid's damping coefficient, for the box */
    eddy_status s = coarse_pass(r, o, limit, 1, fc, has_zero_box(r->c) ? &slope1 : NULL, err);
    if (s == EDDY_OK)
        s = coarse_pass(r, o, limit, 2, fc + r->npoint, NULL, err);
    if (s == EDDY_OK)
        s = box_truncation(r, o, limit, slope1, err);
    return s;
}

/* Work beside the fine pass on a core that would idle (measured in make
 * bench, README "Speed"): the static field of linear materials (Cholesky,
 * which needs no LU analysis, runs while UMFPACK analyses; a sweep of two
 * or more speeds waits for it before its speeds, a single speed only before
 * its forces) and, in a one-speed case, the error estimate while the single
 * factorisation runs.  The estimate works on a
 * shallow copy of the report (its own timers, counts and box estimate),
 * read back by side_join; the static part writes only the static field, the
 * damping coefficient and ref_mu1_offset of the real report. */
struct side_work {
    app_report *r;
    app_report shadow;       /* the estimate's report (a shallow copy of *r) */
    const app_run_opts *o;
    double limit;
    post_forces *fc;         /* 2 x npoint coarse results */
    int with_estimate;       /* 1: the estimate goes beside too (one speed) */
    /* the static part (do_static): the fine system, its field buffer */
    int do_static;
    sol_system *sys;
    double *a;
    double slope, t_static;
    eddy_status static_status, est_status;
    eddy_error static_err, est_err;
    int static_done, started, launched; /* launched: the estimate was started */
    int waited;              /* side_wait_static has taken the static part */
    pthread_mutex_t lock;
    pthread_cond_t cond;
    pthread_t tid;
};

static void *side_main(void *arg)
{
    side_work *sd = arg;
    if (sd->do_static) {
        double t0 = eddy_now();
        app_report *r = sd->r;
        eddy_status s = static_field(r, sd->sys, r->g, sd->o, sd->a, &sd->slope, &sd->static_err);
        if (s == EDDY_OK && sd->o->reference)
            s = unit_mu_magnets_offset(r, sd->sys, sd->slope, &sd->static_err);
        sd->t_static = eddy_now() - t0;
        pthread_mutex_lock(&sd->lock);
        sd->static_status = s;
        sd->static_done = 1;
        pthread_cond_signal(&sd->cond);
        pthread_mutex_unlock(&sd->lock);
        if (s != EDDY_OK || !sd->with_estimate) /* the fine pass reports an error */
            return NULL;
        sd->shadow.damping = sd->slope; /* the box estimate's reference */
    }
    sd->est_status = estimate_passes(&sd->shadow, sd->o, sd->limit, sd->fc, &sd->est_err);
    return NULL;
}

/* Start the side work (the static part when sys != NULL).  Returns 0 when
 * no thread could be started: the caller then does the work itself. */
static int side_start(side_work *sd, sol_system *sys, double *a)
{
    sd->do_static = sys != NULL;
    sd->sys = sys;
    sd->a = a;
    sd->static_done = 0;
    /* two threads factorise at once: one BLAS thread each, held until the
     * side work is done with the BLAS */
    sol_blas_threads(1);
    sd->r->blas_cap = 1;
    if (sd->r->blas_threads < 1)
        sd->r->blas_threads = 1;
    sd->shadow = *sd->r;
    sd->started = pthread_create(&sd->tid, NULL, side_main, sd) == 0;
    if (!sd->started)
        sd->r->blas_cap = 0;
    sd->launched |= sd->started && sd->with_estimate;
    return sd->started;
}

/* Wait for the static part of the side work, the damping coefficient into
 * *slope.  Returns s, or where s is EDDY_OK the static part's status (its
 * error into *err): the first error wins. */
static eddy_status side_wait_static(side_work *sd, double *slope, eddy_status s,
                                    eddy_error *err)
{
    pthread_mutex_lock(&sd->lock);
    while (!sd->static_done)
        pthread_cond_wait(&sd->cond, &sd->lock);
    int first = !sd->waited;
    sd->waited = 1;
    pthread_mutex_unlock(&sd->lock);
    *slope = sd->slope;
    if (first)
        sd->r->t_static += sd->t_static;
    if (s != EDDY_OK || sd->static_status == EDDY_OK)
        return s;
    if (err != NULL)
        *err = sd->static_err;
    return sd->static_status;
}

/* Wait for the side work to end and take the estimate's results into the
 * report.  Returns s, or where s is EDDY_OK the estimate's status (its error
 * into *err). */
static eddy_status side_join(side_work *sd, eddy_status s, eddy_error *err)
{
    if (!sd->started)
        return s;
    pthread_join(sd->tid, NULL);
    sd->started = 0;
    app_report *r = sd->r;
    r->coarse_unknowns = sd->shadow.coarse_unknowns;
    r->t_estimate = sd->shadow.t_estimate;
    r->box_truncation = sd->shadow.box_truncation;
    r->box_grid = sd->shadow.box_grid;
    if (sd->shadow.threads > r->threads)
        r->threads = sd->shadow.threads;
    if (s != EDDY_OK || sd->est_status == EDDY_OK)
        return s;
    if (err != NULL)
        *err = sd->est_err;
    return sd->est_status;
}

/* Whether work goes beside the fine pass: at least two cores and a BLAS
 * safe for concurrent factorisations (then the static field of linear
 * materials does).  *with_estimate: the estimate too, in a case of one
 * speed (a sweep of two or more keeps every core busy by itself; the
 * adaptive sweep adds speeds) with room in the memory limit for the
 * Cholesky factor and the coarse factorisations beside the fine LU: a half
 * more than one solve's estimate (make bench, 1.06M unknowns: 2344 MiB
 * peak beside an estimate of 2575 MiB for one solve). */
static int side_eligible(const app_report *r, const app_run_opts *o, double limit,
                         int *with_estimate)
{
    *with_estimate = 0;
    if (core_budget(o) < 2 || !sol_concurrency_safe())
        return 0;
    mesh_estimate est;
    if (!r->c->mesh.no_error_estimate && r->c->speed_mode != MESH_SPEEDS_AUTO && r->npoint == 1 &&
        mesh_grid_estimate(r->c, limit, &est, NULL) == EDDY_OK)
        *with_estimate = !(limit > 0) || 1.5 * est.memory_bytes <= limit;
    return 1;
}

/* One fine pass: the grid of the case (at its current mesh.refine) into
 * r->g, the system, the static field and the sweep with every output; with
 * adapt, the adaptive sweep adds speeds.  Opens the output folder (*lock)
 * on the first call.  With side (may be NULL) the error estimate, and for
 * linear materials the static field, run beside on a thread of their own
 * (joined by the caller with side_join). */
static eddy_status fine_pass(app_report *r, const app_run_opts *o, double limit, int adapt,
                             int *lock, side_work *side, eddy_error *err)
{
    double t0 = eddy_now();
    mesh_grid_free(r->g);
    r->g = NULL;
    eddy_status s = mesh_grid_build(r->c, limit, &r->g, NULL, err);
    r->t_mesh += eddy_now() - t0;
    if (s != EDDY_OK)
        return s;
    sol_system *sys = NULL;
    double *a = NULL;
    size_t nn = (size_t)r->g->nx * (size_t)r->g->ny;
    sol_info info = {0};
    s = grid_system(r->g, limit, SOL_ORDER_DEFAULT, 0, side == NULL, &sys, &a, &info, err);
    if (sys != NULL) {
        r->unknowns = sol_unknowns(sys);
        r->static_cholesky = sol_uses_cholesky(sys);
    }
    int beside = 0; /* 1: the static field runs on the side thread */
    if (s == EDDY_OK && side != NULL) {
        /* the static field beside the LU analysis where it needs none */
        int chol = !sol_is_nonlinear(sys) && sol_uses_cholesky(sys);
        beside = chol && side_start(side, sys, a);
        s = sol_analyse(sys, &info, err);
    }
    r->t_analyse += info.t_analyse;
    r->ordering = info.ordering;
    r->factor_bytes = sol_factor_bytes(sys);
    if (s == EDDY_OK && *lock < 0)
        s = app_out_open_dir(r, lock, err);
    sweep sw = {.r = r, .o = o, .sys = sys, .g = r->g, .f = r->f, .info = r->info,
                .outputs = 1, .factor_bytes = r->factor_bytes, .status = EDDY_OK};
    double t_static = eddy_now();
    /* one speed: its factorisation runs while the static field does, and
     * waits for it only before the forces (sweep.await); a sweep of more
     * speeds waits here (its workers take every core) */
    int overlap = beside && side->with_estimate;
    if (beside && !overlap) { /* always waited for: it uses sys */
        s = side_wait_static(side, &sw.slope, s, err);
    } else if (!beside && s == EDDY_OK) {
        s = static_field(r, sys, r->g, o, a, &sw.slope, err);
        if (sol_is_nonlinear(sys))
            sw.a_static = a; /* the sweep's starting point */
        else if (s == EDDY_OK && o->reference)
            s = unit_mu_magnets_offset(r, sys, sw.slope, err);
    }
    if (!beside)
        r->t_static += eddy_now() - t_static;
    if (s == EDDY_OK && !overlap)
        r->damping = sw.slope; /* the damping coefficient, N s/m^2 */
    if (overlap)
        sw.await = side;
    if (s == EDDY_OK && side != NULL && !beside && side->with_estimate)
        side_start(side, NULL, NULL); /* the estimate alone beside the sweep (if the
                                        * thread does not start, it runs after) */
    if (side != NULL && !side->launched)
        r->blas_cap = 0; /* nothing beside the sweep uses the BLAS */
    if (s == EDDY_OK)
        s = run_sweep(&sw, 0, nn, err);
    if (sw.await != NULL) /* the sweep stopped before its forces: the static part
                           * still uses sys */
        s = side_wait_static(side, &sw.slope, s, err);
    if (overlap && s == EDDY_OK)
        r->damping = sw.slope;
    /* adaptive sweep: add speeds where the curve is not yet resolved */
    while (adapt && s == EDDY_OK && r->c->speed_mode == MESH_SPEEDS_AUTO &&
           r->npoint < r->c->max_points && r->adapt_rounds < 12) {
        app_design_sort(r);
        double add[64];
        int room = r->c->max_points - r->npoint;
        int na = app_design_refine(r, add, room < 64 ? room : 64);
        if (na == 0)
            break;
        s = grow_points(r, add, na, err);
        sw.f = r->f;
        sw.info = r->info;
        if (s == EDDY_OK)
            s = run_sweep(&sw, r->npoint - na, nn, err);
        r->adapt_rounds++;
    }
    if (s == EDDY_OK)
        app_design_sort(r);
    free(a); /* the static field */
    sol_system_free(sys);
    return s;
}

/* The largest error estimates relative to the largest magnitudes of the
 * sweep; *balanced = 1 when the normal force stays below 1e-3 of the
 * largest drag everywhere (a two-sided brake, balanced by symmetry), whose
 * estimate is then held to that floor, not to its own noise. */
static void worst_estimates(const app_report *r, double *wd, double *wf, int *balanced)
{
    double md = 0.0, mf = 0.0, ed = 0.0, ef = 0.0;
    for (int k = 0; k < r->npoint; k++) {
        md = fmax(md, fabs(r->f[k].drag));
        mf = fmax(mf, fabs(r->f[k].force_y));
        ed = fmax(ed, r->f[k].drag_error);
        ef = fmax(ef, r->f[k].force_y_error);
    }
    *balanced = mf < 1e-3 * md;
    mf = fmax(mf, 1e-3 * md);
    *wd = md > 0 ? ed / md : 0.0;
    *wf = mf > 0 ? ef / mf : 0.0;
}

/* The pass of a pass case after the steady sweep of its counterpart: the
 * steady drag at the pass's speed (linear between the swept speeds), the
 * coupled pass's steady model, pass.csv, pass.png and the pictures. */
static eddy_status run_pass(app_report *r, const app_run_opts *o, double limit, eddy_error *err)
{
    const mesh_case *pc = r->pass_case;
    app_pass_opts po = {r->outdir, o->images, o->full_domain, limit};
    app_pass_result *p = NULL;
    eddy_status s = app_pass_run(pc, &po, &p, err);
    if (s != EDDY_OK)
        return s;
    r->pass = p;
    int n = r->npoint;
    double *sp = malloc((size_t)(n > 0 ? n : 1) * 2 * sizeof *sp);
    if (sp == NULL)
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory");
    double *dr = sp + n;
    for (int k = 0; k < n; k++) { /* the report is sorted by speed */
        sp[k] = r->f[k].speed;
        dr[k] = r->f[k].drag;
    }
    double v = pc->pass.speed;
    p->steady_speed = v;
    for (int k = 0; k < n; k++) {
        if (fabs(sp[k] - v) <= 1e-12 * v) {
            p->steady_drag = dr[k];
            p->steady_force_y = r->f[k].force_y;
        } else if (k + 1 < n && sp[k] < v && v < sp[k + 1] && !isfinite(p->steady_drag)) {
            double t = (v - sp[k]) / (sp[k + 1] - sp[k]);
            p->steady_drag = dr[k] + t * (dr[k + 1] - dr[k]);
            p->steady_force_y = r->f[k].force_y + t * (r->f[k + 1].force_y - r->f[k].force_y);
        }
    }
    if (pc->pass.coupled)
        p->steady_exit_speed = app_pass_steady_model(pc, n, sp, dr);
    free(sp);
    return app_pass_write(r->outdir, pc, p, o->images, err);
}

eddy_status app_run_solve(const char *case_path, const app_run_opts *o, app_report **out,
                           eddy_error *err)
{
    app_run_opts defaults;
    eddy_status s = prepare(case_path, &o, &defaults, out, err);
    if (s != EDDY_OK)
        return s;
    app_report *r = *out;
    r->method = "grid: box integration with exponentially fitted convection";
    double limit = eddy_memory_limit(o->max_memory);
    int lock = -1;
    int base_refine = r->c->mesh.refine > 1 ? r->c->mesh.refine : 1;
    r->tol_refine = base_refine;
    post_forces *fc = NULL; /* the coarse results: 2h, then 4h */
    /* the static field beside the fine LU analysis, and with one speed the
     * estimate beside its factorisation (the number of speeds is then fixed:
     * fc can be allocated before the sweep) */
    side_work side = {.r = r, .o = o, .limit = limit};
    int use_side = side_eligible(r, o, limit, &side.with_estimate);
    if (use_side) {
        pthread_mutex_init(&side.lock, NULL);
        pthread_cond_init(&side.cond, NULL);
        if (side.with_estimate) {
            fc = calloc(2 * (size_t)r->npoint, sizeof *fc);
            side.fc = fc;
            side.with_estimate = fc != NULL; /* else it runs after, as it can */
        }
    }
    if (s == EDDY_OK)
        s = fine_pass(r, o, limit, 1, &lock, use_side ? &side : NULL, err);
    if (use_side) {
        s = side_join(&side, s, err);
        r->blas_cap = 0;
        pthread_mutex_destroy(&side.lock);
        pthread_cond_destroy(&side.cond);
    }
    if (s == EDDY_OK)
        s = app_out_renumber(r, err);
    if (s == EDDY_OK && !r->c->mesh.no_error_estimate) {
        if (use_side && side.launched) {
            r->overlapped = 1; /* done beside the fine pass */
        } else {
            free(fc);
            fc = calloc(2 * (size_t)r->npoint, sizeof *fc);
            s = fc == NULL ? EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory")
                           : estimate_passes(r, o, limit, fc, err);
        }
        for (int k = 0; s == EDDY_OK && k < r->npoint; k++)
            post_richardson(&r->f[k], &fc[k], &fc[r->npoint + k]);
        r->estimated = s == EDDY_OK;
        r->tol_rounds = 1;
    }
    /* mesh.tolerance: halve the cells' size until every estimate is below it;
     * the previous fine results are the new coarse ones (the coarse grid of
     * refine 2r is the grid of refine r), so each round solves one grid */
    double tol = r->c->mesh.tolerance;
    double wd = 0.0, wf = 0.0; /* the grid's part of the estimates */
    int balanced = 0;
    if (s == EDDY_OK && tol > 0) {
        worst_estimates(r, &wd, &wf, &balanced);
        while (s == EDDY_OK && (wd > tol || wf > tol)) {
            if (r->tol_refine * 2 > 64) {
                snprintf(r->tol_note, sizeof r->tol_note,
                         "stopped at mesh.refine %d (the largest is 64)", r->tol_refine);
                break;
            }
            mesh_estimate est;
            r->c->mesh.refine = r->tol_refine * 2;
            eddy_status se = mesh_grid_estimate(r->c, limit, &est, NULL);
            if (se != EDDY_OK) {
                r->c->mesh.refine = r->tol_refine;
                snprintf(r->tol_note, sizeof r->tol_note,
                         "stopped at mesh.refine %d: the next grid (%.3g M unknowns) does not fit "
                         "in the memory limit",
                         r->tol_refine, est.unknowns / 1e6);
                break;
            }
            /* the old 2h results become the 4h ones, the old fine ones the 2h */
            memcpy(fc + r->npoint, fc, (size_t)r->npoint * sizeof *fc);
            memcpy(fc, r->f, (size_t)r->npoint * sizeof *fc);
            s = fine_pass(r, o, limit, 0, &lock, NULL, err);
            for (int k = 0; s == EDDY_OK && k < r->npoint; k++)
                post_richardson(&r->f[k], &fc[k], &fc[r->npoint + k]);
            if (s == EDDY_OK) {
                r->tol_refine *= 2;
                r->tol_rounds++;
                worst_estimates(r, &wd, &wf, &balanced);
            }
        }
        r->tol_met = wd <= tol && wf <= tol;
    }
    free(fc);
    /* the box: a zero side's share, added to the grid's (a bound, not a
     * root-sum-square: the two need not be independent); twice it for the
     * normal force, which at low speed is second order in the induced
     * current where the drag is first order (measured on an isolated magnet
     * in a zero box 4x its width, tests/test_estimate.c: drag 3.8 % and
     * normal force 8.0 % off at Rm 0.01 against a damping-coefficient change
     * of 3.4 %) */
    for (int k = 0; s == EDDY_OK && r->estimated && k < r->npoint; k++) {
        post_forces *f = &r->f[k];
        f->drag_error += r->box_truncation * fabs(f->drag);
        f->force_y_error += 2.0 * r->box_truncation * fabs(f->force_y);
        f->loss_error += r->box_truncation * fabs(f->loss);
    }
    if (s == EDDY_OK && r->estimated) {
        worst_estimates(r, &r->est_worst_drag, &r->est_worst_fy, &r->fy_balanced);
        /* refining does not move the box: say so when it is the larger part */
        if (tol > 0 && r->tol_met && (r->est_worst_drag > tol || r->est_worst_fy > tol))
            snprintf(r->tol_note, sizeof r->tol_note,
                     "the grid meets the tolerance, but the zero sides of the box add %.2g %% "
                     "(box_truncation_relative): use \"open\" sides",
                     100.0 * r->box_truncation);
    }
    if (s == EDDY_OK && o->reference)
        s = add_reference(r, 0, err);
    if (s == EDDY_OK)
        s = app_design_evaluate(r, err);
    if (s == EDDY_OK && o->images)
        s = app_out_force_plot(r, err);
    if (s == EDDY_OK && r->has_stop)
        s = app_out_stop(r, o, err);
    if (s == EDDY_OK && r->pass_case != NULL)
        s = run_pass(r, o, limit, err);
    if (s == EDDY_OK)
        s = app_write_results(r->outdir, r, err);
    eddy_unlock_dir(lock);
    return s;
}

eddy_status app_run_reference(const char *case_path, const app_run_opts *o,
                               app_report **out, eddy_error *err)
{
    app_run_opts defaults;
    eddy_status s = prepare(case_path, &o, &defaults, out, err);
    if (s != EDDY_OK)
        return s;
    app_report *r = *out;
    r->method = "layered Fourier reference (independent of the grid)";
    s = add_reference(r, 1, err);
    int lock = -1;
    if (s == EDDY_OK)
        s = app_out_open_dir(r, &lock, err);
    if (s == EDDY_OK && o->images)
        s = app_out_force_plot(r, err);
    if (s == EDDY_OK)
        s = app_write_results(r->outdir, r, err);
    eddy_unlock_dir(lock);
    return s;
}
