package pgsync

import (
	"context"
	"errors"
	"fmt"
	"hash/fnv"
	"slices"
	"strings"
	"time"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"

	"github.com/kbc-project/kbc/bundle/store"
)

// DefaultSchema is the schema Sync writes to when Options.Schema is empty.
const DefaultSchema = "kbc"

// ErrBusy is returned, wrapped, when another sync of the same schema holds
// the lock and Options.Wait has passed (or is zero).
var ErrBusy = errors.New("another kbc sync of this schema is running")

// Options tune a Sync. The zero value syncs into schema "kbc", fails at
// once when another sync is running, and embeds nothing.
type Options struct {
	// Schema is the PostgreSQL schema of the tables; DefaultSchema when
	// empty. It must be a lower-case SQL identifier.
	Schema string
	// Wait is how long to wait for another sync of the same schema to
	// finish; zero fails at once with ErrBusy.
	Wait time.Duration
	// EmbedCmd, when set, is a shell command that turns passages into
	// vectors (see the package documentation for its protocol).
	EmbedCmd string
	// EmbedBatch is the number of passages per run of EmbedCmd;
	// DefaultEmbedBatch when zero.
	EmbedBatch int
	// EmbedTimeout bounds one run of EmbedCmd; DefaultEmbedTimeout when
	// zero.
	EmbedTimeout time.Duration

	// beforeCommit, in tests, runs just before the transaction commits.
	beforeCommit func()
}

// Result says what a Sync did. It marshals to the JSON that kbc sync
// --json prints.
type Result struct {
	Database string `json:"database"` // user, host, port and database; never the password
	Schema   string `json:"schema"`
	BundleID string `json:"bundle_id"`
	Previous string `json:"previous,omitempty"` // the bundle the database held before; empty for a first sync
	// Mode is "first" (an empty database), "delta" (the database held
	// the bundle that the bundle's delta.json was made against, and the
	// delta agreed with it), "reconcile" (any other bundle: rows compared
	// by id and record hash) or "unchanged" (the database already held
	// this bundle, row for row; no row was written).
	Mode     string        `json:"mode"`
	Passages int           `json:"passages"` // passages in the bundle
	Added    int           `json:"added"`    // rows inserted
	Changed  int           `json:"changed"`  // rows rewritten: some field differed
	Removed  int           `json:"removed"`  // rows deleted
	Embedded int           `json:"embedded"` // passages sent to the embedding command
	Vectors  int           `json:"vectors"`  // with an embedding command: passages of the bundle that have a vector after the sync
	Migrated bool          `json:"migrated"` // the tables were created or migrated
	Elapsed  time.Duration `json:"-"`
}

// Sync brings the database that conn names to exactly the passages of the
// bundle in dir, in one transaction. conn is a postgres:// URL or a libpq
// keyword/value string; an empty conn takes everything from the PG*
// variables and the service file, as libpq does. TLS follows libpq's
// sslmode (pgx's default is "prefer").
//
// Sync is safe to run from several processes at once: an advisory lock
// keyed on the schema serialises them (see Options.Wait).
func Sync(ctx context.Context, dir, conn string, opts Options) (*Result, error) {
	start := time.Now()
	red := store.NewRedactor(conn)
	res, err := syncBundle(ctx, dir, conn, opts, red)
	if res != nil {
		res.Elapsed = time.Since(start)
	}
	return res, red.Wrap(err)
}

func syncBundle(ctx context.Context, dir, conn string, opts Options, red store.Redactor) (*Result, error) {
	schema := opts.Schema
	if schema == "" {
		schema = DefaultSchema
	}
	if !validSchema(schema) {
		return nil, fmt.Errorf("schema %q: want a lower-case SQL name (letters, digits, _), not starting with pg_", schema)
	}
	var em *embedder
	if opts.EmbedCmd != "" {
		em = &embedder{cmd: opts.EmbedCmd, batch: opts.EmbedBatch, timeout: opts.EmbedTimeout}
		if em.batch <= 0 {
			em.batch = DefaultEmbedBatch
		}
		if em.timeout <= 0 {
			em.timeout = DefaultEmbedTimeout
		}
	}
	src, err := readSource(dir)
	if err != nil {
		return nil, err
	}
	cfg, err := pgx.ParseConfig(conn)
	if err != nil {
		return nil, fmt.Errorf("connection string: %w", err)
	}
	res := &Result{Database: describe(cfg, conn, red), Schema: schema, BundleID: src.manifest.BundleID, Passages: src.manifest.Counts["passages"]}
	db, err := pgx.ConnectConfig(ctx, cfg)
	if err != nil {
		// pgx lists each address it tried on a line of its own; a
		// kbc message stays on one line.
		lines := strings.Split(err.Error(), "\n")
		for i := range lines {
			lines[i] = strings.TrimSpace(lines[i])
		}
		msg := lines[0]
		if len(lines) > 1 {
			msg += " " + strings.Join(lines[1:], "; ")
		}
		return nil, fmt.Errorf("connecting to %s: %s", res.Database, msg)
	}
	defer db.Close(context.Background())

	tx, err := db.Begin(ctx)
	if err != nil {
		return nil, err
	}
	defer tx.Rollback(context.Background()) // after Commit, a no-op
	if err := lock(ctx, tx, schema, opts.Wait); err != nil {
		return nil, err
	}
	from, err := ensureSchema(ctx, tx, schema)
	if err != nil {
		return nil, err
	}
	res.Migrated = from < SchemaVersion
	s := &syncer{tx: tx, name: schema, q: pgx.Identifier{schema}.Sanitize(), src: src, res: res}
	if err := s.apply(ctx, em); err != nil {
		return nil, err
	}
	if opts.beforeCommit != nil {
		opts.beforeCommit()
	}
	if err := tx.Commit(ctx); err != nil {
		return nil, fmt.Errorf("committing: %w", err)
	}
	return res, nil
}

