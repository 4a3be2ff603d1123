package reliability

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"net"
	"net/netip"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"

	"risewatch/collector/bacnet"
	"risewatch/collector/bacnet/wire"
	"risewatch/rules"
	"risewatch/sim"
	"risewatch/sim/bacnetdev"
)

// Committed seed corpora for the fuzz targets of the input layers (BACnet
// decoding, CSV trend files, site configuration, rules files, quantities).
// They live in each target's testdata/fuzz/<Target>/ as "go test fuzz v1"
// files, so plain `go test` runs them and `scripts/fuzz.sh` starts from
// them. TestSeedCorpora checks they are there and well formed;
// RELIABILITY_WRITE_CORPORA=1 regenerates them from real material: frames
// captured from a client talking to simulated devices (every answer kind,
// misbehaviour included), the simulator's trend export and site file, the
// example configurations and the built-in rules.

// corpusTarget is one fuzz target and its argument types.
type corpusTarget struct {
	dir, name string
	args      []string // Go types of the fuzz arguments: "[]byte", "string", "int"
	min       int      // seed files expected
	gen       func(t *testing.T) [][]any
}

var corpusTargets = []corpusTarget{
	{"collector/bacnet/wire", "FuzzDecode", []string{"[]byte"}, 20, bacnetFrames},
	{"collector/bacnet/wire", "FuzzTag", []string{"[]byte"}, 20, bacnetTags},
	{"collector/trendfile", "FuzzReadStream", []string{"[]byte"}, 4, trendFiles},
	{"collector/trendfile", "FuzzNumbers", []string{"string"}, 8, numberCells},
	{"collector/trendfile", "FuzzTimes", []string{"string"}, 8, timeCells},
	{"collector/trendfile", "FuzzScanWords", []string{"string"}, 5, scanRows},
	{"site", "FuzzParse", []string{"[]byte"}, 3, siteFiles},
	{"rules", "FuzzParseRules", []string{"[]byte"}, 4, rulesFiles},
	{"units", "FuzzParse", []string{"string", "int"}, 8, quantities},
}

// encodeCorpus writes one "go test fuzz v1" file.
func encodeCorpus(vals []any) []byte {
	var b strings.Builder
	b.WriteString("go test fuzz v1\n")
	for _, v := range vals {
		switch x := v.(type) {
		case []byte:
			fmt.Fprintf(&b, "[]byte(%s)\n", strconv.Quote(string(x)))
		case string:
			fmt.Fprintf(&b, "string(%s)\n", strconv.Quote(x))
		case int:
			fmt.Fprintf(&b, "int(%d)\n", x)
		}
	}
	return []byte(b.String())
}

func TestSeedCorpora(t *testing.T) {
	write := os.Getenv("RELIABILITY_WRITE_CORPORA") == "1"
	for _, ct := range corpusTargets {
		dir := filepath.Join("..", ct.dir, "testdata", "fuzz", ct.name)
		if write {
			vals := ct.gen(t)
			if err := os.MkdirAll(dir, 0o755); err != nil {
				t.Fatal(err)
			}
			for _, v := range vals {
				b := encodeCorpus(v)
				sum := sha256.Sum256(b)
				if err := os.WriteFile(filepath.Join(dir, "seed-"+hex.EncodeToString(sum[:8])), b, 0o644); err != nil {
					t.Fatal(err)
				}
			}
			t.Logf("%s %s: %d seeds written", ct.dir, ct.name, len(vals))
		}
		files, _ := filepath.Glob(filepath.Join(dir, "seed-*"))
		if len(files) < ct.min {
			t.Errorf("%s: %d seed files, want at least %d (RELIABILITY_WRITE_CORPORA=1 go test ./reliability -run SeedCorpora)", dir, len(files), ct.min)
		}
		for _, f := range files {
			b, err := os.ReadFile(f)
			if err != nil {
				t.Fatal(err)
			}
			lines := strings.Split(strings.TrimRight(string(b), "\n"), "\n")
			if len(lines) != 1+len(ct.args) || lines[0] != "go test fuzz v1" {
				t.Errorf("%s: not a go test fuzz v1 file with %d values", f, len(ct.args))
				continue
			}
			for i, typ := range ct.args {
				if !strings.HasPrefix(lines[1+i], typ+"(") || !strings.HasSuffix(lines[1+i], ")") {
					t.Errorf("%s: value %d is not %s(...)", f, i+1, typ)
				}
			}
		}
	}
}

