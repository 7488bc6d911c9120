package build

import (
	"bytes"
	"os/exec"
	"strings"
)

// SourceCommit returns the commit checked out in the git work tree that
// holds dir, and whether the tree under dir has uncommitted changes. It
// returns "" when dir is not in a work tree or git is not installed: a
// bundle built from a plain folder simply has no commit.
func SourceCommit(dir string) (commit string, dirty bool) {
	out, err := exec.Command("git", "-C", dir, "rev-parse", "--verify", "-q", "HEAD").Output()
	if err != nil {
		return "", false
	}
	commit = strings.TrimSpace(string(out))
	st, err := exec.Command("git", "-C", dir, "status", "--porcelain", "--", ".").Output()
	return commit, err == nil && len(bytes.TrimSpace(st)) > 0
}
