package activity

import (
	"context"
	"math"
	"strings"
	"testing"
)

// TestSlowSignalWithoutRotation checks the model comparison of a signal
// slower than any rotation period on a star whose rotation nothing shows
// (a flat S-index, no star file): a 620 d orbit of 8 m/s over five seasons
// needs its Keplerian against the free GP, which runs to its longest
// period, and against red noise beside it, so the test pulls toward a
// planet; from RVs alone, where nothing could show a magnetic cycle, the
// test is skipped; a random walk over three seasons (the data of
// TestRedNoiseDrifts) gives no planet-like signal. Fifteenth-pass figures
// without this comparison: the orbit's test was skipped and the signal
// inconclusive.
func TestSlowSignalWithoutRotation(t *testing.T) {
	if testing.Short() {
		t.Skip("diagnoses three simulated series; skipped with -short")
	}
	orbit := func(t float64) float64 { return 8 * math.Sin(2*math.Pi*(t-2460000)/620+0.4) }
	s := seasonSeries(11, 5, 0.3, orbit)
	dg, err := Diagnose(context.Background(), s, &Options{Seed: 3})
	if err != nil {
		t.Fatal(err)
	}
	found := false
	for _, sg := range dg.Signals {
		if math.Abs(float64(sg.Period)-620) > 60 {
			continue
		}
		found = true
		e := evidence(&sg, "model_comparison")
		if e == nil || e.Points != TowardPlanet || !strings.Contains(e.Reason, "red noise beside it") {
			t.Errorf("620 d orbit without rotation: model comparison %+v, want a pull toward a planet that survives red noise", e)
		}
		if sg.Verdict != PlanetLike {
			t.Errorf("620 d orbit without rotation: %s (score %+.3f), want planet-like", sg.Verdict, sg.Score)
		}
	}
	if !found {
		t.Fatalf("the 620 d orbit was not found: %d signals", len(dg.Signals))
	}
	// From RVs alone nothing can show a magnetic cycle, which is as
	// smooth as an orbit: the comparison is skipped.
	rv := s.Clone()
	rv.Indicators = nil
	dg, err = Diagnose(context.Background(), rv, &Options{Seed: 3})
	if err != nil {
		t.Fatal(err)
	}
	for _, sg := range dg.Signals {
		if math.Abs(float64(sg.Period)-620) <= 60 {
			if e := evidence(&sg, "model_comparison"); e != nil {
				t.Errorf("620 d orbit from RVs alone: model comparison ran (%s), want it skipped", e.Reason)
			}
		}
	}
	w := seasonSeries(1, 3, 0.5, randomWalk(1, 3*365))
	dg, err = Diagnose(context.Background(), w, &Options{Seed: 3})
	if err != nil {
		t.Fatal(err)
	}
	for _, sg := range dg.Signals {
		if sg.Verdict == PlanetLike {
			t.Errorf("random walk: %.4g d planet-like (score %+.3f)", float64(sg.Period), sg.Score)
		}
	}
}
