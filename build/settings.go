package build

import (
	"errors"
	"fmt"
)

// Settings are every knob that changes the passages a build makes, so that
// a bundle can record them and a cache can key on them. The zero value is
// not valid: start from DefaultSettings.
type Settings struct {
	// AimTokens is the size a long section is packed towards.
	AimTokens int `json:"aim_tokens"`
	// MaxTokens is the hard limit: no passage is longer.
	MaxTokens int `json:"max_tokens"`
	// MinTokens is the size under which a section joins a neighbour.
	MinTokens int `json:"min_tokens"`
	// Tokenizer names the BPE encoding tokens are counted in.
	Tokenizer string `json:"tokenizer"`
	// BoilerplateShare and BoilerplateMinPages decide site boilerplate: a
	// prose block found on more than BoilerplateShare of all pages, and on
	// at least BoilerplateMinPages pages, is dropped from every page.
	BoilerplateShare    float64 `json:"boilerplate_share"`
	BoilerplateMinPages int     `json:"boilerplate_min_pages"`
}

// DefaultSettings returns the settings kbc uses when a project sets none.
//
// The budget follows common practice for retrieval passages, with no single
// source: 300 tokens (about 220 English words) is within the 200-400 range
// most retrieval set-ups use, and 512 is the input limit of many embedding
// models of the BERT family, so no passage is cut short by them. MinTokens
// 48 (about 35 words, two or three sentences) is our judgement: below it a
// section is usually a lead-in ("The following options are available:")
// that means little on its own, while a real short answer still passes; on
// the real corpora a section split at every heading gives 23-43% passages
// under 50 words (PERF-FLOOR.md, section 3). The cl100k_base encoding is
// the one of OpenAI's current embedding models. The boilerplate thresholds
// are our judgement too: a paragraph on over 30% of pages (and on at least
// 3) is navigation, a banner or a footer, not content.
func DefaultSettings() Settings {
	return Settings{
		AimTokens:           300,
		MaxTokens:           512,
		MinTokens:           48,
		Tokenizer:           "cl100k_base",
		BoilerplateShare:    0.3,
		BoilerplateMinPages: 3,
	}
}

// minMaxTokens is the smallest MaxTokens allowed: a cut code block must still
// fit its fences and at least a few tokens of code.
const minMaxTokens = 64

// Validate reports every setting that is out of range, joined, or nil when
// the settings can be used.
func (s Settings) Validate() error {
	var errs []error
	bad := func(format string, args ...any) {
		errs = append(errs, fmt.Errorf("settings: "+format, args...))
	}
	if s.MaxTokens < minMaxTokens {
		bad("max_tokens is %d, must be at least %d", s.MaxTokens, minMaxTokens)
	}
	if s.AimTokens < 1 || s.AimTokens > s.MaxTokens {
		bad("aim_tokens is %d, must be from 1 to max_tokens (%d)", s.AimTokens, s.MaxTokens)
	}
	if s.MinTokens < 0 || s.MinTokens > s.AimTokens {
		bad("min_tokens is %d, must be from 0 to aim_tokens (%d)", s.MinTokens, s.AimTokens)
	}
	if s.Tokenizer != "cl100k_base" {
		bad("tokenizer %q not supported (known: cl100k_base)", s.Tokenizer)
	}
	// The negated test also rejects NaN.
	if !(s.BoilerplateShare > 0 && s.BoilerplateShare <= 1) {
		bad("boilerplate_share is %v, must be above 0 and at most 1", s.BoilerplateShare)
	}
	if s.BoilerplateMinPages < 2 {
		bad("boilerplate_min_pages is %d, must be at least 2", s.BoilerplateMinPages)
	}
	return errors.Join(errs...)
}
