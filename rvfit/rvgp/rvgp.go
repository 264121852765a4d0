// Package rvgp plugs the Gaussian-process noise models of package gp into
// rvfit's Keplerian models: Noise adapts a gp.Noise (a kernel plus white
// jitter per instrument) to rvfit.NoiseModel. It lives apart from rvfit so
// that rvfit's core builds and tests without gp.
package rvgp

import (
	"fmt"
	"math/rand/v2"

	"spotsift/gp"
	"spotsift/rvfit"
)

// Noise is a Gaussian-process noise model for rvfit.Model. For residuals r
// it evaluates gp.Noise's
//
//	ln L = −½ rᵀK⁻¹r − ½ ln det K − (N/2) ln 2π,
//	K_ij = k(t_i − t_j) + δ_ij (σ_i² + s_inst(i)²)
//
// with the parameter vector laid out as gp.Noise does: the kernel's
// hyperparameters, then one jitter per instrument (m/s).
type Noise struct {
	base   *gp.Noise
	names  []string
	instrs []string
	// period index and starting periods (see NoiseStart); none by default
	periodIdx int
	starts    []float64
	start     []float64 // the kernel's starting parameters and jitters
	first     []float64 // the first start, when given (ActivityOptions.Start)
	rot       *rotationSolver
	// evolIdx > 0 indexes an evolution time whose odd starts take
	// longEvol (a long-coherence start, as well as a short one)
	evolIdx  int
	longEvol float64
}

var (
	_ rvfit.NoiseModel     = (*Noise)(nil)
	_ rvfit.NoisePredictor = (*Noise)(nil)
	_ rvfit.NoiseStarter   = (*Noise)(nil)
)

// New returns the GP noise model with kernel k, whose hyperparameters are
// named kernelNames (one per parameter, e.g. "gp_B", "gp_C", "gp_L",
// "gp_P" for gp.RotationTerm; nil means "gp_0", "gp_1", …), and one jitter
// per instrument, named "jitter_<instrument>", in the order of
// Model.Instruments (the order of first appearance in the series; use
// DefaultInstrument for a series without labels). solver selects gp's
// solver (zero value: automatic).
func New(k gp.Kernel, kernelNames, instruments []string, solver gp.SolverKind) (*Noise, error) {
	if k == nil {
		return nil, fmt.Errorf("%w: no kernel", rvfit.ErrBadOption)
	}
	nk := k.NumParams()
	if kernelNames == nil {
		for i := 0; i < nk; i++ {
			kernelNames = append(kernelNames, fmt.Sprintf("gp_%d", i))
		}
	}
	if len(kernelNames) != nk {
		return nil, fmt.Errorf("%w: %d names for %d kernel parameters", rvfit.ErrBadOption, len(kernelNames), nk)
	}
	n := &Noise{
		base:   &gp.Noise{Kernel: k, Jitter: make([]float64, len(instruments)), Solver: solver},
		names:  append([]string(nil), kernelNames...),
		instrs: append([]string(nil), instruments...),
		rot:    &rotationSolver{},
	}
	for _, in := range instruments {
		n.names = append(n.names, "jitter_"+in)
	}
	return n, nil
}

// NumParams returns the number of kernel parameters plus jitters.
func (n *Noise) NumParams() int { return len(n.names) }

// ParamNames returns the kernel parameter names, then "jitter_<instrument>".
func (n *Noise) ParamNames() []string { return append([]string(nil), n.names...) }

// LogLikelihood implements rvfit.NoiseModel. Parameters gp rejects (a
// negative amplitude, a matrix that is not positive definite) come back
// as errors, which rvfit.Model turns into zero posterior probability.
func (n *Noise) LogLikelihood(t, resid, variance []float64, inst []int, params []float64) (float64, error) {
	m, err := n.base.WithParams(params)
	if err != nil {
		return 0, err
	}
	if mr, _, p, r := n.rotation(t, resid, variance, inst, params); mr != nil {
		// The same O(N) solver as the gradient's, so that value and
		// gradient agree to rounding.
		return mr.LogLikelihood(p, r)
	}
	return m.LogLikelihood(t, resid, variance, inst)
}

// PredictNoise implements rvfit.NoisePredictor: the GP's conditional mean
// at the data epochs.
func (n *Noise) PredictNoise(t, resid, variance []float64, inst []int, params []float64) ([]float64, error) {
	m, err := n.base.WithParams(params)
	if err != nil {
		return nil, err
	}
	mean, _, err := m.Predict(t, resid, variance, inst, t, false)
	return mean, err
}

// NoiseStart implements rvfit.NoiseStarter: with starting periods set (as
// NewActivity does), start st takes the st-th (cycling), the other kernel
// parameters those of the kernel given to New and the jitters those set
// by NewActivity; for the quasi-periodic kernel every odd start begins
// with a long evolution time (the baseline), so that a long-coherence
// optimum is reached as well as a short one.
func (n *Noise) NoiseStart(st int, rng *rand.Rand) []float64 {
	if st == 0 && n.first != nil {
		return append([]float64(nil), n.first...)
	}
	out := periodStart(n.start, n.periodIdx, n.starts, st)
	if out != nil && n.evolIdx > 0 && st%2 == 1 {
		out[n.evolIdx] = n.longEvol
	}
	return out
}
