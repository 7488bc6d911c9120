package preview

import (
	"context"
	"fmt"
	"net/http/httptest"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	cdppage "github.com/chromedp/cdproto/page"
	"github.com/chromedp/chromedp"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/internal/browsertest"
	"github.com/kbc-project/kbc/watch"
)

// watched serves the preview of a docs folder the way kbc watch --serve
// does: a real watcher on the folder, and on each change a rebuild that
// writes the bundle, hands the preview the build's warnings and reloads
// it. It returns the server's URL, the docs folder and a count of the
// rebuilds done.
func watched(t *testing.T, docs map[string]string) (base, src string, rebuilds func() int) {
	t.Helper()
	src = writeDocs(t, docs)
	out := filepath.Join(t.TempDir(), "bundle")
	buildBundle(t, src, out)
	s, err := New(out)
	if err != nil {
		t.Fatal(err)
	}
	s.now = func() time.Time { return testNow }
	s.Source = src
	var mu sync.Mutex
	n := 0
	rebuild := func(ctx context.Context, _ watch.Change) error {
		opts := build.DefaultOptions()
		opts.Now = testNow
		res, err := build.Run(ctx, os.DirFS(src), opts)
		if err != nil {
			return err
		}
		if _, err := writeResult(res, out); err != nil {
			return err
		}
		s.SetWarnings(res.Problems)
		err = s.Reload(out)
		mu.Lock()
		n++
		mu.Unlock()
		return err
	}
	w, err := watch.New(src, watch.Options{Debounce: 50 * time.Millisecond, OnError: func(err error) { t.Errorf("watch: %v", err) }})
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	ran := make(chan struct{})
	go func() { defer close(ran); w.Run(ctx, rebuild) }()
	ts := httptest.NewServer(s.Handler())
	t.Cleanup(func() {
		cancel()
		<-ran
		w.Close()
		s.Close() // ends the pages' event streams, so Close need not wait for them
		ts.Close()
	})
	return ts.URL, src, func() int { mu.Lock(); defer mu.Unlock(); return n }
}

