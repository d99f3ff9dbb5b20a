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
 * A crash found is written to build/fuzz/crash-*; copy it into
 * tests/fuzz_corpus/ (any name) and it is replayed by every `make test`
 * from then on: built with -DEDDY_FUZZ_REPLAY this file has a main() that
 * feeds every file of tests/fuzz_corpus/, tests/catalogue/ and cases/ to the
 * same entry point (test_fuzz_corpus).
 */
#include <stddef.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "mesh/mesh.h"
#include "app/app_batch.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    char *text = malloc(size + 1);
    if (text == NULL)
        return 0;
    memcpy(text, data, size);
    text[size] = '\0'; /* a NUL inside ends the text, as a C string */
    eddy_error err = {0};
    mesh_case *c = NULL;
    if (mesh_case_parse(text, "fuzz.json", &c, &err) == EDDY_OK) {
        mesh_estimate est;
        /* the size check must refuse what a fuzzer machine cannot hold */
        mesh_grid_estimate(c, 1024.0 * 1024.0 * 1024.0, &est, &err);
    }
    mesh_case_free(c);
    app_batch_case *cs = NULL;
    int n = 0;
    memset(&err, 0, sizeof err);
    if (app_batch_expand(text, "fuzz.json", 1, &cs, &n, &err) == EDDY_OK)
        app_batch_cases_free(cs, n);
    free(text);
    return 0;
}

#ifdef EDDY_FUZZ_REPLAY
#include <dirent.h>
#include <stdio.h>
#include <sys/stat.h>

#include "tests/check.h"

/* Feed every regular file of dir to the harness; returns the count. */
static int replay_dir(const char *dir)
{
    DIR *d = opendir(dir);
    if (d == NULL)
        return 0;
    int n = 0;
    struct dirent *e;
    while ((e = readdir(d)) != NULL) {
        char path[1024];
        snprintf(path, sizeof path, "%s/%s", dir, e->d_name);
        struct stat st;
        if (e->d_name[0] == '.' || stat(path, &st) != 0 || !S_ISREG(st.st_mode))
            continue;
        FILE *f = fopen(path, "rb");
        if (f == NULL)
            continue;
        size_t cap = (size_t)st.st_size + 1, len;
        unsigned char *buf = malloc(cap);
        if (buf == NULL) {
            fclose(f);
            continue;
        }
        len = fread(buf, 1, cap, f);
        fclose(f);
        LLVMFuzzerTestOneInput(buf, len);
        free(buf);
        n++;
    }
    closedir(d);
    return n;
}

int main(int argc, char **argv)
{
    static const char *const dirs[] = {"tests/fuzz_corpus", "tests/catalogue", "cases"};
    int total = 0, ncrash = 0;
    if (argc > 1) {
        for (int k = 1; k < argc; k++)
            total += replay_dir(argv[k]);
    } else {
        for (int k = 0; k < 3; k++) {
            int n = replay_dir(dirs[k]);
            total += n;
            if (k == 0)
                ncrash = n;
        }
    }
    check(total > 0, "fuzz corpus replay: the case reader and variant expansion survive every "
          "saved input", "%d files (%d found by fuzzing), no crash", total, ncrash);
    return check_summary();
}
#endif
