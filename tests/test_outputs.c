/*
 * test_outputs.c - what a real solve writes next to result.json: the field
 * maps and force plot (decoded with libpng), the VTK files and the line
 * profiles, checked against the solution they came from; and one drag peak
 * for result.json and forces.png (the project's one peak rule, design_peak:
 * the numbers must agree exactly).
 */
#include <cJSON.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "tests/check.h"
#include "tests/pipeline.h"
#include "tests/pngread.h"

/* Two magnets of opposite polarity, mirror images of each other about
 * x = 0, over a copper plate: at low speed (Rm << 1) the induced current
 * J = sigma v B_y is antisymmetric about x = 0 (B_y of this pair is odd),
 * so the J map must be colour-symmetric: warm at x, cool at -x. */
static const char *case_text =
    "{\"name\":\"outputs\",\"length_unit\":\"mm\","
    "\"domain\":{\"x\":[-400,400],\"y\":[-300,300]},"
    "\"regions\":[{\"name\":\"plate\",\"material\":\"copper_annealed\",\"box\":[-400,-5,400,0],"
    "\"moving\":true},"
    "{\"name\":\"left\",\"material\":\"ndfeb_42\",\"box\":[-22,2,-2,12],\"magnetization_angle\":90},"
    "{\"name\":\"right\",\"material\":\"ndfeb_42\",\"box\":[2,2,22,12],\"magnetization_angle\":-90}],"
    "\"speeds\":[0.01,20],"
    "\"profiles\":[{\"name\":\"scan\",\"from\":[-60,1.05],\"to\":[60,1.05],\"points\":121}]}";

static char dir[256];

/* |t(x) + t(-x) - 1| of the decoded colours of mirror pixels: the pixel grid
 * is not exactly mirror-symmetric about x = 0 and a flux line may cross
 * either pixel (common practice, no source). */
#define MIRROR_T_TOL 0.03

/* Position t in [0, 1] on the diverging colour map of a pixel colour
 * (nearest of 1024 samples of the map). */
static double decode_t(const unsigned char *c)
{
    double best = INFINITY, tb = 0.5;
    for (int k = 0; k <= 1024; k++) {
        unsigned char m[3];
        post_cmap_rgb(1, k / 1024.0, m);
        double d = 0.0;
        for (int q = 0; q < 3; q++)
            d += ((double)c[q] - m[q]) * ((double)c[q] - m[q]);
        if (d < best) {
            best = d;
            tb = k / 1024.0;
        }
    }
    return tb;
}

/* Node field bilinear in the conductor cell holding (x, y); 0 elsewhere. */
static double interp_conductor(const mesh_grid *g, const double *f, double x, double y)
{
    if (x < g->x[0] || x > g->x[g->nx - 1] || y < g->y[0] || y > g->y[g->ny - 1])
        return 0.0;
    int i = 0, j = 0, lo = 0, hi = g->nx - 1;
    while (hi - lo > 1) {
        int m = (lo + hi) / 2;
        if (g->x[m] <= x)
            lo = m;
        else
            hi = m;
    }
    i = lo;
    lo = 0;
    hi = g->ny - 1;
    while (hi - lo > 1) {
        int m = (lo + hi) / 2;
        if (g->y[m] <= y)
            lo = m;
        else
            hi = m;
    }
    j = lo;
    if (!g->moving[(size_t)i + (size_t)g->ncx * j])
        return 0.0;
    double u = (x - g->x[i]) / (g->x[i + 1] - g->x[i]), w = (y - g->y[j]) / (g->y[j + 1] - g->y[j]);
    size_t nx = (size_t)g->nx, k = (size_t)i + nx * (size_t)j;
    return (1 - u) * (1 - w) * f[k] + u * (1 - w) * f[k + 1] + (1 - u) * w * f[k + nx] +
           u * w * f[k + nx + 1];
}

/* Pixel of the plot rectangle -> physical point (m). */
static void pixel_to_xy(const post_map_geom *geo, int i, int j, double *x, double *y)
{
    *x = geo->view[0] + (i - geo->plot_x + 0.5) / geo->plot_w * (geo->view[2] - geo->view[0]);
    *y = geo->view[3] - (j - geo->plot_y + 0.5) / geo->plot_h * (geo->view[3] - geo->view[1]);
}

