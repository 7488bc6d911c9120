package watch

import (
	"context"
	"errors"
	"fmt"
	"github.com/kbc-project/kbc/internal/asuser"
	"io/fs"
	"os"
	"path/filepath"
	"runtime"
	"slices"
	"strings"
	"sync"
	"sync/atomic"
	"syscall"
	"testing"
	"time"
)

// waitTimeout bounds every wait on a condition. It is generous on purpose:
// the machines running these tests are small and shared, and a wait returns
// as soon as its condition holds.
const waitTimeout = 15 * time.Second

// harness runs a Watcher on a folder and records every rebuild.
type harness struct {
	t      *testing.T
	root   string
	w      *Watcher
	cancel context.CancelFunc
	runErr chan error

	mu      sync.Mutex
	changes []Change
	errs    []error
	notify  chan struct{} // pinged after each rebuild and each error

	active  atomic.Int32
	overlap atomic.Bool
	hook    func(ctx context.Context, n int, c Change) error // optional, runs inside rebuild
}

// start creates a Watcher on root and runs it until the test ends.
func start(t *testing.T, root string, opts Options, hook func(ctx context.Context, n int, c Change) error) *harness {
	t.Helper()
	h := &harness{t: t, root: root, notify: make(chan struct{}, 1), runErr: make(chan error, 1), hook: hook}
	onErr := opts.OnError
	opts.OnError = func(err error) {
		if onErr != nil {
			onErr(err)
		}
		h.mu.Lock()
		h.errs = append(h.errs, err)
		h.mu.Unlock()
		h.ping()
	}
	w, err := New(root, opts)
	if err != nil {
		t.Fatal(err)
	}
	h.w = w
	ctx, cancel := context.WithCancel(context.Background())
	h.cancel = cancel
	go func() { h.runErr <- w.Run(ctx, h.rebuild) }()
	t.Cleanup(func() {
		cancel()
		if err := w.Close(); err != nil {
			t.Errorf("Close: %v", err)
		}
		if h.overlap.Load() {
			t.Errorf("two rebuilds ran at once")
		}
	})
	return h
}

func (h *harness) ping() {
	select {
	case h.notify <- struct{}{}:
	default:
	}
}

func (h *harness) rebuild(ctx context.Context, c Change) error {
	if h.active.Add(1) != 1 {
		h.overlap.Store(true)
	}
	defer h.active.Add(-1)
	if !slices.IsSorted(c.Paths) || len(slices.Compact(slices.Clone(c.Paths))) != len(c.Paths) {
		h.t.Errorf("paths not sorted and unique: %q", c.Paths)
	}
	if len(c.Paths) == 0 && !c.All {
		h.t.Errorf("empty change")
	}
	h.mu.Lock()
	n := len(h.changes)
	h.changes = append(h.changes, c)
	h.mu.Unlock()
	var err error
	if h.hook != nil {
		err = h.hook(ctx, n, c)
	}
	h.ping()
	return err
}

// count returns the number of rebuilds so far.
func (h *harness) count() int {
	h.mu.Lock()
	defer h.mu.Unlock()
	return len(h.changes)
}

// waitFor waits until cond holds for the rebuilds and errors recorded so
// far, and fails the test after waitTimeout.
func (h *harness) waitFor(what string, cond func(changes []Change, errs []error) bool) {
	h.t.Helper()
	deadline := time.After(waitTimeout)
	for {
		h.mu.Lock()
		ok := cond(h.changes, h.errs)
		h.mu.Unlock()
		if ok {
			return
		}
		select {
		case <-h.notify:
		case err := <-h.runErr:
			h.t.Fatalf("waiting for %s: Run returned early: %v", what, err)
		case <-deadline:
			h.mu.Lock()
			defer h.mu.Unlock()
			h.t.Fatalf("waiting for %s: timed out; rebuilds: %+v; errors: %v", what, h.changes, h.errs)
		}
	}
}

// union returns the set of paths reported by changes.
func union(changes []Change) map[string]bool {
	u := map[string]bool{}
	for _, c := range changes {
		for _, p := range c.Paths {
			u[p] = true
		}
	}
	return u
}

func write(t *testing.T, path, content string) {
	t.Helper()
	if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(path, []byte(content), 0o644); err != nil {
		t.Fatal(err)
	}
}

