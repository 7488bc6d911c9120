package sources

import (
	"errors"
	"fmt"
	"io"
	"io/fs"
	"path"
	"sort"
	"strings"
	"time"
)

// DefaultMaxSize is the largest file Walk accepts unless told otherwise:
// 10 MB, far above any hand-written page, small enough that a stray data
// dump does not swamp the build.
const DefaultMaxSize = 10 << 20

// maxLinkHops bounds how many symlinks one path may pass through, the same
// bound Linux uses before it reports ELOOP (40, from path_resolution(7)).
const maxLinkHops = 40

// WalkOptions choose which files Walk returns. The zero value walks every
// Markdown, MDX and HTML file up to DefaultMaxSize.
type WalkOptions struct {
	// Include, when not empty, keeps only files matching one of these
	// globs. Exclude drops files and folders matching any of its globs.
	// A glob without a slash matches the base name at any depth; with a
	// slash it matches the whole slash-separated path from the root, and
	// "**" stands for any number of folders (see Match).
	Include, Exclude []string
	// MaxSize is the largest file size accepted, in bytes; 0 means
	// DefaultMaxSize.
	MaxSize int64
}

// File is one source file found by Walk.
type File struct {
	Path    string    // slash-separated, relative to the root, as the user sees it
	Target  string    // path to open in the FS; differs from Path behind a symlink
	Size    int64     // bytes
	ModTime time.Time // file modification time
}

// Walk lists the readable source files under the root of fsys in path
// order. It skips hidden files and folders (a name starting with '.'),
// follows symlinks only while they stay inside the root, and reports each
// problem (unreadable folder, symlink loop, symlink leaving the root, file
// over the size limit) as an *Error while it goes on with the rest.
//
// Symlinks are resolved only when fsys implements fs.ReadLinkFS (os.DirFS
// does); otherwise they are followed as the FS presents them.
func Walk(fsys fs.FS, opts WalkOptions) ([]File, []*Error) {
	if opts.MaxSize <= 0 {
		opts.MaxSize = DefaultMaxSize
	}
	w := &walker{fsys: fsys, opts: opts}
	w.dir(".", ".", []string{"."})
	sort.Slice(w.files, func(i, j int) bool { return w.files[i].Path < w.files[j].Path })
	SortErrors(w.errs)
	return w.files, w.errs
}

type walker struct {
	fsys  fs.FS
	opts  WalkOptions
	files []File
	errs  []*Error
}

func (w *walker) fail(p, format string, args ...any) {
	w.errs = append(w.errs, &Error{Path: p, Msg: fmt.Sprintf(format, args...)})
}

// dir walks the folder target of the FS, shown to the user as shown.
// stack holds the real paths of the folders being walked, to catch a
// symlink that leads back into one of them.
func (w *walker) dir(shown, target string, stack []string) {
	entries, err := fs.ReadDir(w.fsys, target)
	if err != nil {
		w.fail(shown, "cannot read folder: %v", UnwrapPath(err))
		return
	}
	for _, e := range entries {
		name := e.Name()
		if strings.HasPrefix(name, ".") {
			continue
		}
		p, t := join(shown, name), join(target, name)
		mode := e.Type()
		if mode&fs.ModeSymlink != 0 {
			real, info, ok := w.resolve(p, t)
			if !ok {
				continue
			}
			if info.IsDir() {
				if w.excluded(p) {
					continue
				}
				if inStack(stack, real) {
					w.fail(p, "symlink loop: leads back to %s", real)
					continue
				}
				w.dir(p, real, append(stack, real))
				continue
			}
			w.file(p, real, info)
			continue
		}
		if e.IsDir() {
			if w.excluded(p) {
				continue
			}
			w.dir(p, t, append(stack, t))
			continue
		}
		if !mode.IsRegular() {
			w.special(p, mode)
			continue
		}
		if _, ok := KindOf(name); !ok || w.excluded(p) || !w.included(p) {
			continue
		}
		info, err := e.Info()
		if err != nil {
			w.fail(p, "cannot read: %v", UnwrapPath(err))
			continue
		}
		w.file(p, t, info)
	}
}

func (w *walker) file(p, target string, info fs.FileInfo) {
	if !info.Mode().IsRegular() {
		w.special(p, info.Mode())
		return
	}
	if _, ok := KindOf(p); !ok || w.excluded(p) || !w.included(p) {
		return
	}
	if info.Size() > w.opts.MaxSize {
		w.fail(p, "file is %s, over the %s size limit; skipped", SizeString(info.Size()), SizeString(w.opts.MaxSize))
		return
	}
	w.files = append(w.files, File{Path: p, Target: target, Size: info.Size(), ModTime: info.ModTime()})
}