/* The layout the J map of speed index k was drawn with. */
static int j_geometry(pipe_run *p, double v, post_map_geom *geo, double *jz)
{
    const mesh_grid *g = p->g;
    post_forces fc;
    if (pipe_speed(p, v, &fc) != 0 || post_current_density(g, p->a, v, jz, NULL) != EDDY_OK)
        return -1;
    size_t nc = (size_t)g->ncx * (size_t)g->ncy;
    unsigned char *mask = malloc(nc);
    for (size_t q = 0; q < nc; q++)
        mask[q] = g->moving[q];
    post_map_opts mo;
    post_map_opts_defaults(&mo);
    char title[200];
    snprintf(title, sizeof title, "%s: induced current density at %.4g m/s", p->c->name, v);
    mo.title = title;
    mo.diverging = 1;
    mo.quantity = "J_z";
    mo.unit_label = "MA/m^2";
    mo.value_scale = 1e-6;
    mo.length_unit = p->c->length_unit;
    mo.length_scale = 1.0 / p->c->length_scale;
    app_view_window(p->c, 0, mo.view);
    eddy_status s = post_map_geometry(g->nx, g->ny, g->x, g->y, jz, mask, &mo, geo, NULL);
    free(mask);
    return s == EDDY_OK ? 0 : -1;
}

