package reliability

import (
	"bufio"
	"context"
	"encoding/json"
	"fmt"
	"io"
	"mime"
	"mime/multipart"
	"mime/quotedprintable"
	"net"
	"net/http"
	"net/mail"
	"net/url"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"

	"risewatch/internal/testenv"
)

var (
	buildOnce sync.Once
	binPath   string
	buildErr  error
	binDir    string
)

// TestMain removes the daemon binary built for the child-process tests.
func TestMain(m *testing.M) {
	code := m.Run()
	if binDir != "" {
		_ = os.RemoveAll(binDir)
	}
	os.Exit(code)
}

// risewatchBin builds cmd/risewatch once per test binary.
func risewatchBin(t testing.TB) string {
	t.Helper()
	buildOnce.Do(func() {
		if binDir, buildErr = os.MkdirTemp("", "reliability-bin-"); buildErr != nil {
			return
		}
		binPath = filepath.Join(binDir, "risewatch")
		cmd := exec.Command("go", "build", "-o", binPath, "risewatch/cmd/risewatch")
		out, err := cmd.CombinedOutput()
		if err != nil {
			buildErr = fmt.Errorf("go build ./cmd/risewatch: %v\n%s", err, out)
		}
	})
	if buildErr != nil {
		t.Fatal(buildErr)
	}
	return binPath
}

func freePort(t testing.TB) int {
	t.Helper()
	l, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	return l.Addr().(*net.TCPAddr).Port
}

// child is one `risewatch run` process.
type child struct {
	t    testing.TB
	cmd  *exec.Cmd
	log  string // its stderr (log) file
	url  string
	done chan struct{}
	err  error
}

// startChild runs `risewatch run --config cfg --listen 127.0.0.1:PORT` and
// waits until /healthz answers.
func startChild(t testing.TB, cfg, logFile string, extra ...string) *child {
	t.Helper()
	return startChildOn(t, cfg, logFile, fmt.Sprintf("127.0.0.1:%d", freePort(t)), nil, extra...)
}

// startChildOn runs `risewatch run` listening on listen (a port on every
// interface is reached through 127.0.0.1) with env added to its environment.
func startChildOn(t testing.TB, cfg, logFile, listen string, env []string, extra ...string) *child {
	t.Helper()
	_, port, _ := net.SplitHostPort(listen)
	args := append([]string{"run", "--config", cfg, "--listen", listen}, extra...)
	cmd := exec.Command(risewatchBin(t), args...)
	cmd.Env = append(os.Environ(), env...)
	return launchChild(t, cmd, logFile, "http://127.0.0.1:"+port, 60*time.Second)
}

// launchChild starts cmd (a daemon serving /healthz at url) with its output
// appended to logFile, kills it with SIGKILL at cleanup, and waits up to
// limit until /healthz answers.
func launchChild(t testing.TB, cmd *exec.Cmd, logFile, url string, limit time.Duration) *child {
	t.Helper()
	lf, err := os.OpenFile(logFile, os.O_CREATE|os.O_WRONLY|os.O_APPEND, 0o644)
	if err != nil {
		t.Fatal(err)
	}
	fmt.Fprintf(lf, "==== start %s\n", time.Now().Format(time.RFC3339Nano))
	c := &child{t: t, cmd: cmd, log: logFile, url: url, done: make(chan struct{})}
	c.cmd.Stdout, c.cmd.Stderr = lf, lf
	if err := c.cmd.Start(); err != nil {
		lf.Close()
		t.Fatal(err)
	}
	go func() { c.err = c.cmd.Wait(); lf.Close(); close(c.done) }()
	t.Cleanup(c.kill9)
	deadline := time.Now().Add(limit)
	for {
		select {
		case <-c.done:
			t.Fatalf("daemon child exited at start (%v):\n%s", c.err, tail(logFile, 30))
		default:
		}
		if resp, err := http.Get(c.url + "/healthz"); err == nil {
			resp.Body.Close()
			return c
		}
		if time.Now().After(deadline) {
			t.Fatalf("daemon child not serving /healthz in %s:\n%s", limit, tail(logFile, 30))
		}
		time.Sleep(20 * time.Millisecond)
	}
}

// kill9 ends the process with SIGKILL (no shutdown code runs).
func (c *child) kill9() {
	if c.cmd.Process == nil {
		return
	}
	select {
	case <-c.done:
		return
	default:
	}
	_ = c.cmd.Process.Signal(syscall.SIGKILL)
	<-c.done
}

