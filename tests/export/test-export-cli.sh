#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later
# `arcwise export` end to end on a simulated session imported into a fresh library: numbers as
# CSV and JSON (parsed back by Python's csv and json modules), the PDF report (checked with
# poppler's pdfinfo and pdftotext, rendered with pdftoppm), C3D read back by our reader, and the
# rule that nothing is replaced without --force.
set -u
exe="$ARCWISE_EXE"
py="${ARCWISE_PYTHON:-/usr/bin/python3}"
for t in pdfinfo pdftotext pdftoppm; do
  command -v $t >/dev/null || { echo "skipped: $t (poppler-utils) missing"; exit 77; }
done
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
export ARCWISE_LIBRARY="$tmp/lib.sqlite"
unset DISPLAY WAYLAND_DISPLAY
fail=0
die() { echo "FAIL: $*"; fail=1; }
"$exe" simulate --seed 11 --level easy --swings 3 --out "$tmp/sim" >/dev/null || die simulate
"$exe" library create >/dev/null || die create
"$exe" library add-player "Tomas Lindqvist" --hand right >/dev/null || die add-player
"$exe" library import --quiet --player "Tomas Lindqvist" --date 2026-11-20 --place "Bay 3" \
  --club 6-iron "$tmp/sim/imu.csv" "$tmp/sim/depth.csv" >/dev/null || die import
n=$("$exe" library list --json | "$py" -c 'import json,sys; print(len(json.load(sys.stdin)))' 2>/dev/null)
[ "${n:-0}" -ge 1 ] || die "no swings imported ($n)"

"$exe" export numbers --session 1 -o "$tmp/s.csv" >/dev/null || die "numbers csv"
"$exe" export numbers --player "Tomas Lindqvist" -o "$tmp/p.json" >/dev/null || die "numbers json"
"$py" - "$tmp/s.csv" "$tmp/p.json" "$n" <<'PY' || fail=1
import csv, json, sys
rows = list(csv.DictReader(open(sys.argv[1], newline="")))
doc = json.load(open(sys.argv[2]))
n = int(sys.argv[3])
ok = len(rows) == n and len(doc["swings"]) == n and doc["scope"] == "player"
ok = ok and all(r["player"] == "Tomas Lindqvist" and r["club"] == "6-iron" for r in rows)
for r, s in zip(rows, doc["swings"]):
    ok = ok and int(r["swing_id"]) == s["swing_id"]
    t = s["analysis"]["metrics"]["tempo_ratio"]
    ok = ok and ((t is None and r["tempo_ratio"] == "") or float(r["tempo_ratio"]) == t)
    ok = ok and len(s["path"]["t_s"]) == len(s["path"]["pos_cam_m"]) > 10
if not ok:
    print("FAIL: numbers do not parse back consistently"); sys.exit(1)
PY

"$exe" export report --session 1 -o "$tmp/r.pdf" >/dev/null 2>"$tmp/err" || { cat "$tmp/err"; die report; }
pdfinfo "$tmp/r.pdf" >"$tmp/info" 2>&1 || die "pdfinfo"
grep -q "^Title: *Session report: Tomas Lindqvist, 2026-11-20" "$tmp/info" || die "PDF title"
pages=$(awk '/^Pages:/{print $2}' "$tmp/info")
[ "${pages:-0}" -ge 2 ] || die "PDF pages $pages"
# A4 is 595.276 x 841.89 pt (ISO 216).
grep -Eq '^Page size: *595\.2[0-9]* x 841\.8[0-9]* pts \(A4\)' "$tmp/info" || die "A4 page size: $(grep 'Page size' "$tmp/info")"
pdftotext "$tmp/r.pdf" "$tmp/r.txt" || die pdftotext
for w in "Session report" "Tomas Lindqvist" "2026-11-20" "Bay 3" "Tempo" "Consistency" \
         "Hand speed over time" "Trust per phase" "Trends across sessions" "mean" "SD" \
         "hurt people" "not a medical" "qualified instructor"; do
  grep -q "$w" "$tmp/r.txt" || die "report text lacks '$w'"
done
pdftoppm -r 40 -png "$tmp/r.pdf" "$tmp/page" || die pdftoppm
[ -s "$tmp/page-1.png" ] && [ -s "$tmp/page-2.png" ] || die "rendered pages"

"$exe" export c3d --swing 1 -o "$tmp/s1.c3d" >/dev/null || die c3d
"$exe" c3d "$tmp/s1.c3d" --marker HAND >"$tmp/c3d.txt" || die "c3d read back"
grep -q "units: mm" "$tmp/c3d.txt" && grep -q "^points: 1" "$tmp/c3d.txt" || die "c3d content"
"$exe" export c3d --swing 1 --int16 --frame cam --units m -o "$tmp/s1i.c3d" >/dev/null || die "c3d int16"
grep -q "int16" <<EOF2 || die "c3d int16 read back"
$("$exe" c3d "$tmp/s1i.c3d")
EOF2

# Never replaced without --force; the old file stays byte for byte.
cp "$tmp/s.csv" "$tmp/before"
"$exe" export numbers --session 1 --format json -o "$tmp/s.csv" >/dev/null 2>"$tmp/err"
[ $? -eq 1 ] || die "replaced without --force"
grep -q "already exists" "$tmp/err" || die "message: $(cat "$tmp/err")"
cmp -s "$tmp/s.csv" "$tmp/before" || die "existing file changed"
"$exe" export numbers --session 1 -o "$tmp/s.csv" --force >/dev/null || die "--force"
"$exe" export numbers --swing 999 -o "$tmp/none.csv" >/dev/null 2>&1 && die "unknown swing accepted"
[ ! -e "$tmp/none.csv" ] || die "file left for an unknown swing"
"$exe" export numbers -o "$tmp/x.csv" >/dev/null 2>&1; [ $? -eq 2 ] || die "usage error"
left=$(ls -a "$tmp" | grep -E '\.(part|tmp)-' || true)
[ -z "$left" ] || die "temporary files left: $left"
exit $fail
