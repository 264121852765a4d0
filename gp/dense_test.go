package gp

import (
	"errors"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/mat"
)

// refKernel builds the kernel of a make_ref.py case.
func refKernel(t *testing.T, c refCase) Kernel {
	p := c.Params
	switch c.Name {
	case "appendixB":
		return Sum{SHO{p[0], p[1], p[2]}, RotationTerm{p[3], p[4], p[5], p[6]}}
	case "qp60":
		return QuasiPeriodic{p[0], p[1], p[2], p[3]}
	case "matern_sho_low_q":
		return Sum{Matern32{p[0], p[1]}, SHO{p[2], p[3], p[4]}}
	}
	t.Fatalf("unknown case %q", c.Name)
	return nil
}

// TestDenseAgainstScipy compares the dense solver with scipy's Cholesky
// (testdata/gp/ref.json, make_ref.py) to 1e-8 relative (the issue's
// tolerance), and docs/methods.md Appendix B [computed].
func TestDenseAgainstScipy(t *testing.T) {
	ref := loadRef(t)
	for _, name := range []string{"appendixB", "qp60", "matern_sho_low_q"} {
		c := ref[name]
		t.Run(name, func(t *testing.T) {
			k := refKernel(t, c)
			d, err := NewDense(k, c.T, c.Variance, nil)
			if err != nil {
				t.Fatal(err)
			}
			if d.Status() != Factorized {
				t.Errorf("status %v", d.Status())
			}
			ll, err := d.LogLikelihood(c.R)
			if err != nil {
				t.Fatal(err)
			}
			const tol = 1e-8
			if !scalar.EqualWithinRel(ll, c.LnL, tol) {
				t.Errorf("ln L = %.15g, scipy %.15g", ll, c.LnL)
			}
			if !scalar.EqualWithinRel(d.LogDet(), c.LogDet, tol) {
				t.Errorf("ln det K = %.15g, scipy %.15g", d.LogDet(), c.LogDet)
			}
			x, err := d.Solve(nil, c.R)
			if err != nil {
				t.Fatal(err)
			}
			var chi2 float64
			for i := range x {
				chi2 += x[i] * c.R[i]
				if !scalar.EqualWithinAbsOrRel(x[i], c.Alpha[i], tol*maxAbs(c.Alpha), tol) {
					t.Errorf("x[%d] = %.15g, scipy %.15g", i, x[i], c.Alpha[i])
				}
			}
			if !scalar.EqualWithinRel(chi2, c.Chi2, tol) {
				t.Errorf("rᵀK⁻¹r = %.15g, scipy %.15g", chi2, c.Chi2)
			}
			if c.TNew != nil {
				mean, pv, err := d.Predict(c.R, c.TNew, true)
				if err != nil {
					t.Fatal(err)
				}
				for i := range mean {
					if !scalar.EqualWithinAbsOrRel(mean[i], c.Mean[i], 1e-8*maxAbs(c.Mean), tol) {
						t.Errorf("mean[%d] = %.15g, scipy %.15g", i, mean[i], c.Mean[i])
					}
					if !scalar.EqualWithinAbsOrRel(pv[i], c.PredVar[i], 1e-8*c.Params[0]*c.Params[0], tol) {
						t.Errorf("var[%d] = %.15g, scipy %.15g", i, pv[i], c.PredVar[i])
					}
				}
			}
		})
	}
	// Appendix B of docs/methods.md [computed]: rᵀK⁻¹r = 2.183464484611,
	// ln det K = 10.667471783577, ln L = −15.614853466141.
	c := ref["appendixB"]
	d, err := NewDense(refKernel(t, c), c.T, c.Variance, nil)
	if err != nil {
		t.Fatal(err)
	}
	ll, _ := d.LogLikelihood(c.R)
	if !scalar.EqualWithinRel(ll, -15.614853466141, 1e-11) || !scalar.EqualWithinRel(d.LogDet(), 10.667471783577, 1e-11) {
		t.Errorf("Appendix B: ln L = %.12f, ln det = %.12f", ll, d.LogDet())
	}
}

