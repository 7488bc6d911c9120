package pgsync

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/jackc/pgx/v5"

	"github.com/kbc-project/kbc/bundle"
)

// benchBundles returns the bundles to benchmark: KBC_SYNC_BUNDLES (folders
// written by kbc build, comma-separated), else a synthetic one.
func benchBundles(b *testing.B) map[string]string {
	out := map[string]string{}
	if env := os.Getenv("KBC_SYNC_BUNDLES"); env != "" {
		for _, dir := range strings.Split(env, ",") {
			out[filepath.Base(dir)] = dir
		}
		return out
	}
	dir := filepath.Join(b.TempDir(), "synthetic")
	writeBundle(b, dir, handbook(5000))
	out["synthetic-5000"] = dir
	return out
}

// benchDB creates an empty database: on the server KBC_SYNC_ADMIN names
// (a connection string to a database where CREATE DATABASE may run; use
// one with fsync on for figures a production server would see), else on
// the test cluster (fsync off).
func benchDB(b *testing.B) string {
	admin := os.Getenv("KBC_SYNC_ADMIN")
	if admin == "" {
		return newDB(b)
	}
	ctx := context.Background()
	c, err := pgx.Connect(ctx, admin)
	if err != nil {
		b.Fatal(err)
	}
	defer c.Close(ctx)
	name := fmt.Sprintf("bench%d_%d", os.Getpid(), dbSeq.Add(1))
	if _, err := c.Exec(ctx, "CREATE DATABASE "+name); err != nil {
		b.Fatal(err)
	}
	b.Cleanup(func() {
		c, err := pgx.Connect(ctx, admin)
		if err == nil {
			c.Exec(ctx, "DROP DATABASE "+name+" WITH (FORCE)")
			c.Close(ctx)
		}
	})
	return admin + " dbname=" + name // a later keyword wins
}

func textHash(s string) string {
	sum := sha256.Sum256([]byte(s))
	return hex.EncodeToString(sum[:])
}

// BenchmarkSyncFirst syncs each bundle into an empty database: schema
// creation, one COPY of every passage, the tsvector column and its index.
func BenchmarkSyncFirst(b *testing.B) {
	for name, dir := range benchBundles(b) {
		b.Run(name, func(b *testing.B) {
			var rows int
			for b.Loop() {
				b.StopTimer()
				conn := benchDB(b)
				b.StartTimer()
				res, err := Sync(context.Background(), dir, conn, Options{})
				if err != nil {
					b.Fatal(err)
				}
				rows = res.Added
			}
			b.ReportMetric(float64(rows), "rows")
			b.ReportMetric(float64(rows)*float64(b.N)/b.Elapsed().Seconds(), "rows/s")
		})
	}
}

// BenchmarkSyncOnePage alternates between a bundle and a copy with one
// passage edited (each written with a delta against the other): every op
// is a one-page sync, end to end (read the bundle, connect, lock, compare,
// write, commit).
func BenchmarkSyncOnePage(b *testing.B) {
	for name, dir := range benchBundles(b) {
		b.Run(name, func(b *testing.B) {
			conn := benchDB(b)
			if _, err := Sync(context.Background(), dir, conn, Options{}); err != nil {
				b.Fatal(err)
			}
			ps, err := bundle.ReadPassages(dir)
			if err != nil {
				b.Fatal(err)
			}
			tmp := b.TempDir()
			one, back := filepath.Join(tmp, "one"), filepath.Join(tmp, "back")
			prior, _ := bundle.ReadPrior(dir)
			ch := append(ps[:0:0], ps...)
			i := len(ch) / 2
			ch[i].Text += " (edited)"
			ch[i].Hash = textHash(ch[i].Text)
			if _, err := bundle.Write(one, &bundle.Input{Passages: ch, Prior: prior}); err != nil {
				b.Fatal(err)
			}
			prior, _ = bundle.ReadPrior(one)
			if _, err := bundle.Write(back, &bundle.Input{Passages: ps, Prior: prior}); err != nil {
				b.Fatal(err)
			}
			dirs := []string{one, back}
			n := 0
			for b.Loop() {
				res, err := Sync(context.Background(), dirs[n%2], conn, Options{})
				if err != nil {
					b.Fatal(err)
				}
				if res.Changed != 1 || res.Added+res.Removed != 0 {
					b.Fatalf("one-page sync: %+v", res)
				}
				n++
			}
		})
	}
}

// BenchmarkSyncUnchanged syncs the bundle the database already holds.
func BenchmarkSyncUnchanged(b *testing.B) {
	for name, dir := range benchBundles(b) {
		b.Run(name, func(b *testing.B) {
			conn := benchDB(b)
			if _, err := Sync(context.Background(), dir, conn, Options{}); err != nil {
				b.Fatal(err)
			}
			for b.Loop() {
				res, err := Sync(context.Background(), dir, conn, Options{})
				if err != nil || res.Mode != "unchanged" {
					b.Fatal(err, res)
				}
			}
		})
	}
}

// BenchmarkCopyRows loads every passage of each bundle with COPY into a
// table with the passages table's columns but no generated tsvector and no
// index: the COPY protocol's own rate, apart from what the server spends
// on full-text vectors and indexes (BenchmarkSyncFirst has those).
func BenchmarkCopyRows(b *testing.B) {
	ctx := context.Background()
	for name, dir := range benchBundles(b) {
		b.Run(name, func(b *testing.B) {
			conn := benchDB(b)
			if _, err := Sync(ctx, dir, conn, Options{}); err != nil {
				b.Fatal(err)
			}
			src, err := readSource(dir)
			if err != nil {
				b.Fatal(err)
			}
			if err := src.readPassages(); err != nil {
				b.Fatal(err)
			}
			recs := make([]*record, len(src.records))
			for i := range src.records {
				recs[i] = &src.records[i]
				if err := recs[i].decode(src.passagesPath()); err != nil {
					b.Fatal(err)
				}
			}
			c, err := pgx.Connect(ctx, conn)
			if err != nil {
				b.Fatal(err)
			}
			defer c.Close(ctx)
			for b.Loop() {
				tx, err := c.Begin(ctx)
				if err != nil {
					b.Fatal(err)
				}
				if _, err := tx.Exec(ctx, "CREATE TABLE kbc.plain (LIKE kbc.passages)"); err != nil {
					b.Fatal(err)
				}
				if _, err := tx.Exec(ctx, "ALTER TABLE kbc.plain DROP COLUMN tsv"); err != nil {
					b.Fatal(err)
				}
				s := &syncer{tx: tx, name: "kbc", q: `"kbc"`}
				if err := s.copyInto(ctx, "plain", recs); err != nil {
					b.Fatal(err)
				}
				if err := tx.Commit(ctx); err != nil {
					b.Fatal(err)
				}
				b.StopTimer()
				c.Exec(ctx, "DROP TABLE kbc.plain")
				b.StartTimer()
			}
			b.ReportMetric(float64(len(recs))*float64(b.N)/b.Elapsed().Seconds(), "rows/s")
		})
	}
}