func must(t *testing.T, err error) {
	t.Helper()
	if err != nil {
		t.Fatal(err)
	}
}

// step is one action of a scenario and the paths it must report: every
// path in want, and nothing else except paths below under (when set) and
// paths wanted by earlier steps (late duplicates of their events).
type step struct {
	do    func(t *testing.T, root, outside string)
	want  []string
	under string
}

func TestScenarios(t *testing.T) {
	j := filepath.Join
	tests := []struct {
		name   string
		files  []string // created before the watcher starts
		ignore func(rel string, isDir bool) bool
		steps  []step
	}{
		{name: "create file", steps: []step{{
			do:   func(t *testing.T, root, _ string) { write(t, j(root, "a.md"), "# A") },
			want: []string{"a.md"},
		}}},
		{name: "edit file", files: []string{"a.md"}, steps: []step{{
			do: func(t *testing.T, root, _ string) {
				f, err := os.OpenFile(j(root, "a.md"), os.O_APPEND|os.O_WRONLY, 0)
				must(t, err)
				_, err = f.WriteString("\nmore text\n")
				must(t, err)
				must(t, f.Close())
			},
			want: []string{"a.md"},
		}}},
		{name: "rename file", files: []string{"a.md"}, steps: []step{{
			do:   func(t *testing.T, root, _ string) { must(t, os.Rename(j(root, "a.md"), j(root, "b.md"))) },
			want: []string{"a.md", "b.md"},
		}}},
		{name: "create in existing subfolder", files: []string{"sub/x.md"}, steps: []step{{
			do:   func(t *testing.T, root, _ string) { write(t, j(root, "sub", "y.md"), "y") },
			want: []string{"sub/y.md"},
		}}},
		{name: "remove file", files: []string{"a.md", "b.md"}, steps: []step{{
			do:   func(t *testing.T, root, _ string) { must(t, os.Remove(j(root, "a.md"))) },
			want: []string{"a.md"},
		}}},
		{name: "atomic save: temp file renamed over the target", files: []string{"a.md"}, steps: []step{{
			do: func(t *testing.T, root, _ string) {
				write(t, j(root, "a.md.tmp"), "new")
				must(t, os.Rename(j(root, "a.md.tmp"), j(root, "a.md")))
			},
			want: []string{"a.md"},
		}}},
		{name: "atomic save: hidden temp file", files: []string{"a.md"}, steps: []step{{
			do: func(t *testing.T, root, _ string) {
				write(t, j(root, ".a.md.x81f2"), "new")
				must(t, os.Rename(j(root, ".a.md.x81f2"), j(root, "a.md")))
			},
			want: []string{"a.md"},
		}}},
		{name: "JetBrains safe write", files: []string{"a.md"}, steps: []step{{
			do: func(t *testing.T, root, _ string) {
				write(t, j(root, "a.md___jb_tmp___"), "new")
				must(t, os.Rename(j(root, "a.md"), j(root, "a.md___jb_old___")))
				must(t, os.Rename(j(root, "a.md___jb_tmp___"), j(root, "a.md")))
				must(t, os.Remove(j(root, "a.md___jb_old___")))
			},
			want: []string{"a.md"},
		}}},
		{name: "vim default save: probe, backup rename, write", files: []string{"a.md"}, steps: []step{{
			do: func(t *testing.T, root, _ string) {
				write(t, j(root, "4913"), "")
				must(t, os.Remove(j(root, "4913")))
				write(t, j(root, ".a.md.swp"), "swap")
				must(t, os.Rename(j(root, "a.md"), j(root, "a.md~")))
				write(t, j(root, "a.md"), "new")
				must(t, os.Remove(j(root, "a.md~")))
				must(t, os.Remove(j(root, ".a.md.swp")))
			},
			want: []string{"a.md"},
		}}},
		{name: "delete and re-create", files: []string{"a.md"}, steps: []step{{
			do: func(t *testing.T, root, _ string) {
				must(t, os.Remove(j(root, "a.md")))
				write(t, j(root, "a.md"), "again")
			},
			want: []string{"a.md"},
		}}},
		{name: "chmod and touch only are not reported", files: []string{"a.md"}, steps: []step{{
			do: func(t *testing.T, root, _ string) {
				must(t, os.Chmod(j(root, "a.md"), 0o600))
				must(t, os.Chtimes(j(root, "a.md"), time.Now(), time.Now()))
				write(t, j(root, "marker.md"), "m")
			},
			want: []string{"marker.md"},
		}}},
		{name: "hidden and editor temp files ignored", steps: []step{{
			do: func(t *testing.T, root, _ string) {
				for _, name := range []string{".h.md", ".hdir/x.md", "x.md.swp", "x.swx", "#x.md#", "x.md~",
					"4913", "y.tmp", "z.md___jb_tmp___", "z.md___jb_old___"} {
					write(t, j(root, filepath.FromSlash(name)), "t")
				}
				must(t, os.Symlink("x.md", j(root, ".#x.md")))
				write(t, j(root, ".hdir", "deeper", "y.md"), "t")
				write(t, j(root, "marker.md"), "m")
			},
			want: []string{"marker.md"},
		}}},
		{
			name:   "Options.Ignore: output and cache folders",
			files:  []string{"out/old.md"},
			ignore: func(rel string, isDir bool) bool { return rel == "out" || rel == "out.cache" },
			steps: []step{{
				do: func(t *testing.T, root, _ string) {
					write(t, j(root, "out", "x.md"), "o")
					write(t, j(root, "out.cache", "deep", "y.md"), "c")
					write(t, j(root, "out.tmp", "z.md"), "ignored by name: *.tmp")
					must(t, os.Rename(j(root, "out.tmp"), j(root, "out.new")))
					must(t, os.RemoveAll(j(root, "out.new")))
					write(t, j(root, "marker.md"), "m")
				},
				want: []string{"marker.md", "out.new"},
				// out.tmp is ignored, so out.new is a new folder (reported
				// files) that vanished before it was walked, or not.
				under: "out.new/",
			}, {
				do: func(t *testing.T, root, _ string) {
					must(t, os.RemoveAll(j(root, "out")))
					write(t, j(root, "out", "deep", "again.md"), "o")
					write(t, j(root, "marker2.md"), "m")
				},
				want: []string{"marker2.md"},
			}},
		},
		{name: "folder moved in with files already inside, then edited", steps: []step{{
			do: func(t *testing.T, root, outside string) {
				write(t, j(outside, "new", "a.md"), "a")
				write(t, j(outside, "new", "deep", "b.md"), "b")
				write(t, j(outside, "new", "deep", ".hidden.md"), "h")
				must(t, os.Rename(j(outside, "new"), j(root, "new")))
			},
			want: []string{"new/a.md", "new/deep/b.md"},
		}, {
			do:   func(t *testing.T, root, _ string) { write(t, j(root, "new", "deep", "b.md"), "b2") },
			want: []string{"new/deep/b.md"},
		}, {
			do:   func(t *testing.T, root, _ string) { write(t, j(root, "new", "deep", "c.md"), "c") },
			want: []string{"new/deep/c.md"},
		}}},
		{name: "nested folders made and filled at once", steps: []step{{
			do: func(t *testing.T, root, _ string) {
				must(t, os.MkdirAll(j(root, "n1", "n2", "n3"), 0o755))
				write(t, j(root, "n1", "n2", "n3", "f.md"), "f")
				write(t, j(root, "n1", "g.md"), "g")
			},
			want: []string{"n1/n2/n3/f.md", "n1/g.md"},
		}, {
			do:   func(t *testing.T, root, _ string) { write(t, j(root, "n1", "n2", "n3", "h.md"), "h") },
			want: []string{"n1/n2/n3/h.md"},
		}}},
		{name: "folder moved out is reported and no longer watched", files: []string{"sub/a.md", "sub/deep/b.md", "keep.md"}, steps: []step{{
			do:   func(t *testing.T, root, outside string) { must(t, os.Rename(j(root, "sub"), j(outside, "sub"))) },
			want: []string{"sub"},
		}, {
			do: func(t *testing.T, root, outside string) {
				write(t, j(outside, "sub", "a.md"), "outside now")
				write(t, j(outside, "sub", "deep", "b.md"), "outside now")
				write(t, j(outside, "sub", "deep", "c.md"), "outside now")
				write(t, j(root, "marker.md"), "m")
			},
			want: []string{"marker.md"},
		}, {
			do: func(t *testing.T, root, outside string) {
				must(t, os.Rename(j(outside, "sub"), j(root, "back")))
			},
			want: []string{"back/a.md", "back/deep/b.md", "back/deep/c.md"},
		}, {
			do:   func(t *testing.T, root, _ string) { write(t, j(root, "back", "deep", "d.md"), "d") },
			want: []string{"back/deep/d.md"},
		}}},
		{name: "delete folder, then make it again", files: []string{"sub/a.md", "sub/deep/b.md", "keep.md"}, steps: []step{{
			do:    func(t *testing.T, root, _ string) { must(t, os.RemoveAll(j(root, "sub"))) },
			want:  []string{"sub"},
			under: "sub/",
		}, {
			do:   func(t *testing.T, root, _ string) { write(t, j(root, "sub", "deep", "c.md"), "c") },
			want: []string{"sub/deep/c.md"},
		}}},
		{name: "rename folder inside the tree", files: []string{"a/x.md", "a/d/y.md"}, steps: []step{{
			do:   func(t *testing.T, root, _ string) { must(t, os.Rename(j(root, "a"), j(root, "b"))) },
			want: []string{"a", "b/x.md", "b/d/y.md"},
		}, {
			// A stale watch would report these under their old name a/d/.
			do: func(t *testing.T, root, _ string) {
				write(t, j(root, "b", "d", "y.md"), "y2")
				write(t, j(root, "b", "d", "z.md"), "z")
			},
			want: []string{"b/d/y.md", "b/d/z.md"},
		}}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			base := t.TempDir()
			root, outside := filepath.Join(base, "root"), filepath.Join(base, "outside")
			must(t, os.MkdirAll(root, 0o755))
			must(t, os.MkdirAll(outside, 0o755))
			for _, f := range tt.files {
				write(t, filepath.Join(root, filepath.FromSlash(f)), "# "+f)
			}
			h := start(t, root, Options{Debounce: 10 * time.Millisecond, Ignore: tt.ignore}, nil)
			allowed := map[string]bool{}
			for i, s := range tt.steps {
				from := h.count()
				s.do(t, root, outside)
				h.waitFor(fmt.Sprintf("step %d: %q", i, s.want), func(changes []Change, _ []error) bool {
					u := union(changes[from:])
					for _, p := range s.want {
						if !u[p] {
							return false
						}
					}
					return true
				})
				h.mu.Lock()
				got := union(h.changes[from:])
				h.mu.Unlock()
				for _, p := range s.want {
					allowed[p] = true
				}
				for p := range got {
					if !allowed[p] && (s.under == "" || !strings.HasPrefix(p, s.under)) {
						t.Errorf("step %d: unexpected path %q (want %q)", i, p, s.want)
					}
				}
			}
		})
	}
}

