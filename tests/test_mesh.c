/*
 * test_mesh.c - case reading and validation, the material library, and the
 * properties the mesher promises (grid lines on region edges, smooth
 * grading, cells across regions, skin-depth resolution).
 */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "mesh/mesh.h"
#include "tests/check.h"

#define PI 3.14159265358979323846
/* Default growth ratio 1.2; rounding the cell count of an interval up to a
 * whole number may make a neighbouring pair slightly steeper. */
#define MAX_RATIO 1.2
#define RATIO_SLACK 0.05

static const char *good_case =
    "{\"name\":\"fin-1\",\"description\":\"test\",\"length_unit\":\"mm\","
    "\"domain\":{\"x\":[0,60],\"y\":[-120,120],\"x_boundary\":\"periodic\",\"y_boundary\":\"zero\"},"
    "\"materials\":{\"fin\":{\"conductivity\":2.46e7,\"relative_permeability\":1.0}},"
    "\"regions\":[{\"name\":\"fin\",\"material\":\"fin\",\"box\":[0,-5,60,5],\"moving\":true},"
    "{\"material\":\"soft_iron_linear\",\"box\":[0,17,60,27]},"
    "{\"material\":\"ndfeb_42\",\"box\":[2.5,7,27.5,17],\"magnetization_angle\":-90},"
    "{\"material\":\"ndfeb_42\",\"box\":[32.5,7,57.5,17],\"magnetization_angle\":90}],"
    "\"speeds\":[1,10,100]}";

