//go:build unix

package pgsync

import (
	"os/exec"
	"syscall"
)

// ownGroup starts cmd in a process group of its own and makes a
// cancelled command kill the whole group, so that a hung embedding
// command's children (sh -c "python embed.py") die with it.
func ownGroup(cmd *exec.Cmd) {
	cmd.SysProcAttr = &syscall.SysProcAttr{Setpgid: true}
	cmd.Cancel = func() error {
		return syscall.Kill(-cmd.Process.Pid, syscall.SIGKILL)
	}
}
