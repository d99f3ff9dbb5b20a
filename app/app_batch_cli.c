/*
 * app_batch_cli.c - the command line of `eddy2d batch` (app/app_batch_cli.h):
 * argument parsing, planning or loading the batch, the folder lock, the
 * resume decision, Slurm submission, and the exit status.  The cases run in
 * app/app_batch_runner.c; the library side (planning, resume decisions,
 * status files, summaries, Slurm scripts) is app/app_batch.h.
 *
 * Exit status: 0 every case ok; 1 some case failed or did not run (or the
 * Slurm submission failed); 2 bad command line or unusable inputs.
 */
#include "app/app_batch_cli.h"

#include <errno.h>
#include <fcntl.h>
#include <limits.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/types.h>
#include <sys/wait.h>
#include <unistd.h>

#include "app/app.h"

typedef struct {
    const char **inputs;
    int ninput;
    const char *outdir;
    int jobs;           /* cases at once; 0: the machine's cores */
    int threads;        /* per case; 0: cores / jobs */
    double timeout;     /* s per case; 0: none */
    double max_memory;  /* bytes for the whole batch (--max-memory); 0: eddy_memory_limit(0) */
    int images;
    int slurm, dry_run;
    const char **slurm_opts;
    int nslurm_opt;
    long run_one;       /* -1: not a Slurm task */
    int summary_only;
    int quiet;
} batch_args;

static void batch_usage(FILE *out)
{
    fprintf(
        out,
        "usage:\n"
        "  eddy2d batch DIR_OR_CASE... -o OUTDIR [-j N] [--threads T] [--case-timeout S]\n"
        "               [--max-memory G] [--no-images] [-q]\n"
        "  eddy2d batch DIR_OR_CASE... -o OUTDIR --slurm [--dry-run] [--slurm-option OPT]...\n"
        "  eddy2d batch --run-one INDEX -o OUTDIR [--case-timeout S] [--threads T]\n"
        "  eddy2d batch --summary-only -o OUTDIR\n"
        "\n"
        "Solves every case file given and every *.json in each folder given (not in\n"
        "sub-folders), expanding each case's \"variants\" into one case per combination,\n"
        "each into OUTDIR/<case>/ (case.json, result.json, forces.csv, pictures), and writes\n"
        "OUTDIR/summary.csv, summary.json and summary.html.  Run again, it skips every case\n"
        "whose results are complete for the same input and tool version, and redoes the rest.\n"
        "\n"
        "options:\n"
        "  -o OUTDIR           batch folder (required)\n"
        "  -j N                cases at once (default: the number of cores)\n"
        "  --threads T         speeds solved at once within a case (default: cores / N)\n"
        "  --case-timeout S    stop a case after S seconds and record it as failed\n"
        "  --max-memory G      memory for the whole batch in GiB, shared by the cases that\n"
        "                      run at once (default: half the memory available)\n"
        "  --no-images         no pictures (the summary page then shows no plots)\n"
        "  -q                  quiet: only errors\n"
        "  --slurm             write OUTDIR/batch.sbatch (a job array, one task per case to\n"
        "                      run), summary.sbatch and submit.sh, and submit them with sbatch\n"
        "  --dry-run           with --slurm: write the scripts, do not submit\n"
        "  --slurm-option OPT  with --slurm: add \"#SBATCH OPT\" (e.g. --partition=short)\n"
        "  --run-one INDEX     solve case INDEX (0-based) of the plan in OUTDIR (what an\n"
        "                      array task runs)\n"
        "  --summary-only      write the summary of OUTDIR from its case folders\n"
        "\n"
        "exit status: 0 every case ok, 1 a case failed or did not run, 2 bad command line\n");
}

static int bad_usage(const char *fmt, const char *arg)
{
    fprintf(stderr, "eddy2d: error: ");
    fprintf(stderr, fmt, arg);
    fprintf(stderr, " (try eddy2d batch --help)\n");
    return 2;
}

