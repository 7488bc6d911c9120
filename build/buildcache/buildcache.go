// Package buildcache is the file format of kbc's build cache: each file is
// a gob stream (a Header, then Header.Count records) followed by the
// stream's CRC-32C in 4 little-endian bytes, so that a torn or altered
// file is found out before anything in it is used. The Header names the
// layout version of the records and the cache key (the tool that wrote
// it); a reader refuses another layout, and the caller compares keys.
//
// Files are replaced atomically and not flushed (internal/atomicfile): a
// cache only saves work, and after a crash a torn file fails its checksum,
// which costs one full build. What the records hold, and the cache that
// uses them, are package build's (build.Cache, build.LoadCache): its
// entries hold build's own types.
package buildcache

import (
	"bytes"
	"encoding/binary"
	"encoding/gob"
	"fmt"
	"hash/crc32"
	"os"

	"github.com/kbc-project/kbc/internal/atomicfile"
)

// Header starts every cache file.
type Header struct {
	Layout int
	Key    string
	Count  int // records after the header
}

var castagnoli = crc32.MakeTable(crc32.Castagnoli)

// Checksum is the CRC-32C a file's stream ends with.
func Checksum(stream []byte) uint32 { return crc32.Checksum(stream, castagnoli) }

// Write replaces the file name with h, the records body encodes, and the
// checksum, atomically.
func Write(name string, h Header, body func(*gob.Encoder) error) error {
	var buf bytes.Buffer
	enc := gob.NewEncoder(&buf)
	if err := enc.Encode(h); err != nil {
		return err
	}
	if err := body(enc); err != nil {
		return fmt.Errorf("encoding the build cache: %v", err)
	}
	buf.Write(binary.LittleEndian.AppendUint32(nil, Checksum(buf.Bytes())))
	return atomicfile.WriteFile(name, buf.Bytes(), atomicfile.NoFlush)
}

// Read reads the file name, checks its checksum and header, and returns a
// decoder positioned at its first record.
func Read(name string, layout int) (*gob.Decoder, Header, error) {
	data, err := os.ReadFile(name)
	if err != nil {
		return nil, Header{}, err
	}
	return Open(name, data, layout)
}

// Open is Read on the bytes data of the file name.
func Open(name string, data []byte, layout int) (*gob.Decoder, Header, error) {
	var h Header
	if len(data) < 4 || Checksum(data[:len(data)-4]) != binary.LittleEndian.Uint32(data[len(data)-4:]) {
		return nil, h, fmt.Errorf("%s: checksum mismatch (torn or altered)", name)
	}
	dec := gob.NewDecoder(bytes.NewReader(data[:len(data)-4]))
	if err := dec.Decode(&h); err != nil {
		return nil, h, fmt.Errorf("%s: %v", name, err)
	}
	if h.Layout != layout {
		return nil, h, fmt.Errorf("%s: cache layout %d, want %d", name, h.Layout, layout)
	}
	if h.Count < 0 {
		return nil, h, fmt.Errorf("%s: %d records", name, h.Count)
	}
	return dec, h, nil
}
