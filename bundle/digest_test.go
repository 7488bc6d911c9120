package bundle

import (
	"os/exec"
	"strings"
	"testing"
)

// TestFilesDigestSHA256Sum checks FilesDigest against GNU coreutils'
// sha256sum (FIPS 180-4 SHA-256) over the listing as the README defines
// it, written out by printf.
func TestFilesDigestSHA256Sum(t *testing.T) {
	if _, err := exec.LookPath("sha256sum"); err != nil {
		t.Skip("sha256sum not found")
	}
	files := map[string]string{"passages.jsonl": "sha256:aa", "index/a b": "sha256:bb"}
	sizes := map[string]int64{"passages.jsonl": 979, "index/a b": 0}
	out, err := exec.Command("sh", "-c", `printf '%s\000%s\000%s\n' 'index/a b' 0 sha256:bb passages.jsonl 979 sha256:aa | sha256sum`).Output()
	if err != nil {
		t.Fatal(err)
	}
	want := "sha256:" + strings.Fields(string(out))[0]
	if got := FilesDigest(files, sizes); got != want {
		t.Errorf("FilesDigest = %s, sha256sum gives %s", got, want)
	}
}