// TestBrowser drives a real headless Chromium (internal/browsertest)
// through every page of the preview while a watcher rebuilds the bundle:
// it types a query and sees marked results, narrows them with a filter,
// opens a hit's source lines, reads the staleness chart and the divergent
// copies, breaks a page and sees its warning appear on the open warnings
// page, fixes it and sees it go, and edits a page and sees the result
// change in place. A screenshot of each page is kept in the test's temp
// folder, or in $KBC_PREVIEW_SCREENSHOTS when set (a CI artifact).
func TestBrowser(t *testing.T) {
	ctx := browsertest.New(t)
	docs := map[string]string{}
	for k, v := range ferryDocs {
		docs[k] = v
	}
	docs["safety/drill.md"] = drillPage("safety-desk", "2026-05-01", "40")
	docs["deck/drill.md"] = drillPage("deck-crew", "2025-01-10", "60")
	base, src, rebuilds := watched(t, docs)
	shots := os.Getenv("KBC_PREVIEW_SCREENSHOTS")
	if shots == "" {
		shots = t.TempDir()
	}
	shot := func(name string) { browsertest.Screenshot(t, ctx, shots, name) }
	do := func(what string, steps ...chromedp.Action[chromedp.Void]) {
		t.Helper()
		if err := chromedp.Do(ctx, steps...); err != nil {
			t.Fatalf("%s: %v", what, err)
		}
	}
	// until waits for a loaded page on which a JavaScript condition
	// holds, asking again every 25 ms,
	// across page loads (a poll inside the page would end with it); the
	// page's text is logged when it never holds.
	until := func(what, cond string) {
		t.Helper()
		deadline := time.Now().Add(15 * time.Second)
		for {
			ok, err := chromedp.Run(ctx, chromedp.Evaluate[bool](`document.readyState === "complete" && !!(`+cond+`)`))
			if err == nil && ok {
				return
			}
			if time.Now().After(deadline) {
				text, _ := chromedp.Run(ctx, chromedp.Evaluate[string](`document.body ? document.body.innerText : ""`))
				t.Fatalf("%s: never held (%v); the page reads:\n%s", what, err, text)
			}
			time.Sleep(25 * time.Millisecond)
		}
	}
	eval := func(expr string) string {
		t.Helper()
		v, err := chromedp.Run(ctx, chromedp.Evaluate[string](expr))
		if err != nil {
			t.Fatalf("%s: %v", expr, err)
		}
		return v
	}
	mainText := `document.getElementById("main").innerText`

	// Search: type a query into the autofocused box and press Enter.
	do("open the search page", chromedp.Navigate(base+"/"), chromedp.WaitVisible(chromedp.CSS("#q")))
	until("the search box has the focus", `document.activeElement && document.activeElement.id === "q"`)
	do("type a query", chromedp.SendKeys(chromedp.CSS("#q"), "gangway ticket\n"))
	until("the query's results", `location.search.includes("q=gangway+ticket") && `+mainText+`.includes("boarding.md#ticket-checks-at-the-gangway")`)
	marks := eval(`Array.from(document.querySelectorAll("#main .hit:first-child mark")).map(m => m.textContent.toLowerCase()).join(" ")`)
	if !strings.Contains(marks, "gangway") || !strings.Contains(marks, "ticket") {
		t.Errorf("the first hit marks %q, want gangway and ticket", marks)
	}
	until("the event stream is open (the policy let the script run)", `document.getElementById("live").textContent.includes("live:")`)
	shot("search.png")

	// Filters: choosing an owner searches again at once; so does the count.
	do("search the drills", chromedp.Navigate(base+"/?q=lifejacket+drill+muster"), chromedp.WaitVisible(chromedp.CSS("#owner")))
	do("choose an owner", choose("owner", "safety-desk"))
	until("the owner filter", `location.search.includes("owner=safety-desk") && document.querySelectorAll("#main .hit").length > 0`)
	if owners := eval(`Array.from(document.querySelectorAll("#main .facts")).map(f => f.textContent.split(" · ")[0]).join("|")`); strings.Trim(strings.ReplaceAll(owners, "owner: safety-desk", ""), "|") != "" {
		t.Errorf("filtered by owner safety-desk, the hits' owners are %q", owners)
	}
	do("choose 5 results", choose("k", "5"))
	until("the count", `location.search.includes("k=5") && location.search.includes("owner=safety-desk")`)
	shot("search-filtered.png")

	// Source lines of a hit.
	do("open a hit's source", chromedp.Click(chromedp.CSS("#main .hit a.src")))
	until("the source view", `location.pathname === "/source" && document.querySelectorAll("table.source tr.in").length > 0`)
	if m := eval(`document.querySelectorAll("table.source mark").length + ""`); m == "0" {
		t.Error("the source view marks no query word")
	}
	shot("source.png")

	// Staleness: the chart is drawn and the table lists the pages.
	do("open the staleness page", chromedp.Navigate(base+"/stale"))
	until("the chart", `(() => { const s = document.querySelector("figure.chart svg"); return s && s.getBoundingClientRect().width > 300 })()`)
	if got := eval(mainText); !strings.Contains(got, "1 day overdue") || !strings.Contains(got, "Strike notice") {
		t.Errorf("staleness page:\n%s", got)
	}
	shot("stale.png")

	// Duplicates: the divergent pair side by side.
	do("open the duplicates page", chromedp.Navigate(base+"/duplicates"))
	until("the divergent pair", `document.querySelectorAll("table.pair tr.fact").length === 1`)
	if got := eval(`document.querySelector("table.pair tr.fact").innerText`); !strings.Contains(got, "40 seconds") || !strings.Contains(got, "60 seconds") {
		t.Errorf("the differing words read %q", got)
	}
	shot("duplicates.png")

	// Warnings follow the watcher: break a page, see its warning appear on
	// the open page; fix it, see it go.
	do("open the warnings page", chromedp.Navigate(base+"/warnings"))
	until("no warnings yet", `document.getElementById("no-warnings") !== null && document.getElementById("live").textContent.includes("live:")`)
	do("mark the page", chromedp.Evaluate[chromedp.Void](`window.kbcMark = "still here"`))
	before := rebuilds()
	broken := strings.Replace(ferryDocs["timetable.md"], "updated: 2025-06-20", "updated: [2025-06-20", 1)
	write(t, src, "timetable.md", broken)
	until("the warning appears", mainText+`.includes("timetable.md:") && document.querySelector("#nav .count") !== null`)
	shot("warnings.png")
	write(t, src, "timetable.md", ferryDocs["timetable.md"])
	until("the warning goes", `document.getElementById("no-warnings") !== null`)
	if eval(`window.kbcMark || "reloaded"`) != "still here" {
		t.Error("the warnings page was reloaded; want its list swapped in place")
	}
	t.Logf("%d rebuilds for the break and the fix", rebuilds()-before)

	// Edit a page: the result on screen changes in place.
	do("search again", chromedp.Navigate(base+"/?q=gangway+ticket"))
	until("the results and the stream", mainText+`.includes("Deckhands check every ticket") && document.getElementById("live").textContent.includes("live:")`)
	do("mark the page", chromedp.Evaluate[chromedp.Void](`window.kbcMark = "still here"`))
	start := time.Now()
	write(t, src, "boarding.md", strings.Replace(ferryDocs["boarding.md"], "Deckhands check every ticket", "Stewards scan every ticket twice", 1))
	until("the edited result", mainText+`.includes("Stewards scan every ticket twice at the gangway") && !`+mainText+`.includes("Deckhands")`)
	t.Logf("the page showed the edit %v after the write", time.Since(start).Round(time.Millisecond))
	if eval(`window.kbcMark || "reloaded"`) != "still here" {
		t.Error("the page was reloaded; want results swapped in place")
	}
	shot("search-after-edit.png")
}

