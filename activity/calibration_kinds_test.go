package activity

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestProbabilityByCaveatKind: the probability of a signal depends on the
// kind of its caveat as calibrated (an alias of a stronger signal is less
// likely a planet than a signal whose own alias fits as well, and both
// less than one with no caveat, at the same score); a caveat of no known
// kind keeps the uncaveated mapping with the planet-side evidence set
// aside; a Calibration given in the options replaces the default of its
// kinds only.
func TestProbabilityByCaveatKind(t *testing.T) {
	var c Calibration // nil: the defaults
	const s = -0.3
	open := c.of(false, "", s)
	alias := c.of(true, CaveatAlias, s)
	rel := c.of(true, CaveatRelative, s)
	if !(rel < alias && alias < open) {
		t.Errorf("at score %g: relative %.3f, own alias %.3f, no caveat %.3f; want them increasing", s, rel, alias, open)
	}
	if got, want := c.of(false, CaveatRelative, s), open; got != want {
		t.Errorf("a kind without a caveat: %.3f, want the uncaveated %.3f", got, want)
	}
	if got, want := c.of(true, "", s), defaultCalibration[""].of(0); got != want {
		t.Errorf("a caveat of no kind at score %g: %.3f, want the uncaveated mapping at 0, %.3f", s, got, want)
	}
	// Where the data cannot tell a planet from activity (a rotation
	// harmonic, the cycle, beyond the baseline), no more than even odds.
	for _, k := range []string{CaveatRotation, CaveatCycle, CaveatBaseline, CaveatSignificance, CaveatYear} {
		if got, want := c.of(true, k, s), defaultCalibration[""].of(0); got != want || got > 0.6 {
			t.Errorf("a %s caveat at score %g: %.3f, want the uncaveated mapping at 0, %.3f, at most even odds", k, s, got, want)
		}
	}
	mine := Calibration{CaveatAlias: {A: 0, B: 0}}
	if got := mine.of(true, CaveatAlias, s); got != 0.5 {
		t.Errorf("a given mapping for the alias kind: %.3f, want 0.5", got)
	}
	if got := mine.of(true, CaveatRelative, s); got != rel {
		t.Errorf("a kind missing from the given mapping: %.3f, want its default %.3f", got, rel)
	}
	// Through Score: the same evidence, with and without a caveat.
	sig := Signal{FAP: 1e-6, Evidence: []Evidence{{Name: "model_comparison", Points: TowardPlanet, Weight: -2.5}, {Name: "season_coherence", Points: TowardPlanet, Weight: -1}}}
	Score(&sig, nil)
	p0 := float64(sig.Probability)
	sig.Caveat, sig.CaveatKind = "it is the 1-day alias of signal 1 (3 d)", CaveatRelative
	Score(&sig, nil)
	if p1 := float64(sig.Probability); !(p1 < p0) || sig.Verdict == PlanetLike {
		t.Errorf("with a relative's caveat: P = %.3f (%s), want below the uncaveated %.3f and not planet-like", p1, sig.Verdict, p0)
	}
}

// TestFitCalibration: FitCalibration recovers a logistic from signals
// drawn from it, fits each kind apart, gives a kind with few signals
// Laplace's constant, and stays finite when the scores separate the
// truths completely.
func TestFitCalibration(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 12))
	draw := func(n int, l Logistic, kind string) []ProbPoint {
		var pts []ProbPoint
		for range n {
			s := 2*rng.Float64() - 1
			pts = append(pts, ProbPoint{Score: s, Planet: rng.Float64() < l.of(s), Blocked: kind != "", Kind: kind})
		}
		return pts
	}
	openTrue, aliasTrue := Logistic{A: -0.5, B: 8}, Logistic{A: 2, B: 4}
	pts := append(draw(4000, openTrue, ""), draw(4000, aliasTrue, CaveatAlias)...)
	// Five relatives, one of them planetary: too few for a logistic.
	for i := range 5 {
		pts = append(pts, ProbPoint{Score: -0.5, Planet: i == 0, Blocked: true, Kind: CaveatRelative})
	}
	// Signals at a rotation harmonic are not calibrated.
	pts = append(pts, draw(100, openTrue, CaveatRotation)...)
	c := FitCalibration(pts)
	if l, ok := c[CaveatRotation]; ok {
		t.Errorf("the rotation kind got a mapping, %+v: the data cannot tell its truths apart, and it keeps the uncaveated one", l)
	}
	for _, x := range []struct {
		kind string
		want Logistic
	}{{"", openTrue}, {CaveatAlias, aliasTrue}} {
		got := c[x.kind]
		// Binomial noise of 4000 draws: a few tenths on A, about one on B.
		if math.Abs(got.A-x.want.A) > 0.3 || math.Abs(got.B-x.want.B) > 1.2 {
			t.Errorf("kind %q: fitted A = %.2f, B = %.2f, drawn from A = %g, B = %g", x.kind, got.A, got.B, x.want.A, x.want.B)
		}
	}
	if got, want := c[CaveatRelative], (Logistic{A: math.Log(5.0 / 2)}); math.Abs(got.A-want.A) > 1e-12 || got.B != 0 {
		t.Errorf("five relatives, one planetary: %+v, want the constant %+v (P = 2/7)", got, want)
	}
	// Scores that separate the truths: the priors keep the fit finite.
	var sep []ProbPoint
	for i := range 40 {
		s := -1 + float64(i)/20
		sep = append(sep, ProbPoint{Score: s, Planet: s < 0})
	}
	l := FitCalibration(sep)[""]
	if !(math.Abs(l.A) < 50 && l.B > 5 && l.B < 200) {
		t.Errorf("separated truths: A = %g, B = %g, want a finite, steep logistic", l.A, l.B)
	}
	if p := l.of(-0.5); !(p > 0.9) {
		t.Errorf("separated truths: P(planet) at −0.5 = %.3f, want above 0.9", p)
	}
}