// special reports a named pipe, socket or device at p, unless the walk
// options leave p out anyway: reading one could block the build forever
// or never end, so it is skipped, but never in silence.
func (w *walker) special(p string, mode fs.FileMode) {
	if w.excluded(p) || !w.included(p) {
		return
	}
	what := "a special file"
	switch {
	case mode&fs.ModeNamedPipe != 0:
		what = "a named pipe"
	case mode&fs.ModeSocket != 0:
		what = "a socket"
	case mode&fs.ModeDevice != 0:
		what = "a device"
	case mode&fs.ModeIrregular != 0:
		what = "an irregular file"
	}
	w.fail(p, "%s, not a regular file; skipped", what)
}

// resolve follows the symlink at target (shown as p) to its real path
// inside the root. Every element of every link's target is resolved in
// turn, so a link through a symlinked folder ("r/etc/passwd" where r
// leads to /) is judged by where it really goes, not by its text. It
// reports false, after recording why, when the link dangles, loops or
// leaves the root.
func (w *walker) resolve(p, target string) (string, fs.FileInfo, bool) {
	rl, ok := w.fsys.(fs.ReadLinkFS)
	if !ok {
		info, err := fs.Stat(w.fsys, target)
		if err != nil {
			w.fail(p, "cannot follow symlink: %v", UnwrapPath(err))
			return "", nil, false
		}
		return target, info, true
	}
	real, info, err := realPath(rl, target)
	var esc *escapeError
	switch {
	case errors.As(err, &esc):
		if esc.link == target {
			w.fail(p, "symlink points outside the source root (%s); not followed", esc.dest)
		} else {
			w.fail(p, "symlink points outside the source root (through %s -> %s); not followed", esc.link, esc.dest)
		}
	case errors.Is(err, errLinkLoop):
		w.fail(p, "symlink loop: more than %d links in a row", maxLinkHops)
	case err != nil:
		w.fail(p, "broken symlink: %v", UnwrapPath(err))
	default:
		return real, info, true
	}
	return "", nil, false
}

var errLinkLoop = errors.New("symlink loop")

// escapeError is a path whose resolution leaves the root: link's target
// dest is absolute or climbs above the root.
type escapeError struct{ link, dest string }

func (e *escapeError) Error() string {
	return fmt.Sprintf("%s -> %s leaves the source root", e.link, e.dest)
}