static void test_good_case(void)
{
    eddy_error err = {0};
    mesh_case *c = NULL;
    eddy_status s = mesh_case_parse(good_case, "good.json", &c, &err);
    check(s == EDDY_OK, "a valid case parses", "%s", err.msg);
    if (s != EDDY_OK)
        return;
    check_close("lengths converted from mm to m", c->regions[2].box[2], 0.0275, 1e-15, 0);
    check(c->x_periodic == 1 && c->nspeed == 3 && c->nreg == 4, "domain, speeds and regions read",
          "periodic %d, %d speeds, %d regions", c->x_periodic, c->nspeed, c->nreg);
    const mesh_material *cu = mesh_library_find("copper_annealed");
    /* IEC 60028 (1925): annealed copper 58.0 MS/m at 20 C */
    check(cu != NULL && cu->sigma == 58.0e6 && strstr(cu->source, "IEC 60028") != NULL,
          "library: annealed copper 58.0 MS/m, IEC 60028", "%g S/m", cu ? cu->sigma : 0.0);
    int sourced = 1;
    for (int k = 0; k < mesh_library_count(); k++)
        if (mesh_library_entry(k)->source == NULL || mesh_library_entry(k)->source[0] == '\0')
            sourced = 0;
    check(sourced, "every library entry names its source", "%d entries", mesh_library_count());
    int mi = c->regions[2].material;
    check(mi >= 0 && strcmp(c->materials[mi].name, "ndfeb_42") == 0 &&
              fabs(sin(c->regions[2].mag_angle) + 1.0) < 1e-15,
          "library magnet resolved, angle in radians", "angle %g rad", c->regions[2].mag_angle);

    mesh_grid *g = NULL;
    mesh_estimate est;
    s = mesh_grid_build(c, 0.0, &g, &est, &err);
    check(s == EDDY_OK, "the case meshes", "%s", err.msg);
    if (s != EDDY_OK) {
        mesh_case_free(c);
        return;
    }
    /* every region edge is a grid line */
    int on_lines = 1;
    for (int r = 0; r < c->nreg; r++)
        for (int t = 0; t < 4; t++) {
            const double *v = (t % 2 == 0) ? g->x : g->y;
            int n = (t % 2 == 0) ? g->nx : g->ny, hit = 0;
            for (int k = 0; k < n; k++)
                if (fabs(v[k] - c->regions[r].box[t]) < 1e-12)
                    hit = 1;
            on_lines &= hit;
        }
    check(on_lines, "grid lines at every region edge", "%d regions", c->nreg);
    /* smooth grading */
    double worst = 1.0;
    for (int ax = 0; ax < 2; ax++) {
        const double *v = ax == 0 ? g->x : g->y;
        int n = ax == 0 ? g->nx : g->ny;
        for (int k = 1; k + 1 < n; k++) {
            double a = v[k] - v[k - 1], b = v[k + 1] - v[k];
            double q = a > b ? a / b : b / a;
            if (q > worst)
                worst = q;
        }
    }
    check(worst <= MAX_RATIO + RATIO_SLACK, "neighbouring cells differ by at most the growth ratio",
          "largest ratio %.4f (growth %.2f)", worst, MAX_RATIO);
    /* at least 4 cells across every region */
    int fewest = 1 << 30;
    for (int r = 0; r < c->nreg; r++) {
        int nxr = 0, nyr = 0;
        for (int i = 0; i + 1 < g->nx; i++)
            if (g->x[i] >= c->regions[r].box[0] - 1e-12 && g->x[i + 1] <= c->regions[r].box[2] + 1e-12)
                nxr++;
        for (int j = 0; j + 1 < g->ny; j++)
            if (g->y[j] >= c->regions[r].box[1] - 1e-12 && g->y[j + 1] <= c->regions[r].box[3] + 1e-12)
                nyr++;
        if (nxr < fewest)
            fewest = nxr;
        if (nyr < fewest)
            fewest = nyr;
    }
    check(fewest >= 4, "at least 4 cells across every region", "fewest %d", fewest);
    /* skin depth of the dominant harmonic at the highest speed (100 m/s):
     * delta = sqrt(2 / (omega mu0 sigma)), omega = k v (common formula);
     * the cells at the fin surfaces must be at most delta / 4 */
    double delta = sqrt(2.0 / (g->k_dominant * 100.0 * EDDY_MU0 * 2.46e7));
    double hs = 0.0;
    for (int j = 0; j + 1 < g->ny; j++)
        if (fabs(g->y[j] - 0.005) < 1e-12 || fabs(g->y[j + 1] - 0.005) < 1e-12 ||
            fabs(g->y[j] + 0.005) < 1e-12 || fabs(g->y[j + 1] + 0.005) < 1e-12)
            hs = fmax(hs, g->y[j + 1] - g->y[j]);
    check(hs <= delta / 4.0 * (1 + 1e-9), "cells at the conductor surfaces resolve the skin depth",
          "largest surface cell %.3g mm, skin depth %.3g mm", hs * 1e3, delta * 1e3);
    check(g->jm1 > g->jm0 && g->moving[(size_t)g->ncx * (size_t)g->jm0] == 1 &&
              g->moving[(size_t)g->ncx * (size_t)(g->jm1 - 1)] == 1, "moving band recorded", "rows %d..%d", g->jm0,
          g->jm1);
    check(est.unknowns == (long)(g->nx - 1) * (g->ny - 2), "unknown count for a periodic grid",
          "%ld", est.unknowns);
    mesh_grid_free(g);

    /* the size check refuses before allocating */
    s = mesh_grid_estimate(c, 1e5, &est, &err);
    check(s == EDDY_ERR_TOO_LARGE && strstr(err.msg, "GiB") != NULL,
          "a mesh too large for memory is refused with the estimate", "%s", err.msg);
    mesh_case_free(c);
}

/* Each bad input: the JSON, and a fragment the message must contain (the
 * JSON path and the reason). */
typedef struct {
    const char *what;
    const char *json;
    const char *expect;
} bad_case;

#define DOM "\"domain\":{\"x\":[0,10],\"y\":[-5,5]}"
#define PLATE "{\"material\":\"copper_annealed\",\"box\":[0,-2,10,0],\"moving\":true}"
#define MAG "{\"material\":\"ndfeb_42\",\"box\":[2,1,8,2],\"magnetization_angle\":90}"

#define RZDOM "\"domain\":{\"r\":[0,50],\"z\":[-50,50]}"
#define RZDOM_X "\"domain\":{\"r\":[0,50],\"z\":[-50,50],\"x_boundary\":\"zero\"}"
#define TUBE "{\"material\":\"copper_annealed\",\"box\":[10,-50,12,50],\"moving\":true}"