static void test_maps(pipe_run *p)
{
    char path[512];
    image im;
    snprintf(path, sizeof path, "%s/jz_00_0.01mps.png", dir);
    if (read_png(path, &im) != 0) {
        check(0, "J map decodes", "%s", path);
        return;
    }
    check(im.w == 1200, "J map is 1200 px wide by default", "%d x %d", im.w, im.h);
    const char *q = text_of(&im, "eddy2d:quantity");
    const char *sp = text_of(&im, "eddy2d:speed_m_per_s");
    const char *cs = text_of(&im, "eddy2d:case");
    check(q != NULL && strcmp(q, "J_z") == 0 && sp != NULL && fabs(atof(sp) - 0.01) < 1e-12 &&
              cs != NULL && strcmp(cs, "outputs") == 0 && text_of(&im, "Software") != NULL,
          "J map text chunks: case, speed, quantity, tool version", "quantity %s, speed %s",
          q ? q : "-", sp ? sp : "-");
    const mesh_grid *g = p->g;
    double *jz = malloc((size_t)g->nx * (size_t)g->ny * sizeof *jz);
    post_map_geom geo;
    if (j_geometry(p, 0.01, &geo, jz) != 0 || geo.width != im.w || geo.height != im.h) {
        check(0, "J map layout reproduced", "%d x %d", geo.width, geo.height);
        free(jz);
        image_free(&im);
        return;
    }
    /* warmest pixel of the plot, and its mirror about the plot's centre */
    int wmax = 0, imax = 0, jmax = 0;
    for (int j = geo.plot_y; j < geo.plot_y + geo.plot_h; j++)
        for (int i = geo.plot_x; i < geo.plot_x + geo.plot_w; i++) {
            const unsigned char *c = px(&im, i, j);
            int warm = (int)c[0] - (int)c[2];
            if (warm > wmax) {
                wmax = warm;
                imax = i;
                jmax = j;
            }
        }
    int imir = 2 * geo.plot_x + geo.plot_w - 1 - imax;
    const unsigned char *hot = px(&im, imax, jmax), *cold = px(&im, imir, jmax);
    double t_hot = decode_t(hot), t_cold = decode_t(cold);
    check(fabs(t_hot + t_cold - 1.0) <= MIRROR_T_TOL,
          "J map of an antisymmetric current is colour-symmetric about the centre",
          "warmest (%d,%d,%d) at px %d decodes to t %.3f, mirror (%d,%d,%d) at px %d to %.3f; "
          "|t + t' - 1| = %.3f (tol %.2f)",
          hot[0], hot[1], hot[2], imax, t_hot, cold[0], cold[1], cold[2], imir, t_cold,
          fabs(t_hot + t_cold - 1.0), MIRROR_T_TOL);
    image_free(&im);

    /* the hot spot at 20 m/s: where |J| is largest on the grid */
    snprintf(path, sizeof path, "%s/jz_01_20mps.png", dir);
    if (read_png(path, &im) != 0 || j_geometry(p, 20.0, &geo, jz) != 0) {
        check(0, "J map at 20 m/s decodes", "%s", path);
        free(jz);
        return;
    }
    /* the hot spots: at the pixels where the field (bilinear in each
     * conductor cell, as the picture promises) is most positive and most
     * negative, the decoded colour must give that value, within 3 % of the
     * colour range (searched 0.3 mm below the plate's outline, whose dark
     * line would spoil the colour) */
    for (int sign = 1; sign >= -1; sign -= 2) {
        double best = -INFINITY, want = 0.0;
        int bi = 0, bj = 0;
        for (int j = geo.plot_y; j < geo.plot_y + geo.plot_h; j++)
            for (int i = geo.plot_x; i < geo.plot_x + geo.plot_w; i++) {
                double x, y;
                pixel_to_xy(&geo, i, j, &x, &y);
                if (y > -0.0003) /* keep clear of the plate outline drawn at y = 0 */
                    continue;
                double jv = interp_conductor(g, jz, x, y);
                if (sign * jv > best) {
                    best = sign * jv;
                    want = jv;
                    bi = i;
                    bj = j;
                }
            }
        /* median over a 5 x 5 patch: a thin flux line may cross the pixel */
        double ts[25];
        int nt = 0;
        for (int dj = -2; dj <= 2; dj++)
            for (int di = -2; di <= 2; di++)
                if (bj + dj >= geo.plot_y && bj + dj < geo.plot_y + geo.plot_h)
                    ts[nt++] = decode_t(px(&im, bi + di, bj + dj));
        for (int u = 1; u < nt; u++)
            for (int r = u; r > 0 && ts[r - 1] > ts[r]; r--) {
                double tmp = ts[r];
                ts[r] = ts[r - 1];
                ts[r - 1] = tmp;
            }
        double t = ts[nt / 2];
        double got = geo.vmin + t * (geo.vmax - geo.vmin);
        double hx, hy;
        pixel_to_xy(&geo, bi, bj, &hx, &hy);
        check(fabs(got - want) <= 0.03 * (geo.vmax - geo.vmin),
              sign > 0 ? "J map: the hot spot (largest J) has the warmest colour"
                       : "J map: the cold spot (most negative J) has the coolest colour",
              "at (%.2f, %.2f) mm: field %.4g MA/m^2, colour says %.4g MA/m^2 (range %.3g..%.3g)",
              1e3 * hx, 1e3 * hy, 1e-6 * want, 1e-6 * got, 1e-6 * geo.vmin, 1e-6 * geo.vmax);
    }
    image_free(&im);
    free(jz);
    snprintf(path, sizeof path, "%s/b_01_20mps.png", dir);
    int okb = read_png(path, &im) == 0 && text_of(&im, "eddy2d:unit") != NULL &&
              strcmp(text_of(&im, "eddy2d:quantity"), "|B|") == 0;
    check(okb, "|B| map decodes with its text chunks", "%s", path);
    if (okb)
        image_free(&im);
    snprintf(path, sizeof path, "%s/forces.png", dir);
    int okf = read_png(path, &im) == 0 && im.w > 400;
    check(okf, "force-speed plot decodes", "%s", path);
    if (okf)
        image_free(&im);
}

/* A number of a JSON object, NAN when absent. */
static double json_num(const cJSON *o, const char *key)
{
    const cJSON *v = cJSON_GetObjectItemCaseSensitive(o, key);
    return cJSON_IsNumber(v) ? v->valuedouble : NAN;
}

/* One drag peak: the report's is design_peak's over the positive speeds of
 * the sweep (log_speed = 1, design/design.h section 7), result.json reports
 * it and forces.png marks it (text chunks read back exactly), or none of
 * the three has a peak.  want_interpolated: 1 or 0 as the sweep should
 * give, -1 no peak at all (a reference-only run). */
