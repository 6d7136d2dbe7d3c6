#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later
"""Judges the workbench's drop-and-import session (ui/arcwise-import-test.c) against the
library file, read with Python's sqlite3 module (SQLite's own reader, not the project's store).

Usage: check-import.py dump LIBRARY OUT.sql
       check-import.py cancel|complete LIBRARY RUN_DIR BEFORE.sql [DEPTH.csv:EVENTS.csv ...]
- dump: every table's rows as SQL text (sqlite3.Connection.iterdump), the library as it was.
- cancel: Stop pressed midway; the library's tables are exactly as in BEFORE.sql, the window
  said so, the bar showed progress and the main loop kept running while the import worked.
- complete: the swings new since BEFORE.sql all belong to the player whose row was the drop
  target (found by id; no player was added), two recordings came in (loose pair and folder),
  the window's summary counts them, and the tree shows that player's new session with exactly
  those swings. Each DEPTH.csv:EVENTS.csv pair names a dropped recording's depth stream and the
  simulator's ground truth for it (one row per simulated swing, times on the depth clock): the
  import's recording is found by the SHA-256 of that depth file (hashlib), and its new swings
  must be exactly the simulated ones, each simulated impact inside one stored swing's span.
"""
import csv
import hashlib
import os
import sqlite3
import sys

import numpy as np

mode, lib = sys.argv[1], sys.argv[2]
failures = []


def check(cond, what):
    print(("ok   " if cond else "FAIL ") + what)
    if not cond:
        failures.append(what)


def dump(path):
    c = sqlite3.connect("file:%s?mode=ro" % path, uri=True)
    text = "\n".join(c.iterdump())
    c.close()
    return text


def png(path):
    # matplotlib's reader (python3-matplotlib, a test package of tools/quickstart): the window's
    # pictures come from GDK's PNG writer, which uses every row filter.
    import matplotlib.image
    return matplotlib.image.imread(path)[:, :, :3].astype(np.float32) * 255.0


def edge_amber(path):
    """Share of the pixels in the window's outer 10-pixel band that are the accent amber
    (#f0b35a, ui/style.css)."""
    img = png(path)
    band = np.concatenate([img[:, :10].reshape(-1, 3), img[:, -10:].reshape(-1, 3),
                           img[:10].reshape(-1, 3), img[-10:].reshape(-1, 3)])
    return float((np.abs(band - np.array([240, 179, 90])).max(axis=1) < 40).mean())


if mode == "dump":
    open(sys.argv[3], "w").write(dump(lib))
    sys.exit(0)

run, before_sql = sys.argv[3], open(sys.argv[4]).read()
truths = [a.split(":") for a in sys.argv[5:]]
report = {}
for line in open(run + "/import-report.txt"):
    k, _, v = line.rstrip("\n").partition("=")
    report[k] = v
db = sqlite3.connect("file:%s?mode=ro" % lib, uri=True)
old = sqlite3.connect(":memory:")
old.executescript(before_sql)
target = db.execute("SELECT id FROM player WHERE name = 'Tomas Reyes'").fetchone()[0]

check(report.get("drop_target") == "1" and report.get("accepts_file_list") == "1",
      "the window has a drop target taking a file list")
check(report.get("drop_handled") == "1" and report.get("importing_after_drop") == "1",
      "the drop was taken and the import started")
check(report.get("target_player") == str(target),
      "the drop goes into the selected row's player id %d (shown %r)"
      % (target, report.get("target_player")))
check(report.get("during_revealed") == "1", "the progress bar is shown while importing")
check(report.get("during_label", "").startswith("Bringing in captures:"),
      "the label says what is being brought in (%r)" % report.get("during_label"))
polls = int(report.get("polls_during", "0"))
check(polls >= 1, "the main loop ran while the import worked (%d turns)" % polls)
fr = [float(x) for x in report.get("fractions", "").split()]
check(all(0.0 <= f <= 1.0 for f in fr), "progress fractions within 0..1")
check(report.get("gl_error") == "none", "no GL error")
hover, after_png = edge_amber(os.path.join(run, "hover.png")), edge_amber(os.path.join(run, "after.png"))
check(hover > 0.15 and after_png < 0.02,
      "files held over the window frame it in amber (%.0f %% of the edge band; %.0f %% after the "
      "drop)" % (100 * hover, 100 * after_png))

