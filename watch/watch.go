package watch

import (
	"context"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"sync"
	"time"

	"github.com/fsnotify/fsnotify"
)

// DefaultDebounce is the quiet period used when Options.Debounce is zero.
// 150 ms is long enough to cover an editor's save (a few syscalls within
// a millisecond or so) and a `git checkout` of a few files, and short enough
// to feel immediate (common practice, no source).
const DefaultDebounce = 150 * time.Millisecond

// minMaxDelay is the lower bound of the longest time a pending event waits
// for a quiet period before a rebuild starts anyway.
const minMaxDelay = 2 * time.Second

// Options configures a Watcher. The zero value is ready to use.
type Options struct {
	// Debounce is the quiet period after the last event before a rebuild
	// starts; DefaultDebounce when zero or negative.
	Debounce time.Duration

	// Ignore, when set, reports whether a path must be neither watched nor
	// reported, in addition to hidden and editor temporary files. rel is a
	// slash path relative to the root; isDir tells whether it is (or, for a
	// removed path, was) a folder. The caller passes its output and cache
	// folders here. It is called from the goroutine running New or Run, never
	// concurrently.
	Ignore func(rel string, isDir bool) bool

	// OnError, when set, receives errors that do not stop watching: an
	// error returned by the rebuild function, a folder that could not be
	// watched or read, a lost-events notice. It is called from the goroutine
	// running New or Run, never concurrently, so it must not block for long.
	// Errors are dropped when it is nil.
	OnError func(err error)
}

// Change is one rebuild request: what changed since the previous one.
type Change struct {
	// Paths are slash paths relative to the root that were created, written,
	// removed or renamed (either name), sorted and without duplicates. A path
	// may name a file or a folder and may no longer exist: a removed folder,
	// or one moved out of the tree, is reported by its own path, and the
	// files of a new folder are reported one by one.
	Paths []string

	// All reports that events may have been lost (the kernel's event queue
	// overflowed), so the rebuild should re-read the whole tree; Paths still
	// lists what is known.
	All bool
}

// Watcher watches a folder tree and turns its file events into rebuild
// requests. Create it with New, start it with Run, stop it with Close or
// by cancelling Run's context. A Watcher must not be copied.
type Watcher struct {
	root  string // absolute, cleaned
	opts  Options
	fw    *fsnotify.Watcher
	delay time.Duration // debounce
	max   time.Duration // longest wait for a quiet period

	// Owned by the goroutine running New, then by the one running Run.
	dirs       map[string]bool // watched folders, by rel path ("" is the root)
	unwatched  map[string]bool // folders that could not be watched (permission)
	unreadable map[string]bool // files a chmod-only event found unreadable
	pending    map[string]bool
	all        bool

	closeOnce sync.Once
	closing   chan struct{} // closed by Close
	mu        sync.Mutex
	running   bool          // Run has been called
	closed    bool          // Close has been called
	stopped   chan struct{} // closed when Run returns
	closeErr  error
}

// New watches root and every folder below it that is not ignored. Folders
// that cannot be read are reported to Options.OnError and skipped; reaching
// the system's watch limit is an error wrapping ErrWatchLimit.
func New(root string, opts Options) (*Watcher, error) {
	abs, err := filepath.Abs(root)
	if err != nil {
		return nil, fmt.Errorf("watch %s: %w", root, err)
	}
	fi, err := os.Stat(abs)
	if err != nil {
		return nil, fmt.Errorf("watch: %w", err)
	}
	if !fi.IsDir() {
		return nil, fmt.Errorf("watch %s: not a folder", root)
	}
	fw, err := fsnotify.NewWatcher()
	if err != nil {
		return nil, limitError("start watcher", err)
	}
	w := &Watcher{
		root:       abs,
		opts:       opts,
		fw:         fw,
		delay:      opts.Debounce,
		dirs:       make(map[string]bool),
		unwatched:  make(map[string]bool),
		unreadable: make(map[string]bool),
		pending:    make(map[string]bool),
		closing:    make(chan struct{}),
		stopped:    make(chan struct{}),
	}
	if w.delay <= 0 {
		w.delay = DefaultDebounce
	}
	w.max = max(minMaxDelay, 10*w.delay)
	if err := w.addTree("", false); err != nil {
		fw.Close()
		return nil, err
	}
	// Nothing is pending before Run: the initial build reads everything.
	clear(w.pending)
	return w, nil
}

