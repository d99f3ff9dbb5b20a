/*
 * eddy_util.c - the small system helpers every module shares (mesh/eddy.h):
 * clock, whole-file reading, atomic writing, directories, default names and
 * the growing text buffer.
 */
#include "mesh/eddy.h"

#include <errno.h>
#include <fcntl.h>
#include <pthread.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

double eddy_now(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

void eddy_text_put(eddy_text *b, const char *s, size_t n)
{
    if (b->oom)
        return;
    if (b->len + n + 1 > b->cap) {
        size_t cap = b->cap ? b->cap : 1024;
        while (cap < b->len + n + 1) {
            if (cap > ((size_t)-1) / 2) {
                b->oom = 1;
                return;
            }
            cap *= 2;
        }
        char *q = realloc(b->p, cap);
        if (q == NULL) {
            b->oom = 1;
            return;
        }
        b->p = q;
        b->cap = cap;
    }
    memcpy(b->p + b->len, s, n);
    b->len += n;
    b->p[b->len] = '\0';
}

void eddy_text_str(eddy_text *b, const char *s)
{
    eddy_text_put(b, s, strlen(s));
}

void eddy_text_printf(eddy_text *b, const char *fmt, ...)
{
    char small[512];
    va_list ap;
    va_start(ap, fmt);
    int n = vsnprintf(small, sizeof small, fmt, ap);
    va_end(ap);
    if (n < 0) {
        b->oom = 1;
        return;
    }
    if ((size_t)n < sizeof small) {
        eddy_text_put(b, small, (size_t)n);
        return;
    }
    char *big = malloc((size_t)n + 1);
    if (big == NULL) {
        b->oom = 1;
        return;
    }
    va_start(ap, fmt);
    vsnprintf(big, (size_t)n + 1, fmt, ap);
    va_end(ap);
    eddy_text_put(b, big, (size_t)n);
    free(big);
}

eddy_status eddy_read_file(const char *path, long max, char **out, size_t *len,
                           eddy_error *err)
{
    *out = NULL;
    FILE *f = fopen(path, "rb");
    if (f == NULL)
        return EDDY_RAISE(err, EDDY_ERR_IO, "%s: cannot open: %s", path, strerror(errno));
    eddy_text b = {0};
    char chunk[65536];
    size_t n;
    while ((n = fread(chunk, 1, sizeof chunk, f)) > 0) {
        eddy_text_put(&b, chunk, n);
        if (b.oom || b.len > (size_t)max)
            break;
    }
    int failed = ferror(f);
    fclose(f);
    if (b.oom) {
        free(b.p);
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory reading %s", path);
    }
    if (failed) {
        free(b.p);
        return EDDY_RAISE(err, EDDY_ERR_IO, "%s: read error", path);
    }
    if (b.len > (size_t)max) {
        free(b.p);
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: larger than %ld bytes",
                          path, max);
    }
    if (b.p == NULL) { /* empty file */
        b.p = malloc(1);
        if (b.p == NULL)
            return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory reading %s", path);
        b.p[0] = '\0';
    }
    if (strlen(b.p) != b.len) {
        free(b.p);
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: contains a NUL byte; not a JSON text", path);
    }
    *out = b.p;
    if (len != NULL)
        *len = b.len;
    return EDDY_OK;
}

void eddy_name_from_path(const char *fname, char *name, size_t size)
{
    const char *base = strrchr(fname, '/');
    base = base != NULL ? base + 1 : fname;
    size_t k = 0;
    for (; base[k] != '\0' && base[k] != '.' && k + 1 < size; k++) {
        char ch = base[k];
        int ok = (ch >= 'a' && ch <= 'z') || (ch >= 'A' && ch <= 'Z') ||
                 (ch >= '0' && ch <= '9') || ch == '_' || ch == '-';
        name[k] = ok ? ch : '_';
    }
    name[k] = '\0';
    if (k == 0)
        snprintf(name, size, "case");
}

eddy_status eddy_make_dir(const char *dir, eddy_error *err)
{
    char path[4096];
    size_t len = strlen(dir);
    if (len == 0 || len >= sizeof path)
        return EDDY_RAISE(err, EDDY_ERR_IO, "bad directory name");
    memcpy(path, dir, len + 1);
    for (size_t k = 1; k <= len; k++) {
        if (path[k] != '/' && path[k] != '\0')
            continue;
        char keep = path[k];
        path[k] = '\0';
        if (mkdir(path, 0777) != 0 && errno != EEXIST)
            return EDDY_RAISE(err, EDDY_ERR_IO, "%s: cannot create directory: %s", path,
                              strerror(errno));
        path[k] = keep;
    }
    struct stat st;
    if (stat(dir, &st) != 0 || !S_ISDIR(st.st_mode))
        return EDDY_RAISE(err, EDDY_ERR_IO, "%s: not a directory", dir);
    return EDDY_OK;
}

