package activity

import (
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// TestOnSignal checks the windows in which a rotation kernel's period has
// a mode on a signal: the period, its double and its half, and the
// signal's 1-day aliases, ±heldAwayLn in ln P (docs/methods.md §14.10).
func TestOnSignal(t *testing.T) {
	for _, c := range []struct {
		p, signal float64
		want      bool
	}{
		{10, 10, true}, {12.5, 10, true}, {20, 10, true}, {5, 10, true}, {4, 10, true},
		{14, 10, false}, {7, 10, false}, {30, 10, false}, {3, 10, false},
		// The 1-day alias of 1.34 d is 1/(1.0027379 − 1/1.34) = 3.90 d
		// (sidereal day, common practice).
		{3.98, 1.34, true}, {5.5, 1.34, false}, {7.8, 1.34, false}, {12, 1.34, false},
		// A 10 d signal's aliases lie near 1.1 d and 0.9 d; a long
		// period's near 1 d, and a 2 d kernel stays off it.
		{1.11, 10, true}, {2, 557, false}, {1.6, 557, false},
	} {
		if got := onSignal(c.p, 1/c.signal); got != c.want {
			t.Errorf("onSignal(%g d, 1/%g d) = %v, want %v", c.p, c.signal, got, c.want)
		}
	}
	if got := aliasNote(3.98, 1/1.34); got == "" {
		t.Error("a kernel at 3.98 d sits on a 1.34 d signal by its 1-day alias, and the text should say so")
	}
	if got := aliasNote(2.68, 1/1.34); got != "" {
		t.Errorf("a kernel at 2.68 d sits on a 1.34 d signal at its double, not by an alias, yet the text says %q", got)
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

// TestHeldAwayPartialEvidence checks how heldAwayEvidence reads a held-away
// Keplerian that beats the GP held on the signal by ΔBIC = −6, between
// "positive" and "very strong" (docs/methods.md §14.10): when the free GP
// found no period it counts for the planet in proportion (60 %); when the
// free GP settled on the signal it counts for neither side; at ΔBIC = −14
// it counts fully either way.
func TestHeldAwayPartialEvidence(t *testing.T) {
	w := DefaultWeights()
	const n = 100
	tr := &trial{d: &data{t: make([]float64, n), w: &w}, f: 1 / 10.0}
	extra := 2.0
	penalty := extra * math.Log(n)
	for _, c := range []struct {
		dBIC             float64
		settled, atBound bool
		points           string
		frac             float64
	}{
		{-6, false, true, TowardPlanet, 0.6},
		{-6, true, false, TowardNeither, 0},
		{-14, true, false, TowardPlanet, 1},
		{-14, false, true, TowardPlanet, 1},
		// The end of the free GP's range on the signal: it chose it.
		{-6, true, true, TowardNeither, 0},
	} {
		// ΔBIC = −2 (ln L_held − ln L_GP) + k ln N.
		r0 := gpResult{lnL: 0, period: 10, ok: true}
		// The sinusoid's amplitude 4 ± 0.5 m/s: 8σ from zero.
		cov := mat.NewSymDense(3, []float64{1, 0, 0, 0, 0.25, 0, 0, 0, 0.25})
		held := gpResult{lnL: (penalty - c.dBIC) / 2, period: 30, beta: []float64{0, 4, 0}, covBeta: cov, ok: true}
		r1 := gpResult{lnL: held.lnL, period: 30, ok: true}
		var e Evidence
		tr.heldAwayEvidence(&e, r0, r1, held, extra, false, c.atBound, c.settled)
		if math.Abs(float64(e.Value)-c.dBIC) > 1e-9 {
			t.Errorf("ΔBIC %g: value %v", c.dBIC, e.Value)
		}
		if e.Points != c.points || math.Abs(e.Weight+c.frac*w.ModelComparison.Planet) > 1e-9 {
			t.Errorf("ΔBIC %g, settled %v: %s %+.3f, want %s %+.3f (%s)", c.dBIC, c.settled, e.Points, e.Weight, c.points, -c.frac*w.ModelComparison.Planet, e.Reason)
		}
		if c.settled && strings.Contains(e.Reason, "finds none") {
			t.Errorf("ΔBIC %g, settled at a bound: the reason says the GP found no period and that it chose this one: %s", c.dBIC, e.Reason)
		}
	}
}
