package pgsync

import (
	"context"
	"errors"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"

	"github.com/kbc-project/kbc/bundle"
)

func mustSync(t testing.TB, dir, conn string, opts Options) *Result {
	t.Helper()
	res, err := Sync(context.Background(), dir, conn, opts)
	if err != nil {
		t.Fatal(err)
	}
	return res
}

// checkHolds checks that the database holds exactly the passages of the
// bundle in dir, field by field, and names it as its last bundle.
func checkHolds(t testing.TB, conn, dir string) {
	t.Helper()
	ctx := context.Background()
	c := connect(t, conn)
	ps, err := bundle.ReadPassages(dir)
	if err != nil {
		t.Fatal(err)
	}
	m, _ := bundle.ReadManifest(dir)
	var last string
	if err := c.QueryRow(ctx, "SELECT bundle_id FROM kbc.bundles ORDER BY seq DESC LIMIT 1").Scan(&last); err != nil {
		t.Fatal(err)
	}
	if last != m.BundleID {
		t.Errorf("last bundle %s, want %s", last[:12], m.BundleID[:12])
	}
	rows, err := c.Query(ctx, "SELECT id, path, coalesce(anchor, ''), heading, text, hash, updated, coalesce(owner, ''), coalesce(audience, ''), also_at, terms FROM kbc.passages ORDER BY id")
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	byID := map[string]int{}
	for i, p := range ps {
		byID[p.ID] = i
	}
	n := 0
	for rows.Next() {
		n++
		var id, path, anchor, text, hash, owner, audience string
		var heading, alsoAt, terms []string
		var updated *time.Time
		if err := rows.Scan(&id, &path, &anchor, &heading, &text, &hash, &updated, &owner, &audience, &alsoAt, &terms); err != nil {
			t.Fatal(err)
		}
		i, ok := byID[id]
		if !ok {
			t.Errorf("row %s is not in the bundle", id)
			continue
		}
		p := ps[i]
		var pTerms []string
		for _, x := range p.Terms {
			pTerms = append(pTerms, x.Text)
		}
		if path != p.Path || anchor != p.Anchor || text != p.Text || hash != p.Hash || owner != p.Owner || audience != p.Audience ||
			!slices.Equal(heading, p.Heading) || !slices.Equal(alsoAt, p.AlsoAt) || !slices.Equal(terms, pTerms) ||
			(updated == nil) != p.Updated.IsZero() || updated != nil && !updated.Equal(p.Updated) {
			t.Errorf("row %s differs from the bundle's passage", id)
		}
	}
	if n != len(ps) {
		t.Errorf("%d rows, want %d", n, len(ps))
	}
}

// rowVersions maps each passage id to its row's xmin: a row that was
// written again gets a new one.
func rowVersions(t testing.TB, conn string) map[string]string {
	t.Helper()
	c := connect(t, conn)
	rows, err := c.Query(context.Background(), "SELECT id, xmin::text FROM kbc.passages")
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	m := map[string]string{}
	for rows.Next() {
		var id, x string
		rows.Scan(&id, &x)
		m[id] = x
	}
	return m
}