// Root returns the absolute path of the watched folder.
func (w *Watcher) Root() string { return w.root }

// Run calls rebuild, one call at a time, each time paths under the root
// change, until ctx is cancelled or Close is called; then it cancels the
// context given to a running rebuild, waits for that call to return and
// returns nil. It returns promptly (well within a second) as long as rebuild
// honours its context. An error returned by rebuild is passed to
// Options.OnError and watching goes on (a file that does not parse while
// being edited must not stop watch mode). Run returns an error only when
// watching cannot go on: the root itself was removed or moved, or Run was
// already called.
func (w *Watcher) Run(ctx context.Context, rebuild func(ctx context.Context, c Change) error) error {
	w.mu.Lock()
	if w.running {
		w.mu.Unlock()
		return errors.New("watch: Run called twice")
	}
	if w.closed {
		w.mu.Unlock()
		return nil
	}
	w.running = true
	w.mu.Unlock()
	defer close(w.stopped)

	rctx, cancel := context.WithCancel(ctx)
	jobs := make(chan Change)
	results := make(chan error)
	var workers sync.WaitGroup
	workers.Go(func() {
		for c := range jobs {
			results <- rebuild(rctx, c)
		}
	})
	busy := false
	defer func() {
		cancel()
		if busy {
			<-results
		}
		close(jobs)
		workers.Wait()
	}()

	// timer fires when a rebuild is due; armed only while something is
	// pending and no rebuild runs.
	timer := time.NewTimer(time.Hour)
	timer.Stop()
	defer timer.Stop()
	var first, last time.Time // first and last pending event
	arm := func(now time.Time) {
		if busy || !w.hasPending() {
			return
		}
		wait := min(last.Add(w.delay).Sub(now), first.Add(w.max).Sub(now))
		timer.Reset(max(wait, 0))
	}

	for {
		select {
		case <-ctx.Done():
			return nil
		case <-w.closing:
			return nil
		case ev, ok := <-w.fw.Events:
			if !ok {
				return nil // closed
			}
			had := w.hasPending()
			if err := w.handle(ev); err != nil {
				return err
			}
			if !had && w.hasPending() {
				first = time.Now()
			}
			if w.hasPending() {
				last = time.Now()
				arm(last)
			}
		case err, ok := <-w.fw.Errors:
			if !ok {
				return nil
			}
			had := w.hasPending()
			w.handleError(err)
			if !had && w.hasPending() {
				first = time.Now()
				last = first
				arm(first)
			}
		case <-timer.C:
			if busy || !w.hasPending() {
				continue
			}
			c := w.take()
			busy = true
			select {
			case jobs <- c:
			case <-ctx.Done():
				busy = false // the worker never got it
				return nil
			}
		case err := <-results:
			busy = false
			if err != nil && ctx.Err() == nil {
				w.report(fmt.Errorf("rebuild: %w", err))
			}
			if w.hasPending() {
				// Events that came during the rebuild: wait out what is
				// left of their quiet period, counted from the last one.
				arm(time.Now())
			}
		}
	}
}

// Close stops Run (if it runs), waits for it and for a running rebuild to
// return, and releases every watch. It is safe to call from any goroutine
// and more than once; later calls return the first call's result.
func (w *Watcher) Close() error {
	w.closeOnce.Do(func() {
		close(w.closing)
		w.mu.Lock()
		w.closed = true
		running := w.running
		w.mu.Unlock()
		if running {
			<-w.stopped
		}
		w.closeErr = w.fw.Close()
	})
	return w.closeErr
}

func (w *Watcher) hasPending() bool { return w.all || len(w.pending) > 0 }

// take empties the pending set into a Change.
func (w *Watcher) take() Change {
	c := Change{Paths: make([]string, 0, len(w.pending)), All: w.all}
	for p := range w.pending {
		c.Paths = append(c.Paths, p)
	}
	slices.Sort(c.Paths)
	clear(w.pending)
	w.all = false
	return c
}

func (w *Watcher) report(err error) {
	if w.opts.OnError != nil && err != nil {
		w.opts.OnError(err)
	}
}

