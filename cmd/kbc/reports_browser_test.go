package main

import (
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/chromedp/chromedp"

	"github.com/kbc-project/kbc/build/secrets"
	"github.com/kbc-project/kbc/bundle"
	"github.com/kbc-project/kbc/internal/browsertest"
)

// The handbook's reports/index.html, opened in headless Chromium from the
// bundle folder as a docs lead would: the owners table starts with the
// owner of the most overdue page, the chart has a band per owner, the two
// divergent pairs show 30 against 90 days side by side, and nothing is
// loaded or run. No credential found in the sources is on the page. The
// screenshot is kept in $KBC_ARTIFACTS when set, else the test's temp
// folder.
func TestReportsPageHandbook(t *testing.T) {
	src := copyTree(t, "../../examples/handbook", time.Date(2026, 11, 20, 9, 0, 0, 0, time.UTC))
	out := filepath.Join(t.TempDir(), "b")
	t.Setenv("SOURCE_DATE_EPOCH", "1796083200") // 2026-12-01T00:00:00Z
	mustBuild(t, src, out)
	page := filepath.Join(out, filepath.FromSlash(bundle.ReportsHTML))
	data := mustRead(t, page)
	values := 0
	filepath.WalkDir(src, func(p string, d fs.DirEntry, err error) error {
		if err != nil || d.IsDir() {
			return err
		}
		text := string(mustRead(t, p))
		for _, f := range secrets.Find(text) {
			values++
			if v := text[f.Start:f.End]; strings.Contains(string(data), v) {
				t.Errorf("%s: a %s value is on the reports page", p, f.Rule)
			}
		}
		return nil
	})
	if values == 0 {
		t.Fatal("the handbook has no credential to look for: the check above checks nothing")
	}

	ctx := browsertest.New(t)
	if err := chromedp.Do(ctx, chromedp.Navigate("file://"+page)); err != nil {
		t.Fatal(err)
	}
	got, err := chromedp.Run(ctx, chromedp.Evaluate[map[string]any](`({
		scripts: document.scripts.length,
		loaded: performance.getEntriesByType("resource").length,
		bands: document.querySelectorAll("#staleness svg > g").length,
		firstOwner: document.querySelector("table.owners tbody tr td:last-child").textContent,
		owner: document.querySelector("table.owners tbody th").textContent,
		pairs: document.querySelectorAll("#divergent article").length,
		marks: Array.from(document.querySelectorAll("#divergent article:first-of-type tr.fact mark")).map(e => e.textContent).join(" | "),
		glance: document.querySelector("dl.glance").innerText.replace(/\s+/g, " "),
	})`))
	if err != nil {
		t.Fatal(err)
	}
	if got["scripts"] != 0.0 || got["loaded"] != 0.0 {
		t.Errorf("page has %v scripts and loaded %v resources; want none", got["scripts"], got["loaded"])
	}
	if got["bands"] != 9.0 || got["owner"] != "fleet-ops" || got["firstOwner"] != "fleet/legacy-tachograph-downloads.md: stale, 1733 days overdue" {
		t.Errorf("staleness: %v bands, first owner %q with %q", got["bands"], got["owner"], got["firstOwner"])
	}
	if want := "30 days | 90 days | 30-day | 90-day | 30-day | 90-day"; got["pairs"] != 2.0 || got["marks"] != want {
		t.Errorf("divergent: %v pairs, marks %q; want 2, %q", got["pairs"], got["marks"], want)
	}
	if want := "documents 40 stale or expired 3 divergent copies 2 warnings 0 secrets redacted 2 hidden text dropped 0"; got["glance"] != want {
		t.Errorf("at a glance %q, want %q", got["glance"], want)
	}
	dir := os.Getenv("KBC_ARTIFACTS")
	if dir == "" {
		dir = t.TempDir()
	} else if err := os.MkdirAll(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	browsertest.Screenshot(t, ctx, dir, "reports-handbook.png")
}
