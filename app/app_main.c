/*
 * app_main.c - the eddy2d command-line front end: the only place that prints to
 * the user or chooses an exit status.  It calls the three modules in turn:
 * mesh (case -> grid), solver (grid -> A per speed), post (A -> forces,
 * reports).
 *
 * Exit status: 0 success, 2 invalid input (or a mesh too large), 1 failure
 * during computation.
 */
#include <math.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "app/app.h"
#include "app/app_batch_cli.h"
#include "mesh/mesh.h"
#include "solver/sol.h"

static void usage(FILE *out)
{
    fprintf(out,
            "eddy2d %s - 2D eddy-current solver for permanent-magnet brakes and dampers\n"
            "\n"
            "usage:\n"
            "  eddy2d solve CASE.json [-o DIR] [-q]   solve every speed; write DIR/result.json\n"
            "                                         and DIR/forces.csv (default DIR:\n"
            "                                         results/<case name>)\n"
            "  eddy2d reference CASE.json [-o DIR]    the same results from the layered Fourier\n"
            "                                         reference, for a case that fits it (one\n"
            "                                         moving non-magnetic plate, sources above it,\n"
            "                                         optional permeable yoke above the sources)\n"
            "  eddy2d check CASE.json                 validate the case and print the mesh\n"
            "                                         summary without solving\n"
            "  eddy2d materials                       list the built-in material library\n"
            "  eddy2d batch DIR_OR_CASE... -o OUTDIR  solve many cases and their variants, N at a\n"
            "                                         time, resumable; summary.csv/json/html\n"
            "                                         (eddy2d batch --help for its options)\n"
            "  eddy2d --help | --version\n"
            "\n"
            "options:\n"
            "  -o DIR          output directory\n"
            "  -q              quiet: no table on stdout, no progress on stderr\n"
            "  --no-images     do not write the pictures (PNG)\n"
            "  --vtk           also write a VTK field file (.vtr) per speed\n"
            "  --full-domain   pictures of the whole domain instead of the region of\n"
            "                  interest (magnets, conductors and a margin)\n"
            "  --no-reference  do not evaluate the layered reference beside the grid solve\n"
            "  -j N            speeds solved at once (default: the cores; fewer if the\n"
            "                  factorisations would not fit in memory)\n"
            "  --max-memory G  memory the run may use in GiB: a mesh or factorisation\n"
            "                  estimated above it is refused (default: half the memory\n"
            "                  available; check uses it too)\n"
            "  --debug         errors also name the source file and line that raised them\n"
            "  --export-matrix DIR  also write the system matrix and right-hand side of\n"
            "                  every speed in Matrix Market format into DIR\n"
            "\n"
            "exit status: 0 success, 2 invalid input, 1 failure during computation\n",
            EDDY_VERSION);
}

/* --debug: errors also name the source file and line of the check that
 * raised them. */
static int debug_errors;

static int fail(eddy_status s, const eddy_error *err)
{
    fprintf(stderr, "eddy2d: error: %s\n", err->msg[0] ? err->msg : eddy_strerror(s));
    if (debug_errors && err->file != NULL)
        fprintf(stderr, "eddy2d: (raised at %s:%d, status %d: %s)\n", err->file, err->line,
                (int)err->status, eddy_strerror(err->status));
    return eddy_exit_code(s);
}

/* A case file that cannot be read is the user's input problem: exit 2. */
static int fail_load(eddy_status s, const eddy_error *err)
{
    fail(s, err);
    return 2;
}

static void print_warnings(const mesh_case *c)
{
    for (int k = 0; k < c->nwarn; k++)
        fprintf(stderr, "eddy2d: warning: %s\n", c->warnings[k]);
}

static int cmd_materials(void)
{
    printf("%-22s %12s %8s %7s  source\n", "name", "sigma (MS/m)", "mu_r", "Br (T)");
    for (int k = 0; k < mesh_library_count(); k++) {
        const mesh_material *m = mesh_library_entry(k);
        printf("%-22s %12.3f %8.4g %7.3f  %s\n", m->name, m->sigma * 1e-6, m->mu_r, m->br,
               m->source);
    }
    return 0;
}

