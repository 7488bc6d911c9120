// Package asuser runs a test as an ordinary user when the tests run as
// root, for the tests where file permissions matter: root reads and
// writes past any permission bit, so a test of an unreadable file or a
// read-only folder proves nothing as root (and CI runs as root).
//
// Run copies the test binary (and the test data files the test names)
// into a fresh folder that the user nobody can read, runs the chosen tests
// there as nobody, and passes their result on: a failure fails the calling
// test, a skip skips it. The tests it runs are the ordinary ones; run as
// nobody, their own root check is false and they go on.
package asuser

import (
	"io"
	"os"
	"os/exec"
	"os/user"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"syscall"
	"testing"
)

// Root reports whether the tests run as root.
func Root() bool { return os.Geteuid() == 0 }

// Self returns the -test.run pattern of t alone, subtests included.
func Self(t testing.TB) string {
	parts := strings.Split(t.Name(), "/")
	for i, p := range parts {
		parts[i] = "^" + regexp.QuoteMeta(p) + "$"
	}
	return strings.Join(parts, "/")
}

// Run runs the tests of the current test binary that match pattern (a
// -test.run pattern) as the user nobody, in a process of their own, and
// fails t if they fail or skips t if they were skipped. files are paths
// relative to the package folder (the tests' working directory), such as
// "testdata/x.golden" or "../../testdata/script/y.txtar", that the tests
// read: they are copied to the same places relative to the new working
// directory. env adds KEY=VALUE pairs to the child's environment.
//
// When there is no user nobody, t is skipped, or fails when
// KBC_REQUIRE_SERVERS=1 (CI).
func Run(t testing.TB, pattern string, files []string, env ...string) {
	t.Helper()
	u, err := user.Lookup("nobody")
	if err != nil {
		if os.Getenv("KBC_REQUIRE_SERVERS") == "1" {
			t.Fatalf("running as root, and no user nobody to run %s as: %v", pattern, err)
		}
		t.Skipf("running as root, and no user nobody to run %s as", pattern)
	}
	uid, _ := strconv.Atoi(u.Uid)
	gid, _ := strconv.Atoi(u.Gid)

	// The working directory sits deep enough for every "../" of files.
	base, err := os.MkdirTemp("", "kbc-asuser-")
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { os.RemoveAll(base) })
	up := 0
	for _, f := range files {
		up = max(up, strings.Count(filepath.ToSlash(filepath.Clean(f))+"/", "../"))
	}
	wd := base
	for i := 0; i < up; i++ {
		wd = filepath.Join(wd, "pkg"+strconv.Itoa(i))
	}
	tmp := filepath.Join(base, "tmp")
	for _, d := range []string{wd, tmp} {
		if err := os.MkdirAll(d, 0o755); err != nil {
			t.Fatal(err)
		}
	}
	// The child writes only in tmp and HOME (both its own).
	if err := os.Chown(tmp, uid, gid); err != nil {
		t.Fatal(err)
	}
	if err := os.Chmod(base, 0o755); err != nil {
		t.Fatal(err)
	}
	for _, f := range files {
		if err := copyFile(f, filepath.Join(wd, f), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	self, err := os.Executable()
	if err != nil {
		t.Fatal(err)
	}
	bin := filepath.Join(base, filepath.Base(self))
	if err := copyFile(self, bin, 0o755); err != nil {
		t.Fatal(err)
	}

	cmd := exec.Command(bin, "-test.run", pattern, "-test.v", "-test.count=1")
	cmd.Dir = wd
	cmd.Env = append([]string{
		"PATH=" + os.Getenv("PATH"),
		"HOME=" + tmp,
		"TMPDIR=" + tmp,
		"KBC_ASUSER=1",
	}, env...)
	cmd.SysProcAttr = &syscall.SysProcAttr{Credential: &syscall.Credential{Uid: uint32(uid), Gid: uint32(gid)}}
	out, err := cmd.CombinedOutput()
	text := string(out)
	switch {
	case err != nil:
		t.Fatalf("as user nobody, %s failed: %v\n%s", pattern, err, text)
	case strings.Contains(text, "no tests to run"):
		t.Fatalf("as user nobody, %s matched no test:\n%s", pattern, text)
	case !strings.Contains(text, "--- PASS") && strings.Contains(text, "--- SKIP"):
		t.Skipf("as user nobody, %s was skipped:\n%s", pattern, text)
	}
	t.Logf("as user nobody (uid %d):\n%s", uid, text)
}

func copyFile(from, to string, perm os.FileMode) error {
	in, err := os.Open(from)
	if err != nil {
		return err
	}
	defer in.Close()
	if err := os.MkdirAll(filepath.Dir(to), 0o755); err != nil {
		return err
	}
	out, err := os.OpenFile(to, os.O_WRONLY|os.O_CREATE|os.O_TRUNC, perm)
	if err != nil {
		return err
	}
	if _, err := io.Copy(out, in); err != nil {
		out.Close()
		return err
	}
	if err := out.Close(); err != nil {
		return err
	}
	return os.Chmod(to, perm) // not narrowed by the umask
}
