package activity

import (
	"math"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/optimize"

	"spotsift/gp"
)

// gpModel is a Gaussian-process activity model of one series:
//
//	y = X β + ε,  ε ~ N(0, k_rot + diag(σ² + s_inst²))
//
// with k_rot the two-oscillator rotation kernel (gp.RotationSHO: modes at
// P and P/2), one jitter s per instrument, and X the per-instrument offsets
// plus, when freq > 0, a sinusoid at freq (the circular Keplerian at a fixed
// period). The linear parameters β are profiled out by generalised least
// squares at every step (common practice), so the optimiser sees only the
// kernel parameters and jitters.
type gpModel struct {
	t, y, sigma []float64
	inst        []int
	ninst       int
	freq        float64
	t0          float64
	// Period bounds (days) and an optional Gaussian prior on ln P.
	pLo, pHi        float64
	lnPMu, lnPSigma float64 // lnPSigma = 0: no prior beyond the bounds
	scale           float64 // a typical amplitude of y, for the bounds
}

// gpResult is the maximum a posteriori fit of a gpModel.
type gpResult struct {
	theta   []float64 // unconstrained parameters at the MAP
	lnL     float64   // profile log-likelihood at the MAP
	lnPost  float64
	period  float64 // GP rotation period (days)
	periodE float64 // its one-sigma error from the curvature, NaN if unavailable
	beta    []float64
	covBeta *mat.SymDense
	ok      bool
}

// Parameter layout: ln σ, ln P, ln Q0, ln ΔQ, logit F, then ln s per
// instrument.
const gpKernelParams = 5

func (m *gpModel) nParams() int { return gpKernelParams + m.ninst }

// bounds returns the box of the unconstrained parameters.
func (m *gpModel) bounds() (lo, hi []float64) {
	sc := math.Max(m.scale, 1e-12)
	lo = []float64{math.Log(1e-3 * sc), math.Log(m.pLo), math.Log(0.05), math.Log(0.01), -8}
	hi = []float64{math.Log(20 * sc), math.Log(m.pHi), math.Log(30), math.Log(30), 8}
	for k := 0; k < m.ninst; k++ {
		lo = append(lo, math.Log(1e-4*sc))
		hi = append(hi, math.Log(10*sc))
	}
	return lo, hi
}

// noise builds the GP noise model of θ.
func (m *gpModel) noise(theta []float64) *gp.Noise {
	f := 1 / (1 + math.Exp(-theta[4]))
	k := gp.RotationSHO{Sigma: math.Exp(theta[0]), Period: math.Exp(theta[1]), Q0: math.Exp(theta[2]), DQ: math.Exp(theta[3]), F: f}
	jit := make([]float64, m.ninst)
	for i := range jit {
		jit[i] = math.Exp(theta[gpKernelParams+i])
	}
	return &gp.Noise{Kernel: k, Jitter: jit}
}

// design returns the columns of X.
func (m *gpModel) design() [][]float64 {
	n := len(m.t)
	var cols [][]float64
	for g := 0; g < m.ninst; g++ {
		c := make([]float64, n)
		for i := range c {
			if m.inst[i] == g {
				c[i] = 1
			}
		}
		cols = append(cols, c)
	}
	if m.freq > 0 {
		cc, sc := make([]float64, n), make([]float64, n)
		for i, ti := range m.t {
			sc[i], cc[i] = math.Sincos(2 * math.Pi * m.freq * (ti - m.t0))
		}
		cols = append(cols, cc, sc)
	}
	return cols
}