static const bad_case bad_cases[] = {
    {"truncated JSON", "{\"name\":\"x\",\"domain\":{\"x\":[0,1", "not valid JSON"},
    {"malformed JSON", "{\"name\":\"x\",,}", "line 1, column"},
    {"not an object", "[1,2,3]", "must be a JSON object"},
    {"missing domain", "{\"regions\":[" PLATE "],\"speeds\":[1]}", "domain: missing"},
    {"wrong type", "{" DOM ",\"regions\":[" PLATE "],\"speeds\":\"fast\"}", "speeds: must be an array"},
    {"wrong element type", "{" DOM ",\"regions\":[" PLATE "],\"speeds\":[1,\"2\"]}", "speeds[1]: must be a number"},
    {"empty speeds", "{" DOM ",\"regions\":[" PLATE "],\"speeds\":[]}", "speeds: must not be empty"},
    {"infinite number", "{" DOM ",\"regions\":[" PLATE "],\"speeds\":[1e999]}", "speeds[0]: must be a finite number"},
    {"infinite in box", "{" DOM ",\"regions\":[{\"box\":[0,0,1e999,1]}],\"speeds\":[1]}", "regions[0].box: element 2 must be a finite number"},
    {"unknown material", "{" DOM ",\"regions\":[" PLATE ",{\"material\":\"unobtainium\",\"box\":[1,1,2,2]}],\"speeds\":[1]}", "regions[1].material: unknown material \"unobtainium\""},
    {"non-positive permeability", "{" DOM ",\"materials\":{\"m\":{\"relative_permeability\":0}},\"regions\":[" PLATE "],\"speeds\":[1]}", "materials.m.relative_permeability: must be positive"},
    {"negative conductivity", "{" DOM ",\"materials\":{\"m\":{\"conductivity\":-1}},\"regions\":[" PLATE "],\"speeds\":[1]}", "materials.m.conductivity: must not be negative"},
    {"zero-area box", "{" DOM ",\"regions\":[" PLATE ",{\"box\":[3,1,3,2]}],\"speeds\":[1]}", "regions[1].box: x1 must be greater than x0"},
    {"inverted box", "{" DOM ",\"regions\":[" PLATE ",{\"box\":[3,2,4,1]}],\"speeds\":[1]}", "regions[1].box: y1 must be greater than y0"},
    {"box outside the domain", "{" DOM ",\"regions\":[" PLATE ",{\"box\":[3,1,4,9]}],\"speeds\":[1]}", "regions[1].box: lies (partly) outside the domain"},
    {"box with three numbers", "{" DOM ",\"regions\":[{\"box\":[3,1,4]}],\"speeds\":[1]}", "regions[0].box: must have exactly 4 numbers"},
    {"unknown boundary", "{\"domain\":{\"x\":[0,10],\"y\":[-5,5],\"x_boundary\":\"mirror\"},\"regions\":[" PLATE "],\"speeds\":[1]}", "domain.x_boundary: unknown boundary \"mirror\""},
    {"coil touching an open side", "{\"domain\":{\"x\":[0,10],\"y\":[-5,5],\"y_boundary\":\"open\"},\"regions\":[" PLATE ",{\"box\":[3,1,4,5],\"current\":10}],\"speeds\":[1]}", "regions[1].box: a magnet or coil touches an open y side"},
    {"unknown y boundary", "{\"domain\":{\"x\":[0,10],\"y\":[-5,5],\"y_boundary\":\"periodic\"},\"regions\":[" PLATE "],\"speeds\":[1]}", "domain.y_boundary: unknown boundary"},
    {"unknown unit", "{\"length_unit\":\"inch\"," DOM ",\"regions\":[" PLATE "],\"speeds\":[1]}", "length_unit: unknown unit \"inch\""},
    {"empty domain", "{\"domain\":{\"x\":[1,1],\"y\":[-5,5]},\"regions\":[" PLATE "],\"speeds\":[1]}", "domain.x: x1 must be greater than x0"},
    {"moving region not spanning x", "{" DOM ",\"regions\":[{\"material\":\"copper_annealed\",\"box\":[1,-2,9,0],\"moving\":true}],\"speeds\":[1]}", "must span the whole x-extent"},
    {"pass: step longer than the distance", "{" DOM ",\"regions\":[{\"material\":\"copper_annealed\",\"box\":[1,-2,3,0],\"moving\":true}],\"pass\":{\"speed\":1,\"distance\":1,\"step\":2}}", "pass.step: must not exceed pass.distance"},
    {"pass: coupled without a vehicle", "{" DOM ",\"regions\":[{\"material\":\"copper_annealed\",\"box\":[1,-2,3,0],\"moving\":true}],\"pass\":{\"speed\":1,\"distance\":4,\"step\":1,\"coupled\":true}}", "pass.coupled: needs a \"vehicle\""},
    {"pass: leaves an open side", "{\"domain\":{\"x\":[0,10],\"y\":[-5,5],\"x_boundary\":\"open\"},\"regions\":[{\"material\":\"copper_annealed\",\"box\":[1,-2,3,0],\"moving\":true}],\"pass\":{\"speed\":1,\"distance\":8,\"step\":1}}", "must stay inside the domain for the whole pass"},
    {"pass: axisymmetric", "{\"geometry\":\"axisymmetric\"," RZDOM ",\"regions\":[{\"material\":\"copper_annealed\",\"box\":[10,-50,12,50],\"moving\":true}],\"pass\":{\"speed\":1,\"distance\":4,\"step\":1}}", "a pass needs the planar geometry"},
    {"pass: bad start", "{" DOM ",\"regions\":[{\"material\":\"copper_annealed\",\"box\":[1,-2,3,0],\"moving\":true}],\"pass\":{\"speed\":1,\"distance\":4,\"step\":1,\"start\":\"moving\"}}", "pass.start: must be"},
    {"stationary overlapping moving", "{" DOM ",\"regions\":[" PLATE ",{\"material\":\"ndfeb_42\",\"box\":[2,-1,8,2],\"magnetization_angle\":90}],\"speeds\":[1]}", "regions[1]: overlaps moving region"},
    {"magnet without direction", "{" DOM ",\"regions\":[" PLATE ",{\"material\":\"ndfeb_42\",\"box\":[2,1,8,2]}],\"speeds\":[1]}", "regions[1].magnetization_angle: missing"},
    {"duplicate key", "{" DOM ",\"regions\":[" PLATE "],\"speeds\":[1],\"speeds\":[2]}", "key \"speeds\" appears more than once"},
    {"current and current density", "{" DOM ",\"regions\":[" PLATE ",{\"box\":[2,1,3,2],\"current\":1,\"current_density\":1}],\"speeds\":[1]}", "regions[1]: give either"},
    {"moving must be boolean", "{" DOM ",\"regions\":[{\"material\":\"copper_annealed\",\"box\":[0,-2,10,0],\"moving\":1}],\"speeds\":[1]}", "regions[0].moving: must be true or false"},
    {"growth out of range", "{" DOM ",\"regions\":[" PLATE "],\"speeds\":[1],\"mesh\":{\"growth\":3}}", "mesh.growth: must lie in (1, 2]"},
    {"unsafe name", "{\"name\":\"../x\"," DOM ",\"regions\":[" PLATE "],\"speeds\":[1]}", "name: must have 1 to 63 characters, only letters"},
    {"no regions", "{" DOM ",\"regions\":[],\"speeds\":[1]}", "regions: must not be empty"},
    {"gravity must be boolean", "{" DOM ",\"regions\":[" PLATE "],\"speeds\":[1],\"vehicle\":{\"mass\":1,\"depth\":1,\"gravity\":1}}", "vehicle.gravity: must be true or false"},
    {"a falling load's to_speed without from_speed", "{" DOM ",\"regions\":[" PLATE "],\"speeds\":[1],\"vehicle\":{\"mass\":1,\"depth\":1,\"gravity\":true,\"to_speed\":1}}", "vehicle.to_speed: needs a from_speed"},
    {"from_speed required without gravity", "{" DOM ",\"regions\":[" PLATE "],\"speeds\":[1],\"vehicle\":{\"mass\":1,\"depth\":1,\"to_speed\":1}}", "vehicle.from_speed: missing"},
    /* the case reader applies the one sigma(T) rule of design/ (its range and
     * its resistivity floor), not limits of its own */
    /* values that would pass a type check but no device has (the reader's
     * bounds, this project's choice): caught with the JSON path, exit 2 */
    {"absurd magnetisation angle", "{" DOM ",\"regions\":[" PLATE ",{\"material\":\"ndfeb_42\",\"box\":[2,1,8,2],\"magnetization_angle\":1e308}],\"speeds\":[1]}", "regions[1].magnetization_angle: 1e+308 degrees"},
    {"absurd current", "{" DOM ",\"regions\":[" PLATE ",{\"box\":[2,1,3,2],\"current\":1e300}],\"speeds\":[1]}", "regions[1].current: 1e+300 A is beyond any coil"},
    {"absurd B-H point", "{" DOM ",\"materials\":{\"s\":{\"bh_curve\":[[100,1],[1e300,1e300]]}},\"regions\":[" PLATE ",{\"material\":\"s\",\"box\":[2,1,8,2]}],\"speeds\":[1]}", "materials.s.bh_curve[1]: [1e+300 A/m, 1e+300 T] is beyond any measured B-H curve"},
    {"speed above the speed of light", "{" DOM ",\"regions\":[" PLATE "],\"speeds\":[1,4e8]}", "speeds[1]: 4e+08 m/s is not below the speed of light"},
    {"remanence of 1e6 T", "{" DOM ",\"materials\":{\"m\":{\"remanence\":1e6}},\"regions\":[" PLATE ",{\"material\":\"m\",\"box\":[2,1,8,2],\"magnetization_angle\":90}],\"speeds\":[1]}", "materials.m.remanence: 1e+06 T: no permanent magnet comes near this"},
    {"duplicate region names", "{" DOM ",\"regions\":[{\"name\":\"a\",\"material\":\"copper_annealed\",\"box\":[0,-2,10,0],\"moving\":true},{\"name\":\"a\",\"material\":\"ndfeb_42\",\"box\":[2,1,8,2],\"magnetization_angle\":90}],\"speeds\":[1]}", "regions[1].name: \"a\" is also the name of regions[0]; region names must be unique"},
    {"temperature above the linear model", "{" DOM ",\"regions\":[" PLATE "],\"speeds\":[1],\"temperature\":1200}", "temperature: 1200 C is outside the linear resistivity model (-200 to 1000 C)"},
    /* the axisymmetric geometry: keys without meaning for a ring are errors
     * naming the key */
    {"unknown geometry", "{\"geometry\":\"spherical\"," DOM ",\"regions\":[" PLATE "],\"speeds\":[1]}", "geometry: unknown geometry \"spherical\""},
    {"planar domain keys in r-z", "{\"geometry\":\"axisymmetric\"," DOM ",\"regions\":[" PLATE "],\"speeds\":[1]}", "domain.x: has no meaning in an axisymmetric case"},
    {"x_boundary in r-z", "{\"geometry\":\"axisymmetric\"," RZDOM_X ",\"regions\":[" TUBE "],\"speeds\":[1]}", "domain.x_boundary: has no meaning in an axisymmetric case"},
    {"open side in r-z", "{\"geometry\":\"axisymmetric\",\"domain\":{\"r\":[0,50],\"z\":[-50,50],\"z_boundary\":\"open\"},\"regions\":[" TUBE "],\"speeds\":[1]}", "domain.z_boundary: \"open\" is not supported in an axisymmetric case"},
    {"r-z domain off the axis", "{\"geometry\":\"axisymmetric\",\"domain\":{\"r\":[1,50],\"z\":[-50,50]},\"regions\":[" TUBE "],\"speeds\":[1]}", "domain.r: must start on the axis, r = 0"},
    {"r-z box inside out", "{\"geometry\":\"axisymmetric\"," RZDOM ",\"regions\":[" TUBE ",{\"box\":[5,1,4,2],\"current\":1}],\"speeds\":[1]}", "regions[1].box: r1 must be greater than r0"},
    {"r-z moving region not spanning z", "{\"geometry\":\"axisymmetric\"," RZDOM ",\"regions\":[{\"material\":\"copper_annealed\",\"box\":[10,-40,12,50],\"moving\":true}],\"speeds\":[1]}", "must span the whole z-extent"},
    {"disc in r-z", "{\"geometry\":\"axisymmetric\"," RZDOM ",\"regions\":[" TUBE "],\"speeds\":[1],\"disc\":{\"mean_radius\":100,\"active_length\":10,\"periods\":8}}", "disc: has no meaning in an axisymmetric case"},
    {"end_effect in r-z", "{\"geometry\":\"axisymmetric\"," RZDOM ",\"regions\":[" TUBE "],\"speeds\":[1],\"end_effect\":{\"plate_width\":100,\"active_width\":10,\"pole_pitch\":8}}", "end_effect: has no meaning in an axisymmetric case"},
    {"vehicle depth in r-z", "{\"geometry\":\"axisymmetric\"," RZDOM ",\"regions\":[" TUBE "],\"speeds\":[1,2],\"vehicle\":{\"mass\":10,\"depth\":20,\"from_speed\":2,\"to_speed\":1}}", "vehicle.depth: has no meaning in an axisymmetric case"},
    {"resistivity below the linear law's floor", "{" DOM ",\"materials\":{\"m\":{\"conductivity\":1e7,\"temperature_coefficient\":0.01}},\"regions\":[{\"material\":\"m\",\"box\":[0,-2,10,0],\"moving\":true}],\"speeds\":[1],\"temperature\":-80}", "temperature: material \"m\": 1 + alpha (T - 20 C) = 0 for alpha = 0.01 1/K at -80 C"},
};

