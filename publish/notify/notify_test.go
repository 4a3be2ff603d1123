package notify

import (
	"bufio"
	"bytes"
	"context"
	"crypto/ecdsa"
	"crypto/elliptic"
	"crypto/rand"
	"crypto/tls"
	"crypto/x509"
	"crypto/x509/pkix"
	"encoding/pem"
	"fmt"
	"io"
	"log/slog"
	"math/big"
	"mime"
	"mime/multipart"
	"net"
	"net/mail"
	"os"
	"os/exec"
	"path/filepath"
	"sort"
	"strings"
	"sync"
	"testing"
	"time"

	"risewatch/fdd"
	"risewatch/internal/testenv"
	"risewatch/rules"
	"risewatch/store"
)

// memQueue is an in-memory Queue with the store's semantics, for tests that
// inject failures; the restart test uses the real store.
type memQueue struct {
	mu    sync.Mutex
	items map[string]*store.OutboxItem
	sent  map[string]bool
	now   func() time.Time
}

func newMemQueue(now func() time.Time) *memQueue {
	return &memQueue{items: map[string]*store.OutboxItem{}, sent: map[string]bool{}, now: now}
}

func (q *memQueue) Enqueue(_ context.Context, key, ch string, p []byte) error {
	q.mu.Lock()
	defer q.mu.Unlock()
	if _, ok := q.items[key]; ok {
		return nil
	}
	t := q.now()
	q.items[key] = &store.OutboxItem{Key: key, Channel: ch, Payload: p, CreatedAt: t, DueAt: t}
	return nil
}

func (q *memQueue) DueOn(_ context.Context, ch string, now time.Time, limit int) ([]store.OutboxItem, error) {
	q.mu.Lock()
	defer q.mu.Unlock()
	var out []store.OutboxItem
	for k, it := range q.items {
		if it.Channel == ch && !q.sent[k] && !it.DueAt.After(now) {
			out = append(out, *it)
		}
	}
	sort.Slice(out, func(i, j int) bool {
		return out[i].CreatedAt.Before(out[j].CreatedAt) || (out[i].CreatedAt.Equal(out[j].CreatedAt) && out[i].Key < out[j].Key)
	})
	if len(out) > limit {
		out = out[:limit]
	}
	return out, nil
}

func (q *memQueue) MarkSent(_ context.Context, key string, _ time.Time) error {
	q.mu.Lock()
	defer q.mu.Unlock()
	q.sent[key] = true
	return nil
}

func (q *memQueue) MarkFailed(_ context.Context, key string, cause error, retry time.Time) error {
	q.mu.Lock()
	defer q.mu.Unlock()
	if it, ok := q.items[key]; ok {
		it.Attempts++
		it.DueAt = retry
		it.LastError = cause.Error()
	}
	return nil
}

// smtpServer is a running testdata/smtpd.py process.
type smtpServer struct {
	addr    string
	maildir string
	certPEM []byte
}

const (
	testUser = "alerts@larkspur.example"
	testPass = "s3cret-Pa55"
)

func selfSigned(t *testing.T, dir string) (certFile, keyFile string, certPEM []byte) {
	t.Helper()
	key, err := ecdsa.GenerateKey(elliptic.P256(), rand.Reader)
	if err != nil {
		t.Fatal(err)
	}
	tmpl := &x509.Certificate{
		SerialNumber: big.NewInt(1),
		Subject:      pkix.Name{CommonName: "localhost"},
		NotBefore:    time.Now().Add(-time.Hour),
		NotAfter:     time.Now().Add(24 * time.Hour),
		DNSNames:     []string{"localhost"},
		IPAddresses:  []net.IP{net.ParseIP("127.0.0.1")},
		KeyUsage:     x509.KeyUsageDigitalSignature,
		ExtKeyUsage:  []x509.ExtKeyUsage{x509.ExtKeyUsageServerAuth},
	}
	der, err := x509.CreateCertificate(rand.Reader, tmpl, tmpl, &key.PublicKey, key)
	if err != nil {
		t.Fatal(err)
	}
	kb, err := x509.MarshalECPrivateKey(key)
	if err != nil {
		t.Fatal(err)
	}
	certPEM = pem.EncodeToMemory(&pem.Block{Type: "CERTIFICATE", Bytes: der})
	certFile, keyFile = filepath.Join(dir, "cert.pem"), filepath.Join(dir, "key.pem")
	if err := os.WriteFile(certFile, certPEM, 0o600); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(keyFile, pem.EncodeToMemory(&pem.Block{Type: "EC PRIVATE KEY", Bytes: kb}), 0o600); err != nil {
		t.Fatal(err)
	}
	return
}

