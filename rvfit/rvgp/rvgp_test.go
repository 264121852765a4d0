package rvgp

import (
	"math"
	"math/rand/v2"
	"testing"

	"spotsift/gp"
	"spotsift/rvfit"
	"spotsift/rvfit/rvtest"
)

func TestNoiseMatchesWhiteLimit(t *testing.T) {
	// With a vanishing kernel amplitude the GP likelihood is the white-noise
	// one (identity of the two formulas).
	rng := rand.New(rand.NewPCG(1, 1))
	tt := rvtest.NightlyTimes(rng, 40, 2459000, 200)
	r := make([]float64, len(tt))
	v := make([]float64, len(tt))
	inst := make([]int, len(tt))
	for i := range r {
		r[i] = 2 * rng.NormFloat64()
		v[i] = 4
	}
	n, err := New(gp.RotationTerm{B: 1, C: 1, L: 10, P: 5}, []string{"B", "C", "L", "P"}, []string{"A"}, gp.DenseSolver)
	if err != nil {
		t.Fatal(err)
	}
	got, err := n.LogLikelihood(tt, r, v, inst, []float64{1e-14, 1, 10, 5, 0.7})
	if err != nil {
		t.Fatal(err)
	}
	w := &rvfit.WhiteNoise{Instruments: []string{"A"}}
	want, _ := w.LogLikelihood(tt, r, v, inst, []float64{0.7})
	if math.Abs(got-want) > 1e-9*math.Abs(want) {
		t.Errorf("GP %v, white %v", got, want)
	}
	if names := n.ParamNames(); len(names) != 5 || names[4] != "jitter_A" {
		t.Errorf("names %v", names)
	}
}

func TestFitWithGPNoise(t *testing.T) {
	// A planet plus correlated noise: the joint MAP fit with a rotation
	// kernel runs and finds the planet's period.
	rng := rand.New(rand.NewPCG(2, 1))
	tt := rvtest.NightlyTimes(rng, 60, 2459000, 300)
	pl := rvtest.Planet{P: 6.3, K: 8, E: 0.1, Omega: 1, Tp: 2459002}
	rv, e := rvtest.Synthetic(rng, tt, []rvtest.Planet{pl}, 0, 1.5, 0)
	for i, ti := range tt {
		rv[i] += 3 * math.Sin(2*math.Pi*ti/23)
	}
	s := &rvfit.Series{Name: "gp", Time: tt, RV: rv, RVErr: e, Instrument: make([]string, len(tt))}
	n, err := New(gp.RotationTerm{B: 1, C: 1, L: 10, P: 5}, []string{"gp_B", "gp_C", "gp_L", "gp_P"}, []string{rvfit.DefaultInstrument}, 0)
	if err != nil {
		t.Fatal(err)
	}
	pri := map[string]rvfit.Prior{
		"gp_B":           rvfit.LogUniform{Min: 0.1, Max: 100},
		"gp_C":           rvfit.Uniform{Min: 0, Max: 10},
		"gp_L":           rvfit.LogUniform{Min: 5, Max: 500},
		"gp_P":           rvfit.Uniform{Min: 15, Max: 40},
		"jitter_default": rvfit.Uniform{Min: 0, Max: 10},
	}
	fit, err := rvfit.FitModel(s, 1, n, &rvfit.FitOptions{Starts: 4, Seed: 1, Periods: []float64{6.3}, Model: &rvfit.ModelOptions{Priors: pri, PMin: 2}})
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(fit.Planets[0].P-pl.P) > 0.05 || math.Abs(fit.Planets[0].K-pl.K) > 2 {
		t.Errorf("planet %+v", fit.Planets[0])
	}
}
