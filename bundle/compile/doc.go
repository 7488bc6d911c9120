// Package compile compiles a source folder into a bundle folder in one
// call: Build reads the configuration, walks the tree once, leaves a
// bundle whose inputs have not changed as it is (the up-to-date check),
// else runs the pipeline (package build) with the build cache, renders
// the reports, writes the bundle and its delta (package bundle), records
// what it was built from, and evaluates the checks.
//
// It sits above build and bundle, as bundle/pgsync does, and holds what a
// program embedding kbc needs beyond those two: the kbc command keeps
// only its flags, its printing and its exit codes.
//
// A typical use:
//
//	cfg, err := compile.LoadConfig(src, "") // the nearest kbc.toml
//	...
//	res, err := compile.Build(ctx, compile.Job{Src: src, Out: out, Config: cfg, Tool: "myprog v1"})
//	...
//	for _, f := range res.Failures { log.Print(f.Msg) }
//
// Files it writes: the bundle folder (atomically, see bundle.Write), and
// beside it, in bundle.CacheDir(out), the build cache and the record of
// the inputs the bundle was built from.
package compile