/* A whole-string integer in [lo, hi]. */
static int parse_long(const char *s, long lo, long hi, long *out)
{
    char *end = NULL;
    errno = 0;
    long v = strtol(s, &end, 10);
    if (errno != 0 || end == s || *end != '\0' || v < lo || v > hi)
        return -1;
    *out = v;
    return 0;
}

/* The options must make one mode: a batch (local or --slurm), --run-one or
 * --summary-only.  0, or 2 after a message. */
static int check_modes(const batch_args *a)
{
    if (a->outdir == NULL)
        return bad_usage("%sbatch needs an output folder: -o OUTDIR", "");
    int modes = (a->run_one >= 0) + a->summary_only + a->slurm;
    if (modes > 1)
        return bad_usage("%s--slurm, --run-one and --summary-only exclude each other", "");
    if (a->dry_run && !a->slurm)
        return bad_usage("%s--dry-run only goes with --slurm", "");
    if (a->nslurm_opt > 0 && !a->slurm)
        return bad_usage("%s--slurm-option only goes with --slurm", "");
    if ((a->run_one >= 0 || a->summary_only) && a->ninput > 0)
        return bad_usage("--run-one and --summary-only read the plan in OUTDIR; drop \"%s\"",
                         a->inputs[0]);
    if (a->run_one < 0 && !a->summary_only && a->ninput == 0)
        return bad_usage("%sbatch needs case files or folders", "");
    return 0;
}

/* The arguments into *a (which the caller frees with args_free, also on
 * error): 0; -1 after --help; 2 after a message on a bad command line. */
static int parse_args(int argc, char **argv, batch_args *a)
{
    memset(a, 0, sizeof *a);
    a->images = 1;
    a->run_one = -1;
    a->inputs = calloc((size_t)argc + 1, sizeof *a->inputs);
    a->slurm_opts = calloc((size_t)argc + 1, sizeof *a->slurm_opts);
    if (a->inputs == NULL || a->slurm_opts == NULL) {
        fprintf(stderr, "eddy2d: error: out of memory\n");
        return 2;
    }
    for (int k = 0; k < argc; k++) {
        const char *o = argv[k];
        const char *val = k + 1 < argc ? argv[k + 1] : NULL;
        long n = 0;
        if (strcmp(o, "--help") == 0 || strcmp(o, "-h") == 0) {
            batch_usage(stdout);
            return -1;
        } else if (strcmp(o, "-o") == 0) {
            if (val == NULL || val[0] == '\0')
                return bad_usage("%s needs a folder", o);
            a->outdir = val;
            k++;
        } else if (strcmp(o, "-j") == 0) {
            if (val == NULL || parse_long(val, 1, APP_BATCH_MAX_JOBS, &n) != 0)
                return bad_usage("-j needs a number of cases from 1 to " APP_BATCH_MAX_JOBS_TEXT
                                 ", got \"%s\"", val != NULL ? val : "");
            a->jobs = (int)n;
            k++;
        } else if (strcmp(o, "--threads") == 0) {
            if (val == NULL || parse_long(val, 1, 4096, &n) != 0)
                return bad_usage("--threads needs a number from 1 to 4096, got \"%s\"",
                                 val != NULL ? val : "");
            a->threads = (int)n;
            k++;
        } else if (strcmp(o, "--case-timeout") == 0) {
            char *end = NULL;
            double t = val != NULL ? strtod(val, &end) : NAN;
            if (val == NULL || end == val || *end != '\0' || !(t > 0) || t > 1e7)
                return bad_usage("--case-timeout needs seconds > 0, got \"%s\"",
                                 val != NULL ? val : "");
            a->timeout = t;
            k++;
        } else if (strcmp(o, "--max-memory") == 0) {
            char *end = NULL;
            double gib = val != NULL ? strtod(val, &end) : NAN;
            if (val == NULL || end == val || *end != '\0' || !(gib > 0) || !isfinite(gib))
                return bad_usage("--max-memory needs a size in GiB, e.g. 4, got \"%s\"",
                                 val != NULL ? val : "");
            a->max_memory = gib * 1073741824.0;
            k++;
        } else if (strcmp(o, "--no-images") == 0) {
            a->images = 0;
        } else if (strcmp(o, "-q") == 0) {
            a->quiet = 1;
        } else if (strcmp(o, "--slurm") == 0) {
            a->slurm = 1;
        } else if (strcmp(o, "--dry-run") == 0) {
            a->dry_run = 1;
        } else if (strcmp(o, "--slurm-option") == 0) {
            if (val == NULL || val[0] != '-' || strpbrk(val, "\r\n") != NULL)
                return bad_usage("--slurm-option needs one sbatch option such as "
                                 "--partition=short, got \"%s\"", val != NULL ? val : "");
            a->slurm_opts[a->nslurm_opt++] = val;
            k++;
        } else if (strcmp(o, "--run-one") == 0) {
            if (val == NULL || parse_long(val, 0, INT_MAX - 1, &n) != 0)
                return bad_usage("--run-one needs a case index >= 0, got \"%s\"",
                                 val != NULL ? val : "");
            a->run_one = n;
            k++;
        } else if (strcmp(o, "--summary-only") == 0) {
            a->summary_only = 1;
        } else if (o[0] == '-' && o[1] != '\0') {
            return bad_usage("unknown or incomplete option \"%s\"", o);
        } else {
            a->inputs[a->ninput++] = o;
        }
    }
    return check_modes(a);
}