func freePort(t *testing.T) int {
	l, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	return l.Addr().(*net.TCPAddr).Port
}

func startSMTP(t *testing.T, failFirst int) *smtpServer {
	t.Helper()
	py := "/usr/bin/python3"
	if _, err := os.Stat(py); err != nil {
		testenv.Missing(t, "/usr/bin/python3 not found; apt-get install python3 python3-aiosmtpd")
	}
	if err := exec.Command(py, "-c", "import aiosmtpd").Run(); err != nil {
		testenv.Missing(t, "python3-aiosmtpd not installed; apt-get install python3-aiosmtpd")
	}
	dir := t.TempDir()
	maildir := filepath.Join(dir, "mail")
	if err := os.Mkdir(maildir, 0o755); err != nil {
		t.Fatal(err)
	}
	cert, key, certPEM := selfSigned(t, dir)
	port := freePort(t)
	cmd := exec.Command(py, "testdata/smtpd.py", "--port", fmt.Sprint(port), "--maildir", maildir,
		"--cert", cert, "--key", key, "--user", testUser, "--password", testPass, "--fail-first", fmt.Sprint(failFirst))
	out, err := cmd.StdoutPipe()
	if err != nil {
		t.Fatal(err)
	}
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() {
		_ = cmd.Process.Signal(os.Interrupt)
		done := make(chan struct{})
		go func() { _ = cmd.Wait(); close(done) }()
		select {
		case <-done:
		case <-time.After(5 * time.Second):
			_ = cmd.Process.Kill()
		}
	})
	ready := make(chan bool, 1)
	go func() {
		sc := bufio.NewScanner(out)
		for sc.Scan() {
			if sc.Text() == "READY" {
				ready <- true
				return
			}
		}
		ready <- false
	}()
	select {
	case ok := <-ready:
		if !ok {
			t.Fatalf("smtpd.py did not start: %s", stderr.String())
		}
	case <-time.After(15 * time.Second):
		t.Fatalf("smtpd.py did not become ready: %s", stderr.String())
	}
	return &smtpServer{addr: fmt.Sprintf("127.0.0.1:%d", port), maildir: maildir, certPEM: certPEM}
}

func (s *smtpServer) messages(t *testing.T) []*mail.Message {
	t.Helper()
	files, _ := filepath.Glob(filepath.Join(s.maildir, "msg-*.eml"))
	sort.Strings(files)
	var out []*mail.Message
	for _, f := range files {
		raw, err := os.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		m, err := mail.ReadMessage(bytes.NewReader(raw))
		if err != nil {
			t.Fatalf("%s: %v", f, err)
		}
		out = append(out, m)
	}
	return out
}

func (s *smtpServer) sender(auth string) *SMTPSender {
	pool := x509.NewCertPool()
	pool.AppendCertsFromPEM(s.certPEM)
	return &SMTPSender{
		Cfg: SMTPConfig{Addr: s.addr, StartTLS: "required", Auth: auth, Username: testUser, PasswordEnv: "RISEWATCH_TEST_SMTP_PASSWORD", Timeout: 10 * time.Second},
		TLS: &tls.Config{RootCAs: pool},
	}
}

// parts returns the decoded text and HTML parts of m.
func parts(t *testing.T, m *mail.Message) (text, html string) {
	t.Helper()
	mt, params, err := mime.ParseMediaType(m.Header.Get("Content-Type"))
	if err != nil || mt != "multipart/alternative" {
		t.Fatalf("Content-Type %q: %v", m.Header.Get("Content-Type"), err)
	}
	mr := multipart.NewReader(m.Body, params["boundary"])
	for {
		p, err := mr.NextPart()
		if err == io.EOF {
			break
		}
		if err != nil {
			t.Fatal(err)
		}
		b, _ := io.ReadAll(p) // multipart decodes quoted-printable
		switch {
		case strings.HasPrefix(p.Header.Get("Content-Type"), "text/plain"):
			text = string(b)
		case strings.HasPrefix(p.Header.Get("Content-Type"), "text/html"):
			html = string(b)
		}
	}
	return
}

type clock struct {
	mu sync.Mutex
	t  time.Time
}

