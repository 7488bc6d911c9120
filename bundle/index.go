package bundle

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"time"

	"github.com/RoaringBitmap/roaring/v2"
	"github.com/blevesearch/bleve/v2"
	"github.com/blevesearch/bleve/v2/analysis/lang/en"
	"github.com/blevesearch/bleve/v2/document"
	"github.com/blevesearch/bleve/v2/mapping"
	"github.com/blevesearch/bleve/v2/util"
	index "github.com/blevesearch/bleve_index_api"
	segment "github.com/blevesearch/scorch_segment_api/v2"
	zap "github.com/blevesearch/zapx/v15"
	bolt "go.etcd.io/bbolt"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/internal/parallel"
)

// The indexed fields of a passage, in the order Search visits them.
const (
	fieldTitle   = "title"
	fieldHeading = "heading"
	fieldText    = "text"
)

var searchFields = [...]string{fieldTitle, fieldHeading, fieldText}

// Ranking parameters written into index/stats.json and read back by Search.
//
// k1 = 1.2 and b = 0.75 are the usual defaults: bleve v2.6.3 uses them
// (BM25_k1 and BM25_b in search/util.go), so does Lucene's BM25Similarity,
// and Robertson and Zaragoza ("The Probabilistic Relevance Framework: BM25
// and Beyond", 2009) report k1 in 1.2-2.0 and b = 0.75 as typical values
// (Lucene and the paper from memory). One b serves every field.
//
// The field weights are our judgement, not from a source: a query word in
// the page title or the heading trail says more about what a passage is
// about than one in its body, and the title more than the trail (the
// trail's outer headings are shared by many passages). In BM25F a weight
// multiplies the field's term frequency before saturation (see Search).
const (
	bm25K1       = 1.2
	bm25B        = 0.75
	boostTitle   = 2.0
	boostHeading = 1.5
	boostText    = 1.0
)

// batchSize is the number of passages per segment the index builder writes
// before merging; PERF-FLOOR.md section 5 found batch size barely changes
// speed but drives memory, and 1000 kept peak RSS near 225 MB for 21k
// passages.
const batchSize = 1000

// headingText is what the heading field of a passage holds: its heading
// trail, headings joined by " > ", and then the texts of its defined terms
// (build.Passage.Terms), one a line. Defined terms are searched with the
// heading weight because, like a heading, a term names what the text
// beside it is about.
func headingText(p *build.Passage) string {
	if len(p.Terms) == 0 {
		return strings.Join(p.Heading, " > ")
	}
	var sb strings.Builder
	sb.WriteString(strings.Join(p.Heading, " > "))
	for _, t := range p.Terms {
		sb.WriteByte('\n')
		sb.WriteString(t.Text)
	}
	return sb.String()
}

// indexOptions are how each field is indexed: term frequencies and field
// lengths only; nothing stored, no term vectors, no doc values.
const indexOptions = index.IndexField

// indexDocument is what the index sees of passage p: its title, heading
// text (headingText) and text, analysed by kbcAnalyzer. The index stores
// none of it: hits are read back from passages.jsonl by id. Built here
// rather than through the index mapping so that the analysis is ours
// and one function makes the documents of a fresh build and of an update.
func indexDocument(p *build.Passage) *document.Document {
	a := theAnalyzer()
	d := document.NewDocument(p.ID)
	for _, f := range [...]struct{ name, text string }{
		{fieldTitle, p.Title}, {fieldHeading, headingText(p)}, {fieldText, p.Text},
	} {
		d.AddField(document.NewTextFieldCustom(f.name, nil, []byte(f.text), indexOptions, a))
	}
	d.AddIDField()
	d.VisitFields(func(f index.Field) {
		if f.Options().IsIndexed() {
			f.Analyze()
		}
	})
	d.SetIndexed()
	return d
}

