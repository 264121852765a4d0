package indicators

import (
	"bytes"
	"encoding/json"
	"errors"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
)

const fixtureDir = "../testdata/indicators"

// TestAstropyFixtures reads FITS files written by astropy (see
// testdata/indicators/make_fixtures.py; astropy version in astropy_ref.json)
// and compares the wavelengths with those astropy.wcs computes.
func TestAstropyFixtures(t *testing.T) {
	raw, err := os.ReadFile(filepath.Join(fixtureDir, "astropy_ref.json"))
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		Astropy string
		Files   map[string]struct {
			Pixels     []int     `json:"pixels"`
			Wavelength []float64 `json:"wavelength_angstrom"`
			Flux       []float64 `json:"flux"`
			MJD        float64   `json:"mjd_obs"`
			BERV       float64   `json:"berv_kms"`
		}
	}
	if err := json.Unmarshal(raw, &ref); err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		file   string
		order  int
		vacuum bool
		orders int
	}{
		{"astropy_linear.fits", 0, true, 1},
		{"astropy_lognm.fits", 0, false, 1},
		{"astropy_table.fits", 0, false, 1},
		{"astropy_echelle.fits", 2, true, 3},
	} {
		t.Run(tc.file, func(t *testing.T) {
			want := ref.Files[tc.file]
			s, err := ReadFile(filepath.Join(fixtureDir, tc.file), nil)
			if err != nil {
				t.Fatal(err)
			}
			if len(s.Orders) != tc.orders || s.Vacuum != tc.vacuum {
				t.Fatalf("%d orders, vacuum %v; want %d, %v", len(s.Orders), s.Vacuum, tc.orders, tc.vacuum)
			}
			o := s.Orders[tc.order]
			for i, p := range want.Pixels {
				// astropy (version in astropy_ref.json) evaluates the same
				// WCS; agreement to 1e-12 relative (1e-4 m/s).
				if got := o.Wavelength[p]; math.Abs(got-want.Wavelength[i]) > 1e-12*want.Wavelength[i] {
					t.Errorf("pixel %d: wavelength %.12f, astropy %.12f", p, got, want.Wavelength[i])
				}
				if want.Flux != nil && o.Flux[p] != want.Flux[i] {
					t.Errorf("pixel %d: flux %v, astropy %v", p, o.Flux[p], want.Flux[i])
				}
			}
			if want.MJD != 0 && math.Abs(s.BJD-(want.MJD+2400000.5)) > 1e-9 {
				t.Errorf("epoch %.8f, want MJD %.8f + 2400000.5", s.BJD, want.MJD)
			}
			if want.BERV != 0 && math.Abs(s.BERV-want.BERV*1000) > 1e-9 {
				t.Errorf("BERV %v m/s, want %v km/s", s.BERV, want.BERV)
			}
		})
	}
}

// TestBrokenFixtures checks that each deliberately damaged file gives a
// clear error naming the file and wrapping the right sentinel.
func TestBrokenFixtures(t *testing.T) {
	for _, tc := range []struct {
		file string
		want error
		// part of the message that locates the problem
		where string
	}{
		{"broken_nan.fits", ErrNotFinite, "pixel 10"},
		{"broken_negative.fits", ErrNegativeFlux, "pixel 20"},
		{"broken_no_crval.fits", ErrMissingKeyword, "CRVAL1"},
		{"broken_no_cdelt.fits", ErrMissingKeyword, "CDELT1"},
		{"broken_decreasing.fits", ErrNotIncreasing, "pixel 1"},
		{"broken_rank3.fits", ErrBadRank, "NAXIS"},
		{"broken_truncated.fits", ErrTruncated, "HDU 0"},
		{"broken_table_repeat.fits", ErrNotIncreasing, "pixel 30"},
	} {
		t.Run(tc.file, func(t *testing.T) {
			_, err := ReadFile(filepath.Join(fixtureDir, tc.file), nil)
			if !errors.Is(err, tc.want) {
				t.Fatalf("err = %v, want %v", err, tc.want)
			}
			if !strings.Contains(err.Error(), tc.file) || !strings.Contains(err.Error(), tc.where) {
				t.Errorf("error %q should name %s and %s", err, tc.file, tc.where)
			}
		})
	}
	// AllowNegative accepts negative flux.
	if _, err := ReadFile(filepath.Join(fixtureDir, "broken_negative.fits"), &ReadOptions{AllowNegative: true}); err != nil {
		t.Errorf("AllowNegative: %v", err)
	}
}

// TestAstropyReadsOurs writes a log-linear spectrum and has astropy (the
// Debian /usr/bin/python3) evaluate its WCS; skipped when astropy is absent.
func TestAstropyReadsOurs(t *testing.T) {
	py := "/usr/bin/python3"
	if _, err := os.Stat(py); err != nil {
		t.Skip("no /usr/bin/python3: skipping the astropy cross-check (apt-get install python3-astropy)")
	}
	if err := exec.Command(py, "-c", "import astropy.wcs").Run(); err != nil {
		t.Skip("astropy not installed: skipping the astropy cross-check (apt-get install python3-astropy)")
	}
	s := logGridSpectrum(500, 4321.5, 3e-6)
	path := filepath.Join(t.TempDir(), "ours.fits")
	if err := WriteFITSFile(path, s); err != nil {
		t.Fatal(err)
	}
	script := `
import sys, warnings
warnings.simplefilter("ignore")
from astropy.io import fits
from astropy.wcs import WCS
h = fits.open(sys.argv[1])
w = WCS(h[0].header)
for p in (0, 1, 250, 499):
    print(repr(float(w.pixel_to_world_values(p)) * 1e10))
print(h[0].header["BJD_TDB"], h[0].data[7])
`
	out, err := exec.Command(py, "-c", script, path).CombinedOutput()
	if err != nil {
		t.Fatalf("astropy: %v\n%s", err, out)
	}
	lines := strings.Fields(string(bytes.TrimSpace(out)))
	for i, p := range []int{0, 1, 250, 499} {
		var got float64
		if err := json.Unmarshal([]byte(lines[i]), &got); err != nil {
			t.Fatal(err)
		}
		if want := s.Orders[0].Wavelength[p]; math.Abs(got-want) > 1e-12*want {
			t.Errorf("pixel %d: astropy %.12f, ours %.12f", p, got, want)
		}
	}
	if lines[4] != "2460123.456789012" {
		t.Errorf("astropy BJD_TDB %s", lines[4])
	}
}
