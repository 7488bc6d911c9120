package agechart_test

import (
	"bytes"
	"encoding/xml"
	"flag"
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/chromedp/chromedp"
	"github.com/kbc-project/kbc/bundle/agechart"
	"github.com/kbc-project/kbc/internal/browsertest"
)

var update = flag.Bool("update", false, "rewrite testdata/*.golden.svg")

// harbour is a small scenario: the harbour office's docs, three owners.
func harbour() []agechart.Row {
	return []agechart.Row{
		{Owner: "moorings-team", Pages: []agechart.Page{
			{AgeDays: 420, Status: agechart.Expired, Title: "Winter berth rules"},
			{AgeDays: 200, Status: agechart.Stale, Title: "Pontoon keys"},
			{AgeDays: 12, Status: agechart.Fresh, Title: "Visitor moorings"},
		}},
		{Owner: "pilots", Pages: []agechart.Page{
			{AgeDays: 80, Status: agechart.DueSoon, Title: "Tide windows"},
			{AgeDays: 30, Status: agechart.Fresh, Title: "Radio channels"},
			{AgeDays: 30, Status: agechart.Fresh, Title: "Call signs"},
		}},
		{Owner: "", Pages: []agechart.Page{
			{AgeDays: -1, Status: agechart.Unknown, Title: "Old ferry timetable"},
		}},
	}
}