// TestBurst checks that 1,000 writes to one file in a row give one or two
// rebuilds with the default debounce, not one per write.
func TestBurst(t *testing.T) {
	root := t.TempDir()
	write(t, filepath.Join(root, "burst.md"), "0")
	h := start(t, root, Options{}, nil)
	for i := range 1000 {
		write(t, filepath.Join(root, "burst.md"), fmt.Sprint("# ", i))
	}
	// Events arrive in order: once the marker is seen, every write is.
	write(t, filepath.Join(root, "marker.md"), "m")
	h.waitFor("marker", func(changes []Change, _ []error) bool { return union(changes)["marker.md"] })
	h.mu.Lock()
	defer h.mu.Unlock()
	n := 0
	for _, c := range h.changes {
		if slices.Contains(c.Paths, "burst.md") {
			n++
		}
	}
	if n < 1 || n > 2 {
		t.Errorf("1000 writes gave %d rebuilds, want 1 or 2: %+v", n, h.changes)
	}
}

// TestEventsDuringRebuild checks that events arriving while a rebuild runs
// are handed to the next rebuild, and that the two do not overlap.
func TestEventsDuringRebuild(t *testing.T) {
	root := t.TempDir()
	started, release := make(chan struct{}), make(chan struct{})
	h := start(t, root, Options{Debounce: 5 * time.Millisecond}, func(ctx context.Context, n int, c Change) error {
		if n == 0 {
			close(started)
			<-release
		}
		return nil
	})
	write(t, filepath.Join(root, "a.md"), "a")
	select {
	case <-started:
	case <-time.After(waitTimeout):
		t.Fatal("first rebuild did not start")
	}
	write(t, filepath.Join(root, "b.md"), "b")
	must(t, os.MkdirAll(filepath.Join(root, "dir", "deep"), 0o755))
	write(t, filepath.Join(root, "dir", "deep", "c.md"), "c")
	must(t, os.Remove(filepath.Join(root, "a.md")))
	close(release)
	want := []string{"a.md", "b.md", "dir/deep/c.md"}
	h.waitFor("second rebuild", func(changes []Change, _ []error) bool {
		u := union(changes[1:])
		return u["a.md"] && u["b.md"] && u["dir/deep/c.md"]
	})
	h.mu.Lock()
	defer h.mu.Unlock()
	if got := h.changes[0].Paths; !slices.Equal(got, []string{"a.md"}) {
		t.Errorf("first rebuild got %q, want [a.md]", got)
	}
	if got := h.changes[1].Paths; !slices.Equal(got, want) {
		t.Errorf("second rebuild got %q, want %q", got, want)
	}
}

