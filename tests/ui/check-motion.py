#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later
"""Judges the workbench's playback and camera-gesture session (ui/arcwise-motion-test.c).

Usage: check-motion.py RUN_DIR

Playback is judged against GTK's own clock: GdkFrameClock's frame time, which the GTK 4
reference manual names as the time every animation of a frame should use. Over each played
interval the marker's time must advance by exactly speed x frame-clock time (1, 1/2, 1/4 and
1/8, the speeds the issue asks for), frame by frame; no wall-clock time is measured.

The camera is judged with an independent projection: numpy's gluLookAt and gluPerspective
matrices as the OpenGL 2.1 reference pages define them, with the eye placed from the camera's
yaw, pitch and distance as ui/scene/arcwise-scene.c does (camera_eye). Pan is grab-and-drag: the
point under the pointer at the target's depth follows it pixel for pixel. Pinch is a pinhole
camera's scale: spreading the fingers to twice their distance shows the scene at the target
twice as large. Orbit turns 3 rad per view height and the wheel scales the distance by
exp(0.12) per click: those two rates are this project's own design (arcwise-scene.h,
arcwise-stage.c). Turntable orbit (dragging right brings the near side of the scene to the
right) and wheel-down zooming out are common practice in 3-D viewers, not a standard.
"""
import math
import os
import sys

import numpy as np

d = sys.argv[1]
report = {}
for line in open(os.path.join(d, "motion-report.txt")):
    k, _, v = line.rstrip("\n").partition("=")
    report[k] = v
failures = []


def check(cond, what):
    print(("ok   " if cond else "FAIL ") + what)
    if not cond:
        failures.append(what)


def samples(name):
    out = []
    for tok in report.get(name, "").split():
        f, t, p = tok.split(":")
        out.append((int(f), float(t), int(p)))
    return out


def anchored(s, start):
    """Drops frames drawn before the first tick (marker still at the start): the last of them
    is the first tick's frame, where the advance starts from."""
    k = 0
    while k + 1 < len(s) and s[k + 1][1] == start:
        k += 1
    return s[k:]


check(report.get("gl_error") == "none", "no GL error")
missing = [k for k in report if k.startswith("missing_action")]
check(not missing, "every action the script used exists %s" % missing)

# ---- playback rates against the frame clock --------------------------------------------------
speeds = [1.0, 0.5, 0.25, 0.125]
slopes = []
for i, f in enumerate(speeds):
    name = "speed%d" % i
    start = float(report.get(name + "_start", "nan"))
    s = anchored(samples(name), start)
    playing = [x for x in s if x[2] == 1]
    check(len(playing) >= 5 and len(playing) == len(s),
          "%s: played through %d frames" % (name, len(playing)))
    if len(s) < 3:
        slopes.append(float("nan"))
        continue
    fr = np.array([x[0] for x in s], dtype=np.float64) * 1e-6
    t = np.array([x[1] for x in s])
    dF, dt = np.diff(fr), np.diff(t)
    ok = bool((dF > 0).all())
    ratio = dt / np.where(dF > 0, dF, 1.0)
    check(ok and np.all(np.abs(ratio - f) < 1e-6),
          "%s: every frame the marker advanced %g x the frame clock's step (ratios %.7f..%.7f "
          "over %d frames)" % (name, f, ratio.min(), ratio.max(), len(dt)))
    slope = np.polyfit(fr - fr[0], t - t[0], 1)[0]
    slopes.append(slope)
    check(abs(slope - f) < 1e-6 and t[-1] - t[0] > 0.5 * f * 0.1,
          "%s: marker time over frame-clock time %.7f (want %g), %.4f s of swing in %.4f s"
          % (name, slope, f, t[-1] - t[0], fr[-1] - fr[0]))
    check(report.get(name + "_paused") == "1", "%s: paused again" % name)
if all(math.isfinite(x) for x in slopes):
    r = [slopes[0] / x for x in slopes]
    check(all(abs(a - b) < 1e-5 for a, b in zip(r, [1, 2, 4, 8])),
          "rates 1 : 1/2 : 1/4 : 1/8 (1x over each: %s)" % ", ".join("%.6f" % x for x in r))

