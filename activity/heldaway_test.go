package activity

import (
	"math"
	"testing"
)

// TestOnSignal checks the windows in which a rotation kernel's period has
// a mode on a signal: the period, its double and its half, ±heldAwayLn in
// ln P (docs/methods.md §14.10).
func TestOnSignal(t *testing.T) {
	f := 1 / 10.0
	for _, c := range []struct {
		p    float64
		want bool
	}{{10, true}, {12.5, true}, {20, true}, {5, true}, {4, true}, {14, false}, {7, false}, {30, false}, {3, false}} {
		if got := onSignal(c.p, f); got != c.want {
			t.Errorf("onSignal(%g d, 1/10 d) = %v, want %v", c.p, got, c.want)
		}
	}
}

// TestHeldAwayComparison checks the comparison used when no rotation
// period is known (docs/methods.md §14.10) on two invented stars: a
// strictly periodic sinusoid (K = 4 m/s at 9.3 d over 65 cycles) beside
// weak activity at 23 d prefers a Keplerian with the GP held away from the
// period (ΔBIC ≤ −10), and activity at 9.3 d (a rotation-kernel draw of
// quality 1, evolving within a few cycles) prefers the GP held on it
// (ΔBIC > −10). The held-away fit's GP period stays out of the windows and
// the held-on fit's stays in them.
func TestHeldAwayComparison(t *testing.T) {
	for _, c := range []struct {
		name       string
		seed       uint64
		prot, amp  float64
		k          float64
		wantPlanet bool
	}{
		{"strict sinusoid, activity elsewhere", 11, 23, 1, 4, true},
		{"activity at the period", 12, 9.3, 5, 0, false},
	} {
		s := rotationStar(c.seed, 150, 600, c.prot, c.amp, 1.5, c.k, 9.3)
		y := append([]float64(nil), s.RV...)
		mean := 0.0
		for _, v := range y {
			mean += v / float64(len(y))
		}
		for i := range y {
			y[i] -= mean
		}
		T := s.Time[len(s.Time)-1] - s.Time[0]
		m := &gpModel{t: s.Time, y: y, sigma: s.RVErr, inst: make([]int, len(y)), ninst: 1, t0: s.Time[0],
			pLo: rotPMin, pHi: math.Min(rotPMax, T/2), scale: stddev(y)}
		f := 1 / 9.3
		r0 := m.fit([][]float64{m.start(30)})
		atP := onSignalFit(m, f, r0)
		m1 := *m
		m1.freq = f
		r1 := m1.fit([][]float64{m1.start(30), atP.theta})
		held := heldAwayFit(m, f, r1)
		if !atP.ok || !held.ok {
			t.Fatalf("%s: fits did not converge (held on %v, held away %v)", c.name, atP.ok, held.ok)
		}
		if !onSignal(atP.period, f) || onSignal(held.period, f) {
			t.Errorf("%s: GP periods %.3g d (held on) and %.3g d (held away) on the wrong side of the windows", c.name, atP.period, held.period)
		}
		dBIC := -2*(held.lnL-atP.lnL) + 2*math.Log(float64(len(y)))
		if planet := dBIC <= -10; planet != c.wantPlanet {
			t.Errorf("%s: ΔBIC (Keplerian with the GP held away against the GP held on the period) = %.1f, want planet side %v", c.name, dBIC, c.wantPlanet)
		}
		t.Logf("%s: ΔBIC = %.1f (GP on %.3g d, away at %.3g d)", c.name, dBIC, atP.period, held.period)
	}
}
