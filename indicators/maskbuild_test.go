package indicators

import (
	"bytes"
	"errors"
	"math"
	"math/rand/v2"
	"strings"
	"testing"
)

func TestBuildMask(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 1))
	st := newSynthStar(rng, 5600, 6000, 2e-6, 120, 2e4)
	// A blend: two lines 4 km/s apart (σ = 3 km/s), and a line in the
	// telluric region 5880–5990 Å.
	st.lines = append(st.lines, synthLine{5700.05, 0.5, 3000}, synthLine{5700.05 * (1 + 4e3/C), 0.45, 3000})
	sortLines(st.lines)
	var specs []*Spectrum
	for i, berv := range []float64{-20e3, 5e3, 25e3} {
		// The star sits at +10 km/s; the barycentric correction moves it in
		// the observer's frame by −BERV.
		s := addNoise(st.spectrum(10e3-berv), rand.New(rand.NewPCG(4, uint64(i))))
		s.BERV = berv
		specs = append(specs, s)
	}
	m, err := BuildMask(specs, &MaskOptions{Systemic: 10e3, FixedSystemic: true})
	if err != nil {
		t.Fatal(err)
	}
	var inTelluric, nearBlend int
	matched := 0
	for _, w := range m.Wavelength {
		if w > 5880 && w < 5990 {
			inTelluric++
		}
		if math.Abs(w-5700.05) < 0.3 {
			nearBlend++
		}
		// Each mask line lies within 100 m/s of a true line.
		for _, l := range st.lines {
			if math.Abs(C*(w-l.lambda)/l.lambda) < 100 {
				matched++
				break
			}
		}
	}
	if inTelluric != 0 || nearBlend != 0 {
		t.Errorf("mask keeps %d telluric and %d blended lines, want 0", inTelluric, nearBlend)
	}
	// 120 isolated lines, about a quarter of them in the telluric region.
	if m.Len() < 70 || matched != m.Len() {
		t.Errorf("mask of %d lines, %d matched to true lines", m.Len(), matched)
	}
	// RVs measured with the built mask: barycentric and close to the star's
	// +10 km/s (the mask centres carry the co-add's noise).
	for _, s := range specs {
		r, err := Measure(s, m, &Options{NoIndices: true})
		if err != nil {
			t.Fatal(err)
		}
		if math.Abs(r.RV.Value-10e3) > 5 {
			t.Errorf("%v: RV %.2f, want 10000 ± 5", s.BERV, r.RV.Value)
		}
	}
	if _, err := BuildMask(nil, nil); !errors.Is(err, ErrNoData) {
		t.Errorf("no spectra: err = %v", err)
	}
	mixed := []*Spectrum{specs[0], ToVacuum(specs[1])}
	if _, err := BuildMask(mixed, nil); !errors.Is(err, ErrScaleMismatch) {
		t.Errorf("mixed scales: err = %v", err)
	}
	// Text round trip.
	var buf bytes.Buffer
	if err := WriteMask(&buf, m); err != nil {
		t.Fatal(err)
	}
	m2, err := ReadMask(&buf, "mask.txt", nil)
	if err != nil {
		t.Fatal(err)
	}
	if m2.Len() != m.Len() || m2.Vacuum != m.Vacuum || m2.Wavelength[7] != m.Wavelength[7] || m2.Weight[7] != m.Weight[7] {
		t.Error("mask text round trip changed the mask")
	}
}

func TestReadMask(t *testing.T) {
	for _, tc := range []struct {
		name, in string
		opts     *ReadOptions
		n        int
		wantErr  error
	}{
		{"two columns", "# WAVESCAL = air\n5000.1 0.5\n5001.2, 0.7\n", nil, 2, nil},
		{"one column", "5000.1\n5001.2\n", &ReadOptions{Scale: ScaleVacuum}, 2, nil},
		{"no scale", "5000.1 0.5\n", nil, 0, ErrUnknownScale},
		{"bad number", "# WAVESCAL = air\n5000.1 x\n", nil, 0, ErrParse},
		{"negative weight", "# WAVESCAL = air\n5000.1 -1\n", nil, 0, ErrBadParameter},
		{"duplicate", "# WAVESCAL = air\n5000.1 1\n5000.1 2\n", nil, 0, ErrNotIncreasing},
		{"empty", "# WAVESCAL = air\n", nil, 0, ErrNoData},
	} {
		t.Run(tc.name, func(t *testing.T) {
			m, err := ReadMask(strings.NewReader(tc.in), "m.txt", tc.opts)
			if tc.wantErr != nil {
				if !errors.Is(err, tc.wantErr) {
					t.Fatalf("err = %v, want %v", err, tc.wantErr)
				}
				if !strings.Contains(err.Error(), "m.txt") {
					t.Errorf("error %q does not name the file", err)
				}
				return
			}
			if err != nil || m.Len() != tc.n {
				t.Fatalf("m = %v, err = %v", m, err)
			}
		})
	}
}
