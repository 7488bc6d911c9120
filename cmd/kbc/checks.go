package main

import (
	"fmt"
	"io"
	"os"

	"github.com/kbc-project/kbc/build"
)

// exitCheck is the exit code when a check fails.
const exitCheck = 3

// printFailures prints one line per failed check and returns exitCheck,
// or exitOK when every check held.
func printFailures(failures []build.CheckFailure, stderr io.Writer) int {
	p := paintFor(stderr, os.Getenv)
	for _, f := range failures {
		fmt.Fprintln(stderr, p.fail("kbc: "+f.Msg))
	}
	if len(failures) > 0 {
		return exitCheck
	}
	return exitOK
}
