/*
 * post_png.c - the PNG writer of the pictures: a cairo ARGB32 image surface
 * (premultiplied, native-endian) to straight 8-bit RGB(A) rows written with
 * libpng, with text chunks that describe the picture.  Private to post/;
 * interface in post/post_draw.h.
 */
#include <png.h>

#include "post/post_draw.h"

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

typedef struct {
    char msg[256];
} png_err_ctx;

static void png_error_cb(png_structp png, png_const_charp msg)
{
    png_err_ctx *ctx = (png_err_ctx *)png_get_error_ptr(png);
    if (ctx != NULL)
        snprintf(ctx->msg, sizeof ctx->msg, "%s", msg != NULL ? msg : "libpng error");
    png_longjmp(png, 1);
}

static void png_warning_cb(png_structp png, png_const_charp msg)
{
    (void)png;
    (void)msg; /* library code never prints; warnings are not errors */
}

static int is_ascii(const char *s)
{
    for (; *s != '\0'; s++)
        if ((unsigned char)*s >= 0x80)
            return 0;
    return 1;
}

/* 1 if every pixel of the w x h ARGB32 data (stride bytes a row) is opaque. */
static int all_opaque(const unsigned char *data, int w, int h, int stride)
{
    for (int j = 0; j < h; j++) {
        const uint32_t *row = (const uint32_t *)(const void *)(data + (size_t)j * stride);
        for (int i = 0; i < w; i++)
            if ((row[i] >> 24) != 0xffu)
                return 0;
    }
    return 1;
}

/* Straight RGB (ch 3) or RGBA (ch 4) bytes of the ARGB32 data into pix,
 * with rows[j] pointing at row j. */
static void unpremultiply(const unsigned char *data, int w, int h, int stride, int ch,
                          unsigned char *pix, png_bytep *rows)
{
    for (int j = 0; j < h; j++) {
        const uint32_t *src = (const uint32_t *)(const void *)(data + (size_t)j * stride);
        unsigned char *dst = pix + (size_t)j * w * ch;
        rows[j] = dst;
        for (int i = 0; i < w; i++) {
            uint32_t p = src[i];
            unsigned a = p >> 24, r = (p >> 16) & 0xffu, g = (p >> 8) & 0xffu, b = p & 0xffu;
            if (a != 0xffu) {
                /* cairo stores premultiplied colour: c_stored = c * a / 255 */
                if (a == 0) {
                    r = g = b = 0;
                } else {
                    r = (r * 255u + a / 2) / a;
                    g = (g * 255u + a / 2) / a;
                    b = (b * 255u + a / 2) / a;
                }
            }
            dst[0] = (unsigned char)r;
            dst[1] = (unsigned char)g;
            dst[2] = (unsigned char)b;
            if (ch == 4)
                dst[3] = (unsigned char)a;
            dst += ch;
        }
    }
}

/* libpng text records of the chunks with a value; returns how many. */
static int text_records(const post_png_text *kv, int nkv, png_text *text)
{
    int nt = 0;
    for (int k = 0; k < nkv; k++) {
        if (kv[k].value == NULL)
            continue;
        text[nt].key = (png_charp)kv[k].key;
        text[nt].text = (png_charp)kv[k].value;
        text[nt].text_length = strlen(kv[k].value);
        if (is_ascii(kv[k].value)) {
            text[nt].compression = PNG_TEXT_COMPRESSION_NONE;
        } else { /* tEXt is Latin-1; UTF-8 goes into iTXt */
            text[nt].compression = PNG_ITXT_COMPRESSION_NONE;
            text[nt].lang = (png_charp) "";
            text[nt].lang_key = (png_charp) "";
            text[nt].itxt_length = text[nt].text_length;
            text[nt].text_length = 0;
        }
        nt++;
    }
    return nt;
}

