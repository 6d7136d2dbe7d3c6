#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later
"""Builds the demo swing library from the demo manifest (README.md here) with the program's own
commands: `arcwise library create`, `add-player`, one `import` per session, then `check`.
Usage: build-library.py ARCWISE MANIFEST OUT. The library is made under a temporary name and
renamed into place only when complete, so a failed or interrupted build leaves no half library.
Everything in it is invented (simulated captures of invented people)."""
import csv, os, subprocess, sys


def run(*args):
    r = subprocess.run(args, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    if r.returncode != 0:
        sys.stderr.write("build-library: %s failed:\n%s%s" % (" ".join(args[1:3]), r.stdout, r.stderr))
        sys.exit(1)
    return r.stdout


def main():
    exe, manifest, out = sys.argv[1:4]
    base = os.path.dirname(os.path.abspath(manifest))
    players, sessions, place = {}, [], ""
    with open(manifest, newline="") as f:
        for row in csv.reader(f):
            if not row or row[0].startswith("#"):
                continue
            if row[0] == "format" and (row[1] != "arcwise-demo-manifest" or row[2] != "1"):
                sys.exit("build-library: %s: unknown manifest format %s" % (manifest, row[1:3]))
            elif row[0] == "studio":
                place = row[1]
            elif row[0] == "player":
                players[row[1]] = (row[2], row[3])
            elif row[0] == "session":
                sessions.append(row)
    part = out + ".part"
    for suffix in ("", "-wal", "-shm", "-journal"):
        if os.path.exists(part + suffix):
            os.unlink(part + suffix)
    run(exe, "library", "create", "--library", part)
    for pid, (name, hand) in sorted(players.items()):
        run(exe, "library", "add-player", name, "--hand", hand, "--library", part)
    swings = 0
    for s in sessions:
        sid, pid, date, club = s[1], s[2], s[3], s[4]
        imu, depth = os.path.join(base, s[9]), os.path.join(base, s[10])
        text = run(exe, "library", "import", "--quiet", "--library", part, "--player",
                   players[pid][0], "--date", date, "--place", place, "--club", club, imu, depth)
        swings += int(text.split(",")[1].split()[0])
    run(exe, "library", "check", "--library", part)
    os.replace(part, out)
    print("demo library: %d players, %d sessions, %d swings -> %s" % (len(players), len(sessions), swings, out))


main()
