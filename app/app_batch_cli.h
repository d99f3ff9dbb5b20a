/*
 * app_batch_cli.h - the command line of `eddy2d batch`.  PRIVATE to the
 * command-line files of app/ (CLI_SRC in the Makefile: app_main.c,
 * app_batch_cli.c, app_batch_runner.c), which are linked into the eddy2d
 * program only, not into libeddy2d.a.  Unlike the library, this code
 * prints (progress and messages on stderr) and forks.
 *
 * app_batch_cli.c parses the arguments, plans or loads the batch, locks the
 * folder, submits to Slurm and chooses the exit status; the runner
 * (app_batch_runner.c) solves the cases, each in a child process, N at a
 * time, with a time limit, and shows the progress.
 */
#ifndef EDDY_APP_BATCH_CLI_H
#define EDDY_APP_BATCH_CLI_H

#include "app/app_batch.h"

/*
 * `eddy2d batch ARGS...` (argv holds the arguments after "batch").
 * Returns the exit status: 0 every case ok; 1 some case failed or did not
 * run (or the Slurm submission failed); 2 bad command line or unusable
 * inputs.
 */
int app_batch_main(int argc, char **argv);

/* Cases at once at most (-j). */
#define APP_BATCH_MAX_JOBS 256
#define APP_BATCH_MAX_JOBS_TEXT "256"

/* One running case (app_batch_runner.c). */
typedef struct app_batch_slot app_batch_slot;

/*
 * The runner of a batch's cases and its counts.  app_batch_runner_init
 * sets every field; the caller may then change jobs, threads and total.
 */
typedef struct {
    const char *outdir;         /* the batch folder */
    const app_batch_plan *p;
    int jobs;                   /* cases at once, 1..APP_BATCH_MAX_JOBS (1) */
    int threads;                /* speeds at once within a case (0: the cores) */
    double timeout;             /* s per case; 0: none */
    double max_memory;          /* bytes for the whole batch, shared by the jobs
                                 * cases at once; 0: eddy_memory_limit(0) */
    int quiet;                  /* 1: only errors */
    int tty;                    /* 1: a progress line on stderr, 0: a log line per case */
    int total;                  /* cases counted in the progress ([k/total]) */
    int finished, ok, skipped, failed, ran; /* counts: ended, ok (with skipped),
                                 * up to date, failed, run in a child */
    /* private to the runner */
    double t0, last_draw;
    int line_shown;
    app_batch_slot *slots;      /* APP_BATCH_MAX_JOBS, or NULL before _open */
} app_batch_runner;

/* Set up a runner for plan p in outdir (no allocation); t0 is now. */
void app_batch_runner_init(app_batch_runner *r, const char *outdir, const app_batch_plan *p,
                           int quiet, double timeout, double max_memory);

/* Allocate the runner's slots: 0, or -1 if out of memory. */
int app_batch_runner_open(app_batch_runner *r);

/* Free the slots; accepts a runner never opened. */
void app_batch_runner_free(app_batch_runner *r);

/* Count case idx as up to date, skipped (and ok), and report it. */
void app_batch_runner_up_to_date(app_batch_runner *r, int idx);

/* Record case idx as failed (app_batch_case_failed: error.json), count it
 * and report it; st and msg say why, sec its time (NAN: none). */
void app_batch_runner_failed(app_batch_runner *r, int idx, app_case_state st, const char *msg,
                             double sec);

/* Solve the ntodo cases listed in todo, r->jobs at a time, each in a
 * child process, and record each one's end. */
void app_batch_runner_run(app_batch_runner *r, const int *todo, int ntodo);

#endif
