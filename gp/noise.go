package gp

import (
	"errors"
	"fmt"
	"math"
	"slices"
)

// SolverKind chooses the solver of a Noise model.
type SolverKind int

const (
	// AutoSolver (the zero value) uses the semiseparable solver when the
	// kernel is Celerite, the times are sorted and there are more than
	// AutoSemisepMin points; otherwise, or when the semiseparable
	// factorisation finds the covariance not positive definite, the dense
	// solver (with its stepped jitter).
	AutoSolver SolverKind = iota
	// DenseSolver always uses the dense Cholesky solver.
	DenseSolver
	// SemisepSolver always uses the semiseparable solver (the kernel must
	// be Celerite and the times sorted).
	SemisepSolver
)

// AutoSemisepMin is the size above which AutoSolver prefers the
// semiseparable solver for celerite kernels (below it the dense solver is
// as fast and gives gradients).
const AutoSemisepMin = 64

// Noise is a Gaussian-process noise model for fitting: a kernel plus white
// jitter per instrument, added to the per-point measurement variances.
// For residuals r (data minus mean model, e.g. minus Keplerians and
// offsets) at times t with variances σ² and instrument labels inst,
//
//	K_ij = k(t_i − t_j) + δ_ij (σ_i² + s_inst(i)² + nugget)
//	ln L = −½ rᵀK⁻¹r − ½ ln det K − (N/2) ln 2π
//
// The parameter vector is the kernel's followed by Jitter. Methods take
// plain slices so that any fitting package can use Noise; they do not keep
// the caller's slices.
type Noise struct {
	// Kernel is the correlated part; required.
	Kernel Kernel
	// Jitter holds one white-noise standard deviation per instrument
	// (unit of the data, ≥ 0), indexed by the instrument labels. Nil
	// means no jitter; every label must then be 0.
	Jitter []float64
	// Solver selects the solver; the zero value is AutoSolver.
	Solver SolverKind
	// Dense configures the dense solver; nil means defaults.
	Dense *DenseSettings
}

// NumParams returns the kernel's parameter count plus len(Jitter).
func (m *Noise) NumParams() int { return m.Kernel.NumParams() + len(m.Jitter) }

// Params appends the kernel parameters and then the jitters.
func (m *Noise) Params(dst []float64) []float64 {
	dst = m.Kernel.Params(dst)
	return append(dst, m.Jitter...)
}

// WithParams returns a copy of m with parameter vector p.
func (m *Noise) WithParams(p []float64) (*Noise, error) {
	if len(p) != m.NumParams() {
		return nil, fmt.Errorf("%w: Noise needs %d, got %d", ErrParamCount, m.NumParams(), len(p))
	}
	nk := m.Kernel.NumParams()
	k, err := m.Kernel.WithParams(p[:nk])
	if err != nil {
		return nil, err
	}
	out := &Noise{Kernel: k, Jitter: append([]float64(nil), p[nk:]...), Solver: m.Solver, Dense: m.Dense}
	return out, out.Validate()
}

// Validate checks the kernel's hyperparameters and that every jitter is
// non-negative and finite.
func (m *Noise) Validate() error {
	if m.Kernel == nil {
		return fmt.Errorf("%w: Noise has no kernel", ErrBadParam)
	}
	if err := validate(m.Kernel); err != nil {
		return err
	}
	for i, s := range m.Jitter {
		if err := nonNegative("Noise", fmt.Sprintf("Jitter[%d]", i), s); err != nil {
			return err
		}
	}
	return nil
}

