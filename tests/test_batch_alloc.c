/*
 * test_batch_alloc.c - allocation failures: make the N-th allocation fail,
 * for N = 1, 2, 3, ... until a run needs no more, over
 *   (a) a small solve with every output on (app_run_solve: pictures, VTK
 *       field files, line profiles, result.json, forces.csv), and
 *   (b) the batch library (plan, case files, status files, summaries),
 * and check that each failure comes back as a clean status with a message,
 * that nothing allocated is left (every block our code allocated is freed),
 * and that no temporary file is left behind.  Fault injection by countdown
 * is common practice for testing error paths (e.g. SQLite's "malloc
 * failure" tests).
 *
 * How: linked with -Wl,--wrap=malloc,--wrap=calloc,--wrap=realloc,--wrap=free
 * (see the Makefile), so every allocation made from the project's own object
 * files goes through the counters below; cJSON (through cJSON_InitHooks) and
 * UMFPACK (through SuiteSparse_config) are pointed at the same counters.
 * Allocations made inside other shared libraries (cairo, libpng, libc) are
 * not seen: their failure paths are not driven here.
 *
 * Under `make sanitize` the same program runs with AddressSanitizer and
 * LeakSanitizer on, which check the same thing independently.
 */
#include <cJSON.h>
#include <dirent.h>
#include <pthread.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "SuiteSparse_config.h"
#include "mesh/mesh.h"
#include "app/app.h"
#include "app/app_batch.h"
#include "tests/check.h"

/* ------------------------------------------------------------------------ */
/* The counting allocator                                                    */
/* ------------------------------------------------------------------------ */

void *__real_malloc(size_t size);
void *__real_calloc(size_t n, size_t size);
void *__real_realloc(void *p, size_t size);
void __real_free(void *p);
void *__wrap_malloc(size_t size);
void *__wrap_calloc(size_t n, size_t size);
void *__wrap_realloc(void *p, size_t size);
void __wrap_free(void *p);

#define LIVE_SLOTS (1u << 21) /* open-addressing set of live blocks */
static void **live;
static long nlive, nalloc;
static long countdown = -1;  /* fail the allocation at which this reaches 0; -1: never */
static int injected;         /* an allocation was made to fail in this run */
static pthread_mutex_t lock = PTHREAD_MUTEX_INITIALIZER;

static size_t slot_of(const void *p)
{
    uintptr_t h = (uintptr_t)p;
    h ^= h >> 17;
    h *= 0x9e3779b97f4a7c15ULL;
    return (size_t)(h >> 11) & (LIVE_SLOTS - 1);
}

static void live_add(void *p)
{
    if (p == NULL || live == NULL)
        return;
    size_t k = slot_of(p);
    while (live[k] != NULL && live[k] != (void *)1)
        k = (k + 1) & (LIVE_SLOTS - 1);
    live[k] = p;
    nlive++;
}

/* Remove p; 1 if it was ours. */
static int live_remove(void *p)
{
    if (p == NULL || live == NULL)
        return 0;
    size_t k = slot_of(p);
    while (live[k] != NULL) {
        if (live[k] == p) {
            live[k] = (void *)1; /* tombstone */
            nlive--;
            return 1;
        }
        k = (k + 1) & (LIVE_SLOTS - 1);
    }
    return 0;
}

/* 1 if this allocation is to fail. */
static int tick(void)
{
    nalloc++;
    if (countdown > 0 && --countdown == 0) {
        injected = 1;
        return 1;
    }
    return 0;
}

void *__wrap_malloc(size_t size)
{
    pthread_mutex_lock(&lock);
    void *p = tick() ? NULL : __real_malloc(size);
    live_add(p);
    pthread_mutex_unlock(&lock);
    return p;
}

void *__wrap_calloc(size_t n, size_t size)
{
    pthread_mutex_lock(&lock);
    void *p = tick() ? NULL : __real_calloc(n, size);
    live_add(p);
    pthread_mutex_unlock(&lock);
    return p;
}

void *__wrap_realloc(void *old, size_t size)
{
    pthread_mutex_lock(&lock);
    void *p = NULL;
    if (!tick()) {
        p = __real_realloc(old, size);
        if (p != NULL || size == 0) {
            live_remove(old);
            live_add(p);
        }
    }
    pthread_mutex_unlock(&lock);
    return p;
}

