/*
 * sol_umf.c - the sparse LU solve with UMFPACK: control parameters, the
 * fill-reducing orderings and the symbolic analysis (once per system, with
 * its memory estimate and guard), numeric factorisation and solve (once per
 * speed, on the caller's workspace), Matrix Market export, the BLAS under
 * UMFPACK, and the one translation of UMFPACK's status codes.
 */
#define _GNU_SOURCE /* RTLD_DEFAULT */
#include "solver/sol_int.h"

#include <dlfcn.h>
#include <limits.h>
#include <pthread.h>

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <amd.h>

eddy_status sol_umf_status(long st, const char *what, eddy_error *err)
{
    switch (st) {
    case UMFPACK_OK:
        return EDDY_OK;
    case UMFPACK_WARNING_singular_matrix:
        return EDDY_RAISE(err, EDDY_ERR_SINGULAR,
                          "%s: the system matrix is singular (is every part of the domain "
                          "connected to a zero boundary?)", what);
    case UMFPACK_WARNING_determinant_underflow:
    case UMFPACK_WARNING_determinant_overflow:
        return EDDY_OK; /* only the determinant, which is not used */
    case UMFPACK_ERROR_out_of_memory:
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "%s: UMFPACK ran out of memory", what);
    default:
        return EDDY_RAISE(err, EDDY_ERR_SOLVER, "%s: UMFPACK failed with status %ld", what, st);
    }
}

void sol_umf_defaults(sol_system *s)
{
    umfpack_dl_defaults(s->control);
    s->control[UMFPACK_STRATEGY] = UMFPACK_STRATEGY_SYMMETRIC;
    /* Initial size of the numeric factorisation's variable part, in Units
     * (16 bytes in the dl version, Info[UMFPACK_SIZE_OF_UNIT]): with a given
     * or METIS ordering UMFPACK would start from 0.7 of its worst-case
     * estimate (27 GiB for 0.78M unknowns, which a sanitizer or a machine
     * without overcommit refuses).  This first value, about the typical fill
     * of these matrices, holds until the analysis (sol_analyse) sets it from
     * its own fill estimate (alloc_init_from_fill). */
    s->control[UMFPACK_ALLOC_INIT] = -(double)s->n * 2.5 * log2((double)s->n + 2.0);
}

/* The numeric factorisation's initial space from the analysis's fill
 * estimate s->est_lu (after estimate_memory).  UMFPACK keeps the LU factors
 * at the head of one block and the frontal matrices and contribution blocks
 * at its tail: a block much larger than the peak leaves both ends touched
 * with an untouched middle, so the resident set grows by the head's and the
 * tail's largest extent, not by their largest sum.  The variable part's
 * peak measured 0.44-0.46 Units per estimated LU entry (make bench case,
 * 56k / 0.23M / 1.06M unknowns, 2026-12-05); 0.5 leaves room, and a block
 * found too small grows by 1.2 (Info[UMFPACK_NUMERIC_REALLOC]).  At 1.06M
 * unknowns the factorisation's resident set grew by 1140 MiB instead of
 * 1251 MiB (with about 4 times the peak as the first size), page faults fell
 * from 331k to 303k and the first factorisation of the process took 3.5 s
 * instead of 4.6-5.1 s (bare LU at 20 m/s, one BLAS thread, 2026-12-05). */
static void alloc_init_from_fill(sol_system *s)
{
    s->control[UMFPACK_ALLOC_INIT] = -0.5 * s->est_lu;
}

/* ------------------------------------------------------------------------ */
/* Concurrent factorisations and the BLAS underneath UMFPACK                 */
/* ------------------------------------------------------------------------ */

/* UMFPACK calls the system's BLAS, whichever library the libblas.so.3 of
 * the machine is (Debian's alternatives, or LD_LIBRARY_PATH).  The library
 * is found at run time as the one that defines dgemm_ (dladdr), and asked
 * by its own exported symbols, without linking to it:
 *   - OpenBLAS (openblas_get_config): a threaded ("pthread") build is safe
 *     for concurrent callers and takes openblas_set_num_threads; a
 *     sequential ("serial") build is not safe for concurrent callers
 *     (measured here: two speeds factorised at once on Debian's
 *     libopenblas0-serial 0.3.21 gave node values off by 22 %, and drag
 *     values off by up to 1.6 % in an earlier run);
 *   - BLIS (bli_info_get_version_str), ATLAS (ATL_xerbla) and the reference
 *     BLAS: reentrant, no threads of their own here (Debian's BLIS reads
 *     BLIS_NUM_THREADS, default 1). */
