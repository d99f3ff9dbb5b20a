/*
 * app_batch.h - batches of cases, the library side of `eddy2d batch`
 * (prefix app_batch_, part of the application layer app/): case discovery,
 * variant expansion, content hashes, the plan, resume decisions, per-case
 * status files, the summaries and the Slurm scripts.
 *
 * Layout of a batch folder OUT:
 *   OUT/batch.json              the plan: every case, its source and variant values
 *   OUT/<case>/case.json        the expanded case exactly as solved (input snapshot)
 *   OUT/<case>/result.json ...  the outputs of app_run_solve (app/app.h)
 *   OUT/<case>/input.hash       completion marker, written after result.json
 *   OUT/<case>/error.json       a failed case: status, message, seconds
 *   OUT/summary.{csv,json,html} one row per case and speed
 *   OUT/batch.sbatch, summary.sbatch, submit.sh, slurm/   Slurm scripts and logs
 * Every file is written to a temporary name and renamed (eddy_write_atomic),
 * and a file whose content would not change is not touched.
 *
 * Conventions: nothing here prints, forks or exits; every function that can
 * fail returns an eddy_status and fills err (may be NULL) with a message.
 * The caller keeps ownership of what it passes in; what a function returns
 * through a pointer belongs to the caller, who frees it with the function
 * named.  Paths are used as given (relative to the current folder).
 *
 * The command line (app/app_batch_cli.c, app/app_batch_runner.c) runs each
 * case in a child process, N at a time, and decides what the user sees.
 * Implementation: app/app_batch.c (hash, state names, freeing),
 * app_batch_expand.c (variants), app_batch_plan.c (case files, the plan),
 * app_batch_case.c (resume state, per-case files), app_batch_summary.c,
 * app_batch_slurm.c; their shared helpers are private (app/app_batch_int.h).
 */
#ifndef EDDY_APP_BATCH_H
#define EDDY_APP_BATCH_H

#include <stddef.h>
#include <stdint.h>

#include "mesh/eddy.h"

/*
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

/* ------------------------------------------------------------------------ */
/* Cases and their expansion (app_batch_expand.c)                            */
/* ------------------------------------------------------------------------ */

/* What a case folder holds for the case's current input. */
typedef enum {
    APP_CASE_NOT_RUN = 0, /* no complete result and no recorded failure   */
    APP_CASE_OK,          /* result.json and a matching input.hash        */
    APP_CASE_INVALID,     /* error.json: invalid input                    */
    APP_CASE_FAILED,      /* error.json: failure during computation       */
    APP_CASE_TIMEOUT,     /* error.json: exceeded the case time limit     */
    APP_CASE_CRASHED      /* error.json: the case's process died          */
} app_case_state;

/* "not run", "ok", "invalid", "failed", "timeout", "crashed" (static
 * storage; "unknown" for a value outside the enum). */
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
    double speed_max;    /* m/s, the largest |speed| of the case (0 if invalid) */
    double design_speed; /* m/s, its mesh.design_speed (0: none)                */
} app_batch_case;

/*
 * Expand one case text into its variants and check each with the case
 * reader (mesh_case_parse) and the mesh size estimate (mesh_grid_estimate).
 *   text    NUL-terminated case file content.
 *   source  names it in messages and in app_batch_case.source; NULL:
 *           "(case)".  The base name of the cases is the text's "name", or
 *           else the stem of source (eddy_name_from_path).
 *   images  1 if pictures will be written (enters the hash).
 *   cases   receives *ncase cases (free with app_batch_cases_free); a case
 *           the reader rejects has invalid = 1 and the message in error,
 *           and the reader's warnings of a valid case are in warnings.
 * Returns EDDY_OK; EDDY_ERR_INPUT when the text is not a JSON object, holds
 * a number that is not finite, has a bad "name" or a bad "variants" object
 * (the message names the source and the JSON path); EDDY_ERR_NOMEM.  On
 * error *cases is NULL and *ncase 0.
 */
eddy_status app_batch_expand(const char *text, const char *source, int images,
                             app_batch_case **cases, int *ncase, eddy_error *err);

/* Free n cases and the array; accepts NULL. */
void app_batch_cases_free(app_batch_case *cases, int n);

/* ------------------------------------------------------------------------ */
/* The plan (app_batch_plan.c)                                               */
/* ------------------------------------------------------------------------ */

/*
 * The case files named by the arguments: a file as given (in the order
 * given); a folder: its *.json entries not starting with '.' (not its
 * sub-folders' contents), sorted by name (strcmp).
 *   args   nargs paths of files or folders.
 *   files  receives *nfiles malloc'ed paths in a malloc'ed array (the caller
 *          frees each and the array); NULL on error.
 * Returns EDDY_OK; EDDY_ERR_INPUT when nargs < 1, an argument does not
 * exist, a folder cannot be listed or holds no *.json, or a path is too
 * long; EDDY_ERR_NOMEM.
 */
eddy_status app_batch_collect(int nargs, const char *const *args, char ***files, int *nfiles,
                              eddy_error *err);

/* Every case of a batch, in order: files as app_batch_collect lists them,
 * each file's variants in expansion order.  Owns its cases and keys. */
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
 *   args    nargs case files or folders, as for app_batch_collect.
 *   images  1 if the cases will write pictures (enters every hash).
 *   out     receives the plan (free with app_batch_plan_free); NULL on error.
 * Returns EDDY_OK; EDDY_ERR_INPUT for the errors of app_batch_collect, and
 * when two cases have the same name or a case is named like a file of the
 * batch folder (batch.json, summary.csv, ...): the message names both files;
 * EDDY_ERR_NOMEM.
 */