// The chart is well-formed XML with an accessible title and description,
// and the same input gives the same bytes.
func TestSVGGolden(t *testing.T) {
	got := agechart.SVG(harbour(), agechart.Options{})
	if again := agechart.SVG(harbour(), agechart.Options{}); again != got {
		t.Fatal("two calls on the same rows differ")
	}
	wellFormed(t, got)
	for _, want := range []string{
		`role="img"`,
		`<title id="agechart-title">Page age by owner and status</title>`,
		`<desc id="agechart-desc">Pages by owner and status. moorings-team: 1 expired, 1 stale, 1 fresh; pilots: 1 due soon, 2 fresh; (no owner): 1 no date.</desc>`,
		`Winter berth rules: expired, 420 days`,
		`<title>Old ferry timetable: no date</title>`,
	} {
		if !strings.Contains(got, want) {
			t.Errorf("chart lacks %q", want)
		}
	}
	golden := filepath.Join("testdata", "harbour.golden.svg")
	if *update {
		if err := os.WriteFile(golden, []byte(got), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	want, err := os.ReadFile(golden)
	if err != nil {
		t.Fatal(err)
	}
	if got != string(want) {
		t.Errorf("chart differs from %s (rewrite with -update and read the diff)", golden)
	}
}

// Hostile owners and titles stay text: no element, attribute or
// reference comes from them, and invalid XML characters are replaced.
func TestSVGEscapes(t *testing.T) {
	hostile := `</text><script>alert(1)</script><a href="javascript:x">&amp;` + "\x00\x1b'\""
	rows := []agechart.Row{{Owner: hostile, Pages: []agechart.Page{
		{AgeDays: 3, Status: agechart.Fresh, Title: hostile},
		{AgeDays: 3, Status: "made-up<status>", Title: hostile},
	}}}
	got := agechart.SVG(rows, agechart.Options{Title: hostile, Desc: hostile, ID: `x" onload="y`})
	wellFormed(t, got)
	for _, bad := range []string{"<script", "<a ", "\x00", "\x1b"} {
		if strings.Contains(got, bad) {
			t.Errorf("chart contains %q:\n%s", bad, got)
		}
	}
	// Every element name is one the chart itself writes.
	allowed := map[string]bool{"svg": true, "title": true, "desc": true, "rect": true, "line": true,
		"text": true, "g": true, "circle": true, "path": true}
	d := xml.NewDecoder(strings.NewReader(got))
	for {
		tok, err := d.Token()
		if err == io.EOF {
			break
		}
		if err != nil {
			t.Fatal(err)
		}
		se, ok := tok.(xml.StartElement)
		if !ok {
			continue
		}
		if !allowed[se.Name.Local] {
			t.Errorf("unexpected element <%s>", se.Name.Local)
		}
		for _, a := range se.Attr {
			if a.Name.Local == "href" || strings.HasPrefix(a.Name.Local, "on") {
				t.Errorf("<%s> has attribute %s=%q", se.Name.Local, a.Name.Local, a.Value)
			}
		}
	}
}

// No rows still gives a labelled, well-formed image.
func TestSVGEmpty(t *testing.T) {
	got := agechart.SVG(nil, agechart.Options{})
	wellFormed(t, got)
	if !strings.Contains(got, ">no pages</text>") || !strings.Contains(got, "<desc id=\"agechart-desc\">No pages.</desc>") {
		t.Errorf("empty chart does not say so:\n%s", got)
	}
}

// Very old pages are drawn at the end of a fixed axis, not past it.
func TestSVGMaxAge(t *testing.T) {
	rows := []agechart.Row{{Owner: "o", Pages: []agechart.Page{{AgeDays: 5000, Status: agechart.Stale}}}}
	got := agechart.SVG(rows, agechart.Options{MaxAgeDays: 365, Width: 600})
	wellFormed(t, got)
	if strings.Contains(got, ">5000<") {
		t.Error("axis goes past MaxAgeDays")
	}
}

// A browser draws the chart inline in an HTML page: the title is the
// image's accessible name and the row labels are text in the DOM. The
// screenshot is kept in $KBC_ARTIFACTS when set, else the test's temp
// folder.
func TestSVGInBrowser(t *testing.T) {
	ctx := browsertest.New(t)
	page := "<!doctype html><meta charset=utf-8><title>chart</title><body>" +
		agechart.SVG(harbour(), agechart.Options{Title: "Harbour office pages"}) + "</body>"
	dir := t.TempDir()
	if a := os.Getenv("KBC_ARTIFACTS"); a != "" {
		dir = a
		if err := os.MkdirAll(dir, 0o755); err != nil {
			t.Fatal(err)
		}
	}
	file := filepath.Join(dir, "agechart.html")
	if err := os.WriteFile(file, []byte(page), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := chromedp.Do(ctx, chromedp.Navigate("file://"+file)); err != nil {
		t.Fatal(err)
	}
	text, err := chromedp.Run(ctx, chromedp.Evaluate[string](`document.querySelector("svg title").textContent + "|" +
		Array.from(document.querySelectorAll("svg > g > text:first-child")).map(e => e.firstChild.textContent).join(",") + "|" +
		document.querySelector("svg").getBoundingClientRect().height`))
	if err != nil {
		t.Fatal(err)
	}
	if want := "Harbour office pages|moorings-team,pilots,(no owner)|168"; text != want {
		t.Errorf("DOM reads %q, want %q", text, want)
	}
	browsertest.Screenshot(t, ctx, dir, "agechart.png")
}

func wellFormed(t *testing.T, s string) {
	t.Helper()
	d := xml.NewDecoder(bytes.NewReader([]byte(s)))
	for {
		_, err := d.Token()
		if err == io.EOF {
			return
		}
		if err != nil {
			t.Fatalf("not well-formed XML: %v\n%s", err, s)
		}
	}
}

// A fixed axis end is labelled as such, with "+" when older pages are
// drawn at it, and never crowds the tick before it.
func TestSVGFixedEnd(t *testing.T) {
	rows := []agechart.Row{{Owner: "o", Pages: []agechart.Page{{AgeDays: 1733, Status: agechart.Stale}, {AgeDays: 40, Status: agechart.Fresh}}}}
	got := agechart.SVG(rows, agechart.Options{MaxAgeDays: 730})
	wellFormed(t, got)
	for _, want := range []string{`>0</text>`, `>540</text>`, `>730+</text>`} {
		if !strings.Contains(got, want) {
			t.Errorf("axis lacks %s", want)
		}
	}
	if strings.Contains(got, `>720</text>`) {
		t.Error("a tick at 720 crowds the end at 730")
	}
	if got := agechart.SVG(rows[:1], agechart.Options{MaxAgeDays: 2000}); strings.Contains(got, "+</text>") {
		t.Error(`"+" on an axis that holds every page`)
	}
}

// Eleven pages of one age show as three markers, the first three given,
// and a "+8"; the counts still name all eleven.
func TestSVGPile(t *testing.T) {
	var pages []agechart.Page
	for i := range 11 {
		st := agechart.Fresh
		if i == 0 {
			st = agechart.Stale
		}
		pages = append(pages, agechart.Page{AgeDays: 11, Status: st})
	}
	got := agechart.SVG([]agechart.Row{{Owner: "ferries", Pages: pages}}, agechart.Options{})
	wellFormed(t, got)
	band := got[strings.Index(got, "<g>"):]
	if n := strings.Count(band, "<circle") + strings.Count(band, "<rect"); n != 3 {
		t.Errorf("%d markers in the band, want 3", n)
	}
	if !strings.Contains(band, "<rect") {
		t.Error("the first page given (stale) is not drawn")
	}
	for _, want := range []string{">+8<title>8 more pages here</title></text>", ">1 stale, 10 fresh</text>"} {
		if !strings.Contains(band, want) {
			t.Errorf("band lacks %q", want)
		}
	}
}
