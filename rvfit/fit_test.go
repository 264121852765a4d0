package rvfit

import (
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"spotsift/rvfit/rvtest"
)

func TestBICAndLaplace(t *testing.T) {
	// docs/methods.md §9 [computed]: ln L̂ = −100, k = 5, N = 50 → 219.560115.
	if got := BIC(-100, 5, 50); math.Abs(got-219.560115) > 1e-6 {
		t.Errorf("BIC = %.6f", got)
	}
	// docs/methods.md §9 [computed]: normalised 1-D Gaussian likelihood (σ = 1)
	// with a flat prior of width 10 → ln Z = −ln 10 = −2.302585.
	logp := func(x []float64) float64 {
		return -0.5*x[0]*x[0] - 0.5*math.Log(2*math.Pi) - math.Log(10)
	}
	lnZ, ok := LaplaceLogEvidence(logp, []float64{0}, []float64{1})
	if !ok || math.Abs(lnZ+2.302585) > 1e-6 {
		t.Errorf("ln Z = %.7f (ok %v), want −2.302585", lnZ, ok)
	}
}

func onePlanetSeries(rng *rand.Rand, n int, pl rvtest.Planet, sigma float64) *Series {
	tt := rvtest.NightlyTimes(rng, n, 2459000, 400)
	rv, e := rvtest.Synthetic(rng, tt, []rvtest.Planet{pl}, 12, sigma, 0)
	return &Series{Name: "one", Time: tt, RV: rv, RVErr: e, Instrument: make([]string, len(tt))}
}

