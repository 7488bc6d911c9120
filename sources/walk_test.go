package sources

import (
	"io/fs"
	"os"
	"path/filepath"
	"reflect"
	"slices"
	"strings"
	"syscall"
	"testing"
	"testing/fstest"
	"time"
)

func paths(files []File) []string {
	var out []string
	for _, f := range files {
		out = append(out, f.Path)
	}
	return out
}

func errStrings(errs []*Error) []string {
	var out []string
	for _, e := range errs {
		out = append(out, e.Error())
	}
	return out
}

func TestWalkFilters(t *testing.T) {
	fsys := fstest.MapFS{
		"index.md":               {Data: []byte("# Home")},
		"guide/setup.mdx":        {Data: []byte("# Setup")},
		"guide/old/legacy.html":  {Data: []byte("<h1>Old</h1>")},
		"guide/notes.txt":        {Data: []byte("not a page")},
		".git/HEAD.md":           {Data: []byte("hidden folder")},
		"guide/.draft.md":        {Data: []byte("hidden file")},
		"api/ref.htm":            {Data: []byte("<p>ref</p>")},
		"big.md":                 {Data: make([]byte, 2048)},
		"node_modules/pkg/a.md":  {Data: []byte("vendored")},
		"guide/old/keep/this.md": {Data: []byte("# Keep")},
	}
	tests := []struct {
		name string
		opts WalkOptions
		want []string
		errs []string
	}{
		{"defaults", WalkOptions{MaxSize: 1024},
			[]string{"api/ref.htm", "guide/old/keep/this.md", "guide/old/legacy.html", "guide/setup.mdx", "index.md", "node_modules/pkg/a.md"},
			[]string{"big.md: file is 2.0 kB, over the 1.0 kB size limit; skipped"}},
		{"exclude folder by name", WalkOptions{Exclude: []string{"node_modules", "old"}},
			[]string{"api/ref.htm", "big.md", "guide/setup.mdx", "index.md"}, nil},
		{"exclude with double star", WalkOptions{Exclude: []string{"guide/**/*.html"}},
			[]string{"api/ref.htm", "big.md", "guide/old/keep/this.md", "guide/setup.mdx", "index.md", "node_modules/pkg/a.md"}, nil},
		{"include only markdown under guide", WalkOptions{Include: []string{"guide/**/*.md", "guide/*.mdx"}},
			[]string{"guide/old/keep/this.md", "guide/setup.mdx"}, nil},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			files, errs := Walk(fsys, tc.opts)
			if got := paths(files); !reflect.DeepEqual(got, tc.want) {
				t.Errorf("files = %q\nwant %q", got, tc.want)
			}
			if got := errStrings(errs); !reflect.DeepEqual(got, tc.errs) {
				t.Errorf("errors = %q\nwant %q", got, tc.errs)
			}
		})
	}
}

func TestMatch(t *testing.T) {
	tests := []struct {
		glob, path string
		want       bool
	}{
		{"*.md", "a/b/c.md", true},
		{"*.md", "c.mdx", false},
		{"a/*.md", "a/c.md", true},
		{"a/*.md", "a/b/c.md", false},
		{"a/**/*.md", "a/c.md", true},
		{"a/**/*.md", "a/b/d/c.md", true},
		{"**/drafts", "x/y/drafts", true},
		{"drafts/", "x/drafts", true},
		{"[", "x", false},
	}
	for _, tc := range tests {
		if got := Match(tc.glob, tc.path); got != tc.want {
			t.Errorf("Match(%q, %q) = %v, want %v", tc.glob, tc.path, got, tc.want)
		}
	}
}

