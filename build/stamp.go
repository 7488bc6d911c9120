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

// InputsDigest names everything a build of the root of fsys reads, by
// metadata only: every walked file's path, size and modification time,
// every walk problem, the options that shape the bundle, and extra (the
// caller adds what lies outside fsys: the tool version, the source commit).
// It also returns the walked files, so that a caller can check the bytes
// of those changed within the clock tick of its last look, whose size and
// time do not vouch for them. Two equal digests mean the same files with
// the same times; whether the bytes are the same is the usual
// size-and-time assumption of make and git.
func InputsDigest(fsys fs.FS, opts Options, extra string) (string, []sources.File) {
	files, problems := sources.Walk(fsys, opts.Walk)
	h := sha256.New()
	shaping := struct {
		Settings Settings
		Walk     sources.WalkOptions
		Fresh    any
		Dedupe   any
	}{opts.Settings, opts.Walk, opts.Fresh, opts.Dedupe}
	data, _ := json.Marshal(shaping)
	fmt.Fprintf(h, "%s\x00%s\x00", extra, data)
	for _, f := range files {
		fmt.Fprintf(h, "%s\x00%d %d\x00", f.Path, f.Size, f.ModTime.UnixNano())
	}
	for _, p := range problems {
		fmt.Fprintf(h, "!%s\x00", p.Error())
	}
	return hex.EncodeToString(h.Sum(nil)), files
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
