package bundle

import (
	"os"
	"path/filepath"
	"strings"
	"time"
)

// staleTempAge is how old a temporary folder must be before TempDir may
// remove it (and only when no process holds it locked): a folder just made
// is not locked yet.
const staleTempAge = time.Minute

// TempDir makes a new folder in parent named prefix plus a random suffix
// (os.MkdirTemp), locked (flock(2) where there is one) until release runs
// or the process ends. First it removes the folders with the same prefix
// that a killed process left: those no process holds locked, unchanged for
// a minute. Write uses it for ".OUT.tmp-*" and the stores' Pull for
// ".DIR.pull-*", so an interrupted build or pull is cleaned up by the next.
func TempDir(parent, prefix string) (dir string, release func(), err error) {
	sweepTemp(parent, prefix)
	dir, err = os.MkdirTemp(parent, prefix)
	if err != nil {
		return "", nil, err
	}
	release, err = lockDir(dir)
	if err != nil {
		os.RemoveAll(dir)
		return "", nil, err
	}
	return dir, release, nil
}

func sweepTemp(parent, prefix string) {
	ents, err := os.ReadDir(parent)
	if err != nil {
		return
	}
	for _, e := range ents {
		if !e.IsDir() || !strings.HasPrefix(e.Name(), prefix) {
			continue
		}
		p := filepath.Join(parent, e.Name())
		if fi, err := e.Info(); err == nil && time.Since(fi.ModTime()) > staleTempAge && unused(p) {
			os.RemoveAll(p)
		}
	}
}
