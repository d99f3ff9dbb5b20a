/*
 * app.h - public interface of the application layer (prefix app_).
 *
 * The top of the pipeline: a run of one case (read, mesh, solve every speed,
 * post-process, design answers, write the outputs), its report, and batches
 * of cases (variant expansion, plans, resume, summaries, Slurm scripts).  It
 * drives mesh/, solver/, post/ and design/; nothing below it includes this
 * header.  The command line (app/app_main.c, app/app_batch_cli.c) is the
 * only code that prints or chooses an exit status.
 */
#ifndef EDDY_APP_H
#define EDDY_APP_H

#include <stddef.h>
#include <stdint.h>

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
    int npoint;
    post_forces *f;
    app_point_info *info;
    app_ref_state ref_state;
    char ref_note[512];
    double *ref_drag, *ref_force_y; /* N/m from the reference, NULL unless it applies */
    const char *ordering;       /* fill-reducing ordering used (static text) */
    double factor_bytes;        /* UMFPACK's estimated peak memory of one factorisation */
    int threads;                /* speeds solved at once */
    /* brake design (app_design.c) */
    int has_peak;
    double peak_drag, peak_speed; /* N/m, m/s (interpolated when peak_refined) */
    int peak_refined, peak_at_end; /* refined by a parabola; the largest drag is at an end */
    double end_factor;          /* Russell-Norsworthy factor, NAN if not asked */
    int has_stop;
    design_stop_result stop;      /* the vehicle's stop (has_stop) */
    double stop_table_change;   /* relative change of the distance on half tables */
    double stop_temperature_rise; /* K, NAN if no conductor mass */
    int adapt_rounds;           /* adaptive sweep: refinement rounds done */
    char outdir[4096];          /* where the outputs went */
} app_report;

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
 * points are used, and the conductor's temperature rise.
 * Returns EDDY_OK, EDDY_ERR_INPUT (e.g. the stop's speeds outside the
 * sweep), EDDY_ERR_NOMEM.
 */
eddy_status app_design_evaluate(app_report *r, eddy_error *err);

/* The largest acceptable relative change of the stopping distance when the
 * speed table is halved (0.005). */
double app_design_stop_tolerance(void);

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

/*
 * Create a directory and its parents (like mkdir -p).  Returns EDDY_OK or
 * EDDY_ERR_IO.
 */
eddy_status eddy_make_dir(const char *dir, eddy_error *err);

/*
 * Write `size` bytes to path atomically: to a temporary file in the same
 * directory, flushed to disk, then renamed over path.
 */
eddy_status eddy_write_atomic(const char *path, const char *data, size_t size,
                              eddy_error *err);

/* The safety notice printed by the tool and written into result.json. */
const char *app_safety_notice(void);

/* ------------------------------------------------------------------------ */
/* Batch runs (app_batch.c): case discovery, variant expansion, content     */
/* hashes, resume decisions, per-case status files and the batch summary.    */
/* The front end (post/app_batch_main.c) runs each case in a child process.       */
/* ------------------------------------------------------------------------ */
/*
 * A batch folder OUT holds OUT/batch.json (the plan), one folder per case
 * OUT/<case>/ with case.json (the expanded case as solved), the outputs of
 * app_run_solve, input.hash (the completion marker, written after
 * result.json) or error.json (a failed case), and OUT/summary.csv,
 * summary.json and summary.html.  Every file is written through
 * eddy_write_atomic.  Nothing here prints, forks or exits.
 *
 * Variants: a case may hold "variants": {"PATH": [value, ...], ...}.  PATH
 * is a dotted path into the case: segments separated by '.'; in an object a
 * segment is a key, in an array a 0-based index or the "name" of an element
 * object (an index wins if a name is all digits); keys holding a '.' cannot
 * be addressed.  Each PATH must already exist in the case (a variant changes
 * a value, it does not add one); "name" and "variants" cannot vary; no PATH
 * may lie inside another.  The cartesian product of the value lists (the
 * first key varying slowest) gives the cases.  A case is named
 * <name>__<label>-<value>[__<label>-<value>...], label being the shortest
 * trailing part of the path (whole segments) that tells the paths apart, a
 * value shown as written (array elements joined with '_'), any character
 * outside [A-Za-z0-9._-] as '_'; if any such name would be longer than 63
 * characters, not unique, or show an object, every variant of the case is
 * named <name>__v001, <name>__v002, ... instead.  The values of each case
 * are recorded in batch.json and in the summary.  The expanded case text
 * has "name" first and no "variants".
 */

#define APP_BATCH_NAME_MAX 64       /* case names: 1..63 characters, as mesh_case.name */
#define APP_BATCH_MAX_KEYS 32       /* variant paths per case file */
#define APP_BATCH_MAX_VALUES 1000   /* values per variant path */
#define APP_BATCH_MAX_VARIANTS 10000 /* combinations per case file */

/* FNV-1a 64-bit hash (Fowler, Noll, Vo) of size bytes, continuing from h
 * (start with APP_FNV1A64_BASIS).  For change detection, not security. */
