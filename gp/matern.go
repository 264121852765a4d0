package gp

import (
	"fmt"
	"math"
)

// Matern32 is the Matérn kernel with ν = 3/2
//
//	k(τ) = σ² (1 + √3|τ|/ρ) exp(−√3|τ|/ρ)
//
// with Sigma the amplitude (unit of the data) and Rho the length scale
// (days). The process is once mean-square differentiable, so the kernel
// has the derivatives the multi-output model needs.
//
// Parameter vector: [Sigma, Rho], both positive.
//
// Reference: Rasmussen & Williams 2006, Gaussian Processes for Machine
// Learning, MIT Press, eq. 4.17 (from memory).
type Matern32 struct {
	Sigma, Rho float64
}

var (
	_ Differentiable  = Matern32{}
	_ ParamGradienter = Matern32{}
	_ Validator       = Matern32{}
)

// Cov returns k(τ).
func (k Matern32) Cov(tau float64) float64 {
	x := math.Sqrt(3) * math.Abs(tau) / k.Rho
	return k.Sigma * k.Sigma * (1 + x) * math.Exp(-x)
}

// CovDeriv returns k(τ), dk/dτ and d²k/dτ²:
//
//	dk/dτ   = −3σ²τ/ρ² e^(−x),   x = √3|τ|/ρ
//	d²k/dτ² = −(3σ²/ρ²)(1 − x) e^(−x)
func (k Matern32) CovDeriv(tau float64) (c, dc, d2c float64) {
	x := math.Sqrt(3) * math.Abs(tau) / k.Rho
	s2 := k.Sigma * k.Sigma
	e := math.Exp(-x)
	r2 := k.Rho * k.Rho
	return s2 * (1 + x) * e, -3 * s2 * tau / r2 * e, -3 * s2 / r2 * (1 - x) * e
}

// CovGrad stores ∂k/∂(σ, ρ) and returns k(τ):
//
//	∂k/∂σ = 2k/σ,   ∂k/∂ρ = σ² x² e^(−x)/ρ
func (k Matern32) CovGrad(dst []float64, tau float64) float64 {
	x := math.Sqrt(3) * math.Abs(tau) / k.Rho
	e := math.Exp(-x)
	c := k.Sigma * k.Sigma * (1 + x) * e
	dst[0] = 2 * c / k.Sigma
	dst[1] = k.Sigma * k.Sigma * x * x * e / k.Rho
	return c
}

// NumParams returns 2.
func (k Matern32) NumParams() int { return 2 }

// Params appends [Sigma, Rho].
func (k Matern32) Params(dst []float64) []float64 { return append(dst, k.Sigma, k.Rho) }

// WithParams returns Matern32{p[0], p[1]}.
func (k Matern32) WithParams(p []float64) (Kernel, error) {
	if len(p) != 2 {
		return nil, fmt.Errorf("%w: Matern32 needs 2, got %d", ErrParamCount, len(p))
	}
	m := Matern32{p[0], p[1]}
	return m, m.Validate()
}

// Validate checks that Sigma and Rho are positive and finite.
func (k Matern32) Validate() error {
	if err := positive("Matern32", "Sigma", k.Sigma); err != nil {
		return err
	}
	return positive("Matern32", "Rho", k.Rho)
}
