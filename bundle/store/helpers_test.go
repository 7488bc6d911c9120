package store

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"io/fs"
	"net"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/aws/aws-sdk-go-v2/aws"
	"github.com/aws/aws-sdk-go-v2/credentials"
	"github.com/aws/aws-sdk-go-v2/service/s3"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/bundle"
)

// mkBundle writes a small bundle into a new folder and returns the folder
// and its manifest. Different seeds give different bundle ids.
func mkBundle(t testing.TB, seed int, passages int) (string, *bundle.Manifest) {
	t.Helper()
	var ps []build.Passage
	for i := range passages {
		text := fmt.Sprintf("Reefer unit %d of depot %d keeps chilled freight between 2 and 8 degrees; drivers check door seal %d before every trip.", i, seed, i*7+seed)
		sum := sha256.Sum256([]byte(text))
		ps = append(ps, build.Passage{
			ID: fmt.Sprintf("%016x", i+1), Path: fmt.Sprintf("depots/d%02d.md", i/4), Title: "Depot",
			Heading: []string{"Depot", fmt.Sprintf("Unit %d", i)}, Text: text, Line: 1 + (i%4)*10, EndLine: 1 + (i%4)*10,
			Tokens: len(strings.Fields(text)), Hash: hex.EncodeToString(sum[:]),
		})
	}
	dir := filepath.Join(t.TempDir(), "out")
	m, err := bundle.Write(dir, &bundle.Input{
		Passages: ps, Tool: "kbc test", SourceCommit: fmt.Sprintf("%040d", seed),
		BuiltAt: time.Date(2026, 3, 1, 12, seed%60, 0, 0, time.UTC),
		Files:   map[string][]byte{"reports/note.json": []byte(`{"seed":` + fmt.Sprint(seed) + "}\n")},
	})
	if err != nil {
		t.Fatal(err)
	}
	return dir, m
}

// treeHashes maps every file under dir (slash path) to its SHA-256.
func treeHashes(t testing.TB, dir string) map[string]string {
	t.Helper()
	m := map[string]string{}
	err := filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil || d.IsDir() {
			return err
		}
		data, err := os.ReadFile(p)
		if err != nil {
			return err
		}
		rel, _ := filepath.Rel(dir, p)
		sum := sha256.Sum256(data)
		m[filepath.ToSlash(rel)] = hex.EncodeToString(sum[:])
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	return m
}

func sameTree(t testing.TB, a, b string) {
	t.Helper()
	ha, hb := treeHashes(t, a), treeHashes(t, b)
	if len(ha) != len(hb) {
		t.Fatalf("%s has %d files, %s has %d", a, len(ha), b, len(hb))
	}
	for k, v := range ha {
		if hb[k] != v {
			t.Fatalf("%s differs between %s and %s", k, a, b)
		}
	}
}

func mustOpen(t testing.TB, loc string) *Store {
	t.Helper()
	s, err := Open(context.Background(), loc)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { s.Close() })
	return s
}

// needServer returns the environment variable's value, or skips the test
// when it is unset (fails it when KBC_REQUIRE_SERVERS=1, as in CI).
func needServer(t testing.TB, env string) string {
	t.Helper()
	v := os.Getenv(env)
	if v == "" {
		if os.Getenv("KBC_REQUIRE_SERVERS") == "1" {
			t.Fatalf("%s is not set but KBC_REQUIRE_SERVERS=1: start the servers with .ci/servers.sh", env)
		}
		t.Skipf("%s is not set: run `source .ci/servers.sh && kbc_servers_start` to test against real servers", env)
	}
	return v
}

var bucketSeq = time.Now().UnixNano() % 1e6

// s3Loc creates a new bucket on the S3 server at endpoint and returns a
// store location in it, with the credentials in the environment as the
// AWS SDK reads them.
func s3Loc(t testing.TB, endpoint, key, secret string) string {
	t.Helper()
	t.Setenv("AWS_ACCESS_KEY_ID", key)
	t.Setenv("AWS_SECRET_ACCESS_KEY", secret)
	t.Setenv("AWS_REGION", "us-east-1")
	bucketSeq++
	bucket := fmt.Sprintf("%s-%d", os.Getenv("KBC_TEST_S3_BUCKET"), bucketSeq)
	if bucket[0] == '-' {
		bucket = "kbc-test" + bucket
	}
	createBucket(t, endpoint, key, secret, bucket)
	return fmt.Sprintf("s3://%s/team/docs?endpoint=%s&use_path_style=true&region=us-east-1", bucket, endpoint)
}