#define APP_FNV1A64_BASIS 0xcbf29ce484222325ULL
uint64_t app_fnv1a64(const void *data, size_t size, uint64_t h);

/* What a case folder holds for the case's current input. */
typedef enum {
    APP_CASE_NOT_RUN = 0, /* no complete result and no recorded failure   */
    APP_CASE_OK,          /* result.json and a matching input.hash        */
    APP_CASE_INVALID,     /* error.json: invalid input                    */
    APP_CASE_FAILED,      /* error.json: failure during computation       */
    APP_CASE_TIMEOUT,     /* error.json: exceeded the case time limit     */
    APP_CASE_CRASHED      /* error.json: the case's process died          */
} app_case_state;

/* "not run", "ok", "invalid", "failed", "timeout", "crashed" (static). */
const char *app_case_state_name(app_case_state s);

/* One case of a batch (after variant expansion).  Owns its strings. */
typedef struct {
    char name[APP_BATCH_NAME_MAX]; /* folder under OUT and the case's "name"    */
    char *source;        /* the case file it came from, as given               */
    char *text;          /* expanded case (JSON text, ends in a newline); NULL
                            when the source itself is invalid                   */
    int nvalue;          /* variant values of this case (0: no variants)        */
    char **paths;        /* nvalue dotted paths                                 */
    char **values;       /* nvalue values as compact JSON text                  */
    char hash[17];       /* 16 hex digits: FNV-1a 64 of the tool version, the
                            output options and text (of the source for an
                            invalid source)                                     */
    int invalid;         /* 1: the case cannot be solved (error says why)      */
    eddy_status error_status;
    char error[1024];    /* names the file, the variant and the JSON path      */
    char *warnings;      /* NULL, or the reader's warnings, one per line        */
} app_batch_case;

/*
 * Expand one case text into its variants and check each with the case
 * reader (mesh_case_parse).
 *   text    NUL-terminated case file content; source names it in messages.
 *   images  1 if pictures will be written (enters the hash).
 *   cases   receives ncase cases (free with app_batch_cases_free); a case
 *           the reader rejects has invalid = 1 and the message in error.
 * Returns EDDY_OK; EDDY_ERR_INPUT when the text is not a JSON object, has a
 * bad "name" or a bad "variants" object (the message names the source and
 * the JSON path); EDDY_ERR_NOMEM.  On error *cases is NULL.
 */
eddy_status app_batch_expand(const char *text, const char *source, int images,
                              app_batch_case **cases, int *ncase, eddy_error *err);

/* Free n cases and the array; accepts NULL. */
void app_batch_cases_free(app_batch_case *cases, int n);

/*
 * The case files named by the arguments: a file as given (in the order
 * given); a folder: its *.json entries not starting with '.' (not its
 * sub-folders' contents), sorted by name (strcmp).
 *   files  receives nfiles malloc'ed paths in a malloc'ed array (the caller
 *          frees each and the array).
 * Returns EDDY_OK; EDDY_ERR_INPUT when nargs < 1, an argument does not
 * exist, or a folder holds no *.json; EDDY_ERR_NOMEM.
 */
eddy_status app_batch_collect(int nargs, const char *const *args, char ***files, int *nfiles,
                               eddy_error *err);

/* Every case of a batch, in order: files as app_batch_collect lists them,
 * each file's variants in expansion order. */
typedef struct {
    int ncase;
    app_batch_case *cases;
    int nkey;            /* distinct variant paths over all cases, in order of
                            first appearance (the summary's columns)           */
    char **keys;
    int images;          /* 1: the cases write pictures                        */
} app_batch_plan;

/*
 * Plan a batch: collect the case files, read and expand each.  A file that
 * cannot be read or expanded becomes one invalid case (named after its
 * "name" if it has a good one, else its file name's stem) - a bad case does
 * not stop the batch.
 *   out  receives the plan (free with app_batch_plan_free).
 * Returns EDDY_OK; EDDY_ERR_INPUT for the errors of app_batch_collect, and
 * when two cases have the same name or a case is named like a file of the
 * batch folder (batch.json, summary.csv, ...): the message names both files;
 * EDDY_ERR_NOMEM.
 */
eddy_status app_batch_plan_build(int nargs, const char *const *args, int images,
                                  app_batch_plan **out, eddy_error *err);

/* Free a plan; accepts NULL. */
void app_batch_plan_free(app_batch_plan *p);

/*
 * Write the plan: create outdir, write OUT/<case>/case.json for every valid
 * case whose file differs (first removing that case's input.hash, so a
 * changed input is never taken as finished) and OUT/batch.json.  Files whose
 * content is unchanged are not touched.
 * Returns EDDY_OK, EDDY_ERR_IO, EDDY_ERR_NOMEM.
 */
eddy_status app_batch_plan_save(const app_batch_plan *p, const char *outdir, eddy_error *err);

