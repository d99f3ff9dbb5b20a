/*
 * fuzz_case.c - libFuzzer harness for the case reader and validator
 * (mesh_case_parse, then mesh_grid_estimate on success) and the variant
 * expansion of the batch runner (app_batch_expand, which validates every
 * expanded case in turn).  Any input must give a clean status: no crash, no
 * sanitizer report, no leak, no hang.
 *
 *   make fuzz                  # clang -fsanitize=fuzzer,address,undefined;
 *                              # runs FUZZ_SECONDS (default 60) from a seed
 *                              # corpus of cases/, tests/catalogue/ and
 *                              # tests/fuzz_corpus/
 *
 * A crash found is written to build/fuzz/crash-*; once fixed, copy it into
 * tests/fuzz_corpus/ and add its outcome to tests/fuzz_corpus/EXPECTED
 * (build/tests/test_fuzz_corpus --record tests/fuzz_corpus prints the
 * lines).  Built with -DEDDY_FUZZ_REPLAY this file has a main() that every
 * `make test` runs (test_fuzz_corpus): each saved input must keep its
 * recorded outcome, each demo case must read and expand, each malformed
 * catalogue file must be rejected.
 */
#include <stddef.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "mesh/mesh.h"
#include "app/app_batch.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

/* The harness proper: *read receives the status of reading (and, when read,
 * estimating) the text as one case, *ncase the number of cases its variant
 * expansion gives (-1 when the expansion fails). */
static void fuzz_one(const uint8_t *data, size_t size, eddy_status *read, int *ncase)
{
    *read = EDDY_ERR_NOMEM;
    *ncase = -1;
    char *text = malloc(size + 1);
    if (text == NULL)
        return;
    memcpy(text, data, size);
    text[size] = '\0'; /* a NUL inside ends the text, as a C string */
    eddy_error err = {0};
    mesh_case *c = NULL;
    *read = mesh_case_parse(text, "fuzz.json", &c, &err);
    if (*read == EDDY_OK) {
        mesh_estimate est;
        /* the size check must refuse what a fuzzer machine cannot hold */
        *read = mesh_grid_estimate(c, 1024.0 * 1024.0 * 1024.0, &est, &err);
    }
    mesh_case_free(c);
    app_batch_case *cs = NULL;
    int n = 0;
    memset(&err, 0, sizeof err);
    if (app_batch_expand(text, "fuzz.json", 1, &cs, &n, &err) == EDDY_OK) {
        *ncase = n;
        app_batch_cases_free(cs, n);
    }
    free(text);
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    eddy_status read;
    int ncase;
    fuzz_one(data, size, &read, &ncase);
    return 0;
}

#ifdef EDDY_FUZZ_REPLAY
#include <dirent.h>
#include <stdio.h>
#include <sys/stat.h>

#include "tests/check.h"

/* A file's bytes (malloc'ed, caller frees); NULL if it cannot be read. */
static unsigned char *slurp(const char *path, size_t *len)
{
    struct stat st;
    FILE *f = stat(path, &st) == 0 && S_ISREG(st.st_mode) ? fopen(path, "rb") : NULL;
    if (f == NULL)
        return NULL;
    unsigned char *buf = malloc((size_t)st.st_size + 1);
    if (buf != NULL)
        *len = fread(buf, 1, (size_t)st.st_size + 1, f);
    fclose(f);
    return buf;
}

/* Replay the file dir/name: *rd and *nc as fuzz_one (EDDY_ERR_IO, -1 when it
 * cannot be read). */
static void replay_file(const char *dir, const char *name, eddy_status *rd, int *nc)
{
    char path[1024];
    snprintf(path, sizeof path, "%.700s/%.255s", dir, name);
    size_t len = 0;
    unsigned char *buf = slurp(path, &len);
    *rd = EDDY_ERR_IO;
    *nc = -1;
    if (buf != NULL)
        fuzz_one(buf, len, rd, nc);
    free(buf);
}