// newMapping returns the lean mapping of PERF-FLOOR.md section 5: three text
// fields, nothing stored, no term vectors, no doc values, no _all field, no
// dynamic fields. Search does not use it: the documents are made and
// analysed by indexDocument, with kbcAnalyzer, which bleve's registry does
// not know; the mapping names bleve's "en" analyzer, the nearest it has,
// for anyone who opens index/ with bleve directly.
func newMapping() *mapping.IndexMappingImpl {
	field := mapping.NewTextFieldMapping()
	field.Analyzer = en.AnalyzerName
	field.Store = false
	field.IncludeTermVectors = false
	field.IncludeInAll = false
	field.DocValues = false

	doc := mapping.NewDocumentStaticMapping()
	for _, name := range searchFields {
		doc.AddFieldMappingsAt(name, field)
	}
	doc.AddSubDocumentMapping("_all", mapping.NewDocumentDisabledMapping())

	m := mapping.NewIndexMapping()
	m.DefaultMapping = doc
	m.DefaultAnalyzer = en.AnalyzerName
	m.IndexDynamic = false
	m.StoreDynamic = false
	m.DocValuesDynamic = false
	// bleve's own BM25 variant for anyone who opens index/ with bleve
	// directly; Search does not use bleve's scorer (see Search).
	m.ScoringModel = index.BM25Scoring
	return m
}

// fieldStats are the collection statistics of one field that BM25 needs.
type fieldStats struct {
	Docs   int `json:"docs"`   // passages with at least one token in the field
	Tokens int `json:"tokens"` // tokens in the field over all passages
}

// indexStats is index/stats.json: what Search needs beyond the bleve index
// to compute BM25 exactly. It is written once, at build time.
type indexStats struct {
	// Content is the SHA-256 of what the index holds (each passage's id
	// and the ContentHash of its title, heading trail and text, in order)
	// and how: a new build whose content is the same reuses the previous
	// bundle's index files.
	Content  string                `json:"content"`
	Analyzer string                `json:"analyzer"`
	B        float64               `json:"b"`
	Boosts   map[string]float64    `json:"boosts"`
	Docs     int                   `json:"docs"`
	Fields   map[string]fieldStats `json:"fields"`
	K1       float64               `json:"k1"`
}

// avgdl returns the average length of field f in tokens over all passages,
// those without the field counting 0, as BM25F's average field length is
// taken over the collection (Robertson and Zaragoza 2009, section 3.3).
func (s *indexStats) avgdl(f string) float64 {
	if s.Docs == 0 {
		return 0
	}
	return float64(s.Fields[f].Tokens) / float64(s.Docs)
}

