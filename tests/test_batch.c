/*
 * test_batch.c - the batch library (app/app_batch.c): content hash,
 * variant expansion and naming, case discovery, resume decisions, status
 * files, summaries and Slurm scripts.  No solve happens here (the command
 * line test tests/test_batch.sh runs real batches).
 *
 * External references:
 *   - FNV-1a 64-bit test vectors: L. C. Noll, "FNV Hash" test suite
 *     (test_fnv.c, vectors "", "a", "foobar"), also in the IETF draft
 *     draft-eastlake-fnv ("The FNV Non-Cryptographic Hash Algorithm").
 *   - CSV quoting: RFC 4180 (2005), section 2, rules 6 and 7.
 *   - The cartesian product and its order: by definition (first key slowest,
 *     as nested loops in the order written).
 *   - Array ranges in #SBATCH --array: Slurm's sbatch manual ("--array=0-15",
 *     "--array=0,6,16-32").
 *   - summary.png: a valid PNG (decoded with libpng, its IHDR size), and
 *     pixels of each case's colour (the colours it lists in its text chunk
 *     "eddy2d:series", checked against the house palette post_series_rgb);
 *     stand-in results with invented numbers, a picture test, no physics.
 */
#include <cJSON.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "mesh/mesh.h"
#include "app/app_batch.h"
#include "design/design.h"
#include "post/post_img.h"
#include "tests/check.h"
#include "tests/pngread.h"

/* Peak of a parabola in log10(speed) through three samples: exact. */
#define PEAK_TOL 1e-9
/* summary.png */
#define OVERLAY_W 1100      /* px, the size app_batch_summary.c writes */
#define OVERLAY_H 700
#define COLOUR_TOL 6        /* 8-bit levels around a series colour      */
#define COLOUR_PX_MIN 20    /* pixels of a series colour that must be seen */
#define KEY_ROWS 110        /* rows of title and key above the plot: not counted,
                               the key shows every colour itself */

static char tmpdir[256];

static const char *BASE =
    "{\"name\":\"plate\",\"length_unit\":\"mm\","
    "\"domain\":{\"x\":[0,40],\"y\":[-60,60],\"x_boundary\":\"periodic\"},"
    "\"regions\":[{\"name\":\"fin\",\"material\":\"copper_annealed\",\"box\":[0,-4,40,0],"
    "\"moving\":true},"
    "{\"name\":\"n\",\"material\":\"ndfeb_35\",\"box\":[1,3,19,9],\"magnetization_angle\":90},"
    "{\"name\":\"s\",\"material\":\"ndfeb_35\",\"box\":[21,3,39,9],\"magnetization_angle\":-90}],"
    "\"speeds\":[1,5,25]%s}";

/* The base case with extra top-level text (e.g. ",\"variants\":{...}"). */
static char *with(const char *extra)
{
    size_t n = strlen(BASE) + strlen(extra) + 1;
    char *s = malloc(n);
    snprintf(s, n, BASE, extra);
    return s;
}

static void write_file(const char *path, const char *text)
{
    FILE *f = fopen(path, "wb");
    if (f != NULL) {
        fputs(text, f);
        fclose(f);
    }
}

static char *read_file(const char *path)
{
    FILE *f = fopen(path, "rb");
    if (f == NULL)
        return NULL;
    fseek(f, 0, SEEK_END);
    long n = ftell(f);
    fseek(f, 0, SEEK_SET);
    char *s = malloc((size_t)n + 1);
    size_t got = fread(s, 1, (size_t)n, f);
    s[got] = '\0';
    fclose(f);
    return s;
}

static int exists(const char *path)
{
    struct stat st;
    return stat(path, &st) == 0;
}

/* Expand a text; return the status and the cases. */
static eddy_status expand(const char *extra, app_batch_case **cs, int *n, eddy_error *err)
{
    char *text = with(extra);
    memset(err, 0, sizeof *err);
    eddy_status s = app_batch_expand(text, "dir/plate.json", 1, cs, n, err);
    free(text);
    return s;
}

static void test_hash(void)
{
    /* published FNV-1a 64 test vectors */
    check(app_fnv1a64("", 0, APP_FNV1A64_BASIS) == 0xcbf29ce484222325ULL, "FNV-1a 64 of \"\"",
          "offset basis");
    check(app_fnv1a64("a", 1, APP_FNV1A64_BASIS) == 0xaf63dc4c8601ec8cULL, "FNV-1a 64 of \"a\"",
          "0xaf63dc4c8601ec8c");
    check(app_fnv1a64("foobar", 6, APP_FNV1A64_BASIS) == 0x85944171f73967e8ULL,
          "FNV-1a 64 of \"foobar\"", "0x85944171f73967e8");
    uint64_t h = app_fnv1a64("foo", 3, APP_FNV1A64_BASIS);
    check(app_fnv1a64("bar", 3, h) == 0x85944171f73967e8ULL, "FNV-1a 64 continues across calls",
          "foo + bar = foobar");
}

