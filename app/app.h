/*
 * app.h - public interface of the application layer (prefix app_).
 *
 * The top of the pipeline: a run of one case (read, mesh, solve every speed,
 * post-process, design answers, write the outputs) and its report; batches
 * of cases (variant expansion, plans, resume, summaries, Slurm scripts) have
 * their own header, app/app_batch.h.  It drives mesh/, solver/, post/ and
 * design/; nothing below it includes this header.  The command line
 * (app/app_main.c, app/app_batch_cli.c, app/app_batch_runner.c) is the only
 * code that prints or chooses an exit status.
 */
#ifndef EDDY_APP_H
#define EDDY_APP_H

#include <stddef.h>

#include "design/design.h"
#include "mesh/mesh.h"
#include "post/post.h"
#include "post/post_img.h"
#include "solver/sol.h"

/* ------------------------------------------------------------------------ */
/* Reports                                                                   */
/* ------------------------------------------------------------------------ */

/* Solver statistics of one speed, as reported (seconds). */
typedef struct {
    double t_assemble, t_factor, t_solve, t_post;
    double lnz, unz, flops;
    /* saturable materials: the Newton-Raphson solve (newton.iterations = 0
     * and newton.n_residual = 0 for a linear case) */
    sol_newton_info newton;
    int file_index;   /* the number in the point's file names (jz_<NN>_...): its
                       * index when it was solved; app_run_solve renumbers the
                       * files to the speed order at the end */
} app_point_info;

/* Whether the layered Fourier reference applies to a case. */
typedef enum {
    APP_REF_NONE = 0,          /* not asked for */
    APP_REF_NOT_APPLICABLE,    /* the case does not fit; ref_note says why */
    APP_REF_OK,                /* fits exactly */
    APP_REF_APPROXIMATE,       /* fits with magnets' recoil mu_r taken as 1 */
    APP_REF_FAILED             /* fits, but the quadrature failed; ref_note says why */
} app_ref_state;

/* The result of one run (a solve, or a reference evaluation): everything
 * the reports need.  Owns all its members; free with app_report_free.
 * Arrays have npoint entries. */
typedef struct {
    mesh_case *c;
    mesh_grid *g;               /* NULL for a reference-only run */
    const char *method;         /* static text: how the forces were computed */
    long unknowns;              /* 0 for a reference-only run */
    double t_mesh, t_analyse;   /* s */
    double t_static;            /* s, the static field of the fine grid(s) (and the
                                 * reference's mu_r = 1 offset where it is computed) */
    /* error estimate (mesh.error_estimate, on by default): the coarse grid of
     * the family, solved at every speed after the sweep */
    int estimated;              /* 1 if every point has its *_error fields */
    long coarse_unknowns;       /* unknowns of the coarse grid */
    double t_estimate;          /* s, the coarse passes and the box estimate */
    double box_truncation;      /* relative change of the damping coefficient when the zero
                                 * sides are made open (0: none zero), added to every
                                 * point's estimate times its value */
    const char *box_grid;       /* the grid box_truncation came from: "h" (the case's),
                                 * "2h" (negligible there), NULL (not computed) */
    /* mesh.tolerance: the refinement loop */
    int tol_refine;             /* the refine factor of the final grid (1 without it) */
    int tol_rounds;             /* grids solved */
    int tol_met;                /* 1 if every estimate is below the tolerance */
    double est_worst_drag, est_worst_fy; /* the largest estimate / the largest magnitude of
                                 * the sweep (box included; the normal force's at least
                                 * 1e-3 of the largest drag) */
    int fy_balanced;            /* 1: the normal force stays below 1e-3 of the largest drag */
    char tol_note[256];         /* why the tolerance was not met, or "" */
    int npoint;
    post_forces *f;
    app_point_info *info;
    app_ref_state ref_state;
    char ref_note[512];
    double *ref_drag, *ref_force_y; /* N/m from the reference, NULL unless it applies */
    double ref_mu1_offset;      /* APP_REF_APPROXIMATE (magnets' recoil mu_r taken as 1):
                                 * the grid's own low-speed drag with the magnets at
                                 * mu_r = 1 over the real one, minus 1 (the offset the
                                 * reference is expected to show at low speed); NAN if
                                 * not computed */
    const char *ordering;       /* fill-reducing ordering used (static text) */
    double factor_bytes;        /* UMFPACK's estimated peak memory of one factorisation */
    int threads;                /* speeds solved at once (the most of any sweep) */
    int blas_threads;           /* BLAS threads per factorisation (the most used) */
    int blas_cap;               /* > 0: the BLAS threads are held at this many (set
                                 * once before work runs beside the fine pass) */
    int overlapped;             /* 1 if the error estimate (and, for linear materials,
                                 * the static field) ran beside the fine pass's LU on
                                 * a thread of its own (one-speed cases) */
    int static_cholesky;        /* 1: the static field by Cholesky (CHOLMOD), 0: LU */
    char blas[256];             /* the BLAS as detected (sol_blas_name) */
    /* brake design (app_design.c) */
    int has_peak;
    double peak_drag, peak_speed; /* N/m, m/s (interpolated when peak_refined) */
    int peak_refined, peak_at_end; /* refined by a parabola; the largest drag is at an end */
    double end_factor;          /* Russell-Norsworthy factor, NAN if not asked */
    int has_stop;
    design_stop_result stop;      /* the vehicle's stop (has_stop) */
    double stop_table_change;   /* relative change of the distance on half tables */
    double stop_temperature_rise; /* K, NAN if no conductor mass */
    char stop_note[512];        /* a vehicle without a stop (!has_stop): why */
    /* damping (app_design.c) */
    double damping;             /* N s/m^2 (per metre of depth, per period of a
                                 * periodic domain): dF/dv at v = 0 from the static
                                 * field (post_damping_coefficient; the reference's
                                 * low-speed slope for a reference-only run); NAN
                                 * if unknown */
    design_linear_state linear_state; /* where the drag leaves F = c v by 5 % */
    double linear_speed;        /* m/s, DESIGN_LINEAR_CROSSED only, else NAN */
    char linear_note[256];      /* the rule, or why linear_speed is NAN */
    int has_terminal;           /* 1: the vehicle falls under gravity */
    double terminal_speed;      /* m/s, NAN when not bracketed by the sweep */
    double terminal_linear;     /* m/s, (m g - extra_force) / (c depth repeat): the
                                 * linear law's terminal speed, NAN if c is 0 */
    char terminal_note[512];    /* how terminal_speed was found, or why it is NAN */
    int adapt_rounds;           /* adaptive sweep: refinement rounds done */
    char outdir[4096];          /* where the outputs went */
    /* A pass case (mesh_case.pass): c above is its steady counterpart (the
     * moving regions stretched over the domain, mesh_case_steady_of_pass),
     * solved at the case's speeds for the comparison; pass_case is the case
     * as read and pass its time-stepped record.  NULL otherwise. */
    mesh_case *pass_case;
    struct app_pass_result_s *pass;
} app_report;