// buildIndex writes the bleve index of the passages ps[order[0]],
// ps[order[1]], ... into the new folder dir and returns its statistics.
//
// Why not bleve's Builder or an Index fed in batches: both pass documents
// through index.Batch, whose documents sit in a Go map, so the order of the
// documents inside each segment (and so every byte after it) changes from run
// to run; scorch's background merger adds timing to that. Why zap version 15,
// not bleve v2.6.3's default 17 (or 16): those write a segment's sections in
// Go map order (zapx section.go keeps them in a map), so their files differ
// from run to run even for the same documents in the same order. Version 15
// is one of the segment formats bleve v2.6.3 reads (scorch registers zap 11 to
// 17) and writes the same bytes for the same documents.
//
// So buildIndex makes the segments itself with the zap 15 plugin, in passage
// order (analysing each batch on all cores, and writing one batch's segment
// while the next is analysed), merges them in a fixed order (see
// mergeSegments), and lets bleve's Builder write only the
// surrounding files (index_meta.json, the mapping, root.bolt) from a
// one-document placeholder whose segment is then replaced by ours; root.bolt
// refers to the segment by file name only. Last, canonicalRoot removes the
// wall-clock time scorch writes into root.bolt. Two builds of the same
// passages then give byte-identical files (TestDeterministic).
func buildIndex(dir string, ps []build.Passage, order []int, content string) (*indexStats, error) {
	m := newMapping()
	st := &indexStats{
		Content:  content,
		Analyzer: analyzerName,
		B:        bm25B,
		K1:       bm25K1,
		Docs:     len(order),
		Boosts:   map[string]float64{fieldTitle: boostTitle, fieldHeading: boostHeading, fieldText: boostText},
		Fields:   make(map[string]fieldStats, len(searchFields)),
	}
	// Scratch files go in a folder of their own beside dir, inside the
	// bundle's temporary folder: never the system temp folder, as the final
	// renames must stay on one file system.
	scratch := filepath.Join(filepath.Dir(dir), ".index-build")
	if err := os.Mkdir(scratch, 0o755); err != nil {
		return nil, err
	}
	defer os.RemoveAll(scratch)

	plugin := &zap.ZapPlugin{}
	// One goroutine writes segments while the next batch is analysed.
	// Batches go through the channel in passage order, so segment k holds
	// batch k.
	type written struct {
		paths []string
		err   error
	}
	batches := make(chan []index.Document, 1)
	done := make(chan written, 1)
	go func() {
		var w written
		for docs := range batches {
			if w.err == nil {
				var p string
				p, w.err = writeSegment(plugin, scratch, len(w.paths), docs)
				w.paths = append(w.paths, p)
			}
		}
		done <- w
	}()
	for start := 0; start == 0 || start < len(order); start += batchSize {
		docs := analyse(ps, order[start:min(start+batchSize, len(order))])
		for _, d := range docs {
			d.VisitFields(func(f index.Field) {
				if n := f.AnalyzedLength(); n > 0 && f.Name() != "_id" {
					fs := st.Fields[f.Name()]
					fs.Docs++
					fs.Tokens += n
					st.Fields[f.Name()] = fs
				}
			})
		}
		batches <- docs
	}
	close(batches)
	w := <-done
	if w.err != nil {
		return nil, w.err
	}
	segPaths := w.paths
	final, err := mergeSegments(plugin, scratch, segPaths)
	if err != nil {
		return nil, err
	}

	// The surrounding files, from a placeholder document.
	b, err := bleve.NewBuilder(dir, m, map[string]any{
		"buildPathPrefix":     scratch,
		"forceSegmentType":    zap.Type,
		"forceSegmentVersion": int(zap.Version),
	})
	if err != nil {
		return nil, fmt.Errorf("creating index: %w", err)
	}
	if err := b.Index("placeholder", struct{}{}); err != nil {
		b.Close()
		return nil, fmt.Errorf("creating index: %w", err)
	}
	if err := b.Close(); err != nil {
		return nil, fmt.Errorf("creating index: %w", err)
	}
	store := filepath.Join(dir, "store")
	placeholder, err := filepath.Glob(filepath.Join(store, "*.zap"))
	if err != nil || len(placeholder) != 1 {
		return nil, fmt.Errorf("creating index: want one segment in %s, found %d", store, len(placeholder))
	}
	if err := os.Rename(final, placeholder[0]); err != nil {
		return nil, err
	}
	if err := canonicalRoot(filepath.Join(store, "root.bolt"), filepath.Join(scratch, "root.bolt")); err != nil {
		return nil, fmt.Errorf("writing index: %w", err)
	}
	return st, nil
}

// analyse makes the documents of the passages ps[i] for i in batch
// (indexDocument), on as many goroutines as GOMAXPROCS allows, and returns
// them in batch order. Each document depends on its passage alone, so the
// result does not depend on the scheduling.
func analyse(ps []build.Passage, batch []int) []index.Document {
	docs := make([]index.Document, len(batch))
	parallel.For(len(batch), func(k int) { docs[k] = indexDocument(&ps[batch[k]]) })
	return docs
}

// writeSegment writes docs as the segment file number n in scratch.
func writeSegment(plugin *zap.ZapPlugin, scratch string, n int, docs []index.Document) (string, error) {
	seg, _, err := plugin.New(docs)
	if err != nil {
		return "", fmt.Errorf("building index segment: %w", err)
	}
	p := filepath.Join(scratch, fmt.Sprintf("%06d.zap", n))
	err = seg.(segment.UnpersistedSegment).Persist(p)
	seg.Close()
	if err != nil {
		return "", fmt.Errorf("writing index segment: %w", err)
	}
	return p, nil
}

// mergeMax is the number of segments merged at a time, as bleve's Builder
// does (DefaultBuilderMergeMax): it bounds the files open at once.
const mergeMax = 10

