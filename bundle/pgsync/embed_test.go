package pgsync

import (
	"context"
	"errors"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"
)

// embedLog returns the ids the fake embedder was sent since the last call.
func embedLog(t testing.TB, path string) []string {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil && !os.IsNotExist(err) {
		t.Fatal(err)
	}
	os.Remove(path)
	ids := strings.Fields(string(b))
	slices.Sort(ids)
	return ids
}

// TestEmbed checks that only passages whose text has no vector yet are
// sent: all on the first sync; the edited one after an edit; none after a
// date-only rebuild or a reconcile onto the same texts under new ids.
func TestEmbed(t *testing.T) {
	t.Parallel()
	conn := newDB(t)
	dir := filepath.Join(t.TempDir(), "out")
	log := filepath.Join(t.TempDir(), "embed.log")
	opts := Options{EmbedCmd: embedderCmd(t, "ok", log), EmbedBatch: 4}
	pages := handbook(10)
	pages[9].text = pages[8].text // same text, one vector
	writeBundle(t, dir, pages)
	res := mustSync(t, dir, conn, opts)
	if got := embedLog(t, log); len(got) != 9 || res.Embedded != 9 || res.Vectors != 10 {
		t.Fatalf("first sync embedded %v (%+v)", got, res)
	}
	checkVectors(t, conn)

	pages[2].text = "Reefer unit 2 was retired in March."
	writeBundle(t, dir, pages)
	res = mustSync(t, dir, conn, opts)
	if got := embedLog(t, log); !slices.Equal(got, []string{pages[2].id}) || res.Embedded != 1 {
		t.Fatalf("edit embedded %v (%+v)", got, res)
	}

	pages[4].updated = pages[4].updated.Add(time.Hour)
	pages[4].audience = "drivers"
	writeBundle(t, dir, pages)
	res = mustSync(t, dir, conn, opts)
	if got := embedLog(t, log); len(got) != 0 || res.Changed != 1 {
		t.Fatalf("date-only rebuild embedded %v (%+v)", got, res)
	}

	// Same texts under new ids, from another folder: a full reconcile.
	other := filepath.Join(t.TempDir(), "other")
	moved := slices.Clone(pages)
	for i := range moved {
		moved[i].id = "moved-" + moved[i].id
	}
	writeBundle(t, other, moved)
	res = mustSync(t, other, conn, opts)
	if got := embedLog(t, log); len(got) != 0 || res.Mode != "reconcile" || res.Added != 10 || res.Removed != 10 || res.Vectors != 10 {
		t.Fatalf("reconcile embedded %v (%+v)", got, res)
	}
	checkVectors(t, conn)
	var stale int
	connect(t, conn).QueryRow(context.Background(), "SELECT count(*) FROM kbc.vectors v WHERE NOT EXISTS (SELECT 1 FROM kbc.passages p WHERE p.hash = v.hash)").Scan(&stale)
	if stale != 0 {
		t.Errorf("%d vectors of texts no passage has", stale)
	}
}

// checkVectors checks every passage's vector against the fake embedder's.
func checkVectors(t testing.TB, conn string) {
	t.Helper()
	rows, err := connect(t, conn).Query(context.Background(), "SELECT p.text, v.vector FROM kbc.passages p JOIN kbc.vectors v USING (hash)")
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	for rows.Next() {
		var text string
		var v []float32
		if err := rows.Scan(&text, &v); err != nil {
			t.Fatal(err)
		}
		if !slices.Equal(v, fakeVector(text)) {
			t.Errorf("vector of %q is %v, want %v", text, v, fakeVector(text))
		}
	}
}

// TestEmbedFailures runs misbehaving embedding commands: each aborts the
// sync with a message naming passages, and the previous bundle stays whole.
func TestEmbedFailures(t *testing.T) {
	t.Parallel()
	conn := newDB(t)
	dir := filepath.Join(t.TempDir(), "out")
	pages := handbook(6)
	writeBundle(t, dir, pages)
	mustSync(t, dir, conn, Options{EmbedCmd: embedderCmd(t, "ok", "")})
	old := filepath.Join(t.TempDir(), "old")
	writeBundle(t, old, pages)
	pages[0].text = "Unit 0 text, edited."
	pages[1].text = "Unit 1 text, edited."
	pages[2].text = "Unit 2 text, edited."
	writeBundle(t, dir, pages)

	tests := []struct {
		mode, cmd string
		timeout   time.Duration
		want      string
	}{
		{mode: "fail", want: "embedding batch 1 of 1: 3 passages from depots/d00.md#unit-0 to depots/d00.md#unit-2: the command ended with exit status 3: model weights not found"},
		{mode: "badjson", want: "embedding batch 1 of 1: 3 passages from depots/d00.md#unit-0 to depots/d00.md#unit-2: output line 1: invalid character 'n'"},
		{mode: "short", want: "2 vectors for 3 passages; none for depots/d00.md#unit-1"},
		{mode: "wrongdim", want: "embedding batch 1 of 1: depots/d00.md#unit-1: output line 2: vector of dimension 3, want 4"},
		{mode: "hang", timeout: 500 * time.Millisecond, want: "no answer within 500ms (--embed-timeout)"},
		{mode: "missing", cmd: "/nonexistent/embedder --model x", want: "the command ended with exit status 127: "},
	}
	for _, tc := range tests {
		t.Run(tc.mode, func(t *testing.T) {
			cmd := tc.cmd
			if cmd == "" {
				cmd = embedderCmd(t, tc.mode, "")
			}
			start := time.Now()
			_, err := Sync(context.Background(), dir, conn, Options{EmbedCmd: cmd, EmbedTimeout: tc.timeout})
			var ee *EmbedError
			if err == nil || !strings.Contains(err.Error(), tc.want) || !errors.As(err, &ee) {
				t.Fatalf("got %v\nwant %s", err, tc.want)
			}
			if tc.mode == "hang" && time.Since(start) > 20*time.Second {
				t.Errorf("the hung command was not killed (%s)", time.Since(start))
			}
			checkHolds(t, conn, old)
		})
	}
	// A command whose dimension differs from the stored vectors'.
	_, err := Sync(context.Background(), dir, conn, Options{EmbedCmd: embedderCmd(t, "dim5", "")})
	if err == nil || !strings.Contains(err.Error(), "depots/d00.md#unit-0: output line 1: vector of dimension 5, want 4") {
		t.Errorf("another dimension: %v", err)
	}
	checkHolds(t, conn, old)
	res, err := Sync(context.Background(), dir, conn, Options{EmbedCmd: embedderCmd(t, "ok", "")})
	if err != nil || res.Embedded != 3 {
		t.Fatalf("after the failures: %v %+v", err, res)
	}
	checkHolds(t, conn, dir)
}
