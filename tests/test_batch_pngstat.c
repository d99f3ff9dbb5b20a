/*
 * test_batch_pngstat.c - helper of the browser test (.ci/browser-test.sh).
 *   test_batch_pngstat SHOT.png [PLOT.png]
 * prints "<width> <height> <distinct colours> <coloured pixels> <plot pixels>":
 * a coloured pixel has a chroma max(R,G,B) - min(R,G,B) >= 60; plot pixels are
 * those of SHOT within a distance of 60 (RGB) of one of the two most frequent
 * coloured colours of PLOT (the drag and normal-force curves of forces.png);
 * 0 without PLOT.  Exit status 1 if a file cannot be read.
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "tests/pngread.h"

#define CHROMA_MIN 60
#define NEAR_RGB 60.0

static int cmp_u32(const void *a, const void *b)
{
    unsigned x = *(const unsigned *)a, y = *(const unsigned *)b;
    return x < y ? -1 : x > y;
}

static int chroma(const unsigned char *p)
{
    int mx = p[0] > p[1] ? (p[0] > p[2] ? p[0] : p[2]) : (p[1] > p[2] ? p[1] : p[2]);
    int mn = p[0] < p[1] ? (p[0] < p[2] ? p[0] : p[2]) : (p[1] < p[2] ? p[1] : p[2]);
    return mx - mn;
}

/* Sorted packed colours of an image (caller frees). */
static unsigned *sorted_colours(const image *im, size_t *n, int coloured_only)
{
    size_t total = (size_t)im->w * (size_t)im->h, m = 0;
    unsigned *c = malloc((total > 0 ? total : 1) * sizeof *c);
    for (size_t k = 0; c != NULL && k < total; k++) {
        const unsigned char *p = im->rgb + 3 * k;
        if (coloured_only && chroma(p) < CHROMA_MIN)
            continue;
        c[m++] = (unsigned)p[0] << 16 | (unsigned)p[1] << 8 | p[2];
    }
    if (c != NULL)
        qsort(c, m, sizeof *c, cmp_u32);
    *n = m;
    return c;
}

int main(int argc, char **argv)
{
    image im, ref;
    if (argc < 2 || argc > 3 || read_png(argv[1], &im) != 0) {
        fprintf(stderr, "usage: test_batch_pngstat SHOT.png [PLOT.png] (readable PNGs)\n");
        return 1;
    }
    (void)px(&im, 0, 0); /* the other helpers of pngread.h, unused here */
    (void)text_of(&im, "Software");
    size_t n = 0;
    unsigned *c = sorted_colours(&im, &n, 0);
    long distinct = n > 0, coloured = 0;
    for (size_t k = 1; k < n; k++)
        distinct += c[k] != c[k - 1];
    for (size_t k = 0; k < n; k++) {
        unsigned char p[3] = {(unsigned char)(c[k] >> 16), (unsigned char)(c[k] >> 8),
                              (unsigned char)c[k]};
        coloured += chroma(p) >= CHROMA_MIN;
    }
    free(c);
    /* the two most frequent coloured colours of the plot */
    long plot = 0;
    if (argc == 3) {
        if (read_png(argv[2], &ref) != 0) {
            fprintf(stderr, "test_batch_pngstat: cannot read %s\n", argv[2]);
            image_free(&im);
            return 1;
        }
        size_t m = 0;
        unsigned *r = sorted_colours(&ref, &m, 1);
        unsigned best[2] = {0, 0};
        size_t cnt[2] = {0, 0};
        for (size_t k = 0; k < m;) {
            size_t j = k;
            while (j < m && r[j] == r[k])
                j++;
            size_t run = j - k;
            if (run > cnt[0]) {
                cnt[1] = cnt[0];
                best[1] = best[0];
                cnt[0] = run;
                best[0] = r[k];
            } else if (run > cnt[1]) {
                cnt[1] = run;
                best[1] = r[k];
            }
            k = j;
        }
        free(r);
        image_free(&ref);
        size_t total = (size_t)im.w * (size_t)im.h;
        for (size_t k = 0; k < total; k++) {
            const unsigned char *p = im.rgb + 3 * k;
            for (int q = 0; q < 2; q++) {
                if (cnt[q] == 0)
                    continue;
                double dr = p[0] - (double)(best[q] >> 16 & 255);
                double dg = p[1] - (double)(best[q] >> 8 & 255);
                double db = p[2] - (double)(best[q] & 255);
                if (sqrt(dr * dr + dg * dg + db * db) <= NEAR_RGB) {
                    plot++;
                    break;
                }
            }
        }
    }
    printf("%d %d %ld %ld %ld\n", im.w, im.h, distinct, coloured, plot);
    image_free(&im);
    return 0;
}
