package preview

import (
	"context"
	"errors"
	"net"
	"net/http"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

// TestBrowser drives a real headless Chromium: it types a query into the
// search box, sees the expected passage, then edits the source, rebuilds,
// calls Reload and sees the result change without reloading the page.
// It skips when Chromium is missing, unless KBC_REQUIRE_SERVERS=1. Set
// KBC_PREVIEW_SCREENSHOT=FILE.png to keep a screenshot of the page.
func TestBrowser(t *testing.T) {
	if _, err := os.Stat(chromiumPath); err != nil {
		if os.Getenv("KBC_REQUIRE_SERVERS") == "1" {
			t.Fatalf("KBC_REQUIRE_SERVERS=1 but %s is missing (apt-get install chromium): %v", chromiumPath, err)
		}
		t.Skipf("skipping the browser test: %s is missing (apt-get install chromium, or set KBC_REQUIRE_SERVERS=1 to fail instead)", chromiumPath)
	}
	ctx, cancel := context.WithTimeout(context.Background(), 20*time.Second)
	defer cancel()

	s, src, out := newTestServer(t)
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	hs := &http.Server{Handler: s.Handler(), ReadHeaderTimeout: 5 * time.Second}
	served := make(chan error, 1)
	go func() { served <- hs.Serve(ln) }()
	base := "http://" + ln.Addr().String()

	b := startBrowser(t, 1000, 760)
	if err := b.call("Page.navigate", map[string]any{"url": base + "/"}, nil); err != nil {
		t.Fatal(err)
	}
	if _, err := b.waitFor(ctx, `document.readyState + " " + (document.activeElement && document.activeElement.id)`, "complete q"); err != nil {
		t.Fatal(err)
	}

	// Type a query into the (autofocused) search box and press Enter.
	if err := b.typeText("gangway ticket"); err != nil {
		t.Fatal(err)
	}
	results := `(document.getElementById("main") || {innerText: ""}).innerText`
	if _, err := b.waitFor(ctx, `location.search`, "q=gangway+ticket"); err != nil {
		t.Fatal(err)
	}
	got, err := b.waitFor(ctx, results, "boarding.md#ticket-checks-at-the-gangway")
	if err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{"Deckhands check every ticket at the gangway", "owner: terminal-ops", "fresh"} {
		if !strings.Contains(got, want) {
			t.Errorf("results lack %q:\n%s", want, got)
		}
	}
	// The script ran (the policy let it) and the event stream is open.
	if _, err := b.waitFor(ctx, `document.getElementById("live").textContent`, "live: this page refreshes"); err != nil {
		t.Fatal(err)
	}
	// A mark that a page load would wipe out.
	if err := b.eval(`window.kbcMark = "still here"`, nil); err != nil {
		t.Fatal(err)
	}

	// Edit the page, rebuild, reload: the results change in place.
	edited := strings.Replace(ferryDocs["boarding.md"], "Deckhands check every ticket", "Stewards scan every ticket twice", 1)
	if err := os.WriteFile(filepath.Join(src, "boarding.md"), []byte(edited), 0o644); err != nil {
		t.Fatal(err)
	}
	buildBundle(t, src, out)
	start := time.Now()
	if err := s.Reload(out); err != nil {
		t.Fatal(err)
	}
	got, err = b.waitFor(ctx, results, "Stewards scan every ticket twice at the gangway")
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("page showed the rebuilt result %v after Reload", time.Since(start).Round(time.Millisecond))
	if strings.Contains(got, "Deckhands") {
		t.Errorf("old text still shown:\n%s", got)
	}
	var mark string
	if err := b.eval(`window.kbcMark || "reloaded"`, &mark); err != nil || mark != "still here" {
		t.Errorf("the page was reloaded (mark %q, %v); want results swapped in place", mark, err)
	}
	if _, err := b.waitFor(ctx, `document.getElementById("live").textContent`, "live: rebuilt at"); err != nil {
		t.Error(err)
	}

	if path := os.Getenv("KBC_PREVIEW_SCREENSHOT"); path != "" {
		png, err := b.screenshot()
		if err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(path, png, 0o644); err != nil {
			t.Fatal(err)
		}
		t.Logf("screenshot in %s", path)
	}

	// Closing the server ends the page's event stream, so Shutdown does
	// not wait for it.
	s.Close()
	sctx, scancel := context.WithTimeout(ctx, 3*time.Second)
	defer scancel()
	if err := hs.Shutdown(sctx); err != nil {
		t.Errorf("shutdown: %v", err)
	}
	if err := <-served; !errors.Is(err, http.ErrServerClosed) {
		t.Errorf("serve: %v", err)
	}
}
