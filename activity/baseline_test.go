package activity

import (
	"context"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"spotsift/rvfit"
)

// continuous samples 400 nights (60 % of them observed) of a sinusoid of
// amplitude 20 m/s and the given period, with 1 m/s errors.
func continuous(period float64) *rvfit.Series {
	rng := rand.New(rand.NewPCG(5, 1))
	s := &rvfit.Series{Name: "continuous"}
	for n := 0; n < 400; n++ {
		if rng.Float64() < 0.4 {
			continue
		}
		ti := 2460000.3 + float64(n) + 0.05*rng.NormFloat64()
		s.Time, s.RV = append(s.Time, ti), append(s.RV, 20*math.Sin(2*math.Pi*(ti-2460000)/period+1)+rng.NormFloat64())
		s.RVErr, s.Instrument = append(s.RVErr, 1), append(s.Instrument, "NORTH-1")
	}
	return s
}

// TestLongerThanBaseline: a 1500 d sinusoid seen over 400 nights is found
// at a period longer than the baseline (the search refines it past the
// grid's longest period). The data do not cover one cycle, and a
// companion on a wider orbit or a magnetic cycle would trace the same arc:
// the signal carries that caveat and is never planet-like. A planet at
// 0.6 of the baseline does not carry it.
func TestLongerThanBaseline(t *testing.T) {
	dg, err := Diagnose(context.Background(), continuous(1500), &Options{SkipModels: true, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	T := float64(dg.Baseline)
	long := false
	for _, sg := range dg.Signals {
		if p := float64(sg.Period); p > T {
			long = true
			if !strings.Contains(sg.Caveat, "do not cover one cycle") || sg.Verdict == PlanetLike {
				t.Errorf("%.4g d, longer than the %.4g d baseline: %s, caveat %q", p, T, sg.Verdict, sg.Caveat)
			}
		}
	}
	if !long {
		t.Fatalf("no signal beyond the %.4g d baseline (%d signals)", T, len(dg.Signals))
	}
	dg, err = Diagnose(context.Background(), continuous(0.6*T), &Options{SkipModels: true, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	found := false
	for _, sg := range dg.Signals {
		found = found || math.Abs(float64(sg.Period)-0.6*T) < 0.1*T
		if strings.Contains(sg.Caveat, "do not cover one cycle") {
			t.Errorf("a planet at %.4g d within the %.4g d baseline: caveat %q", float64(sg.Period), T, sg.Caveat)
		}
	}
	if !found {
		t.Errorf("the planet at %.4g d was not found", 0.6*T)
	}
}