/* ------------------------------------------------------------------------ */
/* A time-stepped pass (app_pass.c)                                          */
/* ------------------------------------------------------------------------ */

/* The record of a pass (mesh_case.pass). */
typedef struct app_pass_result_s {
    long n;                     /* samples: the starting state (index 0) and one per step */
    double *position;           /* n, m travelled by the moving regions */
    double *time;               /* n, s */
    double *speed;              /* n, m/s during the step ending at the sample (index 0:
                                 * the starting speed) */
    double *drag, *force_y;     /* n, N/m on the moving regions (force_method) */
    double *drag_stress;        /* n, N/m, the Maxwell-stress drag (line form) as a check;
                                 * NAN where it has no air contour */
    double *loss;               /* n, W/m, Joule power of the step in every conductor */
    double *energy;             /* n, J/m, discrete magnetic energy (sol_stepper_energy;
                                 * a constant apart) */
    const char *force_method;   /* post_forces.force_method of the steps */
    double work;                /* J/m, integral of drag dx over the pass */
    double heat;                /* J/m, integral of loss dt */
    double energy_change;       /* J/m, energy[n-1] - energy[0] */
    double step;                /* m, the step actually taken (whole band cells) */
    double band_h;              /* m, the band's cell width */
    int cells_per_step;
    double exit_speed;          /* m/s, speed at the end (coupled: from the vehicle) */
    int stopped;                /* coupled: 1 if the load stopped within the distance */
    double steady_speed;        /* m/s, the speed of the steady comparison (pass.speed) */
    double steady_drag, steady_force_y; /* N/m, steady solver on the steady counterpart
                                 * (infinite conductor) at steady_speed; NAN if none */
    double steady_exit_speed;   /* coupled: m/s at the end of the same distance from the
                                 * steady force curve (app_pass_steady_model); NAN else */
    long nx, ny, unknowns;
    long factorisations;        /* numeric factorisations of the steps */
    long reused;                /* steps that reused the previous factors */
    double t_total;             /* s, the whole pass */
    int npicture;               /* picture pairs written */
} app_pass_result;

/* Options of a pass. */
typedef struct {
    const char *outdir;         /* folder for the pictures (must exist); NULL: none */
    int images;                 /* 1: J_z and |B| pictures every pass.pictures_every */
    int full_domain;            /* pictures of the whole domain */
    double memory_limit;        /* bytes (eddy_memory_limit); <= 0: the default */
} app_pass_opts;

