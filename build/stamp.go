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
// It also returns the newest modification time seen, so a caller can
// refuse to trust a file changed within the clock tick of its last read.
// Two equal digests mean the same files with the same times; whether the
// bytes are the same is the usual size-and-time assumption of make and
// git.
func InputsDigest(fsys fs.FS, opts Options, extra string) (string, time.Time) {
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
	var newest time.Time
	for _, f := range files {
		fmt.Fprintf(h, "%s\x00%d %d\x00", f.Path, f.Size, f.ModTime.UnixNano())
		if f.ModTime.After(newest) {
			newest = f.ModTime
		}
	}
	for _, p := range problems {
		fmt.Fprintf(h, "!%s\x00", p.Error())
	}
	return hex.EncodeToString(h.Sum(nil)), newest
}
