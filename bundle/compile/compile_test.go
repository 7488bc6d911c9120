package compile

import (
	"context"
	"encoding/json"
	"os"
	"path/filepath"
	"reflect"
	"testing"
	"time"

	"github.com/kbc-project/kbc/bundle"
)

// TestBuildDelta: the delta Build returns is the one written to
// delta.json, and a changed page makes a new build (not up to date).
func TestBuildDelta(t *testing.T) {
	src, out := t.TempDir(), filepath.Join(t.TempDir(), "b")
	page := filepath.Join(src, "a.md")
	os.WriteFile(page, []byte("# Gate\n\nThe gate opens at six for the early shift.\n"), 0o644)
	job := Job{Src: src, Out: out, Tool: "test", Now: time.Date(2026, 12, 1, 0, 0, 0, 0, time.UTC), FixedTime: true}
	if _, err := Build(context.Background(), job); err != nil {
		t.Fatal(err)
	}
	os.WriteFile(page, []byte("# Gate\n\nThe gate opens at seven for the early shift.\n"), 0o644)
	// Past the racy window, so that size and time alone tell the change.
	later := time.Now().Add(2 * time.Second)
	os.Chtimes(page, later, later)
	res, err := Build(context.Background(), job)
	if err != nil {
		t.Fatal(err)
	}
	if res.UpToDate || len(res.Delta.Changed) != 1 {
		t.Fatalf("up to date %v, delta %+v", res.UpToDate, res.Delta)
	}
	data, err := os.ReadFile(filepath.Join(out, bundle.DeltaFile))
	if err != nil {
		t.Fatal(err)
	}
	var onDisk bundle.Delta
	if err := json.Unmarshal(data, &onDisk); err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(&onDisk, res.Delta) {
		t.Errorf("returned delta %+v, delta.json %+v", res.Delta, onDisk)
	}
}
