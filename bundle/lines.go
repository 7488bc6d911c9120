package bundle

import (
	"bufio"
	"bytes"
	"encoding/binary"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"slices"
)

// LinesFile is the bundle's table of where each line of passages.jsonl lies,
// which lets Open find a passage by id without reading passages.jsonl.
//
// It is binary, little-endian, derived from passages.jsonl alone (so the
// same passages give the same bytes), and listed in the manifest like
// every file:
//
//	"kbc-lines 1\n"                 magic
//	uint64 size                     passages.jsonl's size in bytes
//	uint32 n                        its lines
//	n × uint64 offset               where line i starts
//	n × uint32 length               its length, without the newline
//	n × uint32 end                  where line i's id ends in ids
//	n × uint32 position             the lines in byte order of their ids
//	ids                             every line's passage id, one after another
//
// A bundle without it (made before it existed) still opens: Open then reads
// passages.jsonl once to build the same table.
const LinesFile = "passages.lines"

const linesMagic = "kbc-lines 1\n"

// lineTable finds a passage's line in passages.jsonl by id. It is read-only
// after it is made.
type lineTable struct {
	offs []uint64
	lens []uint32
	ends []uint32 // id i is ids[ends[i-1]:ends[i]]
	byID []uint32 // positions sorted by id
	ids  []byte
}

func (t *lineTable) len() int { return len(t.offs) }

func (t *lineTable) id(i uint32) []byte {
	start := uint32(0)
	if i > 0 {
		start = t.ends[i-1]
	}
	return t.ids[start:t.ends[i]]
}

// find returns the span of the line of passage id.
func (t *lineTable) find(id string) (span, bool) {
	k, ok := slices.BinarySearchFunc(t.byID, id, func(i uint32, id string) int {
		return bytes.Compare(t.id(i), []byte(id))
	})
	if !ok {
		return span{}, false
	}
	i := t.byID[k]
	return span{int64(t.offs[i]), int(t.lens[i])}, true
}

// newLineTable makes the table of lines with the given ids and spans, in
// passages.jsonl order; it fails on an id used twice.
func newLineTable(ids []string, spans []span) (*lineTable, error) {
	t := &lineTable{
		offs: make([]uint64, len(ids)),
		lens: make([]uint32, len(ids)),
		ends: make([]uint32, len(ids)),
		byID: make([]uint32, len(ids)),
	}
	for i, id := range ids {
		t.ids = append(t.ids, id...)
		t.ends[i] = uint32(len(t.ids))
		t.offs[i] = uint64(spans[i].off)
		t.lens[i] = uint32(spans[i].n)
		t.byID[i] = uint32(i)
	}
	slices.SortStableFunc(t.byID, func(a, b uint32) int { return bytes.Compare(t.id(a), t.id(b)) })
	for k := 1; k < len(t.byID); k++ {
		if bytes.Equal(t.id(t.byID[k-1]), t.id(t.byID[k])) {
			return nil, fmt.Errorf("line %d: passage id %s is used twice", max(t.byID[k-1], t.byID[k])+1, t.id(t.byID[k]))
		}
	}
	return t, nil
}

// writeTo writes the table as LinesFile for a passages.jsonl of size bytes.
func (t *lineTable) writeTo(w io.Writer, size int64) error {
	bw := bufio.NewWriter(w)
	bw.WriteString(linesMagic)
	le := binary.LittleEndian
	var b [8]byte
	bw.Write(le.AppendUint64(b[:0], uint64(size)))
	bw.Write(le.AppendUint32(b[:0], uint32(t.len())))
	for _, v := range t.offs {
		bw.Write(le.AppendUint64(b[:0], v))
	}
	for _, s := range [][]uint32{t.lens, t.ends, t.byID} {
		for _, v := range s {
			bw.Write(le.AppendUint32(b[:0], v))
		}
	}
	bw.Write(t.ids)
	return bw.Flush()
}

// errLinesStale says LinesFile does not describe passages.jsonl.
var errLinesStale = errors.New("does not match passages.jsonl")

// readLineTable reads LinesFile data for a passages.jsonl of size bytes.
func readLineTable(data []byte, size int64) (*lineTable, error) {
	le := binary.LittleEndian
	rest, ok := bytes.CutPrefix(data, []byte(linesMagic))
	if !ok || len(rest) < 12 {
		return nil, errors.New("not a table of lines")
	}
	if int64(le.Uint64(rest)) != size {
		return nil, errLinesStale
	}
	n := int(le.Uint32(rest[8:]))
	rest = rest[12:]
	if len(rest) < n*20 {
		return nil, errors.New("table of lines cut short")
	}
	t := &lineTable{
		offs: make([]uint64, n),
		lens: make([]uint32, n),
		ends: make([]uint32, n),
		byID: make([]uint32, n),
	}
	for i := range t.offs {
		t.offs[i] = le.Uint64(rest[8*i:])
	}
	rest = rest[8*n:]
	for _, s := range [][]uint32{t.lens, t.ends, t.byID} {
		for i := range s {
			s[i] = le.Uint32(rest[4*i:])
		}
		rest = rest[4*n:]
	}
	t.ids = rest
	// Enough checks that a damaged table cannot index out of range: spans
	// inside passages.jsonl, id ends rising to the end of ids, positions
	// in range.
	prev := uint32(0)
	for i := range n {
		if t.offs[i]+uint64(t.lens[i]) > uint64(size) || t.ends[i] < prev || t.byID[i] >= uint32(n) {
			return nil, errors.New("damaged table of lines")
		}
		prev = t.ends[i]
	}
	if n > 0 && int(prev) != len(t.ids) || n == 0 && len(t.ids) != 0 {
		return nil, errors.New("damaged table of lines")
	}
	return t, nil
}

// scanLines makes the table of lines by reading passages.jsonl. Lines as
// Write makes them start with the id ({"id":"...); others are decoded.
func scanLines(f *os.File) (*lineTable, int64, error) {
	var ids []string
	var spans []span
	sc := bufio.NewScanner(f)
	sc.Buffer(make([]byte, 1<<16), 1<<30)
	prefix := []byte(`{"id":"`)
	var off int64
	for no := 1; sc.Scan(); no++ {
		line := sc.Bytes()
		var id string
		rest, ok := bytes.CutPrefix(line, prefix)
		if i := bytes.IndexAny(rest, `"\`); ok && i >= 0 && rest[i] == '"' {
			id = string(rest[:i])
		} else {
			var p struct {
				ID string `json:"id"`
			}
			if err := json.Unmarshal(line, &p); err != nil {
				return nil, 0, fmt.Errorf("line %d: %w", no, err)
			}
			id = p.ID
		}
		ids = append(ids, id)
		spans = append(spans, span{off, len(line)})
		off += int64(len(line)) + 1
	}
	if err := sc.Err(); err != nil {
		return nil, 0, err
	}
	t, err := newLineTable(ids, spans)
	return t, off, err
}
