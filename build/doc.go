// Package build turns the documents of a source folder into passages,
// with the reports about them. It is the pipeline between sources (which
// reads files) and bundle (which writes the bundle folder).
//
// Run is the whole pipeline, as named stages in order:
//
//   - read (readStage): each file is read, parsed and normalised
//     (Normalize: NFC, white space; code verbatim), credentials are
//     replaced by markers and text addressing an assistant is flagged, on
//     several goroutines; a file unchanged since the last build comes
//     from the Cache instead;
//   - date (dateStage): each document's freshness from its front matter,
//     the git history (read once for the tree, in the background during
//     the read stage) or its file time, under the freshness policy (see
//     package build/fresh);
//   - boilerplate (boilerplateStage): blocks repeated across many pages
//     (site chrome) are counted by their keys and dropped;
//   - split (splitStage): each document is split along its headings into
//     passages within the token budget (Split, with the BPE Tokenizer),
//     on several goroutines, and each passage gets its document's dates
//     and owner;
//   - fold (foldStage): exact and near copies are folded into one
//     canonical passage (package build/dedupe), and copies that differ in
//     figures are reported as divergent.
//
// Run returns a Result: the passages in passage order (SortPassages), the
// reports' data (staleness, duplicates, boilerplate, secrets, hidden
// text), the problems with their path:line, and counts. Bad input never
// stops it.
//
// The package also holds the configuration file (Config, FindConfig,
// LoadConfigFile: kbc.toml), the quality checks (Checks, Limit and their
// Evaluate) and the inputs digest of the up-to-date check (InputsDigest,
// Racy). Everything here is computed in memory except the build cache:
// Cache keeps each document's parse and passages by content hash, and
// Cache.Save writes it into the folder its caller names (kbc keeps it
// beside the bundle). Package bundle/compile drives Run with the cache,
// the up-to-date check and the bundle writer.
package build
