package indicators

import (
	"bytes"
	"errors"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
)

// logGridSpectrum returns a one-order spectrum on a grid uniform in ln λ.
func logGridSpectrum(n int, lo, step float64) *Spectrum {
	o := Order{Wavelength: make([]float64, n), Flux: make([]float64, n)}
	for i := range o.Wavelength {
		o.Wavelength[i] = lo * math.Exp(step*float64(i))
		o.Flux[i] = 1000 + 100*math.Sin(float64(i)/7)
	}
	return &Spectrum{Name: "log", Orders: []Order{o}, Vacuum: true, BJD: 2460123.456789012, BERV: -12345.678,
		Header: map[string]string{"OBJECT": "sim star", "EXPTIME": "900", "AIRMASS": "1.25", "COMMENT": "written by a test"}}
}

func linGridSpectrum(n int) *Spectrum {
	o := Order{Wavelength: make([]float64, n), Flux: make([]float64, n), Err: make([]float64, n)}
	for i := range o.Wavelength {
		o.Wavelength[i] = 5000 + 0.01*float64(i)
		o.Flux[i] = 500 + float64(i%13)
		o.Err[i] = math.Sqrt(o.Flux[i])
	}
	return &Spectrum{Name: "lin", Orders: []Order{o}}
}

func echelleSpectrum(norders, npix int) *Spectrum {
	s := &Spectrum{Name: "echelle", Vacuum: true, BJD: 2459000.25}
	for k := 0; k < norders; k++ {
		o := Order{Wavelength: make([]float64, npix), Flux: make([]float64, npix), Err: make([]float64, npix)}
		for i := range o.Wavelength {
			x := float64(i) / float64(npix)
			o.Wavelength[i] = 4000 + 100*float64(k) + 120*x + 3*x*x // not uniform
			o.Flux[i] = 100 + float64(i+k)
			o.Err[i] = 10
		}
		s.Orders = append(s.Orders, o)
	}
	return s
}

func sameSpectrum(t *testing.T, got, want *Spectrum, wtol float64) {
	t.Helper()
	if len(got.Orders) != len(want.Orders) {
		t.Fatalf("orders = %d, want %d", len(got.Orders), len(want.Orders))
	}
	for o := range want.Orders {
		g, w := got.Orders[o], want.Orders[o]
		if len(g.Wavelength) != len(w.Wavelength) {
			t.Fatalf("order %d: %d pixels, want %d", o, len(g.Wavelength), len(w.Wavelength))
		}
		for i := range w.Wavelength {
			if math.Abs(g.Wavelength[i]-w.Wavelength[i]) > wtol*w.Wavelength[i] {
				t.Fatalf("order %d pixel %d: wavelength %.15g, want %.15g", o, i, g.Wavelength[i], w.Wavelength[i])
			}
			if g.Flux[i] != w.Flux[i] {
				t.Fatalf("order %d pixel %d: flux %v, want %v", o, i, g.Flux[i], w.Flux[i])
			}
		}
		if (g.Err == nil) != (w.Err == nil) {
			t.Fatalf("order %d: errors present %v, want %v", o, g.Err != nil, w.Err != nil)
		}
		for i := range w.Err {
			if g.Err[i] != w.Err[i] {
				t.Fatalf("order %d pixel %d: err %v, want %v", o, i, g.Err[i], w.Err[i])
			}
		}
	}
	if got.Vacuum != want.Vacuum || got.BJD != want.BJD || math.Abs(got.BERV-want.BERV) > 1e-9 {
		t.Errorf("vacuum/BJD/BERV = %v %.9f %v, want %v %.9f %v", got.Vacuum, got.BJD, got.BERV, want.Vacuum, want.BJD, want.BERV)
	}
}

func TestFITSRoundTrip(t *testing.T) {
	for _, tc := range []struct {
		name string
		s    *Spectrum
		// Wavelength tolerance, relative: the WCS reconstructs the grid
		// from CRVAL1/CDELT1 to about 1e-15 (common practice: float64
		// rounding); explicit wavelength images are exact.
		wtol float64
	}{
		{"log-linear", logGridSpectrum(2000, 3800, 1e-5), 1e-13},
		{"linear with errors", linGridSpectrum(1500), 1e-13},
		{"echelle", echelleSpectrum(3, 500), 0},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var buf bytes.Buffer
			if err := WriteFITS(&buf, tc.s); err != nil {
				t.Fatal(err)
			}
			if buf.Len()%2880 != 0 {
				t.Fatalf("file size %d is not a multiple of 2880", buf.Len())
			}
			opts := &ReadOptions{}
			if tc.name == "linear with errors" {
				// Air, and said so by CTYPE1 = 'AWAV'.
				opts = nil
			}
			got, err := ReadFITS(&buf, tc.name, opts)
			if err != nil {
				t.Fatal(err)
			}
			sameSpectrum(t, got, tc.s, tc.wtol)
			for k, v := range tc.s.Header {
				if got.Header[k] != v && !(k == "AIRMASS" && got.Header[k] == "1.25") {
					t.Errorf("header %s = %q, want %q", k, got.Header[k], v)
				}
			}
		})
	}
}

func TestWriteFITSFloat32(t *testing.T) {
	s := logGridSpectrum(100, 5000, 2e-5)
	var buf bytes.Buffer
	if err := (&FITSEncoder{Float32: true}).Encode(&buf, s); err != nil {
		t.Fatal(err)
	}
	got, err := ReadFITS(&buf, "f32", nil)
	if err != nil {
		t.Fatal(err)
	}
	for i, f := range s.Orders[0].Flux {
		if g := got.Orders[0].Flux[i]; g != float64(float32(f)) {
			t.Fatalf("pixel %d: flux %v, want %v", i, g, float32(f))
		}
	}
}

func TestWriteFITSFileAtomic(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "s.fits")
	if err := WriteFITSFile(path, logGridSpectrum(50, 5000, 1e-5)); err != nil {
		t.Fatal(err)
	}
	bad := logGridSpectrum(50, 5000, 1e-5)
	bad.Orders[0].Flux[3] = math.NaN()
	if err := WriteFITSFile(filepath.Join(dir, "bad.fits"), bad); !errors.Is(err, ErrNotFinite) {
		t.Fatalf("NaN flux: err = %v, want ErrNotFinite", err)
	}
	ents, _ := os.ReadDir(dir)
	if len(ents) != 1 {
		t.Fatalf("directory holds %d entries, want only s.fits", len(ents))
	}
	if _, err := ReadFile(path, nil); err != nil {
		t.Fatal(err)
	}
}

// TestFitsverify runs the HEASARC fitsverify tool on what we write.
func TestFitsverify(t *testing.T) {
	bin, err := exec.LookPath("fitsverify")
	if err != nil {
		t.Skip("fitsverify not installed: skipping the FITS conformance check (apt-get install fitsverify)")
	}
	dir := t.TempDir()
	for _, s := range []*Spectrum{logGridSpectrum(300, 3800, 1e-5), linGridSpectrum(200), echelleSpectrum(4, 100)} {
		path := filepath.Join(dir, s.Name+".fits")
		if err := WriteFITSFile(path, s); err != nil {
			t.Fatal(err)
		}
		out, err := exec.Command(bin, path).CombinedOutput()
		if err != nil || !strings.Contains(string(out), "0 warning(s) and 0 error(s)") {
			t.Errorf("fitsverify %s: %v\n%s", s.Name, err, out)
		}
	}
}