// TestRebuildErrorKeepsWatching checks that a failed rebuild is reported
// and watching goes on.
func TestRebuildErrorKeepsWatching(t *testing.T) {
	root := t.TempDir()
	errParse := errors.New("a.md:3: unclosed code fence")
	h := start(t, root, Options{Debounce: 5 * time.Millisecond}, func(ctx context.Context, n int, c Change) error {
		if n == 0 {
			return errParse
		}
		return nil
	})
	write(t, filepath.Join(root, "a.md"), "```")
	h.waitFor("error", func(_ []Change, errs []error) bool { return len(errs) > 0 })
	h.mu.Lock()
	if !errors.Is(h.errs[0], errParse) || h.errs[0].Error() != "rebuild: a.md:3: unclosed code fence" {
		t.Errorf("OnError got %v", h.errs[0])
	}
	h.mu.Unlock()
	write(t, filepath.Join(root, "a.md"), "```\nfixed\n```")
	h.waitFor("next rebuild", func(changes []Change, _ []error) bool { return len(changes) >= 2 })
}

// TestStop checks that cancelling the context or calling Close stops Run
// within a second, also while a rebuild runs, and that the running rebuild
// sees its context cancelled.
func TestStop(t *testing.T) {
	for _, tt := range []struct {
		name    string
		busy    bool // stop while a rebuild runs
		byClose bool // stop with Close instead of the context
	}{
		{name: "cancel, idle"},
		{name: "cancel, rebuilding", busy: true},
		{name: "Close, idle", byClose: true},
		{name: "Close, rebuilding", busy: true, byClose: true},
	} {
		t.Run(tt.name, func(t *testing.T) {
			root := t.TempDir()
			w, err := New(root, Options{Debounce: time.Millisecond})
			must(t, err)
			defer w.Close()
			ctx, cancel := context.WithCancel(context.Background())
			defer cancel()
			started, sawCancel := make(chan struct{}), make(chan struct{})
			runErr := make(chan error, 1)
			go func() {
				runErr <- w.Run(ctx, func(ctx context.Context, c Change) error {
					close(started)
					<-ctx.Done()
					close(sawCancel)
					return ctx.Err()
				})
			}()
			if tt.busy {
				write(t, filepath.Join(root, "a.md"), "a")
				select {
				case <-started:
				case <-time.After(waitTimeout):
					t.Fatal("rebuild did not start")
				}
			}
			t0 := time.Now()
			closeErr := make(chan error, 1)
			if tt.byClose {
				go func() { closeErr <- w.Close() }()
			} else {
				cancel()
			}
			select {
			case err := <-runErr:
				if err != nil {
					t.Errorf("Run: %v", err)
				}
			case <-time.After(time.Second):
				t.Fatal("Run did not return within a second")
			}
			t.Logf("stopped in %v", time.Since(t0))
			if tt.busy {
				select {
				case <-sawCancel:
				default:
					t.Error("Run returned before the rebuild did")
				}
			}
			if tt.byClose {
				if err := <-closeErr; err != nil {
					t.Errorf("Close: %v", err)
				}
			}
			if err := w.Close(); err != nil {
				t.Errorf("second Close: %v", err)
			}
			if err := w.Run(ctx, nil); err == nil && !tt.byClose {
				t.Error("second Run: no error")
			}
		})
	}
}

