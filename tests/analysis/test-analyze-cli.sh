#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later
# `arcwise analyze` and `arcwise compare` end to end on simulated captures: the JSON fields the
# issue names exist and agree with the simulator's truth (events.csv), bad input gets a clear
# message and no numbers. JSON is parsed by Python's json module (/usr/bin/python3).
set -u
exe=${ARCWISE_EXE:?}
py=${ARCWISE_PYTHON:-/usr/bin/python3}
[ -x "$py" ] || { echo "skipped: no $py"; exit 77; }
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
fail=0
check() { # description, command...
  desc=$1; shift
  if ! "$@"; then echo "FAIL: $desc"; fail=1; fi
}

"$exe" simulate --seed 21 --level easy --out "$tmp/a" >/dev/null || { echo "FAIL: simulate"; exit 1; }
"$exe" simulate --seed 22 --level easy --left-handed --out "$tmp/b" >/dev/null || { echo "FAIL: simulate"; exit 1; }

for d in a b; do
  # The simulated club's length (events.csv, column club_length_m) is given on the command line
  # so that the club-head speed can be held against the simulator's.
  len=$("$py" -c '
import csv, sys
print([r for r in csv.DictReader(l for l in open(sys.argv[1]) if not l.startswith("#"))][0]["club_length_m"])
' "$tmp/$d/events.csv")
  "$exe" analyze --imu "$tmp/$d/imu.csv" --depth "$tmp/$d/depth.csv" --club-length "$len" --json \
    >"$tmp/$d.json" 2>"$tmp/$d.err"
  check "analyze $d exits 0 ($(cat "$tmp/$d.err"))" test $? -eq 0
  # Truth from the simulator's events.csv; tolerances are generous end-to-end bounds (fusion
  # plus analysis), the accuracy figures live in `arcwise bench analysis`.
  check "analyze $d JSON against truth" "$py" - "$tmp/$d.json" "$tmp/$d/events.csv" "$tmp/$d/sim.txt" <<'PY'
import csv, json, sys
doc = json.load(open(sys.argv[1]))
rows = [r for r in csv.DictReader(l for l in open(sys.argv[2]) if not l.startswith("#"))]
truth = rows[0]
sim = dict(l.strip().split(": ", 1) for l in open(sys.argv[3]) if ": " in l and not l.startswith("#"))
ok = True
def need(cond, what):
    global ok
    if not cond:
        print("check failed:", what); ok = False
for k in ("takeaway", "top", "impact", "finish"):
    need(isinstance(doc["events"][k], float), "events." + k)
for k in ("tempo_ratio", "hand_speed_impact_mps", "peak_hand_speed_mps", "club_speed_impact_mps"):
    need(k in doc["metrics"], "metrics." + k)
need(isinstance(doc["sync"]["offset_s"], float), "sync.offset_s")
need(abs(doc["sync"]["offset_s"] - float(sim["clock_offset_s"])) < 0.02, "sync offset vs truth")
need([p["name"] for p in doc["phases"]] == ["address", "backswing", "downswing", "follow-through", "finish"], "phase names")
need(all(p["dominance"] in ("camera", "imu", "shared") for p in doc["phases"]), "dominance known")
need(all(p["start"] <= p["end"] for p in doc["phases"]), "phase order")
ev = doc["events"]
need(ev["address"] <= ev["takeaway"] < ev["top"] < ev["impact"] < ev["finish"], "event order")
need(abs(ev["top"] - float(truth["t_top"])) < 0.05, "top vs truth")
need(abs(ev["impact"] - float(truth["t_impact"])) < 0.05, "impact vs truth")
need(abs(doc["metrics"]["tempo_ratio"] / float(truth["tempo"]) - 1) < 0.15, "tempo vs truth")
need(doc["handed"] == truth["handed"], "handedness from the IMU file's wrist")
# Every named value against the simulator's truth. Tolerances are generous end-to-end bounds
# for one easy swing (the floors on many swings are checked by `arcwise bench analysis`).
m = doc["metrics"]
def near(key, got, want, tol, rel=False):
    err = abs(got / want - 1) if rel else abs(got - want)
    need(err <= tol, "%s %.4g vs truth %.4g (tolerance %g%s)" % (key, got, want, tol, " relative" if rel else ""))
near("events.takeaway", ev["takeaway"], float(truth["t_takeaway"]), 0.05)
# The simulator's t_finish is where its follow-through motion profile ends; the engine's finish
# is where the hands come to rest, which the decaying motion reaches a little earlier.
near("events.finish", ev["finish"], float(truth["t_finish"]), 0.15)
near("metrics.backswing_s", m["backswing_s"], float(truth["backswing_s"]), 0.05)
near("metrics.downswing_s", m["downswing_s"], float(truth["downswing_s"]), 0.05)
near("metrics.hand_speed_impact_mps", m["hand_speed_impact_mps"], float(truth["hand_speed_impact_m_s"]), 0.10, True)
need(m["peak_hand_speed_mps"] >= m["hand_speed_impact_mps"], "peak hand speed >= hand speed at impact")
need(doc["club"]["length_m"] == float(truth["club_length_m"]), "club length as given")
near("metrics.club_speed_impact_mps", m["club_speed_impact_mps"], float(truth["club_speed_impact_m_s"]), 0.15, True)
near("metrics.plane_backswing_deg", m["plane_backswing_deg"], float(truth["backswing_plane_deg"]), 4.0)
near("metrics.plane_downswing_deg", m["plane_downswing_deg"], float(truth["downswing_plane_deg"]), 4.0)
need(abs(m["plane_difference_deg"] - (m["plane_downswing_deg"] - m["plane_backswing_deg"])) < 1e-9, "plane difference")
near("metrics.peak_forearm_rate_radps", m["peak_forearm_rate_radps"], float(truth["peak_gyro_deg_s"]) * 3.141592653589793 / 180, 0.05, True)
need(doc["impact_estimated"] is False and doc["practice"] is False, "a struck shot: impact measured, not practice")
q = doc["quality"]
need(0 <= q["camera_occluded_share"] <= 1 and 0 <= q["camera_rejected_share"] <= 1, "quality shares")
need(q["imu_saturated_samples"] >= 0 and q["position_sigma_mean_m"] > 0, "quality counts")
need(len(doc["swings"]) == doc["n_swings"] >= 1, "swings[]")
need(doc["swings"][0]["events"] == doc["events"], "first swing also at top level")
need("notes" in doc["quality"] and "sync_confidence" in doc["quality"], "quality")
sys.exit(0 if ok else 1)
PY
done

# --club picks a default length within the Rules of Golf limit (48 in = 1.2192 m).
"$exe" analyze --imu "$tmp/a/imu.csv" --depth "$tmp/a/depth.csv" --club driver --json >"$tmp/drv.json" 2>/dev/null
check "--club driver exits 0" test $? -eq 0
check "--club driver: type and length" "$py" -c '
import json, sys
c = json.load(open(sys.argv[1]))["club"]
assert c["type"] == "driver" and 0.9 < c["length_m"] <= 1.2192, c
' "$tmp/drv.json"

# Readable table.
"$exe" analyze --imu "$tmp/a/imu.csv" --depth "$tmp/a/depth.csv" >"$tmp/a.txt" 2>&1
check "table exits 0" test $? -eq 0
check "table names the tempo" grep -q "Tempo" "$tmp/a.txt"
check "table carries the caution" grep -q "not a medical" "$tmp/a.txt"

# Compare: a folder with itself gives zero deviation; two different swings give some.
"$exe" compare "$tmp/a" "$tmp/a" --json >"$tmp/c.json" 2>"$tmp/c.err"
check "compare self exits 0 ($(cat "$tmp/c.err"))" test $? -eq 0
check "compare self: zero deviation" "$py" -c '
import json, sys
d = json.load(open(sys.argv[1]))
assert d["path_deviation_rms_cm"] < 1e-6, d["path_deviation_rms_cm"]
assert len(d["phases"]) == 5 and "metric_diff" in d
' "$tmp/c.json"
"$exe" compare "$tmp/a/imu.csv" "$tmp/a/depth.csv" "$tmp/b" --json >"$tmp/d.json" 2>"$tmp/d.err"
check "compare pair vs folder exits 0 ($(cat "$tmp/d.err"))" test $? -eq 0
check "compare two swings: some deviation" "$py" -c '
import json, sys
d = json.load(open(sys.argv[1]))
assert d["path_deviation_rms_cm"] > 0.5, d["path_deviation_rms_cm"]
' "$tmp/d.json"

# Each swing as a pair of files gives what the same swings give as folders.
"$exe" compare "$tmp/a/imu.csv" "$tmp/a/depth.csv" "$tmp/b/imu.csv" "$tmp/b/depth.csv" --json \
  >"$tmp/e.json" 2>"$tmp/e.err"
check "compare pair vs pair exits 0 ($(cat "$tmp/e.err"))" test $? -eq 0
"$exe" compare "$tmp/a" "$tmp/b" --json >"$tmp/f.json" 2>"$tmp/f.err"
check "compare folder vs folder exits 0 ($(cat "$tmp/f.err"))" test $? -eq 0
check "compare: pairs and folders agree" "$py" -c '
import json, sys
e, f, d = (json.load(open(p)) for p in sys.argv[1:4])
assert e == f == d, "pair/pair, folder/folder and pair/folder differ"
' "$tmp/e.json" "$tmp/f.json" "$tmp/d.json"

# Bad input 0: streams that do not overlap (the camera's clock 100 s later).
mkdir "$tmp/apart"
cp "$tmp/a/imu.csv" "$tmp/apart/imu.csv"
"$py" - "$tmp/a/depth.csv" "$tmp/apart/depth.csv" <<'PY'
import sys
out = open(sys.argv[2], "w")
header = True
for line in open(sys.argv[1]):
    if line.startswith("#") or header:
        out.write(line)
        header = header and line.startswith("#")
        continue
    t, rest = line.split(",", 1)
    out.write("%.9f,%s" % (float(t) + 100.0, rest))
PY
"$exe" analyze --imu "$tmp/apart/imu.csv" --depth "$tmp/apart/depth.csv" --json >"$tmp/apart.out" 2>"$tmp/apart.err"
check "streams apart exit 1" test $? -eq 1
check "streams apart: message says overlap ($(cat "$tmp/apart.err"))" grep -q "overlap" "$tmp/apart.err"
check "streams apart print no numbers" test ! -s "$tmp/apart.out"
"$exe" compare "$tmp/apart" "$tmp/a" --json >"$tmp/apartc.out" 2>"$tmp/apartc.err"
check "compare with streams apart exits 1" test $? -eq 1
check "compare with streams apart prints no numbers" test ! -s "$tmp/apartc.out"

# Bad input 1: a recording that stops in the downswing (both files cut 60 ms before impact).
"$py" - "$tmp/a" "$tmp/cut" <<'PY'
import csv, os, sys
src, dst = sys.argv[1], sys.argv[2]
os.makedirs(dst)
ev = [r for r in csv.DictReader(l for l in open(src + "/events.csv") if not l.startswith("#"))][0]
sim = dict(l.strip().split(": ", 1) for l in open(src + "/sim.txt") if ": " in l and not l.startswith("#"))
cut_depth = float(ev["t_impact"]) - 0.06
off, drift = float(sim["clock_offset_s"]), float(sim["clock_drift"])
cut_imu = (cut_depth - off) / (1 + drift)
for name, cut in (("imu.csv", cut_imu), ("depth.csv", cut_depth)):
    out = open(dst + "/" + name, "w")
    header = True
    for line in open(src + "/" + name):
        if line.startswith("#") or header:
            out.write(line)
            header = header and line.startswith("#")
            continue
        if float(line.split(",")[0]) < cut:
            out.write(line)
PY
"$exe" analyze --imu "$tmp/cut/imu.csv" --depth "$tmp/cut/depth.csv" --json >"$tmp/cut.out" 2>"$tmp/cut.err"
check "cut recording exits 1" test $? -eq 1
check "cut recording says mid-swing ($(cat "$tmp/cut.err"))" grep -q "mid-swing" "$tmp/cut.err"
check "cut recording prints no numbers" test ! -s "$tmp/cut.out"

# Bad input 2: only the still set-up (both files cut 0.3 s after the start of address).
"$py" - "$tmp/a" "$tmp/still" <<'PY'
import csv, os, sys
src, dst = sys.argv[1], sys.argv[2]
os.makedirs(dst)
ev = [r for r in csv.DictReader(l for l in open(src + "/events.csv") if not l.startswith("#"))][0]
sim = dict(l.strip().split(": ", 1) for l in open(src + "/sim.txt") if ": " in l and not l.startswith("#"))
cut_depth = float(ev["t_takeaway"]) - 0.1
off, drift = float(sim["clock_offset_s"]), float(sim["clock_drift"])
cut_imu = (cut_depth - off) / (1 + drift)
for name, cut in (("imu.csv", cut_imu), ("depth.csv", cut_depth)):
    out = open(dst + "/" + name, "w")
    header = True
    for line in open(src + "/" + name):
        if line.startswith("#") or header:
            out.write(line)
            header = header and line.startswith("#")
            continue
        if float(line.split(",")[0]) < cut:
            out.write(line)
PY
"$exe" analyze --imu "$tmp/still/imu.csv" --depth "$tmp/still/depth.csv" >"$tmp/still.out" 2>"$tmp/still.err"
rc=$?
check "still-only recording exits 1 (rc $rc: $(cat "$tmp/still.err"))" test $rc -eq 1
check "still-only recording gives a clear message" test -s "$tmp/still.err"
check "still-only recording prints no numbers" test ! -s "$tmp/still.out"

# Usage errors.
"$exe" analyze --imu "$tmp/a/imu.csv" --depth "$tmp/a/depth.csv" --club-length 1.30 2>"$tmp/u.err"
check "club longer than 48 in is a usage error" test $? -eq 2
check "names the Rules of Golf" grep -q "Rules of Golf" "$tmp/u.err"
"$exe" analyze --imu "$tmp/a/imu.csv" --depth "$tmp/a/depth.csv" --club putter 2>/dev/null
check "unknown club is a usage error" test $? -eq 2
"$exe" analyze --imu "$tmp/a/imu.csv" 2>/dev/null
check "missing --depth is a usage error" test $? -eq 2
"$exe" analyze --imu "$tmp/nope.csv" --depth "$tmp/a/depth.csv" 2>"$tmp/n.err"
check "missing file fails" test $? -eq 1
check "missing file named" grep -q "nope.csv" "$tmp/n.err"
"$exe" analyze --help | grep -q "Caution"
check "help carries the caution" test $? -eq 0
exit $fail
