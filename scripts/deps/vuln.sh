# govulncheck and an offline copy of the Go vulnerability database. The
# database is built from the golang.org/x/vulndb module (served by the Go
# module proxy) with its own indexdb tool, because vuln.go.dev is not
# reachable from the build machines. Bump VULNDB_VERSION to refresh it.
VULNDB_VERSION=v0.0.0-20261105234957-e22db6528018
GOVULNCHECK_VERSION=v1.9.0
export RISEWATCH_VULNDB="${RISEWATCH_VULNDB:-$HOME/.cache/risewatch/vulndb-$VULNDB_VERSION}"
if ! command -v govulncheck >/dev/null 2>&1; then
  go install "golang.org/x/vuln/cmd/govulncheck@$GOVULNCHECK_VERSION"
fi
if [ ! -f "$RISEWATCH_VULNDB/index/db.json" ]; then
  go mod download "golang.org/x/vulndb@$VULNDB_VERSION"
  rm -rf "$RISEWATCH_VULNDB.tmp"
  go run "golang.org/x/vulndb/cmd/indexdb@$VULNDB_VERSION" \
    -vulns "$(go env GOMODCACHE)/golang.org/x/vulndb@$VULNDB_VERSION/data/osv" \
    -out "$RISEWATCH_VULNDB.tmp"
  mv "$RISEWATCH_VULNDB.tmp" "$RISEWATCH_VULNDB"
fi
