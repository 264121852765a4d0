package gp

import (
	"errors"
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
)

// TestMultiAgainstScipy compares the stacked Rajpaul et al. (2015)
// likelihood with scipy (testdata/gp/make_ref.py, case rajpaul3: three
// series with their own epochs) to 1e-8 relative.
func TestMultiAgainstScipy(t *testing.T) {
	c := loadRef(t)["rajpaul3"]
	p := c.Params
	m := NewRajpaul(NewQuasiPeriodicRajpaul(1, p[0], p[1], p[2]), p[3], p[4], p[5], p[6], p[7])
	out := map[string]int{"rv": OutRV, "index": OutIndex, "bis": OutBIS}
	var series []Series
	var r [][]float64
	for _, s := range c.Series {
		series = append(series, Series{Output: out[s.Output], T: s.T, Variance: s.Variance})
		r = append(r, s.R)
	}
	md, err := NewMultiDense(m, series, nil)
	if err != nil {
		t.Fatal(err)
	}
	ll, err := md.LogLikelihoodSeries(r)
	if err != nil {
		t.Fatal(err)
	}
	if !scalar.EqualWithinRel(ll, c.LnL, 1e-8) {
		t.Errorf("ln L = %.15g, scipy %.15g", ll, c.LnL)
	}
	if !scalar.EqualWithinRel(md.LogDet(), c.LogDet, 1e-8) {
		t.Errorf("ln det = %.15g, scipy %.15g", md.LogDet(), c.LogDet)
	}
}

// TestCrossFiniteDifference checks the derivative cross-covariances
// against finite differences of the latent kernel in t_i and t_j, to 1e-6
// relative to the block's scale (the tolerance).
func TestCrossFiniteDifference(t *testing.T) {
	g := Output{Name: "G", C: 1}
	dg := Output{Name: "dG", R: 1}
	for _, k := range []Differentiable{
		NewQuasiPeriodicRajpaul(1, 25, 0.5, 50),
		QuasiPeriodic{2, 7, 3.3, 1.2},
		Matern32{1.4, 6},
	} {
		const h = 1e-4
		kf := func(ti, tj float64) float64 { return k.Cov(ti - tj) }
		for _, pr := range [][2]float64{{13, 10}, {10, 13}, {4.2, 4.2}, {0, 31.7}} {
			ti, tj := pr[0], pr[1]
			if _, ok := k.(Matern32); ok && ti == tj {
				// Matérn-3/2 has a |τ|³ term at zero lag, so the central
				// difference of cov(dG, dG) is only O(h) accurate there.
				continue
			}
			scale := Cross(k, dg, dg, 0, 0)
			fdGd := (kf(ti, tj+h) - kf(ti, tj-h)) / (2 * h)
			fddG := (kf(ti+h, tj) - kf(ti-h, tj)) / (2 * h)
			fddd := (kf(ti+h, tj+h) - kf(ti+h, tj-h) - kf(ti-h, tj+h) + kf(ti-h, tj-h)) / (4 * h * h)
			for _, row := range []struct {
				name      string
				got, want float64
			}{
				{"cov(G, dG)", Cross(k, g, dg, ti, tj), fdGd},
				{"cov(dG, G)", Cross(k, dg, g, ti, tj), fddG},
				{"cov(dG, dG)", Cross(k, dg, dg, ti, tj), fddd},
			} {
				if math.Abs(row.got-row.want) > 1e-6*scale {
					t.Errorf("%T (%g, %g) %s = %.10g, finite difference %.10g", k, ti, tj, row.name, row.got, row.want)
				}
			}
		}
	}
	// docs/methods.md §8 [computed]: P = 25, λp = 0.5, λe = 50, t_i = 13, t_j = 10:
	// ∂γ/∂t_j = 0.131878100945, ∂²γ/∂t_i∂t_j = 0.012508125231.
	k := NewQuasiPeriodicRajpaul(1, 25, 0.5, 50)
	if v := Cross(k, g, dg, 13, 10); !scalar.EqualWithinRel(v, 0.131878100945, 1e-10) {
		t.Errorf("γ_Gd = %.12g", v)
	}
	if v := Cross(k, dg, dg, 13, 10); !scalar.EqualWithinRel(v, 0.012508125231, 1e-9) {
		t.Errorf("γ_dd = %.12g", v)
	}
}