static int cmd_check(const char *path, double max_memory)
{
    eddy_error err = {0};
    mesh_case *c = NULL;
    eddy_status s = mesh_case_load(path, &c, &err);
    if (s != EDDY_OK)
        return fail_load(s, &err);
    print_warnings(c);
    mesh_estimate est;
    s = mesh_grid_estimate(c, eddy_memory_limit(max_memory), &est, &err);
    if (s != EDDY_OK && s != EDDY_ERR_TOO_LARGE) {
        mesh_case_free(c);
        return fail(s, &err);
    }
    printf("case        %s\n", c->name);
    if (c->description[0])
        printf("description %s\n", c->description);
    printf("domain      x %g to %g %s, y %g to %g %s, x sides %s, y sides %s\n",
           c->x0 / c->length_scale, c->x1 / c->length_scale, c->length_unit,
           c->y0 / c->length_scale, c->y1 / c->length_scale, c->length_unit,
           c->x_periodic ? "periodic" : (c->x_open ? "open" : "zero"),
           c->y_open ? "open" : "zero");
    printf("regions     %d (%d materials), speeds %d\n", c->nreg, c->nmat, c->nspeed);
    printf("mesh        %d x %d nodes, %ld unknowns\n", est.nx, est.ny, est.unknowns);
    printf("memory      about %.1f MiB estimated (limit %.1f GiB)\n",
           est.memory_bytes / 1048576.0, est.memory_limit / 1073741824.0);
    mesh_case_free(c);
    if (s != EDDY_OK)
        return fail(s, &err);
    printf("ok\n");
    return 0;
}

/* --export-matrix: the matrix and right-hand side of every speed. */
static int cmd_export(const char *path, const char *dir, double max_memory)
{
    eddy_error err = {0};
    mesh_case *c = NULL;
    mesh_grid *g = NULL;
    sol_system *sys = NULL;
    eddy_status s = mesh_case_load(path, &c, &err);
    if (s != EDDY_OK)
        return fail_load(s, &err);
    s = mesh_grid_build(c, eddy_memory_limit(max_memory), &g, NULL, &err);
    if (s == EDDY_OK)
        s = sol_system_alloc(g, &sys, &err);
    if (s == EDDY_OK)
        s = eddy_make_dir(dir, &err);
    for (int k = 0; s == EDDY_OK && k < c->nspeed; k++) {
        char mp[4200], rp[4200];
        snprintf(mp, sizeof mp, "%s/matrix_%02d_%.6gmps.mtx", dir, k, c->speeds[k]);
        snprintf(rp, sizeof rp, "%s/rhs_%02d_%.6gmps.mtx", dir, k, c->speeds[k]);
        s = sol_export(sys, c->speeds[k], mp, rp, &err);
    }
    sol_system_free(sys);
    mesh_grid_free(g);
    mesh_case_free(c);
    return s == EDDY_OK ? 0 : fail(s, &err);
}

static void progress_line(void *ctx, int k, int n, const post_forces *f)
{
    (void)ctx;
    /* no unit: the case (planar N/m or axisymmetric N) is read inside the run; the table
     * after it names the unit */
    fprintf(stderr, "\r  [%d/%d] %10.4g m/s   drag %12.5g   ", k + 1, n, f->speed, f->drag);
    if (k + 1 == n)
        fprintf(stderr, "\n");
}

/* The numbers without a sign where they are zero ("-0" reads as a sign). */
static double unsigned_zero(double v) { return v == 0.0 ? 0.0 : v; }

/* The table of the run: the columns of every case, then what the case asked
 * for (a disc's rpm, torque and power; the end-corrected drag; the
 * reference drag). */
static void print_table(const app_report *r)
{
    const mesh_case *c = r->c;
    int ref = r->ref_drag != NULL && r->g != NULL;
    int disc = c->disc.present, end = c->end_effect.present;
    if (c->geometry == MESH_AXISYMMETRIC) /* the whole ring; no net radial force */
        printf("%12s %14s %14s %14s %14s %10s %14s", "speed m/s", "drag N", "radial N",
               "loss W", "stress drag", "Rm", "drag/v N s/m");
    else
        printf("%12s %14s %14s %14s %14s %10s %14s", "speed m/s", "drag N/m", "normal N/m",
               "loss W/m", r->g != NULL ? "stress drag" : "drag (ref)", "Rm", "drag/v N s/m2");
    if (disc)
        printf(" %10s %12s %12s", "rpm", "torque N m", "power W");
    if (end)
        printf(" %14s", "drag end-corr");
    if (ref)
        printf(" %18s", r->ref_state == APP_REF_APPROXIMATE ? "ref (mu_r=1 mag)" : "reference drag");
    printf("\n");
    for (int k = 0; k < r->npoint; k++) {
        const post_forces *f = &r->f[k];
        printf("%12.5g %14.6g %14.6g %14.6g %14.6g %10.4g %14.6g", unsigned_zero(f->speed),
               unsigned_zero(f->drag), unsigned_zero(f->force_y), unsigned_zero(f->loss),
               unsigned_zero(f->drag_stress), unsigned_zero(f->magnetic_reynolds),
               unsigned_zero(f->drag_per_speed));
        if (disc)
            printf(" %10.5g %12.6g %12.6g", unsigned_zero(f->rpm), unsigned_zero(f->torque),
                   unsigned_zero(f->power));
        if (end)
            printf(" %14.6g", unsigned_zero(f->drag_end_corrected));
        if (ref)
            printf(" %18.6g", unsigned_zero(r->ref_drag[k]));
        printf("\n");
    }
}

