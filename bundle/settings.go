package bundle

import (
	"encoding/json"
	"fmt"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/build/dedupe"
	"github.com/kbc-project/kbc/build/fresh"
)

// Settings are every setting that shaped a bundle, and the checks it was
// built with, as kbc records them in the manifest ("settings"): the
// split settings, the walk's filters, the duplicate search, the
// freshness policy and the checks. A bundle judged again later (kbc
// stale OUT) is judged with the same freshness policy and checks.
type Settings struct {
	build.Settings
	Include     []string       `json:"include,omitempty"`
	Exclude     []string       `json:"exclude,omitempty"`
	MaxFileSize int64          `json:"max_file_size"`
	Duplicates  dedupe.Options `json:"duplicates"`
	Freshness   fresh.Policy   `json:"freshness"`
	// Checks are left out of the manifest when none is set.
	Checks build.Checks `json:"checks,omitzero"`
}

// NewSettings returns the settings of a build run with opts and checks.
func NewSettings(opts build.Options, checks build.Checks) *Settings {
	return &Settings{Settings: opts.Settings, Include: opts.Walk.Include, Exclude: opts.Walk.Exclude,
		MaxFileSize: opts.Walk.MaxSize, Duplicates: opts.Dedupe, Freshness: opts.Fresh, Checks: checks}
}

// BuildSettings returns the settings recorded in the manifest, or nil
// when it records none (a bundle written by another program).
func (m *Manifest) BuildSettings() (*Settings, error) {
	if len(m.Settings) == 0 {
		return nil, nil
	}
	var s Settings
	if err := json.Unmarshal(m.Settings, &s); err != nil {
		return nil, fmt.Errorf("%s: settings: %v", ManifestFile, err)
	}
	return &s, nil
}
