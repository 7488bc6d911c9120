package bundle

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"flag"
	"github.com/kbc-project/kbc/internal/asuser"
	"maps"
	"math/rand/v2"
	"os"
	"path/filepath"
	"runtime"
	"slices"
	"strings"
	"testing"
	"time"

	"github.com/kbc-project/kbc/build"
)

var update = flag.Bool("update", false, "rewrite the golden files in testdata/")

// toySettings has a few settings set and a glob with HTML characters, to
// check that the manifest sorts the keys and does not escape the text.
func toySettings() *Settings {
	return &Settings{Settings: build.Settings{AimTokens: 3, MaxTokens: 400, Tokenizer: "cl100k_base"}, Exclude: []string{"<a & b>"}}
}

func toyInput() *Input {
	return &Input{
		Passages:     toyPassages(),
		Settings:     toySettings(),
		Tool:         "kbc v0.0.0-test",
		SourceCommit: "0123456789abcdef0123456789abcdef01234567",
		BuiltAt:      time.Date(2024, 5, 6, 7, 8, 9, 500, time.FixedZone("X", 3600)),
		Counts:       map[string]int{"bad_files": 1},
		Files: map[string][]byte{
			"reports/stale.json": []byte("{\"stale\": []}\n"),
			"reports/dupes.md":   []byte("# Duplicates\n\nNone.\n"),
		},
	}
}

func golden(t *testing.T, name string, got []byte) {
	t.Helper()
	path := filepath.Join("testdata", name)
	if *update {
		if err := os.WriteFile(path, got, 0o644); err != nil {
			t.Fatal(err)
		}
		return
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("%v (run go test -update to create it)", err)
	}
	if !bytes.Equal(got, want) {
		t.Errorf("%s differs from golden file (go test -update rewrites it):\n%s", name, got)
	}
}

func TestWriteLayout(t *testing.T) {
	out := filepath.Join(t.TempDir(), "out")
	in := toyInput()
	m := mustWrite(t, out, in)

	manifest, err := os.ReadFile(filepath.Join(out, ManifestFile))
	if err != nil {
		t.Fatal(err)
	}
	golden(t, "toy-manifest.golden.json", manifest)
	passages, err := os.ReadFile(filepath.Join(out, PassagesFile))
	if err != nil {
		t.Fatal(err)
	}
	golden(t, "toy-passages.golden.jsonl", passages)

	t.Run("manifest", func(t *testing.T) {
		back, err := ReadManifest(out)
		if err != nil {
			t.Fatal(err)
		}
		again, err := back.marshal()
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(again, manifest) {
			t.Errorf("manifest does not survive a read and write:\n%s", again)
		}
		if !back.BuiltAt.Equal(time.Date(2024, 5, 6, 6, 8, 9, 0, time.UTC)) || back.BundleID != m.BundleID {
			t.Errorf("read back %v %s", back.BuiltAt, back.BundleID)
		}
		want := map[string]int{"bad_files": 1, "documents": 3, "passages": 5, "tokens": 17}
		if !maps.Equal(m.Counts, want) {
			t.Errorf("counts %v, want %v", m.Counts, want)
		}
		if got := string(m.Settings); !strings.HasPrefix(got, `{"aim_tokens":3,"boilerplate_min_pages":0,`) || !strings.Contains(got, `"exclude":["<a & b>"]`) {
			t.Errorf("settings %s", got)
		}
	})
	t.Run("files", func(t *testing.T) {
		tree := treeHashes(t, out)
		delete(tree, ManifestFile)
		if got, want := slices.Sorted(maps.Keys(m.Files)), slices.Sorted(maps.Keys(tree)); !slices.Equal(got, want) {
			t.Errorf("manifest lists %v, folder holds %v", got, want)
		}
		for name, h := range tree {
			if m.Files[name] != "sha256:"+h {
				t.Errorf("%s: manifest %s, file sha256:%s", name, m.Files[name], h)
			}
		}
		for _, name := range []string{"index/index_meta.json", "index/store/root.bolt", StatsFile, SchemaFile} {
			if _, ok := m.Files[name]; !ok {
				t.Errorf("%s not listed", name)
			}
		}
		entries, _ := os.ReadDir(filepath.Dir(out))
		if len(entries) != 1 {
			t.Errorf("parent holds %d entries, want only out", len(entries))
		}
	})
	t.Run("modes", func(t *testing.T) {
		if runtime.GOOS == "windows" {
			t.Skip("no Unix modes")
		}
		filepath.WalkDir(out, func(p string, d os.DirEntry, err error) error {
			fi, _ := d.Info()
			want := os.FileMode(0o644)
			if d.IsDir() {
				want = 0o755 | os.ModeDir
			}
			if fi.Mode() != want {
				t.Errorf("%s: mode %v, want %v", p, fi.Mode(), want)
			}
			return nil
		})
	})
	t.Run("passages", func(t *testing.T) {
		b := mustOpen(t, out)
		for _, p := range in.Passages {
			got, err := b.Passage(p.ID)
			if err != nil {
				t.Fatal(err)
			}
			if p.Heading == nil {
				p.Heading = []string{}
			}
			if !equalPassage(got, p) {
				t.Errorf("passage %s: got %+v, want %+v", p.ID, got, p)
			}
		}
		if _, err := b.Passage("nope"); err == nil {
			t.Error("unknown id found")
		}
	})
	t.Run("verify", func(t *testing.T) {
		mm, err := Verify(out)
		if err != nil || len(mm) != 0 {
			t.Errorf("Verify: %v, %v", mm, err)
		}
	})
}

