package bundle

import (
	"os"
	"reflect"
	"testing"

	"github.com/kbc-project/kbc/build"
)

func TestDiff(t *testing.T) {
	old := []build.Passage{{ID: "a", Text: "1"}, {ID: "b", Text: "2"}, {ID: "c", Text: "3"}, {ID: "e", Text: "5", Heading: []string{"Old"}}}
	cur := []build.Passage{{ID: "a", Text: "1", Line: 40}, {ID: "c", Text: "9"}, {ID: "d", Text: "4"}, {ID: "e", Text: "5", Heading: []string{"New"}}}
	got := Diff(old, cur)
	want := &Delta{Added: []string{"d"}, Changed: []Change{
		{ID: "c", OldHash: ContentHash(&old[2]), NewHash: ContentHash(&cur[1])},
		{ID: "e", OldHash: ContentHash(&old[3]), NewHash: ContentHash(&cur[3])},
	}, Removed: []string{"b"}}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("Diff = %+v, want %+v", got, want)
	}
	if !Diff(cur, cur).Empty() {
		t.Error("a bundle differs from itself")
	}
}

// TestWriteReusesIndex: a rebuild whose indexed content is unchanged (here
// only a date moved) copies the prior index instead of building it; a
// prior index that no longer matches its manifest is never reused.
func TestWriteReusesIndex(t *testing.T) {
	out := t.TempDir() + "/b"
	ps := genPassages(300, 7)
	mustWrite(t, out, &Input{Passages: ps})
	first := treeHashes(t, out+"/index")

	prior, err := ReadPrior(out)
	if err != nil {
		t.Fatal(err)
	}
	moved := append([]build.Passage(nil), ps...)
	moved[0].Line += 3
	moved[0].EndLine += 3
	m := mustWrite(t, out, &Input{Passages: moved, Prior: prior})
	if got := treeHashes(t, out+"/index"); !reflect.DeepEqual(got, first) {
		t.Error("index files changed although the indexed content did not")
	}
	if bad, err := Verify(out); err != nil || len(bad) != 0 {
		t.Fatalf("verify: %v %v", bad, err)
	}

	// Tamper with the prior index: the next write must build a fresh one.
	prior, _ = ReadPrior(out)
	if err := os.WriteFile(out+"/index/stats.json", []byte(`{"content":"x"}`), 0o644); err != nil {
		t.Fatal(err)
	}
	prior.Manifest = m
	mustWrite(t, out, &Input{Passages: moved, Prior: prior})
	if bad, err := Verify(out); err != nil || len(bad) != 0 {
		t.Fatalf("verify after rebuilding over a tampered index: %v %v", bad, err)
	}
	b := mustOpen(t, out)
	defer b.Close()
	hits, err := b.Search(ps[5].Text, 1)
	if err != nil || len(hits) == 0 {
		t.Fatalf("search after rebuild: %v %v", hits, err)
	}
}
