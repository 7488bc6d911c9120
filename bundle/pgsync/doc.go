// Package pgsync keeps a PostgreSQL database in step with a bundle: after
// [Sync], the schema's passages table holds exactly the bundle's passages,
// with a full-text column to search them and, when an embedding command is
// given, a vector for every passage's text.
//
// # Tables
//
// Sync creates the schema (Options.Schema, "kbc" by default) on first use
// and migrates it by [SchemaVersion] on later ones:
//
//   - passages: one row per passage, every field of passages.jsonl (id as
//     primary key; heading, also_at as text[]; dates as timestamptz; empty
//     anchor, owner and audience as NULL; terms as two parallel arrays,
//     terms and term_anchors), record_hash (the SHA-256 of the passage's
//     line in passages.jsonl), and tsv, a generated tsvector over title
//     (weight A), heading trail and terms (B) and text (C) with a GIN index.
//   - vectors: hash (a passage's text hash) and vector (real[]). Passages
//     with the same text share one vector: join on hash.
//   - bundles: one row per applied bundle: bundle_id, source_commit,
//     built_at, applied_at, mode and the counts.
//   - meta: schema_version, and dimension once vectors are stored.
//
// # One transaction
//
// A sync runs in one transaction: readers see the old bundle until it
// commits and the new one after, never a mix. A sync that fails or is
// killed at any point (the connection dropped, the process killed, the
// embedding command failing) is rolled back by the server, and running it
// again finishes the job. Syncs of one schema are serialised by an
// advisory transaction lock, which the server drops with the connection.
//
// Sync reads every row's id and record hash and writes only rows whose
// hash differs: deletes, then one COPY of what is new or changed. When
// the database holds the bundle that the bundle's delta.json was made
// against, and the delta agrees with the rows, the result says "delta";
// otherwise "reconcile". Record hashes, not the delta, choose the rows,
// because the delta lists text changes only: a rebuild that merely moves
// a page's date has an empty delta but new rows. A sync of the bundle the
// database already holds writes nothing and says "unchanged".
//
// # Embedding command
//
// With Options.EmbedCmd, Sync runs that command (through sh -c) once per
// batch of Options.EmbedBatch passages whose text has no stored vector.
// It writes one JSON object per line to the command's standard input,
//
//	{"id": "...", "hash": "...", "text": "...", "title": "...", "heading": ["..."]}
//
// closes it, and reads one line per passage back, in any order:
//
//	{"id": "...", "vector": [0.12, -0.5, ...]}
//
// The first vector fixes the dimension (kept in meta); every other vector
// must match it. Vectors are keyed by the text hash, so a passage whose
// text did not change is never sent again, whatever else changed and even
// when its id did. A command that exits non-zero, writes bad JSON, leaves
// out or repeats a passage, changes dimension or runs past
// Options.EmbedTimeout (its process group is killed) fails the sync with
// an [EmbedError] naming the passages by path#anchor, and nothing is
// stored.
//
// # Connections and secrets
//
// The connection string is a postgres:// URL or a libpq keyword/value
// string; an empty one is taken from the PG* variables and the service
// file, as libpq does; sslmode and the other TLS settings follow libpq.
// Its password never appears in a message: errors pass through the
// stores' redactor ([store.Redactor]).
package pgsync
