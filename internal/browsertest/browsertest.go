// Package browsertest starts a headless Chromium for tests that check a
// page the way a reader sees it: the DOM after the browser has parsed and
// laid it out, and a screenshot kept beside the test's other files.
//
// It drives Debian's chromium (/usr/bin/chromium, or $KBC_CHROMIUM) over
// the DevTools protocol with github.com/chromedp/chromedp. A test calls New;
// when no browser is installed the test is skipped with a message saying
// how to install one, and fails instead when KBC_REQUIRE_SERVERS=1 (CI,
// whose .ci/run installs the chromium package).
package browsertest

import (
	"context"
	"os"
	"os/exec"
	"path/filepath"
	"testing"
	"time"

	"github.com/chromedp/chromedp"
)

// Path returns the Chromium executable to use, or "" when there is none.
func Path() string {
	if p := os.Getenv("KBC_CHROMIUM"); p != "" {
		return p
	}
	for _, name := range []string{"chromium", "chromium-browser", "google-chrome"} {
		if p, err := exec.LookPath(name); err == nil {
			return p
		}
	}
	return ""
}

// New starts a headless browser with an empty profile of its own and
// returns a context for chromedp actions (chromedp.Do, chromedp.Run) on one tab; the browser is
// stopped when the test ends. Each action run with the context is bounded
// by the test's deadline, or by two minutes when the test has none.
func New(t testing.TB) context.Context {
	t.Helper()
	exe := Path()
	if exe == "" {
		if os.Getenv("KBC_REQUIRE_SERVERS") == "1" {
			t.Fatal("no chromium found but KBC_REQUIRE_SERVERS=1: install Debian's chromium package (see .ci/run)")
		}
		t.Skip("no chromium on PATH: install Debian's chromium package, or set KBC_CHROMIUM, to run the browser tests")
	}
	// The flags keep a sandboxed machine with a closed network quiet: no
	// background connections, no updates, no first-run pages. --no-sandbox
	// because CI runs as root, where Chromium's own sandbox refuses to start.
	opts := []chromedp.ExecAllocatorOption{
		chromedp.ExecPath(exe),
		chromedp.UserDataDir(t.TempDir()),
		chromedp.Headless,
		chromedp.NoSandbox,
		chromedp.DisableGPU,
		chromedp.NoFirstRun,
		chromedp.NoDefaultBrowserCheck,
		chromedp.Flag("disable-background-networking", true),
		chromedp.Flag("disable-component-update", true),
		chromedp.Flag("disable-sync", true),
		chromedp.Flag("disable-quic", true),
		chromedp.WindowSize(1280, 900),
	}
	deadline := time.Now().Add(2 * time.Minute)
	if d, ok := t.(interface{ Deadline() (time.Time, bool) }); ok {
		if dl, ok := d.Deadline(); ok {
			deadline = dl.Add(-5 * time.Second)
		}
	}
	base, cancelTime := context.WithDeadline(context.Background(), deadline)
	alloc, cancelAlloc := chromedp.NewExecAllocator(base, opts...)
	ctx, cancelTab := chromedp.NewContext(alloc)
	t.Cleanup(func() {
		cancelTab()
		cancelAlloc()
		cancelTime()
	})
	if err := chromedp.Do(ctx); err != nil { // start the browser now
		t.Fatalf("starting %s: %v", exe, err)
	}
	return ctx
}

// Screenshot saves a full-page PNG of the tab to name in dir and returns
// its path; the test's log names the file.
func Screenshot(t testing.TB, ctx context.Context, dir, name string) string {
	t.Helper()
	png, err := chromedp.Run(ctx, chromedp.FullScreenshot(100)) // 100: PNG
	if err != nil {
		t.Fatalf("screenshot: %v", err)
	}
	p := filepath.Join(dir, name)
	if err := os.WriteFile(p, png, 0o644); err != nil {
		t.Fatal(err)
	}
	t.Logf("screenshot: %s", p)
	return p
}
