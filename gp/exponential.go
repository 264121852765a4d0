package gp

import (
	"fmt"
	"math"
)

// Exponential is the exponential kernel (Matérn with ν = 1/2), the
// covariance of an Ornstein–Uhlenbeck process or damped random walk:
//
//	k(τ) = σ² exp(−|τ|/τ₀)
//
// with Sigma the amplitude (unit of the data) and Tau the time scale τ₀
// (days). Over lags much shorter than τ₀ the process is a random walk with
// diffusion 2σ²/τ₀ per day; its power spectrum falls as 1/f² above
// 1/(2π τ₀) and is flat below it. Its paths are continuous but nowhere
// smooth, so it cannot mimic a smooth periodic signal, which makes it the
// usual model of red noise (common practice). It is one celerite term
// (a = σ², c = 1/τ₀) and has no derivative process.
//
// Parameter vector: [Sigma, Tau], both positive.
//
// Reference: Rasmussen & Williams 2006, Gaussian Processes for Machine
// Learning, MIT Press, §4.2.1 (from memory).
type Exponential struct {
	Sigma, Tau float64
}

var (
	_ Celerite        = Exponential{}
	_ ParamGradienter = Exponential{}
	_ Validator       = Exponential{}
)

// Cov returns k(τ).
func (k Exponential) Cov(tau float64) float64 {
	return k.Sigma * k.Sigma * math.Exp(-math.Abs(tau)/k.Tau)
}

// CovGrad stores ∂k/∂(σ, τ₀) and returns k(τ):
//
//	∂k/∂σ = 2k/σ,   ∂k/∂τ₀ = k |τ|/τ₀²
func (k Exponential) CovGrad(dst []float64, tau float64) float64 {
	c := k.Cov(tau)
	dst[0] = 2 * c / k.Sigma
	dst[1] = c * math.Abs(tau) / (k.Tau * k.Tau)
	return c
}

// Terms appends the kernel's one real term.
func (k Exponential) Terms(dst []Term) []Term {
	return append(dst, Term{A: k.Sigma * k.Sigma, C: 1 / k.Tau})
}

// NumParams returns 2.
func (k Exponential) NumParams() int { return 2 }

// Params appends [Sigma, Tau].
func (k Exponential) Params(dst []float64) []float64 { return append(dst, k.Sigma, k.Tau) }

// WithParams returns Exponential{p[0], p[1]}.
func (k Exponential) WithParams(p []float64) (Kernel, error) {
	if len(p) != 2 {
		return nil, fmt.Errorf("%w: Exponential needs 2, got %d", ErrParamCount, len(p))
	}
	e := Exponential{p[0], p[1]}
	return e, e.Validate()
}

// Validate checks that Sigma and Tau are positive and finite.
func (k Exponential) Validate() error {
	if err := positive("Exponential", "Sigma", k.Sigma); err != nil {
		return err
	}
	return positive("Exponential", "Tau", k.Tau)
}
