#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later
# The program's headless contract: --help, --version, --help per command, exit code 2 on usage
# errors. Runs with no display.
set -u
exe="$ARCWISE_EXE"
unset DISPLAY WAYLAND_DISPLAY
fail=0
check() { # expected-rc description command...
  want=$1; shift; what=$1; shift
  "$@" >/tmp/aw-cli-out.$$ 2>&1
  rc=$?
  if [ "$rc" -ne "$want" ]; then
    echo "FAIL: $what: exit $rc, expected $want"; cat /tmp/aw-cli-out.$$; fail=1
  fi
}
check 0 "--help" "$exe" --help
check 0 "--version" "$exe" --version
"$exe" --version | grep -Eq '^arcwise [0-9]+\.[0-9]+\.[0-9]+$' || { echo "FAIL: version format"; fail=1; }
check 2 "unknown command" "$exe" no-such-command
for cmd in $("$exe" --help | awk '/^Commands/{f=1;next} f&&/^  [a-z]/{print $1} f&&/^$/{f=0}'); do
  check 0 "$cmd --help" "$exe" "$cmd" --help
  "$exe" "$cmd" --help | grep -q "Usage: arcwise $cmd" || { echo "FAIL: $cmd --help has no usage line"; fail=1; }
done
rm -f /tmp/aw-cli-out.$$
exit $fail