// bacnetFrames captures every datagram of a client session with simulated
// devices, both directions: discovery, ReadProperty, ReadPropertyMultiple,
// ReadRange of a trend log (segmented and not), and the answers of
// misbehaving devices (Reject, Error, Abort, malformed and duplicated frames).
func bacnetFrames(t *testing.T) [][]any {
	srv, err := bacnetdev.NewServer(bacnetdev.Config{})
	if err != nil {
		t.Fatal(err)
	}
	defer srv.Close()
	var devs []uint32
	add := func(inst uint32, netw uint16, mac byte, m bacnetdev.Misbehaviour, maxAPDU int, seg wire.Segmentation) {
		d, err := srv.AddDevice(bacnetdev.DeviceConfig{Instance: inst, Network: netw, MAC: mac, Misbehaviour: m, MaxAPDU: maxAPDU, Segmentation: seg})
		if err != nil {
			t.Fatal(err)
		}
		for _, o := range terminalObjects() {
			d.AddObject(o)
		}
		d.AddTrendLog(bacnetdev.TrendLogConfig{Instance: 1, Logged: ObjDischarge, BufferSize: 200})
		t0 := time.Date(2025, 1, 14, 8, 0, 0, 0, time.UTC)
		for i := 0; i < 120; i++ {
			_ = d.Record(1, t0.Add(time.Duration(i)*time.Minute), 80+float64(i%7)/4, [4]bool{})
		}
		devs = append(devs, inst)
	}
	add(7001, 0, 0, bacnetdev.Misbehaviour{}, 0, wire.SegmentedBoth)
	add(7002, 2001, 1, bacnetdev.Misbehaviour{RejectRPM: true}, 0, wire.SegmentedBoth)
	add(7003, 2001, 2, bacnetdev.Misbehaviour{Duplicate: true, MalformedFirst: true}, 0, wire.SegmentedBoth)
	add(7004, 2001, 3, bacnetdev.Misbehaviour{}, 50, wire.NoSegmentation)
	add(7005, 2001, 4, bacnetdev.Misbehaviour{}, 480, wire.SegmentedBoth)
	add(7006, 2001, 5, bacnetdev.Misbehaviour{}, 12, wire.NoSegmentation) // answers nothing but Abort

	// A relay between the client and the group records both directions.
	relay, err := net.ListenUDP("udp4", &net.UDPAddr{IP: net.IPv4(127, 0, 0, 1)})
	if err != nil {
		t.Fatal(err)
	}
	defer relay.Close()
	var mu sync.Mutex
	seen := map[string]bool{}
	var frames [][]any
	keep := func(b []byte) {
		mu.Lock()
		defer mu.Unlock()
		if !seen[string(b)] && len(frames) < 200 {
			seen[string(b)] = true
			frames = append(frames, []any{append([]byte(nil), b...)})
		}
	}
	var client netip.AddrPort
	go func() {
		buf := make([]byte, 2048)
		for {
			n, from, err := relay.ReadFromUDPAddrPort(buf)
			if err != nil {
				return
			}
			keep(buf[:n])
			from = netip.AddrPortFrom(from.Addr().Unmap(), from.Port())
			if from == srv.Addr() {
				_, _ = relay.WriteToUDPAddrPort(buf[:n], client)
			} else {
				client = from
				_, _ = relay.WriteToUDPAddrPort(buf[:n], srv.Addr())
			}
		}
	}()
	ctx, cancel := context.WithTimeout(context.Background(), 30*time.Second)
	defer cancel()
	c, err := bacnet.Dial(ctx, bacnet.Options{Bind: "127.0.0.1:0", Timeout: 300 * time.Millisecond, Retries: 1, Logger: quietLog()})
	if err != nil {
		t.Fatal(err)
	}
	defer c.Close()
	ra := relay.LocalAddr().(*net.UDPAddr).AddrPort()
	_, _ = c.Discover(ctx, []netip.AddrPort{ra}, -1, -1, 300*time.Millisecond)
	for i, inst := range devs {
		addr := bacnet.Address{IP: ra}
		if i > 0 {
			addr.Net, addr.MAC = 2001, string([]byte{byte(i)})
		}
		d, err := c.Resolve(ctx, inst, addr)
		if err != nil {
			continue
		}
		reads := []bacnet.Read{}
		for _, o := range append(terminalObjects(), bacnetdev.Object{ID: wire.ObjectID{Type: wire.ObjectAnalogInput, Instance: 99}}) {
			reads = append(reads, bacnet.Read{Object: o.ID, Prop: wire.PropertyRef{Prop: wire.PropPresentValue, Index: wire.NoIndex}},
				bacnet.Read{Object: o.ID, Prop: wire.PropertyRef{Prop: wire.PropStatusFlags, Index: wire.NoIndex}})
		}
		c.ReadMany(ctx, d, reads)
		tr := &bacnet.TrendReader{Client: c, Checkpoints: &bacnet.MemCheckpoints{}, Location: time.UTC}
		_, _ = tr.Backfill(ctx, d, 1, func([]bacnet.TrendRecord) error { return nil })
	}
	time.Sleep(200 * time.Millisecond) // late duplicates
	mu.Lock()
	defer mu.Unlock()
	// Truncations of the longest frames: what a lost datagram tail looks like.
	n := len(frames)
	for i := 0; i < n && i < 10; i++ {
		b := frames[i][0].([]byte)
		if len(b) > 8 {
			frames = append(frames, []any{append([]byte(nil), b[:len(b)*2/3]...)})
		}
	}
	return frames
}

