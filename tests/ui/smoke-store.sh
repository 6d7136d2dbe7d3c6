#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later
# GUI smoke test on a stored library (run under tests/with-xvfb.sh): two simulated sessions, one
# right-handed and one left-handed player, imported with `arcwise library`; the workbench looks
# at every swing (ui/arcwise-smoke.c, ARCWISE_SMOKE_STORE) and check-smoke-store.py compares what
# it showed with the library file read by Python's own sqlite3.
# Usage: smoke-store.sh ARCWISE_EXE SCHEMA_DIR CHECK_SCRIPT
set -u
exe=$1; schemas=$2; check=$3
out=$(mktemp -d)
trap 'rm -rf "$out"' EXIT
export ARCWISE_LIBRARY="$out/lib.sqlite"
"$exe" simulate --seed 11 --level easy --swings 2 --out "$out/right" >/dev/null &&
"$exe" simulate --seed 12 --level normal --swings 2 --left-handed --out "$out/left" >/dev/null &&
"$exe" library create >/dev/null &&
"$exe" library add-player "Ines Varga" --hand right >/dev/null &&
"$exe" library add-player "Tomas Reyes" --hand left >/dev/null &&
"$exe" library import --quiet --player "Ines Varga" --date 2026-11-20 --place "Bay 3" \
  --club 6-iron "$out/right/imu.csv" "$out/right/depth.csv" >/dev/null &&
"$exe" library import --quiet --player "Tomas Reyes" --date 2026-11-21 --place "Bay 3" \
  --club 7-iron "$out/left/imu.csv" "$out/left/depth.csv" >/dev/null ||
  { echo "could not build the test library"; exit 1; }
mkdir "$out/shots"
GSETTINGS_SCHEMA_DIR=$schemas GSETTINGS_BACKEND=memory ARCWISE_SMOKE_DIR=$out/shots \
  ARCWISE_SMOKE_STORE=1 "$exe" --library "$ARCWISE_LIBRARY" ||
  { echo "workbench exited with $?"; exit 1; }
[ -f "$out/shots/report.txt" ] || { echo "no report written"; exit 1; }
"${ARCWISE_PYTHON:-/usr/bin/python3}" "$check" "$out/shots" "$ARCWISE_LIBRARY"
