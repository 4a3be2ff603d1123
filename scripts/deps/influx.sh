# Sourced by scripts/test.sh: InfluxDB 1.8.3 for the collector/influx and
# publish/influx integration tests (Flux over /api/v2, started by the tests).
# Builds from the Go module proxy when missing (about a minute); idempotent.
if ! command -v influxd >/dev/null 2>&1 && [ ! -x "$(go env GOPATH)/bin/influxd" ]; then
  echo "   installing influxd v1.8.3 (go install)"
  go install github.com/influxdata/influxdb/cmd/influxd@v1.8.3 >/dev/null 2>&1 ||
    { echo "influx.sh: go install influxd@v1.8.3 failed" >&2; return 1 2>/dev/null || exit 1; }
fi
