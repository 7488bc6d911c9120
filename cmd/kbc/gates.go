package main

import (
	"fmt"
	"io"

	"github.com/kbc-project/kbc/build"
)

// exitGate is the exit code when a check fails.
const exitGate = 3

// printFailures prints one line per failed check and returns exitGate,
// or exitOK when every check held.
func printFailures(failures []build.CheckFailure, stderr io.Writer) int {
	for _, f := range failures {
		fmt.Fprintf(stderr, "kbc: %s\n", f.Msg)
	}
	if len(failures) > 0 {
		return exitGate
	}
	return exitOK
}
