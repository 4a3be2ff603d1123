// Package testenv lets integration tests find the real tools and servers they
// need (influxd, promtool, tshark, chromium, node, an SMTP server). A plain
// `go test ./...` skips a test whose tool is missing, saying how to get it;
// under CI=true a missing tool fails the test instead.
package testenv

import (
	"os"
	"os/exec"
	"path/filepath"
	"testing"
)

// CI reports whether the tests run under CI (CI=true).
func CI() bool { return os.Getenv("CI") == "true" }

// LookTool returns the path of tool, searching PATH and $(go env GOPATH)/bin.
// When it is missing the test is skipped (or failed under CI) with howTo.
func LookTool(t testing.TB, tool, howTo string) string {
	t.Helper()
	if p, err := exec.LookPath(tool); err == nil {
		return p
	}
	for _, dir := range goBinDirs() {
		p := filepath.Join(dir, tool)
		if st, err := os.Stat(p); err == nil && !st.IsDir() {
			return p
		}
	}
	Missing(t, tool+" not found; "+howTo)
	return ""
}

// Missing skips the test, or fails it under CI, with msg.
func Missing(t testing.TB, msg string) {
	t.Helper()
	if CI() {
		t.Fatalf("required under CI=true: %s", msg)
	}
	t.Skipf("skipping: %s (run `make test` to install everything)", msg)
}

func goBinDirs() []string {
	var dirs []string
	if gb := os.Getenv("GOBIN"); gb != "" {
		dirs = append(dirs, gb)
	}
	if gp := os.Getenv("GOPATH"); gp != "" {
		for _, p := range filepath.SplitList(gp) {
			dirs = append(dirs, filepath.Join(p, "bin"))
		}
	}
	if home, err := os.UserHomeDir(); err == nil {
		dirs = append(dirs, filepath.Join(home, "go", "bin"))
	}
	return dirs
}
