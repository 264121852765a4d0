package activity

import (
	"bytes"
	"context"
	"math"
	"testing"

	"spotsift/activity/starsim"
)

// The demo's two stories hold (seed 1, the demo's default; the simulated
// tables stand in for the tables measured from the spectra): Veyla-9's
// planet at 9.73 d is planet-like, and Corvane-3's strongest signal, at
// half its 8.6 d rotation, is activity-like.
func TestDemoStories(t *testing.T) {
	if testing.Short() {
		t.Skip("simulates and diagnoses the two demo stars; skipped with -short")
	}
	for _, c := range []struct {
		scenario string
		period   float64
		want     string
	}{{"quiet-planet", 9.73, PlanetLike}, {"active-no-planet", 4.3, ActivityLike}} {
		sc, err := starsim.DemoScenario(c.scenario)
		if err != nil {
			t.Fatal(err)
		}
		res, err := starsim.Simulate(sc, 1, &starsim.Options{Workers: 1})
		if err != nil {
			t.Fatal(err)
		}
		var b bytes.Buffer
		if err := res.WriteStar(&b); err != nil {
			t.Fatal(err)
		}
		star, err := ParseStar(b.Bytes(), "star.toml")
		if err != nil {
			t.Fatal(err)
		}
		dg, err := Diagnose(context.Background(), res.Series(), &Options{Star: star, Seed: 1})
		if err != nil {
			t.Fatal(err)
		}
		found := false
		for _, sg := range dg.Signals {
			t.Logf("%s: %.4g d %s (score %+.2f, P(planet) %.2f) %s", sc.Name, float64(sg.Period), sg.Verdict, sg.Score, float64(sg.Probability), sg.Summary)
			if math.Abs(float64(sg.Period)-c.period) < 0.03*c.period {
				found = true
				if sg.Verdict != c.want {
					t.Errorf("%s: the signal at %.4g d is %s, want %s\n%s", sc.Name, float64(sg.Period), sg.Verdict, c.want, dump(sg))
				}
			}
		}
		if !found {
			t.Errorf("%s: no signal near %g d among %d", sc.Name, c.period, len(dg.Signals))
		}
	}
}
