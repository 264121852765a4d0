package rvfit

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"spotsift/rvfit/rvtest"
)

// TestLogPosteriorGrad checks the analytic gradient of the posterior
// (Keplerians through their (P, K, √e cos ω, √e sin ω, t_c) parameters,
// offsets, a quadratic trend, white-noise jitters, every prior kind)
// against finite differences to 1e-6 relative (issue 15), at random
// points of several models: one to three planets, eccentricities from 0
// to 0.9, two instruments, a Beta eccentricity prior and Gaussian
// priors.
func TestLogPosteriorGrad(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 3))
	tt := rvtest.NightlyTimes(rng, 80, 2459000, 300)
	pls := []rvtest.Planet{{P: 7.3, K: 9, E: 0.4, Omega: 1, Tp: 2459003}, {P: 41, K: 5, E: 0.1, Omega: 4, Tp: 2459020}}
	rv, e := rvtest.Synthetic(rng, tt, pls, 3, 1.5, 1)
	inst := make([]string, len(tt))
	for i := range inst {
		inst[i] = "A"
		if i%3 == 0 {
			inst[i] = "B"
			rv[i] += 20
		}
	}
	s := &Series{Name: "grad", Time: tt, RV: rv, RVErr: e, Instrument: inst}
	worst := 0.0
	for trial, c := range []struct {
		planets, trend int
		ecc            Prior
		e              float64
	}{{1, 0, nil, 0.3}, {2, 2, KippingEccentricity, 0.6}, {3, 1, nil, 0.9}, {2, 0, nil, 1e-4}, {1, 2, Beta{2, 5}, 0.05}} {
		opts := &ModelOptions{Trend: c.trend, Eccentricity: c.ecc, Priors: map[string]Prior{"K1": Gaussian{8, 3}, "offset_A": TruncatedGaussian{0, 50, -200, 200}}}
		m, err := NewModel(s, c.planets, nil, opts)
		if err != nil {
			t.Fatal(err)
		}
		if !m.HasGradient() {
			t.Fatal("white-noise model has no gradient")
		}
		x := make([]float64, m.NumParams())
		for p := 0; p < c.planets; p++ {
			P := 5 + 40*rng.Float64()
			w := 2 * math.Pi * rng.Float64()
			x[5*p], x[5*p+1] = P, 3+5*rng.Float64()
			x[5*p+2], x[5*p+3] = math.Sqrt(c.e)*math.Cos(w), math.Sqrt(c.e)*math.Sin(w)
			x[5*p+4] = m.RefTime() + P*(rng.Float64()-0.5)
		}
		for i := 5 * c.planets; i < len(x); i++ {
			lo, hi := m.Prior(i).Support()
			lo, hi = math.Max(lo, -10), math.Min(hi, 10)
			x[i] = lo + (0.3+0.4*rng.Float64())*(hi-lo)
		}
		g := make([]float64, len(x))
		v := m.LogPosteriorGrad(g, x)
		if want := m.LogPosterior(x); math.Abs(v-want) > 1e-9*math.Abs(want) {
			t.Fatalf("trial %d: LogPosteriorGrad value %v, LogPosterior %v", trial, v, want)
		}
		sc := m.scales(x)
		for p := 0; p < c.planets; p++ {
			// Steps well inside the distance to the disk's centre, where
			// v is not twice differentiable in (h, k), and to its rim.
			sc[5*p+2] = math.Min(sc[5*p+2], math.Sqrt(c.e))
			sc[5*p+3] = sc[5*p+2]
		}
		name := fmt.Sprintf("trial %d (%d planets, e %g, trend %d)", trial, c.planets, c.e, c.trend)
		worst = math.Max(worst, rvtest.CheckGradient(t, name, m.LogPosterior, g, x, sc, 1e-6))
	}
	t.Logf("largest relative difference %.2g", worst)
}
