package activity

import (
	"context"
	"testing"
)

// TestSeasonCoherenceWithGP checks the season test with the model
// comparison's GP as each half's noise model (docs/methods.md §14.11) on
// two invented stars, four seeds each (150 epochs over 600 d, so the test
// fits halves):
//   - a strict sinusoid (K = 4 m/s at 9.3 d) beside rotation-kernel
//     activity at 23 d (6 m/s): amplitude and phase agree, on the planet
//     side, in every seed;
//   - activity at the period (a rotation-kernel draw at 9.3 d, quality 1,
//     5 m/s, no planet): never on the planet side. On seed 7 the white
//     errors times the red-noise factor (models switched off) put it on
//     the planet side: the GP's errors carry the activity's own
//     variability at the period, which a strictly periodic model leaves
//     out.
func TestSeasonCoherenceWithGP(t *testing.T) {
	season := func(seed uint64, prot, amp, k float64, skip bool) *Evidence {
		t.Helper()
		s := rotationStar(seed, 150, 600, prot, amp, 1.5, k, 9.3)
		star := &Star{Name: "Orrin-5", RotationPeriod: prot, RotationPeriodErr: 0.05 * prot}
		dg, err := Diagnose(context.Background(), s, &Options{Periods: []float64{9.3}, Star: star, SkipModels: skip, SingleOutput: true, Seed: seed})
		if err != nil {
			t.Fatal(err)
		}
		if !skip && evidence(&dg.Signals[0], "model_comparison") == nil {
			t.Fatalf("seed %d: the model comparison did not run, so its GP cannot serve the season test", seed)
		}
		e := evidence(&dg.Signals[0], "season_coherence")
		if e == nil {
			t.Fatalf("seed %d: no season test", seed)
		}
		return e
	}
	for _, seed := range []uint64{1, 2, 7, 8} {
		if e := season(seed, 23, 6, 4, false); e.Points != TowardPlanet {
			t.Errorf("strict sinusoid, seed %d: %s (%s), want the planet side", seed, e.Points, e.Reason)
		}
		if e := season(seed, 9.3, 5, 0, false); e.Points == TowardPlanet {
			t.Errorf("activity at the period, seed %d: %s (%s)", seed, e.Points, e.Reason)
		}
	}
	if e := season(7, 9.3, 5, 0, true); e.Points != TowardPlanet {
		t.Logf("activity at the period, seed 7, white errors times β: %s (%s); the case the GP's errors mend no longer arises", e.Points, e.Reason)
	}
}
