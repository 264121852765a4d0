package mapfit

import (
	"gonum.org/v1/gonum/mat"
	"math"
	"math/rand/v2"
	"testing"
)

func TestRoundTrip(t *testing.T) {
	// ToU is the inverse of ToX (an identity of the transforms).
	s := Space{
		{Name: "a", Kind: Free, Scale: 3},
		{Name: "b", Kind: Positive},
		{Name: "c", Kind: Bounded, Lo: -2, Hi: 5},
		{Name: "d", Kind: LogBounded, Lo: 0.1, Hi: 30},
		{Name: "h", Kind: DiskPair, Hi: math.Sqrt(0.95)},
		{Name: "k"},
	}
	if err := s.Validate(); err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(1, 1))
	for trial := 0; trial < 200; trial++ {
		u := make([]float64, len(s))
		for i := range u {
			u[i] = 3 * rng.NormFloat64()
		}
		x := s.ToX(nil, u)
		back, err := s.ToU(nil, x)
		if err != nil {
			t.Fatal(err)
		}
		for i := range u {
			if math.Abs(back[i]-u[i]) > 1e-6*(1+math.Abs(u[i])) {
				t.Fatalf("u %v -> x %v -> u %v", u, x, back)
			}
		}
		if e := x[4]*x[4] + x[5]*x[5]; e >= 0.95 {
			t.Fatalf("disk pair left the disk: e = %v", e)
		}
		// ln|det J| against a finite-difference determinant of dx/du.
		J, ld := s.jacobian(u)
		d := len(u)
		for j := 0; j < d; j++ {
			up := append([]float64(nil), u...)
			um := append([]float64(nil), u...)
			up[j] += 1e-6
			um[j] -= 1e-6
			xp, xm := s.ToX(nil, up), s.ToX(nil, um)
			for i := 0; i < d; i++ {
				fdv := (xp[i] - xm[i]) / 2e-6
				if math.Abs(fdv-J[i*d+j]) > 1e-5*(1+math.Abs(fdv)) {
					t.Fatalf("J[%d][%d] = %v, finite difference %v (u %v)", i, j, J[i*d+j], fdv, u)
				}
			}
		}
		det := 1.0
		for i := 0; i < 4; i++ {
			det *= J[i*d+i]
		}
		det *= J[4*d+4]*J[5*d+5] - J[4*d+5]*J[5*d+4]
		if math.Abs(math.Log(math.Abs(det))-ld) > 1e-8*(1+math.Abs(ld)) {
			t.Fatalf("ln|det J| = %v, product of blocks %v", ld, math.Log(math.Abs(det)))
		}
	}
}

func TestLaplaceLogNormal(t *testing.T) {
	// A log-normal posterior in x is an exact Gaussian in u = ln x, so the
	// Laplace approximation is exact there (analytic identity): ln Z = 0
	// for the normalised density and the error of x is x̂·s with x̂ the
	// mode of the u-density, e^μ.
	mu, s := 1.3, 0.2
	logp := func(x []float64) float64 {
		if !(x[0] > 0) {
			return math.Inf(-1)
		}
		z := (math.Log(x[0]) - mu) / s
		return -0.5*z*z - math.Log(x[0]*s*math.Sqrt(2*math.Pi))
	}
	for _, grad := range []bool{false, true} {
		p := &Problem{Space: Space{{Name: "x", Kind: Positive}}, LogPost: logp, Starts: [][]float64{{1}, {10}}}
		if grad {
			p.Grad = func(g, x []float64) float64 {
				z := (math.Log(x[0]) - mu) / s
				g[0] = (-z/s - 1) / x[0]
				return logp(x)
			}
		}
		r, err := Fit(p, nil)
		if err != nil {
			t.Fatal(err)
		}
		// The MAP of a scale is taken in ln x: for a log-normal, e^μ
		// (analytic identity).
		if want := math.Exp(mu); math.Abs(r.X[0]-want) > 1e-5*want {
			t.Errorf("grad %v: MAP %v, want %v", grad, r.X[0], want)
		}
		if !r.Converged || r.Agree != 2 {
			t.Errorf("grad %v: %s", grad, r.Summary())
		}
		L := r.Laplace
		if math.Abs(L.LogEvidence) > 1e-6 {
			t.Errorf("grad %v: ln Z = %v, want 0", grad, L.LogEvidence)
		}
		if want := math.Exp(mu) * s; math.Abs(L.Errors[0]-want) > 1e-5*want {
			t.Errorf("grad %v: error %v, want %v", grad, L.Errors[0], want)
		}
		// The quantiles of a log-normal are e^(μ−s), e^μ, e^(μ+s)
		// (analytic identity): the interval is asymmetric about the median.
		for k, got := range []float64{L.Lo[0], L.Median[0], L.Hi[0]} {
			if want := math.Exp(mu + float64(k-1)*s); math.Abs(got-want) > 1e-5*want {
				t.Errorf("grad %v: quantile %d = %v, want %v", grad, k, got, want)
			}
		}
	}
}

