package rvfit

import (
	"fmt"
	"math"
	"math/rand/v2"
)

// NoiseModel is the likelihood of RV residuals under some noise process.
// It is the hook through which a Gaussian-process noise model plugs into
// Model: rvfit owns the Keplerians and offsets, the noise model owns
// everything else about the residuals.
//
// LogLikelihood returns ln p(resid | params) for residuals resid (m/s,
// observed minus Keplerians and offsets) at times t (BJD_TDB d) with
// measurement variances variance = σ² (m²/s²), where inst[i] indexes the
// instrument of epoch i in the list given to the noise model's
// constructor, and params holds NumParams values named ParamNames. It must
// not keep or modify its arguments, must be safe for concurrent use, and
// returns an error (not a panic) for parameters it cannot evaluate (for
// example a covariance that is not positive definite); Model turns such
// errors into zero posterior probability.
type NoiseModel interface {
	NumParams() int
	ParamNames() []string
	LogLikelihood(t, resid, variance []float64, inst []int, params []float64) (float64, error)
}

// NoisePriorer is implemented by noise models that can propose default
// priors for their parameters given the data (residual scale in m/s and
// baseline in days). Model uses them where the caller gave none.
type NoisePriorer interface {
	DefaultPriors(scale, baseline float64) []Prior
}

// NoisePredictor is implemented by noise models with a correlated part
// (a Gaussian process): PredictNoise returns its conditional mean at the
// data epochs given the residuals (same arguments as LogLikelihood).
// FitModel subtracts it, so the reported residuals are those of the full
// model.
type NoisePredictor interface {
	PredictNoise(t, resid, variance []float64, inst []int, params []float64) ([]float64, error)
}

// NoiseStarter is implemented by noise models that propose their own
// starting parameters for start st (for example a GP period from the
// periodograms of the RVs and indicators); nil means FitModel's default
// (the prior's centre).
type NoiseStarter interface {
	NoiseStart(st int, rng *rand.Rand) []float64
}

// WhiteNoise is uncorrelated Gaussian noise with one extra jitter term per
// instrument, added in quadrature to the measurement errors:
//
//	ln L = −½ Σ_i [ r_i² / (σ_i² + s_j(i)²) + ln 2π(σ_i² + s_j(i)²) ]
//
// Parameters: "jitter_<instrument>" in m/s, one per instrument, in the
// order of Instruments. A negative jitter is treated as its absolute
// value by the formula (priors keep it ≥ 0).
type WhiteNoise struct {
	// Instruments lists the instrument labels, in the order inst indexes.
	Instruments []string
}

var (
	_ NoiseModel   = (*WhiteNoise)(nil)
	_ NoisePriorer = (*WhiteNoise)(nil)
)

// NumParams returns the number of jitter terms.
func (w *WhiteNoise) NumParams() int { return len(w.Instruments) }

// ParamNames returns "jitter_<instrument>" for each instrument.
func (w *WhiteNoise) ParamNames() []string {
	out := make([]string, len(w.Instruments))
	for i, in := range w.Instruments {
		out[i] = "jitter_" + in
	}
	return out
}

// DefaultPriors returns Uniform(0, max(1, 2·scale)) m/s for every jitter.
func (w *WhiteNoise) DefaultPriors(scale, baseline float64) []Prior {
	out := make([]Prior, len(w.Instruments))
	for i := range out {
		out[i] = Uniform{Min: 0, Max: math.Max(1, 2*scale)}
	}
	return out
}

// LogLikelihood implements NoiseModel.
func (w *WhiteNoise) LogLikelihood(t, resid, variance []float64, inst []int, params []float64) (float64, error) {
	if len(params) != len(w.Instruments) {
		return 0, fmt.Errorf("%w: white noise has %d jitters, got %d values", ErrBadParams, len(w.Instruments), len(params))
	}
	var buf [8]float64
	j2 := buf[:0]
	if len(params) > len(buf) {
		j2 = make([]float64, 0, len(params))
	}
	for _, s := range params {
		j2 = append(j2, s*s)
	}
	const ln2pi = 1.8378770664093453
	sum := 0.0
	for i, r := range resid {
		v := variance[i] + j2[inst[i]]
		sum += r*r/v + math.Log(v)
	}
	return -0.5 * (sum + float64(len(resid))*ln2pi), nil
}
