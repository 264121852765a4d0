package gp

import (
	"math"
	"math/rand/v2"
	"testing"
)

// mrProblem returns a three-output problem with about n points in all:
// RVs on nightly epochs, an index on most of the same epochs (shared
// spectra) and a bisector span on its own, unequal epochs; residuals drawn
// at random (the likelihood identity holds for any residuals).
func mrProblem(seed uint64, n int) (*MultiRotation, []float64, [][]float64) {
	rng := rand.New(rand.NewPCG(seed, 11))
	nrv := max(n*2/5, 3)
	var trv, tind, tbis []float64
	for i := 0; i < nrv; i++ {
		trv = append(trv, float64(i)*1.3+0.4*rng.Float64())
	}
	for _, t := range trv {
		if rng.Float64() < 0.8 {
			tind = append(tind, t)
		}
	}
	for len(tind)+len(trv)+len(tbis) < n {
		tbis = append(tbis, float64(nrv)*1.3*rng.Float64())
	}
	if len(tind) < 2 {
		tind = append(tind, trv[0]+0.2, trv[0]+0.7)
	}
	variance := func(t []float64, s float64) []float64 {
		v := make([]float64, len(t))
		for i := range v {
			v[i] = s * s * (0.5 + rng.Float64())
		}
		return v
	}
	series := []Series{
		{Output: 0, T: trv, Variance: variance(trv, 1.2)},
		{Output: 1, T: tind, Variance: variance(tind, 0.01)},
		{Output: 2, T: tbis, Variance: variance(tbis, 2)},
	}
	m, err := NewMultiRotation([]string{"rv", "index", "bis"}, series)
	if err != nil {
		panic(err)
	}
	p := []float64{13.7, 0.8, 4.5, 0.6, 5, 20, 0.05, 0, -3, 15, 0.7, 0.02, 1.1}
	r := make([][]float64, len(series))
	for i, s := range series {
		r[i] = make([]float64, len(s.T))
		sc := []float64{6, 0.06, 5}[i]
		for j := range r[i] {
			r[i][j] = sc * rng.NormFloat64()
		}
	}
	return m, p, r
}

func TestMultiRotationMatchesDense(t *testing.T) {
	// The O(N) likelihood against the dense Cholesky of the same stacked
	// covariance (NewMultiDense with RotationSHO.CovDeriv): an identity,
	// so agreement to rounding, 1e-9 in ln L.
	for _, n := range []int{10, 60, 300, 2000} {
		if n == 2000 && testing.Short() {
			continue
		}
		m, p, r := mrProblem(uint64(n), n)
		got, err := m.LogLikelihood(p, r)
		if err != nil {
			t.Fatal(err)
		}
		mm, jit, err := m.Dense(p)
		if err != nil {
			t.Fatal(err)
		}
		want, err := (&MultiNoise{Model: mm, Jitter: jit}).LogLikelihood(m.series, r)
		if err != nil {
			t.Fatal(err)
		}
		t.Logf("N = %d (%d, %d, %d): ln L %.10g, dense − O(N) %.2g", m.Len(), len(m.series[0].T), len(m.series[1].T), len(m.series[2].T), got, want-got)
		if math.Abs(got-want) > 1e-9*math.Max(1, math.Abs(want)) {
			t.Errorf("N = %d: O(N) ln L %.12g, dense %.12g (diff %.3g)", m.Len(), got, want, got-want)
		}
	}
}

func TestMultiRotationGradient(t *testing.T) {
	// The reverse-mode gradient against central finite differences
	// (step 1e-6 relative; truncation error ≈ 1e-12 relative), to 1e-6 of
	// the largest component.
	for _, n := range []int{10, 120, 2000} {
		if n == 2000 && testing.Short() {
			continue
		}
		m, p, r := mrProblem(uint64(n)+5, n)
		g := make([]float64, len(p))
		if _, err := m.LogLikelihoodGrad(g, p, r); err != nil {
			t.Fatal(err)
		}
		gmax := 0.0
		for _, v := range g {
			gmax = math.Max(gmax, math.Abs(v))
		}
		for i := range p {
			h := 1e-6 * math.Max(math.Abs(p[i]), 1)
			q := append([]float64(nil), p...)
			q[i] = p[i] + h
			fp, err1 := m.LogLikelihood(q, r)
			q[i] = p[i] - h
			fm, err2 := m.LogLikelihood(q, r)
			if err1 != nil || err2 != nil {
				t.Fatal(err1, err2)
			}
			fd := (fp - fm) / (2 * h)
			if math.Abs(fd-g[i]) > 1e-6*math.Max(math.Abs(fd), 1e-2*gmax) {
				t.Errorf("N = %d: ∂lnL/∂p[%d] = %.10g, finite difference %.10g", m.Len(), i, g[i], fd)
			}
		}
	}
}

func TestMultiRotationPredict(t *testing.T) {
	// The predictive mean against the dense model's (same formula, dense
	// solve).
	m, p, r := mrProblem(3, 80)
	mm, jit, _ := m.Dense(p)
	md, err := (&MultiNoise{Model: mm, Jitter: jit}).Factor(m.series)
	if err != nil {
		t.Fatal(err)
	}
	stack, _ := md.Stack(r)
	tnew := []float64{0.3, 5.5, 17.2, 30}
	want, _, err := md.Predict(stack, mm.Outputs[0], tnew, false)
	if err != nil {
		t.Fatal(err)
	}
	got, err := m.Predict(p, r, mm.Outputs[0], tnew)
	if err != nil {
		t.Fatal(err)
	}
	for i := range got {
		if math.Abs(got[i]-want[i]) > 1e-8*(1+math.Abs(want[i])) {
			t.Errorf("t = %v: mean %v, dense %v", tnew[i], got[i], want[i])
		}
	}
}

func BenchmarkMultiRotationGrad(b *testing.B) {
	// 3 series × 300 epochs.
	for _, n := range []int{900} {
		m, p, r := mrProblem(1, n)
		g := make([]float64, len(p))
		b.Run("n=900", func(b *testing.B) {
			for i := 0; i < b.N; i++ {
				if _, err := m.LogLikelihoodGrad(g, p, r); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
