package starsim

import (
	"bytes"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"
)

// planetScenario is an unspotted star with two planets, observed nightly.
func planetScenario() *Scenario {
	return &Scenario{
		Name: "planets",
		Star: Star{VEq: 2, RotationPeriod: 25, ConvectiveBlueshift: 300},
		Planets: []Planet{
			{Period: 4.3, K: 12, E: 0.2, Omega: 40, Tc: 2460001.1},
			{Period: 31, K: 5, Tc: 2460010},
		},
		Observing:   Observing{Start: 2460000.6, End: 2460030.6, ClearFraction: 1, SeasonLength: 400},
		Instruments: []Instrument{{Name: "A", Resolution: 110000, SNR: 150}},
		Spectrum:    smallSpectrum,
	}
}

// TestPlanetShiftsSpectrum checks that a planet alone shifts the whole
// spectrum by exactly its Keplerian velocity, through the relativistic
// Doppler factor (docs/methods.md §1):
//
//  1. a shift of a whole number k of pixels, ln D = k·Δ ln λ (v = c·tanh(kΔ)),
//     makes every pixel equal to the unshifted spectrum k pixels bluewards,
//     to 1e-9;
//  2. at every epoch of a two-planet scenario, the shift of the noise-free
//     spectrum against the planet-free one, measured by least squares with
//     the exact derivative, is ln D of the summed Keplerian RVs to 1e-4 m/s.
func TestPlanetShiftsSpectrum(t *testing.T) {
	sc := planetScenario()
	res := mustSimulate(t, sc, 7, &Options{NoNoise: true})
	s := res.s
	m := s.spec
	ws := s.newWorkspace()
	var quiet coverage
	s.buildKernels(ws, &quiet, 0)
	e := res.Epochs[0].Emission
	ref := make([]float64, m.n)
	m.synth(ref, ws.absorb, 0, m.n, &ws.k, 0, e)

	const k = 20
	lnD := k * m.dl
	v := cLight * math.Tanh(lnD)
	if got := math.Log(DopplerFactor(v)); math.Abs(got-lnD) > 1e-15 {
		t.Fatalf("ln D(c tanh x) = %v, want %v", got, lnD)
	}
	shifted := make([]float64, m.n)
	m.synth(shifted, ws.absorb, 0, m.n, &ws.k, lnD, e)
	worst := 0.0
	for i := 200; i < m.n-200; i++ {
		worst = math.Max(worst, math.Abs(shifted[i]-ref[i-k]))
	}
	if worst > 1e-9 {
		t.Errorf("shift by %d pixels (%.3f km/s): largest difference %.3g, want < 1e-9", k, v/1000, worst)
	}

	snr2 := sc.Instruments[0].SNR * sc.Instruments[0].SNR
	// model returns the expected counts for a shift ln D = x.
	model := func(dst []float64, x float64) {
		m.synth(dst, ws.absorb, 0, m.n, &ws.k, x, e)
		for p := range dst {
			a := x * (x*m.g2cont[p]/2 - m.gcont[p])
			dst[p] *= snr2 * m.cont[p] * (1 + a*(1+a/2*(1+a/3)))
		}
	}
	// shiftOf measures the shift of f by Gauss–Newton on the model, from 0,
	// with the derivative by central differences of ±1e-8 in ln D.
	mod := make([]float64, m.n)
	plus := make([]float64, m.n)
	minus := make([]float64, m.n)
	shiftOf := func(f []float64, rounds int) float64 {
		var x float64
		for r := 0; r < rounds; r++ {
			const eps = 1e-8
			model(mod, x)
			model(plus, x+eps)
			model(minus, x-eps)
			var num, den float64
			for p := 1; p < m.n-1; p++ {
				g := (plus[p] - minus[p]) / (2 * eps)
				num += (f[p] - mod[p]) * g
				den += g * g
			}
			x += num / den
		}
		return x
	}
	for i, ep := range res.Epochs {
		spec, err := res.Spectrum(i)
		if err != nil {
			t.Fatal(err)
		}
		f := spec.Orders[0].Flux
		want := ep.PlanetRV[0] + ep.PlanetRV[1]
		if got := cLight * math.Tanh(shiftOf(f, 3)); math.Abs(got-want) > 1e-6 {
			t.Errorf("epoch %d: spectrum shifted by %.9f m/s, want %.9f (Keplerian)", i, got, want)
		}
		// One linear step from 0 sees the shift through the smooth
		// (Catmull–Rom) kernel interpolation: within 1e-4 of its size.
		if got := cLight * math.Tanh(shiftOf(f, 1)); math.Abs(got-want) > 1e-4*math.Abs(want)+1e-6 {
			t.Errorf("epoch %d: one-step shift %.6f m/s, want %.6f within 1e-4", i, got, want)
		}
		if ep.ActivityRV != 0 {
			t.Errorf("epoch %d: activity RV %v on an unspotted star", i, ep.ActivityRV)
		}
		// The measured RV of a noise-free run is the truth.
		if math.Abs(ep.RV-want) > 1e-9 {
			t.Errorf("epoch %d: table RV %v, want %v", i, ep.RV, want)
		}
	}
}

