package rvfit

import (
	"errors"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/integrate/quad"
)

func TestPriorsNormalised(t *testing.T) {
	// Each density integrates to 1 over its support (numerical quadrature,
	// a definition check).
	rows := []struct {
		name   string
		p      Prior
		lo, hi float64
	}{
		{"uniform", Uniform{-2, 3}, -2, 3},
		{"log-uniform", LogUniform{0.5, 200}, 0.5, 200},
		{"gaussian", Gaussian{1, 2}, -40, 40},
		{"truncated gaussian", TruncatedGaussian{1, 2, 0, 10}, 0, 10},
		{"truncated gaussian far tail", TruncatedGaussian{0, 1, 5, 9}, 5, 9},
		{"beta kipping", Beta{2.5, 3.03}, 0, 1},
	}
	for _, r := range rows {
		t.Run(r.name, func(t *testing.T) {
			if err := r.p.Validate(); err != nil {
				t.Fatal(err)
			}
			got := quad.Fixed(func(x float64) float64 { return math.Exp(r.p.LogProb(x)) }, r.lo, r.hi, 2000, nil, 0)
			if math.Abs(got-1) > 1e-6 {
				t.Errorf("∫p = %.9f", got)
			}
			// Draws stay in the support and match the mean (Monte Carlo,
			// 20000 draws: tolerance 5 standard errors).
			rng := rand.New(rand.NewPCG(1, 1))
			mean := quad.Fixed(func(x float64) float64 { return x * math.Exp(r.p.LogProb(x)) }, r.lo, r.hi, 2000, nil, 0)
			sd := math.Sqrt(quad.Fixed(func(x float64) float64 { return (x - mean) * (x - mean) * math.Exp(r.p.LogProb(x)) }, r.lo, r.hi, 2000, nil, 0))
			s := 0.0
			const n = 20000
			for i := 0; i < n; i++ {
				x := r.p.Rand(rng)
				if math.IsInf(r.p.LogProb(x), -1) {
					t.Fatalf("draw %g outside support", x)
				}
				s += x
			}
			if math.Abs(s/n-mean) > 5*sd/math.Sqrt(n) {
				t.Errorf("mean of draws %g, want %g", s/n, mean)
			}
		})
	}
	// Kipping (2013) Beta(0.867, 3.03): density diverges at 0 but is
	// normalised; check the mean a/(a+b) = 0.2225 by its draws.
	rng := rand.New(rand.NewPCG(1, 1))
	s := 0.0
	for i := 0; i < 20000; i++ {
		s += KippingEccentricity.Rand(rng)
	}
	if m := s / 20000; math.Abs(m-0.867/3.897) > 0.005 {
		t.Errorf("Kipping mean %g, want %g", m, 0.867/3.897)
	}
}

func TestPriorValidate(t *testing.T) {
	for _, p := range []Prior{
		Uniform{3, 1}, Uniform{1, 1}, LogUniform{0, 1}, LogUniform{5, 2}, Gaussian{0, 0},
		TruncatedGaussian{0, 1, 2, 1}, TruncatedGaussian{0, 1, 100, 200}, Beta{0, 1}, Beta{1, -1},
	} {
		if err := p.Validate(); !errors.Is(err, ErrBadPrior) {
			t.Errorf("%#v: %v", p, err)
		}
	}
}
