package bundle

import (
	"maps"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestWriteRefusesNonBundleManifest: a folder that holds a file named
// manifest.json is not a bundle for that (a web app has one): Write and
// Install leave it whole and name what they found.
func TestWriteRefusesNonBundleManifest(t *testing.T) {
	for name, manifest := range map[string]string{
		"web app manifest": `{"name": "Polarline Tracker", "start_url": "/", "icons": []}`,
		"not JSON":         "<html>",
		"format only":      `{"format": 1}`,
		"id not hex":       `{"format": 1, "bundle_id": "yes"}`,
	} {
		t.Run(name, func(t *testing.T) {
			site := filepath.Join(t.TempDir(), "site")
			os.MkdirAll(filepath.Join(site, "assets"), 0o755)
			os.WriteFile(filepath.Join(site, ManifestFile), []byte(manifest), 0o644)
			os.WriteFile(filepath.Join(site, "index.html"), []byte("<h1>app</h1>"), 0o644)
			before := treeHashes(t, site)
			_, err := Write(site, toyInput())
			want := "writing bundle " + site + ": refusing to replace " + site + ": not a kbc bundle: its manifest.json"
			if err == nil || !strings.HasPrefix(err.Error(), want) || !strings.Contains(err.Error(), "assets/, index.html, manifest.json") {
				t.Errorf("Write: got %v\nwant %s... naming assets/, index.html, manifest.json", err, want)
			}
			tmp := filepath.Join(filepath.Dir(site), ".site.pull-x")
			mustWrite(t, tmp, toyInput())
			if err := Install(tmp, site); err == nil || !strings.Contains(err.Error(), "not a kbc bundle") {
				t.Errorf("Install: got %v", err)
			}
			if after := treeHashes(t, site); !maps.Equal(before, after) {
				t.Errorf("the folder changed: %v -> %v", before, after)
			}
		})
	}
	t.Run("a bundle is replaced", func(t *testing.T) {
		out := filepath.Join(t.TempDir(), "out")
		mustWrite(t, out, &Input{Passages: genPassages(5, 1), Tool: "old"})
		if err := CheckTarget(out); err != nil {
			t.Fatal(err)
		}
		mustWrite(t, out, toyInput())
	})
}
