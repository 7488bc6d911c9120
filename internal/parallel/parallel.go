// Package parallel runs independent pieces of work on all cores: the one
// worker pool of kbc for work that cannot fail.
//
// For hands out indices from one atomic counter, so a slow item holds up
// one worker, not a fixed share of the work. Callers write only slot i of
// whatever fn fills, so results never depend on the scheduling.
//
// Three other shapes are used on purpose, each where this one fits worse:
// work that can fail or must stop on cancellation uses
// golang.org/x/sync/errgroup (build.Run's stages, the stores' transfers);
// bundle's JSON Lines encoder gives each worker one contiguous run of
// passages, so the lines of a run share one buffer; and build/dedupe, a
// leaf that imports nothing of ours, hands out chunks with the worker's
// number, for per-worker scratch space in its hot loops.
package parallel

import (
	"runtime"
	"sync"
	"sync/atomic"
)

// For calls fn(i) for each i in [0, n) on up to GOMAXPROCS goroutines and
// returns when all calls have returned.
func For(n int, fn func(i int)) {
	workers := min(runtime.GOMAXPROCS(0), n)
	if workers <= 1 {
		for i := range n {
			fn(i)
		}
		return
	}
	var next atomic.Int64
	var wg sync.WaitGroup
	for range workers {
		wg.Go(func() {
			for {
				i := int(next.Add(1)) - 1
				if i >= n {
					return
				}
				fn(i)
			}
		})
	}
	wg.Wait()
}
