package build

import (
	"encoding/json"
	"fmt"
	"math"
	"testing"
)

func TestSettingsValidate(t *testing.T) {
	tests := []struct {
		name string
		edit func(*Settings)
		want string // "" for valid
	}{
		{"default", func(*Settings) {}, ""},
		{"aim equals max", func(s *Settings) { s.AimTokens = s.MaxTokens }, ""},
		{"no joins", func(s *Settings) { s.MinTokens = 0 }, ""},
		{"max too small", func(s *Settings) { s.MaxTokens, s.AimTokens, s.MinTokens = 32, 20, 5 }, "settings: max_tokens is 32, must be at least 64"},
		{"aim over max", func(s *Settings) { s.AimTokens = 600 }, "settings: aim_tokens is 600, must be from 1 to max_tokens (512)"},
		{"aim zero", func(s *Settings) { s.AimTokens, s.MinTokens = 0, 0 }, "settings: aim_tokens is 0, must be from 1 to max_tokens (512)"},
		{"min over aim", func(s *Settings) { s.MinTokens = 301 }, "settings: min_tokens is 301, must be from 0 to aim_tokens (300)"},
		{"min negative", func(s *Settings) { s.MinTokens = -1 }, "settings: min_tokens is -1, must be from 0 to aim_tokens (300)"},
		{"unknown tokenizer", func(s *Settings) { s.Tokenizer = "o200k_base" }, `settings: tokenizer "o200k_base" not supported (known: cl100k_base)`},
		{"share zero", func(s *Settings) { s.BoilerplateShare = 0 }, "settings: boilerplate_share is 0, must be above 0 and at most 1"},
		{"share NaN", func(s *Settings) { s.BoilerplateShare = math.NaN() }, "settings: boilerplate_share is NaN, must be above 0 and at most 1"},
		{"share over 1", func(s *Settings) { s.BoilerplateShare = 1.5 }, "settings: boilerplate_share is 1.5, must be above 0 and at most 1"},
		{"min pages", func(s *Settings) { s.BoilerplateMinPages = 1 }, "settings: boilerplate_min_pages is 1, must be at least 2"},
		{"zero value", func(s *Settings) { *s = Settings{} }, "settings: max_tokens is 0, must be at least 64\n" +
			"settings: aim_tokens is 0, must be from 1 to max_tokens (0)\n" +
			`settings: tokenizer "" not supported (known: cl100k_base)` + "\n" +
			"settings: boilerplate_share is 0, must be above 0 and at most 1\n" +
			"settings: boilerplate_min_pages is 0, must be at least 2"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			s := DefaultSettings()
			tt.edit(&s)
			err := s.Validate()
			got := ""
			if err != nil {
				got = err.Error()
			}
			if got != tt.want {
				t.Errorf("Validate() = %q, want %q", got, tt.want)
			}
		})
	}
}

func ExampleDefaultSettings() {
	b, err := json.Marshal(DefaultSettings())
	if err != nil {
		panic(err)
	}
	fmt.Println(string(b))
	// Output:
	// {"aim_tokens":300,"max_tokens":512,"min_tokens":48,"tokenizer":"cl100k_base","boilerplate_share":0.3,"boilerplate_min_pages":3}
}
