package pgsync

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/bundle"
)

// record is one line of passages.jsonl. Only its id and text hash are
// read at first, and the hash of the whole line taken; the passage itself
// is decoded (decode) only when its row is written or its text embedded,
// which keeps a one-page sync of a large bundle from decoding every line.
type record struct {
	id       string
	textHash string // the passage's hash field: SHA-256 of its text
	hash     string // SHA-256 (hex) of the whole line, newline excluded
	line     []byte
	lineNo   int
	p        *build.Passage // nil until decode
}

// decode parses the record's line into r.p.
func (r *record) decode(path string) error {
	if r.p != nil {
		return nil
	}
	var p build.Passage
	if err := json.Unmarshal(r.line, &p); err != nil {
		return fmt.Errorf("%s:%d: %v", path, r.lineNo, err)
	}
	if p.ID != r.id || p.Hash != r.textHash {
		return fmt.Errorf("%s:%d: id or hash read twice differently", path, r.lineNo)
	}
	r.p = &p
	return nil
}

// loc names a decoded passage the way every kbc message does: path#anchor.
func (r *record) loc() string {
	if r.p == nil {
		return "passage " + r.id
	}
	return r.p.Ref()
}

// source is the bundle a sync brings the database to.
type source struct {
	dir      string
	manifest *bundle.Manifest
	delta    *bundle.Delta // nil when the bundle has none, or one for another bundle
	records  []record      // nil until readPassages
}

// passagesPath is the path of the bundle's passages.jsonl, for messages.
func (s *source) passagesPath() string { return filepath.Join(s.dir, bundle.PassagesFile) }

// readSource reads the manifest and the delta of the bundle in dir.
func readSource(dir string) (*source, error) {
	m, err := bundle.ReadManifest(dir)
	if err != nil {
		return nil, err
	}
	src := &source{dir: dir, manifest: m}
	data, err := os.ReadFile(filepath.Join(dir, bundle.DeltaFile))
	switch {
	case errors.Is(err, fs.ErrNotExist):
	case err != nil:
		return nil, err
	default:
		var d bundle.Delta
		if err := json.Unmarshal(data, &d); err != nil {
			return nil, fmt.Errorf("%s: %v", filepath.Join(dir, bundle.DeltaFile), err)
		}
		if d.To == m.BundleID {
			src.delta = &d
		}
	}
	return src, nil
}

// readPassages reads every line of passages.jsonl (ids, text hashes and
// line hashes), checking that the file is the one the manifest names (its
// SHA-256 is the bundle id).
func (src *source) readPassages() error {
	path := src.passagesPath()
	data, err := os.ReadFile(path)
	if err != nil {
		return err
	}
	whole := make(chan string, 1)
	go func() {
		sum := sha256.Sum256(data)
		whole <- hex.EncodeToString(sum[:])
	}()
	seen := make(map[string]int)
	rest := data
	for n := 1; len(rest) > 0; n++ {
		line := rest
		if i := bytes.IndexByte(rest, '\n'); i >= 0 {
			line, rest = rest[:i], rest[i+1:]
		} else {
			rest = nil
		}
		r := record{line: line, lineNo: n}
		var ok bool
		if r.id, r.textHash, ok = topFields(line); !ok {
			// Not in the form kbc writes: decode it properly, which
			// also gives the error.
			if err := r.decode(path); err != nil {
				return err
			}
			r.id, r.textHash = r.p.ID, r.p.Hash
		}
		if r.id == "" {
			return fmt.Errorf("%s:%d: passage without an id", path, n)
		}
		if prev, dup := seen[r.id]; dup {
			return fmt.Errorf("%s:%d: passage id %s repeats line %d", path, n, r.id, prev)
		}
		seen[r.id] = n
		sum := sha256.Sum256(line)
		r.hash = hex.EncodeToString(sum[:])
		src.records = append(src.records, r)
	}
	m := src.manifest
	if got := <-whole; got != m.BundleID {
		return fmt.Errorf("%s: SHA-256 %s does not match the manifest's bundle id %s (run kbc verify)", path, got[:12], m.BundleID[:min(12, len(m.BundleID))])
	}
	return nil
}

// topFields returns the string members "id" and "hash" of the JSON object
// in line, reading nothing else, and false when the line is not a simple
// object with both as strings free of escapes (then the caller decodes it
// fully). Only top-level members count: a quote inside a string is always
// escaped, so the scan never mistakes text for structure.
func topFields(b []byte) (id, hash string, ok bool) {
	i := skipSpace(b, 0)
	if i >= len(b) || b[i] != '{' {
		return "", "", false
	}
	i++
	var haveID, haveHash bool
	for {
		i = skipSpace(b, i)
		if i < len(b) && b[i] == '}' {
			return id, hash, haveID && haveHash
		}
		key, j, plain := readString(b, i)
		if j < 0 || !plain {
			return "", "", false
		}
		i = skipSpace(b, j)
		if i >= len(b) || b[i] != ':' {
			return "", "", false
		}
		i = skipSpace(b, i+1)
		switch string(key) {
		case "id", "hash":
			v, j, plain := readString(b, i)
			if j < 0 || !plain {
				return "", "", false
			}
			if string(key) == "id" {
				id, haveID = string(v), true
			} else {
				hash, haveHash = string(v), true
			}
			i = j
		default:
			if i = skipValue(b, i); i < 0 {
				return "", "", false
			}
		}
		i = skipSpace(b, i)
		if i < len(b) && b[i] == ',' {
			i++
			continue
		}
		if i < len(b) && b[i] == '}' {
			return id, hash, haveID && haveHash
		}
		return "", "", false
	}
}

func skipSpace(b []byte, i int) int {
	for i < len(b) && (b[i] == ' ' || b[i] == '\t' || b[i] == '\r' || b[i] == '\n') {
		i++
	}
	return i
}

// readString reads the JSON string at b[i]; it returns its raw bytes, the
// index after its closing quote (-1 if there is none) and whether it holds
// no escape.
func readString(b []byte, i int) ([]byte, int, bool) {
	if i >= len(b) || b[i] != '"' {
		return nil, -1, false
	}
	plain := true
	for j := i + 1; j < len(b); j++ {
		switch b[j] {
		case '\\':
			plain = false
			j++
		case '"':
			return b[i+1 : j], j + 1, plain
		}
	}
	return nil, -1, false
}

// skipValue returns the index after the JSON value at b[i], or -1.
func skipValue(b []byte, i int) int {
	if i >= len(b) {
		return -1
	}
	switch b[i] {
	case '"':
		_, j, _ := readString(b, i)
		return j
	case '{', '[':
		depth := 0
		for j := i; j < len(b); j++ {
			switch b[j] {
			case '{', '[':
				depth++
			case '}', ']':
				if depth--; depth == 0 {
					return j + 1
				}
			case '"':
				_, k, _ := readString(b, j)
				if k < 0 {
					return -1
				}
				j = k - 1
			}
		}
		return -1
	default:
		j := i
		for j < len(b) && b[j] != ',' && b[j] != '}' && b[j] != ']' && b[j] != ' ' {
			j++
		}
		if j == i {
			return -1
		}
		return j
	}
}
