#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later
"""The engine's error-state filter and smoother against a textbook linear Kalman filter and
Rauch-Tung-Striebel smoother (H. E. Rauch, F. Tung, C. T. Striebel, "Maximum likelihood
estimates of linear dynamic systems", AIAA Journal 3(8):1445-1450, 1965) written here in numpy.

With the attitude and the clock known (aw_fusion_eskf_run_ext with AW_ESKF_FREEZE_ATTITUDE |
AW_ESKF_FREEZE_CLOCK), a fixed camera-from-body rotation, no gyro signal and camera frames on IMU
sample times, the filter's remaining states (IMU position p, velocity v, lever arm l, accelerometer
bias ba, gravity error dg; camera frame) form a linear-Gaussian system:
  p' = p + dt v + dt^2 (R (f0 - ba) + g) / 3 + dt^2 (R (f1 - ba) + g) / 6
  v' = v + dt (R (f0 - ba) + g + R (f1 - ba) + g) / 2          (g = g_nominal + dg)
  camera z = p + R l + noise (sigma_xy = c_xy z, sigma_z = c_z z^2), ZUPT 0 = v + noise.
The process noise and the prior are the ones eskf.c states: white acceleration noise integrated
over the step (qv = sa^2 dt, qp = qv dt^2/3, qpv = qv dt/2), bias random walk sba^2 dt, 1e-12 m^2
per step on the lever arm, none on gravity; prior sigma_p^2 = trace(R_cam(z0)) + 1e-4, sigma_v =
0.05 (still) or 1.5 m/s, sigma_dg^2 = sigma_ba^2 + the calibration's gravity standard error^2
(0 here: no calibration ran). The case is random (fixed seed), not a recording:
only the algebra is checked. Smoothed keypoint position p + R l, velocity, keypoint sigma and the
accelerometer bias at the middle sample must agree to 1e-9 relative (floating-point
reassociation only) at the samples where the engine forms its covariance, and to the bounds of
its interpolation in between (see below). Exit 77 when numpy is absent."""
import os
import subprocess
import sys
import tempfile

try:
    import numpy as np
except ImportError:
    print("numpy absent: skipped")
    sys.exit(77)

helper = sys.argv[1]
rng = np.random.default_rng(20260412)

n, dt = 400, 0.01                 # 4 s at 100 Hz
cam_every = 3                     # a frame on every third sample (33 Hz)
t = np.arange(n) * dt
still = np.zeros(n, dtype=int)
still[:50] = 1                    # 0.5 s still at the start
# Attitude: a fixed tilted camera-from-body rotation (unit quaternion, w first).
q = np.array([0.9, 0.2, -0.3, 0.25])
q /= np.linalg.norm(q)
w, x, y, z = q
R = np.array([[1 - 2 * (y * y + z * z), 2 * (x * y - w * z), 2 * (x * z + w * y)],
              [2 * (x * y + w * z), 1 - 2 * (x * x + z * z), 2 * (y * z - w * x)],
              [2 * (x * z - w * y), 2 * (y * z + w * x), 1 - 2 * (x * x + y * y)]])
g_nom = R @ np.array([0.05, -0.1, -9.80665])   # nominal gravity, a little off the truth
g_true = R @ np.array([0.0, 0.0, -9.80665])
sa, sba, ba_init = 180e-6 * 9.80665, 1e-4, 0.4
cxy, cz, zs, ls = 0.0033, 1.6e-3, 0.02, 0.03

# Truth: from 0.6 s each axis swings as p0 + r (1 - cos(w tau)) (tens of centimetres, a few
# Hz: wrist-like), its acceleration integrated as the model integrates it.
tau = np.clip(t - 0.6, 0, None)
amp, om = np.array([0.3, 0.15, 0.2]), 2 * np.pi * np.array([1.1, 1.7, 0.8])
acc = np.where(tau[:, None] > 0, amp * om * om * np.cos(om * tau[:, None]), 0.0)
acc += rng.normal(0, 0.5, (n, 3))
# Integrated exactly for acceleration linear over each step (the model above).
vel, pos = np.zeros((n, 3)), np.zeros((n, 3))
pos[0] = [0.1, -0.2, 2.6]
for i in range(1, n):
    vel[i] = vel[i - 1] + dt * (acc[i - 1] + acc[i]) / 2
    pos[i] = pos[i - 1] + dt * vel[i - 1] + dt * dt * (acc[i - 1] / 3 + acc[i] / 6)