func TestLaplaceQuantilesTruncated(t *testing.T) {
	// A Gaussian likelihood N(μ, σ) in x times a uniform prior on [0, 1]
	// is a truncated normal; the percentiles of the Laplace approximation
	// in x truncated to the support are then exact (analytic identity):
	// x_q = μ + σ Φ⁻¹(Φ(a) + q(Φ(b) − Φ(a))), a = −μ/σ, b = (1 − μ)/σ.
	// Here μ = 0.9, σ = 0.1 leans on the upper bound. A disk pair whose
	// posterior is a narrow Gaussian well inside the disk gives the
	// Gaussian's own percentiles, x̂ ± σ. Tolerance: three Monte Carlo
	// standard errors of a percentile from 20,000 draws (about 1% of σ).
	mu, sg := 0.9, 0.1
	logp := func(x []float64) float64 {
		if !(x[0] > 0 && x[0] < 1) {
			return math.Inf(-1)
		}
		z := (x[0] - mu) / sg
		lp := -0.5 * z * z
		for k, c := range []float64{0.3, -0.2} {
			z := (x[1+k] - c) / 0.01
			lp -= 0.5 * z * z
		}
		return lp
	}
	sp := Space{{Name: "f", Kind: Bounded, Lo: 0, Hi: 1}, {Name: "h", Kind: DiskPair, Hi: 1}, {Name: "k"}}
	r, err := Fit(&Problem{Space: sp, LogPost: logp, Starts: [][]float64{{0.5, 0.1, 0.1}}}, nil)
	if err != nil {
		t.Fatal(err)
	}
	L := r.Laplace
	phi := func(z float64) float64 { return 0.5 * math.Erfc(-z/math.Sqrt2) }
	iphi := func(p float64) float64 { return -math.Sqrt2 * math.Erfcinv(2*p) }
	pa, pb := phi(-mu/sg), phi((1-mu)/sg)
	for k, got := range []float64{L.Lo[0], L.Median[0], L.Hi[0]} {
		q := []float64{0.15865525393145707, 0.5, 0.8413447460685429}[k]
		if want := mu + sg*iphi(pa+q*(pb-pa)); math.Abs(got-want) > 0.03*sg {
			t.Errorf("truncated quantile %d = %v, want %v", k, got, want)
		}
	}
	for j, c := range []float64{0.3, -0.2} {
		for k, got := range []float64{L.Lo[1+j], L.Median[1+j], L.Hi[1+j]} {
			if want := c + float64(k-1)*0.01; math.Abs(got-want) > 0.03*0.01 {
				t.Errorf("disk %d quantile %d = %v, want %v", j, k, got, want)
			}
		}
	}
}

