package main

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func TestConfigCheck(t *testing.T) {
	var out, errb bytes.Buffer
	if rc := mainWithArgs([]string{"config", "check", "../../configs/example-campus.yaml"}, &out, &errb); rc != 0 {
		t.Fatalf("rc %d\n%s%s", rc, out.String(), errb.String())
	}
	if !strings.HasPrefix(out.String(), "OK ") || !strings.Contains(out.String(), "terminals: 10") {
		t.Errorf("summary:\n%s", out.String())
	}

	bad := filepath.Join(t.TempDir(), "bad.yaml")
	text := "site: {name: x, time_zone: Mars/Olympus}\nloops:\n  - {id: HW, design_supply: 180 cfm, branch_dp: 5 psi}\nterminals:\n  - {id: V1, ahu: AHU-9}\n"
	if err := os.WriteFile(bad, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	out.Reset()
	errb.Reset()
	if rc := mainWithArgs([]string{"config", "check", bad}, &out, &errb); rc != 1 {
		t.Fatalf("rc %d for a bad file", rc)
	}
	lines := strings.Split(strings.TrimSpace(out.String()), "\n")
	want := []string{bad + ":1:28: site: time_zone", bad + ":3:29: loop HW: design_supply", bad + ":5:19: terminal V1: ahu: no AHU named"}
	for _, w := range want {
		found := false
		for _, l := range lines {
			found = found || strings.HasPrefix(l, w)
		}
		if !found {
			t.Errorf("no line starting %q in:\n%s", w, out.String())
		}
	}
	if !strings.Contains(errb.String(), "error(s)") {
		t.Errorf("stderr: %s", errb.String())
	}
	if rc := mainWithArgs([]string{"config"}, &out, &errb); rc != 1 {
		t.Errorf("usage error rc %d", rc)
	}
}