/* A pass: its steps, the forces at the end, the energy balance, the exit
 * speed of a coupled load. */
static void print_pass(const app_report *r)
{
    const app_pass_result *p = r->pass;
    const mesh_case *c = r->pass_case;
    if (p == NULL || c == NULL)
        return;
    long k = p->n - 1;
    printf("pass: %ld steps of %.4g %s (%d band cell%s), %.4g %s in %.4g ms; at the end drag "
           "%.5g N/m, normal force %.5g N/m",
           k, p->step / c->length_scale, c->length_unit, p->cells_per_step,
           p->cells_per_step == 1 ? "" : "s", p->position[k] / c->length_scale, c->length_unit,
           1e3 * p->time[k], p->drag[k], p->force_y[k]);
    if (isfinite(p->steady_drag))
        printf(" (steady, infinite conductor: drag %.5g N/m)", p->steady_drag);
    printf("\n");
    double bal = p->work != 0 ? (p->work - p->heat - p->energy_change) / fabs(p->work) : 0.0;
    printf("pass energy: work %.5g J/m = heat %.5g J/m + magnetic energy change %.5g J/m "
           "(%+.2g %%)\n", p->work, p->heat, p->energy_change, 100.0 * bal);
    if (c->pass.coupled)
        printf("pass: exit speed %.5g m/s%s (the steady force curve gives %.5g m/s)\n",
               p->exit_speed, p->stopped ? ", stopped" : "", p->steady_exit_speed);
}

/* The error estimate and the tolerance, under the table: the largest
 * estimates relative to the largest magnitudes of the sweep. */
static void print_accuracy(const app_report *r)
{
    if (!r->estimated)
        return;
    int planar = r->c->geometry == MESH_PLANAR, unresolved = 0;
    for (int k = 0; k < r->npoint; k++)
        unresolved += planar && !(fabs(r->f[k].force_y) > r->f[k].force_y_error);
    printf("accuracy (grid%s estimate): drag within %.2g %%",
           r->box_truncation > 1e-6 ? " and box" : "", 100.0 * r->est_worst_drag);
    if (planar && !r->fy_balanced)
        printf(", normal force within %.2g %%", 100.0 * r->est_worst_fy);
    printf(" of the largest; per point in result.json and forces.csv\n");
    if (planar && r->fy_balanced)
        printf("accuracy: the normal force stays below 0.1 %% of the drag at every speed "
               "(balanced, e.g. by symmetry)\n");
    else if (unresolved > 0)
        printf("accuracy: %d normal force%s below what the grid resolves (force_y_resolved "
               "false); ask for a mesh.tolerance\n",
               unresolved, unresolved > 1 ? "s" : "");
    if (r->c->mesh.tolerance > 0)
        printf("tolerance %g: %s at mesh.refine %d after %d grid%s%s%s\n", r->c->mesh.tolerance,
               r->tol_met ? "met" : "NOT met", r->tol_refine, r->tol_rounds,
               r->tol_rounds > 1 ? "s" : "", r->tol_note[0] ? ": " : "", r->tol_note);
}

/* The damping coefficient, its linear range, a falling load's terminal
 * speed and a stop that cannot happen, under the table. */
