package pgsync

import (
	"bufio"
	"context"
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"os/exec"
	"os/user"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/bundle"
)

// cluster is the one PostgreSQL server of this test binary: initdb into a
// temporary folder, listening only on a Unix socket in that folder, stopped
// when the tests end. Each test gets a database of its own.
var cluster struct {
	sock, user string // socket folder and superuser
	skip       string // why there is no server
	pgCtl      string
	data       string
	runAs      []string // prefix that runs a server binary as the cluster's owner
}

var (
	dbSeq       atomic.Int64
	clusterOnce sync.Once
	clusterStop func()
)

func TestMain(m *testing.M) {
	switch os.Getenv("KBC_TEST_EMBEDDER") {
	case "":
	default:
		os.Exit(fakeEmbedder(os.Getenv("KBC_TEST_EMBEDDER")))
	}
	if conn := os.Getenv("KBC_TEST_SYNC_CHILD"); conn != "" {
		// A sync run in a child process, for the test that kills one.
		_, err := Sync(context.Background(), os.Getenv("KBC_TEST_SYNC_DIR"), conn, Options{EmbedCmd: os.Getenv("KBC_TEST_SYNC_EMBED")})
		if err != nil {
			fmt.Fprintln(os.Stderr, err)
			os.Exit(1)
		}
		os.Exit(0)
	}
	code := m.Run()
	if clusterStop != nil {
		clusterStop()
	}
	os.Exit(code)
}

// startCluster starts the server, or records in cluster.skip why not.
func startCluster() func() {
	bins, _ := filepath.Glob("/usr/lib/postgresql/*/bin/initdb")
	initdb := ""
	if len(bins) > 0 {
		initdb = bins[len(bins)-1]
	} else if p, err := exec.LookPath("initdb"); err == nil {
		initdb = p
	}
	if initdb == "" {
		cluster.skip = "no PostgreSQL server binaries (initdb); on Debian: apt-get install postgresql"
		return func() {}
	}
	binDir := filepath.Dir(initdb)
	cluster.pgCtl = filepath.Join(binDir, "pg_ctl")
	dir, err := os.MkdirTemp("", "kbc-pgsync-")
	if err != nil {
		cluster.skip = err.Error()
		return func() {}
	}
	// initdb and postgres refuse to run as root: run them as Debian's
	// postgres user, which owns the folder.
	cluster.user = "postgres"
	if os.Geteuid() == 0 {
		u, err := user.Lookup("postgres")
		if err != nil {
			cluster.skip = "running as root and there is no postgres user to run the server as"
			return func() { os.RemoveAll(dir) }
		}
		uid, _ := strconv.Atoi(u.Uid)
		gid, _ := strconv.Atoi(u.Gid)
		if err := os.Chown(dir, uid, gid); err != nil {
			cluster.skip = err.Error()
			return func() { os.RemoveAll(dir) }
		}
		cluster.runAs = []string{"runuser", "-u", "postgres", "--"}
	} else if u, err := user.Current(); err == nil {
		cluster.user = u.Username
	}
	cluster.sock = dir
	cluster.data = filepath.Join(dir, "data")
	run := func(args ...string) error {
		args = append(append([]string{}, cluster.runAs...), args...)
		out, err := exec.Command(args[0], args[1:]...).CombinedOutput()
		if err != nil {
			return fmt.Errorf("%s: %v\n%s", strings.Join(args, " "), err, out)
		}
		return nil
	}
	if err := run(initdb, "-D", cluster.data, "-U", cluster.user, "-A", "trust", "-E", "UTF8", "--locale=C", "--no-sync"); err != nil {
		cluster.skip = err.Error()
		return func() { os.RemoveAll(dir) }
	}
	opts := fmt.Sprintf("-c listen_addresses='' -c unix_socket_directories=%s -c port=5432 -c fsync=off -c full_page_writes=off -c synchronous_commit=off", dir)
	if err := run(cluster.pgCtl, "-D", cluster.data, "-l", filepath.Join(dir, "log"), "-o", opts, "-w", "-t", "60", "start"); err != nil {
		cluster.skip = err.Error()
		return func() { os.RemoveAll(dir) }
	}
	return func() {
		run(cluster.pgCtl, "-D", cluster.data, "-m", "immediate", "-w", "stop")
		os.RemoveAll(dir)
	}
}

// needServer skips t when there is no server, or fails it when
// KBC_REQUIRE_SERVERS=1.
func needServer(t testing.TB) {
	t.Helper()
	// Started on first use, so that tests and fuzz workers that need no
	// server start none.
	clusterOnce.Do(func() { clusterStop = startCluster() })
	if cluster.skip == "" {
		return
	}
	if os.Getenv("KBC_REQUIRE_SERVERS") == "1" {
		t.Fatalf("KBC_REQUIRE_SERVERS=1 but PostgreSQL is not available: %s", cluster.skip)
	}
	t.Skipf("skipping: %s", cluster.skip)
}

// connString names database db of the test cluster.
func connString(db string) string {
	return fmt.Sprintf("host=%s port=5432 user=%s dbname=%s sslmode=disable", cluster.sock, cluster.user, db)
}

// newDB creates an empty database for t and returns its connection string.
func newDB(t testing.TB) string {
	t.Helper()
	needServer(t)
	name := fmt.Sprintf("t%d_%d", os.Getpid(), dbSeq.Add(1))
	ctx := context.Background()
	c, err := pgx.Connect(ctx, connString("postgres"))
	if err != nil {
		t.Fatal(err)
	}
	defer c.Close(ctx)
	if _, err := c.Exec(ctx, "CREATE DATABASE "+name+" STRATEGY FILE_COPY"); err != nil {
		t.Fatal(err)
	}
	return connString(name)
}

