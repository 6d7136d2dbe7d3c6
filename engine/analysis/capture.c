/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The whole analysis from the two capture streams: fusion, then analysis, then trust by
 * masking each stream in turn. */
#include "arcwise/analysis.h"
#include "analysis-private.h"

#include <string.h>
#include <stdlib.h>

AwStatus
aw_analyze_capture(const AwImuStream *imu, const AwDepthStream *depth,
                   const AwFusionSettings *fusion, const AwAnalysisSettings *settings,
                   AwAnalysis **out, AwFusedPath **fused_out, AwError *err)
{
  if (out == NULL || imu == NULL || depth == NULL)
    return aw_error_set(err, AW_ERR_INVALID_ARG, "", 0, 0, "missing capture stream or result");
  *out = NULL;
  if (fused_out != NULL)
    *fused_out = NULL;
  AwFusionSettings fs;
  if (fusion != NULL)
    fs = *fusion;
  else
    aw_fusion_settings_default(&fs);
  fs.mask = AW_FUSION_BOTH;
  AwFusedPath *full = NULL;
  AwStatus st = aw_fuse(imu, depth, &fs, &full, err);
  if (st != AW_OK)
    return st;
  AwTrajectory tr_full;
  aw_trajectory_from_fused(full, imu->meta.accel_range_m_s2, imu->meta.gyro_range_rad_s, &tr_full);
  AwAnalysis *a = NULL;
  st = aw_analyze(&tr_full, settings, &a, err);
  if (st != AW_OK) {
    aw_fused_path_free(full);
    return st;
  }
  /* The masked runs: a failure there (say, the camera alone cannot follow this recording)
   * leaves that comparison out rather than failing the analysis; dominance then rests on what
   * is left. */
  AwFusedPath *cam_masked = NULL, *imu_masked = NULL;
  AwError merr;
  fs.mask = AW_FUSION_CAMERA_MASKED;
  if (aw_fuse(imu, depth, &fs, &cam_masked, &merr) != AW_OK)
    cam_masked = NULL;
  fs.mask = AW_FUSION_IMU_MASKED;
  if (aw_fuse(imu, depth, &fs, &imu_masked, &merr) != AW_OK)
    imu_masked = NULL;
  AwTrajectory tr_cm, tr_im;
  if (cam_masked != NULL)
    aw_trajectory_from_fused(cam_masked, 0, 0, &tr_cm);
  if (imu_masked != NULL)
    aw_trajectory_from_fused(imu_masked, 0, 0, &tr_im);
  st = aw_analysis_add_trust(a, &tr_full, cam_masked != NULL ? &tr_cm : NULL,
                             imu_masked != NULL ? &tr_im : NULL, err);
  aw_fused_path_free(cam_masked);
  aw_fused_path_free(imu_masked);
  if (st != AW_OK) {
    aw_analysis_free(a);
    aw_fused_path_free(full);
    return st;
  }
  *out = a;
  if (fused_out != NULL)
    *fused_out = full;
  else
    aw_fused_path_free(full);
  return AW_OK;
}