static void print_damping(const app_report *r)
{
    const mesh_case *c = r->c;
    if (c->geometry == MESH_AXISYMMETRIC)
        printf("damping coefficient %.6g N s/m of the whole ring%s (low-speed slope of the "
               "drag)\n", unsigned_zero(r->damping), c->x_periodic ? ", per period" : "");
    else
        printf("damping coefficient %.6g N s/m per m of depth%s (low-speed slope of the drag)\n",
               unsigned_zero(r->damping), c->x_periodic ? ", per period" : "");
    if (isfinite(r->linear_speed))
        printf("linear: the drag stays within 5 %% of c v up to %.4g m/s\n", r->linear_speed);
    else
        printf("linear range: %s\n", r->linear_note);
    if (c->disc.present) {
        double rr = c->disc.mean_radius;
        double per_omega = r->damping * c->disc.active_length * c->disc.periods * rr * rr;
        printf("disc damping %.6g N m s/rad = %.6g N m per rpm (whole disc, mean radius)\n",
               unsigned_zero(per_omega), unsigned_zero(per_omega * 2.0 * EDDY_PI / 60.0));
    }
    if (c->vehicle.present)
        printf("vehicle damping coefficient %.6g N s/m (c x %s)\n",
               unsigned_zero(r->damping * c->vehicle.depth * c->vehicle.repeat),
               c->geometry == MESH_AXISYMMETRIC ? "repeat" : "depth x repeat");
    if (r->has_terminal) {
        if (isfinite(r->terminal_speed))
            printf("terminal speed %.5g m/s falling under m g = %.6g N\n", r->terminal_speed,
                   c->vehicle.mass * DESIGN_STANDARD_GRAVITY);
        else
            printf("terminal speed: %s\n", r->terminal_note);
    }
    if (c->vehicle.present && !r->has_stop)
        printf("stop: none (%s)\n", r->stop_note);
}

static int cmd_solve(const char *path, int reference_only, const app_run_opts *o, int quiet)
{
    eddy_error err = {0};
    app_report *r = NULL;
    eddy_status s = reference_only ? app_run_reference(path, o, &r, &err)
                                   : app_run_solve(path, o, &r, &err);
    if (r != NULL && r->c != NULL)
        print_warnings(r->c);
    if (s != EDDY_OK) {
        /* a case that cannot be read is the user's input problem */
        int code = (r == NULL || r->c == NULL || s == EDDY_ERR_NOT_APPLICABLE) ? 2 : 0;
        app_report_free(r);
        int rc = fail(s, &err);
        return code ? code : rc;
    }
    if (!quiet) {
        print_table(r);
        print_accuracy(r);
        print_damping(r);
        print_pass(r);
        if (r->ref_state == APP_REF_NOT_APPLICABLE && !reference_only)
            printf("reference: the layered Fourier reference does not fit this case (%s)\n",
                   r->ref_note);
        else if (r->ref_state == APP_REF_APPROXIMATE && isfinite(r->ref_mu1_offset))
            printf("reference: %s; expected offset from that alone at low speed %+.2f %%\n",
                   r->ref_note, 100.0 * r->ref_mu1_offset);
        else if (r->ref_state == APP_REF_APPROXIMATE || r->ref_state == APP_REF_OK ||
                 r->ref_state == APP_REF_FAILED)
            printf("reference: %s\n", r->ref_note);
        printf("results in %s/ (result.json, forces.csv%s%s)\n", r->outdir,
               o->images ? ", pictures" : "", o->vtk && r->g != NULL ? ", .vtr fields" : "");
        printf("note: %s\n", app_safety_notice_for(r->c->geometry));
    }
    app_report_free(r);
    return 0;
}

/* In a sanitizer build (make sanitize), LeakSanitizer's built-in
 * suppressions: fontconfig, loaded by cairo for text, keeps one block of its
 * configuration for the life of the process (a three-line cairo program shows
 * the same), which would make every run exit 1 and hide leaks of our own.
 * The same list is in tests/lsan.supp for the test programs. */
#if defined(__has_feature)
#if __has_feature(address_sanitizer)
#define EDDY_ASAN 1
#endif
#endif
#if defined(__SANITIZE_ADDRESS__) || defined(EDDY_ASAN)
const char *__lsan_default_suppressions(void);
const char *__lsan_default_suppressions(void) { return "leak:libfontconfig.so\n"; }
#endif

/* SIGINT, SIGTERM, SIGHUP: remove the temporary files being written (no
 * output is ever half-written under its final name), then die of the signal
 * as the default action would. */
static void on_fatal_signal(int sig)
{
    eddy_remove_temporaries();
    signal(sig, SIG_DFL);
    raise(sig);
}

