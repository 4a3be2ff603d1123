package daemon

import (
	"errors"
	"fmt"
	"os"
	"strings"
	"testing"

	"risewatch/site"
)

// TestExampleDaemonSection: the example campus's daemon section decodes,
// and its shards each select terminals.
func TestExampleDaemonSection(t *testing.T) {
	s, c, err := Load("../configs/example-campus.yaml")
	if err != nil {
		t.Fatal(err)
	}
	if c.Notify == nil || len(c.Notify.Routes) != 3 || c.Report.Schedule != "0 6 * * MON" {
		t.Errorf("decoded %+v", c)
	}
	total := 0
	for _, sh := range c.Shards {
		sub, err := SelectShard(s, c, sh.Name)
		if err != nil {
			t.Fatal(err)
		}
		total += len(sub.Terminals)
	}
	if total != len(s.Terminals) {
		t.Errorf("shards cover %d terminals, site has %d", total, len(s.Terminals))
	}
}

// TestDaemonSectionErrors: mistakes are reported with file:line:col.
func TestDaemonSectionErrors(t *testing.T) {
	minimal, err := os.ReadFile("../configs/minimal.yaml")
	if err != nil {
		t.Fatal(err)
	}
	base := strings.TrimRight(string(minimal), "\n") + "\n"
	l := strings.Count(base, "\n") + 1 // line of "daemon:"
	pos := func(line, col int) string { return fmt.Sprintf("t.yaml:%d:%d: ", l+line, col) }
	cases := []struct{ daemon, want string }{
		{"daemon:\n  listen: 127.0.0.1:9470\n  lisen: x\n", pos(2, 3) + "daemon: unknown key \"lisen\" (did you mean listen?)"},
		{"daemon:\n  step: fast\n", pos(1, 1)},
		{"daemon:\n  step: 1s\n", pos(1, 9) + "daemon: step 1s"},
		{"daemon:\n  web: {token_env: \"my secret\"}\n", "is not an environment variable name"},
		{"daemon:\n  report: {schedule: \"61 * * * *\"}\n", "daemon: report: schedule"},
		{"daemon:\n  mail_spool: /tmp/x\n", "mail_spool needs a notify"},
		{"daemon:\n  notify: {from: nobody}\n", "daemon: notify: "},
		{"daemon:\n  report:\n    readiness: {supply: 300 F}\n", "daemon: report: readiness: supply 300 F: must be 77 to 230"},
		{"daemon:\n  report:\n    readiness: {delta_t: 20 F}\n", "readiness: supply is required"},
		{"daemon:\n  report:\n    readiness:\n      supply: 120 F\n      branch_dp: 5 cfm\n", pos(4, 18) + "daemon: report: readiness: branch_dp: "},
		{"daemon:\n  report:\n    paper: legal\n", pos(2, 12) + "daemon: report: paper \"legal\": want letter or a4"},
		{"daemon:\n  memory_limit: lots\n", pos(1, 17) + "daemon: memory_limit \"lots\": expected auto, off or a size"},
		{"daemon:\n  memory_limit: 4MiB\n", pos(1, 17) + "daemon: memory_limit \"4MiB\": below 16MiB"},
	}
	for _, tc := range cases {
		s, err := site.Parse("t.yaml", []byte(base+tc.daemon))
		if err != nil {
			t.Fatalf("site: %v", err)
		}
		_, err = DecodeConfig(s)
		var list site.ErrorList
		if !errors.As(err, &list) {
			t.Errorf("%q: err %v, want an ErrorList", tc.daemon, err)
			continue
		}
		if !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%q: %v\nwant %q", tc.daemon, err, tc.want)
		}
	}
}

// TestMemoryLimit: memory_limit decodes to the limit the process applies:
// auto from the terminal count, an explicit size, or none.
func TestMemoryLimit(t *testing.T) {
	minimal, err := os.ReadFile("../configs/minimal.yaml")
	if err != nil {
		t.Fatal(err)
	}
	base := strings.TrimRight(string(minimal), "\n") + "\n"
	cases := []struct {
		section string
		want    int64
		ok      bool
	}{
		{"", MemLimitBase + 5000*MemLimitPerTerminal, true},
		{"daemon:\n  memory_limit: auto\n", MemLimitBase + 5000*MemLimitPerTerminal, true},
		{"daemon:\n  memory_limit: 160MiB\n", 160 << 20, true},
		{"daemon:\n  memory_limit: 1.5 GiB\n", 3 << 29, true},
		{"daemon:\n  memory_limit: 200MB\n", 200e6, true},
		{"daemon:\n  memory_limit: \"off\"\n", 0, false},
		{"daemon:\n  memory_limit: off\n", 0, false},
	}
	for _, tc := range cases {
		s, err := site.Parse("t.yaml", []byte(base+tc.section))
		if err != nil {
			t.Fatalf("site: %v", err)
		}
		c, err := DecodeConfig(s)
		if err != nil {
			t.Fatalf("%q: %v", tc.section, err)
		}
		got, ok := c.MemoryLimitFor(5000)
		if got != tc.want || ok != tc.ok {
			t.Errorf("%q: limit %d, %v; want %d, %v", tc.section, got, ok, tc.want, tc.ok)
		}
		if tc.section == "" {
			// A small site gets the floor, not a limit its fixed heap fills.
			if got, _ := c.MemoryLimitFor(10); got != MemLimitFloor {
				t.Errorf("10 terminals: auto limit %d, want the floor %d", got, MemLimitFloor)
			}
		}
	}
}
