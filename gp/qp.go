package gp

import (
	"fmt"
	"math"
)

// QuasiPeriodic is the quasi-periodic kernel, a squared exponential times a
// periodic kernel, in the form of Haywood et al. (2014)
//
//	k(τ) = η1² exp[ −τ²/η2² − 2 sin²(πτ/η3)/η4² ]
//
// with Eta1 the amplitude (unit of the data, e.g. m/s), Eta2 the
// active-region evolution time scale (days), Eta3 the recurrence period,
// ≈ the stellar rotation period (days), and Eta4 the dimensionless harmonic
// complexity (smaller means more harmonics). Note the convention: some
// authors write 2η2² in the first denominator; here it is η2².
//
// The same kernel in the unit-amplitude form of Rajpaul et al. (2015),
//
//	γ(τ) = exp[ −sin²(πτ/P)/(2λp²) − τ²/(2λe²) ]
//
// maps as P = η3, λe = η2/√2, λp = η4/2 (see NewQuasiPeriodicRajpaul).
//
// Parameter vector: [Eta1, Eta2, Eta3, Eta4], all positive.
//
// References: Haywood et al. 2014, MNRAS 443, 2517 (form from memory);
// Rajpaul et al. 2015, MNRAS 452, 2269 (form from memory).
type QuasiPeriodic struct {
	Eta1, Eta2, Eta3, Eta4 float64
}

var (
	_ Differentiable  = QuasiPeriodic{}
	_ ParamGradienter = QuasiPeriodic{}
	_ Validator       = QuasiPeriodic{}
)

// NewQuasiPeriodicRajpaul returns the QuasiPeriodic kernel with amplitude
// amp and the Rajpaul et al. (2015) hyperparameters: period p (days),
// harmonic length scale lambdaP (dimensionless) and evolution time scale
// lambdaE (days):
//
//	Eta1 = amp, Eta2 = √2·λe, Eta3 = P, Eta4 = 2·λp
func NewQuasiPeriodicRajpaul(amp, p, lambdaP, lambdaE float64) QuasiPeriodic {
	return QuasiPeriodic{Eta1: amp, Eta2: math.Sqrt2 * lambdaE, Eta3: p, Eta4: 2 * lambdaP}
}

// Rajpaul returns the Rajpaul et al. (2015) hyperparameters (P, λp, λe) of
// k; see NewQuasiPeriodicRajpaul.
func (k QuasiPeriodic) Rajpaul() (p, lambdaP, lambdaE float64) {
	return k.Eta3, k.Eta4 / 2, k.Eta2 / math.Sqrt2
}

// Cov returns k(τ).
func (k QuasiPeriodic) Cov(tau float64) float64 {
	s := math.Sin(math.Pi * tau / k.Eta3)
	return k.Eta1 * k.Eta1 * math.Exp(-tau*tau/(k.Eta2*k.Eta2)-2*s*s/(k.Eta4*k.Eta4))
}

// CovDeriv returns k(τ), dk/dτ and d²k/dτ². With k = η1² e^g and the
// Rajpaul parameters,
//
//	g'(τ)  = −(π/(2Pλp²)) sin(2πτ/P) − τ/λe²
//	g''(τ) = −(π²/(P²λp²)) cos(2πτ/P) − 1/λe²
//	dk/dτ = k g',   d²k/dτ² = k (g'² + g'')
//
// (Rajpaul et al. 2015; derivatives as in docs/methods.md §8.)
func (k QuasiPeriodic) CovDeriv(tau float64) (c, dc, d2c float64) {
	p, lp, le := k.Rajpaul()
	// One Sincos serves all three: sin 2x = 2 sin x cos x, cos 2x = 1 − 2 sin²x.
	s, co := math.Sincos(math.Pi * tau / p)
	il2 := 1 / (lp * lp)
	ie2 := 1 / (le * le)
	c = k.Eta1 * k.Eta1 * math.Exp(-0.5*s*s*il2-0.5*tau*tau*ie2)
	g1 := -math.Pi/p*il2*s*co - tau*ie2
	g2 := -math.Pi*math.Pi/(p*p)*il2*(1-2*s*s) - ie2
	return c, c * g1, c * (g1*g1 + g2)
}

// CovGrad stores ∂k/∂(η1, η2, η3, η4) in dst and returns k(τ):
//
//	∂k/∂η1 = 2k/η1
//	∂k/∂η2 = 2τ²k/η2³
//	∂k/∂η3 = (2πτ/(η3²η4²)) sin(2πτ/η3) k
//	∂k/∂η4 = 4 sin²(πτ/η3) k/η4³
func (k QuasiPeriodic) CovGrad(dst []float64, tau float64) float64 {
	c := k.Cov(tau)
	s := math.Sin(math.Pi * tau / k.Eta3)
	dst[0] = 2 * c / k.Eta1
	dst[1] = 2 * tau * tau * c / (k.Eta2 * k.Eta2 * k.Eta2)
	dst[2] = 2 * math.Pi * tau / (k.Eta3 * k.Eta3 * k.Eta4 * k.Eta4) * math.Sin(2*math.Pi*tau/k.Eta3) * c
	dst[3] = 4 * s * s * c / (k.Eta4 * k.Eta4 * k.Eta4)
	return c
}

// NumParams returns 4.
func (k QuasiPeriodic) NumParams() int { return 4 }

// Params appends [Eta1, Eta2, Eta3, Eta4].
func (k QuasiPeriodic) Params(dst []float64) []float64 {
	return append(dst, k.Eta1, k.Eta2, k.Eta3, k.Eta4)
}

// WithParams returns QuasiPeriodic{p[0], p[1], p[2], p[3]}.
func (k QuasiPeriodic) WithParams(p []float64) (Kernel, error) {
	if len(p) != 4 {
		return nil, fmt.Errorf("%w: QuasiPeriodic needs 4, got %d", ErrParamCount, len(p))
	}
	q := QuasiPeriodic{p[0], p[1], p[2], p[3]}
	return q, q.Validate()
}

// Validate checks that every hyperparameter is positive and finite.
func (k QuasiPeriodic) Validate() error {
	for i, v := range [4]float64{k.Eta1, k.Eta2, k.Eta3, k.Eta4} {
		if err := positive("QuasiPeriodic", fmt.Sprintf("Eta%d", i+1), v); err != nil {
			return err
		}
	}
	return nil
}
