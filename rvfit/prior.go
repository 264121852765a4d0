package rvfit

import (
	"fmt"
	"math"
	"math/rand/v2"
)

// Prior is a one-dimensional prior density.
//
// LogProb returns ln p(x), −Inf outside the support; Support returns the
// interval holding all the mass (±Inf when unbounded); Rand draws from
// the prior; Validate reports bad parameters (ErrBadPrior).
type Prior interface {
	LogProb(x float64) float64
	Support() (lo, hi float64)
	Rand(rng *rand.Rand) float64
	Validate() error
}

var (
	_ Prior = Uniform{}
	_ Prior = LogUniform{}
	_ Prior = Gaussian{}
	_ Prior = TruncatedGaussian{}
	_ Prior = Beta{}
)

// Uniform is the uniform density on [Min, Max], Min < Max.
type Uniform struct{ Min, Max float64 }

// LogProb returns −ln(Max − Min) inside [Min, Max], −Inf outside.
func (u Uniform) LogProb(x float64) float64 {
	if x < u.Min || x > u.Max || math.IsNaN(x) {
		return math.Inf(-1)
	}
	return -math.Log(u.Max - u.Min)
}

// Support returns [Min, Max].
func (u Uniform) Support() (float64, float64) { return u.Min, u.Max }

// Rand draws uniformly from [Min, Max).
func (u Uniform) Rand(rng *rand.Rand) float64 { return u.Min + (u.Max-u.Min)*rng.Float64() }

// Validate reports whether Min < Max, both finite.
func (u Uniform) Validate() error {
	if !(u.Min < u.Max) || math.IsInf(u.Min, 0) || math.IsInf(u.Max, 0) {
		return fmt.Errorf("%w: uniform lower bound %g not below upper bound %g", ErrBadPrior, u.Min, u.Max)
	}
	return nil
}

// LogUniform (Jeffreys) has density 1/(x ln(Max/Min)) on [Min, Max],
// 0 < Min < Max.
type LogUniform struct{ Min, Max float64 }

// LogProb returns −ln x − ln ln(Max/Min) inside [Min, Max].
func (u LogUniform) LogProb(x float64) float64 {
	if x < u.Min || x > u.Max || math.IsNaN(x) {
		return math.Inf(-1)
	}
	return -math.Log(x) - math.Log(math.Log(u.Max/u.Min))
}

// Support returns [Min, Max].
func (u LogUniform) Support() (float64, float64) { return u.Min, u.Max }

// Rand draws ln x uniformly.
func (u LogUniform) Rand(rng *rand.Rand) float64 {
	return u.Min * math.Exp(rng.Float64()*math.Log(u.Max/u.Min))
}

// Validate reports whether 0 < Min < Max, both finite.
func (u LogUniform) Validate() error {
	if !(u.Min > 0) || !(u.Min < u.Max) || math.IsInf(u.Max, 0) {
		return fmt.Errorf("%w: log-uniform bounds %g, %g (want 0 < lower < upper)", ErrBadPrior, u.Min, u.Max)
	}
	return nil
}

// Gaussian is the normal density with mean Mu and standard deviation
// Sigma > 0.
type Gaussian struct{ Mu, Sigma float64 }

// LogProb returns −½((x−μ)/σ)² − ln(σ√(2π)).
func (g Gaussian) LogProb(x float64) float64 {
	z := (x - g.Mu) / g.Sigma
	return -0.5*z*z - math.Log(g.Sigma) - 0.5*math.Log(2*math.Pi)
}

// Support returns (−Inf, +Inf).
func (g Gaussian) Support() (float64, float64) { return math.Inf(-1), math.Inf(1) }

// Rand draws a normal deviate.
func (g Gaussian) Rand(rng *rand.Rand) float64 { return g.Mu + g.Sigma*rng.NormFloat64() }

// Validate reports whether Sigma > 0 and Mu is finite.
func (g Gaussian) Validate() error {
	if !(g.Sigma > 0) || math.IsInf(g.Sigma, 0) || !isFinite(g.Mu) {
		return fmt.Errorf("%w: gaussian mean %g, sigma %g", ErrBadPrior, g.Mu, g.Sigma)
	}
	return nil
}

// TruncatedGaussian is the normal density (Mu, Sigma) restricted to
// [Min, Max] and renormalised; Min or Max may be ±Inf.
type TruncatedGaussian struct{ Mu, Sigma, Min, Max float64 }

func (g TruncatedGaussian) logNorm() float64 {
	a := (g.Min - g.Mu) / (g.Sigma * math.Sqrt2)
	b := (g.Max - g.Mu) / (g.Sigma * math.Sqrt2)
	// Mass = ½[erf(b) − erf(a)], with erfc on the far side for accuracy.
	var m float64
	if a > 0 {
		m = 0.5 * (math.Erfc(a) - math.Erfc(b))
	} else if b < 0 {
		m = 0.5 * (math.Erfc(-b) - math.Erfc(-a))
	} else {
		m = 0.5 * (math.Erf(b) - math.Erf(a))
	}
	return math.Log(m)
}