func TestCloseBeforeRun(t *testing.T) {
	w, err := New(t.TempDir(), Options{})
	must(t, err)
	must(t, w.Close())
	done := make(chan error, 1)
	go func() { done <- w.Run(context.Background(), func(context.Context, Change) error { return nil }) }()
	select {
	case err := <-done:
		if err != nil {
			t.Errorf("Run after Close: %v", err)
		}
	case <-time.After(waitTimeout):
		t.Fatal("Run after Close did not return")
	}
}

func TestRootRemoved(t *testing.T) {
	root := filepath.Join(t.TempDir(), "docs")
	write(t, filepath.Join(root, "sub", "a.md"), "a")
	h := start(t, root, Options{Debounce: time.Millisecond}, nil)
	must(t, os.RemoveAll(root))
	select {
	case err := <-h.runErr:
		if err == nil || !strings.Contains(err.Error(), "source folder was removed or moved") {
			t.Errorf("Run: %v, want an error about the removed folder", err)
		}
	case <-time.After(waitTimeout):
		t.Fatal("Run did not return after its root was removed")
	}
}

func TestNewErrors(t *testing.T) {
	dir := t.TempDir()
	write(t, filepath.Join(dir, "file.md"), "x")
	for _, tt := range []struct{ name, root, want string }{
		{"missing", filepath.Join(dir, "nope"), "no such file or directory"},
		{"not a folder", filepath.Join(dir, "file.md"), "not a folder"},
	} {
		t.Run(tt.name, func(t *testing.T) {
			w, err := New(tt.root, Options{})
			if err == nil {
				w.Close()
				t.Fatal("no error")
			}
			if !strings.Contains(err.Error(), tt.want) {
				t.Errorf("got %q, want it to contain %q", err, tt.want)
			}
		})
	}
}