/* Warnings a new user needs: each case reads (exit 0) and its warnings
 * (printed, and kept in result.json) hold the fragment. */
static void test_warnings(void)
{
    static const struct {
        const char *what, *json, *expect;
    } cases[] = {
        {"a misspelt key names the closest valid one",
         "{" DOM ",\"regions\":[" PLATE ",{\"material\":\"ndfeb_42\",\"box\":[2,1,8,2],"
         "\"magnetization_angle\":90,\"magnetisation_angle\":90}],\"speeds\":[1]}",
         "unknown key \"magnetisation_angle\" ignored (did you mean \"magnetization_angle\"?)"},
        {"a domain of 1000 m without a length unit",
         "{\"domain\":{\"x\":[-500,500],\"y\":[-300,300]},\"regions\":[{\"material\":"
         "\"copper_annealed\",\"box\":[-500,-2,500,0],\"moving\":true}],\"speeds\":[1]}",
         "domain: 1000 m across with no length_unit"},
        {"a vehicle depth of 0.3 in a millimetre case",
         "{\"length_unit\":\"mm\"," DOM ",\"regions\":[" PLATE "," MAG "],\"speeds\":[1,10],"
         "\"vehicle\":{\"mass\":10,\"depth\":0.3,\"from_speed\":10,\"to_speed\":1}}",
         "vehicle.depth: 0.3 mm is 0.3 mm of magnet overlap"},
        {"a net-current coil in a zero box",
         "{" DOM ",\"regions\":[" PLATE ",{\"box\":[4,1,5,2],\"current\":100}],\"speeds\":[1]}",
         "net source current 100 A, zero sides 5 m away"},
        {"a disc with a fractional number of pole pairs",
         "{\"domain\":{\"x\":[0,10],\"y\":[-5,5],\"x_boundary\":\"periodic\"},\"regions\":"
         "[" PLATE "," MAG "],\"speeds\":[1],\"disc\":{\"mean_radius\":37.5,"
         "\"active_length\":1}}",
         "disc.periods: 23.56 periods around the disc (circumference / period of the domain) is "
         "not a whole number of pole pairs"},
    };
    for (size_t k = 0; k < sizeof cases / sizeof cases[0]; k++) {
        eddy_error err = {0};
        mesh_case *c = NULL;
        eddy_status s = mesh_case_parse(cases[k].json, "warn.json", &c, &err);
        int found = 0;
        for (int w = 0; s == EDDY_OK && w < c->nwarn; w++)
            found = found || strstr(c->warnings[w], cases[k].expect) != NULL;
        char name[200];
        snprintf(name, sizeof name, "warning: %s", cases[k].what);
        check(s == EDDY_OK && found, name, "%s",
              s != EDDY_OK ? err.msg : c->nwarn > 0 ? c->warnings[c->nwarn - 1] : "no warning");
        mesh_case_free(c);
    }
}

