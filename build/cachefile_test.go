package build

import (
	"context"
	"encoding/binary"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"
	"testing/fstest"
	"time"

	"github.com/kbc-project/kbc/build/buildcache"
)

// cachedTree is a small docs tree with boilerplate, a duplicate pair and a
// bad page, so that every part
// of the cache (entries, the duplicate stage's memo, the hashing memos)
// has something in it.
func cachedTree() fstest.MapFS {
	old := time.Now().Add(-time.Hour)
	fsys := fstest.MapFS{}
	for i := range 40 {
		fsys[fmt.Sprintf("depot/page%02d.md", i)] = &fstest.MapFile{ModTime: old, Data: fmt.Appendf(nil,
			"# Depot %d\n\nTrailer bay %d is swept every morning before the first reefer arrives, and the sweeper signs the bay log with the time and the state of the drain.\n\nQuestions about this page go to the depot desk.\n", i, i)}
	}
	copyText := "# Seals\n\nReefer door seals are checked every 30 days by the workshop, and a torn seal takes the trailer off the road until it is replaced.\n"
	fsys["fleet/seals.md"] = &fstest.MapFile{ModTime: old, Data: []byte(copyText)}
	fsys["fleet/seals-copy.md"] = &fstest.MapFile{ModTime: old, Data: []byte(copyText)}
	fsys["broken.html"] = &fstest.MapFile{ModTime: old, Data: []byte("<html><body><nav>menu</nav></body></html>")}
	return fsys
}

func runWith(tb testing.TB, fsys fstest.MapFS, c *Cache) *Result {
	tb.Helper()
	return runSettings(tb, fsys, DefaultSettings(), c)
}

// runSettings runs a build of fsys with settings s and cache c (nil for
// none) at a fixed time.
func runSettings(tb testing.TB, fsys fstest.MapFS, s Settings, c *Cache) *Result {
	tb.Helper()
	opts := DefaultOptions()
	opts.Settings = s
	opts.Cache = c
	opts.Now = time.Date(2026, 12, 1, 0, 0, 0, 0, time.UTC)
	res, err := Run(context.Background(), fsys, opts)
	if err != nil {
		tb.Fatal(err)
	}
	return res
}

// TestCacheSaveLoad: a cache saved by one process and loaded by the next
// gives the same result as a clean run and reads no file again; after one
// page changes, Save rewrites only the entry file holding it and the
// state.
func TestCacheSaveLoad(t *testing.T) {
	fsys := cachedTree()
	dir := t.TempDir()
	clean := runWith(t, fsys, nil)

	c := NewCache("test")
	runWith(t, fsys, c)
	if err := c.Save(dir); err != nil {
		t.Fatal(err)
	}
	if c.Changed() {
		t.Error("a saved cache still reports changes")
	}
	loaded, err := LoadCache(dir)
	if err != nil {
		t.Fatal(err)
	}
	if !loaded.Fits("test") || loaded.Fits("test 2") {
		t.Error("a loaded cache does not know its tool version")
	}
	if loaded.dedupe == nil || loaded.memos[0] == nil || loaded.memos[0].Len() == 0 || loaded.memos[1] == nil {
		t.Error("the duplicate stage's memos were not loaded")
	}
	got := runWith(t, fsys, loaded)
	if got.Stats.Reused != got.Stats.Documents {
		t.Errorf("reused %d of %d documents", got.Stats.Reused, got.Stats.Documents)
	}
	if !reflect.DeepEqual(got.Passages, clean.Passages) || !reflect.DeepEqual(got.Duplicates, clean.Duplicates) ||
		fmt.Sprint(got.Problems) != fmt.Sprint(clean.Problems) {
		t.Error("a run from the loaded cache differs from a clean run")
	}
	if got.Stats.BoilerplateDropped != clean.Stats.BoilerplateDropped || clean.Stats.BoilerplateDropped == 0 || got.Stats.Duplicates != 1 {
		t.Errorf("stats from the cache %+v, clean %+v", got.Stats, clean.Stats)
	}

	// One page changes: its entry file and the state are rewritten, no
	// other file.
	before := fileTimes(t, dir)
	time.Sleep(20 * time.Millisecond)
	page := "depot/page07.md"
	fsys[page] = &fstest.MapFile{ModTime: time.Now(), Data: []byte("# Depot 7\n\nBay 7 is closed for resurfacing.\n")}
	runWith(t, fsys, loaded)
	if err := loaded.Save(dir); err != nil {
		t.Fatal(err)
	}
	var rewritten []string
	for name, mt := range fileTimes(t, dir) {
		if !mt.Equal(before[name]) {
			rewritten = append(rewritten, name)
		}
	}
	want := []string{shardFile(shardOf(page)), stateFile}
	if len(rewritten) != 2 || !(rewritten[0] == want[0] && rewritten[1] == want[1] || rewritten[0] == want[1] && rewritten[1] == want[0]) {
		t.Errorf("Save rewrote %v, want %v", rewritten, want)
	}
	again, err := LoadCache(dir)
	if err != nil {
		t.Fatal(err)
	}
	if e := again.entries[page]; e == nil || e.Doc == nil || e.Doc.Title != "Depot 7" || len(again.entries) != len(loaded.entries) {
		t.Error("the changed page's entry did not survive a save and load")
	}
}

