/*
 * app_batch_runner.c - the runner of `eddy2d batch` (part of the command
 * line, app/app_batch_cli.h): solves the cases, each in a child process, N
 * at a time, with a time limit, records each one's end, and shows a
 * progress line (on a terminal) or a log line per case.
 *
 * Why a child process per case: a crash, a runaway allocation or a hang in
 * one case must not lose the others.  The child only solves; the parent
 * writes the completion marker (input.hash) or error.json after the child
 * has ended, so a half-finished case is never taken as done.  On Linux the
 * child asks to be killed when the parent dies (PR_SET_PDEATHSIG), so a
 * batch killed with SIGKILL leaves no orphan writing into its folders.
 */
#include "app/app_batch_cli.h"

#include <errno.h>
#include <math.h>
#include <poll.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/types.h>
#include <sys/wait.h>
#include <unistd.h>
#if defined(__linux__)
#include <sys/prctl.h>
#endif

/* What a child sends back: fits in one atomic pipe write (< PIPE_BUF). */
typedef struct {
    int status;
    char msg[1024];
} child_msg;

/* One running case: its process, the pipe it answers on, its start. */
struct app_batch_slot {
    pid_t pid;
    int fd;            /* read end of the child's pipe; -1 if the slot is free */
    int idx;
    double start;
    int timed_out;
};

/* A duration of s seconds as "42s", "3m07s" or "1h05m". */
static void fmt_duration(double s, char *out, size_t size)
{
    long t = (long)(s + 0.5);
    if (t >= 3600)
        snprintf(out, size, "%ldh%02ldm", t / 3600, (t / 60) % 60);
    else if (t >= 60)
        snprintf(out, size, "%ldm%02lds", t / 60, t % 60);
    else
        snprintf(out, size, "%lds", t);
}

void app_batch_runner_init(app_batch_runner *r, const char *outdir, const app_batch_plan *p,
                           int quiet, double timeout, double max_memory)
{
    memset(r, 0, sizeof *r);
    r->outdir = outdir;
    r->p = p;
    r->jobs = 1;
    r->timeout = timeout;
    r->max_memory = max_memory;
    r->quiet = quiet;
    r->tty = isatty(STDERR_FILENO) && !quiet;
    r->t0 = eddy_now();
}

int app_batch_runner_open(app_batch_runner *r)
{
    r->slots = calloc(APP_BATCH_MAX_JOBS, sizeof *r->slots);
    if (r->slots == NULL)
        return -1;
    for (int k = 0; k < APP_BATCH_MAX_JOBS; k++)
        r->slots[k].fd = -1;
    return 0;
}

void app_batch_runner_free(app_batch_runner *r)
{
    free(r->slots);
    r->slots = NULL;
}

static void clear_line(app_batch_runner *r)
{
    if (r->tty && r->line_shown) {
        fprintf(stderr, "\r\033[K");
        r->line_shown = 0;
    }
}

static void draw_progress(app_batch_runner *r, int force)
{
    if (!r->tty || r->quiet)
        return;
    double t = eddy_now();
    if (!force && t - r->last_draw < 0.5)
        return;
    r->last_draw = t;
    int running = 0;
    for (int k = 0; k < r->jobs; k++)
        running += r->slots[k].fd >= 0;
    char el[32], rem[48] = "";
    fmt_duration(t - r->t0, el, sizeof el);
    int left = r->total - r->finished;
    if (r->ran > 0 && left > 0) {
        char d[32];
        fmt_duration((t - r->t0) / r->ran * left, d, sizeof d);
        snprintf(rem, sizeof rem, ", about %s left", d);
    }
    fprintf(stderr, "\r\033[K  batch [%d/%d] %d failed, %d running, %s elapsed%s", r->finished,
            r->total, r->failed, running, el, rem);
    fflush(stderr);
    r->line_shown = 1;
}

/* One finished case: a log line (always for failures, per case in log mode). */
static void report_case(app_batch_runner *r, int idx, const char *what, const char *msg,
                        double sec)
{
    r->finished++;
    if (r->quiet)
        return;
    const app_batch_case *c = &r->p->cases[idx];
    int failed = msg != NULL;
    if (r->tty && !failed) {
        draw_progress(r, 1);
        return;
    }
    clear_line(r);
    int w = r->total >= 1000 ? 4 : r->total >= 100 ? 3 : r->total >= 10 ? 2 : 1;
    if (failed)
        fprintf(stderr, "eddy2d batch: [%*d/%d] %s: %s: %s\n", w, r->finished, r->total,
                c->name, what, msg);
    else if (isfinite(sec))
        fprintf(stderr, "eddy2d batch: [%*d/%d] %s: %s in %.1f s\n", w, r->finished, r->total,
                c->name, what, sec);
    else
        fprintf(stderr, "eddy2d batch: [%*d/%d] %s: %s\n", w, r->finished, r->total, c->name,
                what);
    fflush(stderr);
    draw_progress(r, 1);
}

