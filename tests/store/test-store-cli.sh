#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later
# `arcwise library` from the command line: create, add-player, import (pairs and folders),
# list with every filter (JSON checked by Python's json module), show, annotate, backup, check,
# export-player / import-player, --save-streams, and refusal of a newer library. The stored
# raw streams are also read back outside Arcwise: Python's sqlite3 and zlib modules (the
# reference implementations of the file format and RFC 1950) must give the original file bytes.
set -u
exe="$ARCWISE_EXE"
py="${ARCWISE_PYTHON:-/usr/bin/python3}"
unset DISPLAY WAYLAND_DISPLAY
tmp=$(mktemp -d /tmp/arcwise-store-cli-XXXXXX)
trap 'rm -rf "$tmp"' EXIT
fail=0
lib="$tmp/lib.sqlite"
export ARCWISE_LIBRARY="$tmp/not-used.sqlite"

run() { # expected-rc description command...
  want=$1; shift; what=$1; shift
  "$@" >"$tmp/out" 2>"$tmp/err"
  rc=$?
  if [ "$rc" -ne "$want" ]; then
    echo "FAIL: $what: exit $rc, expected $want"; cat "$tmp/out" "$tmp/err"; fail=1
  fi
}
json() { # description python-expression-on-d (stdin JSON)
  what=$1; shift
  "$py" -c "import json,sys; d=json.load(open('$tmp/out')); sys.exit(0 if ($1) else 1)" ||
    { echo "FAIL: $what"; cat "$tmp/out"; fail=1; }
}

"$exe" simulate --seed 21 --level easy --out "$tmp/s1" >/dev/null || { echo "FAIL: simulate"; exit 1; }
"$exe" simulate --seed 22 --level easy --out "$tmp/s2" >/dev/null || exit 1
mkdir -p "$tmp/folder/take-a" "$tmp/folder/take-b"
"$exe" simulate --seed 23 --level easy --out "$tmp/s3" >/dev/null || exit 1
"$exe" simulate --seed 24 --level easy --out "$tmp/s4" >/dev/null || exit 1
cp "$tmp/s3/imu.csv" "$tmp/folder/take-a.imu.csv"; cp "$tmp/s3/depth.csv" "$tmp/folder/take-a.depth.csv"
cp "$tmp/s4/imu.csv" "$tmp/folder/take-b/imu.csv"; cp "$tmp/s4/depth.csv" "$tmp/folder/take-b/depth.csv"
rmdir "$tmp/folder/take-a"

run 2 "no action" "$exe" library
run 2 "unknown action" "$exe" library frobnicate --library "$lib"
run 1 "list on a missing library" "$exe" library list --library "$lib"
run 0 "create" "$exe" library create --library "$lib"
run 1 "create twice" "$exe" library create --library "$lib"
run 0 "add player" "$exe" library add-player "Nell Okafor" --hand left --height 1.64 --notes "new in autumn" --library "$lib"
run 1 "duplicate player" "$exe" library add-player "nell okafor" --library "$lib"
run 2 "import without player" "$exe" library import --library "$lib" "$tmp/s1/imu.csv" "$tmp/s1/depth.csv"
run 0 "import a pair" "$exe" library import --quiet --library "$lib" --player "Nell Okafor" --date 2026-09-03 --place "Bay 3" --club driver "$tmp/s1/imu.csv" "$tmp/s1/depth.csv"
run 0 "import a second pair" "$exe" library import --quiet --library "$lib" --player "Pim Arlott" --hand right --date 2026-09-20 --club 7-iron "$tmp/s2/imu.csv" "$tmp/s2/depth.csv"
run 0 "import a folder" "$exe" library import --quiet --library "$lib" --player "Pim Arlott" --date 2026-10-02 --club 7-iron "$tmp/folder"
run 0 "re-import is skipped" "$exe" library import --quiet --library "$lib" --player "Pim Arlott" --date 2026-10-02 "$tmp/folder"
grep -q "2 already in the library" "$tmp/out" || { echo "FAIL: re-import not reported"; cat "$tmp/out"; fail=1; }

