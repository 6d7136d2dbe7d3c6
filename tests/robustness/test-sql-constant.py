#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later
"""No SQL built from strings (issue 9, security). Reads every C file of app/ and ui/ and fails
on:
  - SQLite's string formatters (sqlite3_mprintf, sqlite3_vmprintf, sqlite3_snprintf,
    sqlite3_str_appendf): they exist to build SQL text;
  - a printf-style or concatenating call (g_strdup_printf, g_string_append_printf, snprintf,
    g_snprintf, sprintf, g_strconcat, g_string_append) whose text holds an SQL statement;
  - a call that takes SQL (sqlite3_prepare*, sqlite3_exec, and the store's own wrappers stmt,
    exec_const, pragma_int, update_swing) whose SQL argument is not a string literal, a
    `static const` table of literals, or the `sql` parameter of one of those wrappers.
The allow-list is the store's constant tables (its numbered migration scripts and the statement
tables), named below; a new entry needs a reason in review."""
import os
import re
import sys

ROOT = os.environ.get("ARCWISE_SOURCE_DIR", os.path.join(os.path.dirname(__file__), "..", ".."))
WRAPPERS = {"stmt": 1, "exec_const": 1, "pragma_int": 1, "update_swing": 1}
SQL_CALLS = dict(WRAPPERS, sqlite3_exec=1, sqlite3_prepare=1, sqlite3_prepare_v2=1,
                 sqlite3_prepare_v3=1, sqlite3_prepare16=1, sqlite3_prepare16_v2=1)
# (file, function) allowed to pass a caller's SQL on, with the reason.
ALLOW = {
    ("app/store.c", "arcwise_store_exec_script"):
        "test hook (store-private.h): runs the migration tests' constant fixture scripts; "
        "program code never calls it (checked below)",
}
FORMATTERS = ("sqlite3_mprintf", "sqlite3_vmprintf", "sqlite3_snprintf", "sqlite3_str_appendf")
BUILDERS = ("g_strdup_printf", "g_string_append_printf", "g_string_printf", "snprintf",
            "g_snprintf", "sprintf", "g_strconcat", "g_string_append", "strcat")
SQL_TEXT = re.compile(r"\b(SELECT\s.*\bFROM\b|INSERT\s+(OR\s+\w+\s+)?INTO\b|UPDATE\s+\w+\s+SET\b|"
                      r"DELETE\s+FROM\b|CREATE\s+(TABLE|INDEX|VIEW|TRIGGER)\b|DROP\s+TABLE\b|"
                      r"ATTACH\s+DATABASE\b|PRAGMA\s+\w+|\bWHERE\s+\w+\s*=)", re.S)


def strip_comments(src):
    # keep string literals, drop comments, keep line count
    out, i, n = [], 0, len(src)
    while i < n:
        if src.startswith("/*", i):
            j = src.find("*/", i + 2)
            j = n if j < 0 else j + 2
            out.append(re.sub(r"[^\n]", " ", src[i:j]))
            i = j
        elif src.startswith("//", i):
            j = src.find("\n", i)
            j = n if j < 0 else j
            out.append(" " * (j - i))
            i = j
        elif src[i] in "\"'":
            q, j = src[i], i + 1
            while j < n and src[j] != q:
                j += 2 if src[j] == "\\" else 1
            out.append(src[i:j + 1])
            i = j + 1
        else:
            out.append(src[i])
            i += 1
    return "".join(out)


def call_args(src, open_paren):
    """Top-level arguments of the call whose '(' is at open_paren."""
    depth, args, cur, i = 0, [], [], open_paren + 1
    while i < len(src):
        c = src[i]
        if c in "\"'":
            q, j = c, i + 1
            while j < len(src) and src[j] != q:
                j += 2 if src[j] == "\\" else 1
            cur.append(src[i:j + 1])
            i = j + 1
            continue
        if c in "([{":
            depth += 1
        elif c in ")]}":
            if depth == 0:
                args.append("".join(cur).strip())
                return args
            depth -= 1
        elif c == "," and depth == 0:
            args.append("".join(cur).strip())
            cur = []
            i += 1
            continue
        cur.append(c)
        i += 1
    return args


def enclosing_function(src, pos):
    defs = list(re.finditer(r"^(\w+)\s*\(([^;{)]*)\)\s*\{", src[:pos], re.M))
    return (defs[-1].group(1), defs[-1].group(2)) if defs else (None, "")