func createBucket(t testing.TB, endpoint, key, secret, bucket string) {
	t.Helper()
	c := s3.New(s3.Options{
		Region: "us-east-1", BaseEndpoint: aws.String(endpoint), UsePathStyle: true,
		Credentials: credentials.NewStaticCredentialsProvider(key, secret, ""),
	})
	if _, err := c.CreateBucket(context.Background(), &s3.CreateBucketInput{Bucket: aws.String(bucket)}); err != nil {
		t.Fatalf("creating bucket %s: %v", bucket, err)
	}
}

// freePort returns a TCP port on 127.0.0.1 that was free a moment ago.
func freePort(t testing.TB) string {
	t.Helper()
	l, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	return l.Addr().String()
}

// server is a private server process a fault test may kill and restart.
type server struct {
	t    testing.TB
	addr string
	args []string
	env  []string
	cmd  *exec.Cmd
}

func (s *server) start() {
	s.t.Helper()
	s.cmd = exec.Command(s.args[0], s.args[1:]...)
	s.cmd.Env = append(os.Environ(), s.env...)
	if err := s.cmd.Start(); err != nil {
		s.t.Fatal(err)
	}
	cmd := s.cmd
	s.t.Cleanup(func() { cmd.Process.Kill(); cmd.Wait() })
	for range 100 {
		if c, err := net.Dial("tcp", s.addr); err == nil {
			c.Close()
			return
		}
		time.Sleep(50 * time.Millisecond)
	}
	s.t.Fatalf("%s did not listen on %s", s.args[0], s.addr)
}

func (s *server) kill() {
	s.cmd.Process.Kill()
	s.cmd.Wait()
}

// privateS3 starts a versitygw of its own for a test that kills it.
func privateS3(t testing.TB) (*server, string) {
	bin := needServer(t, "KBC_TEST_VERSITYGW")
	addr := freePort(t)
	key, secret := "faultkey", "fault-secret-0123456789"
	s := &server{t: t, addr: addr, args: []string{bin, "--port", addr, "posix", t.TempDir()},
		env: []string{"ROOT_ACCESS_KEY_ID=" + key, "ROOT_SECRET_ACCESS_KEY=" + secret}}
	s.start()
	return s, s3Loc(t, "http://"+addr, key, secret)
}

// privateRegistry starts a registry of its own for a test that kills it.
func privateRegistry(t testing.TB) (*server, string) {
	bin := needServer(t, "KBC_TEST_REGISTRY")
	addr := freePort(t)
	dir := t.TempDir()
	cfg := filepath.Join(dir, "config.yml")
	err := os.WriteFile(cfg, []byte(fmt.Sprintf("version: 0.1\nlog:\n  level: error\nstorage:\n  filesystem:\n    rootdirectory: %s/data\n  delete:\n    enabled: true\nhttp:\n  addr: %s\n", dir, addr)), 0o644)
	if err != nil {
		t.Fatal(err)
	}
	s := &server{t: t, addr: addr, args: []string{bin, "serve", cfg}}
	s.start()
	return s, "oci://" + addr + "/kbc/fault"
}

// ociLoc returns a new repository on the shared registry.
func ociLoc(t testing.TB) string {
	addr := needServer(t, "KBC_TEST_OCI")
	bucketSeq++
	return fmt.Sprintf("oci://%s/kbc/test%d", addr, bucketSeq)
}

// s3Shared returns a store location in a new bucket of the shared versitygw.
func s3Shared(t testing.TB) string {
	ep := needServer(t, "KBC_TEST_S3_ENDPOINT")
	return s3Loc(t, ep, os.Getenv("KBC_TEST_S3_KEY"), os.Getenv("KBC_TEST_S3_SECRET"))
}