/* ------------------------------------------------------------------------ */
/* Atomic output files and the temporaries a signal must remove              */
/* ------------------------------------------------------------------------ */

/* The temporary files open now, so that a signal handler can remove them
 * (eddy_remove_temporaries).  Slots are claimed under the mutex; the handler
 * only reads them (a name is complete before its slot is marked used). */
#define MAX_TEMPS 64
static char temp_names[MAX_TEMPS][4200];
static volatile sig_atomic_t temp_used[MAX_TEMPS];
static pthread_mutex_t temp_lock = PTHREAD_MUTEX_INITIALIZER;
static unsigned long temp_counter;

static int temp_claim(const char *name)
{
    pthread_mutex_lock(&temp_lock);
    int slot = -1;
    for (int k = 0; k < MAX_TEMPS && slot < 0; k++)
        if (!temp_used[k])
            slot = k;
    if (slot >= 0) {
        snprintf(temp_names[slot], sizeof temp_names[slot], "%s", name);
        temp_used[slot] = 1;
    }
    pthread_mutex_unlock(&temp_lock);
    return slot;
}

static void temp_release(int slot)
{
    if (slot < 0)
        return;
    pthread_mutex_lock(&temp_lock);
    temp_used[slot] = 0;
    pthread_mutex_unlock(&temp_lock);
}

void eddy_remove_temporaries(void)
{
    for (int k = 0; k < MAX_TEMPS; k++)
        if (temp_used[k])
            unlink(temp_names[k]);
}

eddy_status eddy_atomic_open(eddy_atomic_file *af, const char *path, eddy_error *err)
{
    memset(af, 0, sizeof *af);
    af->fd = -1;
    af->slot = -1;
    pthread_mutex_lock(&temp_lock);
    unsigned long serial = ++temp_counter;
    pthread_mutex_unlock(&temp_lock);
    int n1 = snprintf(af->path, sizeof af->path, "%s", path);
    int n2 = snprintf(af->tmp, sizeof af->tmp, "%s.tmp.%ld.%lu", path, (long)getpid(), serial);
    if (n1 < 0 || (size_t)n1 >= sizeof af->path || n2 < 0 || (size_t)n2 >= sizeof af->tmp)
        return EDDY_RAISE(err, EDDY_ERR_IO, "%s: path too long", path);
    af->slot = temp_claim(af->tmp);
    /* a new file: never follow a link planted under the temporary name, never
     * reuse a file that exists */
    af->fd = open(af->tmp, O_WRONLY | O_CREAT | O_EXCL | O_NOFOLLOW | O_CLOEXEC, 0666);
    if (af->fd < 0) {
        int e = errno;
        temp_release(af->slot);
        af->slot = -1;
        return EDDY_RAISE(err, EDDY_ERR_IO, "%s: cannot create: %s", af->tmp, strerror(e));
    }
    af->f = fdopen(af->fd, "wb");
    if (af->f == NULL) {
        int e = errno;
        eddy_atomic_abort(af);
        return EDDY_RAISE(err, EDDY_ERR_IO, "%s: cannot open: %s", path, strerror(e));
    }
    return EDDY_OK;
}

void eddy_atomic_abort(eddy_atomic_file *af)
{
    if (af == NULL)
        return;
    if (af->f != NULL)
        fclose(af->f);
    else if (af->fd >= 0)
        close(af->fd);
    if (af->fd >= 0)
        unlink(af->tmp);
    temp_release(af->slot);
    af->f = NULL;
    af->fd = -1;
    af->slot = -1;
}

eddy_status eddy_atomic_commit(eddy_atomic_file *af, eddy_error *err)
{
    if (af->f == NULL)
        return EDDY_RAISE(err, EDDY_ERR_IO, "%s: not open", af->path);
    int bad = fflush(af->f) != 0 || ferror(af->f);
    int e = errno;
    if (!bad && fsync(af->fd) != 0) {
        bad = 1;
        e = errno;
    }
    if (fclose(af->f) != 0 && !bad) {
        bad = 1;
        e = errno;
    }
    af->f = NULL;
    if (bad) {
        unlink(af->tmp);
        temp_release(af->slot);
        af->fd = -1;
        af->slot = -1;
        return EDDY_RAISE(err, EDDY_ERR_IO, "%s: write failed: %s", af->path,
                          e ? strerror(e) : "error");
    }
    if (rename(af->tmp, af->path) != 0) {
        e = errno;
        unlink(af->tmp);
        temp_release(af->slot);
        af->fd = -1;
        af->slot = -1;
        return EDDY_RAISE(err, EDDY_ERR_IO, "%s: cannot rename into place: %s", af->path,
                          strerror(e));
    }
    temp_release(af->slot);
    af->fd = -1;
    af->slot = -1;
    return EDDY_OK;
}

