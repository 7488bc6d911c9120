package bundle

import (
	"errors"
	"io/fs"
	"os"
	"path/filepath"
	"strings"

	"github.com/kbc-project/kbc/sources"
)

// NotBundleError is the error of ReadManifest, and so of Open and Verify,
// for a folder that holds no manifest.json. It unwraps to fs.ErrNotExist.
type NotBundleError struct {
	Dir string
	// Source reports whether Dir looks like a docs folder kbc builds
	// from: it holds a kbc.toml or Markdown, MDX or HTML pages.
	Source bool
}

func (e *NotBundleError) Error() string {
	if e.Source {
		return e.Dir + " is a source folder, not a bundle (it has no " + ManifestFile + ")"
	}
	return e.Dir + " is not a kbc bundle (it has no " + ManifestFile + ")"
}

func (e *NotBundleError) Unwrap() error { return fs.ErrNotExist }

// maxLook is how many entries looksLikeSource reads at most: enough to
// find a page in any docs folder, few enough to answer at once in a home
// folder given by mistake.
const maxLook = 2000

// notBundle returns the error for dir, whose manifest.json could not be
// opened with err: a *NotBundleError when dir is a folder without one,
// else err.
func notBundle(dir string, err error) error {
	if !errors.Is(err, fs.ErrNotExist) {
		return err
	}
	if fi, serr := os.Stat(dir); serr != nil || !fi.IsDir() {
		return err
	}
	return &NotBundleError{Dir: dir, Source: looksLikeSource(dir)}
}

// looksLikeSource reports whether dir holds a kbc.toml or a page that
// sources can read, looking at no more than maxLook entries and skipping
// hidden folders, as the source walk does.
func looksLikeSource(dir string) bool {
	if _, err := os.Stat(filepath.Join(dir, "kbc.toml")); err == nil {
		return true
	}
	found, seen := false, 0
	stop := errors.New("stop")
	filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if seen++; seen > maxLook {
			return stop
		}
		if err != nil {
			return nil
		}
		if d.IsDir() {
			if p != dir && strings.HasPrefix(d.Name(), ".") {
				return filepath.SkipDir
			}
			return nil
		}
		if _, ok := sources.KindOf(d.Name()); ok && d.Type().IsRegular() {
			found = true
			return stop
		}
		return nil
	})
	return found
}
