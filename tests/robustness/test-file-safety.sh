#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later
# Security of files (issue 9): names stored inside an imported file never lead outside the
# folder the user chose, and nothing that writes a file replaces an existing one silently (each
# refusal leaves the old file byte for byte as it was). Runs the program as a user would.
set -u
exe=${ARCWISE_EXE:?}
command -v sqlite3 >/dev/null 2>&1 || { echo "skipped: sqlite3 (command) is not installed"; exit 77; }
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
cd "$work"
fail=0
bad() { echo "FAIL: $*" >&2; fail=1; }
sum() { sha256sum "$1" | cut -d' ' -f1; }
# refuses CMD...: must exit non-zero with a message and leave $target unchanged
refuses() {
  before=$(sum "$target")
  if "$@" >out.txt 2>err.txt; then
    bad "replaced $target silently: $*"
  elif [ ! -s err.txt ]; then
    bad "refused without a message: $*"
  fi
  [ "$(sum "$target")" = "$before" ] || bad "$target changed: $*"
}

lib="--library $work/lib.sqlite"
"$exe" simulate --seed 3 --level easy --out rec >/dev/null || { echo "simulate failed"; exit 1; }
"$exe" library create $lib >/dev/null
"$exe" library import --player "Noor Vance" --date 2026-02-11 --place "Bay 2" --quiet $lib \
  rec/imu.csv rec/depth.csv >/dev/null || { echo "import failed"; exit 1; }
swing=$("$exe" library list --json $lib | /usr/bin/python3 -c 'import json,sys; d=json.load(sys.stdin); d=d.get("swings", d) if isinstance(d, dict) else d; print(d[0]["id"])')
[ -n "$swing" ] || { echo "no swing in the library"; exit 1; }

# --- names inside an imported player file ------------------------------------------------
"$exe" library export-player "Noor Vance" $work/player.sqlite $lib >/dev/null || bad "export-player"
for evil in "../escape.csv" "/tmp/arcwise-escape-$$.csv" ".." "." "" "sub/../../escape2.csv"; do
  rm -rf lib2.sqlite* outdir
  mkdir -p outdir/inner
  cp player.sqlite evil.sqlite
  esc=$(printf '%s' "$evil" | sed "s/'/''/g")
  sqlite3 evil.sqlite "UPDATE recording SET imu_name = '$esc', depth_name = '$esc'" || bad "sqlite3"
  "$exe" library create --library $work/lib2.sqlite >/dev/null
  if "$exe" library import-player evil.sqlite --library $work/lib2.sqlite >/dev/null 2>err.txt; then
    id=$("$exe" library list --json --library $work/lib2.sqlite | /usr/bin/python3 -c 'import json,sys; d=json.load(sys.stdin); d=d.get("swings", d) if isinstance(d, dict) else d; print(d[0]["id"])')
    if "$exe" library show --save-streams outdir/inner "$id" --library $work/lib2.sqlite >/dev/null 2>err.txt; then
      [ -n "$(ls outdir/inner)" ] || bad "stored name '$evil': save-streams succeeded and saved nothing"
    else
      grep -q "name" err.txt || bad "stored name '$evil': refused without saying why: $(cat err.txt)"
    fi
    # whatever happened, nothing may appear outside outdir/inner
    extra=$(find "$work" -newer evil.sqlite -type f ! -path "$work/outdir/inner/*" \
      ! -name 'lib2.sqlite*' ! -name 'err.txt' ! -name 'out.txt' | head -1)
    [ -z "$extra" ] || bad "stored name '$evil' wrote $extra outside the chosen folder"
    [ ! -e "/tmp/arcwise-escape-$$.csv" ] || { bad "absolute stored name was followed"; rm -f "/tmp/arcwise-escape-$$.csv"; }
    for f in outdir/inner/*; do
      [ -e "$f" ] || continue
      case "$(basename "$f")" in
        .*|*/*) bad "saved under a hidden or odd name: $f" ;;
      esac
    done
  else
    [ -s err.txt ] || bad "import of a player file with name '$evil' refused without a message"
  fi
done

# --- nothing is replaced silently -------------------------------------------------------
echo "precious" > keep.txt
target=keep.txt
refuses "$exe" library backup "$work/keep.txt" $lib
refuses "$exe" library export-player "Noor Vance" "$work/keep.txt" $lib
refuses "$exe" library create --library "$work/keep.txt"
refuses "$exe" fuse --imu rec/imu.csv --depth rec/depth.csv -o keep.txt
refuses "$exe" fuse --imu rec/imu.csv --depth rec/depth.csv -o /dev/null --report keep.txt
mkdir -p saved
"$exe" library show --save-streams saved "$swing" $lib >/dev/null 2>err.txt || bad "first save-streams: $(cat err.txt)"
[ -n "$(ls saved)" ] || bad "save-streams saved nothing"
for f in saved/*; do
  target=$f
  refuses "$exe" library show --save-streams saved "$swing" $lib
done
target=lib.sqlite
refuses "$exe" library backup "$work/lib.sqlite" $lib
exit $fail