func TestLaplaceGaussianBox(t *testing.T) {
	// A correlated 2-D Gaussian likelihood (σ = 0.1, 0.2, ρ = 0.6) inside a
	// flat prior box far wider than it: ln Z = −ln(box area) to the
	// Gaussian's mass outside the box (analytic identity), and the errors
	// are the σ's.
	s1, s2, rho := 0.1, 0.2, 0.6
	logp := func(x []float64) float64 {
		if x[0] < -5 || x[0] > 5 || x[1] < 0 || x[1] > 20 {
			return math.Inf(-1)
		}
		a, b := x[0]/s1, (x[1]-7)/s2
		q := (a*a - 2*rho*a*b + b*b) / (1 - rho*rho)
		return -0.5*q - math.Log(2*math.Pi*s1*s2*math.Sqrt(1-rho*rho)) - math.Log(10*20)
	}
	p := &Problem{Space: Space{{Name: "a", Kind: Bounded, Lo: -5, Hi: 5}, {Name: "b", Kind: Free}}, LogPost: logp,
		Starts: [][]float64{{1, 3}, {-2, 10}, {0.5, 7}}}
	r, err := Fit(p, nil)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(r.X[0]) > 1e-5 || math.Abs(r.X[1]-7) > 1e-5 {
		t.Errorf("MAP %v", r.X)
	}
	L := r.Laplace
	if want := -math.Log(200); math.Abs(L.LogEvidence-want) > 1e-3 {
		t.Errorf("ln Z %v, want %v", L.LogEvidence, want)
	}
	if math.Abs(L.Errors[0]-s1) > 1e-3*s1 || math.Abs(L.Errors[1]-s2) > 1e-3*s2 {
		t.Errorf("errors %v, want %v %v", L.Errors, s1, s2)
	}
	if c := L.Cov[0][1] / (L.Errors[0] * L.Errors[1]); math.Abs(c-rho) > 1e-3 {
		t.Errorf("correlation %v, want %v", c, rho)
	}
}

func TestAtBound(t *testing.T) {
	// The likelihood peaks at x = −1, outside the prior [0, 1]: the MAP
	// is the lower bound, flagged, with a finite error from the u-space
	// curvature.
	logp := func(x []float64) float64 {
		if x[0] < 0 || x[0] > 1 {
			return math.Inf(-1)
		}
		return -0.5 * (x[0] + 1) * (x[0] + 1) / 0.25
	}
	p := &Problem{Space: Space{{Name: "jit", Kind: Bounded, Lo: 0, Hi: 1}}, LogPost: logp, Starts: [][]float64{{0.5}}}
	r, err := Fit(p, nil)
	if err != nil {
		t.Fatal(err)
	}
	if r.AtBound[0] != AtLower || r.X[0] > 1e-3 {
		t.Errorf("x = %v, bound %q", r.X[0], r.AtBound[0])
	}
	if e := r.Laplace.Errors[0]; !(e > 0 && e < 1) {
		t.Errorf("error %v", e)
	}
}

func TestUnconstrainedIsNaN(t *testing.T) {
	// A posterior flat along x[1] (inside its box the data say nothing):
	// its curvature vanishes, so its error and the evidence are NaN.
	logp := func(x []float64) float64 {
		if x[1] < -1 || x[1] > 1 {
			return math.Inf(-1)
		}
		return -0.5 * x[0] * x[0]
	}
	p := &Problem{Space: Space{{Name: "a", Kind: Free}, {Name: "b", Kind: Free}}, LogPost: logp, Starts: [][]float64{{0.3, 0.2}}}
	r, err := Fit(p, nil)
	if err != nil {
		t.Fatal(err)
	}
	L := r.Laplace
	if !math.IsNaN(L.Errors[1]) || !L.Unconstrained[1] || !math.IsNaN(L.LogEvidence) {
		t.Errorf("errors %v, unconstrained %v, ln Z %v", L.Errors, L.Unconstrained, L.LogEvidence)
	}
	if math.Abs(L.Errors[0]-1) > 1e-3 {
		t.Errorf("error of the constrained parameter %v, want 1", L.Errors[0])
	}
}

func TestFlatDirectionLeavesOthersConstrained(t *testing.T) {
	// A curvature without curvature along (−e, 1, 0) and (0, 0, 1), as at
	// a circular orbit, where ln L is quartic in √e cos ω and √e sin ω:
	// the flat pair is flagged, and the first coordinate, barely coupled
	// to it, keeps its error (conditional on the pair at the mode). The
	// earlier rule flagged every coordinate with a squared weight above
	// 1e-6 in a flat direction, here all three.
	const e = 3e-3
	H := mat.NewSymDense(3, []float64{1, e, 0, e, e * e, 0, 0, 0, 0})
	cov, _, pd, bad := invertCurvature(H)
	if pd || bad[0] || !bad[1] || !bad[2] {
		t.Fatalf("positive definite %v, flagged %v; want only the flat pair flagged", pd, bad)
	}
	if math.Abs(cov.At(0, 0)-1) > 1e-12 {
		t.Errorf("variance of the constrained coordinate %v, want 1", cov.At(0, 0))
	}
}
