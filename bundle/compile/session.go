package compile

import (
	"errors"
	"fmt"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/bundle"
)

// Session is what one process keeps between builds of one bundle folder:
// the build cache, in memory. The zero value is ready. A Session is for
// one Out folder and one build at a time.
type Session struct {
	cache *build.Cache
}

// cacheFor returns the build cache: the one in memory when there is one,
// else the one on disk beside out when this binary made it, else a new
// one. A cache that cannot be read, or was made by another binary, is
// reported through warn and replaced: it is never trusted. (Settings key
// the cached passages inside it, so a settings change re-splits pages
// without parsing them again.)
func (s *Session) cacheFor(out, tool string, warn func(string)) *build.Cache {
	if s.cache.Fits(tool) {
		return s.cache
	}
	c, err := build.LoadCache(bundle.CacheDir(out))
	switch {
	case errors.Is(err, build.ErrNoCache):
		c = nil
	case err != nil:
		warn(fmt.Sprintf("build cache unreadable (%v); rebuilding it", err))
		c = nil
	case c != nil && !c.Fits(tool):
		warn(fmt.Sprintf("build cache %s was made by another kbc binary; rebuilding it", bundle.CacheDir(out)))
		c = nil
	}
	if c == nil {
		c = build.NewCache(tool)
	}
	s.cache = c
	return c
}

// Save writes the build cache beside the bundle folder out when a build
// changed it.
func (s *Session) Save(out string) error {
	if s.cache != nil && s.cache.Changed() {
		return s.cache.Save(bundle.CacheDir(out))
	}
	return nil
}
