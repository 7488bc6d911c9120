package watch

import (
	"errors"
	"fmt"
	"os"
	"strings"
	"syscall"
)

// ErrWatchLimit reports that the operating system refused another folder
// watch or another watcher because a per-user limit was reached. The error
// returned wraps it together with the system's own error and names the
// setting to raise.
var ErrWatchLimit = errors.New("file watch limit reached")

// limitError turns the errors that inotify gives for its per-user limits
// into a message that names the limit and how to raise it; other errors are
// returned unchanged. inotify_add_watch(2) fails with ENOSPC when
// fs.inotify.max_user_watches is reached, inotify_init1(2) with EMFILE when
// fs.inotify.max_user_instances is (Linux man pages inotify(7),
// inotify_add_watch(2), inotify_init(2)).
func limitError(op string, err error) error {
	var setting string
	switch {
	case errors.Is(err, syscall.ENOSPC):
		setting = "fs.inotify.max_user_watches"
	case errors.Is(err, syscall.EMFILE) && op == "start watcher":
		setting = "fs.inotify.max_user_instances"
	default:
		return err
	}
	cur := "?"
	if b, rerr := os.ReadFile("/proc/sys/" + strings.ReplaceAll(setting, ".", "/")); rerr == nil {
		cur = strings.TrimSpace(string(b))
	}
	// The error names the setting and a way to raise it; 524288 is a value
	// commonly recommended for large trees (common practice, no source).
	return fmt.Errorf("%s: %w: %s is %s; raise it with `sudo sysctl %s=524288` (add it to /etc/sysctl.conf to keep it) or ignore large folders: %w",
		op, ErrWatchLimit, setting, cur, setting, err)
}
