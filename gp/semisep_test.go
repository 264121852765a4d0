package gp

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
)

// TestSemisepAppendixB checks the O(N J²) solver against docs/methods.md
// Appendix B [computed] and the scipy reference.
func TestSemisepAppendixB(t *testing.T) {
	c := loadRef(t)["appendixB"]
	k := refKernel(t, c)
	s, err := NewSemisep(k, c.T, c.Variance)
	if err != nil {
		t.Fatal(err)
	}
	ll, err := s.LogLikelihood(c.R)
	if err != nil {
		t.Fatal(err)
	}
	// docs/methods.md Appendix B [computed].
	if !scalar.EqualWithinRel(ll, -15.614853466141, 1e-11) {
		t.Errorf("ln L = %.12f, want -15.614853466141", ll)
	}
	if !scalar.EqualWithinRel(s.LogDet(), 10.667471783577, 1e-11) {
		t.Errorf("ln det = %.12f, want 10.667471783577", s.LogDet())
	}
	x, _ := s.Solve(nil, c.R)
	for i, want := range []float64{0.274001943934, -0.048982477847, -0.221155539310} {
		if math.Abs(x[i]-want) > 1e-11 {
			t.Errorf("x[%d] = %.12f, want %.12f", i, x[i], want)
		}
	}
	for i := range x {
		if !scalar.EqualWithinAbsOrRel(x[i], c.Alpha[i], 1e-12, 1e-10) {
			t.Errorf("x[%d] = %.15g, scipy %.15g", i, x[i], c.Alpha[i])
		}
	}
}

// TestSemisepMatchesDense compares the semiseparable and dense solvers on
// the same kernel, to 1e-9 relative (the tolerance), for N = 10 to
// 2000 with repeated epochs and very short and very long time scales.
func TestSemisepMatchesDense(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 1))
	sizes := []int{10, 37, 200, 800, 2000}
	if testing.Short() {
		sizes = []int{10, 37, 200}
	}
	kernels := []struct {
		name string
		k    Kernel
	}{
		{"SHO+Rotation", Sum{SHO{1, 2 * math.Pi / 4, 3}, RotationTerm{0.8, 0.5, 20, 6}}},
		{"SHO Q<1/2", SHO{0.7, 1.1, 0.3}},
		{"SHO Q=1/sqrt2", SHO{2, 0.5, 1 / math.Sqrt2}},
		{"RotationSHO", RotationSHO{2, 13, 0.8, 6, 0.5}},
		{"short scales", Sum{SHO{1, 200, 5}, RotationTerm{0.5, 0.2, 0.01, 0.05}}},
		{"long scales", Sum{SHO{1e-6, 1e-3, 0.6}, RotationTerm{3, 1, 1e5, 4e4}}},
		{"with White", Sum{RotationTerm{1, 0.5, 30, 11}, White{0.4}}},
		{"RotationSHO+Exponential", Sum{RotationSHO{2, 13, 0.8, 6, 0.5}, Exponential{3, 900}}},
	}
	for _, n := range sizes {
		ts := make([]float64, n)
		for i := range ts {
			ts[i] = 2459000 + 500*rnd.Float64()
		}
		// Repeated epochs: a few points share a time.
		for i := 0; i+3 < n; i += 9 {
			ts[i+1] = ts[i]
		}
		slices.Sort(ts)
		v := make([]float64, n)
		r := make([]float64, n)
		for i := range v {
			v[i] = 0.05 + 0.3*rnd.Float64()
			r[i] = rnd.NormFloat64()
		}
		for _, kr := range kernels {
			t.Run(fmt.Sprintf("%s/n=%d", kr.name, n), func(t *testing.T) {
				d, err := NewDense(kr.k, ts, v, &DenseSettings{MaxJitter: -1})
				if err != nil {
					t.Fatal(err)
				}
				s, err := NewSemisep(kr.k, ts, v)
				if err != nil {
					t.Fatal(err)
				}
				ld, _ := d.LogLikelihood(r)
				ls, _ := s.LogLikelihood(r)
				if !scalar.EqualWithinRel(ld, ls, 1e-9) {
					t.Errorf("ln L dense %.15g, semisep %.15g", ld, ls)
				}
				if !scalar.EqualWithinAbsOrRel(d.LogDet(), s.LogDet(), 1e-9*float64(n), 1e-9) {
					t.Errorf("ln det dense %.15g, semisep %.15g", d.LogDet(), s.LogDet())
				}
				xd, _ := d.Solve(nil, r)
				xs, _ := s.Solve(nil, r)
				m := maxAbs(xd)
				for i := range xd {
					if math.Abs(xd[i]-xs[i]) > 1e-9*m {
						t.Fatalf("x[%d] dense %.15g, semisep %.15g", i, xd[i], xs[i])
					}
				}
				if n <= 200 {
					tn := []float64{ts[0] - 3, ts[n/2] + 0.1, ts[n-1] + 5}
					md, vd, _ := d.Predict(r, tn, true)
					ms, vs, _ := s.Predict(r, tn, true)
					for i := range tn {
						k0 := kr.k.Cov(0)
						if math.Abs(md[i]-ms[i]) > 1e-9*math.Max(maxAbs(md), k0) || math.Abs(vd[i]-vs[i]) > 1e-9*k0 {
							t.Errorf("prediction %d: dense (%g, %g), semisep (%g, %g)", i, md[i], vd[i], ms[i], vs[i])
						}
					}
				}
			})
		}
	}
}