// diagonal returns σ_i² + s_inst(i)².
func (m *Noise) diagonal(t, variance []float64, inst []int) ([]float64, error) {
	n := len(t)
	if variance != nil && len(variance) != n {
		return nil, fmt.Errorf("%w: t has %d values, variance %d", ErrLength, n, len(variance))
	}
	if inst != nil && len(inst) != n {
		return nil, fmt.Errorf("%w: t has %d values, inst %d", ErrLength, n, len(inst))
	}
	diag := make([]float64, n)
	for i := range diag {
		if variance != nil {
			diag[i] = variance[i]
		}
		if inst == nil {
			if len(m.Jitter) > 0 {
				diag[i] += m.Jitter[0] * m.Jitter[0]
			}
			continue
		}
		k := inst[i]
		if len(m.Jitter) == 0 && k == 0 {
			continue
		}
		if k < 0 || k >= len(m.Jitter) {
			return nil, fmt.Errorf("%w: inst[%d] = %d with %d jitter terms", ErrInstrument, i, k, len(m.Jitter))
		}
		diag[i] += m.Jitter[k] * m.Jitter[k]
	}
	for i, v := range variance {
		if v < 0 || isBad(v) {
			return nil, &IndexError{Slice: "variance", Index: i, Value: v, Err: ErrNegativeVariance}
		}
	}
	return diag, nil
}

// Factor builds and factorises the covariance at times t with variances σ²
// (nil means zero) and instrument labels inst (nil means instrument 0 for
// every point). A kernel period shorter than the cadence allows (see
// CheckPeriod) gives an error wrapping ErrPeriodTooShort.
func (m *Noise) Factor(t, variance []float64, inst []int) (Solver, error) {
	if err := m.Validate(); err != nil {
		return nil, err
	}
	if err := checkKernelPeriods(m.Kernel, t); err != nil {
		return nil, err
	}
	diag, err := m.diagonal(t, variance, inst)
	if err != nil {
		return nil, err
	}
	useSemi := false
	switch m.Solver {
	case SemisepSolver:
		useSemi = true
	case AutoSolver:
		useSemi = len(t) > AutoSemisepMin && IsCelerite(m.Kernel) && slices.IsSorted(t)
	}
	if useSemi {
		s, err := NewSemisep(m.Kernel, t, diag)
		if s == nil {
			return nil, err
		}
		// The semiseparable solver cannot add jitter; under AutoSolver a
		// numerically singular covariance goes to the dense solver, which
		// can (and reports it in its Status).
		if err == nil || m.Solver == SemisepSolver || !errors.Is(err, ErrNotPositiveDefinite) {
			return s, err
		}
	}
	d, err := NewDense(m.Kernel, t, diag, m.Dense)
	if d == nil {
		return nil, err
	}
	return d, err
}

// LogLikelihood returns ln L of residuals r at times t (see Noise).
func (m *Noise) LogLikelihood(t, r, variance []float64, inst []int) (float64, error) {
	s, err := m.Factor(t, variance, inst)
	if err != nil {
		return math.Inf(-1), err
	}
	return s.LogLikelihood(r)
}

// Predict returns the predictive mean and (if wantVar) variance of the
// noise-free GP at times tnew given residuals r (the activity signal to
// subtract or plot).
func (m *Noise) Predict(t, r, variance []float64, inst []int, tnew []float64, wantVar bool) (mean, pvar []float64, err error) {
	s, err := m.Factor(t, variance, inst)
	if err != nil {
		return nil, nil, err
	}
	return s.Predict(r, tnew, wantVar)
}

