//go:build !linux

package bundle

import "errors"

// errNoExchange means the system cannot swap two names in one step.
var errNoExchange = errors.New("atomic exchange not supported")

// exchange is not available on this system; place falls back to two renames.
func exchange(a, b string) error { return errNoExchange }
