package deploy

import (
	"encoding/json"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
	"time"

	"risewatch/coilmodel"
	"risewatch/fdd"
	"risewatch/internal/testenv"
	"risewatch/publish/metrics"
	"risewatch/rules"
	"risewatch/site"
)

// exportedNames exercises every metric family of publish/metrics once and
// returns the names the registry exports.
func exportedNames(t *testing.T) map[string]bool {
	t.Helper()
	s := &site.Site{Name: "Larkspur Commons", Loops: []site.Loop{{ID: "HW-1"}}, AHUs: []site.AHU{{ID: "AHU-1"}},
		Terminals: []site.Terminal{{ID: "VAV-1-03", AHU: "AHU-1", Loop: "HW-1", Coil: coilmodel.Coil{Rows: 1}}},
		LoopIndex: map[string]int{"HW-1": 0}, AHUIndex: map[string]int{"AHU-1": 0}, TerminalIndex: map[string]int{"VAV-1-03": 0}}
	m, err := metrics.New(s, metrics.Options{})
	if err != nil {
		t.Fatal(err)
	}
	m.Source("bacnet-main").ReadOK(time.Millisecond, time.Now(), 8)
	m.BACnet("bacnet-main").TrendLost(1)
	m.SetInfluxBuffer(10, 1000)
	m.SetOutboxPending("email", 1)
	m.StepDone(time.Millisecond)
	m.ObserveTransition(&rules.Transition{FaultID: "VAV-1-03/leaking-valve", Entity: "VAV-1-03", Kind: fdd.KindLeakingValve,
		From: rules.StatePending, To: rules.StateOpen, AHU: "AHU-1", Loop: "HW-1"})
	fams, err := m.Registry().Gather()
	if err != nil {
		t.Fatal(err)
	}
	out := map[string]bool{}
	for _, f := range fams {
		out[f.GetName()] = true
		if f.GetType().String() == "HISTOGRAM" {
			for _, suf := range []string{"_bucket", "_sum", "_count"} {
				out[f.GetName()+suf] = true
			}
		}
	}
	return out
}

var metricRef = regexp.MustCompile(`\brisewatch_[a-z_]+\b`)

// TestDeployFilesNameRealMetrics checks that the alert rules and the Grafana
// dashboard only use metric names the daemon actually exports.
func TestDeployFilesNameRealMetrics(t *testing.T) {
	names := exportedNames(t)
	files := []string{filepath.Join("prometheus", "risewatch-alerts.yml")}
	g, _ := filepath.Glob(filepath.Join("grafana", "*.json"))
	files = append(files, g...)
	for _, f := range files {
		raw, err := os.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		seen := 0
		for _, n := range metricRef.FindAllString(string(raw), -1) {
			seen++
			if !names[n] {
				t.Errorf("%s uses %s, which publish/metrics does not export", f, n)
			}
		}
		if seen == 0 {
			t.Errorf("%s names no risewatch metric", f)
		}
	}
}

// TestGrafanaDashboard checks the dashboard's structure and has promtool
// parse every panel query (with the template variables filled in) by
// wrapping them in a throw-away recording-rule file.
func TestGrafanaDashboard(t *testing.T) {
	raw, err := os.ReadFile(filepath.Join("grafana", "risewatch-coils.json"))
	if err != nil {
		t.Fatal(err)
	}
	var d struct {
		UID    string `json:"uid"`
		Panels []struct {
			ID      int    `json:"id"`
			Title   string `json:"title"`
			Targets []struct {
				Expr string `json:"expr"`
			} `json:"targets"`
		} `json:"panels"`
	}
	if err := json.Unmarshal(raw, &d); err != nil {
		t.Fatalf("dashboard JSON: %v", err)
	}
	if d.UID == "" || len(d.Panels) < 10 {
		t.Fatalf("dashboard uid %q, %d panels", d.UID, len(d.Panels))
	}
	var rules strings.Builder
	rules.WriteString("groups:\n  - name: grafana-queries\n    rules:\n")
	ids := map[int]bool{}
	for _, p := range d.Panels {
		if ids[p.ID] {
			t.Errorf("duplicate panel id %d", p.ID)
		}
		ids[p.ID] = true
		if len(p.Targets) == 0 {
			t.Errorf("panel %q has no query", p.Title)
		}
		for i, tg := range p.Targets {
			q := strings.NewReplacer("$site", ".*", "$terminal", ".*").Replace(tg.Expr)
			fmt.Fprintf(&rules, "      - record: grafana:panel%d:q%d\n        expr: %q\n", p.ID, i, q)
		}
	}
	promtool := testenv.LookTool(t, "promtool", "apt-get install prometheus")
	f := filepath.Join(t.TempDir(), "queries.yml")
	if err := os.WriteFile(f, []byte(rules.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	if out, err := exec.Command(promtool, "check", "rules", f).CombinedOutput(); err != nil {
		t.Fatalf("promtool rejects a dashboard query: %v\n%s", err, out)
	}
}