run 0 "list players" "$exe" library list --players --json --library "$lib"
json "players" "len(d)==2 and d[0]['name']=='Nell Okafor' and d[0]['handedness']=='left' and d[0]['lead_wrist']=='right' and abs(d[0]['height_m']-1.64)<1e-12 and d[1]['swings']>=2"
run 0 "list all" "$exe" library list --json --library "$lib"
json "all swings, newest first" "len(d)>=4 and d[0]['date']>=d[-1]['date']"
n_all=$("$py" -c "import json; print(len(json.load(open('$tmp/out'))))")
first=$("$py" -c "import json; print(json.load(open('$tmp/out'))[-1]['id'])")
run 0 "filter player" "$exe" library list --json --player "nell okafor" --library "$lib"
json "player filter" "len(d)>=1 and all(s['player']=='Nell Okafor' for s in d)"
run 0 "filter dates" "$exe" library list --json --from 2026-09-10 --to 2026-09-30 --library "$lib"
json "date filter" "len(d)>=1 and all('2026-09-10'<=s['date']<='2026-09-30' for s in d)"
run 0 "filter club" "$exe" library list --json --club DRIVER --library "$lib"
json "club filter" "len(d)>=1 and all(s['club']=='driver' for s in d)"
run 0 "annotate" "$exe" library annotate "$first" --tags "grip, posture" --rating 5 --notes "reference for Nell" --reference yes --library "$lib"
run 2 "bad rating" "$exe" library annotate "$first" --rating 9 --library "$lib"
run 1 "annotate a missing swing" "$exe" library annotate 99999 --rating 1 --library "$lib"
run 0 "filter tag" "$exe" library list --json --tag posture --library "$lib"
json "tag filter" "len(d)==1 and d[0]['tags']==['grip','posture'] and d[0]['rating']==5 and d[0]['reference']"
run 0 "filter reference" "$exe" library list --json --reference --library "$lib"
json "reference filter" "len(d)==1"
run 0 "metric filter" "$exe" library list --json --metric tempo_ratio --min 0 --max 100 --library "$lib"
json "metric filter" "all(s['tempo_ratio'] is not None and 0<=s['tempo_ratio']<=100 for s in d)"
run 2 "min without metric" "$exe" library list --min 3 --library "$lib"
run 0 "show" "$exe" library show "$first" --json --library "$lib"
json "show" "d['id']==$first and d['notes']=='reference for Nell' and 'events' in d and 'metrics' in d"
run 0 "show text" "$exe" library show "$first" --library "$lib"
run 1 "show a missing swing" "$exe" library show 99999 --library "$lib"

# Raw streams: through the program and, independently, through Python's sqlite3 + zlib.
run 0 "save streams" "$exe" library show "$first" --save-streams "$tmp/out-streams" --library "$lib"
cmp -s "$tmp/out-streams/imu.csv" "$tmp/s1/imu.csv" && cmp -s "$tmp/out-streams/depth.csv" "$tmp/s1/depth.csv" ||
  { echo "FAIL: saved streams differ from the imported files"; ls -la "$tmp/out-streams"; fail=1; }
run 1 "save streams never overwrites" "$exe" library show "$first" --save-streams "$tmp/out-streams" --library "$lib"
"$py" - "$lib" "$tmp/s1/imu.csv" "$tmp/s1/depth.csv" <<'PY' || { echo "FAIL: blob is not the file's zlib stream"; fail=1; }
import sqlite3, sys, zlib, hashlib
db = sqlite3.connect("file:%s?mode=ro" % sys.argv[1], uri=True)
imu, depth, sha = db.execute("SELECT d.imu, d.depth, r.imu_sha256 FROM recording_data d JOIN recording r ON r.id = d.recording_id ORDER BY r.id LIMIT 1").fetchone()
a, b = open(sys.argv[2], "rb").read(), open(sys.argv[3], "rb").read()
ok = zlib.decompress(imu) == a and zlib.decompress(depth) == b and hashlib.sha256(a).hexdigest() == sha
ok = ok and db.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
ok = ok and db.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
sys.exit(0 if ok else 1)
PY

