package mapfit

import (
	"math"
	"math/rand/v2"
	"sort"
	"testing"
)

// TestMarginalsCurvedSkewed checks the marginal percentiles on a
// posterior the Gaussian describes badly: y ~ Gamma(3, 1) (skewed), and
// given y, x ~ N(y², (y/2)²) (a curved ridge whose width grows with y),
// with z ~ N(1, 2²) apart. The marginal of y is Gamma(3, 1) exactly, and
// its Laplace integral over (x, z) at each y is exact (they are Gaussian
// given y), so its percentiles must come out as Gamma(3)'s (the CDF
// 1 − e^(−y)(1 + y + y²/2), an analytic identity, inverted by bisection).
// Those of x are compared with 400,000 seeded draws of the exact
// distribution (y as a sum of three unit exponentials); z is Gaussian and
// must keep its Laplace percentiles, 1 ∓ 2 (analytic identity). The old
// rule (Gaussian percentiles in ln y) misses y's by more than 10 %.
func TestMarginalsCurvedSkewed(t *testing.T) {
	logp := func(p []float64) float64 {
		y, x, z := p[0], p[1], p[2]
		if !(y > 0) {
			return math.Inf(-1)
		}
		s := y / 2
		r := (x - y*y) / s
		return 2*math.Log(y) - y - 0.5*r*r - math.Log(s) - 0.5*(z-1)*(z-1)/4
	}
	grad := func(g, p []float64) float64 {
		y, x, z := p[0], p[1], p[2]
		s := y / 2
		r := (x - y*y) / s
		// d r/dy = (−2y·s − (x − y²)/2)/s²
		drdy := (-2*y*s - (x-y*y)/2) / (s * s)
		g[0] = 2/y - 1 - r*drdy - 1/y
		g[1] = -r / s
		g[2] = -(z - 1) / 4
		return logp(p)
	}
	cdf := func(y float64) float64 { return 1 - math.Exp(-y)*(1+y+y*y/2) }
	var want [3]float64
	for j, f := range []float64{0.15865525393145707, 0.5, 0.8413447460685429} {
		a, b := 0.0, 50.0
		for it := 0; it < 100; it++ {
			if m := 0.5 * (a + b); cdf(m) < f {
				a = m
			} else {
				b = m
			}
		}
		want[j] = 0.5 * (a + b)
	}
	// x by seeded draws of the exact distribution.
	rng := rand.New(rand.NewPCG(7, 8))
	xs := make([]float64, 400000)
	for i := range xs {
		y := rng.ExpFloat64() + rng.ExpFloat64() + rng.ExpFloat64()
		xs[i] = y*y + y/2*rng.NormFloat64()
	}
	sort.Float64s(xs)
	q := func(f float64) float64 { return xs[int(f*float64(len(xs)-1))] }
	wantX := [3]float64{q(0.15865525393145707), q(0.5), q(0.8413447460685429)}
	sp := Space{{Name: "y", Kind: Positive}, {Name: "x", Kind: Free}, {Name: "z", Kind: Free}}
	for _, withGrad := range []bool{false, true} {
		p := &Problem{Space: sp, LogPost: logp, Starts: [][]float64{{2, 4, 0}, {4, 10, 2}}}
		if withGrad {
			p.Grad = grad
		}
		old, err := Fit(p, nil)
		if err != nil {
			t.Fatal(err)
		}
		r, err := Fit(p, &Settings{Marginals: true, Workers: 3})
		if err != nil {
			t.Fatal(err)
		}
		// The marginals run in parallel; the result does not depend on it.
		r1, err := Fit(p, &Settings{Marginals: true, Workers: 1})
		if err != nil {
			t.Fatal(err)
		}
		for i := range r.X {
			if a, b := r.Laplace, r1.Laplace; a.Lo[i] != b.Lo[i] || a.Median[i] != b.Median[i] || a.Hi[i] != b.Hi[i] {
				t.Errorf("grad %v: parameter %d: percentiles with 3 workers %v %v %v, with 1 %v %v %v", withGrad, i, a.Lo[i], a.Median[i], a.Hi[i], b.Lo[i], b.Median[i], b.Hi[i])
			}
		}
		if r.X[0] != old.X[0] || r.X[1] != old.X[1] {
			t.Errorf("grad %v: the MAP moved: %v, without marginals %v", withGrad, r.X, old.X)
		}
		L, O := r.Laplace, old.Laplace
		side := func(L *Laplace, i int, ref [3]float64) (lo, hi float64) {
			return (L.Median[i] - L.Lo[i]) / (ref[1] - ref[0]), (L.Hi[i] - L.Median[i]) / (ref[2] - ref[1])
		}
		ol, oh := side(O, 0, want)
		t.Logf("grad %v: y: Gaussian in ln y %.3f %.3f %.3f (sides / exact %.2f %.2f); marginal %.3f %.3f %.3f; Gamma(3) %.3f %.3f %.3f",
			withGrad, O.Lo[0], O.Median[0], O.Hi[0], ol, oh, L.Lo[0], L.Median[0], L.Hi[0], want[0], want[1], want[2])
		if math.Abs(ol-1) < 0.1 && math.Abs(oh-1) < 0.1 {
			t.Errorf("grad %v: the Gaussian percentiles of y already agree with Gamma(3): the test does not test", withGrad)
		}
		if !L.Marginal[0] || L.Marginal[2] {
			t.Errorf("grad %v: marginal flags %v, want y refined and z not", withGrad, L.Marginal)
		}
		for j, got := range []float64{L.Lo[0], L.Median[0], L.Hi[0]} {
			if math.Abs(got-want[j]) > 0.01*want[j] {
				t.Errorf("grad %v: y percentile %d = %.4f, Gamma(3) gives %.4f", withGrad, j, got, want[j])
			}
		}
		xl, xh := side(L, 1, wantX)
		t.Logf("grad %v: x: %.3f %.3f %.3f, draws %.3f %.3f %.3f (sides %.2f %.2f), flagged %v", withGrad, L.Lo[1], L.Median[1], L.Hi[1], wantX[0], wantX[1], wantX[2], xl, xh, L.Marginal[1])
		if math.Abs(xl-1) > 0.1 || math.Abs(xh-1) > 0.1 {
			t.Errorf("grad %v: x sides %.2f %.2f of the exact ones", withGrad, xl, xh)
		}
		for j, got := range []float64{L.Lo[2], L.Median[2], L.Hi[2]} {
			if want := 1 + 2*float64(j-1); math.Abs(got-want) > 1e-4 {
				t.Errorf("grad %v: z percentile %d = %v, want %v", withGrad, j, got, want)
			}
		}
	}
}