// connect opens a connection for checks, closed when t ends.
func connect(t testing.TB, conn string) *pgx.Conn {
	t.Helper()
	c, err := pgx.Connect(context.Background(), conn)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { c.Close(context.Background()) })
	return c
}

// page is one passage of a test bundle, before hashing.
type page struct {
	id, path, anchor, text string
	updated                time.Time
	owner, audience        string
	alsoAt                 []string
}

// handbook returns n passages of the Polarline Freight handbook.
func handbook(n int) []page {
	var ps []page
	for i := range n {
		ps = append(ps, page{
			id:      fmt.Sprintf("%016x", i+1),
			path:    fmt.Sprintf("depots/d%02d.md", i/4),
			anchor:  fmt.Sprintf("unit-%d", i),
			text:    fmt.Sprintf("Reefer unit %d keeps chilled freight between 2 and 8 degrees; drivers check door seal %d before every trip.", i, i*7),
			updated: time.Date(2026, 3, 1, 12, 0, 0, 0, time.UTC),
			owner:   "depot-ops",
		})
	}
	return ps
}

// writeBundle writes pages as a bundle into dir (replacing what is
// there), with a delta against the bundle that dir held before.
func writeBundle(t testing.TB, dir string, pages []page) *bundle.Manifest {
	t.Helper()
	var ps []build.Passage
	for _, pg := range pages {
		sum := sha256.Sum256([]byte(pg.text))
		p := build.Passage{
			ID: pg.id, Path: pg.path, Anchor: pg.anchor, Title: "Depot handbook",
			Heading: []string{"Depots", pg.anchor}, Text: pg.text, Line: 1, EndLine: 3,
			Tokens: len(strings.Fields(pg.text)), Hash: hex.EncodeToString(sum[:]),
			Updated: pg.updated, Owner: pg.owner, Audience: pg.audience, AlsoAt: pg.alsoAt,
		}
		if strings.Contains(pg.text, "Seal") {
			p.Terms = []build.Term{{Text: "Seal check", Anchor: "seal-check"}}
		}
		ps = append(ps, p)
	}
	prior, err := bundle.ReadPrior(dir)
	if err != nil {
		t.Fatal(err)
	}
	m, err := bundle.Write(dir, &bundle.Input{Passages: ps, Tool: "kbc test", SourceCommit: strings.Repeat("c", 40), Prior: prior,
		BuiltAt: time.Date(2026, 3, 2, 9, 0, 0, 0, time.UTC)})
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// embedderCmd is a shell command running this test binary as the fake
// embedding command in the given mode; log, when set, receives the id of
// every passage it is sent.
func embedderCmd(t testing.TB, mode, log string) string {
	exe, err := os.Executable()
	if err != nil {
		t.Fatal(err)
	}
	return fmt.Sprintf("KBC_TEST_EMBEDDER=%s KBC_TEST_EMBED_LOG=%s %s", mode, log, exe)
}

// testDim is the dimension of the fake embedder's vectors.
const testDim = 4

// fakeVector is the fake embedder's deterministic vector for a text.
func fakeVector(text string) []float32 {
	sum := sha256.Sum256([]byte(text))
	v := make([]float32, testDim)
	for i := range v {
		v[i] = float32(binary.BigEndian.Uint16(sum[2*i:])) / math.MaxUint16
	}
	return v
}

// fakeEmbedder is the embedding command of the tests: a real program (this
// test binary run again) that reads passages on stdin and writes vectors
// on stdout; mode makes it misbehave in one way.
func fakeEmbedder(mode string) int {
	var log *os.File
	if p := os.Getenv("KBC_TEST_EMBED_LOG"); p != "" {
		log, _ = os.OpenFile(p, os.O_APPEND|os.O_CREATE|os.O_WRONLY, 0o644)
		defer log.Close()
	}
	if mode == "slow" {
		// Announce the batch, then take a long time: the test kills
		// the sync meanwhile.
		if log != nil {
			fmt.Fprintln(log, "started")
		}
		time.Sleep(30 * time.Second)
	}
	if mode == "hang" {
		time.Sleep(time.Hour)
	}
	sc := bufio.NewScanner(os.Stdin)
	sc.Buffer(nil, 1<<24)
	out := bufio.NewWriter(os.Stdout)
	defer out.Flush()
	n := 0
	for sc.Scan() {
		var in embedInput
		if err := json.Unmarshal(sc.Bytes(), &in); err != nil {
			fmt.Fprintln(os.Stderr, "bad input:", err)
			return 1
		}
		if log != nil {
			fmt.Fprintln(log, in.ID)
		}
		n++
		v := fakeVector(in.Text)
		switch {
		case mode == "fail":
			fmt.Fprintln(os.Stderr, "model weights not found")
			return 3
		case mode == "badjson":
			fmt.Fprintln(out, "{not json")
			continue
		case mode == "short" && n == 2:
			continue
		case mode == "wrongdim" && n == 2:
			v = v[:3]
		case mode == "dim5":
			v = append(v, 0.5)
		}
		b, _ := json.Marshal(embedOutput{ID: in.ID, Vector: v})
		out.Write(append(b, '\n'))
	}
	return 0
}
