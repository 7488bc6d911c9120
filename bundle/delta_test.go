package bundle

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
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

// TestWriteUpdatesIndexInPlace: when a few passages change, the index is
// the prior one updated in place; its statistics and every search result
// equal those of a clean build of the same passages.
func TestWriteUpdatesIndexInPlace(t *testing.T) {
	dir := t.TempDir()
	out, clean := dir+"/b", dir+"/clean"
	ps := genPassages(400, 11)
	mustWrite(t, out, &Input{Passages: ps})
	prior, err := ReadPrior(out)
	if err != nil {
		t.Fatal(err)
	}
	next := append([]build.Passage(nil), ps[2:]...) // two removed
	next[0].Text += " plus a reefer alarm note"
	next[5].Heading = []string{"Renamed section"}
	next[9].Title = "Another title"
	extra := genPassages(2, 99)
	for i := range extra {
		extra[i].ID = "new-" + extra[i].ID
	}
	next = append(next, extra...)
	for i := range next {
		sum := sha256.Sum256([]byte(next[i].Text))
		next[i].Hash = hex.EncodeToString(sum[:])
	}
	mustWrite(t, out, &Input{Passages: next, Prior: prior})
	mustWrite(t, clean, &Input{Passages: next})
	if a, b := mustRead(t, out+"/"+StatsFile), mustRead(t, clean+"/"+StatsFile); !bytes.Equal(a, b) {
		t.Errorf("stats.json after the update:\n%s\nclean build:\n%s", a, b)
	}
	if reflect.DeepEqual(treeHashes(t, out+"/index/store"), treeHashes(t, clean+"/index/store")) {
		t.Error("index files equal a clean build's: the update in place did not run")
	}
	if bad, err := Verify(out); err != nil || len(bad) != 0 {
		t.Fatalf("verify: %v %v", bad, err)
	}
	a, b := mustOpen(t, out), mustOpen(t, clean)
	defer a.Close()
	defer b.Close()
	for _, q := range []string{next[0].Text, "reefer alarm", "Renamed section", "Another title", extra[1].Text, ps[0].Text} {
		ha, err1 := a.Search(q, 10)
		hb, err2 := b.Search(q, 10)
		if err1 != nil || err2 != nil {
			t.Fatal(err1, err2)
		}
		if len(ha) != len(hb) {
			t.Fatalf("%q: %d hits, clean build %d", q, len(ha), len(hb))
		}
		for i := range ha {
			if ha[i].Score != hb[i].Score || (ha[i].ID != hb[i].ID && ha[i].Score != ha[max(i-1, 0)].Score) {
				t.Errorf("%q hit %d: %s %.9f, clean build %s %.9f", q, i, ha[i].ID, ha[i].Score, hb[i].ID, hb[i].Score)
			}
		}
	}
}

func mustRead(t *testing.T, p string) []byte {
	t.Helper()
	data, err := os.ReadFile(p)
	if err != nil {
		t.Fatal(err)
	}
	return data
}
