package dedupe

import (
	"math/bits"
	"slices"
	"sync"
	"sync/atomic"
)

// parallel runs fn(w, lo, hi) over [0, n) in chunks of at most chunk items
// on up to workers goroutines; w (0 <= w < workers) names the goroutine, so
// fn can keep scratch per worker. Chunks are handed out in order, but which
// worker runs which chunk varies: fn must write only to its items' slots or
// its worker's scratch. A panic in fn (say, in the caller's text function)
// stops the handing out of chunks and is raised again in the caller.
func parallel(workers, n, chunk int, fn func(w, lo, hi int)) {
	if n <= 0 {
		return
	}
	if c := (n + chunk - 1) / chunk; workers > c {
		workers = c
	}
	if workers <= 1 {
		for lo := 0; lo < n; lo += chunk {
			fn(0, lo, min(lo+chunk, n))
		}
		return
	}
	var (
		next     atomic.Int64
		wg       sync.WaitGroup
		mu       sync.Mutex
		panicked bool
		value    any
	)
	for w := range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			defer func() {
				if r := recover(); r != nil {
					next.Store(int64(n))
					mu.Lock()
					if !panicked {
						panicked, value = true, r
					}
					mu.Unlock()
				}
			}()
			for {
				lo := int(next.Add(int64(chunk))) - chunk
				if lo >= n {
					return
				}
				fn(w, lo, min(lo+chunk, n))
			}
		}()
	}
	wg.Wait()
	if panicked {
		panic(value)
	}
}

// entry is a hash and the passage it belongs to, for grouping by hash.
type entry struct {
	key uint64
	id  uint32
}

func cmpEntry(a, b entry) int {
	switch {
	case a.key < b.key:
		return -1
	case a.key > b.key:
		return 1
	case a.id < b.id:
		return -1
	case a.id > b.id:
		return 1
	}
	return 0
}

// radixMin is the least number of entries sortEntries partitions by radix
// rather than sorting by comparison.
const radixMin = 1 << 8

// sortEntries sorts e by key, then id. Inputs of radixMin entries or more,
// of uniform keys (hashes), are partitioned by the top bits of the key in
// one counting pass into tmp, about one entry per partition, and each small
// partition is then sorted on its own: two passes over the data instead of
// log n comparisons per entry. It returns the sorted slice, which is
// either e or tmp[:len(e)]; tmp must have room for len(e) entries when
// len(e) >= radixMin.
func sortEntries(e, tmp []entry) []entry {
	if len(e) < radixMin {
		slices.SortFunc(e, cmpEntry)
		return e
	}
	radixBits := min(bits.Len(uint(len(e))), 16)
	start := make([]int32, 1<<radixBits+1)
	for _, x := range e {
		start[x.key>>(64-radixBits)+1]++
	}
	for i := 1; i < len(start); i++ {
		start[i] += start[i-1]
	}
	out := tmp[:len(e)]
	pos := slices.Clone(start)
	for _, x := range e {
		p := x.key >> (64 - radixBits)
		out[pos[p]] = x
		pos[p]++
	}
	for p := 0; p < 1<<radixBits; p++ {
		part := out[start[p]:start[p+1]]
		if len(part) <= 24 {
			insertionSort(part)
		} else {
			slices.SortFunc(part, cmpEntry)
		}
	}
	return out
}

func insertionSort(e []entry) {
	for i := 1; i < len(e); i++ {
		x := e[i]
		j := i
		for j > 0 && cmpEntry(e[j-1], x) > 0 {
			e[j] = e[j-1]
			j--
		}
		e[j] = x
	}
}