def const_tables(src):
    names = set()
    for m in re.finditer(r"static\s+const\s+char\s*(\*\s*const\s*)?(\w+)\s*\[\s*\w*\s*\]\s*=", src):
        names.add(m.group(2))
    return names


def check_file(path, rel, problems):
    src = strip_comments(open(path, encoding="utf-8", errors="replace").read())
    line = lambda pos: src.count("\n", 0, pos) + 1
    tables = const_tables(src)
    for (afile, afn) in ALLOW:
        for m in re.finditer(r"\b%s\s*\(" % afn, src):
            fn, _ = enclosing_function(src, m.start())
            is_def = src[src.rfind("\n", 0, m.start()) + 1:m.start()] == ""
            if not is_def:
                problems.append(f"{rel}:{line(m.start())}: program code calls the test hook {afn}")
    for f in FORMATTERS:
        for m in re.finditer(r"\b%s\s*\(" % f, src):
            problems.append(f"{rel}:{line(m.start())}: {f} builds SQL text")
    for f in BUILDERS:
        for m in re.finditer(r"\b%s\s*\(" % f, src):
            text = " ".join(re.findall(r'"((?:[^"\\]|\\.)*)"', " ".join(call_args(src, m.end() - 1))))
            if SQL_TEXT.search(text):
                problems.append(f"{rel}:{line(m.start())}: {f} puts together SQL: {text[:60]!r}")
    for f, idx in SQL_CALLS.items():
        for m in re.finditer(r"(?<![\w.>])%s\s*\(" % f, src):
            fn, params = enclosing_function(src, m.start())
            args = call_args(src, m.end() - 1)
            if len(args) <= idx:
                continue
            a = args[idx]
            if f in WRAPPERS and re.match(r"^(const\s+)?char\s*\*", a):
                continue  # the wrapper's own definition or prototype
            if re.fullmatch(r'("(?:[^"\\]|\\.)*"\s*|\w+\s*)+', a) and '"' in a:
                continue  # literal, possibly with a macro of literals beside it (SWING_COLUMNS "...")
            base = re.match(r"^(\w+)\s*(\[[^\]]*\])?$", a)
            if base and base.group(1) in tables:
                continue  # static const table of literals (migrations, statement tables)
            if a == "sql" and fn in WRAPPERS and re.search(r"const\s+char\s*\*\s*sql\b", params):
                continue  # forwarding inside a wrapper whose callers are checked here too
            if (rel, fn) in ALLOW:
                continue
            problems.append(f"{rel}:{line(m.start())}: {f}() gets SQL that is not constant: {a}")


BAD_SAMPLE = r"""
static void f(void *s, const char *name) {
  char *q = g_strdup_printf("SELECT id FROM player WHERE name = '%s'", name);
  stmt(s, q, NULL);
  sqlite3_exec(db, q, NULL, NULL, NULL);
  char *z = sqlite3_mprintf("DELETE FROM x WHERE a=%Q", name);
  stmt(s, "SELECT 1", NULL);
}
"""


def self_test():
    """The checker must catch the four faults of BAD_SAMPLE, or a pass proves nothing."""
    import tempfile
    with tempfile.TemporaryDirectory() as d:
        p = os.path.join(d, "bad.c")
        with open(p, "w") as f:
            f.write(BAD_SAMPLE)
        found = []
        check_file(p, "bad.c", found)
    if len(found) != 4:
        print(f"self-test: expected 4 problems in the bad sample, found {found}", file=sys.stderr)
        return False
    return True


def main():
    if not self_test():
        return 1
    problems, files = [], 0
    for d in ("app", "ui"):
        top = os.path.join(ROOT, d)
        for dirpath, _, names in os.walk(top):
            for n in sorted(names):
                if n.endswith(".c"):
                    p = os.path.join(dirpath, n)
                    check_file(p, os.path.relpath(p, ROOT), problems)
                    files += 1
    # The checker must see the store's SQL at all, or it proves nothing.
    store = os.path.join(ROOT, "app", "store.c")
    if os.path.exists(store):
        s = open(store, encoding="utf-8").read()
        if not re.search(r"\bstmt\s*\(", s):
            problems.append("app/store.c: no stmt() calls found: the checker is out of date")
    for p in problems:
        print(p, file=sys.stderr)
    print(f"{files} files checked, {len(problems)} problems")
    return 1 if problems or files == 0 else 0


if __name__ == "__main__":
    sys.exit(main())
