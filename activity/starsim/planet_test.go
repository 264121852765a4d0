package starsim

import (
	"math"
	"testing"
)

func TestPlanetRV(t *testing.T) {
	// docs/methods.md §7 [computed]: K = 10 m/s, e = 0.3, ω = 60°, Tc = 0, P = 10 d.
	p := Planet{Period: 10, K: 10, E: 0.3, Omega: 60}
	for _, c := range []struct{ t, want float64 }{
		{0, 1.5}, {1, -6.670060365}, {2.5, -8.180190830}, {5, -2.097521484}, {7.5, 8.083001515},
	} {
		if got := p.RV(c.t); math.Abs(got-c.want) > 1e-8 {
			t.Errorf("RV(%g) = %.9f, want %.9f (docs/methods.md §7)", c.t, got, c.want)
		}
	}
	// Circular orbit: v decreases through 0 at Tc; v(Tc + 0.01) = −0.06283
	// m/s for K = 10 (docs/methods.md §7).
	c := Planet{Period: 10, K: 10, Omega: 90}
	if got := c.RV(0.01); math.Abs(got+0.06283) > 1e-5 {
		t.Errorf("circular RV(0.01) = %.6f, want −0.06283", got)
	}
	// Periastron times for Tc = 0 (docs/methods.md §7 [computed]).
	for _, c := range []struct{ e, w, want float64 }{
		{0, 90, 0}, {0.3, 60, -0.437210}, {0.5, 250, 3.611896}, {0.1, -90, -5.0},
	} {
		p := Planet{Period: 10, E: c.e, Omega: c.w}
		got := math.Mod(p.PeriastronTime(), 10)
		want := math.Mod(c.want, 10)
		d := math.Abs(got - want)
		d = math.Min(d, 10-d)
		if d > 1e-6 {
			t.Errorf("e %g ω %g: T_p = %.6f, want %.6f (mod P)", c.e, c.w, got, c.want)
		}
	}
}

func TestDopplerFactor(t *testing.T) {
	// docs/methods.md §1 [computed]: exact z for 1, 30 and 100 km/s.
	for _, c := range []struct{ v, z float64 }{
		{1e3, 3.335646515e-6}, {30e3, 1.000742360e-4}, {100e3, 3.336197463e-4},
	} {
		if got := DopplerFactor(c.v) - 1; math.Abs(got/c.z-1) > 1e-8 {
			t.Errorf("z(%g m/s) = %.10g, want %.10g", c.v, got, c.z)
		}
	}
}
