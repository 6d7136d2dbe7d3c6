#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later
# `arcwise c3d`: describes a sample file, extracts a marker as CSV in metres, and never replaces
# an existing output without --force. Values from ../shared/data/c3d/README.md.
set -u
dir="$ARCWISE_SHARED_DIR/data/c3d"
[ -r "$dir/FP_Type1.c3d" ] || { echo "skipped: ../shared/data/c3d absent"; exit 77; }
exe="$ARCWISE_EXE"
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
fail=0
"$exe" c3d "$dir/FP_Type1.c3d" --marker sacrum --csv "$tmp/m.csv" >"$tmp/out" || fail=1
grep -q "points: 22" "$tmp/out" || { echo "FAIL: point count"; fail=1; }
grep -q "units: m" "$tmp/out" || { echo "FAIL: units"; fail=1; }
# sacrum frame 1 = (-0.0215741, 0.9836841, -0.0482828) m
sed -n 4p "$tmp/m.csv" | grep -q '^0.000000,-0.0215741,0.9836841,-0.0482828$' ||
  { echo "FAIL: first row: $(sed -n 4p "$tmp/m.csv")"; fail=1; }
[ "$(grep -c '^[0-9]' "$tmp/m.csv")" -eq 634 ] || { echo "FAIL: 634 rows"; fail=1; }
cp "$tmp/m.csv" "$tmp/before"
"$exe" c3d "$dir/FP_Type1.c3d" --marker sacrum --csv "$tmp/m.csv" >/dev/null 2>"$tmp/err"
[ $? -eq 1 ] || { echo "FAIL: replaced without --force"; fail=1; }
grep -q "already exists" "$tmp/err" || { echo "FAIL: message"; fail=1; }
cmp -s "$tmp/m.csv" "$tmp/before" || { echo "FAIL: existing file changed"; fail=1; }
"$exe" c3d "$dir/FP_Type1.c3d" --marker sacrum --csv "$tmp/m.csv" --force >/dev/null || fail=1
# Missing units are an error unless the user names them.
"$exe" c3d "$dir/simi_golf_invalid_residuals.c3d" --marker 2000 >/dev/null 2>"$tmp/err"
[ $? -eq 1 ] && grep -q "POINT:UNITS" "$tmp/err" || { echo "FAIL: missing units"; fail=1; }
[ -z "$(ls "$tmp" | grep -v -e '^m.csv$' -e '^before$' -e '^out$' -e '^err$')" ] ||
  { echo "FAIL: temporary files left: $(ls "$tmp")"; fail=1; }
exit $fail
