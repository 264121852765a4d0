package activity

import (
	"context"
	"math"
	"path/filepath"
	"testing"

	"spotsift/rvfit/rvtest"
)

// TestEccentricOrbitFound: an orbit with e = 0.85 is a spike once a
// period, and the sinusoid search sees only its harmonics. The blind
// search must find the orbit itself at 120 d, with its semi-amplitude,
// and judge no other signal planet-like.
func TestEccentricOrbitFound(t *testing.T) {
	s := keplerSeries(4, 2, [3]float64{120, 40, 0.85})
	dg, err := Diagnose(context.Background(), s, &Options{SkipModels: true, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	T := float64(dg.Baseline)
	found := false
	for _, sg := range dg.Signals {
		p := float64(sg.Period)
		t.Logf("%.5g d %s (%s) K = %.3g ± %.2g, score %+.2f, %q", p, sg.Source, sg.Verdict, float64(sg.K), float64(sg.KErr), sg.Score, sg.Caveat)
		if math.Abs(1/p-1/120.0) < 1/T {
			found = true
			if sg.Source != sourceEccentric || math.Abs(float64(sg.K)-40) > 4 {
				t.Errorf("the orbit at %.5g d: source %q, K = %.3g (want the eccentric orbit search's, K = 40)", p, sg.Source, float64(sg.K))
			}
			continue
		}
		if sg.Verdict == PlanetLike {
			t.Errorf("%.5g d is planet-like: only the 120 d orbit is there", p)
		}
	}
	if !found {
		t.Errorf("the 120 d orbit (e = 0.85) was not found")
	}
}

// TestHD156846Blind: HD 156846 b (P = 359.5 d, e = 0.85, K = 464 m/s;
// Tamuz et al. 2008, from memory) in its Keck/HIRES velocities as
// published. Blind, the orbit must be found near 359.5 d and be the only
// planet-like signal; the sinusoid search alone found four "planets" at
// its harmonics and their aliases and missed the orbit.
func TestHD156846Blind(t *testing.T) {
	path := filepath.Join(rvtest.RealDataDir(t), "keck-hires", "HD156846_KECK.vels")
	dg, err := Diagnose(context.Background(), readVels(t, path), &Options{Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	found := false
	for _, sg := range dg.Signals {
		p := float64(sg.Period)
		t.Logf("%.5g d %s (%s) K = %.4g, %s", p, sg.Source, sg.Verdict, float64(sg.K), sg.Summary)
		if math.Abs(p-359.5) < 3.6 {
			found = true
			if sg.Verdict != PlanetLike || math.Abs(float64(sg.K)-464) > 25 {
				t.Errorf("HD 156846 b at %.5g d: %s, K = %.4g m/s (published: planet, 464 m/s)", p, sg.Verdict, float64(sg.K))
			}
		} else if sg.Verdict == PlanetLike {
			t.Errorf("%.5g d is planet-like: HD 156846 has one known planet", p)
		}
	}
	if !found {
		t.Errorf("HD 156846 b (359.5 d) was not found")
	}
}

// BenchmarkEccentricSearch is the blind diagnosis (no GP) of the orbit of
// TestEccentricOrbitFound: the sinusoid search, the eccentric orbit
// search that replaces its four signals, and the search again.
func BenchmarkEccentricSearch(b *testing.B) {
	s := keplerSeries(4, 2, [3]float64{120, 40, 0.85})
	for b.Loop() {
		if _, err := Diagnose(context.Background(), s, &Options{SkipModels: true, Seed: 1}); err != nil {
			b.Fatal(err)
		}
	}
}