// describe names the database for messages: user, host, port and
// database, never the password.
func describe(cfg *pgx.ConnConfig, conn string, red store.Redactor) string {
	db := cfg.Database
	if db == "" {
		db = cfg.User // the server's default, as in libpq
	}
	host := cfg.Host
	if len(host) > 0 && host[0] == '/' {
		host = "socket " + host
	}
	return red.Text(fmt.Sprintf("database %s on %s:%d as %s", db, host, cfg.Port, cfg.User))
}

// lock takes the advisory lock of schema for the transaction; it is
// released at commit or rollback, and by the server when the connection
// drops, so a killed sync never leaves it held.
func lock(ctx context.Context, tx pgx.Tx, schema string, wait time.Duration) error {
	h := fnv.New64a()
	h.Write([]byte("kbc sync " + schema))
	key := int64(h.Sum64())
	if wait <= 0 {
		var ok bool
		if err := tx.QueryRow(ctx, "SELECT pg_try_advisory_xact_lock($1)", key).Scan(&ok); err != nil {
			return fmt.Errorf("taking the sync lock: %w", err)
		}
		if !ok {
			return fmt.Errorf("%w (schema %s); try again, or pass --wait to wait for it", ErrBusy, schema)
		}
		return nil
	}
	if _, err := tx.Exec(ctx, fmt.Sprintf("SET LOCAL lock_timeout = %d", wait.Milliseconds())); err != nil {
		return err
	}
	_, err := tx.Exec(ctx, "SELECT pg_advisory_xact_lock($1)", key)
	var pgErr *pgconn.PgError
	if errors.As(err, &pgErr) && pgErr.Code == "55P03" { // lock_not_available
		return fmt.Errorf("%w (schema %s); waited %s", ErrBusy, schema, wait)
	}
	if err != nil {
		return fmt.Errorf("taking the sync lock: %w", err)
	}
	_, err = tx.Exec(ctx, "SET LOCAL lock_timeout = 0")
	return err
}

// syncer writes one bundle in one transaction.
type syncer struct {
	tx   pgx.Tx
	name string // the schema
	q    string // the schema, quoted
	src  *source
	res  *Result
}

