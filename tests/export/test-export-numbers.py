#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later
# Parses the numbers written by test-export-numbers back with Python's csv (RFC 4180 dialect)
# and json (RFC 8259) modules, checks the values against what the program computed, the CSV
# against the JSON, and that README.md documents every CSV column with a unit.
import csv, json, math, os, re, shutil, subprocess, sys, tempfile

exe = sys.argv[1]
src = os.environ.get("ARCWISE_SOURCE_DIR", ".")
out = tempfile.mkdtemp(prefix="aw-num-")
fails = []
def check(cond, what):
    if not cond:
        fails.append(what); print("FAIL:", what)
try:
    r = subprocess.run([exe, out])
    check(r.returncode == 0, "test-export-numbers exit %d" % r.returncode)
    exp = open(os.path.join(out, "expected.txt")).read().split("\n")
    n = int(exp[0].split()[1])
    swings = [dict(zip(l.split()[::2], l.split()[1::2])) for l in exp[1:] if l]
    with open(os.path.join(out, "numbers.csv"), newline="") as f:
        rows = list(csv.reader(f, strict=True))
    head, body = rows[0], rows[1:]
    check(len(body) == n, "CSV rows %d, expected %d" % (len(body), n))
    check(all(len(r) == len(head) for r in body), "every CSV row has %d fields" % len(head))
    check(len(set(head)) == len(head), "CSV column names are unique")
    d = [dict(zip(head, r)) for r in body]
    check(d[0]["player"] == 'Ines "Ivy" Moreau', "quoted name %r" % d[0]["player"])
    check(d[0]["notes"] == "line one\nline two", "multi-line note")
    check(d[0]["tags"] == "tempo, drill", "comma in a field")
    for i, s in enumerate(swings):
        check(float(d[i]["tempo_ratio"]) == float(s["tempo_ratio"]), "CSV tempo exact, swing %d" % i)
        check(float(d[i]["t_impact_s"]) == float(s["impact"]), "CSV impact exact, swing %d" % i)
    last = d[-1]
    check(last["swing_id"] == "99" and last["tempo_ratio"] == "" and last["t_impact_s"] == "",
          "not analysed: empty fields")
    doc = json.load(open(os.path.join(out, "numbers.json")))
    check(doc["format"] == "arcwise-numbers" and doc["scope"] == "session", "JSON header")
    check(len(doc["swings"]) == n, "JSON swings")
    for i, s in enumerate(swings):
        js = doc["swings"][i]
        an = js["analysis"]
        check(an["metrics"]["tempo_ratio"] == float(s["tempo_ratio"]), "JSON tempo, swing %d" % i)
        check(an["events"]["impact"]["t_s"] == float(s["impact"]), "JSON impact, swing %d" % i)
        p = js["path"]
        k = int(s["path_n"])
        check(len(p["t_s"]) == k and len(p["pos_cam_m"]) == k and len(p["flags"]) == k,
              "JSON path has the swing's %d samples" % k)
        check(p["t_s"][0] == float(s["t0"]), "JSON path starts at the swing")
        check(all(len(v) == 3 for v in p["pos_cam_m"]), "path vectors")
        # CSV and JSON carry the same numbers.
        for key, v in an["metrics"].items():
            c = d[i][key]
            check((v is None and c == "") or (v is not None and float(c) == v), "CSV=JSON %s" % key)
        check(set(an["phases"]) == {"address", "backswing", "downswing", "follow_through", "finish"},
              "phases")
    check(doc["swings"][-1]["analysis"] is None, "JSON not analysed: null")
    c = doc["consistency"]["tempo_ratio"]
    vals = [float(s["tempo_ratio"]) for s in swings if s["tempo_ratio"] != "nan"]
    if len(vals) >= 2:
        import statistics  # Python's statistics.stdev: the sample (n - 1) standard deviation
        check(abs(c["mean"] - statistics.fmean(vals)) < 1e-12, "consistency mean")
        check(abs(c["sd"] - statistics.stdev(vals)) < 1e-12, "consistency sd")
    # README documents every column with a unit.
    readme = open(os.path.join(src, "README.md"), encoding="utf-8").read()
    sec = readme.split("### CSV columns", 1)
    check(len(sec) == 2, "README has a 'CSV columns' section")
    if len(sec) == 2:
        table = sec[1].split("\n## ", 1)[0]
        doc_cols = {}
        for line in table.splitlines():
            cells = [c.strip() for c in re.split(r"(?<!\\)\|", line)[1:-1]]
            if len(cells) == 3 and cells[0].startswith("`") and cells[2]:
                for name in re.findall(r"`([^`]+)`", cells[0]):
                    doc_cols[name] = cells[2]
        for h in head:
            key = re.sub(r"^(address|backswing|downswing|follow_through|finish)_cam_share$",
                         "PHASE_cam_share", h)
            key = re.sub(r"^t_(address|takeaway|top|impact|finish)_s$", "t_EVENT_s", key)
            check(key in doc_cols or h in doc_cols, "README documents column %s" % h)
finally:
    shutil.rmtree(out, ignore_errors=True)
sys.exit(1 if fails else 0)