// TestUnreadableAgain checks the one chmod that is reported: a file made
// readable again after a chmod-only event found it unreadable. Root reads
// everything, so the test needs an ordinary user.
func TestUnreadableAgain(t *testing.T) {
	if asuser.Root() { // root reads past permission bits: run it as nobody
		asuser.Run(t, asuser.Self(t), nil)
		return
	}
	root := t.TempDir()
	f := filepath.Join(root, "a.md")
	write(t, f, "a")
	h := start(t, root, Options{Debounce: 5 * time.Millisecond}, nil)
	must(t, os.Chmod(f, 0))
	write(t, filepath.Join(root, "marker.md"), "m")
	h.waitFor("marker", func(c []Change, _ []error) bool { return union(c)["marker.md"] })
	h.mu.Lock()
	early := union(h.changes)["a.md"]
	h.mu.Unlock()
	if early {
		t.Error("a chmod that made a file unreadable was reported")
	}
	must(t, os.Chmod(f, 0o644))
	h.waitFor("a.md readable again", func(c []Change, _ []error) bool { return union(c)["a.md"] })
}

func TestLimitError(t *testing.T) {
	err := limitError("watch /docs/sub", fmt.Errorf("wrapped: %w", syscall.ENOSPC))
	if !errors.Is(err, ErrWatchLimit) || !errors.Is(err, syscall.ENOSPC) {
		t.Errorf("limit error does not wrap both causes: %v", err)
	}
	for _, s := range []string{"watch /docs/sub: file watch limit reached", "fs.inotify.max_user_watches is ", "sysctl fs.inotify.max_user_watches="} {
		if !strings.Contains(err.Error(), s) {
			t.Errorf("%q does not contain %q", err, s)
		}
	}
	if err := limitError("start watcher", syscall.EMFILE); !strings.Contains(err.Error(), "fs.inotify.max_user_instances") {
		t.Errorf("EMFILE on start: %v", err)
	}
	other := fs.ErrPermission
	if err := limitError("watch /x", other); err != other {
		t.Errorf("other errors must pass unchanged, got %v", err)
	}
}