static void test_bad_inputs(void)
{
    for (size_t k = 0; k < sizeof bad_cases / sizeof bad_cases[0]; k++) {
        eddy_error err = {0};
        mesh_case *c = NULL;
        eddy_status s = mesh_case_parse(bad_cases[k].json, "bad.json", &c, &err);
        char name[128];
        snprintf(name, sizeof name, "rejects %s", bad_cases[k].what);
        check(s == EDDY_ERR_INPUT && c == NULL && strstr(err.msg, bad_cases[k].expect) != NULL &&
                  strncmp(err.msg, "bad.json", 8) == 0,
              name, "message: %s", err.msg);
        mesh_case_free(c);
    }
    /* an unknown key is a warning, not an error */
    eddy_error err = {0};
    mesh_case *c = NULL;
    eddy_status s = mesh_case_parse("{" DOM ",\"regions\":[" PLATE "," MAG "],\"speeds\":[1],"
                                    "\"colour\":\"red\"}",
                                    "warn.json", &c, &err);
    check(s == EDDY_OK && c->nwarn == 1 && strstr(c->warnings[0], "colour") != NULL,
          "an unknown key gives a warning", "%s", c != NULL && c->nwarn ? c->warnings[0] : err.msg);
    mesh_case_free(c);
    test_warnings();
    s = mesh_case_load("/nonexistent/case.json", &c, &err);
    check(s == EDDY_ERR_IO && c == NULL, "a missing file is an I/O error", "%s", err.msg);
}

