package gp

import "fmt"

// Kernel is a stationary covariance function of the time lag.
//
// Cov returns k(τ) for a lag τ = t_i − t_j in days; k is even in τ. The
// hyperparameters form a vector in an order documented by each kernel;
// Params appends it to dst and WithParams returns a copy of the kernel
// with a new vector, validating it. Solvers call Cov from several
// goroutines at once when filling large matrices, so implementations must
// be safe for concurrent use (plain value types are).
type Kernel interface {
	// Cov returns the covariance at lag tau (days).
	Cov(tau float64) float64
	// NumParams returns the number of hyperparameters.
	NumParams() int
	// Params appends the hyperparameters to dst and returns it.
	Params(dst []float64) []float64
	// WithParams returns the kernel with hyperparameters p, or an error
	// wrapping ErrParamCount or ErrBadParam.
	WithParams(p []float64) (Kernel, error)
}

// Validator is implemented by kernels that check their hyperparameters.
// Solvers call Validate before using a kernel.
type Validator interface {
	Validate() error
}

// Nuggeter is implemented by kernels that add a variance to the diagonal of
// the covariance matrix only (white noise), independently of the time lag:
// two points at the same epoch do not share it.
type Nuggeter interface {
	Nugget() float64
}

// Term is one exponential-cosine term of a semiseparable (celerite) kernel
//
//	k(τ) = a e^(−c|τ|) cos(d|τ|) + b e^(−c|τ|) sin(d|τ|)
//
// with c > 0 the damping rate (1/day) and d the angular frequency
// (rad/day). A real exponential has B = D = 0.
//
// Reference: Foreman-Mackey, Agol, Ambikasaran & Angus 2017, AJ 154, 220.
type Term struct {
	A, B, C, D float64
}

// Cov returns the term's covariance at lag tau.
func (t Term) Cov(tau float64) float64 {
	if tau < 0 {
		tau = -tau
	}
	e := expNeg(t.C * tau)
	if t.D == 0 {
		return t.A * e
	}
	s, c := sincos(t.D * tau)
	return e * (t.A*c + t.B*s)
}

// Celerite is implemented by kernels that are exact (or documented
// approximate) sums of exponential-cosine Terms and so can use the
// semiseparable solver.
type Celerite interface {
	Kernel
	// Terms appends the kernel's terms to dst and returns it.
	Terms(dst []Term) []Term
}

// Differentiable is implemented by kernels with analytic lag derivatives,
// needed for the time derivative of the latent process in the
// multi-output model. CovDeriv returns k(τ), dk/dτ and d²k/dτ².
type Differentiable interface {
	Kernel
	CovDeriv(tau float64) (k, dk, d2k float64)
}

// ParamGradienter is implemented by kernels that give the gradient of k(τ)
// with respect to their hyperparameters, in Params order. CovGrad stores
// ∂k(τ)/∂θ_p in dst (len NumParams) and returns k(τ).
type ParamGradienter interface {
	Kernel
	CovGrad(dst []float64, tau float64) float64
}

// Sum is the sum of kernels. Its parameter vector is the concatenation of
// its members' vectors, in order. An empty Sum has zero covariance.
type Sum []Kernel

var (
	_ Celerite        = Sum(nil)
	_ ParamGradienter = Sum(nil)
	_ Nuggeter        = Sum(nil)
)

// Cov returns Σ_k k(τ).
func (s Sum) Cov(tau float64) float64 {
	var v float64
	for _, k := range s {
		v += k.Cov(tau)
	}
	return v
}

// NumParams returns the total number of hyperparameters.
func (s Sum) NumParams() int {
	n := 0
	for _, k := range s {
		n += k.NumParams()
	}
	return n
}

// Params appends all members' parameters to dst.
func (s Sum) Params(dst []float64) []float64 {
	for _, k := range s {
		dst = k.Params(dst)
	}
	return dst
}

// WithParams splits p over the members in order.
func (s Sum) WithParams(p []float64) (Kernel, error) {
	if len(p) != s.NumParams() {
		return nil, fmt.Errorf("%w: Sum needs %d, got %d", ErrParamCount, s.NumParams(), len(p))
	}
	out := make(Sum, len(s))
	off := 0
	for i, k := range s {
		n := k.NumParams()
		nk, err := k.WithParams(p[off : off+n])
		if err != nil {
			return nil, fmt.Errorf("Sum member %d: %w", i, err)
		}
		out[i] = nk
		off += n
	}
	return out, nil
}

// Validate validates every member that implements Validator.
func (s Sum) Validate() error {
	for i, k := range s {
		if k == nil {
			return fmt.Errorf("%w: Sum member %d is nil", ErrBadParam, i)
		}
		if v, ok := k.(Validator); ok {
			if err := v.Validate(); err != nil {
				return fmt.Errorf("Sum member %d: %w", i, err)
			}
		}
	}
	return nil
}

// Nugget returns the sum of the members' nuggets.
func (s Sum) Nugget() float64 {
	var v float64
	for _, k := range s {
		if n, ok := k.(Nuggeter); ok {
			v += n.Nugget()
		}
	}
	return v
}

// Terms appends the terms of every member. If a member is not Celerite,
// Terms returns nil; use IsCelerite to test first.
func (s Sum) Terms(dst []Term) []Term {
	for _, k := range s {
		c, ok := k.(Celerite)
		if !ok {
			return nil
		}
		dst = c.Terms(dst)
	}
	return dst
}

// CovGrad stores the gradient of k(τ) with respect to all parameters. A
// member without a gradient yields NaN in its slots; use HasGradient to
// test first.
func (s Sum) CovGrad(dst []float64, tau float64) float64 {
	var v float64
	off := 0
	for _, k := range s {
		n := k.NumParams()
		if g, ok := k.(ParamGradienter); ok {
			v += g.CovGrad(dst[off:off+n], tau)
		} else {
			for i := range n {
				dst[off+i] = nan()
			}
			v += k.Cov(tau)
		}
		off += n
	}
	return v
}

// IsCelerite reports whether k can use the semiseparable solver: it is
// Celerite and, for a Sum, every member is.
func IsCelerite(k Kernel) bool {
	if s, ok := k.(Sum); ok {
		for _, m := range s {
			if !IsCelerite(m) {
				return false
			}
		}
		return true
	}
	_, ok := k.(Celerite)
	return ok
}

// HasGradient reports whether k gives hyperparameter gradients (for a Sum,
// every member must).
func HasGradient(k Kernel) bool {
	switch k := k.(type) {
	case Sum:
		for _, m := range k {
			if !HasGradient(m) {
				return false
			}
		}
		return true
	case ParamGradienter:
		return true
	}
	return false
}

func nuggetOf(k Kernel) float64 {
	if n, ok := k.(Nuggeter); ok {
		return n.Nugget()
	}
	return 0
}

func validate(k Kernel) error {
	if k == nil {
		return fmt.Errorf("%w: nil kernel", ErrBadParam)
	}
	if v, ok := k.(Validator); ok {
		return v.Validate()
	}
	return nil
}
