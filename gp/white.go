package gp

import "fmt"

// White is uncorrelated (white) noise of standard deviation Sigma (the unit
// of the data, e.g. m/s). It adds Sigma² to the diagonal of the covariance
// matrix only: two distinct points at the same epoch stay independent, so
// Cov is zero at every lag and the variance comes through Nugget.
//
// Parameter vector: [Sigma]. Sigma ≥ 0; zero adds nothing.
type White struct {
	Sigma float64
}

var (
	_ Celerite        = White{}
	_ ParamGradienter = White{}
	_ Nuggeter        = White{}
	_ Differentiable  = White{}
)

// Cov returns 0: white noise enters only through Nugget.
func (w White) Cov(tau float64) float64 { return 0 }

// CovDeriv returns zeros: white noise has no lag dependence.
func (w White) CovDeriv(tau float64) (k, dk, d2k float64) { return 0, 0, 0 }

// Nugget returns Sigma².
func (w White) Nugget() float64 { return w.Sigma * w.Sigma }

// NumParams returns 1.
func (w White) NumParams() int { return 1 }

// Params appends Sigma.
func (w White) Params(dst []float64) []float64 { return append(dst, w.Sigma) }

// WithParams returns White{p[0]}.
func (w White) WithParams(p []float64) (Kernel, error) {
	if len(p) != 1 {
		return nil, fmt.Errorf("%w: White needs 1, got %d", ErrParamCount, len(p))
	}
	k := White{Sigma: p[0]}
	return k, k.Validate()
}

// Validate checks Sigma ≥ 0.
func (w White) Validate() error { return nonNegative("White", "Sigma", w.Sigma) }

// Terms appends nothing: the diagonal is handled by the solver.
func (w White) Terms(dst []Term) []Term { return dst }

// CovGrad stores 0 (the lag covariance does not depend on Sigma; the
// nugget's gradient 2·Sigma is handled by the solver) and returns 0.
func (w White) CovGrad(dst []float64, tau float64) float64 {
	dst[0] = 0
	return 0
}

// NuggetGrad stores ∂Nugget/∂Sigma = 2·Sigma in dst[0].
func (w White) NuggetGrad(dst []float64) { dst[0] = 2 * w.Sigma }

// nuggetGradienter is implemented by kernels whose nugget depends on
// their hyperparameters.
type nuggetGradienter interface {
	NuggetGrad(dst []float64)
}

// NuggetGrad stores the gradient of the Sum's nugget in dst.
func (s Sum) NuggetGrad(dst []float64) {
	off := 0
	for _, k := range s {
		n := k.NumParams()
		if g, ok := k.(nuggetGradienter); ok {
			g.NuggetGrad(dst[off : off+n])
		} else {
			clear(dst[off : off+n])
		}
		off += n
	}
}