/*
 * Run the pass of case c: mesh it (with the uniform band), solve the static
 * field (or the steady moving one with pass.start "steady"), then step the
 * moving regions through the fixed ones with sol_stepper_advance_frame, one
 * symbolic analysis for all steps, recording the forces (post_forces_pass),
 * the Joule power and the magnetic energy of every step.  With pass.coupled
 * the speed follows the vehicle: m v dv/dx = m g [gravity] - extra_force -
 * F depth repeat, integrated exactly over each step for the step's force
 * (the kinetic energy changes by the work of the step), and dt = step / v.
 * The run ends after pass.distance, or when a coupled load stops.
 *   c:   a validated case with a pass; borrowed.
 *   o:   options, or NULL (no pictures).
 *   out: receives the record (app_pass_result_free); NULL on error.
 * The steady_* fields are NAN here; app_run_solve fills them.
 * Returns EDDY_OK, EDDY_ERR_INPUT (no pass, saturable materials),
 * EDDY_ERR_TOO_LARGE, EDDY_ERR_NOMEM, EDDY_ERR_IO, or a solver status.
 */
eddy_status app_pass_run(const mesh_case *c, const app_pass_opts *o, app_pass_result **out,
                         eddy_error *err);

/* Free a pass record; accepts NULL. */
void app_pass_result_free(app_pass_result *r);

/*
 * The coupled pass's steady model: the vehicle of c integrated over the
 * pass's distance, m v dv/dx = m g [gravity] - extra_force - F(v) depth
 * repeat, from pass.speed with the steady drag F (N/m) interpolated linearly
 * in speed between the n points (speed[k], drag[k]) (and F = 0 at v = 0;
 * held at the last value above the highest speed).  Returns the speed at the
 * end of the distance, m/s, 0 if the load stops, NAN without a vehicle.
 */
double app_pass_steady_model(const mesh_case *c, int n, const double *speed,
                             const double *drag);

/* Write DIR/pass.csv (one row per sample, header with units) and, with
 * images, DIR/pass.png (drag, normal force and loss / speed against the
 * position, the steady drag at the same speed dashed where known).
 * Returns EDDY_OK, EDDY_ERR_IO, EDDY_ERR_NOMEM. */
eddy_status app_pass_write(const char *dir, const mesh_case *c, const app_pass_result *p,
                           int images, eddy_error *err);

/* The "pass" object of result.json for p (cJSON owned by the caller), or
 * NULL when out of memory. */
struct cJSON *app_pass_json(const mesh_case *c, const app_pass_result *p);

/* Free a report and everything it owns; accepts NULL. */
void app_report_free(app_report *r);

/* ------------------------------------------------------------------------ */
/* Brake-design answers of a run (app_design.c)                             */
/* ------------------------------------------------------------------------ */

/* Sort a report's points (forces, infos, the case's speeds) by speed. */
void app_design_sort(app_report *r);

/*
 * Speeds to add to an adaptive sweep (the report's points sorted by speed,
 * all speeds and drags positive): where the monotone cubic (Fritsch and
 * Carlson 1980) in log speed and log drag through the other points misses
 * a point by more than 0.5 % (0.1 % at the drag peak), the midpoints (in
 * log speed) of its two intervals.  Writes at most max_new speeds (m/s) into
 * speeds and returns how many.
 */
int app_design_refine(const app_report *r, double *speeds, int max_new);

/*
 * Fill the design answers of a finished run: per point the adiabatic
 * heating rate (from the moving materials' density and specific heat), disc
 * torque and power (case "disc"), the end-corrected drag (case
 * "end_effect", Russell-Norsworthy factor); the drag peak of the positive
 * speeds (design_peak, design/design.h section 7: parabola in log speed
 * through the largest sampled drag and its neighbours), which forces.png
 * marks (app_run.c); the stop of
 * the case's "vehicle" (force = drag x depth x repeat, monotone cubic in
 * log-log, design_stop_compute), the change of its distance when half the
 * points are used, and the conductor's temperature rise; the speed up to
 * which the drag stays within 5 % of damping x speed (design_linear_range);
 * with "gravity" the terminal speed (design_terminal_speed on the drag x
 * depth x repeat table against m g - extra_force) and the stop with the
 * weight as driving force, or why either is undefined (terminal_note,
 * stop_note).  r->damping must be set (NAN: no linear range).
 * Returns EDDY_OK, EDDY_ERR_INPUT (e.g. the stop's speeds outside the
 * sweep), EDDY_ERR_NOMEM.
 */
eddy_status app_design_evaluate(app_report *r, eddy_error *err);

/* The largest acceptable relative change of the stopping distance when the
 * speed table is halved (0.005). */
double app_design_stop_tolerance(void);