// TestSyncSequence covers a bundle's life: first sync, a one-page edit, a
// date-only rebuild (empty delta), a removal, and the same bundle again.
func TestSyncSequence(t *testing.T) {
	t.Parallel()
	conn := newDB(t)
	dir := filepath.Join(t.TempDir(), "out")
	pages := handbook(12)
	pages[3].audience = "drivers"
	pages[5].alsoAt = []string{"depots/copy.md#unit-5", "depots/old.md#unit-5"}
	writeBundle(t, dir, pages)

	res := mustSync(t, dir, conn, Options{})
	if res.Mode != "first" || res.Added != 12 || res.Changed+res.Removed != 0 || !res.Migrated {
		t.Fatalf("first sync: %+v", res)
	}
	checkHolds(t, conn, dir)

	// One page edited: the delta applies; one row is rewritten.
	before := rowVersions(t, conn)
	pages[7].text = "Reefer unit 7 now keeps chilled freight between 1 and 6 degrees."
	writeBundle(t, dir, pages)
	res = mustSync(t, dir, conn, Options{})
	if res.Mode != "delta" || res.Changed != 1 || res.Added+res.Removed != 0 || res.Migrated {
		t.Fatalf("edit: %+v", res)
	}
	checkHolds(t, conn, dir)
	after := rowVersions(t, conn)
	for id, x := range after {
		if (x != before[id]) != (id == pages[7].id) {
			t.Errorf("row %s rewritten: %v", id, x != before[id])
		}
	}

	// A rebuild that only moves one page's date and owner: an empty delta,
	// a new bundle id, and the rows of that page rewritten.
	pages[0].updated = pages[0].updated.Add(48 * time.Hour)
	pages[0].owner = "fleet"
	writeBundle(t, dir, pages)
	d := readDelta(t, dir)
	if !d.Empty() {
		t.Fatalf("date-only rebuild has a delta: %+v", d)
	}
	res = mustSync(t, dir, conn, Options{})
	if res.Mode != "delta" || res.Changed != 1 {
		t.Fatalf("date-only rebuild: %+v", res)
	}
	checkHolds(t, conn, dir)

	// A page removed.
	removed := pages[11].id
	pages = pages[:11]
	writeBundle(t, dir, pages)
	res = mustSync(t, dir, conn, Options{})
	if res.Mode != "delta" || res.Removed != 1 || res.Added+res.Changed != 0 {
		t.Fatalf("removal: %+v", res)
	}
	checkHolds(t, conn, dir)
	if _, ok := rowVersions(t, conn)[removed]; ok {
		t.Error("removed passage still there")
	}

	// The same bundle again: no row changes, no bundle recorded.
	before = rowVersions(t, conn)
	res = mustSync(t, dir, conn, Options{})
	if res.Mode != "unchanged" || res.Added+res.Changed+res.Removed != 0 {
		t.Fatalf("same bundle: %+v", res)
	}
	if !maps_equal(before, rowVersions(t, conn)) {
		t.Error("a sync of the same bundle rewrote rows")
	}
	var n int
	connect(t, conn).QueryRow(context.Background(), "SELECT count(*) FROM kbc.bundles").Scan(&n)
	if n != 4 {
		t.Errorf("%d bundles recorded, want 4", n)
	}
}

func maps_equal(a, b map[string]string) bool {
	if len(a) != len(b) {
		return false
	}
	for k, v := range a {
		if b[k] != v {
			return false
		}
	}
	return true
}

func readDelta(t testing.TB, dir string) *bundle.Delta {
	t.Helper()
	src, err := readSource(dir)
	if err != nil {
		t.Fatal(err)
	}
	return src.delta
}

// TestReconcile syncs a bundle into a database that holds an unrelated
// one: rows are compared by id and record hash, and only the difference
// is written.
func TestReconcile(t *testing.T) {
	t.Parallel()
	conn := newDB(t)
	a := filepath.Join(t.TempDir(), "a")
	pages := handbook(10)
	writeBundle(t, a, pages)
	mustSync(t, a, conn, Options{})
	before := rowVersions(t, conn)

	// Another folder's bundle: 3 pages gone, 2 edited, 2 new.
	b := filepath.Join(t.TempDir(), "b")
	other := append([]page{}, pages[3:]...)
	other[0].text += " Updated."
	other[1].owner = "fleet"
	other = append(other, page{id: "new1", path: "new.md", text: "Cross-dock transfers close at 22:00."},
		page{id: "new2", path: "new.md", anchor: "late", text: "Late loads wait for the morning shift."})
	writeBundle(t, b, other)
	res := mustSync(t, b, conn, Options{})
	if res.Mode != "reconcile" || res.Added != 2 || res.Changed != 2 || res.Removed != 3 {
		t.Fatalf("reconcile: %+v", res)
	}
	checkHolds(t, conn, b)
	after := rowVersions(t, conn)
	for _, p := range pages[5:] {
		if after[p.id] != before[p.id] {
			t.Errorf("unchanged row %s was rewritten", p.id)
		}
	}
}

