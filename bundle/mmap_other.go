//go:build !unix

package bundle

import "os"

// mapFile reads the file at path (no memory mapping here); unmap is nil.
func mapFile(path string) (data []byte, unmap func() error, err error) {
	data, err = os.ReadFile(path)
	return data, nil, err
}