static void test_expand_plain(void)
{
    app_batch_case *cs = NULL;
    int n = 0;
    eddy_error err;
    eddy_status s = expand("", &cs, &n, &err);
    check(s == EDDY_OK && n == 1, "a case without variants is one case", "status %d, %d cases",
          (int)s, n);
    if (s != EDDY_OK || n != 1)
        return;
    check(strcmp(cs[0].name, "plate") == 0 && !cs[0].invalid && cs[0].nvalue == 0,
          "its name is the case's name", "%s", cs[0].name);
    check(strncmp(cs[0].text, "{\n\t\"name\":\t\"plate\"", 18) == 0,
          "the expanded text starts with its name", "%s", "");
    check(strlen(cs[0].hash) == 16 && strspn(cs[0].hash, "0123456789abcdef") == 16,
          "the hash is 16 hex digits", "%s", cs[0].hash);
    /* reformatting the source changes nothing; the picture option does */
    char *text = with("");
    size_t len = strlen(text);
    char *spaced = malloc(2 * len + 1);
    size_t q = 0;
    for (size_t k = 0; k < len; k++) {
        spaced[q++] = text[k];
        if (text[k] == ',')
            spaced[q++] = '\n';
    }
    spaced[q] = '\0';
    app_batch_case *c2 = NULL, *c3 = NULL;
    int n2 = 0, n3 = 0;
    app_batch_expand(spaced, "dir/plate.json", 1, &c2, &n2, &err);
    app_batch_expand(text, "dir/plate.json", 0, &c3, &n3, &err);
    check(n2 == 1 && strcmp(c2[0].hash, cs[0].hash) == 0, "layout of the source does not change "
          "the hash", "%s vs %s", n2 == 1 ? c2[0].hash : "-", cs[0].hash);
    check(n3 == 1 && strcmp(c3[0].hash, cs[0].hash) != 0, "the picture option changes the hash",
          "%s vs %s", n3 == 1 ? c3[0].hash : "-", cs[0].hash);
    app_batch_cases_free(c2, n2);
    app_batch_cases_free(c3, n3);
    free(spaced);
    free(text);
    /* a case without "name" is named after its file */
    app_batch_case *c4 = NULL;
    int n4 = 0;
    const char *noname = "{\"domain\":{\"x\":[0,1],\"y\":[0,1]},\"regions\":[{\"box\":[0,0,1,1],"
                         "\"material\":\"copper_annealed\",\"moving\":true}],\"speeds\":[1]}";
    s = app_batch_expand(noname, "some/dir/My case.v2.json", 1, &c4, &n4, &err);
    check(s == EDDY_OK && n4 == 1 && strcmp(c4[0].name, "My_case") == 0,
          "a case without a name is named after its file's stem", "%s",
          n4 == 1 ? c4[0].name : err.msg);
    app_batch_cases_free(c4, n4);
    app_batch_cases_free(cs, n);
}

/* Variants with different speed lists share the mesh rules: each expanded
 * case gets mesh.design_speed = the highest speed of them all (the mesher
 * resolves the skin depth up to it), unless the case gives one; variants
 * with one speed list are left alone. */
static void test_shared_mesh_rules(void)
{
    app_batch_case *cs = NULL;
    int n = 0;
    eddy_error err;
    eddy_status s = expand(",\"variants\":{\"speeds.2\":[20,80]}", &cs, &n, &err);
    int ok = s == EDDY_OK && n == 2;
    for (int k = 0; ok && k < n; k++)
        ok = !cs[k].invalid && strstr(cs[k].text, "\"design_speed\":\t80") != NULL &&
             cs[k].design_speed == 80.0;
    check(ok, "variants with different speed lists share mesh.design_speed = 80 m/s", "%s",
          ok ? "" : (s == EDDY_OK && n > 0 ? cs[0].text : err.msg));
    app_batch_cases_free(cs, n);
    s = expand(",\"variants\":{\"regions.fin.box\":[[0,-4,40,0],[0,-6,40,0]]}", &cs, &n, &err);
    ok = s == EDDY_OK && n == 2 && strstr(cs[0].text, "design_speed") == NULL &&
         strstr(cs[1].text, "design_speed") == NULL;
    check(ok, "variants with one speed list keep their mesh rules", "%s", ok ? "" : err.msg);
    app_batch_cases_free(cs, n);
    s = expand(",\"mesh\":{\"design_speed\":50},\"variants\":{\"speeds.2\":[20,80]}", &cs, &n,
               &err);
    ok = s == EDDY_OK && n == 2 && cs[0].design_speed == 50.0 && cs[1].design_speed == 50.0;
    check(ok, "a case's own mesh.design_speed is kept", "%s", ok ? "" : err.msg);
    app_batch_cases_free(cs, n);
}