func (s *syncer) apply(ctx context.Context, em *embedder) error {
	var prev *string
	err := s.tx.QueryRow(ctx, "SELECT bundle_id FROM "+s.q+".bundles ORDER BY seq DESC LIMIT 1").Scan(&prev)
	if err != nil && !errors.Is(err, pgx.ErrNoRows) {
		return fmt.Errorf("reading the last bundle: %w", err)
	}
	if prev != nil {
		s.res.Previous = *prev
	}
	if s.res.Previous == s.res.BundleID && em == nil {
		// Every sync commits whole or not at all, so the rows are
		// this bundle's: nothing to read or write.
		s.res.Mode = "unchanged"
		return nil
	}
	if err := s.src.readPassages(); err != nil {
		return err
	}
	s.res.Passages = len(s.src.records)

	// What the database holds: every row's id and record hash.
	have := make(map[string]string)
	rows, _ := s.tx.Query(ctx, "SELECT id, record_hash FROM "+s.q+".passages")
	var id, h string
	_, err = pgx.ForEachRow(rows, []any{&id, &h}, func() error {
		have[id] = h
		return nil
	})
	if err != nil {
		return fmt.Errorf("reading passage hashes: %w", err)
	}

	// The difference, by id and record hash.
	var write []*record
	var removed []string
	inBundle := make(map[string]bool, len(s.src.records))
	for i := range s.src.records {
		r := &s.src.records[i]
		inBundle[r.id] = true
		old, ok := have[r.id]
		switch {
		case !ok:
			write = append(write, r)
			s.res.Added++
		case old != r.hash:
			write = append(write, r)
			s.res.Changed++
		}
	}
	for id := range have {
		if !inBundle[id] {
			removed = append(removed, id)
		}
	}
	slices.Sort(removed)
	s.res.Removed = len(removed)
	s.res.Mode = s.mode(have, inBundle)
	for _, r := range write {
		if err := r.decode(s.src.passagesPath()); err != nil {
			return err
		}
	}

	// Vectors first: a failing command stops the sync before any row is
	// written (and the rollback would undo them anyway).
	if err := s.embed(ctx, em); err != nil {
		return err
	}
	if s.res.Mode == "unchanged" {
		return nil
	}

	// Rows: delete what goes or changes, then COPY what comes.
	var del []string
	for _, r := range write {
		if _, ok := have[r.id]; ok {
			del = append(del, r.id)
		}
	}
	del = append(del, removed...)
	if len(del) > 0 {
		if _, err := s.tx.Exec(ctx, "DELETE FROM "+s.q+".passages WHERE id = ANY($1)", del); err != nil {
			return fmt.Errorf("deleting %d rows: %w", len(del), err)
		}
	}
	// Into an empty table, the full-text index is built once after the
	// load rather than entry by entry during it (PostgreSQL manual, 14.4.3
	// "Remove Indexes"); no reader sees the table without it, as the
	// index commits with the rows.
	rebuild := len(have) == 0 && len(write) > 1000
	if rebuild {
		if _, err := s.tx.Exec(ctx, "DROP INDEX "+s.q+".passages_tsv"); err != nil {
			return fmt.Errorf("dropping the full-text index for the load: %w", err)
		}
	}
	if err := s.copyPassages(ctx, write); err != nil {
		return err
	}
	if rebuild {
		if _, err := s.tx.Exec(ctx, "SET LOCAL maintenance_work_mem = '256MB'"); err != nil {
			return err
		}
		if _, err := s.tx.Exec(ctx, "CREATE INDEX passages_tsv ON "+s.q+".passages USING gin (tsv)"); err != nil {
			return fmt.Errorf("building the full-text index: %w", err)
		}
	}
	if len(del) > 0 {
		// Forget vectors no passage uses any more.
		if _, err := s.tx.Exec(ctx, "DELETE FROM "+s.q+".vectors v WHERE NOT EXISTS (SELECT 1 FROM "+s.q+".passages p WHERE p.hash = v.hash)"); err != nil {
			return fmt.Errorf("pruning vectors: %w", err)
		}
	}
	m := s.src.manifest
	var builtAt *time.Time
	if !m.BuiltAt.IsZero() {
		builtAt = &m.BuiltAt
	}
	_, err = s.tx.Exec(ctx, "INSERT INTO "+s.q+".bundles (bundle_id, source_commit, built_at, mode, passages, added, changed, removed, embedded) "+
		"VALUES ($1, nullif($2, ''), $3, $4, $5, $6, $7, $8, $9)",
		m.BundleID, m.SourceCommit, builtAt, s.res.Mode, s.res.Passages, s.res.Added, s.res.Changed, s.res.Removed, s.res.Embedded)
	if err != nil {
		return fmt.Errorf("recording the bundle: %w", err)
	}
	return nil
}

// mode names how the database was brought to the bundle. The rows
// written are the same either way (those whose record hash differs: the
// delta lists text changes only, and a rebuild that only moves a page's
// date changes records the delta does not list); "delta" says that the
// bundle's delta.json was made against the database's bundle and agrees
// with what the database holds.
func (s *syncer) mode(have map[string]string, inBundle map[string]bool) string {
	r := s.res
	switch {
	case len(have) == 0 && r.Previous == "":
		return "first"
	case r.Previous == r.BundleID && r.Added+r.Changed+r.Removed == 0:
		return "unchanged"
	}
	d := s.src.delta
	if d == nil || d.From == "" || d.From != r.Previous {
		return "reconcile"
	}
	for _, id := range d.Added {
		if _, ok := have[id]; ok || !inBundle[id] {
			return "reconcile"
		}
	}
	for _, c := range d.Changed {
		if _, ok := have[c.ID]; !ok || !inBundle[c.ID] {
			return "reconcile"
		}
	}
	for _, id := range d.Removed {
		if _, ok := have[id]; !ok || inBundle[id] {
			return "reconcile"
		}
	}
	if r.Added != len(d.Added) || r.Removed != len(d.Removed) {
		return "reconcile"
	}
	return "delta"
}

// copyPassages loads recs with the COPY protocol.
func (s *syncer) copyPassages(ctx context.Context, recs []*record) error {
	return s.copyInto(ctx, "passages", recs)
}

