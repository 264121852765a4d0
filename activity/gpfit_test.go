package activity

import (
	"math"
	"math/rand/v2"
	"testing"

	"spotsift/gp"
	"spotsift/rvfit"
)

// rotationStar draws n epochs over span days of a rotation-kernel process
// (amplitude amp m/s, rotation prot d) plus white noise of err m/s, with
// an optional sinusoid of semi-amplitude k at period pk.
func rotationStar(seed uint64, n int, span, prot, amp, err, k, pk float64) *rvfit.Series {
	rng := rand.New(rand.NewPCG(seed, 7))
	var t []float64
	for len(t) < n {
		t = append(t, span*float64(len(t))/float64(n)+0.3*rng.Float64())
	}
	ker := gp.RotationSHO{Amp: amp, Period: prot, Quality: 1, QualityGap: 5, Mix: 0.5}
	v := make([]float64, n)
	for i := range v {
		v[i] = err * err
	}
	sol, e := gp.NewSemisep(ker, t, v)
	if e != nil {
		panic(e)
	}
	y, e := sol.Draw(nil, rng)
	if e != nil {
		panic(e)
	}
	s := &rvfit.Series{Name: "sim"}
	for i, ti := range t {
		s.Time = append(s.Time, ti)
		rv := y[i] + 10
		if k > 0 {
			rv += k * math.Sin(2*math.Pi*ti/pk)
		}
		s.RV = append(s.RV, rv)
		s.RVErr = append(s.RVErr, err)
		s.Instrument = append(s.Instrument, rvfit.DefaultInstrument)
	}
	return s
}

func TestFitGPActivityRotation(t *testing.T) {
	// A rotation-kernel draw (P = 17 d, 8 m/s) with 1 m/s noise: the fit
	// converges, recovers the period within 10% (several of its Laplace
	// errors at most), its errors are finite, and no parameter sits on a
	// bound except possibly the jitter (the data were drawn with none).
	s := rotationStar(3, 150, 200, 17, 8, 1, 0, 0)
	f, err := FitGPActivity(s, nil)
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("%s agree %d/%d; P %.3f ± %.3f; lnL %.2f BIC %.2f lnZ %.2f; params %v errors %v bounds %q",
		f.Status, f.StartsAgree, f.Starts, f.Rotation, f.RotationErr, f.LogLikelihood, f.BIC, f.LogEvidence, f.Params, f.Errors, f.AtBound)
	if !f.Converged {
		t.Errorf("not converged: %s", f.Status)
	}
	if math.Abs(f.Rotation-17) > 1.7 {
		t.Errorf("rotation %v, want 17 within 10%%", f.Rotation)
	}
	for i, e := range f.Errors[:gpKernelParams] {
		if f.AtBound[i] == "" && !(e > 0) {
			t.Errorf("%s: error %v", f.Names[i], e)
		}
	}
	if f.Params[0] < 3 {
		t.Errorf("GP amplitude collapsed: %v m/s", f.Params[0])
	}
	if len(f.Residuals) != s.Len() {
		t.Fatalf("%d residuals", len(f.Residuals))
	}
	// The residuals after the full model are near the white noise (1 m/s),
	// far below the 8 m/s activity.
	ss := 0.0
	for _, r := range f.Residuals {
		ss += r * r
	}
	if rms := math.Sqrt(ss / float64(len(f.Residuals))); rms > 2.5 {
		t.Errorf("residual rms %v m/s after the full model", rms)
	}
}

func TestCompareGPActivity(t *testing.T) {
	// A 5 m/s sinusoid at 6.3 d on top of the activity: the fit with the
	// sinusoid wins by far in BIC and recovers K.
	s := rotationStar(4, 150, 200, 21, 6, 1, 5, 6.3)
	without, with, err := CompareGPActivity(s, 6.3, nil)
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("without: BIC %.1f lnZ %.1f; with: BIC %.1f lnZ %.1f K %.2f ± %.2f", without.BIC, without.LogEvidence, with.BIC, with.LogEvidence, with.Amplitude, with.AmplitudeErr)
	if !(with.BIC < without.BIC-10) {
		t.Errorf("ΔBIC = %v", with.BIC-without.BIC)
	}
	if math.Abs(with.Amplitude-5) > 4*with.AmplitudeErr || !(with.AmplitudeErr > 0) {
		t.Errorf("K = %v ± %v, want 5", with.Amplitude, with.AmplitudeErr)
	}
	if !math.IsNaN(without.Amplitude) {
		t.Errorf("amplitude without a sinusoid %v, want NaN", without.Amplitude)
	}
}

