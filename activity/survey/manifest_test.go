package survey

import (
	"errors"
	"path/filepath"
	"strings"
	"testing"
)

func TestReadManifest(t *testing.T) {
	for _, f := range []string{"sample.csv", "sample.toml"} {
		path := filepath.Join("..", "..", "testdata", "survey", f)
		m, err := ReadManifest(path)
		if err != nil {
			t.Fatalf("%s: %v", f, err)
		}
		if len(m.Stars) != 3 || m.Dir != filepath.Dir(path) {
			t.Fatalf("%s: %+v", f, m)
		}
		ts := m.Stars[0]
		if ts.Name != "Tessaly-7" || ts.Data != "data/tessaly7.csv" || ts.StarFile != "stars/tessaly7.toml" ||
			len(ts.Periods) != 2 || ts.Periods[0] != 12.1 || ts.Periods[1] != 33.4 || ts.Star != nil {
			t.Errorf("%s: star 1 %+v", f, ts)
		}
		cv := m.Stars[1]
		if cv.Star == nil || cv.Star.Teff != 5150 || cv.Star.RotationPeriod != 8.6 || cv.Star.Name != "Corvane-3" {
			t.Errorf("%s: star 2 inline parameters %+v", f, cv.Star)
		}
		if m.path(cv.Data) != filepath.Join(filepath.Dir(path), "data", "corvane3.fits") {
			t.Errorf("%s: path %s", f, m.path(cv.Data))
		}
		if f == "sample.toml" && (m.Stars[2].Columns["rv"] != "velocity_kms" || m.Stars[2].RVUnit != "km/s") {
			t.Errorf("toml: columns %v unit %q", m.Stars[2].Columns, m.Stars[2].RVUnit)
		}
	}
}

func TestManifestErrors(t *testing.T) {
	csvCases := []struct {
		text, want string
	}{
		{"", "empty"},
		{"name,data,colour\nA,a.csv,red\n", `m.csv:1: column "colour": unknown column`},
		{"name\nA\n", `column "data": required column missing`},
		{"name,data\nA,a.csv\nA,b.csv\n", `m.csv:3: column "name": star "A" is also star 1`},
		{"name,data,periods\nA,a.csv,12;x\n", `m.csv:2: column "periods": "x" is not a number of days`},
		{"name,data,periods\nA,a.csv,-3\n", `column "periods"`},
		{"name,data,teff\n# comment\nA,a.csv,hot\n", `m.csv:3: column "teff": "hot" is not a number`},
		{"name,data,b_v\nA,a.csv,9\n", `m.csv:2: column "b_v": 9 is out of range`},
		{"name,data\nA,a.csv,extra\n", "m.csv:2: 3 fields, the header has 2"},
		{"name,data\n,a.csv\n", "has no name"},
		{"name,data\nA b,a.csv\nA_b,b.csv\n", "share the output folder"},
		{"name,data,rv_unit\nA,a.csv,furlong/s\n", `column "rv_unit"`},
		{"name,data\n", "no stars"},
		{"\ufeffname,data,colour\n", `m.csv:1: column "colour"`},
	}
	for _, c := range csvCases {
		_, err := ParseManifestCSV(strings.NewReader(c.text), "m.csv")
		if !errors.Is(err, ErrManifest) || !strings.Contains(err.Error(), c.want) {
			t.Errorf("CSV %q: error %v, want it to contain %q", c.text, err, c.want)
		}
	}
	tomlCases := []struct {
		text, want string
	}{
		{"[[star]]\nname = \"A\"\ndata = \"a.csv\"\ncolour = 1\n", `m.toml:4: key "star.colour": unknown key`},
		{"[[star]]\nname = \"A\"\n", `star "A" has no data`},
		{"[[star]]\nname = \"A\"\ndata = 3\n", "m.toml"},
		{"[[star]]\nname = \"A\"\ndata = \"a\"\n[[star]]\nname = \"B\"\ndata = \"b\"\nmass = -1\n", `m.toml:4: key "star[2].mass": -1 is out of range`},
		{"[[star]\n", "m.toml:2"},
		{"[[star]]\nname = \"A\"\ndata = \"a\"\n\n[defaults]\nseed = 3\n", `m.toml:5: key "defaults": unknown key`},
	}
	for _, c := range tomlCases {
		_, err := ParseManifestTOML([]byte(c.text), "m.toml")
		if !errors.Is(err, ErrManifest) || !strings.Contains(err.Error(), c.want) {
			t.Errorf("TOML %q: error %v, want it to contain %q", c.text, err, c.want)
		}
	}
}

func TestFolder(t *testing.T) {
	for in, want := range map[string]string{"HD 10700": "HD_10700", ".hidden": "_hidden", "a/b": "a_b", "GJ-581.b_c": "GJ-581.b_c"} {
		if got := Folder(in); got != want {
			t.Errorf("Folder(%q) = %q, want %q", in, got, want)
		}
	}
}
