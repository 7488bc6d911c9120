//go:build unix

package bundle

import (
	"os"
	"syscall"
)

// lockDir holds an exclusive flock(2) on the folder p until the returned
// func runs, or the process ends however it ends: a folder left behind
// by a killed pull is unlocked, one in use is not.
func lockDir(p string) (func(), error) {
	f, err := os.Open(p)
	if err != nil {
		return nil, err
	}
	if err := syscall.Flock(int(f.Fd()), syscall.LOCK_EX|syscall.LOCK_NB); err != nil {
		f.Close()
		return nil, err
	}
	return func() { f.Close() }, nil
}

// unused reports whether no process holds the folder p locked.
func unused(p string) bool {
	unlock, err := lockDir(p)
	if err != nil {
		return false
	}
	unlock()
	return true
}
