package activity

import (
	"context"
	"math"
	"testing"
)

// TestIndicatorRotationFittedAlongside: spots whose coverage grows and
// shrinks over 70 d modulate a 11.95 d rotation signal, which puts
// sidebands at 1/(1/11.95 ∓ 1/70) = 14.41 d and 10.21 d. The FWHM follows
// the activity RVs (2 m/s per m/s, 5 m/s errors), so at 14.41 d it varies
// by about 12 times its amplitude error; but its 30 m/s rotation signal,
// left in the residuals of a fit at 14.41 d alone, is correlated noise
// whose red-noise factor hid that variation. With P_rot and P_rot/2
// fitted beside the period, the FWHM must be seen to vary there.
func TestIndicatorRotationFittedAlongside(t *testing.T) {
	act := func(t float64) float64 {
		m := 1 + 0.4*math.Sin(2*math.Pi*t/70)
		return m * (15*math.Sin(2*math.Pi*t/11.95) + 6*math.Sin(4*math.Pi*t/11.95+0.7))
	}
	s := synth(2, 3, act, map[string]func(float64) float64{"fwhm": func(t float64) float64 { return 2 * act(t) }}, map[string]float64{"fwhm": 5})
	side := 1 / (1/11.95 - 1/70.0)
	star := &Star{Name: "Maren-5", RotationPeriod: 11.95, RotationPeriodErr: 0.3}
	dg, err := Diagnose(context.Background(), s, &Options{Periods: []float64{side}, Star: star, SkipModels: true, Seed: 2})
	if err != nil {
		t.Fatal(err)
	}
	sg := dg.Signals[0]
	if e := evidence(&sg, "indicator_power:fwhm"); e == nil || e.Points != TowardActivity {
		t.Errorf("at the %.2f d sideband the FWHM must vary: %+v", side, e)
	} else {
		t.Log(e.Reason)
	}
	if sg.Verdict == PlanetLike {
		t.Errorf("the sideband at %.2f d is planet-like: %s", side, sg.Summary)
	}
}
