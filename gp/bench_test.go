package gp

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"gonum.org/v1/gonum/mat"
)

func benchTimes(n int) (t, r, v []float64) {
	rnd := rand.New(rand.NewPCG(1, 1))
	t = make([]float64, n)
	r = make([]float64, n)
	v = make([]float64, n)
	for i := range t {
		t[i] = 2459000 + float64(n)/3*rnd.Float64()
		r[i] = rnd.NormFloat64()
		v[i] = 1
	}
	slices.Sort(t)
	return t, r, v
}

// BenchmarkCholesky times the blocked factorisation alone on a
// quasi-periodic covariance; BenchmarkGonumCholesky is gonum's
// mat.Cholesky on the same matrix for comparison.
func BenchmarkCholesky(b *testing.B) {
	for _, n := range []int{500, 1000, 2000} {
		b.Run(fmt.Sprintf("n=%d", n), func(b *testing.B) {
			ts, _, _ := benchTimes(n)
			k := QuasiPeriodic{1, 50, 25, 1}
			c := newCholeskyBuffer(n)
			for i := 0; i < n; i++ {
				for j := 0; j <= i; j++ {
					c.a[i*c.ld+j] = k.Cov(ts[i] - ts[j])
				}
				c.a[i*c.ld+i] += 1
			}
			orig := slices.Clone(c.a)
			b.ResetTimer()
			for b.Loop() {
				b.StopTimer()
				copy(c.a, orig)
				b.StartTimer()
				if !c.factor() {
					b.Fatal("not PD")
				}
			}
		})
	}
}

func BenchmarkGonumCholesky(b *testing.B) {
	for _, n := range []int{500, 1000, 2000} {
		b.Run(fmt.Sprintf("n=%d", n), func(b *testing.B) {
			ts, _, _ := benchTimes(n)
			k := QuasiPeriodic{1, 50, 25, 1}
			s := mat.NewSymDense(n, nil)
			for i := 0; i < n; i++ {
				for j := 0; j <= i; j++ {
					s.SetSym(i, j, k.Cov(ts[i]-ts[j])+b2f(i == j))
				}
			}
			var ch mat.Cholesky
			for b.Loop() {
				if !ch.Factorize(s) {
					b.Fatal("not PD")
				}
			}
		})
	}
}

// BenchmarkDenseQPLogLikelihood times a full dense quasi-periodic
// log-likelihood: building K, factorising, solving.
func BenchmarkDenseQPLogLikelihood(b *testing.B) {
	for _, n := range []int{500, 1000, 2000} {
		b.Run(fmt.Sprintf("n=%d", n), func(b *testing.B) {
			ts, r, v := benchTimes(n)
			k := QuasiPeriodic{1, 50, 25, 1}
			for b.Loop() {
				d, err := NewDense(k, ts, v, nil)
				if err != nil {
					b.Fatal(err)
				}
				if _, err := d.LogLikelihood(r); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

// BenchmarkSemisepLogLikelihood times the O(N J²) log-likelihood of an
// SHO + rotation kernel (J = 3 terms, rank 5), including the factorisation.
func BenchmarkSemisepLogLikelihood(b *testing.B) {
	for _, n := range []int{1000, 10000, 100000} {
		b.Run(fmt.Sprintf("n=%d", n), func(b *testing.B) {
			ts, r, v := benchTimes(n)
			k := Sum{SHO{1, 2 * math.Pi / 4, 3}, RotationTerm{0.8, 0.5, 20, 6}}
			for b.Loop() {
				s, err := NewSemisep(k, ts, v)
				if err != nil {
					b.Fatal(err)
				}
				if _, err := s.LogLikelihood(r); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

// BenchmarkMultiLogLikelihood times the Rajpaul et al. (2015) model with
// three series of 300 epochs each (a 900×900 stacked covariance), with
// the series observed at the same epochs (indicators from the same
// spectra) and at distinct epochs.
func BenchmarkMultiLogLikelihood(b *testing.B) {
	m := NewRajpaul(NewQuasiPeriodicRajpaul(1, 25, 0.5, 50), 2, 15, 0.8, -1.5, 8)
	for _, shared := range []bool{true, false} {
		name := "series=3,n=300,epochs=distinct"
		if shared {
			name = "series=3,n=300,epochs=shared"
		}
		b.Run(name, func(b *testing.B) {
			var series []Series
			var res [][]float64
			for o := 0; o < 3; o++ {
				ts, r, v := benchTimes(300)
				if !shared {
					for i := range ts {
						ts[i] += 0.01 * float64(o+1)
					}
				}
				series = append(series, Series{Output: o, T: ts, Variance: v})
				res = append(res, r)
			}
			for b.Loop() {
				if _, err := m.LogLikelihood(series, res); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

// BenchmarkMultiFit times a full MAP fit (with Laplace uncertainties) of
// the Rajpaul et al. (2015) model to three series observed at the same
// 300 epochs (indicators from the same spectra), drawn from the model,
// starting 5% off the truth.
func BenchmarkMultiFit(b *testing.B) {
	n := 300
	rnd := rand.New(rand.NewPCG(1, 1))
	truth := NewRajpaul(NewQuasiPeriodicRajpaul(1, 25, 0.5, 50), 2, 15, 0.8, -1.5, 8)
	ts := make([]float64, n)
	for i := range ts {
		ts[i] = 300 * rnd.Float64()
	}
	var series []Series
	for o := 0; o < 3; o++ {
		series = append(series, Series{Output: o, T: ts, Variance: constSlice(n, 0.25)})
	}
	md, err := NewMultiDense(truth, series, nil)
	if err != nil {
		b.Fatal(err)
	}
	y, _ := md.DrawSeries(rnd)
	fixed := make([]bool, truth.NumParams())
	fixed[0], fixed[4+2*OutIndex+1] = true, true
	start, _ := truth.WithParams(perturb(truth.Params(nil), fixed, 0.05, rnd))
	b.Run("series=3,n=300", func(b *testing.B) {
		for b.Loop() {
			_, res, err := FitMulti(start, series, y, &FitSettings{Fixed: fixed})
			if err != nil {
				b.Fatal(err)
			}
			b.ReportMetric(float64(res.Evaluations), "evals/op")
		}
	})
}

// BenchmarkNoiseLogLikelihoodGrad times ln L and its analytic gradient for
// a QP kernel with two instrument jitters (O(N³): the explicit inverse).
func BenchmarkNoiseLogLikelihoodGrad(b *testing.B) {
	for _, n := range []int{100, 300} {
		b.Run(fmt.Sprintf("n=%d", n), func(b *testing.B) {
			ts, r, v := benchTimes(n)
			inst := make([]int, n)
			for i := range inst {
				inst[i] = i % 2
			}
			m := &Noise{Kernel: QuasiPeriodic{1, 50, 25, 1}, Jitter: []float64{0.5, 1}}
			g := make([]float64, m.NumParams())
			for b.Loop() {
				if _, err := m.LogLikelihoodGrad(g, ts, r, v, inst); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
