package bundle

import (
	"fmt"
	"path/filepath"
	"testing"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/bundle/eval"
)

// anchoredToy is the toy corpus with anchors on the sections that have a
// heading.
func anchoredToy() []build.Passage {
	ps := toyPassages()
	for i, a := range []string{"", "cargo", "door", "crew", ""} {
		ps[i].Anchor = a
	}
	return ps
}

func TestDocIDAndCollapse(t *testing.T) {
	ps := anchoredToy()
	if got := DocID(&ps[2], LevelSection); got != "depot.md#door" {
		t.Errorf("section docid = %s", got)
	}
	if got := DocID(&ps[0], LevelSection); got != "yard.md" {
		t.Errorf("section docid without anchor = %s", got)
	}
	if got := DocID(&ps[2], LevelPage); got != "depot.md" {
		t.Errorf("page docid = %s", got)
	}
	hits := []Hit{{ps[2], 1.8}, {ps[3], 0.8}, {ps[1], 0.4}, {ps[0], 0.3}}
	if got := fmt.Sprint(collapse(hits, LevelPage)); got != "[{depot.md 1.8} {yard.md 0.4}]" {
		t.Errorf("page collapse = %s", got)
	}
	if got := fmt.Sprint(collapse(hits, LevelSection)); got != "[{depot.md#door 1.8} {depot.md#crew 0.8} {yard.md#cargo 0.4} {yard.md 0.3}]" {
		t.Errorf("section collapse = %s", got)
	}
	if _, err := ParseLevel("chapter"); err == nil {
		t.Error("level chapter accepted")
	}
}

func TestEvaluateBundle(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "toy")
	mustWrite(t, dir, &Input{Passages: anchoredToy()})
	b := mustOpen(t, dir)
	qs := []eval.Query{{ID: "q1", Text: "cargo depot"}, {ID: "q2", Text: "zebra"}, {ID: "q3", Text: "truck"}}
	qrels := eval.Qrels{
		"q1":    {"depot.md": 1},
		"q2":    {"yard.md": 1},
		"other": {"dock.md": 1}, // not asked: plays no part
	}
	rep, run, err := b.Evaluate(qs, qrels, EvalOptions{Level: LevelPage})
	if err != nil {
		t.Fatal(err)
	}
	// "cargo depot" finds c and d (depot.md) first (TestBM25HandComputed),
	// then b (yard.md): one page counted once.
	if got := fmt.Sprint(run["q1"]); got[:13] != "[{depot.md 1." || len(run["q1"]) != 2 {
		t.Errorf("q1 run = %s", got)
	}
	if r, ok := run["q2"]; !ok || len(r) != 0 {
		t.Errorf("q2 (no hit) run = %v, %v; want an empty entry", r, ok)
	}
	if fmt.Sprint(rep.Unjudged) != "[q3]" || len(rep.NotRun) != 0 {
		t.Errorf("unjudged %v, not run %v", rep.Unjudged, rep.NotRun)
	}
	// q1 scores recip_rank 1, q2 (nothing found) 0: mean 0.5.
	if len(rep.PerQuery) != 2 || rep.PerQuery["q1"]["recip_rank"] != 1 || rep.Mean["recip_rank"] != 0.5 {
		t.Errorf("report %+v", rep)
	}
}

func TestFindability(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "toy")
	ps := anchoredToy()
	ps[3].Terms = []build.Term{{Text: "truck", Anchor: "truck"}}
	mustWrite(t, dir, &Input{Passages: ps})
	b := mustOpen(t, dir)
	f, err := b.Findability(EvalOptions{})
	if err != nil {
		t.Fatal(err)
	}
	// Five sections (a and e ask by their page title), one term.
	if f.Sections != 5 || f.Terms != 1 {
		t.Fatalf("%d sections, %d terms; want 5, 1", f.Sections, f.Terms)
	}
	if f.SectionsAt1 > f.SectionsTop || f.SectionsTop > f.Sections || f.TermsAt1 > f.TermsTop {
		t.Errorf("inconsistent counts %+v", f)
	}
	if len(f.Missed) != f.Sections-f.SectionsAt1+f.Terms-f.TermsAt1 {
		t.Errorf("%d missed, counts say %d", len(f.Missed), f.Sections-f.SectionsAt1+f.Terms-f.TermsAt1)
	}
	for i, m := range f.Missed {
		if m.Rank == 1 || i > 0 && missOrder(m.Rank) < missOrder(f.Missed[i-1].Rank) {
			t.Errorf("missed %d out of order: %+v", i, f.Missed)
		}
	}
}
