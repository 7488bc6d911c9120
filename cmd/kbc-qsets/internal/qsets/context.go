package qsets

import (
	"slices"
	"time"

	"github.com/kbc-project/kbc/bundle"
)

// ContextShare is how much of the assembled contexts of a set answers its
// questions.
type ContextShare struct {
	Questions int     // questions with at least one judged section
	Blocks    float64 // mean blocks per context
	Relevant  float64 // share of all blocks that hold a judged section
	Answered  float64 // share of questions whose context holds one
	Tokens    float64 // mean tokens per context
}

// MeasureContext assembles the context of every judged question of s on
// b within budget tokens, choosing passages with relevance weight lambda
// (1: plain top hits by score), and counts the blocks that hold a judged
// section. Freshness is judged at now, so the figures do not move with
// the clock.
func MeasureContext(b *bundle.Bundle, s *Set, budget int, lambda float64, now time.Time) (ContextShare, error) {
	var cs ContextShare
	var blocks, relevant, answered, tokens int
	for _, q := range s.Queries {
		if len(q.Sections) == 0 {
			continue
		}
		c, err := b.Context(q.Text, bundle.ContextOptions{SearchOptions: bundle.SearchOptions{Now: now}, Budget: budget, Lambda: lambda})
		if err != nil {
			return cs, err
		}
		cs.Questions++
		tokens += c.Tokens
		hit := false
		for _, blk := range c.Blocks {
			blocks++
			if _, ok := slices.BinarySearch(q.Sections, blk.Cite); ok {
				relevant++
				hit = true
			}
		}
		if hit {
			answered++
		}
	}
	if cs.Questions == 0 {
		return cs, nil
	}
	n := float64(cs.Questions)
	cs.Blocks, cs.Answered, cs.Tokens = float64(blocks)/n, float64(answered)/n, float64(tokens)/n
	if blocks > 0 {
		cs.Relevant = float64(relevant) / float64(blocks)
	}
	return cs, nil
}