void __wrap_free(void *p)
{
    pthread_mutex_lock(&lock);
    live_remove(p);
    __real_free(p);
    pthread_mutex_unlock(&lock);
}

/* Forget every block (after a leak was reported, so the next run starts clean). */
static void live_reset(void)
{
    pthread_mutex_lock(&lock);
    memset(live, 0, LIVE_SLOTS * sizeof *live);
    nlive = 0;
    pthread_mutex_unlock(&lock);
}

static void arm(long n)
{
    pthread_mutex_lock(&lock);
    countdown = n;
    injected = 0;
    nalloc = 0;
    pthread_mutex_unlock(&lock);
}

/* ------------------------------------------------------------------------ */
/* Helpers                                                                   */
/* ------------------------------------------------------------------------ */

static char tmp[256];

static void write_text(const char *path, const char *text)
{
    FILE *f = fopen(path, "wb");
    if (f != NULL) {
        fputs(text, f);
        fclose(f);
    }
}

/* Remove every file in dir and its sub-folders (one level deep is enough). */
static void clear_dir(const char *dir, int depth)
{
    DIR *d = opendir(dir);
    if (d == NULL)
        return;
    struct dirent *e;
    char path[1024];
    while ((e = readdir(d)) != NULL) {
        if (strcmp(e->d_name, ".") == 0 || strcmp(e->d_name, "..") == 0)
            continue;
        snprintf(path, sizeof path, "%s/%s", dir, e->d_name);
        struct stat st;
        if (lstat(path, &st) == 0 && S_ISDIR(st.st_mode)) {
            if (depth > 0)
                clear_dir(path, depth - 1);
            rmdir(path);
        } else {
            unlink(path);
        }
    }
    closedir(d);
}

/* Number of temporary files (*.tmp, *.tmp.*) in dir and one level below. */
static int count_tmp(const char *dir, int depth)
{
    DIR *d = opendir(dir);
    if (d == NULL)
        return 0;
    int n = 0;
    struct dirent *e;
    char path[1024];
    while ((e = readdir(d)) != NULL) {
        if (strcmp(e->d_name, ".") == 0 || strcmp(e->d_name, "..") == 0)
            continue;
        size_t len = strlen(e->d_name);
        if (strstr(e->d_name, ".tmp.") != NULL ||
            (len > 4 && strcmp(e->d_name + len - 4, ".tmp") == 0))
            n++;
        snprintf(path, sizeof path, "%s/%s", dir, e->d_name);
        struct stat st;
        if (depth > 0 && lstat(path, &st) == 0 && S_ISDIR(st.st_mode))
            n += count_tmp(path, depth - 1);
    }
    closedir(d);
    return n;
}

static void *cj_malloc(size_t n)
{
    return __wrap_malloc(n);
}

static void cj_free(void *p)
{
    __wrap_free(p);
}

/* Statistics of one sweep over N. */
typedef struct {
    long runs;            /* runs with an injected failure */
    long clean;           /* ... that returned an error status with a message */
    long recovered;       /* ... that still returned EDDY_OK with complete outputs */
    long nomem;           /* error status EDDY_ERR_NOMEM */
    long leaks;           /* runs that left blocks allocated */
    long tmp_left;        /* runs that left a temporary file */
    long bad;             /* runs that returned EDDY_OK without complete outputs */
    long partial;         /* runs that returned EDDY_OK with a result.json cut short */
    long first_leak_n;
    long leaked_blocks;
    long total_allocs;    /* allocations of a run that succeeds */
} sweep;

static void account(sweep *sw, long n, eddy_status s, const eddy_error *err, int complete,
                    int tmp_files)
{
    sw->runs++;
    if (s != EDDY_OK && err->msg[0] != '\0')
        sw->clean++;
    if (s == EDDY_ERR_NOMEM)
        sw->nomem++;
    if (s == EDDY_OK) {
        if (complete == 1)
            sw->recovered++;
        else if (complete == 2)
            sw->partial++;
        else
            sw->bad++;
    }
    if (s != EDDY_OK && err->msg[0] == '\0')
        printf("# N=%ld: status %d (%s) without a message\n", n, (int)s, eddy_strerror(s));
    if (nlive != 0) {
        if (sw->leaks == 0) {
            sw->first_leak_n = n;
            sw->leaked_blocks = nlive;
            printf("# N=%ld: %ld blocks left allocated after a failure (%s)\n", n, nlive,
                   err->msg);
        }
        sw->leaks++;
        live_reset();
    }
    if (tmp_files > 0) {
        if (sw->tmp_left == 0)
            printf("# N=%ld: %d temporary files left (%s)\n", n, tmp_files, err->msg);
        sw->tmp_left++;
    }
}

