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
  "$exe" analyze --imu "$tmp/$d/imu.csv" --depth "$tmp/$d/depth.csv" --club driver --json \
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
need(len(doc["swings"]) == doc["n_swings"] >= 1, "swings[]")
need(doc["swings"][0]["events"] == doc["events"], "first swing also at top level")
need("notes" in doc["quality"] and "sync_confidence" in doc["quality"], "quality")
sys.exit(0 if ok else 1)
PY
done

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
