/*
 * check.h - the tiny test harness shared by every test program.
 *
 * Each check prints one line "PASS name" or "FAIL name: detail" on stdout
 * ("SKIP name: why" for one that cannot run here).
 * A test program ends with `return check_summary();`, which prints
 * "#counts <passed> <failed>" (read by tests/run.sh to build the final
 * "N passed, N failed" line) and returns the number of failures (capped at
 * 100) as the exit status.
 *
 * Tolerances are named at the top of each test file, next to the published
 * source of the reference value.
 */
#ifndef EDDY_CHECK_H
#define EDDY_CHECK_H

#include <math.h>
#include <stdarg.h>
#include <stdio.h>

static int check_passed_, check_failed_;

/* Record one check: ok != 0 passes.  fmt describes the measured figures. */
static inline int check(int ok, const char *name, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 3, 4)))
#endif
    ;
static inline int check(int ok, const char *name, const char *fmt, ...)
{
    va_list ap;
    printf("%s %s", ok ? "PASS" : "FAIL", name);
    if (fmt != NULL && fmt[0] != '\0') {
        printf(": ");
        va_start(ap, fmt);
        vprintf(fmt, ap);
        va_end(ap);
    }
    printf("\n");
    fflush(stdout);
    if (ok)
        check_passed_++;
    else
        check_failed_++;
    return ok;
}

/* |got - want| <= rel_tol * |want| (plus an absolute floor abs_tol). */
static inline int check_close(const char *name, double got, double want, double rel_tol,
                              double abs_tol)
{
    double diff = fabs(got - want);
    int ok = isfinite(got) && diff <= rel_tol * fabs(want) + abs_tol;
    double rel = want != 0.0 ? diff / fabs(want) : diff;
    return check(ok, name, "got %.9g want %.9g rel.err %.3g (tol %.3g)", got, want, rel, rel_tol);
}

/* A check that cannot run here (a missing tool, say): one line "SKIP name:
 * why", counted by tests/run.sh in its final line, neither passed nor failed. */
static inline void check_skip(const char *name, const char *why)
{
    printf("SKIP %s: %s\n", name, why);
    fflush(stdout);
}

static inline int check_summary(void)
{
    printf("#counts %d %d\n", check_passed_, check_failed_);
    return check_failed_ > 100 ? 100 : check_failed_;
}

#endif
