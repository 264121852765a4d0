package rvfit

import (
	"math"
	"math/rand/v2"
	"testing"
)

// stepSeries is one instrument observed every ~9 days for three years
// with a 120-day gap in the middle, white noise of sigma m/s, an optional
// zero-point step at the gap and a sinusoid (an orbit or activity).
func stepSeries(seed uint64, sigma, step, k, period float64) *Series {
	r := rand.New(rand.NewPCG(seed, 7))
	s := &Series{}
	for t := 2455000.0; t < 2456100; t += 6 + 6*r.Float64() {
		if t > 2455500 && t < 2455620 {
			continue
		}
		v := r.NormFloat64()*sigma + k*math.Sin(2*math.Pi*t/period)
		if t > 2455560 {
			v += step
		}
		s.Time, s.RV, s.RVErr, s.Instrument = append(s.Time, t), append(s.RV, v), append(s.RVErr, sigma), append(s.Instrument, "A")
	}
	return s
}

// A step of five times the noise at an observing gap is found near the
// gap, on each of several seeds; none is reported without a step, with or
// without a slow orbit or a rotation signal of a few times the noise
// (thresholds set once, checked on seeds 1 to 10).
func TestFindSteps(t *testing.T) {
	for seed := uint64(1); seed <= 10; seed++ {
		st := FindSteps(stepSeries(seed, 2, 10, 0, 1))
		if len(st) != 1 || st[0].At < 2455500 || st[0].At > 2455620 || math.Abs(st[0].Size-10) > 4*st[0].Err {
			t.Errorf("seed %d: step of 10 m/s found as %+v", seed, st)
		}
		for _, c := range []struct{ k, p float64 }{{0, 1}, {8, 2000}, {6, 23.4}} {
			if st := FindSteps(stepSeries(seed, 2, 0, c.k, c.p)); len(st) != 0 {
				t.Errorf("seed %d, K %g P %g: false step %v", seed, c.k, c.p, st)
			}
		}
	}
}
