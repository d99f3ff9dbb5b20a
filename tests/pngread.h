/*
 * pngread.h - test helper: decode a PNG file with libpng into 8-bit RGB,
 * with its text chunks, so tests can check sizes, pixels and metadata.
 */
#ifndef EDDY_TEST_PNGREAD_H
#define EDDY_TEST_PNGREAD_H

#include <png.h>
#include <setjmp.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>


/* ------------------------------------------------------------------ */
/* PNG decoding                                                        */
/* ------------------------------------------------------------------ */

typedef struct {
    int w, h;
    unsigned char *rgb; /* w*h*3 */
    int ntext;
    char key[32][80];
    char val[32][512];
    int color_type, bit_depth;
} image;

static void image_free(image *im)
{
    free(im->rgb);
    im->rgb = NULL;
}

static int read_png(const char *path, image *im)
{
    memset(im, 0, sizeof *im);
    FILE *f = fopen(path, "rb");
    if (f == NULL)
        return -1;
    unsigned char sig[8];
    if (fread(sig, 1, 8, f) != 8 || png_sig_cmp(sig, 0, 8) != 0) {
        fclose(f);
        return -1;
    }
    png_structp png = png_create_read_struct(PNG_LIBPNG_VER_STRING, NULL, NULL, NULL);
    png_infop info = png_create_info_struct(png);
    unsigned char *volatile buf = NULL;
    png_bytep *volatile rows = NULL;
    if (setjmp(png_jmpbuf(png))) {
        png_destroy_read_struct(&png, &info, NULL);
        fclose(f);
        free(buf);
        free(rows);
        return -1;
    }
    png_init_io(png, f);
    png_set_sig_bytes(png, 8);
    png_read_info(png, info);
    im->w = (int)png_get_image_width(png, info);
    im->h = (int)png_get_image_height(png, info);
    im->color_type = png_get_color_type(png, info);
    im->bit_depth = png_get_bit_depth(png, info);
    png_set_strip_16(png);
    png_set_palette_to_rgb(png);
    png_set_gray_to_rgb(png);
    png_read_update_info(png, info);
    int ch = png_get_channels(png, info);
    size_t rb = png_get_rowbytes(png, info);
    buf = malloc(rb * (size_t)im->h);
    rows = malloc((size_t)im->h * sizeof *rows);
    for (int j = 0; j < im->h; j++)
        rows[j] = buf + rb * (size_t)j;
    png_read_image(png, rows);
    png_read_end(png, info);
    png_textp text;
    int nt = 0;
    png_get_text(png, info, &text, &nt);
    for (int k = 0; k < nt && im->ntext < 32; k++) {
        snprintf(im->key[im->ntext], 80, "%s", text[k].key);
        snprintf(im->val[im->ntext], 512, "%s", text[k].text);
        im->ntext++;
    }
    im->rgb = malloc((size_t)im->w * im->h * 3);
    for (int j = 0; j < im->h; j++)
        for (int i = 0; i < im->w; i++)
            memcpy(im->rgb + 3 * ((size_t)j * im->w + i), buf + rb * (size_t)j + (size_t)i * ch, 3);
    png_destroy_read_struct(&png, &info, NULL);
    fclose(f);
    free(buf);
    free(rows);
    return 0;
}

static const unsigned char *px(const image *im, int i, int j)
{
    if (i < 0)
        i = 0;
    if (j < 0)
        j = 0;
    if (i >= im->w)
        i = im->w - 1;
    if (j >= im->h)
        j = im->h - 1;
    return im->rgb + 3 * ((size_t)j * im->w + i);
}

static const char *text_of(const image *im, const char *key)
{
    for (int k = 0; k < im->ntext; k++)
        if (strcmp(im->key[k], key) == 0)
            return im->val[k];
    return NULL;
}

#endif