// realPath resolves name, a slash path from the root, element by
// element: each element is looked at with Lstat under a prefix already
// free of symlinks, and a symlink's target text is put in its place.
// ".." is taken against the resolved prefix, which is what the kernel
// does. It returns the real path and the final element's FileInfo.
func realPath(rl fs.ReadLinkFS, name string) (string, fs.FileInfo, error) {
	todo := strings.Split(name, "/")
	cur := "." // resolved so far: a real folder under the root
	var info fs.FileInfo
	hops := 0
	for len(todo) > 0 {
		el := todo[0]
		todo = todo[1:]
		switch el {
		case "", ".":
			continue
		case "..":
			if cur == "." {
				return "", nil, &escapeError{link: name, dest: name}
			}
			cur = path.Dir(cur)
			info = nil
			continue
		}
		next := join(cur, el)
		fi, err := rl.Lstat(next)
		if err != nil {
			return "", nil, err
		}
		if fi.Mode()&fs.ModeSymlink == 0 {
			cur, info = next, fi
			continue
		}
		if hops++; hops > maxLinkHops {
			return "", nil, errLinkLoop
		}
		dest, err := rl.ReadLink(next)
		if err != nil {
			return "", nil, err
		}
		if path.IsAbs(dest) || strings.HasPrefix(dest, "/") || strings.HasPrefix(dest, `\`) {
			return "", nil, &escapeError{link: next, dest: dest}
		}
		// The target replaces the link, relative to the link's folder
		// (cur); climbing above the root is caught at its "..".
		if up := climbs(cur, dest); up {
			return "", nil, &escapeError{link: next, dest: dest}
		}
		todo = append(strings.Split(dest, "/"), todo...)
	}
	if info == nil {
		fi, err := rl.Lstat(cur)
		if err != nil {
			return "", nil, err
		}
		info = fi
	}
	return cur, info, nil
}

// climbs reports whether the relative link text dest, read in the real
// folder dir, goes above the root at some point.
func climbs(dir, dest string) bool {
	depth := 0
	if dir != "." {
		depth = strings.Count(dir, "/") + 1
	}
	for _, el := range strings.Split(dest, "/") {
		switch el {
		case "", ".":
		case "..":
			if depth--; depth < 0 {
				return true
			}
		default:
			depth++
		}
	}
	return false
}

func (w *walker) excluded(p string) bool {
	for _, g := range w.opts.Exclude {
		if Match(g, p) {
			return true
		}
	}
	return false
}

func (w *walker) included(p string) bool {
	if len(w.opts.Include) == 0 {
		return true
	}
	for _, g := range w.opts.Include {
		if Match(g, p) {
			return true
		}
	}
	return false
}

// Match reports whether the slash-separated path p matches glob. A glob
// without a slash is matched against the last element of p, so "*.html"
// matches at any depth; otherwise it is matched element by element against
// the whole path, where "**" matches any number of elements (zero
// included) and other elements follow path.Match. A malformed glob matches
// nothing.
func Match(glob, p string) bool {
	glob = strings.TrimPrefix(glob, "./")
	if !strings.Contains(strings.TrimSuffix(glob, "/"), "/") {
		ok, _ := path.Match(strings.TrimSuffix(glob, "/"), path.Base(p))
		return ok
	}
	return matchParts(strings.Split(strings.Trim(glob, "/"), "/"), strings.Split(p, "/"))
}

// matchParts matches glob elements g against path elements p. It fills
// a table of which suffixes of g match which suffixes of p, so the time
// is len(g) x len(p) element matches whatever the number of "**" (a
// backtracking match takes exponential time on "**/**/**/.../x").
func matchParts(g, p []string) bool {
	// next[j] reports whether g[i+1:] matches p[j:]; cur is row i.
	next := make([]bool, len(p)+1)
	cur := make([]bool, len(p)+1)
	next[len(p)] = true
	for i := len(g) - 1; i >= 0; i-- {
		cur[len(p)] = g[i] == "**" && next[len(p)]
		for j := len(p) - 1; j >= 0; j-- {
			if g[i] == "**" {
				cur[j] = next[j] || cur[j+1]
				continue
			}
			ok := next[j+1]
			if ok {
				ok, _ = path.Match(g[i], p[j])
			}
			cur[j] = ok
		}
		next, cur = cur, next
	}
	return next[0]
}

// ReadFile reads the walked file f from fsys, refusing to read past the
// size limit even when the file grew since it was listed.
func ReadFile(fsys fs.FS, f File, maxSize int64) ([]byte, *Error) {
	if maxSize <= 0 {
		maxSize = DefaultMaxSize
	}
	fh, err := fsys.Open(f.Target)
	if err != nil {
		return nil, &Error{Path: f.Path, Msg: fmt.Sprintf("cannot read: %v", UnwrapPath(err)), Err: err}
	}
	defer fh.Close()
	data, err := io.ReadAll(io.LimitReader(fh, maxSize+1))
	if err != nil {
		return nil, &Error{Path: f.Path, Msg: fmt.Sprintf("cannot read: %v", UnwrapPath(err)), Err: err}
	}
	if int64(len(data)) > maxSize {
		return nil, &Error{Path: f.Path, Msg: fmt.Sprintf("file is over the %s size limit; skipped", SizeString(maxSize))}
	}
	return data, nil
}

func join(dir, name string) string {
	if dir == "." {
		return name
	}
	return dir + "/" + name
}

func inStack(stack []string, p string) bool {
	for _, s := range stack {
		if s == p {
			return true
		}
	}
	return false
}

// UnwrapPath drops the operation and path that fs.PathError (os.PathError)
// repeats, for a message already prefixed with the path. Other errors are
// returned as they are.
func UnwrapPath(err error) error {
	var pe *fs.PathError
	if errors.As(err, &pe) {
		return pe.Err
	}
	return err
}

// SizeString writes a byte count for people, in the units ParseSize and
// --max-file-size read back: "512 B", "2.0 kB", "10.0 MB" (1 kB = 1024 B).
func SizeString(n int64) string {
	switch {
	case n >= 1<<20:
		return fmt.Sprintf("%.1f MB", float64(n)/(1<<20))
	case n >= 1<<10:
		return fmt.Sprintf("%.1f kB", float64(n)/(1<<10))
	}
	return fmt.Sprintf("%d B", n)
}