eddy_status app_batch_plan_build(int nargs, const char *const *args, int images,
                                 app_batch_plan **out, eddy_error *err);

/* Free a plan and everything it owns; accepts NULL. */
void app_batch_plan_free(app_batch_plan *p);

/*
 * Write the plan: create outdir, write OUT/<case>/case.json for every valid
 * case whose file differs (first removing that case's input.hash, so a
 * changed input is never taken as finished) and OUT/batch.json.  Files whose
 * content is unchanged are not touched.
 * Returns EDDY_OK, EDDY_ERR_IO (a folder or file cannot be written, a path
 * is too long), EDDY_ERR_NOMEM.
 */
eddy_status app_batch_plan_save(const app_batch_plan *p, const char *outdir, eddy_error *err);

/*
 * Read OUT/batch.json and every case.json it names (what a Slurm array task
 * does).
 *   out  receives a plan owned by the caller (free with
 *        app_batch_plan_free); NULL on error.
 * Returns EDDY_OK; EDDY_ERR_INPUT when the plan is missing, damaged,
 * written by another tool version, or a case.json no longer matches its
 * hash; EDDY_ERR_IO when a case.json cannot be read; EDDY_ERR_NOMEM.
 */
eddy_status app_batch_plan_load(const char *outdir, app_batch_plan **out, eddy_error *err);

/* ------------------------------------------------------------------------ */
/* One case on disk (app_batch_case.c)                                       */
/* ------------------------------------------------------------------------ */

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
 * differs (not for an invalid case).  Other files are left alone.
 * Returns EDDY_OK or EDDY_ERR_IO.
 */
eddy_status app_batch_case_prepare(const char *outdir, const app_batch_case *c,
                                   eddy_error *err);

/*
 * Solve OUT/<case>/case.json into OUT/<case>/ with app_run_solve.  Meant
 * for a child process.
 *   images      1: write the pictures.
 *   threads     speeds solved at once, as app_run_opts.threads (0: cores).
 *   max_memory  bytes the case may use, as app_run_opts.max_memory (0:
 *               eddy_memory_limit(0)).
 * Returns what app_run_solve returns (c->error_status, or EDDY_ERR_INPUT,
 * with c->error for an invalid case; EDDY_ERR_IO for a path too long).
 */
eddy_status app_batch_case_solve(const char *outdir, const app_batch_case *c, int images,
                                 int threads, double max_memory, eddy_error *err);

/*
 * Record a finished case: check that result.json is whole (a non-empty
 * "points" array, each point with speed, drag_force, force_y and loss, and
 * the notice), remove error.json, and write input.hash
 * ("fnv1a64 <hash>\nseconds <s>\n") atomically.
 *   seconds  wall time of the run, s (recorded as 0 if not finite).
 * Returns EDDY_OK; EDDY_ERR_IO (result.json missing or incomplete, or a
 * write failed); the errors of eddy_read_file reading result.json.
 */
eddy_status app_batch_case_done(const char *outdir, const app_batch_case *c, double seconds,
                                eddy_error *err);

/*
 * Record a failed case: remove input.hash and write OUT/<case>/error.json
 * {case, source, status, message, seconds, hash, tool} atomically (creating
 * the folder).
 *   state    APP_CASE_INVALID, _FAILED, _TIMEOUT or _CRASHED (others are
 *            recorded as "failed").
 *   message  the reason; NULL: "".
 *   seconds  wall time, s; NAN: none (null in the file).
 * Returns EDDY_OK, EDDY_ERR_IO or EDDY_ERR_NOMEM.
 */
eddy_status app_batch_case_failed(const char *outdir, const app_batch_case *c,
                                  app_case_state state, const char *message, double seconds,
                                  eddy_error *err);

/* ------------------------------------------------------------------------ */
/* Summary (app_batch_summary.c)                                             */
/* ------------------------------------------------------------------------ */

/* Counts over the cases of a summary (failed: invalid, failed, timeout and
 * crashed together). */
typedef struct {
    int cases, ok, failed, not_run;
} app_batch_counts;

/*
 * Write OUT/summary.csv, summary.json and summary.html from the case folders
 * (the state of each case as app_batch_case_state decides it; a planned
 * invalid case not yet recorded counts as invalid), creating outdir.  One
 * row per case and speed (one row with empty numbers for a case without
 * result): case, source, one column per variant path, speed (m/s), drag and
 * normal force (N/m), loss (W/m), the case's peak drag (N/m) and its speed
 * (m/s) from design_peak, status, error, seconds.  The HTML page is
 * self-contained apart from the plots, which it links relatively
 * (<case>/forces.png): a table of the cases, the plots side by side, and a
 * table of every speed; it needs no script.
 *   counts  optional (may be NULL); receives the counts.
 * Returns EDDY_OK, EDDY_ERR_IO or EDDY_ERR_NOMEM.
 */
eddy_status app_batch_write_summary(const char *outdir, const app_batch_plan *p,
                                    app_batch_counts *counts, eddy_error *err);

/* ------------------------------------------------------------------------ */
/* Slurm scripts (app_batch_slurm.c)                                         */
/* ------------------------------------------------------------------------ */

/* Options of the Slurm scripts.  The caller owns every string and array. */
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
 * --dependency=afterany on it.  The three are executable.  Task logs go to
 * OUT/slurm/ (created).
 * Returns EDDY_OK, EDDY_ERR_INPUT (relative paths, no task, tasks not
 * increasing indices of the plan, cpus_per_task outside 1..4096, an extra
 * option not one line starting with '-'), EDDY_ERR_IO, EDDY_ERR_NOMEM.
 */
eddy_status app_batch_write_slurm(const char *outdir, const app_batch_plan *p,
                                  const app_batch_slurm_opts *o, eddy_error *err);

#endif