// choose picks an option of the menu with id, as a reader does: the
// value changes, then the menu fires "change".
func choose(id, value string) chromedp.Action[chromedp.Void] {
	return chromedp.Evaluate[chromedp.Void](`(() => { const e = document.getElementById(` + strconv.Quote(id) + `); e.value = ` +
		strconv.Quote(value) + `; e.dispatchEvent(new Event("change", {bubbles: true})) })()`)
}

func write(t *testing.T, dir, name, text string) {
	t.Helper()
	if err := os.WriteFile(filepath.Join(dir, name), []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
}

// TestBrowserEscaping loads every kind of page of a bundle whose names
// and text are hostile into Chromium and reads the DOM the browser built:
// no element of the input's markup, one script (ours), no dialog opened,
// and the hostile text on screen as text. A screenshot of each is kept.
func TestBrowserEscaping(t *testing.T) {
	ctx := browsertest.New(t)
	s, pages := hostileServer(t)
	ts := httptest.NewServer(s.Handler())
	t.Cleanup(func() { s.Close(); ts.Close() })
	shots := os.Getenv("KBC_PREVIEW_SCREENSHOTS")
	if shots == "" {
		shots = t.TempDir()
	}
	// A dialog (alert) would block the page; any opened is counted.
	var dialogs atomic.Int64
	if err := chromedp.Listen(ctx, func(ev any) {
		if _, ok := ev.(*cdppage.EventJavascriptDialogOpening); ok {
			dialogs.Add(1)
		}
	}); err != nil {
		t.Fatal(err)
	}
	for i, p := range pages {
		if err := chromedp.Do(ctx, chromedp.Navigate(ts.URL+p)); err != nil {
			t.Fatalf("%s: %v", p, err)
		}
		got, err := chromedp.Run(ctx, chromedp.Evaluate[string](`JSON.stringify({
			foreign: document.querySelectorAll("img, b, iframe, object, embed, base").length,
			scripts: document.scripts.length,
			handlers: Array.from(document.querySelectorAll("*")).filter(e => Array.from(e.attributes).some(a => a.name.startsWith("on"))).length,
			text: document.body.innerText.includes("<script>alert(1)</script>") || document.body.innerText.includes("<img src=x onerror=alert(3)>"),
		})`))
		if err != nil {
			t.Fatalf("%s: %v", p, err)
		}
		// /results is a fragment, without our script; the source view of an
		// unknown id shows no passage's text (and does not echo the id).
		want := `{"foreign":0,"scripts":1,"handlers":0,"text":true}`
		if strings.HasPrefix(p, "/results") {
			want = `{"foreign":0,"scripts":0,"handlers":0,"text":true}`
		} else if strings.HasPrefix(p, "/source?id=%22") {
			want = `{"foreign":0,"scripts":1,"handlers":0,"text":false}`
		}
		if got != want {
			t.Errorf("%s: %s", p, got)
		}
		browsertest.Screenshot(t, ctx, shots, fmt.Sprintf("hostile-%d.png", i))
	}
	if n := dialogs.Load(); n > 0 {
		t.Errorf("%d dialogs opened", n)
	}
}