func TestFitModelOnePlanet(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 1))
	pl := rvtest.Planet{P: 8.7, K: 6, E: 0.3, Omega: 2.0, Tp: 2459004}
	s := onePlanetSeries(rng, 60, pl, 1.5)
	res, err := FitModel(s, 1, nil, &FitOptions{StarMass: 1, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	if !res.HessianOK {
		t.Fatal("Hessian not positive definite")
	}
	got := res.Planets[0]
	// Truth within 4 Laplace sigmas (seeded data: a loose bound on a
	// single draw).
	for _, c := range []struct {
		name           string
		got, want, err float64
	}{
		{"P", got.P, pl.P, res.Errors[0]},
		{"K", got.K, pl.K, res.Errors[1]},
		{"offset", res.Offsets[0], 12, res.Errors[5]},
	} {
		if math.Abs(c.got-c.want) > 4*c.err || c.err <= 0 {
			t.Errorf("%s = %g ± %g, truth %g", c.name, c.got, c.err, c.want)
		}
	}
	if math.Abs(got.E-0.3) > 0.15 {
		t.Errorf("e = %g, truth 0.3", got.E)
	}
	if got.MinMass <= 0 || math.Abs(res.ResidualRMS-1.5) > 0.5 {
		t.Errorf("min mass %g, rms %g", got.MinMass, res.ResidualRMS)
	}
	if _, err := json.Marshal(res); err != nil {
		t.Errorf("json: %v", err)
	}
	// Deterministic across worker counts.
	res1, _ := FitModel(s, 1, nil, &FitOptions{StarMass: 1, Seed: 1, Workers: 1})
	for i := range res.Params {
		if res.Params[i] != res1.Params[i] {
			t.Fatalf("workers change the fit: %v vs %v", res.Params, res1.Params)
		}
	}
	// A 0-planet model is far worse by BIC and evidence.
	res0, err := FitModel(s, 0, nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	if res0.BIC-res.BIC < 10 || res.LogEvidence-res0.LogEvidence < 5 {
		t.Errorf("BIC 0p %g 1p %g; ln Z 0p %g 1p %g", res0.BIC, res.BIC, res0.LogEvidence, res.LogEvidence)
	}
}

func TestFitModelTwoPlanets(t *testing.T) {
	s, pl := twoPlanetSeries(1, 120)
	res, err := FitModel(s, 2, nil, &FitOptions{Seed: 2})
	if err != nil {
		t.Fatal(err)
	}
	for i, want := range pl {
		got := res.Planets[i]
		if math.Abs(got.P-want.P) > 5*res.Errors[5*i] || math.Abs(got.K-want.K) > 5*res.Errors[5*i+1] {
			t.Errorf("planet %d: P %g ± %g (truth %g), K %g ± %g (truth %g)", i+1, got.P, res.Errors[5*i], want.P, got.K, res.Errors[5*i+1], want.K)
		}
	}
	// Nothing significant is left in the residuals.
	rs, err := Scan(res.ResidualSeries(), &ScanOptions{Grid: &GridOptions{FMax: 1.2}, MaxSignals: -1})
	if err != nil {
		t.Fatal(err)
	}
	if fap := rs.RV.Peaks[0].FAP; fap < 0.01 {
		t.Errorf("residual peak at %g d with FAP %g", rs.RV.Peaks[0].Period, fap)
	}
	// Instrument B carries the +30 m/s offset.
	if d := res.Offsets[0] - res.Offsets[1]; math.Abs(d-30) > 2 {
		t.Errorf("offsets %v (instruments %v), want B − A = 30", res.Offsets, res.Instruments)
	}
}

func TestFitModelBadInput(t *testing.T) {
	rng := rand.New(rand.NewPCG(4, 1))
	s := onePlanetSeries(rng, 8, rvtest.Planet{P: 5, K: 5, Tp: 2459000}, 1)
	// 2 planets + offset + jitter = 12 parameters > 8 epochs.
	if _, err := FitModel(s, 2, nil, nil); !errors.Is(err, ErrTooManyParams) {
		t.Errorf("too many params: %v", err)
	}
	big := onePlanetSeries(rng, 40, rvtest.Planet{P: 5, K: 5, Tp: 2459000}, 1)
	_, err := FitModel(big, 1, nil, &FitOptions{Model: &ModelOptions{Priors: map[string]Prior{"K1": Uniform{10, 1}}}})
	if !errors.Is(err, ErrBadPrior) {
		t.Errorf("prior lower > upper: %v", err)
	}
	_, err = FitModel(big, 1, nil, &FitOptions{Model: &ModelOptions{Priors: map[string]Prior{"nonsense": Uniform{0, 1}}}})
	if !errors.Is(err, ErrBadPrior) {
		t.Errorf("unknown parameter: %v", err)
	}
	z := big.Clone()
	for i := range z.RVErr {
		z.RVErr[i] = 0
	}
	if _, err := FitModel(z, 1, nil, nil); !errors.Is(err, ErrZeroErrors) {
		t.Errorf("zero errors: %v", err)
	}
	if _, err := FitModel(big, 1, nil, &FitOptions{Grid: &GridOptions{PMin: 5000, PMax: 9000}}); !errors.Is(err, ErrGridOutOfReach) {
		t.Errorf("grid out of reach: %v", err)
	}
}

func BenchmarkFitModel(b *testing.B) {
	// One full MAP fit (8 starts, 2 workers) of a 2-planet model to 200
	// epochs.
	s, _ := twoPlanetSeries(5, 200)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := FitModel(s, 2, nil, &FitOptions{Seed: 1, Workers: 2}); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkModelLogPosterior(b *testing.B) {
	for _, n := range []int{50, 200, 1000} {
		b.Run("n="+itoa(n)+",planets=2", func(b *testing.B) {
			s, _ := twoPlanetSeries(5, n)
			m, err := NewModel(s, 2, nil, nil)
			if err != nil {
				b.Fatal(err)
			}
			theta := []float64{12.3, 8, 0.3, 0.2, m.tmid, 47.1, 5, 0.1, -0.1, m.tmid + 3, 0, 30, 1, 1}
			if lp := m.LogPosterior(theta); math.IsInf(lp, 0) {
				b.Fatalf("log-posterior %v", lp)
			}
			b.ResetTimer()
			for i := 0; i < b.N; i++ {
				m.LogPosterior(theta)
			}
		})
	}
}

func itoa(n int) string { return fmt.Sprint(n) }

func TestFitModelTrend(t *testing.T) {
	// A planet plus a linear drift of 0.03 m/s/d (12 m/s over the data):
	// the trend model recovers the slope within 4σ and beats the
	// trend-free model by BIC.
	rng := rand.New(rand.NewPCG(8, 1))
	pl := rvtest.Planet{P: 9.1, K: 6, E: 0.1, Omega: 0.5, Tp: 2459001}
	s := onePlanetSeries(rng, 60, pl, 1.5)
	for i, ti := range s.Time {
		s.RV[i] += 0.03 * (ti - 2459200)
	}
	res, err := FitModel(s, 1, nil, &FitOptions{Seed: 1, Model: &ModelOptions{Trend: 1}})
	if err != nil {
		t.Fatal(err)
	}
	if len(res.Trend) != 1 || math.Abs(res.Trend[0]-0.03) > 4*res.Errors[6] || res.ParamNames[6] != "trend1" {
		t.Errorf("trend %v ± %g (%v)", res.Trend, res.Errors[6], res.ParamNames)
	}
	flat, err := FitModel(s, 1, nil, &FitOptions{Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	if flat.BIC-res.BIC < 10 {
		t.Errorf("BIC without trend %g, with %g", flat.BIC, res.BIC)
	}
	if _, err := FitModel(s, 1, nil, &FitOptions{Model: &ModelOptions{Trend: 3}}); !errors.Is(err, ErrBadOption) {
		t.Errorf("trend 3: %v", err)
	}
}
