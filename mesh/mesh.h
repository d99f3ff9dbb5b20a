/*
 * mesh.h - public interface of the mesh module (prefixes mesh_, and eddy_ for
 * the project-wide status in eddy_status.h).
 *
 * The mesh module is the first stage of the pipeline:
 *
 *     case file --(mesh_case_load)--> mesh_case --(mesh_grid_build)--> mesh_grid
 *
 * It reads and validates a case file (JSON), resolves materials from the
 * case and from the built-in material library, converts every length to
 * metres, and builds the graded tensor-product grid with constant material
 * data per cell.  Nothing here knows about the solver or post-processing.
 *
 * Units: SI everywhere (m, S/m, T, A/m^2, m/s).  The case file's
 * "length_unit" is applied on reading and kept only for display.
 */
#ifndef EDDY_MESH_H
#define EDDY_MESH_H

#include <stddef.h>

#include "mesh/eddy.h"

/* ------------------------------------------------------------------------ */
/* Materials                                                                 */
/* ------------------------------------------------------------------------ */

/* Most points of a B-H curve. */
#define MESH_BH_MAX 128

/*
 * A saturation (B-H) curve: n points (H_k, B_k), H in A/m, B in T, with
 * (H_0, B_0) = (0, 0) and both H and B strictly increasing; n = 0 for a
 * linear material.  The solver interpolates it monotonically (sol_bh_build).
 */
typedef struct {
    int n;
    double h[MESH_BH_MAX];  /* A/m */
    double b[MESH_BH_MAX];  /* T */
} mesh_bh_curve;

typedef struct {
    char name[64];
    double sigma;   /* electrical conductivity, S/m (>= 0) */
    double mu_r;    /* relative permeability (> 0); for magnets the recoil value */
    double br;      /* remanence magnitude, T (>= 0); direction from the region */
    double density;        /* kg/m^3 (0: unknown) */
    double specific_heat;  /* J/(kg K) (0: unknown) */
    double alpha;          /* temperature coefficient of resistivity at 20 C, 1/K (0: unknown) */
    double sigma_20;       /* conductivity at 20 C as given, S/m (sigma is at the case temperature) */
    const char *source; /* where the values come from (static text), NULL for user data */
    /* Saturable material: its B-H curve (bh.n >= 3), else bh.n = 0.  For a
     * saturable material mu_r holds the initial relative permeability of the
     * curve, B_1 / (mu0 H_1), used for meshing and as the starting point of
     * the nonlinear solve; remanence is not allowed with a curve. */
    mesh_bh_curve bh;
} mesh_material;

/* Number of entries in the built-in material library. */
int mesh_library_count(void);

/* Entry k (0 <= k < mesh_library_count()) of the built-in library, or NULL. */
const mesh_material *mesh_library_entry(int k);

/* Library entry by exact name, or NULL if there is none. */
const mesh_material *mesh_library_find(const char *name);

/* ------------------------------------------------------------------------ */
/* Case                                                                      */
/* ------------------------------------------------------------------------ */

/*
 * The geometry of a case ("geometry" in the case file).
 *   MESH_PLANAR: x along the motion, y across, everything per metre of depth
 *     in z; the unknown is A = A_z.
 *   MESH_AXISYMMETRIC: r-z, motion along the axis z; the unknown is the flux
 *     function psi = r A_phi (Wb per radian).  The case reader maps z onto
 *     the grid's x axis and r onto its y axis (y = 0 is the axis), so every
 *     mesh_case and mesh_grid field named x holds z and every field named y
 *     holds r; region boxes are stored as [z0, r0, z1, r1], mag_angle is
 *     measured from +z (x) towards +r (y), and jz is J_phi.  The planar
 *     mesher, pattern and analysis apply unchanged; only the per-cell
 *     weights of the box integration and of the force and loss integrals
 *     differ (solver/sol.h, sol_row_metric).  Forces are of the whole ring
 *     (N), losses W.
 */
typedef enum { MESH_PLANAR = 0, MESH_AXISYMMETRIC = 1 } mesh_geometry;

