#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later
# Playback speeds, frame step, loop and the camera gestures (run under tests/with-xvfb.sh): the
# workbench plays a scripted session on the demo library (ui/arcwise-motion-test.c), with real
# pointer input from xdotool (XTest) for the mouse gestures, and check-motion.py judges the
# frame-clock samples and cameras it wrote down.
# Usage: motion.sh ARCWISE_EXE SCHEMA_DIR CHECK_SCRIPT
set -u
exe=$1; schemas=$2; check=$3
tool=$(command -v xdotool) || { echo "skipped: xdotool not installed (tools/quickstart installs it)" >&2; exit 77; }
out=$(mktemp -d)
trap 'rm -rf "$out"' EXIT
GSETTINGS_SCHEMA_DIR=$schemas GSETTINGS_BACKEND=memory ARCWISE_MOTION_TEST_DIR=$out \
  ARCWISE_MOTION_TEST_XDOTOOL=$tool "$exe" --demo || { echo "workbench exited with $?"; exit 1; }
[ -f "$out/motion-report.txt" ] || { echo "no report written"; exit 1; }
[ -n "${ARCWISE_MOTION_TEST_KEEP:-}" ] && cp -r "$out/." "$ARCWISE_MOTION_TEST_KEEP"
"${ARCWISE_PYTHON:-/usr/bin/python3}" "$check" "$out"