// copyInto loads recs into table, which has the passages table's columns.
func (s *syncer) copyInto(ctx context.Context, table string, recs []*record) error {
	if len(recs) == 0 {
		return nil
	}
	cols := []string{"id", "path", "anchor", "title", "heading", "text", "line", "end_line", "tokens", "hash", "split",
		"updated", "updated_source", "reviewed", "review_by", "expires", "owner", "audience", "also_at", "terms", "term_anchors", "record_hash"}
	n, err := s.tx.CopyFrom(ctx, pgx.Identifier{s.name, table}, cols, pgx.CopyFromSlice(len(recs), func(i int) ([]any, error) {
		r := recs[i]
		p := r.p
		terms, anchors := make([]string, len(p.Terms)), make([]string, len(p.Terms))
		for j, t := range p.Terms {
			terms[j], anchors[j] = t.Text, t.Anchor
		}
		return []any{p.ID, p.Path, null(p.Anchor), p.Title, nonNil(p.Heading), p.Text, p.Line, p.EndLine, p.Tokens, p.Hash, p.Split,
			timeOrNil(p.Updated), null(p.UpdatedSource), p.Reviewed, timeOrNil(p.ReviewBy), p.Expires, null(p.Owner), null(p.Audience),
			nonNil(p.AlsoAt), terms, anchors, r.hash}, nil
	}))
	if err != nil {
		return fmt.Errorf("copying %d passages: %w", len(recs), err)
	}
	if int(n) != len(recs) {
		return fmt.Errorf("copying passages: the server took %d of %d", n, len(recs))
	}
	return nil
}

// embed sends the passages whose text has no vector yet to em and stores
// what comes back, keyed by text hash; a vector is reused by every
// passage with the same text, whatever its id.
func (s *syncer) embed(ctx context.Context, em *embedder) error {
	if em == nil {
		return nil
	}
	var hashes []string
	seen := make(map[string]bool)
	for _, r := range s.src.records {
		if !seen[r.textHash] {
			seen[r.textHash] = true
			hashes = append(hashes, r.textHash)
		}
	}
	stored := make(map[string]bool)
	rows, _ := s.tx.Query(ctx, "SELECT hash FROM "+s.q+".vectors WHERE hash = ANY($1)", hashes)
	var h string
	if _, err := pgx.ForEachRow(rows, []any{&h}, func() error { stored[h] = true; return nil }); err != nil {
		return fmt.Errorf("reading stored vectors: %w", err)
	}
	count := func() {
		for _, r := range s.src.records {
			if stored[r.textHash] {
				s.res.Vectors++
			}
		}
	}
	var need []*record
	queued := make(map[string]bool)
	for i := range s.src.records {
		r := &s.src.records[i]
		if !stored[r.textHash] && !queued[r.textHash] {
			queued[r.textHash] = true
			if err := r.decode(s.src.passagesPath()); err != nil {
				return err
			}
			need = append(need, r)
		}
	}
	if len(need) == 0 {
		count()
		return nil
	}
	var dim string
	err := s.tx.QueryRow(ctx, "SELECT value FROM "+s.q+".meta WHERE key = 'dimension'").Scan(&dim)
	if err != nil && !errors.Is(err, pgx.ErrNoRows) {
		return fmt.Errorf("reading the vector dimension: %w", err)
	}
	fmt.Sscan(dim, &em.dim)
	known := em.dim
	var hs []string
	var vs [][]float32
	if err := em.run(ctx, need, func(hash string, v []float32) error {
		hs, vs = append(hs, hash), append(vs, v)
		return nil
	}); err != nil {
		return err
	}
	if known == 0 {
		if _, err := s.tx.Exec(ctx, "INSERT INTO "+s.q+".meta (key, value) VALUES ('dimension', $1) ON CONFLICT (key) DO UPDATE SET value = excluded.value", fmt.Sprint(em.dim)); err != nil {
			return err
		}
	}
	_, err = s.tx.CopyFrom(ctx, pgx.Identifier{s.name, "vectors"}, []string{"hash", "vector"}, pgx.CopyFromSlice(len(hs), func(i int) ([]any, error) {
		return []any{hs[i], vs[i]}, nil
	}))
	if err != nil {
		return fmt.Errorf("copying %d vectors: %w", len(hs), err)
	}
	s.res.Embedded = len(need)
	for _, h := range hs {
		stored[h] = true
	}
	count()
	return nil
}

func null(s string) *string {
	if s == "" {
		return nil
	}
	return &s
}

func timeOrNil(t time.Time) *time.Time {
	if t.IsZero() {
		return nil
	}
	return &t
}

func nonNil(ss []string) []string {
	if ss == nil {
		return []string{}
	}
	return ss
}
