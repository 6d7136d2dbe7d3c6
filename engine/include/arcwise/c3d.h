/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* C3D, the open motion-capture interchange format (c3d.org, "The C3D File Format - User
 * Guide"): a reader for the header, the parameter section and the 3-D point data in integer
 * and floating-point form, written by Intel (84), DEC (85) and MIPS/SGI (86) processors; a
 * writer; and the marker trajectory that Arcwise imports as a reference swing or compares a
 * capture against.
 *
 * The reader decodes from a buffer that it checks at every offset: a truncated or inconsistent
 * file gives an error (AW_ERR_INCOMPLETE, AW_ERR_PARSE) naming the byte offset, never a read
 * outside the buffer. Where the header and the parameters disagree (DATA_START, frame count,
 * scale, rate, number of points) the reader picks the value that is consistent with the file
 * and says so in AwC3dFile.notes.
 *
 * Coordinates in AwC3dFile are in the file's own units (POINT:UNITS); the marker trajectory
 * converts them to metres. */

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "arcwise/fusion.h"
#include "arcwise/status.h"

typedef enum {
  AW_C3D_INTEL = 84, /* little-endian, IEEE 754 floats */
  AW_C3D_DEC = 85,   /* little-endian integers, VAX F-floats */
  AW_C3D_MIPS = 86,  /* big-endian, IEEE 754 floats */
} AwC3dProcessor;

/* Parameter data types as stored in the file. */
typedef enum {
  AW_C3D_CHAR = -1,
  AW_C3D_BYTE = 1,
  AW_C3D_INT16 = 2,
  AW_C3D_FLOAT = 4,
} AwC3dType;

#define AW_C3D_NAME_MAX 64   /* group and parameter names are at most 127 bytes; we keep 63 */
#define AW_C3D_LABEL_MAX 32  /* point labels are blank-padded char arrays, usually 4..32 */

/* One parameter, decoded into host order. */
typedef struct {
  char group[AW_C3D_NAME_MAX];   /* upper-case, as in the file */
  char name[AW_C3D_NAME_MAX];
  AwC3dType type;
  int n_dims;                    /* 0 = scalar */
  int dims[7];
  size_t n_values;               /* product of dims (1 for a scalar); for CHAR, bytes */
  double *values;                /* BYTE (unsigned), INT16 (signed) and FLOAT decoded; NULL for CHAR */
  char *chars;                   /* CHAR data, n_values bytes + NUL; NULL otherwise */
  char description[128];
} AwC3dParam;

typedef struct {
  AwC3dProcessor processor;
  bool float_data;               /* points stored as float32 (POINT:SCALE < 0) */
  double point_scale;            /* POINT:SCALE as used (sign kept) */
  double point_rate_hz;          /* POINT:RATE as used */
  size_t n_points;
  size_t n_frames;
  long first_frame;              /* 1-based frame number of the first frame */
  size_t analog_words_per_frame; /* analog values stored after the points of each frame */
  size_t data_start_block;       /* 1-based 512-byte block where the point data starts */
  size_t param_start_block;
  size_t n_param_blocks;

  char (*labels)[AW_C3D_LABEL_MAX];/* n_points labels, trailing blanks removed */
  char units[16];                /* POINT:UNITS, trailing blanks removed; "" when absent */

  /* Point data, frame-major: index = frame * n_points + point. */
  double (*pos)[3];              /* file units; NaN where the point is invalid */
  double (*pos_raw)[3];          /* as stored, also where flagged invalid (see README C3D) */
  float *residual;               /* file units; -1 where flagged invalid (4th word < 0) */
  uint8_t *camera_mask;          /* bit i: camera i+1 saw the point */

  size_t n_params;
  AwC3dParam *params;

  size_t n_invalid;              /* point samples flagged invalid */
  char notes[1024];              /* header/parameter disagreements resolved, one per line */
} AwC3dFile;

/* Readers. `name` is what error messages call the input. On failure *out stays NULL. */
AwStatus aw_c3d_read_buffer(const uint8_t *data, size_t len, const char *name, AwC3dFile **out,
                            AwError *err);
AwStatus aw_c3d_read_file(const char *path, AwC3dFile **out, AwError *err);
void aw_c3d_file_free(AwC3dFile *f);

/* The parameter GROUP:NAME (case-insensitive), or NULL. */
const AwC3dParam *aw_c3d_param(const AwC3dFile *f, const char *group, const char *name);

/* Index of the point with this label (case-insensitive, blanks trimmed), or -1. */
long aw_c3d_point_index(const AwC3dFile *f, const char *label);

/* Metres per unit for a POINT:UNITS string ("mm", "cm", "m", "in"); 0 when unknown. */
double aw_c3d_units_to_m(const char *units);

/* A marker trajectory on its own time base, in metres, in the C3D file's lab frame. */
typedef struct {
  size_t n;
  double *t_s;                   /* (first_frame - 1 + i) / rate: time since the trial's frame 1 */
  double (*pos_m)[3];            /* NaN where invalid */
  double rate_hz;
  size_t n_invalid;              /* frames that are NaN */
  char label[AW_C3D_LABEL_MAX];
  char units[16];                /* the unit the coordinates were read in */
  bool units_declared;           /* false: POINT:UNITS was absent and `units_if_missing` used */
  bool used_flagged_invalid;     /* coordinates of points flagged invalid were kept */
} AwMarkerTrajectory;

typedef struct {
  /* Unit to assume when the file has no POINT:UNITS ("mm", "m", ...). NULL: a file without
   * units is an error (AW_ERR_UNITS): a guess by a factor of 1000 must not pass silently. */
  const char *units_if_missing;
  /* Keep the stored coordinates of points whose residual word is negative (flagged invalid)
   * when they are finite and not all zero. Some writers flag every point invalid while the
   * coordinates are good; the caller decides after the reader reported it. */
  bool keep_flagged_invalid;
} AwMarkerOptions;

void aw_marker_options_default(AwMarkerOptions *out);

/* Extracts marker `label` (or the first point when label is NULL). Errors: AW_ERR_RANGE for an
 * unknown label (the message lists the labels), AW_ERR_UNITS for missing or unknown units,
 * AW_ERR_EMPTY when every frame is invalid (the message says whether the points were flagged
 * invalid and how to keep them). */
AwStatus aw_c3d_marker_trajectory(const AwC3dFile *f, const char *label,
                                  const AwMarkerOptions *opt, AwMarkerTrajectory **out,
                                  AwError *err);
void aw_marker_trajectory_free(AwMarkerTrajectory *m);

/* ---- Writing ---- */

typedef struct {
  size_t n_points;
  size_t n_frames;
  double rate_hz;
  long first_frame;              /* usually 1 */
  const char *const *labels;     /* n_points labels */
  const char *const *descriptions; /* may be NULL */
  const char *units;             /* POINT:UNITS, e.g. "mm" */
  double (*pos)[3];              /* frame-major, in `units`, read only; NaN = invalid (residual -1) */
  const double *residual;        /* may be NULL (0 written); in `units`; < 0 = invalid */
  bool float_data;               /* float32 points, else int16 with a scale chosen from the data */
  AwC3dProcessor processor;      /* Intel unless you need otherwise */
  const char *software;          /* MANUFACTURER:SOFTWARE, may be NULL */
} AwC3dWriteSpec;

/* Encodes into a new buffer (*out_data, free() it). The int16 scale is max|coordinate|/32000
 * (c3d.org's recommendation), so a coordinate comes back within scale/2. */
AwStatus aw_c3d_write_buffer(const AwC3dWriteSpec *spec, uint8_t **out_data, size_t *out_len,
                             AwError *err);
/* Writes to a temporary file beside `path` and renames it into place. Refuses to replace an
 * existing file unless `overwrite` (AW_ERR_IO with a message saying so). */
AwStatus aw_c3d_write_file(const char *path, const AwC3dWriteSpec *spec, bool overwrite,
                           AwError *err);

typedef enum {
  AW_C3D_FRAME_GRAV = 0,  /* gravity-aligned (z up), the usual lab frame of optical systems */
  AW_C3D_FRAME_CAM,       /* the depth camera's optical frame (x right, y down, z forward) */
} AwC3dPathFrame;

typedef struct {
  double rate_hz;             /* output frame rate; 0 = the path's median sample rate */
  bool float_data;
  AwC3dPathFrame frame;
  const char *units;          /* "mm" (default) or "m" */
  const char *label;          /* marker label, default "HAND" */
} AwC3dPathOptions;

void aw_c3d_path_options_default(AwC3dPathOptions *out);

/* Builds the point data of a fused path: one marker resampled (linear) onto a uniform time
 * base, and its 1-sigma position uncertainty (norm of the per-axis sigmas) as the residual.
 * Fills *spec with arrays owned by the returned buffers; free them with
 * aw_c3d_path_spec_release(). */
AwStatus aw_c3d_path_spec(const AwFusedPath *path, const AwC3dPathOptions *opt,
                          AwC3dWriteSpec *spec, AwError *err);
void aw_c3d_path_spec_release(AwC3dWriteSpec *spec);

AwStatus aw_c3d_write_fused_path(const char *path, const AwFusedPath *fused,
                                 const AwC3dPathOptions *opt, bool overwrite, AwError *err);

/* ---- Checking a capture against optical motion capture ---- */

/* Least-squares rigid fit: the rotation R (proper, det +1) and translation t minimising
 * sum |R a_i + t - b_i|^2 over n >= 3 point pairs (Kabsch 1976, Acta Cryst. A32:922; solved in
 * the unit-quaternion form of Horn 1987, J. Opt. Soc. Am. A 4:629, which gives the same
 * minimiser and is always a proper rotation). AW_ERR_TOO_FEW for fewer than 3 pairs or points
 * on a line (the rotation about it is then undetermined). */
AwStatus aw_rigid_fit(const double (*a)[3], const double (*b)[3], size_t n, double R[3][3],
                      double t[3], AwError *err);

typedef struct {
  double grid_hz;            /* rate of the common grid for the time search, default 100 Hz */
  double smooth_s;           /* running-median window on the speed profiles, default 0.15 s */
  double min_overlap;        /* share of the shorter signal that must overlap, default 0.5 */
  double max_gap_s;          /* a path sample farther than this from a reference instant is a
                                gap: no pair there (default 0.1 s) */
  bool rotation;             /* true (default): rotation + translation; false: translation only */
} AwRefCheckSettings;

void aw_ref_check_settings_default(AwRefCheckSettings *out);

typedef struct {
  /* Time: t_path = t_reference + lag_s, found by the peak of the normalised cross-correlation
   * of the two speed profiles (frame-free), then refined to the least-squares minimum. */
  double lag_s;
  double peak_corr;          /* Pearson correlation of the speed profiles at the peak */
  /* Space: p_reference = R_ref_path p_path + t_ref_m (aw_rigid_fit). */
  double R_ref_path[3][3];
  double t_ref_m[3];
  double rotation_deg;       /* angle of R_ref_path */
  /* Errors after alignment, e = aligned path - reference, in the reference (lab) frame. */
  size_t n_pairs;            /* reference samples paired with the path */
  size_t n_ref_gaps;         /* reference samples that were invalid (kept as gaps) */
  double rmse_m;             /* sqrt(mean |e|^2) */
  double rmse_axis_m[3];     /* per lab axis */
  double bias_axis_m[3];     /* mean of e per lab axis */
  double max_err_m;
  double p95_err_m;          /* 95th percentile of |e| */
} AwRefCheck;

/* Aligns a path (times t_s on any clock, positions in metres in any frame) with a marker
 * trajectory in time and space and reports the remaining error. Errors: AW_ERR_TOO_FEW (fewer
 * than 10 usable samples on either side), AW_ERR_NO_OVERLAP (no lag gives the required overlap),
 * AW_ERR_NO_CORRELATION (the speed profiles never correlate positively). */
AwStatus aw_ref_check(const double *t_s, const double (*pos_m)[3], size_t n,
                      const AwMarkerTrajectory *ref, const AwRefCheckSettings *settings,
                      AwRefCheck *out, AwError *err);
