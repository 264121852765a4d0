package gp

import (
	"errors"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
)

func TestMultiNoise(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 1))
	model := NewRajpaul(NewQuasiPeriodicRajpaul(1, 22, 0.6, 45), 2, 10, 0.7, -1, 5)
	// Two RV instruments and one index series.
	mk := func(o, n int, v float64) Series {
		s := Series{Output: o, T: make([]float64, n), Variance: constSlice(n, v)}
		for i := range s.T {
			s.T[i] = 120 * rnd.Float64()
		}
		return s
	}
	series := []Series{mk(OutRV, 50, 0.25), mk(OutRV, 30, 0.25), mk(OutIndex, 40, 0.01)}
	truth := &MultiNoise{Model: model, Jitter: []float64{0.5, 2, 0.05}}
	md, err := truth.Factor(series)
	if err != nil {
		t.Fatal(err)
	}
	y, _ := md.DrawSeries(rnd)
	// The jitters enter as variances: same ln L as a Multi with them added.
	plain := make([]Series, len(series))
	for i, s := range series {
		v := make([]float64, len(s.T))
		for k := range v {
			v[k] = s.Variance[k] + truth.Jitter[i]*truth.Jitter[i]
		}
		plain[i] = Series{Output: s.Output, T: s.T, Variance: v}
	}
	l1, _ := truth.LogLikelihood(series, y)
	l2, _ := model.LogLikelihood(plain, y)
	if !scalar.EqualWithinRel(l1, l2, 1e-13) {
		t.Errorf("ln L %g vs %g", l1, l2)
	}
	fixed := make([]bool, truth.NumParams())
	fixed[0], fixed[4+2*OutIndex+1] = true, true
	// No BIS series: its coefficients are unconstrained. Leave Br free to
	// check it is reported as such (NaN), fix Bc.
	fixed[4+2*OutBIS] = true
	start, _ := truth.WithParams(perturb(truth.Params(nil), fixed, 0.05, rnd))
	best, res, err := FitMultiNoise(start, series, y, &FitSettings{Fixed: fixed})
	if err != nil {
		t.Fatal(err)
	}
	if res.LogPost < l1 {
		t.Errorf("MAP ln L %g below the truth's %g", res.LogPost, l1)
	}
	// The second instrument's large jitter (2 m/s, against 0.5 m/s errors)
	// is recovered within 3σ (one deterministic draw).
	t.Logf("params %.4g sigma %.3g", res.Params, res.Sigma)
	if sb := res.Sigma[4+2*OutBIS+1]; !math.IsNaN(sb) {
		t.Errorf("σ(Br) = %g with no BIS data, want NaN", sb)
	}
	j := best.Jitter[1]
	if sj := res.Sigma[len(res.Sigma)-2]; !(sj > 0) || math.Abs(j-2) > 3*sj {
		t.Errorf("jitter %g ± %g, truth 2", j, sj)
	}
	if _, err := (&MultiNoise{Model: model, Jitter: []float64{1}}).Factor(series); !errors.Is(err, ErrLength) {
		t.Errorf("jitter count: %v", err)
	}
	if _, err := (&MultiNoise{Model: model, Jitter: []float64{1, -1, 1}}).Factor(series); !errors.Is(err, ErrBadParam) {
		t.Errorf("negative jitter: %v", err)
	}
}