func equalPassage(a, b build.Passage) bool {
	return a.ID == b.ID && a.Path == b.Path && a.Anchor == b.Anchor && a.Title == b.Title &&
		slices.Equal(a.Heading, b.Heading) && a.Text == b.Text && a.Line == b.Line &&
		a.EndLine == b.EndLine && a.Tokens == b.Tokens && a.Hash == b.Hash && a.Split == b.Split
}

// TestDeterministic writes the same passages three times, in different
// input orders, with different parallelism, once over an existing bundle,
// and expects byte-identical folders, index included. 2500 passages make
// three index segments, so the merge is covered.
func TestDeterministic(t *testing.T) {
	ps := genPassages(2500, 11)
	in := func(ps []build.Passage) *Input {
		return &Input{Passages: ps, Tool: "kbc test", Settings: toySettings()}
	}
	dir := t.TempDir()
	first := filepath.Join(dir, "first")
	mustWrite(t, first, in(ps))
	want := treeHashes(t, first)

	shuffled := slices.Clone(ps)
	rand.New(rand.NewPCG(1, 2)).Shuffle(len(shuffled), func(i, j int) {
		shuffled[i], shuffled[j] = shuffled[j], shuffled[i]
	})
	second := filepath.Join(dir, "second")
	prev := runtime.GOMAXPROCS(1)
	mustWrite(t, second, in(shuffled))
	runtime.GOMAXPROCS(prev)

	third := filepath.Join(dir, "third")
	mustWrite(t, third, in(genPassages(10, 1))) // something else, then replaced
	mustWrite(t, third, in(ps))

	for _, d := range []string{second, third} {
		got := treeHashes(t, d)
		if !maps.Equal(got, want) {
			for name := range maps.All(want) {
				if got[name] != want[name] {
					t.Errorf("%s: %s differs", filepath.Base(d), name)
				}
			}
			t.Errorf("%s: %d files, want %d", filepath.Base(d), len(got), len(want))
		}
	}
}

func flipByte(t *testing.T, path string, at int) {
	t.Helper()
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	data[at%len(data)] ^= 0x20
	if err := os.WriteFile(path, data, 0o644); err != nil {
		t.Fatal(err)
	}
}

