package gp

import (
	"fmt"
	"math"
	"sync/atomic"

	"gonum.org/v1/gonum/mat"

	"spotsift/mapfit"
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
	// Sigma holds the Laplace 1σ uncertainty of each parameter
	// (mapfit.Laplace); zero for fixed parameters, NaN for parameters the
	// data do not constrain or if NoUncertainty was set.
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

// MAP maximises lnPost over the parameters, starting from p0, through
// mapfit (gonum/optimize's BFGS in transformed coordinates, with the
// Laplace approximation at the optimum). Parameters with positive[i] set
// are fitted as ln p_i (so they stay positive); the others directly, in
// units of a tenth of their starting magnitude. Sigma and Cov are the
// Laplace errors and covariance of the natural parameters (mapfit.Laplace:
// curvature in the transformed coordinates, eigen-subspace fallback, NaN
// where unknown).
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
	var sp mapfit.Space
	for i := 0; i < n; i++ {
		if positive != nil && positive[i] && !(p0[i] > 0) {
			return nil, fmt.Errorf("%w: starting parameter %d = %g must be positive", ErrBadParam, i, p0[i])
		}
		if set.Fixed != nil && set.Fixed[i] {
			continue
		}
		free = append(free, i)
		if positive != nil && positive[i] {
			sp = append(sp, mapfit.Param{Name: fmt.Sprintf("p%d", i), Kind: mapfit.Positive})
		} else {
			sp = append(sp, mapfit.Param{Name: fmt.Sprintf("p%d", i), Kind: mapfit.Free, Scale: math.Max(0.1*math.Abs(p0[i]), 1e-3)})
		}
	}
	full := func(x []float64) []float64 {
		p := append([]float64(nil), p0...)
		for k, i := range free {
			p[i] = x[k]
		}
		return p
	}
	var evals atomic.Int64
	post := func(x []float64) float64 {
		evals.Add(1)
		p := full(x)
		v := lnPost(p)
		if set.LogPrior != nil {
			v += set.LogPrior(p)
		}
		return v
	}
	x0 := make([]float64, len(free))
	for k, i := range free {
		x0[k] = p0[i]
	}
	if v := post(x0); math.IsNaN(v) || math.IsInf(v, 0) {
		return nil, fmt.Errorf("%w: objective not finite at the starting point", ErrFit)
	}
	res := &FitResult{Free: free, Sigma: make([]float64, n)}
	if len(free) == 0 {
		res.Params = append([]float64(nil), p0...)
		res.LogPost = post(nil)
		res.Converged = true
		res.Evaluations = int(evals.Load())
		return res, nil
	}
	fit, err := mapfit.Fit(&mapfit.Problem{Space: sp, LogPost: post, Starts: [][]float64{x0}},
		&mapfit.Settings{MaxEvaluations: set.MaxEvaluations, Workers: 1, NoLaplace: set.NoUncertainty, NaturalMAP: true})
	if err != nil {
		return nil, fmt.Errorf("%w: %v", ErrFit, err)
	}
	res.Params = full(fit.X)
	res.LogPost = fit.LogPost
	res.Converged = fit.Converged
	for _, i := range free {
		res.Sigma[i] = math.NaN()
	}
	if L := fit.Laplace; L != nil && L.Cov != nil {
		res.Cov = mat.NewSymDense(len(free), nil)
		for a := range free {
			for b := 0; b <= a; b++ {
				res.Cov.SetSym(a, b, L.Cov[a][b])
			}
		}
		for k, i := range free {
			res.Sigma[i] = L.Errors[k]
		}
	}
	res.Evaluations = int(evals.Load())
	return res, nil
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