static void report(const char *what, const sweep *sw)
{
    char name[200];
    snprintf(name, sizeof name, "%s: every failed allocation gives a clean status", what);
    /* a run that returns EDDY_OK must leave complete outputs: a result.json
     * cut short by a failed allocation (partial) is a failure */
    check(sw->runs > 0 && sw->clean + sw->recovered == sw->runs && sw->bad == 0 &&
              sw->partial == 0,
          name,
          "N = 1..%ld: %ld errors with a message (%ld EDDY_ERR_NOMEM), %ld recovered, %ld bad, "
          "%ld with a result.json cut short",
          sw->runs, sw->clean, sw->nomem, sw->recovered, sw->bad, sw->partial);
    snprintf(name, sizeof name, "%s: nothing leaked after any failure", what);
    if (sw->leaks == 0)
        check(1, name, "0 of %ld runs leaked", sw->runs);
    else
        check(0, name, "%ld of %ld runs leaked (first at N=%ld: %ld blocks)", sw->leaks, sw->runs,
              sw->first_leak_n, sw->leaked_blocks);
    snprintf(name, sizeof name, "%s: no temporary file left after any failure", what);
    check(sw->tmp_left == 0, name, "%ld runs left one", sw->tmp_left);
}

/* ------------------------------------------------------------------------ */
/* (a) the solve                                                             */
/* ------------------------------------------------------------------------ */

static const char *CASE =
    "{\"name\":\"alloc\",\"length_unit\":\"mm\","
    "\"domain\":{\"x\":[0,40],\"y\":[-40,40],\"x_boundary\":\"periodic\"},"
    "\"regions\":[{\"name\":\"plate\",\"material\":\"copper_annealed\",\"box\":[0,-4,40,0],"
    "\"moving\":true},"
    "{\"name\":\"n\",\"material\":\"ndfeb_35\",\"box\":[1,3,19,9],\"magnetization_angle\":90},"
    "{\"name\":\"s\",\"material\":\"ndfeb_35\",\"box\":[21,3,39,9],\"magnetization_angle\":-90}],"
    "\"speeds\":[5],\"mesh\":{\"max_size\":8,\"growth\":1.5},"
    "\"profiles\":[{\"name\":\"probe\",\"from\":[0,1],\"to\":[40,1],\"points\":21}],"
    "\"unknown_key\":1}";

static int count_of(const char *text, const char *key)
{
    int n = 0;
    for (const char *q = text; (q = strstr(q, key)) != NULL; q++)
        n++;
    return n;
}

static eddy_status solve_once(const char *casefile, const char *outdir, int threads,
                              eddy_error *err, int *complete)
{
    app_run_opts o;
    app_run_opts_defaults(&o);
    o.outdir = outdir;
    o.images = 1;
    o.vtk = 1;
    o.threads = threads;
    app_report *r = NULL;
    memset(err, 0, sizeof *err);
    eddy_status s = app_run_solve(casefile, &o, &r, err);
    app_report_free(r);
    char path[600];
    struct stat st;
    snprintf(path, sizeof path, "%s/result.json", outdir);
    *complete = stat(path, &st) == 0;
    snprintf(path, sizeof path, "%s/forces.csv", outdir);
    *complete = *complete && stat(path, &st) == 0;
    /* is result.json whole: one point, each with its forces, and the notice? */
    if (*complete) {
        snprintf(path, sizeof path, "%s/result.json", outdir);
        FILE *f = fopen(path, "rb");
        char *text = f != NULL ? __real_calloc(1, (size_t)st.st_size + 65536) : NULL;
        if (text != NULL && f != NULL)
            (void)!fread(text, 1, (size_t)st.st_size + 65535, f);
        if (f != NULL)
            fclose(f);
        /* "force_x" opens a point, "flops" (in its solver_info) ends it */
        if (text == NULL || count_of(text, "\"force_x\":") != 1 ||
            count_of(text, "\"flops\":") != 1 || count_of(text, "\"notice\":") != 1)
            *complete = 2; /* files there, content cut short */
        __real_free(text);
    }
    return s;
}