// stop sends SIGTERM and waits for a clean exit.
func (c *child) stop() {
	c.t.Helper()
	_ = c.cmd.Process.Signal(syscall.SIGTERM)
	select {
	case <-c.done:
		if c.err != nil {
			c.t.Errorf("risewatch run after SIGTERM: %v\n%s", c.err, tail(c.log, 20))
		}
	case <-time.After(60 * time.Second):
		c.t.Errorf("risewatch run did not stop within 60 s of SIGTERM")
		c.kill9()
	}
}

func tail(path string, n int) string {
	b, _ := os.ReadFile(path)
	lines := strings.Split(strings.TrimRight(string(b), "\n"), "\n")
	if len(lines) > n {
		lines = lines[len(lines)-n:]
	}
	return strings.Join(lines, "\n")
}

// metric sums the samples of a metric at /metrics whose labels contain
// every given `name="value"`; ok is false when there are none.
func (c *child) metric(name string, labels ...string) (v float64, ok bool) {
	text, err := c.scrape()
	if err != nil {
		return 0, false
	}
	return sumMetric(text, name, labels...)
}

// scrape returns the /metrics text.
func (c *child) scrape() (string, error) {
	resp, err := http.Get(c.url + "/metrics")
	if err != nil {
		return "", err
	}
	defer resp.Body.Close()
	b, err := io.ReadAll(resp.Body)
	return string(b), err
}

// sumMetric sums the samples of name in a /metrics text whose labels
// contain every given `name="value"`.
func sumMetric(text, name string, labels ...string) (v float64, ok bool) {
	for len(text) > 0 {
		line := text
		if i := strings.IndexByte(text, '\n'); i >= 0 {
			line, text = text[:i], text[i+1:]
		} else {
			text = ""
		}
		if !strings.HasPrefix(line, name) || (len(line) > len(name) && line[len(name)] != '{' && line[len(name)] != ' ') {
			continue
		}
		match := true
		for _, l := range labels {
			if !strings.Contains(line, l) {
				match = false
			}
		}
		if !match {
			continue
		}
		f := strings.Fields(line)
		x, err := strconv.ParseFloat(f[len(f)-1], 64)
		if err == nil {
			v, ok = v+x, true
		}
	}
	return v, ok
}

// waitFor polls cond every 250 ms up to limit.
func waitFor(t testing.TB, limit time.Duration, what string, cond func() bool, logFile string) {
	t.Helper()
	deadline := time.Now().Add(limit)
	for !cond() {
		if time.Now().After(deadline) {
			t.Fatalf("timed out after %s waiting for %s; log:\n%s", limit, what, tail(logFile, 25))
		}
		time.Sleep(250 * time.Millisecond)
	}
}

// smtpSink is a running testdata/smtpsink.py.
type smtpSink struct {
	cmd     *exec.Cmd
	maildir string
}

func startSMTPSink(t testing.TB, port int, maildir string) *smtpSink {
	t.Helper()
	py := "/usr/bin/python3"
	if _, err := os.Stat(py); err != nil {
		testenv.Missing(t, "/usr/bin/python3 not found; apt-get install python3 python3-aiosmtpd")
	}
	if err := exec.Command(py, "-c", "import aiosmtpd").Run(); err != nil {
		testenv.Missing(t, "python3-aiosmtpd not installed; apt-get install python3-aiosmtpd")
	}
	if err := os.MkdirAll(maildir, 0o755); err != nil {
		t.Fatal(err)
	}
	cmd := exec.Command(py, "testdata/smtpsink.py", "--port", strconv.Itoa(port), "--maildir", maildir)
	out, err := cmd.StdoutPipe()
	if err != nil {
		t.Fatal(err)
	}
	var stderr strings.Builder
	cmd.Stderr = &stderr
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	s := &smtpSink{cmd: cmd, maildir: maildir}
	t.Cleanup(func() { _ = cmd.Process.Kill(); _ = cmd.Wait() })
	ready := make(chan bool, 1)
	go func() {
		sc := bufio.NewScanner(out)
		ready <- sc.Scan() && sc.Text() == "READY"
		_, _ = io.Copy(io.Discard, out)
	}()
	select {
	case ok := <-ready:
		if !ok {
			t.Fatalf("smtpsink.py did not start: %s", stderr.String())
		}
	case <-time.After(20 * time.Second):
		t.Fatalf("smtpsink.py not ready in 20 s: %s", stderr.String())
	}
	return s
}