func (c *clock) now() time.Time      { c.mu.Lock(); defer c.mu.Unlock(); return c.t }
func (c *clock) add(d time.Duration) { c.mu.Lock(); c.t = c.t.Add(d); c.mu.Unlock() }

func leak(id string, at time.Time) rules.Transition {
	return rules.Transition{
		FaultID: id + "/leaking-valve", Entity: id, Kind: fdd.KindLeakingValve, From: rules.StatePending, To: rules.StateOpen,
		At: at, Since: at.Add(-45 * time.Minute), Severity: 2, Confidence: 0.92, AHU: "AHU-1", Loop: "HW-1",
		Evidence: rules.Evidence{ObservedRiseK: 4.2, ExpectedRiseK: 0, ValveFrac: 0, AirflowM3s: 0.118, LeakFlowFrac: 0.06},
		Impact:   rules.Impact{WastedHeatW: 590, AddedCoolingW: 590, WeeklyHeatKWh: 55, WeeklyCoolKWh: 55, WeeklyCost: 7.15},
		Message:  "Valve commanded closed but the air leaves 7.6 °F warmer than supply.",
		Causes:   []string{"valve seat worn or debris under the seat", "actuator not closing fully"},
		Checks:   []string{"close the valve by override and watch discharge temperature", "check actuator stroke and linkage"},
	}
}

func testConfig() Config {
	c := Config{
		SMTP:     SMTPConfig{Addr: "127.0.0.1:25", Auth: "plain", Username: testUser, PasswordEnv: "RISEWATCH_TEST_SMTP_PASSWORD"},
		From:     "risewatch@larkspur.example",
		Routes:   []Route{{Name: "operators", To: []string{"ops@larkspur.example"}}},
		Renotify: 24 * time.Hour,
		GroupFor: 5 * time.Minute,
		LinkBase: "http://127.0.0.1:9470",
		IP:       true,
		Currency: "USD",
	}
	if err := c.Validate(); err != nil {
		panic(err)
	}
	return c
}

var t0 = time.Date(2026, 1, 14, 10, 0, 0, 0, time.UTC)

func TestGroupedAlertOverRealSMTPWithSTARTTLSAndAuth(t *testing.T) {
	for _, auth := range []string{"plain", "login"} {
		t.Run(auth, func(t *testing.T) {
			srv := startSMTP(t, 0)
			t.Setenv("RISEWATCH_TEST_SMTP_PASSWORD", testPass)
			clk := &clock{t: t0}
			q := newMemQueue(clk.now)
			var logs bytes.Buffer
			n := New(testConfig(), "Larkspur Commons", q, srv.sender(auth), clk.now, slog.New(slog.NewTextHandler(&logs, nil)))
			ctx := context.Background()
			ts := []rules.Transition{leak("VAV-1-03", t0), leak("VAV-1-07", t0)}
			ts[1].Impact.WeeklyCost = 11.4
			if err := n.Handle(ctx, ts); err != nil {
				t.Fatal(err)
			}
			// Not yet grouped: the group wait has not passed.
			if err := n.Flush(ctx); err != nil {
				t.Fatal(err)
			}
			if sent, err := n.Deliver(ctx); err != nil || sent != 0 {
				t.Fatalf("before group wait: sent %d, %v", sent, err)
			}
			clk.add(6 * time.Minute)
			if err := n.Flush(ctx); err != nil {
				t.Fatal(err)
			}
			if sent, err := n.Deliver(ctx); err != nil || sent != 1 {
				t.Fatalf("sent %d, %v; want one grouped message", sent, err)
			}
			// Nothing more to send.
			if sent, err := n.Deliver(ctx); err != nil || sent != 0 {
				t.Fatalf("second delivery: sent %d, %v", sent, err)
			}
			msgs := srv.messages(t)
			if len(msgs) != 1 {
				t.Fatalf("server received %d messages, want 1", len(msgs))
			}
			m := msgs[0]
			if got := m.Header.Get("X-TLS"); got != "yes" {
				t.Errorf("message not sent over TLS: %q", got)
			}
			if got := m.Header.Get("X-Auth-User"); got != testUser {
				t.Errorf("authenticated user %q", got)
			}
			if !strings.Contains(m.Header.Get("Subject"), "2 opened") {
				t.Errorf("subject %q", m.Header.Get("Subject"))
			}
			text, html := parts(t, m)
			for _, want := range []string{
				"VAV-1-03: leaking-valve", "VAV-1-07: leaking-valve",
				"valve command 0 %", "airflow 250 cfm (118.0 L/s)", // 0.118 m³/s × 2118.88 cfm per m³/s = 250.0 cfm
				"estimated leak flow 6 % of design",
				"about USD 11.40 a week", "What to check first:", "close the valve by override",
				// 55 kWh / 29.3071 kWh per therm = 1.88; 55 kWh × 3412.14 Btu/kWh / 12,000 Btu per ton-h = 15.6
				"about 1.9 therm (55 kWh) of heat a week", "about 15.6 ton-h (55 kWh) of cooling a week",
				"http://127.0.0.1:9470/faults/VAV-1-03%2Fleaking-valve/ack",
				"risewatch ack --fault VAV-1-03/leaking-valve",
				"advisory only", "scald",
			} {
				if !strings.Contains(text, want) {
					t.Errorf("text part lacks %q:\n%s", want, text)
				}
			}
			// Ranked by weekly cost: the dearer fault first.
			if strings.Index(text, "VAV-1-07") > strings.Index(text, "VAV-1-03") {
				t.Error("faults not ranked by weekly cost")
			}
			if !strings.Contains(html, "<li>close the valve by override and watch discharge temperature</li>") || !strings.Contains(html, "scald") {
				t.Errorf("html part incomplete:\n%s", html)
			}
			if strings.Contains(logs.String(), testPass) {
				t.Error("the SMTP password appeared in the logs")
			}
		})
	}
}