// LogLikelihoodGrad returns ln L and stores in dst (len NumParams) its
// gradient with respect to the parameter vector (kernel parameters, then
// jitters), using the dense solver whatever m.Solver says:
//
//	∂ln L/∂θ = ½ αᵀ (∂K/∂θ) α − ½ tr(K⁻¹ ∂K/∂θ),   α = K⁻¹r
//
// Kernels implementing ParamGradienter (for a Sum, every member) give
// ∂K/∂θ analytically; for others each ∂k(τ)/∂θ_p is a central difference
// of Cov in θ_p with relative step 1e-6 (one-sided at a boundary such as
// RotationSHO.Mix = 0), accurate to ≈ 1e-9 relative; if no step is valid the
// error wraps ErrNoGradient. Cost O(N³) (the explicit inverse).
//
// Reference: Rasmussen & Williams 2006, eq. 5.9 (from memory).
func (m *Noise) LogLikelihoodGrad(dst, t, r, variance []float64, inst []int) (float64, error) {
	if err := m.Validate(); err != nil {
		return math.Inf(-1), err
	}
	if len(dst) != m.NumParams() {
		return math.Inf(-1), fmt.Errorf("%w: gradient slice has %d, Noise %d", ErrParamCount, len(dst), m.NumParams())
	}
	covGrad, nugGrad, err := kernelGrad(m.Kernel)
	if err != nil {
		return math.Inf(-1), err
	}
	if err := m.Validate(); err != nil {
		return math.Inf(-1), err
	}
	if err := checkKernelPeriods(m.Kernel, t); err != nil {
		return math.Inf(-1), err
	}
	diag, err := m.diagonal(t, variance, inst)
	if err != nil {
		return math.Inf(-1), err
	}
	d, err := NewDense(m.Kernel, t, diag, m.Dense)
	if err != nil {
		return math.Inf(-1), err
	}
	ll, err := d.LogLikelihood(r)
	if err != nil {
		return ll, err
	}
	alpha, _ := d.Solve(nil, r)
	n := len(t)
	// W = K⁻¹ − ααᵀ, lower triangle, row-major.
	w := make([]float64, n*n)
	col := make([]float64, n)
	for j := 0; j < n; j++ {
		clear(col)
		col[j] = 1
		d.chol.solveLower(col)
		d.chol.solveUpper(col)
		for i := j; i < n; i++ {
			w[i*n+j] = col[i] - alpha[i]*alpha[j]
		}
	}
	nk := m.Kernel.NumParams()
	grad := make([]float64, nk)
	clear(dst)
	for i := 0; i < n; i++ {
		for j := 0; j <= i; j++ {
			covGrad(grad, d.t[i]-d.t[j])
			wt := w[i*n+j]
			if i != j {
				wt *= 2
			}
			for p := range grad {
				dst[p] -= 0.5 * wt * grad[p]
			}
		}
	}
	// Diagonal terms: the nugget and the jitters.
	var trW float64
	for i := 0; i < n; i++ {
		trW += w[i*n+i]
	}
	for p, g := range nugGrad {
		dst[p] -= 0.5 * trW * g
	}
	for i := 0; i < n; i++ {
		k := 0
		if inst != nil {
			k = inst[i]
		}
		if k < len(m.Jitter) {
			dst[nk+k] -= 0.5 * w[i*n+i] * 2 * m.Jitter[k]
		}
	}
	return ll, nil
}

// kernelGrad returns a function storing ∂k(τ)/∂θ in dst and the gradient
// of the kernel's nugget, analytic for ParamGradienter kernels and by
// finite differences of Cov otherwise (see Noise.LogLikelihoodGrad).
func kernelGrad(k Kernel) (func(dst []float64, tau float64), []float64, error) {
	np := k.NumParams()
	nug := make([]float64, np)
	if HasGradient(k) {
		if ng, ok := k.(nuggetGradienter); ok {
			ng.NuggetGrad(nug)
		}
		g := k.(ParamGradienter)
		return func(dst []float64, tau float64) { g.CovGrad(dst, tau) }, nug, nil
	}
	p0 := k.Params(nil)
	plus := make([]Kernel, np)
	minus := make([]Kernel, np)
	step := make([]float64, np)
	for p := range p0 {
		h := 1e-6 * math.Max(math.Abs(p0[p]), 1e-3)
		q := append([]float64(nil), p0...)
		q[p] = p0[p] + h
		kp, errp := k.WithParams(q)
		q[p] = p0[p] - h
		km, errm := k.WithParams(q)
		switch {
		case errp == nil && errm == nil:
			plus[p], minus[p], step[p] = kp, km, 2*h
		case errp == nil:
			plus[p], minus[p], step[p] = kp, k, h
		case errm == nil:
			plus[p], minus[p], step[p] = k, km, h
		default:
			return nil, nil, fmt.Errorf("%w: %T parameter %d: %v", ErrNoGradient, k, p, errp)
		}
		nug[p] = (nuggetOf(plus[p]) - nuggetOf(minus[p])) / step[p]
	}
	return func(dst []float64, tau float64) {
		for p := range dst {
			dst[p] = (plus[p].Cov(tau) - minus[p].Cov(tau)) / step[p]
		}
	}, nug, nil
}
