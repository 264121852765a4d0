package photometry

import (
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"spotsift/rvfit"
)

func writeFile(t *testing.T, name, content string) string {
	t.Helper()
	p := filepath.Join(t.TempDir(), name)
	if err := os.WriteFile(p, []byte(content), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

// Reading: flux with sectors (each normalised by its own median),
// magnitudes (m → 10^(−0.4 m), errors by 0.4 ln 10 · flux · σ_m, an
// analytic identity), mapped columns, and errors that name the file and
// column.
func TestRead(t *testing.T) {
	p := writeFile(t, "lc.csv", "time,flux,flux_err,sector\n1,100,1,a\n2,102,1,a\n3,98,1,a\n4,50,0.5,b\n5,51,0.5,b\n6,49,0.5,b\n7,50,0.5,b\n8,100,1,a\n9,100,1,a\n10,101,1,a\n")
	lc, _, err := Read(p, nil)
	if err != nil {
		t.Fatal(err)
	}
	if lc.Flux[3] != 1 || lc.Flux[0] != 1 || lc.Err[3] != 0.01 || lc.Sector[3] != "b" || lc.FromMagnitude {
		t.Errorf("read %+v", lc)
	}
	// Written and read back: the same light curve.
	out := filepath.Join(t.TempDir(), "out.csv")
	if err := Write(out, lc, "test"); err != nil {
		t.Fatal(err)
	}
	back, _, err := Read(out, nil)
	if err != nil || back.Flux[4] != lc.Flux[4] || back.Sector[9] != "a" {
		t.Fatalf("read back %+v %v", back, err)
	}
	// Magnitudes, with mapped names.
	pm := writeFile(t, "lcm.csv", "bjd,vmag,vmag_e\n1,10.0,0.01\n2,10.1,0.01\n3,9.9,0.01\n4,10.0,0.01\n5,10.0,0.01\n6,10.0,0.01\n7,10.0,0.01\n8,10.0,0.01\n9,10.0,0.01\n10,10.0,0.01\n")
	cols, _ := rvfit.ParseColumnMap("time=bjd,mag=vmag,mag_err=vmag_e")
	lm, _, err := Read(pm, &ReadOptions{Columns: cols})
	if err != nil {
		t.Fatal(err)
	}
	if want := math.Pow(10, -0.04); math.Abs(lm.Flux[1]-want) > 1e-12 || math.Abs(lm.Err[0]-0.4*math.Ln10*0.01) > 1e-12 || !lm.FromMagnitude {
		t.Errorf("magnitudes: flux %v err %v", lm.Flux[1], lm.Err[0])
	}
	// No magnitude column and no flux column: the flux column is named.
	pn := writeFile(t, "none.csv", "time,value,value_err\n1,1,1\n2,2,1\n")
	_, _, err = Read(pn, nil)
	var te *rvfit.TableError
	if !errors.As(err, &te) || te.Column != "flux" || !strings.Contains(err.Error(), "none.csv") {
		t.Errorf("missing flux: %v", err)
	}
	// Flux minus one: a sector with a non-positive median.
	pz := writeFile(t, "zero.csv", "time,flux,flux_err\n1,0.01,0.001\n2,-0.01,0.001\n3,-0.02,0.001\n4,0,0.001\n5,0.01,0.001\n6,-0.01,0.001\n7,-0.02,0.001\n8,0,0.001\n9,0.01,0.001\n10,-0.01,0.001\n")
	if _, _, err := Read(pz, nil); !errors.Is(err, ErrBadLightCurve) || !strings.Contains(err.Error(), "positive") {
		t.Errorf("flux minus one: %v", err)
	}
	// A non-number names its line and column.
	pb := writeFile(t, "bad.csv", "time,flux,flux_err\n1,1,0.1\n2,abc,0.1\n")
	if _, _, err := Read(pb, nil); !errors.As(err, &te) || te.Line != 3 || te.Column != "flux" {
		t.Errorf("bad cell: %v", err)
	}
}