/* An axisymmetric case as the grid sees it: z on x, r on y, boxes
 * [r0, z0, r1, z1] turned into [z0, r0, z1, r1], the angle from +r towards +z
 * turned into the grid's angle from +z (x) towards +r (y), profile points
 * [r, z] into (z, r), the vehicle's depth 1 (forces of the whole ring). */
static void test_rz_case(void)
{
    const char *json =
        "{\"geometry\":\"axisymmetric\",\"length_unit\":\"mm\","
        "\"domain\":{\"r\":[0,50],\"z\":[-60,40],\"z_boundary\":\"periodic\"},"
        "\"regions\":[{\"material\":\"copper_annealed\",\"box\":[10,-60,12,40],\"moving\":true},"
        "{\"material\":\"ndfeb_42\",\"box\":[0,-5,8,5],\"magnetization_angle\":90},"
        "{\"material\":\"ndfeb_42\",\"box\":[0,6,8,9],\"magnetization_angle\":0}],"
        "\"speeds\":[1,2],\"vehicle\":{\"mass\":3,\"from_speed\":2,\"to_speed\":1},"
        "\"profiles\":[{\"from\":[9,-20],\"to\":[9,20]}]}";
    eddy_error err = {0};
    mesh_case *c = NULL;
    eddy_status s = mesh_case_parse(json, "rz.json", &c, &err);
    check(s == EDDY_OK, "an axisymmetric case parses", "%s", err.msg);
    if (s != EDDY_OK)
        return;
    const mesh_region *t = &c->regions[0], *m = &c->regions[1], *q = &c->regions[2];
    check(c->geometry == MESH_AXISYMMETRIC && c->x0 == -0.06 && c->x1 == 0.04 && c->y0 == 0.0 &&
              fabs(c->y1 - 0.05) < 1e-15 && c->x_periodic == 1,
          "r-z domain on the grid: z on x, r on y from the axis, periodic z",
          "x %g..%g, y %g..%g, periodic %d", c->x0, c->x1, c->y0, c->y1, c->x_periodic);
    check(fabs(t->box[0] + 0.06) < 1e-15 && fabs(t->box[1] - 0.010) < 1e-15 &&
              fabs(t->box[2] - 0.04) < 1e-15 && fabs(t->box[3] - 0.012) < 1e-15,
          "r-z box [r0, z0, r1, z1] stored as [z0, r0, z1, r1]", "%g %g %g %g", t->box[0],
          t->box[1], t->box[2], t->box[3]);
    /* 90 degrees from +r towards +z is +z: the grid's +x (angle 0); 0 is +r: +y */
    check(fabs(cos(m->mag_angle) - 1.0) < 1e-15 && fabs(sin(q->mag_angle) - 1.0) < 1e-15,
          "r-z magnetisation angle: 90 is along +z (grid x), 0 along +r (grid y)",
          "%g, %g rad", m->mag_angle, q->mag_angle);
    check(fabs(c->profiles[0].p0[0] + 0.02) < 1e-15 && fabs(c->profiles[0].p0[1] - 0.009) < 1e-15 &&
              c->vehicle.depth == 1.0,
          "r-z profile points [r, z] on the grid as (z, r); vehicle depth 1 (whole ring)",
          "(%g, %g), depth %g", c->profiles[0].p0[0], c->profiles[0].p0[1], c->vehicle.depth);
    mesh_grid *g = NULL;
    s = mesh_grid_build(c, 0.0, &g, NULL, &err);
    check(s == EDDY_OK && g->geometry == MESH_AXISYMMETRIC && g->y[0] == 0.0,
          "the r-z case meshes with the planar mesher, the axis as its first grid line", "%s",
          err.msg);
    mesh_grid_free(g);
    mesh_case_free(c);
}