func TestSemisepBadInput(t *testing.T) {
	k := RotationTerm{1, 0.5, 20, 6}
	if _, err := NewSemisep(k, []float64{0, 2, 1}, nil); !errors.Is(err, ErrUnsorted) {
		t.Errorf("unsorted: %v", err)
	}
	if _, err := NewSemisep(QuasiPeriodic{1, 2, 3, 4}, []float64{0, 1}, nil); !errors.Is(err, ErrNotSemiseparable) {
		t.Errorf("QP: %v", err)
	}
	if _, err := NewSemisep(Sum{k, Matern32{1, 1}}, []float64{0, 1}, nil); !errors.Is(err, ErrNotSemiseparable) {
		t.Errorf("Sum with Matern: %v", err)
	}
	// Identical epochs and no noise: a zero pivot.
	s, err := NewSemisep(k, []float64{0, 1, 1}, nil)
	if !errors.Is(err, ErrNotPositiveDefinite) || s.Status() != NotPositiveDefinite {
		t.Errorf("singular: %v", err)
	}
	s, err = NewSemisep(k, []float64{0, 1, 2}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := s.Solve(nil, []float64{1}); !errors.Is(err, ErrLength) {
		t.Errorf("short y: %v", err)
	}
}

// TestSemisepPredictMean checks the O(N + M) predictive mean against the
// direct sum K*ᵀα at new times before, between, on and after the epochs.
func TestSemisepPredictMean(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 1))
	n := 300
	ts := make([]float64, n)
	r := make([]float64, n)
	for i := range ts {
		ts[i] = 2459000 + 200*rnd.Float64()
		r[i] = rnd.NormFloat64()
	}
	ts[5] = ts[4]
	slices.Sort(ts)
	k := Sum{SHO{1, 0.8, 0.3}, RotationTerm{2, 0.5, 15, 7}, SHO{0.4, 3, 4}}
	s, err := NewSemisep(k, ts, constSlice(n, 0.1))
	if err != nil {
		t.Fatal(err)
	}
	tn := []float64{ts[0] - 50, ts[0], ts[4], ts[n-1], ts[n-1] + 3, ts[100] + 0.01}
	for range 50 {
		tn = append(tn, ts[0]-10+220*rnd.Float64())
	}
	mean, _, err := s.Predict(r, tn, false)
	if err != nil {
		t.Fatal(err)
	}
	alpha, _ := s.Solve(nil, r)
	for m, x := range tn {
		var want float64
		for i, ti := range ts {
			want += k.Cov(x-ti) * alpha[i]
		}
		if math.Abs(mean[m]-want) > 1e-10*(1+math.Abs(want)) {
			t.Errorf("t* = %.4f: mean %.15g, direct %.15g", x, mean[m], want)
		}
	}
}