static void args_free(batch_args *a)
{
    free(a->inputs);
    free(a->slurm_opts);
}

static int cores(void)
{
    long n = sysconf(_SC_NPROCESSORS_ONLN);
    return n > 0 && n < 65536 ? (int)n : 1;
}

/* Take the advisory lock OUTDIR/.lock (fcntl: not inherited by the case
 * processes, released when this process ends).  The descriptor, or -1 if
 * another process holds it. */
static int lock_folder(const char *outdir)
{
    int fd = -1;
    if (eddy_lock_dir(outdir, &fd, NULL) != EDDY_OK)
        return -1;
    return fd < 0 ? -2 : fd; /* -2: cannot lock (read-only folder?): go on without */
}

/* Absolute path of the running program, for the Slurm scripts. */
static int self_path(char *out, size_t size)
{
    ssize_t n = readlink("/proc/self/exe", out, size - 1);
    if (n <= 0 || (size_t)n >= size - 1)
        return -1;
    out[n] = '\0';
    return 0;
}

/* dir as an absolute path (the current folder prefixed to a relative one). */
static int absolute(const char *dir, char *out, size_t size)
{
    if (dir[0] == '/') {
        if (strlen(dir) >= size)
            return -1;
        snprintf(out, size, "%s", dir);
    } else {
        char cwd[PATH_MAX];
        if (getcwd(cwd, sizeof cwd) == NULL)
            return -1;
        int n = snprintf(out, size, "%s/%s", strcmp(cwd, "/") == 0 ? "" : cwd, dir);
        if (n < 0 || (size_t)n >= size)
            return -1;
    }
    size_t n = strlen(out); /* no trailing slashes */
    while (n > 1 && out[n - 1] == '/')
        out[--n] = '\0';
    return 0;
}

static void print_warnings(const app_batch_plan *p)
{
    const char *last_src = NULL, *last_w = NULL;
    for (int k = 0; k < p->ncase; k++) {
        const app_batch_case *c = &p->cases[k];
        if (c->warnings == NULL)
            continue;
        if (last_src != NULL && strcmp(last_src, c->source) == 0 &&
            strcmp(last_w, c->warnings) == 0)
            continue; /* the same remark for every variant of a file: once */
        last_src = c->source;
        last_w = c->warnings;
        const char *s = c->warnings;
        while (*s != '\0') {
            const char *e = strchr(s, '\n');
            int len = e != NULL ? (int)(e - s) : (int)strlen(s);
            fprintf(stderr, "eddy2d: warning: %.*s\n", len, s);
            s += len + (e != NULL);
        }
    }
}