func TestSkipName(t *testing.T) {
	for _, tt := range []struct {
		name string
		skip bool
	}{
		{"index.md", false}, {"a.tmp.md", false}, {"4913.md", false}, {"#1 tips.md", false},
		{"", false}, {"~", true}, {"#", false},
		{".git", true}, {".#index.md", true}, {".index.md.swp", true}, {"index.md.swp", true},
		{"index.md.swx", true}, {"index.md~", true}, {"#index.md#", true}, {"4913", true},
		{"index.md.tmp", true}, {"index.md___jb_tmp___", true}, {"index.md___jb_old___", true},
	} {
		t.Run(tt.name, func(t *testing.T) {
			if got := skipName(tt.name); got != tt.skip {
				t.Errorf("skipName(%q) = %v, want %v", tt.name, got, tt.skip)
			}
		})
	}
}

func TestIgnored(t *testing.T) {
	w := &Watcher{opts: Options{Ignore: func(rel string, isDir bool) bool {
		return (rel == "out" && isDir) || rel == "draft.md"
	}}}
	for _, tt := range []struct {
		rel   string
		isDir bool
		want  bool
	}{
		{"a.md", false, false}, {"sub/a.md", false, false},
		{"out", true, true}, {"out", false, false}, {"out/x.md", false, true}, {"out/deep/x.md", false, true},
		{"draft.md", false, true}, {"sub/draft.md", false, false},
		{".git/HEAD", false, true}, {"sub/.hidden/a.md", false, true}, {"sub/a.md~", false, true},
	} {
		t.Run(tt.rel, func(t *testing.T) {
			if got := w.ignored(tt.rel, tt.isDir); got != tt.want {
				t.Errorf("ignored(%q, %v) = %v, want %v", tt.rel, tt.isDir, got, tt.want)
			}
		})
	}
}

// openFDs counts this process's open file descriptors, or -1 where /proc
// is missing.
func openFDs() int {
	entries, err := os.ReadDir("/proc/self/fd")
	if err != nil {
		return -1
	}
	return len(entries)
}

// settle waits until the goroutine and descriptor counts are at most the
// given ones (a worker that has just finished may still be exiting) and
// returns the last counts seen.
func settle(maxG, maxFD int) (g, fd int) {
	deadline := time.Now().Add(5 * time.Second)
	for {
		g, fd = runtime.NumGoroutine(), openFDs()
		if (g <= maxG && fd <= maxFD) || time.Now().After(deadline) {
			return g, fd
		}
		time.Sleep(10 * time.Millisecond)
	}
}

// TestNoLeak runs 1,000 rebuild cycles, with folders coming and going, and
// checks that goroutines and open files do not grow after the first ten.
func TestNoLeak(t *testing.T) {
	if testing.Short() {
		t.Skip("1,000 rebuild cycles")
	}
	root := t.TempDir()
	h := start(t, root, Options{Debounce: time.Millisecond}, nil)
	var g10, fd10 int
	t0 := time.Now()
	for i := range 1000 {
		from := h.count()
		name := "f.md"
		switch i % 10 {
		case 3: // a new folder with a file: one more watch
			must(t, os.MkdirAll(filepath.Join(root, "d", "e"), 0o755))
			name = "d/e/x.md"
		case 6: // and gone again
			must(t, os.RemoveAll(filepath.Join(root, "d")))
			name = "d"
		}
		if name != "d" {
			write(t, filepath.Join(root, filepath.FromSlash(name)), fmt.Sprint(i))
		}
		h.waitFor(fmt.Sprintf("cycle %d", i), func(c []Change, _ []error) bool { return union(c[from:])[name] })
		if i == 9 {
			g10, fd10 = runtime.NumGoroutine(), openFDs()
			t.Logf("after 10 cycles: %d goroutines, %d open files", g10, fd10)
		}
	}
	g, fd := settle(g10, fd10)
	t.Logf("after 1000 cycles (%v, %d rebuilds): %d goroutines, %d open files", time.Since(t0).Round(time.Millisecond), h.count(), g, fd)
	if g > g10 {
		t.Errorf("goroutines grew from %d to %d", g10, g)
	}
	if fd > fd10 {
		t.Errorf("open files grew from %d to %d", fd10, fd)
	}
}

