package bundle

import (
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	index "github.com/blevesearch/bleve_index_api"
	segment "github.com/blevesearch/scorch_segment_api/v2"
	zap "github.com/blevesearch/zapx/v15"

	"github.com/kbc-project/kbc/build"
)

// TestMergeSegments merges 23 small segment files (three rounds of at most
// mergeMax) and expects one segment with every document in the original
// order.
func TestMergeSegments(t *testing.T) {
	scratch := t.TempDir()
	plugin := &zap.ZapPlugin{}
	var paths []string
	n := 0
	for s := 0; s < 23; s++ {
		var docs []index.Document
		for j := 0; j < 3; j++ {
			p := build.Passage{ID: fmt.Sprintf("d%03d", n), Text: "some words"}
			n++
			docs = append(docs, indexDocument(&p))
		}
		seg, _, err := plugin.New(docs)
		if err != nil {
			t.Fatal(err)
		}
		p := filepath.Join(scratch, fmt.Sprintf("in%02d.zap", s))
		if err := seg.(segment.UnpersistedSegment).Persist(p); err != nil {
			t.Fatal(err)
		}
		paths = append(paths, p)
	}
	final, err := mergeSegments(plugin, scratch, paths)
	if err != nil {
		t.Fatal(err)
	}
	seg, err := plugin.Open(final)
	if err != nil {
		t.Fatal(err)
	}
	defer seg.Close()
	if seg.Count() != uint64(n) {
		t.Fatalf("%d documents, want %d", seg.Count(), n)
	}
	ids := seg.(interface{ DocID(uint64) ([]byte, error) })
	for i := 0; i < n; i++ {
		id, err := ids.DocID(uint64(i))
		if err != nil {
			t.Fatal(err)
		}
		if want := fmt.Sprintf("d%03d", i); string(id) != want {
			t.Fatalf("document %d is %s, want %s", i, id, want)
		}
	}
	if left, _ := filepath.Glob(filepath.Join(scratch, "*.zap")); len(left) != 1 {
		t.Errorf("scratch holds %v, want only the result", left)
	}
}

// TestDocNumbersFollowPassages checks what Search's tie order relies on: the
// index numbers its documents in passages.jsonl order.
func TestDocNumbersFollowPassages(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "b")
	ps := genPassages(2100, 9) // three segments
	mustWrite(t, dir, &Input{Passages: ps})
	b := mustOpen(t, dir)
	data, err := os.ReadFile(filepath.Join(dir, PassagesFile))
	if err != nil {
		t.Fatal(err)
	}
	adv, _ := b.idx.Advanced()
	r, err := adv.Reader()
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	for i, line := range strings.Split(strings.TrimSuffix(string(data), "\n"), "\n") {
		var p struct{ ID string }
		if err := json.Unmarshal([]byte(line), &p); err != nil {
			t.Fatal(err)
		}
		id, err := r.ExternalID(index.NewIndexInternalID(nil, uint64(i)))
		if err != nil || id != p.ID {
			t.Fatalf("document %d is %q (%v), line %d holds %s", i, id, err, i+1, p.ID)
		}
	}
}