typedef int (*blas_get_fn)(void);
typedef void (*blas_set_fn)(int);
typedef const char *(*blas_str_fn)(void);

static struct {
    pthread_once_t once;
    void *handle;           /* the library of dgemm_, or RTLD_DEFAULT */
    char path[PATH_MAX];    /* its file, resolved ("" if not found) */
    blas_set_fn set_threads;
    blas_get_fn get_threads, get_parallel;
    blas_str_fn config, blis_version;
    int atlas;
} blas = {.once = PTHREAD_ONCE_INIT};

/* A symbol of h or its dependencies (NULL if absent); the callers memcpy
 * it into a function pointer (C has no conversion from void *). */
static void *blas_sym(void *h, const char *name) { return dlsym(h, name); }

static void blas_find(void)
{
    blas.handle = RTLD_DEFAULT;
    void *dgemm = dlsym(RTLD_DEFAULT, "dgemm_");
    Dl_info dl;
    if (dgemm != NULL && dladdr(dgemm, &dl) != 0 && dl.dli_fname != NULL) {
        if (realpath(dl.dli_fname, blas.path) == NULL)
            snprintf(blas.path, sizeof blas.path, "%s", dl.dli_fname);
        /* already loaded: a reference to it, kept for the process's life */
        void *h = dlopen(dl.dli_fname, RTLD_LAZY | RTLD_NOLOAD);
        if (h != NULL)
            blas.handle = h;
    }
    void *p;
    p = blas_sym(blas.handle, "openblas_set_num_threads");
    memcpy(&blas.set_threads, &p, sizeof p);
    p = blas_sym(blas.handle, "openblas_get_num_threads");
    memcpy(&blas.get_threads, &p, sizeof p);
    p = blas_sym(blas.handle, "openblas_get_parallel");
    memcpy(&blas.get_parallel, &p, sizeof p);
    p = blas_sym(blas.handle, "openblas_get_config");
    memcpy(&blas.config, &p, sizeof p);
    p = blas_sym(blas.handle, "bli_info_get_version_str");
    memcpy(&blas.blis_version, &p, sizeof p);
    blas.atlas = blas_sym(blas.handle, "ATL_xerbla") != NULL;
}

static void blas_init(void) { pthread_once(&blas.once, blas_find); }

int sol_concurrency_safe(void)
{
    blas_init();
    if (blas.get_parallel == NULL)
        return 1;                     /* not OpenBLAS */
    return blas.get_parallel() != 0; /* 0: sequential build */
}

void sol_blas_threads(int n)
{
    blas_init();
    if (blas.set_threads != NULL && n >= 1)
        blas.set_threads(n);
}

int sol_blas_get_threads(void)
{
    blas_init();
    if (blas.get_threads == NULL || blas.get_parallel == NULL || blas.get_parallel() == 0)
        return 1;
    int n = blas.get_threads();
    return n >= 1 ? n : 1;
}

int sol_blas_threaded(void)
{
    blas_init();
    return blas.set_threads != NULL && blas.get_parallel != NULL && blas.get_parallel() != 0;
}

void sol_blas_name(char *buf, size_t size)
{
    blas_init();
    if (buf == NULL || size == 0)
        return;
    const char *file = blas.path[0] != '\0' ? blas.path : "not found";
    if (blas.config != NULL)
        snprintf(buf, size, "%s (%s)", blas.config(), file);
    else if (blas.blis_version != NULL)
        snprintf(buf, size, "BLIS %s (%s)", blas.blis_version(), file);
    else if (blas.atlas)
        snprintf(buf, size, "ATLAS (%s)", file);
    else if (strstr(file, "/blas/libblas") != NULL)
        snprintf(buf, size, "reference BLAS (%s)", file);
    else
        snprintf(buf, size, "BLAS (%s)", file);
}