// TestMarginalsKeepGaussianWithDiskAtEdge: a skewed parameter (y ~
// Gamma(3, 1), which TestMarginalsCurvedSkewed refines) next to a disk
// pair whose posterior piles up at the disk's edge (ln p rising as 5h):
// the pair cannot be integrated about the MAP, so no parameter gets the
// marginal's percentiles and y keeps the Gaussian ones.
func TestMarginalsKeepGaussianWithDiskAtEdge(t *testing.T) {
	logp := func(p []float64) float64 {
		y, h, k := p[0], p[1], p[2]
		if !(y > 0) || h*h+k*k >= 1 {
			return math.Inf(-1)
		}
		return 2*math.Log(y) - y + 5*h - 0.5*k*k/0.01
	}
	sp := Space{{Name: "y", Kind: Positive}, {Name: "h", Kind: DiskPair, Hi: 1}, {Name: "k"}}
	p := &Problem{Space: sp, LogPost: logp, Starts: [][]float64{{2, 0.5, 0}}}
	r, err := Fit(p, &Settings{Marginals: true})
	if err != nil {
		t.Fatal(err)
	}
	old, err := Fit(p, nil)
	if err != nil {
		t.Fatal(err)
	}
	if r.AtBound[1] == Inside {
		t.Fatalf("the disk pair is not at its edge: %v at %v", r.AtBound, r.X)
	}
	for i := range r.X {
		if r.Laplace.Marginal[i] {
			t.Errorf("parameter %s refined with the disk pair at its edge", r.Names[i])
		}
		if a, b := r.Laplace.Lo[i], old.Laplace.Lo[i]; a != b && !(math.IsNaN(a) && math.IsNaN(b)) {
			t.Errorf("parameter %s: p16 %v, without marginals %v", r.Names[i], a, b)
		}
	}
}
