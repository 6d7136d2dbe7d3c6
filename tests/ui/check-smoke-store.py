#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later
"""Judges the workbench's stored-library smoke session against the library file itself.

Usage: check-smoke-store.py DIR LIBRARY. The library is read with Python's sqlite3 module
(SQLite's own reader, not the project's store code), PNGs with zlib (RFC 1950) and numpy.
- Numbers: each figure the sheet shows is the stored metric, rounded as shown; imperial
  figures by the exact definitions 1 mph = 0.44704 m/s and 1 in = 0.0254 m (NIST SP 811,
  appendix B).
- Scrubber: a mark stands at each stored event (address, takeaway, top, impact, finish), at
  x = 14 + (width - 28) * (t - start) / span, the scrubber's drawing rule (14 px margins,
  ui/arcwise-timeline.c), with start and span the swing's stored span.
- Stance: seen down the line from behind the ball, a right-handed golfer stands left of the
  target line and a left-handed golfer right of it (the trade's definition of the view).
- Coach's marks entered in the window are in the file: rating, reference flag, tags, notes.
"""
import os
import re
import sqlite3
import struct
import sys
import zlib

try:
    import numpy as np
except ImportError:
    print("skipped: numpy missing", file=sys.stderr)
    sys.exit(77)

d, lib = sys.argv[1], sys.argv[2]
failures = []


def check(cond, what):
    print(("ok   " if cond else "FAIL ") + what)
    if not cond:
        failures.append(what)


def png(path):
    data = open(path, "rb").read()
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    pos, idat, w, h, ctype = 8, b"", 0, 0, 6
    while pos < len(data):
        n, typ = struct.unpack(">I4s", data[pos:pos + 8])
        body = data[pos + 8:pos + 8 + n]
        if typ == b"IHDR":
            w, h, depth, ctype = struct.unpack(">IIBB", body[:10])
            assert depth == 8 and ctype in (2, 6)
        elif typ == b"IDAT":
            idat += body
        pos += 12 + n
    bpp = 4 if ctype == 6 else 3
    raw = np.frombuffer(zlib.decompress(idat), dtype=np.uint8).reshape(h, w * bpp + 1)
    # Undo the PNG row filters (PNG spec, section 9.2) in plain Python/numpy.
    out = np.zeros((h, w * bpp), dtype=np.int32)
    prev = np.zeros(w * bpp, dtype=np.int32)
    for y in range(h):
        f, row = raw[y, 0], raw[y, 1:].astype(np.int32)
        cur = np.zeros_like(row)
        if f == 0:
            cur = row
        elif f == 2:
            cur = (row + prev) & 255
        else:
            for x in range(len(row)):
                a = cur[x - bpp] if x >= bpp else 0
                b = prev[x]
                c = prev[x - bpp] if x >= bpp else 0
                if f == 1:
                    pr = a
                elif f == 3:
                    pr = (a + b) // 2
                else:
                    p = a + b - c
                    pa, pb, pc = abs(p - a), abs(p - b), abs(p - c)
                    pr = a if pa <= pb and pa <= pc else (b if pb <= pc else c)
                cur[x] = (row[x] + pr) & 255
        out[y] = cur
        prev = cur
    img = out.reshape(h, w, bpp).astype(np.float32) / 255.0
    if bpp == 3:
        img = np.concatenate([img, np.ones((h, w, 1), np.float32)], axis=2)
    return img


swings, numbers, marked = {}, [], None
report = {}
for line in open(os.path.join(d, "report.txt")):
    k, _, v = line.rstrip("\n").partition("=")
    if k == "swing":
        i, sid, handed, dur, w, h = v.split()
        swings[int(i)] = dict(id=int(sid), handed=int(handed), dur=float(dur), w=int(w), h=int(h))
    elif k == "number":
        units, sid, rest = v.split(" ", 2)
        label, _, text = rest.partition("\t")
        numbers.append((units, int(sid), label, text))
    else:
        report[k] = v

db = sqlite3.connect("file:%s?mode=ro" % lib, uri=True)
n_db = db.execute("SELECT count(*) FROM swing").fetchone()[0]
check(report.get("caution_shown") == "1", "first-run safety caution was shown")
check(report.get("gl_error") == "none", "3-D view has no GL error (%s)" % report.get("gl_error"))
check(len(swings) == n_db and n_db >= 4, "every stored swing was shown (%d of %d)" % (len(swings), n_db))

# ---- Numbers ----
names = {
    "Backswing": "backswing_s", "Downswing": "downswing_s", "Tempo (back : down)": "tempo_ratio",
    "Peak hand speed": "peak_hand_speed_mps", "Hand speed at impact": "hand_speed_impact_mps",
    "Hands rise to the top": "top_height_m", "Hand path length": "hand_path_length_m",
    "Club-head speed (estimate)": "club_speed_impact_mps",
    "Backswing plane": "plane_backswing_deg", "Downswing plane": "plane_downswing_deg",
    "Hand path at impact (+ in-to-out)": "path_direction_deg",
}
convert = {
    ("metric", "s"): 1.0, ("imperial", "s"): 1.0, ("metric", ":"): 1.0, ("imperial", ":"): 1.0,
    ("metric", "m/s"): 1.0, ("imperial", "mph"): 1 / 0.44704,
    ("metric", "cm"): 100.0, ("imperial", "in"): 1 / 0.0254,
    ("metric", "°"): 1.0, ("imperial", "°"): 1.0,
}
seen_units, wrong = set(), []
for units, sid, label, text in numbers:
    m = re.fullmatch(r"(-?\d+(?:\.(\d+))?)\s*(s|m/s|mph|cm|in|°|: 1)", text)
    name = names.get(label)
    row = db.execute("SELECT value FROM swing_metric WHERE swing_id = ? AND name = ?",
                     (sid, name)).fetchone() if name else None
    if m is None or row is None:
        wrong.append("%s %d %s '%s' (no stored value or unreadable)" % (units, sid, label, text))
        continue
    unit = ":" if m.group(3) == ": 1" else m.group(3)
    factor = convert.get((units, unit))
    if factor is None:
        wrong.append("%s %d %s in %s" % (units, sid, label, unit))
        continue
    seen_units.add((units, unit))
    decimals = len(m.group(2) or "")
    want = row[0] * factor
    if abs(float(m.group(1)) - want) > 0.5 * 10 ** -decimals + 1e-9:
        wrong.append("%s %d %s shows %s, stored %.4f" % (units, sid, label, text, want))
