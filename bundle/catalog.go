package bundle

import (
	"bytes"
	"crypto/sha256"
	"encoding/binary"
	"encoding/gob"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"hash/crc32"
	"os"
	"path/filepath"
	"strconv"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/internal/parallel"
)

// A catalog lists a bundle's passages as the delta and the index update
// compare them: by id and content hash, with the place of each one's line
// in passages.jsonl. Write saves it beside the bundle (Input.Catalog), so
// that the next build into the same folder reads a few hundred kilobytes
// instead of decoding every passage, and reads back only the lines of the
// passages it must take out of the index.
type catalog struct {
	BundleID string
	Size     int64 // of passages.jsonl
	Entries  []catalogEntry
}

type catalogEntry struct {
	ID      string
	Content [sha256.Size]byte // contentSum
	Off     int64             // the passage's line in passages.jsonl
	Len     int64             // including its newline
}

const (
	catalogFile   = "catalog.gob"
	catalogLayout = 2
)

// contentSum is ContentHash as bytes: the SHA-256 of a passage's title,
// heading trail and text, each prefixed with its length, and then, only
// when the passage has defined terms (which the index searches), their
// number and texts the same way.
func contentSum(p *build.Passage) [sha256.Size]byte {
	h := sha256.New()
	var num []byte
	var chunk [8 << 10]byte
	field := func(s string) {
		num = strconv.AppendInt(num[:0], int64(len(s)), 10)
		num = append(num, ':')
		h.Write(num)
		// In chunks through a buffer on the stack: writing the string
		// as []byte(s) would copy each text to the heap first.
		for len(s) > 0 {
			n := copy(chunk[:], s)
			h.Write(chunk[:n])
			s = s[n:]
		}
	}
	field(p.Title)
	num = strconv.AppendInt(num[:0], int64(len(p.Heading)), 10)
	h.Write(append(num, ':'))
	for _, s := range p.Heading {
		field(s)
	}
	field(p.Text)
	if len(p.Terms) > 0 {
		num = strconv.AppendInt(num[:0], int64(len(p.Terms)), 10)
		h.Write(append(num, ':'))
		for _, t := range p.Terms {
			field(t.Text)
		}
	}
	var sum [sha256.Size]byte
	h.Sum(sum[:0])
	return sum
}

// contentSums returns contentSum of each passage, on several goroutines.
func contentSums(ps []build.Passage, order []int) [][sha256.Size]byte {
	sums := make([][sha256.Size]byte, len(order))
	parallel.For(len(order), func(j int) { sums[j] = contentSum(&ps[order[j]]) })
	return sums
}

// catalogOf returns the catalog of passages (in file order) without
// places in a file.
func catalogOf(ps []build.Passage) *catalog {
	order := make([]int, len(ps))
	for i := range order {
		order[i] = i
	}
	sums := contentSums(ps, order)
	c := &catalog{Entries: make([]catalogEntry, len(ps))}
	for i := range ps {
		c.Entries[i] = catalogEntry{ID: ps[i].ID, Content: sums[i], Off: -1}
	}
	return c
}

// catalogFileData is a catalog as saved: by column, which gob encodes
// and decodes in bulk (a [32]byte array it would take byte by byte).
type catalogFileData struct {
	BundleID string
	Size     int64
	IDs      []string
	Content  []byte // the sums, one after another
	Offs     []int64
	Lens     []int64
}

// saveCatalog writes c into out's cache folder, with a checksum.
func saveCatalog(out string, c *catalog) error {
	f := catalogFileData{BundleID: c.BundleID, Size: c.Size, IDs: make([]string, len(c.Entries)),
		Content: make([]byte, 0, sha256.Size*len(c.Entries)), Offs: make([]int64, len(c.Entries)), Lens: make([]int64, len(c.Entries))}
	for i, e := range c.Entries {
		f.IDs[i], f.Offs[i], f.Lens[i] = e.ID, e.Off, e.Len
		f.Content = append(f.Content, e.Content[:]...)
	}
	var buf bytes.Buffer
	buf.WriteString(strconv.Itoa(catalogLayout) + "\n")
	if err := gob.NewEncoder(&buf).Encode(&f); err != nil {
		return err
	}
	buf.Write(binary.LittleEndian.AppendUint32(nil, crc32.Checksum(buf.Bytes(), castagnoli)))
	return writeCacheFile(out, catalogFile, buf.Bytes())
}

var castagnoli = crc32.MakeTable(crc32.Castagnoli)

// loadCatalog reads the catalog saved for the bundle in out, when it is
// whole and belongs to the bundle m whose passages.jsonl has size bytes.
func loadCatalog(out string, m *Manifest, size int64) (*catalog, error) {
	data, err := os.ReadFile(filepath.Join(CacheDir(out), catalogFile))
	if err != nil {
		return nil, err
	}
	head := strconv.Itoa(catalogLayout) + "\n"
	if len(data) < len(head)+4 || string(data[:len(head)]) != head ||
		crc32.Checksum(data[:len(data)-4], castagnoli) != binary.LittleEndian.Uint32(data[len(data)-4:]) {
		return nil, errors.New("catalog: torn, altered or of another layout")
	}
	var f catalogFileData
	if err := gob.NewDecoder(bytes.NewReader(data[len(head) : len(data)-4])).Decode(&f); err != nil {
		return nil, fmt.Errorf("catalog: %v", err)
	}
	if f.BundleID != m.BundleID || f.Size != size {
		return nil, errors.New("catalog: of another bundle")
	}
	n := len(f.IDs)
	if len(f.Content) != n*sha256.Size || len(f.Offs) != n || len(f.Lens) != n {
		return nil, errors.New("catalog: columns of different lengths")
	}
	c := &catalog{BundleID: f.BundleID, Size: f.Size, Entries: make([]catalogEntry, n)}
	for i := range c.Entries {
		e := &c.Entries[i]
		e.ID, e.Off, e.Len = f.IDs[i], f.Offs[i], f.Lens[i]
		copy(e.Content[:], f.Content[i*sha256.Size:])
	}
	return c, nil
}

// readCatalogLines reads the passages of the catalog entries at idx from the
// passages.jsonl in dir, checking that each line holds the passage the
// catalog says it does, with the same content.
func readCatalogLines(dir string, c *catalog, idx []int) ([]build.Passage, error) {
	name := filepath.Join(dir, PassagesFile)
	f, err := os.Open(name)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	out := make([]build.Passage, len(idx))
	var buf []byte
	for j, i := range idx {
		e := &c.Entries[i]
		if e.Off < 0 || e.Len <= 0 || e.Len > 1<<28 {
			return nil, fmt.Errorf("catalog: no place for passage %s", e.ID)
		}
		if int64(cap(buf)) < e.Len {
			buf = make([]byte, e.Len)
		}
		buf = buf[:e.Len]
		if _, err := f.ReadAt(buf, e.Off); err != nil {
			return nil, fmt.Errorf("%s: passage %s: %v", name, e.ID, err)
		}
		if err := json.Unmarshal(buf, &out[j]); err != nil || out[j].ID != e.ID {
			return nil, fmt.Errorf("%s: passage %s is not where the catalog says", name, e.ID)
		}
		// The index statistics are corrected with this text: it must be
		// what the catalog (and the index) hold, not an edit made since.
		if contentSum(&out[j]) != e.Content {
			return nil, fmt.Errorf("%s: passage %s differs from the catalog", name, e.ID)
		}
	}
	return out, nil
}

func hexSum(s [sha256.Size]byte) string { return hex.EncodeToString(s[:]) }
