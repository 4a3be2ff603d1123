package reliability

import (
	"context"
	"fmt"
	"net/http"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"risewatch/daemon"
	"risewatch/store"
)

// The other half of the security proof lives beside the code it guards:
// collector/bacnet/readonly_test.go proves that no write service exists in
// the BACnet client or its wire encoder, and publish/web's tests cover the
// dashboard's authentication, CSRF and TLS handling.

// TestDefaultListenIsLoopback: a site file without daemon.listen gets a
// loopback address.
func TestDefaultListenIsLoopback(t *testing.T) {
	c := startCampus(t, CampusConfig{Groups: 1, PerGroup: 1})
	s, _ := loadSite(t, c.SiteYAML(""))
	cfg, err := daemon.DecodeConfig(s)
	if err != nil {
		t.Fatal(err)
	}
	if !strings.HasPrefix(cfg.Listen, "127.0.0.1:") {
		t.Errorf("default listen %q, want a 127.0.0.1 address", cfg.Listen)
	}
}

// TestRunRefusesOpenListenWithoutCredentials: `risewatch run --listen
// 0.0.0.0:PORT` without a token or basic-auth password does not start;
// with a token it starts and answers only requests that carry it.
func TestRunRefusesOpenListenWithoutCredentials(t *testing.T) {
	t.Parallel()
	c := startCampus(t, CampusConfig{Groups: 1, PerGroup: 2, PollInterval: 10 * time.Second, Timeout: time.Second, Retries: 1})
	dir := t.TempDir()
	data := filepath.Join(dir, "data")
	cfg := filepath.Join(dir, "site.yaml")
	if err := os.WriteFile(cfg, []byte(c.SiteYAML(fmt.Sprintf("daemon:\n  data_dir: %s\n  web: {token_env: RW_TEST_TOKEN}\n", data))), 0o644); err != nil {
		t.Fatal(err)
	}
	bin := risewatchBin(t)
	open := fmt.Sprintf("0.0.0.0:%d", freePort(t))

	ctx, cancel := context.WithTimeout(context.Background(), 60*time.Second)
	defer cancel()
	cmd := exec.CommandContext(ctx, bin, "run", "--config", cfg, "--listen", open)
	cmd.Env = append(os.Environ(), "RW_TEST_TOKEN=") // named in the file, but empty
	out, err := cmd.CombinedOutput()
	if err == nil {
		t.Fatalf("risewatch run --listen %s without credentials started and exited cleanly:\n%s", open, out)
	}
	if ctx.Err() != nil {
		t.Fatalf("risewatch run --listen %s without credentials kept running", open)
	}
	if s := string(out); !strings.Contains(s, "token") {
		t.Errorf("refusal does not say a token is needed:\n%s", s)
	}
	if _, err := os.Stat(filepath.Join(data, store.FileName)); err == nil {
		t.Errorf("the refused start created a store in %s", data)
	}

	const token = "reliability-test-token-1234"
	ch := startChildOn(t, cfg, filepath.Join(dir, "run.log"), open, []string{"RW_TEST_TOKEN=" + token})
	defer ch.stop()
	for _, tc := range []struct {
		auth string
		want int
	}{{"", http.StatusUnauthorized}, {"Bearer wrong-token", http.StatusUnauthorized}, {"Bearer " + token, http.StatusOK}} {
		req, _ := http.NewRequest(http.MethodGet, ch.url+"/", nil)
		if tc.auth != "" {
			req.Header.Set("Authorization", tc.auth)
		}
		resp, err := http.DefaultClient.Do(req)
		if err != nil {
			t.Fatal(err)
		}
		resp.Body.Close()
		if resp.StatusCode != tc.want {
			t.Errorf("GET / with %q: %s, want %d", tc.auth, resp.Status, tc.want)
		}
	}
}