void app_batch_runner_up_to_date(app_batch_runner *r, int idx)
{
    r->skipped++;
    r->ok++;
    report_case(r, idx, "up to date, skipped", NULL, NAN);
}

void app_batch_runner_failed(app_batch_runner *r, int idx, app_case_state st, const char *msg,
                             double sec)
{
    eddy_error err = {0};
    const app_batch_case *c = &r->p->cases[idx];
    eddy_status s = app_batch_case_failed(r->outdir, c, st, msg, sec, &err);
    r->failed++;
    report_case(r, idx, app_case_state_name(st), msg, sec);
    if (s != EDDY_OK && !r->quiet)
        fprintf(stderr, "eddy2d: error: %s\n", err.msg);
}

/* Test hooks (fault injection, common practice for testing crash handling):
 * EDDY2D_TEST_FAULT="crash:<case>" aborts that case's process, "hang:<case>"
 * makes it wait forever.  Nothing else reads the variable. */
static void test_fault(const char *name)
{
    const char *f = getenv("EDDY2D_TEST_FAULT");
    if (f == NULL)
        return;
    if (strncmp(f, "crash:", 6) == 0 && strcmp(f + 6, name) == 0)
        abort();
    if (strncmp(f, "hang:", 5) == 0 && strcmp(f + 5, name) == 0)
        for (;;)
            pause();
}

static void child_main(app_batch_runner *r, int idx, int wfd, pid_t parent)
{
#if defined(__linux__)
    prctl(PR_SET_PDEATHSIG, SIGKILL);
#endif
    if (getppid() != parent) /* the parent died before the request took effect */
        _exit(3);
    for (int k = 0; k < r->jobs; k++)
        if (r->slots[k].fd >= 0)
            close(r->slots[k].fd);
    const app_batch_case *c = &r->p->cases[idx];
    test_fault(c->name);
    /* N cases share the machine: each may use its share of the memory */
    double memory = eddy_memory_limit(r->max_memory) / (r->jobs > 1 ? r->jobs : 1);
    eddy_error err = {0};
    eddy_status s =
        app_batch_case_solve(r->outdir, c, r->p->images, r->threads, memory, &err);
    child_msg m;
    memset(&m, 0, sizeof m);
    m.status = (int)s;
    snprintf(m.msg, sizeof m.msg, "%s", s == EDDY_OK ? "" : err.msg[0] ? err.msg
                                                                       : eddy_strerror(s));
    ssize_t w;
    do
        w = write(wfd, &m, sizeof m);
    while (w < 0 && errno == EINTR);
    close(wfd);
    /* exit (not _exit) so that the leak checker of a sanitizer build sees the child */
    exit(w == (ssize_t)sizeof m ? (s == EDDY_OK ? 0 : 1) : 4);
}

/* Start case idx in slot sl.  0 on success; -1 if it could not start (recorded). */
static int start_case(app_batch_runner *r, app_batch_slot *sl, int idx)
{
    eddy_error err = {0};
    const app_batch_case *c = &r->p->cases[idx];
    if (app_batch_case_prepare(r->outdir, c, &err) != EDDY_OK) {
        app_batch_runner_failed(r, idx, APP_CASE_FAILED, err.msg, NAN);
        return -1;
    }
    int fds[2];
    if (pipe(fds) != 0) {
        char msg[256];
        snprintf(msg, sizeof msg, "cannot create a pipe: %s", strerror(errno));
        app_batch_runner_failed(r, idx, APP_CASE_FAILED, msg, NAN);
        return -1;
    }
    fflush(NULL); /* nothing buffered may be written twice */
    pid_t parent = getpid();
    pid_t pid = fork();
    if (pid < 0) {
        char msg[256];
        snprintf(msg, sizeof msg, "cannot start a process: %s", strerror(errno));
        close(fds[0]);
        close(fds[1]);
        app_batch_runner_failed(r, idx, APP_CASE_FAILED, msg, NAN);
        return -1;
    }
    if (pid == 0) {
        close(fds[0]);
        child_main(r, idx, fds[1], parent);
    }
    close(fds[1]);
    sl->pid = pid;
    sl->fd = fds[0];
    sl->idx = idx;
    sl->start = eddy_now();
    sl->timed_out = 0;
    return 0;
}