typedef struct {
    char name[64];
    int material;        /* index into mesh_case.materials, or -1 for air */
    double box[4];       /* x0, y0, x1, y1 in m (axisymmetric: z0, r0, z1, r1) */
    int moving;          /* 1: moves at +v along x (must span the domain in x,
                          * except in a pass: mesh_pass) */
    double mag_angle;    /* magnetisation direction, radians from +x towards +y
                          * (magnets; axisymmetric: from +z towards +r) */
    double jz;           /* source current density along +z, A/m^2 (axisymmetric:
                          * J_phi, the ring current over the box's r-z area) */
} mesh_region;

typedef struct {
    double max_size;     /* m; 0 = automatic */
    double min_size;     /* m; 0 = automatic */
    double growth;       /* ratio of neighbouring cell sizes; 0 = default 1.2 */
    double design_speed; /* m/s; the mesher resolves speeds up to
                          * max(|speeds|, design_speed); 0 = off */
    int refine;          /* split every cell of the generated grid into refine x
                          * refine equal cells (refinement studies); 0 or 1 = off */
    int no_error_estimate; /* 1: "error_estimate": false, skip the coarse-grid solve */
    double tolerance;    /* relative accuracy asked of drag and normal force (against the
                          * largest of their magnitudes over the sweep); 0 = none */
    int layer_cells;     /* not read from the case: cells of each layer mapped to
                          * infinity beyond an open side; 0 = the default, 48 x refine
                          * (halved per coarse level; the box estimate of app/app_run.c
                          * sets 48, refine 1's layer, under a refined inside) */
} mesh_params;

/* A line along which B and J are exported (a Hall-probe scan). */
typedef struct {
    char name[64];           /* safe for a file name */
    double p0[2], p1[2];     /* end points (x, y), m (axisymmetric: (z, r)); the line is
                              * horizontal or vertical */
    int points;              /* samples, >= 2 */
} mesh_profile;

/* How the speeds were given. */
typedef enum {
    MESH_SPEEDS_LIST = 0,    /* an explicit list */
    MESH_SPEEDS_LOG,         /* {"from", "to", "points"}: log-spaced */
    MESH_SPEEDS_AUTO         /* adaptive between from and to (initial log grid in speeds) */
} mesh_speed_mode;

/* A load braked from one speed to another ("vehicle"). */
typedef struct {
    int present;
    double mass;             /* kg */
    double depth;            /* m of magnet/plate overlap out of the plane (axisymmetric:
                              * 1, the forces are of the whole ring already) */
    double repeat;           /* periods or magnet units engaged */
    double from_speed, to_speed; /* m/s; from_speed 0 when not given (gravity only) */
    int has_from_speed;      /* 1 if from_speed was given (always without gravity) */
    double extra_force;      /* N, constant retarding force (e.g. friction) */
    double conductor_mass;   /* kg heated by the stop (0: not given) */
    int gravity;             /* 1: the load falls along the motion under its weight
                              * m g (DESIGN_STANDARD_GRAVITY): m dv/dt = m g -
                              * extra_force - F(v); the run reports its terminal
                              * speed, and from_speed becomes optional */
} mesh_vehicle;

/* Finite plate width correction (Russell-Norsworthy factor). */
typedef struct {
    int present;
    double plate_width, active_width, pole_pitch; /* m */
} mesh_end_effect;

/* A disc brake modelled at its mean radius. */
typedef struct {
    int present;
    double mean_radius;      /* m */
    double active_length;    /* m, radial length of the magnets (the 2D depth) */
    double periods;          /* periods of the 2D model around the disc */
    double *rpm;             /* the speeds as revolutions per minute (nspeed), or NULL */
} mesh_disc;

/*
 * A time-stepped pass ("pass"): the moving regions start where the case puts
 * them and travel `distance` along +x, `step` per time step (dt = step /
 * speed), through the fixed regions.  Moving regions need not span the
 * domain.  The mesher gives the x-range they cover during the pass a uniform
 * spacing (the band, mesh_grid.pb0..pb1) so that a step is a whole number of
 * cells; the region ends of moving regions fall on the band's lines at or
 * above them.  Planar geometry only.
 */
