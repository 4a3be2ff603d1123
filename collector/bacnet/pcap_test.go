package bacnet

import (
	"encoding/binary"
	"net/netip"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"

	"risewatch/collector/bacnet/wire"
	"risewatch/internal/testenv"
	"risewatch/sim/bacnetdev"
)

// pcapWriter records datagrams as raw IPv4/UDP packets (libpcap format,
// LINKTYPE_RAW 101) so tshark can dissect what the client sent.
type pcapWriter struct {
	mu   sync.Mutex
	buf  []byte
	from netip.AddrPort
}

func newPcap(from netip.AddrPort) *pcapWriter {
	h := make([]byte, 24)
	binary.LittleEndian.PutUint32(h[0:], 0xa1b2c3d4)
	binary.LittleEndian.PutUint16(h[4:], 2)
	binary.LittleEndian.PutUint16(h[6:], 4)
	binary.LittleEndian.PutUint32(h[16:], 65535)
	binary.LittleEndian.PutUint32(h[20:], 101)
	return &pcapWriter{buf: h, from: from}
}

func (p *pcapWriter) add(to netip.AddrPort, payload []byte) {
	p.mu.Lock()
	defer p.mu.Unlock()
	n := 28 + len(payload)
	pkt := make([]byte, n)
	pkt[0], pkt[8], pkt[9] = 0x45, 64, 17 // IPv4, TTL 64, UDP
	binary.BigEndian.PutUint16(pkt[2:], uint16(n))
	s, d := p.from.Addr().As4(), to.Addr().As4()
	copy(pkt[12:], s[:])
	copy(pkt[16:], d[:])
	var sum uint32
	for i := 0; i < 20; i += 2 {
		sum += uint32(binary.BigEndian.Uint16(pkt[i:]))
	}
	for sum > 0xffff {
		sum = sum&0xffff + sum>>16
	}
	binary.BigEndian.PutUint16(pkt[10:], ^uint16(sum))
	binary.BigEndian.PutUint16(pkt[20:], p.from.Port())
	binary.BigEndian.PutUint16(pkt[22:], to.Port())
	binary.BigEndian.PutUint16(pkt[24:], uint16(8+len(payload)))
	copy(pkt[28:], payload)
	now := time.Now()
	rec := make([]byte, 16)
	binary.LittleEndian.PutUint32(rec[0:], uint32(now.Unix()))
	binary.LittleEndian.PutUint32(rec[4:], uint32(now.Nanosecond()/1000))
	binary.LittleEndian.PutUint32(rec[8:], uint32(n))
	binary.LittleEndian.PutUint32(rec[12:], uint32(n))
	p.buf = append(append(p.buf, rec...), pkt...)
}

type sentFrame struct {
	to      netip.AddrPort
	pdu     wire.PDUType
	service int
}

