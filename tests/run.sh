#!/usr/bin/env bash
# `npm test`: the same bootstrap as `npm start`, on a throwaway PostgreSQL cluster on other ports
# (never the development data), then every unit, integration and browser test, then one
# `N passed, N failed` line.
set -euo pipefail
root=$(cd "$(dirname "$0")/.." && pwd)
source "$root/src/scripts/common.sh"
cd "$root"

ensure_node_modules "$root"
ensure_debian_package --no-install-recommends chromium /usr/bin/chromium
# outside checkers of the exports (tests/support/outside-checks.ts)
ensure_debian_package --no-install-recommends libimage-exiftool-perl /usr/bin/exiftool
ensure_debian_package --no-install-recommends unzip /usr/bin/unzip
# the contact sheets' PDF is read back with poppler (pdfinfo, pdftotext, pdftoppm)
ensure_debian_package --no-install-recommends poppler-utils /usr/bin/pdftotext
ensure_debian_package libjemalloc2 /usr/lib/x86_64-linux-gnu/libjemalloc.so.2

throwaway_stack "$root" test
trap 'throwaway_cleanup "$root"' EXIT
export DRAWERLIGHT_TEST_RUN="$run"

status=0
# The type check of every .ts and .astro file (`npm run check`) comes with the whole suite; a run of
# a few test files is about their behaviour and skips it (it takes about two minutes here).
if [ $# -eq 0 ]; then
  echo "drawerlight: type check (astro check) ..."
  if ! npx astro check >"$run/logs/check.log" 2>&1; then
    sed 's/\x1b\[[0-9;]*m//g' "$run/logs/check.log" | grep -E -A6 ' - error ' | head -60
    echo "drawerlight: the type check found errors (the whole report: $run/logs/check.log)"
    status=1
  fi
fi

echo "drawerlight: building the app for the tests ..."
build_quietly

npx vitest run --config tests/vitest.config.ts --reporter=default --reporter=json --outputFile="$run/results.json" "$@" || status=$?
node tests/support/summary.mjs "$run/results.json" || status=1
exit $status
