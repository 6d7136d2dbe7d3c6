#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later
# The exe_wrapper of `meson test --setup valgrind` (docs/ROBUSTNESS.md): memcheck over our own
# programs only. A compiled test runs under valgrind directly, and so do the programs it
# starts (arcwise) except system tools. A test script (or /usr/bin/python3 SCRIPT) is not
# itself run under valgrind (the shell or Python would be checked instead of our code): it
# runs as is, with ARCWISE_EXE
# pointing at a wrapper that starts arcwise under valgrind. Every report goes to a log file,
# so an error is caught even where a script expects arcwise to fail; any report fails the test.
set -u
[ $# -ge 1 ] || { echo "valgrind-wrap: no program given" >&2; exit 2; }
logs=$(mktemp -d "${TMPDIR:-/tmp}/arcwise-vg-XXXXXX") || exit 2
trap 'rm -rf "$logs"' EXIT
opts="--error-exitcode=99 --leak-check=full --show-leak-kinds=definite,indirect \
--errors-for-leak-kinds=definite,indirect --trace-children=yes \
--trace-children-skip=/usr/*,/bin/* --log-file=$logs/vg.%p.log --quiet"
export ARCWISE_UNDER_VALGRIND=1

# A script, or a system interpreter (/usr/bin/python3 SCRIPT): not ours to check.
case $1 in
  /usr/*|/bin/*) ours=0 ;;
  *) if head -c 2 "$1" 2>/dev/null | grep -q '^#!'; then ours=0; else ours=1; fi ;;
esac
if [ $ours -eq 0 ]; then
  if [ -n "${ARCWISE_EXE:-}" ]; then
    cat > "$logs/arcwise" <<WRAP
#!/bin/sh
exec valgrind $opts "$ARCWISE_EXE" "\$@"
WRAP
    chmod +x "$logs/arcwise"
    ARCWISE_EXE=$logs/arcwise
    export ARCWISE_EXE
  fi
  "$@"
else
  # shellcheck disable=SC2086 # the options are words on purpose
  valgrind $opts "$@"
fi
status=$?

# --quiet leaves a log empty unless memcheck reported something.
bad=0
for f in "$logs"/vg.*.log; do
  [ -s "$f" ] || continue
  bad=1
  cat "$f" >&2
done
if [ $bad -ne 0 ]; then
  echo "valgrind-wrap: memcheck reported errors (above)" >&2
  exit 99
fi
exit $status
