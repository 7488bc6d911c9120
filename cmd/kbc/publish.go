package main

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"os/signal"
	"path/filepath"
	"strings"
	"syscall"

	"github.com/kbc-project/kbc/bundle"
	"github.com/kbc-project/kbc/bundle/store"
	"github.com/kbc-project/kbc/internal/printable"
	"github.com/kbc-project/kbc/sources"
)

// storeKinds is the part of every store command's help that names the stores.
const storeKinds = "A store is a folder (or file:///path), s3://BUCKET/PREFIX?endpoint=URL&use_path_style=true&region=R\n" +
	"(credentials from AWS_* variables or ~/.aws), or oci://HOST[:PORT]/REPO[:TAG] (credentials\n" +
	"from the Docker configuration; plain HTTP on 127.0.0.1 and localhost)."

// storeContext returns a context cancelled by Ctrl-C or SIGTERM (what a
// service manager or CI runner sends), so an interrupted transfer stops
// cleanly: no pointer moved, no temporary folder left.
func storeContext() (context.Context, context.CancelFunc) {
	return signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
}

// openStore opens the store at loc for the command name. A command that
// only reads a store (existing) is told when there is none, so that a
// mistyped location is not taken for an empty store.
func openStore(ctx context.Context, name, loc string, existing bool, stderr io.Writer) (*store.Store, bool) {
	open := store.Open
	if existing {
		open = store.OpenExisting
	}
	s, err := open(ctx, loc)
	if errors.Is(err, store.ErrNoStore) {
		fmt.Fprintf(stderr, "kbc %s: no such store %s; check the location, or publish a bundle there first: kbc publish OUT %s\n", name, printable.Quote(loc), printable.Quote(loc))
		return nil, false
	}
	if err != nil {
		fmt.Fprintf(stderr, "kbc %s: %v\n", name, err)
		return nil, false
	}
	return s, true
}

// printJSON writes v as indented JSON, the form of every --json output.
func printJSON(w io.Writer, v any) {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	enc.Encode(v)
}

func runPublish(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("publish", "publish OUT DEST [--tag NAME]... [--json]  |  publish --rollback ID DEST",
		"Publish uploads the bundle in OUT to the store DEST as a version named by its bundle id,\n"+
			"writing only objects that are not there yet, and then moves the pointer \"latest\" (or\n"+
			"DEST's :TAG) and each --tag to it. If another publisher moved a pointer meanwhile,\n"+
			"nothing is overwritten and publish exits 1; run it again.\n"+
			"With --rollback ID it uploads nothing and points latest (or --tag) at the stored\n"+
			"version ID (at least 8 leading hex digits).\n\n"+storeKinds,
		"kbc publish out s3://docs-bundles/handbook?region=eu-west-1 --tag release-7\n"+
			"kbc publish --rollback 3f2a9c1d ./bundles", stderr)
	var tags multiFlag
	fs.Var(&tags, "tag", "also point `NAME` at the version; repeatable")
	rollback := fs.String("rollback", "", "point latest (or the one --tag) at the stored version `ID` instead of publishing")
	asJSON := fs.Bool("json", false, "print the result as JSON")
	pos, code := parseArgs(fs, args, stdout)
	if code >= 0 {
		return code
	}
	ctx, cancel := storeContext()
	defer cancel()
	if *rollback != "" {
		if len(pos) != 1 {
			return badUsage(fs, stderr, "with --rollback, want only the store")
		}
		if len(tags) > 1 {
			return badUsage(fs, stderr, "with --rollback, give at most one --tag")
		}
		s, ok := openStore(ctx, "publish", pos[0], true, stderr)
		if !ok {
			return exitFailure
		}
		defer s.Close()
		p, err := s.Point(ctx, strings.Join(tags, ""), *rollback)
		if err != nil {
			fmt.Fprintf(stderr, "kbc publish: %v\n", err)
			return exitFailure
		}
		if *asJSON {
			printJSON(stdout, p)
			return exitOK
		}
		fmt.Fprintf(stdout, "%s -> %s (was %s)\n", p.Name, p.BundleID, orDash(p.Previous))
		return exitOK
	}
	if len(pos) != 2 {
		return badUsage(fs, stderr, "want a bundle folder and a store")
	}
	s, ok := openStore(ctx, "publish", pos[1], false, stderr)
	if !ok {
		return exitFailure
	}
	defer s.Close()
	res, err := s.Publish(ctx, pos[0], store.PublishOptions{Pointers: tags})
	if err != nil {
		fmt.Fprintf(stderr, "kbc publish: %v\n", err)
		return exitFailure
	}
	if *asJSON {
		printJSON(stdout, struct {
			Store string `json:"store"`
			*store.PublishResult
		}{s.String(), res})
		return exitOK
	}
	fmt.Fprintf(stdout, "published %s to %s\n", res.BundleID, s)
	fmt.Fprintf(stdout, "  objects   %d uploaded (%s), %d already there\n", res.Uploaded, sources.SizeString(res.UploadedBytes), res.Skipped)
	if res.FilesDigest != "" {
		fmt.Fprintf(stdout, "  digest    %s (kbc pull --digest pins every file)\n", res.FilesDigest)
	}
	for _, p := range res.Pointers {
		fmt.Fprintf(stdout, "  pointer   %s -> %s (was %s)\n", p.Name, shortID(p.BundleID), orDash(shortID(p.Previous)))
	}
	return exitOK
}

