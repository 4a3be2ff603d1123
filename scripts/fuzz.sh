#!/usr/bin/env bash
# Runs every Fuzz* target for a bounded time each (default 8s). Seeds live in
# each package's testdata/fuzz/ and are also run by plain `go test`.
# Minimisation of new inputs is bounded (-fuzzminimizetime): a minimisation
# still running when -fuzztime ends makes go test fail with "context deadline
# exceeded" although nothing failed.
set -euo pipefail
cd "$(dirname "$0")/.."
export GOTOOLCHAIN="${GOTOOLCHAIN_OVERRIDE:-$(sed -n 's/^toolchain //p' go.mod)}"
t="${1:-8s}"
for pkg in $(go list ./...); do
  dir=$(go list -f '{{.Dir}}' "$pkg")
  for fz in $(grep -ho '^func Fuzz[A-Za-z0-9_]*' "$dir"/*_test.go 2>/dev/null | sed 's/^func //' | sort -u); do
    echo "-- $pkg $fz ($t)"
    go test -run '^$' -fuzz "^${fz}\$" -fuzztime "$t" -fuzzminimizetime 200x "$pkg"
  done
done
