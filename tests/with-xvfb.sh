#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later
# Runs a command under its own Xvfb with software GL (Mesa llvmpipe); skips (77) if Xvfb is
# missing. Usage: with-xvfb.sh COMMAND [ARG...]
command -v Xvfb >/dev/null 2>&1 || { echo "skipped: Xvfb not installed" >&2; exit 77; }
export LIBGL_ALWAYS_SOFTWARE=1
export GDK_BACKEND=x11
export GSK_RENDERER="${GSK_RENDERER:-gl}"
export NO_AT_BRIDGE=1
# -displayfd lets Xvfb pick a free display number so parallel tests never collide.
fifo=$(mktemp -u)
mkfifo "$fifo" || exit 1
Xvfb -displayfd 3 -screen 0 1920x1080x24 -nolisten tcp 3>"$fifo" >/dev/null 2>&1 &
xpid=$!
read -r disp <"$fifo"
rm -f "$fifo"
export DISPLAY=":$disp"
"$@"
rc=$?
kill "$xpid" 2>/dev/null
wait "$xpid" 2>/dev/null
exit $rc