/* threads 1: everything in sequence; 2: the static field and the error
 * estimate on a second thread beside the speed (app_run.c, side work), whose
 * allocations interleave with the main thread's, so the N-th allocation is
 * not the same one in every run: each run still fails one allocation. */
static void test_solve(int threads)
{
    char casefile[512], outdir[512];
    snprintf(casefile, sizeof casefile, "%s/alloc.json", tmp);
    snprintf(outdir, sizeof outdir, "%s/solve", tmp);
    write_text(casefile, CASE);
    eddy_error err;
    int complete = 0;
    arm(-1);
    eddy_status s = solve_once(casefile, outdir, threads, &err, &complete);
    long total = nalloc;
    char name[160];
    snprintf(name, sizeof name, "alloc: the small solve succeeds and frees all (%d thread%s)",
             threads, threads > 1 ? "s" : "");
    check(s == EDDY_OK && complete && nlive == 0, name, "%ld allocations, %ld left, %s", total,
          nlive, err.msg);
    if (s != EDDY_OK)
        return;
    sweep sw = {0};
    sw.total_allocs = total;
    for (long n = 1; n <= total + 1; n++) {
        clear_dir(outdir, 0);
        arm(n);
        s = solve_once(casefile, outdir, threads, &err, &complete);
        int hit = injected;
        arm(-1);
        if (!hit) { /* the run needed fewer than n allocations: done */
            check(s == EDDY_OK && complete, "alloc: the solve succeeds once no allocation fails",
                  "after N = %ld (%d thread%s)", n - 1, threads, threads > 1 ? "s" : "");
            break;
        }
        account(&sw, n, s, &err, complete, count_tmp(outdir, 0));
    }
    report(threads > 1 ? "alloc: solve with pictures, VTK and profiles, static field and estimate "
                         "beside the speed"
                       : "alloc: solve with pictures, VTK and profiles",
           &sw);
}

/* ------------------------------------------------------------------------ */
/* (b) the batch library                                                     */
/* ------------------------------------------------------------------------ */

/* Plan, save, record a result and a failure, write the summary and the Slurm
 * scripts.  The "result" is a stand-in result.json (no solve here). */
static eddy_status batch_once(const char *indir, const char *outdir, eddy_error *err,
                              int *complete)
{
    memset(err, 0, sizeof *err);
    *complete = 0;
    const char *args[1] = {indir};
    app_batch_plan *p = NULL;
    eddy_status s = app_batch_plan_build(1, args, 1, &p, err);
    if (s == EDDY_OK)
        s = app_batch_plan_save(p, outdir, err);
    if (s == EDDY_OK)
        s = app_batch_case_prepare(outdir, &p->cases[1], err);
    if (s == EDDY_OK) {
        char path[800];
        snprintf(path, sizeof path, "%s/%s/result.json", outdir, p->cases[1].name);
        s = eddy_write_atomic(path, "{\"points\":[{\"speed\":1,\"drag_force\":2,\"force_y\":1,"
                                    "\"loss\":2},{\"speed\":3,\"drag_force\":3,\"force_y\":1,"
                                    "\"loss\":9}],\"notice\":\"n\"}",
                              strlen("{\"points\":[{\"speed\":1,\"drag_force\":2,\"force_y\":1,"
                                     "\"loss\":2},{\"speed\":3,\"drag_force\":3,\"force_y\":1,"
                                     "\"loss\":9}],\"notice\":\"n\"}"),
                              err);
    }
    if (s == EDDY_OK)
        s = app_batch_case_done(outdir, &p->cases[1], 1.5, err);
    if (s == EDDY_OK)
        s = app_batch_case_failed(outdir, &p->cases[0], APP_CASE_INVALID, p->cases[0].error,
                                   0.0, err);
    if (s == EDDY_OK)
        s = app_batch_write_summary(outdir, p, NULL, err);
    if (s == EDDY_OK) {
        int tasks[1] = {2};
        app_batch_slurm_opts so;
        app_batch_slurm_opts_defaults(&so);
        so.exe = "/usr/bin/eddy2d";
        so.ntask = 1;
        so.tasks = tasks;
        s = app_batch_write_slurm(outdir, p, &so, err);
    }
    app_batch_plan_free(p);
    app_batch_plan *q = NULL;
    if (s == EDDY_OK)
        s = app_batch_plan_load(outdir, &q, err);
    app_batch_plan_free(q);
    char path[800];
    struct stat st;
    snprintf(path, sizeof path, "%s/summary.html", outdir);
    *complete = s == EDDY_OK && stat(path, &st) == 0;
    return s;
}