func runPull(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("pull", "pull SRC DIR [--tag NAME | --id ID] [--json]",
		"Pull downloads a version from the store SRC into a new folder beside DIR, checks every\n"+
			"file's SHA-256 against the bundle's manifest, and only then swaps it into DIR. On any\n"+
			"mismatch it names the file, exits 1 and leaves DIR as it was. Without --tag or --id it\n"+
			"pulls what \"latest\" (or SRC's :TAG) names. The id names the passages only; --digest\n"+
			"(printed by kbc publish) pins every file of the bundle. The folders above DIR are\n"+
			"created when missing.\n\n"+storeKinds,
		"kbc pull oci://registry.example.com/docs/handbook:stable /srv/assistant/bundle\n"+
			"kbc pull ./bundles /srv/assistant/bundle --tag release-7", stderr)
	tag := fs.String("tag", "", "pull the version the pointer `NAME` names")
	id := fs.String("id", "", "pull the version `ID` (at least 8 leading hex digits)")
	digest := fs.String("digest", "", "fail unless the bundle's files digest is `sha256:HEX` (pins every file)")
	asJSON := fs.Bool("json", false, "print the result as JSON")
	pos, code := parseArgs(fs, args, stdout)
	if code >= 0 {
		return code
	}
	if len(pos) != 2 {
		return badUsage(fs, stderr, "want a store and a folder")
	}
	if *tag != "" && *id != "" {
		return badUsage(fs, stderr, "give --tag or --id, not both")
	}
	// Before any download: DIR may be replaced only when it is a bundle.
	if err := bundle.CheckTarget(filepath.Clean(pos[1])); err != nil {
		fmt.Fprintf(stderr, "kbc pull: %s: %v\n", pos[1], err)
		return exitFailure
	}
	ctx, cancel := storeContext()
	defer cancel()
	s, ok := openStore(ctx, "pull", pos[0], true, stderr)
	if !ok {
		return exitFailure
	}
	defer s.Close()
	// Like mkdir -p for the folder that will hold the bundle, as build does.
	if err := os.MkdirAll(filepath.Dir(filepath.Clean(pos[1])), 0o755); err != nil {
		fmt.Fprintf(stderr, "kbc pull: cannot create the folder for %s: %v\n", pos[1], sources.UnwrapPath(err))
		return exitFailure
	}
	m, err := s.Pull(ctx, pos[1], store.Ref{Pointer: *tag, ID: *id, Digest: *digest})
	if err != nil {
		fmt.Fprintf(stderr, "kbc pull: %v\n", err)
		return exitFailure
	}
	if *asJSON {
		printJSON(stdout, struct {
			BundleID    string `json:"bundle_id"`
			Dir         string `json:"dir"`
			Passages    int    `json:"passages"`
			FilesDigest string `json:"files_digest,omitempty"`
		}{m.BundleID, pos[1], m.Counts["passages"], m.FilesDigest})
		return exitOK
	}
	fmt.Fprintf(stdout, "pulled %s into %s (%d passages); every file matches the manifest\n", m.BundleID, pos[1], m.Counts["passages"])
	return exitOK
}

