package rvfit

import (
	"errors"
	"math"
	"math/rand/v2"
	"testing"
)

func TestGelmanRubinCheck(t *testing.T) {
	// docs/methods.md §9 [computed]: chains (1,2,3,4), (2,3,4,5): B = 2,
	// W = 1.666667, V̂ = 1.75, R̂ = 1.024695.
	got := GelmanRubin([][]float64{{1, 2, 3, 4}, {2, 3, 4, 5}})
	if math.Abs(got-1.024695) > 1e-6 {
		t.Errorf("R̂ = %.7f, want 1.024695", got)
	}
	if !math.IsNaN(GelmanRubin([][]float64{{1, 2}})) {
		t.Error("one chain: want NaN")
	}
}

func ar1(rng *rand.Rand, n int, phi float64) []float64 {
	x := make([]float64, n)
	v := rng.NormFloat64() / math.Sqrt(1-phi*phi)
	for i := range x {
		v = phi*v + rng.NormFloat64()
		x[i] = v
	}
	return x
}

func TestAutocorrTimeAR1(t *testing.T) {
	// docs/methods.md §9 [computed, analytic]: AR(1) has τ_int = (1+φ)/(1−φ):
	// 3, 19, 199; a correct estimator recovers them within ≈10% on ≥1e5
	// steps (common practice). Chains: 4 × 1e5 (φ = 0.99: 8 × 2e5, where a
	// single 1e5 chain has ≈20% scatter).
	rng := rand.New(rand.NewPCG(1, 1))
	for _, c := range []struct {
		phi, want float64
		chains, n int
	}{{0.5, 3, 4, 100000}, {0.9, 19, 4, 100000}, {0.99, 199, 8, 200000}} {
		if testing.Short() && c.phi > 0.95 {
			continue
		}
		var ch [][]float64
		for k := 0; k < c.chains; k++ {
			ch = append(ch, ar1(rng, c.n, c.phi))
		}
		tau, err := AutocorrTime(ch, 5)
		if err != nil || math.Abs(tau-c.want)/c.want > 0.1 {
			t.Errorf("φ=%g: τ = %.4g (%v), want %g", c.phi, tau, err, c.want)
		}
	}
	if _, err := AutocorrTime([][]float64{ar1(rng, 2000, 0.99)}, 5); !errors.Is(err, ErrChainTooShort) {
		t.Errorf("short chain: %v", err)
	}
}

func TestSampleEnsembleGaussian(t *testing.T) {
	// A correlated 2-D Gaussian (σ = 1, 3; ρ = 0.8): sample means and
	// variances within Monte Carlo tolerance (5 standard errors, using
	// n_eff from the measured τ).
	s1, s2, rho := 1.0, 3.0, 0.8
	logp := func(x []float64) float64 {
		a, b := x[0]/s1, (x[1]-2)/s2
		return -0.5 * (a*a - 2*rho*a*b + b*b) / (1 - rho*rho)
	}
	rng := rand.New(rand.NewPCG(1, 1))
	init := make([][]float64, 16)
	for i := range init {
		init[i] = []float64{0.1 * rng.NormFloat64(), 2 + 0.1*rng.NormFloat64()}
	}
	ch, err := SampleEnsemble(logp, init, &EnsembleOptions{Steps: 6000, Seed: 3})
	if err != nil {
		t.Fatal(err)
	}
	for i, want := range []struct{ mu, sd float64 }{{0, s1}, {2, s2}} {
		tr := ch.Trace(i, 1000, 1)
		tau, err := AutocorrTime(tr, 5)
		if err != nil {
			t.Fatal(err)
		}
		var all []float64
		for _, c := range tr {
			all = append(all, c...)
		}
		sm := summary("x", all)
		neff := float64(len(all)) / tau
		if math.Abs(sm.Mean-want.mu) > 5*want.sd/math.Sqrt(neff) {
			t.Errorf("param %d: mean %g, want %g (n_eff %g)", i, sm.Mean, want.mu, neff)
		}
		if math.Abs(sm.Std-want.sd)/want.sd > 5/math.Sqrt(2*neff) {
			t.Errorf("param %d: sd %g, want %g (n_eff %g)", i, sm.Std, want.sd, neff)
		}
		// Median and 16/84% of a Gaussian: μ, μ ∓ σ.
		if math.Abs(sm.Hi-sm.Lo-2*want.sd)/(2*want.sd) > 0.1 {
			t.Errorf("param %d: 68%% width %g, want %g", i, sm.Hi-sm.Lo, 2*want.sd)
		}
	}
	if a := ch.AcceptanceFraction; a < 0.3 || a > 0.9 {
		t.Errorf("acceptance %g", a)
	}
	// Same chain for any number of workers.
	ch1, _ := SampleEnsemble(logp, init, &EnsembleOptions{Steps: 200, Seed: 3, Workers: 1})
	ch2, _ := SampleEnsemble(logp, init, &EnsembleOptions{Steps: 200, Seed: 3, Workers: 2})
	for i := range ch1.Samples {
		if ch1.Samples[i] != ch2.Samples[i] {
			t.Fatal("chains differ between 1 and 2 workers")
		}
	}
	if ch1.Samples[len(ch1.Samples)-1] != ch.Samples[len(ch1.Samples)-1] {
		t.Error("a longer run does not extend the shorter one")
	}
}

func TestSampleEnsembleBad(t *testing.T) {
	logp := func(x []float64) float64 { return -x[0] * x[0] }
	one := [][]float64{{1}, {1}, {1}, {1}}
	rows := []struct {
		name string
		init [][]float64
		o    *EnsembleOptions
		want error
	}{
		{"empty", nil, nil, ErrBadWalkers},
		{"odd", [][]float64{{1}, {2}, {3}}, nil, ErrBadWalkers},
		{"too few", [][]float64{{1, 1}, {2, 2}}, nil, ErrBadWalkers},
		{"one point", one, nil, ErrBadWalkers},
		{"bad a", [][]float64{{1}, {2}}, &EnsembleOptions{A: 0.5}, ErrBadOption},
		{"infinite start", [][]float64{{1}, {math.Inf(1)}}, nil, ErrBadWalkers},
	}
	for _, r := range rows {
		t.Run(r.name, func(t *testing.T) {
			if _, err := SampleEnsemble(logp, r.init, r.o); !errors.Is(err, r.want) {
				t.Errorf("err = %v, want %v", err, r.want)
			}
		})
	}
}
