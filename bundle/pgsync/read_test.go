package pgsync

import (
	"encoding/json"
	"path/filepath"
	"testing"

	"github.com/kbc-project/kbc/bundle"
)

// TestReadPassagesFastPath checks that every line kbc writes is read by
// topFields without a full decode, and gives what encoding/json gives.
func TestReadPassagesFastPath(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "out")
	pages := handbook(8)
	pages[1].text = `Quotes "inside", a fake "hash":"x" member, and \ backslashes.`
	pages[2].alsoAt = []string{"a.md#b"}
	pages[3].audience = "drivers"
	pages[4].text = "Seal check: {braces} and [brackets]."
	writeBundle(t, dir, pages)
	src, err := readSource(dir)
	if err != nil {
		t.Fatal(err)
	}
	if err := src.readPassages(); err != nil {
		t.Fatal(err)
	}
	ps, err := bundle.ReadPassages(dir)
	if err != nil {
		t.Fatal(err)
	}
	for i, r := range src.records {
		if r.p != nil {
			t.Errorf("line %d was decoded in full", r.lineNo)
		}
		if r.id != ps[i].ID || r.textHash != ps[i].Hash {
			t.Errorf("line %d: id %s hash %s, want %s %s", r.lineNo, r.id, r.textHash, ps[i].ID, ps[i].Hash)
		}
	}
}

// FuzzTopFields holds topFields to encoding/json: whenever it answers, a
// valid line decodes to the same id and hash.
func FuzzTopFields(f *testing.F) {
	for _, s := range []string{
		`{"id":"a","path":"p.md","heading":["x","y"],"text":"t \"hash\":\"no\"","line":1,"hash":"h"}`,
		`{"hash":"h","id":"a","terms":[{"text":"x","anchor":"y"}]}`,
		`{"id":"a\u0041","hash":"h"}`,
		` { "id" : "a" , "hash" : "h" } `,
		`{"id":"a","hash":"h","id":"b"}`,
		`{"id":1,"hash":"h"}`,
		`{"x":{"hash":"inner"},"id":"a","hash":"outer"}`,
	} {
		f.Add([]byte(s))
	}
	f.Fuzz(func(t *testing.T, line []byte) {
		id, hash, ok := topFields(line)
		if !ok || !json.Valid(line) {
			return
		}
		var p struct {
			ID   string `json:"id"`
			Hash string `json:"hash"`
		}
		if err := json.Unmarshal(line, &p); err != nil {
			return
		}
		if p.ID != id || p.Hash != hash {
			t.Errorf("topFields = %q, %q; encoding/json = %q, %q", id, hash, p.ID, p.Hash)
		}
	})
}
