#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later
"""Checks the snapshots and report of the workbench smoke session (ui/arcwise-smoke.c).

Usage: check-smoke.py DIR. PNGs are decoded with Python's zlib (RFC 1950) and numpy; colours are
compared with the scene's own palette (ui/scene/arcwise-scene.c), geometry by pixel counts.
"""
import os
import struct
import sys
import zlib

try:
    import numpy as np
except ImportError:
    print("skipped: numpy missing", file=sys.stderr)
    sys.exit(77)

d = sys.argv[1]
failures = []


def check(cond, what):
    print(("ok   " if cond else "FAIL ") + what)
    if not cond:
        failures.append(what)


def png(name):
    data = open(os.path.join(d, name + ".png"), "rb").read()
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    pos, idat, w, h = 8, b"", 0, 0
    while pos < len(data):
        n, typ = struct.unpack(">I4s", data[pos:pos + 8])
        body = data[pos + 8:pos + 8 + n]
        if typ == b"IHDR":
            w, h, depth, ctype = struct.unpack(">IIBB", body[:10])
            assert depth == 8 and ctype == 6
        elif typ == b"IDAT":
            idat += body
        pos += 12 + n
    raw = np.frombuffer(zlib.decompress(idat), dtype=np.uint8).reshape(h, w * 4 + 1)
    assert (raw[:, 0] == 0).all()  # filter type 0 on every row
    return raw[:, 1:].reshape(h, w, 4)[:, :, :3].astype(np.float32) / 255.0


def hsv(img):
    mx, mn = img.max(axis=2), img.min(axis=2)
    sat = np.where(mx > 0, (mx - mn) / np.maximum(mx, 1e-6), 0)
    return sat, mx


def saturated(img):
    s, v = hsv(img)
    return int(((s > 0.45) & (v > 0.35)).sum())


def grey_light(img):
    s, v = hsv(img)
    return int(((s < 0.12) & (v > 0.6)).sum())


def ice(img):
    s, v = hsv(img)
    b = img[:, :, 2]
    return int(((v > 0.55) & (s > 0.06) & (s < 0.35) & (b >= img[:, :, 0]) & (b >= img[:, :, 1])).sum())


report = {}
snaps = {}
layout = {}
not_listed = []
for line in open(os.path.join(d, "report.txt")):
    k, _, v = line.strip().partition("=")
    if k == "snapshot":
        name, w, h = v.split()
        snaps[name] = (int(w), int(h))
    elif k == "key_not_listed":
        not_listed.append(v)
    elif k == "layout":
        name, clipped, overlap = v.split()
        layout[name] = (int(clipped), int(overlap))
    else:
        report[k] = v

check(report.get("caution_shown") == "1", "first-run safety caution was shown")
check(report.get("about_caution") == "1", "About carries the same safety caution")
check(int(report.get("swings", 0)) >= 2, "library lists swings (%s)" % report.get("swings"))
n_all, n_pl, n_se = (int(report.get(k, -1)) for k in ("swings", "tree_player_swing_rows", "tree_session_swing_rows"))
check(n_pl == 0 and 0 < n_se < n_all and int(report.get("tree_closed_swing_rows", -1)) == 0,
      "library tree: %d swings; swing rows with a player open %d (sessions only), with its "
      "first session open %d, all closed %s" % (n_all, n_pl, n_se, report.get("tree_closed_swing_rows")))
check(report.get("gl_error") == "none", "3-D view has no GL error (%s)" % report.get("gl_error"))
check(float(report.get("step_dt", 0)) > 0, "frame step moves the playhead")
check(float(report.get("play_time_after", 0)) > float(report.get("play_time_before", 0)) + 0.1,
      "playback advances time (%s -> %s s)" % (report.get("play_time_before"), report.get("play_time_after")))
check(report.get("playing") == "1" and report.get("paused") == "1", "play, then pause")
check(report.get("looped") == "1" and report.get("loop_still_playing") == "1"
      and float(report.get("loop_from", 0)) < float(report.get("loop_end", 0)),
      "loop: played from %s s near the end (%s s), time came round to the start and kept playing"
      % (report.get("loop_from"), report.get("loop_end")))
