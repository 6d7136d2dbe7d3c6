#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later
# Workbench export test (run under tests/with-xvfb.sh): the window drives its own export
# actions on the demo library (ui/arcwise-export-test.c) and check-export.py judges the files.
# Usage: export.sh ARCWISE_EXE SCHEMA_DIR CHECK_SCRIPT
set -u
exe=$1; schemas=$2; check=$3
command -v ffprobe >/dev/null 2>&1 || { echo "skipped: ffprobe not installed"; exit 77; }
out=$(mktemp -d)
trap 'rm -rf "$out"' EXIT
GSETTINGS_SCHEMA_DIR=$schemas GSETTINGS_BACKEND=memory ARCWISE_EXPORT_TEST_DIR=$out \
  "$exe" --demo || { echo "workbench exited with $?"; exit 1; }
[ -f "$out/export-report.txt" ] || { echo "no report written"; exit 1; }
"${ARCWISE_PYTHON:-/usr/bin/python3}" "$check" "$out"
