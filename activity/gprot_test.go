package activity

import (
	"context"
	"math"
	"testing"
)

// TestGPRotationMeasuresOrNot: the GP fitted to an indicator gives a
// rotation period only when it pins one. An S-index of white noise has no
// rotation, and a GP started at its periodogram's highest peaks often
// finds no coherent period: it leaves the period free by more than the
// activity–rotation relations' scatter, or runs to the edge of its box.
// Such a fit must give no estimate (on these twelve noise series the old
// code returned six, one of 3.3 ± 19 d, and let them replace hypotheses
// they did not measure). An S-index modulated at 17 d gives one near 17 d.
func TestGPRotationMeasuresOrNot(t *testing.T) {
	const pLo, pHi = rotPMin * 1.02, rotPMax / 1.02
	given := 0
	for seed := uint64(1); seed <= 12; seed++ {
		s := synth(seed, 1, noise, map[string]func(float64) float64{"s_index": func(float64) float64 { return 0.2 }}, map[string]float64{"s_index": 0.01})
		d, err := newData(context.Background(), s, (&Options{}).withDefaults())
		if err != nil {
			t.Fatal(err)
		}
		rs := d.searchRotation(context.Background(), nil)
		e, ok := d.gpRotation(rs, rs.hypotheses(d.T), nil)
		if !ok {
			continue
		}
		given++
		if !(e.Err <= relationsScatter*e.Period) || e.Period < pLo || e.Period > math.Min(pHi, d.T/2) {
			t.Errorf("seed %d: white noise gave a GP rotation period %.4g ± %.3g d, which pins nothing", seed, e.Period, e.Err)
		}
	}
	if given == 12 {
		t.Errorf("every white-noise series gave a GP rotation period")
	}
	spot := func(t float64) float64 {
		return 0.2 + 0.02*math.Sin(2*math.Pi*t/17) + 0.008*math.Sin(4*math.Pi*t/17+1)
	}
	s := synth(5, 1, noise, map[string]func(float64) float64{"s_index": spot}, map[string]float64{"s_index": 0.01})
	d, err := newData(context.Background(), s, (&Options{}).withDefaults())
	if err != nil {
		t.Fatal(err)
	}
	rs := d.searchRotation(context.Background(), nil)
	e, ok := d.gpRotation(rs, rs.hypotheses(d.T), nil)
	if !ok || math.Abs(e.Period-17) > 2*e.Err {
		t.Errorf("S-index modulated at 17 d: GP rotation %.4g ± %.3g d, ok %v", e.Period, e.Err, ok)
	}
}