func TestMultiStructure(t *testing.T) {
	k := NewQuasiPeriodicRajpaul(1, 20, 0.6, 40)
	// With Vr = Br = 0 every output is proportional to G
	// (docs/methods.md §8 [computed reasoning]).
	m := NewRajpaul(k, 3, 0, 0.5, -2, 0)
	rv, ix, bis := m.Outputs[OutRV], m.Outputs[OutIndex], m.Outputs[OutBIS]
	for _, tau := range []float64{0, 1.3, 7, 22} {
		base := k.Cov(tau)
		for _, row := range []struct {
			a, b Output
			want float64
		}{{rv, ix, 1.5}, {rv, bis, -6}, {ix, bis, -1}, {rv, rv, 9}} {
			if got := Cross(k, row.a, row.b, tau, 0); !scalar.EqualWithinRel(got, row.want*base, 1e-14) {
				t.Errorf("τ=%g cov(%s,%s) = %g, want %g", tau, row.a.Name, row.b.Name, got, row.want*base)
			}
		}
	}
	// Auto-block cross terms vanish at zero lag: cov(RV_i, RV_i) = Vc² + Vr² γ_dd(0).
	m = NewRajpaul(k, 3, 10, 0.5, -2, 4)
	_, _, d2 := k.CovDeriv(0)
	if got, want := Cross(k, m.Outputs[OutRV], m.Outputs[OutRV], 5, 5), 9-100*d2; !scalar.EqualWithinRel(got, want, 1e-14) {
		t.Errorf("var RV = %g, want %g", got, want)
	}
	// Random hyperparameters: symmetric and factorisable stacked matrices.
	rnd := rand.New(rand.NewPCG(1, 1))
	for trial := 0; trial < 20; trial++ {
		u := func(lo, hi float64) float64 { return lo + (hi-lo)*rnd.Float64() }
		m := NewRajpaul(NewQuasiPeriodicRajpaul(1, u(5, 40), u(0.3, 2), u(10, 100)),
			u(-5, 5), u(-20, 20), u(-1, 1), u(-5, 5), u(-20, 20))
		var series []Series
		for o := 0; o < 3; o++ {
			n := 10 + rnd.IntN(20)
			s := Series{Output: o, T: make([]float64, n), Variance: make([]float64, n)}
			for i := range s.T {
				s.T[i] = 100 * rnd.Float64()
				s.Variance[i] = 0.01
			}
			series = append(series, s)
		}
		if _, err := NewMultiDense(m, series, &DenseSettings{MaxJitter: -1}); err != nil {
			t.Fatalf("trial %d: %v", trial, err)
		}
		a, b := m.Outputs[OutRV], m.Outputs[OutBIS]
		if x, y := Cross(m.Latent, a, b, 3, 8), Cross(m.Latent, b, a, 8, 3); !scalar.EqualWithinAbsOrRel(x, y, 1e-14, 1e-13) {
			t.Errorf("trial %d: cov(RV_i,BIS_j) = %g, cov(BIS_j,RV_i) = %g", trial, x, y)
		}
	}
}

// TestMultiMatchesDense checks the multi-output prediction of G and dG/dt
// from one series with C = 1, R = 0 against the single-output solver.
func TestMultiMatchesDense(t *testing.T) {
	k := QuasiPeriodic{2, 30, 11, 0.9}
	rnd := rand.New(rand.NewPCG(1, 1))
	n := 50
	ts := make([]float64, n)
	v := make([]float64, n)
	r := make([]float64, n)
	for i := range ts {
		ts[i] = 120 * rnd.Float64()
		v[i] = 0.2
		r[i] = 2 * rnd.NormFloat64()
	}
	d, err := NewDense(k, ts, v, nil)
	if err != nil {
		t.Fatal(err)
	}
	md, err := NewMultiDense(Multi{Latent: k, Outputs: []Output{{Name: "y", C: 1}}}, []Series{{Output: 0, T: ts, Variance: v}}, nil)
	if err != nil {
		t.Fatal(err)
	}
	l1, _ := d.LogLikelihood(r)
	l2, _ := md.LogLikelihood(r)
	if !scalar.EqualWithinRel(l1, l2, 1e-13) {
		t.Errorf("ln L dense %g, multi %g", l1, l2)
	}
	tn := []float64{-5, 33.3, 60, 130}
	m1, v1, _ := d.PredictDeriv(r, tn, true)
	m2, v2, _ := md.Predict(r, Output{R: 1}, tn, true)
	for i := range tn {
		if !scalar.EqualWithinAbsOrRel(m1[i], m2[i], 1e-12, 1e-10) || !scalar.EqualWithinAbsOrRel(v1[i], v2[i], 1e-12, 1e-10) {
			t.Errorf("dG/dt at %g: dense (%g, %g), multi (%g, %g)", tn[i], m1[i], v1[i], m2[i], v2[i])
		}
	}
}

