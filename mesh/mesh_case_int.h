/*
 * mesh_case_int.h - PRIVATE to mesh/: the readers of the sections of a case
 * file, called in order by the top level (mesh_case.c).  Nothing outside
 * mesh/ includes this header; the module's manual is mesh/mesh.h.
 *
 * Each reader takes the reader state (mesh/mesh_json.h) and the parsed top
 * level object root (borrowed), fills its part of r->c (lengths converted to
 * metres with r->c->length_scale, so "length_unit" and "domain" are read
 * first), and returns EDDY_OK, EDDY_ERR_INPUT with a message that names the
 * file and the JSON path, or EDDY_ERR_NOMEM.  Arrays they allocate belong to
 * the case (freed by mesh_case_free, also after an error).
 *
 * A new section goes into a new file of mesh/ with its reader declared here.
 */
#ifndef EDDY_MESH_CASE_INT_H
#define EDDY_MESH_CASE_INT_H

#include "mesh/mesh_json.h"

/* Materials, B-H curves, regions (mesh_case_regions.c) */

/* "materials": named materials into r->c->materials (optional section). */
eddy_status mesh_case_read_materials(mesh_reader *r, const cJSON *root);

/* "regions" (required): boxes with material, motion, magnetisation and
 * source current into r->c->regions; after the domain and the materials.
 * Materials named from the built-in library are appended to the case. */
eddy_status mesh_case_read_regions(mesh_reader *r, const cJSON *root);

/* Operating points and brake design (mesh_case_design.c) */

/* "disc" (optional): a rotating disc; its "rpm" list gives the speeds
 * (before mesh_case_read_speeds). */
eddy_status mesh_case_read_disc(mesh_reader *r, const cJSON *root);

/* "speeds": a list, a log-spaced range or an adaptive range (m/s); not
 * needed when disc.rpm gave them. */
eddy_status mesh_case_read_speeds(mesh_reader *r, const cJSON *root);

/* "vehicle" (optional): the braked load. */
eddy_status mesh_case_read_vehicle(mesh_reader *r, const cJSON *root);

/* "end_effect" (optional): finite plate width; after the domain. */
eddy_status mesh_case_read_end_effect(mesh_reader *r, const cJSON *root);

/* "temperature" (optional, C): the conductivities of the materials at that
 * temperature; after the materials and regions. */
eddy_status mesh_case_apply_temperature(mesh_reader *r, const cJSON *root);

/* The vehicle's from_speed must lie within the speeds solved; after the
 * speeds and the vehicle. */
eddy_status mesh_case_check_vehicle_speed(mesh_reader *r);

/* The time-stepped pass (mesh_case_pass.c) */

/* "pass" (optional): after the domain, before the regions (moving regions
 * need not span the domain in a pass). */
eddy_status mesh_case_read_pass(mesh_reader *r, const cJSON *root);

/* The pass against the rest of the case (a vehicle when coupled, moving
 * regions that stay inside open sides); after the regions and the vehicle. */
eddy_status mesh_case_check_pass(mesh_reader *r);

/* The axisymmetric geometry (mesh_case_rz.c) */

/* "geometry": "planar" (default) or "axisymmetric" into r->c->geometry;
 * first, before the domain. */
eddy_status mesh_case_read_geometry(mesh_reader *r, const cJSON *root);

/* "domain" of an axisymmetric case: {"r": [0, R], "z": [z0, z1],
 * "z_boundary": "zero" | "periodic"} into x0, x1 (z) and y0 = 0, y1 = R;
 * the planar keys x, y, x_boundary, y_boundary are errors naming the key. */
eddy_status mesh_case_read_domain_rz(mesh_reader *r, const cJSON *root);

/* An axisymmetric region box in [r0, z0, r1, z1] (metres, checked: r0 >= 0,
 * r1 > r0, z1 > z0; path names it in messages) into the grid's
 * [z0, r0, z1, r1].  Returns EDDY_OK or EDDY_ERR_INPUT. */
eddy_status mesh_case_rz_box(mesh_reader *r, const char *path, const double in[4],
                             double out[4]);

/* An axisymmetric profile point [r, z] turned in place into the grid's
 * (z, r). */
void mesh_case_rz_point(double p[2]);

/* A magnetisation angle from +r towards +z (radians) as the grid's angle
 * from +z (x) towards +r (y). */
double mesh_case_rz_angle(double from_r);

/* Keys with no meaning for a ring (disc, end_effect, vehicle.depth) are
 * errors naming the key in an axisymmetric case; nothing for a planar one. */
eddy_status mesh_case_check_rz_keys(mesh_reader *r, const cJSON *root);

/* Plausibility (mesh_case_check.c), last: unique region names, speeds below
 * the speed of light, remanence a magnet can have (errors), and warnings
 * for fast speeds, strong remanence, sizes that look like a slip of the
 * unit and a net source current in a zero box. */
eddy_status mesh_case_check_plausible(mesh_reader *r, const cJSON *root);

#endif
