package build

import (
	"encoding/gob"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"sort"
	"sync"

	"github.com/cespare/xxhash/v2"

	"github.com/kbc-project/kbc/build/buildcache"
	"github.com/kbc-project/kbc/build/dedupe"
	"github.com/kbc-project/kbc/build/fresh"
	"github.com/kbc-project/kbc/internal/parallel"
)

// The build cache on disk is a folder of files, so that a rebuild after one
// page changed rewrites a few of them, not the whole cache:
//
//	entries-00.gob ... entries-0f.gob  the entries, spread by a hash of their path
//	state.gob                          the duplicate stage's outcome and hashing memos, the git dates
//
// Each file is in the format of package buildcache (a gob stream with a
// header, its records and a CRC-32C): a torn or altered file is found out
// before anything in it is used. Every header carries the layout version
// and the cache key, and all files must agree on them.
const (
	cacheLayout = 5 // 4: documents carry their hidden text, secrets and lints; 5: blocks carry defined terms (Block.Anchor), passages their Terms
	cacheShards = 16
	stateFile   = "state.gob"
)

func shardFile(i int) string { return fmt.Sprintf("entries-%02x.gob", i) }

func shardOf(path string) int { return int(xxhash.Sum64String(path) % cacheShards) }

// cacheRecord is one entry of a shard file.
type cacheRecord struct {
	Path  string
	Entry *CacheEntry
}

// cacheState is the record of the state file.
type cacheState struct {
	Dedupe *DedupeMemo
	Memos  [3][]byte // dedupe.Memo.MarshalBinary, real and masked texts, masked blocks; nil: none
	Git    *fresh.GitHistory
}

// ErrNoCache is returned by LoadCache for a folder that holds no cache.
var ErrNoCache = errors.New("no build cache")

// LoadCache reads the cache saved in dir by Save. A folder without one
// gives ErrNoCache; a cache that is incomplete, altered or of another
// layout gives another error, and the caller should start a new one.
func LoadCache(dir string) (*Cache, error) {
	var (
		shards [cacheShards]map[string]*CacheEntry
		keys   [cacheShards]string
		errs   [cacheShards]error
	)
	done := make(chan struct{})
	go func() {
		parallel.For(cacheShards, func(i int) {
			shards[i], keys[i], errs[i] = readShard(filepath.Join(dir, shardFile(i)))
		})
		close(done)
	}()
	state, stateKey, stateErr := readState(filepath.Join(dir, stateFile))
	<-done

	missing := 0
	for i, err := range errs {
		if errors.Is(err, fs.ErrNotExist) {
			missing++
			continue
		}
		if err != nil {
			return nil, err
		}
		if keys[i] != keys[0] {
			return nil, fmt.Errorf("%s: made for other settings than %s", shardFile(i), shardFile(0))
		}
	}
	switch {
	case missing == cacheShards && errors.Is(stateErr, fs.ErrNotExist):
		return nil, ErrNoCache
	case missing > 0:
		return nil, fmt.Errorf("%s: %d of %d entry files are missing", dir, missing, cacheShards)
	}
	c := &Cache{key: keys[0], entries: map[string]*CacheEntry{}, dirty: map[string]bool{}}
	for i, m := range shards {
		for p, e := range m {
			if shardOf(p) != i {
				return nil, fmt.Errorf("%s: holds %s, which belongs in %s", shardFile(i), p, shardFile(shardOf(p)))
			}
			c.entries[p] = e
		}
	}
	// The state only saves work: a missing or unreadable one is not worth
	// discarding the entries for.
	if stateErr == nil && stateKey == c.key {
		c.dedupe, c.git = state.Dedupe, state.Git
		for i, data := range state.Memos {
			if data == nil {
				continue
			}
			m := &dedupe.Memo{}
			if m.UnmarshalBinary(data) == nil {
				c.memos[i] = m
			}
		}
	}
	return c, nil
}

// Save writes the cache into dir: the entry files holding an entry that
// changed since the cache was loaded or last saved, and the state when it
// changed. Each file is replaced atomically; a crash between two files
// leaves each of them whole, and every entry in them still true of the
// file it describes (an entry vouches for one content hash).
func (c *Cache) Save(dir string) error {
	c.mu.Lock()
	defer c.mu.Unlock()
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	var todo [cacheShards]bool
	for p := range c.dirty {
		todo[shardOf(p)] = true
	}
	var groups [cacheShards][]string
	for p := range c.entries {
		if i := shardOf(p); c.all || todo[i] {
			groups[i] = append(groups[i], p)
		}
	}
	var (
		wg   sync.WaitGroup
		errs [cacheShards]error
	)
	for i := range cacheShards {
		if !c.all && !todo[i] {
			continue
		}
		wg.Go(func() {
			paths := groups[i]
			sort.Strings(paths)
			errs[i] = encodeCacheFile(filepath.Join(dir, shardFile(i)), c.key, len(paths), func(enc *gob.Encoder) error {
				for _, p := range paths {
					if err := enc.Encode(cacheRecord{Path: p, Entry: c.entries[p]}); err != nil {
						return fmt.Errorf("%s: %v", p, err)
					}
				}
				return nil
			})
		})
	}
	var serr error
	if c.all || c.state {
		serr = c.saveState(dir)
	}
	wg.Wait()
	if err := errors.Join(append(errs[:], serr)...); err != nil {
		return err
	}
	if c.all {
		os.Remove(filepath.Join(dir, "documents.gob")) // the layout before this one
	}
	c.dirty, c.all, c.state = map[string]bool{}, false, false
	return nil
}

// saveState writes the state file; c.mu must be held.
func (c *Cache) saveState(dir string) error {
	st := cacheState{Dedupe: c.dedupe, Git: c.git}
	for i, m := range c.memos {
		if m == nil {
			continue
		}
		data, err := m.MarshalBinary()
		if err != nil {
			return err
		}
		st.Memos[i] = data
	}
	return encodeCacheFile(filepath.Join(dir, stateFile), c.key, 1, func(enc *gob.Encoder) error {
		return enc.Encode(&st)
	})
}

// encodeCacheFile writes one cache file (buildcache.Write): count records,
// which body encodes, under a header with the layout and key.
func encodeCacheFile(name, key string, count int, body func(*gob.Encoder) error) error {
	return buildcache.Write(name, buildcache.Header{Layout: cacheLayout, Key: key, Count: count}, body)
}

func readShard(name string) (map[string]*CacheEntry, string, error) {
	data, err := os.ReadFile(name)
	if err != nil {
		return nil, "", err
	}
	return decodeShard(name, data)
}

// decodeShard decodes the bytes of the entry file name.
func decodeShard(name string, data []byte) (map[string]*CacheEntry, string, error) {
	dec, h, err := buildcache.Open(name, data, cacheLayout)
	if err != nil {
		return nil, "", err
	}
	m := make(map[string]*CacheEntry, min(h.Count, 1<<16))
	for range h.Count {
		var r cacheRecord
		if err := dec.Decode(&r); err != nil {
			return nil, "", fmt.Errorf("%s: %v", name, err)
		}
		if r.Entry == nil {
			return nil, "", fmt.Errorf("%s: %s has no entry", name, r.Path)
		}
		m[r.Path] = r.Entry
	}
	return m, h.Key, nil
}

func readState(name string) (*cacheState, string, error) {
	dec, h, err := buildcache.Read(name, cacheLayout)
	if err != nil {
		return nil, "", err
	}
	var st cacheState
	if err := dec.Decode(&st); err != nil {
		return nil, "", fmt.Errorf("%s: %v", name, err)
	}
	return &st, h.Key, nil
}
