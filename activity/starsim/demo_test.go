package starsim

import (
	"math"
	"testing"
)

func demoSeries(t *testing.T, name string, seed uint64) (*Scenario, *Result, []float64, []float64) {
	t.Helper()
	sc, err := DemoScenario(name)
	if err != nil {
		t.Fatal(err)
	}
	res := mustSimulate(t, sc, seed, nil)
	s := res.Series()
	// Remove the instrument offsets with the known values, as a fit would.
	rv := append([]float64(nil), s.RV...)
	for i := range rv {
		for _, in := range sc.Instruments {
			if in.Name == s.Instrument[i] {
				rv[i] -= in.Offset
			}
		}
	}
	return sc, res, s.Time, rv
}

// TestDemoActiveHalfPeriod checks the active demo star: no planet, and the
// strongest periodogram peak of its measured RVs at half the rotation
// period (within 5 %), for three seeds.
func TestDemoActiveHalfPeriod(t *testing.T) {
	for _, seed := range []uint64{1, 2, 3} {
		sc, res, tt, rv := demoSeries(t, "active-no-planet", seed)
		if len(sc.Planets) != 0 {
			t.Fatal("the active demo star has planets")
		}
		P := sc.Star.RotationPeriod
		f := glsPeak(tt, rv, 1/150.0, 0.9)
		if math.Abs(f*P/2-1) > 0.05 {
			t.Errorf("seed %d: strongest RV peak at %.3f d, want P_rot/2 = %.3f d (%d epochs)", seed, 1/f, P/2, res.Len())
		}
	}
}

// TestDemoQuietPlanet checks the quiet demo star: its strongest RV peak is
// the planet's period (within 1 %), and the activity RV is smaller than K.
func TestDemoQuietPlanet(t *testing.T) {
	sc, res, tt, rv := demoSeries(t, "quiet-planet", 1)
	P := sc.Planets[0].Period
	f := glsPeak(tt, rv, 1/150.0, 0.9)
	if math.Abs(f*P-1) > 0.01 {
		t.Errorf("strongest RV peak at %.3f d, want the planet's %.3f d", 1/f, P)
	}
	var ss float64
	for _, e := range res.Epochs {
		ss += e.ActivityRV * e.ActivityRV
	}
	if rms := math.Sqrt(ss / float64(res.Len())); rms > sc.Planets[0].K/2 {
		t.Errorf("activity RV rms %.2f m/s, want well below K = %g", rms, sc.Planets[0].K)
	}
	if len(res.Series().Instruments()) != 2 {
		t.Errorf("instruments %v, want two", res.Series().Instruments())
	}
}