// profile returns the profile log-likelihood at θ with the GLS estimate of
// β and its covariance. ok is false when θ is outside the box or the
// covariance cannot be factorised.
func (m *gpModel) profile(theta []float64, cols [][]float64, wantCov bool) (lnL float64, beta []float64, cov *mat.SymDense, ok bool) {
	lo, hi := m.bounds()
	for i := range theta {
		if !(theta[i] >= lo[i] && theta[i] <= hi[i]) {
			return math.Inf(-1), nil, nil, false
		}
	}
	variance := make([]float64, len(m.sigma))
	for i, s := range m.sigma {
		variance[i] = s * s
	}
	sol, err := m.noise(theta).Factor(m.t, variance, m.inst)
	if err != nil || sol == nil {
		return math.Inf(-1), nil, nil, false
	}
	nc := len(cols)
	kx := make([][]float64, nc)
	for j, c := range cols {
		if kx[j], err = sol.Solve(nil, c); err != nil {
			return math.Inf(-1), nil, nil, false
		}
	}
	a := mat.NewSymDense(nc, nil)
	b := mat.NewVecDense(nc, nil)
	for j := 0; j < nc; j++ {
		b.SetVec(j, dot(kx[j], m.y))
		for l := j; l < nc; l++ {
			a.SetSym(j, l, dot(kx[j], cols[l]))
		}
	}
	var ch mat.Cholesky
	if !ch.Factorize(a) {
		return math.Inf(-1), nil, nil, false
	}
	var x mat.VecDense
	if err := ch.SolveVecTo(&x, b); err != nil {
		return math.Inf(-1), nil, nil, false
	}
	r := append([]float64(nil), m.y...)
	beta = make([]float64, nc)
	for j := range beta {
		beta[j] = x.AtVec(j)
		for i := range r {
			r[i] -= beta[j] * cols[j][i]
		}
	}
	lnL, err = sol.LogLikelihood(r)
	if err != nil || math.IsNaN(lnL) {
		return math.Inf(-1), nil, nil, false
	}
	if wantCov {
		cov = mat.NewSymDense(nc, nil)
		if err := ch.InverseTo(cov); err != nil {
			cov = nil
		}
	}
	return lnL, beta, cov, true
}

// lnPrior is the log prior of θ beyond the box: a Gaussian on ln P when
// set.
func (m *gpModel) lnPrior(theta []float64) float64 {
	if m.lnPSigma > 0 {
		z := (theta[1] - m.lnPMu) / m.lnPSigma
		return -0.5 * z * z
	}
	return 0
}

// fit returns the MAP of the model from each start (θ vectors), keeping the
// best, with the period's error from the curvature of the log posterior.
func (m *gpModel) fit(starts [][]float64) gpResult {
	cols := m.design()
	obj := func(theta []float64) float64 {
		lnL, _, _, ok := m.profile(theta, cols, false)
		if !ok {
			return 1e300
		}
		return -(lnL + m.lnPrior(theta))
	}
	best := gpResult{lnPost: math.Inf(-1)}
	for _, x0 := range starts {
		p := optimize.Problem{Func: obj}
		set := &optimize.Settings{FuncEvaluations: 250 * m.nParams(), Converger: &optimize.FunctionConverge{Absolute: 1e-3, Iterations: 40}}
		res, err := optimize.Minimize(p, x0, set, &optimize.NelderMead{})
		if res == nil || (err != nil && res.X == nil) {
			continue
		}
		if -res.F > best.lnPost {
			best = gpResult{theta: append([]float64(nil), res.X...), lnPost: -res.F, ok: -res.F > -1e299}
		}
	}
	if !best.ok {
		return best
	}
	var ok bool
	best.lnL, best.beta, best.covBeta, ok = m.profile(best.theta, cols, true)
	best.ok = ok
	best.period = math.Exp(best.theta[1])
	best.periodE = math.NaN()
	// Curvature of −ln posterior in ln P at the MAP, the other parameters
	// held at their MAP values: the Laplace approximation of the period's
	// conditional posterior (common practice; the full Hessian is often
	// unusable with parameters at their bounds).
	const h = 1e-3
	f0 := obj(best.theta)
	th := append([]float64(nil), best.theta...)
	th[1] = best.theta[1] + h
	fp := obj(th)
	th[1] = best.theta[1] - h
	fm := obj(th)
	if c := (fp - 2*f0 + fm) / (h * h); c > 0 && fp < 1e299 && fm < 1e299 {
		best.periodE = best.period / math.Sqrt(c)
	}
	return best
}

// start returns a starting θ for period p (days).
func (m *gpModel) start(p float64) []float64 {
	lo, hi := m.bounds()
	th := []float64{math.Log(m.scale), math.Log(p), math.Log(1), math.Log(2), 0}
	for k := 0; k < m.ninst; k++ {
		th = append(th, math.Log(0.3*m.scale))
	}
	for i := range th {
		th[i] = math.Max(lo[i]+1e-6, math.Min(hi[i]-1e-6, th[i]))
	}
	return th
}

func dot(a, b []float64) float64 {
	s := 0.0
	for i := range a {
		s += a[i] * b[i]
	}
	return s
}
