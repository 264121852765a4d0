package survey

import (
	"errors"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// The manifest takes the table-reading options per star, in both forms.
func TestManifestTableOptions(t *testing.T) {
	csv := "name,data,columns,indicators,units,time_zero,missing,reject_if,duplicate_epochs,split\n" +
		"K,k.vels,time=1;rv=2;rv_err=3;s_index=4,none,fwhm=km/s,rjd,-1;-9999999,f_RV!=0,mean,default@2453236\n"
	m, err := ParseManifestCSV(strings.NewReader(csv), "m.csv")
	if err != nil {
		t.Fatal(err)
	}
	r := m.Stars[0].Read
	if r.Indicators == nil || len(r.Indicators) != 0 || r.Units["fwhm"] != "km/s" || r.TimeZero != "rjd" ||
		strings.Join(r.Missing, "|") != "-1|-9999999" || r.RejectIf[0] != "f_RV!=0" || r.Duplicates != "mean" || r.Split[0] != "default@2453236" {
		t.Errorf("CSV options %+v", r)
	}
	if m.Stars[0].Columns["s_index"] != "4" {
		t.Errorf("columns %v", m.Stars[0].Columns)
	}
	toml := `[[star]]
name = "K"
data = "k.vels"
indicators = ["SVal"]
units = "BIS=km/s"
missing = ["-1"]
reject_if = ["f_RV != 0"]
split = ["HIRES@2453236"]
`
	m, err = ParseManifestTOML([]byte(toml), "m.toml")
	if err != nil {
		t.Fatal(err)
	}
	if r := m.Stars[0].Read; r.Indicators[0] != "SVal" || r.Units["BIS"] != "km/s" || r.Split[0] != "HIRES@2453236" {
		t.Errorf("TOML options %+v", r)
	}
	// Options without a star-independent meaning are refused with line and column.
	for _, c := range []struct{ text, want string }{
		{"name,data,reject_if\nA,a.csv,f_RV\n", `m.csv:2: column "reading options"`},
		{"name,data,split\nA,a.csv,HIRES@soon\n", `m.csv:2: column "split"`},
		{"name,data,duplicate_epochs\nA,a.csv,sum\n", `m.csv:2: column "reading options"`},
		{"name,data,time_zero\nA,a.csv,yesterday\n", `m.csv:2: column "reading options"`},
		{"name,data\n" + strings.Repeat("x", 256) + ",a.csv\n", `m.csv:2: column "name": star 1: a name of 256 bytes`},
		{"name,data\nA\u202eB,a.csv\n", `m.csv:2: column "name": star 1: the name holds the bidirectional formatting character U+202E`},
		{"name,data\n\"A\x01\",a.csv\n", `m.csv:2: column "name": star 1: the name holds the control character U+0001`},
	} {
		_, err := ParseManifestCSV(strings.NewReader(c.text), "m.csv")
		if !errors.Is(err, ErrManifest) || !strings.Contains(err.Error(), c.want) {
			t.Errorf("CSV %q: error %v, want it to contain %q", c.text, err, c.want)
		}
	}
}

// A star whose data is a data-set file reads all its tables, with their
// own options and labels, and its input hash changes when any table does.
func TestSurveyDataSetFile(t *testing.T) {
	dir := t.TempDir()
	write := func(name, text string) {
		if err := os.WriteFile(filepath.Join(dir, name), []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	var a, b strings.Builder
	a.WriteString("BJD,RVel,e_RVel\n")
	b.WriteString("# rjd in a tab table\nrjd\tvrad\tsvrad\n---\t----\t-----\n")
	for i := 0; i < 30; i++ {
		a.WriteString(strings.Join([]string{ftoa(2455000 + float64(i)*3.1), ftoa(float64(i%7) - 3), "1.5"}, ",") + "\n")
		b.WriteString(strings.Join([]string{ftoa(56000 + float64(i)*2.7), ftoa(float64(i%5) - 2), "2.0"}, "\t") + "\n")
	}
	write("a.csv", a.String())
	write("b.rdb", b.String())
	write("star.toml", "[[table]]\npath = \"a.csv\"\nlabel = \"A\"\n\n[[table]]\npath = \"b.rdb\"\nlabel = \"B\"\nsplit_at = [2456040]\n")
	m := &Manifest{Dir: dir, Stars: []Entry{{Name: "S", Data: "star.toml"}}}
	s, notes, err := readTables(m.path("star.toml"), &m.Stars[0])
	if err != nil {
		t.Fatal(err)
	}
	labels := map[string]int{}
	for _, in := range s.Instrument {
		labels[in]++
	}
	// Expected: 30 + 30 epochs; B split at 2456040 = rjd 56040: rows with
	// 56000 + 2.7 i >= 56040, i.e. i >= 15 (15 rows).
	if s.Len() != 60 || labels["A"] != 30 || labels["B"] != 15 || labels["B@2456040"] != 15 {
		t.Errorf("%d epochs, labels %v; notes %q", s.Len(), labels, notes)
	}
	h1, _, err := InputHash(m, &m.Stars[0], &Options{})
	if err != nil {
		t.Fatal(err)
	}
	write("b.rdb", strings.Replace(b.String(), "2.0\n", "2.5\n", 1))
	h2, _, _ := InputHash(m, &m.Stars[0], &Options{})
	if h1 == h2 {
		t.Error("editing a table of the data set does not change the star's input hash")
	}
}

func ftoa(x float64) string { return strconv.FormatFloat(x, 'f', -1, 64) }