func TestVerify(t *testing.T) {
	src := filepath.Join(t.TempDir(), "src")
	m := mustWrite(t, src, toyInput())
	var zapFile string
	for name := range m.Files {
		if strings.HasSuffix(name, ".zap") {
			zapFile = name
		}
	}
	tests := []struct {
		name   string
		change func(t *testing.T, dir string)
		want   []Mismatch
	}{
		{"untouched", func(*testing.T, string) {}, nil},
		{"opened and searched", func(t *testing.T, dir string) {
			b, err := Open(dir) // read-only: leaves the index files as they are
			if err != nil {
				t.Fatal(err)
			}
			if hits, err := b.Search("truck", 3); err != nil || len(hits) != 3 {
				t.Fatalf("search: %v, %v", hits, err)
			}
			if err := b.Close(); err != nil {
				t.Fatal(err)
			}
		}, nil},
		{"passages byte flipped", func(t *testing.T, dir string) {
			flipByte(t, filepath.Join(dir, PassagesFile), 10)
		}, []Mismatch{{File: PassagesFile, Want: m.Files[PassagesFile], Problem: Changed}}},
		{"index byte flipped", func(t *testing.T, dir string) {
			flipByte(t, filepath.Join(dir, filepath.FromSlash(zapFile)), 100)
		}, []Mismatch{{File: zapFile, Want: m.Files[zapFile], Problem: Changed}}},
		{"report removed", func(t *testing.T, dir string) {
			os.Remove(filepath.Join(dir, "reports", "dupes.md"))
		}, []Mismatch{{File: "reports/dupes.md", Want: m.Files["reports/dupes.md"], Problem: Missing}}},
		{"file added", func(t *testing.T, dir string) {
			os.WriteFile(filepath.Join(dir, "index", "notes.txt"), []byte("hi\n"), 0o644)
		}, []Mismatch{{File: "index/notes.txt", Got: "sha256:98ea6e4f216f2fb4b69fff9b3a44842c38686ca685f3f55dc48c5d3fb1107be4", Problem: Extra}}},
		{"bundle id edited", func(t *testing.T, dir string) {
			p := filepath.Join(dir, ManifestFile)
			data, _ := os.ReadFile(p)
			os.WriteFile(p, bytes.Replace(data, []byte(m.BundleID), []byte(strings.Repeat("0", 64)), 1), 0o644)
		}, []Mismatch{{File: ManifestFile, Want: "sha256:" + strings.Repeat("0", 64), Got: m.Files[PassagesFile], Problem: Changed}}},
		// A report swapped together with its hash in the manifest: the
		// bundle id still holds (it names passages.jsonl only), the
		// files digest does not.
		{"report and its listed hash replaced", func(t *testing.T, dir string) {
			os.WriteFile(filepath.Join(dir, "reports", "dupes.md"), []byte("forged\n"), 0o644)
			p := filepath.Join(dir, ManifestFile)
			data, _ := os.ReadFile(p)
			data = bytes.Replace(data, []byte(m.Files["reports/dupes.md"]), []byte("sha256:"+sha256Hex("forged\n")), 1)
			data = bytes.Replace(data, []byte(`"reports/dupes.md": 20`), []byte(`"reports/dupes.md": 7`), 1)
			os.WriteFile(p, data, 0o644)
		}, []Mismatch{{File: ManifestFile, Want: m.FilesDigest, Problem: Changed}}},
		{"report grown", func(t *testing.T, dir string) {
			f, _ := os.OpenFile(filepath.Join(dir, "reports", "dupes.md"), os.O_APPEND|os.O_WRONLY, 0)
			f.WriteString("more")
			f.Close()
		}, []Mismatch{{File: "reports/dupes.md", Want: "20 bytes", Got: "24 bytes", Problem: Changed}}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			dir := filepath.Join(t.TempDir(), "b")
			if err := os.CopyFS(dir, os.DirFS(src)); err != nil {
				t.Fatal(err)
			}
			tt.change(t, dir)
			got, err := Verify(dir)
			if err != nil {
				t.Fatal(err)
			}
			if len(got) != len(tt.want) {
				t.Fatalf("got %+v, want %+v", got, tt.want)
			}
			for i := range got {
				g, w := got[i], tt.want[i]
				if w.Problem == Changed && w.Got == "" && g.File == ManifestFile && g.Want == w.Want {
					g.Got = "" // the digest of the forged listing
				}
				if w.Problem == Changed && w.Got == "" && g.Got != "" { // a flipped byte: any other hash
					if g.Got == w.Want || !strings.HasPrefix(g.Got, "sha256:") {
						t.Errorf("got %+v", g)
					}
					g.Got = ""
				}
				if g != w {
					t.Errorf("got %+v, want %+v", g, w)
				}
			}
		})
	}
	t.Run("no manifest", func(t *testing.T) {
		if _, err := Verify(t.TempDir()); !errors.Is(err, os.ErrNotExist) {
			t.Errorf("got %v", err)
		}
	})
}