/* ------------------------------------------------------------------------ */
/* Orderings and the symbolic analysis                                       */
/* ------------------------------------------------------------------------ */

const char *sol_ordering_name(sol_ordering o)
{
    switch (o) {
    case SOL_ORDER_AMD: return "amd";
    case SOL_ORDER_METIS: return "metis";
    case SOL_ORDER_GRID_ND: return "grid-nd";
    case SOL_ORDER_COLAMD: return "colamd";
    }
    return "unknown";
}

void sol_set_ordering(sol_system *s, sol_ordering o)
{
    if (s->symbolic != NULL)
        umfpack_dl_free_symbolic(&s->symbolic);
    s->ordering = o;
}

void sol_set_memory_limit(sol_system *s, double bytes) { s->memory_limit = bytes; }

/* UMFPACK's symbolic factorisation in s's ordering: its status into *st,
 * its statistics into uinfo.  Returns EDDY_OK, or EDDY_ERR_NOMEM when the
 * given ordering cannot be allocated (no factorisation then). */
static eddy_status symbolic(sol_system *s, double *uinfo, long *st, eddy_error *err)
{
    /* COLAMD is UMFPACK's ordering of the unsymmetric strategy */
    s->control[UMFPACK_STRATEGY] = s->ordering == SOL_ORDER_COLAMD ? UMFPACK_STRATEGY_UNSYMMETRIC
                                                                   : UMFPACK_STRATEGY_SYMMETRIC;
    if (s->ordering == SOL_ORDER_GRID_ND) {
        long *perm = malloc((size_t)s->n * sizeof *perm);
        if (perm == NULL)
            return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory for the ordering");
        eddy_status es = sol_grid_nd_order(s, perm, err);
        if (es != EDDY_OK) {
            free(perm);
            return es;
        }
        s->control[UMFPACK_ORDERING] = UMFPACK_ORDERING_GIVEN;
        *st = umfpack_dl_qsymbolic(s->n, s->n, s->Ap, s->Ai, NULL, perm, &s->symbolic,
                                   s->control, uinfo);
        free(perm);
    } else {
        s->control[UMFPACK_ORDERING] =
            s->ordering == SOL_ORDER_METIS ? UMFPACK_ORDERING_METIS : UMFPACK_ORDERING_AMD;
        *st = umfpack_dl_symbolic(s->n, s->n, s->Ap, s->Ai, NULL, &s->symbolic, s->control,
                                  uinfo);
    }
    return EDDY_OK;
}

/* Memory of one numeric factorisation into s->est_lu, s->est_peak_bytes
 * (and s->est_flops), from the symbolic statistics uinfo. */
static void estimate_memory(sol_system *s, const double *uinfo)
{
    /* The L and U entries the symbolic analysis predicts for diagonal
     * pivoting (which the fitted scheme's M-matrix allows), at a value and
     * an index each, plus workspace.  UMFPACK's own peak estimate
     * (UMFPACK_PEAK_MEMORY_ESTIMATE) assumes worst-case pivoting: 64 GiB for
     * 0.83M unknowns whose measured peak was under 2 GiB, so it would refuse
     * every large mesh. */
    s->est_flops = uinfo[UMFPACK_FLOPS_ESTIMATE];
    s->est_lu = uinfo[UMFPACK_LNZ_ESTIMATE] + uinfo[UMFPACK_UNZ_ESTIMATE];
    s->est_peak_bytes = mesh_factor_bytes(s->est_lu, (double)s->n);
    /* UMFPACK's fill estimate is an upper bound that can be far off (5 GiB
     * for 0.15M unknowns): take the typical fill of these matrices where it
     * is smaller (mesh_factor_bytes) */
    double typical = mesh_factor_bytes(0.0, (double)s->n);
    if (typical < s->est_peak_bytes) {
        s->est_lu = (double)s->n * 5.0 * log2((double)s->n + 2.0);
        s->est_peak_bytes = typical;
    }
    if (s->memory_limit > 0 && s->est_peak_bytes > s->memory_limit) {
        /* a second opinion: the Cholesky fill of A + A' under AMD, which
         * the measured LU fill of these matrices tracks within 15 % (make
         * bench: 2.5e7 and 2.9e7 LU entries for AMD and grid-nd at 0.29M
         * unknowns) */
        long *perm = malloc((size_t)s->n * sizeof *perm);
        double ainfo[AMD_INFO];
        if (perm != NULL &&
            amd_l_order(s->n, s->Ap, s->Ai, perm, NULL, ainfo) >= AMD_OK) {
            s->est_lu = 2.0 * ainfo[AMD_LNZ] + (double)s->n;
            s->est_peak_bytes = mesh_factor_bytes(s->est_lu, (double)s->n);
        }
        free(perm);
    }
}