static int finish_summary(const batch_args *a, const app_batch_plan *p, int ran, int skipped)
{
    eddy_error err = {0};
    app_batch_counts n;
    if (app_batch_write_summary(a->outdir, p, &n, &err) != EDDY_OK) {
        fprintf(stderr, "eddy2d: error: summary: %s\n", err.msg);
        return 1;
    }
    if (!a->quiet) {
        printf("batch: %d cases: %d ok", n.cases, n.ok);
        if (skipped > 0 || ran > 0)
            printf(" (%d solved now, %d up to date)", ran, skipped);
        printf(", %d failed, %d not run\n", n.failed, n.not_run);
        printf("summary: %s/summary.html (also summary.csv, summary.json)\n", a->outdir);
        printf("note: %s\n", app_safety_notice());
    }
    return n.failed > 0 || n.not_run > 0 ? 1 : 0;
}

static int submit(const char *outdir)
{
    char script[4200];
    snprintf(script, sizeof script, "%s/submit.sh", outdir);
    fflush(NULL);
    pid_t pid = fork();
    if (pid < 0) {
        fprintf(stderr, "eddy2d: error: cannot start sh: %s\n", strerror(errno));
        return 1;
    }
    if (pid == 0) {
        execl("/bin/sh", "sh", script, (char *)NULL);
        _exit(127);
    }
    int wst = 0;
    while (waitpid(pid, &wst, 0) < 0 && errno == EINTR)
        ;
    if (!WIFEXITED(wst) || WEXITSTATUS(wst) != 0) {
        fprintf(stderr, "eddy2d: error: submitting with sbatch failed (%s); the scripts are in "
                        "%s/, submit them with: sh %s\n",
                WIFEXITED(wst) ? "sbatch or sh returned an error" : "killed", outdir, script);
        return 1;
    }
    return 0;
}

static int run_slurm(const batch_args *a, const app_batch_plan *p, app_batch_runner *r)
{
    eddy_error err = {0};
    char absdir[PATH_MAX], exe[PATH_MAX];
    if (absolute(a->outdir, absdir, sizeof absdir) != 0) {
        fprintf(stderr, "eddy2d: error: %s: cannot make an absolute path: %s\n", a->outdir,
                strerror(errno));
        return 1;
    }
    if (self_path(exe, sizeof exe) != 0) {
        fprintf(stderr, "eddy2d: error: cannot find the path of this program for the Slurm "
                        "scripts\n");
        return 1;
    }
    int *todo = malloc((size_t)(p->ncase > 0 ? p->ncase : 1) * sizeof *todo);
    if (todo == NULL) {
        fprintf(stderr, "eddy2d: error: out of memory\n");
        return 1;
    }
    int ntodo = 0, skipped = 0;
    for (int k = 0; k < p->ncase; k++) {
        app_case_state st = app_batch_case_state(a->outdir, &p->cases[k]);
        if (st == APP_CASE_OK)
            skipped++;
        else if (p->cases[k].invalid) {
            if (st != APP_CASE_INVALID)
                app_batch_runner_failed(r, k, APP_CASE_INVALID, p->cases[k].error, NAN);
        } else
            todo[ntodo++] = k;
    }
    if (ntodo == 0) {
        free(todo);
        if (!a->quiet)
            printf("batch: nothing to submit: every case is up to date or invalid\n");
        return finish_summary(a, p, 0, skipped);
    }
    app_batch_slurm_opts so;
    app_batch_slurm_opts_defaults(&so);
    so.exe = exe;
    so.ntask = ntodo;
    so.tasks = todo;
    so.cpus_per_task = a->threads > 0 ? a->threads : 1;
    so.case_timeout = a->timeout;
    so.nextra = a->nslurm_opt;
    so.extra = a->slurm_opts;
    eddy_status s = app_batch_write_slurm(absdir, p, &so, &err);
    free(todo);
    if (s != EDDY_OK) {
        fprintf(stderr, "eddy2d: error: %s\n", err.msg);
        return eddy_exit_code(s);
    }
    /* a summary now, so the folder reads sensibly before the jobs run */
    app_batch_write_summary(a->outdir, p, NULL, &err);
    if (!a->quiet)
        printf("batch: %d of %d cases to run under Slurm (%d up to date); wrote %s/batch.sbatch, "
               "summary.sbatch and submit.sh\n",
               ntodo, p->ncase, skipped, absdir);
    if (a->dry_run) {
        if (!a->quiet)
            printf("dry run: submit with: sh %s/submit.sh\n", absdir);
        return 0;
    }
    return submit(absdir);
}

