//go:build unix

package sources

import "syscall"

// openNonBlock makes opening a named pipe return at once instead of
// waiting for a writer; on regular files and folders it changes nothing.
const openNonBlock = syscall.O_NONBLOCK