static void test_expand_variants(void)
{
    app_batch_case *cs = NULL;
    int n = 0;
    eddy_error err;
    eddy_status s = expand(",\"variants\":{\"regions.fin.box\":[[0,-4,40,0],[0,-6,40,0]],"
                           "\"speeds.2\":[20,30,40]}",
                           &cs, &n, &err);
    check(s == EDDY_OK && n == 6, "2 x 3 values give 6 cases", "status %d, %d cases: %s", (int)s,
          n, err.msg);
    if (s != EDDY_OK || n != 6)
        return;
    static const char *want[6] = {
        "plate__box-0_-4_40_0__speeds.2-20", "plate__box-0_-4_40_0__speeds.2-30",
        "plate__box-0_-4_40_0__speeds.2-40", "plate__box-0_-6_40_0__speeds.2-20",
        "plate__box-0_-6_40_0__speeds.2-30", "plate__box-0_-6_40_0__speeds.2-40"};
    int names_ok = 1;
    for (int k = 0; k < 6; k++)
        names_ok = names_ok && strcmp(cs[k].name, want[k]) == 0;
    check(names_ok, "variant names <name>__<label>-<value>, first key slowest", "%s ... %s",
          cs[0].name, cs[5].name);
    check(cs[4].nvalue == 2 && strcmp(cs[4].paths[0], "regions.fin.box") == 0 &&
              strcmp(cs[4].values[0], "[0,-6,40,0]") == 0 &&
              strcmp(cs[4].values[1], "30") == 0,
          "each case records its values", "%s=%s, %s=%s", cs[4].paths[0], cs[4].values[0],
          cs[4].paths[1], cs[4].values[1]);
    /* the values are where the paths say, "variants" is gone, the name is set */
    cJSON *root = cJSON_Parse(cs[4].text);
    const cJSON *regs = cJSON_GetObjectItemCaseSensitive(root, "regions");
    const cJSON *box = cJSON_GetObjectItemCaseSensitive(cJSON_GetArrayItem(regs, 0), "box");
    const cJSON *sp = cJSON_GetArrayItem(cJSON_GetObjectItemCaseSensitive(root, "speeds"), 2);
    check(cJSON_GetArrayItem(box, 1) != NULL && cJSON_GetArrayItem(box, 1)->valuedouble == -6 &&
              sp != NULL && sp->valuedouble == 30 &&
              cJSON_GetObjectItemCaseSensitive(root, "variants") == NULL &&
              strcmp(cJSON_GetObjectItemCaseSensitive(root, "name")->valuestring,
                     cs[4].name) == 0,
          "the expanded case holds the values, its name and no \"variants\"", "%s", cs[4].name);
    cJSON_Delete(root);
    /* each expanded case reads without warnings and differs in its hash */
    int clean = 1, distinct = 1;
    for (int k = 0; k < 6; k++) {
        mesh_case *mc = NULL;
        clean = clean && mesh_case_parse(cs[k].text, "x", &mc, NULL) == EDDY_OK &&
                mc->nwarn == 0 && cs[k].warnings == NULL;
        mesh_case_free(mc);
        for (int q = 0; q < k; q++)
            distinct = distinct && strcmp(cs[k].hash, cs[q].hash) != 0;
    }
    check(clean, "every expanded case reads without a warning", "%s", "");
    check(distinct, "every expanded case has its own hash", "%s", "");
    app_batch_cases_free(cs, n);

    /* index and element name address the same value */
    app_batch_case *a = NULL, *b = NULL;
    int na = 0, nb = 0;
    expand(",\"variants\":{\"regions.1.magnetization_angle\":[80]}", &a, &na, &err);
    expand(",\"variants\":{\"regions.n.magnetization_angle\":[80]}", &b, &nb, &err);
    check(na == 1 && nb == 1 && strcmp(a[0].text, b[0].text) == 0 &&
              strstr(a[0].text, "\"magnetization_angle\":\t80") != NULL,
          "a path may use an index or an element's name", "%s / %s", na ? a[0].name : "-",
          nb ? b[0].name : "-");
    app_batch_cases_free(a, na);
    app_batch_cases_free(b, nb);

    /* a variant value the reader rejects makes that case invalid, not the others */
    expand(",\"variants\":{\"regions.fin.box\":[[0,-4,40,0],[0,-4,40,-5]]}", &cs, &n, &err);
    check(n == 2 && !cs[0].invalid && cs[1].invalid &&
              strstr(cs[1].error, "dir/plate.json (variant plate__box-0_-4_40_-5)") != NULL &&
              strstr(cs[1].error, "regions[0].box: y1 must be greater than y0") != NULL,
          "an invalid variant is recorded with the file, the variant and the JSON path", "%s",
          n == 2 ? cs[1].error : err.msg);
    app_batch_cases_free(cs, n);

    /* names too long for a folder name: <name>__v001 ... */
    expand(",\"variants\":{\"domain\":[{\"x\":[0,40],\"y\":[-60,60],\"x_boundary\":\"periodic\"}],"
           "\"regions.fin.material\":[\"copper_annealed\",\"aluminium_6061_t6\"]}",
           &cs, &n, &err);
    check(n == 2 && strcmp(cs[0].name, "plate__v001") == 0 &&
              strcmp(cs[1].name, "plate__v002") == 0,
          "an object value or a long name falls back to <name>__v001", "%s %s",
          n > 0 ? cs[0].name : err.msg, n > 1 ? cs[1].name : "");
    app_batch_cases_free(cs, n);
    /* two values that look alike once made safe */
    expand(",\"variants\":{\"regions.fin.name\":[\"a b\",\"a_b\"]}", &cs, &n, &err);
    check(n == 2 && strcmp(cs[0].name, "plate__v001") == 0,
          "values that would give the same name fall back to numbers", "%s",
          n > 0 ? cs[0].name : err.msg);
    app_batch_cases_free(cs, n);
    /* equal last segments: the labels grow until they differ */
    expand(",\"variants\":{\"regions.n.magnetization_angle\":[90],"
           "\"regions.s.magnetization_angle\":[-90]}",
           &cs, &n, &err);
    check(n == 1 && strcmp(cs[0].name, "plate__n.magnetization_angle-90__s.magnetization_angle--90")
                        == 0,
          "labels are the shortest suffixes that tell the paths apart", "%s",
          n > 0 ? cs[0].name : err.msg);
    app_batch_cases_free(cs, n);
}

static void bad_variant(const char *name, const char *extra, const char *fragment)
{
    app_batch_case *cs = NULL;
    int n = 0;
    eddy_error err;
    eddy_status s = expand(extra, &cs, &n, &err);
    char label[200];
    snprintf(label, sizeof label, "rejects %s", name);
    check(s == EDDY_ERR_INPUT && cs == NULL && strstr(err.msg, "dir/plate.json") != NULL &&
              strstr(err.msg, fragment) != NULL,
          label, "status %d: %s", (int)s, err.msg);
    app_batch_cases_free(cs, n);
}

