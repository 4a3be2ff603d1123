package site

import (
	"os"
	"path/filepath"
	"testing"
)

// Every file in configs/ must load without a single error.
func TestExampleConfigsLoad(t *testing.T) {
	files, err := filepath.Glob("../configs/*.yaml")
	if err != nil || len(files) == 0 {
		t.Fatalf("no example configs: %v", err)
	}
	for _, f := range files {
		s, err := Load(f)
		if err != nil {
			t.Errorf("%s:\n%v", f, err)
			continue
		}
		if len(s.Terminals) == 0 || len(s.TerminalIndex) != len(s.Terminals) {
			t.Errorf("%s: %d terminals, index %d", f, len(s.Terminals), len(s.TerminalIndex))
		}
	}
	_ = os.Stdout
}