func fileTimes(t *testing.T, dir string) map[string]time.Time {
	t.Helper()
	ents, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	m := map[string]time.Time{}
	for _, e := range ents {
		fi, err := e.Info()
		if err != nil {
			t.Fatal(err)
		}
		m[e.Name()] = fi.ModTime()
	}
	return m
}

// TestLoadCacheRejects: a cache folder that is empty gives ErrNoCache; one
// with a torn, altered, missing or foreign entry file gives an error, so
// the caller starts afresh instead of trusting it. A bad state file only
// loses the memos.
func TestLoadCacheRejects(t *testing.T) {
	if _, err := LoadCache(t.TempDir()); !errors.Is(err, ErrNoCache) {
		t.Errorf("empty folder: %v, want ErrNoCache", err)
	}
	save := func(tool string) string {
		dir := t.TempDir()
		c := NewCache(tool)
		runWith(t, cachedTree(), c)
		if err := c.Save(dir); err != nil {
			t.Fatal(err)
		}
		return dir
	}
	shard := shardFile(shardOf("fleet/seals.md"))
	for name, spoil := range map[string]func(dir string) error{
		"torn": func(dir string) error {
			p := filepath.Join(dir, shard)
			data, _ := os.ReadFile(p)
			return os.WriteFile(p, data[:len(data)/2], 0o644)
		},
		"altered": func(dir string) error {
			p := filepath.Join(dir, shard)
			data, _ := os.ReadFile(p)
			data[len(data)/2] ^= 0x20
			return os.WriteFile(p, data, 0o644)
		},
		"missing": func(dir string) error { return os.Remove(filepath.Join(dir, shard)) },
		"foreign": func(dir string) error {
			other := save("another tool")
			data, _ := os.ReadFile(filepath.Join(other, shard))
			return os.WriteFile(filepath.Join(dir, shard), data, 0o644)
		},
		"misplaced": func(dir string) error {
			data, _ := os.ReadFile(filepath.Join(dir, shard))
			return os.WriteFile(filepath.Join(dir, shardFile((shardOf("fleet/seals.md")+1)%cacheShards)), data, 0o644)
		},
	} {
		dir := save("test")
		if err := spoil(dir); err != nil {
			t.Fatal(err)
		}
		if c, err := LoadCache(dir); err == nil || errors.Is(err, ErrNoCache) {
			t.Errorf("%s entry file: loaded (%v entries), err %v", name, c != nil, err)
		}
	}
	dir := save("test")
	if err := os.WriteFile(filepath.Join(dir, stateFile), []byte("junk"), 0o644); err != nil {
		t.Fatal(err)
	}
	c, err := LoadCache(dir)
	if err != nil || len(c.entries) == 0 || c.memos[0] != nil || c.dedupe != nil {
		t.Errorf("bad state file: err %v; want the entries without memos", err)
	}
}

// FuzzReadShard: any bytes with a valid checksum either decode as entries
// or give an error; never a panic. (The checksum itself rejects almost
// every damaged file before gob sees it; this covers what passes it.)
func FuzzReadShard(f *testing.F) {
	dir := f.TempDir()
	c := NewCache("test")
	runWith(f, cachedTree(), c)
	if err := c.Save(dir); err != nil {
		f.Fatal(err)
	}
	data, err := os.ReadFile(filepath.Join(dir, shardFile(shardOf("fleet/seals.md"))))
	if err != nil {
		f.Fatal(err)
	}
	f.Add(data[:len(data)-4])
	f.Fuzz(func(t *testing.T, body []byte) {
		sum := buildcache.Checksum(body)
		decodeShard("entries.gob", binary.LittleEndian.AppendUint32(append([]byte(nil), body...), sum))
	})
}

// TestCacheSettingsChange: a change of the split settings re-splits every
// page without parsing any again, and the result is a clean run's with the
// new settings; going back reuses nothing stale.
func TestCacheSettingsChange(t *testing.T) {
	fsys := cachedTree()
	var long strings.Builder
	long.WriteString("# Yard rules\n")
	// One section over the limit, so that the aim decides how it is
	// packed (sections with anchors of their own are never joined).
	for i := range 20 {
		fmt.Fprintf(&long, "\nRule %d. Drivers keep to lane %d in the yard, stop at the white line before the dock, and wait for the marshal's signal before reversing a reefer trailer onto bay %d.\n", i, i, i)
	}
	fsys["yard/rules.md"] = &fstest.MapFile{ModTime: time.Now().Add(-time.Hour), Data: []byte(long.String())}
	c := NewCache("test")
	run := func(aim int, cache *Cache) *Result {
		t.Helper()
		s := DefaultSettings()
		s.AimTokens = aim
		return runSettings(t, fsys, s, cache)
	}
	first := run(300, c)
	for _, aim := range []int{64, 300} {
		got, want := run(aim, c), run(aim, nil)
		if aim != 300 && len(got.Passages) == len(first.Passages) {
			t.Fatalf("aim %d makes as many passages as aim 300: the test shows nothing", aim)
		}
		if got.Stats.Reused != got.Stats.Documents {
			t.Errorf("aim %d: parsed %d pages again after a settings change", aim, got.Stats.Documents-got.Stats.Reused)
		}
		if !reflect.DeepEqual(got.Passages, want.Passages) {
			t.Errorf("aim %d: passages differ from a clean run's", aim)
		}
	}
}