// TestNewCloseNoLeak checks that Close gives back the inotify descriptor and
// every goroutine, with and without Run.
func TestNewCloseNoLeak(t *testing.T) {
	root := t.TempDir()
	write(t, filepath.Join(root, "a", "b", "c.md"), "c")
	g0, fd0 := runtime.NumGoroutine(), openFDs()
	for i := range 50 {
		w, err := New(root, Options{Debounce: time.Millisecond})
		must(t, err)
		if i%2 == 0 {
			ctx, cancel := context.WithCancel(context.Background())
			done := make(chan error, 1)
			go func() { done <- w.Run(ctx, func(context.Context, Change) error { return nil }) }()
			cancel()
			must(t, <-done)
		}
		must(t, w.Close())
	}
	g, fd := settle(g0, fd0)
	if g > g0 || fd > fd0 {
		t.Errorf("after 50 New/Close: goroutines %d -> %d, open files %d -> %d", g0, g, fd0, fd)
	}
}

// TestOverflow fills the kernel's event queue before Run starts reading,
// and checks that the lost events are reported and lead to a full rebuild.
func TestOverflow(t *testing.T) {
	b, err := os.ReadFile("/proc/sys/fs/inotify/max_queued_events")
	if err != nil {
		t.Skip("no /proc/sys/fs/inotify/max_queued_events (not Linux?)")
	}
	var queue int
	if _, err := fmt.Sscan(string(b), &queue); err != nil || queue > 100000 {
		t.Skipf("max_queued_events %q: too large to fill quickly", b)
	}
	root := t.TempDir()
	w, err := New(root, Options{Debounce: time.Millisecond})
	must(t, err)
	defer w.Close()
	// Writes alternating between two files give one IN_MODIFY each (the
	// kernel merges only identical consecutive events, inotify(7)); no one
	// reads them yet.
	var files [2]*os.File
	for i := range files {
		files[i], err = os.Create(filepath.Join(root, fmt.Sprintf("f%d.md", i)))
		must(t, err)
		defer files[i].Close()
	}
	for i := range queue + 1000 {
		_, err := files[i%2].Write([]byte{'x'})
		must(t, err)
	}
	// A folder made now is only found by the re-walk after the overflow.
	write(t, filepath.Join(root, "late", "x.md"), "x")
	var errs []error
	var mu sync.Mutex
	w.opts.OnError = func(err error) { mu.Lock(); errs = append(errs, err); mu.Unlock() }
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	all := make(chan struct{})
	var once sync.Once
	done := make(chan error, 1)
	go func() {
		done <- w.Run(ctx, func(ctx context.Context, c Change) error {
			if c.All {
				once.Do(func() { close(all) })
			}
			return nil
		})
	}()
	select {
	case <-all:
	case err := <-done:
		t.Fatalf("Run returned: %v", err)
	case <-time.After(waitTimeout):
		// Whether the kernel queue overflows depends on how fast
		// fsnotify's reader drains it, which a loaded machine changes;
		// the test cannot force it everywhere.
		cancel()
		<-done
		t.Skip("the kernel event queue did not overflow on this run; nothing to check")
	}
	cancel()
	<-done
	if !w.dirs["late"] {
		t.Error("folder made during the overflow is not watched after the re-walk")
	}
	mu.Lock()
	defer mu.Unlock()
	if len(errs) == 0 || !strings.Contains(errs[0].Error(), "events were lost") {
		t.Errorf("OnError got %v, want a lost-events notice", errs)
	}
}

// TestMaxDelay checks that a file written without pause still gets rebuilt
// within the maximum delay instead of waiting for a quiet period for ever.
func TestMaxDelay(t *testing.T) {
	if testing.Short() {
		t.Skip("writes for about two seconds")
	}
	root := t.TempDir()
	h := start(t, root, Options{Debounce: 100 * time.Millisecond}, nil)
	if h.w.max != minMaxDelay {
		t.Fatalf("max delay %v, want %v", h.w.max, minMaxDelay)
	}
	t0 := time.Now()
	// Writes every 10 ms never leave the 100 ms quiet period.
	for i := 0; h.count() == 0; i++ {
		if time.Since(t0) > waitTimeout {
			t.Fatal("no rebuild while writing without pause")
		}
		write(t, filepath.Join(root, "log.md"), fmt.Sprint(i))
		time.Sleep(10 * time.Millisecond)
	}
	t.Logf("first rebuild after %v of continuous writes", time.Since(t0).Round(time.Millisecond))
}
