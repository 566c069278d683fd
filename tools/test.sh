#!/bin/sh
# The whole test suite: format check, lint, type check, tests. Ends with a plain "N passed, N failed" line.
# Long physics validations run only with SPINDRIFT_LONG=1.
set -u
HERE=$(cd "$(dirname "$0")/.." && pwd)
DENO="$HERE/tools/deno/node_modules/.bin/deno"
export DENO_NO_UPDATE_CHECK=1
cd "$HERE" || exit 1
status=0
step() {
  echo "== $1" >&2
}
step "format check (deno fmt --check)"
"$DENO" fmt --check || status=1
step "lint (deno lint)"
"$DENO" lint || status=1
step "type check (deno check)"
"$DENO" check --quiet . || status=1
step "tests (deno test)"
junit=$(mktemp)
# Tests write their databases into a private temporary folder, removed afterwards; what they leave behind is
# counted, so a test that forgets to clean up shows.
scratch=$(mktemp -d "${TMPDIR:-/tmp}/spindrift-tests-XXXXXX")
chmod 755 "$scratch" # a test runs commands as an unprivileged user on files in here
TMPDIR="$scratch" "$DENO" test --quiet --allow-all --parallel --reporter=dot --junit-path="$junit" "$@" || status=1
left=$(find "$scratch" -mindepth 1 -maxdepth 1 | wc -l)
if [ "$left" -gt 0 ]; then
  echo "note: the tests left $left file(s) or folder(s) in their temporary folder (removed now):" >&2
  find "$scratch" -mindepth 1 -maxdepth 1 | head -5 | sed 's/^/  /' >&2
fi
rm -rf "$scratch"
passed=0
failed=0
if [ -s "$junit" ]; then
  tests=$(grep -o '<testsuites [^>]*' "$junit" | grep -o ' tests="[0-9]*"' | grep -o '[0-9]*' | head -1)
  failures=$(grep -o '<testsuites [^>]*' "$junit" | grep -o ' failures="[0-9]*"' | grep -o '[0-9]*' | head -1)
  errors=$(grep -o '<testsuites [^>]*' "$junit" | grep -o ' errors="[0-9]*"' | grep -o '[0-9]*' | head -1)
  skipped=$(grep -c '<skipped' "$junit" || true)
  failed=$(( ${failures:-0} + ${errors:-0} ))
  passed=$(( ${tests:-0} - failed - ${skipped:-0} ))
fi
rm -f "$junit"
if [ "$status" -ne 0 ] && [ "$failed" -eq 0 ]; then
  # fmt, lint or type check failed (or the test run itself broke): count it as a failure.
  failed=1
fi
echo "${passed} passed, ${failed} failed"
exit "$status"
