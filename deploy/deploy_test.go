package deploy

import (
	"bufio"
	"bytes"
	"errors"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"gopkg.in/yaml.v3"

	"risewatch/internal/testenv"
)

// unitDirectives reads a systemd unit file into section.key -> values.
func unitDirectives(t *testing.T, path string) map[string][]string {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	out := map[string][]string{}
	section := ""
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		line := strings.TrimSpace(sc.Text())
		if line == "" || strings.HasPrefix(line, "#") {
			continue
		}
		if strings.HasPrefix(line, "[") {
			section = strings.Trim(line, "[]")
			continue
		}
		k, v, ok := strings.Cut(line, "=")
		if !ok {
			t.Fatalf("%s: malformed line %q", path, line)
		}
		out[section+"."+k] = append(out[section+"."+k], v)
	}
	return out
}

// TestSystemdUnitHardening checks the hardening a reviewer expects and runs
// systemd-analyze verify on a copy whose ExecStart points at a real build.
func TestSystemdUnitHardening(t *testing.T) {
	unit := filepath.Join("systemd", "risewatch.service")
	d := unitDirectives(t, unit)
	want := map[string]string{
		"Service.DynamicUser":     "yes",
		"Service.ProtectSystem":   "strict",
		"Service.ProtectHome":     "yes",
		"Service.NoNewPrivileges": "yes",
		"Service.Restart":         "on-failure",
		"Service.StateDirectory":  "risewatch",
	}
	for k, v := range want {
		if got := d[k]; len(got) != 1 || got[0] != v {
			t.Errorf("%s: %s = %v, want %q", unit, k, got, v)
		}
	}
	if exec := strings.Join(d["Service.ExecStart"], " "); !strings.Contains(exec, "--data /var/lib/risewatch") {
		t.Errorf("%s: ExecStart %q must keep data in the state directory", unit, exec)
	}
	if _, ok := d["Service.ReadWritePaths"]; ok {
		t.Errorf("%s: no ReadWritePaths expected: StateDirectory is the only writable path", unit)
	}

	analyze := testenv.LookTool(t, "systemd-analyze", "apt-get install systemd")
	bin := filepath.Join(t.TempDir(), "risewatch")
	build := exec.Command("go", "build", "-o", bin, "risewatch/cmd/risewatch")
	if out, err := build.CombinedOutput(); err != nil {
		t.Fatalf("go build: %v\n%s", err, out)
	}
	raw, err := os.ReadFile(unit)
	if err != nil {
		t.Fatal(err)
	}
	copyPath := filepath.Join(t.TempDir(), "risewatch.service")
	if err := os.WriteFile(copyPath, bytes.ReplaceAll(raw, []byte("/usr/local/bin/risewatch"), []byte(bin)), 0o644); err != nil {
		t.Fatal(err)
	}
	out, err := exec.Command(analyze, "verify", copyPath).CombinedOutput()
	if err != nil {
		t.Fatalf("systemd-analyze verify: %v\n%s", err, out)
	}
	// verify prints warnings for unknown directives without failing.
	for _, line := range strings.Split(string(out), "\n") {
		if strings.Contains(line, "Unknown key") || strings.Contains(line, "Unknown section") || strings.Contains(line, "Failed to parse") {
			t.Errorf("systemd-analyze: %s", line)
		}
	}
}

