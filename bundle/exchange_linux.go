package bundle

import (
	"errors"
	"os"

	"golang.org/x/sys/unix"
)

// errNoExchange means the system cannot swap two names in one step.
var errNoExchange = errors.New("atomic exchange not supported")

// exchange swaps the names a and b in one atomic step with renameat2 and
// RENAME_EXCHANGE (Linux 3.15 and later; ext4, XFS, btrfs, tmpfs and others).
func exchange(a, b string) error {
	err := unix.Renameat2(unix.AT_FDCWD, a, unix.AT_FDCWD, b, unix.RENAME_EXCHANGE)
	if errors.Is(err, unix.ENOSYS) || errors.Is(err, unix.EINVAL) {
		return errNoExchange // old kernel, or a file system without the flag
	}
	if err != nil {
		return &os.LinkError{Op: "renameat2", Old: a, New: b, Err: err}
	}
	return nil
}
