/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* Scores a fused path against the simulator's truth (shared by the fusion tests). */

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "arcwise/fusion.h"
#include "arcwise/sim.h"

typedef struct {
  double rmse_motion_m;     /* takeaway .. follow-through */
  double rmse_occl_m;       /* inside occlusion windows (NAN if none) */
  double rmse_finish_m;     /* the finish pose, held after the follow-through (NAN if none) */
  double base_occl_m;       /* depth-only baseline (valid frames linearly interpolated) */
  double offset_err_s;
  double coverage2;         /* per-axis share of |error| <= 2 sigma over the motion */
  double coverage1;         /* the same for 1 sigma (68.27 % for Gaussian errors) */
  size_t n_motion, n_occl;
  /* Breakdown of the per-axis samples over the motion: counts inside 2 sigma (in2) and
   * overall (n) by category (AW_SIMSCORE_CAT_*), by phase (takeaway .. follow-through, index
   * phase - AW_SIM_PHASE_TAKEAWAY) and by camera axis. */
  size_t cat_n[4], cat_in2[4];
  size_t phase_n[4], phase_in2[4];
  size_t axis_n[3], axis_in2[3];
} AwSimScore;

/* Categories of a sample: inside an occlusion window, IMU saturated (and not occluded),
 * camera frame rejected or missing (neither of the above), plain visible. */
enum { AW_SIMSCORE_CAT_VISIBLE = 0, AW_SIMSCORE_CAT_OCCLUDED, AW_SIMSCORE_CAT_SATURATED,
       AW_SIMSCORE_CAT_NOCAM };

static inline void
aw_simscore(const AwSim *sim, const AwFusedPath *p, AwSimScore *sc)
{
  const AwSimTruth *tr = aw_sim_truth(sim);
  const AwDepthStream *d = aw_sim_depth(sim);
  double sm = 0, so = 0, sb = 0, sf = 0;
  size_t nf = 0, nm = 0, no = 0, cov = 0, cov1 = 0, covn = 0, hint = 0;
  memset(sc, 0, sizeof *sc);
  for (size_t i = 0; i < p->n; i++) {
    double t = p->t_s[i];
    AwSimState st;
    aw_sim_eval(sim, t, &st);
    double e2 = 0;
    for (int a = 0; a < 3; a++) {
      double e = p->pos_cam_m[i][a] - st.wrist_cam_m[a];
      e2 += e * e;
    }
    bool motion = st.phase >= AW_SIM_PHASE_TAKEAWAY && st.phase <= AW_SIM_PHASE_FOLLOW_THROUGH;
    if (st.phase == AW_SIM_PHASE_FINISH) { sf += e2; nf++; }
    bool occl = false;
    for (size_t o = 0; o < tr->n_occlusions; o++)
      if (t >= tr->occlusions[o].t0_s && t < tr->occlusions[o].t1_s) occl = true;
    if (motion) {
      sm += e2; nm++;
      int cat = occl ? AW_SIMSCORE_CAT_OCCLUDED
              : (p->flags[i] & AW_FUSED_IMU_SATURATED) ? AW_SIMSCORE_CAT_SATURATED
              : !(p->flags[i] & AW_FUSED_CAM_ACCEPTED) ? AW_SIMSCORE_CAT_NOCAM
              : AW_SIMSCORE_CAT_VISIBLE;
      int ph = (int)st.phase - (int)AW_SIM_PHASE_TAKEAWAY;
      for (int a = 0; a < 3; a++) {
        double ae = fabs(p->pos_cam_m[i][a] - st.wrist_cam_m[a]);
        bool in2 = ae <= 2 * p->pos_sigma_cam_m[i][a];
        covn++;
        cov += in2;
        cov1 += ae <= p->pos_sigma_cam_m[i][a];
        sc->cat_n[cat]++; sc->cat_in2[cat] += in2;
        sc->phase_n[ph]++; sc->phase_in2[ph] += in2;
        sc->axis_n[a]++; sc->axis_in2[a] += in2;
      }
    }
    if (occl) {
      so += e2; no++;
      /* depth-only baseline: valid frames either side, linear interpolation */
      while (hint + 1 < d->n && d->t_s[hint + 1] <= t) hint++;
      long k0 = (long)hint, k1 = (long)hint + 1;
      while (k0 >= 0 && !(d->conf[k0] > 0 && isfinite(d->pos_cam_m[k0][0]))) k0--;
      while (k1 < (long)d->n && !(d->conf[k1] > 0 && isfinite(d->pos_cam_m[k1][0]))) k1++;
      double b[3];
      if (k0 < 0 && k1 >= (long)d->n) continue;
      if (k0 < 0) k0 = k1;
      if (k1 >= (long)d->n) k1 = k0;
      double w = k1 == k0 ? 0 : (t - d->t_s[k0]) / (d->t_s[k1] - d->t_s[k0]);
      double eb = 0;
      for (int a = 0; a < 3; a++) {
        b[a] = d->pos_cam_m[k0][a] + w * (d->pos_cam_m[k1][a] - d->pos_cam_m[k0][a]);
        eb += (b[a] - st.wrist_cam_m[a]) * (b[a] - st.wrist_cam_m[a]);
      }
      sb += eb;
    }
  }
  sc->rmse_motion_m = nm ? sqrt(sm / (double)nm) : (double)NAN;
  sc->rmse_occl_m = no ? sqrt(so / (double)no) : (double)NAN;
  sc->rmse_finish_m = nf ? sqrt(sf / (double)nf) : (double)NAN;
  sc->base_occl_m = no ? sqrt(sb / (double)no) : (double)NAN;
  sc->n_motion = nm;
  sc->n_occl = no;
  sc->coverage2 = covn ? (double)cov / (double)covn : (double)NAN;
  sc->coverage1 = covn ? (double)cov1 / (double)covn : (double)NAN;
  sc->offset_err_s = p->report.clock_offset_s - tr->clock_offset_s;
}
