package gp

import (
	"math"
	"math/rand/v2"
	"os"
	"sync"
	"testing"

	"spotsift/mapfit"
)

// TestMAPGaussian checks MAP and the Laplace interval on a problem with a
// closed form: a Gaussian log-posterior with known mean and covariance
// (the Laplace approximation is exact there in the natural coordinates,
// docs/methods.md §9).
func TestMAPGaussian(t *testing.T) {
	mu := []float64{3, -1, 0.5}
	sd := []float64{0.2, 1.5, 0.05}
	lnp := func(p []float64) float64 {
		var s float64
		for i := range p {
			z := (p[i] - mu[i]) / sd[i]
			s -= 0.5 * z * z
		}
		// A correlation between the first two parameters.
		z0, z1 := (p[0]-mu[0])/sd[0], (p[1]-mu[1])/sd[1]
		return s - 0.3*z0*z1
	}
	res, err := MAP(lnp, []float64{2, 0, 0.6}, []bool{true, false, true}, nil)
	if err != nil {
		t.Fatal(err)
	}
	// Precision matrix of (z0, z1) is [[1, 0.3], [0.3, 1]]: the marginal
	// sd of z0 and z1 is 1/sqrt(1 − 0.09) [analytic].
	wantSD := []float64{sd[0] / math.Sqrt(0.91), sd[1] / math.Sqrt(0.91), sd[2]}
	for i := range mu {
		if math.Abs(res.Params[i]-mu[i]) > 1e-4*sd[i]*10 {
			t.Errorf("p[%d] = %.8g, want %g", i, res.Params[i], mu[i])
		}
		// The Laplace approximation is taken in the fitted coordinates (ln p
		// for the positive parameters 0 and 2): exact for parameter 1, and
		// within ~(σ/μ)² (1% here) for the others (a Gaussian in p is not
		// one in ln p).
		tol := 1e-3
		if i != 1 {
			tol = 1e-2
		}
		if math.Abs(res.Sigma[i]-wantSD[i]) > tol*wantSD[i] {
			t.Errorf("σ[%d] = %.8g, want %.8g", i, res.Sigma[i], wantSD[i])
		}
	}
	if !res.Converged {
		t.Errorf("not converged")
	}
}

// TestFitNoiseRecoversQP fits a QP + jitter model to one prior draw and
// checks the period is recovered within 3σ (a single, deterministic draw).
func TestFitNoiseRecoversQP(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 1))
	n := 120
	ts := make([]float64, n)
	v := make([]float64, n)
	for i := range ts {
		ts[i] = 200 * rnd.Float64()
		v[i] = 0.25
	}
	truth := &Noise{Kernel: QuasiPeriodic{3, 60, 17, 0.7}, Jitter: []float64{0.5}}
	s, err := truth.Factor(ts, v, nil)
	if err != nil {
		t.Fatal(err)
	}
	y, _ := s.Draw(nil, rnd)
	start := &Noise{Kernel: QuasiPeriodic{2.5, 50, 17.8, 0.8}, Jitter: []float64{0.7}}
	best, res, err := FitNoise(start, ts, y, v, nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	p := best.Kernel.(QuasiPeriodic).Eta3
	if sp := res.Sigma[2]; !(sp > 0) || math.Abs(p-17) > 3*sp {
		t.Errorf("period %.4g ± %.3g, truth 17", p, sp)
	}
	ll0, _ := start.LogLikelihood(ts, y, v, nil)
	if res.LogPost < ll0 {
		t.Errorf("fit lowered ln L: %g < %g", res.LogPost, ll0)
	}
}

// TestInjectionRecoveryMulti draws three series (RV, index, BIS,
// 120/90/100 random epochs over 150 d) from the Rajpaul et al. (2015) model with a
// rotation latent process (MultiRotation, P = 25 d) and known
// coefficients, fits each by MAP through mapfit with the analytic
// gradient, and checks that the Laplace 68% interval of the period covers
// the truth in 60–76% of draws (a correct 1σ interval covers ≈ 68%; the
// band allows for the binomial scatter of 100 draws, ±4.7%, and for
// the Laplace approximation). 100 draws with SPOTSIFT_LONG=1, where the
// band is checked; 20 otherwise (8 with -short), where only a coverage
// above 40% is asked (the binomial scatter of 20 draws is ±10%).
// Measured while writing it: 69 of 100 draws (seeds 1–100), 74 of 100 on
// seeds 1001–1100; with sparser series (60/45/50 epochs) 57 of 100 — the
// Laplace interval of a period the data barely constrain is too narrow.
func TestInjectionRecoveryMulti(t *testing.T) {
	draws, long := 20, os.Getenv("SPOTSIFT_LONG") == "1"
	if long {
		draws = 100
	}
	if testing.Short() {
		draws = 8
	}
	const pTrue = 25.0
	// Period, quality, gap, mix; (C, R) of RV, index, BIS; no jitters.
	truth := []float64{pTrue, 0.8, 15, 0.5, 5, 15, 0.8, 0, -2, 8}
	type outcome struct {
		p, sp  float64
		inside bool
		err    error
	}
	out := make([]outcome, draws)
	var wg sync.WaitGroup
	next := make(chan int)
	for range 2 {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for d := range next {
				out[d] = recoverMulti(d, truth)
				out[d].inside = math.Abs(out[d].p-pTrue) <= out[d].sp
			}
		}()
	}
	for d := range draws {
		next <- d
	}
	close(next)
	wg.Wait()
	inside := 0
	for d, o := range out {
		if o.err != nil {
			t.Errorf("draw %d: %v", d, o.err)
			continue
		}
		if os.Getenv("GPDEBUG") != "" {
			t.Logf("draw %d: P = %.3f ± %.3f", d, o.p, o.sp)
		}
		if o.inside {
			inside++
		}
	}
	frac := float64(inside) / float64(draws)
	t.Logf("rotation period within its 68%% interval in %d of %d draws (%.0f%%)", inside, draws, 100*frac)
	if long && (frac < 0.6 || frac > 0.76) {
		t.Errorf("coverage %.2f outside [0.60, 0.76]", frac)
	}
	if !long && frac < 0.4 {
		t.Errorf("coverage %.2f < 0.40", frac)
	}
}

