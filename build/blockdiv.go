package build

import (
	"strings"

	"github.com/cespare/xxhash/v2"

	"github.com/kbc-project/kbc/build/dedupe"
)

// textBlock is one block of a passage's text as the block-level copy search
// sees it: a paragraph, a list, a fenced code block, or one table row.
type textBlock struct {
	passage int    // index into the passages
	text    string // the block's text
}

// Which blocks the search compares, and which groups it believes. A
// sentence pattern that recurs on many pages ("Changed in version 3.6:
// accepts a path-like object.") is a template, not a copy, and short
// blocks match by shape alone; a copied paragraph or table row sits on a
// few pages. Judgement, tuned on the Python documentation's version
// notes and changelog lines (none of them should count), no source.
const (
	minUnitWords = 12 // a paragraph, list or code block, in words
	minRowWords  = 4  // a table row, in words
	minRowCells  = 3  // a table row, in cells
	maxUnitGroup = 4  // blocks in one group of copies
	maxUnitPairs = 16 // passage pairs one group may report
)

// passageUnits cuts each passage's text back into its blocks: the split
// stage joins blocks with a blank line, a table keeps one row per line and
// a code block sits between fences. Only blocks that can state a figure
// (holding a digit) are kept, since the search is for copies that differ
// in one; code blocks are not, as examples differ in their values by
// design.
func passageUnits(ps []Passage) []textBlock {
	var us []textBlock
	for i := range ps {
		for _, b := range textBlocks(ps[i].Text) {
			if strings.ContainsAny(b, "0123456789") && bigEnough(b) && !strings.HasPrefix(b, "```") {
				us = append(us, textBlock{i, b})
			}
		}
	}
	return us
}

// bigEnough reports whether a block says enough for a copy of it to be
// told from a shared pattern: minUnitWords words, or for a table row
// minRowCells cells and minRowWords words.
func bigEnough(b string) bool {
	n := len(strings.Fields(b))
	if !strings.Contains(b, "\n") && strings.Contains(b, " | ") {
		return n >= minRowWords && strings.Count(b, " | ")+1 >= minRowCells
	}
	return n >= minUnitWords
}

// textBlocks splits a passage text into its blocks, each table row a
// block of its own.
func textBlocks(text string) []string {
	var out []string
	var cur []string
	inCode := false
	flush := func() {
		if len(cur) > 0 {
			out = append(out, strings.Join(cur, "\n"))
			cur = cur[:0]
		}
	}
	for _, line := range strings.Split(text, "\n") {
		t := strings.TrimSpace(line)
		switch {
		case strings.HasPrefix(t, "```"):
			if inCode {
				cur = append(cur, line)
				flush()
			} else {
				flush()
				cur = append(cur, line)
			}
			inCode = !inCode
		case inCode:
			cur = append(cur, line)
		case t == "":
			flush()
		case strings.Contains(t, " | "):
			flush()
			out = append(out, t)
		default:
			cur = append(cur, line)
		}
	}
	flush()
	return out
}

// blockDivergence looks for divergent copies block by block, whatever
// passages the blocks were packed into: a copied paragraph or table row
// that differs in a figure is found even when each page packs it with
// other text and the passages as wholes are far apart. Blocks are compared
// with figures masked (exact copies by hash, near ones by MinHash and
// LSH, as the passage search does); each pair of blocks on different
// pages whose real texts differ in facts alone is reported through
// report, with the passages that hold them and the blocks' own
// differences.
func blockDivergence(ps []Passage, opts dedupe.Options, memo *dedupe.Memo, report func(a, b int, ta, tb string, j float64)) (candidates int, err error) {
	us := passageUnits(ps)
	if len(us) < 2 {
		return 0, nil
	}
	opts.Memo = memo
	opts.Key = func(i int) uint64 { return xxhash.Sum64String(us[i].text) }
	res, err := dedupe.Find(len(us), func(i int) string { return maskFigures(us[i].text) }, opts)
	if err != nil {
		return 0, err
	}
	for _, c := range res.Clusters {
		if len(c.Members) > maxUnitGroup {
			continue // a template, not a copy
		}
		// Members by distinct real text; each pair of variants on
		// different pages is a candidate.
		byText := map[string][]int{}
		var variants []string
		for _, m := range c.Members {
			t := us[m].text
			if byText[t] == nil {
				variants = append(variants, t)
			}
			byText[t] = append(byText[t], m)
		}
		pairs := 0
		for x := 0; x < len(variants) && pairs < maxUnitPairs; x++ {
			for y := x + 1; y < len(variants) && pairs < maxUnitPairs; y++ {
				if !onlyFacts(variants[x], variants[y]) {
					continue
				}
				j := dedupe.Similarity(variants[x], variants[y], opts.Shingle)
				for _, a := range byText[variants[x]] {
					for _, b := range byText[variants[y]] {
						if pairs >= maxUnitPairs {
							break
						}
						pa, pb := us[a].passage, us[b].passage
						if ps[pa].Path == ps[pb].Path {
							continue
						}
						pairs++
						candidates++
						report(pa, pb, us[a].text, us[b].text, j)
					}
				}
			}
		}
	}
	return candidates, nil
}

// onlyFacts reports whether two blocks differ in facts only: every run of
// differing words carries a number, date, version or unit. Sibling pages
// written from one template differ in their subject too ("forbidden ...
// 403" against "unauthorized ... 401"); a copy that went out of date
// differs in the figure alone.
func onlyFacts(a, b string) bool {
	diffs, _ := dedupe.Divergent(a, b)
	for _, d := range diffs {
		if !d.Fact {
			return false
		}
	}
	return len(conflicts(diffs)) > 0
}