// multiStar draws RV, log R'HK and BIS of a star rotating in prot days
// from the multi-output model (gp.MultiRotation's dense equivalent) on n
// nightly epochs over span days, with measurement noise.
func multiStar(seed uint64, n int, span, prot float64) *rvfit.Series {
	rng := rand.New(rand.NewPCG(seed, 9))
	var t []float64
	for len(t) < n {
		t = append(t, span*float64(len(t))/float64(n)+0.3*rng.Float64())
	}
	v := func(s float64) []float64 {
		out := make([]float64, n)
		for i := range out {
			out[i] = s * s
		}
		return out
	}
	series := []gp.Series{{Output: 0, T: t, Variance: v(1)}, {Output: 1, T: t, Variance: v(0.003)}, {Output: 2, T: t, Variance: v(1.5)}}
	mr, err := gp.NewMultiRotation([]string{"rv", "log_rhk", "bis"}, series)
	if err != nil {
		panic(err)
	}
	// Levels and slopes in the proportions of Rajpaul et al. (2015)'s
	// fits: RV driven by both G and dG/dt, BIS anti-correlated.
	p := []float64{prot, 1, 4, 0.5, 6, 1.5 * prot, 0.03, 0, -4, 0.5 * prot, 0, 0, 0}
	mm, _, err := mr.Dense(p)
	if err != nil {
		panic(err)
	}
	md, err := (&gp.MultiNoise{Model: mm}).Factor(series)
	if err != nil {
		panic(err)
	}
	d, err := md.DrawSeries(rng)
	if err != nil {
		panic(err)
	}
	s := &rvfit.Series{Name: "multi"}
	lr := rvfit.Indicator{Name: "log_rhk", Value: make([]float64, n), Err: make([]float64, n)}
	bis := rvfit.Indicator{Name: "bis", Value: make([]float64, n), Err: make([]float64, n)}
	for i, ti := range t {
		s.Time = append(s.Time, ti)
		s.RV = append(s.RV, d[0][i]+3)
		s.RVErr = append(s.RVErr, 1)
		s.Instrument = append(s.Instrument, rvfit.DefaultInstrument)
		lr.Value[i], lr.Err[i] = d[1][i]-4.7, 0.003
		bis.Value[i], bis.Err[i] = d[2][i]+20, 1.5
	}
	s.Indicators = []rvfit.Indicator{lr, bis}
	return s
}

func TestFitGPActivityMulti(t *testing.T) {
	// Without a rotation estimate the multi-output fit finds the rotation
	// from the data alone (within 10%), converges, and leaves residuals at
	// the measurement noise.
	// The baseline covers at least six rotations (as a survey of a slow
	// rotator would).
	for _, prot := range []float64{4, 17, 45} {
		s := multiStar(uint64(prot), 150, math.Max(200, 6*prot), prot)
		f, err := FitGPActivity(s, &GPActivityOptions{Model: GPMulti})
		if err != nil {
			t.Fatal(err)
		}
		t.Logf("P %g: %s, agree %d/%d, P %.3f ± %.3f, lnL %.1f, params %.3g, errors %.2g, bounds %q", prot, f.Status, f.StartsAgree, f.Starts, f.Rotation, f.RotationErr, f.LogLikelihood, f.Params, f.Errors, f.AtBound)
		if !f.Converged {
			t.Errorf("P %g: not converged (%s)", prot, f.Status)
		}
		if math.Abs(f.Rotation-prot) > 0.1*prot {
			t.Errorf("P %g: rotation %v", prot, f.Rotation)
		}
		ss := 0.0
		for _, r := range f.Residuals {
			ss += r * r
		}
		if rms := math.Sqrt(ss / float64(len(f.Residuals))); rms > 2 {
			t.Errorf("P %g: residual rms %v m/s", prot, rms)
		}
	}
}

// BenchmarkFitGPActivityMulti times a whole MAP fit (6 starts, Laplace) of
// the multi-output model to RV + 2 indicators on 150 epochs.
func BenchmarkFitGPActivityMulti(b *testing.B) {
	s := multiStar(17, 150, 200, 17)
	for b.Loop() {
		if _, err := FitGPActivity(s, &GPActivityOptions{Model: GPMulti, Workers: 1}); err != nil {
			b.Fatal(err)
		}
	}
}