// TestPhotonNoise checks the noise of a spectrum: (F − F_noise-free)/√F_nf
// has mean 0 and variance 1 to the sampling error of 20000 pixels.
func TestPhotonNoise(t *testing.T) {
	sc := planetScenario()
	noisy := mustSimulate(t, sc, 3, nil)
	clean := mustSimulate(t, sc, 3, &Options{NoNoise: true})
	a, _ := noisy.Spectrum(2)
	b, _ := clean.Spectrum(2)
	var s1, s2, n float64
	for p := range a.Orders[0].Flux {
		z := (a.Orders[0].Flux[p] - b.Orders[0].Flux[p]) / math.Sqrt(b.Orders[0].Flux[p])
		s1 += z
		s2 += z * z
		n++
	}
	mean, vr := s1/n, s2/n-(s1/n)*(s1/n)
	// Standard errors: 1/√n = 0.007 for the mean, √(2/n) = 0.01 for the
	// variance; 5σ bounds.
	if math.Abs(mean) > 0.035 || math.Abs(vr-1) > 0.05 {
		t.Errorf("normalised noise: mean %.4f, variance %.4f, want 0 and 1", mean, vr)
	}
	// The RV photon noise follows the S/N: σ ∝ 1/S/N (Bouchy et al. 2001).
	sc2 := planetScenario()
	sc2.Instruments[0].SNR = 300
	r2 := mustSimulate(t, sc2, 3, nil)
	if ratio := noisy.s.inst[0].rvPhoton / r2.s.inst[0].rvPhoton; math.Abs(ratio-2) > 1e-9 {
		t.Errorf("σ_RV(S/N 150)/σ_RV(S/N 300) = %v, want 2", ratio)
	}
}

// TestSameSeedSameBytes checks that the same scenario and seed give the same
// files, byte for byte, whatever the number of workers, and that another
// seed gives other files.
func TestSameSeedSameBytes(t *testing.T) {
	sc := planetScenario()
	sc.Activity = Activity{EmergenceRate: 0.3}
	sc.Spectrum.Full = true
	sc.Spectrum.Pixels = 5000
	sc.Observing.End = sc.Observing.Start + 8
	dirs := []string{t.TempDir(), t.TempDir(), t.TempDir()}
	for i, c := range []struct {
		seed    uint64
		workers int
	}{{11, 1}, {11, 3}, {12, 2}} {
		res := mustSimulate(t, sc, c.seed, &Options{Workers: c.workers})
		if err := res.WriteFiles(dirs[i], &WriteOptions{Workers: c.workers}); err != nil {
			t.Fatal(err)
		}
	}
	files := []string{ScenarioFile, TruthFile, TableFile, filepath.Join(SpectraDir, SpectrumFile(0)), filepath.Join(SpectraDir, SpectrumFile(3))}
	for _, f := range files {
		a, err := os.ReadFile(filepath.Join(dirs[0], f))
		if err != nil {
			t.Fatal(err)
		}
		b, _ := os.ReadFile(filepath.Join(dirs[1], f))
		c, _ := os.ReadFile(filepath.Join(dirs[2], f))
		if !bytes.Equal(a, b) {
			t.Errorf("%s differs between two runs with the same seed", f)
		}
		if bytes.Equal(a, c) {
			t.Errorf("%s is the same with another seed", f)
		}
	}
	// The written scenario reproduces the run by itself (its seed inside).
	sc2, err := ReadScenario(filepath.Join(dirs[0], ScenarioFile))
	if err != nil {
		t.Fatal(err)
	}
	res := mustSimulate(t, sc2, 999, nil)
	d := t.TempDir()
	if err := res.WriteFiles(d, nil); err != nil {
		t.Fatal(err)
	}
	for _, f := range files {
		a, _ := os.ReadFile(filepath.Join(dirs[0], f))
		b, _ := os.ReadFile(filepath.Join(d, f))
		if !bytes.Equal(a, b) {
			t.Errorf("%s differs when rerun from the written scenario", f)
		}
	}
}

