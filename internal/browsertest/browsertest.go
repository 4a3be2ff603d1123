// Package browsertest starts headless Debian chromium for page tests, with
// the flags a machine without outside network needs (no background
// networking, component updates, sync or QUIC), a fresh profile per test,
// and no sandbox (the tests run as root in CI).
package browsertest

import (
	"context"
	"os"
	"path/filepath"
	"testing"
	"time"

	"github.com/chromedp/chromedp"

	"risewatch/internal/testenv"
)

// Start launches chromium and returns a chromedp context that ends with the
// test or after timeout. It skips (or fails under CI=true) when chromium is
// not installed.
func Start(t testing.TB, timeout time.Duration) context.Context {
	t.Helper()
	exe := testenv.LookTool(t, "chromium", "apt-get install chromium")
	opts := []chromedp.ExecAllocatorOption{
		chromedp.ExecPath(exe),
		chromedp.Headless,
		chromedp.NoSandbox,
		chromedp.DisableGPU,
		chromedp.NoFirstRun,
		chromedp.NoDefaultBrowserCheck,
		chromedp.UserDataDir(t.TempDir()),
		chromedp.Flag("disable-quic", true),
		chromedp.Flag("disable-background-networking", true),
		chromedp.Flag("disable-component-update", true),
		chromedp.Flag("disable-sync", true),
		chromedp.Flag("disable-dev-shm-usage", true),
		chromedp.WindowSize(1280, 1000),
	}
	actx, cancelA := chromedp.NewExecAllocator(context.Background(), opts...)
	ctx, cancelC := chromedp.NewContext(actx)
	ctx, cancelT := context.WithTimeout(ctx, timeout)
	t.Cleanup(func() { cancelT(); cancelC(); cancelA() })
	if err := chromedp.Do(ctx); err != nil {
		t.Fatalf("start chromium: %v", err)
	}
	return ctx
}

// ScreenshotDir is where tests keep screenshots: $RISEWATCH_SCREENSHOTS when
// set (to look at them), else a temporary directory.
func ScreenshotDir(t testing.TB) string {
	if d := os.Getenv("RISEWATCH_SCREENSHOTS"); d != "" {
		if err := os.MkdirAll(d, 0o755); err == nil {
			return d
		}
	}
	return filepath.Clean(t.TempDir())
}
