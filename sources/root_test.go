package sources

import (
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"testing/fstest"
)

// escapeTree makes a source root whose links lead outside it through a
// symlinked folder: r -> a folder outside, p.md -> r/secret.md. Each
// link's own target text looks harmless ("r/secret.md"); only resolving
// r shows where it goes.
func escapeTree(t *testing.T) (root string) {
	t.Helper()
	root, outside := t.TempDir(), t.TempDir()
	if err := os.WriteFile(filepath.Join(outside, "secret.md"), []byte("# Secret\n\npassword\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(root, "ok.md"), []byte("# Ok\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	for _, l := range [][2]string{
		{outside, "r"},                         // absolute, leaves the root
		{"r/secret.md", "p.md"},                // through r
		{"../" + filepath.Base(outside), "up"}, // relative, leaves the root
		{"up/secret.md", "q.md"},               // through up
		{"r", "rr"},                            // a link to a link that leaves
		{"rr/secret.md", "s.md"},
	} {
		if err := os.Symlink(l[0], filepath.Join(root, l[1])); err != nil {
			t.Skipf("symlinks not supported here: %v", err)
		}
	}
	return root
}

// TestWalkSymlinkThroughFolder: a link whose target passes through a
// symlinked folder that leaves the root is refused, with os.DirFS (the
// walk resolves every component itself) and with OpenDir.
func TestWalkSymlinkThroughFolder(t *testing.T) {
	root := escapeTree(t)
	dir, err := OpenDir(root)
	if err != nil {
		t.Fatal(err)
	}
	defer dir.Close()
	for name, fsys := range map[string]fs.FS{"DirFS": os.DirFS(root), "OpenDir": dir} {
		t.Run(name, func(t *testing.T) {
			files, errs := Walk(fsys, WalkOptions{})
			if got := strings.Join(paths(files), " "); got != "ok.md" {
				t.Errorf("files = %q, want only ok.md", got)
			}
			got := strings.Join(errStrings(errs), "\n")
			for _, w := range []string{"p.md: symlink points outside the source root", "q.md: symlink points outside the source root", "s.md: symlink points outside the source root"} {
				if !strings.Contains(got, w) {
					t.Errorf("errors lack %q; got:\n%s", w, got)
				}
			}
		})
	}
}

// TestOpenDirReadsStayInside: even a File that names a path through a
// link out of the root (listed before the link changed, say) cannot be
// read through OpenDir.
func TestOpenDirReadsStayInside(t *testing.T) {
	root := escapeTree(t)
	dir, err := OpenDir(root)
	if err != nil {
		t.Fatal(err)
	}
	defer dir.Close()
	for _, target := range []string{"r/secret.md", "p.md", "up/secret.md", "../x.md"} {
		data, rerr := ReadFile(dir, File{Path: "p.md", Target: target}, 0)
		if rerr == nil {
			t.Errorf("%s: read %q from outside the root", target, data)
		}
	}
	if _, rerr := ReadFile(dir, File{Path: "ok.md", Target: "ok.md"}, 0); rerr != nil {
		t.Errorf("ok.md: %v", rerr)
	}
}

// TestWalkSpecialFiles: named pipes, sockets and devices are skipped and
// reported, not passed over in silence.
func TestWalkSpecialFiles(t *testing.T) {
	fsys := fstest.MapFS{
		"a.md":      {Data: []byte("# A")},
		"pipe.md":   {Mode: fs.ModeNamedPipe},
		"sock":      {Mode: fs.ModeSocket},
		"tty.md":    {Mode: fs.ModeDevice | fs.ModeCharDevice},
		"skip/p.md": {Mode: fs.ModeNamedPipe},
	}
	files, errs := Walk(fsys, WalkOptions{Exclude: []string{"skip"}})
	if got := strings.Join(paths(files), " "); got != "a.md" {
		t.Errorf("files = %q", got)
	}
	want := "pipe.md: a named pipe, not a regular file; skipped\n" +
		"sock: a socket, not a regular file; skipped\n" +
		"tty.md: a device, not a regular file; skipped"
	if got := strings.Join(errStrings(errs), "\n"); got != want {
		t.Errorf("errors:\n%s\nwant:\n%s", got, want)
	}
}