func TestMultiBadInput(t *testing.T) {
	m := NewRajpaul(NewQuasiPeriodicRajpaul(1, 20, 0.6, 40), 1, 1, 1, 1, 1)
	ok := Series{Output: OutRV, T: []float64{0, 1}}
	for _, row := range []struct {
		name    string
		m       Multi
		s       []Series
		wantErr error
	}{
		{"no series", m, nil, ErrNoData},
		{"bad output", m, []Series{{Output: 5, T: []float64{0}}}, ErrSeries},
		{"variance length", m, []Series{ok, {Output: OutBIS, T: []float64{0, 1}, Variance: []float64{1}}}, ErrLength},
		{"NaN epoch", m, []Series{{Output: OutIndex, T: []float64{math.NaN()}}}, ErrNaN},
		{"bad latent", NewRajpaul(NewQuasiPeriodicRajpaul(1, -20, 0.6, 40), 1, 1, 1, 1, 1), []Series{ok}, ErrBadParam},
		{"NaN coefficient", NewRajpaul(NewQuasiPeriodicRajpaul(1, 20, 0.6, 40), math.NaN(), 1, 1, 1, 1), []Series{ok}, ErrBadParam},
	} {
		t.Run(row.name, func(t *testing.T) {
			if _, err := NewMultiDense(row.m, row.s, nil); !errors.Is(err, row.wantErr) {
				t.Errorf("err = %v, want %v", err, row.wantErr)
			}
		})
	}
	md, err := NewMultiDense(m, []Series{ok, {Output: OutBIS, T: []float64{0.5}, Variance: []float64{1}}}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := md.LogLikelihoodSeries([][]float64{{1, 2}, {1, 2}}); !errors.Is(err, ErrLength) {
		t.Errorf("mismatched residuals: %v", err)
	}
}

// TestMultiSharedEpochs checks the shared-epoch cache of NewMultiDense
// against the direct evaluation (series observed on the same spectra,
// plus one extra epoch and a repeated one).
func TestMultiSharedEpochs(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 1))
	ts := make([]float64, 40)
	for i := range ts {
		ts[i] = 90 * rnd.Float64()
	}
	ts[7] = ts[3]
	m := NewRajpaul(NewQuasiPeriodicRajpaul(1, 21, 0.7, 35), 2, 12, 0.6, -1, 6)
	series := []Series{
		{Output: OutRV, T: ts, Variance: constSlice(len(ts), 0.3)},
		{Output: OutBIS, T: append(slices.Clone(ts), 95), Variance: constSlice(len(ts)+1, 0.5)},
		{Output: OutIndex, T: ts[:30], Variance: constSlice(30, 0.01)},
	}
	var y [][]float64
	for _, s := range series {
		v := make([]float64, len(s.T))
		for i := range v {
			v[i] = rnd.NormFloat64()
		}
		y = append(y, v)
	}
	var lls []float64
	for _, cache := range []bool{true, false} {
		multiEpochCache = cache
		ll, err := m.LogLikelihood(series, y)
		if err != nil {
			t.Fatal(err)
		}
		lls = append(lls, ll)
	}
	multiEpochCache = true
	if !scalar.EqualWithinRel(lls[0], lls[1], 1e-12) {
		t.Errorf("ln L with cache %.15g, without %.15g", lls[0], lls[1])
	}
}

func constSlice(n int, v float64) []float64 {
	s := make([]float64, n)
	for i := range s {
		s[i] = v
	}
	return s
}