/* Is v a node of x[0..n-1] (to 1e-9 of the span)? */
static int has_node(const double *x, int n, double v)
{
    double tol = 1e-9 * (x[n - 1] - x[0]);
    for (int i = 0; i < n; i++)
        if (fabs(x[i] - v) <= tol)
            return 1;
    return 0;
}

/* One axis of the coarse family: every node of the coarser axis c is a node
 * of the finer f, every breakpoint bp is kept, and between two breakpoints
 * the coarser axis has ceil(cells / 2) cells of the finer's.  Returns the
 * number of intervals that break one of these; *cells_f, *cells_c count the
 * cells inside the breakpoints. */
static int check_coarsening(const double *f, int nf, const double *c, int nc, const double *bp,
                            int nbp, int *cells_f, int *cells_c)
{
    int bad = 0;
    *cells_f = *cells_c = 0;
    for (int i = 0; i < nc; i++)
        bad += !has_node(f, nf, c[i]);
    for (int k = 0; k + 1 < nbp; k++) {
        if (!has_node(c, nc, bp[k]) || !has_node(c, nc, bp[k + 1])) {
            bad++;
            continue;
        }
        int a = 0, b = 0;
        for (int i = 0; i + 1 < nf; i++)
            a += f[i] >= bp[k] - 1e-12 && f[i + 1] <= bp[k + 1] + 1e-12;
        for (int i = 0; i + 1 < nc; i++)
            b += c[i] >= bp[k] - 1e-12 && c[i + 1] <= bp[k + 1] + 1e-12;
        bad += b != (a + 1) / 2;
        *cells_f += a;
        *cells_c += b;
    }
    return bad;
}