// LogProb returns the Gaussian log density minus the log of the mass in
// [Min, Max], −Inf outside.
func (g TruncatedGaussian) LogProb(x float64) float64 {
	if x < g.Min || x > g.Max || math.IsNaN(x) {
		return math.Inf(-1)
	}
	return Gaussian{g.Mu, g.Sigma}.LogProb(x) - g.logNorm()
}

// Support returns [Min, Max].
func (g TruncatedGaussian) Support() (float64, float64) { return g.Min, g.Max }

// Rand draws by rejection from the Gaussian (falling back to uniform
// draws in [Min, Max] weighted by the density when the mass is tiny).
func (g TruncatedGaussian) Rand(rng *rand.Rand) float64 {
	for i := 0; i < 1000; i++ {
		x := g.Mu + g.Sigma*rng.NormFloat64()
		if x >= g.Min && x <= g.Max {
			return x
		}
	}
	lo, hi := math.Max(g.Min, g.Mu-40*g.Sigma), math.Min(g.Max, g.Mu+40*g.Sigma)
	for {
		x := lo + (hi-lo)*rng.Float64()
		z := (x - g.Mu) / g.Sigma
		zm := (math.Max(lo, math.Min(hi, g.Mu)) - g.Mu) / g.Sigma
		if rng.Float64() < math.Exp(-0.5*(z*z-zm*zm)) {
			return x
		}
	}
}

// Validate reports whether Sigma > 0, Min < Max and the interval holds
// mass.
func (g TruncatedGaussian) Validate() error {
	if err := (Gaussian{g.Mu, g.Sigma}).Validate(); err != nil {
		return err
	}
	if !(g.Min < g.Max) {
		return fmt.Errorf("%w: truncated gaussian lower bound %g not below upper bound %g", ErrBadPrior, g.Min, g.Max)
	}
	if math.IsInf(g.logNorm(), -1) {
		return fmt.Errorf("%w: truncated gaussian [%g, %g] holds no mass of N(%g, %g)", ErrBadPrior, g.Min, g.Max, g.Mu, g.Sigma)
	}
	return nil
}

// Beta is the beta density x^(A−1)(1−x)^(B−1)/B(A, B) on [0, 1], A, B > 0.
// KippingEccentricity gives the parameters Kipping (2013) fitted to the
// eccentricities of RV planets.
type Beta struct{ A, B float64 }

// KippingEccentricity is the Beta(0.867, 3.03) prior for orbital
// eccentricities of Kipping (2013, MNRAS 434, L51; values from memory).
var KippingEccentricity = Beta{A: 0.867, B: 3.03}

// LogProb returns the beta log density, −Inf outside [0, 1] (and at the
// end points where the density diverges or vanishes, as the limits say).
func (b Beta) LogProb(x float64) float64 {
	if x < 0 || x > 1 || math.IsNaN(x) {
		return math.Inf(-1)
	}
	la, _ := math.Lgamma(b.A)
	lb, _ := math.Lgamma(b.B)
	lab, _ := math.Lgamma(b.A + b.B)
	return (b.A-1)*math.Log(x) + (b.B-1)*math.Log1p(-x) + lab - la - lb
}

// Support returns [0, 1].
func (b Beta) Support() (float64, float64) { return 0, 1 }

// Rand draws X/(X+Y) with X ~ Gamma(A), Y ~ Gamma(B) (Marsaglia–Tsang).
func (b Beta) Rand(rng *rand.Rand) float64 {
	x, y := gammaRand(rng, b.A), gammaRand(rng, b.B)
	return x / (x + y)
}

// Validate reports whether A, B > 0.
func (b Beta) Validate() error {
	if !(b.A > 0) || !(b.B > 0) || math.IsInf(b.A, 0) || math.IsInf(b.B, 0) {
		return fmt.Errorf("%w: beta parameters %g, %g (want > 0)", ErrBadPrior, b.A, b.B)
	}
	return nil
}

// gammaRand draws from Gamma(shape a, scale 1) by Marsaglia & Tsang (2000,
// ACM TOMS 26, 363, from memory), boosting a < 1 by U^(1/a).
func gammaRand(rng *rand.Rand, a float64) float64 {
	if a < 1 {
		return gammaRand(rng, a+1) * math.Pow(rng.Float64(), 1/a)
	}
	d := a - 1.0/3
	c := 1 / math.Sqrt(9*d)
	for {
		x := rng.NormFloat64()
		v := 1 + c*x
		if v <= 0 {
			continue
		}
		v = v * v * v
		u := rng.Float64()
		if math.Log(u) < 0.5*x*x+d-d*v+d*math.Log(v) {
			return d * v
		}
	}
}
