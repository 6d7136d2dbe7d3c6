#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later
"""Checks the generated demo library against the issue's brief: 3-4 players of different
levels and both handednesses, several dated sessions each over some weeks, 40-80 shots, every
listed file present and readable, and visible progress (the per-session median of the measured
quantity moves the way the scenario says). Standard library only."""
import csv
import os
import statistics
import sys
from datetime import date


def main(manifest):
    base = os.path.dirname(manifest)
    players, sessions, swings = {}, {}, []
    with open(manifest, newline="") as f:
        rows = [r for r in csv.reader(f) if r and not r[0].startswith("#")]
    assert rows[0] == ["format", "arcwise-demo-manifest", "1"], rows[0]
    for r in rows[1:]:
        if r[0] == "player":
            players[r[1]] = r
        elif r[0] == "session":
            sessions[r[1]] = r
        elif r[0] == "swing":
            swings.append(r)
        else:
            assert r[0] in ("studio", "coach"), r
    assert 3 <= len(players) <= 4, players
    assert {p[3] for p in players.values()} == {"left", "right"}
    assert len({p[4] for p in players.values()}) >= 3
    shots = [s for s in swings if s[3] == "shot"]
    assert 40 <= len(shots) <= 80, len(shots)
    for pid in players:
        ss = sorted((date.fromisoformat(s[3]), s) for s in sessions.values() if s[2] == pid)
        assert len(ss) >= 3, pid
        assert (ss[-1][0] - ss[0][0]).days >= 21, pid
    for s in sessions.values():
        for col in (9, 10, 11, 12):
            path = os.path.join(base, s[col])
            assert os.path.getsize(path) > 0, path
        with open(os.path.join(base, s[9])) as f:
            head = f.read(4096)
        assert "t,ax,ay,az,gx,gy,gz" in head

    def per_session(pid, col):
        out = []
        for _, s in sorted((date.fromisoformat(s[3]), s) for s in sessions.values()
                           if s[2] == pid):
            vals = [float(w[col]) for w in shots if w[1] == s[1]]
            out.append(statistics.median(vals))
        return out

    # Progress written into the scenario: tempo toward 3:1 for the beginner and the junior,
    # hand speed up for the advanced player.
    for pid, col, rising in (("p1", 9, True), ("p4", 9, True), ("p3", 10, True)):
        v = per_session(pid, col)
        assert (v[-1] > v[0]) == rising, (pid, v)
    print(f"{len(players)} players, {len(sessions)} sessions, {len(shots)} shots: ok")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1]))
