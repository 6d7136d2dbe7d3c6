#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later
# `arcwise inspect`: text and --json output on the hand-made files, exit codes and the one-line
# error on stderr, and (when ../shared is present) the two BROAD trials: 52,556 and 53,612
# samples at 2000/7 = 285.714 Hz (D. Laidig et al., "BROAD", Data 6(7):72, 2021, CC BY 4.0;
# counts from data/broad/README.md), with numpy (Debian python3-numpy) as the reference for the
# sample count, median interval and gaps.
set -u
exe="$ARCWISE_EXE"
py="${ARCWISE_PYTHON:-/usr/bin/python3}"
data="$ARCWISE_CAPTURE_DATA"
unset DISPLAY WAYLAND_DISPLAY
fail=0
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
no() { echo "FAIL: $*"; fail=1; }

"$exe" inspect --help >"$tmp/help" 2>&1 || no "--help exit code"
grep -q '^Usage: arcwise inspect' "$tmp/help" || no "--help has no usage line"
"$exe" inspect >/dev/null 2>&1; [ $? -eq 2 ] || no "no file: exit code 2 expected"
"$exe" inspect --frobnicate x >/dev/null 2>&1; [ $? -eq 2 ] || no "unknown option: exit 2 expected"

# a rejected file: exit 1, exactly one line on stderr with file:line:column: reason
"$exe" inspect "$data/bad/imu-nan.csv" >"$tmp/out" 2>"$tmp/err"
[ $? -eq 1 ] || no "bad file: exit code 1 expected"
[ "$(wc -l <"$tmp/err")" -eq 1 ] || no "bad file: one line on stderr expected"
grep -qx "arcwise inspect: $data/bad/imu-nan.csv:3:14: gx: 'nan' is not a finite number" "$tmp/err" \
  || { no "bad file message"; cat "$tmp/err"; }
"$exe" inspect "$tmp/does-not-exist.csv" >/dev/null 2>"$tmp/err"; [ $? -eq 1 ] || no "missing file: exit 1"
"$exe" inspect "$data/good/imu-basic.csv" "$data/good/depth-basic.csv" >"$tmp/out" 2>"$tmp/err" \
  || no "good files: exit 0 expected"
[ -s "$tmp/err" ] && no "good files: stderr not empty"
grep -q '^  stream      IMU (t,ax,ay,az,gx,gy,gz)$' "$tmp/out" || no "text: IMU kind line"
grep -q '^  stream      depth keypoints (t,x,y,z,conf)$' "$tmp/out" || no "text: depth kind line"
grep -q '^  samples     4$' "$tmp/out" || no "text: IMU samples"
grep -q '^  rate        100 Hz ' "$tmp/out" || no "text: IMU rate"
grep -q '^  missing     2 frames without a detection in 1 run$' "$tmp/out" || no "text: missing frames"
grep -q '^  full scale  accel +-16 g (declared); gyro +-2000 deg/s (declared)$' "$tmp/out" \
  || no "text: full scale"

# --json on good and bad files together: valid JSON, the values of the hand-made files
"$exe" inspect --json "$data/good/imu-units-crlf.csv" "$data/good/depth-basic.csv" \
  "$data/bad/depth-z-far.csv" >"$tmp/json" 2>/dev/null
[ $? -eq 1 ] || no "json with a bad file: exit 1"
"$py" - "$tmp/json" <<'PY' || fail=1
import json, sys
d = json.load(open(sys.argv[1]))
f = d["files"]
ok = True
def check(cond, what):
    global ok
    if not cond:
        print("FAIL: json:", what); ok = False
check(len(f) == 3, "three entries")
imu, dep, bad = f
check(imu["kind"] == "imu" and imu["samples"] == 4, "imu kind and samples")
check(abs(imu["rate_hz"] - 200.0) < 1e-9, "imu rate 200 Hz (5 ms)")
check(imu["units"] == "t=ms accel=g gyro=deg/s", "imu units")
check(imu["metadata"]["device"] == "bench watch B", "imu device")
check(imu["saturation"]["samples"] == 0 and imu["gaps"]["count"] == 0, "imu clean")
check(dep["kind"] == "depth" and dep["samples"] == 5 and dep["missing_frames"]["count"] == 2,
      "depth samples and missing frames")
check(dep["missing_frames"]["list"][0]["t_start_s"] == 10.04, "missing frame time")
check(dep["metadata"]["wrist"] == "right", "depth wrist")
check(bad["error"]["line"] == 3 and bad["error"]["column"] == 14, "error position")
check(bad["error"]["reason"] == "z: 25 m is beyond 20 m: not a possible wrist distance", "reason")
sys.exit(0 if ok else 1)
PY

broad="$ARCWISE_SHARED_DIR/data/broad"
if [ ! -d "$broad" ]; then
  echo "skipped: $broad is absent"
  [ $fail -eq 0 ] && exit 77
  exit $fail
fi
a="$broad/15_undisturbed_fast_translation_A/imu.csv"
b="$broad/21_undisturbed_fast_combined/imu.csv"
"$exe" inspect --json "$a" "$b" >"$tmp/broad.json" || no "inspect on BROAD failed"
"$exe" inspect "$a" >"$tmp/broad.txt" || no "inspect text on BROAD failed"
grep -q '^  samples     52556$' "$tmp/broad.txt" || no "BROAD trial 15 text sample count"
grep -q '^  rate        285.714 Hz ' "$tmp/broad.txt" || no "BROAD trial 15 text rate"
# BROAD's optical track (t,x,y,z,qw,qx,qy,qz) is not a depth keypoint stream: no conf column
o="$broad/15_undisturbed_fast_translation_A/optical.csv"
"$exe" inspect "$o" >/dev/null 2>"$tmp/err"; [ $? -eq 1 ] || no "optical.csv: exit 1 expected"
grep -qx "arcwise inspect: $o:1:1: missing required column 'conf' (a depth stream needs t,x,y,z,conf)" \
  "$tmp/err" || { no "optical.csv message"; cat "$tmp/err"; }
"$py" - "$tmp/broad.json" "$a" "$b" <<'PY' || fail=1
import json, sys
try:
    import numpy as np
except ImportError:
    print("numpy missing"); sys.exit(77)
d = json.load(open(sys.argv[1]))["files"]
ok = True
for entry, path, want_n in zip(d, sys.argv[2:], (52556, 53612)):
    t = np.loadtxt(path, delimiter=",", skiprows=1, usecols=0)
    dt = np.diff(t)
    med = float(np.median(dt))
    checks = [
        (entry["samples"] == want_n, f"samples {entry['samples']} != {want_n} (dataset README)"),
        (entry["samples"] == len(t), "samples != numpy row count"),
        (abs(entry["rate_hz"] - 2000 / 7) < 1e-3, f"rate {entry['rate_hz']} != 2000/7 Hz (BROAD)"),
        (abs(entry["interval_s"]["median"] - med) < 1e-12, "median interval != numpy median"),
        (entry["gaps"]["count"] == int(np.sum(dt > 1.5 * med)), "gap count != numpy"),
        (abs(entry["duration_s"] - (t[-1] - t[0])) < 1e-9, "duration != numpy"),
        (entry["kind"] == "imu", "kind"),
    ]
    for cond, what in checks:
        if not cond:
            print("FAIL:", path, what); ok = False
sys.exit(0 if ok else 1)
PY
exit $fail
