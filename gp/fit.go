package gp

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// FitSettings controls MAP fits of hyperparameters. A nil *FitSettings
// means the defaults below.
type FitSettings struct {
	// Fixed marks parameters held at their starting value (nil: none).
	Fixed []bool
	// LogPrior, if non-nil, is added to the log-likelihood (natural
	// parameters); return −Inf outside the support. Nil means a flat
	// prior in the fitted coordinates.
	LogPrior func(p []float64) float64
	// MaxEvaluations bounds the number of objective evaluations. Zero
	// means 4000.
	MaxEvaluations int
	// NoUncertainty skips the Laplace curvature step.
	NoUncertainty bool
}

// FitResult is the outcome of a MAP fit.
type FitResult struct {
	// Params is the MAP parameter vector (natural parameters).
	Params []float64
	// Sigma holds the Laplace 1σ uncertainty of each parameter, the square
	// root of the diagonal of the inverse Hessian of −ln posterior in the
	// natural parameters; zero for fixed parameters, NaN for parameters
	// the data do not constrain (see laplaceCov) or if NoUncertainty was
	// set.
	Sigma []float64
	// Cov is the Laplace covariance of the free parameters (in the order
	// of Free); nil when unavailable. Unconstrained parameters have NaN
	// on the diagonal.
	Cov *mat.SymDense
	// Free lists the indices of the fitted parameters.
	Free []int
	// LogPost is the maximised log-posterior (log-likelihood plus prior).
	LogPost float64
	// Converged reports whether the optimiser met its gradient or
	// function-change tolerance (rather than the evaluation limit).
	Converged bool
	// Evaluations counts objective evaluations.
	Evaluations int
}

// MAP maximises lnPost over the parameters, starting from p0. Parameters
// with positive[i] set are fitted as ln p_i (so they stay positive); the
// others directly. The optimiser is BFGS with central finite-difference
// gradients and a backtracking line search (see bfgs). The uncertainty is the Laplace approximation: the inverse of
// the finite-difference Hessian of −ln post at the maximum, in the
// natural parameters.
//
// References: Nocedal & Wright 2006, Numerical Optimization, ch. 6 (BFGS);
// the Laplace approximation as in docs/methods.md §9 [common practice].
func MAP(lnPost func(p []float64) float64, p0 []float64, positive []bool, s *FitSettings) (*FitResult, error) {
	n := len(p0)
	if positive != nil && len(positive) != n {
		return nil, fmt.Errorf("%w: %d positivity flags for %d parameters", ErrLength, len(positive), n)
	}
	var set FitSettings
	if s != nil {
		set = *s
	}
	if set.Fixed != nil && len(set.Fixed) != n {
		return nil, fmt.Errorf("%w: %d fixed flags for %d parameters", ErrLength, len(set.Fixed), n)
	}
	if set.MaxEvaluations == 0 {
		set.MaxEvaluations = 4000
	}
	var free []int
	for i := 0; i < n; i++ {
		if set.Fixed == nil || !set.Fixed[i] {
			free = append(free, i)
		}
		if positive != nil && positive[i] && !(p0[i] > 0) {
			return nil, fmt.Errorf("%w: starting parameter %d = %g must be positive", ErrBadParam, i, p0[i])
		}
	}
	isPos := func(i int) bool { return positive != nil && positive[i] }
	full := func(x []float64) []float64 {
		p := append([]float64(nil), p0...)
		for k, i := range free {
			if isPos(i) {
				p[i] = math.Exp(x[k])
			} else {
				p[i] = x[k]
			}
		}
		return p
	}
	evals := 0
	post := func(p []float64) float64 {
		evals++
		v := lnPost(p)
		if set.LogPrior != nil {
			v += set.LogPrior(p)
		}
		return v
	}
	obj := func(x []float64) float64 {
		v := post(full(x))
		if math.IsNaN(v) || math.IsInf(v, 1) {
			return math.Inf(1)
		}
		return -v
	}
	x0 := make([]float64, len(free))
	for k, i := range free {
		if isPos(i) {
			x0[k] = math.Log(p0[i])
		} else {
			x0[k] = p0[i]
		}
	}
	if math.IsInf(obj(x0), 1) {
		return nil, fmt.Errorf("%w: objective not finite at the starting point", ErrFit)
	}
	res := &FitResult{Free: free}
	x := x0
	if len(free) > 0 {
		var conv bool
		x, conv = bfgs(obj, x0, set.MaxEvaluations)
		res.Converged = conv
	}
	res.Params = full(x)
	res.LogPost = post(res.Params)
	res.Sigma = make([]float64, n)
	if set.NoUncertainty || len(free) == 0 {
		for _, i := range free {
			res.Sigma[i] = math.NaN()
		}
		res.Evaluations = evals
		return res, nil
	}
	// Laplace: Hessian of −ln post in the natural free parameters.
	nat := func(y []float64) float64 {
		p := append([]float64(nil), res.Params...)
		for k, i := range free {
			p[i] = y[k]
		}
		v := post(p)
		if math.IsNaN(v) {
			return math.Inf(1)
		}
		return -v
	}
	y0 := make([]float64, len(free))
	steps := make([]float64, len(free))
	for k, i := range free {
		y0[k] = res.Params[i]
		steps[k] = 1e-4 * math.Max(math.Abs(y0[k]), 1e-3)
	}
	h := hessian(nat, y0, steps)
	res.Cov = laplaceCov(h)
	for k, i := range free {
		res.Sigma[i] = math.NaN()
		if res.Cov != nil {
			if v := res.Cov.At(k, k); v >= 0 {
				res.Sigma[i] = math.Sqrt(v)
			}
		}
	}
	res.Evaluations = evals
	return res, nil
}