# ---- frame step ------------------------------------------------------------------------------
mt = [float(x) for x in report.get("model_t", "").split()]
st = [float(x) for x in report.get("step_t", "").split()]
want = mt[0:6] + [mt[4], mt[3]] if len(mt) >= 6 else []
check(len(st) == len(want) and all(abs(a - b) < 1e-7 for a, b in zip(st, want)),
      "frame step lands on the path's samples one at a time, forward and back: %s (want %s)"
      % (st, want))

# ---- loop ------------------------------------------------------------------------------------
check(report.get("loop_state") == "1" and report.get("loop_state_after") == "0",
      "loop turned on, then off")
s = samples("loop")
dur = float(report.get("duration", "nan"))
wrap = [k for k in range(1, len(s)) if s[k][1] < s[k - 1][1]]
check(len(wrap) == 1 and all(x[2] == 1 for x in s),
      "with loop on the marker came round once and kept playing (%d samples)" % len(s))
if len(wrap) == 1:
    k = wrap[0]
    dF = (s[k][0] - s[k - 1][0]) * 1e-6
    check(0.0 <= s[k][1] <= 0.5 * dF + 1e-9 and s[k - 1][1] + 0.5 * dF >= dur - 1e-6,
          "the wrap came when the end was due (%.4f s + 1/2 x %.4f s >= %.4f s) and restarted "
          "at the start (%.4f s)" % (s[k - 1][1], dF, dur, s[k][1]))
    after = s[k:]
    fr = np.array([x[0] for x in after], dtype=np.float64) * 1e-6
    t = np.array([x[1] for x in after])
    ratio = np.diff(t) / np.diff(fr)
    check(len(after) >= 5 and np.all(np.abs(ratio - 0.5) < 1e-6),
          "after the wrap the marker keeps 1/2 speed (%d frames)" % (len(after) - 1))

# ---- end with loop off -------------------------------------------------------------------------
s = samples("end")
check(len(s) >= 2 and s[-1][2] == 0 and abs(s[-1][1] - dur) < 1e-9
      and all(x[2] == 1 for x in s[:-1]),
      "with loop off playback stopped at the end (%.6f s of %.6f s)"
      % (s[-1][1] if s else float("nan"), dur))
check(abs(float(report.get("end_final", "nan")) - dur) < 1e-9, "the marker stays at the end")

# ---- the same through real key presses (XTest) -------------------------------------------------
check("xdotool_error_keys" not in report and "keys1_playing" in report,
      "key presses delivered through the X server")
check(len(mt) > 3 and abs(float(report.get("keys0_time", "nan")) - mt[3]) < 1e-7,
      "Right three times from the start: on the path's fourth sample (%s s, want %s s)"
      % (report.get("keys0_time"), mt[3] if len(mt) > 3 else None))
check(report.get("keys0_speed") == "2", "[ twice from 1x: 1/4 speed chosen (%s)" % report.get("keys0_speed"))
check(report.get("keys0_loop") == "1" and report.get("keys0_playing") == "0", "L turns loop on")
check(report.get("keys1_playing") == "1"
      and float(report.get("keys1_time", "0")) > float(report.get("keys0_time", "1")),
      "Space plays (%s -> %s s)" % (report.get("keys0_time"), report.get("keys1_time")))



def button_rgb(picture, key):
    """Mean colour (0-255) inside the loop button's bounds, a few pixels in from its edge."""
    v = report.get(key, "").split()
    if len(v) != 6:
        return None
    import matplotlib.image  # python3-matplotlib, a test package of tools/quickstart
    img = matplotlib.image.imread(os.path.join(d, picture + ".png"))[:, :, :3] * 255.0
    x, y, bw, bh, ww, wh = (int(float(t)) for t in v)
    if img.shape[:2] != (wh, ww):
        return None
    return img[y + 8:y + bh - 8, x + 6:x + bw - 6].reshape(-1, 3).mean(axis=0)