/*
 * Read OUT/batch.json and every case.json it names (what a Slurm array task
 * does).  Returns EDDY_OK; EDDY_ERR_INPUT when the plan is missing, damaged,
 * written by another tool version, or a case.json no longer matches its
 * hash; EDDY_ERR_NOMEM.  out receives a plan owned by the caller.
 */
eddy_status app_batch_plan_load(const char *outdir, app_batch_plan **out, eddy_error *err);

/*
 * The resume decision, from the files in OUT/<case>/: APP_CASE_OK when
 * result.json exists and input.hash holds c->hash; else the status recorded
 * in error.json if that names c->hash; else APP_CASE_NOT_RUN.  Never fails.
 */
app_case_state app_batch_case_state(const char *outdir, const app_batch_case *c);

/*
 * Make OUT/<case>/ ready for a run: create it, remove input.hash first, then
 * every earlier output (result.json, forces.csv, *.png, *.vtr,
 * profile_*.csv, error.json, temporaries), and write case.json if it
 * differs.  Other files are left alone.  Returns EDDY_OK or EDDY_ERR_IO.
 */
eddy_status app_batch_case_prepare(const char *outdir, const app_batch_case *c,
                                    eddy_error *err);

/*
 * Solve OUT/<case>/case.json into OUT/<case>/ with app_run_solve (pictures
 * if images, threads as app_run_opts.threads).  Meant for a child process.
 * Returns what app_run_solve returns (c->error_status for an invalid case).
 */
eddy_status app_batch_case_solve(const char *outdir, const app_batch_case *c, int images,
                                  int threads, double max_memory, eddy_error *err);

/*
 * Record a finished case: check that result.json exists, remove error.json,
 * and write input.hash ("fnv1a64 <hash>\nseconds <s>\n") atomically.
 *   seconds  wall time of the run, s.
 * Returns EDDY_OK or EDDY_ERR_IO (result.json missing, or a write failed).
 */
eddy_status app_batch_case_done(const char *outdir, const app_batch_case *c, double seconds,
                                 eddy_error *err);

/*
 * Record a failed case: remove input.hash and write OUT/<case>/error.json
 * {case, source, status, message, seconds, hash, tool} atomically (creating
 * the folder).  state: APP_CASE_INVALID, _FAILED, _TIMEOUT or _CRASHED
 * (others are recorded as "failed").  seconds may be NAN.
 * Returns EDDY_OK, EDDY_ERR_IO or EDDY_ERR_NOMEM.
 */
eddy_status app_batch_case_failed(const char *outdir, const app_batch_case *c,
                                   app_case_state state, const char *message, double seconds,
                                   eddy_error *err);

/* Counts over the cases of a summary. */
typedef struct {
    int cases, ok, failed, not_run;
} app_batch_counts;

/*
 * Write OUT/summary.csv, summary.json and summary.html from the case folders
 * (the state of each case as app_batch_case_state decides it).  One row per
 * case and speed (one row with empty numbers for a case without result):
 * case, source, one column per variant path, speed (m/s), drag and normal
 * force (N/m), loss (W/m), the case's peak drag (N/m) and its speed (m/s)
 * from design_peak, status, error, seconds.  The HTML page is
 * self-contained apart from the plots, which it links relatively
 * (<case>/forces.png): a table of the cases, the plots side by side, and a
 * table of every speed; it needs no script.
 *   counts  optional; receives the counts.
 * Returns EDDY_OK, EDDY_ERR_IO or EDDY_ERR_NOMEM.
 */
eddy_status app_batch_write_summary(const char *outdir, const app_batch_plan *p,
                                     app_batch_counts *counts, eddy_error *err);

/* Options of the Slurm scripts. */
typedef struct {
    const char *exe;        /* absolute path of the eddy2d program           */
    int ntask;              /* cases to run: increasing indices into the plan */
    const int *tasks;
    int cpus_per_task;      /* #SBATCH --cpus-per-task, and --threads per case */
    double case_timeout;    /* s; > 0 adds --case-timeout and #SBATCH --time  */
    int nextra;             /* extra "#SBATCH <option>" lines (each one line
                               starting with '-', e.g. "--partition=short")   */
    const char *const *extra;
} app_batch_slurm_opts;

/* Defaults: nothing set, cpus_per_task 1. */
void app_batch_slurm_opts_defaults(app_batch_slurm_opts *o);

/*
 * Write the Slurm scripts for a planned batch (the plan must be saved in
 * outdir, which must be absolute): OUT/batch.sbatch, a job array with one
 * task per listed case running `eddy2d batch --run-one INDEX -o OUT`;
 * OUT/summary.sbatch running `eddy2d batch --summary-only -o OUT`; and
 * OUT/submit.sh, which submits the array and then the summary job with
 * --dependency=afterany on it.  Task logs go to OUT/slurm/ (created).
 * Returns EDDY_OK, EDDY_ERR_INPUT (bad options), EDDY_ERR_IO, EDDY_ERR_NOMEM.
 */
eddy_status app_batch_write_slurm(const char *outdir, const app_batch_plan *p,
                                   const app_batch_slurm_opts *o, eddy_error *err);

#endif
