// Package sources finds and reads the documents of a source folder: the
// first stage of kbc, which knows nothing of passages, tokens or indexes.
//
// OpenDir opens a source folder as a Dir, an fs.FS through which nothing
// outside the folder can be read, whatever its symbolic links say. Walk
// lists the source files under the root of an fs.FS in path order
// (hidden files and folders skipped, include and exclude globs, symbolic
// links followed only while they stay inside, a size limit), and
// ReadFile reads one of them within that limit.
//
// Parse turns the bytes of one file into a Document: Markdown (CommonMark
// with GFM tables), MDX (its JSX and expressions stripped, every byte
// kept in place) or HTML (the main content chosen, navigation, chrome and
// hidden elements dropped), with its front matter (YAML, TOML or JSON),
// title, headings, anchors and blocks of text. Every block and heading
// keeps its byte offsets in the original file, front matter included, so
// that a passage can name the lines it came from.
//
// Bad input is never fatal to the caller: each problem is an *Error that
// names the file and, where known, the line ("path:line: message"), and
// Walk goes on with the rest of the tree. Limits on hostile input (sizes,
// nesting depth) are in limits.go. Parse recovers from a parser panic on
// odd input and reports it as an *Error for that file only.
//
// Nothing in this package writes to disk.
package sources
