#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later
# `arcwise simulate`: same seed gives byte-identical files; usage errors exit 2 and write nothing.
set -u
exe=${ARCWISE_EXE:?}
dir=$(mktemp -d)
trap 'rm -rf "$dir"' EXIT
fail=0
"$exe" simulate --seed 42 --level normal --swings 2 --view down-the-line --out "$dir/a" >/dev/null || fail=1
"$exe" simulate --seed 42 --level normal --swings 2 --view down-the-line --out "$dir/b" >/dev/null || fail=1
for f in imu.csv depth.csv truth.csv events.csv phases.csv activities.csv occlusions.csv frames.csv sim.txt; do
  [ -s "$dir/a/$f" ] || { echo "missing $f"; fail=1; }
  cmp -s "$dir/a/$f" "$dir/b/$f" || { echo "$f differs for the same seed"; fail=1; }
done
grep -q '^level: normal$' "$dir/a/sim.txt" || { echo "sim.txt lacks the level"; fail=1; }
"$exe" simulate --seed 43 --level normal --swings 2 --view down-the-line --out "$dir/c" >/dev/null || fail=1
cmp -s "$dir/a/imu.csv" "$dir/c/imu.csv" && { echo "different seeds gave the same IMU file"; fail=1; }
for bad in "--seed 1 --level medium --out $dir/x" "--seed -3 --level easy --out $dir/x" \
           "--level easy --out $dir/x" "--seed 1 --level easy --swings 0 --out $dir/x" \
           "--seed 1 --level easy --imu-rate 5 --out $dir/x"; do
  # shellcheck disable=SC2086
  "$exe" simulate $bad >/dev/null 2>&1
  rc=$?
  [ "$rc" -eq 2 ] || { echo "'simulate $bad' exited $rc, expected 2"; fail=1; }
done
[ -e "$dir/x" ] && { echo "a rejected command wrote files"; fail=1; }
"$exe" simulate --help | grep -q 'Usage: arcwise simulate' || fail=1
# A scenario with a bad line is refused with its place, and leaves no manifest behind.
printf 'player,p1,A B,right,beginner,20,0.6\nsession,s1,p1,2026-01-01,putter,face-on,easy,1,2,tempo=3\n' >"$dir/bad.csv"
msg=$("$exe" simulate --scenario "$dir/bad.csv" --out "$dir/scn" 2>&1 >/dev/null)
rc=$?
[ "$rc" -eq 1 ] || { echo "bad scenario exited $rc, expected 1"; fail=1; }
echo "$msg" | grep -q "bad.csv:2:26: unknown club 'putter'" || { echo "unexpected message: $msg"; fail=1; }
[ -e "$dir/scn/manifest.csv" ] && { echo "a refused scenario left a manifest"; fail=1; }
printf 'player,p1,A B,right,beginner,20,0.6\nsession,s1,p1,2026-01-01,wedge,face-on,easy,1,2,tempo=3 var=0.5\n' >"$dir/good.csv"
"$exe" simulate --scenario "$dir/good.csv" --out "$dir/scn" >/dev/null || { echo "good scenario failed"; fail=1; }
grep -q '^session,s1,p1,2026-01-01,wedge,' "$dir/scn/manifest.csv" || { echo "manifest lacks the session"; fail=1; }
[ "$(grep -c '^swing,s1,.*,shot,' "$dir/scn/manifest.csv")" -eq 2 ] || { echo "manifest lacks the shots"; fail=1; }
exit $fail