// TestTsharkDecodesRequests sends every kind of request the client makes,
// records the datagrams and has Wireshark's dissectors (tshark -d
// udp.port==PORT,bvlc) decode them: each must be a well-formed BACnet APDU
// of the intended type and service.
func TestTsharkDecodesRequests(t *testing.T) {
	tshark := testenv.LookTool(t, "tshark", "install the Debian package tshark (scripts/deps/bacnet.apt)")
	s, dev := newSim(t, bacnetdev.DeviceConfig{Instance: 60, MaxAPDU: 206, Segmentation: wire.SegmentedBoth}, 40)
	dev.AddTrendLog(bacnetdev.TrendLogConfig{Instance: 1, Logged: ai(1), BufferSize: 100})
	for i := 0; i < 60; i++ {
		_ = dev.Record(1, time.Date(2025, 3, 1, 0, i, 0, 0, time.UTC), float64(i), [4]bool{})
	}
	var pc *pcapWriter
	var mu sync.Mutex
	var sent []sentFrame
	c := newClient(t, Options{Timeout: time.Second, Sent: func(to netip.AddrPort, f []byte) {
		pc.add(to, f)
		fr, _ := wire.DecodeBVLC(f)
		_, ap, _ := wire.DecodeNPDU(fr.NPDU)
		a, _ := wire.DecodeAPDU(ap)
		mu.Lock()
		sent = append(sent, sentFrame{to, a.Type, int(a.Service)})
		mu.Unlock()
	}})
	pc = newPcap(c.LocalAddr())
	d := discoverOne(t, c, s.Addr(), 60)
	var reads []Read
	for i := 1; i <= 40; i++ {
		reads = append(reads, Read{ai(uint32(i)), pv}, Read{ai(uint32(i)), wire.PropertyRef{Prop: wire.PropStatusFlags, Index: wire.NoIndex}})
	}
	for _, r := range c.ReadMany(ctxT(t), d, reads) {
		if r.Err != nil {
			t.Fatal(r.Err)
		}
	}
	if _, err := c.ReadProperty(ctxT(t), d, wire.ObjectID{Type: wire.ObjectDevice, Instance: 60}, wire.PropertyRef{Prop: wire.PropObjectList, Index: wire.NoIndex}); err != nil {
		t.Fatal(err) // segmented answer: the client sends Segment-ACKs
	}
	tr := &TrendReader{Client: c, Checkpoints: &MemCheckpoints{}, Page: 20}
	if _, err := tr.Backfill(ctxT(t), d, 1, func([]TrendRecord) error { return nil }); err != nil {
		t.Fatal(err)
	}
	file := filepath.Join(t.TempDir(), "client.pcap")
	if err := os.WriteFile(file, pc.buf, 0o644); err != nil {
		t.Fatal(err)
	}
	port := strconv.Itoa(int(s.Addr().Port()))
	cmd := exec.Command(tshark, "-r", file, "-d", "udp.port=="+port+",bvlc", "-T", "fields", "-E", "separator=;",
		"-e", "bvlc.function", "-e", "bacapp.type", "-e", "bacapp.confirmed_service", "-e", "bacapp.unconfirmed_service",
		"-e", "_ws.malformed", "-e", "_ws.expert.severity")
	var stderr strings.Builder
	cmd.Stderr = &stderr
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("tshark: %v\n%s", err, stderr.String())
	}
	lines := strings.Split(strings.TrimSpace(string(out)), "\n")
	if len(lines) != len(sent) {
		t.Fatalf("tshark decoded %d frames, client sent %d:\n%s", len(lines), len(sent), out)
	}
	kinds := map[string]int{}
	for i, ln := range lines {
		f := strings.Split(ln, ";")
		if len(f) < 6 {
			t.Fatalf("frame %d: %q", i+1, ln)
		}
		if f[4] != "" || strings.Contains(f[5], "8388608") { // malformed, or an expert error (PI_ERROR)
			t.Errorf("frame %d is not well formed: %q", i+1, ln)
		}
		want := sent[i]
		if f[1] != strconv.Itoa(int(want.pdu)) {
			t.Errorf("frame %d: APDU type %q, sent %s", i+1, f[1], want.pdu)
		}
		svc := f[2]
		if want.pdu == wire.PDUUnconfirmed {
			svc = f[3]
		}
		if want.pdu == wire.PDUConfirmedRequest || want.pdu == wire.PDUUnconfirmed {
			if svc != strconv.Itoa(want.service) {
				t.Errorf("frame %d: service %q, sent %d", i+1, svc, want.service)
			}
		}
		if want.pdu == wire.PDUConfirmedRequest && !readServices[wire.ConfirmedService(want.service)] {
			t.Errorf("frame %d: confirmed service %d is not a read", i+1, want.service)
		}
		kinds[want.pdu.String()+"/"+svc]++
	}
	for _, k := range []string{"unconfirmed-request/8", "confirmed-request/12", "confirmed-request/14", "confirmed-request/26", "segment-ack/"} {
		if kinds[k] == 0 {
			t.Errorf("no %s frame in the capture (have %v)", k, kinds)
		}
	}
}