typedef struct {
    int present;
    double speed;            /* m/s, > 0; with coupled: the speed at the start */
    double distance;         /* m, > 0 */
    double step;             /* m, > 0; rounded to a whole number of band cells */
    int coupled;             /* 1: the vehicle's equation of motion sets the speed
                              * (needs a "vehicle"); 0: constant speed */
    double pictures_every;   /* m of travel between J_z and |B| pictures; 0: none */
    int start_steady;        /* 1: start from the steady moving solution at speed;
                              * 0: from the static field (conductors at rest) */
    int order;               /* 1: backward Euler; 2: BDF2 (default; the first step
                              * is backward Euler) */
    double band_cell;        /* m, the band's cell width asked for; 0: the finest x
                              * size the mesher uses in the band, at most the step */
} mesh_pass;

typedef struct {
    char name[64];           /* safe for a directory name: [A-Za-z0-9._-] */
    char description[512];
    char length_unit[8];     /* "m" or "mm": for display */
    double length_scale;     /* metres per case-file length unit */
    mesh_geometry geometry;  /* planar (default) or axisymmetric */
    double x0, x1, y0, y1;   /* domain, m (axisymmetric: z0, z1, 0, R) */
    int x_periodic;          /* 1: periodic on the x sides, 0: A = 0 or open */
    int x_open, y_open;      /* 1: the field outside the domain on those sides is the
                              * free field (the sides are mapped to infinity, see
                              * mesh_grid); 0: A = 0 (or periodic x); always 0 in an
                              * axisymmetric case */
    int nmat;
    mesh_material *materials;
    int nreg;
    mesh_region *regions;
    int nspeed;
    double *speeds;          /* m/s */
    mesh_speed_mode speed_mode;
    double speed_from, speed_to; /* m/s, for MESH_SPEEDS_LOG / _AUTO */
    int max_points;          /* MESH_SPEEDS_AUTO: at most this many speeds */
    int has_temperature;
    double temperature;      /* C: conductivities are taken at this temperature */
    mesh_vehicle vehicle;
    mesh_end_effect end_effect;
    mesh_disc disc;
    mesh_pass pass;
    mesh_params mesh;
    int nprofile;
    mesh_profile *profiles;
    int nwarn;
    char (*warnings)[256];   /* non-fatal remarks found while reading */
    char path[512];          /* the file it came from */
} mesh_case;

/*
 * Read, parse and validate a case file.
 *   path: file name (UTF-8 JSON).
 *   out:  receives a new case, owned by the caller (free with mesh_case_free).
 *         Set to NULL on error.
 *   err:  optional; on error receives a message naming the file and the JSON
 *         path of the offending value, e.g.
 *         "case.json: regions[1].box: x1 must be greater than x0".
 * Returns EDDY_OK, EDDY_ERR_IO (cannot read), EDDY_ERR_INPUT (invalid),
 * EDDY_ERR_NOMEM.  Unknown keys are recorded in out->warnings.
 */
eddy_status mesh_case_load(const char *path, mesh_case **out, eddy_error *err);

/* As mesh_case_load, from a NUL-terminated text; fname is used in messages. */
eddy_status mesh_case_parse(const char *text, const char *fname, mesh_case **out,
                            eddy_error *err);

/* Free a case; accepts NULL. */
void mesh_case_free(mesh_case *c);

/*
 * A deep copy of case c (every array duplicated).
 *   out: receives the copy, owned by the caller (mesh_case_free); NULL on error.
 * Returns EDDY_OK or EDDY_ERR_NOMEM.
 */
eddy_status mesh_case_clone(const mesh_case *c, mesh_case **out, eddy_error *err);

/*
 * The steady counterpart of a pass case: a copy of c without the pass, its
 * moving regions stretched over the whole x-extent of the domain (an
 * infinitely long conductor at the same cross-section), for the comparison
 * with the steady solver.
 *   out: receives the new case (mesh_case_free); NULL on error.
 * Returns EDDY_OK, EDDY_ERR_INPUT (c has no pass, or a stretched moving
 * region would overlap a fixed region: the message names both),
 * EDDY_ERR_NOMEM.
 */
eddy_status mesh_case_steady_of_pass(const mesh_case *c, mesh_case **out, eddy_error *err);

/* 1 if s can name a case (and its result folder) or a profile file: 1 to 63
 * characters from [A-Za-z0-9._-], not starting with '.'; else 0. */
int mesh_name_is_safe(const char *s);

/* ------------------------------------------------------------------------ */
/* Grid                                                                      */
/* ------------------------------------------------------------------------ */

