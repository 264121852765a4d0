package gp

import (
	"fmt"
	"math"
)

// RotationTerm is the quasi-periodic-like celerite kernel of
// Foreman-Mackey et al. (2017)
//
//	k(τ) = B/(2 + C) e^(−|τ|/L) [cos(2πτ/P) + (1 + C)]
//
// with B the variance (unit of the data squared), C ≥ 0 the weight of the
// non-periodic part, L the decay time scale (days) and P the period (days).
// k(0) = B. It is the sum of two celerite terms,
//
//	(a = B(1+C)/(2+C), b = 0, c = 1/L, d = 0) and (a = B/(2+C), b = 0, c = 1/L, d = 2π/P)
//
// which are positive definite for B, L, P > 0, C ≥ 0.
//
// Parameter vector: [B, C, L, P].
//
// Reference: Foreman-Mackey, Agol, Ambikasaran & Angus 2017, AJ 154, 220,
// eq. 56 (equation number from memory).
type RotationTerm struct {
	B, C, L, P float64
}

var (
	_ Celerite        = RotationTerm{}
	_ ParamGradienter = RotationTerm{}
	_ Differentiable  = RotationTerm{}
	_ Validator       = RotationTerm{}
)

// Cov returns k(τ).
func (k RotationTerm) Cov(tau float64) float64 {
	return k.B / (2 + k.C) * math.Exp(-math.Abs(tau)/k.L) * (math.Cos(2*math.Pi*tau/k.P) + 1 + k.C)
}

// CovDeriv returns k(τ) and its first two lag derivatives, for τ ≠ 0. The
// exponential e^(−|τ|/L) has a cusp at τ = 0, so the process is not
// mean-square differentiable: at τ = 0 the one-sided limits are returned
// (dk/dτ = 0 by symmetry), which the multi-output model accepts but which
// is not a valid derivative covariance there. Prefer QuasiPeriodic or
// Matern32 for derivative models.
func (k RotationTerm) CovDeriv(tau float64) (c, dc, d2c float64) {
	at := math.Abs(tau)
	sg := 1.0
	if tau < 0 {
		sg = -1
	}
	w := 2 * math.Pi / k.P
	e := k.B / (2 + k.C) * math.Exp(-at/k.L)
	s, cw := math.Sincos(w * tau)
	h := cw + 1 + k.C
	hp := -w * s
	hpp := -w * w * cw
	c = e * h
	if tau == 0 {
		return c, 0, e * (hpp + h/(k.L*k.L))
	}
	dc = e * (hp - sg*h/k.L)
	d2c = e * (hpp - 2*sg*hp/k.L + h/(k.L*k.L))
	return c, dc, d2c
}

// CovGrad stores ∂k/∂(B, C, L, P) and returns k(τ).
func (k RotationTerm) CovGrad(dst []float64, tau float64) float64 {
	at := math.Abs(tau)
	e := math.Exp(-at / k.L)
	w := 2 * math.Pi / k.P
	s, cw := math.Sincos(w * tau)
	c := k.B / (2 + k.C) * e * (cw + 1 + k.C)
	dst[0] = c / k.B
	// d/dC [(cw+1+C)/(2+C)] = (2+C − cw − 1 − C)/(2+C)² = (1 − cw)/(2+C)².
	dst[1] = k.B * e * (1 - cw) / ((2 + k.C) * (2 + k.C))
	dst[2] = c * at / (k.L * k.L)
	dst[3] = k.B / (2 + k.C) * e * s * w * tau / k.P
	return c
}

// Terms appends the two celerite terms.
func (k RotationTerm) Terms(dst []Term) []Term {
	return append(dst,
		Term{A: k.B * (1 + k.C) / (2 + k.C), C: 1 / k.L},
		Term{A: k.B / (2 + k.C), C: 1 / k.L, D: 2 * math.Pi / k.P})
}

// NumParams returns 4.
func (k RotationTerm) NumParams() int { return 4 }

// Params appends [B, C, L, P].
func (k RotationTerm) Params(dst []float64) []float64 { return append(dst, k.B, k.C, k.L, k.P) }

// WithParams returns RotationTerm{p[0], p[1], p[2], p[3]}.
func (k RotationTerm) WithParams(p []float64) (Kernel, error) {
	if len(p) != 4 {
		return nil, fmt.Errorf("%w: RotationTerm needs 4, got %d", ErrParamCount, len(p))
	}
	r := RotationTerm{p[0], p[1], p[2], p[3]}
	return r, r.Validate()
}

// Validate checks B, L, P > 0 and C ≥ 0.
func (k RotationTerm) Validate() error {
	if err := positive("RotationTerm", "B", k.B); err != nil {
		return err
	}
	if err := nonNegative("RotationTerm", "C", k.C); err != nil {
		return err
	}
	if err := positive("RotationTerm", "L", k.L); err != nil {
		return err
	}
	return positive("RotationTerm", "P", k.P)
}