static void test_expand_errors(void)
{
    bad_variant("a path that does not exist", ",\"variants\":{\"regions.fin.thickness\":[1]}",
                "variants.regions.fin.thickness: no key \"thickness\" in regions.fin");
    bad_variant("an index out of range", ",\"variants\":{\"regions.7.box\":[[0,0,1,1]]}",
                "index 7 is out of range: regions has 3 elements");
    bad_variant("an unknown element name", ",\"variants\":{\"regions.coil.box\":[[0,0,1,1]]}",
                "regions has no element named \"coil\"");
    bad_variant("a path through a number", ",\"variants\":{\"speeds.0.x\":[1]}",
                "speeds.0 is a number");
    bad_variant("an empty segment", ",\"variants\":{\"regions..box\":[1]}", "empty segment");
    bad_variant("a value that is not a list", ",\"variants\":{\"speeds.0\":5}",
                "variants.speeds.0: must be an array of values");
    bad_variant("an empty value list", ",\"variants\":{\"speeds.0\":[]}",
                "variants.speeds.0: must not be empty");
    bad_variant("variants that are not an object", ",\"variants\":[1,2]",
                "variants: must be an object");
    bad_variant("a varying name", ",\"variants\":{\"name\":[\"a\",\"b\"]}", "the name cannot vary");
    bad_variant("nested paths", ",\"variants\":{\"regions.0\":[{}],\"regions.0.box\":[[0,0,1,1]]}",
                "change the same value");
    bad_variant("one value by index and by name",
                ",\"variants\":{\"regions.0.box\":[[0,-4,40,0]],\"regions.fin.box\":[[0,-5,40,0]]}",
                "change the same value");
    bad_variant("a duplicate path", ",\"variants\":{\"speeds.0\":[1],\"speeds.0\":[2]}",
                "appears more than once");
    bad_variant("too many combinations",
                ",\"variants\":{\"speeds.0\":[1,2,3,4,5,6,7,8,9,10,11,12,13,14,15,16,17,18,19,20,"
                "21,22,23,24,25,26,27,28,29,30,31,32,33,34,35,36,37,38,39,40,41,42,43,44,45,46,"
                "47,48,49,50,51,52,53,54,55,56,57,58,59,60,61,62,63,64,65,66,67,68,69,70,71,72,"
                "73,74,75,76,77,78,79,80,81,82,83,84,85,86,87,88,89,90,91,92,93,94,95,96,97,98,"
                "99,100,101],\"speeds.1\":[1,2,3,4,5,6,7,8,9,10,11,12,13,14,15,16,17,18,19,20,21,"
                "22,23,24,25,26,27,28,29,30,31,32,33,34,35,36,37,38,39,40,41,42,43,44,45,46,47,"
                "48,49,50,51,52,53,54,55,56,57,58,59,60,61,62,63,64,65,66,67,68,69,70,71,72,73,"
                "74,75,76,77,78,79,80,81,82,83,84,85,86,87,88,89,90,91,92,93,94,95,96,97,98,99,"
                "100]}",
                "more than 10000 combinations");
    bad_variant("an infinite number", ",\"mesh\":{\"growth\":1e999}",
                "mesh.growth: must be a finite number");
    app_batch_case *cs = NULL;
    int n = 0;
    eddy_error err = {0};
    eddy_status s = app_batch_expand("{\"name\":\"x\",", "t.json", 1, &cs, &n, &err);
    check(s == EDDY_ERR_INPUT && strstr(err.msg, "t.json: line 1, column") != NULL,
          "malformed JSON gives the plain solve's message", "%s", err.msg);
    memset(&err, 0, sizeof err);
    s = app_batch_expand("[1,2]", "t.json", 1, &cs, &n, &err);
    check(s == EDDY_ERR_INPUT && strstr(err.msg, "(top level): must be a JSON object") != NULL,
          "a top-level array is rejected", "%s", err.msg);
}

