package build

import (
	"context"
	"slices"
	"strings"
	"testing"
	"testing/fstest"
	"time"
)

// TestBlockDivergence: a copied paragraph that differs in one number is
// found although each page packs it with a short section of its own (the
// passages as wholes share too little), and so is a table row that
// differs in one cell. Both pages keep their passages.
func TestBlockDivergence(t *testing.T) {
	para := "Each reefer unit runs a pre-trip test before loading: the set point is held for %s minutes, the defrost cycle runs once, and the alarm log is cleared and printed for the driver's file."
	// Each page packs the copied paragraph and row with text of its own,
	// in the same section, so the passages as wholes share too little.
	page := func(n, own, row string) []byte {
		return []byte("# Pre-trip checks\n\n" + strings.ReplaceAll(para, "%s", n) + "\n\n" + own + "\n\n" +
			"| load | set point | hold |\n|---|---|---|\n" + row + "\n")
	}
	fsys := fstest.MapFS{
		"fleet/pretrip.md": {Data: page("15", "The fleet desk keeps the spare data loggers in the cabinet by the tachograph office, signed out on the clipboard, and collects them again at the end of every trunking week.",
			"| frozen | -25 °C | 45 minutes |")},
		"depots/north/pretrip.md": {Data: page("10", "At Vennholm the yard marshal walks each trailer with the driver, photographs the seal numbers for the gate system and radios the bay allocation before the unit is plugged in.",
			"| frozen | -25 °C | 35 minutes |")},
	}
	for _, f := range fsys {
		f.ModTime = time.Date(2026, 11, 2, 9, 0, 0, 0, time.UTC)
	}
	opts := DefaultOptions()
	opts.Now = time.Date(2026, 12, 1, 0, 0, 0, 0, time.UTC)
	res, err := Run(context.Background(), fsys, opts)
	if err != nil {
		t.Fatal(err)
	}
	if len(res.Passages) != 2 {
		t.Fatalf("want one passage per page, got %d", len(res.Passages))
	}
	var got []string
	for _, d := range res.Duplicates.Divergent {
		for _, x := range conflicts(d.Differences) {
			got = append(got, d.Canonical.Path+" "+x.A+" / "+d.Copy.Path+" "+x.B)
		}
	}
	slices.Sort(got)
	// The shorter path is canonical (both pages are as fresh).
	want := []string{
		"fleet/pretrip.md 15 minutes / depots/north/pretrip.md 10 minutes",
		"fleet/pretrip.md 45 minutes / depots/north/pretrip.md 35 minutes",
	}
	if !slices.Equal(got, want) {
		t.Errorf("divergent:\n got %q\nwant %q", got, want)
	}
}

func TestTextBlocks(t *testing.T) {
	text := "Intro line one\nline two\n\n```sh\necho 1\n\necho 2\n```\n\na | b | c\nd | e | f\n\n- item 3\n- item 4"
	want := []string{"Intro line one\nline two", "```sh\necho 1\n\necho 2\n```", "a | b | c", "d | e | f", "- item 3\n- item 4"}
	if got := textBlocks(text); !slices.Equal(got, want) {
		t.Errorf("textBlocks:\n got %q\nwant %q", got, want)
	}
}