/*
 * Graded tensor-product grid with per-cell material data.
 * Nodes (x[i], y[j]), 0 <= i < nx, 0 <= j < ny.  Cell (i, j) spans
 * [x[i], x[i+1]] x [y[j], y[j+1]]; cell arrays have ncx * ncy entries,
 * index i + ncx * j, with ncx = nx - 1, ncy = ny - 1.
 */
typedef struct {
    int nx, ny, ncx, ncy;
    double *x, *y;           /* node coordinates, m, strictly increasing */
    double *nu;              /* reluctivity 1/(mu0 mu_r), m/H */
    double *sigma;           /* conductivity, S/m (0 outside conductors) */
    double *brx, *bry;       /* remanence components, T */
    double *jz;              /* source current density, A/m^2 */
    unsigned char *moving;   /* 1 in cells of moving regions */
    short *region;           /* region index owning the cell, -1 for air */
    int x_periodic;          /* copied from the case */
    mesh_geometry geometry;  /* copied from the case; axisymmetric: x is z, y is r */
    /* Open sides (mesh_case x_open, y_open): beyond the domain each open side
     * has a layer of cells mapped to infinity, x = X + L s / (1 - s) with s
     * uniform in [0, 1] (the outermost node, at s = 1, is the point at
     * infinity where A = 0; its stored coordinate is a finite stand-in, one
     * effective edge length beyond the last finite node).  Cell columns
     * ix0 <= i < ix1 and rows iy0 <= j < iy1 cover the domain itself (0, ncx
     * and 0, ncy without open sides).  In a mapped cell the box integration
     * uses the metric of the mapping, not the node distances:
     *   ex[i]:  effective edge length of column i, h_s * dx/ds at the cell
     *           middle, m (the edge length of the x-fluxes and the Peclet
     *           number);
     *   wxl[i], wxr[i]: the parts of the column's width that belong to its
     *           left and right nodes' dual cells, x(s_mid) - x(s_i) and
     *           x(s_i+1) - x(s_mid), m (0 towards the point at infinity).
     * and the same along y (ey, wyl, wyr).  These arrays are NULL when that
     * axis has no open side; use the mesh_edge_* and mesh_half_* helpers. */
    int ix0, ix1, iy0, iy1;
    double *ex, *wxl, *wxr;  /* ncx each, or NULL */
    double *ey, *wyl, *wyr;  /* ncy each, or NULL */
    /* The moving band: rows jm0 <= j < jm1 hold every moving cell (0, 0 if
     * the case has no moving region). */
    int jm0, jm1;
    /* Dominant spatial wavenumber of the sources used for the skin-depth
     * rule, 1/m, and the resulting finest y-size in the conductor, m. */
    double k_dominant, h_skin;
    /* Saturable cells: nbh distinct B-H curves (copies of the materials'
     * curves, owned by the grid) and per cell the index of its curve, or -1
     * for a linear cell.  nbh = 0 and NULL pointers when every material is
     * linear.  nu holds the initial reluctivity H_1 / B_1 in saturable
     * cells. */
    int nbh;
    mesh_bh_curve *bh;
    short *bh_cell;
    /* A pass (mesh_case.pass): cell columns pb0 <= i < pb1 are the band of
     * uniform width pass_h (m) over which the moving regions travel, and a
     * time step moves them pass_cells columns.  The cell arrays above hold
     * the moving regions at their starting place (mesh_grid_pass_cells gives
     * them after a displacement).  All 0 without a pass. */
    int pb0, pb1, pass_cells;
    double pass_h;
} mesh_grid;

/* Edge length of cell column i of g for differences along x, m: the node
 * distance, or the mapped effective length on an open side. */
static inline double mesh_edge_x(const mesh_grid *g, int i)
{
    return g->ex != NULL ? g->ex[i] : g->x[i + 1] - g->x[i];
}
/* The same for cell row j along y. */
static inline double mesh_edge_y(const mesh_grid *g, int j)
{
    return g->ey != NULL ? g->ey[j] : g->y[j + 1] - g->y[j];
}
/* Width of the dual cell of a node between cell columns il (left) and ir
 * (right) along x, m: half of each, or the mapped parts. */