func maxAbs(x []float64) float64 {
	var m float64
	for _, v := range x {
		m = math.Max(m, math.Abs(v))
	}
	return m
}

// TestCholeskyAgainstGonum checks the blocked factorisation against gonum's
// mat.Cholesky over sizes that cross every block and tile boundary.
func TestCholeskyAgainstGonum(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 1))
	for _, n := range []int{1, 2, 3, 5, 8, 13, 47, 48, 49, 97, 130, 257} {
		ts := make([]float64, n)
		for i := range ts {
			ts[i] = 100 * rnd.Float64()
		}
		k := QuasiPeriodic{1, 30, 9, 0.8}
		c := newCholeskyBuffer(n)
		sym := mat.NewSymDense(n, nil)
		for i := 0; i < n; i++ {
			for j := 0; j <= i; j++ {
				v := k.Cov(ts[i] - ts[j])
				if i == j {
					v += 0.1
				}
				c.a[i*c.ld+j] = v
				sym.SetSym(i, j, v)
			}
		}
		if !c.factor() {
			t.Fatalf("n=%d: factor failed", n)
		}
		var ch mat.Cholesky
		if !ch.Factorize(sym) {
			t.Fatalf("n=%d: gonum failed", n)
		}
		var l mat.TriDense
		ch.LTo(&l)
		for i := 0; i < n; i++ {
			for j := 0; j <= i; j++ {
				if math.Abs(c.at(i, j)-l.At(i, j)) > 1e-12 {
					t.Fatalf("n=%d: L[%d,%d] = %.15g, gonum %.15g", n, i, j, c.at(i, j), l.At(i, j))
				}
			}
		}
		if !scalar.EqualWithinRel(c.logDet(), ch.LogDet(), 1e-12) {
			t.Errorf("n=%d: logdet %g, gonum %g", n, c.logDet(), ch.LogDet())
		}
	}
}

func TestDenseJitterAndNotPD(t *testing.T) {
	// Identical epochs with no noise: K is rank one. Stepped jitter must
	// rescue it and say so; with jitter disabled it must fail cleanly.
	ts := []float64{1, 1, 1, 2, 2}
	k := QuasiPeriodic{1, 30, 10, 0.5}
	d, err := NewDense(k, ts, nil, nil)
	if err != nil {
		t.Fatalf("with jitter: %v", err)
	}
	if d.Status() != JitterAdded || !(d.Jitter() > 0) {
		t.Errorf("status %v jitter %g, want JitterAdded > 0", d.Status(), d.Jitter())
	}
	d, err = NewDense(k, ts, nil, &DenseSettings{MaxJitter: -1})
	if !errors.Is(err, ErrNotPositiveDefinite) || d == nil || d.Status() != NotPositiveDefinite {
		t.Fatalf("no jitter: err = %v", err)
	}
	if _, err := d.LogLikelihood(make([]float64, 5)); !errors.Is(err, ErrNotPositiveDefinite) {
		t.Errorf("LogLikelihood after failure: %v", err)
	}
	if st := d.Status(); st.Err() == nil || st.String() == "" {
		t.Errorf("Status.Err() = nil")
	}
}

