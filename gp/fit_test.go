package gp

import (
	"math"
	"math/rand/v2"
	"os"
	"sync"
	"testing"
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

// TestInjectionRecoveryMulti draws three series (RV, index, BIS) from the
// Rajpaul et al. (2015) model with known hyperparameters, fits each by MAP
// and checks that the rotation period lies within its Laplace 1σ interval
// in at least 60% of draws (the criterion; a correct 1σ interval
// covers ≈ 68%). Measured while writing it, with 60/45/50 epochs over
// 150 d: 71 of 100 draws (71%) with SPOTSIFT_LONG=1, 27 of the first 30
// (90%) in the default run; with sparser data (40/30/35 epochs) coverage fell to 52% (21 of
// 40), below the criterion — Laplace intervals on the period are not to
// be trusted for sparse series. 100 draws with SPOTSIFT_LONG=1, 30 otherwise (10 with -short); the
// draws run on two goroutines, each with its own seeded source.
func TestInjectionRecoveryMulti(t *testing.T) {
	draws := 30
	if os.Getenv("SPOTSIFT_LONG") == "1" {
		draws = 100
	}
	if testing.Short() {
		draws = 10
	}
	const pTrue = 25.0
	truth := NewRajpaul(NewQuasiPeriodicRajpaul(1, pTrue, 0.5, 50), 2, 15, 0.8, -1.5, 8)
	fixed := make([]bool, truth.NumParams())
	fixed[0] = true              // latent amplitude: degenerate with the coefficients
	fixed[4+2*OutIndex+1] = true // the index has no dG/dt term (Rajpaul et al. 2015)
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
				rnd := rand.New(rand.NewPCG(uint64(d)+1, 7))
				var series []Series
				for o, n := range []int{60, 45, 50} {
					s := Series{Output: o, T: make([]float64, n), Variance: make([]float64, n)}
					for i := range s.T {
						s.T[i] = 150 * rnd.Float64()
						s.Variance[i] = 0.5 * 0.5
					}
					series = append(series, s)
				}
				md, err := NewMultiDense(truth, series, nil)
				if err != nil {
					out[d].err = err
					continue
				}
				y, _ := md.DrawSeries(rnd)
				start, _ := truth.WithParams(perturb(truth.Params(nil), fixed, 0.05, rnd))
				best, res, err := FitMulti(start, series, y, &FitSettings{Fixed: fixed})
				if err != nil {
					out[d].err = err
					continue
				}
				p, _, _ := best.Latent.(QuasiPeriodic).Rajpaul()
				// Eta3 is the period, index 2 of the parameter vector.
				sp := res.Sigma[2]
				out[d] = outcome{p: p, sp: sp, inside: math.Abs(p-pTrue) <= sp}
				if os.Getenv("GPDEBUG") != "" {
					t.Logf("draw %d: P = %.3f ± %.3f z=%.2f conv=%v evals=%d params=%.3g", d, p, sp, (p-pTrue)/sp, res.Converged, res.Evaluations, res.Params)
				}
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
		if o.inside {
			inside++
		}
	}
	frac := float64(inside) / float64(draws)
	t.Logf("rotation period within 1σ in %d of %d draws (%.0f%%)", inside, draws, 100*frac)
	if frac < 0.6 {
		t.Errorf("coverage %.2f < 0.60", frac)
	}
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
