package gp

import (
	"fmt"
	"math"
)

// SHO is the covariance of a stochastically driven, damped simple harmonic
// oscillator, with power spectral density
//
//	S(ω) = √(2/π) S0 ω0⁴ / ((ω² − ω0²)² + ω0²ω²/Q²)
//
// S0 is the power at ω = 0 (unit of the data squared times days), W0 the
// undamped angular frequency ω0 (rad/day) and Q the quality factor. With
// τ = |t_i − t_j|, the covariance in the three regimes is
//
//	Q > ½:  k = S0ω0Q e^(−ω0τ/(2Q)) [cos(ηω0τ) + sin(ηω0τ)/(2ηQ)],  η = √(1 − 1/(4Q²))
//	Q = ½:  k = ½S0ω0 e^(−ω0τ) (1 + ω0τ)                               (critical damping)
//	Q < ½:  k = ½S0ω0Q [(1 + 1/f) e^(−(1−f)ω0τ/(2Q)) + (1 − 1/f) e^(−(1+f)ω0τ/(2Q))],  f = √(1 − 4Q²)
//
// Q = 1/√2 gives k = S0ω0 e^(−ω0τ/√2) cos(ω0τ/√2 − π/4), often used for
// granulation. The critical case is used when |4Q² − 1| < 1e-8, where the
// other two forms lose precision.
//
// Parameter vector: [S0, W0, Q], all positive.
//
// Reference: Foreman-Mackey, Agol, Ambikasaran & Angus 2017, AJ 154, 220,
// §4 (form from memory; restated in docs/methods.md §8).
type SHO struct {
	S0, W0, Q float64
}

var (
	_ Celerite  = SHO{}
	_ Validator = SHO{}
)

// criticalBand is the half-width in 4Q² − 1 inside which SHO is treated
// as critically damped; chosen so that the under- and over-damped forms,
// whose error grows like ε/(4Q² − 1), are never used where they lose more
// than ~1e-8 relative precision.
const criticalBand = 1e-8

// shoCriticalF is the value of √(4Q² − 1) used by SHO.Terms at critical
// damping: the exact kernel is a polynomial times an exponential, which is
// not a sum of exponential-cosine terms, so Terms returns the under-damped
// term with this small f. Its relative error in k is ≈ (f ω0τ)²/6 ≤ 2e-9
// for ω0τ ≤ 10, where the kernel has fallen below 5e-4 of k(0); the price
// is a cancellation in the solver of order 1/f × machine epsilon ≈ 1e-12.
const shoCriticalF = 1e-4

// Cov returns k(τ).
func (k SHO) Cov(tau float64) float64 {
	tau = math.Abs(tau)
	x := k.W0 * tau
	q := k.Q
	d := 4*q*q - 1
	switch {
	case math.Abs(d) < criticalBand:
		return 0.5 * k.S0 * k.W0 * math.Exp(-x) * (1 + x)
	case d > 0:
		eta := math.Sqrt(1 - 1/(4*q*q))
		s, c := math.Sincos(eta * x)
		return k.S0 * k.W0 * q * math.Exp(-x/(2*q)) * (c + s/(2*eta*q))
	default:
		f := math.Sqrt(1 - 4*q*q)
		return 0.5 * k.S0 * k.W0 * q * ((1+1/f)*math.Exp(-(1-f)*x/(2*q)) + (1-1/f)*math.Exp(-(1+f)*x/(2*q)))
	}
}

// Terms appends the celerite terms:
//
//	Q > ½: one term a = S0ω0Q, b = S0ω0Q/√(4Q² − 1), c = ω0/(2Q), d = ω0√(4Q² − 1)/(2Q)
//	Q < ½: two real terms a = ½S0ω0Q(1 ± 1/f), c = (1 ∓ f)ω0/(2Q)
//	Q = ½: the Q > ½ form with √(4Q² − 1) replaced by 1e-4 (see shoCriticalF)
func (k SHO) Terms(dst []Term) []Term {
	q := k.Q
	a := k.S0 * k.W0 * q
	d := 4*q*q - 1
	switch {
	case math.Abs(d) < criticalBand:
		f := shoCriticalF
		return append(dst, Term{A: a, B: a / f, C: k.W0 / (2 * q), D: k.W0 * f / (2 * q)})
	case d > 0:
		f := math.Sqrt(d)
		return append(dst, Term{A: a, B: a / f, C: k.W0 / (2 * q), D: k.W0 * f / (2 * q)})
	default:
		f := math.Sqrt(1 - 4*q*q)
		return append(dst,
			Term{A: 0.5 * a * (1 + 1/f), C: (1 - f) * k.W0 / (2 * q)},
			Term{A: 0.5 * a * (1 - 1/f), C: (1 + f) * k.W0 / (2 * q)})
	}
}

// NumParams returns 3.
func (k SHO) NumParams() int { return 3 }

// Params appends [S0, W0, Q].
func (k SHO) Params(dst []float64) []float64 { return append(dst, k.S0, k.W0, k.Q) }

// WithParams returns SHO{p[0], p[1], p[2]}.
func (k SHO) WithParams(p []float64) (Kernel, error) {
	if len(p) != 3 {
		return nil, fmt.Errorf("%w: SHO needs 3, got %d", ErrParamCount, len(p))
	}
	s := SHO{p[0], p[1], p[2]}
	return s, s.Validate()
}

// Validate checks that S0, W0 and Q are positive and finite.
func (k SHO) Validate() error {
	if err := positive("SHO", "S0", k.S0); err != nil {
		return err
	}
	if err := positive("SHO", "W0", k.W0); err != nil {
		return err
	}
	return positive("SHO", "Q", k.Q)
}