// RotationSHO is the two-oscillator rotation kernel: the sum of two SHO
// terms, one at the rotation period P and one at P/2,
//
//	Q1 = ½ + q + g,  ω1 = 4πQ1/(P√(4Q1² − 1)),  S1 = A²/((1 + m) ω1 Q1)
//	Q2 = ½ + q,      ω2 = 8πQ2/(P√(4Q2² − 1)),  S2 = mA²/((1 + m) ω2 Q2)
//
// so that each oscillator rings at exactly 2π/P and 4π/P and k(0) = A².
// Amp (A) is the amplitude (unit of the data), Period (P) the rotation
// period (days), Quality (q > 0) the quality factor of the half-period
// mode less ½, QualityGap (g ≥ 0) how much more coherent the
// rotation-period mode is, and Mix (m ≥ 0) the variance of the
// half-period mode relative to the rotation-period mode. The coherence
// time of the primary mode is 2Q1/ω1 ≈ Q1 P/π.
//
// Parameter vector: [Amp, Period, Quality, QualityGap, Mix].
//
// Reference: the rotation term of the celerite2 documentation
// (Foreman-Mackey 2018, RNAAS 2, 31, and software docs), parameterisation
// from memory.
type RotationSHO struct {
	Amp, Period, Quality, QualityGap, Mix float64
}

var (
	_ Celerite       = RotationSHO{}
	_ Validator      = RotationSHO{}
	_ Differentiable = RotationSHO{}
)

// SHOs returns the two oscillators (at P and at P/2).
func (k RotationSHO) SHOs() (SHO, SHO) {
	s2 := k.Amp * k.Amp
	q1 := 0.5 + k.Quality + k.QualityGap
	w1 := 4 * math.Pi * q1 / (k.Period * math.Sqrt(4*q1*q1-1))
	q2 := 0.5 + k.Quality
	w2 := 8 * math.Pi * q2 / (k.Period * math.Sqrt(4*q2*q2-1))
	return SHO{S0: s2 / ((1 + k.Mix) * w1 * q1), W0: w1, Q: q1},
		SHO{S0: k.Mix * s2 / ((1 + k.Mix) * w2 * q2), W0: w2, Q: q2}
}

// Cov returns k(τ).
func (k RotationSHO) Cov(tau float64) float64 {
	a, b := k.SHOs()
	if k.Mix == 0 {
		return a.Cov(tau)
	}
	return a.Cov(tau) + b.Cov(tau)
}

// CovDeriv returns k(τ), dk/dτ and d²k/dτ² from the celerite terms: for
// τ ≥ 0 each term e^(−cτ)(a cos dτ + b sin dτ) differentiates to the same
// form with (a, b) → (−ca + db, −cb − da); k is even, k' odd. Every
// oscillator has k'(0) = 0, so the process is mean-square differentiable
// and the values at τ = 0 are the true derivatives.
func (k RotationSHO) CovDeriv(tau float64) (c, dc, d2c float64) {
	sg := 1.0
	if tau < 0 {
		tau, sg = -tau, -1
	}
	for _, t := range k.Terms(nil) {
		tc := newTermCoef(t.A, t.B, t.C, t.D)
		e := math.Exp(-tc.c * tau)
		sn, cn := math.Sincos(tc.d * tau)
		c += e * (tc.a*cn + tc.b*sn)
		dc += e * (tc.a1*cn + tc.b1*sn)
		d2c += e * (tc.a2*cn + tc.b2*sn)
	}
	return c, sg * dc, d2c
}

// Terms appends the celerite terms of both oscillators (the second is
// omitted when Mix = 0).
func (k RotationSHO) Terms(dst []Term) []Term {
	a, b := k.SHOs()
	dst = a.Terms(dst)
	if k.Mix == 0 {
		return dst
	}
	return b.Terms(dst)
}

// NumParams returns 5.
func (k RotationSHO) NumParams() int { return 5 }

// Params appends [Amp, Period, Quality, QualityGap, Mix].
func (k RotationSHO) Params(dst []float64) []float64 {
	return append(dst, k.Amp, k.Period, k.Quality, k.QualityGap, k.Mix)
}

// WithParams returns RotationSHO{p[0], …, p[4]}.
func (k RotationSHO) WithParams(p []float64) (Kernel, error) {
	if len(p) != 5 {
		return nil, fmt.Errorf("%w: RotationSHO needs 5, got %d", ErrParamCount, len(p))
	}
	r := RotationSHO{p[0], p[1], p[2], p[3], p[4]}
	return r, r.Validate()
}

// Validate checks Amp, Period, Quality > 0 and QualityGap, Mix ≥ 0.
func (k RotationSHO) Validate() error {
	if err := positive("RotationSHO", "Amp", k.Amp); err != nil {
		return err
	}
	if err := positive("RotationSHO", "Period", k.Period); err != nil {
		return err
	}
	if err := positive("RotationSHO", "Quality", k.Quality); err != nil {
		return err
	}
	if err := nonNegative("RotationSHO", "QualityGap", k.QualityGap); err != nil {
		return err
	}
	return nonNegative("RotationSHO", "Mix", k.Mix)
}
