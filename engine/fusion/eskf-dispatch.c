/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Entry points of stages 3 and 4 (eskf.c): the filter and smoother built for the baseline
 * instruction set, or, where the build made one (AW_HAVE_ESKF_AVX2) and the processor has AVX2,
 * the same source built with it. Both give bit-identical results (eskf.c, top); the wider one
 * runs the 22-state covariance and smoother loops four doubles at a time. */
#include "fusion-internal.h"

#include <stdatomic.h>
#include <string.h>

static atomic_bool force_generic;

void
aw_fusion_eskf_force_generic(bool on)
{
  atomic_store(&force_generic, on);
}

bool
aw_fusion_eskf_uses_avx2(void)
{
#if defined(AW_HAVE_ESKF_AVX2) && (defined(__GNUC__) || defined(__clang__))
  return !atomic_load(&force_generic) && __builtin_cpu_supports("avx2");
#else
  return false;
#endif
}

AwStatus
aw_fusion_eskf_run_ext(const AwImuPrep *imu, const double *tau, const AwCamPrep *cam,
                       const AwFusionSettings *s, double g, const AwCalib *cal, unsigned freeze,
                       AwFusedPath *path, AwError *err)
{
#ifdef AW_HAVE_ESKF_AVX2
  if (aw_fusion_eskf_uses_avx2())
    return aw_fusion_eskf_run_ext_avx2(imu, tau, cam, s, g, cal, freeze, path, err);
#endif
  return aw_fusion_eskf_run_ext_generic(imu, tau, cam, s, g, cal, freeze, path, err);
}

AwStatus
aw_fusion_eskf_run(const AwImuPrep *imu, const double *tau, const AwCamPrep *cam,
                   const AwFusionSettings *s, double g, const AwCalib *cal, AwFusedPath *path,
                   AwError *err)
{
  return aw_fusion_eskf_run_ext(imu, tau, cam, s, g, cal, 0, path, err);
}

void
aw_fusion_eskf_lever0(const AwFusionSettings *s, const AwCalib *cal, double l0[3])
{
  memcpy(l0, s->lever_arm_body_m, sizeof s->lever_arm_body_m);
  /* Without a measured lever arm, start from the calibration's estimate. */
  if (cal->have_joint && aw_v3_norm(l0) == 0 && s->lever_arm_sigma_m > 0.01)
    memcpy(l0, cal->lever_body_m, sizeof cal->lever_body_m);
}