/* The child of slot sl has closed its pipe: collect it and record the case. */
static void finish_case(app_batch_runner *r, app_batch_slot *sl)
{
    child_msg m;
    memset(&m, 0, sizeof m);
    size_t got = 0;
    while (got < sizeof m) {
        ssize_t n = read(sl->fd, (char *)&m + got, sizeof m - got);
        if (n < 0 && errno == EINTR)
            continue;
        if (n <= 0)
            break;
        got += (size_t)n;
    }
    close(sl->fd);
    sl->fd = -1;
    int wst = 0;
    while (waitpid(sl->pid, &wst, 0) < 0 && errno == EINTR)
        ;
    double sec = eddy_now() - sl->start;
    int idx = sl->idx;
    r->ran++;
    m.msg[sizeof m.msg - 1] = '\0';
    char msg[1200];
    if (sl->timed_out) {
        snprintf(msg, sizeof msg, "stopped after the case time limit of %g s", r->timeout);
        app_batch_runner_failed(r, idx, APP_CASE_TIMEOUT, msg, sec);
    } else if (WIFSIGNALED(wst)) {
        snprintf(msg, sizeof msg, "the case's process died of signal %d (%s)", WTERMSIG(wst),
                 strsignal(WTERMSIG(wst)));
        app_batch_runner_failed(r, idx, APP_CASE_CRASHED, msg, sec);
    } else if (got == sizeof m && m.status == EDDY_OK && WIFEXITED(wst) &&
               WEXITSTATUS(wst) == 0) {
        eddy_error err = {0};
        if (app_batch_case_done(r->outdir, &r->p->cases[idx], sec, &err) != EDDY_OK) {
            app_batch_runner_failed(r, idx, APP_CASE_FAILED, err.msg, sec);
        } else {
            r->ok++;
            report_case(r, idx, "ok", NULL, sec);
        }
    } else if (got == sizeof m && m.status != EDDY_OK) {
        eddy_status s = (eddy_status)m.status;
        int input = s == EDDY_ERR_INPUT || s == EDDY_ERR_TOO_LARGE;
        app_batch_runner_failed(r, idx, input ? APP_CASE_INVALID : APP_CASE_FAILED, m.msg, sec);
    } else {
        snprintf(msg, sizeof msg, "the case's process ended (exit status %d) without a result",
                 WIFEXITED(wst) ? WEXITSTATUS(wst) : -1);
        app_batch_runner_failed(r, idx, APP_CASE_FAILED, msg, sec);
    }
}

void app_batch_runner_run(app_batch_runner *r, const int *todo, int ntodo)
{
    int next = 0;
    for (;;) {
        int running = 0;
        for (int k = 0; k < r->jobs; k++) {
            app_batch_slot *sl = &r->slots[k];
            while (sl->fd < 0 && next < ntodo) {
                if (start_case(r, sl, todo[next++]) == 0)
                    break;
            }
            running += sl->fd >= 0;
        }
        if (running == 0 && next >= ntodo)
            break;
        draw_progress(r, 0);
        /* wait for a child to end, a deadline, or the next progress update */
        struct pollfd pf[APP_BATCH_MAX_JOBS];
        int map[APP_BATCH_MAX_JOBS], np = 0;
        double t = eddy_now(), wait_s = 0.5;
        for (int k = 0; k < r->jobs && np < APP_BATCH_MAX_JOBS; k++) {
            app_batch_slot *sl = &r->slots[k];
            if (sl->fd < 0)
                continue;
            pf[np].fd = sl->fd;
            pf[np].events = POLLIN;
            pf[np].revents = 0;
            map[np++] = k;
            if (r->timeout > 0 && !sl->timed_out) {
                double left = sl->start + r->timeout - t;
                if (left <= 0) {
                    kill(sl->pid, SIGKILL);
                    sl->timed_out = 1;
                } else if (left < wait_s) {
                    wait_s = left;
                }
            }
        }
        int ms = (int)ceil(wait_s * 1000.0);
        int n = poll(pf, (nfds_t)np, ms < 1 ? 1 : ms);
        if (n < 0 && errno != EINTR)
            n = 0;
        for (int q = 0; n > 0 && q < np; q++)
            if (pf[q].revents != 0)
                finish_case(r, &r->slots[map[q]]);
    }
    clear_line(r);
}

