#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later
"""Judges the library browser test (library.sh): every row the workbench showed after each
step is compared with what the library's SQLite file says, read here with Python's own sqlite3
module and none of the program's code.

Expected tree (ui/arcwise-library-browser.h): players by name; a player's sessions newest date
first (then newest session id, the store's list order); a session's swings by recording and
index. A filter shows a player or session only while some of its swings pass, and keeps open
what the coach opened; every player of the file has a row, one with no swings too (0 counts,
hidden while a filter is on unless the search matches the name). Camera gaps are the analysis's quality-note bits AW_NOTE_TOP_HIDDEN (1)
and AW_NOTE_FOLLOW_HIDDEN (2) (engine/include/arcwise/analysis.h: the camera lost the hands
around the top or in the follow-through), stored as the metric "quality_notes"; practice
swings are the metric "practice" = 1 (app/store.h).
Usage: check-library.py LIBRARY RUN_DIR CLUB TAG"""
import os, sqlite3, sys

lib, run, club, tag = sys.argv[1:5]
failed = 0


def check(ok, what):
    global failed
    print("%s %s" % ("ok  " if ok else "FAIL", what))
    if not ok:
        failed += 1


db = sqlite3.connect("file:%s?mode=ro" % lib, uri=True)
swings = {}
for (sid, sess, pid, pname, date, rec, idx, kind, practice, notes) in db.execute(
        "SELECT s.id, s.session_id, se.player_id, p.name, se.date, s.recording_id, "
        "s.index_in_recording, c.kind, "
        "(SELECT value FROM swing_metric m WHERE m.swing_id = s.id AND m.name = 'practice'), "
        "(SELECT value FROM swing_metric m WHERE m.swing_id = s.id AND m.name = 'quality_notes') "
        "FROM swing s JOIN session se ON se.id = s.session_id JOIN player p ON p.id = se.player_id "
        "LEFT JOIN club c ON c.id = s.club_id"):
    swings[sid] = dict(session=sess, player=pid, pname=pname, date=date, order=(rec, idx),
                       club=kind, practice=practice, notes=notes)
tagged = {r[0] for r in db.execute("SELECT swing_id FROM swing_tag WHERE tag = ?", (tag,))}
check(len(tagged) > 0, "the test library has swings tagged %r (%d)" % (tag, len(tagged)))
# The tag must occur nowhere else, so that the search's expected result is the tag's swings.
others = db.execute("SELECT count(*) FROM swing WHERE instr(lower(notes), ?) > 0", (tag,)).fetchone()[0]
others += db.execute("SELECT count(*) FROM player WHERE instr(lower(name), ?) > 0", (tag,)).fetchone()[0]
others += db.execute("SELECT count(*) FROM session WHERE instr(lower(place), ?) > 0", (tag,)).fetchone()[0]
check(others == 0, "the tag appears in no name, place or note")

# The test renames the first player at its end (NAME -> "NAME (edited)"); earlier steps
# showed the old name.
EDITED = " (edited)"
# Every player of the file has a row, those with no swings too (0 counts): the test adds one.
players = sorted((name[:-len(EDITED)] if name.endswith(EDITED) else name, pid)
                 for pid, name in db.execute("SELECT id, name FROM player"))
empty = [pid for pid, in db.execute(
    "SELECT p.id FROM player p WHERE NOT EXISTS (SELECT 1 FROM session se JOIN swing s "
    "ON s.session_id = se.id WHERE se.player_id = p.id)")]
check(len(empty) > 0, "the test library has a player with no swings (%d)" % len(empty))
player_ids = [p for _, p in players]
sessions_of = {}
for pid in player_ids:
    ss = {(s["date"], s["session"]) for s in swings.values() if s["player"] == pid}
    sessions_of[pid] = [sid for _, sid in sorted(ss, reverse=True)]
swings_of = {}
for sid, s in swings.items():
    swings_of.setdefault(s["session"], []).append(sid)
for k in swings_of:
    swings_of[k].sort(key=lambda i: swings[i]["order"])
flat = [w for p in player_ids for se in sessions_of[p] for w in swings_of[se]]

filters = {
    "club": lambda s, i: s["club"] == club,
    "gaps": lambda s, i: s["notes"] is not None and (int(s["notes"]) & 3) != 0,
    "practice": lambda s, i: s["practice"] == 1,
    "search": lambda s, i: i in tagged,
}
for name, f in filters.items():
    n = sum(1 for i, s in swings.items() if f(s, i))
    check(0 < n < len(swings), "filter %s selects some but not all swings of the library (%d of %d)"
          % (name, n, len(swings)))