// bacnetTags are the APDU bodies of the captured frames (tag streams).
func bacnetTags(t *testing.T) [][]any {
	var out [][]any
	for _, f := range bacnetFrames(t) {
		b := f[0].([]byte)
		bv, err := wire.DecodeBVLC(b)
		if err != nil {
			continue
		}
		_, apdu, err := wire.DecodeNPDU(bv.NPDU)
		if err != nil {
			continue
		}
		a, err := wire.DecodeAPDU(apdu)
		if err != nil || len(a.Data) == 0 {
			continue
		}
		out = append(out, []any{append([]byte(nil), a.Data...)})
		if len(out) >= 40 {
			break
		}
	}
	return out
}

// trendFiles are the first hours of a simulated day's export, and the same
// rows as a semicolon/decimal-comma export and in the long layout.
func trendFiles(t *testing.T) [][]any {
	lines := demoTrendLines(t)
	head := strings.Join(lines[:min(len(lines), 6)], "")
	var out [][]any
	out = append(out, []any{[]byte(head)})
	semi := strings.ReplaceAll(strings.ReplaceAll(head, ",", ";"), ".", ",")
	out = append(out, []any{[]byte(semi)})
	out = append(out, []any{[]byte(strings.ReplaceAll(head, "\n", "\r\n"))})
	// Long layout from the first rows: timestamp,point,value.
	rows := strings.Split(strings.TrimSpace(head), "\n")
	cols := strings.Split(rows[0], ",")
	var long strings.Builder
	long.WriteString("timestamp,point,value\n")
	for _, r := range rows[1:] {
		cells := strings.Split(r, ",")
		for i := 1; i < len(cells) && i < len(cols) && i < 12; i++ {
			fmt.Fprintf(&long, "%s,%s,%s\n", cells[0], cols[i], cells[i])
		}
	}
	out = append(out, []any{[]byte(long.String())})
	return out
}

// demoTrendLines is the simulator's wide trend export of one demo day, as
// lines with their line ends.
func demoTrendLines(t *testing.T) []string {
	dir := t.TempDir()
	sc, err := sim.DemoScenario()
	if err != nil {
		t.Fatal(err)
	}
	if sc, err = sc.With(1, 0); err != nil {
		t.Fatal(err)
	}
	sm, err := sim.New(sc)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := sm.WriteOutputs(context.Background(), dir); err != nil {
		t.Fatal(err)
	}
	files, _ := filepath.Glob(filepath.Join(dir, sim.TrendDirName, "*.csv"))
	if len(files) == 0 {
		t.Fatal("no trend file")
	}
	b, err := os.ReadFile(files[0])
	if err != nil {
		t.Fatal(err)
	}
	return strings.SplitAfter(string(b), "\n")
}

// scanRows are data rows of the demo trend export without their time cell
// and line end: the comma-separated cells the wide-row scanner reads.
func scanRows(t *testing.T) [][]any {
	lines := demoTrendLines(t)
	var out [][]any
	for _, l := range lines[min(len(lines), 2):min(len(lines), 8)] {
		if _, cells, ok := strings.Cut(strings.TrimRight(l, "\r\n"), ","); ok {
			out = append(out, []any{cells})
		}
	}
	return out
}