func TestDenseBadInput(t *testing.T) {
	k := QuasiPeriodic{1, 30, 10, 0.5}
	for _, row := range []struct {
		name    string
		t, v    []float64
		wantErr error
	}{
		{"empty", nil, nil, ErrNoData},
		{"NaN time", []float64{0, math.NaN()}, nil, ErrNaN},
		{"length", []float64{0, 1}, []float64{1}, ErrLength},
		{"negative variance", []float64{0, 1}, []float64{1, -1}, ErrNegativeVariance},
		{"Inf variance", []float64{0, 1}, []float64{1, math.Inf(1)}, ErrNaN},
	} {
		t.Run(row.name, func(t *testing.T) {
			_, err := NewDense(k, row.t, row.v, nil)
			if !errors.Is(err, row.wantErr) {
				t.Errorf("err = %v, want %v", err, row.wantErr)
			}
		})
	}
	d, err := NewDense(k, []float64{0, 1, 2}, nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := d.LogLikelihood([]float64{1, 2}); !errors.Is(err, ErrLength) {
		t.Errorf("short r: %v", err)
	}
	if _, err := d.LogLikelihood([]float64{1, math.NaN(), 2}); !errors.Is(err, ErrNaN) {
		t.Errorf("NaN r: %v", err)
	}
	if _, _, err := NewDenseMust(t, SHO{1, 1, 3}).PredictDeriv([]float64{0, 0, 0}, []float64{1}, false); !errors.Is(err, ErrNotDifferentiable) {
		t.Errorf("PredictDeriv on SHO: %v", err)
	}
}

func NewDenseMust(t *testing.T, k Kernel) *Dense {
	d, err := NewDense(k, []float64{0, 1, 2}, []float64{1, 1, 1}, nil)
	if err != nil {
		t.Fatal(err)
	}
	return d
}

// TestDrawCovariance checks that prior draws have the kernel's covariance
// (Monte Carlo, 4000 draws: tolerance 5 standard errors of a sample
// covariance, ≈ 5·√(2/4000)·k(0)).
func TestDrawCovariance(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 1))
	ts := []float64{0, 0.5, 2, 7}
	k := Sum{QuasiPeriodic{2, 20, 5, 0.7}, White{0.5}}
	d, err := NewDense(k, ts, nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	s, err := NewSemisep(Sum{RotationTerm{4, 0.3, 10, 5}, White{0.5}}, ts, nil)
	if err != nil {
		t.Fatal(err)
	}
	for _, row := range []struct {
		name string
		draw func([]float64) ([]float64, error)
		cov  func(i, j int) float64
	}{
		{"dense", func(dst []float64) ([]float64, error) { return d.Draw(dst, rnd) },
			func(i, j int) float64 { return k.Cov(ts[i]-ts[j]) + b2f(i == j)*0.25 }},
		{"semisep", func(dst []float64) ([]float64, error) { return s.Draw(dst, rnd) },
			func(i, j int) float64 { return RotationTerm{4, 0.3, 10, 5}.Cov(ts[i]-ts[j]) + b2f(i == j)*0.25 }},
	} {
		t.Run(row.name, func(t *testing.T) {
			const m = 4000
			var c [4][4]float64
			y := make([]float64, 4)
			for range m {
				y, _ = row.draw(y)
				for i := range 4 {
					for j := range 4 {
						c[i][j] += y[i] * y[j] / m
					}
				}
			}
			for i := range 4 {
				for j := range 4 {
					want := row.cov(i, j)
					tol := 5 * math.Sqrt(2.0/m) * row.cov(0, 0)
					if math.Abs(c[i][j]-want) > tol {
						t.Errorf("cov[%d][%d] = %.4g, want %.4g ± %.2g", i, j, c[i][j], want, tol)
					}
				}
			}
		})
	}
}

func b2f(b bool) float64 {
	if b {
		return 1
	}
	return 0
}

// TestGemmTile checks the dispatched micro-kernel (assembly where
// available) against the portable Go one.
func TestGemmTile(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 1))
	for _, k := range []int{1, 2, 7, 8, 48} {
		lda, ldc := k+3, 13
		a := make([]float64, 4*lda)
		b := make([]float64, k*cholNR)
		c1 := make([]float64, 4*ldc)
		for _, s := range [][]float64{a, b, c1} {
			for i := range s {
				s[i] = rnd.NormFloat64()
			}
		}
		c2 := append([]float64(nil), c1...)
		gemmTile(k, a, lda, b, c1, ldc)
		gemmTileGo(k, a, lda, b, c2, ldc)
		for i := range c1 {
			if math.Abs(c1[i]-c2[i]) > 1e-13*float64(k) {
				t.Fatalf("k=%d: c[%d] = %.17g, Go %.17g (fast kernel: %v)", k, i, c1[i], c2[i], hasFastKernel)
			}
		}
	}
}
