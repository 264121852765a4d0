package survey

import (
	"context"
	"encoding/csv"
	"errors"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
)

// TestSummaryTables reads summary.fits back with astropy 5.2.1 (Debian
// python3-astropy; skipped when absent) and compares it with summary.csv,
// and checks it with fitsverify.
func TestSummaryTables(t *testing.T) {
	stars := sample12(t)[:4]
	out := t.TempDir()
	if _, err := Run(context.Background(), manifestOf(stars), out, fastOpts()); err != nil {
		t.Fatal(err)
	}
	fitsverify(t, filepath.Join(out, SummaryFITS))
	f, err := os.Open(filepath.Join(out, SummaryCSV))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	r := csv.NewReader(f)
	r.Comment = '#'
	recs, err := r.ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if len(recs) < 2 || strings.Join(recs[0][:3], ",") != "star,signal,period" {
		t.Fatalf("summary.csv: %v", recs)
	}
	const py = "/usr/bin/python3"
	script := `import sys
from astropy.io import fits
h = fits.open(sys.argv[1])
d = h["SIGNALS"].data
for row in d:
    print("%s,%d,%.10g,%s" % (row["star"], int(row["signal"]), row["period"], row["verdict"]))
`
	b, err := exec.Command(py, "-c", script, filepath.Join(out, SummaryFITS)).CombinedOutput()
	if err != nil {
		if strings.Contains(string(b), "No module named") || errors.Is(err, exec.ErrNotFound) {
			t.Skip("astropy not available")
		}
		t.Fatalf("astropy: %v\n%s", err, b)
	}
	lines := strings.Split(strings.TrimSpace(string(b)), "\n")
	if len(lines) != len(recs)-1 {
		t.Fatalf("astropy reads %d rows, the CSV has %d", len(lines), len(recs)-1)
	}
	for i, l := range lines {
		c := recs[i+1]
		if want := c[0] + "," + c[1] + "," + c[2] + "," + c[7]; l != want {
			t.Errorf("row %d: astropy %q, CSV %q", i+1, l, want)
		}
	}
}

func TestMergeConflict(t *testing.T) {
	stars := sample12(t)[:2]
	a, b := t.TempDir(), t.TempDir()
	if _, err := Run(context.Background(), manifestOf(stars), a, fastOpts()); err != nil {
		t.Fatal(err)
	}
	o := fastOpts()
	o.Seed = 99 // other settings: other hashes
	if _, err := Run(context.Background(), manifestOf(stars), b, o); err != nil {
		t.Fatal(err)
	}
	if err := Merge(t.TempDir(), []string{a, b}); !errors.Is(err, ErrMerge) {
		t.Errorf("merging different analyses: %v", err)
	}
	if err := Merge(t.TempDir(), []string{t.TempDir()}); !errors.Is(err, ErrMerge) {
		t.Errorf("merging a folder that is no survey: %v", err)
	}
}
