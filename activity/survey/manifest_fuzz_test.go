package survey

import (
	"bytes"
	"strings"
	"testing"
)

// FuzzParseManifest feeds arbitrary bytes to both manifest parsers (CSV
// and TOML): they never panic, and an error names the manifest.
func FuzzParseManifest(f *testing.F) {
	f.Add([]byte("name,data,star_file,periods,teff,rotation_period\nTessaly-7,data/t.csv,stars/t.toml,12.1;33.4,,\nCorvane-3,data/c.fits,,,5150,8.6\n"))
	f.Add([]byte("[[star]]\nname = \"Tessaly-7\"\ndata = \"data/t.csv\"\nperiods = [12.1, 33.4]\n"))
	f.Add([]byte("name,data\nA,a.csv\nA,b.csv\n"))
	f.Add([]byte("name,data,periods\nA,a.csv,-3\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		if _, err := ParseManifestCSV(bytes.NewReader(data), "fuzz.csv"); err != nil && !strings.Contains(err.Error(), "fuzz.csv") {
			t.Fatalf("CSV: the error does not name the manifest: %v", err)
		}
		if _, err := ParseManifestTOML(data, "fuzz.toml"); err != nil && !strings.Contains(err.Error(), "fuzz.toml") {
			t.Fatalf("TOML: the error does not name the manifest: %v", err)
		}
	})
}
