#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later
# Clips and stills through the scene renderer, offscreen with no display: a simulated swing
# imported into a fresh library, exported as MP4 and PNG, and decoded back with FFmpeg's
# ffprobe/ffmpeg (codec, pixel format, frame count, duration, size, non-blank pixels).
# Skips (77) in builds without the 3-D renderer.
set -u
exe="$ARCWISE_EXE"
py="${ARCWISE_PYTHON:-/usr/bin/python3}"
command -v ffprobe >/dev/null && command -v ffmpeg >/dev/null || { echo "skipped: no ffmpeg"; exit 77; }
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
export ARCWISE_LIBRARY="$tmp/lib.sqlite"
unset DISPLAY WAYLAND_DISPLAY
fail=0
die() { echo "FAIL: $*"; fail=1; }
"$exe" simulate --seed 5 --level easy --out "$tmp/sim" >/dev/null || die simulate
"$exe" library create >/dev/null && "$exe" library add-player "Ana Ruiz" >/dev/null &&
  "$exe" library import --quiet --player "Ana Ruiz" --date 2026-11-21 "$tmp/sim/imu.csv" \
    "$tmp/sim/depth.csv" >/dev/null || die import
"$exe" export still --swing 1 --width 640 --height 360 -o "$tmp/s.png" >"$tmp/out" 2>"$tmp/err"
if grep -q "no 3-D scene renderer" "$tmp/err"; then
  echo "skipped: this build has no scene renderer"; exit 77
fi
[ -s "$tmp/s.png" ] || { cat "$tmp/err"; die "still"; }
"$exe" export clip --swing 1 --fps 10 --view down-the-line -o "$tmp/c.mp4" >"$tmp/out" 2>"$tmp/err" ||
  { cat "$tmp/err"; die clip; }
frames=$(sed -n 's/^.*: \([0-9]*\) frames.*$/\1/p' "$tmp/out")
"$py" - "$tmp/c.mp4" "$tmp/s.png" "${frames:-0}" <<'PY' || fail=1
import json, subprocess, sys, zlib, struct
mp4, png, frames = sys.argv[1], sys.argv[2], int(sys.argv[3])
ok = True
info = json.loads(subprocess.run(["ffprobe", "-v", "error", "-count_frames", "-show_streams",
                                  "-of", "json", mp4], capture_output=True, text=True).stdout)
v = info["streams"][0]
for cond, what in ((v["codec_name"] == "h264", "codec"), (v["pix_fmt"] == "yuv420p", "pix_fmt"),
                   ((v["width"], v["height"]) == (1280, 720), "720p"),
                   (frames > 10 and int(v["nb_read_frames"]) == frames, "frame count %s/%d" % (v["nb_read_frames"], frames)),
                   (abs(float(v["duration"]) - frames / 10) < 1e-3, "duration %s" % v["duration"])):
    if not cond:
        print("FAIL: clip", what); ok = False
raw = subprocess.run(["ffmpeg", "-v", "error", "-i", mp4, "-vf", r"select=eq(n\,%d)" % (frames // 2),
                      "-frames:v", "1", "-f", "rawvideo", "-pix_fmt", "rgb24", "-"],
                     capture_output=True).stdout
if len(raw) != 1280 * 720 * 3:
    print("FAIL: decoded frame size", len(raw)); ok = False
else:
    # The scene is not blank: many distinct colours, and the overlay text is near white.
    px = {raw[i:i + 3] for i in range(0, len(raw), 3 * 97)}
    if len(px) < 50:
        print("FAIL: frame looks blank (%d colours)" % len(px)); ok = False
    bright = sum(1 for i in range(0, len(raw), 3) if min(raw[i:i + 3]) > 235)
    if bright < 200:
        print("FAIL: no overlay text in the frame (%d white pixels)" % bright); ok = False
# PNG header: signature and IHDR size (ISO/IEC 15948).
data = open(png, "rb").read()
if data[:8] != b"\x89PNG\r\n\x1a\n" or struct.unpack(">II", data[16:24]) != (640, 360):
    print("FAIL: PNG header/size"); ok = False
sys.exit(0 if ok else 1)
PY
"$exe" export still --swing 1 -o "$tmp/s.png" >/dev/null 2>&1 && die "still replaced without --force"
exit $fail
