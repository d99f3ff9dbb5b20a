/*
 * app_batch_slurm.c - the Slurm scripts of a planned batch: a job array
 * with one task per case, the summary job, and submit.sh that queues both
 * (app_batch_write_slurm).
 */
#include "app/app_batch_int.h"

#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

/* A word quoted for sh: '...' with ' as '\''. */
static void sh_quote(eddy_text *b, const char *s)
{
    app_batch_quote(b, s, '\'', "'\\''");
}

void app_batch_slurm_opts_defaults(app_batch_slurm_opts *o)
{
    memset(o, 0, sizeof *o);
    o->cpus_per_task = 1;
}

static eddy_status write_script(const char *path, eddy_text *b, eddy_error *err)
{
    if (b->oom) {
        free(b->p);
        b->p = NULL;
        return EDDY_RAISE(err, EDDY_ERR_NOMEM, "out of memory writing %s", path);
    }
    eddy_status s = eddy_write_atomic(path, b->p, b->len, err);
    free(b->p);
    b->p = NULL;
    b->len = b->cap = 0;
    if (s == EDDY_OK && chmod(path, 0755) != 0)
        s = EDDY_RAISE(err, EDDY_ERR_IO, "%s: cannot make executable: %s", path,
                       strerror(errno));
    return s;
}

/* The extra "#SBATCH" lines, then "exec EXE batch MODE -o OUT" (no newline). */
static void sbatch_exec(eddy_text *b, const app_batch_slurm_opts *o, const char *mode,
                        const char *outdir)
{
    for (int k = 0; k < o->nextra; k++)
        eddy_text_printf(b, "#SBATCH %s\n", o->extra[k]);
    eddy_text_str(b, "exec ");
    sh_quote(b, o->exe);
    eddy_text_printf(b, " batch %s -o ", mode);
    sh_quote(b, outdir);
}

/* The options must suit the plan: absolute paths, increasing case
 * indices, cpus in 1..4096, each extra option one line starting with '-'. */
static eddy_status check_opts(const char *outdir, const app_batch_plan *p,
                              const app_batch_slurm_opts *o, eddy_error *err)
{
    if (o->exe == NULL || o->exe[0] != '/' || outdir[0] != '/')
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "the Slurm scripts need absolute paths");
    if (o->ntask < 1 || o->tasks == NULL)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "no case to run under Slurm");
    if (o->cpus_per_task < 1 || o->cpus_per_task > 4096)
        return EDDY_RAISE(err, EDDY_ERR_INPUT, "cpus per task must lie in 1..4096");
    for (int k = 0; k < o->nextra; k++)
        if (strpbrk(o->extra[k], "\r\n") != NULL || o->extra[k][0] != '-')
            return EDDY_RAISE(err, EDDY_ERR_INPUT, "Slurm option \"%s\": must be one line "
                              "starting with '-'", o->extra[k]);
    for (int k = 0; k < o->ntask; k++)
        if (o->tasks[k] < 0 || o->tasks[k] >= p->ncase ||
            (k > 0 && o->tasks[k] <= o->tasks[k - 1]))
            return EDDY_RAISE(err, EDDY_ERR_INPUT, "task list must be increasing case indices");
    return EDDY_OK;
}