// TestSeries checks the measured series: columns, units, errors, the
// instrument offsets, and that measured values scatter about the truth by
// their errors.
func TestSeries(t *testing.T) {
	sc := planetScenario()
	sc.Instruments = []Instrument{{Name: "A", Offset: 100, SNR: 60, Jitter: 1, SNRScatter: 0.3}, {Name: "B", Offset: -50, SNR: 60, Weight: 1}}
	sc.Observing.End = sc.Observing.Start + 300
	sc.Activity = Activity{EmergenceRate: 0.2}
	res := mustSimulate(t, sc, 5, nil)
	s := res.Series()
	if s.Len() != res.Len() || s.Indicator("fwhm") == nil || s.Indicator("bis") == nil || s.Indicator("s_index") == nil {
		t.Fatalf("series has %d epochs and indicators %v", s.Len(), s.Indicators)
	}
	var chi2 float64
	seen := map[string]bool{}
	for i, e := range res.Epochs {
		seen[e.Instrument] = true
		off := 100.0
		if e.Instrument == "B" {
			off = -50
		}
		truth := off + e.ActivityRV + e.PlanetRV[0] + e.PlanetRV[1]
		z := (s.RV[i] - truth) / s.RVErr[i]
		chi2 += z * z
		if i > 0 && s.Time[i] <= s.Time[i-1] {
			t.Fatalf("times not increasing at %d", i)
		}
	}
	// With S/N scatter the errors of A vary, those of B do not.
	lo, hi := math.Inf(1), 0.0
	for i, e := range res.Epochs {
		if e.Instrument == "A" {
			lo, hi = math.Min(lo, s.RVErr[i]), math.Max(hi, s.RVErr[i])
		}
	}
	if hi < 1.3*lo {
		t.Errorf("RV errors of A span only %.3f–%.3f m/s with snr_scatter 0.3", lo, hi)
	}
	if !seen["A"] || !seen["B"] {
		t.Errorf("instruments used: %v, want A and B", seen)
	}
	// χ²/n of Gaussian noise: 1 ± √(2/n) (n ≈ 180); 5σ bound.
	n := float64(res.Len())
	if r := chi2 / n; math.Abs(r-1) > 5*math.Sqrt(2/n) {
		t.Errorf("χ²/n of RV about the truth = %.3f, want 1", r)
	}
}

// TestPoisson checks the low-count noise: mean and variance of 200000 draws
// equal μ (Poisson law) to 5 standard errors, P(0) = e^{−μ}.
func TestPoisson(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 1))
	for _, mu := range []float64{0.3, 4, 25} {
		const n = 200000
		var s1, s2, zeros float64
		for i := 0; i < n; i++ {
			k := poisson(rng, mu)
			s1 += k
			s2 += k * k
			if k == 0 {
				zeros++
			}
		}
		mean := s1 / n
		vr := s2/n - mean*mean
		// σ(mean) = √(μ/n); σ(var) ≈ √((2μ² + μ)/n) for a Poisson law.
		if math.Abs(mean-mu) > 5*math.Sqrt(mu/n) || math.Abs(vr-mu) > 5*math.Sqrt((2*mu*mu+mu)/n) {
			t.Errorf("μ = %g: mean %.4f, variance %.4f", mu, mean, vr)
		}
		if p0 := math.Exp(-mu); math.Abs(zeros/n-p0) > 5*math.Sqrt(p0*(1-p0)/n)+1e-12 {
			t.Errorf("μ = %g: P(0) = %.5f, want %.5f", mu, zeros/n, p0)
		}
	}
}