static void check_one_peak(const char *what, const app_report *r, const char *outdir,
                           int want_interpolated)
{
    char name[160], path[600];
    double v = NAN, f = NAN;
    int refined = -1, m = 0, has = 0;
    if (want_interpolated >= 0) {
        double sp[64], dr[64];
        for (int k = 0; k < r->npoint && m < 64; k++)
            if (r->f[k].speed > 0) {
                sp[m] = r->f[k].speed;
                dr[m] = r->f[k].drag;
                m++;
            }
        has = design_peak(m, sp, dr, 1, &v, &f, &refined, NULL) == EDDY_OK;
        snprintf(name, sizeof name, "%s: the report's drag peak is design_peak's (log speed)",
                 what);
        check(has && r->has_peak && r->peak_speed == v && r->peak_drag == f &&
                  r->peak_refined == refined && refined == want_interpolated,
              name,
              "report %.17g m/s %.17g N/m (interpolated %d), design_peak %.17g m/s %.17g N/m (%d)",
              r->peak_speed, r->peak_drag, r->peak_refined, v, f, refined);
    } else {
        snprintf(name, sizeof name, "%s: no drag peak in the report", what);
        check(!r->has_peak, name, "has_peak %d", r->has_peak);
    }
    snprintf(path, sizeof path, "%s/result.json", outdir);
    char *text = NULL;
    cJSON *root = NULL;
    if (eddy_read_file(path, 1L << 26, &text, NULL, NULL) == EDDY_OK)
        root = cJSON_Parse(text);
    free(text);
    const cJSON *pk = cJSON_GetObjectItemCaseSensitive(root, "peak");
    double jv = json_num(pk, "speed"), jf = json_num(pk, "drag_force");
    snprintf(name, sizeof name, "%s: result.json reports the report's peak", what);
    if (has)
        check(pk != NULL && jv == r->peak_speed && jf == r->peak_drag, name,
              "%.17g m/s %.17g N/m", jv, jf);
    else
        check(root != NULL && pk == NULL, name, "no \"peak\" in %s", path);
    cJSON_Delete(root);
    snprintf(path, sizeof path, "%s/forces.png", outdir);
    image im;
    if (read_png(path, &im) != 0) {
        snprintf(name, sizeof name, "%s: forces.png decodes", what);
        check(0, name, "%s", path);
        return;
    }
    const char *tv = text_of(&im, "eddy2d:peak_speed_m_per_s");
    const char *tf = text_of(&im, "eddy2d:peak_drag_N_per_m");
    snprintf(name, sizeof name, "%s: forces.png marks result.json's peak", what);
    if (has)
        check(tv != NULL && tf != NULL && strtod(tv, NULL) == jv && strtod(tf, NULL) == jf, name,
              "plot %s m/s %s N/m, result.json %.17g m/s %.17g N/m", tv ? tv : "(none)",
              tf ? tf : "(none)", jv, jf);
    else
        check(tv == NULL && tf == NULL, name, "no peak in result.json, none in the plot: %s",
              tv ? tv : "(none)");
    image_free(&im);
}

/* The test case with four speeds around its drag peak (an interpolated
 * peak), and the layered reference alone (no peak is evaluated). */
static void test_peak_runs(const char *casefile)
{
    static const char *two = "\"speeds\":[0.01,20]", *four = "\"speeds\":[1,4,16,64]";
    char dir2[300], file2[320];
    snprintf(dir2, sizeof dir2, "%s_peak", dir);
    snprintf(file2, sizeof file2, "%s.json", dir2);
    const char *at = strstr(case_text, two);
    FILE *f = at != NULL ? fopen(file2, "w") : NULL;
    if (f != NULL) {
        fprintf(f, "%.*s%s%s", (int)(at - case_text), case_text, four, at + strlen(two));
        fclose(f);
    }
    check(f != NULL, "write the case with four speeds", "%s", file2);
    app_run_opts o;
    app_run_opts_defaults(&o);
    o.outdir = dir2;
    app_report *r = NULL;
    eddy_error err = {0};
    eddy_status s = f != NULL ? app_run_solve(file2, &o, &r, &err) : EDDY_ERR_IO;
    check(s == EDDY_OK, "solve at 1, 4, 16, 64 m/s", "%s", err.msg);
    if (s == EDDY_OK)
        check_one_peak("four speeds", r, dir2, 1);
    app_report_free(r);
    r = NULL;
    memset(&err, 0, sizeof err);
    snprintf(dir2, sizeof dir2, "%s_ref", dir);
    o.outdir = dir2;
    s = app_run_reference(casefile, &o, &r, &err);
    check(s == EDDY_OK, "the layered reference alone", "%s", err.msg);
    if (s == EDDY_OK)
        check_one_peak("reference alone", r, dir2, -1);
    app_report_free(r);
    char cmd[1200];
    snprintf(cmd, sizeof cmd, "rm -rf '%s_peak' '%s_peak.json' '%s_ref'", dir, dir, dir);
    if (system(cmd) != 0)
        printf("# could not remove %s_peak, %s_ref\n", dir, dir);
}