// TestWriteFailureKeepsOld makes Write fail early and late and expects the
// earlier bundle byte for byte, and no temporary folder left behind.
func TestWriteFailureKeepsOld(t *testing.T) {
	bad := func(mod func(in *Input)) *Input {
		in := toyInput()
		mod(in)
		return in
	}
	tests := []struct {
		name    string
		in      *Input
		hook    func(tmp string) error
		wantErr string
	}{
		{"path escapes", bad(func(in *Input) { in.Files["../x"] = []byte("x") }), nil,
			`invalid file path "../x"`},
		{"absolute path", bad(func(in *Input) { in.Files["/etc/x"] = []byte("x") }), nil,
			`invalid file path "/etc/x"`},
		{"backslash", bad(func(in *Input) { in.Files[`a\b`] = []byte("x") }), nil,
			`invalid file path "a\\b"`},
		{"clashes with index", bad(func(in *Input) { in.Files["index/x"] = []byte("x") }), nil,
			`file path "index/x" clashes with the bundle's own files`},
		{"clashes with manifest", bad(func(in *Input) { in.Files["manifest.json"] = []byte("x") }), nil,
			`file path "manifest.json" clashes with the bundle's own files`},
		{"file under file", bad(func(in *Input) { in.Files["reports/stale.json/x"] = []byte("x") }), nil,
			`file path "reports/stale.json/x" lies under file "reports/stale.json"`},
		{"late failure", toyInput(), func(tmp string) error {
			if _, err := os.Stat(filepath.Join(tmp, ManifestFile)); err != nil {
				return err
			}
			return errors.New("disk on fire")
		}, "disk on fire"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			parent := t.TempDir()
			out := filepath.Join(parent, "out")
			mustWrite(t, out, &Input{Passages: genPassages(20, 5), Tool: "old"})
			before := treeHashes(t, out)
			_, _, err := write(out, tt.in, tt.hook)
			if err == nil {
				t.Fatal("write did not fail")
			}
			if want := "writing bundle " + out + ": " + tt.wantErr; err.Error() != want {
				t.Errorf("error:\n got %s\nwant %s", err, want)
			}
			if after := treeHashes(t, out); !maps.Equal(before, after) {
				t.Error("the old bundle changed")
			}
			if entries, _ := os.ReadDir(parent); len(entries) != 1 {
				t.Errorf("parent holds %d entries, want only out", len(entries))
			}
		})
	}
}

