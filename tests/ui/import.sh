#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later
# Import by drop (run under tests/with-xvfb.sh): a library with two invented players, one with a
# swing already; capture files dropped on the workbench window (ui/arcwise-import-test.c emits
# the window's GtkDropTarget "drop" with a GdkFileList) into the second player's row. First a
# folder of six recordings, stopped midway with the Stop button: check-import.py finds every
# table of the library file exactly as before (read with Python's sqlite3). Then loose files
# and a folder brought in to the end: the new swings are the second player's, in the tree, and
# exactly the swings the simulator made (its events.csv, the ground truth of each recording).
# Usage: import.sh ARCWISE_EXE SCHEMA_DIR CHECK_SCRIPT
set -u
exe=$1; schemas=$2; check=$3
py=${ARCWISE_PYTHON:-/usr/bin/python3}
out=$(mktemp -d)
trap 'rm -rf "$out"' EXIT
lib="$out/lib.sqlite"
export ARCWISE_LIBRARY="$lib"
"$exe" library create >/dev/null &&
"$exe" library add-player "Ines Varga" --hand right >/dev/null &&
"$exe" library add-player "Tomas Reyes" --hand left >/dev/null &&
"$exe" simulate --seed 31 --level easy --out "$out/first" >/dev/null &&
"$exe" library import --quiet --player "Ines Varga" --date 2026-11-20 --place "Bay 3" \
  "$out/first/imu.csv" "$out/first/depth.csv" >/dev/null || { echo "could not build the test library"; exit 1; }
mkdir "$out/stopped" "$out/loose" "$out/folder" || exit 1
for k in 1 2 3 4 5 6; do
  "$exe" simulate --seed $((40 + k)) --level normal --swings 3 --left-handed \
    --out "$out/stopped/bay-$k" >/dev/null || exit 1
done
"$exe" simulate --seed 51 --level normal --swings 2 --left-handed --out "$out/s51" >/dev/null &&
"$exe" simulate --seed 52 --level easy --left-handed --out "$out/folder/take-2" >/dev/null || exit 1
cp "$out/s51/imu.csv" "$out/loose/take-1.imu.csv" && cp "$out/s51/depth.csv" "$out/loose/take-1.depth.csv" || exit 1
"$py" "$check" dump "$lib" "$out/before.sql" || exit 1
run() {
  mkdir "$out/$1" || exit 1
  GSETTINGS_SCHEMA_DIR=$schemas GSETTINGS_BACKEND=memory ARCWISE_IMPORT_TEST_DIR="$out/$1" \
    ARCWISE_IMPORT_TEST_MODE=$1 ARCWISE_IMPORT_TEST_PLAYER=2 ARCWISE_IMPORT_TEST_FILES="$2" \
    "$exe" --library "$lib" || { echo "workbench exited with $?"; exit 1; }
  [ -f "$out/$1/import-report.txt" ] || { echo "no report written ($1)"; exit 1; }
  [ -n "${ARCWISE_IMPORT_TEST_KEEP:-}" ] && cp -r "$out/$1" "$ARCWISE_IMPORT_TEST_KEEP"
}
run cancel "$out/stopped"
"$py" "$check" cancel "$lib" "$out/cancel" "$out/before.sql" || exit 1
run complete "$out/loose/take-1.imu.csv:$out/loose/take-1.depth.csv:$out/folder"
"$py" "$check" complete "$lib" "$out/complete" "$out/before.sql" \
  "$out/loose/take-1.depth.csv:$out/s51/events.csv" "$out/folder/take-2/depth.csv:$out/folder/take-2/events.csv"
