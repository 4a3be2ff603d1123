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

// TestNarrowScreen: in a window 400 px wide (a phone held upright) no page
// is wider than the window, each chart shown is drawn for that width (its
// labels not shrunk below 85 %), and every fault's cost is on screen.
func TestNarrowScreen(t *testing.T) {
	b := newTestBackend()
	b.site.Name = "Larkspur Commons North Campus Annex"
	s, err := New(Config{IP: true}, b, quiet())
	if err != nil {
		t.Fatal(err)
	}
	ts := httptest.NewServer(s.Handler())
	defer ts.Close()
	ctx := browsertest.Start(t, 90*time.Second)
	shots := browsertest.ScreenshotDir(t)
	if err := chromedp.Do(ctx, chromedp.EmulateViewport(400, 900)); err != nil {
		t.Fatal(err)
	}
	for _, p := range []string{"/", "/terminals/VAV-1-03", "/terminals/VAV-1-07", "/sources", "/faults/VAV-1-03%2Fleaking-valve/ack"} {
		if err := chromedp.Do(ctx, chromedp.Navigate(ts.URL+p), chromedp.WaitVisible(chromedp.CSS("main"))); err != nil {
			t.Fatalf("%s: %v", p, err)
		}
		wide, err := chromedp.Run(ctx, chromedp.Evaluate[int](`document.documentElement.scrollWidth - window.innerWidth`))
		if err != nil {
			t.Fatal(err)
		}
		if wide > 0 {
			t.Errorf("%s: page %d px wider than the 400 px window", p, wide)
		}
		// A table may scroll inside its box, but these tables fit.
		cut, err := chromedp.Run(ctx, chromedp.Evaluate[string](`["faults", "coil", "baseline", "evidence", "sources"].
			map(id => document.getElementById(id)).filter(e => e && e.parentElement.scrollWidth > e.parentElement.clientWidth).
			map(e => e.id).join(" ")`))
		if err != nil {
			t.Fatal(err)
		}
		if cut != "" {
			t.Errorf("%s: tables wider than the window: %s", p, cut)
		}
		scale, err := chromedp.Run(ctx, chromedp.Evaluate[float64](`Math.min(1, ...[...document.querySelectorAll("svg.chart")].
			filter(e => e.getBoundingClientRect().width > 0).map(e => e.getBoundingClientRect().width / e.viewBox.baseVal.width))`))
		if err != nil {
			t.Fatal(err)
		}
		if scale < 0.85 {
			t.Errorf("%s: charts drawn at %.2f of their size", p, scale)
		}
		png, err := chromedp.Run(ctx, chromedp.FullScreenshot(100))
		if err == nil {
			name := strings.Trim(strings.NewReplacer("/", "_", "%2F", "_").Replace(p), "_")
			_ = os.WriteFile(filepath.Join(shots, "narrow-"+name+".png"), png, 0o644)
		}
	}
	if err := chromedp.Do(ctx, chromedp.Navigate(ts.URL+"/"), chromedp.WaitVisible(chromedp.CSS("#faults"))); err != nil {
		t.Fatal(err)
	}
	off, err := chromedp.Run(ctx, chromedp.Evaluate[int](`[...document.querySelectorAll("#faults td")].
		filter(td => td.textContent.startsWith("USD") && td.getBoundingClientRect().right > window.innerWidth).length`))
	if err != nil {
		t.Fatal(err)
	}
	if off > 0 {
		t.Errorf("%d fault costs off the screen", off)
	}
}
