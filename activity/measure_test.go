package activity

import (
	"errors"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"reflect"
	"testing"

	"spotsift/indicators"
)

// testStar makes spectra of a star with isolated Gaussian lines (σ = 3 km/s)
// on a log-linear grid, plus broad Ca II H, K, H-alpha and Na D absorption
// at their laboratory (air) wavelengths, with photon noise.
type testStar struct {
	lo, hi, step float64
	lines        []struct{ lambda, depth float64 }
}

func newTestStar(rng *rand.Rand, lo, hi, step float64, nlines int) *testStar {
	st := &testStar{lo: lo, hi: hi, step: step}
	slot := (hi - lo - 10) / float64(nlines)
	for i := 0; i < nlines; i++ {
		st.lines = append(st.lines, struct{ lambda, depth float64 }{lo + 5 + slot*(float64(i)+0.25+0.5*rng.Float64()), 0.2 + 0.6*rng.Float64()})
	}
	return st
}

func (st *testStar) spectrum(v, berv, bjd, cont float64, rng *rand.Rand) *indicators.Spectrum {
	n := int(math.Log(st.hi/st.lo) / st.step)
	o := indicators.Order{Wavelength: make([]float64, n), Flux: make([]float64, n)}
	// The observed velocity is the barycentric one minus the BERV
	// (relativistic composition).
	vobs := indicators.VelocityFromLog(indicators.LogDopplerFactor(v) - indicators.LogDopplerFactor(berv))
	d := indicators.DopplerFactor(vobs)
	for i := range o.Wavelength {
		o.Wavelength[i] = st.lo * math.Exp(st.step*float64(i))
		o.Flux[i] = 1
	}
	absorb := func(c, depth, sigma float64) {
		w := 8 * sigma / indicators.C * c
		i0 := max(0, int(math.Log((c-w)/st.lo)/st.step))
		for i := i0; i < n && o.Wavelength[i] < c+w; i++ {
			dv := indicators.C * math.Log(o.Wavelength[i]/c)
			o.Flux[i] *= 1 - depth*math.Exp(-0.5*dv*dv/(sigma*sigma))
		}
	}
	for _, l := range st.lines {
		absorb(l.lambda*d, l.depth, 3000)
	}
	for _, c := range []float64{3933.6633, 3968.4682, 5889.9506, 5895.9240, 6562.8010} {
		absorb(c*d, 0.7, 30e3)
	}
	for i, f := range o.Flux {
		mu := cont * f
		o.Flux[i] = math.Max(0, mu+math.Sqrt(mu)*rng.NormFloat64())
	}
	return &indicators.Spectrum{Name: "test", Orders: []indicators.Order{o}, BJD: bjd, BERV: berv,
		Header: map[string]string{"INSTRUME": "TESTSPEC"}}
}

func writeTestSpectra(t testing.TB, dir string, n int) ([]string, []float64) {
	rng := rand.New(rand.NewPCG(1, 1))
	st := newTestStar(rng, 3880, 6600, 3e-6, 400)
	var paths []string
	var rvs []float64
	for i := 0; i < n; i++ {
		v := 20e3 + 5*math.Sin(float64(i))
		s := st.spectrum(v, 25e3*math.Cos(float64(i)/3), 2460000+float64(n-i)*1.1, 5e3, rand.New(rand.NewPCG(5, uint64(i))))
		p := filepath.Join(dir, "s"+string(rune('a'+i))+".fits")
		if err := indicators.WriteFITSFile(p, s); err != nil {
			t.Fatal(err)
		}
		paths = append(paths, p)
		rvs = append(rvs, v)
	}
	return paths, rvs
}

func TestMeasure(t *testing.T) {
	dir := t.TempDir()
	paths, rvs := writeTestSpectra(t, dir, 6)
	// A broken file is named and left out.
	bad := filepath.Join(dir, "broken.fits")
	raw, _ := os.ReadFile(paths[0])
	os.WriteFile(bad, raw[:len(raw)/2], 0o644)
	all := append(append([]string(nil), paths...), bad)

	var calls int
	lastDone := 0
	opts := &MeasureOptions{Workers: 2, Star: &Star{BV: 0.65, SIndex: SCalibration{A: 12}}, Progress: func(done, total int) {
		calls++
		if total != len(all) || done != lastDone+1 {
			t.Errorf("progress(%d, %d) after %d", done, total, lastDone)
		}
		lastDone = done
	}}
	ser, fails, err := Measure(all, opts)
	if err != nil {
		t.Fatal(err)
	}
	if calls != len(all) {
		t.Errorf("progress called %d times, want %d", calls, len(all))
	}
	var left []MeasureFailure
	for _, f := range fails {
		if !f.Partial {
			left = append(left, f)
		}
	}
	if len(left) != 1 || left[0].Path != bad || !errors.Is(left[0].Err, indicators.ErrTruncated) {
		t.Fatalf("failures = %v, want only the truncated file", fails)
	}
	if ser.Len() != len(paths) {
		t.Fatalf("series has %d epochs, want %d", ser.Len(), len(paths))
	}
	// Sorted by time: the files were written with decreasing epochs.
	for i := 1; i < ser.Len(); i++ {
		if ser.Time[i] <= ser.Time[i-1] {
			t.Fatalf("times not increasing: %v", ser.Time)
		}
	}
	// Relative RVs recovered within 4σ (the mask is built from the star's
	// spectra, so the zero point is the template's).
	off := ser.RV[0] - rvs[len(rvs)-1]
	for i := range ser.RV {
		want := rvs[len(rvs)-1-i] + off
		if math.Abs(ser.RV[i]-want) > 4*math.Sqrt2*ser.RVErr[i] {
			t.Errorf("epoch %d: RV %.2f ± %.2f, want %.2f", i, ser.RV[i], ser.RVErr[i], want)
		}
	}
	// The mask's systemic velocity estimate puts the zero point near the
	// true 20 km/s (Na D and H-alpha minima; about 1 km/s).
	if math.Abs(ser.RV[0]-20e3) > 2e3 {
		t.Errorf("absolute RV %.0f m/s, want about 20000", ser.RV[0])
	}
	for _, name := range []string{"fwhm", "contrast", "bis", "delta_v", "s_index", "log_rhk", "halpha", "naid", "chromatic_slope"} {
		ind := ser.Indicator(name)
		if ind == nil || ind.Count() != ser.Len() {
			t.Errorf("indicator %s missing or incomplete: %+v", name, ind)
		}
	}
	if ser.Instrument[0] != "TESTSPEC" {
		t.Errorf("instrument %q, want TESTSPEC from INSTRUME", ser.Instrument[0])
	}

	// The number of workers does not change the result.
	ser1, _, err := Measure(all, &MeasureOptions{Workers: 1, Star: &Star{BV: 0.65, SIndex: SCalibration{A: 12}}})
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(ser1, ser) {
		t.Error("results differ between 1 and 2 workers")
	}

	if _, _, err := Measure([]string{bad}, &MeasureOptions{Mask: mustMask(t)}); !errors.Is(err, ErrNoSpectra) {
		t.Errorf("only bad files: err = %v, want ErrNoSpectra", err)
	}
}

func mustMask(t testing.TB) *indicators.Mask {
	m, err := indicators.NewMask([]float64{5000, 5100}, []float64{1, 1}, false)
	if err != nil {
		t.Fatal(err)
	}
	return m
}