func numberCells(*testing.T) [][]any {
	var out [][]any
	for _, s := range []string{"72,5", "1.234,56", "-0.0", "+12", "1E-7", "0x1p-2", "NaN", "inf", "  7.5 ", "72.5°F", "1_000", "١٢"} {
		out = append(out, []any{s})
	}
	return out
}

func timeCells(*testing.T) [][]any {
	var out [][]any
	for _, s := range []string{"2025-01-14T08:00:00Z", "2025-01-14T08:00:00.000-06:00", "2025-03-09T02:30:00-06:00", "2025-01-14T08:00:00+14:00",
		"2025-01-14t08:00:00z", "2025-01-14T08:00", "9999-12-31T23:59:59.999999999Z", "2025-01-14T08:00:00-24:00"} {
		out = append(out, []any{s})
	}
	return out
}

// siteFiles are the example configurations and two generated sites: the
// simulator's campus and a routed BACnet campus.
func siteFiles(t *testing.T) [][]any {
	var out [][]any
	for _, f := range []string{"../configs/minimal.yaml", "../configs/example-campus.yaml"} {
		b, err := os.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		out = append(out, []any{b})
	}
	c := &Campus{Cfg: CampusConfig{Groups: 1, PerGroup: 2}, Loop: Device{ID: "HW-1", Instance: instLoop}}
	ip := netip.MustParseAddrPort("127.0.0.1:47808")
	c.AHUs = []Device{{ID: AHUID(0), Instance: instAHU0, Addr: bacnet.Address{IP: ip, Net: 1000, MAC: "\xfa"}}}
	for i := 0; i < 2; i++ {
		c.Terminals = append(c.Terminals, Device{ID: TerminalID(i), Instance: instTerminal0 + uint32(i), Addr: bacnet.Address{IP: ip, Net: 1000, MAC: string([]byte{byte(i + 1)})}})
	}
	c.Loop.Addr = bacnet.Address{IP: ip, Net: 1000, MAC: "\xfb"}
	out = append(out, []any{[]byte(c.SiteYAML("daemon:\n  listen: 127.0.0.1:9470\n  step: 1m\n"))})
	dir := t.TempDir()
	sc, err := sim.DemoScenario()
	if err != nil {
		t.Fatal(err)
	}
	if sc, err = sc.With(1, 0); err != nil {
		t.Fatal(err)
	}
	sm, err := sim.New(sc)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := sm.WriteOutputs(context.Background(), dir); err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(filepath.Join(dir, sim.SiteFile))
	if err != nil {
		t.Fatal(err)
	}
	out = append(out, []any{bytes.ReplaceAll(b, []byte(dir), []byte("/srv/risewatch"))})
	return out
}

func rulesFiles(*testing.T) [][]any {
	return [][]any{
		{rules.BuiltinYAML()},
		{[]byte("overrides:\n  - id: g36-valve-leak\n    thresholds: {dat_above_sat: 4 F}\n    only: [\"VAV-2-*\"]\n  - id: g36-valve-leak\n    disabled: true\n    only: [\"VAV-9-*\"]\n")},
		{[]byte("heating_season: {from: 09-15, to: 05-15}\nmax_gap: 10m\nrules:\n  - id: site-low-dat\n    kind: low-discharge\n    severity: 3\n    gates: [plant_on, occupied]\n    when: {all: [{field: valve, op: '>=', value: 90 %}, {field: dat_c, minus: zone_c, op: '<', value: 5 F}]}\n    for: 2h\n")},
		{[]byte("rules:\n  - id: \"\"\n    kind: no-such-kind\n    severity: -1\n    when: {field: nope, op: '~', value: 12 parsecs}\n")},
		{[]byte("rules:\n  - &r {id: a, kind: hunting, severity: 3, when: {field: valve, op: '>', value: 1}}\n  - *r\n")},
	}
}

func quantities(*testing.T) [][]any {
	var out [][]any
	for i, s := range []string{"55 °F", "12.8 °C", "-40 F", "273.15 K", "2.5 gpm", "0.16 L/s", "30 MBH", "1,000 cfm", "8\"", "6 in.", "0.5 psid", "1e9 cfm", "NaN F", "-0 %"} {
		out = append(out, []any{s, i % 11})
	}
	return out
}
