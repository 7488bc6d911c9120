//go:build !unix

package pgsync

import "os/exec"

// ownGroup leaves cmd as it is: without process groups, a cancelled
// command's own process is killed (exec.CommandContext's default) and
// WaitDelay stops waiting for its children.
func ownGroup(cmd *exec.Cmd) {}
