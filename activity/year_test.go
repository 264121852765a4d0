package activity

import (
	"context"
	"math"
	"strings"
	"testing"
)

// TestNearYear: a signal whose frequency is consistent with one cycle per
// year (within twice its error, and one resolution element 1/T at most)
// cannot be told from an instrument's yearly systematic, and gets the year
// caveat unless its amplitude is beyond what such systematics reach
// (yearRVMax).
func TestNearYear(t *testing.T) {
	nan := math.NaN()
	for _, c := range []struct {
		p, T, snr, beta float64
		want            bool
	}{
		{365.25, 1000, 10, 1, true},
		// 1/340 − 1/365.25 = 2.0e-4 c/d; 2σ_f = 2√3 β/(π T snr).
		{340, 2000, 2, 1, true},   // 2σ_f = 2.8e-4
		{340, 2000, 10, 1, false}, // 5.5e-5
		{340, 2000, 10, 4, true},  // red noise: 2.2e-4
		{340, 2000, 10, 0.5, false},
		{340, 6000, 2, 1, false},   // 9.2e-5
		{340, 2000, 0.5, 1, true},  // 1.1e-3, capped at 1/T = 5e-4
		{300, 2000, 0.5, 1, false}, // 6.0e-4 away: beyond the cap
		// Unknown precision: the resolution, 1/T; an unknown red-noise
		// factor counts as 1 (white noise).
		{340, 2000, nan, 1, true}, {340, 2000, 10, nan, false},
		// One season (120 d): a strong 94 d signal is not a yearly one.
		{94, 120, 20, 1, false},
		// Half a year and far periods are not flagged.
		{182.6, 3000, 2, 1, false}, {30, 3000, 2, 1, false}, {2000, 3000, 2, 1, false},
		// No span, no resolution.
		{365.25, 0, 10, 1, false},
	} {
		if got, _ := nearYear(1/c.p, c.T, c.snr, c.beta); got != c.want {
			t.Errorf("nearYear(1/%g d, T = %g d, snr %g, β %g) = %v, want %v", c.p, c.T, c.snr, c.beta, got, c.want)
		}
	}
	// Through Diagnose, on two seasons one year apart (about 515 d): a
	// steady 6 m/s signal at one year with a flat S-index leans planet-like
	// (the GP fits are off here), and the caveat keeps it from the verdict.
	for _, c := range []struct {
		name     string
		amp, p   float64
		wantYear bool
	}{
		{"6 m/s at one year", 6, 365.25, true},
		{"60 m/s at one year", 60, 365.25, false},
		{"6 m/s at 120 d", 6, 120, false},
	} {
		s := synth(21, 1, sine(c.amp, c.p, 0.4), map[string]func(float64) float64{"s_index": noise}, map[string]float64{"s_index": 0.005})
		dg, err := Diagnose(context.Background(), s, &Options{Periods: []float64{c.p}, Star: star25, SkipModels: true, Seed: 21})
		if err != nil {
			t.Fatal(err)
		}
		sg := dg.Signals[0]
		if got := sg.CaveatKind == CaveatYear; got != c.wantYear || got && !strings.Contains(sg.Caveat, "one year within its precision") {
			t.Errorf("%s: caveat %q (%s), want the year's: %v\n%s", c.name, sg.Caveat, sg.CaveatKind, c.wantYear, dump(sg))
		}
		if c.wantYear && !(sg.Score < 0) {
			t.Errorf("%s: score %+.2f; the test wants a signal the other tests lean planet-like on", c.name, sg.Score)
		}
		if c.wantYear && (sg.Verdict == PlanetLike || !(float64(sg.Probability) <= 0.6)) {
			t.Errorf("%s: %s with P(planet) %.2f; want not planet-like, at most even odds", c.name, sg.Verdict, float64(sg.Probability))
		}
	}
}