// TestFullText checks the generated tsvector column and the README's
// serving query: full-text search filtered by audience and freshness.
func TestFullText(t *testing.T) {
	t.Parallel()
	conn := newDB(t)
	dir := filepath.Join(t.TempDir(), "out")
	pages := handbook(1200) // over the size at which the index is built after the load
	pages[2].text = "Hazmat placards must be checked by a certified driver before departure."
	pages[2].audience = "drivers"
	pages[4].text = "Hazmat storage in the depot follows the yard plan."
	writeBundle(t, dir, pages)
	mustSync(t, dir, conn, Options{})
	c := connect(t, conn)
	search := func(audiences []string) []string {
		rows, err := c.Query(context.Background(), readmeSearch, "hazmat", audiences, time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC))
		if err != nil {
			t.Fatal(err)
		}
		defer rows.Close()
		var got []string
		for rows.Next() {
			var id, loc string
			var rank float32
			if err := rows.Scan(&id, &loc, &rank); err != nil {
				t.Fatal(err)
			}
			got = append(got, loc)
		}
		return got
	}
	if got := search(nil); !slices.Equal(got, []string{"depots/d01.md#unit-4"}) {
		t.Errorf("public search: %v", got)
	}
	if got := search([]string{"drivers"}); !slices.Equal(got, []string{"depots/d00.md#unit-2", "depots/d01.md#unit-4"}) {
		t.Errorf("drivers' search: %v", got)
	}
}

// readmeSearch is the serving query the README shows (keep them equal).
const readmeSearch = `SELECT id, path || coalesce('#' || anchor, '') AS loc,
       ts_rank(tsv, q) AS rank
FROM kbc.passages, websearch_to_tsquery('english', $1) AS q
WHERE tsv @@ q
  AND (audience IS NULL OR audience = ANY($2))
  AND (updated IS NULL OR updated >= $3)
ORDER BY rank DESC, id
LIMIT 10`

// TestConcurrent runs a second sync while a first holds the lock: without
// a wait it fails with ErrBusy; with one it runs after the first.
func TestConcurrent(t *testing.T) {
	t.Parallel()
	conn := newDB(t)
	a := filepath.Join(t.TempDir(), "a")
	writeBundle(t, a, handbook(5))
	b := filepath.Join(t.TempDir(), "b")
	writeBundle(t, b, handbook(8))
	mustSync(t, a, conn, Options{}) // the schema exists

	holding, release := make(chan struct{}), make(chan struct{})
	first := make(chan error, 1)
	go func() {
		_, err := Sync(context.Background(), a, conn, Options{beforeCommit: func() { close(holding); <-release }})
		first <- err
	}()
	<-holding
	_, err := Sync(context.Background(), b, conn, Options{})
	if !errors.Is(err, ErrBusy) || !strings.Contains(err.Error(), "--wait") {
		t.Fatalf("second sync without --wait: %v", err)
	}
	_, err = Sync(context.Background(), b, conn, Options{Wait: 200 * time.Millisecond})
	if !errors.Is(err, ErrBusy) {
		t.Fatalf("second sync with a short wait: %v", err)
	}
	second := make(chan error, 1)
	go func() {
		_, err := Sync(context.Background(), b, conn, Options{Wait: time.Minute})
		second <- err
	}()
	time.Sleep(100 * time.Millisecond)
	close(release)
	if err := <-first; err != nil {
		t.Fatal(err)
	}
	if err := <-second; err != nil {
		t.Fatal(err)
	}
	checkHolds(t, conn, b)
}

// TestConnectionDropped terminates the sync's backend from another
// session just before it commits: the sync fails, the database still
// holds the previous bundle, and running it again finishes the job.
func TestConnectionDropped(t *testing.T) {
	t.Parallel()
	conn := newDB(t)
	dir := filepath.Join(t.TempDir(), "out")
	pages := handbook(10)
	writeBundle(t, dir, pages)
	mustSync(t, dir, conn, Options{})
	old := filepath.Join(t.TempDir(), "old")
	writeBundle(t, old, pages)

	pages[1].text = "Edited before the connection drops."
	pages = pages[:8]
	writeBundle(t, dir, pages)
	other := connect(t, conn)
	kill := func() {
		var n int
		err := other.QueryRow(context.Background(), "SELECT count(pg_terminate_backend(pid)) FROM pg_stat_activity WHERE datname = current_database() AND pid <> pg_backend_pid()").Scan(&n)
		if err != nil || n != 1 {
			t.Errorf("terminating the sync's backend: %d, %v", n, err)
		}
	}
	_, err := Sync(context.Background(), dir, conn, Options{beforeCommit: kill})
	if err == nil {
		t.Fatal("a sync whose connection dropped succeeded")
	}
	t.Logf("dropped: %v", err)
	checkHolds(t, conn, old)
	res := mustSync(t, dir, conn, Options{})
	if res.Mode != "delta" || res.Changed != 1 || res.Removed != 2 {
		t.Fatalf("re-run: %+v", res)
	}
	checkHolds(t, conn, dir)
}