def expected(open_p, open_s, f=None):
    rows = []
    for p in player_ids:
        pw = [w for se in sessions_of[p] for w in swings_of[se]]
        pm = [w for w in pw if f is None or f(swings[w], w)]
        # A filter hides a player none of whose swings pass; one with no swings at all is
        # hidden by any filter (the search step's tag is in no player's name, checked above).
        if f is not None and not pm:
            continue
        rows.append(("P", p, len(pm), len(pw)))
        if p not in open_p:
            continue
        for se in sessions_of[p]:
            sm = [w for w in swings_of[se] if f is None or f(swings[w], w)]
            if f is not None and not sm:
                continue
            rows.append(("S", se, len(sm), len(swings_of[se])))
            if se in open_s:
                rows.extend(("W", w) for w in sm)
    return rows


def shown(step):
    rows, sel = [], None
    for line in open(os.path.join(run, step + ".rows")):
        parts = line.rstrip("\n").split("\t")
        kind = parts[0][0]
        if parts[0].endswith("*"):
            sel = (kind, int(parts[1]))
        rows.append(tuple([kind] + [int(x) for x in parts[1:]]))
    return rows, sel


report = {}
for line in open(os.path.join(run, "library-report.txt")):
    k, _, v = line.strip().partition("=")
    report[k] = v


def compare(step, want, what):
    got, _ = shown(step)
    ok = got == want
    check(ok, "%s: %d rows as in the library" % (what, len(want)))
    if not ok:
        for i in range(max(len(got), len(want))):
            g = got[i] if i < len(got) else None
            w = want[i] if i < len(want) else None
            if g != w:
                print("     row %d: shown %s, library says %s" % (i, g, w))
                break


p1 = player_ids[0]
s1 = sessions_of[p1][0]
first, second = flat[0], flat[1]
# At start the first swing is selected: its player and session are open.
compare("start", expected({swings[first]["player"]}, {swings[first]["session"]}), "start")
check(report.get("start_selected") == str(first), "the first swing is selected at start")
compare("closed", expected(set(), set()), "every row closed")
# Import target (drop or Bring In): the selected row's player. Row 5 with every row closed is
# the fifth player; row 2 with the first player and session open is that session. The target
# is the player's id, not its name (two players may share a name).
check(len(player_ids) >= 5 and report.get("import_into_player_row") == str(player_ids[4]),
      "import into the selected player row's player id %r (shown %r)"
      % (player_ids[4] if len(player_ids) > 4 else None, report.get("import_into_player_row")))
check(report.get("import_into_session_row") == str(p1),
      "import into the selected session row's player id %r (shown %r)"
      % (p1, report.get("import_into_session_row")))
check(report.get("closed_swing_rows") == "0", "no swing rows with every row closed")
compare("opened", expected({p1}, {s1}), "first player and first session open")
check(int(report.get("opened_swing_rows", -1)) == len(swings_of[s1]),
      "opening the session shows its %d swings" % len(swings_of[s1]))
check(report.get("club_known") == "1", "the club %s is offered by the club filter" % club)
for step, what in (("club", "club " + club), ("gaps", "camera gaps"),
                   ("practice", "practice swings"), ("search", "search for the tag")):
    f = filters[step]
    compare(step, expected({p1}, {s1}, f), what)
    n = sum(1 for i, s in swings.items() if f(s, i))
    check(report.get(step + "_matching") == str(n), "%s: count %s = %d in the library"
          % (what, report.get(step + "_matching"), n))
compare("cleared", expected({p1}, {s1}), "filters cleared, open rows kept")
check(report.get("cleared_matching") == str(len(swings)), "cleared: every swing counted")
_, sel = shown("next")
check(report.get("first_selected") == str(first) and report.get("next_selected") == str(second)
      and sel == ("W", second), "next-swing key moves from swing %d to %d (tree order), row "
      "selected %s" % (first, second, sel))
check(float(report.get("stage_duration", 0)) > 0.5, "the selected swing is on the stage (%s s)"
      % report.get("stage_duration"))
# The player editor from the first player's row: name and height saved in the file, the
# tree shown again with the new name in place, what was open still open, the swing kept.
check(report.get("editor_shown") == "1" and report.get("editor_fields") == "1",
      "the player editor opens from the player row with name, height and Save")
pid = int(report.get("edit_player", 0))
row = db.execute("SELECT name, height_m FROM player WHERE id = ?", (pid,)).fetchone()
check(pid == p1 and row is not None and row[0] == report.get("edited_name")
      and row[1] is not None and abs(row[1] - 1.77) < 1e-9,
      "the editor saved player %d as %r, %s m (library: %s)"
      % (pid, report.get("edited_name"), 1.77, row))
compare("edited", expected({p1, swings[second]["player"]}, {s1, swings[second]["session"]}),
        "after the edit")
check(report.get("edited_selected") == str(second), "the selected swing is kept after the edit")
check("png_error" not in report, "window pictures saved (%s)" % report.get("png_error", "all"))
sys.exit(1 if failed else 0)