on, off = button_rgb("keys-window", "loop_button_on"), button_rgb("gestures-window", "loop_button_off")
amber = lambda c: c is not None and c[0] > 150 and c[0] - c[2] > 60
check(amber(on) and off is not None and not amber(off),
      "loop on shows on its button in the accent amber (on %s, off %s)"
      % (None if on is None else on.round(), None if off is None else off.round()))

# ---- camera gestures -------------------------------------------------------------------------
w, h = (int(x) for x in report.get("stage_size", "0 0").split())


def cam(name, when):
    v = [float(x) for x in report.get("cam_%s_%s" % (name, when), "").split()]
    return {"target": np.array(v[0:3]), "yaw": v[3], "pitch": v[4], "dist": v[5], "fov": v[6]}


def eye(c):
    cp, sp = math.cos(c["pitch"]), math.sin(c["pitch"])
    return c["target"] + c["dist"] * np.array([math.sin(c["yaw"]) * cp,
                                               -math.cos(c["yaw"]) * cp, sp])


def look_at(e, centre, up):
    # gluLookAt (OpenGL 2.1 reference pages).
    f = centre - e
    f = f / np.linalg.norm(f)
    s_ = np.cross(f, up)
    s_ = s_ / np.linalg.norm(s_)
    u = np.cross(s_, f)
    m = np.identity(4)
    m[0, :3], m[1, :3], m[2, :3] = s_, u, -f
    t = np.identity(4)
    t[:3, 3] = -e
    return m @ t


def perspective(fovy, aspect, near, far):
    # gluPerspective (OpenGL 2.1 reference pages).
    fz = 1.0 / math.tan(fovy / 2)
    return np.array([[fz / aspect, 0, 0, 0], [0, fz, 0, 0],
                     [0, 0, (far + near) / (near - far), 2 * far * near / (near - far)],
                     [0, 0, -1, 0]])


def project(c, p):
    """Window pixel (x right, y down from the stage's top left) of world point p."""
    clip = perspective(c["fov"], w / h, 0.05, 60.0) @ look_at(eye(c), c["target"],
                                                                np.array([0.0, 0.0, 1.0])) @ np.append(p, 1.0)
    ndc = clip[:3] / clip[3]
    return np.array([(ndc[0] + 1) / 2 * w, (1 - ndc[1]) / 2 * h])


def gesture(name):
    v = report.get("gesture_" + name, "").split()
    return [int(x) for x in v] if len(v) == 4 else None


check(w > 100 and h > 100, "stage size %d x %d" % (w, h))
legend = report.get("legend", "").split("|")
check(report.get("legend_visible") == "1"
      and any(all(k in l for k in ("drag: turn", "right-drag", "Shift-drag", "scroll", "pinch"))
              for l in legend),
      "the view's legend says how to turn, move and zoom: %r" % legend[-1:])
for name in ("orbit", "pan_right_button", "pan_shift", "wheel_out", "wheel_in"):
    check(("cam_%s_after" % name) in report and ("no_pointer_" + name) not in report
          and not any(k.startswith("xdotool_error_" + name) for k in report),
          "%s: real pointer input delivered through the X server" % name)
    check(report.get("view_" + name) == "3", "%s: the view is now Free" % name)
check(report.get("view_pinch") == "3" and report.get("view_action") == "free",
      "pinch: the view is now Free, the view buttons say so")

