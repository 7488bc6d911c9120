package main

import (
	"os"
	"runtime/debug"
)

// briefMemoryLimit is where the collector comes back on for a brief
// command: far above what one search of a large bundle allocates (about
// 10 MB on 30,000 passages), low enough to bound a pathological one.
const briefMemoryLimit = 512 << 20

// tuneGC turns the garbage collector off for a brief command, up to a
// memory limit past which it runs as usual. In such a process collecting
// costs more than the memory it frees: on a 29,573-passage bundle a
// query's median wall time fell from 82 to 73 ms (15 runs, each started
// when the machine was idle; kbc-bench's query table measures the same).
// This is the "GOGC=off with a memory limit" setting of the Go GC guide
// (go.dev/doc/gc-guide, "Memory limit"). A GOGC or GOMEMLIMIT the user set
// wins. Only main calls it, never the tests, which run every command in
// one long process.
func tuneGC(args []string) {
	// The commands whose process lives tens of milliseconds and allocates
	// little: a search, or a context assembled from one.
	if len(args) == 0 || (args[0] != "query" && args[0] != "context") {
		return
	}
	if os.Getenv("GOGC") != "" || os.Getenv("GOMEMLIMIT") != "" {
		return
	}
	debug.SetGCPercent(-1)
	debug.SetMemoryLimit(briefMemoryLimit)
}
