package main

import (
	"context"
	"encoding/json"
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

func openStore(ctx context.Context, name, loc string, stderr io.Writer) (*store.Store, bool) {
	s, err := store.Open(ctx, loc)
	if err != nil {
		fmt.Fprintf(stderr, "kbc %s: %v\n", name, err)
		return nil, false
	}
	return s, true
}

func runPublish(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("publish", "publish OUT DEST [--tag NAME]...  |  publish --rollback ID DEST",
		"Publish uploads the bundle in OUT to the store DEST as a version named by its bundle id,\n"+
			"writing only objects that are not there yet, and then moves the pointer \"latest\" (or\n"+
			"DEST's :TAG) and each --tag to it. If another publisher moved a pointer meanwhile,\n"+
			"nothing is overwritten and publish exits 1; run it again.\n"+
			"With --rollback ID it uploads nothing and points latest (or --tag) at the stored\n"+
			"version ID (at least 8 leading hex digits).\n\n"+storeKinds,
		"kbc publish out s3://docs-bundles/handbook?region=eu-west-1 --tag release-7", stderr)
	var tags multiFlag
	fs.Var(&tags, "tag", "also point `NAME` at the version; repeatable")
	rollback := fs.String("rollback", "", "point latest (or the one --tag) at the stored version `ID` instead of publishing")
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
		s, ok := openStore(ctx, "publish", pos[0], stderr)
		if !ok {
			return exitFailure
		}
		defer s.Close()
		p, err := s.Point(ctx, strings.Join(tags, ""), *rollback)
		if err != nil {
			fmt.Fprintf(stderr, "kbc publish: %v\n", err)
			return exitFailure
		}
		fmt.Fprintf(stdout, "%s -> %s (was %s)\n", p.Name, p.BundleID, orDash(p.Previous))
		return exitOK
	}
	if len(pos) != 2 {
		return badUsage(fs, stderr, "want a bundle folder and a store")
	}
	s, ok := openStore(ctx, "publish", pos[1], stderr)
	if !ok {
		return exitFailure
	}
	defer s.Close()
	res, err := s.Publish(ctx, pos[0], store.PublishOptions{Pointers: tags})
	if err != nil {
		fmt.Fprintf(stderr, "kbc publish: %v\n", err)
		return exitFailure
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
	fs := newFlags("pull", "pull SRC DIR [--tag NAME | --id ID]",
		"Pull downloads a version from the store SRC into a new folder beside DIR, checks every\n"+
			"file's SHA-256 against the bundle's manifest, and only then swaps it into DIR. On any\n"+
			"mismatch it names the file, exits 1 and leaves DIR as it was. Without --tag or --id it\n"+
			"pulls what \"latest\" (or SRC's :TAG) names. The id names the passages only; --digest\n"+
			"(printed by kbc publish) pins every file of the bundle.\n\n"+storeKinds,
		"kbc pull oci://registry.example.com/docs/handbook:stable /srv/assistant/bundle", stderr)
	tag := fs.String("tag", "", "pull the version the pointer `NAME` names")
	id := fs.String("id", "", "pull the version `ID` (at least 8 leading hex digits)")
	digest := fs.String("digest", "", "fail unless the bundle's files digest is `sha256:HEX` (pins every file)")
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
	s, ok := openStore(ctx, "pull", pos[0], stderr)
	if !ok {
		return exitFailure
	}
	defer s.Close()
	m, err := s.Pull(ctx, pos[1], store.Ref{Pointer: *tag, ID: *id, Digest: *digest})
	if err != nil {
		fmt.Fprintf(stderr, "kbc pull: %v\n", err)
		return exitFailure
	}
	fmt.Fprintf(stdout, "pulled %s into %s (%d passages); every file matches the manifest\n", m.BundleID, pos[1], m.Counts["passages"])
	return exitOK
}

func runVersions(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("versions", "versions STORE [--json]",
		"Versions lists the bundles in the store, newest first: id, time, source commit, counts\n"+
			"and the pointers that name each. An incomplete version (an interrupted publish) is\n"+
			"marked so.\n\n"+storeKinds,
		"kbc versions ./bundles --json", stderr)
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
	s, ok := openStore(ctx, "versions", pos[0], stderr)
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
		enc := json.NewEncoder(stdout)
		enc.SetIndent("", "  ")
		enc.Encode(vs)
		return exitOK
	}
	if len(vs) == 0 {
		fmt.Fprintf(stdout, "no versions in %s\n", s)
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
	fs := newFlags("prune", "prune STORE --keep N",
		"Prune removes the versions beyond the N newest, except any a pointer names and any\n"+
			"whose upload is not complete.\n\n"+storeKinds,
		"kbc prune ./bundles --keep 10", stderr)
	keep := fs.Int("keep", -1, "number of newest versions to keep (required)")
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
	s, ok := openStore(ctx, "prune", pos[0], stderr)
	if !ok {
		return exitFailure
	}
	defer s.Close()
	removed, err := s.Prune(ctx, *keep)
	for _, id := range removed {
		fmt.Fprintf(stdout, "removed %s\n", id)
	}
	if err != nil {
		fmt.Fprintf(stderr, "kbc prune: %v\n", err)
		return exitFailure
	}
	fmt.Fprintf(stdout, "%d version(s) removed\n", len(removed))
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