func runVersions(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("versions", "versions STORE [--json]",
		"Versions lists the bundles in the store, newest first: id, time, source commit, counts\n"+
			"and the pointers that name each. An incomplete version (an interrupted publish) is\n"+
			"marked so. A store that does not exist exits 1 (\"no such store\"); one with nothing\n"+
			"published yet says \"no versions yet\".\n\n"+storeKinds,
		"kbc versions ./bundles\n"+
			"kbc versions oci://registry.example.com/docs/handbook --json", stderr)
	asJSON := fs.Bool("json", false, "print the versions as a JSON array")
	pos, code := parseArgs(fs, args, stdout)
	if code >= 0 {
		return code
	}
	if len(pos) != 1 {
		return badUsage(fs, stderr, "want one store")
	}
	ctx, cancel := storeContext()
	defer cancel()
	s, ok := openStore(ctx, "versions", pos[0], true, stderr)
	if !ok {
		return exitFailure
	}
	defer s.Close()
	vs, err := s.Versions(ctx)
	if err != nil {
		fmt.Fprintf(stderr, "kbc versions: %v\n", err)
		return exitFailure
	}
	if *asJSON {
		if vs == nil {
			vs = []store.Version{}
		}
		printJSON(stdout, vs)
		return exitOK
	}
	if len(vs) == 0 {
		fmt.Fprintf(stdout, "no versions yet in %s (publish one: kbc publish OUT %s)\n", s, s)
		return exitOK
	}
	for _, v := range vs {
		when := v.PublishedAt
		if when.IsZero() {
			when = v.BuiltAt
		}
		t := "-"
		if !when.IsZero() {
			t = when.UTC().Format("2006-01-02T15:04:05Z")
		}
		state := strings.Join(v.Pointers, ",")
		if !v.Complete {
			state = "INCOMPLETE"
		}
		fmt.Fprintf(stdout, "%s  %s  commit %-12.12s  %6d passages %8d tokens  %s\n",
			shortID(v.ID), t, printable.Quote(orDash(v.SourceCommit)), v.Counts["passages"], v.Counts["tokens"], state)
	}
	return exitOK
}

func runPrune(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("prune", "prune STORE --keep N [--json]",
		"Prune removes the versions beyond the N newest, except any a pointer names and any\n"+
			"whose upload is not complete.\n\n"+storeKinds,
		"kbc prune ./bundles --keep 10\n"+
			"kbc prune s3://docs-bundles/handbook?region=eu-west-1 --keep 5", stderr)
	keep := fs.Int("keep", -1, "number of newest versions to keep (required)")
	asJSON := fs.Bool("json", false, "print the versions removed as JSON")
	pos, code := parseArgs(fs, args, stdout)
	if code >= 0 {
		return code
	}
	if len(pos) != 1 {
		return badUsage(fs, stderr, "want one store")
	}
	if *keep < 0 {
		return badUsage(fs, stderr, "--keep N is required (0 or more)")
	}
	ctx, cancel := storeContext()
	defer cancel()
	s, ok := openStore(ctx, "prune", pos[0], true, stderr)
	if !ok {
		return exitFailure
	}
	defer s.Close()
	removed, err := s.Prune(ctx, *keep)
	if *asJSON {
		// What was removed before an error is printed too: it is gone.
		if removed == nil {
			removed = []string{}
		}
		printJSON(stdout, struct {
			Store   string   `json:"store"`
			Removed []string `json:"removed"`
		}{s.String(), removed})
	} else {
		for _, id := range removed {
			fmt.Fprintf(stdout, "removed %s\n", id)
		}
	}
	if err != nil {
		fmt.Fprintf(stderr, "kbc prune: %v\n", err)
		return exitFailure
	}
	if !*asJSON {
		fmt.Fprintf(stdout, "%d version(s) removed\n", len(removed))
	}
	return exitOK
}

func shortID(id string) string {
	if len(id) > 12 {
		return id[:12]
	}
	return id
}

func orDash(s string) string {
	if s == "" {
		return "-"
	}
	return s
}