// rel turns an absolute event path into a slash path relative to the root;
// ok is false for paths outside it.
func (w *Watcher) rel(name string) (rel string, ok bool) {
	if name == w.root {
		return "", true
	}
	r, found := strings.CutPrefix(name, w.root+string(filepath.Separator))
	if !found || r == "" {
		return "", false
	}
	return filepath.ToSlash(r), true
}

func (w *Watcher) abs(rel string) string {
	if rel == "" {
		return w.root
	}
	return filepath.Join(w.root, filepath.FromSlash(rel))
}

// ignored reports whether rel (not the root) is to be neither watched nor
// reported: a hidden or temporary name in any of its elements, or a path
// that Options.Ignore rejects, itself or through a parent folder.
func (w *Watcher) ignored(rel string, isDir bool) bool {
	for i := 0; ; {
		j := strings.IndexByte(rel[i:], '/')
		end := len(rel)
		if j >= 0 {
			end = i + j
		}
		if skipName(rel[i:end]) {
			return true
		}
		last := j < 0
		if w.opts.Ignore != nil && w.opts.Ignore(rel[:end], isDir || !last) {
			return true
		}
		if last {
			return false
		}
		i = end + 1
	}
}

// handle applies one event to the watch set and the pending paths. It
// returns an error only when the root itself went away.
func (w *Watcher) handle(ev fsnotify.Event) error {
	rel, ok := w.rel(ev.Name)
	if !ok {
		return nil
	}
	if rel == "" {
		if ev.Has(fsnotify.Remove) || ev.Has(fsnotify.Rename) {
			return fmt.Errorf("watch %s: the source folder was removed or moved", w.root)
		}
		return nil // chmod on the root
	}
	wasDir := w.dirs[rel]
	switch {
	case ev.Has(fsnotify.Remove) || ev.Has(fsnotify.Rename):
		// Gone from here (deleted, or the old name of a move). A Create in
		// the same event cannot happen on Linux; handled below if it does.
		if w.ignored(rel, wasDir) {
			return nil
		}
		if wasDir || w.unwatched[rel] {
			w.dropTree(rel)
		}
		delete(w.unreadable, rel)
		w.pending[rel] = true
		if ev.Has(fsnotify.Create) {
			return w.created(rel)
		}
	case ev.Has(fsnotify.Create):
		return w.created(rel)
	case ev.Has(fsnotify.Write):
		if wasDir {
			return nil // kqueue and Windows report folder writes; content comes as its own events
		}
		if w.ignored(rel, false) {
			return nil
		}
		delete(w.unreadable, rel)
		w.pending[rel] = true
	case ev.Has(fsnotify.Chmod):
		w.chmod(rel, wasDir)
	}
	return nil
}

// created handles a path that appeared: a file is reported, a folder is
// watched and walked.
func (w *Watcher) created(rel string) error {
	fi, err := os.Lstat(w.abs(rel))
	if err != nil {
		// Already gone (a short-lived file). Report it unless ignored: the
		// rebuild sees it missing, which is harmless.
		if !w.ignored(rel, false) {
			w.pending[rel] = true
		}
		return nil
	}
	if fi.IsDir() {
		return w.addTree(rel, true)
	}
	if !w.ignored(rel, false) {
		w.pending[rel] = true
	}
	return nil
}

// chmod handles an attribute-only change; see the package comment.
func (w *Watcher) chmod(rel string, wasDir bool) {
	if w.unwatched[rel] {
		// A folder we could not watch may be watchable now.
		w.addTree(rel, true)
		return
	}
	if wasDir || w.ignored(rel, false) {
		return
	}
	// Through a root that symlinks cannot leave, and never a pipe or a
	// device (opening a pipe waits for a writer).
	f, err := w.openInside(rel)
	if err != nil {
		if errors.Is(err, fs.ErrPermission) {
			w.unreadable[rel] = true
		}
		return
	}
	f.Close()
	if w.unreadable[rel] {
		delete(w.unreadable, rel)
		w.pending[rel] = true
	}
}

