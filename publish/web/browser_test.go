package web

import (
	"net/http/httptest"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/chromedp/chromedp"

	"risewatch/internal/browsertest"
)

// TestDashboardInChromium loads each page in a real browser, checks what a
// person would read, submits the acknowledge form and keeps screenshots.
func TestDashboardInChromium(t *testing.T) {
	b := newTestBackend()
	s, err := New(Config{IP: true}, b, quiet())
	if err != nil {
		t.Fatal(err)
	}
	ts := httptest.NewServer(s.Handler())
	defer ts.Close()
	ctx := browsertest.Start(t, 90*time.Second)
	shots := browsertest.ScreenshotDir(t)
	pages := []struct {
		path, sel string
		want      []string
	}{
		{"/", "#faults", []string{"VAV-1-03", "leaking-valve", "USD 5.93"}},
		{"/terminals/VAV-1-03", "#coil", []string{"10 FPI", "2"}},
		{"/sources", "#sources", []string{"exports", "trendfile"}},
	}
	for _, p := range pages {
		if err := chromedp.Do(ctx, chromedp.Navigate(ts.URL+p.path), chromedp.WaitVisible(chromedp.CSS(p.sel))); err != nil {
			t.Fatalf("%s: %v", p.path, err)
		}
		text, err := chromedp.Run(ctx, chromedp.Text(chromedp.CSS(p.sel)))
		if err != nil {
			t.Fatalf("%s: %v", p.path, err)
		}
		png, err := chromedp.Run(ctx, chromedp.FullScreenshot(100))
		if err != nil {
			t.Fatalf("%s: screenshot: %v", p.path, err)
		}
		for _, w := range p.want {
			if !strings.Contains(text, w) {
				t.Errorf("%s %s: text lacks %q: %q", p.path, p.sel, w, text)
			}
		}
		if len(png) < 5000 {
			t.Errorf("%s: screenshot only %d bytes", p.path, len(png))
		}
		name := strings.Trim(strings.ReplaceAll(p.path, "/", "_"), "_")
		if name == "" {
			name = "overview"
		}
		if err := os.WriteFile(filepath.Join(shots, name+".png"), png, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	// The terminal page has SVG charts with polylines.
	if err := chromedp.Do(ctx, chromedp.Navigate(ts.URL+"/terminals/VAV-1-07"), chromedp.WaitVisible(chromedp.CSS("svg.chart"))); err != nil {
		t.Fatal(err)
	}
	n, err := chromedp.Run(ctx, chromedp.Evaluate[int](`document.querySelectorAll("svg.chart polyline").length`))
	if err != nil {
		t.Fatal(err)
	}
	if n < 4 {
		t.Errorf("terminal charts have %d lines, want 4", n)
	}
	// Acknowledge through the form, as an operator would.
	err = chromedp.Do(ctx,
		chromedp.Navigate(ts.URL+"/terminals/VAV-1-03"),
		chromedp.SendKeys(chromedp.CSS(`form[action$="/ack"] input[name="by"]`), "Dana Okafor"),
		chromedp.SendKeys(chromedp.CSS(`form[action$="/ack"] input[name="note"]`), "valve on order"),
		chromedp.Submit(chromedp.CSS(`form[action$="/ack"]`)),
		chromedp.WaitVisible(chromedp.CSS(`a[href="/terminals/VAV-1-03"]`)),
	)
	if err != nil {
		t.Fatal(err)
	}
	done, err := chromedp.Run(ctx, chromedp.Text(chromedp.CSS(`main`)))
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(done, "Acknowledged by Dana Okafor") || len(b.acks) != 1 {
		t.Fatalf("after submitting: %q, acks %v", done, b.acks)
	}
}
