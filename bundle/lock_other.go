//go:build !unix

package bundle

// lockDir does nothing where there is no flock(2).
func lockDir(string) (func(), error) { return func() {}, nil }

// unused reports false: without a lock, a folder may be in use.
func unused(string) bool { return false }