// TestDockerfileLint lints the Dockerfile with the dockerfile-utils linter
// from npm (no container engine runs in CI) and checks the shape we promise:
// multi-stage, static build, non-root final stage.
func TestDockerfileLint(t *testing.T) {
	raw, err := os.ReadFile("Dockerfile")
	if err != nil {
		t.Fatal(err)
	}
	var froms []string
	var lastUser string
	for _, line := range strings.Split(string(raw), "\n") {
		f := strings.Fields(line)
		if len(f) < 2 {
			continue
		}
		switch strings.ToUpper(f[0]) {
		case "FROM":
			froms = append(froms, f[1])
			lastUser = ""
		case "USER":
			lastUser = f[1]
		}
	}
	if len(froms) < 2 {
		t.Errorf("Dockerfile: %d stages, want a multi-stage build", len(froms))
	}
	if lastUser == "" || strings.HasPrefix(lastUser, "0") || strings.HasPrefix(lastUser, "root") {
		t.Errorf("Dockerfile: final stage user %q, want non-root", lastUser)
	}
	if !strings.Contains(string(raw), "CGO_ENABLED=0") {
		t.Error("Dockerfile: binary must be built static (CGO_ENABLED=0)")
	}

	lint := filepath.Join("testdata", "lint", "node_modules", ".bin", "dockerfile-utils")
	if _, err := os.Stat(lint); err != nil {
		testenv.Missing(t, "dockerfile-utils not installed; run (cd deploy/testdata/lint && npm ci)")
	}
	out, err := exec.Command(lint, "lint", "Dockerfile").CombinedOutput()
	if err != nil || len(bytes.TrimSpace(out)) > 0 {
		t.Fatalf("dockerfile-utils lint: %v\n%s", err, out)
	}
	// The linter must be able to fail: a broken Dockerfile is rejected.
	bad := filepath.Join(t.TempDir(), "Dockerfile")
	if err := os.WriteFile(bad, []byte("FROM\nMAINTAINER someone\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	if out, err := exec.Command(lint, "lint", bad).CombinedOutput(); err == nil {
		t.Fatalf("dockerfile-utils accepted a broken Dockerfile:\n%s", out)
	}
}

// TestKubernetesManifests parses every manifest and checks the StatefulSet's
// per-shard volume, non-root security context and probes.
func TestKubernetesManifests(t *testing.T) {
	files, err := filepath.Glob(filepath.Join("kubernetes", "*.yaml"))
	if err != nil || len(files) == 0 {
		t.Fatalf("no manifests: %v", err)
	}
	var sts map[string]any
	for _, f := range files {
		raw, err := os.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		dec := yaml.NewDecoder(bytes.NewReader(raw))
		for {
			var doc map[string]any
			if err := dec.Decode(&doc); errors.Is(err, io.EOF) {
				break
			} else if err != nil {
				t.Fatalf("%s: %v", f, err)
			}
			if doc["apiVersion"] == nil || doc["kind"] == nil {
				t.Errorf("%s: document without apiVersion/kind", f)
			}
			if doc["kind"] == "StatefulSet" {
				sts = doc
			}
		}
	}
	if sts == nil {
		t.Fatal("no StatefulSet manifest")
	}
	get := func(m any, path ...string) any {
		for _, p := range path {
			mm, ok := m.(map[string]any)
			if !ok {
				return nil
			}
			m = mm[p]
		}
		return m
	}
	if v := get(sts, "spec", "volumeClaimTemplates"); v == nil {
		t.Error("StatefulSet: each shard needs its own data volume (volumeClaimTemplates)")
	}
	if v := get(sts, "spec", "template", "spec", "securityContext", "runAsNonRoot"); v != true {
		t.Errorf("StatefulSet: runAsNonRoot = %v", v)
	}
	containers, _ := get(sts, "spec", "template", "spec", "containers").([]any)
	if len(containers) != 1 {
		t.Fatalf("StatefulSet: %d containers", len(containers))
	}
	c := containers[0]
	if get(c, "readinessProbe") == nil || get(c, "livenessProbe") == nil {
		t.Error("StatefulSet: container needs readiness and liveness probes")
	}
	if get(c, "securityContext", "readOnlyRootFilesystem") != true {
		t.Error("StatefulSet: readOnlyRootFilesystem should be true")
	}
}

// TestPrometheusRules runs promtool over the alert rules and their unit tests.
func TestPrometheusRules(t *testing.T) {
	promtool := testenv.LookTool(t, "promtool", "apt-get install prometheus")
	rules := filepath.Join("prometheus", "risewatch-alerts.yml")
	tests := filepath.Join("prometheus", "risewatch-alerts.test.yml")
	for _, args := range [][]string{{"check", "rules", rules}, {"test", "rules", tests}} {
		out, err := exec.Command(promtool, args...).CombinedOutput()
		if err != nil {
			t.Fatalf("promtool %s: %v\n%s", strings.Join(args, " "), err, out)
		}
	}
	// The alertmanager example must be valid too (amtool ships with Debian's
	// prometheus-alertmanager, which we do not install: parse it instead).
	raw, err := os.ReadFile(filepath.Join("alertmanager", "alertmanager.yml"))
	if err != nil {
		t.Fatal(err)
	}
	var am struct {
		Route struct {
			Receiver string `yaml:"receiver"`
		} `yaml:"route"`
		Receivers []struct {
			Name         string           `yaml:"name"`
			EmailConfigs []map[string]any `yaml:"email_configs"`
		} `yaml:"receivers"`
	}
	if err := yaml.Unmarshal(raw, &am); err != nil {
		t.Fatalf("alertmanager.yml: %v", err)
	}
	found := false
	for _, r := range am.Receivers {
		if r.Name == am.Route.Receiver && len(r.EmailConfigs) > 0 {
			found = true
		}
	}
	if !found {
		t.Error("alertmanager.yml: the default route should deliver by e-mail")
	}
}