// mergeSegments merges the segment files paths into one and returns its
// path, keeping the documents in order (their numbers in the index are then
// their positions in passages.jsonl): runs of mergeMax neighbouring files
// are merged into one, level by level, until one file is left.
func mergeSegments(plugin *zap.ZapPlugin, scratch string, paths []string) (string, error) {
	n := len(paths)
	for len(paths) > 1 {
		var next []string
		for len(paths) > 0 {
			group := paths[:min(mergeMax, len(paths))]
			paths = paths[len(group):]
			if len(group) == 1 {
				next = append(next, group[0])
				continue
			}
			merged := filepath.Join(scratch, fmt.Sprintf("%06d.zap", n))
			n++
			if err := mergeGroup(plugin, group, merged); err != nil {
				return "", fmt.Errorf("merging index segments: %w", err)
			}
			next = append(next, merged)
		}
		paths = next
	}
	return paths[0], nil
}

// mergeGroup merges the segment files group, in order, into the new file
// merged and removes them.
func mergeGroup(plugin *zap.ZapPlugin, group []string, merged string) error {
	segs := make([]segment.Segment, 0, len(group))
	defer func() {
		for _, s := range segs {
			s.Close()
		}
	}()
	for _, p := range group {
		s, err := plugin.Open(p)
		if err != nil {
			return err
		}
		segs = append(segs, s)
	}
	if _, _, err := plugin.Merge(segs, make([]*roaring.Bitmap, len(segs)), merged, nil, nil); err != nil {
		return err
	}
	for _, s := range segs {
		s.Close()
	}
	segs = nil
	for _, p := range group {
		os.Remove(p)
	}
	return nil
}

func readStats(path string) (*indexStats, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	var st indexStats
	if err := json.Unmarshal(data, &st); err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	if st.Analyzer != analyzerName {
		return nil, fmt.Errorf("%s: index analysed by %q, not %q: rebuild the bundle with this kbc", path, st.Analyzer, analyzerName)
	}
	return &st, nil
}

// canonicalRoot rewrites scorch's root.bolt at path without the wall-clock
// time scorch stores in it (the snapshot's "timeStamp", used only to space
// out the snapshots a writable index keeps): it copies every bucket and key
// in key order into a fresh database at tmp, with that value set to the Unix
// epoch, and renames the copy over the original. A copy rather than an update
// in place, because bolt leaves the old value in a freed page.
func canonicalRoot(path, tmp string) error {
	src, err := bolt.Open(path, 0o600, &bolt.Options{ReadOnly: true})
	if err != nil {
		return err
	}
	defer src.Close()
	dst, err := bolt.Open(tmp, 0o600, nil)
	if err != nil {
		return err
	}
	epoch, _ := time.Unix(0, 0).UTC().MarshalText()
	err = src.View(func(stx *bolt.Tx) error {
		return dst.Update(func(dtx *bolt.Tx) error {
			return stx.ForEach(func(name []byte, b *bolt.Bucket) error {
				nb, err := dtx.CreateBucket(name)
				if err != nil {
					return err
				}
				return copyBucket(nb, b, name, epoch)
			})
		})
	})
	if cerr := dst.Close(); err == nil {
		err = cerr
	}
	if err != nil {
		return err
	}
	src.Close()
	return os.Rename(tmp, path)
}

func copyBucket(dst, src *bolt.Bucket, name, epoch []byte) error {
	return src.ForEach(func(k, v []byte) error {
		if v == nil { // a nested bucket
			nb, err := dst.CreateBucket(k)
			if err != nil {
				return err
			}
			return copyBucket(nb, src.Bucket(k), k, epoch)
		}
		if bytes.Equal(name, util.BoltMetaDataKey) && bytes.Equal(k, util.BoltMetaDataTimeStamp) {
			v = epoch
		}
		return dst.Put(k, v)
	})
}

// indexContent hashes what buildIndex puts into the index and how: the
// id and content hash of each passage of the catalog, in order, and the
// ranking parameters. Passages with equal content hashes index the same.
func indexContent(c *catalog) string {
	h := sha256.New()
	fmt.Fprintf(h, "kbc-index 3 %s %g %g %g %g %g\x00", analyzerName, bm25K1, bm25B, boostTitle, boostHeading, boostText)
	var buf []byte
	for i := range c.Entries {
		e := &c.Entries[i]
		buf = strconv.AppendInt(buf[:0], int64(len(e.ID)), 10)
		buf = append(buf, ':')
		buf = append(buf, e.ID...)
		buf = append(buf, e.Content[:]...)
		h.Write(buf)
	}
	return hex.EncodeToString(h.Sum(nil))
}