static void remove_temporaries_on_signals(void)
{
    static const int sigs[] = {SIGINT, SIGTERM, SIGHUP};
    for (size_t k = 0; k < sizeof sigs / sizeof sigs[0]; k++) {
        struct sigaction sa;
        memset(&sa, 0, sizeof sa);
        sa.sa_handler = on_fatal_signal;
        sigemptyset(&sa.sa_mask);
        sigaction(sigs[k], &sa, NULL);
    }
}

int main(int argc, char **argv)
{
    remove_temporaries_on_signals();
    if (argc < 2) {
        usage(stderr);
        return 2;
    }
    const char *cmd = argv[1];
    if (strcmp(cmd, "--help") == 0 || strcmp(cmd, "-h") == 0 || strcmp(cmd, "help") == 0) {
        usage(stdout);
        return 0;
    }
    if (strcmp(cmd, "--version") == 0) {
        printf("eddy2d %s\n", EDDY_VERSION);
        return 0;
    }
    if (strcmp(cmd, "materials") == 0)
        return cmd_materials();
    if (strcmp(cmd, "batch") == 0)
        return app_batch_main(argc - 2, argv + 2);
    if (strcmp(cmd, "solve") != 0 && strcmp(cmd, "check") != 0 &&
        strcmp(cmd, "reference") != 0) {
        fprintf(stderr, "eddy2d: error: unknown command \"%s\" (try eddy2d --help)\n", cmd);
        return 2;
    }
    const char *casefile = NULL, *export_dir = NULL;
    int quiet = 0;
    app_run_opts opts;
    app_run_opts_defaults(&opts);
    for (int k = 2; k < argc; k++) {
        if (strcmp(argv[k], "-o") == 0 && k + 1 < argc && strcmp(cmd, "check") != 0) {
            opts.outdir = argv[++k];
        } else if (strcmp(argv[k], "--no-images") == 0) {
            opts.images = 0;
        } else if (strcmp(argv[k], "--vtk") == 0) {
            opts.vtk = 1;
        } else if (strcmp(argv[k], "--full-domain") == 0) {
            opts.full_domain = 1;
        } else if (strcmp(argv[k], "-j") == 0 && k + 1 < argc) {
            char *end = NULL;
            long j = strtol(argv[++k], &end, 10);
            if (end == argv[k] || *end != '\0' || j < 1 || j > 64) {
                fprintf(stderr, "eddy2d: error: -j needs a whole number from 1 to 64\n");
                return 2;
            }
            opts.threads = (int)j;
        } else if (strcmp(argv[k], "--max-memory") == 0 && k + 1 < argc) {
            char *end = NULL;
            double gib = strtod(argv[++k], &end);
            if (end == argv[k] || *end != '\0' || !(gib > 0) || !isfinite(gib)) {
                fprintf(stderr, "eddy2d: error: --max-memory needs a size in GiB, e.g. 4\n");
                return 2;
            }
            opts.max_memory = gib * 1073741824.0;
        } else if (strcmp(argv[k], "--export-matrix") == 0 && k + 1 < argc) {
            export_dir = argv[++k];
        } else if (strcmp(argv[k], "--no-reference") == 0) {
            opts.reference = 0;
        } else if (strcmp(argv[k], "-q") == 0) {
            quiet = 1;
        } else if (strcmp(argv[k], "--debug") == 0) {
            debug_errors = 1;
        } else if (strcmp(argv[k], "--help") == 0) {
            usage(stdout);
            return 0;
        } else if (argv[k][0] == '-' && argv[k][1] != '\0') {
            fprintf(stderr, "eddy2d: error: unknown or incomplete option \"%s\"\n", argv[k]);
            return 2;
        } else if (casefile == NULL) {
            casefile = argv[k];
        } else {
            fprintf(stderr, "eddy2d: error: more than one case file given\n");
            return 2;
        }
    }
    if (casefile == NULL) {
        fprintf(stderr, "eddy2d: error: %s needs a case file (eddy2d %s CASE.json)\n", cmd, cmd);
        return 2;
    }
    if (strcmp(cmd, "check") == 0)
        return cmd_check(casefile, opts.max_memory);
    if (!quiet && isatty(2)) {
        opts.progress = progress_line;
    }
    if (export_dir != NULL) {
        int rc = cmd_export(casefile, export_dir, opts.max_memory);
        if (rc != 0)
            return rc;
    }
    return cmd_solve(casefile, strcmp(cmd, "reference") == 0, &opts, quiet);
}