func TestRetryWhenServerRefusesThenAccepts(t *testing.T) {
	srv := startSMTP(t, 2) // first two DATA commands get 451
	t.Setenv("RISEWATCH_TEST_SMTP_PASSWORD", testPass)
	clk := &clock{t: t0}
	q := newMemQueue(clk.now)
	n := New(testConfig(), "Larkspur Commons", q, srv.sender("plain"), clk.now, slog.New(slog.NewTextHandler(io.Discard, nil)))
	ctx := context.Background()
	if err := n.Handle(ctx, []rules.Transition{leak("VAV-2-01", t0)}); err != nil {
		t.Fatal(err)
	}
	clk.add(10 * time.Minute)
	if err := n.Flush(ctx); err != nil {
		t.Fatal(err)
	}
	if sent, err := n.Deliver(ctx); sent != 0 || err == nil {
		t.Fatalf("first try: sent %d, err %v; want a temporary failure", sent, err)
	}
	// Not due again until the back-off passes.
	if sent, _ := n.Deliver(ctx); sent != 0 {
		t.Fatal("retried before the back-off")
	}
	clk.add(time.Minute)
	if sent, err := n.Deliver(ctx); sent != 0 || err == nil {
		t.Fatalf("second try: sent %d, err %v", sent, err)
	}
	clk.add(2 * time.Minute)
	if sent, err := n.Deliver(ctx); sent != 1 || err != nil {
		t.Fatalf("third try: sent %d, err %v", sent, err)
	}
	if got := len(srv.messages(t)); got != 1 {
		t.Fatalf("server stored %d messages, want exactly 1", got)
	}
}

func TestDroppedConnectionKeepsMessageQueued(t *testing.T) {
	// In-process fault injection: a listener that accepts and hangs up.
	l, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	go func() {
		for {
			c, err := l.Accept()
			if err != nil {
				return
			}
			c.Close()
		}
	}()
	clk := &clock{t: t0}
	q := newMemQueue(clk.now)
	s := &SMTPSender{Cfg: SMTPConfig{Addr: l.Addr().String(), StartTLS: "required", Auth: "none", Timeout: 2 * time.Second}}
	n := New(testConfig(), "Larkspur Commons", q, s, clk.now, slog.New(slog.NewTextHandler(io.Discard, nil)))
	ctx := context.Background()
	_ = n.Handle(ctx, []rules.Transition{leak("VAV-2-02", t0)})
	clk.add(10 * time.Minute)
	_ = n.Flush(ctx)
	if sent, err := n.Deliver(ctx); sent != 0 || err == nil {
		t.Fatalf("sent %d, err %v; want failure", sent, err)
	}
	items, _ := q.DueOn(ctx, ChannelMail, clk.now().Add(time.Hour), 10)
	if len(items) != 1 || items[0].Attempts != 1 {
		t.Fatalf("queued after failure: %+v", items)
	}
}

