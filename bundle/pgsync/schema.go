package pgsync

import (
	"context"
	"errors"
	"fmt"
	"strconv"
	"strings"

	"github.com/jackc/pgx/v5"
)

// SchemaVersion is the version of the tables Sync creates. A database at
// an older version is migrated, in the sync's transaction, by the steps
// after its version; one at a newer version is refused.
const SchemaVersion = 1

// migrations[i] brings a schema from version i to i+1. %[1]s is the
// schema's quoted name. Never edit a step that has shipped: add one.
var migrations = []string{
	// 0 -> 1: the tables.
	`CREATE TABLE IF NOT EXISTS %[1]s.meta (
	key   text PRIMARY KEY,
	value text NOT NULL
);

-- trail joins an array of strings with spaces. array_to_string is only
-- STABLE, and a generated column needs an IMMUTABLE expression; joining
-- text with text does not depend on any setting.
CREATE FUNCTION %[1]s.trail(text[]) RETURNS text
	LANGUAGE sql IMMUTABLE PARALLEL SAFE
	AS $$ SELECT coalesce(array_to_string($1, ' '), '') $$;

-- id, record_hash and hash come first: a sync reads them from every row,
-- and PostgreSQL then stops decoding each row after them.
CREATE TABLE %[1]s.passages (
	id             text PRIMARY KEY,
	record_hash    text NOT NULL,
	hash           text NOT NULL,
	path           text NOT NULL,
	anchor         text,
	title          text NOT NULL,
	heading        text[] NOT NULL,
	text           text NOT NULL,
	line           integer NOT NULL,
	end_line       integer NOT NULL,
	tokens         integer NOT NULL,
	split          boolean NOT NULL,
	updated        timestamptz,
	updated_source text,
	reviewed       timestamptz,
	review_by      timestamptz,
	expires        timestamptz,
	owner          text,
	audience       text,
	also_at        text[] NOT NULL,
	terms          text[] NOT NULL,
	term_anchors   text[] NOT NULL,
	tsv            tsvector GENERATED ALWAYS AS (
		setweight(to_tsvector('english'::regconfig, title), 'A') ||
		setweight(to_tsvector('english'::regconfig, %[1]s.trail(heading) || ' ' || %[1]s.trail(terms)), 'B') ||
		setweight(to_tsvector('english'::regconfig, text), 'C')
	) STORED
);
CREATE INDEX passages_tsv ON %[1]s.passages USING gin (tsv);
CREATE INDEX passages_path ON %[1]s.passages (path);
CREATE INDEX passages_hash ON %[1]s.passages (hash);

CREATE TABLE %[1]s.vectors (
	hash   text PRIMARY KEY,
	vector real[] NOT NULL
);

CREATE TABLE %[1]s.bundles (
	seq           bigint GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
	bundle_id     text NOT NULL,
	source_commit text,
	built_at      timestamptz,
	applied_at    timestamptz NOT NULL DEFAULT now(),
	mode          text NOT NULL,
	passages      integer NOT NULL,
	added         integer NOT NULL,
	changed       integer NOT NULL,
	removed       integer NOT NULL,
	embedded      integer NOT NULL
);`,
}

// ensureSchema creates the schema on first use and brings it to
// SchemaVersion; it returns the version it found (0 for a new schema). It
// runs inside the sync's transaction, after the advisory lock is taken, so
// two first syncs never race to create the tables, and a sync that fails
// leaves no half-made schema.
func ensureSchema(ctx context.Context, tx pgx.Tx, schema string) (int, error) {
	q := pgx.Identifier{schema}.Sanitize()
	if _, err := tx.Exec(ctx, "CREATE SCHEMA IF NOT EXISTS "+q); err != nil {
		return 0, fmt.Errorf("creating schema %s: %w", schema, err)
	}
	var meta *string
	if err := tx.QueryRow(ctx, "SELECT to_regclass($1)::text", q+".meta").Scan(&meta); err != nil {
		return 0, fmt.Errorf("reading schema %s: %w", schema, err)
	}
	from := 0
	if meta != nil {
		var v string
		err := tx.QueryRow(ctx, "SELECT value FROM "+q+".meta WHERE key = 'schema_version'").Scan(&v)
		if errors.Is(err, pgx.ErrNoRows) {
			return 0, fmt.Errorf("schema %s: table meta has no schema_version; it was not made by kbc", schema)
		}
		if err != nil {
			return 0, fmt.Errorf("reading schema version of %s: %w", schema, err)
		}
		if from, err = strconv.Atoi(v); err != nil {
			return 0, fmt.Errorf("schema %s: schema_version %q is not a number", schema, v)
		}
	}
	if from > SchemaVersion {
		return from, fmt.Errorf("schema %s is at version %d; this kbc knows up to %d: upgrade kbc", schema, from, SchemaVersion)
	}
	for v := from; v < SchemaVersion; v++ {
		if _, err := tx.Exec(ctx, fmt.Sprintf(migrations[v], q)); err != nil {
			return from, fmt.Errorf("migrating schema %s from version %d to %d: %w", schema, v, v+1, err)
		}
	}
	if from < SchemaVersion {
		_, err := tx.Exec(ctx, "INSERT INTO "+q+".meta (key, value) VALUES ('schema_version', $1) "+
			"ON CONFLICT (key) DO UPDATE SET value = excluded.value", strconv.Itoa(SchemaVersion))
		if err != nil {
			return from, fmt.Errorf("recording schema version of %s: %w", schema, err)
		}
	}
	return from, nil
}

// validSchema reports whether name is a schema name kbc accepts: a plain
// lower-case SQL identifier, so that the SQL a user copies from the
// README works without quoting.
func validSchema(name string) bool {
	if name == "" || len(name) > 63 || strings.HasPrefix(name, "pg_") {
		return false
	}
	for i, c := range name {
		if !(c >= 'a' && c <= 'z' || c == '_' || i > 0 && c >= '0' && c <= '9') {
			return false
		}
	}
	return true
}