// receivedMail is one message the SMTP sink stored.
type receivedMail struct {
	file, messageID, subject string
	faults                   []string // fault IDs of its items ("== VAV-1: leaking-valve (opened) ==") and ack commands
}

var (
	ackRE   = regexp.MustCompile(`risewatch ack --fault (\S+)`)
	titleRE = regexp.MustCompile(`(?m)^== (\S+): (\S+) \(`)
)

// mails reads every message in the maildir.
func mails(t testing.TB, dir string) []receivedMail {
	t.Helper()
	files, _ := filepath.Glob(filepath.Join(dir, "*.eml"))
	var out []receivedMail
	for _, f := range files {
		b, err := os.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		m, err := mail.ReadMessage(strings.NewReader(string(b)))
		if err != nil {
			t.Fatalf("%s: %v", f, err)
		}
		rm := receivedMail{file: f, messageID: m.Header.Get("Message-ID"), subject: m.Header.Get("Subject")}
		text := plainText(t, f, m)
		seen := map[string]bool{}
		// A fault raised and closed within one message (another fault
		// explains it) is one item without an ack command.
		var ids []string
		for _, g := range titleRE.FindAllStringSubmatch(text, -1) {
			ids = append(ids, g[1]+"/"+g[2])
		}
		for _, g := range ackRE.FindAllStringSubmatch(text, -1) {
			ids = append(ids, g[1])
		}
		for _, id := range ids {
			if !seen[id] {
				seen[id] = true
				rm.faults = append(rm.faults, id)
			}
		}
		out = append(out, rm)
	}
	return out
}

// plainText is the decoded text/plain part of a message.
func plainText(t testing.TB, file string, m *mail.Message) string {
	t.Helper()
	mt, params, err := mime.ParseMediaType(m.Header.Get("Content-Type"))
	if err != nil || !strings.HasPrefix(mt, "multipart/") {
		b, _ := io.ReadAll(m.Body)
		return string(b)
	}
	mr := multipart.NewReader(m.Body, params["boundary"])
	var text strings.Builder
	for {
		p, err := mr.NextPart()
		if err == io.EOF {
			break
		}
		if err != nil {
			t.Fatalf("%s: %v", file, err)
		}
		var r io.Reader = p
		if strings.EqualFold(p.Header.Get("Content-Transfer-Encoding"), "quoted-printable") {
			r = quotedprintable.NewReader(p)
		}
		if ct := p.Header.Get("Content-Type"); strings.HasPrefix(ct, "text/plain") {
			b, _ := io.ReadAll(r)
			text.Write(b)
		}
	}
	return text.String()
}

// influxSeries runs an InfluxQL query and returns every series (tags and
// rows), unlike influxtest.Server.InfluxQL which returns the first one.
func influxSeries(t testing.TB, base, db, q string) []influxResult {
	t.Helper()
	ctx, cancel := context.WithTimeout(context.Background(), 30*time.Second)
	defer cancel()
	req, err := http.NewRequestWithContext(ctx, http.MethodPost, base+"/query", strings.NewReader(url.Values{"q": {q}, "db": {db}}.Encode()))
	if err != nil {
		t.Fatal(err)
	}
	req.Header.Set("Content-Type", "application/x-www-form-urlencoded")
	resp, err := http.DefaultClient.Do(req)
	if err != nil {
		t.Fatalf("influx query %q: %v", q, err)
	}
	defer resp.Body.Close()
	var out struct {
		Results []struct {
			Error  string         `json:"error"`
			Series []influxResult `json:"series"`
		} `json:"results"`
	}
	if err := json.NewDecoder(resp.Body).Decode(&out); err != nil {
		t.Fatalf("influx query %q: %v", q, err)
	}
	if len(out.Results) == 0 {
		return nil
	}
	if out.Results[0].Error != "" {
		t.Fatalf("influx query %q: %s", q, out.Results[0].Error)
	}
	return out.Results[0].Series
}

type influxResult struct {
	Tags    map[string]string `json:"tags"`
	Columns []string          `json:"columns"`
	Values  [][]any           `json:"values"`
}
