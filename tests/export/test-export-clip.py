#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later
# Decodes the clips written by test-export-clip with FFmpeg's ffprobe and ffmpeg (Debian's
# ffmpeg package, an implementation independent of our encoder glue) and checks codec,
# pixel format, frame count, duration and the pixels of one frame.
import json, os, shutil, subprocess, sys, tempfile

exe = sys.argv[1]
if not shutil.which("ffprobe") or not shutil.which("ffmpeg"):
    print("skipped: ffprobe/ffmpeg missing"); sys.exit(77)
out = tempfile.mkdtemp(prefix="aw-clip-")
fails = []
def check(cond, what):
    if not cond:
        fails.append(what); print("FAIL:", what)
try:
    r = subprocess.run([exe, out])
    check(r.returncode == 0, "test-export-clip exit %d" % r.returncode)
    left = sorted(f for f in os.listdir(out) if f not in ("bare.mp4", "overlay.mp4"))
    check(left == [], "temporary files left: %s" % left)
    for name, w, h in (("bare.mp4", 320, 240), ("overlay.mp4", 1280, 720)):
        p = os.path.join(out, name)
        info = json.loads(subprocess.run(
            ["ffprobe", "-v", "error", "-count_frames", "-show_streams", "-show_format",
             "-of", "json", p], capture_output=True, text=True, check=True).stdout)
        v = info["streams"][0]
        check(v["codec_name"] == "h264", "%s codec %s" % (name, v["codec_name"]))
        check(v["pix_fmt"] == "yuv420p", "%s pix_fmt %s" % (name, v["pix_fmt"]))
        check((v["width"], v["height"]) == (w, h), "%s size" % name)
        check(v.get("profile") in ("High", "Constrained Baseline", "Main"), "%s profile %s" % (name, v.get("profile")))
        check(int(v["nb_read_frames"]) == 61, "%s frames %s" % (name, v["nb_read_frames"]))
        # 61 frames at 30 frames/s last 61/30 s.
        check(abs(float(v["duration"]) - 61 / 30) < 1e-3, "%s duration %s" % (name, v["duration"]))
        check(v["r_frame_rate"] == "30/1", "%s rate %s" % (name, v["r_frame_rate"]))
    # Frame 10 of the bare clip: swing time 10 / (30 * 2) s, sample k = round(100 t).
    k = round(100 * 10 / 60)
    want_bg = (40 + (k * 5) % 200, 128, 220 - (k * 3) % 200)
    raw = subprocess.run(
        ["ffmpeg", "-v", "error", "-i", os.path.join(out, "bare.mp4"), "-vf",
         r"select=eq(n\,10)", "-frames:v", "1", "-f", "rawvideo", "-pix_fmt", "rgb24", "-"],
        capture_output=True, check=True).stdout
    check(len(raw) == 320 * 240 * 3, "raw frame size %d" % len(raw))
    def px(x, y):
        i = 3 * (y * 320 + x)
        return tuple(raw[i:i + 3])
    # Lossy coding and 4:2:0 chroma: flat areas come back within a few levels (tolerance ours).
    for (x, y), want in (((20, 200), want_bg), ((120, 90), (250, 250, 20))):
        got = px(x, y)
        check(all(abs(a - b) <= 10 for a, b in zip(got, want)),
              "frame 10 pixel (%d,%d) = %s, expected %s" % (x, y, got, want))
finally:
    shutil.rmtree(out, ignore_errors=True)
sys.exit(1 if fails else 0)
