package rvfit

import (
	"encoding/json"
	"errors"
	"math"
	"math/rand/v2"
	"testing"

	"spotsift/rvfit/rvtest"
)

// twoPlanetSeries returns a seeded 2-planet data set with ground-based
// sampling, two instruments and an activity-like indicator.
func twoPlanetSeries(seed uint64, n int) (*Series, []rvtest.Planet) {
	rng := rand.New(rand.NewPCG(seed, 1))
	t := rvtest.NightlyTimes(rng, n, 2459000, 700)
	pl := []rvtest.Planet{
		{P: 12.3, K: 8, E: 0.15, Omega: 1.0, Tp: 2459003},
		{P: 47.1, K: 5, E: 0.05, Omega: -2.0, Tp: 2459010},
	}
	rv, err := rvtest.Synthetic(rng, t, pl, 0, 1.5, 0)
	s := &Series{Name: "synthetic", Time: t, RV: rv, RVErr: err}
	fw := Indicator{Name: "fwhm", Unit: "m/s", Value: make([]float64, len(t)), Err: make([]float64, len(t))}
	for i, ti := range t {
		s.Instrument = append(s.Instrument, "A")
		if i%4 == 0 {
			s.Instrument[i] = "B"
			s.RV[i] += 30
		}
		fw.Value[i] = 7000 + 20*math.Sin(2*math.Pi*ti/27.5) + 3*rng.NormFloat64()
		fw.Err[i] = 3
		if i%17 == 0 {
			fw.Value[i], fw.Err[i] = math.NaN(), math.NaN()
		}
	}
	s.Indicators = []Indicator{fw}
	return s, pl
}

func TestScanTwoPlanets(t *testing.T) {
	s, pl := twoPlanetSeries(1, 120)
	res, err := Scan(s, &ScanOptions{Grid: &GridOptions{FMax: 1.2}, Bootstrap: 40, Seed: 7})
	if err != nil {
		t.Fatal(err)
	}
	top := res.RV.Peaks[0]
	if math.Abs(top.Period-pl[0].P)/pl[0].P > 0.01 {
		t.Errorf("top peak %g d, want %g d", top.Period, pl[0].P)
	}
	if top.FAP > 1e-6 || top.BootstrapFAP == nil || *top.BootstrapFAP > 1.0/40 {
		t.Errorf("top peak FAP %g, bootstrap %v", top.FAP, top.BootstrapFAP)
	}
	// The daily alias of the top peak is listed with its label.
	found := false
	for _, a := range top.Aliases {
		if a.Via == "1 sidereal day" && math.Abs(a.Freq-(SiderealDayFreq-1/pl[0].P)) < 1e-3 {
			found = true
		}
	}
	if !found {
		t.Errorf("no sidereal alias in %+v", top.Aliases)
	}
	// The window of one-per-sidereal-day sampling peaks at 1.0027 c/d.
	wfound := false
	for _, w := range res.WindowPeaks {
		if math.Abs(w.Freq-SiderealDayFreq) < 2e-3 {
			wfound = true
		}
	}
	if !wfound {
		t.Errorf("window peaks %+v lack the sidereal day", res.WindowPeaks)
	}
	// Prewhitening finds the second planet.
	if len(res.Prewhitening) == 0 {
		t.Fatal("no prewhitening step")
	}
	p2 := res.Prewhitening[0].Peaks[0]
	if math.Abs(p2.Period-pl[1].P)/pl[1].P > 0.02 {
		t.Errorf("second signal %g d, want %g d", p2.Period, pl[1].P)
	}
	// The FWHM periodogram shows its own 27.5 d rotation-like signal.
	if len(res.Indicators) != 1 || math.Abs(res.Indicators[0].Peaks[0].Period-27.5) > 0.5 {
		t.Errorf("indicator peaks %+v", res.Indicators)
	}
	if res.Indicators[0].NObs != 120-8 {
		t.Errorf("fwhm used %d epochs, want 112", res.Indicators[0].NObs)
	}
	// JSON-serialisable.
	if _, err := json.Marshal(res); err != nil {
		t.Errorf("json: %v", err)
	}
	// Deterministic regardless of workers.
	res1, _ := Scan(s, &ScanOptions{Grid: &GridOptions{FMax: 1.2}, Bootstrap: 40, Seed: 7, Workers: 1, SkipIndicators: true})
	if *res1.RV.Peaks[0].BootstrapFAP != *top.BootstrapFAP || res1.RV.Peaks[1].Power != res.RV.Peaks[1].Power {
		t.Errorf("workers change results")
	}
}

func TestScanBadInput(t *testing.T) {
	s, _ := twoPlanetSeries(2, 30)
	if _, err := Scan(s, &ScanOptions{Grid: &GridOptions{PMin: 8000, PMax: 20000}}); !errors.Is(err, ErrGridOutOfReach) {
		t.Errorf("out of reach: %v", err)
	}
	z := s.Clone()
	for i := range z.RVErr {
		z.RVErr[i] = 0
	}
	if _, err := Scan(z, nil); !errors.Is(err, ErrZeroErrors) {
		t.Errorf("zero errors: %v", err)
	}
	if _, err := Scan(&Series{}, nil); !errors.Is(err, ErrNoObservations) {
		t.Errorf("empty: %v", err)
	}
	if _, err := Scan(s, &ScanOptions{PrewhitenFAP: 2}); !errors.Is(err, ErrBadOption) {
		t.Errorf("bad option: %v", err)
	}
}
