package main

import (
	"bufio"
	"context"
	"encoding/json"
	"errors"
	"io"
	"net/http"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"

	"risewatch/store"
)

// childEnv makes the test binary act as risewatch (TestMain).
const childEnv = "RISEWATCH_TEST_AS_MAIN"

func TestMain(m *testing.M) {
	if os.Getenv(childEnv) == "1" {
		os.Exit(mainWithArgs(os.Args[1:], os.Stdout, os.Stderr))
	}
	os.Exit(m.Run())
}

// child is `risewatch run` in its own process, its log lines collected.
type child struct {
	cmd   *exec.Cmd
	mu    sync.Mutex
	lines []string
	done  chan error
}

func startChild(t *testing.T, args ...string) *child {
	t.Helper()
	c := &child{cmd: exec.Command(os.Args[0], args...), done: make(chan error, 1)}
	c.cmd.Env = append(os.Environ(), childEnv+"=1")
	stderr, err := c.cmd.StderrPipe()
	if err != nil {
		t.Fatal(err)
	}
	if err := c.cmd.Start(); err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() {
		if c.cmd.ProcessState == nil {
			_ = c.cmd.Process.Kill()
			<-c.done
		}
	})
	go func() {
		sc := bufio.NewScanner(stderr)
		sc.Buffer(make([]byte, 1<<16), 1<<20)
		for sc.Scan() {
			c.mu.Lock()
			c.lines = append(c.lines, sc.Text())
			c.mu.Unlock()
		}
		_, _ = io.Copy(io.Discard, stderr)
		c.done <- c.cmd.Wait()
	}()
	return c
}

// waitLine waits for a log line matching re after line index from and
// returns it and its index.
func (c *child) waitLine(t *testing.T, from int, re *regexp.Regexp, limit time.Duration) (string, int) {
	t.Helper()
	deadline := time.Now().Add(limit)
	for time.Now().Before(deadline) {
		c.mu.Lock()
		for i := from; i < len(c.lines); i++ {
			if re.MatchString(c.lines[i]) {
				l := c.lines[i]
				c.mu.Unlock()
				return l, i
			}
		}
		c.mu.Unlock()
		time.Sleep(50 * time.Millisecond)
	}
	c.mu.Lock()
	defer c.mu.Unlock()
	t.Fatalf("no log line matching %q within %s; log:\n%s", re, limit, strings.Join(c.lines, "\n"))
	return "", 0
}

var listenRE = regexp.MustCompile(`msg="dashboard listening" addr=(\S+)`)

func httpGet(t *testing.T, url string) string {
	t.Helper()
	resp, err := http.Get(url)
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	b, _ := io.ReadAll(resp.Body)
	if resp.StatusCode != http.StatusOK {
		t.Fatalf("GET %s: %s", url, resp.Status)
	}
	return string(b)
}

// TestRunSignals runs `risewatch run` as a child process on a day of the
// simulated campus and signals it as an operator (or systemd) would:
// SIGHUP with a broken configuration is refused with the reason logged and
// the old configuration keeps serving; SIGHUP with a good changed
// configuration takes effect; SIGTERM stores the state and checkpoints and
// exits with status 0.
func TestRunSignals(t *testing.T) {
	dir := t.TempDir()
	if err := runSim(context.Background(), []string{"--days", "1", "--out", dir}, io.Discard, io.Discard); err != nil {
		t.Fatalf("sim: %v", err)
	}
	cfgPath := filepath.Join(dir, "site.yaml")
	data := filepath.Join(dir, "data")
	orig, err := os.ReadFile(cfgPath)
	if err != nil {
		t.Fatal(err)
	}
	good := string(orig) + "\ndaemon:\n  listen: 127.0.0.1:0\n  persist_every: 2s\n"
	if err := os.WriteFile(cfgPath, []byte(good), 0o644); err != nil {
		t.Fatal(err)
	}
	c := startChild(t, "run", "--config", cfgPath, "--data", data)
	line, at := c.waitLine(t, 0, listenRE, 30*time.Second)
	base := "http://" + listenRE.FindStringSubmatch(line)[1]
	_, at = c.waitLine(t, at, regexp.MustCompile(`msg="backlog analysed"`), 60*time.Second)
	if m := httpGet(t, base+"/metrics"); !strings.Contains(m, `site="Wrenfield College (demo)"`) {
		t.Fatal("/metrics lacks the site label before any reload")
	}

	// A misspelt key: refused with its position, the daemon keeps serving.
	bad := strings.Replace(good, "persist_every: 2s", "persist_evry: 2s", 1)
	if err := os.WriteFile(cfgPath, []byte(bad), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := c.cmd.Process.Signal(syscall.SIGHUP); err != nil {
		t.Fatal(err)
	}
	line, at = c.waitLine(t, at, regexp.MustCompile(`configuration rejected`), 20*time.Second)
	if !strings.Contains(line, "persist_evry") || !regexp.MustCompile(`site\.yaml:\d+:\d+`).MatchString(line) {
		t.Errorf("rejection does not name the bad key and its position: %s", line)
	}
	httpGet(t, base+"/healthz")

	// A good change (the site's name): accepted, the new pipeline serves it.
	renamed := strings.Replace(good, "Wrenfield College (demo)", "Wrenfield College (renamed)", 1)
	if renamed == good {
		t.Fatal("site name not found in the simulator's site file")
	}
	if err := os.WriteFile(cfgPath, []byte(renamed), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := c.cmd.Process.Signal(syscall.SIGHUP); err != nil {
		t.Fatal(err)
	}
	_, at = c.waitLine(t, at, regexp.MustCompile(`new configuration accepted`), 20*time.Second)
	line, at = c.waitLine(t, at, listenRE, 20*time.Second)
	base = "http://" + listenRE.FindStringSubmatch(line)[1]
	if m := httpGet(t, base+"/metrics"); !strings.Contains(m, `site="Wrenfield College (renamed)"`) {
		t.Error("after the accepted reload /metrics does not carry the new site name")
	}

	// SIGTERM: state stored, exit status 0.
	if err := c.cmd.Process.Signal(syscall.SIGTERM); err != nil {
		t.Fatal(err)
	}
	select {
	case err := <-c.done:
		var ee *exec.ExitError
		if errors.As(err, &ee) || err != nil {
			t.Fatalf("exit after SIGTERM: %v", err)
		}
	case <-time.After(30 * time.Second):
		t.Fatal("no exit within 30 s of SIGTERM")
	}
	c.waitLine(t, at, regexp.MustCompile(`msg="state stored"`), time.Second)
	st, err := store.Open(context.Background(), data, store.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	raw, ok, err := st.LoadState(context.Background(), "daemon/all/progress")
	if err != nil || !ok {
		t.Fatalf("no progress state after SIGTERM: %v", err)
	}
	var pr struct {
		LastStep time.Time `json:"last_step"`
	}
	if err := json.Unmarshal(raw, &pr); err != nil || pr.LastStep.IsZero() {
		t.Fatalf("progress state %s: %v", raw, err)
	}
	if _, ok, _ := st.LoadState(context.Background(), "daemon/all/lifecycle"); !ok {
		t.Error("no lifecycle state after SIGTERM")
	}
}
