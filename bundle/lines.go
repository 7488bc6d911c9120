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
	"strings"
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

// lineTable finds a passage's line in passages.jsonl by id, reading
// LinesFile's bytes in place (mapped into memory where the system allows),
// so that opening costs the same for any number of passages. Every read
// is bounds-checked: a damaged table gives a wrong or no line, never a
// crash, and Passage checks the id of the line it reads. It is read-only
// after it is made.
type lineTable struct {
	data  []byte // the whole file
	size  uint64 // passages.jsonl's size
	n     int
	unmap func() error
}

const linesHeader = len(linesMagic) + 12

func (t *lineTable) len() int { return t.n }

func (t *lineTable) u32(section, i int) (uint32, bool) {
	p := linesHeader + 8*t.n + 4*t.n*section + 4*i
	if i < 0 || i >= t.n || p+4 > len(t.data) {
		return 0, false
	}
	return binary.LittleEndian.Uint32(t.data[p:]), true
}

// id returns the id of line i.
func (t *lineTable) id(i uint32) []byte {
	ids := linesHeader + 20*t.n
	start := uint32(0)
	if i > 0 {
		start, _ = t.u32(1, int(i)-1)
	}
	end, ok := t.u32(1, int(i))
	if !ok || start > end || ids+int(end) > len(t.data) {
		return nil
	}
	return t.data[ids+int(start) : ids+int(end)]
}

// find returns the span of the line of passage id.
func (t *lineTable) find(id string) (span, bool) {
	lo, hi := 0, t.n
	for lo < hi { // the first k whose id is not below id
		m := int(uint(lo+hi) >> 1)
		i, _ := t.u32(2, m)
		if bytes.Compare(t.id(i), []byte(id)) < 0 {
			lo = m + 1
		} else {
			hi = m
		}
	}
	i, ok := t.u32(2, lo)
	if !ok || string(t.id(i)) != id {
		return span{}, false
	}
	p := linesHeader + 8*int(i)
	off := binary.LittleEndian.Uint64(t.data[p:])
	n, _ := t.u32(0, int(i))
	if off > t.size || uint64(n) > t.size-off {
		return span{}, false
	}
	return span{int64(off), int(n)}, true
}

// close releases the table's memory mapping, if any.
func (t *lineTable) close() error {
	if t.unmap == nil {
		return nil
	}
	err := t.unmap()
	t.unmap, t.data = nil, nil
	return err
}

// encodeLines writes LinesFile for the lines with the given ids and spans,
// in passages.jsonl order, of a passages.jsonl of size bytes; it fails on
// an id used twice.
func encodeLineTable(w io.Writer, ids []string, spans []span, size int64) error {
	byID := make([]uint32, len(ids))
	for i := range byID {
		byID[i] = uint32(i)
	}
	slices.SortStableFunc(byID, func(a, b uint32) int { return strings.Compare(ids[a], ids[b]) })
	for k := 1; k < len(byID); k++ {
		if ids[byID[k-1]] == ids[byID[k]] {
			return fmt.Errorf("line %d: passage id %s is used twice", max(byID[k-1], byID[k])+1, ids[byID[k]])
		}
	}
	bw := bufio.NewWriter(w)
	bw.WriteString(linesMagic)
	le := binary.LittleEndian
	var b [8]byte
	bw.Write(le.AppendUint64(b[:0], uint64(size)))
	bw.Write(le.AppendUint32(b[:0], uint32(len(ids))))
	for _, s := range spans {
		bw.Write(le.AppendUint64(b[:0], uint64(s.off)))
	}
	for _, s := range spans {
		bw.Write(le.AppendUint32(b[:0], uint32(s.n)))
	}
	end := 0
	for _, id := range ids {
		end += len(id)
		bw.Write(le.AppendUint32(b[:0], uint32(end)))
	}
	for _, v := range byID {
		bw.Write(le.AppendUint32(b[:0], v))
	}
	for _, id := range ids {
		bw.WriteString(id)
	}
	return bw.Flush()
}

// errLinesStale says LinesFile does not describe passages.jsonl.
var errLinesStale = errors.New("does not match passages.jsonl")

// newLineTableData checks the header of LinesFile data for a passages.jsonl
// of size bytes.
func newLineTableData(data []byte, size int64) (*lineTable, error) {
	rest, ok := bytes.CutPrefix(data, []byte(linesMagic))
	if !ok || len(rest) < 12 {
		return nil, errors.New("not a table of lines")
	}
	if int64(binary.LittleEndian.Uint64(rest)) != size {
		return nil, errLinesStale
	}
	n := int(binary.LittleEndian.Uint32(rest[8:]))
	if len(rest)-12 < 20*n {
		return nil, errors.New("table of lines cut short")
	}
	return &lineTable{data: data, size: uint64(size), n: n}, nil
}

// openLineTable opens LinesFile at path for a passages.jsonl of size bytes.
func openLineTable(path string, size int64) (*lineTable, error) {
	data, unmap, err := mapFile(path)
	if err != nil {
		return nil, err
	}
	t, err := newLineTableData(data, size)
	if err != nil {
		if unmap != nil {
			unmap()
		}
		return nil, err
	}
	t.unmap = unmap
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
	var buf bytes.Buffer
	if err := encodeLineTable(&buf, ids, spans, off); err != nil {
		return nil, 0, err
	}
	t, err := newLineTableData(buf.Bytes(), off)
	return t, off, err
}
