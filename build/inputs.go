package build

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"io/fs"
	"time"

	"github.com/kbc-project/kbc/sources"
)

// InputsDigest names everything a build of a walked tree reads, by
// metadata only: every walked file's path, size and modification time,
// every walk problem, the options that shape the bundle, and extra (the
// caller adds what lies outside the tree: the tool version, the source
// commit, the checks). A caller checks the bytes of the files changed
// within the clock tick of its last look (Racy), whose size and time do
// not vouch for them. Two equal digests mean the same files with the
// same times; whether the bytes are the same is the usual size-and-time
// assumption of make and git.
func InputsDigest(w *Walked, opts Options, extra string) string {
	h := sha256.New()
	shaping := struct {
		Settings Settings
		Walk     sources.WalkOptions
		Fresh    any
		Dedupe   any
	}{opts.Settings, opts.Walk, opts.Fresh, opts.Dedupe}
	data, _ := json.Marshal(shaping)
	fmt.Fprintf(h, "%s\x00%s\x00", extra, data)
	for _, f := range w.Files {
		fmt.Fprintf(h, "%s\x00%d %d\x00", f.Path, f.Size, f.ModTime.UnixNano())
	}
	for _, p := range w.Problems {
		fmt.Fprintf(h, "!%s\x00", p.Error())
	}
	return hex.EncodeToString(h.Sum(nil))
}

// Walked is the listing of a source tree: the files sources.Walk found
// and the problems it met.
type Walked struct {
	Files    []sources.File
	Problems []*sources.Error
}

// Walk lists the root of fsys with opts.Walk.
func Walk(fsys fs.FS, opts Options) *Walked {
	files, problems := sources.Walk(fsys, opts.Walk)
	return &Walked{Files: files, Problems: problems}
}

// Racy returns the files modified less than the racy window before t, or
// after it: their size and time cannot vouch for their bytes at t.
func Racy(files []sources.File, t time.Time) []sources.File {
	var out []sources.File
	for _, f := range files {
		if !f.ModTime.Before(t.Add(-racyWindow)) {
			out = append(out, f)
		}
	}
	return out
}