/* The regular files of dir (names only, sorted, at most max); returns the count. */
static int list_dir(const char *dir, char names[][256], int max)
{
    DIR *d = opendir(dir);
    if (d == NULL)
        return 0;
    int n = 0;
    struct dirent *e;
    while ((e = readdir(d)) != NULL && n < max) {
        char path[1024];
        snprintf(path, sizeof path, "%s/%s", dir, e->d_name);
        struct stat st;
        if (e->d_name[0] == '.' || strcmp(e->d_name, "EXPECTED") == 0 ||
            stat(path, &st) != 0 || !S_ISREG(st.st_mode))
            continue;
        snprintf(names[n++], 256, "%s", e->d_name);
    }
    closedir(d);
    qsort(names, (size_t)n, 256, (int (*)(const void *, const void *))strcmp);
    return n;
}

#define MAX_FILES 4096
static char names[MAX_FILES][256];

/* tests/fuzz_corpus/: inputs the fuzzer found (crashes once fixed, and the
 * inputs that reached new code), each listed in tests/fuzz_corpus/EXPECTED
 * with the outcome it must keep: "<file> <read status> <cases>" (the status
 * number of reading it as one case, eddy_status; the number of cases its
 * variant expansion gives, -1 for a rejected file).  A changed outcome, a
 * file not listed or a listed file missing fails. */
static void replay_corpus(const char *dir)
{
    char path[1024];
    snprintf(path, sizeof path, "%s/EXPECTED", dir);
    FILE *ef = fopen(path, "r");
    int nlisted = 0, nok = 0, n = list_dir(dir, names, MAX_FILES);
    char line[512];
    while (ef != NULL && fgets(line, sizeof line, ef) != NULL) {
        char file[256];
        int want_read, want_cases;
        if (line[0] == '#' || sscanf(line, "%255s %d %d", file, &want_read, &want_cases) != 3)
            continue;
        nlisted++;
        snprintf(path, sizeof path, "%s/%s", dir, file);
        size_t len = 0;
        unsigned char *buf = slurp(path, &len);
        if (buf == NULL) {
            check(0, "fuzz corpus: a listed file is there", "%s missing", file);
            continue;
        }
        eddy_status rd;
        int nc;
        fuzz_one(buf, len, &rd, &nc);
        free(buf);
        if ((int)rd == want_read && nc == want_cases)
            nok++;
        else
            check(0, "fuzz corpus: outcome unchanged", "%s: read status %d (want %d), %d cases "
                  "(want %d)", file, (int)rd, want_read, nc, want_cases);
    }
    if (ef != NULL)
        fclose(ef);
    check(n > 0 && nlisted == n && nok == n,
          "fuzz corpus: every saved input replays with its recorded outcome",
          "%d files in %s, %d listed in EXPECTED, %d unchanged", n, dir, nlisted, nok);
}

/* Every file of dir must read as a case (want_ok) or be rejected (!want_ok). */
static void replay_expect(const char *dir, int want_ok, const char *what)
{
    int n = list_dir(dir, names, MAX_FILES), good = 0;
    for (int k = 0; k < n; k++) {
        eddy_status rd;
        int nc;
        replay_file(dir, names[k], &rd, &nc);
        if ((rd == EDDY_OK && nc > 0) == want_ok)
            good++;
        else
            printf("# %s/%s: read status %d, %d cases\n", dir, names[k], (int)rd, nc);
    }
    check(n > 0 && good == n, what, "%d of %d files in %s", good, n, dir);
}

/* With --record DIR: print the EXPECTED lines for the files of DIR. */
static int record(const char *dir)
{
    int n = list_dir(dir, names, MAX_FILES);
    printf("# file, read status (eddy_status), cases of the variant expansion (-1: rejected)\n");
    for (int k = 0; k < n; k++) {
        eddy_status rd;
        int nc;
        replay_file(dir, names[k], &rd, &nc);
        printf("%s %d %d\n", names[k], (int)rd, nc);
    }
    return 0;
}

int main(int argc, char **argv)
{
    if (argc == 3 && strcmp(argv[1], "--record") == 0)
        return record(argv[2]);
    replay_corpus("tests/fuzz_corpus");
    replay_expect("cases", 1, "fuzz replay: every demo case reads and expands");
    replay_expect("tests/catalogue", 0, "fuzz replay: every malformed catalogue file is rejected");
    return check_summary();
}
#endif