static inline double mesh_dual_x(const mesh_grid *g, int il, int ir)
{
    return g->ex != NULL ? g->wxr[il] + g->wxl[ir]
                         : 0.5 * ((g->x[il + 1] - g->x[il]) + (g->x[ir + 1] - g->x[ir]));
}
/* The same along y between cell rows jb (below) and ja (above). */
static inline double mesh_dual_y(const mesh_grid *g, int jb, int ja)
{
    return g->ey != NULL ? g->wyr[jb] + g->wyl[ja]
                         : 0.5 * ((g->y[jb + 1] - g->y[jb]) + (g->y[ja + 1] - g->y[ja]));
}

/* Size of the problem before anything large is allocated. */
typedef struct {
    int nx, ny;
    long nodes;
    long unknowns;
    double memory_bytes;     /* estimate of the peak memory of one solve: one
                              * factorisation (mesh_factor_bytes) + 300 bytes per
                              * node for the grid, fields and workspaces */
    double memory_limit;     /* the limit it was compared with, bytes */
} mesh_estimate;

/*
 * The one estimate of the peak memory of a numeric LU factorisation of a
 * grid matrix, bytes: 1.25 x (16 bytes per L and U entry, a value and an
 * index, + 200 bytes per unknown of workspace).
 *   lu_entries: entries of L and U; <= 0 for the typical fill of these
 *               matrices under a fill-reducing ordering, 5 n log2(n + 2)
 *               (measured 60-110 entries per unknown by make bench).
 *   n:          unknowns.
 * The mesher uses the typical fill; the solver the fill of its analysis
 * where that is smaller (sol_factor_bytes).
 */
double mesh_factor_bytes(double lu_entries, double n);

/*
 * Build the graded grid and cell data for a case.
 *   c:   a validated case (from mesh_case_load/parse); not modified.
 *   memory_limit: bytes the solve may use (eddy_memory_limit); <= 0: the
 *        default eddy_memory_limit(0).
 *   out: receives the grid, owned by the caller (mesh_grid_free); NULL on error.
 *   est: optional; receives the size estimate (also filled when the estimate
 *        exceeds the memory limit).
 * Returns EDDY_OK, EDDY_ERR_TOO_LARGE (the estimate exceeds the memory limit;
 * the message gives both figures), EDDY_ERR_INPUT, EDDY_ERR_NOMEM.
 */
eddy_status mesh_grid_build(const mesh_case *c, double memory_limit, mesh_grid **out,
                            mesh_estimate *est, eddy_error *err);

/*
 * A coarser grid of the same family as mesh_grid_build's: every other grid
 * line of it (level 1: every interval between region edges has an even
 * number of cells, so every region edge stays a line), or every other line
 * of that again (level 2; an interval whose count is odd there, under an
 * odd mesh.refine, merges its cells in pairs but one near its middle), and
 * 1/2 or 1/4 of the cells in each open side's layer over the same map.
 * Their results against the grid's give the error estimate of each point
 * (post_richardson).  Arguments and returns as mesh_grid_build (no estimate);
 * EDDY_ERR_INPUT for another level.
 */
eddy_status mesh_grid_build_coarse(const mesh_case *c, int level, double memory_limit,
                                   mesh_grid **out, eddy_error *err);

/* Free a grid; accepts NULL. */
void mesh_grid_free(mesh_grid *g);

/*
 * The cells of a pass grid with its moving regions displaced by `shift` cell
 * columns along +x from their starting place (g's own arrays): a moving cell
 * (i, j) of g appears at (i + shift, j); the cells it leaves become air
 * (moving regions overlap no fixed region).  On periodic x sides the
 * columns wrap around; otherwise a column entering across the left side
 * repeats the side's first column (a conductor that spans the domain keeps
 * coming in) and one crossing the right side leaves the grid.
 *   g:      a grid; shift >= 0 (0 copies g's arrays).
 *   sigma, nu: outputs, ncx*ncy each (S/m, m/H), caller-owned.
 *   moving: output, ncx*ncy (1 in displaced moving cells), caller-owned.
 *   region: output, ncx*ncy region indices, or NULL.
 */
void mesh_grid_pass_cells(const mesh_grid *g, long shift, double *sigma, double *nu,
                          unsigned char *moving, short *region);

/* Build only the grid axes (cheap) and report the size estimate; no cell data.
 * Arguments and returns as mesh_grid_build. */
eddy_status mesh_grid_estimate(const mesh_case *c, double memory_limit, mesh_estimate *est,
                               eddy_error *err);

#endif