// recoverMulti draws one data set from truth and fits it; it returns the
// fitted period and its Laplace error.
func recoverMulti(d int, truth []float64) (o struct {
	p, sp  float64
	inside bool
	err    error
}) {
	rnd := rand.New(rand.NewPCG(uint64(d)+1, 7))
	var series []Series
	for out, n := range []int{120, 90, 100} {
		s := Series{Output: out, T: make([]float64, n), Variance: make([]float64, n)}
		for i := range s.T {
			s.T[i] = 150 * rnd.Float64()
			s.Variance[i] = 0.5 * 0.5
		}
		series = append(series, s)
	}
	mr, err := NewMultiRotation([]string{"rv", "index", "bis"}, series)
	if err != nil {
		o.err = err
		return o
	}
	full := append(append([]float64(nil), truth...), 0, 0, 0)
	dm, _, _ := mr.Dense(full)
	md, err := NewMultiDense(dm, series, nil)
	if err != nil {
		o.err = err
		return o
	}
	y, _ := md.DrawSeries(rnd)
	// Free: everything but the index's R (0) and the jitters (0). The
	// sign of the latent process is fixed by C_rv > 0.
	sp := mapfit.Space{
		{Name: "P", Kind: mapfit.LogBounded, Lo: 5, Hi: 75},
		{Name: "Q", Kind: mapfit.LogBounded, Lo: 0.05, Hi: 30},
		{Name: "G", Kind: mapfit.LogBounded, Lo: 0.01, Hi: 30},
		{Name: "mix", Kind: mapfit.Bounded, Lo: 0, Hi: 1},
		{Name: "Crv", Kind: mapfit.Bounded, Lo: 0, Hi: 50},
		{Name: "Rrv", Kind: mapfit.Free, Scale: 5},
		{Name: "Cind", Kind: mapfit.Free},
		{Name: "Cbis", Kind: mapfit.Free},
		{Name: "Rbis", Kind: mapfit.Free, Scale: 5},
	}
	toP := func(x []float64) []float64 {
		return []float64{x[0], x[1], x[2], x[3], x[4], x[5], x[6], 0, x[7], x[8], 0, 0, 0}
	}
	inBox := func(x []float64) bool {
		for i, q := range sp {
			if (q.Kind == mapfit.Bounded || q.Kind == mapfit.LogBounded) && !(x[i] >= q.Lo && x[i] <= q.Hi) {
				return false
			}
		}
		return true
	}
	// Log-uniform priors on P, Q, G; flat elsewhere.
	post := func(x []float64) float64 {
		if !inBox(x) {
			return math.Inf(-1)
		}
		ll, err := mr.LogLikelihood(toP(x), y)
		if err != nil {
			return math.Inf(-1)
		}
		return ll - math.Log(x[0]*x[1]*x[2])
	}
	grad := func(g, x []float64) float64 {
		if !inBox(x) {
			return math.Inf(-1)
		}
		gp := make([]float64, 13)
		ll, err := mr.LogLikelihoodGrad(gp, toP(x), y)
		if err != nil {
			return math.Inf(-1)
		}
		copy(g, gp[:7])
		g[7], g[8] = gp[8], gp[9]
		for i := 0; i < 3; i++ {
			g[i] -= 1 / x[i]
		}
		return ll - math.Log(x[0]*x[1]*x[2])
	}
	start := []float64{truth[0], truth[1], truth[2], truth[3], truth[4], truth[5], truth[6], truth[8], truth[9]}
	for i := range start {
		start[i] *= 1 + 0.05*rnd.NormFloat64()
	}
	// Three starts: near the truth and at ±25% in period.
	s2 := append([]float64(nil), start...)
	s3 := append([]float64(nil), start...)
	s2[0], s3[0] = 0.8*start[0], 1.25*start[0]
	res, err := mapfit.Fit(&mapfit.Problem{Space: sp, LogPost: post, Grad: grad, Starts: [][]float64{start, s2, s3}}, &mapfit.Settings{Workers: 1})
	if err != nil {
		o.err = err
		return o
	}
	o.p, o.sp = res.X[0], res.Laplace.Errors[0]
	return o
}

// perturb multiplies the free parameters by 1 + f·N(0,1).
func perturb(p []float64, fixed []bool, f float64, rnd *rand.Rand) []float64 {
	q := append([]float64(nil), p...)
	for i := range q {
		if !fixed[i] {
			q[i] *= 1 + f*rnd.NormFloat64()
		}
	}
	return q
}