/* 1 if a stop was computed from enough speeds: the relative change of its
 * distance when every other speed is dropped (app_report.stop_table_change)
 * is finite and smaller than app_design_stop_tolerance() in magnitude,
 * whichever its sign; else 0. */
int app_design_stop_enough_points(double table_change);

/* Options of a run. */
typedef struct {
    const char *outdir;         /* output folder; NULL: results/<case name> */
    int images;                 /* 1: write the PNG pictures */
    int vtk;                    /* 1: write a VTK .vtr field file per speed */
    int full_domain;            /* 1: pictures of the whole domain, 0: cropped */
    int reference;              /* 1: add the layered reference where it fits */
    int threads;                /* speeds solved at once (0: the machine's cores); fewer
                                 * when their factorisations would not fit in memory */
    double max_memory;          /* bytes this run may use (the user's --max-memory, or a
                                 * batch case's share); 0: eddy_memory_limit(0).  The
                                 * mesh size check, the factorisation guard and the
                                 * number of concurrent speeds all use
                                 * eddy_memory_limit(max_memory). */
    int max_newton;             /* Newton-Raphson steps allowed per speed with saturable
                                 * materials, 1..SOL_NEWTON_MAX_ITER (0: the maximum) */
    /* optional progress callback after each speed k (0-based) of n */
    void (*progress)(void *ctx, int k, int n, const post_forces *f);
    void *progress_ctx;
} app_run_opts;

/* Defaults: outdir NULL, images 1, vtk 0, full_domain 0, reference 1, no
 * progress callback. */
void app_run_opts_defaults(app_run_opts *o);

/*
 * The whole job for one case file: read and validate it, mesh, solve the
 * static field and every speed (one symbolic analysis, one numeric
 * factorisation per speed), compute forces and losses, evaluate the layered
 * reference where the case fits, and write result.json, forces.csv and the
 * pictures into the output folder (created only after the case and the mesh
 * are valid, so bad input writes nothing).
 *   out: receives the report (caller frees with app_report_free); it is
 *        also returned on a failure after the case was read, so the caller
 *        can name the case; NULL otherwise.
 * Returns EDDY_OK or the first error (EDDY_ERR_INPUT / EDDY_ERR_TOO_LARGE /
 * EDDY_ERR_IO for the input; others during computation).
 */
eddy_status app_run_solve(const char *case_path, const app_run_opts *o, app_report **out,
                           eddy_error *err);

/*
 * The window the field pictures show (m): every non-air region (moving
 * conductors only over the x-range of the stationary parts; a periodic
 * domain's full period), with a margin, clipped to the domain; the whole
 * domain if full is non-zero.
 */
void app_view_window(const mesh_case *c, int full, double view[4]);

/*
 * The layered Fourier reference alone for a case that fits it: the same
 * result.json fields (drag_force, force_x, force_y, loss, low_speed_drag,
 * magnetic_reynolds) from the reference solver.  Returns
 * EDDY_ERR_NOT_APPLICABLE with the reason when the case does not fit.
 */
eddy_status app_run_reference(const char *case_path, const app_run_opts *o,
                               app_report **out, eddy_error *err);

/*
 * Write DIR/result.json and DIR/forces.csv.  Each file is written to a
 * temporary name in DIR and renamed when complete, so an interrupted run
 * never leaves a half-written result.  dir must exist.
 * Returns EDDY_OK, EDDY_ERR_IO, EDDY_ERR_NOMEM.
 */
eddy_status app_write_results(const char *dir, const app_report *r, eddy_error *err);

/* 1 if a file name (no folder) is one the tool writes into an output folder
 * (result.json, forces.csv, stopping.csv, the pictures jz_*.png, b_*.png,
 * forces.png, stopping.png, field_*.vtr, profile_*.csv, and their
 * temporaries), else 0.  One rule for the stale outputs that a solve and a
 * batch case remove before they write anew. */
int app_run_is_output(const char *file);

/* Remove from dir every file app_run_is_output names (a previous run's
 * pictures and fields would otherwise sit beside the new result.json).
 * Returns EDDY_OK or EDDY_ERR_IO. */
eddy_status app_run_clear_outputs(const char *dir, eddy_error *err);

/* The safety notice printed by the tool and written into result.json. */
const char *app_safety_notice(void);

/* The safety notice of a case of geometry g: app_safety_notice() for a
 * planar case; for an axisymmetric one the same cautions with its own
 * scope (forces of the whole ring).  Static storage. */
const char *app_safety_notice_for(mesh_geometry g);

/* The units of a case's forces and losses for labels: "N/m" and "W/m" for a
 * planar case (per metre of depth), "N" and "W" for an axisymmetric one
 * (the whole ring).  Static storage. */
const char *app_force_unit(mesh_geometry g);
const char *app_loss_unit(mesh_geometry g);

#endif