// maxUpdateShare is the largest share of passages an in-place index update
// touches; past it a fresh build is about as fast and gives the compact,
// byte-reproducible layout. Judgement, no source.
const maxUpdateShare = 0.2

// updateIndex makes the new bundle's index from the prior bundle's: a copy
// of its files (each checked against the prior manifest) in which the
// passages whose indexed content changed, or that are gone, are deleted
// and the new and changed ones added, through bleve's own batch update.
// The statistics are adjusted by analysing only those passages. It fails,
// and the caller builds the index afresh, when there is no usable prior
// index or too much changed. The files differ from a fresh build's (more
// segments, deletions); the passages, the bundle id and every score are
// the same.
func updateIndex(prior *Prior, indexDir string, ps []build.Passage, order []int, cat *catalog, content string) (*indexStats, error) {
	if prior == nil || prior.Dir == "" || prior.Manifest == nil {
		return nil, errors.New("no prior index")
	}
	var st indexStats
	data, err := os.ReadFile(filepath.Join(prior.Dir, filepath.FromSlash(StatsFile)))
	if err != nil {
		return nil, err
	}
	if err := json.Unmarshal(data, &st); err != nil {
		return nil, err
	}
	if st.Analyzer != analyzerName || st.K1 != bm25K1 || st.B != bm25B ||
		st.Boosts[fieldTitle] != boostTitle || st.Boosts[fieldHeading] != boostHeading || st.Boosts[fieldText] != boostText {
		return nil, errors.New("prior index made with other ranking settings")
	}
	old, err := prior.catalog()
	if err != nil {
		return nil, err
	}
	before := make(map[string][sha256.Size]byte, len(old.Entries))
	for _, e := range old.Entries {
		before[e.ID] = e.Content
	}
	var add []int // into ps: new or changed
	after := make(map[string][sha256.Size]byte, len(order))
	for j, i := range order {
		e := &cat.Entries[j]
		after[e.ID] = e.Content
		if k, ok := before[e.ID]; !ok || k != e.Content {
			add = append(add, i)
		}
	}
	var gone []int // into the prior catalog: removed or changed
	for i, e := range old.Entries {
		if k, ok := after[e.ID]; !ok || k != e.Content {
			gone = append(gone, i)
		}
	}
	if float64(len(add)+len(gone)) > maxUpdateShare*float64(len(order)) {
		return nil, errors.New("too many changes for an update in place")
	}
	if err := copyIndex(prior, indexDir); err != nil {
		os.RemoveAll(indexDir)
		return nil, err
	}
	fail := func(err error) (*indexStats, error) {
		os.RemoveAll(indexDir)
		return nil, err
	}
	// The caller writes the new statistics.
	if err := os.Remove(filepath.Join(indexDir, filepath.Base(StatsFile))); err != nil {
		return fail(err)
	}
	// The statistics: take out what the old passages contributed, put in
	// what the new ones do, with the same analysis the index applies.
	adjust := func(docs []index.Document, sign int) {
		for _, d := range docs {
			d.VisitFields(func(f index.Field) {
				if n := f.AnalyzedLength(); n > 0 && f.Name() != "_id" {
					fs := st.Fields[f.Name()]
					fs.Docs += sign
					fs.Tokens += sign * n
					st.Fields[f.Name()] = fs
				}
			})
		}
	}
	priorPs, err := prior.passages(gone)
	if err != nil {
		return fail(err)
	}
	all := make([]int, len(priorPs))
	for i := range all {
		all[i] = i
	}
	adjust(analyse(priorPs, all), -1)
	newDocs := analyse(ps, add)
	adjust(newDocs, +1)

	idx, err := bleve.Open(indexDir)
	if err != nil {
		return fail(err)
	}
	batch := idx.NewBatch()
	for i := range priorPs {
		batch.Delete(priorPs[i].ID)
	}
	for _, d := range newDocs {
		if err := batch.IndexAdvanced(d.(*document.Document)); err != nil {
			idx.Close()
			return fail(err)
		}
	}
	if err := idx.Batch(batch); err != nil {
		idx.Close()
		return fail(err)
	}
	if err := idx.Close(); err != nil {
		return fail(err)
	}
	st.Docs = len(order)
	st.Content = content
	return &st, nil
}
