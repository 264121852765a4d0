package rvgp

import (
	"fmt"
	"math"

	"spotsift/gp"
	"spotsift/rvfit"
)

// MultiNoise is the multi-output activity model of Rajpaul et al. (2015)
// as an rvfit noise model: one latent process G(t) with a quasi-periodic
// kernel drives the RV residuals (Vc G + Vr dG/dt) and, jointly, the
// indicator series given at construction (a chromospheric index, Lc G, and
// the bisector span, Bc G + Br dG/dt), each on its own epochs. The
// indicators enter the likelihood as fixed data about their weighted means,
// so the Keplerians, which live in the RV mean only, are fitted with the
// activity constrained by all series at once.
//
// Parameters, in order: the latent kernel's η2, η3, η4 (its amplitude is
// fixed to 1: the output coefficients carry the scale), then Vc, Vr, Lc,
// Bc, Br (an index is not driven by dG/dt), then one RV jitter per
// instrument and one jitter per indicator series (the order of
// ParamNames).
//
// Reference: Rajpaul, Aigrain, Osborne, Reece & Roberts 2015, MNRAS 452,
// 2269 (form from memory; docs/methods.md §8).
type MultiNoise struct {
	index, bis *gp.Series // nil when not given
	rIndex     []float64
	rBIS       []float64
	instrs     []string
	names      []string
}

var _ rvfit.NoiseModel = (*MultiNoise)(nil)

// NewMultiNoise returns the multi-output noise model for a series: index
// names its chromospheric indicator column (e.g. "log_rhk" or "s_index"),
// bis its bisector column ("bis"); either may be "" but not both. The
// indicator columns need an error column.
func NewMultiNoise(s *rvfit.Series, index, bis string) (*MultiNoise, error) {
	if index == "" && bis == "" {
		return nil, fmt.Errorf("%w: the multi-output model needs an index or a bisector column", rvfit.ErrBadOption)
	}
	m := &MultiNoise{instrs: s.Instruments()}
	take := func(name string, out int) (*gp.Series, []float64, error) {
		ind := s.Indicator(name)
		if ind == nil {
			return nil, nil, fmt.Errorf("%w: no %q column for the multi-output model", rvfit.ErrMissingColumn, name)
		}
		if ind.Err == nil {
			return nil, nil, fmt.Errorf("%w: column %q has no uncertainties (%s_err)", rvfit.ErrMissingColumn, name, name)
		}
		g := &gp.Series{Output: out}
		var y []float64
		sw, swy := 0.0, 0.0
		for i := range ind.Value {
			if !ind.Valid(i) {
				continue
			}
			g.T = append(g.T, s.Time[i])
			g.Variance = append(g.Variance, ind.Err[i]*ind.Err[i])
			y = append(y, ind.Value[i])
			w := 1 / (ind.Err[i] * ind.Err[i])
			sw += w
			swy += w * ind.Value[i]
		}
		if len(y) < 4 {
			return nil, nil, fmt.Errorf("%w: column %q has %d values", rvfit.ErrTooFewEpochs, name, len(y))
		}
		for i := range y {
			y[i] -= swy / sw
		}
		return g, y, nil
	}
	var err error
	if index != "" {
		if m.index, m.rIndex, err = take(index, gp.OutIndex); err != nil {
			return nil, err
		}
	}
	if bis != "" {
		if m.bis, m.rBIS, err = take(bis, gp.OutBIS); err != nil {
			return nil, err
		}
	}
	m.names = []string{"gp_lambda_e", "gp_period", "gp_lambda_p", "gp_vc", "gp_vr", "gp_lc", "gp_bc", "gp_br"}
	for _, in := range m.instrs {
		m.names = append(m.names, "jitter_"+in)
	}
	if m.index != nil {
		m.names = append(m.names, "jitter_"+index)
	}
	if m.bis != nil {
		m.names = append(m.names, "jitter_"+bis)
	}
	return m, nil
}

// NumParams implements rvfit.NoiseModel.
func (m *MultiNoise) NumParams() int { return len(m.names) }

// ParamNames implements rvfit.NoiseModel.
func (m *MultiNoise) ParamNames() []string { return append([]string(nil), m.names...) }

// LogLikelihood implements rvfit.NoiseModel: the joint Gaussian-process
// likelihood of the RV residuals and the indicator series.
func (m *MultiNoise) LogLikelihood(t, resid, variance []float64, inst []int, p []float64) (float64, error) {
	if len(p) != len(m.names) {
		return 0, fmt.Errorf("%w: %d parameters, want %d", rvfit.ErrBadOption, len(p), len(m.names))
	}
	// η2 = √2 λe, η3 = P, η4 = 2 λp (the Rajpaul–Haywood mapping).
	latent := gp.QuasiPeriodic{Eta1: 1, Eta2: math.Sqrt2 * p[0], Eta3: p[1], Eta4: 2 * p[2]}
	model := gp.NewRajpaul(latent, p[3], p[4], p[5], p[6], p[7])
	// One RV series per instrument, so each gets its own jitter.
	ni := len(m.instrs)
	var series []gp.Series
	var rs [][]float64
	var jit []float64
	for k := 0; k < ni; k++ {
		g := gp.Series{Output: gp.OutRV}
		var r []float64
		for i := range t {
			if (inst == nil && k == 0) || (inst != nil && inst[i] == k) {
				g.T = append(g.T, t[i])
				g.Variance = append(g.Variance, variance[i])
				r = append(r, resid[i])
			}
		}
		if len(r) == 0 {
			continue
		}
		series, rs, jit = append(series, g), append(rs, r), append(jit, p[8+k])
	}
	next := 8 + ni
	if m.index != nil {
		series, rs, jit = append(series, *m.index), append(rs, m.rIndex), append(jit, p[next])
		next++
	}
	if m.bis != nil {
		series, rs, jit = append(series, *m.bis), append(rs, m.rBIS), append(jit, p[next])
	}
	mn := &gp.MultiNoise{Model: model, Jitter: jit}
	return mn.LogLikelihood(series, rs)
}