if mode == "cancel":
    stop = float(report.get("stop_at", "nan"))
    check(report.get("stop_pressed") == "1" and 0.0 < stop < 1.0,
          "Stop pressed midway (at %s of the captures)" % report.get("stop_at"))
    check(report.get("stop_label") == "Stopping…", "the label says it is stopping")
    until = fr[:fr.index(stop) + 1] if stop in fr else fr
    check(all(b >= a for a, b in zip(until, until[1:])), "progress never went back: %s" % until)
    check(report.get("final_label", "").startswith("Stopped: nothing was brought in"),
          "the window says nothing was brought in (%r)" % report.get("final_label"))
    check(float(report.get("final_fraction", "1")) == 0.0, "the bar is emptied after Stop")
    after = dump(lib)
    check(after == before_sql, "every table of the library is exactly as before (%d vs %d "
          "characters of SQL)" % (len(after), len(before_sql)))
else:
    check(all(b >= a for a, b in zip(fr, fr[1:])) and fr and fr[-1] == 1.0,
          "progress rose to the end: %s" % fr)
    old_ids = {r[0] for r in old.execute("SELECT id FROM swing")}
    rows = db.execute("SELECT s.id, e.player_id, s.session_id, s.recording_id FROM swing s "
                      "JOIN session e ON e.id = s.session_id ORDER BY s.id").fetchall()
    new = [r for r in rows if r[0] not in old_ids]
    check(len(new) >= 2, "swings were added (%d)" % len(new))
    check(all(r[1] == target for r in new), "every new swing is the target player's")
    recs = {r[3] for r in new}
    check(len(recs) == 2, "two recordings brought in (the loose pair and the folder): %d" % len(recs))
    check(len(truths) == 2, "the simulator's truth for both dropped recordings given")
    n_true = 0
    for depth, events in truths:
        sha = hashlib.sha256(open(depth, "rb").read()).hexdigest()
        rec = db.execute("SELECT id FROM recording WHERE depth_sha256 = ?", (sha,)).fetchone()
        impacts = [float(r["t_impact"]) for r in
                   csv.DictReader(l for l in open(events) if not l.startswith("#"))]
        n_true += len(impacts)
        spans = db.execute("SELECT span_start_s, span_end_s FROM swing WHERE recording_id = ? "
                           "ORDER BY index_in_recording", (rec[0] if rec else -1,)).fetchall()
        check(rec is not None and rec[0] in recs,
              "%s: brought in as a new recording (found by its SHA-256)" % depth.split("/")[-1])
        check(len(spans) == len(impacts)
              and all(sum(a <= t <= b for a, b in spans) == 1 for t in impacts),
              "%s: the %d simulated swings are the recording's stored swings, each impact in one "
              "span (impacts %s, spans %s)" % (depth.split("/")[-1], len(impacts),
                                              ["%.2f" % t for t in impacts],
                                              ["%.2f-%.2f" % sp for sp in spans]))
    check(len(new) == n_true, "exactly the dropped swings were added: %d new, %d simulated"
          % (len(new), n_true))
    n_players_old = old.execute("SELECT count(*) FROM player").fetchone()[0]
    check(db.execute("SELECT count(*) FROM player").fetchone()[0] == n_players_old,
          "no player was added")
    want = "Brought in 2 recordings with %d swings." % len(new)
    check(report.get("final_label") == want,
          "summary %r (expected %r)" % (report.get("final_label"), want))
    sessions = {r[2] for r in new}
    shown = [l.split("\t") for l in open(run + "/after.rows").read().splitlines()]
    players = [l for l in shown if l[0].startswith("P")]
    sess = [l for l in shown if l[0].startswith("S")]
    swings = [int(l[1]) for l in shown if l[0].startswith("W")]
    total = db.execute("SELECT count(*) FROM swing s JOIN session e ON e.id = s.session_id "
                       "WHERE e.player_id = ?", (target,)).fetchone()[0]
    check(any(int(l[1]) == target and int(l[3]) == total for l in players),
          "the tree's row for the player counts %d swings" % total)
    check(len(sessions) == 1 and [int(l[1]) for l in sess] == list(sessions),
          "the tree shows the one new session open: %s" % [l[1] for l in sess])
    check(sorted(swings) == sorted(r[0] for r in new),
          "the tree shows exactly the new swings: %s" % swings)
    check(int(report.get("after_swing_rows", "0")) == len(new), "swing rows counted")
    journal_old = old.execute("SELECT count(*) FROM journal WHERE kind = 'import'").fetchone()[0]
    journal = db.execute("SELECT detail FROM journal WHERE kind = 'import' ORDER BY id").fetchall()
    check(len(journal) == journal_old + 1 and "Tomas Reyes" in journal[-1][0],
          "one journal entry names the player: %r" % (journal[-1][0] if journal else None))

if failures:
    print("%d check(s) failed" % len(failures))
    sys.exit(1)