static void test_profile_and_vtk(pipe_run *p)
{
    char path[512];
    snprintf(path, sizeof path, "%s/profile_scan_01_20mps.csv", dir);
    FILE *f = fopen(path, "r");
    if (f == NULL) {
        check(0, "line profile written", "%s", path);
        return;
    }
    char line[512];
    int rows = 0, header = 0;
    double worst = 0.0, bmax = 0.0;
    while (fgets(line, sizeof line, f) != NULL) {
        if (rows == 0 && !header) {
            header = strncmp(line, "s_m,x_m,y_m,Bx_T,By_T,Jz_A_per_m2", 33) == 0;
            continue;
        }
        double s, x, y, bx, by, jz;
        if (sscanf(line, "%lf,%lf,%lf,%lf,%lf,%lf", &s, &x, &y, &bx, &by, &jz) != 6)
            break;
        /* B_y = -dA/dx jumps across a vertical grid line: there the CSV's
         * rounded x may fall in either neighbouring cell */
        double ex, ey, fx, fy;
        post_field_at(p->g, p->a, x - 1e-9, y, &ex, &ey);
        post_field_at(p->g, p->a, x + 1e-9, y, &fx, &fy);
        double e = fmin(hypot(bx - ex, by - ey), hypot(bx - fx, by - fy));
        worst = fmax(worst, e);
        bmax = fmax(bmax, hypot(ex, ey));
        rows++;
    }
    fclose(f);
    check(header && rows == 121, "line profile: header with units and 121 rows", "%d rows",
          rows);
    check(worst <= 1e-6 * bmax, "line profile matches the field of the solution",
          "max |dB| %.3g T of %.3g T", worst, bmax);
    snprintf(path, sizeof path, "%s/field_01_20mps.vtr", dir);
    f = fopen(path, "r");
    int vtr = 0;
    if (f != NULL) {
        while (fgets(line, sizeof line, f) != NULL)
            if (strstr(line, "<RectilinearGrid WholeExtent=") != NULL)
                vtr = 1;
        fclose(f);
    }
    check(vtr, "--vtk writes a VTK RectilinearGrid per speed", "%s", path);
}

int main(void)
{
    snprintf(dir, sizeof dir, "/tmp/eddy2d_test_outputs_%ld", (long)getpid());
    char casefile[300];
    snprintf(casefile, sizeof casefile, "%s.json", dir);
    FILE *f = fopen(casefile, "w");
    if (f == NULL || fputs(case_text, f) < 0) {
        check(0, "write the case file", "%s", casefile);
        return check_summary();
    }
    fclose(f);
    app_run_opts o;
    app_run_opts_defaults(&o);
    o.outdir = dir;
    o.vtk = 1;
    app_report *r = NULL;
    eddy_error err = {0};
    eddy_status s = app_run_solve(casefile, &o, &r, &err);
    check(s == EDDY_OK, "solve with pictures, VTK and a profile", "%s", err.msg);
    if (s == EDDY_OK) /* two speeds: the peak is the faster sample */
        check_one_peak("two speeds", r, dir, 0);
    app_report_free(r);
    if (s == EDDY_OK)
        test_peak_runs(casefile);
    if (s == EDDY_OK) {
        pipe_run p;
        int opened = pipe_open(&p, case_text) == 0;
        check(opened, "the picture checks' pipeline runs", "%s", opened ? "" : "failed");
        if (opened) {
            test_maps(&p);
            post_forces fc;
            int solved = pipe_speed(&p, 20.0, &fc) == 0;
            check(solved, "the profile and VTK checks' solve at 20 m/s", "%s",
                  solved ? "" : "failed");
            if (solved)
                test_profile_and_vtk(&p);
            pipe_free(&p);
        }
    }
    char cmd[700];
    snprintf(cmd, sizeof cmd, "rm -rf '%s' '%s'", dir, casefile);
    if (system(cmd) != 0)
        printf("# could not remove %s\n", dir);
    return check_summary();
}
