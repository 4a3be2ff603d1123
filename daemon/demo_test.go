package daemon

import (
	"context"
	"io"
	"mime"
	"mime/multipart"
	"net/mail"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
	"time"

	"github.com/chromedp/chromedp"

	"risewatch/internal/browsertest"
)

// startDemo runs RunDemo with a short history on a free loopback port.
func startDemo(t *testing.T, days int) (info DemoInfo, stop func()) {
	t.Helper()
	ctx, cancel := context.WithCancel(context.Background())
	ready := make(chan DemoInfo, 1)
	done := make(chan error, 1)
	go func() {
		done <- RunDemo(ctx, DemoOptions{DataDir: t.TempDir(), Listen: "127.0.0.1:0", Days: days, Forward: 2, Speed: 600,
			Logger: quietLog(), Ready: func(in DemoInfo) { ready <- in }})
	}()
	select {
	case info = <-ready:
	case err := <-done:
		cancel()
		t.Fatalf("demo stopped: %v", err)
	case <-time.After(30 * time.Second):
		cancel()
		t.Fatal("demo not ready in 30 s")
	}
	return info, func() {
		cancel()
		select {
		case err := <-done:
			if err != nil {
				t.Errorf("demo: %v", err)
			}
		case <-time.After(20 * time.Second):
			t.Error("demo did not stop in 20 s")
		}
	}
}

var faultRow = regexp.MustCompile(`VAV-[LQM]-\d+`)

// TestDemoSmoke starts the demo, waits until the dashboard lists a fault
// and a message is in the mail spool, then loads each page in headless
// chromium (when installed) and keeps a screenshot of each.
func TestDemoSmoke(t *testing.T) {
	info, stop := startDemo(t, 3)
	defer stop()
	waitFor(t, 45*time.Second, "the dashboard to list a fault", func() bool {
		p := get(t, info.URL)
		i := strings.Index(p, `id="faults"`)
		return i >= 0 && faultRow.MatchString(p[i:])
	})
	page := get(t, info.URL)
	fault := faultRow.FindString(page[strings.Index(page, `id="faults"`):])
	waitFor(t, 20*time.Second, "a message in the mail spool", func() bool {
		m, _ := filepath.Glob(filepath.Join(info.MailSpool, "*.eml"))
		return len(m) > 0
	})
	// The demo campus is a US site: its e-mail, like its pages and report,
	// reads IP first.
	var alert string
	waitFor(t, 20*time.Second, "an alert e-mail in the mail spool", func() bool {
		m, _ := filepath.Glob(filepath.Join(info.MailSpool, "*.eml"))
		for _, name := range m {
			if text := mailText(t, name); strings.Contains(text, "== VAV-") {
				alert = text
				return true
			}
		}
		return false
	})
	if !strings.Contains(alert, " °F (") || strings.Contains(alert, " K (") {
		t.Errorf("demo alert e-mail does not read IP first:\n%.600s", alert)
	}
	browse(t, info.URL, fault)
}

// mailText is the decoded text/plain part of the message in file name.
func mailText(t *testing.T, name string) string {
	t.Helper()
	f, err := os.Open(name)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	msg, err := mail.ReadMessage(f)
	if err != nil {
		t.Fatalf("%s: %v", name, err)
	}
	_, params, err := mime.ParseMediaType(msg.Header.Get("Content-Type"))
	if err != nil {
		t.Fatalf("%s: %v", name, err)
	}
	mr := multipart.NewReader(msg.Body, params["boundary"])
	for {
		p, err := mr.NextPart() // decodes quoted-printable parts
		if err != nil {
			t.Fatalf("%s: no text/plain part: %v", name, err)
		}
		if strings.HasPrefix(p.Header.Get("Content-Type"), "text/plain") {
			b, err := io.ReadAll(p)
			if err != nil {
				t.Fatalf("%s: %v", name, err)
			}
			return string(b)
		}
	}
}

// browse loads every page in headless chromium, checks what a person reads
// there and takes a screenshot (kept in RISEWATCH_SCREENSHOTS when set).
func browse(t *testing.T, base, terminal string) {
	ctx := browsertest.Start(t, 60*time.Second)
	shots := browsertest.ScreenshotDir(t)
	pages := []struct {
		name, path, sel string
		want            []string
	}{
		{"demo-overview", "/", "#faults", []string{terminal}},
		{"demo-terminal", "/terminals/" + terminal, "main", []string{terminal, "Healthy rise at high command", "risewatch relearn"}},
		{"demo-sources", "/sources", "#sources", []string{DemoSourceName, "bacnet"}},
	}
	for _, p := range pages {
		if err := chromedp.Do(ctx, chromedp.Navigate(base+strings.TrimPrefix(p.path, "/")), chromedp.WaitVisible(chromedp.CSS(p.sel))); err != nil {
			t.Fatalf("%s: %v", p.path, err)
		}
		text, err := chromedp.Run(ctx, chromedp.Text(chromedp.CSS(p.sel)))
		if err != nil {
			t.Fatalf("%s: %v", p.path, err)
		}
		for _, w := range p.want {
			if !strings.Contains(text, w) {
				t.Errorf("%s %s: text lacks %q", p.path, p.sel, w)
			}
		}
		png, err := chromedp.Run(ctx, chromedp.FullScreenshot(100))
		if err != nil {
			t.Fatalf("%s: screenshot: %v", p.path, err)
		}
		if len(png) < 5000 {
			t.Errorf("%s: screenshot only %d bytes", p.path, len(png))
		}
		if err := os.WriteFile(filepath.Join(shots, p.name+".png"), png, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	if err := chromedp.Do(ctx, chromedp.Navigate(base+"terminals/"+terminal), chromedp.WaitVisible(chromedp.CSS("svg.chart"))); err != nil {
		t.Fatalf("terminal page charts: %v", err)
	}
	lines, err := chromedp.Run(ctx, chromedp.Evaluate[int](`document.querySelectorAll("svg.chart polyline").length`))
	if err != nil {
		t.Fatal(err)
	}
	if lines == 0 {
		t.Errorf("terminal %s: charts have no lines (hourly series missing)", terminal)
	}
}
