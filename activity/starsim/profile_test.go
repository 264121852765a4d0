package starsim

import (
	"errors"
	"math"
	"testing"
)

// halfGaussian returns the profile 1 − D exp(−(v − v0)²/(2σ²)) with σ = sL
// left of v0 and sR right of it (docs/methods.md §3).
func halfGaussian(v0, D, sL, sR, h, span float64) *Profile {
	p := &Profile{}
	for v := -span; v <= span+h/2; v += h {
		s := sL
		if v >= v0 {
			s = sR
		}
		u := (v - v0) / s
		p.Velocity = append(p.Velocity, v)
		p.Flux = append(p.Flux, 1-D*math.Exp(-0.5*u*u))
	}
	return p
}

func TestBIS(t *testing.T) {
	for _, c := range []struct {
		name       string
		sL, sR, v0 float64
		want, tol  float64
	}{
		// Symmetric profile: BIS = 0 exactly [docs/methods.md §3, computed].
		{"symmetric", 3, 3, 0.7, 0, 1e-9},
		// Half-Gaussian 3.0/3.3 km/s: BIS = +0.140963 km/s for continuous
		// zones 10–40/60–90 % (docs/methods.md §3 [computed]); 31 levels per zone
		// differ from the continuous mean by < 1e-3 km/s.
		{"half-gaussian", 3.0, 3.3, 0.5, 0.140963, 1e-3},
		// Mirrored: the sign flips.
		{"mirrored", 3.3, 3.0, -0.2, -0.140963, 1e-3},
	} {
		p := halfGaussian(c.v0, 0.6, c.sL, c.sR, 0.002, 25)
		if got := p.BIS(); math.Abs(got-c.want) > c.tol {
			t.Errorf("%s: BIS = %.6f km/s, want %.6f ± %g", c.name, got, c.want, c.tol)
		}
	}
	// The exact 31-level value: mean of (σR − σL)/2·√(−2 ln d) over the
	// levels of each zone [analytic, docs/methods.md §3 formula for b(d)].
	zone := func(lo, hi float64) float64 {
		var s float64
		for k := 0; k < 31; k++ {
			d := lo + (hi-lo)*float64(k)/30
			s += math.Sqrt(-2 * math.Log(d))
		}
		return s / 31
	}
	want := 0.3 / 2 * (zone(0.1, 0.4) - zone(0.6, 0.9))
	p := halfGaussian(0.5, 0.6, 3.0, 3.3, 0.002, 25)
	if got := p.BIS(); math.Abs(got-want) > 2e-5 {
		t.Errorf("half-gaussian 31 levels: BIS = %.7f, want %.7f", got, want)
	}
}

func TestFitGaussian(t *testing.T) {
	p := &Profile{}
	for v := -20.0; v <= 20; v += 0.05 {
		u := (v - 0.37) / 2.6
		p.Velocity = append(p.Velocity, v)
		p.Flux = append(p.Flux, 0.99-0.45*math.Exp(-0.5*u*u))
	}
	g, err := FitGaussian(p)
	if err != nil {
		t.Fatal(err)
	}
	// An exact Gaussian is recovered to rounding [analytic].
	for _, c := range []struct {
		name      string
		got, want float64
	}{{"C0", g.C0, 0.99}, {"A", g.A, 0.45}, {"V0", g.V0, 0.37}, {"Sigma", g.Sigma, 2.6}} {
		if math.Abs(c.got-c.want) > 1e-9 {
			t.Errorf("%s = %.12g, want %g", c.name, c.got, c.want)
		}
	}
	if f := g.FWHM(); math.Abs(f-2.6*2.354820045) > 1e-8 {
		t.Errorf("FWHM = %v, want 2.354820045 σ (docs/methods.md §0)", f)
	}
	flat := &Profile{Velocity: []float64{0, 1, 2}, Flux: []float64{1, 1, 1}}
	if _, err := FitGaussian(flat); !errors.Is(err, ErrFit) {
		t.Errorf("flat profile: err = %v, want ErrFit", err)
	}
}