if w > 0 and all(("cam_%s_after" % n) in report for n in ("orbit", "pan_right_button", "pan_shift",
                                                          "wheel_out", "wheel_in", "pinch")):
    centre = np.array([w / 2, h / 2])
    # Orbit: turns around the fixed target at the fixed distance.
    a, b = cam("orbit", "before"), cam("orbit", "after")
    g = gesture("orbit")
    check(np.allclose(a["target"], b["target"]) and abs(a["dist"] - b["dist"]) < 1e-6,
          "orbit: target and distance kept")
    check(np.linalg.norm(project(b, a["target"]) - centre) < 0.5,
          "orbit: the target stays in the middle of the view")
    check(abs((b["yaw"] - a["yaw"]) + 3.0 * g[2] / h) < 1e-5
          and abs((b["pitch"] - a["pitch"]) - 3.0 * g[3] / h) < 1e-5,
          "orbit: drag (%d, %d) px turned yaw %.4f, pitch %+.4f rad (3 rad per view height)"
          % (g[2], g[3], b["yaw"] - a["yaw"], b["pitch"] - a["pitch"]))
    horiz = eye(a) - a["target"]
    horiz[2] = 0
    near = a["target"] + 0.5 * horiz / np.linalg.norm(horiz)
    p0, p1 = project(a, near), project(b, near)
    check(p1[0] > p0[0] + 5 and p1[1] > p0[1] + 5,
          "orbit: dragging right and down brings the near side right and down (turntable, "
          "common practice): (%.1f, %.1f) -> (%.1f, %.1f) px" % (p0[0], p0[1], p1[0], p1[1]))
    # Pan: the point under the pointer follows it.
    for name in ("pan_right_button", "pan_shift"):
        a, b = cam(name, "before"), cam(name, "after")
        g = gesture(name)
        check(abs(a["yaw"] - b["yaw"]) < 1e-7 and abs(a["pitch"] - b["pitch"]) < 1e-7
              and abs(a["dist"] - b["dist"]) < 1e-6, "%s: direction and distance kept" % name)
        moved = project(b, a["target"]) - centre
        check(np.linalg.norm(moved - np.array(g[2:4])) < 0.5,
              "%s: the point under the pointer followed the drag (%d, %d) px: moved "
              "(%.2f, %.2f) px" % (name, g[2], g[3], moved[0], moved[1]))

    def scale_at_target(a, b):
        """How much larger a short stretch through the target, across the view, looks after."""
        yaw = a["yaw"]
        right = np.array([math.cos(yaw), math.sin(yaw), 0.0])
        la = np.linalg.norm(project(a, a["target"] + 0.2 * right) - project(a, a["target"]))
        lb = np.linalg.norm(project(b, a["target"] + 0.2 * right) - project(b, a["target"]))
        return lb / la

    for name in ("wheel_out", "wheel_in"):
        a, b = cam(name, "before"), cam(name, "after")
        g = gesture(name)
        check(np.allclose(a["target"], b["target"]) and abs(a["yaw"] - b["yaw"]) < 1e-7
              and abs(a["pitch"] - b["pitch"]) < 1e-7, "%s: target and direction kept" % name)
        want = math.exp(0.12 * g[3])
        got = b["dist"] / a["dist"]
        check(abs(got - want) < 1e-4,
              "%s: %d wheel clicks %s scaled the distance by %.5f (want exp(0.12 x %d) = %.5f)"
              % (name, abs(g[3]), "down" if g[3] > 0 else "up", got, g[3], want))
        sc = scale_at_target(a, b)
        check((sc < 1) == (g[3] > 0) and abs(sc * want - 1) < 0.01,
              "%s: the scene at the target looks %.3f x as large (wheel down zooms out, common "
              "practice)" % (name, sc))
    a, b = cam("pinch", "before"), cam("pinch", "after")
    sc = scale_at_target(a, b)
    check(report.get("zoom_controller") == "1" and abs(sc - 2.0) < 0.02
          and np.allclose(a["target"], b["target"]),
          "pinch spread to 2x: the scene at the target looks %.3f x as large (pinhole camera)" % sc)


def png(name):
    # matplotlib's reader (python3-matplotlib, a test package of tools/quickstart), as
    # check-import.py uses: RGB in 0..1.
    import matplotlib.image
    return matplotlib.image.imread(os.path.join(d, name + ".png"))[:, :, :3].astype(np.float32)


before, after = png("stage-before"), png("stage-after")
changed = float((np.abs(before - after).max(axis=2) > 0.1).mean()) if before.shape == after.shape else 0
check(changed > 0.05, "the drawn view changed with the camera (%.0f %% of pixels)" % (100 * changed))

if failures:
    print("%d check(s) failed" % len(failures))
    sys.exit(1)
