#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later
# Judges the files of the workbench export session (ui/arcwise-export-test.c).
# - PNG: width and height read from the IHDR chunk as the PNG specification lays it out
#   (W3C PNG, 2nd ed., section 11.2.2: 8-byte signature, then IHDR with 4-byte width/height).
# - MP4: ffprobe (FFmpeg's own reader, outside this project) reports codec h264, pixel format
#   yuv420p and the decoded frame count; the count expected is one frame every 1/30 s of the
#   swing's span, both ends included: floor(span * 30) + 1.
# - A cancelled clip leaves no file and no temporary file behind.
# - An existing file, answered "keep", is unchanged.
import json
import math
import os
import struct
import subprocess
import sys

fails = []


def check(cond, what):
    if not cond:
        fails.append(what)


def store_mode(d, list_json):
    # Numbers and report saved from the workbench with a stored library open: the CSV parsed
    # by Python's csv module (RFC 4180), the JSON by its json module (RFC 8259), the PDF read
    # by poppler's pdfinfo.
    import csv
    rep = dict(l.rstrip("\n").partition("=")[::2] for l in open(os.path.join(d, "export-report.txt")))
    print(open(os.path.join(d, "export-report.txt")).read())
    check("timeout_step" not in rep, "a step timed out: %s" % rep.get("timeout_step"))
    swings = json.load(open(list_json))
    for key in ("csv", "json", "report"):
        check(rep.get(key + "_ok") == "1", "%s: %s" % (key, rep.get(key + "_message")))
    p = os.path.join(d, "swing.json")
    if os.path.exists(p):
        doc = json.load(open(p))
        check(doc["scope"] == "swing" and len(doc["swings"]) == 1, "swing.json scope/count")
        sid = doc["swings"][0]["swing_id"]
        session = [s["session_id"] for s in swings if s["id"] == sid]
        check(len(session) == 1, "swing %s not in the library list" % sid)
        p2 = os.path.join(d, "session.csv")
        if os.path.exists(p2) and session:
            rows = list(csv.DictReader(open(p2, newline="")))
            want = [s["id"] for s in swings if s["session_id"] == session[0]]
            check(sorted(int(r["swing_id"]) for r in rows) == sorted(want),
                  "session.csv swings %s, expected %s" % ([r["swing_id"] for r in rows], want))
        else:
            fails.append("session.csv missing")
    else:
        fails.append("swing.json missing")
    pdf = os.path.join(d, "report.pdf")
    check(os.path.exists(pdf), "report.pdf missing")
    if os.path.exists(pdf):
        with open(pdf, "rb") as f:
            check(f.read(5) == b"%PDF-", "report.pdf has no PDF header")
        try:
            r = subprocess.run(["pdfinfo", pdf], capture_output=True, text=True)
            pages = [l.split()[-1] for l in r.stdout.splitlines() if l.startswith("Pages:")]
            check(r.returncode == 0 and pages and int(pages[0]) >= 1, "pdfinfo: " + r.stdout + r.stderr)
        except FileNotFoundError:
            print("note: pdfinfo (poppler-utils) missing; the PDF was checked by its header only")
    check(rep.get("cancelled_ok") == "0", "the cancelled report reported success")
    check(not os.path.exists(os.path.join(d, "cancelled.pdf")), "cancelled.pdf exists")
    left = [n for n in os.listdir(d) if ".part-" in n]
    check(not left, "temporary files left: %s" % left)
    if fails:
        print("FAIL:\n  " + "\n  ".join(fails))
        sys.exit(1)
    print("ok")
    sys.exit(0)


if sys.argv[1] == "--store":
    store_mode(sys.argv[2], sys.argv[3])
d = sys.argv[1]


rep = {}
with open(os.path.join(d, "export-report.txt")) as f:
    for line in f:
        k, _, v = line.rstrip("\n").partition("=")
        rep[k] = v
print(open(os.path.join(d, "export-report.txt")).read())
check("timeout_step" not in rep, "a step timed out: %s" % rep.get("timeout_step"))


def png_size(path):
    with open(path, "rb") as f:
        head = f.read(24)
    check(head[:8] == b"\x89PNG\r\n\x1a\n", "%s: no PNG signature" % path)
    check(head[12:16] == b"IHDR", "%s: first chunk is not IHDR" % path)
    return struct.unpack(">II", head[16:24])


for name, key in (("still.png", "still"), ("compare.png", "compare")):
    p = os.path.join(d, name)
    check(rep.get(key + "_ok") == "1", "%s export failed: %s" % (name, rep.get(key + "_message")))
    if os.path.exists(p):
        check(png_size(p) == (640, 360), "%s size %s, expected 640x360" % (name, png_size(p)))
    else:
        fails.append(name + " missing")
if os.path.exists(os.path.join(d, "still.png")) and os.path.exists(os.path.join(d, "compare.png")):
    # The overlaid swing adds its own path to the picture: the two files differ.
    check(open(os.path.join(d, "still.png"), "rb").read() !=
          open(os.path.join(d, "compare.png"), "rb").read(), "compare still equals the single one")

clip = os.path.join(d, "clip.mp4")
check(rep.get("clip_ok") == "1", "clip export failed: %s" % rep.get("clip_message"))
if os.path.exists(clip):
    r = subprocess.run(["ffprobe", "-v", "error", "-count_frames", "-show_streams",
                        "-select_streams", "v:0", "-of", "json", clip],
                       capture_output=True, text=True)
    check(r.returncode == 0, "ffprobe failed: " + r.stderr)
    if r.returncode == 0:
        v = json.loads(r.stdout)["streams"][0]
        check(v["codec_name"] == "h264", "codec " + v["codec_name"])
        check(v["pix_fmt"] == "yuv420p", "pixel format " + v["pix_fmt"])
        check((v["width"], v["height"]) == (1280, 720), "size %sx%s" % (v["width"], v["height"]))
        span = float(rep["swing_span_s"])
        want = math.floor(span * 30 + 1e-9) + 1
        check(int(v["nb_read_frames"]) == want,
              "frames %s, expected %d for %.3f s" % (v["nb_read_frames"], want, span))
else:
    fails.append("clip.mp4 missing")

check(rep.get("cancelled_ok") == "0", "the cancelled clip reported success")
check("cancelled" in rep.get("cancelled_message", "").lower(), "cancel message: %s" % rep.get("cancelled_message"))
check(float(rep.get("cancel_at_fraction", "1")) < 1.0, "cancel came after the end")
check(not os.path.exists(os.path.join(d, "cancelled.mp4")), "cancelled.mp4 exists")
left = [n for n in os.listdir(d) if ".part-" in n]
check(not left, "temporary files left: %s" % left)

check(rep.get("question_shown") == "1", "no question before replacing still.png")
check(rep.get("kept_unchanged") == "1", "still.png changed though the answer was keep")
check(rep.get("kept_ok") == "0", "the kept export reported success")
check(all(not l.endswith(" missing") for l in (k + "=" + v for k, v in rep.items())),
      "an action is missing")

if fails:
    print("FAIL:\n  " + "\n  ".join(fails))
    sys.exit(1)
print("ok")