static void test_collect_and_plan(void)
{
    char dir[512], path[1200];
    snprintf(dir, sizeof dir, "%s/in", tmpdir);
    mkdir(dir, 0777);
    char *text = with(",\"variants\":{\"speeds.0\":[1,2]}");
    snprintf(path, sizeof path, "%s/b.json", dir);
    write_file(path, text);
    free(text);
    snprintf(path, sizeof path, "%s/a.json", dir);
    write_file(path, "{\"name\":\"a\",\"speeds\":[]}");
    snprintf(path, sizeof path, "%s/.hidden.json", dir);
    write_file(path, "{}");
    snprintf(path, sizeof path, "%s/notes.txt", dir);
    write_file(path, "not a case");
    snprintf(path, sizeof path, "%s/sub", dir);
    mkdir(path, 0777);
    snprintf(path, sizeof path, "%s/sub/c.json", dir);
    write_file(path, "{}");

    char **files = NULL;
    int nf = 0;
    const char *args[1] = {dir};
    eddy_status s = app_batch_collect(1, args, &files, &nf, NULL);
    check(s == EDDY_OK && nf == 2 && strstr(files[0], "/a.json") != NULL &&
              strstr(files[1], "/b.json") != NULL,
          "a folder gives its *.json sorted, no hidden files, no sub-folders", "%d files", nf);
    for (int k = 0; k < nf; k++)
        free(files[k]);
    free(files);

    app_batch_plan *p = NULL;
    eddy_error err = {0};
    s = app_batch_plan_build(1, args, 1, &p, &err);
    check(s == EDDY_OK && p->ncase == 3 && p->cases[0].invalid &&
              strcmp(p->cases[0].name, "a") == 0 && strstr(p->cases[0].error, "a.json") != NULL &&
              !p->cases[1].invalid && p->nkey == 1 && strcmp(p->keys[0], "speeds.0") == 0,
          "the plan holds an invalid file as a failed case and expands the others",
          "status %d, %d cases", (int)s, p != NULL ? p->ncase : 0);

    /* resume decisions */
    char out[512];
    snprintf(out, sizeof out, "%s/out", tmpdir);
    s = app_batch_plan_save(p, out, &err);
    snprintf(path, sizeof path, "%s/%s/case.json", out, p->cases[1].name);
    char *saved = read_file(path);
    check(s == EDDY_OK && saved != NULL && strcmp(saved, p->cases[1].text) == 0,
          "the plan writes each expanded case as case.json", "%s", err.msg);
    free(saved);
    check(app_batch_case_state(out, &p->cases[1]) == APP_CASE_NOT_RUN,
          "a case without results is not run", "%s", "");
    /* a finished run: result.json, then the marker */
    snprintf(path, sizeof path, "%s/%s/result.json", out, p->cases[1].name);
    {
        /* a stand-in result.json as a run writes it: its peak is the run's
         * one rule, design_peak, over the table (the summary must carry it,
         * not find another) */
        double sp[3] = {1, 10, 100}, dr[3] = {1, 2, 1}, vpk = NAN, fpk = NAN;
        design_peak(3, sp, dr, 1, &vpk, &fpk, NULL, NULL);
        char standin[1024];
        snprintf(standin, sizeof standin,
                 "{\"points\":[{\"speed\":1,\"drag_force\":1,\"force_y\":-1,\"loss\":1},"
                 "{\"speed\":10,\"drag_force\":2,\"force_y\":-3,\"loss\":20},"
                 "{\"speed\":100,\"drag_force\":1,\"force_y\":-4,\"loss\":100}],"
                 "\"peak\":{\"drag_force\":%.17g,\"speed\":%.17g},\"notice\":\"n\"}",
                 fpk, vpk);
        write_file(path, standin);
    }
    check(app_batch_case_state(out, &p->cases[1]) == APP_CASE_NOT_RUN,
          "result.json without input.hash is not finished", "%s", "");
    s = app_batch_case_done(out, &p->cases[1], 2.5, &err);
    check(s == EDDY_OK && app_batch_case_state(out, &p->cases[1]) == APP_CASE_OK,
          "result.json and a matching input.hash: finished", "%s", err.msg);
    s = app_batch_case_done(out, &p->cases[2], 1.0, &err);
    check(s == EDDY_ERR_IO, "no completion marker without result.json", "status %d", (int)s);
    /* a result.json cut short (no notice, a point without its force) is not finished */
    snprintf(path, sizeof path, "%s/%s", out, p->cases[2].name);
    mkdir(path, 0777);
    snprintf(path, sizeof path, "%s/%s/result.json", out, p->cases[2].name);
    write_file(path, "{\"points\":[{\"speed\":1,\"drag_force\":1,\"force_y\":-1,\"loss\":1}]}");
    s = app_batch_case_done(out, &p->cases[2], 1.0, &err);
    int no_notice = s == EDDY_ERR_IO;
    write_file(path, "{\"points\":[{\"speed\":1,\"loss\":1}],\"notice\":\"n\"}");
    s = app_batch_case_done(out, &p->cases[2], 1.0, &err);
    check(no_notice && s == EDDY_ERR_IO &&
              app_batch_case_state(out, &p->cases[2]) == APP_CASE_NOT_RUN,
          "an incomplete result.json gets no completion marker", "status %d", (int)s);
    unlink(path);
    /* a changed input is not finished */
    app_batch_case changed = p->cases[1];
    snprintf(changed.hash, sizeof changed.hash, "0123456789abcdef");
    check(app_batch_case_state(out, &changed) == APP_CASE_NOT_RUN,
          "a different input hash: not finished", "%s", "");
    /* failures */
    s = app_batch_case_failed(out, &p->cases[2], APP_CASE_TIMEOUT, "too slow, \"really\"", 3.0,
                               &err);
    check(s == EDDY_OK && app_batch_case_state(out, &p->cases[2]) == APP_CASE_TIMEOUT,
          "error.json records a timeout", "%s", err.msg);
    s = app_batch_case_failed(out, &p->cases[0], APP_CASE_INVALID, p->cases[0].error, NAN, &err);
    check(s == EDDY_OK && app_batch_case_state(out, &p->cases[0]) == APP_CASE_INVALID,
          "error.json records an invalid case", "%s", err.msg);
    check(app_batch_case_state(out, &changed) == APP_CASE_NOT_RUN,
          "an error.json for another input hash does not count", "%s", "");

    /* the summary */
    app_batch_counts cnt = {0};
    s = app_batch_write_summary(out, p, &cnt, &err);
    check(s == EDDY_OK && cnt.cases == 3 && cnt.ok == 1 && cnt.failed == 2 && cnt.not_run == 0,
          "summary counts", "%d cases, %d ok, %d failed, %d not run", cnt.cases, cnt.ok,
          cnt.failed, cnt.not_run);
    snprintf(path, sizeof path, "%s/summary.csv", out);
    char *csv = read_file(path);
    int lines = 0;
    for (const char *c = csv; c != NULL && *c; c++)
        lines += *c == '\n';
    check(csv != NULL && lines == 1 + 1 + 3 + 1,
          "summary.csv: a header, one row per speed, one row per case without result", "%d lines",
          lines);
    check(csv != NULL &&
              strncmp(csv,
                      "case,source,speeds.0,speed_m_per_s,drag_force_N_per_m,force_y_N_per_m,"
                      "loss_W_per_m,peak_drag_N_per_m,peak_drag_speed_m_per_s,status,error,"
                      "seconds\n",
                      strlen("case,source,speeds.0,speed_m_per_s")) == 0,
          "summary.csv header names the variant column and the units", "%.80s",
          csv != NULL ? csv : "(none)");
    check(csv != NULL && strstr(csv, ",timeout,\"too slow, \"\"really\"\"\",3\n") != NULL,
          "summary.csv quotes a field with a comma and doubles its quotes (RFC 4180)", "%s", "");
    check(csv != NULL && strstr(csv, "plate__speeds.0-1,") != NULL &&
              strstr(csv, ",1,10,2,-3,20,") != NULL,
          "summary.csv rows carry the variant value and the point", "%s", "");
    free(csv);
    snprintf(path, sizeof path, "%s/summary.json", out);
    char *js = read_file(path);
    cJSON *root = cJSON_Parse(js);
    free(js);
    const cJSON *rows = cJSON_GetObjectItemCaseSensitive(root, "rows");
    const cJSON *r1 = cJSON_GetArrayItem(rows, 1);
    double peak = cJSON_GetObjectItemCaseSensitive(r1, "peak_drag") != NULL
                      ? cJSON_GetObjectItemCaseSensitive(r1, "peak_drag")->valuedouble
                      : NAN;
    double vpeak = cJSON_GetObjectItemCaseSensitive(r1, "peak_drag_speed") != NULL
                       ? cJSON_GetObjectItemCaseSensitive(r1, "peak_drag_speed")->valuedouble
                       : NAN;
    check(cJSON_GetArraySize(rows) == 5, "summary.json has the same rows", "%d",
          cJSON_GetArraySize(rows));
    /* drag 1, 2, 1 at 1, 10, 100 m/s is the parabola 2 - (log10 v - 1)^2: peak 2 at 10 m/s */
    check(fabs(peak - 2.0) < PEAK_TOL && fabs(vpeak - 10.0) < PEAK_TOL * 10,
          "summary peak = result.json's (the parabola in log speed)", "%.12g N/m at %.12g m/s",
          peak, vpeak);
    const cJSON *var = cJSON_GetObjectItemCaseSensitive(r1, "variant");
    check(cJSON_IsNumber(cJSON_GetObjectItemCaseSensitive(var, "speeds.0")),
          "summary.json rows carry the variant values as JSON", "%s", "");
    cJSON_Delete(root);
    snprintf(path, sizeof path, "%s/summary.html", out);
    char *html = read_file(path);
    check(html != NULL && strstr(html, "<table id=\"cases\">") != NULL &&
              strstr(html, "<table id=\"points\">") != NULL && strstr(html, "<script") == NULL,
          "summary.html holds the tables and no script", "%s", "");
    check(html != NULL && strstr(html, "too slow, &quot;really&quot;") != NULL,
          "summary.html escapes text", "%s", "");
    check(html != NULL && strstr(html, "licensed engineers") != NULL,
          "summary.html carries the safety notice", "%s", "");
    free(html);

    /* prepare removes the old outputs and the marker, keeps case.json and other files */
    snprintf(path, sizeof path, "%s/%s/notes.txt", out, p->cases[1].name);
    write_file(path, "mine");
    snprintf(path, sizeof path, "%s/%s/jz_00_1mps.png", out, p->cases[1].name);
    write_file(path, "x");
    snprintf(path, sizeof path, "%s/%s/forces.png.tmp", out, p->cases[1].name);
    write_file(path, "x");
    s = app_batch_case_prepare(out, &p->cases[1], &err);
    char f1[700], f2[700], f3[700], f4[700];
    snprintf(f1, sizeof f1, "%s/%s/input.hash", out, p->cases[1].name);
    snprintf(f2, sizeof f2, "%s/%s/result.json", out, p->cases[1].name);
    snprintf(f3, sizeof f3, "%s/%s/notes.txt", out, p->cases[1].name);
    snprintf(f4, sizeof f4, "%s/%s/case.json", out, p->cases[1].name);
    check(s == EDDY_OK && !exists(f1) && !exists(f2) && !exists(path) && exists(f3) && exists(f4),
          "prepare clears earlier outputs, keeps case.json and foreign files", "%s", err.msg);

    /* the plan reads back as saved */
    app_batch_plan *q = NULL;
    s = app_batch_plan_load(out, &q, &err);
    int same = s == EDDY_OK && q->ncase == p->ncase && q->nkey == p->nkey;
    for (int k = 0; same && k < p->ncase; k++)
        same = strcmp(q->cases[k].name, p->cases[k].name) == 0 &&
               strcmp(q->cases[k].hash, p->cases[k].hash) == 0 &&
               q->cases[k].invalid == p->cases[k].invalid &&
               q->cases[k].nvalue == p->cases[k].nvalue &&
               (p->cases[k].invalid || strcmp(q->cases[k].text, p->cases[k].text) == 0);
    check(same, "batch.json reads back as the same plan", "%s", err.msg);
    app_batch_plan_free(q);
    /* a case.json changed behind the plan's back is refused */
    write_file(f4, "{\"name\":\"tampered\"}");
    q = NULL;
    memset(&err, 0, sizeof err);
    s = app_batch_plan_load(out, &q, &err);
    check(s == EDDY_ERR_INPUT && q == NULL &&
              strstr(err.msg, "changed since the batch was planned"),
          "a changed case.json is refused by a task", "%s", err.msg);

    /* Slurm scripts */
    int tasks[4] = {0, 1, 2};
    app_batch_slurm_opts so;
    app_batch_slurm_opts_defaults(&so);
    so.exe = "/opt/it's here/eddy2d";
    so.ntask = 2;
    so.tasks = tasks + 1;
    so.case_timeout = 90;
    const char *extra[1] = {"--partition=short"};
    so.extra = extra;
    so.nextra = 1;
    char absout[1024];
    if (out[0] == '/')
        snprintf(absout, sizeof absout, "%s", out);
    else {
        char cwd[512];
        snprintf(absout, sizeof absout, "%s/%s", getcwd(cwd, sizeof cwd) ? cwd : ".", out);
    }
    s = app_batch_write_slurm(absout, p, &so, &err);
    snprintf(path, sizeof path, "%s/batch.sbatch", absout);
    char *sb = read_file(path);
    check(s == EDDY_OK && sb != NULL && strstr(sb, "#SBATCH --array=1-2\n") != NULL &&
              strstr(sb, "#SBATCH --partition=short\n") != NULL &&
              strstr(sb, "#SBATCH --time=4\n") != NULL &&
              strstr(sb,
                     "exec '/opt/it'\\''s here/eddy2d' batch --run-one \"$SLURM_ARRAY_TASK_ID\"") !=
                  NULL,
          "batch.sbatch: the array, the options, a quoted program path", "%s", err.msg);
    free(sb);
    tasks[1] = 2;
    tasks[2] = 3;
    so.tasks = tasks;
    so.ntask = 3;
    s = app_batch_write_slurm(absout, p, &so, &err);
    check(s == EDDY_ERR_INPUT, "task indices beyond the plan are refused", "status %d", (int)s);
    int t2[3] = {0, 2, 1};
    so.tasks = t2;
    so.ntask = 2;
    s = app_batch_write_slurm(absout, p, &so, &err);
    snprintf(path, sizeof path, "%s/batch.sbatch", absout);
    sb = read_file(path);
    check(s == EDDY_OK && sb != NULL && strstr(sb, "#SBATCH --array=0,2\n") != NULL,
          "separate indices are listed with commas", "%s", "");
    free(sb);
    snprintf(path, sizeof path, "%s/submit.sh", absout);
    sb = read_file(path);
    check(sb != NULL && strstr(sb, "--dependency=afterany:") != NULL,
          "submit.sh queues the summary after every task has ended", "%s", "");
    free(sb);
    app_batch_plan_free(p);

    /* command-line level problems */
    const char *missing[1] = {"/nonexistent/dir"};
    p = NULL;
    s = app_batch_plan_build(1, missing, 1, &p, &err);
    check(s == EDDY_ERR_INPUT && p == NULL, "a missing argument is an input error", "status %d",
          (int)s);
    snprintf(path, sizeof path, "%s/empty", tmpdir);
    mkdir(path, 0777);
    const char *empty[1] = {path};
    memset(&err, 0, sizeof err);
    s = app_batch_plan_build(1, empty, 1, &p, &err);
    check(s == EDDY_ERR_INPUT && strstr(err.msg, "no case files") != NULL,
          "a folder without cases is an input error", "%s", err.msg);
    char p1[1200], p2[1200];
    snprintf(p1, sizeof p1, "%s/dup1.json", tmpdir);
    snprintf(p2, sizeof p2, "%s/dup2.json", tmpdir);
    write_file(p1, "{\"name\":\"same\"}");
    write_file(p2, "{\"name\":\"same\"}");
    const char *dups[2] = {p1, p2};
    memset(&err, 0, sizeof err);
    s = app_batch_plan_build(2, dups, 1, &p, &err);
    check(s == EDDY_ERR_INPUT && strstr(err.msg, "dup1.json and") != NULL &&
              strstr(err.msg, "dup2.json: two cases named \"same\"") != NULL,
          "two cases with one name are refused, naming both files", "%s", err.msg);
    write_file(p1, "{\"name\":\"summary.csv\"}");
    const char *res[1] = {p1};
    memset(&err, 0, sizeof err);
    s = app_batch_plan_build(1, res, 1, &p, &err);
    check(s == EDDY_ERR_INPUT && strstr(err.msg, "name of a file of the batch folder") != NULL,
          "a case named like a batch file is refused", "%s", err.msg);
}