// TestProcessKilled kills a sync process (SIGKILL) while it waits for its
// embedding command inside the transaction.
func TestProcessKilled(t *testing.T) {
	t.Parallel()
	conn := newDB(t)
	dir := filepath.Join(t.TempDir(), "out")
	pages := handbook(6)
	writeBundle(t, dir, pages)
	mustSync(t, dir, conn, Options{})
	old := filepath.Join(t.TempDir(), "old")
	writeBundle(t, old, pages)
	pages[0].text = "Changed while the sync dies."
	writeBundle(t, dir, pages)

	log := filepath.Join(t.TempDir(), "embed.log")
	exe, _ := os.Executable()
	cmd := exec.Command(exe)
	cmd.Env = append(os.Environ(), "KBC_TEST_SYNC_CHILD="+conn, "KBC_TEST_SYNC_DIR="+dir, "KBC_TEST_SYNC_EMBED="+embedderCmd(t, "slow", log))
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	for deadline := time.Now().Add(30 * time.Second); ; time.Sleep(20 * time.Millisecond) {
		if b, _ := os.ReadFile(log); strings.Contains(string(b), "started") {
			break
		}
		if time.Now().After(deadline) {
			cmd.Process.Kill()
			t.Fatal("the child sync never reached its embedding command")
		}
	}
	cmd.Process.Kill()
	cmd.Wait()
	// The server notices the dead client's closed socket and rolls back.
	checkHolds(t, conn, old)
	res := mustSync(t, dir, conn, Options{Wait: 10 * time.Second})
	if res.Changed != 1 {
		t.Fatalf("re-run: %+v", res)
	}
	checkHolds(t, conn, dir)
}

// TestSchemaVersion refuses a schema made by a newer kbc and keeps two
// schemas of one database apart.
func TestSchemaVersion(t *testing.T) {
	t.Parallel()
	conn := newDB(t)
	dir := filepath.Join(t.TempDir(), "out")
	writeBundle(t, dir, handbook(3))
	mustSync(t, dir, conn, Options{Schema: "docs_a"})
	if res := mustSync(t, dir, conn, Options{Schema: "docs_b"}); res.Mode != "first" {
		t.Errorf("second schema: %+v", res)
	}
	c := connect(t, conn)
	if _, err := c.Exec(context.Background(), "UPDATE docs_a.meta SET value = '99' WHERE key = 'schema_version'"); err != nil {
		t.Fatal(err)
	}
	_, err := Sync(context.Background(), dir, conn, Options{Schema: "docs_a"})
	if err == nil || !strings.Contains(err.Error(), "version 99") {
		t.Errorf("newer schema: %v", err)
	}
	if _, err := Sync(context.Background(), dir, conn, Options{Schema: "Bad-Name"}); err == nil {
		t.Error("a bad schema name was taken")
	}
}

// TestNoPasswordInErrors checks that a failing sync's message does not
// hold the connection string's password.
func TestNoPasswordInErrors(t *testing.T) {
	t.Parallel()
	needServer(t)
	dir := filepath.Join(t.TempDir(), "out")
	writeBundle(t, dir, handbook(2))
	const secret = "s3cret-pg-pass"
	for _, conn := range []string{
		"postgres://" + cluster.user + ":" + secret + "@/nodb_" + secret + "?host=" + cluster.sock,
		connString("nodb_"+secret) + " password=" + secret,
		"postgres://u:" + secret + "@127.0.0.1:1/x?connect_timeout=2&sslmode=disable",
	} {
		_, err := Sync(context.Background(), dir, conn, Options{})
		if err == nil {
			t.Fatalf("sync to %s succeeded", conn)
		}
		if strings.Contains(err.Error(), secret) {
			t.Errorf("password in error: %v", err)
		}
	}
}
