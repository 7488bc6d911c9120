package browsertest_test

import (
	"net/http"
	"net/http/httptest"
	"testing"

	"github.com/chromedp/chromedp"
	"github.com/kbc-project/kbc/internal/browsertest"
)

// A page served on loopback is parsed by the browser: the script-free
// heading comes back from the DOM, and a screenshot is written.
func TestBrowserReadsPage(t *testing.T) {
	srv := httptest.NewServer(http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		w.Header().Set("Content-Type", "text/html; charset=utf-8")
		w.Write([]byte("<!doctype html><title>t</title><h1 id=h>Harbour &amp; tides</h1>"))
	}))
	defer srv.Close()
	ctx := browsertest.New(t)
	if err := chromedp.Do(ctx, chromedp.Navigate(srv.URL)); err != nil {
		t.Fatal(err)
	}
	text, err := chromedp.Run(ctx, chromedp.Text(chromedp.CSS("#h")))
	if err != nil {
		t.Fatal(err)
	}
	if text != "Harbour & tides" {
		t.Fatalf("heading %q, want %q", text, "Harbour & tides")
	}
	browsertest.Screenshot(t, ctx, t.TempDir(), "page.png")
}
