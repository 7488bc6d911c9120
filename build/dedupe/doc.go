// Package dedupe finds exact and near-duplicate passages: identical
// normalised texts by hash, near duplicates by MinHash over word shingles
// with LSH banding, every candidate verified by the exact Jaccard
// similarity of its shingle sets. It knows nothing of where passages come
// from: Find takes a count and a function returning each text, so callers
// can generate texts lazily, and returns clusters of indexes; choosing the
// canonical passage of a cluster is the caller's job. Divergent tells
// whether two near duplicates differ in facts (numbers, versions, dates,
// units), which decides whether one can stand for the other.
//
// # Choices
//
// Signatures use one-permutation hashing with optimal densification rather
// than one hash function per value: it costs one hash per shingle instead
// of Hashes (on this project's hardware about 8 times faster for 128
// values), its estimate is unbiased like classic MinHash, and its variance
// is lower for passage-sized sets of 64 or more shingles (about 0.8 times)
// and somewhat higher for shorter ones (1.1 to 1.4 times); the tests check
// the estimate against exact Jaccard and against an independent-permutation
// MinHash library.
// Only the band keys of a signature are kept (Bands per passage), not the
// signature.
//
// Find and Divergent are safe to call from several goroutines at once.
package dedupe