// laplaceCov returns the inverse of the Hessian h of −ln post. When h is
// not positive definite (a parameter the data do not constrain, or a
// saddle), the inverse is taken on the subspace of positive curvature and
// every parameter with weight in the other directions gets a NaN
// variance, so it is reported as unconstrained rather than falsely
// precise. It returns nil if no direction has positive curvature.
func laplaceCov(h *mat.SymDense) *mat.SymDense {
	var chol mat.Cholesky
	if chol.Factorize(h) {
		var cov mat.SymDense
		if err := chol.InverseTo(&cov); err == nil {
			return &cov
		}
	}
	var eig mat.EigenSym
	if !eig.Factorize(h, true) {
		return nil
	}
	vals := eig.Values(nil)
	var vecs mat.Dense
	eig.VectorsTo(&vecs)
	n := len(vals)
	maxv := 0.0
	for _, v := range vals {
		maxv = math.Max(maxv, v)
	}
	if !(maxv > 0) {
		return nil
	}
	cov := mat.NewSymDense(n, nil)
	bad := make([]bool, n)
	for k, lam := range vals {
		if lam > 1e-10*maxv {
			for i := 0; i < n; i++ {
				for j := 0; j <= i; j++ {
					cov.SetSym(i, j, cov.At(i, j)+vecs.At(i, k)*vecs.At(j, k)/lam)
				}
			}
			continue
		}
		for i := 0; i < n; i++ {
			if w := vecs.At(i, k); w*w > 1e-6 {
				bad[i] = true
			}
		}
	}
	for i, b := range bad {
		if b {
			cov.SetSym(i, i, math.NaN())
		}
	}
	return cov
}

// hessian returns the central finite-difference Hessian of f at x with
// per-coordinate steps h.
func hessian(f func([]float64) float64, x, h []float64) *mat.SymDense {
	n := len(x)
	hs := mat.NewSymDense(n, nil)
	y := append([]float64(nil), x...)
	f0 := f(x)
	eval := func(i int, di float64, j int, dj float64) float64 {
		copy(y, x)
		y[i] += di
		y[j] += dj
		return f(y)
	}
	for i := 0; i < n; i++ {
		fp := eval(i, h[i], i, 0)
		fm := eval(i, -h[i], i, 0)
		hs.SetSym(i, i, (fp-2*f0+fm)/(h[i]*h[i]))
		for j := 0; j < i; j++ {
			v := (eval(i, h[i], j, h[j]) - eval(i, h[i], j, -h[j]) - eval(i, -h[i], j, h[j]) + eval(i, -h[i], j, -h[j])) / (4 * h[i] * h[j])
			hs.SetSym(i, j, v)
		}
	}
	return hs
}

// FitMulti fits the hyperparameters of a multi-output model to observed
// series values y (one slice per series, the means already subtracted)
// by MAP with a Laplace uncertainty. The latent kernel's parameters are
// fitted in log space (they are positive); the output coefficients are
// unconstrained. The parameter vector is Multi.Params; use s.Fixed to hold
// e.g. the latent amplitude at 1 (it is degenerate with the coefficients).
func FitMulti(m Multi, series []Series, y [][]float64, s *FitSettings) (Multi, *FitResult, error) {
	if err := m.Validate(); err != nil {
		return Multi{}, nil, err
	}
	if _, err := NewMultiDense(m, series, nil); err != nil {
		return Multi{}, nil, err
	}
	var all []float64
	for _, s := range series {
		all = append(all, s.T...)
	}
	if err := checkKernelPeriods(m.Latent, all); err != nil {
		return Multi{}, nil, err
	}
	p0 := m.Params(nil)
	pos := make([]bool, len(p0))
	for i := 0; i < m.Latent.NumParams(); i++ {
		pos[i] = true
	}
	lnL := func(p []float64) float64 {
		mm, err := m.WithParams(p)
		if err != nil {
			return math.Inf(-1)
		}
		md, err := NewMultiDense(mm, series, nil)
		if err != nil {
			return math.Inf(-1)
		}
		ll, err := md.LogLikelihoodSeries(y)
		if err != nil {
			return math.Inf(-1)
		}
		return ll
	}
	res, err := MAP(lnL, p0, pos, s)
	if res == nil {
		return Multi{}, nil, err
	}
	best, werr := m.WithParams(res.Params)
	if werr != nil {
		return Multi{}, res, werr
	}
	return best, res, err
}

// FitNoise fits the parameters of a Noise model (kernel, then jitters) to
// residuals r by MAP with a Laplace uncertainty. Every parameter of the
// package's kernels and every jitter is positive or non-negative, so all
// free parameters are fitted as logarithms; a parameter starting at zero
// must be held fixed (s.Fixed).
func FitNoise(m *Noise, t, r, variance []float64, inst []int, s *FitSettings) (*Noise, *FitResult, error) {
	if _, err := m.Factor(t, variance, inst); err != nil {
		return nil, nil, err
	}
	p0 := m.Params(nil)
	pos := make([]bool, len(p0))
	for i := range pos {
		pos[i] = s == nil || s.Fixed == nil || !s.Fixed[i]
	}
	lnL := func(p []float64) float64 {
		mm, err := m.WithParams(p)
		if err != nil {
			return math.Inf(-1)
		}
		ll, err := mm.LogLikelihood(t, r, variance, inst)
		if err != nil {
			return math.Inf(-1)
		}
		return ll
	}
	res, err := MAP(lnL, p0, pos, s)
	if res == nil {
		return nil, nil, err
	}
	best, werr := m.WithParams(res.Params)
	if werr != nil {
		return nil, res, werr
	}
	return best, res, err
}
