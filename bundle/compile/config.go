package compile

import (
	"github.com/kbc-project/kbc/build"
)

// Config is the effective configuration of a build before the caller's
// own overrides (flags): the defaults, then the config file when there is
// one.
type Config struct {
	// Path is the config file read, as found or given; "" when none.
	Path string
	// Notes are lines for the user about the file, such as a section
	// under a deprecated name.
	Notes   []string
	Options build.Options
	Checks  build.Checks
}

// LoadConfig returns the configuration for the source folder src: from
// file when it is not "" (the user named it), else from the nearest
// kbc.toml in src or above it up to the repository root (see
// build.FindConfig), else the defaults. Errors are *sources.Error naming
// the file and line.
func LoadConfig(src, file string) (*Config, error) {
	c := &Config{Options: build.DefaultOptions(), Path: file}
	if c.Path == "" {
		p, err := build.FindConfig(src)
		if err != nil {
			return nil, err
		}
		c.Path = p
	}
	if c.Path == "" {
		return c, nil
	}
	f, err := build.LoadConfigFile(c.Path)
	if err != nil {
		return nil, err
	}
	if err := f.Apply(&c.Options); err != nil {
		return nil, err
	}
	if err := f.ApplyChecks(&c.Checks); err != nil {
		return nil, err
	}
	c.Notes = f.Notes
	return c, nil
}
