// Package influxtest starts a real InfluxDB 1.8 server (influxd) for
// integration tests: loopback only, a free port, every directory inside
// the test's temporary directory, reporting and the usage client off, and
// Flux enabled so that /api/v2/write and /api/v2/query (what the v2 client
// uses) work. v1.8 maps a v2 bucket to "database/retention-policy" and, with
// authentication disabled, accepts an empty token.
package influxtest

import (
	"encoding/json"
	"fmt"
	"io"
	"net"
	"net/http"
	"net/url"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"risewatch/internal/testenv"
)

// InstallHint says how to get the server binary.
const InstallHint = "go install github.com/influxdata/influxdb/cmd/influxd@v1.8.3 (scripts/deps/influx.sh)"

// Database is the database every test server creates; Bucket is its v2 name.
const (
	Database = "risewatch"
	Bucket   = Database + "/autogen"
)

// Server is one running influxd.
type Server struct {
	URL string // http://127.0.0.1:PORT

	t      testing.TB
	bin    string
	dir    string
	config string
	cmd    *exec.Cmd
	exited chan struct{}
}

// Start finds influxd (skipping the test, or failing it under CI, when it is
// missing), starts it in a temporary directory, creates Database and
// registers a cleanup that stops it.
func Start(t testing.TB) *Server {
	t.Helper()
	bin := testenv.LookTool(t, "influxd", InstallHint)
	dir := t.TempDir()
	httpPort, rpcPort := freePort(t), freePort(t)
	s := &Server{t: t, bin: bin, dir: dir, URL: fmt.Sprintf("http://127.0.0.1:%d", httpPort)}
	s.config = filepath.Join(dir, "influxdb.conf")
	conf := fmt.Sprintf(`reporting-disabled = true
bind-address = "127.0.0.1:%d"
[meta]
  dir = %q
[data]
  dir = %q
  wal-dir = %q
  query-log-enabled = false
[coordinator]
  log-queries-after = "0s"
[http]
  enabled = true
  bind-address = "127.0.0.1:%d"
  flux-enabled = true
  log-enabled = false
  auth-enabled = false
[monitor]
  store-enabled = false
[continuous_queries]
  enabled = false
[logging]
  level = "error"
`, rpcPort, filepath.Join(dir, "meta"), filepath.Join(dir, "data"), filepath.Join(dir, "wal"), httpPort)
	if err := os.WriteFile(s.config, []byte(conf), 0o600); err != nil {
		t.Fatal(err)
	}
	s.Restart()
	t.Cleanup(s.kill)
	if _, err := s.InfluxQL("", "CREATE DATABASE "+Database); err != nil {
		t.Fatalf("influxd: create database: %v", err)
	}
	return s
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

// Restart starts the server again on the same port and data directory (it
// must be stopped) and waits until it answers /ping.
func (s *Server) Restart() {
	s.t.Helper()
	if s.cmd != nil {
		s.t.Fatal("influxtest: Restart while running")
	}
	logf, err := os.OpenFile(filepath.Join(s.dir, "influxd.log"), os.O_CREATE|os.O_WRONLY|os.O_APPEND, 0o600)
	if err != nil {
		s.t.Fatal(err)
	}
	cmd := exec.Command(s.bin, "run", "-config", s.config)
	cmd.Stdout, cmd.Stderr = logf, logf
	cmd.Env = append(os.Environ(), "INFLUXDB_DATA_QUERY_LOG_ENABLED=false")
	if err := cmd.Start(); err != nil {
		logf.Close()
		s.t.Fatalf("influxtest: start influxd: %v", err)
	}
	s.cmd = cmd
	s.exited = make(chan struct{})
	go func() { _ = cmd.Wait(); logf.Close(); close(s.exited) }()
	deadline := time.Now().Add(30 * time.Second)
	for time.Now().Before(deadline) {
		select {
		case <-s.exited:
			s.cmd = nil
			s.t.Fatalf("influxtest: influxd exited during start-up; log:\n%s", s.Log())
		default:
		}
		resp, err := http.Get(s.URL + "/ping")
		if err == nil {
			resp.Body.Close()
			if resp.StatusCode == http.StatusNoContent {
				return
			}
		}
		time.Sleep(50 * time.Millisecond)
	}
	s.Stop()
	s.t.Fatalf("influxtest: influxd did not answer /ping within 30 s; log:\n%s", s.Log())
}

// Stop stops the server (SIGTERM, then SIGKILL after 10 s). It is a no-op
// when the server is not running.
func (s *Server) Stop() {
	if s.cmd == nil {
		return
	}
	_ = s.cmd.Process.Signal(syscall.SIGTERM)
	select {
	case <-s.exited:
	case <-time.After(10 * time.Second):
		_ = s.cmd.Process.Kill()
		<-s.exited
	}
	s.cmd = nil
}

// kill ends the server at once (cleanup: the data is thrown away).
func (s *Server) kill() {
	if s.cmd == nil {
		return
	}
	_ = s.cmd.Process.Kill()
	<-s.exited
	s.cmd = nil
}

// Log returns the server's log so far.
func (s *Server) Log() string {
	b, _ := os.ReadFile(filepath.Join(s.dir, "influxd.log"))
	return string(b)
}

// InfluxQL runs a statement through the 1.x /query endpoint (independent of
// the v2 client under test) and returns the first series' values.
func (s *Server) InfluxQL(db, q string) ([][]any, error) {
	form := url.Values{"q": {q}}
	if db != "" {
		form.Set("db", db)
	}
	resp, err := http.PostForm(s.URL+"/query", form)
	if err != nil {
		return nil, err
	}
	defer resp.Body.Close()
	body, _ := io.ReadAll(resp.Body)
	if resp.StatusCode != http.StatusOK {
		return nil, fmt.Errorf("%s: %s", resp.Status, strings.TrimSpace(string(body)))
	}
	var out struct {
		Results []struct {
			Error  string `json:"error"`
			Series []struct {
				Values [][]any `json:"values"`
			} `json:"series"`
		} `json:"results"`
	}
	if err := json.Unmarshal(body, &out); err != nil {
		return nil, fmt.Errorf("decode %q: %w", body, err)
	}
	if len(out.Results) == 0 {
		return nil, nil
	}
	if out.Results[0].Error != "" {
		return nil, fmt.Errorf("%s", out.Results[0].Error)
	}
	if len(out.Results[0].Series) == 0 {
		return nil, nil
	}
	return out.Results[0].Series[0].Values, nil
}

// Write posts line protocol to the 1.x /write endpoint of Database
// (nanosecond precision), for seeding test data.
func (s *Server) Write(lines string) error {
	resp, err := http.Post(s.URL+"/write?db="+Database+"&precision=ns", "text/plain", strings.NewReader(lines))
	if err != nil {
		return err
	}
	defer resp.Body.Close()
	if resp.StatusCode != http.StatusNoContent {
		b, _ := io.ReadAll(resp.Body)
		return fmt.Errorf("write: %s: %s", resp.Status, b)
	}
	return nil
}