check(int(report.get("compare_cells", 0)) >= 20, "compare table filled (%s cells)" % report.get("compare_cells"))
check(report.get("presentation_class") == "1" and report.get("presentation_left") == "1",
      "presentation mode on and off")
check(int(report.get("shortcuts_listed", 0)) >= 27, "shortcuts window lists every key (%s)" % report.get("shortcuts_listed"))
check(not not_listed, "the shortcuts window lists every key the window binds (missing: %s)"
      % ", ".join(not_listed))
missing = [k for k, v in report.items() if k.startswith("action") and v.endswith("missing")]
check(not missing, "every scripted action exists")

# Layout, measured in the window itself after each picture: every figure of the visible sheet
# table lies inside the sheet (none cut off at its right edge), and the view buttons and the
# layer buttons over the studio view never cover each other, at normal and presentation size.
check(len(layout) >= 9, "layout measured after every picture (%d)" % len(layout))
for name, (clipped, overlap) in sorted(layout.items()):
    check(clipped == 0, "%s: every figure of the sheet fits (%d cut off)" % (name, clipped))
    check(overlap == 0, "%s: the button bars over the view do not overlap" % name)

sw = png("swing")
n_sat, n_grey = saturated(sw), grey_light(sw)
check(n_sat > 1500, "the hand path is drawn (%d saturated pixels)" % n_sat)
check(n_grey > 100, "occluded stretches have their own grey dashed look (%d pixels)" % n_grey)
pl = png("playing")
check(pl.shape != sw.shape or np.abs(pl - sw).sum(axis=2).__gt__(0.3).sum() > 200,
      "playback changed the picture (marker, dimmed path ahead)")
for v in ("view-dtl", "view-above"):
    im = png(v)
    diff = np.abs(im - sw).sum(axis=2) > 0.3 if im.shape == sw.shape else np.ones(1)
    check(int(diff.sum()) > 5000 and saturated(im) > 800,
          "%s differs from face-on and shows the path" % v)
# Colour by phase: the follow-through's magenta-rose (hue about 327 degrees, scene palette) is
# on the tube, a hue the speed ramp (blue, teal, green, amber, red) never takes.
def hue_band(img, lo, hi):
    r, g, b = img[..., 0], img[..., 1], img[..., 2]
    mx, mn = img.max(axis=2), img.min(axis=2)
    c = np.maximum(mx - mn, 1e-6)
    h = np.where(mx == r, ((g - b) / c) % 6, np.where(mx == g, (b - r) / c + 2, (r - g) / c + 4)) * 60
    s_, v = hsv(img)
    return int(((h >= lo) & (h <= hi) & (s_ > 0.35) & (v > 0.35)).sum())


ph = png("phase")
check(hue_band(ph, 310, 345) > 300 and hue_band(sw, 310, 345) < 60,
      "colour by phase shows the follow-through's own hue (%d px; by speed %d px)"
      % (hue_band(ph, 310, 345), hue_band(sw, 310, 345)))


# Club-head path: a second, pale cream line (scene palette club_rgb 0.93 0.90 0.80).
def cream(img):
    s_, v = hsv(img)
    return int(((v > 0.6) & (s_ > 0.07) & (s_ < 0.3) & (img[..., 0] - img[..., 2] > 0.06)).sum())


cl = png("club")
check(cream(cl) > cream(sw) + 500, "the club-head path is drawn when asked (%d vs %d cream px)"
      % (cream(cl), cream(sw)))
tr = png("trust")
cm = png("compare")
check(ice(cm) > ice(tr) + 300, "compare draws a second swing in its own style (%d vs %d ice pixels)"
      % (ice(cm), ice(tr)))
pr = png("presentation")
check(pr.shape[1] > cm.shape[1] + 100,
      "presentation mode gives the 3-D view more room (%d > %d px wide)" % (pr.shape[1], cm.shape[1]))
sys.exit(1 if failures else 0)
