package compile

import (
	"encoding/json"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"time"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/bundle"
	"github.com/kbc-project/kbc/sources"
)

// Reports are what a bundle's reports say, read back from its folder.
type Reports struct {
	Staleness *build.StalenessReport
	// Divergent counts the divergent copies of the duplicate report.
	Divergent int
	// Secrets counts the credentials the build found, -1 when the bundle
	// has no secrets report (written before it existed).
	Secrets int
}

// CheckInput returns what the checks judge, with the staleness report as
// it stands.
func (r *Reports) CheckInput() build.CheckInput {
	return build.CheckInput{Staleness: r.Staleness.Counts, Divergent: r.Divergent, Secrets: r.Secrets}
}

// ReadReports reads the staleness, duplicate and secrets reports of the
// bundle in dir.
func ReadReports(dir string) (*Reports, error) {
	var st build.StalenessReport
	var dup build.DuplicateReport
	var sec build.SecretsReport
	noSecrets := false // a bundle from before the secrets report
	for name, v := range map[string]any{bundle.StalenessJSON: &st, bundle.DuplicatesJSON: &dup, bundle.SecretsJSON: &sec} {
		data, err := os.ReadFile(filepath.Join(dir, filepath.FromSlash(name)))
		if name == bundle.SecretsJSON && errors.Is(err, fs.ErrNotExist) {
			noSecrets = true
			continue
		}
		if err != nil {
			return nil, fmt.Errorf("bundle %s has no %s (built by an older kbc?): %v", dir, name, sources.UnwrapPath(err))
		}
		if err := json.Unmarshal(data, v); err != nil {
			return nil, fmt.Errorf("%s: %v", filepath.Join(dir, name), err)
		}
	}
	r := &Reports{Staleness: &st, Divergent: len(dup.Divergent), Secrets: sec.Total}
	if noSecrets {
		r.Secrets = -1
	}
	return r, nil
}

// BundleChecks returns the checks a bundle was built with, as its manifest
// records them; none for a bundle from before they were recorded.
func BundleChecks(dir string) (build.Checks, error) {
	m, err := bundle.ReadManifest(dir)
	if err != nil {
		return build.Checks{}, err
	}
	s, err := m.BuildSettings()
	if err != nil || s == nil {
		return build.Checks{}, err
	}
	return s.Checks, nil
}

// ErrNoSecretsReport is returned by Judge when the secrets check is on
// and the bundle has no secrets report (it was built before there was
// one): it must be built again to be checked.
var ErrNoSecretsReport = errors.New("no " + bundle.SecretsJSON + " (built by an older kbc): rebuild it to check for secrets")

// Judge reads the reports of the bundle in dir, judges its staleness again
// at now, and runs checks over them. Checks nil means those the bundle was
// built with (BundleChecks).
func Judge(dir string, now time.Time, checks *build.Checks) (*Reports, []build.CheckFailure, error) {
	reps, err := ReadReports(dir)
	if err != nil {
		return nil, nil, err
	}
	reps.Staleness = reps.Staleness.At(now)
	var c build.Checks
	if checks != nil {
		c = *checks
	} else if c, err = BundleChecks(dir); err != nil {
		return nil, nil, err
	}
	if c.FailOnSecrets && reps.Secrets < 0 {
		return nil, nil, fmt.Errorf("bundle %s has %w", dir, ErrNoSecretsReport)
	}
	return reps, c.Evaluate(reps.CheckInput()), nil
}