eddy_status sol_analyse(sol_system *s, sol_info *info, eddy_error *err)
{
    if (s->symbolic != NULL)
        return EDDY_OK;
    double t0 = eddy_now(), uinfo[UMFPACK_INFO];
    long st = UMFPACK_OK;
    eddy_status es = symbolic(s, uinfo, &st, err);
    if (es != EDDY_OK)
        return es;
    s->t_analyse = eddy_now() - t0;
    estimate_memory(s, uinfo);
    alloc_init_from_fill(s);
    if (info != NULL) {
        info->n = s->n;
        info->nnz = s->Ap[s->n];
        info->t_analyse = s->t_analyse;
        info->est_peak_bytes = s->est_peak_bytes;
        info->ordering = sol_ordering_name(s->ordering);
    }
    if (st != UMFPACK_OK) {
        s->symbolic = NULL;
        return sol_umf_status(st, "symbolic factorisation", err);
    }
    if (s->memory_limit > 0 && s->est_peak_bytes > s->memory_limit) {
        umfpack_dl_free_symbolic(&s->symbolic);
        return EDDY_RAISE(err, EDDY_ERR_TOO_LARGE,
                          "the factorisation of %ld unknowns would need about %.2f GiB (from "
                          "UMFPACK's fill estimate), more than the %.2f GiB allowed; coarsen the "
                          "mesh or raise the limit (--max-memory)",
                          s->n, s->est_peak_bytes / 1073741824.0, s->memory_limit / 1073741824.0);
    }
    return EDDY_OK;
}

double sol_factor_bytes(const sol_system *s) { return s != NULL ? s->est_peak_bytes : 0.0; }

/* ------------------------------------------------------------------------ */
/* Numeric factorisation and solve                                           */
/* ------------------------------------------------------------------------ */

eddy_status sol_umf_numeric(const sol_system *s, sol_work *w, void **numeric, const char *what,
                            sol_info *info, double *t_factor, eddy_error *err)
{
    double t1 = eddy_now(), uinfo[UMFPACK_INFO];
    *numeric = NULL;
    long ust = umfpack_dl_numeric(s->Ap, s->Ai, w->Ax, s->symbolic, numeric, s->control, uinfo);
    *t_factor = eddy_now() - t1;
    if (info != NULL) {
        info->lnz = uinfo[UMFPACK_LNZ];
        info->unz = uinfo[UMFPACK_UNZ];
        info->flops = uinfo[UMFPACK_FLOPS];
        info->rcond = uinfo[UMFPACK_RCOND];
        info->peak_bytes = uinfo[UMFPACK_PEAK_MEMORY] * uinfo[UMFPACK_SIZE_OF_UNIT];
    }
    eddy_status st = sol_umf_status(ust, what, err);
    if (st != EDDY_OK && *numeric != NULL)
        umfpack_dl_free_numeric(numeric);
    return st;
}

/* The normwise backward error ||b - A x|| / (||A|| ||x|| + ||b||) (infinity
 * norms) above which a solve takes a step of iterative refinement: about 45
 * units of roundoff.  UMFPACK's own refinement (UMFPACK_IRSTEP 2) costs two
 * more solves and a componentwise error at every solve: 0.133 s against
 * 0.031 s at 0.23M unknowns, for forces that moved by 1e-13 of the drag on
 * the demo cases (measured 2026-12-04). */
#define SOL_BACKWARD_TOL 1e-14