eddy_status eddy_write_atomic(const char *path, const char *data, size_t size, eddy_error *err)
{
    eddy_atomic_file af;
    eddy_status s = eddy_atomic_open(&af, path, err);
    if (s != EDDY_OK)
        return s;
    if (size > 0 && fwrite(data, 1, size, af.f) != size) {
        int e = errno;
        eddy_atomic_abort(&af);
        return EDDY_RAISE(err, EDDY_ERR_IO, "%s: write failed: %s", path, strerror(e));
    }
    return eddy_atomic_commit(&af, err);
}


/* The cgroup v2 (memory.max) or v1 (memory.limit_in_bytes) limit of this
 * process, bytes; 0 if none can be read. */
static double cgroup_limit(void)
{
    static const char *const files[] = {"/sys/fs/cgroup/memory.max",
                                        "/sys/fs/cgroup/memory/memory.limit_in_bytes"};
    for (size_t k = 0; k < sizeof files / sizeof files[0]; k++) {
        FILE *f = fopen(files[k], "r");
        if (f == NULL)
            continue;
        char line[64] = "";
        int got = fgets(line, sizeof line, f) != NULL;
        fclose(f);
        if (!got || strncmp(line, "max", 3) == 0)
            continue;
        char *end = NULL;
        double v = strtod(line, &end);
        if (end != line && v > 0 && v < 1e18) /* v1 reports ~2^63 for "none" */
            return v;
    }
    return 0.0;
}

double eddy_memory_limit(double option_bytes)
{
    long pages = sysconf(_SC_PHYS_PAGES), page = sysconf(_SC_PAGE_SIZE);
    double hard = pages > 0 && page > 0 ? (double)pages * (double)page : 8.0e9;
    struct rlimit rl;
    if (getrlimit(RLIMIT_AS, &rl) == 0 && rl.rlim_cur != RLIM_INFINITY &&
        (double)rl.rlim_cur < hard)
        hard = (double)rl.rlim_cur;
    double cg = cgroup_limit();
    if (cg > 0 && cg < hard)
        hard = cg;
    if (option_bytes > 0)
        return option_bytes < hard ? option_bytes : hard;
    return 0.5 * hard;
}

eddy_status eddy_check_output_dir(const char *dir, eddy_error *err)
{
    if (dir == NULL || dir[0] == '\0')
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "output folder \"\": the name is empty");
    char path[4096];
    if (strlen(dir) >= sizeof path)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "output folder \"%.64s...\": name too long", dir);
    snprintf(path, sizeof path, "%s", dir);
    struct stat st;
    int own = 1; /* path is dir itself, not an ancestor */
    for (;;) {
        if (stat(path, &st) == 0) {
            if (!S_ISDIR(st.st_mode))
                return EDDY_RAISE(err, EDDY_ERR_INPUT,
                                  own ? "output folder \"%s\": exists and is not a folder"
                                      : "output folder \"%s\": cannot be created: \"%s\" is "
                                        "not a folder",
                                  dir, path);
            if (access(path, W_OK | X_OK) != 0)
                return EDDY_RAISE(err, EDDY_ERR_INPUT,
                                  "output folder \"%s\": %s is not writable: %s", dir,
                                  own ? "it" : path, strerror(errno));
            return EDDY_OK;
        }
        if (errno != ENOENT && errno != ENOTDIR)
            return EDDY_RAISE(err, EDDY_ERR_INPUT, "output folder \"%s\": %s", dir,
                              strerror(errno));
        own = 0;
        char *slash = strrchr(path, '/');
        while (slash != NULL && slash > path && slash[1] == '\0') { /* trailing '/' */
            *slash = '\0';
            slash = strrchr(path, '/');
        }
        if (slash == NULL) {
            snprintf(path, sizeof path, ".");
        } else if (slash == path) {
            path[1] = '\0';
        } else {
            *slash = '\0';
        }
    }
}

eddy_status eddy_lock_dir(const char *dir, int *fd, eddy_error *err)
{
    char path[4200];
    snprintf(path, sizeof path, "%s/.lock", dir);
    *fd = open(path, O_RDWR | O_CREAT | O_CLOEXEC | O_NOFOLLOW, 0666);
    if (*fd < 0)
        return EDDY_OK; /* cannot create the lock file (read-only folder?): unlocked */
    struct flock fl;
    memset(&fl, 0, sizeof fl);
    fl.l_type = F_WRLCK;
    fl.l_whence = SEEK_SET;
    if (fcntl(*fd, F_SETLK, &fl) != 0) {
        int e = errno;
        close(*fd);
        *fd = -1;
        if (e == EACCES || e == EAGAIN)
            return EDDY_RAISE(err, EDDY_ERR_INPUT, "%s: another eddy2d run is writing into this "
                                                   "folder; wait for it or choose another -o",
                              dir);
    }
    return EDDY_OK;
}

void eddy_unlock_dir(int fd)
{
    if (fd >= 0)
        close(fd);
}
