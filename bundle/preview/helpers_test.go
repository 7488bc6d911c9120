package preview

import (
	"context"
	"flag"
	"os"
	"path/filepath"
	"testing"
	"time"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/build/fresh"
	"github.com/kbc-project/kbc/bundle"
)

var update = flag.Bool("update", false, "rewrite the golden files in testdata/")

// testNow is the instant test bundles are built and judged at.
var testNow = time.Date(2026, 6, 1, 12, 0, 0, 0, time.UTC)

// ferryDocs is a small docs folder of an invented harbour ferry company:
// one fresh page, one due soon, one stale, one expired, a passage copied
// into a second page (so it gets an also_at), and code that looks like
// HTML.
var ferryDocs = map[string]string{
	"boarding.md": `---
title: Boarding the harbour ferry
updated: 2026-05-02
owner: terminal-ops
---
# Boarding

## Ticket checks at the gangway

Deckhands check every ticket at the gangway before the ramp is raised.
A passenger without a ticket waits on the quay for the next crossing.

## Bicycles

Bicycles board last and are strapped to the rail on the lower deck.
`,
	"timetable.md": `---
title: Winter timetable
updated: 2025-06-20
owner: planning
---
# Winter timetable

## Night crossings

The last crossing leaves the north pier at 23:40 from November to March.
`,
	"safety/lifejackets.md": `---
title: Lifejacket drill
updated: 2024-02-01
owner: safety-desk
---
# Lifejacket drill

## Monthly drill

Every crew member fastens a lifejacket in under forty seconds during the monthly drill.
The drill log is signed by the master.

## Storage

Lifejackets are stored in the orange lockers under the benches, forty per locker.
`,
	"safety/muster.md": `---
title: Muster stations
updated: 2024-03-10
owner: safety-desk
---
# Muster stations

Passengers gather at the muster station by the red funnel when the alarm sounds seven short blasts and one long.
`,
	"notices/strike.md": `---
title: Strike notice
updated: 2026-05-20
expires: 2026-05-31
owner: comms
---
# Strike notice

Crossings on 30 May run every hour instead of every twenty minutes.
`,
	"crew/drill-copy.md": `---
title: Lifejacket drill (crew copy)
updated: 2026-05-02
owner: crew-office
---
# Lifejacket drill

## Monthly drill

Every crew member fastens a lifejacket in under forty seconds during the monthly drill.
The drill log is signed by the master.

## Storage

Lifejackets are stored in the orange lockers under the benches, forty per locker.
`,
	"crew/handbook.md": `---
title: Crew handbook
updated: 2026-05-02
owner: crew-office
---
# Crew handbook

## Announcements

The kiosk screen shows this snippet from the web team:

` + "```html\n<script>alert(\"boarding\")</script><b>now boarding</b>\n```" + `
`,
}

// writeDocs writes files into a new folder and returns it.
func writeDocs(t testing.TB, files map[string]string) string {
	t.Helper()
	src := t.TempDir()
	for name, text := range files {
		p := filepath.Join(src, filepath.FromSlash(name))
		if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	return src
}

// buildBundle compiles src into the bundle folder out, as kbc build does
// with the default settings, at testNow.
func buildBundle(t testing.TB, src, out string) *bundle.Manifest {
	t.Helper()
	opts := build.DefaultOptions()
	opts.Now = testNow
	res, err := build.Run(context.Background(), os.DirFS(src), opts)
	if err != nil {
		t.Fatal(err)
	}
	for _, p := range res.Problems {
		t.Logf("build warning: %v", p)
	}
	m, err := writeResult(res, out)
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// writeResult writes a build's passages and reports into the bundle
// folder out, as kbc build does, built at testNow.
func writeResult(res *build.Result, out string) (*bundle.Manifest, error) {
	var err error
	// The reports the preview's pages read, as kbc build writes them.
	files := map[string][]byte{}
	for name, v := range map[string]any{bundle.StalenessJSON: res.Staleness, bundle.DuplicatesJSON: res.Duplicates} {
		if files[name], err = bundle.MarshalReport(v); err != nil {
			return nil, err
		}
	}
	return bundle.Write(out, &bundle.Input{Passages: res.Passages, BuiltAt: testNow, Tool: "kbc test", Files: files,
		Counts:   map[string]int{"divergent_copies": res.Stats.Divergent, "stale": res.Stats.Stale, "expired": res.Stats.Expired, "warnings": res.Stats.Warnings},
		Settings: &bundle.Settings{Freshness: fresh.Policy{DueSoon: fresh.Duration{Days: 30}}}})
}

// newTestServer builds the ferry docs into a bundle and serves it, with
// the clock at testNow. It returns the server, the docs and the bundle folder.
func newTestServer(t testing.TB) (*Server, string, string) {
	t.Helper()
	return serveDocs(t, ferryDocs)
}

// serveDocs builds docs into a bundle and serves it to a reader cleared
// for audiences, with the clock at testNow and SRC set for the source
// view. It returns the server, the docs folder and the bundle folder.
func serveDocs(t testing.TB, docs map[string]string, audiences ...string) (*Server, string, string) {
	t.Helper()
	src := writeDocs(t, docs)
	out := filepath.Join(t.TempDir(), "bundle")
	buildBundle(t, src, out)
	s, err := New(out, audiences...)
	if err != nil {
		t.Fatal(err)
	}
	s.now = func() time.Time { return testNow }
	s.Source = src
	t.Cleanup(func() { s.Close() })
	return s, src, out
}