func TestRestartNeitherLosesNorRepeats(t *testing.T) {
	srv := startSMTP(t, 0)
	t.Setenv("RISEWATCH_TEST_SMTP_PASSWORD", testPass)
	dir := t.TempDir()
	ctx := context.Background()
	clk := &clock{t: time.Now()}
	open := func() *store.Store {
		st, err := store.Open(ctx, dir, store.Options{})
		if err != nil {
			t.Fatal(err)
		}
		return st
	}
	// Run 1: the fault opens, the event is queued, then the process stops.
	st := open()
	n := New(testConfig(), "Larkspur Commons", st, srv.sender("plain"), clk.now, nil)
	if err := n.Handle(ctx, []rules.Transition{leak("VAV-3-04", t0)}); err != nil {
		t.Fatal(err)
	}
	st.Close()
	// Run 2: after the restart the queued event is grouped and sent once.
	clk.add(10 * time.Minute)
	st = open()
	n = New(testConfig(), "Larkspur Commons", st, srv.sender("plain"), clk.now, nil)
	if err := n.Handle(ctx, []rules.Transition{leak("VAV-3-04", t0)}); err != nil { // replayed transition: same key
		t.Fatal(err)
	}
	if err := n.Flush(ctx); err != nil {
		t.Fatal(err)
	}
	if sent, err := n.Deliver(ctx); sent != 1 || err != nil {
		t.Fatalf("sent %d, %v", sent, err)
	}
	st.Close()
	// Run 3: nothing left to send.
	st = open()
	defer st.Close()
	n = New(testConfig(), "Larkspur Commons", st, srv.sender("plain"), clk.now, nil)
	_ = n.Flush(ctx)
	if sent, err := n.Deliver(ctx); sent != 0 || err != nil {
		t.Fatalf("after restart: sent %d, %v", sent, err)
	}
	if got := len(srv.messages(t)); got != 1 {
		t.Fatalf("server stored %d messages, want 1", got)
	}
	recs, err := st.Notifications(ctx, "VAV-3-04/leaking-valve")
	if err != nil || len(recs) != 1 || recs[0].Recipient != "ops@larkspur.example" {
		t.Fatalf("notification record: %+v, %v", recs, err)
	}
}

// recSender records what would have been sent (for logic-only tests).
type recSender struct{ mails []Mail }

func (r *recSender) Send(_ context.Context, m Mail) error { r.mails = append(r.mails, m); return nil }

func TestQuietHoursHoldUntilMorning(t *testing.T) {
	loc, err := time.LoadLocation("America/Chicago")
	if err != nil {
		t.Fatal(err)
	}
	cfg := testConfig()
	cfg.Location = loc
	cfg.Quiet = QuietHours{Start: "22:00", End: "06:30"}
	cfg.Routes = append(cfg.Routes, Route{Name: "oncall", To: []string{"oncall@larkspur.example"}, IgnoreQuiet: true, MaxSeverity: 1})
	evening := time.Date(2026, 1, 14, 23, 10, 0, 0, loc)
	clk := &clock{t: evening}
	q := newMemQueue(clk.now)
	rs := &recSender{}
	n := New(cfg, "Larkspur Commons", q, rs, clk.now, slog.New(slog.NewTextHandler(io.Discard, nil)))
	ctx := context.Background()
	urgent := leak("VAV-1-09", evening)
	urgent.Severity = 1
	_ = n.Handle(ctx, []rules.Transition{urgent})
	clk.add(10 * time.Minute)
	_ = n.Flush(ctx)
	if sent, _ := n.Deliver(ctx); sent != 1 || rs.mails[0].To[0] != "oncall@larkspur.example" {
		t.Fatalf("during quiet hours: sent %d to %v; want only the on-call route", sent, rs.mails)
	}
	clk.t = time.Date(2026, 1, 15, 6, 29, 0, 0, loc)
	if sent, _ := n.Deliver(ctx); sent != 0 {
		t.Fatal("sent before quiet hours ended")
	}
	clk.t = time.Date(2026, 1, 15, 6, 30, 0, 0, loc)
	if sent, _ := n.Deliver(ctx); sent != 1 || rs.mails[1].To[0] != "ops@larkspur.example" {
		t.Fatalf("at 06:30: sent %d", sent)
	}
}