run 0 "check" "$exe" library check --library "$lib"
run 0 "backup" "$exe" library backup "$tmp/backup.sqlite" --library "$lib"
run 1 "backup never overwrites" "$exe" library backup "$tmp/backup.sqlite" --library "$lib"
run 0 "check the backup" "$exe" library check --library "$tmp/backup.sqlite"
run 0 "backup lists the same" "$exe" library list --json --library "$tmp/backup.sqlite"
json "backup content" "len(d)==$n_all"
run 0 "export player" "$exe" library export-player "Pim Arlott" "$tmp/pim.player" --library "$lib"
run 1 "export a missing player" "$exe" library export-player "Nobody" "$tmp/x.player" --library "$lib"
run 0 "create second" "$exe" library create --library "$tmp/lib2.sqlite"
run 0 "import player" "$exe" library import-player "$tmp/pim.player" --library "$tmp/lib2.sqlite"
run 0 "import player again" "$exe" library import-player "$tmp/pim.player" --library "$tmp/lib2.sqlite"
grep -q "merged 0 swings" "$tmp/out" || { echo "FAIL: second import-player duplicated"; fail=1; }
run 0 "list second" "$exe" library list --json --library "$tmp/lib2.sqlite"
json "imported player only" "len(d)>=3 and all(s['player']=='Pim Arlott' for s in d)"
run 1 "import-player of a capture file" "$exe" library import-player "$tmp/s1/imu.csv" --library "$tmp/lib2.sqlite"
run 0 "journal" "$exe" library list --journal --json --library "$lib"
json "journal" "[e['kind'] for e in d].count('import')==3 and 'backup' in [e['kind'] for e in d] and 'export-player' in [e['kind'] for e in d]"

# A library from a newer Arcwise: the looking actions work read-only with a note saying so,
# every write is refused with a clear message, and the file is not changed.
cp "$tmp/backup.sqlite" "$tmp/newer.sqlite"
"$py" -c "import sqlite3,sys; c=sqlite3.connect(sys.argv[1]); c.execute('PRAGMA user_version = 42'); c.commit(); c.close()" "$tmp/newer.sqlite"
before=$(sha256sum "$tmp/newer.sqlite")
run 0 "newer library: list" "$exe" library list --json --library "$tmp/newer.sqlite"
json "newer library: list" "len(d)==4"
grep -q "newer Arcwise.*read-only" "$tmp/err" || { echo "FAIL: no read-only note for a newer library"; cat "$tmp/err"; fail=1; }
run 0 "newer library: show" "$exe" library show 1 --library "$tmp/newer.sqlite"
run 0 "newer library: check" "$exe" library check --library "$tmp/newer.sqlite"
run 0 "newer library: backup" "$exe" library backup "$tmp/newer-copy.sqlite" --library "$tmp/newer.sqlite"
run 0 "newer library: export-player" "$exe" library export-player "Pim Arlott" "$tmp/newer-pim.arcwise" --library "$tmp/newer.sqlite"
run 0 "export from a newer library is sound" "$exe" library check --library "$tmp/newer-pim.arcwise"
run 1 "newer library: annotate refused" "$exe" library annotate 1 --rating 2 --library "$tmp/newer.sqlite"
grep -q "newer Arcwise" "$tmp/err" || { echo "FAIL: no clear message for a write to a newer library"; cat "$tmp/err"; fail=1; }
run 1 "newer library: import refused" "$exe" library import --library "$tmp/newer.sqlite" --player "Pim Arlott" "$tmp/s2/imu.csv" "$tmp/s2/depth.csv"
run 1 "newer library: import-player refused" "$exe" library import-player "$tmp/newer-pim.arcwise" --library "$tmp/newer.sqlite"
run 1 "newer library: reanalyse refused" "$exe" library reanalyse --all --library "$tmp/newer.sqlite"
[ "$(sha256sum "$tmp/newer.sqlite")" = "$before" ] || { echo "FAIL: newer library changed"; fail=1; }

# A malformed capture through the command: refused with file:line:column, library unchanged.
run 0 "settle" "$exe" library check --library "$lib"
before=$(sha256sum "$lib")
sed '12s/^[^,]*,/0.5,zz,/' "$tmp/s2/imu.csv" > "$tmp/bad.imu.csv"
run 1 "malformed import" "$exe" library import --library "$lib" --player "Pim Arlott" "$tmp/bad.imu.csv" "$tmp/s2/depth.csv"
grep -q "bad.imu.csv:12:" "$tmp/err" || { echo "FAIL: no file:line in the error"; cat "$tmp/err"; fail=1; }
[ "$(sha256sum "$lib")" = "$before" ] || { echo "FAIL: library changed by a refused import"; fail=1; }
exit $fail
