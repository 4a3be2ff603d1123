package reliability

import (
	"io"
	"log/slog"
	"os"
	"path/filepath"
	"testing"

	"risewatch/site"
)

func quietLog() *slog.Logger { return slog.New(slog.NewTextHandler(io.Discard, nil)) }

// loadSite writes y as a site file in a fresh directory and loads it.
func loadSite(t testing.TB, y string) (*site.Site, string) {
	t.Helper()
	dir := t.TempDir()
	path := filepath.Join(dir, "site.yaml")
	if err := os.WriteFile(path, []byte(y), 0o644); err != nil {
		t.Fatal(err)
	}
	s, err := site.Load(path)
	if err != nil {
		t.Fatalf("generated site does not load: %v", err)
	}
	return s, path
}

func startCampus(t testing.TB, cfg CampusConfig) *Campus {
	t.Helper()
	c, err := StartCampus(cfg)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { _ = c.Close() })
	return c
}