ba_true = np.array([0.08, -0.05, 0.12])
lever_true = np.array([0.02, -0.015, 0.01])
f = (R.T @ (acc - g_true).T).T + ba_true + rng.normal(0, sa / np.sqrt(dt), (n, 3))
cam_idx = [i for i in range(0, n, cam_every) if not (150 <= i < 190)]   # an occlusion gap
zc = pos[cam_idx] + lever_true @ R.T
zc[:, :2] += rng.normal(0, 1, (len(cam_idx), 2)) * (cxy * zc[:, 2:3])
zc[:, 2] += rng.normal(0, 1, len(cam_idx)) * cz * zc[:, 2] ** 2

# The engine forms the covariance only at nodes (eskf.c, "Nodes"): every sample with a camera
# frame, the first and the last, and at least one per camera interval. There its algebra is
# exact: with no bias random walk it must agree to 1e-9 relative (floating-point reassociation
# only). With the walk (sba above) eskf.c leaves out the walk's coupling into velocity inside a
# run (below 1e-13 m^2/s^2), which moves the node values by about 1e-7 relative: 1e-6 there.
# Between nodes the smoother's correction and variance are interpolated linearly; there the
# path may differ by micrometres (1e-5 of its range, 300 mm here: 3 um, three orders below the
# camera's noise), the velocity by 1e-6 of its range and the sigma by 0.1 %.
# Zero-velocity updates are made at the still nodes, each with the variance zs^2 per 20 ms of
# stillness scaled by zupt_every / (the still samples since the node before, this one included).
zupt_every = max(1, round(0.02 / dt))
max_run = int(np.ceil(cam_every - 1e-9))
base = set(cam_idx) | {0, n - 1}
node = np.zeros(n, dtype=bool)
zupt_var = {}
last, still_run = 0, 0
for i in range(n):
    still_run += int(still[i])
    if i in base or i - last >= max_run:
        node[i] = True
        last = i
        if still[i]:
            zupt_var[i] = zs * zs * zupt_every / still_run
        still_run = 0


