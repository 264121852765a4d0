package activity

import (
	"context"
	"math"
	"strings"
	"testing"
)

// TestLongPeriodIndicatorOutOfPhase: a 120 d RV signal, ten rotations of
// a 12 d star, beside an S-index that varies at 120 d too. In phase with the RVs, as the inhibition of
// convective blueshift puts long-term activity, the S-index's variation is
// activity evidence; a quarter-period away it cannot be what moves the
// RVs, and its power at the period counts for neither side.
func TestLongPeriodIndicatorOutOfPhase(t *testing.T) {
	const p = 120.0
	for _, c := range []struct {
		phase float64
		want  string
	}{{0, TowardActivity}, {math.Pi / 2, TowardNeither}} {
		// The star's rotation (12 d) moves both, which tells how much the
		// S-index varies per m/s of activity RV.
		rv := func(t float64) float64 { return sine(5, p, 0)(t) + sine(3, 12, 0)(t) }
		sidx := func(t float64) float64 { return sine(1, p, c.phase)(t) + sine(0.6, 12, 0)(t) }
		s := synth(8, 1, rv, map[string]func(float64) float64{"s_index": sidx}, map[string]float64{"s_index": 0.5})
		star := &Star{Name: "Hollin-5", RotationPeriod: 12, RotationPeriodErr: 1}
		dg, err := Diagnose(context.Background(), s, &Options{Periods: []float64{p, 12}, Star: star, SkipModels: true, Seed: 8})
		if err != nil {
			t.Fatal(err)
		}
		sg := dg.Signals[0]
		e := evidence(&sg, "indicator_power:s_index")
		if e == nil || e.Points != c.want {
			t.Fatalf("S-index at phase %.2f: indicator power %+v, want %s (correlation %+v)", c.phase, e, c.want, evidence(&sg, "indicator_correlation:s_index"))
		}
		if c.want == TowardNeither {
			if !strings.Contains(e.Reason, "does not correlate") {
				t.Errorf("the reason should say why: %s", e.Reason)
			}
			if sg.Verdict == ActivityLike {
				t.Errorf("an S-index out of phase with the RVs made the signal activity-like: score %+.2f", sg.Score)
			}
		}
	}
}
