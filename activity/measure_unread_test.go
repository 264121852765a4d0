package activity

import (
	"context"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// When no spectrum can be read to build a mask, each file's own reason
// comes back as a failure naming it (the user's only lead), and the error
// quotes the first: two malformed spectra of the corpus in
// testdata/malformed (a zero wavelength step; a negative NAXIS1).
func TestMeasureUnreadableNamed(t *testing.T) {
	dir := t.TempDir()
	var paths []string
	for _, c := range []string{"cdelt-zero", "naxis1-negative"} {
		b, err := os.ReadFile(filepath.Join("..", "testdata", "malformed", "spectra", c, "epoch-1.fits"))
		if err != nil {
			t.Fatal(err)
		}
		p := filepath.Join(dir, c+".fits")
		if err := os.WriteFile(p, b, 0o644); err != nil {
			t.Fatal(err)
		}
		paths = append(paths, p)
	}
	_, fails, err := Measure(context.Background(), paths, nil)
	if !errors.Is(err, ErrNoSpectra) || !strings.Contains(err.Error(), "cdelt-zero.fits") || !strings.Contains(err.Error(), "CDELT1") {
		t.Errorf("error %v, want ErrNoSpectra quoting the first file and its keyword", err)
	}
	want := map[string]string{paths[0]: "CDELT1", paths[1]: "NAXIS1"}
	if len(fails) != 2 {
		t.Fatalf("%d failures, want one per file: %v", len(fails), fails)
	}
	for _, f := range fails {
		if k := want[f.Path]; k == "" || !strings.Contains(f.Err.Error(), k) || f.Partial {
			t.Errorf("failure %s: %v, want a left-out spectrum naming %s", f.Path, f.Err, want[f.Path])
		}
	}
}