func TestRemindersStopWhenAcknowledged(t *testing.T) {
	clk := &clock{t: t0}
	q := newMemQueue(clk.now)
	rs := &recSender{}
	n := New(testConfig(), "Larkspur Commons", q, rs, clk.now, slog.New(slog.NewTextHandler(io.Discard, nil)))
	ctx := context.Background()
	f := leak("VAV-1-03", t0)
	for _, at := range []time.Time{t0.Add(time.Hour), t0.Add(25 * time.Hour), t0.Add(26 * time.Hour), t0.Add(30 * time.Hour)} {
		if err := n.Remind(ctx, []rules.Transition{f}, at); err != nil {
			t.Fatal(err)
		}
	}
	clk.add(31 * time.Hour)
	_ = n.Flush(ctx)
	_, _ = n.Deliver(ctx)
	if len(rs.mails) != 1 || !strings.Contains(string(rs.mails[0].Data), "still open") {
		t.Fatalf("want exactly one reminder in the first day, got %d", len(rs.mails))
	}
	acked := f
	acked.To = rules.StateAcked
	_ = n.Remind(ctx, []rules.Transition{acked}, t0.Add(50*time.Hour))
	clk.add(time.Hour)
	_ = n.Flush(ctx)
	_, _ = n.Deliver(ctx)
	if len(rs.mails) != 1 {
		t.Fatalf("acknowledged fault was reminded again: %d messages", len(rs.mails))
	}
}

func TestDailyDigestOncePerDay(t *testing.T) {
	cfg := testConfig()
	cfg.Routes = []Route{{Name: "manager", To: []string{"fm@larkspur.example"}, Digest: true}}
	cfg.DigestHour = 7
	clk := &clock{t: time.Date(2026, 1, 14, 6, 0, 0, 0, time.UTC)}
	q := newMemQueue(clk.now)
	rs := &recSender{}
	n := New(cfg, "Larkspur Commons", q, rs, clk.now, slog.New(slog.NewTextHandler(io.Discard, nil)))
	ctx := context.Background()
	open := []rules.Transition{leak("VAV-1-03", t0), leak("VAV-2-05", t0)}
	_ = n.Handle(ctx, open) // digest routes get no immediate message
	for _, h := range []int{0, 1, 2, 5} {
		clk.t = time.Date(2026, 1, 14, 6+h, 0, 0, 0, time.UTC)
		_ = n.Digest(ctx, open)
		_ = n.Flush(ctx)
		_, _ = n.Deliver(ctx)
	}
	if len(rs.mails) != 1 || !strings.Contains(string(rs.mails[0].Data), "daily digest, 2 open") {
		t.Fatalf("want one digest listing 2 faults, got %d", len(rs.mails))
	}
}

func TestConfigValidation(t *testing.T) {
	bad := Config{SMTP: SMTPConfig{Addr: "nohost", Auth: "cram"}, From: "nobody", Quiet: QuietHours{Start: "25:00", End: "06:00"}}
	err := bad.Validate()
	if err == nil {
		t.Fatal("invalid config accepted")
	}
	for _, want := range []string{"smtp.addr", "smtp.auth", "from", "routes", "quiet_hours"} {
		if !strings.Contains(err.Error(), want) {
			t.Errorf("error lacks %q: %v", want, err)
		}
	}
}

// TestAlertMessageInConfiguredUnitOrder: the rule's message in an alert is
// the one with the configured units first; a transition stored without an
// IP-first message falls back to the SI-first one.
func TestAlertMessageInConfiguredUnitOrder(t *testing.T) {
	tr := leak("VAV-1-03", time.Date(2026, 1, 14, 9, 0, 0, 0, time.UTC))
	tr.Message, tr.MessageIP = "air 4.2 K (7.6 °F) warmer than supply", "air 7.6 °F (4.2 K) warmer than supply"
	for _, ip := range []bool{false, true} {
		c := testConfig()
		c.IP = ip
		want := tr.Message
		if ip {
			want = tr.MessageIP
		}
		if got := c.itemFor(Event{Type: EventOpened, T: tr}, tr.At).Message; got != want {
			t.Errorf("ip=%v: alert message %q, want %q", ip, got, want)
		}
	}
	old := tr
	old.MessageIP = ""
	c := testConfig()
	if got := c.itemFor(Event{Type: EventOpened, T: old}, old.At).Message; got != old.Message {
		t.Errorf("stored without an IP-first message: %q, want %q", got, old.Message)
	}
}