eddy_status sol_umf_solve(const sol_system *s, sol_work *w, void *numeric, const double *b,
                          double *x, const char *what, eddy_error *err)
{
    double control[UMFPACK_CONTROL], uinfo[UMFPACK_INFO];
    memcpy(control, s->control, sizeof control);
    control[UMFPACK_IRSTEP] = 0; /* wsolve then needs only n of W */
    long ust = umfpack_dl_wsolve(UMFPACK_A, s->Ap, s->Ai, w->Ax, x, b, numeric, control, uinfo,
                                 w->Wi, w->W);
    eddy_status st = sol_umf_status(ust, what, err);
    if (st != EDDY_OK)
        return st;
    long n = s->n;
    double *r = w->W + n, *rowsum = w->W + 2 * n; /* W holds 3n */
    for (long i = 0; i < n; i++) {
        r[i] = b[i];
        rowsum[i] = 0.0;
    }
    double xnorm = 0.0, bnorm = 0.0, anorm = 0.0, rnorm = 0.0;
    for (long c = 0; c < n; c++) {
        xnorm = fmax(xnorm, fabs(x[c]));
        for (long q = s->Ap[c]; q < s->Ap[c + 1]; q++) {
            r[s->Ai[q]] -= w->Ax[q] * x[c];
            rowsum[s->Ai[q]] += fabs(w->Ax[q]);
        }
    }
    for (long i = 0; i < n; i++) {
        bnorm = fmax(bnorm, fabs(b[i]));
        anorm = fmax(anorm, rowsum[i]);
        rnorm = fmax(rnorm, fabs(r[i]));
    }
    if (!(rnorm > SOL_BACKWARD_TOL * (anorm * xnorm + bnorm)))
        return EDDY_OK;
    double *dx = rowsum; /* one step: x += A^-1 r */
    ust = umfpack_dl_wsolve(UMFPACK_A, s->Ap, s->Ai, w->Ax, dx, r, numeric, control, uinfo, w->Wi,
                            w->W);
    st = sol_umf_status(ust, what, err);
    for (long i = 0; st == EDDY_OK && i < n; i++)
        x[i] += dx[i];
    return st;
}

eddy_status sol_umf_factor_solve(const sol_system *s, sol_work *w, const double *b, double *x,
                                 const char *what_factor, const char *what_solve,
                                 sol_info *info, double *t_factor, double *t_solve,
                                 eddy_error *err)
{
    void *numeric = NULL;
    eddy_status st = sol_umf_numeric(s, w, &numeric, what_factor, info, t_factor, err);
    double t2 = eddy_now();
    if (st == EDDY_OK)
        st = sol_umf_solve(s, w, numeric, b, x, what_solve, err);
    umfpack_dl_free_numeric(&numeric);
    *t_solve = eddy_now() - t2;
    return st;
}

/* The node values a (nx*ny) from the unknowns x: 0 on the fixed nodes. */
eddy_status sol_scatter_solution(const sol_system *s, const double *x, double *a,
                                 eddy_error *err)
{
    const mesh_grid *g = s->g;
    size_t nn = (size_t)g->nx * (size_t)g->ny;
    for (size_t k = 0; k < nn; k++) {
        long u = s->unk[k];
        a[k] = u >= 0 ? x[u] : 0.0;
        if (!isfinite(a[k]))
            return EDDY_RAISE(err, EDDY_ERR_NUMERIC, "the solution holds non-finite values");
    }
    return EDDY_OK;
}

void sol_fill_info(const sol_system *s, sol_info *info, int chol, double t_asm, double t_fac,
                   double t_sol)
{
    if (info == NULL)
        return;
    info->n = s->n;
    info->nnz = s->Ap[s->n];
    /* the Cholesky path reads none of the LU's fields: the LU may be being
     * analysed on another thread meanwhile (app/app_run.c, side work) */
    info->t_analyse = chol ? s->t_chol_analyse : s->t_analyse;
    info->t_assemble = t_asm;
    info->t_factor = t_fac;
    info->t_solve = t_sol;
    info->est_peak_bytes = chol ? s->chol_bytes : s->est_peak_bytes;
    info->ordering = sol_ordering_name(chol ? SOL_ORDER_GRID_ND : s->ordering);
    info->cholesky = chol;
}

eddy_status sol_solve_work(const sol_system *s, sol_work *w, double v, double *a,
                           sol_info *info, eddy_error *err)
{
    return sol_solve_work_nu(s, w, v, s->g->nu, a, info, err);
}