check(len(numbers) >= 11 * (n_db + 1), "the sheet listed its figures (%d)" % len(numbers))
check(not wrong, "every figure is the stored metric, rounded as shown%s" % (
    "" if not wrong else ": " + "; ".join(wrong[:4])))
check({("imperial", "mph"), ("imperial", "in"), ("metric", "m/s"), ("metric", "cm")} <= seen_units,
      "metric and imperial figures both checked")

# ---- Scrubber marks ----
for i, sw in sorted(swings.items()):
    start, end = db.execute("SELECT span_start_s, span_end_s FROM swing WHERE id = ?",
                            (sw["id"],)).fetchone()
    check(abs(sw["dur"] - (end - start)) < 1 / 30, "swing %d: the scrubber spans the stored swing "
          "(%.3f s vs %.3f s)" % (sw["id"], sw["dur"], end - start))
    ev = dict(db.execute("SELECT name, t_s FROM swing_event WHERE swing_id = ?", (sw["id"],)))
    want = [ev[k] - start for k in ("address", "takeaway", "top", "impact", "finish") if k in ev]
    img = png(os.path.join(d, "timeline-%d.png" % i))
    w = sw["w"]
    y = int(sw["h"] * 0.34) - 2          # just above the band: only marks and the playhead
    lum = img[y, :, :3].min(axis=1) * img[y, :, 3]
    cols = np.nonzero(lum > 0.5)[0]
    groups, cur = [], []
    for x in cols:
        if cur and x > cur[-1] + 1:
            groups.append(cur)
            cur = []
        cur.append(x)
    if cur:
        groups.append(cur)
    xs = [float(np.average(g, weights=lum[g])) + 0.5 for g in groups]
    x_end = 14 + (w - 28)
    xs = [x for x in xs if abs(x - x_end) > 3]           # the playhead, parked at the end
    wx = [14 + (w - 28) * t / sw["dur"] for t in want]
    ok = len(xs) == len(wx) and all(abs(a - b) <= 2.0 for a, b in zip(sorted(xs), sorted(wx)))
    check(ok and len(wx) == 5, "swing %d: marks at the stored address, takeaway, top, impact, "
          "finish (drawn %s, stored %s)" % (sw["id"], ["%.1f" % x for x in xs],
                                            ["%.1f" % x for x in wx]))

# ---- Stance side, down the line ----
for i, sw in sorted(swings.items()):
    hand = db.execute("SELECT p.handedness FROM swing s JOIN session e ON e.id = s.session_id "
                      "JOIN player p ON p.id = e.player_id WHERE s.id = ?", (sw["id"],)).fetchone()[0]
    img = png(os.path.join(d, "dtl-%d.png" % i))[:, :, :3]
    h = img.shape[0]
    r, g, b = img[..., 0], img[..., 1], img[..., 2]
    lower = np.zeros(r.shape, bool)
    lower[h // 2:] = True
    # Foot marks: pale steel blue (ui/scene/arcwise-scene.c foot_rgb 0.55 0.70 0.82);
    # the target line: amber (red high, blue low).
    feet = lower & (b > 0.6) & (b - r > 0.15) & (g > 0.5)
    amber = lower & (r > 0.7) & (g > 0.45) & (b < 0.45) & (r - b > 0.35)
    fy, fx = np.nonzero(feet)
    rows = [y for y in set(fy.tolist()) if amber[y].any()]
    side = 0
    if len(fx) > 20 and rows:
        line_x = np.median([np.nonzero(amber[y])[0].mean() for y in rows])
        side = -1 if fx.mean() < line_x else 1
    want = -1 if hand == 1 else 1 if hand == 2 else 0
    check(want != 0 and side == want, "swing %d (%s-handed player): stance %s of the target line "
          "down the line" % (sw["id"], "right" if hand == 1 else "left",
                             {-1: "left", 1: "right", 0: "not found"}[side]))
    check(sw["handed"] == (1 if hand == 1 else -1), "swing %d: the scene's handedness matches "
          "the player's" % sw["id"])

# ---- Coach's marks ----
sid = int(report.get("marked", 0))
row = db.execute("SELECT rating, is_reference, notes FROM swing WHERE id = ?", (sid,)).fetchone()
tags = sorted(t for (t,) in db.execute("SELECT tag FROM swing_tag WHERE swing_id = ?", (sid,)))
check(row is not None and row[0] == 4 and row[1] == 1,
      "rating 4 and reference flag kept in the library (%s)" % (row,))
check(row is not None and row[2] == "Hands high at the top; keep the tempo.", "notes kept")
check(tags == ["grip", "takeaway"], "tags kept (%s)" % tags)
sys.exit(1 if failures else 0)
