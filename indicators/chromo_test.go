package indicators

import (
	"errors"
	"math"
	"math/rand/v2"
	"testing"
)

// linearSpectrum samples F(λ) = a + b(λ − 3950) on a uniform grid.
func linearSpectrum(lo, hi, step, a, b float64, vacuum bool) *Spectrum {
	n := int((hi-lo)/step) + 1
	o := Order{Wavelength: make([]float64, n), Flux: make([]float64, n)}
	for i := range o.Wavelength {
		w := lo + step*float64(i)
		o.Wavelength[i] = w
		o.Flux[i] = a + b*(w-3950)
	}
	return &Spectrum{Name: "linear", Orders: []Order{o}, Vacuum: vacuum}
}

func TestSIndex(t *testing.T) {
	// Flat spectrum: (H+K)/(R+V) = 2·1.09/(2·20) = 0.0545 with integrated
	// fluxes (docs/methods.md §4.1 [computed]).
	flat := linearSpectrum(3850, 4050, 0.01, 1000, 0, false)
	s, sig, err := SIndex(flat, 0, nil)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(s-0.0545) > 1e-9 {
		t.Errorf("flat S = %.10f, want 0.0545", s)
	}
	// Photon noise σ² = F (no Err given): the analytic error of the ratio.
	// H, K: Σ F w_x² with w_x = ∫T over a pixel; R, V: Σ F Δλ².
	_ = sig

	// A linear spectrum F = a + b(λ − 3950): every band integral is the
	// band area times F at the band centre, because both passbands are
	// symmetric (analytic identity). A 0.001 Å grid makes pixelisation
	// negligible (1e-9 relative).
	a, b := 1000.0, 2.0
	lin := linearSpectrum(3850, 4050, 0.001, a, b, false)
	F := func(l float64) float64 { return a + b*(l-3950) }
	want := 1.09 * (F(3968.470) + F(3933.664)) / (20 * (F(4001.07) + F(3901.07)))
	if s, _, err := SIndex(lin, 0, nil); err != nil || math.Abs(s/want-1) > 1e-9 {
		t.Errorf("linear S = %.12f, want %.12f (err %v)", s, want, err)
	}
	// The user's calibration a·S + b (example: HARPS, S_MW = 1.111 S_inst
	// + 0.0153, Lovis et al. 2011 [memory]).
	if s, _, _ := SIndex(lin, 0, &SIndexCalibration{A: 1.111, B: 0.0153}); math.Abs(s-(1.111*want+0.0153)) > 1e-9 {
		t.Errorf("calibrated S = %v, want %v", s, 1.111*want+0.0153)
	}
	// The same spectrum on the vacuum scale (bands converted with Morton
	// 2000) gives the same S to the pixelisation level.
	vac := ToVacuum(lin)
	if s, _, err := SIndex(vac, 0, nil); err != nil || math.Abs(s/want-1) > 1e-6 {
		t.Errorf("vacuum S = %.12f, want %.12f (err %v)", s, want, err)
	}
	// Rest frame: the spectrum shifted by +30 km/s, measured with rv =
	// 30 km/s, gives the unshifted value (the bands move with the star).
	shifted := ShiftSpectrum(lin, 30e3)
	s0, _, _ := SIndex(lin, 0, nil)
	if s1, _, err := SIndex(shifted, 30e3, nil); err != nil || math.Abs(s1/s0-1) > 1e-6 {
		t.Errorf("rest-frame S = %.12f, want %.12f (err %v)", s1, s0, err)
	}
	// A band outside the spectrum is an error, not a zero.
	short := linearSpectrum(3920, 4050, 0.01, 1000, 0, false)
	if _, _, err := SIndex(short, 0, nil); !errors.Is(err, ErrOutsideSpectrum) {
		t.Errorf("V band missing: err = %v, want ErrOutsideSpectrum", err)
	}
}

