//go:build !unix

package sources

// openNonBlock is unix only; elsewhere named pipes are not opened from
// a path this way.
const openNonBlock = 0