// TestWalkSymlinks uses a real folder, since fstest.MapFS has no symlinks.
func TestWalkSymlinks(t *testing.T) {
	root := t.TempDir()
	outside := t.TempDir()
	write := func(p, s string) {
		t.Helper()
		if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(p, []byte(s), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	link := func(target, name string) {
		t.Helper()
		if err := os.Symlink(target, filepath.Join(root, name)); err != nil {
			t.Skipf("symlinks not supported here: %v", err)
		}
	}
	write(filepath.Join(root, "docs/a.md"), "# A")
	write(filepath.Join(outside, "secret.md"), "# outside")
	link("docs/a.md", "alias.md")                                     // file inside the root: followed
	link(filepath.Join(outside, "secret.md"), "abs.md")               // absolute: leaves the root
	link("../../"+filepath.Base(outside)+"/secret.md", "docs/rel.md") // relative, leaves the root
	link("..", "docs/up")                                             // folder loop
	link("self.md", "self.md")                                        // link to itself
	link("docs", "mirror")                                            // folder inside the root: followed

	files, errs := Walk(os.DirFS(root), WalkOptions{})
	want := []string{"alias.md", "docs/a.md", "mirror/a.md"}
	if got := paths(files); !reflect.DeepEqual(got, want) {
		t.Errorf("files = %q, want %q", got, want)
	}
	if files[0].Target != "docs/a.md" {
		t.Errorf("alias.md target = %q, want docs/a.md", files[0].Target)
	}
	got := strings.Join(errStrings(errs), "\n")
	for _, w := range []string{
		"abs.md: symlink points outside the source root",
		"docs/rel.md: symlink points outside the source root",
		"docs/up: symlink loop: leads back to .",
		"mirror/up: symlink loop: leads back to .",
		"self.md: symlink loop: more than 40 links in a row",
	} {
		if !strings.Contains(got, w) {
			t.Errorf("errors lack %q; got:\n%s", w, got)
		}
	}
}

// A file the folder lists but will not open, and one that opens but
// fails part-way through reading, are each one error naming the file.
// The failing file system stands in for permission bits, which root (as
// CI runs) reads past.
func TestReadFileUnreadable(t *testing.T) {
	fsys := failingFS{MapFS: fstest.MapFS{
		"locked.md": {Data: []byte("# x")},
		"torn.md":   {Data: []byte("# y")},
	}}
	files, errs := Walk(fsys, WalkOptions{})
	if len(errs) > 0 || len(files) != 2 {
		t.Fatalf("walk: %v %v", files, errs)
	}
	for _, tt := range []struct{ file, want string }{
		{"locked.md", "locked.md: cannot read: permission denied"},
		{"torn.md", "torn.md: cannot read: input/output error"},
	} {
		i := slices.IndexFunc(files, func(f File) bool { return f.Path == tt.file })
		_, err := ReadFile(fsys, files[i], 0)
		if err == nil || err.Error() != tt.want {
			t.Errorf("%s: err = %v, want %q", tt.file, err, tt.want)
		}
	}
}

// failingFS refuses to open locked.md (permission denied) and fails
// reads of torn.md (an I/O error), as a disk or a mode of 000 would.
type failingFS struct{ fstest.MapFS }

func (f failingFS) Open(name string) (fs.File, error) {
	switch name {
	case "locked.md":
		return nil, &fs.PathError{Op: "open", Path: name, Err: syscall.EACCES}
	case "torn.md":
		fh, err := f.MapFS.Open(name)
		if err != nil {
			return nil, err
		}
		return tornFile{fh}, nil
	}
	return f.MapFS.Open(name)
}

type tornFile struct{ fs.File }

func (tornFile) Read([]byte) (int, error) {
	return 0, &fs.PathError{Op: "read", Path: "torn.md", Err: syscall.EIO}
}

func TestLooksLikeMDX(t *testing.T) {
	tests := []struct {
		src  string
		want bool
	}{
		{"# Title\n\n{/* DO NOT EDIT. generated */}\n\nText.", true},
		{"# Title\n\n<Callout>Careful.</Callout>\n", true},
		{"import { Tabs } from 'nextra'\n\n# Title", true},
		{"# Title\n\nimport the file before you start.\n", false},
		{"# Title\n\n```jsx\n<Button />\n{/* x */}\n```\n", false},
		{"# Title\n\n<div>plain html block</div>\n", false},
	}
	for _, tc := range tests {
		if got := looksLikeMDX([]byte(tc.src)); got != tc.want {
			t.Errorf("looksLikeMDX(%q) = %v, want %v", tc.src, got, tc.want)
		}
	}
}

// TestTOMLLocalDates: TOML v1.0.0 ("Local Date-Time", "Local Date") leaves
// the zone of such values to the reader; kbc reads them as UTC so that the
// result does not depend on the machine's zone. The decoder fixes the
// zone at start-up, so other zones are simulated with the zone names it
// uses (BurntSushi/toml v1.6.0 internal/tz.go).
func TestTOMLLocalDates(t *testing.T) {
	front, _, _, err := SplitFrontMatter("a.md", []byte("+++\nupdated = 2026-08-19\nat = 2026-08-19T14:05:00\nzoned = 2026-08-19T14:05:00+02:00\n+++\n# x\n"))
	if err != nil {
		t.Fatal(err)
	}
	if front["updated"] != "2026-08-19" || front["at"] != "2026-08-19T14:05:00Z" || front["zoned"] != "2026-08-19T14:05:00+02:00" {
		t.Errorf("front = %v", front)
	}
	for _, off := range []int{9 * 3600, -7 * 3600} {
		at := time.Date(2026, 8, 19, 14, 5, 0, 0, time.FixedZone("datetime-local", off))
		date := time.Date(2026, 8, 19, 0, 0, 0, 0, time.FixedZone("date-local", off))
		if got := frontTime(at); got != "2026-08-19T14:05:00Z" {
			t.Errorf("offset %d: local date-time = %s", off, got)
		}
		if got := frontTime(date); got != "2026-08-19" {
			t.Errorf("offset %d: local date = %s", off, got)
		}
	}
}
