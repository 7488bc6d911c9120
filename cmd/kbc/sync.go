package main

import (
	"encoding/json"
	"fmt"
	"io"
	"strings"
	"time"

	"github.com/kbc-project/kbc/bundle/pgsync"
)

func runSync(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("sync", "sync OUT [DATABASE] [--schema NAME] [--wait DURATION] [--embed-cmd CMD] [--json]",
		"Sync brings a PostgreSQL database to exactly the passages of the bundle in OUT, in one\n"+
			"transaction: readers see the old bundle or the new one, never a mix, and a sync that\n"+
			"fails or is killed leaves the old one whole. Tables are created in --schema on first\n"+
			"use. Only rows that differ are written; the bundle already there writes nothing.\n"+
			"DATABASE is a postgres:// URL or a libpq \"host=... dbname=...\" string; without it the\n"+
			"PG* variables and the service file are used. sslmode follows libpq. Passwords are\n"+
			"never printed.\n\n"+
			"With --embed-cmd, passages whose text has no vector yet are written to CMD's standard\n"+
			"input as JSON Lines (id, hash, text, title, heading), --embed-batch at a time, and CMD\n"+
			"answers one {\"id\": ..., \"vector\": [...]} line per passage. Any failure of CMD aborts\n"+
			"the sync.",
		"kbc sync out postgres://kb@db.internal/assist?sslmode=verify-full --embed-cmd \"python3 embed.py\"\n"+
			"kbc sync out --schema kbc_staging --wait 30s --json", stderr)
	schema := fs.String("schema", pgsync.DefaultSchema, "PostgreSQL schema `NAME` that holds the tables")
	wait := fs.Duration("wait", 0, "wait up to `DURATION` for another sync of the schema to finish (0: fail at once)")
	embedCmd := fs.String("embed-cmd", "", "shell `CMD` that turns passages into vectors")
	embedBatch := fs.Int("embed-batch", pgsync.DefaultEmbedBatch, "passages per run of --embed-cmd")
	embedTimeout := fs.Duration("embed-timeout", pgsync.DefaultEmbedTimeout, "longest one run of --embed-cmd may take")
	asJSON := fs.Bool("json", false, "print the result as JSON")
	pos, code := parseArgs(fs, args, stdout)
	if code >= 0 {
		return code
	}
	if len(pos) < 1 || len(pos) > 2 {
		return badUsage(fs, stderr, "want a bundle folder and, unless PG* variables name it, a database")
	}
	if *embedBatch < 1 {
		return badUsage(fs, stderr, "--embed-batch must be at least 1")
	}
	if *embedTimeout <= 0 {
		return badUsage(fs, stderr, "--embed-timeout must be positive")
	}
	if *wait < 0 {
		return badUsage(fs, stderr, "--wait must not be negative")
	}
	if strings.TrimSpace(*embedCmd) == "" && *embedCmd != "" {
		return badUsage(fs, stderr, "--embed-cmd is blank")
	}
	conn := ""
	if len(pos) == 2 {
		conn = pos[1]
	}
	ctx, cancel := storeContext()
	defer cancel()
	res, err := pgsync.Sync(ctx, pos[0], conn, pgsync.Options{
		Schema: *schema, Wait: *wait, EmbedCmd: *embedCmd, EmbedBatch: *embedBatch, EmbedTimeout: *embedTimeout,
	})
	if err != nil {
		fmt.Fprintf(stderr, "kbc sync: %v\n", err)
		return exitFailure
	}
	if *asJSON {
		enc := json.NewEncoder(stdout)
		enc.SetIndent("", "  ")
		enc.Encode(res)
		return exitOK
	}
	if res.Mode == "unchanged" {
		fmt.Fprintf(stdout, "%s already holds bundle %s (schema %s): no row changed\n", res.Database, shortID(res.BundleID), res.Schema)
	} else {
		fmt.Fprintf(stdout, "synced bundle %s to %s (schema %s)\n", shortID(res.BundleID), res.Database, res.Schema)
		fmt.Fprintf(stdout, "  mode      %s (was %s)\n", res.Mode, orDash(shortID(res.Previous)))
		fmt.Fprintf(stdout, "  rows      %d added, %d changed, %d removed; %d passages\n", res.Added, res.Changed, res.Removed, res.Passages)
	}
	if *embedCmd != "" || res.Vectors > 0 {
		fmt.Fprintf(stdout, "  vectors   %d embedded; %d of %d passages have one\n", res.Embedded, res.Vectors, res.Passages)
	}
	fmt.Fprintf(stdout, "  time      %s\n", res.Elapsed.Round(time.Millisecond))
	return exitOK
}