func TestIndexErrors(t *testing.T) {
	// Monte Carlo: the scatter of each index over 300 noise draws matches
	// its propagated error within 10 % (1/sqrt(2·299) = 4 % standard error
	// of a standard deviation: a 2.4σ bound).
	base := linearSpectrum(3850, 6700, 0.05, 400, 0, false)
	type idx struct {
		name string
		f    func(*Spectrum) (float64, float64, error)
	}
	for _, q := range []idx{
		{"S", func(s *Spectrum) (float64, float64, error) { return SIndex(s, 0, nil) }},
		{"H-alpha", func(s *Spectrum) (float64, float64, error) { return HAlphaIndex(s, 0, 0) }},
		{"Na D", func(s *Spectrum) (float64, float64, error) { return NaDIndex(s, 0) }},
	} {
		var vals []float64
		var errSum float64
		const n = 300
		for i := 0; i < n; i++ {
			v, e, err := q.f(addNoise(base, rand.New(rand.NewPCG(3, uint64(i)))))
			if err != nil {
				t.Fatal(err)
			}
			vals = append(vals, v)
			errSum += e
		}
		m := mean(vals)
		var ss float64
		for _, v := range vals {
			ss += (v - m) * (v - m)
		}
		sd := math.Sqrt(ss / (n - 1))
		if r := sd / (errSum / n); math.Abs(r-1) > 0.1 {
			t.Errorf("%s: scatter %.4g, reported %.4g (ratio %.3f)", q.name, sd, errSum/n, r)
		}
	}
	// Flat spectrum: H-alpha = F/(F+F) = 0.5, Na D = 2F/2F = 1 with mean
	// fluxes (analytic identity).
	if v, _, err := HAlphaIndex(base, 0, 0); err != nil || math.Abs(v-0.5) > 1e-12 {
		t.Errorf("flat H-alpha = %v (%v), want 0.5", v, err)
	}
	if v, _, err := NaDIndex(base, 0); err != nil || math.Abs(v-1) > 1e-12 {
		t.Errorf("flat Na D = %v (%v), want 1", v, err)
	}
	blue := linearSpectrum(3850, 4500, 0.05, 400, 0, false)
	if _, _, err := HAlphaIndex(blue, 0, 0); !errors.Is(err, ErrOutsideSpectrum) {
		t.Errorf("H-alpha outside: err = %v", err)
	}
	if _, _, err := NaDIndex(blue, 0); !errors.Is(err, ErrOutsideSpectrum) {
		t.Errorf("Na D outside: err = %v", err)
	}
}

func TestLogRPrimeHK(t *testing.T) {
	// docs/methods.md §4.2 table [computed] (Noyes et al. 1984 recipe with the
	// Middelkoop C_cf and the Noyes correction), 4 decimals.
	for _, tc := range []struct{ bv, s, want float64 }{
		{0.65, 0.1694, -4.9412},
		{0.65, 0.1701, -4.9374},
		{0.65, 0.1621, -4.9833},
		{0.653, 0.1694, -4.9424},
		{0.65, 0.300, -4.5173},
		{0.50, 0.200, -4.7071},
		{0.80, 0.200, -4.8797},
		{1.00, 0.200, -5.0416},
	} {
		got, sig, err := LogRPrimeHK(tc.s, 0.001, RHKOptions{BV: tc.bv})
		if err != nil {
			t.Fatal(err)
		}
		if math.Abs(got-tc.want) > 6e-5 {
			t.Errorf("B-V %v, S %v: log R'HK = %.5f, want %.4f", tc.bv, tc.s, got, tc.want)
		}
		// The error is the derivative times σ_S (finite-difference check).
		hi, _, _ := LogRPrimeHK(tc.s+1e-6, 0, RHKOptions{BV: tc.bv})
		lo, _, _ := LogRPrimeHK(tc.s-1e-6, 0, RHKOptions{BV: tc.bv})
		if d := (hi - lo) / 2e-6 * 0.001; math.Abs(sig/d-1) > 1e-5 {
			t.Errorf("B-V %v, S %v: σ = %v, finite difference %v", tc.bv, tc.s, sig, d)
		}
	}
	if _, _, err := LogRPrimeHK(0.2, 0.001, RHKOptions{BV: 1.5}); !errors.Is(err, ErrColourRange) {
		t.Errorf("B-V 1.5: err = %v, want ErrColourRange", err)
	}
	if _, _, err := LogRPrimeHK(0.2, 0.001, RHKOptions{BV: 1.5, Extrapolate: true}); err != nil {
		t.Errorf("B-V 1.5 extrapolated: err = %v", err)
	}
	if _, _, err := LogRPrimeHK(0.01, 0.001, RHKOptions{BV: 0.65}); !errors.Is(err, ErrBadParameter) {
		t.Errorf("S below photosphere: err = %v", err)
	}
}

func TestReadNoise(t *testing.T) {
	// A flat spectrum of 100 e⁻ per pixel with 10 e⁻ read noise doubles
	// every pixel variance (100 + 10²), so each index error grows by
	// exactly sqrt(2) (analytic identity).
	s := linearSpectrum(3850, 6700, 0.05, 100, 0, false)
	m, _ := NewMask([]float64{5000}, []float64{1}, false)
	get := func(rn float64) *Result {
		r, _ := Measure(s, m, &Options{CCF: &CCFOptions{ReadNoise: rn}})
		return r
	}
	r0, r1 := get(0), get(10)
	for _, q := range []struct {
		name string
		a, b Estimate
	}{{"S", r0.SIndex, r1.SIndex}, {"H-alpha", r0.HAlpha, r1.HAlpha}, {"Na D", r0.NaD, r1.NaD}} {
		if !q.a.OK() || !q.b.OK() || math.Abs(q.b.Sigma/q.a.Sigma-math.Sqrt2) > 1e-12 {
			t.Errorf("%s: σ %v → %v with read noise (%v, %v), want ×sqrt(2)", q.name, q.a.Sigma, q.b.Sigma, q.a.Err, q.b.Err)
		}
	}
	if _, err := ComputeCCF(s, m, &CCFOptions{ReadNoise: -1}); !errors.Is(err, ErrBadParameter) {
		t.Errorf("negative read noise: err = %v", err)
	}
}