/* The plan: loaded from OUTDIR for --run-one and --summary-only, else built
 * from the inputs.  0, or the exit status after a message. */
static int get_plan(const batch_args *a, app_batch_plan **p)
{
    eddy_error err = {0};
    eddy_status s;
    if (a->run_one >= 0 || a->summary_only)
        s = app_batch_plan_load(a->outdir, p, &err);
    else
        s = app_batch_plan_build(a->ninput, a->inputs, a->images, p, &err);
    if (s != EDDY_OK) {
        fprintf(stderr, "eddy2d: error: %s\n", err.msg[0] ? err.msg : eddy_strerror(s));
        return s == EDDY_ERR_NOMEM ? 1 : 2;
    }
    if (a->run_one >= (*p)->ncase) {
        fprintf(stderr, "eddy2d: error: --run-one %ld: the plan in %s has %d cases (0 to %d)\n",
                a->run_one, a->outdir, (*p)->ncase, (*p)->ncase - 1);
        return 2;
    }
    return 0;
}

/* Make OUTDIR, take its lock (*lock_fd) and save the plan in it.  One
 * batch at a time in a folder (the lock is released when this process
 * ends, even by SIGKILL); array tasks work on different cases and take no
 * lock.  0, or the exit status after a message. */
static int take_folder(const batch_args *a, const app_batch_plan *p, int *lock_fd)
{
    eddy_error err = {0};
    eddy_status s = eddy_make_dir(a->outdir, &err);
    if (s != EDDY_OK) { /* the folder named by -o is unusable */
        fprintf(stderr, "eddy2d: error: %s\n", err.msg);
        return 2;
    }
    if ((*lock_fd = lock_folder(a->outdir)) == -1) {
        fprintf(stderr, "eddy2d: error: %s: another batch is running in this folder\n",
                a->outdir);
        return 2;
    }
    s = app_batch_plan_save(p, a->outdir, &err);
    if (s != EDDY_OK) {
        fprintf(stderr, "eddy2d: error: %s\n", err.msg);
        return 1;
    }
    return 0;
}

/* N cases at once (-j, else the cores; at most the cases to solve), each
 * with its share of the cores (--threads, else an array task's
 * SLURM_CPUS_PER_TASK, else cores / N). */
static void choose_shares(const batch_args *a, app_batch_runner *r, int ntodo)
{
    int ncore = cores();
    r->jobs = a->jobs > 0 ? a->jobs : ncore;
    if (r->jobs > ntodo)
        r->jobs = ntodo > 0 ? ntodo : 1;
    if (r->jobs > APP_BATCH_MAX_JOBS)
        r->jobs = APP_BATCH_MAX_JOBS;
    if (a->threads > 0) {
        r->threads = a->threads;
    } else if (a->run_one >= 0 && getenv("SLURM_CPUS_PER_TASK") != NULL) {
        long n = 0;
        r->threads = parse_long(getenv("SLURM_CPUS_PER_TASK"), 1, 4096, &n) == 0 ? (int)n : 1;
    } else {
        r->threads = ncore / r->jobs > 0 ? ncore / r->jobs : 1;
    }
}

