package fresh_test

import (
	"context"
	"errors"
	"fmt"
	"log"
	"time"

	"github.com/kbc-project/kbc/build/fresh"
	"github.com/kbc-project/kbc/sources"
)

func ExampleParseDate() {
	for _, s := range []string{
		"2026-10-14",                // a date: midnight UTC
		"2026-08-19 14:05:00 +0200", // git's form, and YAML front matter's
		"1996-12-19T16:39:57-08:00", // RFC 3339
		"1990-12-31T23:59:60Z",      // a leap second: the next minute
		"2026-08-19T14:05:00",       // no zone: UTC
		"2026-02-29",                // no such day
		"0001-01-01T00:00:00Z",      // the zero date: refused
	} {
		t, err := fresh.ParseDate(s)
		if err != nil {
			fmt.Println("error:", err)
			continue
		}
		fmt.Println(t.Format(time.RFC3339))
	}
	// Output:
	// 2026-10-14T00:00:00Z
	// 2026-08-19T12:05:00Z
	// 1996-12-20T00:39:57Z
	// 1991-01-01T00:00:00Z
	// 2026-08-19T14:05:00Z
	// error: date "2026-02-29": day 29 out of range for 2026-02
	// error: date "0001-01-01T00:00:00Z": the zero date 0001-01-01T00:00:00Z is a placeholder, not a date
}

func ExampleParseDuration() {
	for _, s := range []string{"90d", "12w", "6m", "1y", "2 weeks", "90"} {
		d, err := fresh.ParseDuration(s)
		if err != nil {
			fmt.Println("error:", err)
			continue
		}
		fmt.Printf("%s = %d days, written %s\n", s, d.Days, d)
	}
	// Output:
	// 90d = 90 days, written 90d
	// 12w = 84 days, written 12w
	// 6m = 180 days, written 180d
	// 1y = 365 days, written 1y
	// 2 weeks = 14 days, written 2w
	// error: duration "90": missing unit: d (days), w (weeks), m (30-day months) or y (365-day years)
}

func ExampleEvaluate() {
	src := []byte(`---
title: Replacing a tide gauge sensor
updated: 2026-03-02 09:30:00 +0100
owner: field-ops
review_every: 6m
expires: not yet
---
# Replacing a tide gauge sensor
`)
	doc, err := sources.Parse("field/sensor-swap.md", src)
	if err != nil {
		log.Fatal(err)
	}
	policy := fresh.DefaultPolicy()
	policy.MaxAge = []fresh.AgeRule{{Pattern: "field/**", MaxAge: fresh.Duration{Days: 90}}}
	now := time.Date(2026, 8, 15, 0, 0, 0, 0, time.UTC)

	info, warnings := fresh.Evaluate(doc, nil, now, policy)
	fmt.Println("updated:  ", info.Updated.Format(time.RFC3339), "from", info.UpdatedSource)
	fmt.Println("review by:", info.ReviewBy.Format(time.RFC3339), "after", info.Period, "from", info.PeriodSource)
	fmt.Println("status:   ", info.Status, "at", info.AgeDays, "days old")
	for _, w := range warnings {
		fmt.Println(w)
	}
	// Output:
	// updated:   2026-03-02T08:30:00Z from front matter: updated
	// review by: 2026-08-29T08:30:00Z after 180d from front matter: review_every
	// status:    due-soon at 165 days old
	// field/sensor-swap.md:6: front matter expires: date "not yet": want YYYY-MM-DD, or YYYY-MM-DD, T or a space, hh:mm:ss[.fraction], and an optional zone Z, +hh:mm or +hhmm; ignored
}

// ExampleGitDates dates a whole documentation tree with one git run and
// falls back on file times when there is no git history. It has no
// output: it reads the real folder it runs in.
func ExampleGitDates() {
	dates, err := fresh.GitDates(context.Background(), "docs")
	if errors.Is(err, fresh.ErrShallow) {
		log.Print(err) // dates are usable, but only upper bounds for some files
	} else if err != nil {
		log.Fatal(err)
	}
	doc := &sources.Document{Path: "install.md", ModTime: time.Now()}
	info, _ := fresh.Evaluate(doc, dates, time.Now(), fresh.Policy{})
	fmt.Println(info.UpdatedSource, info.Status)
}