/* mesh_grid_build_coarse: level 1 keeps every other line and level 2 every
 * other line of that, region edges always kept; under an odd mesh.refine the
 * intervals of level 1 may have odd counts, which level 2 must still halve
 * (ceil(c / 2) cells; it kept them whole before, so that at refine 13 the 4h
 * grid had 0.83 of the 2h grid's unknowns).  The property the Richardson
 * estimate assumes (post_richardson): each level doubles the cell size. */
static void test_coarse_family(void)
{
    for (int refine = 1; refine <= 3; refine += 2) {
        char json[1024];
        snprintf(json, sizeof json,
                 "{\"name\":\"c\",\"length_unit\":\"mm\"," DOM ",\"regions\":[" PLATE "," MAG
                 "],\"speeds\":[5],\"mesh\":{\"refine\":%d}}",
                 refine);
        mesh_case *c = NULL;
        mesh_grid *g[3] = {NULL, NULL, NULL};
        eddy_error err = {0};
        eddy_status s = mesh_case_parse(json, "coarse", &c, &err);
        if (s == EDDY_OK)
            s = mesh_grid_build(c, 0.0, &g[0], NULL, &err);
        for (int l = 1; l <= 2 && s == EDDY_OK; l++)
            s = mesh_grid_build_coarse(c, l, 0.0, &g[l], &err);
        char name[200];
        snprintf(name, sizeof name, "coarse family at mesh.refine %d: the grids build", refine);
        check(s == EDDY_OK, name, "%s", err.msg);
        if (s == EDDY_OK) {
            /* breakpoints: the domain's sides and the regions' edges, mm */
            double bx[] = {0, 2, 8, 10}, by[] = {-5, -2, 0, 1, 2, 5};
            for (int k = 0; k < 4; k++)
                bx[k] *= 1e-3;
            for (int k = 0; k < 6; k++)
                by[k] *= 1e-3;
            int bad = 0, fx = 0, cx = 0, fy = 0, cy = 0;
            double ratio[2];
            for (int l = 1; l <= 2; l++) {
                bad += check_coarsening(g[l - 1]->x, g[l - 1]->nx, g[l]->x, g[l]->nx, bx, 4, &fx,
                                        &cx);
                bad += check_coarsening(g[l - 1]->y, g[l - 1]->ny, g[l]->y, g[l]->ny, by, 6, &fy,
                                        &cy);
                ratio[l - 1] = (double)(cx * cy) / (double)(fx * fy);
            }
            snprintf(name, sizeof name,
                     "coarse family at mesh.refine %d: each level halves every interval's cells "
                     "(ceil), keeps the region edges, nests in the finer grid",
                     refine);
            check(bad == 0 && ratio[0] <= 0.3 && ratio[1] <= 0.3, name,
                  "%d intervals wrong; cells 2h/h %.3f, 4h/2h %.3f", bad, ratio[0], ratio[1]);
        }
        for (int l = 0; l < 3; l++)
            mesh_grid_free(g[l]);
        mesh_case_free(c);
    }
}

int main(void)
{
    test_good_case();
    test_coarse_family();
    test_rz_case();
    test_bad_inputs();
    return check_summary();
}
