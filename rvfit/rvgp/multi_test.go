package rvgp

import (
	"errors"
	"math"
	"math/rand/v2"
	"testing"

	"spotsift/gp"
	"spotsift/rvfit"
)

// TestMultiNoiseFindsPlanet draws RV, log R'HK and BIS from one Rajpaul
// et al. (2015) latent process, adds a planet to the RVs, and fits the
// planet with the multi-output noise model.
func TestMultiNoiseFindsPlanet(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 1))
	var tt []float64
	for d := 0.0; d < 120; d++ {
		if rng.Float64() < 0.45 {
			tt = append(tt, d+0.1*rng.Float64())
		}
	}
	n := len(tt)
	latent := gp.NewQuasiPeriodicRajpaul(1, 17, 0.6, 25)
	model := gp.NewRajpaul(latent, 3, 8, 0.02, 2, -5)
	md, err := (&gp.MultiNoise{Model: model}).Factor([]gp.Series{
		{Output: gp.OutRV, T: tt, Variance: constant(n, 1e-6)},
		{Output: gp.OutIndex, T: tt, Variance: constant(n, 1e-10)},
		{Output: gp.OutBIS, T: tt, Variance: constant(n, 1e-6)},
	})
	if err != nil {
		t.Fatal(err)
	}
	draw, err := md.DrawSeries(rng)
	if err != nil {
		t.Fatal(err)
	}
	s := &rvfit.Series{Name: "multi"}
	lr := rvfit.Indicator{Name: "log_rhk", Value: make([]float64, n), Err: constant(n, 0.002)}
	bis := rvfit.Indicator{Name: "bis", Value: make([]float64, n), Err: constant(n, 0.7)}
	pl := rvfit.Keplerian{P: 5.3, K: 4, Tp: 2}
	for i, ti := range tt {
		s.Time = append(s.Time, ti)
		s.RV = append(s.RV, draw[0][i]+pl.RV(ti)+0.7*rng.NormFloat64())
		s.RVErr = append(s.RVErr, 0.7)
		s.Instrument = append(s.Instrument, rvfit.DefaultInstrument)
		lr.Value[i] = -4.8 + draw[1][i] + 0.002*rng.NormFloat64()
		bis.Value[i] = draw[2][i] + 0.7*rng.NormFloat64()
	}
	s.Indicators = []rvfit.Indicator{lr, bis}
	noise, err := NewMultiNoise(s, "log_rhk", "bis")
	if err != nil {
		t.Fatal(err)
	}
	if got, want := noise.NumParams(), 9+1+2; got != want {
		t.Fatalf("NumParams = %d, want %d", got, want)
	}
	pri := map[string]rvfit.Prior{
		"gp_prot":          rvfit.Uniform{Min: 12, Max: 25},
		"gp_qual":          rvfit.LogUniform{Min: 0.05, Max: 30},
		"gp_qgap":          rvfit.LogUniform{Min: 0.01, Max: 30},
		"gp_mix":           rvfit.Uniform{Min: 0, Max: 1},
		"gp_rv_level":      rvfit.Uniform{Min: 0, Max: 20},
		"gp_rv_slope":      rvfit.Uniform{Min: -100, Max: 100},
		"gp_log_rhk_level": rvfit.Uniform{Min: -0.2, Max: 0.2},
		"gp_bis_level":     rvfit.Uniform{Min: -20, Max: 20},
		"gp_bis_slope":     rvfit.Uniform{Min: -100, Max: 100},
		"jitter_default":   rvfit.Uniform{Min: 0, Max: 5},
		"jitter_log_rhk":   rvfit.Uniform{Min: 0, Max: 0.05},
		"jitter_bis":       rvfit.Uniform{Min: 0, Max: 5},
	}
	fit, err := rvfit.FitModel(s, 1, noise, &rvfit.FitOptions{Starts: 2, Seed: 1, Periods: []float64{5.3}, Model: &rvfit.ModelOptions{Priors: pri, PMin: 2}})
	if err != nil {
		t.Fatal(err)
	}
	// The injected planet: P = 5.3 d, K = 4 m/s; tolerances several times
	// the expected errors for ~55 epochs with 0.7 m/s noise.
	if math.Abs(fit.Planets[0].P-5.3) > 0.1 || math.Abs(fit.Planets[0].K-4) > 1.5 {
		t.Errorf("planet P = %v d, K = %v m/s; want 5.3, 4", fit.Planets[0].P, fit.Planets[0].K)
	}
}

func TestMultiNoiseBadInput(t *testing.T) {
	s := &rvfit.Series{Time: []float64{1, 2, 3, 4, 5}, RV: []float64{1, 2, 1, 2, 1}, RVErr: constant(5, 1), Instrument: make([]string, 5),
		Indicators: []rvfit.Indicator{{Name: "s_index", Value: []float64{1, 2, 3, 4, 5}}}}
	if _, err := NewMultiNoise(s, "", ""); !errors.Is(err, rvfit.ErrBadOption) {
		t.Errorf("no columns: %v", err)
	}
	if _, err := NewMultiNoise(s, "log_rhk", ""); !errors.Is(err, rvfit.ErrMissingColumn) {
		t.Errorf("absent column: %v", err)
	}
	if _, err := NewMultiNoise(s, "s_index", ""); !errors.Is(err, rvfit.ErrMissingColumn) {
		t.Errorf("column without errors: %v", err)
	}
}

func constant(n int, v float64) []float64 {
	out := make([]float64, n)
	for i := range out {
		out[i] = v
	}
	return out
}
