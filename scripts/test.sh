#!/usr/bin/env bash
# The one test command (README: `make test`). Installs everything the tests
# need on a fresh Debian machine, then runs formatting, vet, all tests and a
# bounded fuzz pass. Component install steps live in scripts/deps/:
#   *.apt   Debian package names, one per line
#   *.sh    sourced after apt (npm installs, go install of tools)
set -euo pipefail
cd "$(dirname "$0")/.."
# The patched toolchain (go.mod `toolchain` line) comes from the Go module proxy;
# machines here default to GOTOOLCHAIN=local, which would ignore it.
export GOTOOLCHAIN="${GOTOOLCHAIN_OVERRIDE:-$(sed -n 's/^toolchain //p' go.mod)}"
export PATH="$PATH:$(go env GOPATH)/bin"

sudo_() { if [ "$(id -u)" = 0 ]; then "$@"; else sudo "$@"; fi; }

pkgs=$(cat scripts/deps/*.apt 2>/dev/null | sed 's/#.*//' | tr -s ' \n' '\n' | sort -u | tr '\n' ' ')
missing=""
for p in $pkgs; do dpkg -s "$p" >/dev/null 2>&1 || missing="$missing $p"; done
if [ -n "$missing" ]; then
  echo "== installing Debian packages:$missing"
  sudo_ env DEBIAN_FRONTEND=noninteractive apt-get update -qq
  sudo_ env DEBIAN_FRONTEND=noninteractive apt-get install -y -qq --no-install-recommends $missing >/dev/null
fi
for f in scripts/deps/*.sh; do
  [ -e "$f" ] || continue
  echo "== $f"
  # shellcheck disable=SC1090
  . "$f"
done

echo "== gofmt"
bad=$(gofmt -l $(git ls-files '*.go' 2>/dev/null || find . -name '*.go'))
if [ -n "$bad" ]; then echo "gofmt needed: $bad"; exit 1; fi
echo "== go vet"
go vet ./...
echo "== staticcheck"
staticcheck ./...
echo "== go test"
go test -count=1 -timeout 40m ./...
echo "== govulncheck (offline database from golang.org/x/vulndb)"
govulncheck -db "file://$RISEWATCH_VULNDB" ./...
echo "== fuzz (bounded)"
bash scripts/fuzz.sh "${FUZZTIME:-8s}"
echo "== all tests passed"
