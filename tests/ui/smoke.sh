#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later
# GUI smoke test (run under tests/with-xvfb.sh): the workbench plays a scripted session on the
# demo library (ui/arcwise-smoke.c) and check-smoke.py judges its snapshots and report.
# Usage: smoke.sh ARCWISE_EXE SCHEMA_DIR CHECK_SCRIPT
set -u
exe=$1; schemas=$2; check=$3
out=$(mktemp -d)
trap 'rm -rf "$out"' EXIT
# A fresh, in-memory settings store: the first-run caution must appear.
GSETTINGS_SCHEMA_DIR=$schemas GSETTINGS_BACKEND=memory ARCWISE_SMOKE_DIR=$out \
  "$exe" --demo || { echo "workbench exited with $?"; exit 1; }
[ -f "$out/report.txt" ] || { echo "no report written"; exit 1; }
"${ARCWISE_PYTHON:-/usr/bin/python3}" "$check" "$out"
