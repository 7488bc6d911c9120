package build

import (
	"context"

	"github.com/kbc-project/kbc/build/fresh"
)

// SourceCommit returns the commit checked out in the git work tree that
// holds dir, and whether the tree under dir has uncommitted changes. It
// returns "" when dir is not in a work tree or git is not installed: a
// bundle built from a plain folder simply has no commit. git runs under
// ctx (fresh.GitOutput).
func SourceCommit(ctx context.Context, dir string) (commit string, dirty bool) {
	commit = fresh.GitOutput(ctx, dir, "rev-parse", "--verify", "-q", "HEAD")
	if commit == "" {
		return "", false
	}
	return commit, fresh.GitOutput(ctx, dir, "status", "--porcelain", "--", ".") != ""
}