/* Solve here the cases not up to date (all of the plan, or the one of
 * --run-one), then write the summary (not for --run-one).  The exit
 * status. */
static int run_local(const batch_args *a, const app_batch_plan *p, app_batch_runner *r)
{
    /* the resume decision for every case */
    int *todo = malloc((size_t)(p->ncase > 0 ? p->ncase : 1) * sizeof *todo);
    if (todo == NULL) {
        fprintf(stderr, "eddy2d: error: out of memory\n");
        return 1;
    }
    int first = a->run_one >= 0 ? (int)a->run_one : 0;
    int last = a->run_one >= 0 ? (int)a->run_one + 1 : p->ncase;
    int ntodo = 0;
    r->total = last - first;
    for (int k = first; k < last; k++) {
        int done = app_batch_case_state(a->outdir, &p->cases[k]) == APP_CASE_OK;
        if (!done && !p->cases[k].invalid)
            todo[ntodo++] = k;
    }
    choose_shares(a, r, ntodo);
    if (!a->quiet && !r->tty && a->run_one < 0)
        fprintf(stderr, "eddy2d batch: %d cases, %d to solve, %d at a time, %d thread%s each\n",
                p->ncase, ntodo, r->jobs, r->threads, r->threads == 1 ? "" : "s");
    for (int k = first; k < last; k++) {
        if (app_batch_case_state(a->outdir, &p->cases[k]) == APP_CASE_OK)
            app_batch_runner_up_to_date(r, k);
        else if (p->cases[k].invalid)
            app_batch_runner_failed(r, k, APP_CASE_INVALID, p->cases[k].error, NAN);
    }
    app_batch_runner_run(r, todo, ntodo);
    free(todo);
    if (a->run_one >= 0)
        return r->failed > 0 ? 1 : 0;
    return finish_summary(a, p, r->ran, r->skipped);
}

/* Everything after the plan, by mode: the summary alone; or (a batch: in
 * a locked folder with the plan saved) the cases under Slurm or here.
 * The exit status. */
static int run_plan(const batch_args *a, app_batch_plan *p, app_batch_runner *r, int *lock_fd)
{
    if (a->summary_only)
        return finish_summary(a, p, 0, 0);
    if (a->run_one < 0) {
        int rc = take_folder(a, p, lock_fd);
        if (rc != 0)
            return rc;
    }
    if (app_batch_runner_open(r) != 0) {
        fprintf(stderr, "eddy2d: error: out of memory\n");
        return 1;
    }
    if (a->slurm) {
        r->total = p->ncase;
        return run_slurm(a, p, r);
    }
    return run_local(a, p, r);
}

int app_batch_main(int argc, char **argv)
{
    batch_args a;
    int rc = parse_args(argc, argv, &a);
    if (rc != 0) {
        args_free(&a);
        return rc < 0 ? 0 : rc;
    }
    app_batch_plan *p = NULL;
    rc = get_plan(&a, &p);
    if (rc != 0) {
        app_batch_plan_free(p);
        args_free(&a);
        return rc;
    }
    if (!a.quiet && a.run_one < 0 && !a.summary_only)
        print_warnings(p);
    int lock_fd = -1;
    app_batch_runner r;
    app_batch_runner_init(&r, a.outdir, p, a.quiet, a.timeout, a.max_memory);
    rc = run_plan(&a, p, &r, &lock_fd);
    if (lock_fd >= 0)
        close(lock_fd);
    app_batch_runner_free(&r);
    app_batch_plan_free(p);
    args_free(&a);
    return rc;
}