eddy_status sol_solve_work_nu(const sol_system *s, sol_work *w, double v, const double *nu,
                              double *a, sol_info *info, eddy_error *err)
{
    if (!isfinite(v))
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "speed must be finite");
    int chol = v == 0.0 && sol_uses_cholesky(s) && s->chol_symbolic != NULL;
    if (!chol && s->symbolic == NULL) /* (the Cholesky path reads no LU field) */
        return EDDY_RAISE(err, EDDY_ERR_INTERNAL, "sol_solve_work before sol_analyse");
    double t0 = eddy_now();
    sol_assemble(s, w, v, nu);
    double t_asm = eddy_now() - t0, t_fac = 0.0, t_sol = 0.0;
    eddy_status st = chol ? sol_chol_factor_solve(s, w, w->rhs, w->sol, info, &t_fac, &t_sol, err)
                          : sol_umf_factor_solve(s, w, w->rhs, w->sol, "numeric factorisation",
                                                 "solve", info, &t_fac, &t_sol, err);
    sol_fill_info(s, info, chol, t_asm, t_fac, t_sol);
    if (st != EDDY_OK)
        return st;
    return sol_scatter_solution(s, w->sol, a, err);
}

eddy_status sol_analyse_for_speed(sol_system *s, double v, sol_info *info, eddy_error *err)
{
    return v == 0.0 && sol_uses_cholesky(s) ? sol_analyse_static(s, info, err)
                                            : sol_analyse(s, info, err);
}

eddy_status sol_solve(sol_system *s, double v, double *a, sol_info *info, eddy_error *err)
{
    eddy_status st = sol_analyse_for_speed(s, v, info, err);
    if (st != EDDY_OK)
        return st;
    if (s->work == NULL) { /* the system's own workspace, on first use */
        st = sol_work_alloc(s, &s->work, err);
        if (st != EDDY_OK)
            return st;
    }
    return sol_solve_work(s, s->work, v, a, info, err);
}

/* ------------------------------------------------------------------------ */
/* Matrix Market export                                                      */
/* ------------------------------------------------------------------------ */

/* Write a CSC matrix or a vector in Matrix Market coordinate / array form. */
static eddy_status write_mm(const char *path, const sol_system *s, const sol_work *w, int matrix,
                            double v, eddy_error *err)
{
    FILE *f = fopen(path, "w");
    if (f == NULL)
        return EDDY_RAISE(err, EDDY_ERR_IO, "%s: cannot create", path);
    if (matrix) {
        fprintf(f, "%%%%MatrixMarket matrix coordinate real general\n"
                   "%% eddy2d %s system matrix at speed %.17g m/s (box integration, fitted "
                   "convection)\n%ld %ld %ld\n",
                EDDY_VERSION, v, s->n, s->n, s->Ap[s->n]);
        for (long c = 0; c < s->n; c++)
            for (long q = s->Ap[c]; q < s->Ap[c + 1]; q++)
                fprintf(f, "%ld %ld %.17g\n", s->Ai[q] + 1, c + 1, w->Ax[q]);
    } else {
        fprintf(f, "%%%%MatrixMarket matrix array real general\n"
                   "%% eddy2d %s right-hand side at speed %.17g m/s\n%ld 1\n",
                EDDY_VERSION, v, s->n);
        for (long r = 0; r < s->n; r++)
            fprintf(f, "%.17g\n", w->rhs[r]);
    }
    if (ferror(f) | (fclose(f) != 0))
        return EDDY_RAISE(err, EDDY_ERR_IO, "%s: write failed", path);
    return EDDY_OK;
}

eddy_status sol_export(const sol_system *s, double v, const char *matrix_path,
                       const char *rhs_path, eddy_error *err)
{
    sol_work *w = NULL;
    eddy_status st = sol_work_alloc(s, &w, err);
    if (st != EDDY_OK)
        return st;
    sol_assemble(s, w, v, s->g->nu);
    st = write_mm(matrix_path, s, w, 1, v, err);
    if (st == EDDY_OK)
        st = write_mm(rhs_path, s, w, 0, v, err);
    sol_work_free(w);
    return st;
}
