// Package bundle writes, reads, verifies and searches kbc bundles: the
// folder a build leaves for a retriever to load.
//
// # Layout
//
// A bundle of format 1 is a folder holding:
//
//	manifest.json          what the bundle is: see Manifest
//	passages.jsonl         one build.Passage per line, compact JSON, sorted by path, line, id
//	passages.schema.json   JSON Schema (draft 2020-12) of one line of passages.jsonl
//	index/                 bleve v2.6.3 index (scorch, zap segment format 15) of the passages
//	index/stats.json       field statistics and parameters for BM25 (see Bundle.Search)
//	...                    extra files the caller adds (reports), as given
//
// The reports a build adds are rendered by ReportFiles: each in JSON and
// Markdown under reports/, and reports/index.html (RenderReportsPage), one
// self-contained page for people with the chart of bundle/agechart.
//
// manifest.json has sorted keys, two-space indentation and a final newline.
// It lists every other file with the SHA-256 of its bytes, so Verify can tell
// a bundle that is complete and unchanged. The bundle id is the SHA-256 of
// passages.jsonl's bytes: it names the content a retriever serves, so two
// builds that yield the same passages share an id even if, say, their build
// time or reports differ.
//
// # Reproducible
//
// The same Input gives the same bytes in every file, index included, and so
// the same manifest.json, as long as the versions of bleve and zapx stay
// (go.mod pins them; testdata/toy-manifest.golden.json pins the bytes).
// Leave Input.BuiltAt zero, or pass the SOURCE_DATE_EPOCH time, to keep it
// so. That took three things, each
// explained where it is done: the index is built from segments made in
// passage order rather than through bleve's batches (whose documents sit in
// a Go map); it uses zap segment format 15, as formats 16 and 17 write their
// sections in Go map order; and the build time scorch writes into root.bolt
// is replaced by a fixed one.
//
// # Ranking
//
// Bundle.Search ranks by BM25F as published (field frequencies weighted and
// summed before one saturation, one IDF per term); its doc comment gives
// the formula. The term weight has
// no (k1 + 1) in its numerator, as in Robertson and Zaragoza's text and in
// Lucene since version 8 (both from memory); the many write-ups that carry
// it multiply every score by 2.2, which changes no ranking. bleve v2.6.3 can
// score BM25 itself (an index mapping's ScoringModel "bm25"), but its
// scores differ from the published formula in four ways, found in its source:
//
//   - the average field length is ceil(C/N), where C is the number of
//     distinct terms in the field's dictionary (summed over segments) and N
//     the number of documents (search/searcher/search_term.go,
//     bm25ScoreMetrics): a vocabulary size, not a token count, so it is far
//     below the true average, long passages are punished much harder than
//     b = 0.75 intends, and the value changes with segmentation;
//   - the term frequency enters as √tf (search/scorer/scorer_term.go);
//   - a disjunction (a multi-term or multi-field query) multiplies each
//     term's score by boost·idf·queryNorm, which squares the IDF
//     (TermQueryScorer.SetQueryNorm), and the sum by the share of clauses
//     that matched (scorer_disjunction.go, coord);
//   - the numerator carries a factor k1 (a constant, harmless for ranking).
//
// Passing collection statistics in the search context (search.BM25StatsKey,
// a search.BM25Stats with DocCount and FieldCardinality) fixes only the
// first point and only to an integer average length. So Search takes from
// bleve what an index is for, each term's postings with term frequencies
// and field lengths, and does the arithmetic itself, with the true average
// field lengths counted at build time (index/stats.json). The field length
// bleve reports is float32(1/√len); Search rounds 1/norm² back to the exact
// length (see fieldLength), so its scores equal the formula to rounding
// error: TestBM25HandComputed checks them against a table computed by hand
// (to its 9 decimals), TestBM25Oracle against a plain implementation of the
// formula on a generated corpus (to 1e-12 relative). The analysis is ours
// too (kbcAnalyzer, built from bleve's parts): the index mapping names
// bleve's "en" analyzer only for tools that open index/ with bleve.
//
// # Writing atomically
//
// Write builds the bundle in a temporary folder beside the target, flushes
// every file and folder, and then swaps it into place in one step (on Linux)
// or two renames (elsewhere); see Write.
package bundle