/* Pixels of im below its first KEY_ROWS rows within COLOUR_TOL of (r, g, b). */
static int colour_pixels(const image *im, int r, int g, int b)
{
    int n = 0;
    for (int j = KEY_ROWS; j < im->h; j++)
        for (int i = 0; i < im->w; i++) {
            const unsigned char *q = px(im, i, j);
            n += abs(q[0] - r) <= COLOUR_TOL && abs(q[1] - g) <= COLOUR_TOL &&
                 abs(q[2] - b) <= COLOUR_TOL;
        }
    return n;
}

/* A batch of ncase variants with stand-in results (drag k F(v), or for a
 * disc torque k T(rpm)), summarised: summary.png and summary.html. */
static void overlay_batch(const char *tag, int ncase, int disc)
{
    char dir[512], path[1200], extra[400], list[200] = "";
    snprintf(dir, sizeof dir, "%s/ov_%s", tmpdir, tag);
    mkdir(dir, 0777);
    for (int k = 0; k < ncase; k++) /* speeds.0 values in reverse: the plot sorts them */
        snprintf(list + strlen(list), sizeof list - strlen(list), "%s%d", k ? "," : "",
                 ncase - k);
    snprintf(extra, sizeof extra, ",\"variants\":{\"speeds.0\":[%s]}", list);
    char *text = with(extra);
    snprintf(path, sizeof path, "%s/in_%s.json", tmpdir, tag);
    write_file(path, text);
    free(text);
    const char *args[1] = {path};
    app_batch_plan *p = NULL;
    eddy_error err = {0};
    eddy_status s = app_batch_plan_build(1, args, 1, &p, &err);
    if (s != EDDY_OK || p->ncase != ncase) {
        check(0, "overlay batch plan", "%s", err.msg);
        app_batch_plan_free(p);
        return;
    }
    s = app_batch_plan_save(p, dir, &err);
    for (int c = 0; s == EDDY_OK && c < p->ncase; c++) {
        double scale = 1.0 + c;
        char standin[1024];
        if (disc)
            snprintf(standin, sizeof standin,
                     "{\"points\":[{\"speed\":1,\"drag_force\":%g,\"force_y\":-1,\"loss\":1,"
                     "\"rpm\":100,\"torque\":%g},{\"speed\":10,\"drag_force\":%g,\"force_y\":-1,"
                     "\"loss\":1,\"rpm\":1000,\"torque\":%g},{\"speed\":100,\"drag_force\":%g,"
                     "\"force_y\":-1,\"loss\":1,\"rpm\":10000,\"torque\":%g}],\"notice\":\"n\"}",
                     scale, 3 * scale, 2 * scale, 6 * scale, scale, 3 * scale);
        else
            snprintf(standin, sizeof standin,
                     "{\"points\":[{\"speed\":1,\"drag_force\":%g,\"force_y\":-1,\"loss\":1},"
                     "{\"speed\":10,\"drag_force\":%g,\"force_y\":-1,\"loss\":1},"
                     "{\"speed\":100,\"drag_force\":%g,\"force_y\":-1,\"loss\":1}],"
                     "\"notice\":\"n\"}",
                     scale, 2 * scale, scale);
        snprintf(path, sizeof path, "%s/%s/result.json", dir, p->cases[c].name);
        write_file(path, standin);
        s = app_batch_case_done(dir, &p->cases[c], 1.0, &err);
    }
    if (s == EDDY_OK)
        s = app_batch_write_summary(dir, p, NULL, &err);
    char what[200];
    snprintf(what, sizeof what, "%s: summary written", tag);
    check(s == EDDY_OK, what, "%s", err.msg);
    snprintf(path, sizeof path, "%s/summary.png", dir);
    image im;
    snprintf(what, sizeof what, "%s: summary.png is a valid PNG of %d x %d px", tag, OVERLAY_W,
             OVERLAY_H);
    if (read_png(path, &im) != 0) {
        check(0, what, "cannot decode %s", path);
        app_batch_plan_free(p);
        return;
    }
    check(im.w == OVERLAY_W && im.h == OVERLAY_H, what, "%d x %d", im.w, im.h);
    /* every case's colour, as listed, is the palette's (or the ramp's) and is drawn */
    const char *series = text_of(&im, "eddy2d:series");
    int nline = 0, palette_ok = 1, fewest = 1 << 30;
    for (const char *q = series; q != NULL && *q != '\0'; nline++) {
        const char *tab = strchr(q, '\t'), *nl = strchr(q, '\n');
        unsigned r = 0, g = 0, b = 0;
        if (tab == NULL || nl == NULL || sscanf(tab + 1, "#%2x%2x%2x", &r, &g, &b) != 3)
            break;
        unsigned char want[3];
        post_series_rgb(nline, ncase, want);
        palette_ok = palette_ok && want[0] == r && want[1] == g && want[2] == b;
        int npx = colour_pixels(&im, (int)r, (int)g, (int)b);
        fewest = npx < fewest ? npx : fewest;
        q = nl + 1;
    }
    snprintf(what, sizeof what, "%s: summary.png holds pixels of each of the %d cases' colours",
             tag, ncase);
    check(nline == ncase && palette_ok && fewest >= COLOUR_PX_MIN, what,
          "%d series listed, colours are the series colours: %d, fewest pixels of one colour %d "
          "(at least %d)",
          nline, palette_ok, fewest, COLOUR_PX_MIN);
    /* in the order of the variant value: the first listed is value 1 */
    snprintf(what, sizeof what, "%s: the curves are keyed by the variant value, in its order",
             tag);
    check(series != NULL && strncmp(series, "1\t", 2) == 0 &&
              text_of(&im, "eddy2d:key") != NULL &&
              strcmp(text_of(&im, "eddy2d:key"), "speeds.0") == 0,
          what, "first %.*s", series != NULL ? (int)strcspn(series, "\n") : 6,
          series != NULL ? series : "(none)");
    const char *xl = text_of(&im, "eddy2d:x"), *yl = text_of(&im, "eddy2d:y");
    snprintf(what, sizeof what, "%s: summary.png plots %s", tag,
             disc ? "torque against rpm" : "drag against speed");
    check(xl != NULL && yl != NULL &&
              (disc ? strstr(xl, "rpm") != NULL && strstr(yl, "torque") != NULL
                    : strstr(xl, "m/s") != NULL && strstr(yl, "drag") != NULL),
          what, "x %s, y %s", xl != NULL ? xl : "-", yl != NULL ? yl : "-");
    image_free(&im);
    snprintf(path, sizeof path, "%s/summary.html", dir);
    char *html = read_file(path);
    snprintf(what, sizeof what, "%s: summary.html shows summary.png and says what it plots", tag);
    check(html != NULL && strstr(html, "<img src=\"summary.png\"") != NULL &&
              strstr(html, disc ? "torque of the whole disc (N m) against rpm"
                                : "drag per unit length (N/m) against speed") != NULL,
          what, "%s", "");
    free(html);
    /* no ok case left (the results withdrawn): the old summary.png goes */
    for (int c = 0; c < p->ncase; c++) {
        snprintf(path, sizeof path, "%s/%s/result.json", dir, p->cases[c].name);
        unlink(path);
    }
    s = app_batch_write_summary(dir, p, NULL, &err);
    snprintf(path, sizeof path, "%s/summary.png", dir);
    snprintf(what, sizeof what, "%s: without an ok case summary.png is removed", tag);
    check(s == EDDY_OK && !exists(path), what, "status %d", (int)s);
    app_batch_plan_free(p);
}

static void test_overlay(void)
{
    overlay_batch("five", 5, 0);
    overlay_batch("twelve", 12, 0);
    overlay_batch("disc", 3, 1);
}

int main(void)
{
    snprintf(tmpdir, sizeof tmpdir, "/tmp/eddy2d_test_batch_XXXXXX");
    if (mkdtemp(tmpdir) == NULL) {
        printf("FAIL setup: cannot create a temporary folder\n");
        return 1;
    }
    test_hash();
    test_expand_plain();
    test_expand_variants();
    test_shared_mesh_rules();
    test_expand_errors();
    test_collect_and_plan();
    test_overlay();
    char cmd[600];
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", tmpdir);
    if (system(cmd) != 0)
        printf("# could not remove %s\n", tmpdir);
    return check_summary();
}