/* Encode the rows (8-bit, ch 3 or 4 channels) and text[nt] into path. */
static eddy_status encode(const char *path, int w, int h, int ch, png_bytep *rows, png_text *text,
                          int nt, eddy_error *err)
{
    /* a new temporary file renamed over path when complete (mesh/eddy.h): a
     * failed or interrupted write never leaves a truncated picture, and a
     * link planted under the final name is replaced, never written through */
    eddy_atomic_file af;
    eddy_status st = eddy_atomic_open(&af, path, err);
    if (st != EDDY_OK)
        return st;
    FILE *f = af.f;
    png_err_ctx ctx;
    ctx.msg[0] = '\0';
    png_structp png = png_create_write_struct(PNG_LIBPNG_VER_STRING, &ctx, png_error_cb,
                                              png_warning_cb);
    png_infop info = png != NULL ? png_create_info_struct(png) : NULL;
    if (png == NULL || info == NULL) {
        png_destroy_write_struct(&png, &info);
        eddy_atomic_abort(&af);
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "%s: cannot set up the PNG writer", path);
    }
    if (setjmp(png_jmpbuf(png))) {
        png_destroy_write_struct(&png, &info);
        eddy_atomic_abort(&af);
        return EDDY_RAISE(err, EDDY_ERR_IO, "%s: PNG write failed: %s", path, ctx.msg);
    }
    png_init_io(png, f);
    /* zlib level 4, no row filter: the field maps are flat runs of a few
     * hundred colours, which the filters only blur.  On make bench's
     * 16-speed sweep (32 maps of 1200 x 1256) against libpng's defaults
     * (level 6, adaptive filters): 2.47 s of pictures and forces instead of
     * 4.30 s, 11.1 MB instead of 12.2 MB (2026-12-04) */
    png_set_compression_level(png, 4);
    png_set_filter(png, 0, PNG_FILTER_NONE);
    png_set_IHDR(png, info, (png_uint_32)w, (png_uint_32)h, 8,
                 ch == 3 ? PNG_COLOR_TYPE_RGB : PNG_COLOR_TYPE_RGB_ALPHA, PNG_INTERLACE_NONE,
                 PNG_COMPRESSION_TYPE_DEFAULT, PNG_FILTER_TYPE_DEFAULT);
    if (nt > 0)
        png_set_text(png, info, text, nt);
    png_write_info(png, info);
    png_write_image(png, rows);
    png_write_end(png, info);
    png_destroy_write_struct(&png, &info);
    return eddy_atomic_commit(&af, err);
}

eddy_status post_png_write(const char *path, cairo_surface_t *surf, const post_png_text *kv,
                           int nkv, eddy_error *err)
{
    cairo_surface_flush(surf);
    int w = cairo_image_surface_get_width(surf), h = cairo_image_surface_get_height(surf);
    int stride = cairo_image_surface_get_stride(surf);
    const unsigned char *data = cairo_image_surface_get_data(surf);
    if (data == NULL || w <= 0 || h <= 0)
        return EDDY_RAISE(err, EDDY_ERR_INTERNAL, "%s: no image data to write", path);

    int ch = all_opaque(data, w, h, stride) ? 3 : 4;
    unsigned char *pix = malloc((size_t)w * h * ch);
    png_bytep *rows = malloc((size_t)h * sizeof *rows);
    png_text *text = calloc((size_t)(nkv > 0 ? nkv : 1), sizeof *text);
    eddy_status st;
    if (pix == NULL || rows == NULL || text == NULL) {
        st = EDDY_RAISE(err, EDDY_ERR_NOMEM, "%s: out of memory for a %dx%d image", path, w, h);
    } else {
        unpremultiply(data, w, h, stride, ch, pix, rows);
        st = encode(path, w, h, ch, rows, text, text_records(kv, nkv, text), err);
    }
    free(pix);
    free(rows);
    free(text);
    return st;
}

const char *post_png_software(char *buf, size_t size, const char *version)
{
    if (version == NULL)
        return NULL;
    snprintf(buf, size, "eddy2d %s", version);
    return buf;
}