func TestWriteRefuses(t *testing.T) {
	dir := t.TempDir()
	file := filepath.Join(dir, "file")
	os.WriteFile(file, []byte("x"), 0o644)
	full := filepath.Join(dir, "full")
	os.MkdirAll(filepath.Join(full, "photos"), 0o755)
	tests := []struct {
		name, out, want string
	}{
		{"out is a file", file, "writing bundle " + file + ": it exists and is not a folder"},
		{"out is another folder", full, "writing bundle " + full + ": refusing to replace " + full + ": not a kbc bundle: no manifest.json; it holds photos/"},
		{"parent is a file", filepath.Join(file, "out"), "writing bundle " + filepath.Join(file, "out") + ": cannot use it: "},
		{"parent is missing", filepath.Join(dir, "nope", "out"), "writing bundle " + filepath.Join(dir, "nope", "out") + ": cannot create a folder in " + filepath.Join(dir, "nope") + ": "},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			_, err := Write(tt.out, toyInput())
			if err == nil || !strings.HasPrefix(err.Error(), tt.want) {
				t.Errorf("got %v, want %q...", err, tt.want)
			}
		})
	}
	t.Run("empty folder is fine", func(t *testing.T) {
		empty := filepath.Join(dir, "empty")
		os.Mkdir(empty, 0o755)
		mustWrite(t, empty, toyInput())
	})
	t.Run("read-only parent", func(t *testing.T) {
		if runtime.GOOS == "windows" {
			t.Skip("needs Unix permission bits")
		}
		if asuser.Root() { // root writes anywhere: run it as nobody
			asuser.Run(t, asuser.Self(t), nil)
			return
		}
		ro := filepath.Join(dir, "ro")
		os.Mkdir(ro, 0o555)
		out := filepath.Join(ro, "out")
		_, err := Write(out, toyInput())
		if err == nil || !strings.Contains(err.Error(), "cannot create a folder in "+ro) {
			t.Errorf("got %v", err)
		}
	})
}

func TestBadPassages(t *testing.T) {
	ps := toyPassages()
	ps[0].ID = ""
	ps[1].ID = "c"
	ps[2].Line = 0
	ps[3].Hash = "ABC"
	ps[4].Tokens = -1
	ps[4].EndLine = 0
	ps[4].Heading = []string{"ok", "bad \xff"}
	out := filepath.Join(t.TempDir(), "out")
	_, err := Write(out, &Input{Passages: ps})
	want := "writing bundle " + out + `: 7 bad passages:
depot.md: passage id c is used twice
depot.md: passage c has lines 0-3
depot.md:9: passage d has hash "ABC", want 64 lower-case hex digits
dock.md:1: passage e has lines 1-0
dock.md:1: passage e has -1 tokens
dock.md:1: passage e holds invalid UTF-8
yard.md:1: passage has no id`
	if err == nil || err.Error() != want {
		t.Errorf("got\n%v\nwant\n%s", err, want)
	}
}

// TestPlaceFallback covers the two-rename path used where the system cannot
// exchange two names atomically.
func TestPlaceFallback(t *testing.T) {
	dir := t.TempDir()
	out := filepath.Join(dir, "out")
	mustWrite(t, out, &Input{Passages: genPassages(3, 1)})
	tmp := filepath.Join(dir, ".out.tmp-1")
	mustWrite(t, tmp, toyInput())
	want := treeHashes(t, tmp)
	noSwap := func(a, b string) error { return errNoExchange }
	if err := place(tmp, out, noSwap); err != nil {
		t.Fatal(err)
	}
	if got := treeHashes(t, out); !maps.Equal(got, want) {
		t.Error("out is not the new bundle")
	}
	if entries, _ := os.ReadDir(dir); len(entries) != 1 {
		t.Errorf("dir holds %d entries, want only out", len(entries))
	}
}

func TestCanonicalJSON(t *testing.T) {
	tests := []struct {
		in   any
		want string
	}{
		{nil, ""},
		{map[string]int{"b": 1, "a": 2}, `{"a":2,"b":1}`},
		{struct {
			Z int `json:"z"`
			A any `json:"a"`
		}{1, map[string]any{"y": []int{3, 1}, "x": 12345678901234567}}, `{"a":{"x":12345678901234567,"y":[3,1]},"z":1}`},
		{"<&>", `"<&>"`},
	}
	for _, tt := range tests {
		got, err := canonicalJSON(tt.in)
		if err != nil || string(got) != tt.want {
			t.Errorf("canonicalJSON(%v) = %s, %v; want %s", tt.in, got, err, tt.want)
		}
	}
}

func sha256Hex(s string) string {
	sum := sha256.Sum256([]byte(s))
	return hex.EncodeToString(sum[:])
}