def run_case(sba):
    """Engine output and the reference for a bias random-walk density sba."""
    with tempfile.TemporaryDirectory() as tmp:
        path = os.path.join(tmp, "case.txt")
        with open(path, "w") as fp:
            fp.write(f"{n} {len(cam_idx)} {dt!r} {cam_every * dt!r}\n")
            fp.write(" ".join(repr(float(v)) for v in list(q) + list(g_nom)) + "\n")
            fp.write(" ".join(repr(float(v)) for v in (sa, sba, ba_init, cxy, cz, zs, ls)) + "\n")
            for i in range(n):
                fp.write(f"{t[i]!r} {f[i, 0]!r} {f[i, 1]!r} {f[i, 2]!r} {still[i]}\n")
            for j, i in enumerate(cam_idx):
                fp.write(f"{t[i]!r} {zc[j, 0]!r} {zc[j, 1]!r} {zc[j, 2]!r}\n")
        out = subprocess.run([helper, path], capture_output=True, text=True)
    if out.returncode != 0:
        print(out.stderr)
        sys.exit(1)
    lines = out.stdout.split("\n")
    eng = np.array([[float(v) for v in lines[i].split()] for i in range(n)])
    ba_eng = np.array([float(v) for v in lines[n].split()[1:]])

    # Reference: state [p, v, l, ba, dg] (15), textbook Kalman filter (Joseph form) + RTS.
    I3, Z3 = np.eye(3), np.zeros((3, 3))
    def cam_R(zm):
        zz = max(zm[2], 0.1)
        return np.diag([(cxy * zz) ** 2, (cxy * zz) ** 2, (cz * zz * zz) ** 2])
    H_cam = np.hstack([I3, Z3, R, Z3, Z3])
    H_zupt = np.hstack([Z3, I3, Z3, Z3, Z3])
    F = np.block([[I3, dt * I3, Z3, -0.5 * dt * dt * R, 0.5 * dt * dt * I3],
                  [Z3, I3, Z3, -dt * R, dt * I3],
                  [Z3, Z3, I3, Z3, Z3], [Z3, Z3, Z3, I3, Z3], [Z3, Z3, Z3, Z3, I3]])
    qv = sa * sa * dt
    Q = np.zeros((15, 15))
    Q[0:3, 0:3] = qv * dt * dt / 3 * I3
    Q[0:3, 3:6] = Q[3:6, 0:3] = qv * dt / 2 * I3
    Q[3:6, 3:6] = qv * I3
    Q[6:9, 6:9] = 1e-12 * I3
    Q[9:12, 9:12] = sba * sba * dt * I3

    def update(xx, P, Hm, Rm, r):
        S = Hm @ P @ Hm.T + Rm
        K = np.linalg.solve(S, Hm @ P).T
        A = np.eye(15) - K @ Hm
        return xx + K @ r, A @ P @ A.T + K @ Rm @ K.T

    cam_at = {i: j for j, i in enumerate(cam_idx)}
    xx = np.zeros(15)
    xx[0:3] = zc[0]
    R0 = cam_R(zc[0])
    P = np.diag([np.trace(R0) + 1e-4] * 3 + [0.05 ** 2 if still[0] else 1.5 ** 2] * 3 + [ls * ls] * 3
                + [ba_init ** 2] * 3 + [ba_init ** 2] * 3)
    xf, Pf, xp, Pp = [], [], [None], [None]
    for i in range(n):
        if i > 0:
            u = np.zeros(15)
            u[0:3] = dt * dt * (R @ f[i - 1] / 3 + R @ f[i] / 6 + g_nom / 2)
            u[3:6] = dt * (R @ (f[i - 1] + f[i]) / 2 + g_nom)
            xx = F @ xx + u
            P = F @ P @ F.T + Q
            xp.append(xx.copy())
            Pp.append(P.copy())
        if i in zupt_var:
            xx, P = update(xx, P, H_zupt, zupt_var[i] * I3, -xx[3:6])
        if i in cam_at:
            zm = zc[cam_at[i]]
            xx, P = update(xx, P, H_cam, cam_R(zm), zm - H_cam @ xx)
        xf.append(xx.copy())
        Pf.append(P.copy())
    xs, Ps = [None] * n, [None] * n
    xs[-1], Ps[-1] = xf[-1], Pf[-1]
    for k in range(n - 2, -1, -1):
        C = np.linalg.solve(Pp[k + 1], F @ Pf[k]).T      # Pf F^T Pp^-1 (Pp symmetric)
        xs[k] = xf[k] + C @ (xs[k + 1] - xp[k + 1])
        Ps[k] = Pf[k] + C @ (Ps[k + 1] - Pp[k + 1]) @ C.T
    J = np.hstack([I3, Z3, R, Z3, Z3])
    ref_pos = np.array([J @ s for s in xs])
    ref_vel = np.array([s[3:6] for s in xs])
    ref_sig = np.array([np.sqrt(np.diag(J @ S @ J.T)) for S in Ps])
    flt_pos = np.array([J @ s for s in xf])
    ref_ba = xs[n // 2][9:12]
    return eng, ba_eng, ref_pos, ref_vel, ref_sig, flt_pos, ref_ba


mid = ~node
print(f"{int(node.sum())} nodes of {n} samples")
ok = int(mid.sum()) > n // 2    # the case must exercise the interpolation


def rel(a, b, scale):
    return float(np.max(np.abs(a - b)) / scale)


for walk, tol in ((0.0, 1e-9), (sba, 1e-6)):
    eng, ba_eng, ref_pos, ref_vel, ref_sig, flt_pos, ref_ba = run_case(walk)
    pscale, vscale = np.max(np.abs(ref_pos)), np.max(np.abs(ref_vel))
    checks = [
        ("keypoint position at nodes", rel(eng[node, 0:3], ref_pos[node], pscale), tol),
        ("velocity at nodes", rel(eng[node, 3:6], ref_vel[node], vscale), tol),
        ("position sigma at nodes", float(np.max(np.abs(eng[node, 6:9] / ref_sig[node] - 1))), tol),
        ("keypoint position between nodes", rel(eng[mid, 0:3], ref_pos[mid], pscale), 1e-5),
        ("velocity between nodes", rel(eng[mid, 3:6], ref_vel[mid], vscale), 1e-6),
        ("position sigma between nodes", float(np.max(np.abs(eng[mid, 6:9] / ref_sig[mid] - 1))), 1e-3),
        ("accelerometer bias (middle sample%s)" % ("" if node[n // 2] else ", between nodes"),
         rel(ba_eng, ref_ba, np.max(np.abs(ref_ba))), tol if node[n // 2] else 1e-5),
    ]
    print(f"bias random walk {walk:g} m/s^2/sqrt(Hz):")
    for name, e, lim in checks:
        good = e <= lim
        ok = ok and good
        print(f"  {name}: relative difference {e:.2e} (limit {lim:.0e}) {'ok' if good else 'FAIL'}")
# The check must be able to tell smoothing from filtering: the forward-only path is far off.
sep = rel(flt_pos, ref_pos, np.max(np.abs(ref_pos)))
print(f"filtered vs smoothed reference: {sep:.2e} (must exceed 1e-6)")
ok = ok and sep > 1e-6
# And the smoothed path follows the truth (the case is a sensible one).
rmse = float(np.sqrt(np.mean(np.sum((ref_pos - (pos + lever_true @ R.T)) ** 2, axis=1))))
print(f"reference smoothed keypoint RMSE against the truth: {rmse * 1000:.2f} mm")
ok = ok and rmse < 0.02
sys.exit(0 if ok else 1)