/* OUT/batch.sbatch: the job array, one task per listed case. */
static eddy_status write_array_script(const char *outdir, const app_batch_slurm_opts *o,
                                      eddy_error *err)
{
    /* the array: ranges of consecutive indices, "0-3,7,9-12" */
    eddy_text arr = {0};
    for (int k = 0; k < o->ntask;) {
        int j = k;
        while (j + 1 < o->ntask && o->tasks[j + 1] == o->tasks[j] + 1)
            j++;
        if (j > k)
            eddy_text_printf(&arr, "%s%d-%d", k > 0 ? "," : "", o->tasks[k], o->tasks[j]);
        else
            eddy_text_printf(&arr, "%s%d", k > 0 ? "," : "", o->tasks[k]);
        k = j + 1;
    }
    eddy_text b = {0};
    eddy_text_printf(&b,
              "#!/bin/sh\n"
              "# eddy2d %s batch: one Slurm array task per case; each task solves its case\n"
              "# into %s/<case>/ with the same resume and atomic-write rules as a local batch.\n"
              "# Submit with submit.sh beside this file (it also queues the summary job).\n",
              EDDY_VERSION, outdir);
    eddy_text_str(&b, "#SBATCH --job-name=eddy2d-batch\n");
    eddy_text_printf(&b, "#SBATCH --array=%s\n", arr.p != NULL ? arr.p : "");
    eddy_text_printf(&b, "#SBATCH --cpus-per-task=%d\n", o->cpus_per_task);
    eddy_text_printf(&b, "#SBATCH --output=%s/slurm/case_%%a.out\n", outdir);
    if (o->case_timeout > 0)
        eddy_text_printf(&b, "#SBATCH --time=%d\n", (int)ceil(o->case_timeout / 60.0) + 2);
    sbatch_exec(&b, o, "--run-one \"$SLURM_ARRAY_TASK_ID\"", outdir);
    if (o->case_timeout > 0)
        eddy_text_printf(&b, " --case-timeout %g", o->case_timeout);
    eddy_text_printf(&b, " --threads %d\n", o->cpus_per_task);
    free(arr.p);
    char path[4200];
    app_batch_join(path, sizeof path, outdir, "batch.sbatch", NULL);
    return write_script(path, &b, err);
}

/* OUT/summary.sbatch: the summary, after every array task has ended. */
static eddy_status write_summary_script(const char *outdir, const app_batch_slurm_opts *o,
                                        eddy_error *err)
{
    eddy_text b = {0};
    eddy_text_printf(&b, "#!/bin/sh\n"
                  "# eddy2d %s batch: the final step, after every array task has ended (ok or\n"
                  "# not): summary.csv, summary.json and summary.html from the case folders.\n",
              EDDY_VERSION);
    eddy_text_str(&b, "#SBATCH --job-name=eddy2d-summary\n");
    eddy_text_printf(&b, "#SBATCH --output=%s/slurm/summary.out\n", outdir);
    sbatch_exec(&b, o, "--summary-only", outdir);
    eddy_text_str(&b, "\n");
    char path[4200];
    app_batch_join(path, sizeof path, outdir, "summary.sbatch", NULL);
    return write_script(path, &b, err);
}

/* OUT/submit.sh: queue the array, then the summary job depending on it. */
static eddy_status write_submit_script(const char *outdir, eddy_error *err)
{
    eddy_text b = {0};
    eddy_text_printf(&b, "#!/bin/sh\n"
                  "# Queue the eddy2d batch in %s: the case array, then the summary job\n"
                  "# once every task has ended.  Prints the two job ids.\n"
                  "set -eu\n",
              outdir);
    eddy_text_str(&b, "array=$(sbatch --parsable ");
    sh_quote(&b, outdir);
    eddy_text_str(&b, "/batch.sbatch)\narray=${array%%;*}\n"
               "summary=$(sbatch --parsable --dependency=afterany:\"$array\" ");
    sh_quote(&b, outdir);
    eddy_text_str(&b, "/summary.sbatch)\nsummary=${summary%%;*}\n"
               "echo \"array job $array, summary job $summary\"\n");
    char path[4200];
    app_batch_join(path, sizeof path, outdir, "submit.sh", NULL);
    return write_script(path, &b, err);
}

eddy_status app_batch_write_slurm(const char *outdir, const app_batch_plan *p,
                                  const app_batch_slurm_opts *o, eddy_error *err)
{
    eddy_status s = check_opts(outdir, p, o, err);
    if (s != EDDY_OK)
        return s;
    char path[4200];
    if (!app_batch_join(path, sizeof path, outdir, "slurm", NULL))
        return EDDY_RAISE(err, EDDY_ERR_IO, "%s: path too long", outdir);
    s = eddy_make_dir(path, err);
    if (s == EDDY_OK)
        s = write_array_script(outdir, o, err);
    if (s == EDDY_OK)
        s = write_summary_script(outdir, o, err);
    if (s == EDDY_OK)
        s = write_submit_script(outdir, err);
    return s;
}
