package bundle

import (
	"encoding/json"
	"os"
	"path/filepath"
	"reflect"
	"testing"

	"github.com/kbc-project/kbc/build"
)

// TestContentHash checks ContentHash against SHA-256 digests computed
// outside Go, with Python's hashlib over the same length-prefixed string:
//
//	s = "%d:%s%d:" % (len(title.encode()), title, len(heads)) +
//	    "".join("%d:%s" % (len(h.encode()), h) for h in heads) +
//	    "%d:%s" % (len(text.encode()), text)
//	hashlib.sha256(s.encode()).hexdigest()
//
// Lengths count bytes, so the UTF-8 case pins that too.
func TestContentHash(t *testing.T) {
	for _, tc := range []struct {
		p    build.Passage
		want string
	}{
		{build.Passage{Title: "Reefer door seals", Heading: []string{"Fleet", "Seals > checks"}, Text: "Seals are checked every 30 days.\nLog it."},
			"8dc05d5a5418a0c59ba4f63601f9663f66d523c9eb724e6aaac30c355d5a5971"},
		{build.Passage{Title: "Kühlkette", Text: "Tür schließen"},
			"07fa2f14af8965b56428d429cfa604edaa110fbff079a18ce1d5cddcc5500bb2"},
	} {
		if got := ContentHash(&tc.p); got != tc.want {
			t.Errorf("ContentHash(%q) = %s, want %s", tc.p.Title, got, tc.want)
		}
	}
}

// TestCatalog: a bundle written with Catalog saves one beside it;
// ReadPrior takes it only for the bundle it was made for, and the delta
// and in-place index update made from it equal those made from the
// passages themselves.
func TestCatalog(t *testing.T) {
	dir := t.TempDir()
	out, plain := filepath.Join(dir, "b"), filepath.Join(dir, "plain")
	ps := genPassages(300, 5)
	mustWrite(t, out, &Input{Passages: ps, Catalog: true})
	mustWrite(t, plain, &Input{Passages: ps})
	first := mustRead(t, filepath.Join(CacheDir(out), catalogFile))
	if _, err := os.Stat(filepath.Join(CacheDir(plain), catalogFile)); err == nil {
		t.Error("a catalog was saved without Input.Catalog")
	}
	prior, err := ReadPrior(out)
	if err != nil {
		t.Fatal(err)
	}
	if prior.cat == nil {
		t.Fatal("ReadPrior did not load the saved catalog")
	}
	if got, want := prior.cat.Entries, catalogOf(mustPassages(t, out)).Entries; len(got) != len(want) {
		t.Fatalf("catalog holds %d passages, bundle %d", len(got), len(want))
	} else {
		for i := range got {
			if got[i].ID != want[i].ID || got[i].Content != want[i].Content {
				t.Fatalf("catalog entry %d: %s, bundle %s", i, got[i].ID, want[i].ID)
			}
		}
	}
	// The lines the catalog points at are the passages it names.
	some := []int{0, 7, 299}
	lines, err := readCatalogLines(out, prior.cat, some)
	if err != nil {
		t.Fatal(err)
	}
	all := mustPassages(t, out)
	for j, i := range some {
		if !reflect.DeepEqual(lines[j], all[i]) {
			t.Errorf("line of entry %d: %+v, want %+v", i, lines[j].ID, all[i].ID)
		}
	}

	moved := *prior.cat
	moved.Entries = append([]catalogEntry(nil), prior.cat.Entries...)
	moved.Entries[7].Off = moved.Entries[8].Off
	if _, err := readCatalogLines(out, &moved, []int{7}); err == nil {
		t.Error("a catalog entry pointing at another passage's line was read")
	}
	moved.Entries[7] = prior.cat.Entries[7]
	moved.Entries[7].Content[0] ^= 1
	if _, err := readCatalogLines(out, &moved, []int{7}); err == nil {
		t.Error("a line whose content differs from the catalog's was read")
	}

	next := append([]build.Passage(nil), ps[1:]...)
	next[3].Text += " and the alarm is logged"
	next = append(next, mkPassage("extra", "docs/extra.md", 1, "Extra", nil, "a new page about the yard"))
	viaCatalog := mustWrite(t, out, &Input{Passages: next, Prior: prior, Catalog: true})
	priorPlain, err := ReadPrior(plain)
	if err != nil || priorPlain.cat != nil {
		t.Fatalf("ReadPrior of a bundle without catalog: %v, catalog %v", err, priorPlain.cat != nil)
	}
	viaPassages := mustWrite(t, plain, &Input{Passages: next, Prior: priorPlain})
	if viaCatalog.BundleID != viaPassages.BundleID {
		t.Fatal("the same passages gave two bundle ids")
	}
	for _, name := range []string{DeltaFile, StatsFile} {
		if a, b := mustRead(t, filepath.Join(out, name)), mustRead(t, filepath.Join(plain, name)); string(a) != string(b) {
			t.Errorf("%s with a catalog:\n%s\nwithout:\n%s", name, a, b)
		}
	}
	var d Delta
	if err := json.Unmarshal(mustRead(t, filepath.Join(out, DeltaFile)), &d); err != nil {
		t.Fatal(err)
	}
	if len(d.Added) != 1 || len(d.Changed) != 1 || len(d.Removed) != 1 {
		t.Errorf("delta %+v, want 1 added, 1 changed, 1 removed", d)
	}

	// A catalog of another bundle, or an altered one, is not used.
	catFile := filepath.Join(CacheDir(out), catalogFile)
	cur := mustRead(t, catFile)
	cur[len(cur)/2] ^= 1
	if err := os.WriteFile(catFile, cur, 0o644); err != nil {
		t.Fatal(err)
	}
	if p, err := ReadPrior(out); err != nil || p.cat != nil {
		t.Errorf("an altered catalog was taken (err %v)", err)
	}
	if err := os.WriteFile(catFile, first, 0o644); err != nil {
		t.Fatal(err)
	}
	if p, err := ReadPrior(out); err != nil || p.cat != nil {
		t.Errorf("the catalog of the replaced bundle was taken (err %v)", err)
	}
}

func mustPassages(t *testing.T, dir string) []build.Passage {
	t.Helper()
	ps, err := ReadPassages(dir)
	if err != nil {
		t.Fatal(err)
	}
	return ps
}
