/*
 * app_out.h - PRIVATE to app/: the outputs of one run (app/app_out.c), used
 * by the pipeline (app/app_run.c).  The public manual is app/app.h.  Every
 * function returns EDDY_OK or the first error of the writers (files are
 * written through the atomic files of mesh/eddy.h).
 */
#ifndef EDDY_APP_OUT_H
#define EDDY_APP_OUT_H

#include "app/app.h"

/* Create r->outdir, take its lock (*lock, release with eddy_unlock_dir; -1
 * when no lock could be taken) and remove a previous run's outputs. */
eddy_status app_out_open_dir(const app_report *r, int *lock, eddy_error *err);

/* The files of point k (speed r->c->speeds[k], solution a on grid g, node
 * fields pf computed here): J_z and |B| pictures (o->images), a .vtr field
 * (o->vtk), the case's line profiles; named with k and the speed. */
eddy_status app_out_fields(app_report *r, const mesh_grid *g, const app_run_opts *o, int k,
                           const double *a, post_fields *pf, eddy_error *err);

/* The J_z (J_phi in r-z) and |B| pictures of the field a (nx*ny, Wb/m; in
 * r-z psi) on g: <dir>/jz_<stem>.png and <dir>/b_<stem>.png.  jz and bmag:
 * node fields (A/m^2, T); the J map colours the conducting cells (with
 * moving_only, the moving ones only).  The regions' outlines are drawn with
 * the moving ones shifted by shift_x (m; a pass: where they are now).  when
 * ends each title ("at 20 m/s"); v (m/s) goes into the PNG text. */
eddy_status app_out_maps(const mesh_case *c, const mesh_grid *g, const char *dir,
                         const char *stem, const double *a, const double *jz,
                         const double *bmag, int moving_only, double shift_x, double v,
                         const char *when, int full_domain, eddy_error *err);

/* Rename the files of every point whose number (app_point_info.file_index)
 * is not its place in speed order; after the points are sorted. */
eddy_status app_out_renumber(app_report *r, eddy_error *err);

/* forces.png: drag and normal force against speed, the reference, the
 * low-speed slope and the reported peak. */
eddy_status app_out_force_plot(app_report *r, eddy_error *err);

/* stopping.csv and (o->images) stopping.png of the vehicle's stop. */
eddy_status app_out_stop(app_report *r, const app_run_opts *o, eddy_error *err);

#endif