static void test_batch(void)
{
    char indir[512], outdir[512], path[700];
    snprintf(indir, sizeof indir, "%s/in", tmp);
    snprintf(outdir, sizeof outdir, "%s/batch", tmp);
    mkdir(indir, 0777);
    snprintf(path, sizeof path, "%s/a_bad.json", indir);
    write_text(path, "{\"name\":\"bad\",\"speeds\":[]}");
    snprintf(path, sizeof path, "%s/b.json", indir);
    write_text(path,
               "{\"name\":\"b\",\"domain\":{\"x\":[0,1],\"y\":[-1,1],\"x_boundary\":\"periodic\"},"
               "\"regions\":[{\"name\":\"p\",\"material\":\"copper_annealed\",\"box\":[0,-0.1,1,0],"
               "\"moving\":true},{\"name\":\"c\",\"box\":[0.2,0.1,0.3,0.2],\"current\":100}],"
               "\"speeds\":[1,3],\"variants\":{\"regions.c.current\":[100,200],"
               "\"regions.p.material\":[\"copper_annealed\",\"aluminium_6061_t6\"]}}");
    eddy_error err;
    int complete = 0;
    arm(-1);
    eddy_status s = batch_once(indir, outdir, &err, &complete);
    long total = nalloc;
    check(s == EDDY_OK && complete && nlive == 0,
          "alloc: the batch library run succeeds and frees all", "%ld allocations, %ld left, %s",
          total, nlive, err.msg);
    if (s != EDDY_OK)
        return;
    sweep sw = {0};
    for (long n = 1; n <= total + 1; n++) {
        clear_dir(outdir, 1);
        arm(n);
        s = batch_once(indir, outdir, &err, &complete);
        int hit = injected;
        arm(-1);
        if (!hit) {
            check(s == EDDY_OK && complete, "alloc: the batch library succeeds once no allocation "
                  "fails", "after N = %ld", n - 1);
            break;
        }
        account(&sw, n, s, &err, complete, count_tmp(outdir, 1));
    }
    report("alloc: batch plan, status files, summary, Slurm scripts", &sw);
}

int main(void)
{
    live = __real_calloc(LIVE_SLOTS, sizeof *live);
    if (live == NULL) {
        printf("FAIL alloc: setup: no memory for the block table\n");
        return 1;
    }
    cJSON_Hooks hooks = {cj_malloc, cj_free};
    cJSON_InitHooks(&hooks);
#if SUITESPARSE_MAIN_VERSION < 7
    SuiteSparse_config.malloc_func = __wrap_malloc;
    SuiteSparse_config.calloc_func = __wrap_calloc;
    SuiteSparse_config.realloc_func = __wrap_realloc;
    SuiteSparse_config.free_func = __wrap_free;
#else
    SuiteSparse_config_malloc_func_set(__wrap_malloc);
    SuiteSparse_config_calloc_func_set(__wrap_calloc);
    SuiteSparse_config_realloc_func_set(__wrap_realloc);
    SuiteSparse_config_free_func_set(__wrap_free);
#endif
    snprintf(tmp, sizeof tmp, "/tmp/eddy2d_test_alloc_XXXXXX");
    if (mkdtemp(tmp) == NULL) {
        printf("FAIL alloc: setup: cannot create a temporary folder\n");
        return 1;
    }
    test_batch();
    test_solve(1);
    test_solve(2);
    char cmd[400];
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", tmp);
    if (system(cmd) != 0)
        printf("# could not remove %s\n", tmp);
    __real_free(live);
    return check_summary();
}