// openInside opens the regular file rel for reading, resolved under the
// root by the kernel (os.Root), so a symlink cannot lead it outside.
func (w *Watcher) openInside(rel string) (*os.File, error) {
	r, err := os.OpenRoot(w.root)
	if err != nil {
		return nil, err
	}
	defer r.Close()
	fi, err := r.Lstat(filepath.FromSlash(rel))
	if err != nil {
		return nil, err
	}
	if fi.Mode()&fs.ModeSymlink != 0 {
		if fi, err = r.Stat(filepath.FromSlash(rel)); err != nil {
			return nil, err
		}
	}
	if !fi.Mode().IsRegular() {
		return nil, fmt.Errorf("%s: not a regular file", rel)
	}
	return r.Open(filepath.FromSlash(rel))
}

// addTree watches the folder rel and every folder below it that is not
// ignored, adding each watch before the folder is listed so that no file
// created in between is missed. With report set, every file found is marked
// pending. Only a watch limit error is returned; other failures go to
// OnError and leave that folder out.
func (w *Watcher) addTree(rel string, report bool) error {
	if rel != "" && w.ignored(rel, true) {
		return nil
	}
	start := w.abs(rel)
	var limit error
	err := filepath.WalkDir(start, func(path string, d fs.DirEntry, err error) error {
		r, ok := w.rel(path)
		if !ok {
			return nil
		}
		if err != nil {
			if d != nil && d.IsDir() && errors.Is(err, fs.ErrPermission) {
				// Watched but not listable: wait for a chmod.
				w.unwatched[r] = true
			}
			if !errors.Is(err, fs.ErrNotExist) {
				w.report(fmt.Errorf("watch %s: %w", path, err))
			}
			if d != nil && d.IsDir() {
				return fs.SkipDir
			}
			return nil
		}
		if r != "" && r != rel && w.ignored(r, d.IsDir()) {
			if d.IsDir() {
				return fs.SkipDir
			}
			return nil
		}
		if !d.IsDir() {
			if report {
				w.pending[r] = true
			}
			return nil
		}
		if err := w.fw.Add(path); err != nil {
			if errors.Is(err, fsnotify.ErrClosed) {
				return fs.SkipAll
			}
			if errors.Is(err, fs.ErrNotExist) {
				return fs.SkipDir
			}
			if lerr := limitError("watch "+path, err); errors.Is(lerr, ErrWatchLimit) {
				limit = lerr
				return fs.SkipAll
			}
			if errors.Is(err, fs.ErrPermission) {
				w.unwatched[r] = true
			}
			w.report(fmt.Errorf("watch %s: %w", path, err))
			return fs.SkipDir
		}
		w.dirs[r] = true
		delete(w.unwatched, r)
		return nil
	})
	if limit != nil {
		if report {
			// Watching goes on for what is already watched.
			w.report(limit)
			return nil
		}
		return limit
	}
	if err != nil && !errors.Is(err, fs.ErrNotExist) {
		w.report(fmt.Errorf("watch %s: %w", start, err))
	}
	return nil
}

// dropTree forgets the folder rel and every folder below it, removing their
// watches (the kernel has already removed those of deleted folders; a folder
// moved out of the tree would otherwise stay watched under its old name).
func (w *Watcher) dropTree(rel string) {
	prefix := rel + "/"
	for d := range w.dirs {
		if d == rel || strings.HasPrefix(d, prefix) {
			delete(w.dirs, d)
			// ErrNonExistentWatch: the kernel or fsnotify removed it already.
			_ = w.fw.Remove(w.abs(d))
		}
	}
	for d := range w.unwatched {
		if d == rel || strings.HasPrefix(d, prefix) {
			delete(w.unwatched, d)
		}
	}
}

// handleError deals with an error from fsnotify. A queue overflow means
// lost events: re-walk the tree to catch up on folders and ask for a full
// rebuild.
func (w *Watcher) handleError(err error) {
	if errors.Is(err, fsnotify.ErrEventOverflow) {
		w.report(fmt.Errorf("watch %s: %w: events were lost, rebuilding everything", w.root, err))
		w.all = true
		old := w.dirs
		w.dirs = make(map[string]bool, len(old))
		w.addTree("", false)
		for d := range old {
			if !w.dirs[d] {
				_ = w.fw.Remove(w.abs(d))
			}
		}
		return
	}
	w.report(fmt.Errorf("watch %s: %w", w.root, err))
}
