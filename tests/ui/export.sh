#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later
# Workbench export test (run under tests/with-xvfb.sh): the window drives its own export
# actions on the demo library (ui/arcwise-export-test.c) and check-export.py judges the files.
# Usage: export.sh ARCWISE_EXE SCHEMA_DIR CHECK_SCRIPT
set -u
exe=$1; schemas=$2; check=$3
command -v ffprobe >/dev/null 2>&1 || { echo "skipped: ffprobe not installed"; exit 77; }
out=$(mktemp -d)
trap 'rm -rf "$out"' EXIT
GSETTINGS_SCHEMA_DIR=$schemas GSETTINGS_BACKEND=memory ARCWISE_EXPORT_TEST_DIR=$out \
  "$exe" --demo || { echo "workbench exited with $?"; exit 1; }
[ -f "$out/export-report.txt" ] || { echo "no report written"; exit 1; }
"${ARCWISE_PYTHON:-/usr/bin/python3}" "$check" "$out"
[ $? -eq 0 ] || exit 1

# Numbers and the report need a stored library: a simulated session imported into a fresh one
# (the invented player of the demo scenario).
lib="$out/lib"
mkdir "$lib"
export ARCWISE_LIBRARY="$lib/lib.sqlite"
"$exe" simulate --seed 11 --level easy --swings 2 --out "$lib/sim" >/dev/null &&
"$exe" library create >/dev/null &&
"$exe" library add-player "Ines Varga" --hand right >/dev/null &&
"$exe" library import --quiet --player "Ines Varga" --date 2026-11-20 --place "Bay 3" \
  --club 6-iron "$lib/sim/imu.csv" "$lib/sim/depth.csv" >/dev/null ||
  { echo "could not build the test library"; exit 1; }
"$exe" library list --json > "$lib/list.json" || exit 1
store=$(mktemp -d)
trap 'rm -rf "$out" "$store"' EXIT
GSETTINGS_SCHEMA_DIR=$schemas GSETTINGS_BACKEND=memory ARCWISE_EXPORT_TEST_DIR=$store \
  ARCWISE_EXPORT_TEST_STORE=1 "$exe" --library "$ARCWISE_LIBRARY" ||
  { echo "workbench exited with $?"; exit 1; }
[ -f "$store/export-report.txt" ] || { echo "no store report written"; exit 1; }
"${ARCWISE_PYTHON:-/usr/bin/python3}" "$check" --store "$store" "$lib/list.json"
