#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later
# Library browser test (run under tests/with-xvfb.sh): the workbench walks its library tree on a
# copy of the demo swing library (ui/arcwise-library-test.c) - opens a player and a session,
# filters by club, camera gaps and practice swings, searches for a tag, steps to the next
# swing - and check-library.py compares every row shown with the SQLite file read on its own.
# Usage: library.sh ARCWISE_EXE SCHEMA_DIR CHECK_SCRIPT DEMO_LIBRARY
set -u
exe=$1; schemas=$2; check=$3; demo=$4
py=${ARCWISE_PYTHON:-/usr/bin/python3}
[ -f "$demo" ] || { echo "skipped: no demo library at $demo"; exit 77; }
out=$(mktemp -d)
trap 'rm -rf "$out"' EXIT
lib="$out/lib.sqlite"
"$exe" library backup "$lib" --library "$demo" >/dev/null || { echo "cannot copy the demo library"; exit 1; }
# A coach's marks on a few swings, through the program's own command: a tag the search looks
# for, a rating and a reference mark.
ids=$("$py" -c "import sqlite3,sys; c=sqlite3.connect(sys.argv[1]); print(' '.join(str(r[0]) for r in c.execute('SELECT id FROM swing ORDER BY id LIMIT 3 OFFSET 7')))" "$lib") || exit 1
[ -n "$ids" ] || { echo "the demo library has too few swings"; exit 1; }
for id in $ids; do
  "$exe" library annotate "$id" --tags towel-drill,tempo --rating 4 --library "$lib" >/dev/null || exit 1
done
first=${ids%% *}
# A player just added, with nothing imported yet (invented name; sorts after the demo's).
"$exe" library add-player "Zara Quint" --library "$lib" >/dev/null || exit 1
"$exe" library annotate "$first" --reference yes --library "$lib" >/dev/null || exit 1
mkdir "$out/run"
GSETTINGS_SCHEMA_DIR=$schemas GSETTINGS_BACKEND=memory ARCWISE_LIBRARY_TEST_DIR="$out/run" \
  ARCWISE_LIBRARY_TEST_CLUB=7-iron ARCWISE_LIBRARY_TEST_SEARCH=Towel-Drill \
  "$exe" --library "$lib" || { echo "workbench exited with $?"; exit 1; }
[ -f "$out/run/library-report.txt" ] || { echo "no report written"; exit 1; }
[ -n "${ARCWISE_LIBRARY_TEST_KEEP:-}" ] && cp -r "$out/run" "$ARCWISE_LIBRARY_TEST_KEEP"
"$py" "$check" "$lib" "$out/run" 7-iron towel-drill
