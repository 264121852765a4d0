package photometry

import (
	"math"
	"testing"
)

// A pure sinusoid: the ACF's first peak is the period (McQuillan, Aigrain
// & Mazeh 2013, the method's description); GLS and the GP agree.
func TestRotationSinusoid(t *testing.T) {
	for _, P := range []float64{1.7, 12.3, 41} {
		lc := synth(6000, math.Max(10*P, 60), 1e-3, func(t float64) float64 { return 0.005 * math.Sin(2*math.Pi*t/P) }, 1)
		r, err := EstimateRotation(lc, nil)
		if err != nil {
			t.Fatal(err)
		}
		t.Logf("P = %g: adopted %.4g ± %.2g (%s); %s", P, r.Period, r.Err, r.Method, r.Agreement)
		for _, e := range r.Estimates {
			t.Logf("  %s: %.4g ± %.2g detected %v (%s)", e.Method, e.Period, e.Err, e.Detected, e.Note)
		}
		if !r.Detected || math.Abs(r.Period-P) > 0.02*P {
			t.Errorf("P = %g: got %v", P, r.Period)
		}
		a := find(r.Estimates, MethodACF)
		if !a.Detected || math.Abs(a.Period-P) > 0.02*P || r.ACF.Harmonic {
			t.Errorf("P = %g: ACF gave %v (harmonic %v)", P, a.Period, r.ACF.Harmonic)
		}
		if g := find(r.Estimates, MethodGP); g == nil || !g.Detected || math.Abs(g.Period-P) > 0.05*P {
			t.Errorf("P = %g: GP gave %+v", P, g)
		}
	}
}

// Two spots on opposite hemispheres, of unequal size: two dips per turn.
// The ACF's first peak is at the dip spacing P/2 but the peak at P is
// higher, and the published method takes P (McQuillan et al. 2013).
func TestRotationDoubleDip(t *testing.T) {
	P := 9.0
	dip := func(phase, depth float64) float64 {
		// A spot's dip: visible half the turn, foreshortened (cos of the
		// longitude from the disc centre).
		c := math.Cos(phase)
		if c < 0 {
			return 0
		}
		return -depth * c
	}
	f := func(t float64) float64 {
		ph := 2 * math.Pi * t / P
		return dip(ph, 0.01) + dip(ph+math.Pi, 0.007)
	}
	lc := synth(8000, 120, 5e-4, f, 2)
	r, err := EstimateRotation(lc, nil)
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("adopted %.4g ± %.2g (%s); %s", r.Period, r.Err, r.Method, r.Agreement)
	if !r.ACF.Harmonic {
		t.Errorf("the ACF's second peak should be the higher")
	}
	a := find(r.Estimates, MethodACF)
	if math.Abs(a.Period-P) > 0.02*P {
		t.Errorf("ACF period %v, want %v (not the dip spacing %v)", a.Period, P, P/2)
	}
}

// White noise only: a clear "no rotation detected".
func TestRotationNone(t *testing.T) {
	for seed := uint64(1); seed <= 3; seed++ {
		lc := synth(5000, 100, 1e-3, func(float64) float64 { return 0 }, seed)
		r, err := EstimateRotation(lc, nil)
		if err != nil {
			t.Fatal(err)
		}
		if r.Detected || !math.IsNaN(r.Period) || r.Reason == "" {
			t.Errorf("seed %d: noise gave %+v", seed, r)
		}
		t.Log(r.Reason)
	}
}

func BenchmarkRotation20000(b *testing.B) {
	lc := synth(20000, 400, 1e-3, func(t float64) float64 { return 0.003 * math.Sin(2*math.Pi*t/23) }, 3)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := EstimateRotation(lc, nil); err != nil {
			b.Fatal(err)
		}
	}
}
